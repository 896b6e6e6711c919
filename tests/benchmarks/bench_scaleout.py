"""Benchmark: screening 1e5, 1e6 (and, with --with-1e7, 1e7) surfaces x all built-in pathways from
a partitioned Parquet dataset on a Dask cluster, against the in-memory engine.

For every size N the script writes an ILLUSTRATIVE random long-layout dataset (24 adsorbates per
surface, G in eV) into a temporary folder with :class:`ecatlab.EnergyDatasetWriter`, starts a
fresh ``dask.distributed.LocalCluster`` (or uses ``--scheduler``), and computes the per-pathway
summary and the top-k surfaces in one pass (:func:`ecatlab.scaleout.screen`: the in-memory engine
per partition, exact reductions across partitions). It reports

* wall time of the Dask path (reading + validation + engine + reductions);
* peak resident memory per worker (``VmHWM`` of each worker process, fresh cluster per N):
  it must stay flat as N grows (partitions have a fixed size);
* CPU seconds of the Dask path (workers + client/scheduler process) and of the baseline: the
  throughput goal is judged per CPU-second, because wall time x cores means nothing on a machine
  shared with other jobs (both ratios are printed; on an idle machine they agree);
* the in-memory baseline, as a competent user would write it (``pandas.read_parquet`` of the
  whole folder + ``read_energies`` + ``limiting_potentials`` + the same top-k/summary), at N up to
  ``--baseline-max`` (default 1e6): same numbers required (top-k and counts/min/max bit for bit,
  means to 1e-12 relative; at 1e5 every column of every row is compared bit for bit), and from
  N = 1e6 on (``--ratio-from``) the throughput per core of the Dask path must be at least half the
  in-memory one (smaller N: reported only; fixed costs of the cluster dominate there).

Exit status 1 when a number differs, the throughput goal or the flat-memory goal is missed.

    python tests/benchmarks/bench_scaleout.py                       # 1e5 and 1e6, LocalCluster 2x1
    python tests/benchmarks/bench_scaleout.py --with-1e7            # adds 1e7 (~2.5 GB of Parquet)
    python tests/benchmarks/bench_scaleout.py --scheduler tcp://HOST:8786 --folder /shared/bench

On a real cluster, --folder must be a path every worker can read (shared file system); see
docs/scaleout.md. Timings on a shared machine are noisy: the script reports, it is not tuned.
"""

from __future__ import annotations

import argparse
import os
import resource
import shutil
import sys
import tempfile
import time
import warnings

import numpy as np
import pandas as pd


def _peak_rss_mb() -> float:
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0  # Linux: kB


def generate(folder: str, n: int, per_file: int, species: list[str], seed: int = 0) -> float:
    """Write an ILLUSTRATIVE random dataset of n surfaces; returns seconds."""
    from ecatlab import EnergyDatasetWriter

    t0 = time.perf_counter()
    rng = np.random.default_rng(seed)
    sp = np.array(species, dtype=object)
    with EnergyDatasetWriter(folder, layout="long", force=True, source="ILLUSTRATIVE random benchmark data (bench_scaleout.py)") as w:
        for start in range(0, n, per_file):
            stop = min(n, start + per_file)
            names = np.array([f"s{i:09d}" for i in range(start, stop)], dtype=object)
            frame = pd.DataFrame({
                "surface": np.repeat(names, len(sp)),
                "species": np.tile(sp, stop - start),
                "G": rng.uniform(-1.5, 4.5, (stop - start) * len(sp)),
            })
            w.write(frame)
    return time.perf_counter() - t0


def dask_run(folder: str, keys: list[str], k: int, args):
    """Summary + top-k on a fresh cluster; returns (seconds, cpu seconds, idle cpu rate, summary, top, peak MB per worker, idle MB per worker, threads, all rows or None)."""
    from ecatlab import scaleout

    with scaleout.dask_client(args.scheduler, n_workers=args.workers, threads_per_worker=args.threads, memory_limit=args.worker_memory) as client:
        warm = os.path.join(os.path.dirname(folder), "warm-up")  # imports and pathway parsing on every worker
        generate(warm, 200, 100, args.species, seed=1)
        scaleout.compute(scaleout.summary(warm, keys), progress=False)
        shutil.rmtree(warm, ignore_errors=True)
        idle = client.run(_worker_rss)
        threads = sum(w["nthreads"] for w in client.scheduler_info()["workers"].values())
        # idle cost of the cluster itself (event loops, heartbeats, memory monitors), cpu-s per wall-s
        i0, j0, w0 = client.run(time.process_time), time.process_time(), time.perf_counter()
        time.sleep(3.0)
        i1, j1, w1 = client.run(time.process_time), time.process_time(), time.perf_counter()
        idle_rate = (sum(i1[w] - i0[w] for w in i0) + (j1 - j0)) / (w1 - w0)
        cpu0, own0 = client.run(time.process_time), time.process_time()
        t0 = time.perf_counter()
        summ, top = scaleout.compute(*scaleout.screen(folder, keys, k=k), progress=not args.no_progress)  # one pass, flat memory
        seconds = time.perf_counter() - t0
        cpu1, own1 = client.run(time.process_time), time.process_time()
        # CPU seconds of the workers + this process (client; with a LocalCluster also the scheduler)
        cpu = sum(cpu1[w] - cpu0[w] for w in cpu0) + (own1 - own0)
        peak = client.run(_worker_peak)
        full = None
        if args.compare_rows_upto and _rows(folder) <= args.compare_rows_upto:
            full = scaleout.compute(scaleout.limiting_potentials(folder, keys), progress=False)
    return seconds, cpu, idle_rate, summ, top, list(peak.values()), list(idle.values()), threads, full


