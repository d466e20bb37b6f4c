"""Microkinetic simulation: concentrations over time of a network of elementary reactions.

Mass-action kinetics of every reaction that has a rate constant, integrated with scipy's stiff solvers
(``solve_ivp`` with BDF, Radau or LSODA) and an analytic sparse Jacobian. Concentrations are in mol/L,
times in s. The science is here on plain numbers (:class:`Network`, :func:`integrate`,
:func:`degree_of_rate_control`, :func:`equilibrium_constant`, :func:`diffusion_rate`);
:func:`simulate` builds the network from a run's results (its rate constants and free energies). The
decisions are written in docs/simulate.md.
"""

from __future__ import annotations

import warnings
from collections import Counter
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from .callable_module import make_callable
from .errors import SimulationError
from .reactions import ATOL_M, DEFAULT_METHOD, METHODS, RTOL, SimulationSettings, simulation_settings
from .units import K_B_EH, N_A, R_GAS

#: right-hand-side evaluations at one time after which a solver is taken to be stuck
STALLED_CALLS = 10_000
#: relative perturbation of a step's rate constants for its degree of rate control (central difference)
RATE_CONTROL_STEP = 1e-3
#: viscosity of liquid water at 298.15 K, Pa s (0.890 mPa s; from memory, as tabulated in the CRC Handbook)
WATER_VISCOSITY_PA_S = 0.890e-3
#: molecules per cm^3 in one mol/L
MOLECULES_PER_CM3_PER_M = N_A * 1e-3


# -- the science on plain numbers -------------------------------------------------------------------------


def equilibrium_constant(dG, temperature, delta_n: int, c0_M: float):
    """Equilibrium constant in concentration units, (mol/L)^delta_n.

    K_c = exp(-dG / k_B T) (c0)^delta_n, with dG the reaction free energy in hartree per molecule in the
    standard state of concentration c0 (mol/L; a gas standard state p0 has c0 = p0 / RT) and delta_n the
    change in the number of molecules (products minus reactants). The law of mass action
    (Guldberg and Waage, 1864) with the standard-state convention of any physical chemistry text
    (e.g. Atkins, Physical Chemistry, the thermodynamic equilibrium constant and K_c).
    """
    return np.exp(-np.asarray(dG, dtype=float) / (K_B_EH * np.asarray(temperature, dtype=float))) * c0_M ** delta_n


def diffusion_rate(temperature, viscosity_pa_s: float, identical: bool = False):
    """Diffusion-limited rate constant of a bimolecular encounter in solution, M^-1 s^-1.

    Smoluchowski, Z. Phys. Chem. 1917, 92, 129: k_D = 4 pi (D_A + D_B)(r_A + r_B) N_A; with Stokes-Einstein
    diffusion coefficients D = k_B T / (6 pi eta r) (Einstein, Ann. Phys. 1905, 17, 549) and equal radii the
    radii cancel: k_D = 8 R T / (3 eta) (in m^3 mol^-1 s^-1; x 1000 for M^-1 s^-1). For two molecules of
    the same species the rate law r = k [A]^2 counts each encounter once, so k = k_D / 2.
    """
    k = 8.0 * R_GAS * np.asarray(temperature, dtype=float) / (3.0 * viscosity_pa_s) * 1e3
    return k / 2.0 if identical else k


@dataclass(frozen=True)
class Network:
    """A network of elementary reactions under mass action.

    Attributes:
        species: names of the species of the rate laws (those held at their own concentration, whose
            concentration is inside the rate constants, are not among them).
        reactions: names of the reactions.
        reactants, products: per reaction the indices into ``species`` of its molecules, one entry per
            molecule ("2 A" gives A's index twice).
        k_forward, k_reverse: rate constants, shape (reactions, temperatures), in mol/L and s
            (s^-1, M^-1 s^-1, ...).
        temperatures: K, the grid of the rate constants (one temperature for an isothermal network);
            between grid points ln k is linear in 1/T.
    """

    species: tuple[str, ...]
    reactions: tuple[str, ...]
    reactants: tuple[tuple[int, ...], ...]
    products: tuple[tuple[int, ...], ...]
    k_forward: np.ndarray
    k_reverse: np.ndarray
    temperatures: np.ndarray

    def __post_init__(self):
        if not len(self.reactions):
            raise SimulationError("the network has no reaction with a rate constant")
        kf, kr = np.atleast_2d(self.k_forward), np.atleast_2d(self.k_reverse)
        t = np.atleast_1d(np.asarray(self.temperatures, dtype=float))
        object.__setattr__(self, "k_forward", kf.reshape(len(self.reactions), -1))
        object.__setattr__(self, "k_reverse", kr.reshape(len(self.reactions), -1))
        object.__setattr__(self, "temperatures", t)
        for k in (self.k_forward, self.k_reverse):
            if k.shape[1] != len(t) or not np.all(np.isfinite(k)) or np.any(k < 0):
                raise SimulationError("rate constants must be finite and >= 0, one per reaction and temperature")

    def stoichiometry(self) -> np.ndarray:
        """Net stoichiometric matrix, (species, reactions): products minus reactants."""
        s = np.zeros((len(self.species), len(self.reactions)))
        for j, (left, right) in enumerate(zip(self.reactants, self.products, strict=True)):
            np.add.at(s[:, j], list(left), -1.0)
            np.add.at(s[:, j], list(right), 1.0)
        return s

    def rate_constants(self, temperature: float) -> tuple[np.ndarray, np.ndarray]:
        """(k_forward, k_reverse) at one temperature: the grid's value, or ln k interpolated linearly in 1/T."""
        t = self.temperatures
        if len(t) == 1 or np.any(np.isclose(t, temperature, rtol=0, atol=1e-6)):
            i = int(np.argmin(np.abs(t - temperature)))
            return self.k_forward[:, i], self.k_reverse[:, i]
        if not t.min() <= temperature <= t.max():
            raise SimulationError(f"temperature {temperature:g} K is outside the rate constants' range "
                                  f"{t.min():g}-{t.max():g} K")
        order = np.argsort(1.0 / t)
        x = 1.0 / t[order]
        i = int(np.clip(np.searchsorted(x, 1.0 / temperature) - 1, 0, len(x) - 2))
        w = (1.0 / temperature - x[i]) / (x[i + 1] - x[i])
        return tuple(_log_interpolate(k[:, order[i]], k[:, order[i + 1]], w) for k in (self.k_forward, self.k_reverse))


