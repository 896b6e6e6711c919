"""Benchmark: limiting potentials for 100,000 surfaces x all built-in pathways.

Prints the time of the vectorised engine and the ratio against a straightforward per-surface
Python loop computing the same numbers (on a sample of surfaces, extrapolated), and checks that
both agree. Targets: >= 50x faster than the loop, under 1 s for the whole table.

    python tests/benchmarks/bench_screening.py [n_surfaces]
"""

from __future__ import annotations

import sys
import time

import numpy as np
import pandas as pd

import ecatlab
from ecatlab.che import limiting_potentials
from ecatlab.energies import EnergyTable
from ecatlab.pathways import BUILTIN_PATHWAYS, pathway
from ecatlab.references import ReferenceScheme


def loop_reference(wide: pd.DataFrame, keys: list[str], scheme: ReferenceScheme) -> dict[str, np.ndarray]:
    """Per-surface, per-step Python loop straight from the step equations (no numpy vectorisation)."""
    out = {}
    for key in keys:
        path = pathway(key)
        mol = [sum(c * scheme.molecule_free_energy(sp) for sp, c in step.net().items() if sp.is_molecule) for step in path.steps]
        ads = [[(sp.key, c) for sp, c in step.net().items() if sp.is_adsorbate] for step in path.steps]
        electrons = [step.electrons_transferred for step in path.steps]
        reduction = path.direction == "reduction"
        values = []
        for surface in wide.index:
            row = wide.loc[surface]
            best = None
            for i in range(len(path.steps)):
                if electrons[i] == 0:
                    continue
                dG = mol[i] + sum(c * row[k] for k, c in ads[i])
                onset = -dG / electrons[i]
                if best is None or (onset < best if reduction else onset > best):
                    best = onset
            values.append(best)
        out[key] = np.array(values)
    return out


def main(n_surfaces: int = 100_000, loop_sample: int = 2_000) -> None:
    keys = list(BUILTIN_PATHWAYS)
    species = sorted({a.key for k in keys for a in pathway(k).adsorbates})
    rng = np.random.default_rng(0)
    wide = pd.DataFrame(rng.uniform(-1.5, 4.5, (n_surfaces, len(species))), columns=species, index=[f"s{i}" for i in range(n_surfaces)])
    scheme = ReferenceScheme()

    t0 = time.perf_counter()
    table = EnergyTable.from_matrix(wide, scheme)
    t_load = time.perf_counter() - t0

    limiting_potentials(table.subset(table.surfaces[:10]), keys)  # warm-up: parsing and caches
    runs = []
    for _ in range(3):
        t0 = time.perf_counter()
        result = limiting_potentials(table, keys)
        runs.append(time.perf_counter() - t0)
    t_vec = float(np.median(runs))

    sample = wide.iloc[:loop_sample]
    t0 = time.perf_counter()
    ref = loop_reference(sample, keys, scheme)
    t_loop = (time.perf_counter() - t0) * (n_surfaces / loop_sample)

    for key in keys:
        got = result[result.pathway == key].limiting_potential.to_numpy()[:loop_sample]
        if not np.allclose(got, ref[key], atol=1e-10):
            raise SystemExit(f"MISMATCH for {key}: vectorised and loop results differ")
    rows = len(result)
    print(f"surfaces: {n_surfaces:,}; pathways: {len(keys)}; result rows: {rows:,}")
    print(f"table build (validation, wide->long): {t_load:.2f} s")
    print(f"vectorised limiting_potentials (median of 3): {t_vec:.3f} s  (target < 1 s)")
    print(f"per-surface Python loop (extrapolated from {loop_sample:,} surfaces): {t_loop:.1f} s")
    print(f"speed-up: {t_loop / t_vec:.0f}x  (target >= 50x); results identical on the sampled surfaces")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 100_000)
