"""Ideal-gas / dilute-solution thermochemistry: partition functions, low-mode models, standard states.

Units: energies hartree (Eh) per molecule, entropies and heat capacities Eh/K per molecule, temperatures
K, wavenumbers cm^-1, masses dalton (u), moments of inertia u*angstrom^2, volumes m^3 per molecule.

Each physical quantity is one small function with its equation and source. They broadcast with numpy:
temperatures on one axis, modes on another, molecules on a third, so a whole batch of molecules over a
whole temperature grid is a handful of array operations (:func:`thermo_arrays`). The textbook treatment
follows D. A. McQuarrie, Statistical Mechanics (Harper & Row 1976; University Science Books 2000),
chapters 5, 6 and 8; the equation numbers cited below are from memory.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .cleaning import clean_modes
from .errors import ThermoError
from .geometry import AMU_ANGSTROM2_KG_M2
from .records import Calculation, Conditions, Molecule, ThermoResult, parse_standard_state
from .scaling import resolve_scale_factors
from .units import AMU, C_LIGHT, FREE_ROTOR_INERTIA_KG_M2, H_PLANCK, K_B, K_B_EH, N_A, WAVENUMBER_EH

COMPONENTS = ("translational", "rotational", "vibrational", "electronic")
#: the totals of :func:`thermo_arrays` (also with the "rrho_" prefix)
TOTALS = ("zpe", "thermal_energy", "enthalpy", "entropy", "gibbs", "cv", "cp")

#: largest number of (molecule, temperature, mode) elements evaluated at once (memory and cache bound)
_CHUNK_ELEMENTS = 200_000

#: cm^-1 given to the padding of shorter mode lists: so stiff that exp(-h c nu / k T) is 0 at any T
PAD_WAVENUMBER = 1e30


# --------------------------------------------------------------------------------------------------
# translation


def standard_volume(temperature, standard_state: str = "1atm", pressure: float | None = None):
    """Volume per molecule of the standard state, m^3.

    Gas: V = k T / p (ideal gas at pressure p; "1atm" 101325 Pa, "1bar" 1e5 Pa, or ``pressure`` in Pa,
    which wins). Solution: V = 1 / (N_A c), c in mol/m^3 ("1M" = 1000 mol/m^3; "55.3M" etc.).
    McQuarrie, Statistical Mechanics, eq. 5-16; the concentration form is the usual choice for solutes
    (common practice).
    """
    temperature = np.asarray(temperature, dtype=float)
    if pressure is not None:
        return K_B * temperature / float(pressure)
    kind, value = parse_standard_state(standard_state)
    if kind == "pressure":
        return K_B * temperature / value
    return np.full_like(temperature, 1.0 / (N_A * value * 1000.0))


def translational_partition_function(mass_u, temperature, volume_m3):
    """q_t = (2 pi m k T / h^2)^(3/2) V (McQuarrie eq. 5-12), dimensionless."""
    m = np.asarray(mass_u) * AMU
    return (2.0 * np.pi * m * K_B * np.asarray(temperature) / H_PLANCK**2) ** 1.5 * volume_m3


def translational_entropy(mass_u, temperature, volume_m3):
    """Sackur-Tetrode: S_t = k [ln(q_t) + 5/2] with q_t per molecule in volume V (McQuarrie eq. 5-20), Eh/K."""
    return K_B_EH * (np.log(translational_partition_function(mass_u, temperature, volume_m3)) + 2.5)


def translational_energy(temperature):
    """U_t = 3/2 k T (McQuarrie eq. 5-17), Eh."""
    return 1.5 * K_B_EH * np.asarray(temperature)


# --------------------------------------------------------------------------------------------------
# rotation


def rotational_temperatures(moments_u_a2):
    """Theta_i = h^2 / (8 pi^2 I_i k) (McQuarrie eq. 6-32), K, for moments of inertia in u*angstrom^2."""
    inertia = np.asarray(moments_u_a2, dtype=float) * AMU_ANGSTROM2_KG_M2
    return H_PLANCK**2 / (8.0 * np.pi**2 * inertia * K_B)


def rotational_partition_function_linear(theta, symmetry_number, temperature):
    """q_r = T / (sigma Theta) (McQuarrie eq. 6-33; high-temperature limit), dimensionless."""
    return np.asarray(temperature) / (symmetry_number * np.asarray(theta))


def rotational_partition_function_nonlinear(theta_abc, symmetry_number, temperature):
    """q_r = sqrt(pi)/sigma (T^3 / (Theta_A Theta_B Theta_C))^(1/2) (McQuarrie eq. 8-21), dimensionless.

    ``theta_abc`` has the three rotational temperatures on its last axis.
    """
    product = np.prod(np.asarray(theta_abc), axis=-1)
    return np.sqrt(np.pi) / symmetry_number * np.sqrt(np.asarray(temperature) ** 3 / product)


def rotational_entropy(q_rot, rotational_dof):
    """S_r = k [ln q_r + d/2] for d = 2 (linear) or 3 (nonlinear) classical degrees of freedom, Eh/K.

    From S = k ln q + U/T with U_r = d/2 k T (McQuarrie eqs. 6-36, 8-23).
    """
    return K_B_EH * (np.log(q_rot) + 0.5 * np.asarray(rotational_dof))


def rotational_energy(temperature, rotational_dof):
    """U_r = d/2 k T (equipartition; McQuarrie eqs. 6-35, 8-22), Eh."""
    return 0.5 * np.asarray(rotational_dof) * K_B_EH * np.asarray(temperature)


# --------------------------------------------------------------------------------------------------
# vibration (harmonic oscillator), per mode


def vibrational_temperatures(wavenumbers):
    """Theta_v = h c nu~ / k, K, for wavenumbers in cm^-1 (McQuarrie eq. 6-22)."""
    return H_PLANCK * C_LIGHT * 100.0 * np.asarray(wavenumbers) / K_B


def harmonic_partition_function(theta_v, temperature):
    """q_v = exp(-Theta/2T) / (1 - exp(-Theta/T)), levels (n + 1/2) h nu (McQuarrie eq. 6-21)."""
    x = np.asarray(theta_v) / np.asarray(temperature)
    return np.exp(-0.5 * x) / -np.expm1(-x)


def harmonic_zpe(theta_v):
    """Zero-point energy of one mode, h nu / 2 = k Theta / 2, Eh."""
    return 0.5 * K_B_EH * np.asarray(theta_v)


def harmonic_mode_functions(theta_v, temperature):
    """Thermal energy, entropy and heat capacity of harmonic modes: (U - ZPE in Eh, S in Eh/K, C_v in Eh/K).

    With x = Theta/T and r = 1 / (e^x - 1) = e^-x / (1 - e^-x) (McQuarrie eqs. 6-23 to 6-25; S = U/T + k ln q):
    U - ZPE = k Theta r,  S = k [x r - ln(1 - e^-x)],  C_v = k x^2 e^x / (e^x - 1)^2 = k x^2 r (1 + r).
    ln(1 - e^-x) is taken as log1p(-e^-x), so stiff modes (x >> 1) keep their digits; 1 - e^-x loses
    only ~1e-16/x relative for soft ones. The three share e^-x, hence one function, written in place
    because it is the engine's inner loop.
    """
    theta_v = np.asarray(theta_v, dtype=float)
    x = np.atleast_1d(theta_v / np.asarray(temperature, dtype=float))  # an array, for the in-place steps
    shape = np.broadcast_shapes(theta_v.shape, np.shape(temperature))
    boltzmann = np.exp(-x)
    r = 1.0 - boltzmann
    np.divide(boltzmann, r, out=r)
    energy = (K_B_EH * theta_v) * r
    entropy = x * r
    np.negative(boltzmann, out=boltzmann)
    entropy -= np.log1p(boltzmann, out=boltzmann)
    entropy *= K_B_EH
    x *= x
    x *= r
    r += 1.0
    x *= r
    x *= K_B_EH
    return energy.reshape(shape), entropy.reshape(shape), x.reshape(shape)


def harmonic_thermal_energy(theta_v, temperature):
    """U_v - ZPE = k Theta / (exp(Theta/T) - 1) per mode (McQuarrie eq. 6-23), Eh."""
    return harmonic_mode_functions(theta_v, temperature)[0]


def harmonic_entropy(theta_v, temperature):
    """S_v = k [x / (e^x - 1) - ln(1 - e^-x)], x = Theta/T, per mode (McQuarrie eq. 6-24 via S = U/T + k ln q), Eh/K."""
    return harmonic_mode_functions(theta_v, temperature)[1]


def harmonic_heat_capacity(theta_v, temperature):
    """C_v = k x^2 e^x / (e^x - 1)^2, x = Theta/T, per mode (McQuarrie eq. 6-25), Eh/K."""
    return harmonic_mode_functions(theta_v, temperature)[2]


# --------------------------------------------------------------------------------------------------
# low-frequency modes


def grimme_weight(wavenumbers, threshold):
    """Damping w = 1 / (1 + (nu0/nu)^4), 1 for stiff modes, 0 for soft ones.

    S. Grimme, Chem. Eur. J. 2012, 18, 9955, eq. 8 (after Chai and Head-Gordon's damping function).
    """
    return 1.0 / (1.0 + (threshold / np.asarray(wavenumbers)) ** 4)


def free_rotor_entropy(wavenumbers, temperature, average_inertia_kg_m2=FREE_ROTOR_INERTIA_KG_M2):
    """Entropy of a free rotor with the moment of a vibration of wavenumber nu, Eh/K.

    mu = h / (8 pi^2 nu c) (eq. 4), mu' = mu B_av / (mu + B_av) (eq. 5),
    S_R = k [1/2 + ln((8 pi^3 mu' k T / h^2)^(1/2))] (eq. 6) of S. Grimme, Chem. Eur. J. 2012, 18, 9955;
    B_av = 1e-44 kg m^2 there.
    """
    mu = H_PLANCK / (8.0 * np.pi**2 * C_LIGHT * 100.0 * np.asarray(wavenumbers))
    mu_eff = mu * average_inertia_kg_m2 / (mu + average_inertia_kg_m2)
    arg = 8.0 * np.pi**3 * mu_eff * K_B * np.asarray(temperature) / H_PLANCK**2
    return K_B_EH * (0.5 + 0.5 * np.log(arg))


def qrrho_entropy(wavenumbers, temperature, threshold, average_inertia_kg_m2=FREE_ROTOR_INERTIA_KG_M2):
    """Quasi-RRHO mode entropy S = w S_HO + (1 - w) S_R (S. Grimme, Chem. Eur. J. 2012, 18, 9955, eq. 7), Eh/K."""
    w = grimme_weight(wavenumbers, threshold)
    s_ho = harmonic_entropy(vibrational_temperatures(wavenumbers), temperature)
    return w * s_ho + (1.0 - w) * free_rotor_entropy(wavenumbers, temperature, average_inertia_kg_m2)


def head_gordon_energy(harmonic_energy, wavenumbers, temperature, threshold):
    """Mode energy (ZPE + thermal) interpolated towards the free-rotor kT/2: U = w U_HO + (1 - w) k T / 2, Eh.

    Y.-P. Li, J. Gomes, S. M. Sharada, A. T. Bell, M. Head-Gordon, J. Phys. Chem. C 2015, 119, 1840,
    with Grimme's weight w and threshold.
    """
    w = grimme_weight(wavenumbers, threshold)
    return w * harmonic_energy + (1.0 - w) * 0.5 * K_B_EH * np.asarray(temperature)


def head_gordon_heat_capacity(harmonic_cv, wavenumbers, threshold):
    """d/dT of :func:`head_gordon_energy` (w does not depend on T): C_v = w C_v,HO + (1 - w) k / 2, Eh/K."""
    w = grimme_weight(wavenumbers, threshold)
    return w * harmonic_cv + (1.0 - w) * 0.5 * K_B_EH


def quasi_harmonic_wavenumbers(wavenumbers, threshold):
    """Real modes below the threshold raised to it (R. F. Ribeiro, A. V. Marenich, C. J. Cramer, D. G. Truhlar,
    J. Phys. Chem. B 2011, 115, 14556: 100 cm^-1), cm^-1."""
    return np.maximum(np.asarray(wavenumbers), threshold)


# --------------------------------------------------------------------------------------------------
# electronic


def electronic_entropy(degeneracy):
    """S_e = k ln g0 for a ground level of degeneracy g0 and no accessible excited levels (McQuarrie eq. 5-27), Eh/K."""
    return K_B_EH * np.log(np.asarray(degeneracy, dtype=float))


# --------------------------------------------------------------------------------------------------
# the batch engine


@dataclass
class PreparedMolecules:
    """n molecules stacked for the vectorised engine (after cleaning and symmetry).

    Attributes:
        energy: (n,) electronic energies, Eh.
        mass: (n,) total masses, u.
        moments: (n, 3) principal moments, u*angstrom^2, ascending.
        rotational_dof: (n,) 0 (atom), 2 (linear) or 3.
        symmetry_number: (n,) rotational symmetry numbers.
        degeneracy: (n,) electronic ground-level degeneracies.
        frequencies: (n, m) real wavenumbers, cm^-1, unscaled; :data:`PAD_WAVENUMBER` where ``mask`` is False.
        mask: (n, m) True for real modes.
        thermal_scale, zpe_scale: (n,) frequency scale factors.
        rotors: per molecule, its hindered rotors (``qcthermo.rotors.HinderedRotor``; empty lists when none).
    """

    energy: np.ndarray
    mass: np.ndarray
    moments: np.ndarray
    rotational_dof: np.ndarray
    symmetry_number: np.ndarray
    degeneracy: np.ndarray
    frequencies: np.ndarray
    mask: np.ndarray
    thermal_scale: np.ndarray
    zpe_scale: np.ndarray
    rotors: list = field(default_factory=list)

    def __len__(self) -> int:
        return len(self.energy)


@dataclass
class MoleculeInfo:
    """What the preparation of one molecule decided (reported on its ThermoResult)."""

    point_group: str | None
    symmetry_number: int
    chiral: bool | None
    linear: bool
    frequencies: np.ndarray
    imaginary_frequency: float | None
    scale_factors: dict
    notes: list[str] = field(default_factory=list)
    rotors: list = field(default_factory=list)


def _symmetry(molecule: Molecule, linear: bool, trust_given: bool) -> tuple[str | None, int, bool | None, list[str]]:
    """Point group, symmetry number, chirality and notes; an explicit symmetry number wins.

    With ``trust_given`` a given symmetry number is used without analysing the geometry (the point
    group and chirality are then unknown); a molecule without one is always analysed.
    """
    if molecule.symmetry_number is not None and (int(molecule.symmetry_number) != molecule.symmetry_number
                                                 or molecule.symmetry_number < 1):
        raise ThermoError(f"symmetry number {molecule.symmetry_number!r}: expected a positive integer")
    if trust_given and molecule.symmetry_number is not None:
        sigma = int(molecule.symmetry_number)
        return None, sigma, None, [f"symmetry number {sigma} given; geometry not analysed"]
    from .symmetry import analyse_symmetry

    info = analyse_symmetry(molecule.symbols, molecule.coordinates, molecule.masses)
    notes = []
    if info.linear != linear:
        notes.append(f"warning: point group {info.point_group} disagrees with the linearity test (linear={linear})")
    if molecule.symmetry_number is not None:
        sigma = int(molecule.symmetry_number)
        notes.append(f"symmetry number {sigma} given (geometry: {info.point_group}, {info.symmetry_number})")
    else:
        sigma = int(info.symmetry_number)
        notes.append(f"point group {info.point_group}, symmetry number {sigma}" + (", chiral" if info.chiral else ""))
    if info.strict_point_group is not None and molecule.symmetry_number is None:
        notes.append(near_symmetry_note(info))
    return info.point_group, sigma, bool(info.chiral), notes


def near_symmetry_note(info) -> str:
    """The warning for a near-symmetric structure (:class:`~qcthermo.symmetry.SymmetryInfo` with a
    ``strict_point_group``): the group used, the distortion, and the symmetry number of the strict group."""
    from .symmetry import NEAR_SYMMETRY_TOLERANCE, NEAR_SYMMETRY_WARNING, symmetry_number

    strict = info.strict_point_group
    return (f"{NEAR_SYMMETRY_WARNING}{info.point_group} (symmetry number {info.symmetry_number}) only with atoms "
            f"up to {info.distortion:.2f} A from their images, {strict} (symmetry number "
            f"{symmetry_number(strict)}) within {NEAR_SYMMETRY_TOLERANCE} A, beyond optimiser noise (~0.005 A): "
            f"a distorted (Jahn-Teller?) structure? set symmetry_number = {symmetry_number(strict)} if the "
            "distortion is real")


def prepare_molecule(molecule: Molecule, conditions: Conditions, trust_symmetry_number: bool = False) -> MoleculeInfo:
    """Clean the modes, find the symmetry and the scale factors of one molecule; raise ThermoError if refused.

    ``trust_symmetry_number`` skips the symmetry analysis of molecules that carry a symmetry number
    (the slow part of the preparation of large batches).
    """
    modes = clean_modes(molecule, conditions)
    if molecule.natoms > 1 and len(modes.frequencies) == 0 and not molecule.transition_state:
        raise ThermoError(f"{molecule.name or molecule.source or molecule.formula}: no vibrational frequencies")
    point_group, sigma, chiral, sym_notes = _symmetry(molecule, modes.linear, trust_symmetry_number)
    try:
        thermal, zpe, source, scale_notes = resolve_scale_factors(
            conditions.frequency_scale, conditions.zpe_scale, molecule.level_of_theory
        )
    except ValueError as err:
        raise ThermoError(str(err)) from None
    scale = {"thermal": thermal, "zpe": zpe}
    if source:
        scale["source"] = source
    frequencies, rotors, rotor_notes = modes.frequencies, [], []
    if conditions.internal_rotors == "hindered" and molecule.natoms > 3:
        from .rotors import hindered_rotors

        t_max = float(np.max(conditions.temperature))
        rotors, frequencies, rotor_notes = hindered_rotors(molecule, modes.frequencies, thermal, t_max)
    return MoleculeInfo(
        point_group=point_group,
        symmetry_number=sigma,
        chiral=chiral,
        linear=modes.linear,
        frequencies=frequencies,
        imaginary_frequency=modes.imaginary_frequency,
        scale_factors=scale,
        notes=modes.notes + sym_notes + scale_notes + rotor_notes,
        rotors=rotors,
    )


def stacked_principal_moments(molecules: list[Molecule]) -> np.ndarray:
    """Principal moments (n, 3), u*angstrom^2, ascending, of many molecules in one eigenvalue call.

    The batched form of geometry.inertia_tensor, I = sum_i m_i (|r_i|^2 1 - r_i r_i^T) about the centre
    of mass; shorter molecules are padded with massless atoms, which add nothing.
    """
    n, width = len(molecules), max((m.natoms for m in molecules), default=1)
    xyz = np.zeros((n, width, 3))
    mass = np.zeros((n, width))
    for row, m in enumerate(molecules):
        xyz[row, : m.natoms] = m.coordinates
        mass[row, : m.natoms] = m.masses
    r = xyz - np.einsum("na,nai->ni", mass, xyz)[:, None, :] / mass.sum(axis=1)[:, None, None]
    r2 = np.einsum("na,nai,nai->n", mass, r, r)
    tensor = r2[:, None, None] * np.eye(3) - np.einsum("na,nai,naj->nij", mass, r, r)
    return np.clip(np.linalg.eigvalsh(tensor), 0.0, None)


def stack_molecules(molecules: list[Molecule], infos: list[MoleculeInfo]) -> PreparedMolecules:
    """Stack prepared molecules into the arrays of :class:`PreparedMolecules` (modes padded to the longest)."""
    n = len(molecules)
    width = max((len(i.frequencies) for i in infos), default=0)
    freqs = np.full((n, width), PAD_WAVENUMBER)
    mask = np.zeros((n, width), dtype=bool)
    for row, info in enumerate(infos):
        freqs[row, : len(info.frequencies)] = info.frequencies
        mask[row, : len(info.frequencies)] = True
    return PreparedMolecules(
        energy=np.array([m.energy for m in molecules], dtype=float),
        mass=np.array([m.mass for m in molecules], dtype=float),
        moments=stacked_principal_moments(molecules),
        rotational_dof=np.array(
            [0 if m.natoms == 1 else 2 if i.linear else 3 for m, i in zip(molecules, infos, strict=True)]
        ),
        symmetry_number=np.array([i.symmetry_number for i in infos], dtype=float),
        degeneracy=np.array([m.electronic_degeneracy or m.multiplicity for m in molecules], dtype=float),
        frequencies=freqs,
        mask=mask,
        thermal_scale=np.array([i.scale_factors["thermal"] for i in infos], dtype=float),
        zpe_scale=np.array([i.scale_factors["zpe"] for i in infos], dtype=float),
        rotors=[i.rotors for i in infos],
    )


def _rotor_inertia(prepared: PreparedMolecules, rotor_inertia) -> np.ndarray:
    """B_av per molecule, kg m^2: the given constant, or the mean principal moment ("molecular").

    An atom has no moment and no modes; it keeps Grimme's 1e-44 kg m^2 so that the free-rotor term of
    its padding modes is 0 (weight 0) rather than 0 x log(0) = NaN when it shares a batch with molecules.
    """
    if isinstance(rotor_inertia, str):
        if rotor_inertia != "molecular":
            raise ThermoError(f"rotor inertia {rotor_inertia!r}: expected a number (kg m^2) or 'molecular'")
        mean = prepared.moments.mean(axis=1) * AMU_ANGSTROM2_KG_M2
        return np.where(mean > 0, mean, FREE_ROTOR_INERTIA_KG_M2)
    return np.full(len(prepared), float(rotor_inertia))


def _rotational_terms(prepared: PreparedMolecules, t: np.ndarray) -> dict[str, np.ndarray]:
    """S, U, Cv of rotation, (n, nT); atoms get zeros."""
    dof = prepared.rotational_dof[:, None]
    safe = np.where(prepared.moments > 0, prepared.moments, 1.0)
    theta = rotational_temperatures(safe)
    sigma = prepared.symmetry_number[:, None]
    q_lin = rotational_partition_function_linear(theta[:, 2:3], sigma, t)
    q_non = rotational_partition_function_nonlinear(theta[:, None, :], sigma, t)
    q = np.where(dof == 3, q_non, np.where(dof == 2, q_lin, 1.0))
    s = np.where(dof > 0, rotational_entropy(q, dof), 0.0)
    u = rotational_energy(t, dof)
    return {"S": s, "U": u, "Cv": np.broadcast_to(0.5 * dof * K_B_EH, u.shape)}


def _vibrational_terms(
    prepared: PreparedMolecules, t: np.ndarray, model: str, threshold: float, b_av: np.ndarray
) -> dict[str, np.ndarray]:
    """Vibrational ZPE (n,), and U (with ZPE), S, Cv (n, nT) under RRHO ("rrho_*") and under ``model``.

    Padding modes are given :data:`PAD_WAVENUMBER`, so stiff that every thermal term vanishes; only the
    ZPE needs the mask.
    """
    nu = prepared.frequencies * prepared.thermal_scale[:, None]
    nu_zpe = prepared.frequencies * prepared.zpe_scale[:, None]
    tt = t[None, :, None]

    def harmonic(nu_t, nu_z):
        zpe = np.where(prepared.mask, harmonic_zpe(vibrational_temperatures(nu_z)), 0.0)
        return (zpe, *harmonic_mode_functions(vibrational_temperatures(nu_t)[:, None, :], tt))

    rot = _rotor_sums(prepared, t)  # the hindered rotors, in every model alike
    zpe_m, u_m, s_m, cv_m = harmonic(nu, nu_zpe)
    rrho_zpe = zpe_m.sum(axis=-1) + rot["zpe"]
    out = {
        "rrho_zpe": rrho_zpe,
        "rrho_U": rrho_zpe[:, None] + u_m.sum(axis=-1) + rot["thermal"],
        "rrho_S": s_m.sum(axis=-1) + rot["S"],
        "rrho_Cv": cv_m.sum(axis=-1) + rot["Cv"],
    }
    if model == "rrho":
        out.update(zpe=out["rrho_zpe"], U=out["rrho_U"], S=out["rrho_S"], Cv=out["rrho_Cv"])
        return out
    if model == "quasi-harmonic":
        zpe_m, u_m, s_m, cv_m = harmonic(quasi_harmonic_wavenumbers(nu, threshold),
                                         quasi_harmonic_wavenumbers(nu_zpe, threshold))
        u = zpe_m.sum(axis=-1)[:, None] + u_m.sum(axis=-1) + rot["U"]
    else:
        nu3 = nu[:, None, :]
        s_m = qrrho_entropy(nu3, tt, threshold, b_av[:, None, None])
        u = out["rrho_U"]
        if model == "qrrho-enthalpy":
            u = head_gordon_energy(zpe_m[:, None, :] + u_m, nu3, tt, threshold).sum(axis=-1) + rot["U"]
            zpe_m = zpe_m * grimme_weight(nu, threshold)  # the T -> 0 limit of the interpolated energy
            cv_m = head_gordon_heat_capacity(cv_m, nu3, threshold)
    out.update(zpe=zpe_m.sum(axis=-1) + rot["zpe"], U=u, S=s_m.sum(axis=-1) + rot["S"],
               Cv=cv_m.sum(axis=-1) + rot["Cv"])
    return out


def _rotor_sums(prepared: PreparedMolecules, t: np.ndarray) -> dict[str, np.ndarray]:
    """The hindered rotors' ZPE (n,), and U (with ZPE), thermal U (without), S, Cv (n, nT), summed per
    molecule (zeros for molecules without rotors); each rotor's levels are summed over all temperatures at once."""
    from .rotors import level_functions

    n = len(prepared)
    out = {"zpe": np.zeros(n), "U": np.zeros((n, len(t))), "S": np.zeros((n, len(t))), "Cv": np.zeros((n, len(t)))}
    for row, rotors in enumerate(prepared.rotors or ()):
        for rotor in rotors:
            terms = level_functions(rotor.levels, rotor.torsion.symmetry_number, t)
            for key in out:
                out[key][row] += terms[key]
    out["thermal"] = out["U"] - out["zpe"][:, None]
    return out


def _chunk_arrays(prepared: PreparedMolecules, conditions: Conditions, t: np.ndarray) -> dict[str, np.ndarray]:
    t2 = t[None, :]
    volume = standard_volume(t, conditions.standard_state, conditions.pressure)
    trans_s = translational_entropy(prepared.mass[:, None], t2, volume[None, :])
    trans_u = np.broadcast_to(translational_energy(t2), trans_s.shape)
    rot = _rotational_terms(prepared, t2)
    b_av = _rotor_inertia(prepared, conditions.rotor_inertia)
    vib = _vibrational_terms(prepared, t, conditions.low_mode_model, conditions.low_mode_threshold, b_av)
    elec_s = np.broadcast_to(electronic_entropy(prepared.degeneracy)[:, None], trans_s.shape)
    zeros = np.zeros_like(trans_s)
    kt = K_B_EH * t2
    e = prepared.energy[:, None]
    out: dict[str, np.ndarray] = {
        "S_translational": trans_s, "U_translational": trans_u, "Cv_translational": zeros + 1.5 * K_B_EH,
        "S_rotational": rot["S"], "U_rotational": rot["U"] + zeros, "Cv_rotational": rot["Cv"] + zeros,
        "S_vibrational": vib["S"], "U_vibrational": vib["U"], "Cv_vibrational": vib["Cv"],
        "S_electronic": elec_s, "U_electronic": zeros, "Cv_electronic": zeros,
    }  # fmt: skip
    fixed = {"e": e, "kt": kt, "t": t2, "S": trans_s + rot["S"] + elec_s, "U": trans_u + rot["U"],
             "Cv": 1.5 * K_B_EH + rot["Cv"]}  # fmt: skip
    out.update(_totals(fixed, vib, ""))
    if conditions.low_mode_model == "rrho":
        out.update({f"rrho_{name}": out[name] for name in TOTALS})
    else:
        out.update(_totals(fixed, vib, "rrho_"))
    return out


def _totals(fixed: dict[str, np.ndarray], vib: dict[str, np.ndarray], prefix: str) -> dict[str, np.ndarray]:
    """The :data:`TOTALS` from the translational + rotational + electronic parts (``fixed``) and the
    vibrational terms with ``prefix`` ("" for the chosen model, "rrho_"): H = U + kT, G = H - TS, Cp = Cv + k."""
    s = fixed["S"] + vib[prefix + "S"]
    u = fixed["e"] + fixed["U"] + vib[prefix + "U"]
    h = u + fixed["kt"]
    cv = fixed["Cv"] + vib[prefix + "Cv"]
    values = {"zpe": vib[prefix + "zpe"], "thermal_energy": u, "enthalpy": h, "entropy": s,
              "gibbs": h - fixed["t"] * s, "cv": cv, "cp": cv + K_B_EH}  # fmt: skip
    return {prefix + name: value for name, value in values.items()}


def thermo_arrays(prepared: PreparedMolecules, conditions: Conditions) -> dict[str, np.ndarray]:
    """Thermochemistry of a batch of prepared molecules over the temperatures of ``conditions``.

    Returns arrays of shape (n, nT) (ZPE: (n,)), hartree and hartree/K: "zpe", "thermal_energy",
    "enthalpy", "entropy", "gibbs", "cv", "cp" under the chosen low-mode model, the same with a
    "rrho_" prefix under plain RRHO, and "U_<component>", "S_<component>", "Cv_<component>" for the
    components of :data:`COMPONENTS` (chosen model). Works in chunks of molecules to bound memory.
    Keys may share one array (the "rrho_" totals under the rrho model, the zero electronic energy):
    copy before modifying in place.
    """
    t = np.atleast_1d(np.asarray(conditions.temperature, dtype=float))
    width = max(prepared.frequencies.shape[1], 1)
    step = max(1, _CHUNK_ELEMENTS // (width * len(t)))
    n = len(prepared)
    if n <= step:
        return _chunk_arrays(prepared, conditions, t)
    out: dict[str, np.ndarray] = {}
    for start in range(0, n, step):
        rows = slice(start, start + step)
        first_key: dict[int, str] = {}  # keys that share one array in a chunk share it in the output
        for key, value in _chunk_arrays(_slice(prepared, rows), conditions, t).items():
            twin = first_key.setdefault(id(value), key)
            if key not in out:
                out[key] = out[twin] if twin != key else np.empty((n, *value.shape[1:]))
            if twin == key:
                out[key][rows] = value
    return out


def _slice(prepared: PreparedMolecules, rows: slice) -> PreparedMolecules:
    return PreparedMolecules(**{name: value[rows] for name, value in vars(prepared).items()})


def thermochemistry(molecule: Molecule, conditions: Conditions | None = None) -> ThermoResult:
    """Thermochemistry of one molecule (the public API, README.md); raises ThermoError with a one-line reason."""
    conditions = conditions or Conditions()
    # the usual slip in a notebook is to pass what read_log returned; say how to get a Molecule from it
    if not isinstance(molecule, Molecule):
        hint = " (use Molecule.from_calculation(calc))" if isinstance(molecule, Calculation) else ""
        raise TypeError(f"thermochemistry() needs a Molecule, not a {type(molecule).__name__}{hint}")
    if not isinstance(conditions, Conditions):
        raise TypeError(f"thermochemistry() needs Conditions, not a {type(conditions).__name__} "
                        "(e.g. Conditions(temperature=298.15))")
    return thermochemistry_many([molecule], conditions)[0]


def thermochemistry_many(
    molecules: list[Molecule], conditions: Conditions, trust_symmetry_number: bool = False
) -> list[ThermoResult]:
    """Thermochemistry of many molecules in one vectorised pass; raises ThermoError on the first refused one.

    The per-molecule work is cleaning and symmetry (see :func:`prepare_molecule` for
    ``trust_symmetry_number``); the partition functions of all molecules and temperatures are evaluated
    together by :func:`thermo_arrays`.
    """
    infos = [prepare_molecule(m, conditions, trust_symmetry_number) for m in molecules]
    arrays = thermo_arrays(stack_molecules(molecules, infos), conditions)
    scalar = np.ndim(conditions.temperature) == 0
    pairs = enumerate(zip(molecules, infos, strict=True))
    return [_finite(_result(arrays, row, m, info, conditions, scalar), m) for row, (m, info) in pairs]


def _finite(result: ThermoResult, molecule: Molecule) -> ThermoResult:
    """The last guard: a G, H, S or ZPE that is not finite is a ThermoError, never a number in a table."""
    for name in ("gibbs", "enthalpy", "entropy", "zpe"):
        if not np.all(np.isfinite(getattr(result, name))):
            label = molecule.name or molecule.source or molecule.formula
            raise ThermoError(f"{label}: the {name} is not a finite number (a zero or damaged frequency?)")
    return result


def _result(
    arrays: dict[str, np.ndarray], row: int, molecule: Molecule, info: MoleculeInfo, conditions: Conditions, scalar
) -> ThermoResult:
    def pick(key):
        value = arrays[key][row]
        if np.ndim(value) == 0:
            return float(value)
        return float(value[0]) if scalar else value.copy()

    return ThermoResult(
        conditions=conditions,
        electronic_energy=float(molecule.energy),
        **{name: pick(name) for name in TOTALS},
        rrho={name: pick("rrho_" + name) for name in TOTALS},
        components={c: {q: pick(f"{q}_{c}") for q in ("U", "S", "Cv")} for c in COMPONENTS},
        point_group=info.point_group,
        symmetry_number=info.symmetry_number,
        chiral=info.chiral,
        linear=info.linear,
        frequencies_used=info.frequencies,
        imaginary_frequency=info.imaginary_frequency,
        scale_factors=info.scale_factors,
        rotors=info.rotors,
        rotor_terms=[_rotor_result_terms(r, conditions, scalar) for r in info.rotors],
        notes=[f"low-mode model {conditions.low_mode_model}",
               *(["internal rotors hindered"] if conditions.internal_rotors == "hindered" else []), *info.notes],
    )


def _rotor_result_terms(rotor, conditions: Conditions, scalar: bool) -> dict:
    """One rotor's {"zpe", "U", "S", "Cv"} over the conditions' temperatures (floats for a scalar one)."""
    from .rotors import level_functions

    terms = level_functions(rotor.levels, rotor.torsion.symmetry_number, conditions.temperature)
    return {k: (float(np.ravel(v)[0]) if scalar or np.ndim(v) == 0 else v) for k, v in terms.items()}


# -- free energy by motion ------------------------------------------------------------------------

#: the free-energy parts of the wide table, in the order they add up to G (docs/thermo.md)
PARTS = ("E_elec", "G_trans", "G_rot", "G_vib", "G_elec", "G_low_mode")
#: short names of the motions in column names
MOTIONS = dict(zip(COMPONENTS, ("trans", "rot", "vib", "elec"), strict=True))


def temperatures_of(res: ThermoResult) -> np.ndarray:
    """The temperatures of ``res`` as a 1-D array, K."""
    return np.atleast_1d(np.asarray(res.conditions.temperature, dtype=float))


def per_temperature(value, n: int) -> np.ndarray:
    """A scalar or per-temperature value as an array over the ``n`` temperatures."""
    return np.broadcast_to(np.asarray(value, dtype=float), (n,)).astype(float)


def motion_free_energy(u, s, temperature, pv: float | np.ndarray = 0.0):
    """G of one motion, Eh: G_x = U_x + pV_x - T S_x = -kT ln q_x.

    Only translation carries the pV = kT of H = U + kT: with Stirling's N!, the ideal gas has
    G = -NkT ln(q/N) (McQuarrie, Statistical Mechanics, chapters 5 and 8), and the 1/N and the pV
    term both come from the translational q_t V/N. Thus G_trans = -kT ln(q_t V/N), G_rot = -kT ln q_rot,
    G_vib = -kT ln q_vib (from the bottom of the well, ZPE included), G_elec = -kT ln g0.
    """
    return u + pv - temperature * s


def free_energy_parts(res: ThermoResult) -> dict[str, np.ndarray]:
    """G of ``res`` broken down by motion (the ``qcthermo thermo`` table), Eh, arrays over its temperatures:
    E_elec, G_trans, G_rot, G_vib, G_elec, G_low_mode; they add up to ``res.gibbs`` (the chosen model).

    G_vib is the harmonic (RRHO) vibrational part, the RRHO total less the other motions, and
    G_low_mode = G(model) - G(RRHO) is what the low-mode model changes (zero under "rrho").
    Translation, rotation and electronic levels do not depend on the low-mode model.
    """
    t = temperatures_of(res)
    n = len(t)
    comp = {c: {q: per_temperature(v, n) for q, v in res.components[c].items()} for c in COMPONENTS}
    kt = K_B_EH * t
    parts = {"E_elec": per_temperature(res.electronic_energy, n)}
    for c in ("translational", "rotational", "electronic"):
        pv = kt if c == "translational" else 0.0
        parts[f"G_{MOTIONS[c]}"] = motion_free_energy(comp[c]["U"], comp[c]["S"], t, pv)
    fixed_u = sum(comp[c]["U"] for c in ("translational", "rotational", "electronic"))
    fixed_s = sum(comp[c]["S"] for c in ("translational", "rotational", "electronic"))
    u_vib = per_temperature(res.rrho["thermal_energy"], n) - res.electronic_energy - fixed_u
    s_vib = per_temperature(res.rrho["entropy"], n) - fixed_s
    parts["G_vib"] = motion_free_energy(u_vib, s_vib, t)
    parts["G_low_mode"] = per_temperature(res.gibbs, n) - per_temperature(res.rrho["gibbs"], n)
    return {name: parts[name] for name in PARTS}


# -- hindered rotors ------------------------------------------------------------------------------

#: the per-rotor quantities of :func:`rotor_records`: (key, unit)
ROTOR_QUANTITIES = (("V0", "cm^-1"), ("n", ""), ("sigma_int", ""), ("I_red", "u*A^2"), ("frequency", "cm^-1"),
                    ("overlap", ""), ("ZPE", "Eh"), ("S", "Eh/K"), ("Cp", "Eh/K"))


def rotor_records(res: ThermoResult) -> list[dict]:
    """One record per hindered rotor of ``res``: "label", "source" (the barrier's: "frequency" or the scan),
    and the :data:`ROTOR_QUANTITIES`; S and Cp (= Cv: an internal motion) are arrays over the temperatures,
    what the rotor contributes (its harmonic mode's share is no longer in the total)."""
    n = len(temperatures_of(res))
    return [{"label": r.label, "source": r.source, "V0": r.barrier / WAVENUMBER_EH, "n": r.periodicity,
             "sigma_int": r.torsion.symmetry_number, "I_red": r.torsion.reduced_moment, "frequency": r.frequency,
             "overlap": r.overlap, "ZPE": terms["zpe"], "S": per_temperature(terms["S"], n),
             "Cp": per_temperature(terms["Cv"], n)}
            for r, terms in zip(res.rotors, res.rotor_terms, strict=True)]  # fmt: skip
