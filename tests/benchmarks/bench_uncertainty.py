"""Benchmark: uncertainty propagation for 1,000 surfaces x 2,000 samples x all built-in pathways.

Vectorised side: :func:`ecatlab.uncertainty.propagate` with a correlated Gaussian error model
(the samples are a leading array axis through the CHE kernel, chunked). Baseline: what a
competent user would write without it -- a loop over samples that perturbs the energy table and
calls the deterministic engine :func:`ecatlab.limiting_potentials` once per sample (itself
vectorised over surfaces and pathways). The loop runs over a subset of the samples (the first
``loop_samples``, same draws) and its time is extrapolated linearly to all samples; both sides
must give the same numbers on the looped samples.

The timed vectorised side is everything a user runs to get the tables the issue asks for: the
propagation, then ``summary()`` (mean, standard deviation, median and 5-95 % interval of U_L, eta,
G_max and the chemical-step measure), ``determining_steps()`` and ``ranking(pathway, top=3)``
(probability of being best and in the top 3, mean rank) for every pathway. The loop baseline is
charged only for its engine calls (the perturbed table it builds per sample and the engine call;
none of its table work, and its deviations are computed before the clock starts), so the ratio is
conservative. The engine is single-threaded (its step sums use no BLAS; measured: its CPU time
equals its wall time); propagate uses ``workers`` threads (default: the cores this process may
use, as for a user who does not set it), with BLAS limited to one thread per worker. The script
prints both the wall-clock ratio (the target: what the user waits for) and the CPU-time ratio
(like for like per core).

Targets (from the issue): vectorised side under 3 s wall, peak memory under 1 GB (tracemalloc peak
of the vectorised side, measured in a second, untimed run of the same work because tracemalloc
slows every allocation; and the process's maximum resident set), at least 50x faster than the
loop. Exits non-zero when a target is missed. Timings on a shared machine are noisy: the script
prints the load average and CPU times beside the wall times, and reports what it sees.

``workers`` (4th argument; default: propagate's default) is the number of threads propagate may use.
"""

from __future__ import annotations

import resource
import sys
import time
import tracemalloc

import numpy as np
import pandas as pd

from ecatlab.che import limiting_potentials
from ecatlab.energies import EnergyTable
from ecatlab.pathways import BUILTIN_PATHWAYS, pathway
from ecatlab.references import ReferenceScheme
from ecatlab.uncertainty import GaussianErrors, propagate
from ecatlab.uncertainty import sampler

TIME_TARGET_S = 3.0
MEMORY_TARGET_MB = 1024.0
SPEEDUP_TARGET = 50.0


