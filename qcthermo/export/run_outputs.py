"""Every file of a run's output folder: the tables, coordinates, model files, figures, SI, report and run.json.

:func:`write_run_outputs` writes them into a folder that qcthermo.fileio.write_run_folder has staged;
:func:`run_json` records what was written (docs/reactions.md, "Outputs"; docs/survey.md, "Output files").
"""

from __future__ import annotations

import hashlib
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np

from .. import __version__
from ..fileio import atomic_write, csv_text, display, json_text, printable_frame
from .conformers import write_conformers
from .run_tables import caption_context, formation_caption, model_tag, reaction_subjects, solution_caption, table_notes
from .tables import SPECIES_RELATIVE, paper_table, write_tables
from .xyz import STRUCTURES, XyzBlock, write_structure_files, write_xyz_file

if TYPE_CHECKING:
    from ..workflow import RunResults


def _write_table(df, out_dir: Path, stem: str, caption: str, notes: list[str], energy_unit: str = "kcal/mol",
                 paper_caption: str | None = None) -> list[Path]:
    """The full table as csv and xlsx, what a paper prints (:func:`~qcthermo.export.tables.paper_table`) as
    Markdown and LaTeX, under ``paper_caption`` when it differs."""
    paper = paper_table(df, stem, energy_unit)
    common = dict(notes=notes, label=f"tab:{stem}")
    return [*write_tables(df, out_dir, stem, formats=("csv", "xlsx"), caption=caption, **common),
            *write_tables(paper.frame, out_dir, stem, formats=("md", "tex"), caption=paper_caption or caption,
                          row_notes=paper.row_notes, sections=paper.sections, **common)]


def _xyz_blocks(results: RunResults) -> list:
    blocks = []
    for s in results.species_results.values():
        for c in s.used:
            v = c.values
            name = s.name if len(s.used) == 1 else f"{s.name}/{Path(c.path).stem}"
            blocks.append(XyzBlock(name, c.calculation.symbols, c.calculation.coordinates, {
                "level": c.level, "charge": c.calculation.charge, "multiplicity": c.calculation.multiplicity,
                "E_Eh": float(v["E"][0]) if v else None,
                f"G_{model_tag(results.conditions.low_mode_model)}_Eh": float(v["G"][0]) if v else None,
                "T_K": float(results.temperatures[0]),
                "population": float(np.atleast_1d(c.population)[0]),
                "source": Path(c.path).name,
            }))
    return blocks


def _sha256(path: Path) -> str:
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for chunk in iter(lambda: handle.read(1 << 20), b""):
            digest.update(chunk)
    return digest.hexdigest()


def run_json(results: RunResults, files: list[str]) -> str:
    """run.json: tool version, every setting, sha256 of every input file, all findings, the ``files`` written
    (as qcthermo.fileio.listed_name gives them: ``species.csv``, ``structures/ch4.xyz``)."""
    inputs = [{"path": str(p), "sha256": _sha256(p), "bytes": p.stat().st_size} for p in results.input_files()
              if p.is_file()]
    doc = {
        "tool": "qcthermo",
        "status": "complete",
        "version": __version__,
        "settings": results.settings,
        "inputs": inputs,
        "survey": {"summary": results.survey_result.summary(), "notes": results.survey_result.notes,
                   "stats": results.survey_result.stats} if results.survey_result is not None else None,
        "findings": [f._asdict() for f in results.findings],
        "exit_status": results.exit_status,
        "species": {n: {"status": "ok" if s.usable else "excluded", "level": s.levels,
                        "conformers": [{"path": c.path, "status": c.status, "reason": c.reason,
                                        "duplicate_of": c.duplicate_of, "mirror_of": c.mirror_of,
                                        "single_point": c.single_point.path if c.single_point else None,
                                        "gas_single_point": c.gas_single_point.path if c.gas_single_point
                                        else None,
                                        "population": np.atleast_1d(c.population)}
                                       for c in s.conformers]}
                    for n, s in results.species_results.items()},
        "reactions": results.reactions.to_dict(orient="records") if len(results.reactions) else [],
        "heats_of_formation": results.heats_of_formation.to_dict(orient="records")
        if results.heats_of_formation is not None else None,
        **{k: df.to_dict(orient="records") for k, df in (("pka", results.pka), ("redox", results.redox))
           if df is not None},
        "simulation": _simulation_record(results.simulation),
        "files": sorted(files),
    }
    return json_text(doc, indent=2)  # strict JSON: NaN and inf as null, file names in their display form


