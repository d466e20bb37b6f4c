"""Speed of the microkinetic engine: a synthetic 200-species, 500-reaction network over 10 decades of time,
against the same stiff solver fed by a plain-Python right-hand side (a loop over reactions, finite-difference
Jacobian), in the same process.

The network is random but reproducible (:func:`synthetic_network`): uni- and bimolecular reversible steps
that conserve mass and obey detailed balance, forward rate constants spread over 12 decades (stiff); 20
species start at 0.1 to 1 mol/L. The engine runs with BDF and with LSODA (its default), the baseline with
BDF, all with the same tolerances; the largest difference of their concentrations shows that they solved the
same problem. Times are CPU time of this process (time.process_time).
Run: .venv/bin/python benchmarks/bench_simulate.py [N_SPECIES N_REACTIONS]
"""

from __future__ import annotations

import sys
import time

import numpy as np

from qcthermo.simulate import ATOL_M, RTOL, Network, integrate


def synthetic_network(n_species: int = 200, n_reactions: int = 500, seed: int = 3) -> Network:
    """Reversible isomerisations A <-> B, associations A + B <-> C and exchanges A + B <-> C + D between species
    of 1 to 6 mass units (every step conserves mass), with detailed balance: each species has a free energy
    G_i / RT from -5 to 5 and k_r = k_f / exp(-sum nu G / RT), so that the network relaxes to an equilibrium
    as a real one does (random k_r without it can drive limit cycles)."""
    rng = np.random.default_rng(seed)
    size = np.arange(n_species) % 6 + 1
    by_size = {s: np.flatnonzero(size == s) for s in range(1, 7)}
    g = rng.uniform(-5.0, 5.0, n_species)
    reactants, products = [], []
    while len(reactants) < n_reactions:
        kind = rng.integers(3)
        a = int(rng.integers(n_species))
        if kind == 0:
            left, right = (a,), (int(rng.choice(by_size[size[a]])),)
        else:
            b = int(rng.choice(by_size[int(rng.integers(1, 7 - size[a]))])) if size[a] < 6 else None
            if b is None:
                continue
            total = size[a] + size[b]
            if kind == 1:
                left, right = (a, b), (int(rng.choice(by_size[total])),) if total <= 6 else ()
            else:
                c_size = int(rng.integers(1, total)) if total > 1 else 0
                if not 1 <= total - c_size <= 6 or c_size > 6:
                    continue
                right = (int(rng.choice(by_size[c_size])), int(rng.choice(by_size[total - c_size])))
                left = (a, b)
        if not right or sorted(left) == sorted(right):
            continue
        reactants.append(left)
        products.append(right)
    kf = 10.0 ** rng.uniform(-4, 8, n_reactions)
    dg = np.array([g[list(r)].sum() - g[list(lft)].sum() for lft, r in zip(reactants, products, strict=True)])
    kr = kf / np.exp(-dg)  # K_c in mol/L units with c0 = 1 M
    return Network(tuple(f"s{i}" for i in range(n_species)), tuple(f"r{j}" for j in range(n_reactions)),
                   tuple(reactants), tuple(products), kf[:, None], kr[:, None], np.array([298.15]))


def plain_python_rhs(network: Network):
    """dc/dt with a Python loop over reactions and species: what the engine's vectorised form replaces."""
    kf, kr = network.k_forward[:, 0].tolist(), network.k_reverse[:, 0].tolist()
    steps = list(zip(network.reactants, network.products, kf, kr, strict=True))

    def rhs(t, c):
        out = [0.0] * len(c)
        for left, right, k1, k2 in steps:
            rate = k1
            for i in left:
                rate *= c[i]
            back = k2
            for i in right:
                back *= c[i]
            net = rate - back
            for i in left:
                out[i] -= net
            for i in right:
                out[i] += net
        return np.array(out)

    return rhs


def main(n_species: int = 200, n_reactions: int = 500) -> None:
    from scipy.integrate import solve_ivp

    network = synthetic_network(n_species, n_reactions)
    rng = np.random.default_rng(4)
    initial = {f"s{i}": float(c) for i, c in zip(rng.choice(n_species, 20, replace=False),
                                                   rng.uniform(0.1, 1.0, 20), strict=True)}
    times = np.logspace(-6, 4, 41)  # 10 decades
    print(f"{n_species} species, {n_reactions} reactions, t = 1e-6 to 1e4 s, rtol {RTOL:g}, atol {ATOL_M:g} M "
          "(LSODA is the default solver, BDF the one for large networks: docs/simulate.md)")

    ours, t_ours = {}, {}
    for method in ("BDF", "LSODA"):
        t0 = time.process_time()
        ours[method] = integrate(network, initial, times, method=method)
        t_ours[method] = time.process_time() - t0
        print(f"  qcthermo, {method} (vectorised rates, analytic sparse Jacobian): {t_ours[method]:.2f} s CPU, "
              f"success {ours[method].success}, {ours[method].statistics}")

    c0 = np.zeros(n_species)
    for name, value in initial.items():
        c0[int(name[1:])] = value
    t0 = time.process_time()
    base = solve_ivp(plain_python_rhs(network), (0.0, times[-1]), c0, method="BDF",
                     t_eval=np.concatenate([[0.0], times]), rtol=RTOL, atol=ATOL_M)
    t_base = time.process_time() - t0
    print(f"  plain-Python right-hand side, finite-difference Jacobian: {t_base:.2f} s CPU, "
          f"success {base.status == 0}, nfev {base.nfev}")
    scale = np.maximum(np.abs(base.y.T).max(axis=0), 1e-12)
    for method, run in ours.items():
        diff = np.max(np.abs(run.concentrations - base.y.T) / scale)
        print(f"  {method}: largest difference from the baseline, relative to each species' peak: {diff:.1e}; "
              f"ratio (plain Python BDF / qcthermo {method}): {t_base / t_ours[method]:.1f}x")


if __name__ == "__main__":
    main(*(int(a) for a in sys.argv[1:3]))