def _log_interpolate(low: np.ndarray, high: np.ndarray, w: float) -> np.ndarray:
    """exp((1 - w) ln low + w ln high); linear in k where either end is 0 (an irreversible step's k_r)."""
    positive = (low > 0) & (high > 0)
    with np.errstate(divide="ignore"):
        logs = (1.0 - w) * np.log(np.where(positive, low, 1.0)) + w * np.log(np.where(positive, high, 1.0))
    return np.where(positive, np.exp(logs), (1.0 - w) * low + w * high)


def temperature_program(temperature) -> Callable[[float], float]:
    """T(t) from one temperature (K) or a list of (time in s, T in K) points, linear in between and constant
    beyond the ends."""
    if np.ndim(temperature) == 0:
        value = float(temperature)
        return lambda t: value
    points = np.asarray(temperature, dtype=float)
    order = np.argsort(points[:, 0])
    times, values = points[order, 0], points[order, 1]
    return lambda t: float(np.interp(t, times, values))


class _MassAction:
    """The right-hand side and sparse Jacobian of one network with some species held fixed.

    The state holds the free species; an extended vector [free, fixed, 1] lets every reaction be a
    product over a fixed number of slots (padded with the constant 1), so rates are one vectorised product.
    """

    def __init__(self, network: Network, fixed: dict[int, float], temperature: Callable[[float], float]):
        import scipy.sparse as sp

        n = len(network.species)
        self.free = np.array([i for i in range(n) if i not in fixed], dtype=int)
        self.fixed = np.array(sorted(fixed), dtype=int)
        position = np.empty(n, dtype=int)
        position[self.free] = np.arange(len(self.free))
        position[self.fixed] = len(self.free) + np.arange(len(self.fixed))
        self.one = n  # position of the constant 1 in the extended vector
        self.fixed_values = np.array([fixed[i] for i in self.fixed], dtype=float)
        self.slots_f = self._slots(network.reactants, position)
        self.slots_r = self._slots(network.products, position)
        self.stoichiometry = sp.csr_matrix(network.stoichiometry()[self.free])
        self.network, self.temperature = network, temperature
        self._k_cache: tuple[float, tuple[np.ndarray, np.ndarray]] | None = None

    def _slots(self, sides: Sequence[tuple[int, ...]], position: np.ndarray) -> np.ndarray:
        width = max(1, max(len(s) for s in sides))
        slots = np.full((len(sides), width), self.one, dtype=int)
        for j, side in enumerate(sides):
            slots[j, :len(side)] = position[list(side)]
        return slots

    def extended(self, y: np.ndarray) -> np.ndarray:
        return np.concatenate([y, self.fixed_values, [1.0]])

    def k(self, t: float) -> tuple[np.ndarray, np.ndarray]:
        temp = self.temperature(t)
        if self._k_cache is None or self._k_cache[0] != temp:
            self._k_cache = (temp, self.network.rate_constants(temp))
        return self._k_cache[1]

    def rates(self, t: float, y: np.ndarray, scale: tuple[np.ndarray, np.ndarray] | None = None):
        """(forward, reverse) rates of every reaction, mol L^-1 s^-1."""
        kf, kr = self.k(t)
        if scale is not None:
            kf, kr = kf * scale[0], kr * scale[1]
        c = self.extended(y)
        return kf * np.prod(c[self.slots_f], axis=1), kr * np.prod(c[self.slots_r], axis=1)

    def rhs(self, t: float, y: np.ndarray, scale=None) -> np.ndarray:
        rf, rr = self.rates(t, y, scale)
        return self.stoichiometry @ (rf - rr)

    def _partials(self, k: np.ndarray, slots: np.ndarray, c: np.ndarray):
        """(rows, columns, values) of d(k prod c[slots]) / d y: one entry per reaction and slot."""
        values = np.empty(slots.shape)
        taken = c[slots]
        for s in range(slots.shape[1]):  # a handful of slots (the molecularity), not a loop over species
            values[:, s] = k * np.prod(np.delete(taken, s, axis=1), axis=1)
        rows = np.broadcast_to(np.arange(slots.shape[0])[:, None], slots.shape)
        keep = slots < len(self.free)
        return rows[keep], slots[keep], values[keep]

    def jacobian(self, t: float, y: np.ndarray, scale=None):
        """d(dy/dt)/dy as a sparse matrix: stoichiometry times the sparse d(rate)/dy."""
        import scipy.sparse as sp

        kf, kr = self.k(t)
        if scale is not None:
            kf, kr = kf * scale[0], kr * scale[1]
        c = self.extended(y)
        rf, cf, vf = self._partials(kf, self.slots_f, c)
        rr, cr, vr = self._partials(kr, self.slots_r, c)
        drate = sp.csr_matrix((np.concatenate([vf, -vr]), (np.concatenate([rf, rr]), np.concatenate([cf, cr]))),
                              shape=(self.slots_f.shape[0], len(self.free)))
        return (self.stoichiometry @ drate).tocsc()


