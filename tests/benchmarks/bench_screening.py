"""Screening benchmark: from the CSV a user has to limiting potentials of all built-in pathways.

Run (a script, not a test):

    python tests/benchmarks/bench_screening.py            # N = 1e4 and 1e5 surfaces
    python tests/benchmarks/bench_screening.py --big      # also N = 1e6 (a 530 MB CSV; about 2 minutes)

The input is a long CSV (surface, species, G in eV; 24 adsorbates per surface = every adsorbate of
the 13 built-in pathways; ILLUSTRATIVE random energies). For each N it measures, in this process
(median of ``--repeats`` alternating runs), and for peak memory in a fresh child process per side:

1. **reader**: ``read_energies(csv)`` against ``pandas.read_csv(csv)`` of the same file.
   Targets: time ratio <= 2; peak memory <= 3x the file size from N = 1e5 on (for a 5 MB file the
   parser's fixed overhead, about 20 MB for pandas.read_csv as well, dominates; printed only).
2. **end to end**: ``limiting_potentials(read_energies(csv), all 13 pathways)`` against what a
   competent user writes with pandas + numpy: ``read_csv``, ``factorize`` both name columns, a
   dense (surfaces x species) matrix from the codes, and per pathway one matmul, the onsets, the
   grouped min/max, U_eq, eta, G_max and the chemical-step block (the same numbers the engine
   returns). Targets: time ratio <= 3 and peak memory ratio <= 2 (at every N >= 1e5; at 1e4 both
   sides take milliseconds and the ratio is printed only).
3. **engine only** on a built table against a plain Python dict loop over surfaces and steps
   (on ``--loop-sample`` surfaces, extrapolated; informational).
4. **flatness**: engine time per surface-pathway at each N; target: the largest N is at most 1.5x
   the best per-cell time (no super-linear path).

Both sides' numbers are compared (U_L, eta, determining step, G_max, blocked); any difference
exits non-zero, as does any missed target. Timings on a shared machine are noisy: the script
reports what it sees, it is not tuned to the noise.
"""

from __future__ import annotations

import argparse
import json
import os

# Both sides run with single-threaded BLAS: on a shared machine OpenBLAS threads cost more than the
# arithmetic and make the baseline's matrix products (and any engine product) erratic.
for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")
import subprocess
import sys
import tempfile
import time

import numpy as np
import pandas as pd

READER_TIME_RATIO = 2.0
READER_MEMORY_FILE_RATIO = 3.0
E2E_TIME_RATIO = 3.0
E2E_MEMORY_RATIO = 2.0
FLAT_RATIO = 1.5


def _keys_and_species():
    from ecatlab.pathways import BUILTIN_PATHWAYS, pathway

    keys = list(BUILTIN_PATHWAYS)
    species = sorted({a.key for k in keys for a in pathway(k).adsorbates})
    return keys, species


def write_csv(path: str, n_surfaces: int, species: list[str], seed: int = 0) -> None:
    """ILLUSTRATIVE random table: uniform G in [-1.5, 4.5] eV, 6 decimals, one row per (surface, species)."""
    rng = np.random.default_rng(seed)
    block = 100_000
    with open(path, "w") as fh:
        fh.write("surface,species,G\n")
        sp = np.array(species, dtype=object)
        for start in range(0, n_surfaces, block):
            m = min(block, n_surfaces - start)
            g = np.round(rng.uniform(-1.5, 4.5, (m, len(species))), 6)
            names = np.repeat(np.array([f"s{i}" for i in range(start, start + m)], dtype=object), len(species))
            frame = pd.DataFrame({"surface": names, "species": np.tile(sp, m), "G": g.ravel()})
            frame.to_csv(fh, header=False, index=False)


# -- the baseline a competent user writes ----------------------------------------------------------
def _pathway_arrays(key: str, species_index: dict, scheme):
    """Stoichiometry (steps x adsorbate columns), molecule constant, electrons consumed, from the step equations."""
    from ecatlab.notation import ELECTRON, HYDROXIDE
    from ecatlab.pathways import pathway

    path = pathway(key)
    ads = sorted({sp.key for step in path.steps for sp in step.net() if sp.is_adsorbate})
    cols = np.array([species_index[a] for a in ads])
    S = np.zeros((len(path.steps), len(ads)))
    const = np.zeros(len(path.steps))
    electrons = np.zeros(len(path.steps))
    for i, step in enumerate(path.steps):
        for sp, c in step.net().items():
            if sp.is_adsorbate:
                S[i, ads.index(sp.key)] += c
            elif sp.is_molecule:
                const[i] += c * scheme.molecule_free_energy(sp)
            elif sp == ELECTRON:
                electrons[i] -= c
            elif sp == HYDROXIDE:  # OH- = H2O(l) - H+ ; at pH 0 on RHE H+ + e- costs 0
                const[i] += c * scheme.molecule_free_energy("H2O(l)")
    return path.direction, cols, S, const, electrons


