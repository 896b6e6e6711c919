"""Regenerate ``illustrative_surface_states.csv``: ILLUSTRATIVE surface states (invented numbers).

For each of the twelve ILLUSTRATIVE demo surfaces (``illustrative_screening.csv``) a 2x2 cell with
4 sites carries 1, 2 or 4 H*, OH* or O* (1/4, 1/2, 1 ML) and one mixed O* + OH* state. The cell's
free energy is N times the demo's low-coverage adsorption free energy plus an invented lateral
repulsion w_X (N - 1)/3 per adsorbate (w = 0.05, 0.15, 0.25 eV for H*, OH*, O*; O* + OH*: 0.10 eV)
and seeded noise of 0.02 eV. These numbers describe no real material; never cite them.

Run from the repository root: ``python ecatlab/data/make_illustrative_surface_states.py``.
"""

from __future__ import annotations

import pathlib

import numpy as np
import pandas as pd

HERE = pathlib.Path(__file__).resolve().parent
SITES = 4
REPULSION = {"H*": 0.05, "OH*": 0.15, "O*": 0.25}
LABEL = {1: "1/4 ML", 2: "1/2 ML", 4: "1 ML"}


def main(out: pathlib.Path | None = None) -> pathlib.Path:
    from ecatlab.demo import demo_energies

    table = demo_energies()
    rng = np.random.default_rng(20261202)
    rows = []
    for surface in table.surfaces:
        g = dict(zip(table.species, table.values([surface], table.species)[0]))
        for ads, w in REPULSION.items():
            for n in (1, 2, 4):
                value = n * (g[ads] + w * (n - 1) / 3) + rng.normal(0, 0.02)
                rows.append((surface, f"{ads} {LABEL[n]}", ads if n == 1 else f"{n} {ads}", SITES, round(value, 3)))
        mixed = g["O*"] + g["OH*"] + 0.10 + rng.normal(0, 0.02)
        rows.append((surface, "O* + OH* 1/2 ML", "O* + OH*", SITES, round(mixed, 3)))
    frame = pd.DataFrame(rows, columns=["surface", "state", "adsorbates", "sites", "G"])
    header = (
        "# ILLUSTRATIVE surface states: invented numbers for hypothetical surfaces (see make_illustrative_surface_states.py); never cite them.\n"
        "# G: free energy of the covered 2x2 cell (4 sites) minus the clean cell and H2(g), H2O(l) references, eV per cell.\n"
    )
    out = HERE / "illustrative_surface_states.csv" if out is None else pathlib.Path(out)
    out.write_text(header + frame.to_csv(index=False), encoding="utf-8")
    print(f"wrote {len(frame)} states to {out}")
    return out


if __name__ == "__main__":
    main()
