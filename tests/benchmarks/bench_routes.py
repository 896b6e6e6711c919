"""Benchmark: best CO2-reduction routes to every C1 product for 1,000 surfaces.

Surfaces are random perturbations of the ILLUSTRATIVE demo energies (invented numbers). The
network search (one enumeration of the network, then array operations over all surfaces) is timed
against a generic per-surface search with networkx: for each surface, bisection over the sorted
step costs with ``networkx.has_path`` on the subgraph of steps below the threshold (the classic
bottleneck-path method). Both must give the same limiting potentials.

Run: python tests/benchmarks/bench_routes.py [n_surfaces]
Target (issue #7): under 2 s for 1,000 surfaces on this machine.
"""

from __future__ import annotations

import sys
import time

import networkx as nx
import numpy as np
import pandas as pd

from ecatlab.demo import demo_energies
from ecatlab.energies import EnergyTable
from ecatlab.network import NetworkAnalysis, build_network


def synthetic_table(n: int, seed: int = 7) -> EnergyTable:
    base = demo_energies().matrix
    rng = np.random.default_rng(seed)
    rows = base.to_numpy()[rng.integers(0, len(base), n)] + rng.normal(0.0, 0.25, (n, base.shape[1]))
    return EnergyTable.from_matrix(pd.DataFrame(rows, columns=base.columns, index=[f"R{i:04d}" for i in range(n)]))


def networkx_reference(an: NetworkAnalysis, product: str) -> np.ndarray:
    """Per surface: smallest threshold t such that the target is reachable using steps with weight <= t."""
    net = an.network
    target = net.product_state(product)
    out = np.empty(len(an.surfaces))
    for i in range(len(an.surfaces)):
        g = nx.DiGraph()
        g.add_nodes_from(range(len(net.states)))
        w = an.weight[i]
        finite = np.unique(w[np.isfinite(w)])
        edges = [(e.source, e.target, w[j]) for j, e in enumerate(net.edges)]

        def reachable(t: float) -> bool:
            h = nx.DiGraph()
            h.add_nodes_from(range(len(net.states)))
            h.add_edges_from((u, v) for u, v, x in edges if x <= t)
            return nx.has_path(h, net.start, target)

        if not reachable(np.inf if finite.size == 0 else finite[-1]):
            out[i] = np.inf
            continue
        cands = finite[finite > -np.inf]
        if reachable(-np.inf):
            out[i] = -np.inf
            continue
        lo, hi = 0, len(cands) - 1
        while lo < hi:
            mid = (lo + hi) // 2
            if reachable(cands[mid]):
                hi = mid
            else:
                lo = mid + 1
        out[i] = cands[lo]
    return out


def main(n: int = 1000) -> None:
    t0 = time.perf_counter()
    table = synthetic_table(n)
    t_table = time.perf_counter() - t0
    print(f"energy table for {n} surfaces built in {t_table:.2f} s (not part of the timed search)")

    t0 = time.perf_counter()
    net = build_network(table, "CO2")
    an = NetworkAnalysis(net, table)
    results = {p: an.best_routes(p) for p in net.products}
    t_net = time.perf_counter() - t0
    print(f"{net!r}; routes per product: " + ", ".join(f"{p} {len(net.routes(p))}" for p in net.products))
    print(f"network search, {len(net.products)} products x {n} surfaces (build + costs + best-route tables): {t_net:.3f} s")

    t0 = time.perf_counter()
    for p in net.products:
        an._route_cache.clear()
        an._route_arrays(p)
    t_core = time.perf_counter() - t0
    print(f"  of which vectorised route costs and ordering: {t_core:.3f} s")

    m = min(n, 100)
    sub = NetworkAnalysis(net, table, surfaces=an.surfaces[:m])
    t0 = time.perf_counter()
    ref = {p: networkx_reference(sub, p) for p in net.products}
    t_ref = (time.perf_counter() - t0) * n / m
    print(f"networkx generic per-surface search (bisection + has_path), extrapolated from {m} surfaces: {t_ref:.1f} s")
    print(f"ratio networkx / network search: {t_ref / t_net:.0f}x")

    for p in net.products:
        mine = -results[p]["limiting_potential"].to_numpy()[:m]
        assert np.allclose(mine, ref[p], atol=1e-12, equal_nan=False), p
    print(f"equal results on the {m} compared surfaces for all {len(net.products)} products: yes")
    print("target: < 2 s for 1,000 surfaces ->", "met" if t_net < 2.0 else "NOT met")


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 1000)
