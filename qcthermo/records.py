"""The records that flow through qcthermo, with their units.

``Calculation`` is what a reader found in one log (nothing computed). ``Molecule`` is the input of the
thermochemistry engine. ``Conditions`` says how to compute, ``ThermoResult`` holds what was computed.

Units: energies hartree (Eh) per molecule, lengths angstrom, wavenumbers cm^-1, masses dalton (u),
entropies and heat capacities hartree/K per molecule, temperatures K, pressures Pa.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field, fields, replace
from typing import Any

import numpy as np

from .units import ATM_PA, BAR_PA, FREE_ROTOR_INERTIA_KG_M2

#: job kinds a reader may report in ``Calculation.job_types``
JOB_TYPES = ("optimization", "frequencies", "single-point", "saddle-search", "irc", "scan")


class _Composition:
    """What follows from ``symbols`` alone: atom count and Hill formula."""

    symbols: tuple[str, ...]

    @property
    def natoms(self) -> int:
        return len(self.symbols)

    @property
    def formula(self) -> str:
        """Hill formula (C first, H second, then alphabetical; alphabetical without carbon)."""
        return hill_formula(self.symbols)


@dataclass
class Calculation(_Composition):
    """What one log file holds, normalised to one meaning per field whatever the program.

    Attributes:
        path: the file read.
        program: lower-case program family ("gaussian", "orca", "qchem", "nwchem", "xtb", "gamess",
            "psi4", ...).
        program_version: as printed, or None.
        method, basis: level of theory of ``energy`` (e.g. "B3LYP", "6-31G*"), or None.
        solvent_model: implicit solvent model ("cosmo", "smd", "cpcm", "pcm", "alpb", "gbsa", ...) or None.
        solvent: solvent name or dielectric as printed, or None.
        symbols: element symbols in file order.
        coordinates: (N, 3) angstrom, the final geometry (the one the frequencies belong to).
        charge: total charge.
        multiplicity: 2S+1; None only if truly unknown (with a note).
        energy: final electronic energy in hartree, as the program reports it (solvation included).
        frequencies: (3N-6) or (3N-5) vibrational wavenumbers, cm^-1, imaginary as negative,
            translations/rotations removed; None when the file has no frequency job.
        normal_modes: (n_modes, N, 3) displacement vectors of the same modes as ``frequencies``, in the same
            order: Cartesian displacements (not mass-weighted) of each atom, dimensionless, each mode
            scaled to unit length and rounded to 5 decimals; None when the log prints none (or no
            frequencies). Read from cclib's ``vibdisps`` or the program's own block (NWChem, ORCA 6).
        job_types: subset of :data:`JOB_TYPES`.
        normal_termination: True/False, or None when the file does not say.
        optimization_converged: for optimisations, whether the optimiser reported convergence.
        s2: <S^2> of the final wavefunction for open shells, when printed.
        gas_energy: for implicit-solvent runs that print it, the gas-phase energy, hartree.
        thermo_printed: the program's own thermochemistry in hartree, for cross-checks only: "zpe"
            (the zero-point energy itself), "enthalpy" and "gibbs" (totals, E_elec included) at
            ``"temperature"`` K.
        notes: what the reader noticed: fallback used, quirks fixed.
    """

    path: str
    program: str
    symbols: tuple[str, ...]
    coordinates: np.ndarray
    charge: int = 0
    multiplicity: int | None = 1
    energy: float | None = None
    frequencies: np.ndarray | None = None
    normal_modes: np.ndarray | None = None
    job_types: frozenset[str] = frozenset()
    normal_termination: bool | None = None
    optimization_converged: bool | None = None
    program_version: str | None = None
    method: str | None = None
    basis: str | None = None
    solvent_model: str | None = None
    solvent: str | None = None
    s2: float | None = None
    gas_energy: float | None = None
    thermo_printed: dict[str, float] = field(default_factory=dict)
    notes: list[str] = field(default_factory=list)

    def __post_init__(self):
        # the contract every reader meets (its own checks give the user's one-line reasons first)
        if len(self.symbols) != len(np.reshape(self.coordinates, (-1, 3))):
            raise ValueError(f"{len(self.symbols)} symbols but {len(np.reshape(self.coordinates, (-1, 3)))} rows")
        if self.multiplicity is not None and self.multiplicity < 1:
            raise ValueError(f"multiplicity {self.multiplicity}: 2S+1 is at least 1")
        if self.energy is not None and not np.isfinite(self.energy):
            raise ValueError(f"energy {self.energy}: not a finite number")

    @property
    def has_vibrations(self) -> bool:
        """True when the file holds all the engine needs: frequencies, or none needed (an atom)."""
        return self.frequencies is not None or self.natoms == 1

    @property
    def n_imaginary(self) -> int:
        """Number of imaginary (negative) frequencies; 0 when there are no frequencies."""
        return 0 if self.frequencies is None else int(np.sum(self.frequencies < 0))

    @property
    def level_of_theory(self) -> str | None:
        """"method/basis" (or whichever is known), None when neither is."""
        parts = [p for p in (self.method, self.basis) if p]
        return "/".join(parts) if parts else None

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready dict (lists instead of arrays); inverse of :meth:`from_dict`."""
        out: dict[str, Any] = {}
        for f in fields(self):
            value = getattr(self, f.name)
            if isinstance(value, np.ndarray):
                value = value.tolist()
            elif isinstance(value, (frozenset, tuple)):
                value = sorted(value) if isinstance(value, frozenset) else list(value)
            out[f.name] = value
        return out

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> Calculation:
        data = dict(data)
        data["symbols"] = tuple(data["symbols"])
        data["coordinates"] = np.asarray(data["coordinates"], dtype=float).reshape(-1, 3)
        if data.get("frequencies") is not None:
            data["frequencies"] = np.asarray(data["frequencies"], dtype=float)
        if data.get("normal_modes") is not None:
            data["normal_modes"] = np.asarray(data["normal_modes"], dtype=float).reshape(-1, len(data["symbols"]), 3)
        data["job_types"] = frozenset(data.get("job_types", ()))
        return cls(**data)


