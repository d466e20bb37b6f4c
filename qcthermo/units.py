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


#: time units a duration may be given in, s (a year is the Julian year, 365.25 d)
TIME_UNITS_S: dict[str, float] = {"fs": 1e-15, "ps": 1e-12, "ns": 1e-9, "us": 1e-6, "µs": 1e-6, "ms": 1e-3, "s": 1.0,
                                  "min": 60.0, "h": 3600.0, "d": 86400.0, "y": 365.25 * 86400.0}
#: concentration units, mol/L, and pressure units, Pa, an amount may be given in
CONCENTRATION_UNITS_M: dict[str, float] = {"M": 1.0, "mol/L": 1.0, "mM": 1e-3, "uM": 1e-6, "µM": 1e-6, "nM": 1e-9}
PRESSURE_UNITS_PA: dict[str, float] = {"Pa": 1.0, "kPa": 1e3, "MPa": 1e6, "bar": BAR_PA, "mbar": 1e-2 * BAR_PA,
                                       "atm": ATM_PA, "Torr": ATM_PA / 760.0}


def _number_and_unit(value, units: dict[str, float], what: str) -> tuple[float, str | None]:
    """(number, unit or None) of a number or a string "<number> <unit>" (the space optional)."""
    import math
    import re

    if isinstance(value, bool):
        raise ValueError(f"{what} {value!r}: expected a number or a string such as {next(iter(units))!r}")
    if isinstance(value, (int, float)):
        number, unit = float(value), None
    else:
        m = re.fullmatch(r"\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(\S*)\s*", str(value))
        if not m or (m[2] and m[2] not in units):
            raise ValueError(f"{what} {value!r}: expected a number with one of the units {', '.join(units)}")
        number, unit = float(m[1]), m[2] or None
    if not math.isfinite(number):
        raise ValueError(f"{what} {value!r} is not a finite number")
    return number, unit


def parse_duration(value, what: str = "time") -> float:
    """A duration in s from a number (s) or a string such as "1 h", "30 min", "1e-6 s" (:data:`TIME_UNITS_S`);
    it must be finite and positive."""
    number, unit = _number_and_unit(value, TIME_UNITS_S, what)
    seconds = number * TIME_UNITS_S[unit or "s"]
    if not seconds > 0:
        raise ValueError(f"{what} {value!r} must be positive")
    return seconds


def parse_amount(value, what: str = "amount") -> tuple[str, float]:
    """An initial amount: ("number", x) for a plain number, ("M", c) in mol/L for a concentration such as
    "0.1 M" or "5 mM", ("Pa", p) for a partial pressure such as "0.2 atm" or "10 kPa"; finite and >= 0."""
    number, unit = _number_and_unit(value, {**CONCENTRATION_UNITS_M, **PRESSURE_UNITS_PA}, what)
    if number < 0:
        raise ValueError(f"{what} {value!r} is negative")
    if unit is None:
        return "number", number
    if unit in CONCENTRATION_UNITS_M:
        return "M", number * CONCENTRATION_UNITS_M[unit]
    return "Pa", number * PRESSURE_UNITS_PA[unit]