@dataclass
class Trajectory:
    """What :func:`integrate` returns.

    Attributes:
        times: s, the output times (the first is 0).
        concentrations: mol/L, (times, species of the network), fixed species included.
        success: the solver reached the end time; ``message`` and ``time_reached`` (s) otherwise.
        rates: net rate of every reaction at each output time, mol L^-1 s^-1, (times, reactions).
        dense: the solver's continuous solution of the free species (None unless asked for).
        free: indices of the free species (the columns ``dense`` gives).
        statistics: the solver's counts (nfev, njev, nlu).
    """

    times: np.ndarray
    concentrations: np.ndarray
    success: bool
    message: str
    time_reached: float
    rates: np.ndarray
    dense: Any = None
    free: np.ndarray = field(default_factory=lambda: np.array([], dtype=int))
    statistics: dict[str, int] = field(default_factory=dict)


def _check_solver(method: str, rtol: float, atol: float) -> None:
    if method not in METHODS:
        raise SimulationError(f"unknown solver {method!r}; choose one of {', '.join(METHODS)}")
    if not (np.isfinite(rtol) and 0 < rtol < 1) or not (np.isfinite(atol) and atol > 0):
        raise SimulationError(f"tolerances rtol = {rtol!r} (0 < rtol < 1) and atol = {atol!r} mol/L (> 0) are not "
                              "usable")


def check_concentrations(initial: dict[str, float]) -> None:
    """Refuse negative or non-finite initial concentrations, with the species named."""
    for name, value in initial.items():
        if not np.isfinite(value) or value < 0:
            raise SimulationError(f"initial concentration of {name!r} is {value!r}: it must be finite and >= 0")


def integrate(network: Network, initial: dict[str, float], times: Sequence[float], *, fixed: Sequence[str] = (),
              temperature=None, method: str = DEFAULT_METHOD, rtol: float = RTOL, atol: float = ATOL_M,
              dense: bool = False, scale: tuple[np.ndarray, np.ndarray] | None = None) -> Trajectory:
    """Integrate dc/dt = S r(c) from t = 0 to max(times) and return the concentrations at ``times``.

    r_j = k_f,j prod_reactants c - k_r,j prod_products c (mass action); S the net stoichiometric matrix.
    ``initial``: mol/L by species name (others start at 0); ``fixed``: species held at their initial
    concentration (a reservoir); ``temperature``: one value or a program (:func:`temperature_program`),
    None for the network's only temperature; ``scale``: factors on (k_forward, k_reverse) per reaction
    (degree of rate control). The Jacobian is analytic and sparse (BDF and Radau use it as such; LSODA
    takes it dense). A solver failure is returned (``success`` False, the time reached), not raised.
    """
    from scipy.integrate import solve_ivp

    _check_solver(method, rtol, atol)
    check_concentrations(initial)
    index = {n: i for i, n in enumerate(network.species)}
    unknown = [n for n in [*initial, *fixed] if n not in index]
    if unknown:
        raise SimulationError(f"{unknown[0]!r} is not a species of the simulated network")
    missing = [n for n in fixed if n not in initial]
    if missing:
        raise SimulationError(f"fixed species {missing[0]!r} needs an initial concentration")
    times = np.asarray(times, dtype=float)
    if times.ndim != 1 or not times.size or not np.all(np.isfinite(times)) or np.any(times <= 0):
        raise SimulationError("output times must be finite and > 0 s")
    if temperature is None:
        if len(network.temperatures) > 1:
            raise SimulationError("the rate constants span several temperatures: give the simulation's temperature")
        temperature = float(network.temperatures[0])
    system = _MassAction(network, {index[n]: float(initial[n]) for n in fixed}, temperature_program(temperature))
    c0 = np.zeros(len(network.species))
    for n, v in initial.items():
        c0[index[n]] = v
    t_out = np.unique(np.concatenate([[0.0], times]))
    reached = [0.0, 0]  # the latest time the solver asked for (where a failure left it), calls without progress

    def rhs(t, y):
        reached[1] = reached[1] + 1 if t <= reached[0] else 0
        reached[0] = max(reached[0], t)
        if reached[1] > STALLED_CALLS:  # LSODA can retry one step for ever (rates beyond the doubles' range)
            raise ArithmeticError(f"no progress after {STALLED_CALLS} evaluations at t = {t:.4g} s")
        dydt = system.rhs(t, y, scale)
        if not np.all(np.isfinite(dydt)):  # LSODA would go on with inf and nan for ever
            raise ArithmeticError(f"the rates are not finite at t = {t:.4g} s (rate constants too large for doubles)")
        return dydt

    def jac(t, y):
        matrix = system.jacobian(t, y, scale)
        return matrix.toarray() if method == "LSODA" else matrix

    try:
        with np.errstate(all="ignore"), warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)  # overflow on the way to a failure: reported below
            sol = solve_ivp(rhs, (0.0, float(t_out[-1])), c0[system.free], method=method, t_eval=t_out, rtol=rtol,
                            atol=atol, dense_output=dense, jac=jac)
    except (RuntimeError, ValueError, ArithmeticError, np.linalg.LinAlgError) as err:
        message = " ".join(str(err).split()) or err.__class__.__name__
        return Trajectory(np.array([0.0]), c0[None, :], False, message, reached[0],
                          np.zeros((1, len(network.reactions))), free=system.free)
    t_done = np.asarray(sol.t, dtype=float).ravel()  # scipy leaves lists when a failure came before any output
    y_done = np.asarray(sol.y, dtype=float).reshape(len(system.free), len(t_done))
    full = np.tile(c0, (len(t_done), 1))
    full[:, system.free] = y_done.T
    rates = np.array([np.subtract(*system.rates(t, y, scale)) for t, y in zip(t_done, y_done.T, strict=True)])
    rates = rates.reshape(len(t_done), len(network.reactions))
    return Trajectory(t_done, full, sol.status == 0, str(sol.message),
                      float(t_done[-1]) if t_done.size else reached[0], rates,
                      sol.sol if dense else None, system.free,
                      {"nfev": int(sol.nfev), "njev": int(sol.njev), "nlu": int(sol.nlu)})


