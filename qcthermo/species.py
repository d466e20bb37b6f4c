"""Species: a named conformer ensemble with optional higher-level single points, and its audit.

:func:`build_species` turns the calculations of one species into a :class:`SpeciesResult`: every
file audited (:func:`audit_calculation`), duplicates merged and mirror images kept
(:mod:`qcthermo.ensemble`), single points paired by geometry, thermochemistry per conformer,
composite energies G = E(high) + [G - E](low), and the Boltzmann-weighted ensemble values.
:func:`species_thermo` is the one place where a species' ensemble values are made from its
conformers' thermochemistry (composite shift, mirror images, Boltzmann sum, heat capacity): the tables,
the reactions and the NASA-7 fits all use it.

Units: hartree per molecule and hartree/K, arrays over the temperatures of the conditions.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any, NamedTuple

import numpy as np

from . import ensemble
from .errors import QcthermoError
from .records import Calculation, Conditions, Molecule, ThermoResult
from .rotors import ROTOR_WARNING
from .symmetry import NEAR_SYMMETRY_WARNING
from .units import K_B_EH


class Finding(NamedTuple):
    """One audit finding: severity "error" | "warning", subject (a file, species or reaction), message."""

    severity: str
    subject: str
    message: str


@dataclass
class SpeciesOptions:
    """What a species may override (reaction file ``[species.NAME]``; None: the engine's default).

    Attributes:
        symmetry_number, electronic_degeneracy, imaginary_policy: passed to the Molecule.
        enantiomers: 2 when a chiral structure stands for both mirror images (its G takes -RT ln 2),
            1 when one enantiomer is meant, None when not said (a chiral structure is then a warning).
        concentration: mol/L of a species that is its own solvent: its translational entropy is
            computed at this concentration instead of the standard state (G(c) = G(1M) + RT ln(c/1M)).
        transition_state: the species is a first-order saddle point.
        label: display name.
        torsion_scans: relaxed torsion scans for the hindered-rotor treatment (records.TorsionScan).
    """

    symmetry_number: int | None = None
    electronic_degeneracy: int | None = None
    imaginary_policy: str | None = None
    concentration: float | None = None
    transition_state: bool = False
    label: str | None = None
    enantiomers: int | None = None
    torsion_scans: list = field(default_factory=list)


@dataclass
class Conformer:
    """One frequency file of a species and what became of it.

    Attributes:
        calculation: the frequency (or optimisation+frequency) job.
        status: "used" (in the ensemble), "duplicate" (merged into ``duplicate_of``) or "excluded"
            (an error finding says why, in ``reason``).
        molecule, thermo: the engine's input and result (None unless used).
        single_point: the higher-level single point paired with it, and the geometry RMSD (angstrom).
        gas_single_point: with a solvent single point, the gas-phase one at the same level on the same
            geometry (the thermodynamic-cycle route: dG_solv = E(solvent) - E(gas), docs/solution.md).
        population: Boltzmann population under the chosen low-mode model, array over T (0 unless used).
        values: this conformer's E, E_zpe, H, S, G (chosen model) and *_rrho, hartree (composite
            energies included), arrays over T.
        duplicate_of: path of the kept copy, for duplicates; rmsd: RMSD to it (angstrom).
        mirror_of: path of its mirror image, for a member of an enantiomer pair.
        reason: why it was excluded.
    """

    calculation: Calculation
    status: str = "used"
    molecule: Molecule | None = None
    thermo: ThermoResult | None = None
    single_point: Calculation | None = None
    single_point_rmsd: float | None = None
    gas_single_point: Calculation | None = None
    population: np.ndarray | float = 0.0
    values: dict[str, np.ndarray] = field(default_factory=dict)
    duplicate_of: str | None = None
    rmsd: float | None = None
    mirror_of: str | None = None
    reason: str | None = None

    @property
    def path(self) -> str:
        return self.calculation.path

    @property
    def level(self) -> str | None:
        """"high//low" with a single point, else the frequency job's level; a solvent single point on a
        gas-phase structure names its solvent: "COSMO(water)-B3LYP/6-31+G*//B3LYP/6-31G*"."""
        from .solution import single_point_level

        low = self.calculation.level_of_theory or "?"
        if self.single_point is None:
            return self.calculation.level_of_theory
        return f"{single_point_level(self.single_point, self.calculation)}//{low}"

    @property
    def solvation_energy(self) -> float | None:
        """dG_solv = E(single point, solvent) - E(single point, gas), hartree, on the thermodynamic-cycle route."""
        from .solution import solvation_free_energy

        if self.single_point is None or self.gas_single_point is None:
            return None
        return solvation_free_energy(self.single_point.energy, self.gas_single_point.energy)


@dataclass
class SpeciesResult:
    """One species: its conformers and the ensemble values.

    Attributes:
        name, label: name in the reaction file and display name.
        options: the overrides used.
        conformers: every file given, used or not (see :class:`Conformer`).
        values: ensemble quantities, hartree (per molecule) or hartree/K, arrays over T:
            "E" (electronic, high level when composite), "ZPE", "E_zpe", "H", "S", "G" (chosen model),
            "H_rrho", "S_rrho", "G_rrho" (RRHO). G's are Boltzmann sums over the distinct conformers;
            E, ZPE and H are population averages, S = (H - G)/T includes the entropy of mixing.
        findings: the audit of this species and its files.
    """

    name: str
    label: str
    options: SpeciesOptions
    conformers: list[Conformer]
    values: dict[str, np.ndarray] = field(default_factory=dict)
    findings: list[Finding] = field(default_factory=list)

    @property
    def used(self) -> list[Conformer]:
        return [c for c in self.conformers if c.status == "used"]

    @property
    def usable(self) -> bool:
        return bool(self.values)

    @property
    def reference(self) -> Calculation:
        """A calculation standing for the species (the first file): formula, charge, multiplicity."""
        return self.conformers[0].calculation

    @property
    def formula(self) -> str:
        return self.reference.formula

    @property
    def charge(self) -> int:
        return self.reference.charge

    @property
    def multiplicity(self) -> int | None:
        return self.reference.multiplicity

    @property
    def solvent(self) -> str | None:
        """The implicit solvent of the energies, "COSMO(water)" say: the single points' when they are in one
        (the solution protocol), else the structures'; None in the gas phase."""
        from .solution import solvent_label

        c = self.lowest or (self.conformers[0] if self.conformers else None)
        return None if c is None else solvent_label(c.single_point or c.calculation)

    @property
    def levels(self) -> list[str]:
        """Distinct level labels ("high//low") of the used conformers."""
        return sorted({c.level or "?" for c in self.used})

    @property
    def lowest(self) -> Conformer | None:
        """The used conformer of highest population at the first temperature."""
        used = self.used
        return max(used, key=lambda c: float(np.atleast_1d(c.population)[0])) if used else None

    def solvation_energy(self) -> np.ndarray | None:
        """Population-weighted dG_solv of the used conformers, hartree, array over T; None off the cycle route."""
        used = self.used
        values = [c.solvation_energy for c in used]
        if not used or any(v is None for v in values):
            return None
        return ensemble.population_average(np.array(values)[:, None],
                                           np.array([np.atleast_1d(c.population) for c in used]))

    def population_text(self) -> str:
        """"conf1.out 0.71; conf2.out 0.29" at the first temperature, most populated first."""
        pairs = sorted(((float(np.atleast_1d(c.population)[0]), c) for c in self.used), key=lambda x: -x[0])
        return "; ".join(f"{_short(c.path)} {p:.3f}" for p, c in pairs)