def hill_formula(symbols) -> str:
    """Hill-order formula of a list of element symbols, e.g. ("O", "H", "H") -> "H2O"."""
    counts: dict[str, int] = {}
    for s in symbols:
        counts[s] = counts.get(s, 0) + 1
    order = sorted(counts)
    if "C" in counts:
        order = ["C"] + (["H"] if "H" in counts else []) + [s for s in order if s not in ("C", "H")]
    return "".join(s + (str(counts[s]) if counts[s] > 1 else "") for s in order)


def atomic_masses(symbols) -> np.ndarray:
    """Masses (dalton) of the most abundant isotope of each element, from ASE's data tables."""
    from ase.data import atomic_masses_common, atomic_numbers

    try:
        numbers = [atomic_numbers[s] for s in symbols]
    except KeyError as err:
        raise ValueError(f"unknown element symbol {err.args[0]!r}") from None
    if 0 in numbers:  # ASE's "X" (atomic number 0) has a placeholder mass of 1
        raise ValueError("a dummy atom 'X' has no mass")
    return np.array([atomic_masses_common[z] for z in numbers], dtype=float)


@dataclass(frozen=True)
class TorsionScan:
    """A relaxed torsion scan of one bond, as the engine uses it.

    Attributes:
        atoms: (i, j, k, l), 0-based; j-k is the bond turned, the angles are the dihedral i-j-k-l.
        angles: (P,) dihedral of each scan point, radians (computed from each point's geometry).
        energies: (P,) electronic energy of each point, Eh.
        source: the scan log's path.
    """

    atoms: tuple[int, int, int, int]
    angles: np.ndarray
    energies: np.ndarray
    source: str