def baseline(csv_path: str, keys: list[str]) -> dict:
    """pandas.read_csv + dense numpy: per pathway U_L, eta, determining step (1-based), G_max, blocked (pH 0, RHE)."""
    from ecatlab.references import ReferenceScheme

    scheme = ReferenceScheme()
    df = pd.read_csv(csv_path)
    s_codes, s_names = pd.factorize(df["surface"])
    k_codes, k_names = pd.factorize(df["species"])
    dense = np.full((len(s_names), len(k_names)), np.nan)
    dense[s_codes, k_codes] = df["G"].to_numpy()
    species_index = {k: j for j, k in enumerate(k_names)}
    out = {}
    for key in keys:
        direction, cols, S, const, e = _pathway_arrays(key, species_index, scheme)
        A = dense[:, cols] @ S.T + const  # step free energies at U = 0 V vs RHE, eV
        ec = np.flatnonzero(e != 0)
        onset = -A[:, ec] / e[ec]
        local = onset.argmin(axis=1) if direction == "reduction" else onset.argmax(axis=1)
        u_l = onset[np.arange(len(onset)), local]
        u_eq = -A.sum(axis=1) / e.sum()
        eta = u_eq - u_l if direction == "reduction" else u_l - u_eq
        g_max = (A + e * u_eq[:, None]).max(axis=1)
        chem = np.flatnonzero(e == 0)
        blocked = (A[:, chem] > 0).any(axis=1) if len(chem) else np.zeros(len(A), dtype=bool)
        out[key] = (u_l, eta, ec[local] + 1, g_max, blocked)
    return out


def dict_loop(rows: dict, keys: list[str]) -> dict:
    """Plain Python: per surface, per step, from a {surface: {species: G}} dict (U_L and determining step)."""
    from ecatlab.references import ReferenceScheme

    scheme = ReferenceScheme()
    out = {}
    for key in keys:
        from ecatlab.pathways import pathway

        path = pathway(key)
        steps = []
        for step in path.steps:
            net = step.net()
            mol = sum(c * scheme.molecule_free_energy(sp) for sp, c in net.items() if sp.is_molecule)
            ads = [(sp.key, c) for sp, c in net.items() if sp.is_adsorbate]
            n = -sum(c for sp, c in net.items() if sp.key == "e-")
            steps.append((mol, ads, n))
        red = path.direction == "reduction"
        u_ls, dets = [], []
        for surface, g in rows.items():
            best, best_i = None, 0
            for i, (mol, ads, n) in enumerate(steps):
                if n == 0:
                    continue
                dG = mol + sum(c * g[k] for k, c in ads)
                onset = -dG / n
                if best is None or (onset < best if red else onset > best):
                    best, best_i = onset, i + 1
            u_ls.append(best)
            dets.append(best_i)
        out[key] = (np.array(u_ls), np.array(dets))
    return out


# -- the two sides as the user runs them -------------------------------------------------------------
def run_reader_ecatlab(csv_path, keys):
    from ecatlab.energies import read_energies

    return read_energies(csv_path)


def run_reader_pandas(csv_path, keys):
    return pd.read_csv(csv_path)


def run_e2e_ecatlab(csv_path, keys):
    from ecatlab.che import limiting_potentials
    from ecatlab.energies import read_energies

    return limiting_potentials(read_energies(csv_path), keys)


def run_e2e_baseline(csv_path, keys):
    return baseline(csv_path, keys)


SIDES = {"reader-ecatlab": run_reader_ecatlab, "reader-pandas": run_reader_pandas, "e2e-ecatlab": run_e2e_ecatlab, "e2e-baseline": run_e2e_baseline}


def _status_mb(field: str) -> float:
    """VmRSS (now) or VmHWM (peak) of this process in MB, from /proc (ru_maxrss survives exec, VmHWM does not)."""
    with open("/proc/self/status") as fh:
        for line in fh:
            if line.startswith(field + ":"):
                return int(line.split()[1]) / 1e3
    raise RuntimeError(f"{field} not in /proc/self/status")