def _short(path: str) -> str:
    return Path(path).name


def audit_calculation(calc: Calculation, transition_state: bool, imaginary_threshold: float,
                      policy: str | None = None) -> list[Finding]:
    """Findings on one frequency file: termination, convergence, energy, imaginary modes.

    Errors: abnormal termination, unconverged optimisation, no energy, no frequencies (atoms
    excepted), a transition state without an imaginary mode, an imaginary mode larger than
    ``imaginary_threshold`` (cm^-1) on a minimum, or besides the reaction mode (the largest) on a
    transition state, unless ``policy`` ("invert" | "drop") was chosen for it. Warning: small such
    modes (the engine's policy deals with them and says so), for both kinds of structure
    (docs/thermo.md, "Mode clean-up").
    """
    found: list[Finding] = []

    def add(severity: str, message: str) -> None:
        found.append(Finding(severity, calc.path, message))

    if calc.normal_termination is False:
        add("error", "the job did not terminate normally")
    if calc.optimization_converged is False:
        add("error", "the geometry optimisation did not converge")
    if calc.energy is None:
        add("error", "no electronic energy in the file")
    if not calc.has_vibrations:
        # a glob such as "ch4*.out" often catches the species' own single point: say where that belongs
        hint = "; a single point belongs under single_point" if "single-point" in calc.job_types else ""
        add("error", f"no frequencies in the file (a frequency job is needed for thermochemistry{hint})")
        return found
    imag = [] if calc.frequencies is None else sorted(float(f) for f in calc.frequencies if f < 0)
    listed = ", ".join(f"{f:.1f}" for f in imag)
    if transition_state and not imag:
        add("error", "a transition state needs exactly one imaginary mode; found 0")
    extra = imag[1:] if transition_state else imag  # sorted: imag[0] is the reaction mode of a TS
    if extra:
        large = abs(extra[0]) >= imaginary_threshold and policy not in ("invert", "drop")
        what = "a transition state" if transition_state else "a minimum"
        hint = "a higher-order saddle point" if transition_state else "a transition state? declare it as one"
        add("error" if large else "warning",
            f"{what} with {len(imag)} imaginary mode(s) ({listed} cm^-1)"
            + (f" ({hint})" if large else "; small extra ones are an artefact"))
    return found