def formation_rate(network: Network, rates: np.ndarray, product: str) -> np.ndarray:
    """Net rate of formation of ``product``, mol L^-1 s^-1: sum_j nu_j r_j over the reactions (also for a
    fixed species, whose concentration the reservoir keeps constant)."""
    row = network.stoichiometry()[network.species.index(product)]
    return rates @ row


def degree_of_rate_control(network: Network, initial: dict[str, float], time: float, product: str, *,
                           fixed: Sequence[str] = (), temperature=None, method: str = DEFAULT_METHOD,
                           rtol: float = 1e-10, atol: float = ATOL_M,
                           step: float = RATE_CONTROL_STEP) -> dict[str, float]:
    """Degree of rate control of every reaction for the net formation rate r of ``product`` at ``time``.

    X_i = (k_i / r) (d r / d k_i) with the equilibrium constant K_i = k_i / k_-i and every other rate
    constant held fixed (Campbell, J. Catal. 2001, 204, 520, from memory; Campbell, ACS Catal. 2017, 7, 2770).
    Computed by finite perturbation: k_i and k_-i both scaled by (1 + step) and (1 - step), the network
    integrated again to ``time`` each time, and X_i = [ln r(+) - ln r(-)] / [ln(1 + step) - ln(1 - step)]
    (a central difference, error O(step^2)). NaN where r is not positive (nothing formed, or equilibrium).
    """
    n = len(network.reactions)
    log_rates = np.full((n, 2), np.nan)
    for i in range(n):
        for col, factor in enumerate((1.0 + step, 1.0 - step)):
            scale = np.ones(n)
            scale[i] = factor
            run = integrate(network, initial, [time], fixed=fixed, temperature=temperature, method=method, rtol=rtol,
                            atol=atol, scale=(scale, scale))
            if not run.success:
                raise SimulationError(f"the solver failed at t = {run.time_reached:.4g} s while perturbing "
                                      f"{network.reactions[i]!r}: {run.message}")
            r = formation_rate(network, run.rates[-1:], product)[0]
            log_rates[i, col] = np.log(r) if r > 0 else np.nan
    x = (log_rates[:, 0] - log_rates[:, 1]) / (np.log1p(step) - np.log1p(-step))
    return dict(zip(network.reactions, x.tolist(), strict=True))


# -- the network of a run -------------------------------------------------------------------------------------


@dataclass
class _Step:
    """One reaction of a run as the network takes it."""

    name: str
    equation: str
    reactants: list[str]
    products: list[str]
    k_forward: np.ndarray  # over the run's temperatures, mol/L units
    k_reverse: np.ndarray
    source: str
    kappa: float = 1.0


def _molecules(terms, own: set[str]) -> list[str] | None:
    """Species names, one per molecule, leaving out those at their own concentration; None for a fractional
    coefficient (not an elementary step)."""
    out = []
    for c, n in terms:
        if c != round(c):
            return None
        if n not in own:
            out += [n] * round(c)
    return out


def _standard_state(results) -> tuple[Any, bool]:
    """The standard state the run's free energies used, and whether it is a gas (pressure) one."""
    from .records import parse_standard_state

    cond = results.conditions
    if cond.pressure is not None:
        return cond.pressure, True
    return cond.standard_state, parse_standard_state(cond.standard_state)[0] == "pressure"


def _c0_molar(results) -> np.ndarray:
    """c0 of the run's standard state, mol/L, over its temperatures."""
    from .kinetics import standard_concentration

    c0, unit = standard_concentration(_standard_state(results)[0], results.temperatures)
    return c0 / MOLECULES_PER_CM3_PER_M if unit != "M" else c0


