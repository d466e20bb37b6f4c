"""Physical constants (CODATA, through scipy.constants) and energy-unit conversion.

Everything inside qcthermo is per molecule in atomic units: energies in hartree (Eh),
entropies and heat capacities in hartree/K. Conversions to molar units happen only at the edges
(tables, figures) through the functions here.
"""

from __future__ import annotations

from scipy import constants as _c

#: Boltzmann constant, J/K
K_B = _c.k
#: Planck constant, J s
H_PLANCK = _c.h
#: reduced Planck constant, J s
HBAR = _c.hbar
#: speed of light, m/s (wavenumbers in cm^-1 need 100 * C_LIGHT)
C_LIGHT = _c.c
#: Avogadro constant, 1/mol
N_A = _c.N_A
#: molar gas constant, J/(mol K)
R_GAS = _c.R
#: atomic mass constant, kg
AMU = _c.atomic_mass
#: hartree energy, J
HARTREE_J = _c.physical_constants["Hartree energy"][0]
#: hartree energy, eV
HARTREE_EV = _c.physical_constants["Hartree energy in eV"][0]
#: Boltzmann constant in hartree/K
K_B_EH = K_B / HARTREE_J
#: one wavenumber (cm^-1) in hartree
WAVENUMBER_EH = H_PLANCK * C_LIGHT * 100.0 / HARTREE_J
#: one standard atmosphere, Pa
ATM_PA = _c.atm
#: one bar, Pa
BAR_PA = _c.bar
#: B_av, the average moment of inertia of the free-rotor limit of the qRRHO entropy, kg m^2
#: (Grimme, Chem. Eur. J. 2012, 18, 9955)
FREE_ROTOR_INERTIA_KG_M2 = 1e-44
#: elementary charge, C
ELEMENTARY_CHARGE = _c.e
#: Faraday constant, C/mol
FARADAY = _c.physical_constants["Faraday constant"][0]
#: thermochemical calorie, J
CALORIE_J = _c.calorie

#: hartree per molecule -> unit per mole (or eV per molecule)
ENERGY_UNITS: dict[str, float] = {
    "Eh": 1.0,
    "kcal/mol": HARTREE_J * N_A / (1000.0 * CALORIE_J),
    "kJ/mol": HARTREE_J * N_A / 1000.0,
    "eV": HARTREE_EV,
}


def check_energy_unit(unit: str) -> str:
    """Return ``unit`` if it is one of :data:`ENERGY_UNITS`, else raise ``ValueError``."""
    if unit not in ENERGY_UNITS:
        raise ValueError(f"unknown energy unit {unit!r}; choose one of {', '.join(ENERGY_UNITS)}")
    return unit


def hartree_to(value, unit: str):
    """Convert an energy (scalar or array) from hartree per molecule to ``unit``."""
    return value * ENERGY_UNITS[check_energy_unit(unit)]


def to_hartree(value, unit: str):
    """Convert an energy (scalar or array) in ``unit`` to hartree per molecule."""
    return value / ENERGY_UNITS[check_energy_unit(unit)]


def unit_suffix(unit: str) -> str:
    """Column-name suffix for an energy unit: ``kcal/mol`` -> ``kcal_mol``, ``Eh`` -> ``Eh``."""
    return check_energy_unit(unit).replace("/", "_")


def entropy_to_j_mol_k(value):
    """Convert an entropy or heat capacity from hartree/K per molecule to J/(mol K)."""
    return value * HARTREE_J * N_A