def conformer_values(thermo: ThermoResult, n_temperatures: int, e_high: float | None) -> dict[str, np.ndarray]:
    """E, ZPE, H, S, G and *_rrho of one conformer, hartree, arrays of length ``n_temperatures``.

    With a higher-level single point, every energy is shifted by E(high) - E(low):
    X = E(high) + [X - E](low) (the composite "high//low" scheme); entropies are unchanged. This is the
    only place the shift is applied (:func:`species_thermo` calls it once per conformer).
    """
    shift = 0.0 if e_high is None else e_high - thermo.electronic_energy

    def arr(x: Any) -> np.ndarray:
        return np.broadcast_to(np.asarray(x, dtype=float), (n_temperatures,)).copy()

    return {
        "E": arr(thermo.electronic_energy + shift),
        "ZPE": arr(thermo.rrho["zpe"]),
        "H": arr(thermo.enthalpy) + shift,
        "S": arr(thermo.entropy),
        "G": arr(thermo.gibbs) + shift,
        "H_rrho": arr(thermo.rrho["enthalpy"]) + shift,
        "S_rrho": arr(thermo.rrho["entropy"]),
        "G_rrho": arr(thermo.rrho["gibbs"]) + shift,
    }


def ensemble_values(conformers: list[Conformer], temperature: np.ndarray,
                    images: np.ndarray | None = None) -> dict[str, np.ndarray]:
    """Boltzmann-weighted ensemble values of used conformers; sets each conformer's population.

    G = -RT ln sum n_i exp(-G_i/RT) for the chosen model and for RRHO separately (each with its own
    populations); H and E, ZPE are averages with those populations; S = (H - G)/T. ``images``: n_i, the
    number of mirror images each structure stands for (1, or 2 for a chiral structure counted with its
    unseen enantiomer: G_i - RT ln 2, S_i + R ln 2; :func:`mirror_images`); default all 1.
    """
    stack = {k: np.array([c.values[k] for c in conformers]) for k in conformers[0].values}
    t = np.asarray(temperature, dtype=float)
    n = np.ones(len(conformers)) if images is None else np.asarray(images, dtype=float)
    degeneracy = K_B_EH * t * np.log(n)[:, None]  # kT ln n_i, hartree: a state counted n_i times
    out: dict[str, np.ndarray] = {}
    for suffix in ("", "_rrho"):
        g, pops = ensemble.boltzmann_free_energy(stack["G" + suffix] - degeneracy, t)
        h = ensemble.population_average(stack["H" + suffix], pops)
        out["G" + suffix], out["H" + suffix], out["S" + suffix] = g, h, (h - g) / t
        if not suffix:
            for c, p in zip(conformers, pops, strict=True):
                c.population = p
            out["E"] = ensemble.population_average(stack["E"], pops)
            out["ZPE"] = ensemble.population_average(stack["ZPE"], pops)
    out["E_zpe"] = out["E"] + out["ZPE"]
    return out


