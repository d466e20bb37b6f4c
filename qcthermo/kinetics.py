"""Transition-state theory rate constants, tunnelling, Arrhenius fits and the energy span model.

Everything here is per molecule in atomic units: energies in hartree, temperatures in K (floats or
1-D arrays; results broadcast over temperature). Rate constants come out in the units named beside
them ("s^-1", "M^-1 s^-1", "cm^3 molecule^-1 s^-1", ...), chosen by the molecularity and the
standard state of the free energies. The decisions behind the defaults are in docs/kinetics.md.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from .records import parse_standard_state
from .units import H_PLANCK, K_B, K_B_EH, WAVENUMBER_EH, hartree_to

#: tunnelling models accepted by :func:`reaction_rates`
TUNNELLING_MODELS = ("eckart", "wigner", "none")

#: the Eckart integral runs to this many k_B T above the barrier top and keeps the energies where the
#: integrand is within e^-40 (~4e-18) of its peak
_ECKART_LOG_RANGE = 40.0
#: points of the coarse grid that brackets the integrand and of the fine grid that integrates it
_ECKART_COARSE_POINTS = 401
_ECKART_FINE_POINTS = 501
#: temperatures integrated together
_ECKART_BLOCK = 32


def _temperature(temperature) -> np.ndarray:
    t = np.asarray(temperature, dtype=float)
    if t.ndim > 1 or np.any(~np.isfinite(t)) or np.any(t <= 0):
        raise ValueError("temperature must be a positive number or a 1-D array of them")
    return t


def _like_input(value: np.ndarray, temperature):
    """A float for a scalar temperature, the array otherwise."""
    return float(value) if np.ndim(temperature) == 0 else value


def thermal_frequency(temperature):
    """k_B T / h, s^-1: the universal frequency factor of transition-state theory.

    Eyring, J. Chem. Phys. 1935, 3, 107.
    """
    t = _temperature(temperature)
    return _like_input(K_B * t / H_PLANCK, temperature)


def standard_concentration(standard_state, temperature) -> tuple[np.ndarray, str]:
    """c0 of a standard state and its unit: ("M") in mol/L, or ("molecule cm^-3") for a gas.

    A solution standard state ("1M", "55.3M") gives c0 in mol/L directly. A pressure standard state
    ("1atm", "1bar", or a pressure in Pa as a number) gives the ideal-gas number density
    c0 = p0 / (k_B T) in molecule cm^-3, so that bimolecular rate constants come out in
    cm^3 molecule^-1 s^-1 as gas kinetics quotes them.
    """
    t = _temperature(temperature)
    if isinstance(standard_state, (int, float)) and not isinstance(standard_state, bool):
        kind, value = "pressure", float(standard_state)
        if value <= 0:
            raise ValueError(f"standard pressure {standard_state!r} Pa must be positive")
    else:
        kind, value = parse_standard_state(standard_state)
    if kind == "concentration":
        return np.full_like(t, value), "M"
    return value / (K_B * t) * 1e-6, "molecule cm^-3"


def rate_constant_unit(molecularity: int, concentration_unit: str) -> str:
    """Unit of an m-molecular rate constant, e.g. (2, "M") -> "M^-1 s^-1",
    (2, "molecule cm^-3") -> "cm^3 molecule^-1 s^-1", (1, ...) -> "s^-1", (0, "M") -> "M s^-1"
    (a pseudo-zero-order rate constant: every reactant at its own concentration, so k is the rate)."""
    order = molecularity - 1
    if order == 0:
        return "s^-1"
    if order == -1:
        return f"{concentration_unit} s^-1"
    if concentration_unit == "M":
        return f"M^-{order} s^-1"
    volume = "cm^3" if order == 1 else f"cm^{3 * order}"
    molecules = "molecule^-1" if order == 1 else f"molecule^-{order}"
    return f"{volume} {molecules} s^-1"


def _check_molecularity(molecularity) -> int:
    """A whole number >= 0; 0 is the pseudo-order of a side whose species are all at their own concentration."""
    m = int(molecularity)
    if m != molecularity or m < 0:
        raise ValueError(f"molecularity {molecularity!r} must be a whole number >= 0")
    return m


def eyring_rate(dG_act, temperature, molecularity, standard_state="1M", kappa=1.0, degeneracy=1.0):
    """Transition-state theory rate constant and its unit.

    k = L kappa (k_B T / h) (c0)^(1 - m) exp(-dG_act / k_B T)

    Eyring, J. Chem. Phys. 1935, 3, 107; the standard-state factor (c0)^(1-m) as in Evans and
    Polanyi, Trans. Faraday Soc. 1935, 31, 875 and every textbook since. ``dG_act`` is the free energy
    of activation in hartree per molecule, in the standard state ``standard_state`` (the one the
    free energies were computed in), ``m`` the molecularity, ``kappa`` the transmission coefficient
    (tunnelling) and ``degeneracy`` L any reaction-path degeneracy not already inside ``dG_act``
    (see :func:`reaction_path_degeneracy`). ``m`` may be a pseudo-order: the molecularity less the
    species whose own concentration c is inside ``dG_act`` (through RT ln(c/c0)); m = 0 gives the
    rate itself, in concentration per second.

    Returns (k, unit): k a float for a scalar temperature, an array over temperature otherwise.
    """
    t = _temperature(temperature)
    m = _check_molecularity(molecularity)
    c0, c_unit = standard_concentration(standard_state, t)
    k = degeneracy * np.asarray(kappa) * K_B * t / H_PLANCK * c0 ** (1 - m) * np.exp(-np.asarray(dG_act) / (K_B_EH * t))
    return _like_input(k, temperature), rate_constant_unit(m, c_unit)


def reaction_path_degeneracy(
    sigma_reactants: Sequence[int],
    sigma_ts: int,
    optical_isomers_ts: int = 1,
    optical_isomers_reactants: Sequence[int] = (),
) -> float:
    """Reaction-path degeneracy (reaction symmetry number) L = (prod sigma_R / sigma_TS) (n_TS / prod n_R).

    Fernandez-Ramos, Ellingson, Meana-Paneda, Marques, Truhlar, Theor. Chem. Acc. 2007, 118, 813:
    sigma are rotational symmetry numbers; n the numbers of optical isomers (2 for a chiral
    structure whose mirror image was not computed separately, 1 otherwise), which the rotational
    symmetry numbers do not count.

    When the free energies already contain R T ln sigma in their rotational entropies (qcthermo's
    do), the symmetry-number part of L is already inside exp(-dG_act / RT); multiply k only by
    :func:`degeneracy_beyond_free_energy` of L, never by L itself.
    """
    sigmas = [*sigma_reactants, sigma_ts, optical_isomers_ts, *optical_isomers_reactants]
    if any(int(s) != s or s < 1 for s in sigmas):
        raise ValueError("symmetry numbers and optical-isomer counts must be positive whole numbers")
    return float(np.prod(sigma_reactants) / sigma_ts * optical_isomers_ts / np.prod(optical_isomers_reactants))


def degeneracy_beyond_free_energy(degeneracy: float, sigma_reactants: Sequence[int], sigma_ts: int) -> float:
    """The factor of a reaction-path degeneracy L that free energies with symmetry numbers lack.

    L_extra = L sigma_TS / prod sigma_R. The rotational partition functions q_rot ~ 1/sigma already
    give exp(-dG_act / RT) the factor prod sigma_R / sigma_TS (Fernandez-Ramos et al., Theor. Chem.
    Acc. 2007, 118, 813, section 2); only the rest (optical isomers, or a user's own L) is applied to k.
    """
    if degeneracy <= 0:
        raise ValueError(f"reaction-path degeneracy {degeneracy!r} must be positive")
    return float(degeneracy * sigma_ts / np.prod(sigma_reactants))


def _reduced_frequency(imag_freq_cm, temperature) -> np.ndarray:
    """u = h c |nu| / (k_B T), dimensionless."""
    return abs(float(imag_freq_cm)) * WAVENUMBER_EH / (K_B_EH * _temperature(temperature))


def wigner_kappa(imag_freq_cm, temperature):
    """Wigner tunnelling correction kappa = 1 + (1/24) (h c |nu| / k_B T)^2.

    Wigner, Z. Phys. Chem. B 1932, 19, 203: the leading quantum correction for a parabolic barrier
    top; ``imag_freq_cm`` is the transition state's imaginary wavenumber in cm^-1 (sign ignored).
    """
    u = _reduced_frequency(imag_freq_cm, temperature)
    return _like_input(1.0 + u**2 / 24.0, temperature)


def _log_sinh(x: np.ndarray) -> np.ndarray:
    """ln sinh(x) for x > 0 without overflow: x - ln 2 + ln(1 - e^(-2x))."""
    return x - np.log(2.0) + np.log(-np.expm1(-2.0 * x))


def _log_cosh(x: np.ndarray) -> np.ndarray:
    """ln cosh(x) without overflow: |x| - ln 2 + ln(1 + e^(-2|x|))."""
    ax = np.abs(x)
    return ax - np.log(2.0) + np.log1p(np.exp(-2.0 * ax))


def _eckart_barrier(v_forward: float, v_reverse: float, imag_freq_cm: float) -> tuple[float, float, float]:
    """Check the barriers and return (hbar omega, g, delta^2) of the fitted Eckart barrier (hartree units).

    g: alpha = g sqrt(E), beta = g sqrt(E - dV) (2 pi alpha, 2 pi beta the phase arguments);
    delta^2 = 4 V1 V2 / (hbar omega)^2 - 1/4 (negative for a barrier too thin to hold a resonance).
    """
    v1, v2 = float(v_forward), float(v_reverse)
    if not (v1 > 0 and v2 > 0):
        raise ValueError(
            f"an Eckart barrier needs positive zero-point corrected barriers both ways (got {v1:.6g} and "
            f"{v2:.6g} Eh)"
        )
    hw = abs(float(imag_freq_cm)) * WAVENUMBER_EH
    if not hw > 0:
        raise ValueError("an Eckart barrier needs a non-zero imaginary frequency")
    s1, s2 = np.sqrt(v1), np.sqrt(v2)
    return hw, 2.0 * s1 * s2 / ((s1 + s2) * hw), 4.0 * v1 * v2 / hw**2 - 0.25


def _log_eckart_transmission(energy: np.ndarray, v_forward: float, v_reverse: float, imag_freq_cm: float):
    """ln P(E) of :func:`eckart_transmission` (-inf where no transmission is possible)."""
    _, g, delta2 = _eckart_barrier(v_forward, v_reverse, imag_freq_cm)
    e = np.asarray(energy, dtype=float)
    de = float(v_forward) - float(v_reverse)
    open_ = (e > 0) & (e > de)
    a = 2.0 * np.pi * g * np.sqrt(np.where(open_, e, 1.0))
    b = 2.0 * np.pi * g * np.sqrt(np.where(open_, e - de, 1.0))
    # cosh(2 pi delta) turns into cos(2 pi |delta|) for an imaginary delta
    d = 2.0 * np.pi * np.sqrt(abs(delta2))
    log_cosh_ab = _log_cosh(a + b)
    if delta2 >= 0:
        log_denominator = np.logaddexp(log_cosh_ab, _log_cosh(np.full_like(a, d)))
    else:
        log_denominator = log_cosh_ab + np.log1p(np.cos(d) * np.exp(-log_cosh_ab))
    log_p = np.log(2.0) + _log_sinh(a) + _log_sinh(b) - log_denominator
    return np.where(open_, log_p, -np.inf)


def eckart_transmission(energy, v_forward, v_reverse, imag_freq_cm):
    """Quantum transmission probability P(E) through an asymmetric Eckart barrier.

    Eckart, Phys. Rev. 1930, 35, 1303; in the form of Johnston and Heicklen, J. Phys. Chem. 1962, 66,
    532:  P = 1 - [cosh 2pi(a - b) + cosh 2pi d] / [cosh 2pi(a + b) + cosh 2pi d]
            = 2 sinh(2pi a) sinh(2pi b) / [cosh 2pi(a + b) + cosh 2pi d]   (the form used: no cancellation)
    with, for V(x) = A y/(1+y) + B y/(1+y)^2, y = exp(x/l), fitted to the forward barrier V1, the reverse
    barrier V2 and the curvature of the top (imaginary angular frequency omega):
        A = V1 - V2,  sqrt(B) = sqrt(V1) + sqrt(V2),  m l^2 = (B^2 - A^2)^2 / (8 B^3 omega^2),
        a = g sqrt(E),  b = g sqrt(E - A),  g = 2 sqrt(V1 V2) / ((sqrt V1 + sqrt V2) hbar omega),
        d = sqrt(4 V1 V2 / (hbar omega)^2 - 1/4).
    ``energy`` is measured from the reactant asymptote, hartree; P = 0 below max(0, A).
    """
    return np.exp(_log_eckart_transmission(energy, v_forward, v_reverse, imag_freq_cm))


def eckart_kappa(imag_freq_cm, v_forward, v_reverse, temperature):
    """Eckart tunnelling correction: Boltzmann-averaged quantum over classical transmission.

    kappa(T) = exp(V1 / k_B T) / (k_B T) * integral_{E0}^{inf} P(E) exp(-E / k_B T) dE,  E0 = max(0, V1 - V2)

    (Johnston and Heicklen, J. Phys. Chem. 1962, 66, 532; Brown, J. Res. Natl. Bur. Stand. 1981, 86,
    357), with P(E) of :func:`eckart_transmission`, V1 and V2 the zero-point corrected forward and
    reverse barriers (hartree) and ``imag_freq_cm`` the imaginary wavenumber. The classical reference
    transmits everything above V1. kappa is the same for the reverse reaction (P(E) is symmetric and
    the Boltzmann factors differ by exp(-(V1 - V2)/k_B T) top and bottom).

    Numerics: E = E0 + u^2 removes the square-root onset of P at E0. A coarse grid in u from E0 to
    40 k_B T above the top brackets the energies where the integrand is within e^-40 of its peak (it
    is unimodal: log-concave P times a Boltzmann factor); Simpson's rule on fine grids there gives
    the integral, with a segment of its own for the band around the top where P steps from 0 to 1.
    Everything is handled in logarithms, so large barriers and low temperatures neither overflow nor
    underflow on the way; a kappa beyond the float range (deep tunnelling far below the
    crossover temperature) comes back as inf.
    """
    t = _temperature(temperature)
    v1, v2 = float(v_forward), float(v_reverse)
    hw, _, _ = _eckart_barrier(v1, v2, imag_freq_cm)
    flat = np.atleast_1d(t)
    # a few dozen temperatures at a time keep the (temperature, energy) grids small
    kappa = np.concatenate([_eckart_kappa_block(flat[i:i + _ECKART_BLOCK], v1, v2, imag_freq_cm, hw)
                            for i in range(0, flat.size, _ECKART_BLOCK)])
    return _like_input(kappa.reshape(t.shape), temperature)


def _eckart_kappa_block(t: np.ndarray, v1: float, v2: float, imag_freq_cm: float, hw: float) -> np.ndarray:
    """:func:`eckart_kappa` for a 1-D block of temperatures."""
    from scipy.integrate import simpson

    kt = K_B_EH * t[:, None]
    e0 = max(0.0, v1 - v2)

    def log_integrand(u):
        # P(E) exp(-(E - V1)/kT) dE/du with E = E0 + u^2, dE/du = 2u
        energy = e0 + u**2
        with np.errstate(divide="ignore"):
            return _log_eckart_transmission(energy, v1, v2, imag_freq_cm) - (energy - v1) / kt + np.log(2 * u)

    u_max = np.sqrt(v1 - e0 + _ECKART_LOG_RANGE * kt)
    coarse = u_max * np.linspace(0.0, 1.0, _ECKART_COARSE_POINTS)
    log_f = log_integrand(coarse)
    inside = log_f > np.max(log_f, axis=1, keepdims=True) - _ECKART_LOG_RANGE
    step = u_max[:, 0] / (_ECKART_COARSE_POINTS - 1)
    first = np.argmax(inside, axis=1)
    last = _ECKART_COARSE_POINTS - 1 - np.argmax(inside[:, ::-1], axis=1)
    rows = np.arange(len(first))
    lo = np.maximum(coarse[rows, first] - step, 0.0)
    hi = np.minimum(coarse[rows, last] + step, u_max[:, 0])
    # P(E) steps from 0 to 1 within a few hbar omega / 2 pi of the top: that band gets its own segment
    width = _ECKART_LOG_RANGE * hw / (2.0 * np.pi)
    band = np.sqrt(np.maximum(v1 + np.array([-width, width]) - e0, 0.0))
    edges = np.sort(np.column_stack([lo, np.clip(band[0], lo, hi), np.clip(band[1], lo, hi), hi]), axis=1)
    fraction = np.linspace(0.0, 1.0, _ECKART_FINE_POINTS)
    fine = edges[:, :-1, None] + np.diff(edges, axis=1)[:, :, None] * fraction  # (T, segment, point)
    log_f = log_integrand(fine.reshape(len(rows), -1)).reshape(fine.shape)
    peak = np.max(log_f, axis=(1, 2))
    integral = simpson(np.exp(log_f - peak[:, None, None]), x=fine, axis=2).sum(axis=1)
    with np.errstate(over="ignore"):
        return np.exp(peak + np.log(integral) - np.log(kt[:, 0]))


def _kelvin_list(t: np.ndarray) -> str:
    return ", ".join(f"{x:g}" for x in t) + " K"


def _out_of_range_notes(t: np.ndarray, kappa: np.ndarray, k_forward: np.ndarray, k_reverse: np.ndarray) -> list[str]:
    """Refuse temperatures where a rate is not a number of double precision; note where one underflows to 0.

    Deep tunnelling (kappa beyond ~1e308, a few kelvin for a 1000i cm^-1 barrier) lies outside what the
    one-dimensional Eckart or Wigner models describe; a rate below ~1e-308 is 0 in double precision.
    """
    bad = ~(np.isfinite(kappa) & np.isfinite(k_forward) & np.isfinite(k_reverse))
    if bad.any():
        raise ValueError(f"the rate constant is not finite at {_kelvin_list(t[bad])} (deep tunnelling, beyond the "
                         "one-dimensional model): choose higher temperatures")
    zero = (k_forward == 0) | (k_reverse == 0)
    return [f"a rate constant underflows to 0 (below 1e-308) at {_kelvin_list(t[zero])}"] if zero.any() else []


def reaction_rates(
    dG_act_forward,
    dG_act_reverse,
    temperature,
    molecularity_forward: int,
    molecularity_reverse: int,
    standard_state="1M",
    imaginary_frequency: float | None = None,
    barrier_forward_zpe: float | None = None,
    barrier_reverse_zpe: float | None = None,
    degeneracy: float = 1.0,
    tunnelling: str = "eckart",
) -> dict:
    """Forward and reverse TST rate constants of one reaction with a transition state, with tunnelling.

    k_forward = L kappa (k_B T / h) (c0)^(1 - m_f) exp(-dG_act_forward / k_B T), and likewise k_reverse
    with the reverse free energy of activation, the products' molecularity and the SAME kappa and L:
    the Eckart transmission is symmetric, so its kappa is one number for both directions (microscopic
    reversibility), and with one kappa and one L, k_forward / k_reverse is the equilibrium constant of
    the free energies. ``degeneracy`` is the factor not already in the free energies (see
    :func:`degeneracy_beyond_free_energy`); energies in hartree, ``imaginary_frequency`` in cm^-1.

    ``tunnelling`` chooses the kappa applied ("eckart" | "wigner" | "none"); both corrections are
    always reported when they can be computed (NaN otherwise). When the chosen one cannot be computed
    (no imaginary frequency; a zero-point corrected barrier <= 0, for which an Eckart barrier does
    not exist) kappa = 1 and ``notes`` says why; ``notes`` speaks of the chosen model only.

    Returns a dict: kappa, kappa_wigner, kappa_eckart, k_forward, k_reverse, k_unit_forward,
    k_unit_reverse, degeneracy, tunnelling, notes (floats for a scalar temperature, else arrays).
    """
    if tunnelling not in TUNNELLING_MODELS:
        raise ValueError(f"unknown tunnelling model {tunnelling!r}; choose one of {', '.join(TUNNELLING_MODELS)}")
    t = _temperature(temperature)
    nan = _like_input(np.full(t.shape, np.nan), temperature)
    kappa_wigner = kappa_eckart = nan
    missing = {"none": None, "wigner": None, "eckart": None}  # why a correction could not be computed
    if imaginary_frequency is None or imaginary_frequency == 0:
        missing["wigner"] = missing["eckart"] = "no imaginary frequency"
    else:
        kappa_wigner = wigner_kappa(imaginary_frequency, temperature)
        if barrier_forward_zpe is None or barrier_reverse_zpe is None:
            missing["eckart"] = "no zero-point corrected barriers"
        else:
            try:
                kappa_eckart = eckart_kappa(imaginary_frequency, barrier_forward_zpe, barrier_reverse_zpe, temperature)
            except ValueError as err:
                missing["eckart"] = str(err)
    chosen = {"eckart": kappa_eckart, "wigner": kappa_wigner, "none": 1.0}[tunnelling]
    notes: list[str] = []
    if missing[tunnelling]:
        notes.append(f"no {tunnelling.capitalize()} tunnelling correction ({missing[tunnelling]}); kappa = 1")
        chosen = 1.0
    kappa = _like_input(np.broadcast_to(np.asarray(chosen, dtype=float), t.shape).copy(), temperature)
    with np.errstate(over="ignore", under="ignore", invalid="ignore"):  # judged below, with a reason
        k_forward, unit_forward = eyring_rate(
            dG_act_forward, temperature, molecularity_forward, standard_state, kappa, degeneracy
        )
        k_reverse, unit_reverse = eyring_rate(
            dG_act_reverse, temperature, molecularity_reverse, standard_state, kappa, degeneracy
        )
    notes += _out_of_range_notes(t, np.atleast_1d(kappa), np.atleast_1d(k_forward), np.atleast_1d(k_reverse))
    return {
        "kappa": kappa,
        "kappa_wigner": kappa_wigner,
        "kappa_eckart": kappa_eckart,
        "k_forward": k_forward,
        "k_reverse": k_reverse,
        "k_unit_forward": unit_forward,
        "k_unit_reverse": unit_reverse,
        "degeneracy": float(degeneracy),
        "tunnelling": tunnelling,
        "notes": notes,
    }


@dataclass(frozen=True)
class Participant:
    """One species on one side of an elementary reaction, as :func:`reaction_kinetics` needs it.

    Attributes:
        g: free energy, hartree per molecule (a float or an array over temperature), in the run's
            standard state, or at the species' own concentration when ``own_concentration``.
        e_zpe: electronic plus zero-point energy, hartree (float or array over temperature: the
            populations of a conformer ensemble move with T).
        coefficient: stoichiometric coefficient; a whole number, since an elementary step counts molecules
            ("2 A" is A twice).
        symmetry_number: the rotational symmetry number sigma that ``g`` contains (R T ln sigma).
        own_concentration: the species is held at its own concentration c, which ``g`` already contains
            through R T ln(c/c0) (a solvent that takes part).
    """

    g: Any
    e_zpe: Any
    coefficient: float = 1.0
    symmetry_number: int = 1
    own_concentration: bool = False


@dataclass(frozen=True)
class TransitionState:
    """The saddle point of an elementary reaction, as :func:`reaction_kinetics` needs it.

    Attributes:
        g, e_zpe: as for :class:`Participant`.
        symmetry_number: its rotational symmetry number.
        imaginary_frequency: the reaction mode, cm^-1, as the program printed it (unscaled; the sign is
            ignored); None when there is none.
    """

    g: Any
    e_zpe: Any
    symmetry_number: int = 1
    imaginary_frequency: float | None = None


def _whole_coefficients(side: Sequence[Participant]) -> list[int]:
    coefficients = [p.coefficient for p in side]
    if any(c != round(c) or c < 1 for c in coefficients):
        raise ValueError(f"an elementary reaction needs whole stoichiometric coefficients, not {coefficients}")
    return [round(c) for c in coefficients]


def pseudo_molecularity(side: Sequence[Participant]) -> int:
    """Molecularity of one side, leaving out the species at their own concentration.

    Their G(c) = G(c0) + R T ln(c/c0) puts a factor c/c0 into exp(-dG_act / R T), so the Eyring rate with
    (c0)^(1 - m') is k [S] for each left-out species S: a pseudo-order rate constant (the textbook
    reactant in large excess). A side made only of such species has pseudo-order 0 (k is then the rate,
    in concentration per second); flooring it at 1 would label k1 c/c0 a first-order k in s^-1.
    """
    return sum(c for c, p in zip(_whole_coefficients(side), side, strict=True) if not p.own_concentration)


def symmetry_numbers(side: Sequence[Participant]) -> list[int]:
    """The rotational symmetry numbers of one side, each species counted as often as its coefficient.

    "2 A" contributes sigma_A twice: nu G_A holds nu R T ln sigma_A, i.e. the factor sigma_A^nu of
    prod sigma_R in the reaction-path degeneracy (Fernandez-Ramos et al., Theor. Chem. Acc. 2007, 118, 813).
    """
    return [p.symmetry_number for c, p in zip(_whole_coefficients(side), side, strict=True) for _ in range(c)]


def _side_sum(side: Sequence[Participant], quantity: str) -> np.ndarray:
    return sum(p.coefficient * np.asarray(getattr(p, quantity), dtype=float) for p in side)


def _first(value) -> float:
    """The value at the first temperature."""
    return float(np.atleast_1d(value)[0])


def reaction_kinetics(
    reactants: Sequence[Participant],
    products: Sequence[Participant],
    transition_state: TransitionState,
    temperature,
    standard_state="1M",
    tunnelling: str = "eckart",
    degeneracy: float | None = None,
) -> dict:
    """Forward and reverse TST rate constants of one elementary reaction from its species' energies.

    The reaction's part of the science, on plain numbers:

    * dG_act = G_TS - sum_R nu G_R and dG_act_rev = G_TS - sum_P nu G_P (hartree, over temperature);
    * the molecularity of each side with :func:`pseudo_molecularity` (species at their own
      concentration left out; a side of only such species is of order 0);
    * the reaction-path degeneracy: ``degeneracy`` is the user's total L (None: the symmetry numbers
      alone, already inside G), of which only :func:`degeneracy_beyond_free_energy`, L sigma_TS / prod
      sigma_R with the sigmas of :func:`symmetry_numbers`, is applied;
    * the Eckart barriers V1 = E+ZPE(TS) - sum_R nu E+ZPE(R) and V2 likewise from the products, at the
      first temperature (E+ZPE depends on T only through conformer populations), with the imaginary
      frequency unscaled (docs/kinetics.md, "Tunnelling");

    then :func:`reaction_rates`. Returns its dict, plus molecularity_forward, molecularity_reverse,
    barrier_forward_zpe, barrier_reverse_zpe (hartree). Raises ValueError for what no rate constant can
    be computed from (a fractional coefficient, an unknown tunnelling model, a non-positive L).
    """
    extra = 1.0 if degeneracy is None else degeneracy_beyond_free_energy(
        degeneracy, symmetry_numbers(reactants), transition_state.symmetry_number)
    m_forward, m_reverse = pseudo_molecularity(reactants), pseudo_molecularity(products)
    g_ts, e_ts = np.asarray(transition_state.g, dtype=float), np.asarray(transition_state.e_zpe, dtype=float)
    v_forward, v_reverse = _first(e_ts - _side_sum(reactants, "e_zpe")), _first(e_ts - _side_sum(products, "e_zpe"))
    out = reaction_rates(g_ts - _side_sum(reactants, "g"), g_ts - _side_sum(products, "g"), temperature,
                         m_forward, m_reverse, standard_state, transition_state.imaginary_frequency,
                         v_forward, v_reverse, degeneracy=extra, tunnelling=tunnelling)
    return {**out, "molecularity_forward": m_forward, "molecularity_reverse": m_reverse,
            "barrier_forward_zpe": v_forward, "barrier_reverse_zpe": v_reverse}


@dataclass(frozen=True)
class ArrheniusFit:
    """k(T) = A T^n exp(-Ea / k_B T), fitted over [T_min, T_max].

    Attributes:
        A: pre-exponential factor, in ``unit`` K^-n.
        n: temperature exponent (0 for the plain Arrhenius form).
        Ea: activation energy, hartree per molecule (``Ea_kcal_mol``, ``Ea_kJ_mol`` for molar units).
        T_min, T_max: the temperature range fitted, K.
        max_rel_error: the largest |k_fit / k - 1| over the fitted points.
        unit: the unit of k (as given to the fit).
    """

    A: float
    n: float
    Ea: float
    T_min: float
    T_max: float
    max_rel_error: float
    unit: str = ""

    @property
    def Ea_kcal_mol(self) -> float:
        return float(hartree_to(self.Ea, "kcal/mol"))

    @property
    def Ea_kJ_mol(self) -> float:
        return float(hartree_to(self.Ea, "kJ/mol"))

    def rate(self, temperature):
        """k(T) of the fitted form."""
        t = _temperature(temperature)
        return _like_input(self.A * t**self.n * np.exp(-self.Ea / (K_B_EH * t)), temperature)


def fit_arrhenius(temperature, k, n: float | None = None, unit: str = "") -> ArrheniusFit:
    """Modified Arrhenius fit k = A T^n exp(-Ea / k_B T) by linear least squares on ln k.

    ln k = ln A + n ln T - Ea / (k_B T) is linear in (ln A, n, Ea) (Kooij, Z. Phys. Chem. 1893, 12, 155;
    the form of the NIST Chemical Kinetics Database). ``n=None`` fits n (needs three or more
    temperatures); a number fixes it (``n=0``: the plain Arrhenius form, two temperatures suffice).
    Ea comes back in hartree per molecule. Each point weighs the same in ln k, i.e. in relative error.
    """
    t = _temperature(temperature)
    k = np.asarray(k, dtype=float)
    if t.ndim != 1 or k.shape != t.shape:
        raise ValueError("an Arrhenius fit needs k at each of a 1-D array of temperatures")
    if np.any(~np.isfinite(k)) or np.any(k <= 0):
        raise ValueError("an Arrhenius fit needs positive, finite rate constants")
    n_free = n is None
    if len(np.unique(t)) < (3 if n_free else 2):
        raise ValueError(f"an Arrhenius fit {'with free n ' if n_free else ''}needs at least {3 if n_free else 2} "
                         "distinct temperatures")
    columns = [np.ones_like(t), -1.0 / (K_B_EH * t)]
    target = np.log(k)
    if n_free:
        columns.insert(1, np.log(t))
    else:
        target = target - n * np.log(t)
    solution, *_ = np.linalg.lstsq(np.column_stack(columns), target, rcond=None)
    ln_a, ea = solution[0], solution[-1]
    n_fit = float(solution[1]) if n_free else float(n)
    fit = ArrheniusFit(float(np.exp(ln_a)), n_fit, float(ea), float(t.min()), float(t.max()), 0.0, unit)
    max_rel = float(np.max(np.abs(fit.rate(t) / k - 1.0)))
    return ArrheniusFit(fit.A, fit.n, fit.Ea, fit.T_min, fit.T_max, max_rel, unit)


@dataclass(frozen=True)
class EnergySpanResult:
    """The energy span analysis of a catalytic cycle at one temperature.

    Attributes:
        temperature: K.
        tof: turnover frequency of the full expression, s^-1 (negative: the cycle runs backwards).
        tof_energy_span: the energy span approximation (k_B T / h) exp(-energy_span / k_B T), s^-1.
        energy_span: delta E, hartree: T_TDTS - I_TDI, plus dG_r when the TDTS comes before the TDI.
        tdts, tdi: names of the TOF-determining transition state and intermediate.
        degree_of_control: {name: X_TOF} for every transition state and intermediate.
        reaction_energy: dG_r of one turnover, hartree.
    """

    temperature: float
    tof: float
    tof_energy_span: float
    energy_span: float
    tdts: str
    tdi: str
    degree_of_control: dict[str, float]
    reaction_energy: float


def energy_span(
    states: Sequence[tuple[str, float, bool]], reaction_energy: float, temperature: float
) -> EnergySpanResult:
    """Turnover frequency and degrees of TOF control of a catalytic cycle (the energy span model).

    Kozuch and Shaik, Acc. Chem. Res. 2011, 44, 101 (and J. Phys. Chem. A 2008, 112, 6032):

        TOF = (k_B T / h) (exp(-dG_r / RT) - 1) / sum_ij exp((T_i - I_j - dG'_ij) / RT),
        dG'_ij = dG_r if TS i comes after intermediate j in the cycle, else 0;
        X_TOF(TS i) = sum_j exp((T_i - I_j - dG'_ij)/RT) / sum_ij (...),  X_TOF(I j) = sum_i (...) / sum_ij (...);
        energy span dE = T_TDTS - I_TDI (+ dG_r when the TDTS precedes the TDI), TOF ~ (k_B T / h) exp(-dE / RT),

    with the TDTS and TDI the states of largest degree of TOF control. ``states`` are (name, G in
    hartree, is_transition_state) in cycle order, starting with an intermediate (the resting
    reference) and without repeating it at the end: one turnover returns to the first state lowered by
    ``reaction_energy`` dG_r (negative for an exergonic cycle). Between two transition states there
    must be an intermediate. ``temperature`` is one temperature in K.
    """
    t = float(_temperature(temperature))
    names = [s[0] for s in states]
    if len(set(names)) != len(names):
        raise ValueError("the states of a cycle need distinct names")
    if not states or states[0][2]:
        raise ValueError("a catalytic cycle starts with an intermediate (the resting reference)")
    is_ts = np.array([bool(s[2]) for s in states])
    if not is_ts.any():
        raise ValueError("a catalytic cycle needs at least one transition state")
    if np.any(is_ts & np.roll(is_ts, 1)):
        raise ValueError("two transition states follow each other in the cycle without an intermediate")
    g = np.array([float(s[1]) for s in states])
    position = np.arange(len(states))
    ts_pos, int_pos = position[is_ts], position[~is_ts]
    kt = K_B_EH * t
    after = ts_pos[:, None] > int_pos[None, :]
    exponent = (g[ts_pos][:, None] - g[int_pos][None, :] - np.where(after, reaction_energy, 0.0)) / kt
    peak = exponent.max()
    weights = np.exp(exponent - peak)
    total = weights.sum()
    # TOF = kT/h (e^{-dGr/kT} - 1) e^{-peak} / total, in logarithms so that no factor overflows
    x = -reaction_energy / kt
    log_growth = x + np.log(-np.expm1(-x)) if x > 0 else np.log(-np.expm1(x))
    tof = np.sign(x) * K_B * t / H_PLANCK * np.exp(log_growth - peak - np.log(total))
    control_ts = weights.sum(axis=1) / total
    control_int = weights.sum(axis=0) / total
    i, j = np.argmax(control_ts), np.argmax(control_int)
    tdts, tdi = names[ts_pos[i]], names[int_pos[j]]
    span = g[ts_pos[i]] - g[int_pos[j]] + (0.0 if after[i, j] else reaction_energy)
    control = dict(zip([names[p] for p in ts_pos], control_ts.tolist(), strict=True))
    control.update(zip([names[p] for p in int_pos], control_int.tolist(), strict=True))
    return EnergySpanResult(
        temperature=t,
        tof=float(tof),
        tof_energy_span=float(K_B * t / H_PLANCK * np.exp(-span / kt)),
        energy_span=float(span),
        tdts=tdts,
        tdi=tdi,
        degree_of_control={name: control[name] for name in names},
        reaction_energy=float(reaction_energy),
    )
