"""Regenerate ecatlab/data/gas_library.json from bond lengths, angles and fundamentals.

The built-in gas library is data (a JSON file with a schema version and a source per molecule);
this script documents how its Cartesian geometries were built. Run from the repository root:

    python scripts/make_gas_library.py

``tests/test_molecules.py`` checks that the shipped file equals what this script builds.
"""

from __future__ import annotations

import json
import math
import pathlib

import numpy as np

OUT = pathlib.Path(__file__).resolve().parents[1] / "ecatlab" / "data" / "gas_library.json"

_CCCBDB = "NIST CCCBDB experimental geometry and fundamentals (from memory)"


# ---------------------------------------------------------------------------------------------
# geometry helpers
# ---------------------------------------------------------------------------------------------
def _place(a, b, c, bond: float, angle_deg: float, dihedral_deg: float) -> np.ndarray:
    """Position of atom d with |cd| = bond, angle(d, c, b) and dihedral(d, c, b, a) in degrees."""
    a, b, c = (np.asarray(v, dtype=float) for v in (a, b, c))
    bc = c - b
    bc /= np.linalg.norm(bc)
    n = np.cross(b - a, bc)
    n /= np.linalg.norm(n)
    m = np.cross(n, bc)
    theta, phi = math.radians(angle_deg), math.radians(dihedral_deg)
    local = np.array([-bond * math.cos(theta), bond * math.sin(theta) * math.cos(phi), bond * math.sin(theta) * math.sin(phi)])
    return c + local[0] * bc + local[1] * m + local[2] * n


def _diatomic(r: float):
    return [[0.0, 0.0, 0.0], [0.0, 0.0, r]]


def _bent_triatomic(r: float, angle_deg: float):
    half = math.radians(angle_deg) / 2
    return [[0.0, 0.0, 0.0], [r * math.sin(half), 0.0, r * math.cos(half)], [-r * math.sin(half), 0.0, r * math.cos(half)]]


def _pyramid(r: float, angle_deg: float):
    """XH3 with C3v symmetry: bond r, H-X-H angle."""
    a = math.radians(angle_deg)
    cos2 = (math.cos(a) - math.cos(2 * math.pi / 3)) / (1 - math.cos(2 * math.pi / 3))
    t = math.acos(math.sqrt(cos2))
    return [[0.0, 0.0, 0.0]] + [
        [r * math.sin(t) * math.cos(k * 2 * math.pi / 3), r * math.sin(t) * math.sin(k * 2 * math.pi / 3), -r * math.cos(t)]
        for k in range(3)
    ]


def _tetrahedron(r: float):
    d = r / math.sqrt(3)
    return [[0, 0, 0], [d, d, d], [d, -d, -d], [-d, d, -d], [-d, -d, d]]


def _ethylene(r_cc: float, r_ch: float, hcc_deg: float):
    x = r_cc / 2
    ext = math.radians(180 - hcc_deg)
    hx, hy = x + r_ch * math.cos(ext), r_ch * math.sin(ext)
    return [[x, 0, 0], [-x, 0, 0], [hx, hy, 0], [hx, -hy, 0], [-hx, hy, 0], [-hx, -hy, 0]]


def _hydrogen_peroxide(r_oo, r_oh, ooh_deg, dihedral_deg):
    o1, o2 = np.array([0.0, 0.0, 0.0]), np.array([r_oo, 0.0, 0.0])
    h1 = _place([0, 1, 0], o2, o1, r_oh, ooh_deg, 0.0)
    h2 = _place(h1, o1, o2, r_oh, ooh_deg, dihedral_deg)
    return [o1, o2, h1, h2]


def _formic_acid(r_co, r_c_o, r_ch, r_oh, oco, hco, coh):
    c, o1 = np.array([0.0, 0.0, 0.0]), np.array([r_co, 0.0, 0.0])
    o2 = _place([0, 1, 0], o1, c, r_c_o, oco, 0.0)
    hc = _place(o2, o1, c, r_ch, hco, 180.0)
    ho = _place(o1, c, o2, r_oh, coh, 0.0)  # H-O-C=O syn (the stable rotamer)
    return [c, o1, o2, hc, ho]


def _methanol(r_co, r_oh, r_ch, coh, hco):
    c, o = np.array([0.0, 0.0, 0.0]), np.array([r_co, 0.0, 0.0])
    ho = _place([0, 1, 0], c, o, r_oh, coh, 0.0)
    hs = [_place(ho, o, c, r_ch, hco, d) for d in (180.0, 60.0, -60.0)]
    return [c, o, ho, *hs]


def _ethanol(r_cc, r_co, r_oh, r_ch, cco, coh, hcc):
    c1, c2 = np.array([0.0, 0.0, 0.0]), np.array([r_cc, 0.0, 0.0])
    o = _place([0, 1, 0], c1, c2, r_co, cco, 0.0)
    ho = _place(c1, c2, o, r_oh, coh, 180.0)
    methyl = [_place(o, c2, c1, r_ch, hcc, d) for d in (180.0, 60.0, -60.0)]
    methylene = [_place(o, c1, c2, r_ch, hcc, d) for d in (120.0, -120.0)]
    return [c1, c2, o, ho, *methyl, *methylene]


# ---------------------------------------------------------------------------------------------
# library
# ---------------------------------------------------------------------------------------------
# the record type is the package's own (ecatlab.molecules.GasRecord)
from ecatlab.molecules import GasRecord  # noqa: E402


def _record(formula, symbols, positions, freqs, spin, source=_CCCBDB) -> GasRecord:
    pos = tuple(tuple(float(x) for x in p) for p in np.asarray(positions, dtype=float))
    return GasRecord(formula, tuple(symbols), pos, tuple(float(f) for f in freqs), spin, source)