def mirror_images(species: SpeciesResult, conformers: Sequence[Conformer]) -> np.ndarray:
    """n_i of :func:`ensemble_values`: 2 for a chiral conformer whose mirror image is not in the ensemble,
    when the species says ``enantiomers = 2``; else 1 (an achiral structure is its own mirror image, and a
    computed mirror image counts as a conformer of its own)."""
    paths = {c.path for c in conformers}
    return np.array([2.0 if species.options.enantiomers == 2 and _unpaired_chiral(c, paths) else 1.0
                     for c in conformers])


def _unpaired_chiral(c: Conformer, paths: set[str]) -> bool:
    return bool(c.thermo is not None and c.thermo.chiral) and c.mirror_of not in paths


@dataclass(frozen=True)
class SpeciesThermo:
    """What :func:`species_thermo` returns; hartree per molecule and hartree/K, arrays over ``temperature``.

    Attributes:
        temperature: K, 1-D.
        values: the ensemble "E" (high level when composite), "ZPE", "E_zpe", "H", "S", "G", "cp" (chosen
            model) and "H_rrho", "S_rrho", "G_rrho" (RRHO); see :class:`SpeciesResult`.
        conformers: copies of the used conformers with their own ``values`` and ``population``.
        images: mirror images counted per conformer (:func:`mirror_images`).
    """

    temperature: np.ndarray
    values: dict[str, np.ndarray]
    conformers: list[Conformer]
    images: np.ndarray


def species_thermo(species: SpeciesResult, conditions: Conditions | None = None) -> SpeciesThermo:
    """A species' ensemble thermochemistry: every conformer's values with the composite shift applied once
    (:func:`conformer_values`), mirror images counted (:func:`mirror_images`), Boltzmann-combined
    (:func:`ensemble_values`), and cp = <cp> + (<H^2> - <H>^2)/(k_B T^2)
    (:func:`qcthermo.ensemble.ensemble_heat_capacity`).

    ``conditions`` None: the conformers' own thermochemistry (what :func:`build_species` computed at the
    species' conditions). Given: the conformers' molecules are computed again under them as they are (the
    NASA-7 fits use a temperature grid and a gas standard state; the species' own concentration is not
    applied). The species itself is left unchanged.
    """
    from .thermo import thermochemistry_many

    used = [c for c in species.used if c.thermo is not None]
    results = [c.thermo for c in used] if conditions is None else \
        thermochemistry_many([c.molecule for c in used], conditions)
    members = [replace(c, thermo=r, values={}, population=0.0) for c, r in zip(used, results, strict=True)]
    t = np.atleast_1d(np.asarray(results[0].conditions.temperature, dtype=float))
    for c in members:
        c.values = conformer_values(c.thermo, len(t), c.single_point.energy if c.single_point else None)
    images = mirror_images(species, members)
    values = ensemble_values(members, t, images)
    cp = np.array([np.broadcast_to(c.thermo.cp, t.shape) for c in members])
    values["cp"] = ensemble.ensemble_heat_capacity(cp, np.array([c.values["H"] for c in members]),
                                                   np.array([c.population for c in members]), t)
    return SpeciesThermo(t, values, members, images)


def _mark_duplicates(name: str, confs: list[Conformer], settings: dict[str, float]) -> list[Finding]:
    found: list[Finding] = []
    candidates = [c for c in confs if c.status == "used"]
    grouping = ensemble.group_conformers([c.calculation for c in candidates], settings["rmsd_threshold"],
                                         settings["energy_window"])
    for i, (k, rmsd) in grouping.duplicates.items():
        dup, kept = candidates[i], candidates[k]
        dup.status, dup.duplicate_of, dup.rmsd = "duplicate", kept.path, rmsd
        found.append(Finding("warning", dup.path, f"species {name!r}: the same conformer as {_short(kept.path)} "
                                                  f"(RMSD {rmsd:.3f} A); merged"))
    for i, j, rmsd in grouping.mirror_pairs:
        a, b = candidates[i], candidates[j]
        a.mirror_of, b.mirror_of = b.path, a.path
        found.append(Finding("warning", b.path, f"species {name!r}: mirror image of {_short(a.path)} "
                                                f"(RMSD {rmsd:.3f} A unless reflected); both kept as enantiomers"))
    return found