def _rows(folder: str) -> int:
    from ecatlab import open_energy_dataset

    return open_energy_dataset(folder).rows


def _worker_peak() -> float:
    """Peak resident memory of this worker process, MB: VmHWM of /proc/self/status (Linux).

    Not ru_maxrss: that survives exec on Linux, so a worker started from a large parent process
    would report the parent's size at fork time.
    """
    try:
        with open("/proc/self/status") as fh:
            for line in fh:
                if line.startswith("VmHWM:"):
                    return float(line.split()[1]) / 1024.0
    except OSError:
        pass
    import resource as r

    return r.getrusage(r.RUSAGE_SELF).ru_maxrss / 1024.0


def _worker_rss() -> float:
    import psutil

    return psutil.Process().memory_info().rss / 2**20


def memory_run(folder: str, keys: list[str], k: int):
    """The in-memory baseline a user would write; returns (seconds, cpu seconds, summary, top, lp)."""
    from ecatlab import scaleout
    from ecatlab.che import limiting_potentials
    from ecatlab.energies import read_energies

    c0, t0 = time.process_time(), time.perf_counter()
    frame = pd.read_parquet(folder)
    table = read_energies(frame)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        lp = limiting_potentials(table, keys)
    summ, top = scaleout.summary_frame(lp), scaleout.top_k_frame(lp, k)
    return time.perf_counter() - t0, time.process_time() - c0, summ, top, lp


def same(summ_a, top_a, summ_b, top_b) -> list[str]:
    problems = []
    if list(top_a["surface"].astype(str)) != list(top_b["surface"].astype(str)) or not np.array_equal(top_a["G_max"].to_numpy(), top_b["G_max"].to_numpy()):
        problems.append("top-k differs")
    exact = ["pathway", "surfaces", "evaluated", "missing", "blocked", "unblocked", "best_surface", "best_G_max"] + [c for c in summ_a.columns if c.endswith(("_min", "_max"))]
    try:
        pd.testing.assert_frame_equal(summ_a[exact].reset_index(drop=True), summ_b[exact].reset_index(drop=True), check_exact=True)
    except AssertionError as exc:
        problems.append(f"summary differs: {str(exc).splitlines()[0]}")
    means = [c for c in summ_a.columns if c.endswith("_mean")]
    if not np.allclose(summ_a[means].to_numpy(), summ_b[means].to_numpy(), rtol=1e-12, atol=0):
        problems.append("summary means differ beyond 1e-12 relative")
    return problems


def same_rows(got: pd.DataFrame, ref: pd.DataFrame) -> list[str]:
    def order(f):
        return np.lexsort((np.asarray(f["surface"], dtype=object), np.asarray(f["pathway"], dtype=object)))

    if len(got) != len(ref):
        return [f"row count {len(got)} vs {len(ref)}"]
    a, b = got.iloc[order(got)].reset_index(drop=True), ref.iloc[order(ref)].reset_index(drop=True)
    bad = []
    for col in ref.columns:
        x, y = a[col], b[col]
        if pd.api.types.is_float_dtype(y):
            ok = np.array_equal(x.to_numpy(dtype=float), y.to_numpy(dtype=float), equal_nan=True)
        else:
            ok = bool((np.asarray(x, dtype=object) == np.asarray(y, dtype=object)).all())
        if not ok:
            bad.append(f"column {col} differs")
    return bad