@dataclass
class Molecule(_Composition):
    """Input of the thermochemistry engine: one structure with its harmonic frequencies.

    Attributes:
        symbols: element symbols.
        coordinates: (N, 3) angstrom.
        frequencies: vibrational wavenumbers, cm^-1 (3N-6, or 3N-5 for linear), imaginary negative;
            an empty array for an atom. The engine's cleaning step removes leftover
            translations/rotations and applies the imaginary-mode policy.
        multiplicity: 2S+1; the electronic degeneracy unless ``electronic_degeneracy`` is given.
        charge: total charge.
        energy: electronic energy, hartree.
        symmetry_number: rotational symmetry number; None means inferred from the geometry.
        masses: dalton per atom; None means most abundant isotopes.
        electronic_degeneracy: ground-state degeneracy override (e.g. 2 for a spatially degenerate
            doublet ... or 3 for O2's triplet is already 2S+1).
        normal_modes: (n_modes, N, 3) displacement vectors of ``frequencies`` (see Calculation), or None;
            the hindered-rotor treatment needs them to find the torsional modes.
        torsion_scans: relaxed torsion scans (:class:`TorsionScan`) for the hindered-rotor treatment.
        transition_state: True keeps exactly one imaginary mode out of the partition function.
        imaginary_policy: "error" | "invert" | "drop" | None (None: the default policy, see cleaning.py).
        name: a label for notes and tables.
        level_of_theory, source: provenance, carried into tables.
        notes: provenance notes (e.g. from the reader).
    """

    symbols: tuple[str, ...]
    coordinates: np.ndarray
    frequencies: np.ndarray
    multiplicity: int = 1
    charge: int = 0
    energy: float = 0.0
    symmetry_number: int | None = None
    masses: np.ndarray | None = None
    electronic_degeneracy: int | None = None
    normal_modes: np.ndarray | None = None
    torsion_scans: list[TorsionScan] = field(default_factory=list)
    transition_state: bool = False
    imaginary_policy: str | None = None
    name: str | None = None
    level_of_theory: str | None = None
    source: str | None = None
    notes: list[str] = field(default_factory=list)

    def __post_init__(self):
        self.symbols = tuple(self.symbols)
        self.coordinates = np.asarray(self.coordinates, dtype=float).reshape(-1, 3)
        self.frequencies = np.asarray([] if self.frequencies is None else self.frequencies, dtype=float)
        if len(self.symbols) != len(self.coordinates):
            raise ValueError(f"{len(self.symbols)} symbols but {len(self.coordinates)} coordinate rows")
        self.masses = atomic_masses(self.symbols) if self.masses is None else np.asarray(self.masses, float)
        # the engine's arithmetic would turn these into a NaN G (unknown coordinates and frequencies that are
        # not finite are the engine's to refuse, with its reasons: cleaning.py)
        if not np.isfinite(self.energy):
            raise ValueError(f"energy {self.energy}: not a finite number")
        if int(self.multiplicity) != self.multiplicity or self.multiplicity < 1:
            raise ValueError(f"multiplicity {self.multiplicity}: expected an integer 2S+1 >= 1")
        if not (np.all(np.isfinite(self.masses)) and np.all(self.masses > 0)):
            raise ValueError("atomic masses must be positive numbers")

    @property
    def mass(self) -> float:
        """Total mass, dalton."""
        return float(np.sum(self.masses))

    @classmethod
    def from_calculation(cls, calc: Calculation, **overrides) -> Molecule:
        """Build the engine's input from a reader's record; ``overrides`` replace any field.

        A calculation without frequencies gives a molecule with none (fine for an atom, otherwise
        the engine will refuse it). A saddle-search job marks the molecule as a transition state.
        Multiplicity unknown (None) is taken as 1 with a note.
        """
        notes = [f"{calc.path}: {n}" for n in calc.notes]
        multiplicity = calc.multiplicity
        if multiplicity is None:
            multiplicity = 1
            notes.append(f"{calc.path}: multiplicity not in the file; taken as 1")
        kwargs: dict[str, Any] = dict(
            symbols=calc.symbols,
            coordinates=calc.coordinates,
            frequencies=calc.frequencies if calc.frequencies is not None else np.zeros(0),
            normal_modes=calc.normal_modes,
            multiplicity=multiplicity,
            charge=calc.charge,
            energy=calc.energy if calc.energy is not None else 0.0,
            transition_state="saddle-search" in calc.job_types,
            level_of_theory=calc.level_of_theory,
            source=calc.path,
            notes=notes,
        )
        kwargs.update(overrides)
        return cls(**kwargs)

    def replace(self, **changes) -> Molecule:
        return replace(self, **changes)