def main(n_surfaces: int = 1_000, n_samples: int = 2_000, loop_samples: int = 20, workers: int | None = None) -> int:
    keys = list(BUILTIN_PATHWAYS)
    species = sorted({a.key for k in keys for a in pathway(k).adsorbates})
    rng = np.random.default_rng(0)
    wide = pd.DataFrame(rng.uniform(-1.5, 4.5, (n_surfaces, len(species))), columns=species,
                        index=[f"s{i:04d}" for i in range(n_surfaces)])
    table = EnergyTable.from_matrix(wide, ReferenceScheme())
    model = GaussianErrors(sigma=0.15, correlation=0.5, surface_correlation=0.3)
    propagate(table.subset(table.surfaces[:5]), keys, model, n_samples=50, seed=0)  # warm-up (imports)

    rss_before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0  # MB on Linux

    def vectorised():
        res = propagate(table, keys, model, n_samples=n_samples, seed=7, progress=False, workers=workers)
        t_p, c_p = time.perf_counter() - t0, time.process_time() - c0
        return res, t_p, c_p, res.summary(), res.determining_steps(), {key: res.ranking(key, top=3) for key in keys}

    # timed run (tracemalloc off: it hooks every allocation and would slow this side only)
    t0, c0 = time.perf_counter(), time.process_time()
    result, t_prop, c_prop, summary, steps, rankings = vectorised()
    used = result.workers
    t_vec, c_vec = time.perf_counter() - t0, time.process_time() - c0
    tables_ok = (len(summary) == 4 * n_surfaces * len(keys) and abs(steps.groupby(["pathway", "surface"], observed=True)["probability"].sum() - 1.0).max() < 1e-9
                 and all(abs(r["p_best"].sum() - 1.0) < 1e-9 and abs(r["p_top3"].sum() - 3.0) < 1e-9 for r in rankings.values()))

    # baseline: one deterministic engine call per sample, on the same draws
    species_order = list(result.inputs["species"])
    plan = result.inputs["plan"]
    first = next(sampler.chunks(plan))
    base = table.values(None, species_order)
    deviations = first.adsorbates  # (samples of the chunk, surfaces, species), eV: the same draws, formed once
    if deviations.shape[0] < loop_samples:
        raise SystemExit(f"the first chunk holds {deviations.shape[0]} samples; ask for at most that many loop samples")
    t1, c1 = time.perf_counter(), time.process_time()
    loop_values = []
    for k in range(loop_samples):
        perturbed = pd.DataFrame(base + deviations[k], index=table.surfaces, columns=species_order)
        t_k = EnergyTable.from_matrix(perturbed, table.scheme)
        loop_values.append(limiting_potentials(t_k, keys, pH=0.0, scale="RHE"))
    t_loop = (time.perf_counter() - t1) / loop_samples * n_samples
    c_loop = (time.process_time() - c1) / loop_samples * n_samples

    worst = 0.0
    for k, frame in enumerate(loop_values):
        for key in keys:
            part = frame[(frame["pathway"] == key).to_numpy()]
            for col, q in (("limiting_potential", "limiting_potential"), ("G_max", "G_max"), ("overpotential", "overpotential")):
                mine = result.results[key].quantity(q)[k]
                theirs = part[col].to_numpy(dtype=float)
                worst = max(worst, float(np.nanmax(np.abs(mine - theirs))))
            same_steps = np.array_equal(result.results[key].determining_step[k] + 1, part["determining_step_index"].to_numpy())
            same_block = np.array_equal(result.results[key].blocked[k], part["blocked"].to_numpy())
            if not (same_steps and same_block):
                print(f"MISMATCH in determining step / blocked: pathway {key}, sample {k}")
                return 1

    # memory run: the same work again under tracemalloc, the timed run's results dropped first
    del result, summary, steps, rankings
    tracemalloc.start()
    t0, c0 = time.perf_counter(), time.process_time()
    vectorised()
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    peak_mb = peak / 2**20
    rss_after = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0

    ratio = t_loop / t_vec
    import os

    print(f"load average {os.getloadavg()[0]:.1f} on {os.cpu_count()} cores (timings on a shared machine are noisy)")
    print(f"surfaces {n_surfaces}, samples {n_samples}, pathways {len(keys)}, species {len(species)} "
          f"(ILLUSTRATIVE random energies), propagate worker threads {used} (the engine loop: one thread)")
    print(f"vectorised side: {t_vec:.2f} s wall, {c_vec:.2f} s CPU (propagate {t_prop:.2f} s wall / {c_prop:.2f} s CPU, "
          f"tables {t_vec - t_prop:.2f} s wall / {c_vec - c_prop:.2f} s CPU); tracemalloc peak {peak_mb:.0f} MB; "
          f"max RSS {rss_before:.0f} MB before, {rss_after:.0f} MB after")
    print(f"per-sample loop over limiting_potentials: {t_loop:.1f} s wall, {c_loop:.1f} s CPU (extrapolated from {loop_samples} of {n_samples} samples)")
    print(f"speed-up {ratio:.0f}x wall, {c_loop / c_vec:.0f}x CPU (propagate alone: {t_loop / t_prop:.0f}x wall, {c_loop / c_prop:.0f}x CPU); "
          f"largest difference on the looped samples {worst:.2e} (V or eV)")
    ok = True
    if not tables_ok:
        print("FAIL: the tables do not add up (probabilities over steps, best, top 3)")
        ok = False
    if worst > 1e-9:
        print("FAIL: the two sides disagree")
        ok = False
    if t_vec > TIME_TARGET_S:
        print(f"MISSED: time target {TIME_TARGET_S} s")
        ok = False
    if peak_mb > MEMORY_TARGET_MB or rss_after > MEMORY_TARGET_MB:
        print(f"MISSED: memory target {MEMORY_TARGET_MB:.0f} MB")
        ok = False
    if ratio < SPEEDUP_TARGET:
        print(f"MISSED: speed-up target {SPEEDUP_TARGET:.0f}x")
        ok = False
    print("all targets met" if ok else "targets missed")
    return 0 if ok else 1


if __name__ == "__main__":
    args = [int(a) for a in sys.argv[1:]]
    sys.exit(main(*args))