def _pair_single_points(name: str, confs: list[Conformer], single_points: list[Calculation],
                        explicit: dict[str, Calculation], max_rmsd: float) -> list[Finding]:
    """Pair every used conformer with its single point; a conformer without a usable one is excluded.

    An explicit pair is used as named, unless :func:`qcthermo.ensemble.single_point_mismatch` refuses it
    (another molecule or state is never used: an error, the conformer is left out); a geometry that differs
    is a warning.
    """
    found: list[Finding] = []
    paired: set[int] = set()
    for c in (c for c in confs if c.status == "used"):
        if c.path in explicit:
            found += _pair_explicit(name, c, explicit[c.path], max_rmsd)
            continue
        idx, rmsd = ensemble.pair_single_point(c.calculation, single_points, max_rmsd)
        if idx is None:
            c.status = "excluded"
            c.reason = "no single point matches its geometry" + (f" ({_another_geometry(rmsd, max_rmsd)})"
                                                                 if np.isfinite(rmsd) else "") \
                + _refused_text(c, single_points, max_rmsd)
            found.append(Finding("error", c.path, f"species {name!r}: {c.reason}; a mixed-level ensemble is "
                                                  "refused, so the conformer is left out"))
            continue
        c.single_point, c.single_point_rmsd = single_points[idx], rmsd
        found += _loosened(name, c, rmsd)
        paired.add(idx)
    for j, sp in enumerate(single_points):
        if j not in paired and sp.path not in {s.path for s in explicit.values()}:
            found.append(Finding("warning", sp.path, f"species {name!r}: this single point matches no frequency "
                                                     f"geometry (within {max_rmsd} A); not used"))
    return found


def _pair_explicit(name: str, c: Conformer, sp: Calculation, max_rmsd: float) -> list[Finding]:
    mismatch = ensemble.single_point_mismatch(c.calculation, sp)
    if mismatch:
        c.status, c.reason = "excluded", f"its single point {_short(sp.path)} is refused: {mismatch}"
        return [Finding("error", c.path, f"species {name!r}: {c.reason}; the conformer is left out")]
    idx, rmsd = ensemble.pair_single_point(c.calculation, [sp], float("inf"))
    if idx is None or rmsd > max_rmsd:
        c.status = "excluded"
        where = "another atom order (no aligned RMSD)" if idx is None else _another_geometry(rmsd, max_rmsd)
        c.reason = f"its single point {_short(sp.path)} is {where}"
        return [Finding("error", c.path, f"species {name!r}: {c.reason}; not a composite energy, the conformer is "
                                         "left out")]
    c.single_point, c.single_point_rmsd = sp, rmsd
    return _loosened(name, c, rmsd)


def _another_geometry(rmsd: float, max_rmsd: float) -> str:
    """The finding text of a single point on another geometry than its structure's."""
    return (f"single point on another geometry: RMSD {rmsd:.4f} A > {max_rmsd:g} A (a single point must be on "
            "the frequency job's own final geometry; [ensemble] single_point_rmsd loosens this)")


def _loosened(name: str, c: Conformer, rmsd: float) -> list[Finding]:
    """A warning for a pair accepted only because [ensemble] single_point_rmsd was loosened."""
    if rmsd <= ensemble.SINGLE_POINT_RMSD:
        return []
    return [Finding("warning", c.path, f"species {name!r}: single point on another geometry "
                                       f"({_short(c.single_point.path)}, RMSD {rmsd:.4f} A > "
                                       f"{ensemble.SINGLE_POINT_RMSD:g} A), accepted by a loosened "
                                       "[ensemble] single_point_rmsd")]