def _step(results, spec, own: set[str], viscosity: float | None, notes: list[str]) -> _Step | None:
    """A reaction of the run with its rate constants in mol/L units, or None (with a note saying why)."""
    from .reactions import reaction_energetics

    df = results.reactions
    rows = df[df["reaction"] == spec.name].sort_values("T_K") if len(df) else df
    if not len(rows) or (rows["status"] != "ok").any():
        notes.append(f"{spec.name}: left out (excluded from the run: see its findings)")
        return None
    left, right = _molecules(spec.reactants, own), _molecules(spec.products, own)
    if left is None or right is None:
        notes.append(f"{spec.name}: left out (fractional coefficients: not an elementary step)")
        return None
    gas = _standard_state(results)[1]
    t = results.temperatures
    kappa = 1.0
    if spec.transition_state:
        k_run, source = rows["k_forward"].to_numpy(dtype=float), "transition state"
        kappa = float(rows["kappa"].to_numpy(dtype=float)[0]) if "kappa" in rows else 1.0
        if not np.all(np.isfinite(k_run)):
            notes.append(f"{spec.name}: left out (no rate constant from its transition state)")
            return None
    elif spec.rate == "diffusion":
        if gas or len(left) != 2:
            notes.append(f"{spec.name}: left out (a diffusion limit needs two molecules meeting in solution)")
            return None
        eta = viscosity or WATER_VISCOSITY_PA_S
        k_run, source = diffusion_rate(t, eta, identical=left[0] == left[1]), f"diffusion, eta = {eta:g} Pa s"
        gas = False  # already in M^-1 s^-1
    elif spec.rate is not None:
        k_run, source = np.full(len(t), float(spec.rate)), "given"
        gas = False  # a given rate is in mol/L units whatever the standard state
    else:
        notes.append(f"{spec.name}: left out (no transition state and no rate)")
        return None
    k_forward = k_run * (MOLECULES_PER_CM3_PER_M ** (len(left) - 1) if gas else 1.0)
    values = {n: s.values for n, s in results.species_results.items() if s.usable}
    dg = np.asarray(reaction_energetics(spec, values)["dG"], dtype=float)
    k_eq = equilibrium_constant(dg, t, len(right) - len(left), _c0_molar(results))
    return _Step(spec.name, spec.equation, left, right, k_forward, k_forward / k_eq, source, kappa)


def run_network(results, viscosity: float | None = None) -> tuple[Network, list[_Step], dict[str, float], list[str]]:
    """The network of a run: every reaction with a rate constant; the species held at their own concentration
    (mol/L, outside the rate laws); notes on the reactions left out."""
    rf = results.reaction_file
    if rf is None:
        raise SimulationError("a simulation needs the run's reactions (a reaction file)")
    own = {n: s.options.concentration for n, s in results.species_results.items() if s.options.concentration}
    notes: list[str] = []
    steps = [s for s in (_step(results, r, set(own), viscosity, notes) for r in rf.reactions) if s is not None]
    if not steps:
        raise SimulationError("the network has no reaction with a rate constant (" + "; ".join(notes) + ")")
    names = list(dict.fromkeys(n for s in steps for n in s.reactants + s.products))
    index = {n: i for i, n in enumerate(names)}
    network = Network(tuple(names), tuple(s.name for s in steps),
                      tuple(tuple(index[n] for n in s.reactants) for s in steps),
                      tuple(tuple(index[n] for n in s.products) for s in steps),
                      np.array([s.k_forward for s in steps]), np.array([s.k_reverse for s in steps]),
                      results.temperatures)
    used_own = {n: c for n, c in own.items() if any(n in _names_of(r) for r in rf.reactions if r.name in
                                                     network.reactions)}
    return network, steps, used_own, notes


def _names_of(spec) -> set[str]:
    return {n for _, n in spec.reactants + spec.products}


# -- simulate(): a run's network from its initial state to the end time ---------------------------------------

#: points of the default output grid: logarithmic from 1e-9 of the end time, and linear
LOG_POINTS, LINEAR_POINTS, LOG_DECADES = 181, 101, 9
#: relative change of the turnover frequency over the last output interval below which it is a steady state
STEADY_STATE_TOLERANCE = 1e-3


@dataclass
class SimulationResult:
    """A run's network simulated (see :func:`simulate`).

    Attributes:
        concentrations: DataFrame indexed by time (s, "time_s"), one column per species, mol/L (species
            held at their own concentration included, constant), at the output times.
        curves: the same on the default grid of the end time (the solver's dense output), for figures.
        summary: one row per species: initial and final mol/L, conversion, half-life and time to 90 %
            conversion (s), yield and selectivity relative to the reactant (molar, at the end time).
        rate_control: one row per reaction: its degree of rate control for the product's formation rate.
        tof: turnover frequency at the end time, s^-1 (product formation rate / catalyst), or None.
        tof_comparison: the TOF against the energy span model of each cyclic profile of the catalyst, or None.
        reactions: the simulated reactions: equation, where k comes from, k_forward and k_reverse (mol/L, s).
        settings: the :class:`SimulationSettings` used; temperature: K (constant) or the program.
        notes: reactions left out and anything a reader should know, one line each.
        statistics: the solver's counts.
    """

    concentrations: Any
    curves: Any
    summary: Any
    rate_control: Any
    tof: float | None
    tof_comparison: Any
    reactions: Any
    settings: SimulationSettings
    notes: list[str]
    statistics: dict[str, int]


def _amounts_in_molar(settings: SimulationSettings, results, temperature: float) -> dict[str, float]:
    """The initial amounts in mol/L: plain numbers in the standard state's unit, pressures by c = p / RT."""
    from .units import ATM_PA, BAR_PA

    state, gas = _standard_state(results)
    per_unit = {"1atm": ATM_PA, "1bar": BAR_PA}.get(state, state) if gas else None
    out = {}
    for name, (kind, value) in settings.initial.items():
        if kind == "number" and gas:
            kind, value = "Pa", value * float(per_unit)
        out[name] = value / (R_GAS * temperature) / 1000.0 if kind == "Pa" else value
    return out