def child(side: str, csv_path: str) -> None:
    """Run one side once in a fresh process and print its peak memory above the start (MB)."""
    keys, _ = _keys_and_species()
    import ecatlab.che  # noqa: F401  (imports and the default reference scheme are not the measured work)
    from ecatlab.references import ReferenceScheme

    ReferenceScheme().molecule_free_energy("H2O(l)")
    before = _status_mb("VmRSS")
    t0 = time.perf_counter()
    SIDES[side](csv_path, keys)
    elapsed = time.perf_counter() - t0
    peak = _status_mb("VmHWM")
    print(json.dumps({"peak_mb": peak - before, "seconds": elapsed}))


def peak_memory(side: str, csv_path: str) -> float:
    out = subprocess.run([sys.executable, __file__, "--child", side, csv_path], capture_output=True, text=True, check=True,
                         env={**os.environ, "PYTHONPATH": os.pathsep.join(sys.path)})
    return json.loads(out.stdout.strip().splitlines()[-1])["peak_mb"]


def _median_times(functions, repeats: int) -> list[float]:
    times = [[] for _ in functions]
    for _ in range(repeats):
        for i, fn in enumerate(functions):
            t0 = time.perf_counter()
            fn()
            times[i].append(time.perf_counter() - t0)
    return [float(np.median(t)) for t in times]


