"""Benchmark: best CO2-reduction routes to every C1 product, ecatlab vs a textbook per-surface search.

Surfaces are random perturbations of the ILLUSTRATIVE demo energies (invented numbers).

* ecatlab: ``NetworkAnalysis(network, table)`` (step free energies from the CHE engine, step costs
  from the kernel) + ``best_routes(product)`` for every product (the full documented tables).
* baseline (what a competent user writes): the same step costs, then for each surface a networkx
  ``DiGraph`` with the costs as edge weights and a textbook minimax Dijkstra (heapq; label = the
  largest edge cost on the path) from the start state, the route read back from predecessors, and
  one pandas table per product (surface, limiting potential, determining step, route).

The network structure is built once and shared (not timed on either side). Both sides must give
identical route costs. Target (issue 13, item 4): ecatlab faster at every N from 1e2 to 1e4.

Run: python tests/benchmarks/bench_routes.py [N ...]      (default: 100 1000 10000)
Exit status 1 when the target is missed or the results differ.
"""

from __future__ import annotations

import heapq
import sys
import time
import tracemalloc

import networkx as nx
import numpy as np
import pandas as pd

from ecatlab.demo import demo_energies
from ecatlab.energies import EnergyTable
from ecatlab.network import NetworkAnalysis, build_network
from ecatlab.network.routes import step_costs


def synthetic_table(n: int, seed: int = 7) -> EnergyTable:
    base = demo_energies().matrix
    rng = np.random.default_rng(seed)
    rows = base.to_numpy()[rng.integers(0, len(base), n)] + rng.normal(0.0, 0.25, (n, base.shape[1]))
    return EnergyTable.from_matrix(pd.DataFrame(rows, columns=base.columns, index=[f"R{i:05d}" for i in range(n)]))


def minimax_dijkstra(g: nx.DiGraph, source: int):
    """Textbook bottleneck Dijkstra: dist[v] = min over paths of the max edge weight."""
    dist = {source: -np.inf}
    pred: dict = {}
    heap = [(-np.inf, source)]
    done = set()
    while heap:
        d, u = heapq.heappop(heap)
        if u in done:
            continue
        done.add(u)
        for v, attr in g.adj[u].items():
            nd = max(d, attr["weight"])
            if nd < dist.get(v, np.inf):
                dist[v] = nd
                pred[v] = attr["edge"]
                heapq.heappush(heap, (nd, v))
    return dist, pred


def baseline(net, table, products):
    """Per surface: networkx graph + minimax Dijkstra; tables per product."""
    an = NetworkAnalysis(net, table)  # the same step free energies (CHE engine)
    w = step_costs(an.a, an.n)
    targets = {p: net.product_state(p) for p in products}
    eqs = [e.step.equation for e in net.edges]
    rows = {p: [] for p in products}
    for i, s in enumerate(an.surfaces):
        g = nx.DiGraph()
        for j, e in enumerate(net.edges):
            if np.isfinite(w[i, j]) or w[i, j] == -np.inf:
                old = g.get_edge_data(e.source, e.target)
                if old is None or w[i, j] < old["weight"]:
                    g.add_edge(e.source, e.target, weight=w[i, j], edge=j)
        dist, pred = minimax_dijkstra(g, net.start)
        for p, t in targets.items():
            c = dist.get(t, np.inf)
            route = []
            v = t
            while v != net.start and v in pred:
                route.append(pred[v])
                v = net.edges[pred[v]].source
            route = route[::-1]
            det = max(route, key=lambda j: w[i, j]) if route else -1
            rows[p].append((s, -c if np.isfinite(c) else np.nan, eqs[det] if det >= 0 else "",
                            " ; ".join(eqs[j] for j in route), c))
    return {p: pd.DataFrame(r, columns=["surface", "limiting_potential", "determining_step", "route", "cost"]) for p, r in rows.items()}


def ecatlab_side(net, table, products):
    an = NetworkAnalysis(net, table)
    return an, {p: an.best_routes(p) for p in products}


def timed(fn, *args):
    tracemalloc.start()
    t0 = time.perf_counter()
    out = fn(*args)
    dt = time.perf_counter() - t0
    peak = tracemalloc.get_traced_memory()[1] / 2**20
    tracemalloc.stop()
    return out, dt, peak


def main(sizes) -> int:
    ok = True
    net = build_network(demo_energies(), "CO2")
    products = list(net.products)
    print(f"{net!r}")
    warm = synthetic_table(10, seed=1)  # first-call costs (imports, reference scheme) paid by neither side
    ecatlab_side(net, warm, products)
    baseline(net, warm, products)
    print(f"{'N':>7} {'ecatlab s':>10} {'MiB':>7} {'baseline s':>11} {'MiB':>7} {'ratio':>7}  same")
    for n in sizes:
        table = synthetic_table(n)
        (an, mine), t_e, m_e = timed(ecatlab_side, net, table, products)
        ref, t_b, m_b = timed(baseline, net, table, products)
        same = True
        for p in products:
            c_mine = an._route_arrays(p)["cost"]
            c_ref = ref[p]["cost"].to_numpy()
            same &= bool(np.array_equal(c_mine, c_ref))
            # routes of equal cost may differ; the limiting potential of open routes must agree
            lp = mine[p]["limiting_potential"].to_numpy()
            open_ = ~mine[p]["blocked"].to_numpy(dtype=bool) & np.isfinite(lp)
            same &= bool(np.allclose(lp[open_], ref[p]["limiting_potential"].to_numpy()[open_], atol=1e-12))
        ratio = t_b / t_e
        print(f"{n:>7} {t_e:>10.3f} {m_e:>7.1f} {t_b:>11.3f} {m_b:>7.1f} {ratio:>6.1f}x  {'yes' if same else 'NO'}")
        ok &= same and t_e < t_b
    print("target: ecatlab faster than the per-surface networkx minimax Dijkstra at every N ->", "met" if ok else "NOT met")
    return 0 if ok else 1


if __name__ == "__main__":
    sys.exit(main([int(x) for x in sys.argv[1:]] or [100, 1000, 10000]))