def _output_times(settings: SimulationSettings) -> np.ndarray:
    return np.asarray(settings.times) if settings.times is not None else _default_grid(settings.end_time)


def _default_grid(end: float, start: float | None = None) -> np.ndarray:
    """Logarithmic points from ``start`` (default: nine decades before ``end``; 20 a decade) and 100 linear
    ones: smooth on either time axis."""
    first = np.log10(start) if start else np.log10(end) - LOG_DECADES
    points = max(LOG_POINTS, int(20 * (np.log10(end) - first)) + 1)
    grid = np.concatenate([np.logspace(first, np.log10(end), points), np.linspace(0.0, end, LINEAR_POINTS)[1:]])
    return np.unique(grid)


def _check_species(settings: SimulationSettings, network: Network, own: dict[str, float]) -> None:
    for key, names in (("initial", list(settings.initial)), ("fixed", settings.fixed), ("catalyst", settings.catalyst),
                       ("product", [settings.product] if settings.product else []),
                       ("reactant", [settings.reactant] if settings.reactant else [])):
        for name in names:
            if name in own:
                raise SimulationError(f"{key}: {name!r} is held at its own concentration ({own[name]:g} M)")
            if name not in network.species:
                raise SimulationError(f"{key}: {name!r} takes part in no simulated reaction")


def _check_temperature(settings: SimulationSettings, network: Network) -> Any:
    """The temperature (or program) to integrate at, within the rate constants' temperatures."""
    t = network.temperatures
    if settings.temperature is None:
        if len(t) > 1:
            raise SimulationError(f"the run has {len(t)} temperatures: give the simulation's temperature")
        return float(t[0])
    wanted = [settings.temperature] if np.ndim(settings.temperature) == 0 else [p[1] for p in settings.temperature]
    outside = [w for w in wanted if not (t.min() - 1e-6 <= w <= t.max() + 1e-6)]
    if outside:
        raise SimulationError(f"temperature {outside[0]:g} K is outside the run's temperatures "
                              f"({t.min():g}-{t.max():g} K): run at the simulation's temperatures")
    return settings.temperature


def _first_time_below(dense, column: int, level: float, end: float) -> float:
    """The first time the dense solution's ``column`` falls to ``level`` (NaN if it does not by ``end``)."""
    from scipy.optimize import brentq

    grid = np.unique(np.concatenate([[0.0], np.logspace(np.log10(end) - 12, np.log10(end), 1201)]))
    values = dense(grid)[column]
    below = np.flatnonzero(values <= level)
    if not below.size:
        return float("nan")
    i = below[0]
    if i == 0:
        return 0.0
    return float(brentq(lambda x: dense(x)[column] - level, grid[i - 1], grid[i], xtol=1e-14 * grid[i]))


def _summary(run: Trajectory, network: Network, settings: SimulationSettings, initial: dict[str, float]):
    """One row per species: initial, final, conversion, half-life, t90, yield and selectivity."""
    import pandas as pd

    free_column = {int(i): k for k, i in enumerate(run.free)}
    first, last = run.concentrations[0], run.concentrations[-1]
    reactant = settings.reactant or next((n for n in initial if n not in settings.fixed and initial[n] > 0), None)
    r0 = initial.get(reactant, 0.0) if reactant else 0.0
    converted = r0 - last[network.species.index(reactant)] if reactant else 0.0
    rows = []
    for i, name in enumerate(network.species):
        row = {"species": name, "initial_M": first[i], "final_M": last[i], "fixed": name in settings.fixed,
               "conversion": np.nan, "half_life_s": np.nan, "t90_s": np.nan, "yield": np.nan, "selectivity": np.nan}
        if first[i] > 0 and name not in settings.fixed:
            row["conversion"] = 1.0 - last[i] / first[i]
            if run.dense is not None:
                row["half_life_s"] = _first_time_below(run.dense, free_column[i], first[i] / 2, settings.end_time)
                row["t90_s"] = _first_time_below(run.dense, free_column[i], first[i] / 10, settings.end_time)
        elif name not in settings.fixed and last[i] > first[i] and r0 > 0:
            row["yield"] = (last[i] - first[i]) / r0
            row["selectivity"] = (last[i] - first[i]) / converted if converted > 0 else np.nan
        rows.append(row)
    return pd.DataFrame(rows), reactant


def _rate_control(network, initial, settings, temperature, notes) -> Any:
    import pandas as pd

    if not settings.rate_control or settings.product is None:
        return pd.DataFrame(columns=["reaction", "degree_of_rate_control"])
    x = degree_of_rate_control(network, initial, settings.end_time, settings.product, fixed=settings.fixed,
                               temperature=temperature, method=settings.method,
                               rtol=min(settings.rtol, 1e-10), atol=settings.atol)
    if all(np.isnan(v) for v in x.values()):
        notes.append(f"degree of rate control: {settings.product} has no positive net formation rate at the end "
                     "time (nothing formed, or equilibrium reached)")
    else:
        notes.append(f"degrees of rate control sum to {np.nansum(list(x.values())):.4f} (1 for a single cycle or "
                     "chain at steady state)")
    return pd.DataFrame({"reaction": list(x), "degree_of_rate_control": list(x.values())})