#: standard states by name: ("pressure", Pa) for gas, ("concentration", mol/L) for solution
STANDARD_STATES = {"1atm": ("pressure", ATM_PA), "1bar": ("pressure", BAR_PA), "1M": ("concentration", 1.0)}

LOW_MODE_MODELS = ("rrho", "qrrho", "qrrho-enthalpy", "quasi-harmonic")
INTERNAL_ROTOR_MODELS = ("harmonic", "hindered")


#: the lowest temperature Conditions accepts, K
MIN_TEMPERATURE_K = 1.0
#: the highest, K: far above it no molecule stays bound (common NASA-7 data stop at 6000 K), and a rigid-rotor
#: harmonic-oscillator G means nothing; 1e308 K would overflow the partition functions
MAX_TEMPERATURE_K = 10_000.0
#: the most temperatures of one run: every table holds a row per species and temperature (10 000 is a 0.1 K grid
#: over 1000 K, finer than any fit or figure needs; a million would be gigabytes of tables)
MAX_TEMPERATURES = 10_000
#: bounds of a concentration standard state, mol/L: no liquid holds more than ~60 mol/L (water 55.3 M); below
#: 1e-12 M is no standard state anyone quotes (common practice)
CONCENTRATION_BOUNDS_M = (1e-12, 100.0)
#: bounds of Conditions.pressure, Pa: the ideal gas is a model of dilute gases (common practice: 1000 bar is far
#: beyond it); the lower one only keeps ln(p) finite
PRESSURE_BOUNDS_PA = (1e-12, 1e8)
#: the largest low-mode threshold and imaginary threshold, cm^-1: Grimme's and Truhlar's are 100 cm^-1; at
#: 1000 cm^-1 a model would already replace bond stretches (common practice)
MAX_THRESHOLD_CM1 = 1000.0