def _pair_gas_single_points(name: str, confs: list[Conformer], gas: list[Calculation],
                            max_rmsd: float) -> list[Finding]:
    """The thermodynamic-cycle route (docs/solution.md): every used conformer's solvent single point needs a
    gas-phase single point at the same level on the same geometry; a conformer without one is left out (the
    route is the user's explicit choice, never half taken)."""
    found: list[Finding] = []
    for c in (c for c in confs if c.status == "used"):
        sp = c.single_point
        if sp is None or not sp.solvent_model or c.calculation.solvent_model:
            c.reason = "gas_single_point needs a solvent single point on a gas-phase structure"
        else:
            same_level = [g for g in gas if not g.solvent_model and g.level_of_theory == sp.level_of_theory]
            idx, rmsd = ensemble.pair_single_point(c.calculation, same_level, max_rmsd)
            if idx is not None:
                c.gas_single_point = same_level[idx]
                continue
            c.reason = f"no gas-phase single point at {sp.level_of_theory or '?'} on its geometry" + (
                f" ({_another_geometry(rmsd, max_rmsd)})" if np.isfinite(rmsd) else "")
        c.status = "excluded"
        found.append(Finding("error", c.path, f"species {name!r}: {c.reason}; the conformer is left out"))
    return found


def _refused_text(c: Conformer, single_points: list[Calculation], max_rmsd: float) -> str:
    """"; x.out is on its geometry but its solvent model ..." for single points on the conformer's geometry
    that :func:`qcthermo.ensemble.single_point_mismatch` refused (why an expected pairing did not happen)."""
    from .geometry import kabsch_rmsd

    refused = [f"; {_short(sp.path)} is on its geometry but {why}" for sp in single_points
               if tuple(sp.symbols) == tuple(c.calculation.symbols)
               and (why := ensemble.single_point_mismatch(c.calculation, sp))
               and kabsch_rmsd(c.calculation.coordinates, sp.coordinates) < max_rmsd]
    return "".join(refused)


def _thermo(c: Conformer, name: str, options: SpeciesOptions, conditions: Conditions) -> list[Finding]:
    """Run the engine on one conformer; an engine refusal excludes it with the reason, the hindered-rotor
    treatment's warnings (an ambiguous torsional mode, a torsion left harmonic) and a near-symmetric
    structure (docs/symmetry.md) become findings."""
    from .thermo import thermochemistry

    overrides: dict[str, Any] = {"transition_state": options.transition_state, "name": name}
    for key in ("symmetry_number", "electronic_degeneracy", "imaginary_policy"):
        if getattr(options, key) is not None:
            overrides[key] = getattr(options, key)
    try:
        c.molecule = Molecule.from_calculation(c.calculation, torsion_scans=options.torsion_scans, **overrides)
        c.thermo = thermochemistry(c.molecule, conditions)
    except (QcthermoError, ValueError) as err:
        c.status, c.reason = "excluded", " ".join(str(err).split())
        return [Finding("error", c.path, f"species {name!r}: thermochemistry refused: {c.reason}")]
    return [Finding("warning", c.path, f"species {name!r}: {n.removeprefix(ROTOR_WARNING).removeprefix('warning: ')}")
            for n in c.thermo.notes if n.startswith((ROTOR_WARNING, NEAR_SYMMETRY_WARNING))]


def _merge_repeated(found: list[Finding], name: str) -> list[Finding]:
    """One finding, subject the species, for a warning that several of its conformer files share word for word
    (the eight conformers of an xTB ensemble without normal-mode vectors say the same thing eight times); the
    files are named in the message. Anything said once keeps its file as subject."""
    by_message: dict[tuple[str, str], list[str]] = {}
    for f in found:
        by_message.setdefault((f.severity, f.message), []).append(f.subject)
    return [Finding(severity, subjects[0], message) if len(subjects) == 1 else
            Finding(severity, name, f"{message} (in {len(subjects)} files: {', '.join(_short(s) for s in subjects)})")
            for (severity, message), subjects in by_message.items()]


def _chirality_findings(result: SpeciesResult, images: np.ndarray) -> list[Finding]:
    """A chiral structure without its mirror image is one enantiomer: a warning unless ``enantiomers`` says
    which is meant; ``enantiomers = 2`` with nothing to double is a warning too (docs/reactions.md)."""
    name, wanted = result.name, result.options.enantiomers
    paths = {c.path for c in result.used}
    lone = [c for c in result.used if _unpaired_chiral(c, paths)]
    if wanted is None:
        return [Finding("warning", c.path, f"species {name!r}: chiral ({c.thermo.point_group}): counted as one "
                                           "enantiomer; set enantiomers = 2 if both mirror images are meant")
                for c in lone]
    if wanted == 2 and not np.any(images > 1):
        return [Finding("warning", name, f"species {name!r}: enantiomers = 2 changes nothing: no structure is "
                                         "chiral without its mirror image in the ensemble")]
    return []