def _simulation_record(sim) -> dict[str, Any] | None:
    """What run.json keeps of a simulation: its settings, notes, TOF and the solver's counts."""
    if sim is None:
        return None
    from dataclasses import asdict

    return {"settings": asdict(sim.settings), "notes": sim.notes, "tof_s-1": sim.tof, "solver": sim.statistics}


def write_run_outputs(results: RunResults, out_dir: Path) -> list[Path]:
    """Every export of a run into ``out_dir`` (a staged folder); the paths written."""
    # text files show a non-UTF-8 file name as \xNN by themselves (atomic_open); a workbook is binary, so the
    # tables and their notes are given in that form
    written = [atomic_write(out_dir / "survey.csv", csv_text(results.survey))]
    context = display(caption_context(results))
    written += _write_table(printable_frame(results.species), out_dir, "species",
                            f"Species thermochemistry, hartree per molecule; {context}.",
                            [display(n) for n in table_notes(results)], results.energy_unit,
                            f"Species thermochemistry, {SPECIES_RELATIVE.format(unit=results.energy_unit)}; "
                            f"{context}.")
    if len(results.reactions):
        names, subjects = reaction_subjects(results)
        written += _write_table(printable_frame(results.reactions), out_dir, "reactions", "Reaction energies and "
                                f"free energies of activation, {results.energy_unit}; "
                                f"{display(caption_context(results, names))}.",
                                [display(n) for n in table_notes(results, subjects)], results.energy_unit)
    if results.heats_of_formation is not None and len(results.heats_of_formation):
        written += _write_table(results.heats_of_formation, out_dir, "heats_of_formation",
                                formation_caption(results), [display(n) for n in table_notes(
                                    results, set(results.heats_of_formation["species"]))])
    for stem, df, what in (("pka", results.pka, "pKa values"), ("redox", results.redox, "Reduction potentials")):
        if df is not None and len(df):
            names = {n for col in ("acid", "base", "oxidised", "reduced") if col in df for n in df[col]}
            written += _write_table(printable_frame(df), out_dir, stem, f"{what} (solutes at 1 mol/L; "
                                    f"{display(solution_caption(results, stem))}); "
                                    f"{display(caption_context(results, names))}.",
                                    [display(n) for n in table_notes(results, set(df["name"]))], results.energy_unit)
    for stem, df in (("rates", results.rates), ("arrhenius", results.arrhenius),
                     ("energy_span", results.energy_span)):
        if df is not None and len(df):
            written.append(atomic_write(out_dir / f"{stem}.csv", csv_text(df)))
    blocks = _xyz_blocks(results)
    if blocks:
        written.append(write_xyz_file(out_dir / "coordinates.xyz", blocks))
        written += write_structure_files(out_dir / STRUCTURES, blocks)
    written += write_conformers(results, out_dir, display(caption_context(results)), _write_table)
    if results.simulation is not None:
        from .simulation import write_simulation

        written += write_simulation(results, out_dir, results.settings.get("time_axis", "auto"))
    written += _model_files_figures_and_documents(results, out_dir)
    return written


def _model_files_figures_and_documents(results: RunResults, out_dir: Path) -> list[Path]:
    """NASA-7 files (thermo.yaml, thermo.dat), figures, supporting information and the report."""
    from .nasa7 import write_run_thermo
    from .report import write_report
    from .run_figures import write_profile_figures
    from .si import write_si

    written = [Path(p) for p in write_run_thermo(results, out_dir)]
    written += write_profile_figures(results, out_dir)
    written += write_si(results, out_dir, STRUCTURES if _xyz_blocks(results) else None)
    written.append(write_report(results, out_dir))
    return written