@dataclass
class Conditions:
    """How to compute thermochemistry.

    Attributes:
        temperature: K, float or 1-D array (results broadcast over it).
        pressure: Pa; when given it overrides ``standard_state``.
        standard_state: "1atm" | "1bar" | "1M", or a concentration string such as "55.3M" (mol/L).
        low_mode_model: one of :data:`LOW_MODE_MODELS`.
        low_mode_threshold: cm^-1, nu_0 of the qRRHO weight / the quasi-harmonic floor.
        rotor_inertia: kg m^2, B_av of the free-rotor limit, or "molecular" for the mean moment.
        frequency_scale: factor for the thermal (and entropy) terms, or "auto" (look the level up).
        zpe_scale: factor for the ZPE; None means the same as ``frequency_scale``.
        imaginary_policy: default policy for unexpected imaginary modes ("error" | "invert" | "drop"),
            None means: invert small ones (|nu| < ``imaginary_threshold``) with a warning, refuse large.
        imaginary_threshold: cm^-1, the largest |nu| inverted by the default policy.
        internal_rotors: "harmonic" (every torsion a vibration) or "hindered" (torsions about single bonds
            as 1-D hindered rotors; docs/rotors.md).
    """

    temperature: Any = 298.15
    pressure: float | None = None
    standard_state: str = "1atm"
    low_mode_model: str = "qrrho"
    low_mode_threshold: float = 100.0
    rotor_inertia: Any = FREE_ROTOR_INERTIA_KG_M2
    frequency_scale: Any = 1.0
    zpe_scale: float | None = None
    imaginary_policy: str | None = None
    imaginary_threshold: float = 50.0
    internal_rotors: str = "harmonic"

    def __post_init__(self):
        if self.internal_rotors not in INTERNAL_ROTOR_MODELS:
            raise ValueError(f"unknown internal-rotor treatment {self.internal_rotors!r}; "
                             f"choose one of {', '.join(INTERNAL_ROTOR_MODELS)}")
        if self.low_mode_model not in LOW_MODE_MODELS:
            raise ValueError(
                f"unknown low-mode model {self.low_mode_model!r}; choose one of {', '.join(LOW_MODE_MODELS)}"
            )
        t = np.asarray(self.temperature, dtype=float)
        # below 1 K no molecule is an ideal gas of classical rotors (docs/thermo.md, "Model"); exp() of the
        # energies over k_B T then overflows too
        if t.ndim > 1 or t.size == 0 or t.size > MAX_TEMPERATURES or \
                not np.all(np.isfinite(t) & (t >= MIN_TEMPERATURE_K) & (t <= MAX_TEMPERATURE_K)):
            raise ValueError(f"temperature must be a number from {MIN_TEMPERATURE_K:g} to {MAX_TEMPERATURE_K:g} K, "
                             f"or a 1-D array of 1 to {MAX_TEMPERATURES} of them")
        for name, what in (("low_mode_threshold", "low-mode threshold"),
                           ("imaginary_threshold", "imaginary threshold")):
            value = getattr(self, name)
            if not (isinstance(value, (int, float)) and 0 <= value <= MAX_THRESHOLD_CM1):
                raise ValueError(f"{what} {value}: expected a wavenumber from 0 to "
                                 f"{MAX_THRESHOLD_CM1:g} cm^-1")
        low, high = PRESSURE_BOUNDS_PA
        if self.pressure is not None and not (isinstance(self.pressure, (int, float)) and low <= self.pressure <= high):
            raise ValueError(f"pressure {self.pressure}: expected {low:g} to {high:g} Pa (an ideal gas)")
        # scale factors of published tables lie within a few per cent of 1; far from it is a slip (common practice)
        scale = self.frequency_scale
        if scale != "auto" and not (isinstance(scale, (int, float)) and 0.5 < scale < 1.5):
            raise ValueError(f"frequency scale {self.frequency_scale}: expected a factor near 1 (0.5 to 1.5) or 'auto'")
        if self.zpe_scale is not None and not 0.5 < self.zpe_scale < 1.5:
            raise ValueError(f"ZPE scale {self.zpe_scale}: expected a factor near 1 (0.5 to 1.5)")
        inertia = self.rotor_inertia
        if inertia != "molecular" and not (isinstance(inertia, (int, float)) and 0 < inertia < 1e-40):
            raise ValueError(f"rotor inertia {inertia}: expected a molecular moment of inertia, kg m^2 (e.g. 1e-44), "
                             "or 'molecular'")
        parse_standard_state(self.standard_state)

    def replace(self, **changes) -> Conditions:
        new = replace(self, **changes)
        new._given = self.given | frozenset(changes)
        return new

    @property
    def given(self) -> frozenset[str]:
        """The fields the caller set (in the constructor or :meth:`replace`): only they override a reaction
        file's [conditions] (qcthermo.settings); the others are defaults."""
        return getattr(self, "_given", frozenset(CONDITION_KEYS))


#: what a run's conditions are made of (a reaction file's [conditions], qcthermo.run's keywords, the options)
CONDITION_KEYS = tuple(f.name for f in fields(Conditions))


