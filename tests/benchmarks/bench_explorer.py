"""Explorer redraw speed: slider value change -> finished redraw, 10 surfaces.

Run:  python tests/benchmarks/bench_explorer.py [--repeats 40]

Measured, in one process, on the bundled ILLUSTRATIVE demo table (orr-4e and co2rr-ch4):

* explorer, inline transport: ``explorer.potential.value = U`` until the new PNG sits in the
  fixed-height Output (engine affine form a + n U, artist moves, cached background + moving
  artists redrawn with Agg, PNG encoded, step table and read-out HTML rebuilt);
* explorer, canvas only: the same without the PNG (what the ipympl transport starts from);
* naive reference: a full re-plot per value (new Figure via plot_free_energy_diagram, which asks
  the engine for the levels, full Agg draw, PNG), as a simple notebook callback would do.

Target (issue #5): median explorer time under 50 ms for 10 surfaces. Printed with the ratio
naive / explorer.
"""

from __future__ import annotations

import argparse
import io
import statistics
import time

import matplotlib

matplotlib.use("Agg")


def _median_ms(samples):
    return 1e3 * statistics.median(samples)


def bench(pathway: str, repeats: int) -> dict:
    import matplotlib.pyplot as plt

    from ecatlab.demo import demo_energies
    from ecatlab.explorer import explore
    from ecatlab.plotting.diagram import plot_free_energy_diagram

    table = demo_energies()
    surfaces = table.surfaces[:10]
    ex = explore(table, pathway=pathway, surfaces=surfaces, render="inline")
    u_eq = ex.state.equilibrium_potential()
    # a drag: small steps around the equilibrium potential, as a hand on the slider produces
    values = [round(u_eq - 0.6 + 0.01 * (i % 60), 4) for i in range(repeats + 5)]
    for u in values[:5]:  # warm-up (font caches, first full draw)
        ex.potential.value = u
    widget = []
    for u in values[5:]:
        t0 = time.perf_counter()
        ex.potential.value = u
        widget.append(time.perf_counter() - t0)
    assert not ex.errors, ex.errors

    canvas = []
    for u in values[5:]:
        t0 = time.perf_counter()
        ex.state.set_potential(u)
        ex.view.update(ex.state)
        ex.view.redraw()
        canvas.append(time.perf_counter() - t0)

    naive = []
    n_naive = max(5, repeats // 4)
    for u in values[5 : 5 + n_naive]:
        t0 = time.perf_counter()
        ax = plot_free_energy_diagram(table, pathway, surfaces=surfaces, potential=u)
        buf = io.BytesIO()
        ax.figure.savefig(buf, format="png", dpi=90)
        plt.close(ax.figure)
        naive.append(time.perf_counter() - t0)
    return {"pathway": pathway, "widget": _median_ms(widget), "canvas": _median_ms(canvas), "naive": _median_ms(naive),
            "n": len(widget), "n_naive": len(naive)}


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=40)
    args = parser.parse_args()
    print("explorer redraw, 10 surfaces, median over slider moves (target < 50 ms)")
    print(f"{'pathway':<12} {'explorer ms':>12} {'canvas-only ms':>15} {'naive re-plot ms':>17} {'naive/explorer':>15}")
    for key in ("orr-4e", "co2rr-ch4"):
        r = bench(key, args.repeats)
        verdict = "ok" if r["widget"] < 50 else "OVER TARGET"
        print(f"{r['pathway']:<12} {r['widget']:>12.1f} {r['canvas']:>15.1f} {r['naive']:>17.1f} {r['naive'] / r['widget']:>14.1f}x  {verdict}")


if __name__ == "__main__":
    main()
