"""Speed of the thermochemistry engine: 10,000 molecules x 100 temperatures against a loop of ASE's
IdealGasThermo on the same inputs, in the same process.

The molecules are p-divinylbenzene (C10H10, 54 modes) read from the third-party Gaussian log when it
is there, otherwise water from its experimental geometry and fundamentals (from memory); each copy gets
its frequencies multiplied by a factor between 0.95 and 1.05 so that no two are the same. ASE is timed
on a subset and extrapolated (printed as such). Times are CPU time of this process (time.process_time),
so that other work on the machine does not distort the ratios. Run: .venv/bin/python benchmarks/bench_thermo.py [N_MOL]
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

import numpy as np

from qcthermo import Conditions, Molecule
from qcthermo.thermo import prepare_molecule, stack_molecules, thermo_arrays, thermochemistry_many
from qcthermo.units import HARTREE_EV

DVB = Path(__file__).resolve().parents[2] / "shared" / "fixtures" / "third-party-logs" / "gaussian16" / "dvb_ir.out"


def base_molecule() -> tuple[Molecule, str]:
    if DVB.is_file():
        import qcthermo

        return Molecule.from_calculation(qcthermo.read_log(DVB), symmetry_number=2), "dvb (Gaussian 16 log)"
    # water: r(OH) 0.9572 angstrom, 104.52 degrees; 3657, 1595, 3756 cm^-1 (from memory)
    a = np.radians(104.52) / 2
    xyz = [[0, 0, 0], [0.9572 * np.sin(a), 0, 0.9572 * np.cos(a)], [-0.9572 * np.sin(a), 0, 0.9572 * np.cos(a)]]
    return Molecule(["O", "H", "H"], xyz, [3657.0, 1595.0, 3756.0], symmetry_number=2), "water (built in)"


def ase_loop(molecules: list[Molecule], temps: np.ndarray) -> np.ndarray:
    from ase import Atoms, units
    from ase.thermochemistry import IdealGasThermo

    out = np.empty((len(molecules), len(temps)))
    for i, mol in enumerate(molecules):
        thermo = IdealGasThermo(mol.frequencies * units.invcm, "nonlinear", atoms=Atoms(
            list(mol.symbols), mol.coordinates, masses=mol.masses), symmetrynumber=2, spin=0, vib_selection="exact")
        for j, t in enumerate(temps):
            out[i, j] = thermo.get_gibbs_energy(t, pressure=101325.0, verbose=False)
    return out


def main(n_mol: int = 10_000, n_temp: int = 100, n_ase: int = 100) -> None:
    base, label = base_molecule()
    rng = np.random.default_rng(1)
    molecules = [base.replace(frequencies=base.frequencies * f, energy=0.0) for f in rng.uniform(0.95, 1.05, n_mol)]
    temps = np.linspace(100.0, 1500.0, n_temp)
    cond = Conditions(temperature=temps, low_mode_model="rrho")  # what ASE computes (the default is qrrho)
    print(f"{n_mol} x {label}, {n_temp} temperatures; ASE timed on the first {n_ase} molecules and extrapolated")

    t0 = time.process_time()
    g_ase = ase_loop(molecules[:n_ase], temps)
    t_ase = (time.process_time() - t0) * n_mol / n_ase
    print(f"ASE IdealGasThermo loop     {t_ase:9.2f} s (extrapolated)")

    timings = {}
    for trust in (False, True):
        t0 = time.process_time()
        infos = [prepare_molecule(m, cond, trust_symmetry_number=trust) for m in molecules]
        prepared = stack_molecules(molecules, infos)
        timings[trust] = time.process_time() - t0
    t0 = time.process_time()
    arrays = thermo_arrays(prepared, cond)
    t_kernel = time.process_time() - t0
    t0 = time.process_time()
    results = thermochemistry_many(molecules, cond, trust_symmetry_number=True)
    t_full = time.process_time() - t0
    assert len(results) == n_mol

    diff = np.max(np.abs(arrays["gibbs"][:n_ase] * HARTREE_EV - g_ase))
    print(f"qcthermo vectorised arrays             {t_kernel:8.2f} s   ratio {t_ase / t_kernel:7.0f}x")
    for trust, label in ((True, "sigma given (as ASE)"), (False, "sigma from geometry")):
        total = timings[trust] + t_kernel
        print(f"qcthermo preparation, {label:20s} {timings[trust]:6.2f} s; with arrays {total:6.2f} s"
              f"   ratio {t_ase / total:7.1f}x")
    print(f"qcthermo thermochemistry_many, sigma given (ThermoResult objects) {t_full:6.2f} s"
          f"   ratio {t_ase / t_full:6.1f}x")
    print(f"largest |G(qcthermo) - G(ASE)|: {diff:.1e} eV (ASE's CODATA 2014 constants)")


if __name__ == "__main__":
    main(*(int(a) for a in sys.argv[1:]))