def _tof(run: Trajectory, network: Network, settings: SimulationSettings, notes: list[str]) -> float | None:
    """TOF = net formation rate of the product / sum of the catalyst's concentrations, at the end time."""
    if not settings.catalyst or settings.product is None:
        return None
    columns = [network.species.index(n) for n in settings.catalyst]
    total = run.concentrations[:, columns].sum(axis=1)
    tof = formation_rate(network, run.rates, settings.product) / np.where(total > 0, total, np.nan)
    if len(tof) > 2 and abs(tof[-1] - tof[-2]) > STEADY_STATE_TOLERANCE * abs(tof[-1]):
        notes.append(f"TOF: not at steady state at the end time ({tof[-2]:.4g} -> {tof[-1]:.4g} s^-1 over the last "
                     "output interval)")
    return float(tof[-1])


def _tof_comparison(results, steps: list[_Step], settings: SimulationSettings, tof: float | None,
                    initial: dict[str, float], temperature) -> Any:
    """The simulated TOF against the energy span model of every cyclic profile holding the catalyst."""
    import pandas as pd

    span = results.energy_span
    if tof is None or span is None or not len(span) or np.ndim(temperature) != 0:
        return None
    c0 = float(_c0_molar(results)[int(np.argmin(np.abs(results.temperatures - temperature)))])
    rows = []
    profiles = {p.name: p for p in results.reaction_file.profiles}
    for _, row in span[np.isclose(span["T_K"], temperature)].iterrows():
        profile = profiles[row["profile"]]
        members = {n for state in profile.states for _, n in state}
        if not set(settings.catalyst) <= members:
            continue
        cycle = [s for s in steps if set(s.reactants + s.products) <= members]
        reasons = [f"{s.name} has kappa = {s.kappa:.3g} (tunnelling), which the energy span leaves out"
                   for s in cycle if s.source == "transition state" and abs(s.kappa - 1) > 1e-3]
        reasons += [f"{s.name} has no transition state (k {s.source}): the energy span takes it as infinitely fast"
                    for s in cycle if s.source != "transition state"]
        reasons += [f"[{n}] = {initial[n]:.4g} M, not the standard state's {c0:.4g} M" for n in settings.fixed
                    if n in members and abs(initial[n] - c0) > 1e-9 * c0]
        rows.append({"profile": profile.name, "T_K": float(temperature), "TOF_simulated_s-1": tof,
                     "TOF_energy_span_s-1": float(row["TOF_s-1"]), "ratio": tof / float(row["TOF_s-1"]),
                     "why_they_differ": "; ".join(reasons) or "they should agree (a simple cycle at steady state)"})
    return pd.DataFrame(rows) if rows else None


def _frame(times: np.ndarray, concentrations: np.ndarray, network: Network, own: dict[str, float]):
    """Concentrations as a DataFrame indexed by time_s, the species at their own concentration as constants."""
    import pandas as pd

    frame = pd.DataFrame(concentrations, index=pd.Index(times, name="time_s"), columns=list(network.species))
    for name, c in own.items():
        frame[name] = c
    return frame


def simulate(results, initial: dict[str, Any] | None = None, time: Any = None, **settings: Any) -> SimulationResult:
    """Simulate a run's reaction network: concentrations over time, yields, half-lives, rate control, TOF.

    ``results`` is a :class:`qcthermo.workflow.RunResults` (``qcthermo.run(...)``); ``initial`` maps species to
    initial concentrations (mol/L, or partial pressures at a gas standard state; strings with units such as
    "0.2 atm" or "5 mM" too) and ``time`` is the end time ("1 h", s) or a list of output times. Without both,
    the reaction file's [simulation] table is used. Other keywords: ``temperature`` (K or a program
    [[t, T], ...]), ``fixed``, ``product``, ``reactant``, ``catalyst``, ``method`` ("LSODA" | "BDF" |
    "Radau"), ``rtol``, ``atol`` (mol/L), ``viscosity`` (Pa s), ``rate_control`` (docs/simulate.md).
    Raises :class:`~qcthermo.errors.SimulationError` (one line) for bad input and for a solver failure
    (with the time reached).
    """

    if initial is None and time is None and not settings and getattr(results.reaction_file, "simulation", None):
        spec = results.reaction_file.simulation
    else:
        try:
            spec = simulation_settings({"initial": initial, "time": time, **settings})
        except ValueError as err:
            raise SimulationError(str(err)) from None
    network, steps, own, notes = run_network(results, spec.viscosity)
    _check_species(spec, network, own)
    temperature = _check_temperature(spec, network)
    t0 = temperature_program(temperature)(0.0)
    amounts = _amounts_in_molar(spec, results, t0)
    if spec.product is None:
        notes.append("no product named: no degree of rate control and no TOF")
    if spec.engine == "cantera":
        return _cantera_result(results, network, steps, own, spec, temperature, amounts, notes)
    run = integrate(network, amounts, _output_times(spec), fixed=spec.fixed, temperature=temperature,
                    method=spec.method, rtol=spec.rtol, atol=spec.atol, dense=True)
    if not run.success:
        raise SimulationError(f"the solver ({spec.method}) failed at t = {run.time_reached:.4g} s of "
                              f"{spec.end_time:.4g} s: {run.message}")
    frame = _frame(run.times, run.concentrations, network, own)
    grid = np.concatenate([[0.0], _default_grid(spec.end_time, min(spec.times) if spec.times else None)])
    dense = np.tile(run.concentrations[0], (len(grid), 1))
    dense[:, run.free] = run.dense(grid).T
    curves = _frame(grid, dense, network, own)
    summary, reactant = _summary(run, network, spec, amounts)
    if reactant:
        notes.append(f"conversion, yields and selectivities are molar, relative to {reactant}")
    tof = _tof(run, network, spec, notes)
    return SimulationResult(frame, curves, summary, _rate_control(network, amounts, spec, temperature, notes), tof,
                            _tof_comparison(results, steps, spec, tof, amounts, temperature),
                            _reaction_table(network, steps, t0), spec, notes, run.statistics)