def _recording(init):
    """Conditions' own __init__, also noting which fields were passed (:attr:`Conditions.given`)."""

    @functools.wraps(init)
    def __init__(self, *args, **kwargs):
        init(self, *args, **kwargs)
        self._given = frozenset(CONDITION_KEYS[: len(args)]) | frozenset(kwargs)

    return __init__


Conditions.__init__ = _recording(Conditions.__init__)


def parse_standard_state(state: str) -> tuple[str, float]:
    """``"1atm"`` -> ("pressure", 101325.0); ``"55.3M"`` -> ("concentration", 55.3) mol/L.

    Raises ValueError for anything else.
    """
    s = str(state).strip()
    if s in STANDARD_STATES:
        return STANDARD_STATES[s]
    if s.endswith("M"):
        try:
            conc = float(s[:-1])
        except ValueError:
            conc = -1.0
        low, high = CONCENTRATION_BOUNDS_M
        if low <= conc <= high:  # False for nan and inf too
            return ("concentration", conc)
    raise ValueError(f"unknown standard state {state!r}; use 1atm, 1bar, 1M or a concentration like 55.3M "
                     f"({CONCENTRATION_BOUNDS_M[0]:g} to {CONCENTRATION_BOUNDS_M[1]:g} mol/L)")


@dataclass
class ThermoResult:
    """Thermochemistry of one molecule under one ``Conditions``; per molecule, atomic units.

    Energies in hartree are absolute (they include ``electronic_energy``); arrays broadcast over the
    temperatures of ``conditions`` (floats for a scalar temperature).

    Attributes:
        electronic_energy: E_elec, Eh.
        zpe: zero-point energy, Eh (scaled by the ZPE factor; for qrrho-enthalpy the interpolated one).
        thermal_energy: U = E_elec + ZPE + thermal, Eh.
        enthalpy: H = U + kT, Eh.
        entropy: S, Eh/K.  cv, cp: Eh/K.
        gibbs: G = H - T S, Eh (the chosen low-mode model).
        rrho: the same quantities under plain RRHO, keys "zpe", "thermal_energy", "enthalpy",
            "entropy", "gibbs", "cv", "cp" (equal to the above when the model is "rrho").
        components: {"translational"|"rotational"|"vibrational"|"electronic": {"U", "S", "Cv"}};
            U is the thermal part (vibrational U includes the ZPE), Eh and Eh/K.
        point_group, symmetry_number, chiral, linear: what the engine used.
        frequencies_used: the real wavenumbers in the partition function, cm^-1 (unscaled).
        imaginary_frequency: the transition-state mode kept for tunnelling, cm^-1 (negative), or None.
        scale_factors: {"thermal": f, "zpe": f} and where "auto" found them ("source").
        rotors: the torsions treated as hindered rotors (``qcthermo.rotors.HinderedRotor``, with "S", "Cv",
            "U" and "zpe" of each in ``rotor_terms``), empty under internal_rotors="harmonic".
        rotor_terms: per rotor, its {"zpe", "U", "S", "Cv"} (Eh, Eh/K, over the temperatures).
        notes: every decision the engine made (cleaning, policy, symmetry, scaling).
    """

    conditions: Conditions
    electronic_energy: float
    zpe: Any
    thermal_energy: Any
    enthalpy: Any
    entropy: Any
    gibbs: Any
    cv: Any
    cp: Any
    rrho: dict[str, Any]
    components: dict[str, dict[str, Any]]
    point_group: str | None
    symmetry_number: int
    chiral: bool | None
    linear: bool
    frequencies_used: np.ndarray
    imaginary_frequency: float | None = None
    scale_factors: dict[str, Any] = field(default_factory=dict)
    rotors: list[Any] = field(default_factory=list)
    rotor_terms: list[dict[str, Any]] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)

    @property
    def temperature(self):
        return self.conditions.temperature