def compare(result: pd.DataFrame, ref: dict, keys: list[str]) -> list[str]:
    problems = []
    for key in keys:
        part = result[result["pathway"] == key]
        u_l, eta, det, g_max, blocked = ref[key]
        checks = {
            "limiting_potential": np.allclose(part["limiting_potential"].to_numpy(), u_l, rtol=0, atol=1e-9),
            "overpotential": np.allclose(part["overpotential"].to_numpy(), eta, rtol=0, atol=1e-9),
            "G_max": np.allclose(part["G_max"].to_numpy(), g_max, rtol=0, atol=1e-9),
            "blocked": np.array_equal(part["blocked"].to_numpy(), blocked),
            "determining_step_index": np.array_equal(part["determining_step_index"].to_numpy(dtype=np.int64), det),
        }
        problems += [f"{key}: {name} differs" for name, ok in checks.items() if not ok]
    return problems


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--sizes", type=float, nargs="*", default=[1e4, 1e5])
    parser.add_argument("--big", action="store_true", help="add N = 1e6 (about 530 MB of CSV)")
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--loop-sample", type=int, default=2000)
    parser.add_argument("--no-memory", action="store_true", help="skip the child processes that measure peak memory")
    parser.add_argument("--child", nargs=2, metavar=("SIDE", "CSV"), help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.child:
        child(*args.child)
        return 0

    from ecatlab.che import limiting_potentials
    from ecatlab.energies import read_energies

    keys, species = _keys_and_species()
    sizes = [int(n) for n in args.sizes] + ([1_000_000] if args.big else [])
    failures: list[str] = []
    per_cell = {}
    print(f"13 built-in pathways, {len(species)} adsorbates per surface; ILLUSTRATIVE random energies; repeats={args.repeats}")
    with tempfile.TemporaryDirectory() as tmp:
        for n in sizes:
            csv_path = os.path.join(tmp, f"energies_{n}.csv")
            write_csv(csv_path, n, species)
            size_mb = os.path.getsize(csv_path) / 1e6
            read_energies(csv_path)  # warm the page cache and the imports for both sides
            print(f"\nN = {n:,} surfaces ({n * len(species):,} rows, {size_mb:.0f} MB CSV)")

            # 1. reader
            t_ours, t_pd = _median_times([lambda: read_energies(csv_path), lambda: pd.read_csv(csv_path)], args.repeats)
            line = f"  reader      read_energies {t_ours:7.3f} s | pandas.read_csv {t_pd:7.3f} s | ratio {t_ours / t_pd:5.2f} (target <= {READER_TIME_RATIO:g})"
            if t_ours / t_pd > READER_TIME_RATIO:
                failures.append(f"N={n}: reader time ratio {t_ours / t_pd:.2f} > {READER_TIME_RATIO:g}")
                line += "  MISSED"
            print(line)
            if not args.no_memory:
                m_ours, m_pd = peak_memory("reader-ecatlab", csv_path), peak_memory("reader-pandas", csv_path)
                line = (f"  reader mem  read_energies {m_ours:7.0f} MB | pandas.read_csv {m_pd:7.0f} MB | "
                        f"{m_ours / size_mb:4.2f}x the file (target <= {READER_MEMORY_FILE_RATIO:g})")
                if n >= 100_000 and m_ours > READER_MEMORY_FILE_RATIO * size_mb:  # small files: fixed parser overhead dominates
                    failures.append(f"N={n}: reader peak memory {m_ours:.0f} MB > {READER_MEMORY_FILE_RATIO:g}x file")
                    line += "  MISSED"
                print(line)

            # 2. end to end, and the check that both sides agree
            result = limiting_potentials(read_energies(csv_path), keys)
            ref = baseline(csv_path, keys)
            problems = compare(result, ref, keys)
            failures += [f"N={n}: {p}" for p in problems]
            t_ours, t_ref = _median_times([lambda: limiting_potentials(read_energies(csv_path), keys), lambda: baseline(csv_path, keys)], args.repeats)
            ratio = t_ours / t_ref
            line = f"  end to end  ecatlab {t_ours:7.3f} s | read_csv + numpy {t_ref:7.3f} s | ratio {ratio:5.2f} (target <= {E2E_TIME_RATIO:g})"
            if n >= 100_000 and ratio > E2E_TIME_RATIO:
                failures.append(f"N={n}: end-to-end time ratio {ratio:.2f} > {E2E_TIME_RATIO:g}")
                line += "  MISSED"
            print(line + ("" if problems else "; numbers identical (U_L, eta, step, G_max, blocked)"))
            if not args.no_memory:
                m_ours, m_ref = peak_memory("e2e-ecatlab", csv_path), peak_memory("e2e-baseline", csv_path)
                line = f"  e2e mem     ecatlab {m_ours:7.0f} MB | read_csv + numpy {m_ref:7.0f} MB | ratio {m_ours / m_ref:5.2f} (target <= {E2E_MEMORY_RATIO:g})"
                if n >= 100_000 and m_ours > E2E_MEMORY_RATIO * m_ref:
                    failures.append(f"N={n}: end-to-end peak memory ratio {m_ours / m_ref:.2f} > {E2E_MEMORY_RATIO:g}")
                    line += "  MISSED"
                print(line)

            # 3. engine only vs a plain dict loop; 4. time per surface-pathway
            table = read_energies(csv_path)
            (t_engine,) = _median_times([lambda: limiting_potentials(table, keys)], args.repeats)
            per_cell[n] = t_engine / (n * len(keys))
            sample = min(args.loop_sample, n)
            wide = table.matrix.iloc[:sample]
            rows = {s: dict(zip(wide.columns, map(float, r))) for s, r in zip(wide.index, wide.to_numpy())}
            t0 = time.perf_counter()
            loop = dict_loop(rows, keys)
            t_loop = (time.perf_counter() - t0) * n / sample
            for key in keys:
                part = result[result["pathway"] == key]
                if not (np.allclose(part["limiting_potential"].to_numpy()[:sample], loop[key][0], rtol=0, atol=1e-9)
                        and np.array_equal(part["determining_step_index"].to_numpy()[:sample], loop[key][1])):
                    failures.append(f"N={n}: {key}: engine and dict loop differ")
            print(f"  engine      limiting_potentials(table) {t_engine:7.3f} s | plain dict loop {t_loop:7.2f} s "
                  f"(extrapolated from {sample:,}) | {t_loop / t_engine:5.1f}x faster | {1e9 * per_cell[n]:6.1f} ns per surface-pathway")
            os.remove(csv_path)
    if len(per_cell) > 1:
        largest = max(per_cell)
        growth = per_cell[largest] / min(per_cell.values())
        line = f"\nflatness: ns per surface-pathway " + ", ".join(f"{n:,}: {1e9 * v:.1f}" for n, v in per_cell.items())
        line += f"; largest N / best = {growth:.2f} (target <= {FLAT_RATIO:g})"
        if growth > FLAT_RATIO:
            failures.append(f"time per surface-pathway grows {growth:.2f}x up to N={largest}")
            line += "  MISSED"
        print(line)
    if failures:
        print("\nFAILED:\n  " + "\n  ".join(failures))
        return 1
    print("\nall targets met")
    return 0


if __name__ == "__main__":
    sys.exit(main())
