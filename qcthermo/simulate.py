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
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from .errors import SimulationError
from .units import K_B_EH, N_A, R_GAS

#: solvers of scipy.integrate.solve_ivp suited to stiff kinetics
METHODS = ("BDF", "Radau", "LSODA")
#: default relative and absolute (mol/L) tolerances of the solver
RTOL = 1e-8
ATOL_M = 1e-20
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
              temperature=None, method: str = "BDF", rtol: float = RTOL, atol: float = ATOL_M,
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
    reached = [0.0]  # the latest time the solver asked for: where a failure left it

    def rhs(t, y):
        reached[0] = max(reached[0], t)
        return system.rhs(t, y, scale)

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
    full = np.tile(c0, (sol.y.shape[1], 1))
    full[:, system.free] = sol.y.T
    rates = np.array([np.subtract(*system.rates(t, y, scale)) for t, y in zip(sol.t, sol.y.T, strict=True)]) \
        if sol.y.size else np.zeros((0, len(network.reactions)))
    return Trajectory(sol.t, full, sol.status == 0, str(sol.message),
                      float(sol.t[-1]) if sol.t.size else 0.0, rates.reshape(len(sol.t), -1),
                      sol.sol if dense else None, system.free,
                      {"nfev": int(sol.nfev), "njev": int(sol.njev), "nlu": int(sol.nlu)})


def formation_rate(network: Network, rates: np.ndarray, product: str) -> np.ndarray:
    """Net rate of formation of ``product``, mol L^-1 s^-1: sum_j nu_j r_j over the reactions (also for a
    fixed species, whose concentration the reservoir keeps constant)."""
    row = network.stoichiometry()[network.species.index(product)]
    return rates @ row


def degree_of_rate_control(network: Network, initial: dict[str, float], time: float, product: str, *,
                           fixed: Sequence[str] = (), temperature=None, method: str = "BDF",
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
