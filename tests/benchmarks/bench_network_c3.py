"""Benchmark: a CO2 -> C3 reaction network from molecular graphs, and best routes on 100 surfaces.

Data are ILLUSTRATIVE: an invented energy table (C1 and a few C2 adsorbates on 100 invented
surfaces, drawn from a group-additivity model with random group values plus noise) and invented
free energies for the C3 product molecules (formation Gibbs energies from memory, rounded). The
numbers mean nothing physically; they only exercise the code at the size practitioners study.

Steps timed:
0. (reported) the CHE engine's compile of the network's distinct steps against a per-step loop over
   ``Step.net()``; both must give the same arrays, bit for bit.
1. ``build_network(table, "3 CO2", sites=2, coupling=True, uncomputed=True)``: every intermediate
   up to C3 made by the graph rules. Target: >= 500 intermediates and >= 2,000 steps in < 30 s.
2. ``NetworkAnalysis(..., estimates="additivity")`` (step free energies from the CHE engine,
   estimates for the species the table lacks) -- reported -- and the best route to every product on
   every surface (``best_routes`` tables). Target: the routes in < 2 s for 100 surfaces.
3. Peak memory of the process (ru_maxrss). Target: < 2 GB.

A check: on 5 surfaces the best cost to every product equals a textbook per-surface minimax
Dijkstra (heapq) on the same step costs.

Run: python tests/benchmarks/bench_network_c3.py [n_surfaces]. Exit status 1 when a target is missed.
"""

from __future__ import annotations

import heapq
import resource
import sys
import time

import pathlib

sys.path.insert(0, str(pathlib.Path(__file__).resolve().parents[1]))  # tests/: shared reference helpers

import numpy as np
import pandas as pd

from ecatlab.energies import EnergyTable
from ecatlab.network import NetworkAnalysis, build_network
from ecatlab.network.estimate import features
from ecatlab.network.graphs import parse_name
from ecatlab.network.routes import step_costs
from ecatlab.notation import Species
from ecatlab.references import ReferenceScheme

#: ILLUSTRATIVE formation Gibbs energies (kJ/mol, 298 K; from memory, rounded) of C3 products.
C3_FORMATION_KJ = {"CH3CH2CH2OH(aq)": -175.0, "C3H8(g)": -23.4, "C3H6(g)": 62.8, "CH3COCH3(aq)": -161.0,
                   "CH3CH2CHO(aq)": -130.0, "CH2CHCH2OH(aq)": -71.0}
#: formation Gibbs energies of the references (kJ/mol; NBS tables via the CRC Handbook)
REFERENCE_KJ = {"CO2(g)": -394.359, "H2O(l)": -237.129, "H2(g)": 0.0, "N2(g)": 0.0}
COMPUTED = ["CO*", "COOH*", "OCHO*", "CHO*", "COH*", "CH2O*", "CH3O*", "C*", "CH*", "CH2*", "CH3*", "OH*", "O*", "H*",
            "OCCO*", "OCCOH*", "CH2CH2*", "CH3CH2*", "CH2CHO*", "CH3CO*", "CHCO*", "CH3CH2O*", "CH2CH2OH*", "CH3CHO*"]


def illustrative_scheme() -> ReferenceScheme:
    base = ReferenceScheme()
    over = {}
    for key, g in C3_FORMATION_KJ.items():
        coef = base.balance(Species.parse(key).elements)
        over[key] = (g - sum(c * REFERENCE_KJ[r] for r, c in coef.items())) / 96.485332
    return ReferenceScheme(overrides=over)


def illustrative_table(n: int, seed: int = 3) -> EnergyTable:
    """Invented G (eV): group values + per-surface surface-bond values + 0.05 eV noise."""
    rng = np.random.default_rng(seed)
    feats = {s: features(parse_name(s)) for s in COMPUTED if s != "H*"}
    groups = sorted({g for f, _ in feats.values() for g in f})
    sgroups = sorted({b for _, bs in feats.values() for b in bs})
    c = dict(zip(groups, rng.normal(0.0, 0.3, len(groups))))
    rows = {}
    for i in range(n):
        theta = dict(zip(sgroups, rng.normal(-0.3, 0.4, len(sgroups))))
        row = {s: sum(c[g] * k for g, k in f.items()) + sum(theta[b] for b in bs) + rng.normal(0, 0.05) for s, (f, bs) in feats.items()}
        row["H*"] = rng.normal(0.1, 0.3)
        rows[f"ILL-{i:03d}"] = row
    return EnergyTable.from_matrix(pd.DataFrame(rows).T, scheme=illustrative_scheme(), source="ILLUSTRATIVE invented C1/C2 table")


from _loop_compile import loop_compile  # noqa: E402 - tests/ is on sys.path (below)