def species_conditions(conditions: Conditions, options: SpeciesOptions) -> Conditions:
    """The conditions of one species: its own concentration replaces the standard state if given."""
    if options.concentration is None:
        return conditions
    return conditions.replace(standard_state=f"{options.concentration:g}M", pressure=None)


def build_species(name: str, calcs: list[Calculation], conditions: Conditions, options: SpeciesOptions | None = None,
                  single_points: Sequence[Calculation] = (), explicit_pairs: dict[str, Calculation] | None = None,
                  settings: dict[str, float] | None = None,
                  gas_single_points: Sequence[Calculation] = ()) -> SpeciesResult:
    """Audit, de-duplicate, pair, compute and Boltzmann-weight one species.

    ``calcs``: its frequency files (several = a conformer ensemble); ``single_points``: candidate
    higher-level single points, paired by geometry; ``explicit_pairs``: frequency path -> single point
    named in the reaction file; ``settings``: the [ensemble] thresholds (see reactions.ENSEMBLE_DEFAULTS);
    ``gas_single_points``: gas-phase single points at the level of solvent ones (the thermodynamic-cycle
    route, :func:`_pair_gas_single_points`).
    Never raises for bad input: problems become findings, and a species with no usable conformer has
    empty ``values``.
    """
    from .reactions import ENSEMBLE_DEFAULTS

    options = options or SpeciesOptions()
    settings = {**ENSEMBLE_DEFAULTS, **(settings or {})}
    explicit_pairs = explicit_pairs or {}
    result = SpeciesResult(name, options.label or name, options, [Conformer(c) for c in calcs])
    findings = result.findings
    formula = Counter(calcs[0].symbols)
    for c in result.conformers:
        calc = c.calculation
        if Counter(calc.symbols) != formula or calc.charge != calcs[0].charge \
                or calc.multiplicity != calcs[0].multiplicity:
            c.status, c.reason = "excluded", "formula, charge or multiplicity differs from the species' first file"
            findings.append(Finding("error", calc.path, f"species {name!r}: {c.reason}"))
            continue
        problems = audit_calculation(calc, options.transition_state, conditions.imaginary_threshold,
                                     options.imaginary_policy or conditions.imaginary_policy)
        findings.extend(f._replace(message=f"species {name!r}: {f.message}") for f in problems)
        errors = [f.message for f in problems if f.severity == "error"]
        if errors:
            c.status, c.reason = "excluded", "; ".join(errors)
    signatures = {ensemble.bond_signature(c.calculation) for c in result.used}
    if len(signatures) > 1:
        findings.append(Finding("warning", name, f"species {name!r}: its structures are bonded differently "
                                                 "(isomers, not conformers?); all are kept in the ensemble"))
    programs = sorted({c.calculation.program or "?" for c in result.used})
    if len(programs) > 1:
        # absolute energies of two programs are not on one scale (B3LYP with VWN3 or VWN5, grids, defaults)
        findings.append(Finding("warning", name, f"species {name!r}: conformers from different programs "
                                                 f"({', '.join(programs)}); their Boltzmann weights compare "
                                                 "energies that are not on one scale"))
    findings.extend(_mark_duplicates(name, result.conformers, settings))
    if single_points or explicit_pairs:
        findings.extend(_pair_single_points(name, result.conformers, list(single_points), explicit_pairs,
                                            settings["single_point_rmsd"]))
    if gas_single_points:
        findings.extend(_pair_gas_single_points(name, result.conformers, list(gas_single_points),
                                                settings["single_point_rmsd"]))
    cond = species_conditions(conditions, options)
    findings.extend(_merge_repeated([problem for c in result.used for problem in _thermo(c, name, options, cond)],
                                    name))
    if len(result.levels) > 1:
        findings.append(Finding("error", name, f"species {name!r}: conformers at different levels of theory "
                                               f"({', '.join(result.levels)})"))
    elif result.used:
        computed = species_thermo(result)
        for c, member in zip(result.used, computed.conformers, strict=True):
            c.values, c.population = member.values, member.population
        result.values = computed.values
        findings.extend(_chirality_findings(result, computed.images))
    if not result.values:
        findings.append(Finding("error", name, f"species {name!r}: no usable structure"))
    return result
