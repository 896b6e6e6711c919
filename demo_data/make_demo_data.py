"""Generate the ILLUSTRATIVE demo energy table of ecatlab.

Scenario (invented): a fictitious group screens twelve hypothetical catalyst surfaces for
oxygen, hydrogen, CO2 and N2 electrochemistry: six alloy facets coded ALY-01..ALY-06 and six
single-atom sites coded SAS-01..SAS-06. Nothing here is a computed or published number: the
adsorption energies are drawn from simple linear relations with random scatter (seeded), chosen
only so that the demo shows the full range of behaviour (strong and weak binders, different
potential-determining steps, uphill desorption steps). Do not cite them.

The table is written as electronic adsorption energies E plus the adsorbate's own ZPE, CpdT, TS
and solvation terms, the way a DFT workflow delivers them, so the demo exercises ecatlab's
correction bookkeeping. Energies in eV vs the clean surface and H2(g), H2O(l), CO2(g), N2(g).

Run from the repository root:  python demo_data/make_demo_data.py
"""

from __future__ import annotations

import pathlib

import numpy as np
import pandas as pd

from ecatlab.notation import Species
from ecatlab.references import ReferenceScheme

SEED = 20261201
ROOT = pathlib.Path(__file__).resolve().parents[1]
TARGETS = [ROOT / "ecatlab" / "data" / "illustrative_screening.csv", ROOT / "demo_data" / "illustrative_screening.csv"]


def free_energies(rng: np.random.Generator) -> pd.DataFrame:
    names = [f"ALY-{i:02d}" for i in range(1, 7)] + [f"SAS-{i:02d}" for i in range(1, 7)]
    n = len(names)
    noise = lambda s: rng.normal(0.0, s, n)  # noqa: E731
    oh = np.linspace(0.35, 1.35, n)[rng.permutation(n)]          # OH* descriptor
    co = np.linspace(-1.25, 0.15, n)[rng.permutation(n)]         # CO* binding vs CO(g)
    nb = np.linspace(-1.6, 0.4, n)[rng.permutation(n)]           # N* descriptor
    g = {}
    scheme = ReferenceScheme()
    co_gas = scheme.molecule_free_energy("CO(g)")
    # oxygen intermediates
    g["OH*"] = oh
    g["O*"] = 1.9 * oh + 0.15 + noise(0.12)
    g["OOH*"] = oh + 3.2 + noise(0.08)
    # hydrogen
    g["H*"] = np.linspace(-0.55, 0.45, n)[rng.permutation(n)] + noise(0.03)
    # carbon intermediates: each from its parent plus a hydrogenation free energy at 0 V_RHE
    g["CO*"] = co_gas + co
    g["COOH*"] = g["CO*"] + 0.35 - 0.45 * co + noise(0.08)   # COOH* + H+ + e- -> CO* + H2O: dG = CO - COOH
    g["OCHO*"] = 0.25 + 0.55 * co + noise(0.1)
    g["CHO*"] = g["CO*"] + 0.55 - 0.25 * co + noise(0.08)
    g["COH*"] = g["CO*"] + 0.85 + 0.15 * co + noise(0.1)
    g["CH2O*"] = g["CHO*"] - 0.05 + noise(0.1)
    g["CH3O*"] = g["CH2O*"] - 0.55 + noise(0.1)
    g["C*"] = g["COH*"] + 0.45 + 0.3 * co + noise(0.12)
    g["CH*"] = g["C*"] - 0.55 + noise(0.1)
    g["CH2*"] = g["CH*"] + 0.05 + noise(0.1)
    g["CH3*"] = g["CH2*"] - 0.45 + noise(0.1)
    # nitrogen intermediates
    g["NNH*"] = 1.05 + 0.35 * nb + noise(0.08)
    g["NNH2*"] = g["NNH*"] + 0.05 - 0.2 * nb + noise(0.08)
    g["N*"] = nb + 0.9 + noise(0.05)
    g["NH*"] = g["N*"] - 0.6 - 0.15 * nb + noise(0.08)
    g["NH2*"] = g["NH*"] - 0.35 - 0.1 * nb + noise(0.08)
    g["NH3*"] = g["NH2*"] - 0.55 + noise(0.08)
    g["NHNH*"] = g["NNH*"] + 0.35 - 0.1 * nb + noise(0.1)
    g["NHNH2*"] = g["NHNH*"] - 0.2 + noise(0.1)
    g["NH2NH2*"] = g["NHNH2*"] - 0.3 + noise(0.1)
    wide = pd.DataFrame(g, index=names)
    return wide


def corrections(species: Species, rng: np.random.Generator) -> tuple[float, float, float, float]:
    """Invented adsorbate ZPE, CpdT, TS, solvation (eV) of plausible size."""
    el = species.elements
    n_h = el.get("H", 0.0)
    heavy = sum(v for k, v in el.items() if k != "H")
    zpe = 0.04 * heavy + 0.30 * n_h + rng.normal(0, 0.01)
    cpdt = 0.03 + 0.015 * (heavy + n_h) + rng.normal(0, 0.005)
    ts = 0.04 + 0.02 * (heavy + n_h) + rng.normal(0, 0.01)
    solvation = -0.25 if species.formula in ("OH", "OOH", "COOH", "COH") else (-0.1 if "O" in el else 0.0)
    return zpe, cpdt, ts, solvation


def main() -> None:
    rng = np.random.default_rng(SEED)
    wide = free_energies(rng)
    scheme = ReferenceScheme()
    ref_corr = scheme.reference_correction()
    rows = []
    for surface, series in wide.iterrows():
        for key, G in series.items():
            sp = Species.parse(key)
            zpe, cpdt, ts, solv = corrections(sp, rng)
            coef = scheme.balance(sp.elements)
            ref_part = sum(c * ref_corr[r] for r, c in coef.items())
            E = G - (zpe + cpdt - ts + solv) + ref_part
            rows.append(
                {
                    "surface": surface,
                    "species": key,
                    "E": round(E, 3),
                    "ZPE": round(zpe, 3),
                    "CpdT": round(cpdt, 3),
                    "TS": round(ts, 3),
                    "solvation": round(solv, 3),
                    "source": "illustrative (invented)",
                }
            )
    table = pd.DataFrame(rows)
    header = (
        "# ILLUSTRATIVE demo data of ecatlab: invented numbers for hypothetical surfaces, not computed or published.\n"
        "# Energies in eV vs the clean surface and H2(g), H2O(l), CO2(g), N2(g); see demo_data/README.md.\n"
    )
    for target in TARGETS:
        target.parent.mkdir(parents=True, exist_ok=True)
        with open(target, "w", encoding="utf-8", newline="") as fh:
            fh.write(header)
            table.to_csv(fh, index=False)
        print(f"wrote {target} ({len(table)} rows)")


if __name__ == "__main__":
    main()