def compare_compile(net, table, repeats: int = 3) -> bool:
    """Time the engine's compile of the network's distinct steps against :func:`loop_compile`
    (alternating, median of ``repeats``; a full garbage collection before each, so neither pays for
    the network's objects) and check that both give the same arrays, bit for bit."""
    from ecatlab.che import compile_steps

    distinct = list({e.step.equation: e.step for e in net.edges}.values())
    times = {"engine": [], "loop": []}
    import gc

    for _ in range(repeats):
        gc.collect()  # each side starts without a pending collection of what came before (the network build)
        t0 = time.perf_counter()
        compiled = compile_steps(distinct, net.adsorbates, table.scheme)
        times["engine"].append(time.perf_counter() - t0)
        gc.collect()
        t0 = time.perf_counter()
        ref = loop_compile(distinct, net.adsorbates, table.scheme)
        times["loop"].append(time.perf_counter() - t0)
    ours = (compiled.adsorbate_stoichiometry, compiled.molecule_dG, compiled.electrons, compiled.proton_coefficient)
    same = all(np.array_equal(a, b) for a, b in zip(ours, ref))
    t_engine, t_loop = (float(np.median(v)) for v in (times["engine"], times["loop"]))
    print(f"compile {len(distinct)} distinct steps x {len(net.adsorbates)} adsorbates: engine {t_engine:.2f} s | per-step loop "
          f"{t_loop:.2f} s | {t_loop / t_engine:.1f}x faster (median of {repeats}); same arrays bit for bit: {'yes' if same else 'NO'}")
    return same


def dijkstra_costs(net, w_row, targets):
    adj: dict = {}
    for j, e in enumerate(net.edges):
        adj.setdefault(e.source, []).append((e.target, w_row[j]))
    dist = {net.start: -np.inf}
    heap = [(-np.inf, net.start)]
    done = set()
    while heap:
        d, u = heapq.heappop(heap)
        if u in done:
            continue
        done.add(u)
        for v, x in adj.get(u, ()):
            nd = max(d, x)
            if nd < dist.get(v, np.inf):
                dist[v] = nd
                heapq.heappush(heap, (nd, v))
    return np.array([dist.get(t, np.inf) for t in targets])


def main(n: int = 100) -> int:
    ok = True
    table = illustrative_table(n)
    t0 = time.perf_counter()
    net = build_network(table, "3 CO2", sites=2, coupling=True, uncomputed=True)
    t_build = time.perf_counter() - t0
    n_int = len(net.used_adsorbates)
    n_steps = len(net.edges)
    n_distinct = len({e.step.equation for e in net.edges})
    print(f"{net!r}")
    print(f"build: {t_build:.1f} s; {n_int} intermediates ({len(net.computed)} in the table), {len(net.states)} states, "
          f"{n_steps} steps ({n_distinct} distinct elementary steps), {len(net.products)} products")
    build_ok = n_int >= 500 and n_steps >= 2000 and t_build < 30.0
    print("target: >= 500 intermediates, >= 2,000 steps, < 30 s ->", "met" if build_ok else "NOT met")
    ok &= build_ok

    ok &= compare_compile(net, table)

    t0 = time.perf_counter()
    an = NetworkAnalysis(net, table, estimates="additivity")
    t_setup = time.perf_counter() - t0
    t0 = time.perf_counter()
    tables = {p: an.best_routes(p) for p in net.products}
    t_routes = time.perf_counter() - t0
    reached = sum(int(np.isfinite(t["limiting_potential"]).sum()) for t in tables.values())
    print(f"analysis setup (step free energies for {n} surfaces, estimates for {int(an.estimated_mask.sum())} species): {t_setup:.2f} s")
    print(f"best routes to all {len(net.products)} products on {n} surfaces: {t_routes:.2f} s ({reached} surface-product pairs with a route)")
    route_ok = t_routes < 2.0
    print("target: best routes (search + tables, given the step free energies) < 2 s ->", "met" if route_ok else "NOT met")
    print(f"(setup is reported, not part of the target: it is dominated by the CHE engine compiling {n_distinct} steps)")
    ok &= route_ok

    # check against a textbook per-surface minimax Dijkstra on 5 surfaces
    w = step_costs(an.a, an.n)
    targets = [net.product_state(p) for p in net.products]
    mine = np.stack([an._route_arrays(p)["cost"] for p in net.products], axis=1)
    same = all(np.array_equal(dijkstra_costs(net, w[i], targets), mine[i]) for i in range(min(5, n)))
    print("same best costs as a per-surface minimax Dijkstra on 5 surfaces:", "yes" if same else "NO")
    ok &= same

    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    print(f"peak memory (ru_maxrss): {peak_mb:.0f} MB; target < 2,048 MB ->", "met" if peak_mb < 2048 else "NOT met")
    ok &= peak_mb < 2048
    est = tables[net.products[-1]]
    print(f"example (ILLUSTRATIVE): {net.products[-1]} on {est['surface'].iloc[0]}: U_L = {est['limiting_potential'].iloc[0]:+.2f} V vs RHE, "
          f"estimated species on route: {bool(est['estimated'].iloc[0])} (error estimate {est['estimate_error'].iloc[0]:.2f} eV)")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main(int(sys.argv[1]) if len(sys.argv) > 1 else 100))