def _reaction_table(network: Network, steps: list[_Step], temperature: float):
    import pandas as pd

    return pd.DataFrame([{"reaction": s.name, "equation": s.equation, "k_source": s.source,
                          "k_forward": float(k[0]), "k_reverse": float(k[1])}
                         for s, k in zip(steps, zip(*network.rate_constants(temperature), strict=True), strict=True)])


# -- the same simulation in Cantera ---------------------------------------------------------------------------


def _cantera_solution(results):
    """cantera.Solution of the run's mechanism: thermo.yaml as the run writes it (NASA-7 species, its gas-phase
    reactions as modified Arrhenius fits, reverse rates from the NASA-7 equilibrium constants)."""
    import tempfile

    import cantera as ct

    from .export.nasa7 import write_run_thermo

    findings = list(results.findings)
    with tempfile.TemporaryDirectory() as folder:
        written = write_run_thermo(results, folder)
        results.findings[:] = findings  # the file's own warnings belong to the run's thermo.yaml, not here
        if not any(Path(p).name == "thermo.yaml" for p in written):
            raise SimulationError("no Cantera mechanism: the run wrote no thermo.yaml")
        return ct.Solution(str(Path(folder) / "thermo.yaml"))


def _check_mechanism(gas, network: Network) -> None:
    """Every species and reaction of the network must be in the mechanism (the same molecules each side)."""
    missing = [n for n in network.species if n not in gas.species_names]
    if missing:
        raise SimulationError(f"the Cantera mechanism has no species {missing[0]!r} (only gas-phase minima with "
                              "NASA-7 fits are in thermo.yaml)")
    have = [(sorted(r.reactants.items()), sorted(r.products.items())) for r in gas.reactions()]
    for name, left, right in zip(network.reactions, network.reactants, network.products, strict=True):
        sides = [sorted(Counter(network.species[i] for i in side).items()) for side in (left, right)]
        if (sides[0], sides[1]) not in [(a, b) for a, b in have] and (sides[1], sides[0]) not in have:
            raise SimulationError(f"reaction {name!r} is not in the Cantera mechanism (thermo.yaml holds the gas-phase "
                                  "reactions with a transition state)")


def cantera_concentrations(gas, network: Network, initial: dict[str, float], times: np.ndarray, temperature: float,
                           rtol: float, atol: float) -> np.ndarray:
    """Concentrations (mol/L; Cantera's kmol/m^3 is the same number) of the network's species at ``times`` in a
    Cantera ideal-gas reactor at constant volume and temperature (IdealGasReactor, energy equation off), started
    from ``initial`` (mol/L) at p = c_total R T."""
    import cantera as ct

    total = sum(initial.values())
    if not total > 0:
        raise SimulationError("the Cantera engine needs some gas in the reactor (every initial concentration is 0)")
    gas.TPX = temperature, total * 1000.0 * R_GAS * temperature, {n: c for n, c in initial.items() if c > 0}
    reactor = ct.IdealGasReactor(gas, energy="off", clone=True)
    net = ct.ReactorNet([reactor])
    net.rtol, net.atol = rtol, atol
    index = [gas.species_index(n) for n in network.species]
    out = []
    for t in times:
        if t > 0:
            net.advance(float(t))
        out.append(reactor.phase.concentrations[index])
    return np.array(out)


def _cantera_result(results, network: Network, steps: list[_Step], own: dict[str, float],
                    spec: SimulationSettings, temperature, amounts: dict[str, float], notes: list[str]):
    """simulate() with engine = "cantera": the concentrations from Cantera; conversion and yields from them;
    no half-lives, rate control or TOF (those need the scipy engine's dense solution and perturbations)."""
    if spec.fixed or np.ndim(temperature) != 0 or own:
        raise SimulationError("the Cantera engine is an ideal-gas reactor: no fixed species, no species at their own "
                              "concentration, one temperature")
    gas = _cantera_solution(results)
    _check_mechanism(gas, network)
    times = np.unique(np.concatenate([[0.0], _output_times(spec)]))
    concentrations = cantera_concentrations(gas, network, amounts, times, float(temperature), spec.rtol, spec.atol)
    frame = _frame(times, concentrations, network, own)
    run = Trajectory(times, concentrations, True, "", float(times[-1]), np.zeros((len(times), len(network.reactions))),
                     free=np.arange(len(network.species)))
    summary, _ = _summary(run, network, spec, amounts)
    notes.append("engine Cantera (IdealGasReactor at constant volume and temperature, thermo.yaml's mechanism: "
                 "modified Arrhenius fits, reverse rates from its NASA-7 data); no half-lives, rate control or TOF")
    table = _reaction_table(network, steps, float(temperature))
    return SimulationResult(frame, frame, summary, None, None, None, table, spec, notes, {})


make_callable(__name__, simulate)