RECORDS: dict[str, GasRecord] = {
    r.formula: r
    for r in [
        _record("H2", "HH", _diatomic(0.7414), [4161], 1, "r = 0.7414 A, fundamental 4161 cm^-1 (Huber & Herzberg via NIST CCCBDB; from memory)"),
        _record("O2", "OO", _diatomic(1.2075), [1556], 3, "r = 1.2075 A, fundamental 1556 cm^-1, triplet ground state (Huber & Herzberg via NIST CCCBDB; from memory)"),
        _record("N2", "NN", _diatomic(1.0977), [2330], 1, "r = 1.0977 A, fundamental 2330 cm^-1 (Huber & Herzberg via NIST CCCBDB; from memory)"),
        _record("CO", "CO", _diatomic(1.1283), [2143], 1, "r = 1.1283 A, fundamental 2143 cm^-1 (Huber & Herzberg via NIST CCCBDB; from memory)"),
        _record("CO2", "OCO", [[0, 0, -1.1600], [0, 0, 0], [0, 0, 1.1600]], [1333, 667, 667, 2349], 1,
                "r = 1.160 A; 1333 (Fermi-resonance centre), 667 (x2), 2349 cm^-1 (" + _CCCBDB + ")"),
        _record("H2O", ["O", "H", "H"], _bent_triatomic(0.9578, 104.48), [3657, 1595, 3756], 1,
                "r = 0.9578 A, HOH 104.48 deg; 3657, 1595, 3756 cm^-1 (" + _CCCBDB + ")"),
        _record("H2O2", ["O", "O", "H", "H"], _hydrogen_peroxide(1.475, 0.950, 94.8, 111.5), [3599, 1402, 877, 371, 3608, 1266], 1,
                "OO 1.475, OH 0.950 A, OOH 94.8, HOOH 111.5 deg; Shimanouchi fundamentals (" + _CCCBDB + ")"),
        _record("HCOOH", ["C", "O", "O", "H", "H"], _formic_acid(1.202, 1.343, 1.097, 0.972, 124.9, 124.1, 106.3),
                [3570, 2943, 1770, 1387, 1229, 1105, 625, 1033, 638], 1,
                "C=O 1.202, C-O 1.343, CH 1.097, OH 0.972 A; Shimanouchi fundamentals (" + _CCCBDB + ")"),
        _record("CH4", ["C", "H", "H", "H", "H"], _tetrahedron(1.087), [2917, 1534, 1534, 3019, 3019, 3019, 1306, 1306, 1306], 1,
                "CH 1.087 A (Td); 2917, 1534 (x2), 3019 (x3), 1306 (x3) cm^-1 (" + _CCCBDB + ")"),
        _record("CH3OH", ["C", "O", "H", "H", "H", "H"], _methanol(1.427, 0.956, 1.094, 108.5, 109.5),
                [3681, 3000, 2844, 1477, 1455, 1345, 1060, 1033, 2960, 1477, 1165, 200], 1,
                "CO 1.427, OH 0.956, CH 1.094 A; Shimanouchi fundamentals, torsion 200 cm^-1 treated as a harmonic mode "
                "(" + _CCCBDB + ")"),
        _record("NH3", ["N", "H", "H", "H"], _pyramid(1.012, 106.7), [3337, 950, 3444, 3444, 1627, 1627], 1,
                "NH 1.012 A, HNH 106.7 deg; 3337, 950 (inversion doublet centre), 3444 (x2), 1627 (x2) cm^-1 (" + _CCCBDB + ")"),
        _record("C2H4", ["C", "C", "H", "H", "H", "H"], _ethylene(1.339, 1.086, 121.2),
                [3026, 1623, 1342, 1023, 3103, 1236, 949, 943, 3106, 826, 2989, 1444], 1,
                "CC 1.339, CH 1.086 A, HCC 121.2 deg; Shimanouchi fundamentals (" + _CCCBDB + ")"),
        _record("C2H5OH", ["C", "C", "O", "H", "H", "H", "H", "H", "H"], _ethanol(1.512, 1.431, 0.971, 1.090, 107.8, 105.4, 110.5),
                [3676, 2989, 2939, 2887, 1490, 1452, 1394, 1320, 1241, 1089, 1033, 885, 419,
                 2985, 2950, 1446, 1275, 1117, 812, 243, 201], 1,
                "trans-ethanol, approximate: CC 1.512, CO 1.431, OH 0.971 A; fundamentals approximate, from memory, "
                "torsions treated as harmonic modes -- check before quantitative use"),
    ]
}




def build() -> dict:
    rows = [
        {"formula": r.formula, "symbols": list(r.symbols), "positions_angstrom": [list(p) for p in r.positions_angstrom],
         "frequencies_cm": list(r.frequencies_cm), "spin_multiplicity": r.spin_multiplicity, "source": r.source}
        for r in RECORDS.values()
    ]
    return {
        "schema": "ecatlab.gas-library/1",
        "description": "Built-in gas molecules: Cartesian geometry (angstrom, built from the bond lengths and angles named in each source), "
                       "fundamental vibrational frequencies (cm^-1, degenerate modes repeated) and spin multiplicity 2S+1. "
                       "Rotational symmetry numbers are not stored: they are detected from the geometry.",
        "units": {"positions_angstrom": "angstrom", "frequencies_cm": "cm^-1"},
        "molecules": rows,
    }


if __name__ == "__main__":
    OUT.write_text(json.dumps(build(), indent=1), encoding="utf-8")
    print(f"wrote {OUT}")