def main(argv=None) -> int:
    from ecatlab.pathways import BUILTIN_PATHWAYS, pathway

    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--sizes", nargs="+", type=float, default=[1e5, 1e6], help="surface counts (default 1e5 1e6)")
    ap.add_argument("--with-1e7", action="store_true", help="add 1e7 surfaces (~2.5 GB of Parquet, long run)")
    ap.add_argument("--baseline-max", type=float, default=1e6, help="largest N for the in-memory baseline (default 1e6)")
    ap.add_argument("--compare-rows-upto", type=float, default=3e6, help="compare every result row when the dataset has at most this many rows (default 3e6: the 1e5 case)")
    ap.add_argument("--surfaces-per-file", type=int, default=25_000, help="surfaces per file = per partition (default 25000)")
    ap.add_argument("--top", type=int, default=10, help="k of top-k (default 10)")
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--threads", type=int, default=1, help="threads per worker (default 1)")
    ap.add_argument("--worker-memory", default="3GiB")
    ap.add_argument("--scheduler", help="address of an existing Dask scheduler (then --folder must be shared with its workers)")
    ap.add_argument("--folder", help="where to write the datasets (default: a temporary folder, removed at the end)")
    ap.add_argument("--keep", action="store_true", help="keep the generated datasets")
    ap.add_argument("--no-progress", action="store_true")
    ap.add_argument("--min-ratio", type=float, default=0.5, help="goal: Dask throughput per core >= this x in-memory (default 0.5, i.e. within 2x)")
    ap.add_argument("--ratio-from", type=float, default=1e6, help="apply the throughput goal from this N on (default 1e6; smaller runs are dominated by fixed costs and only reported)")
    ap.add_argument("--max-memory-growth", type=float, default=1.25, help="goal: peak worker memory at the largest N <= this x at the smallest N (+64 MB)")
    args = ap.parse_args(argv)

    sizes = sorted({int(s) for s in args.sizes} | ({10_000_000} if args.with_1e7 else set()))
    keys = list(BUILTIN_PATHWAYS)
    species = sorted({a.key for key in keys for a in pathway(key).adsorbates})
    args.species = species
    root = args.folder or tempfile.mkdtemp(prefix="ecatlab-bench-")
    os.makedirs(root, exist_ok=True)
    print(f"# ILLUSTRATIVE random data; {len(keys)} pathways, {len(species)} adsorbates per surface, "
          f"{args.surfaces_per_file:,} surfaces per file; cluster: {args.scheduler or f'LocalCluster {args.workers} x {args.threads} threads, {args.worker_memory}'}")
    failures: list[str] = []
    peaks: dict[int, float] = {}
    try:
        for n in sizes:
            folder = os.path.join(root, f"n{n}")
            t_gen = generate(folder, n, args.surfaces_per_file, species)
            t_dask, cpu_dask, idle_rate, summ, top, peak, idle, threads, full = dask_run(folder, keys, args.top, args)
            evals = n * len(keys)
            peaks[n] = max(peak)
            print(f"N={n:>11,}: dataset written in {t_gen:7.1f} s; Dask wall {t_dask:7.1f} s on {threads} threads, cpu {cpu_dask:7.1f} s "
                  f"({evals / cpu_dask:,.0f} surface-pathways per cpu-second); peak worker memory "
                  f"{', '.join(f'{p:,.0f}' for p in peak)} MB (idle {', '.join(f'{m:,.0f}' for m in idle)} MB)")
            print(f"{'':14} of the cpu, about {idle_rate * t_dask:.1f} s is the cluster's idle cost ({idle_rate:.3f} cpu-s per wall-s, measured before the run; grows with wall time on a busy machine)")
            if n <= args.baseline_max:
                t_mem, cpu_mem, summ_m, top_m, lp_m = memory_run(folder, keys, args.top)
                wall_ratio = (evals / t_dask / threads) / (evals / t_mem)  # per core by wall time (one process in memory)
                ratio = (evals / cpu_dask) / (evals / cpu_mem)  # per core by cpu time (robust on a shared machine)
                print(f"{'':14} in-memory wall {t_mem:7.1f} s, cpu {cpu_mem:7.1f} s (process peak {_peak_rss_mb():,.0f} MB); "
                      f"throughput per core Dask / in-memory = {ratio:.2f} by cpu time (goal >= {args.min_ratio}), {wall_ratio:.2f} by wall time x threads")
                problems = same(summ, top, summ_m, top_m)
                if full is not None:
                    problems += same_rows(full, lp_m)
                    print(f"{'':14} every row compared: {len(full):,} rows x {full.shape[1]} columns")
                del lp_m
                if problems:
                    failures.append(f"N={n}: MISMATCH " + "; ".join(problems))
                else:
                    print(f"{'':14} same numbers as the in-memory engine (top-{args.top}, summary{', all rows' if full is not None else ''})")
                if ratio < args.min_ratio and n >= args.ratio_from:
                    failures.append(f"N={n}: throughput per core {ratio:.2f} x in-memory < {args.min_ratio}")
            if not args.keep:
                shutil.rmtree(folder, ignore_errors=True)
        lo, hi = min(peaks), max(peaks)
        if hi > lo:
            growth = peaks[hi] / peaks[lo]
            print(f"peak worker memory {peaks[lo]:,.0f} MB at N={lo:,} -> {peaks[hi]:,.0f} MB at N={hi:,} (x{growth:.2f}; goal <= x{args.max_memory_growth} + 64 MB)")
            if peaks[hi] > args.max_memory_growth * peaks[lo] + 64:
                failures.append(f"worker memory grows with N: {peaks[lo]:.0f} MB -> {peaks[hi]:.0f} MB")
    finally:
        if not args.folder and not args.keep:
            shutil.rmtree(root, ignore_errors=True)
    for f in failures:
        print("GOAL MISSED:", f)
    print("OK" if not failures else "FAILED")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
