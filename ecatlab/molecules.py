"""Built-in gas-molecule library and the thermochemical corrections of reference molecules.

Every molecule has a geometry (built from bond lengths and angles), a spin multiplicity and
its fundamental vibrational frequencies (cm^-1). Values are experimental ones as tabulated in
NIST CCCBDB (geometries; experimental fundamentals going back to Shimanouchi's tables and, for
diatomics, Huber & Herzberg), **written here from memory** and rounded to the digits shown; the
``source`` field of each record says so. They are good to a few cm^-1 and about 0.005 angstrom,
which moves ZPE by < 0.002 eV and S(298 K) by < 0.1 J/mol/K for the small molecules (checked in
the tests against the cantera gri30 NASA polynomials).

The rotational symmetry number and linearity of each molecule are *not* stored: they are
detected from the geometry with pymatgen's ``PointGroupAnalyzer`` (see
:func:`ecatlab.thermochemistry.detect_rotational_symmetry`) and can be overridden.

Liquid references (``"H2O(l)"``) are treated as the ideal gas at the liquid's vapour pressure,
where liquid and vapour have the same chemical potential: water at 0.035 bar, about its vapour
pressure at 298.15 K (common practice in CHE work, e.g. Norskov et al., J. Phys. Chem. B 108,
17886 (2004)). The pressure is an argument and is reported in every table.
"""

from __future__ import annotations

import math
import re
import warnings
from dataclasses import dataclass, replace
from functools import lru_cache
from typing import Iterable, Mapping, Sequence

import numpy as np

from ecatlab.constants import STANDARD_TEMPERATURE
from ecatlab.errors import CorrectionWarning, ThermochemistryError
from ecatlab.thermochemistry import (
    IdealGasMolecule,
    LowFrequencyTreatment,
    RotationalSymmetry,
    detect_rotational_symmetry,
)

__all__ = [
    "GasRecord",
    "GAS_LIBRARY",
    "gas_record",
    "gas_molecule",
    "available_gases",
    "DEFAULT_WATER_VAPOUR_PRESSURE_BAR",
    "water_vapour_pressure_bar",
    "water_pressure_convention_bar",
    "reference_corrections",
]

#: Water vapour pressure used for H2O(l) by default, bar (0.035 bar; common practice, CHE papers).
DEFAULT_WATER_VAPOUR_PRESSURE_BAR: float = 0.035

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
@dataclass(frozen=True)
class GasRecord:
    """Stored data of one gas molecule.

    Attributes
    ----------
    formula : str
        Name used as library key (``"H2O"``).
    symbols : tuple of str
    positions_angstrom : tuple of (x, y, z)
        Cartesian geometry, angstrom.
    frequencies_cm : tuple of float
        Fundamental vibrational frequencies, cm^-1 (degenerate modes repeated).
    spin_multiplicity : int
        2S + 1.
    source : str
        Where geometry and frequencies come from.
    """

    formula: str
    symbols: tuple[str, ...]
    positions_angstrom: tuple[tuple[float, float, float], ...]
    frequencies_cm: tuple[float, ...]
    spin_multiplicity: int
    source: str


def _record(formula, symbols, positions, freqs, spin, source=_CCCBDB) -> GasRecord:
    pos = tuple(tuple(float(x) for x in p) for p in np.asarray(positions, dtype=float))
    return GasRecord(formula, tuple(symbols), pos, tuple(float(f) for f in freqs), spin, source)


GAS_LIBRARY: dict[str, GasRecord] = {
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


def available_gases() -> list[str]:
    """Names of the molecules in the built-in library."""
    return sorted(GAS_LIBRARY)


def _formula_of(name: str) -> tuple[str, str | None]:
    """Split ``"H2O(l)"`` into ``("H2O", "l")``; ``"CO2"`` gives ``("CO2", None)``."""
    m = re.fullmatch(r"\s*([A-Za-z0-9]+)\s*(?:\((g|l|aq)\))?\s*", str(name))
    if not m:
        raise ThermochemistryError(f"cannot read gas name {name!r}; write a formula such as 'H2O' or 'H2O(l)'")
    return m.group(1), m.group(2)


def gas_record(name: str) -> GasRecord:
    """The stored record of a library molecule (``"H2O"``, ``"H2O(g)"`` or ``"H2O(l)"``)."""
    formula, _ = _formula_of(name)
    try:
        return GAS_LIBRARY[formula]
    except KeyError:
        raise ThermochemistryError(
            f"no gas molecule {formula!r} in the built-in library; known: {', '.join(available_gases())}. "
            "Build your own with IdealGasMolecule.from_geometry."
        ) from None


def gas_molecule(
    name: str,
    *,
    symmetry_number: int | None = None,
    linear: bool | None = None,
    low_frequency: LowFrequencyTreatment | str | None = None,
) -> IdealGasMolecule:
    """Ideal-gas model of a library molecule, symmetry detected from its geometry unless given.

    Parameters
    ----------
    name : str
        Library formula, optionally with a phase tag (ignored here).
    symmetry_number, linear : optional
        Overrides of the detected values.
    low_frequency : optional
        Treatment of soft modes (default harmonic).
    """
    rec = gas_record(name)
    if symmetry_number is None or linear is None:
        detected = _library_symmetry(rec.formula)
        symmetry_number = detected.symmetry_number if symmetry_number is None else symmetry_number
        linear = detected.linear if linear is None else linear
        if symmetry_number == detected.symmetry_number and linear == detected.linear:
            return _with_symmetry(rec, detected, low_frequency)
    return IdealGasMolecule.from_geometry(
        rec.formula,
        rec.symbols,
        rec.positions_angstrom,
        rec.frequencies_cm,
        "cm^-1",
        spin_multiplicity=rec.spin_multiplicity,
        symmetry_number=symmetry_number,
        linear=linear,
        low_frequency=low_frequency,
    )


@lru_cache(maxsize=None)
def _library_symmetry(formula: str) -> RotationalSymmetry:
    rec = GAS_LIBRARY[formula]
    return detect_rotational_symmetry(rec.symbols, rec.positions_angstrom)


def _with_symmetry(rec: GasRecord, symmetry: RotationalSymmetry, low_frequency) -> IdealGasMolecule:
    model = IdealGasMolecule.from_geometry(
        rec.formula, rec.symbols, rec.positions_angstrom, rec.frequencies_cm, "cm^-1",
        spin_multiplicity=rec.spin_multiplicity, symmetry_number=symmetry.symmetry_number,
        linear=symmetry.linear, low_frequency=low_frequency,
    )
    return replace(model, symmetry=symmetry)


def water_vapour_pressure_bar(temperature) -> float | np.ndarray:
    """Vapour pressure of liquid water from the Antoine equation, bar.

    ``log10(p / bar) = A - B / (T / K + C)`` with A = 4.6543, B = 1435.264, C = -64.848
    (Bridgeman & Aldrich 1964, as listed in the NIST Chemistry WebBook for 255.9-373 K; from
    memory). Gives 0.0318 bar at 298.15 K; the CHE convention rounds up to 0.035 bar. Within
    3 % of IAPWS-95 between 280 and 360 K (4 % at 275 K; tested against ``chemicals``).

    Parameters
    ----------
    temperature : float or array_like
        K, 255.9 to 373 K.
    """
    t = np.asarray(temperature, dtype=float)
    if np.any(~np.isfinite(t)) or np.any(t < 255.9) or np.any(t > 373.2):
        raise ThermochemistryError(f"water Antoine equation valid for 255.9-373.15 K only (liquid water at 1 bar), got {temperature!r}")
    p = 10.0 ** (4.6543 - 1435.264 / (t - 64.848))
    return float(p) if p.ndim == 0 else p


def water_pressure_convention_bar(temperature) -> float:
    """Pressure of water vapour that stands for H2O(l) in the CHE convention, bar.

    0.035 bar at 298.15 K (common practice in CHE work, e.g. Norskov et al., J. Phys. Chem. B 108,
    17886 (2004)), scaled at other temperatures with the ratio of Antoine vapour pressures,
    ``0.035 bar * p_sat(T) / p_sat(298.15 K)`` (:func:`water_vapour_pressure_bar`), so that the
    liquid's temperature dependence (its entropy, via the vapour-pressure curve) enters and the
    value is continuous in T.
    """
    t = float(temperature)
    if abs(t - STANDARD_TEMPERATURE) < 1e-9:
        return DEFAULT_WATER_VAPOUR_PRESSURE_BAR
    return float(DEFAULT_WATER_VAPOUR_PRESSURE_BAR * water_vapour_pressure_bar(t) / water_vapour_pressure_bar(STANDARD_TEMPERATURE))


def reference_corrections(
    keys: Iterable[str],
    temperature: float = STANDARD_TEMPERATURE,
    *,
    pressure_bar: float | Mapping[str, float] = 1.0,
    water_vapour_pressure_bar: float | str | None = "convention",
    symmetry_numbers: Mapping[str, int] | None = None,
):
    """ZPE, CpdT and TS (eV) of reference molecules at a temperature and pressure.

    ``G(ref) = E_DFT(ref) + ZPE + CpdT - TS``; gases at ``pressure_bar``; a liquid (``"(l)"``)
    as its vapour at the vapour pressure (water only, ``water_vapour_pressure_bar``).

    Parameters
    ----------
    keys : iterable of str
        Species keys such as ``"H2(g)"``, ``"H2O(l)"``, ``"CO2(g)"``.
    temperature : float
        K.
    pressure_bar : float or mapping
        Partial pressure of gases in bar (default 1 bar = standard state), or per key.
    water_vapour_pressure_bar : "convention", float or None
        Pressure at which H2O(l) is evaluated, bar. ``"convention"`` (default):
        :func:`water_pressure_convention_bar` (0.035 bar at 298.15 K, following the vapour pressure
        at other T). A number: that pressure (a :class:`~ecatlab.errors.CorrectionWarning` is issued if
        it is used more than 1 K from 298.15 K). ``None``: the Antoine vapour pressure at ``temperature``.
    symmetry_numbers : mapping, optional
        Overrides of detected rotational symmetry numbers, by formula.

    Returns
    -------
    pandas.DataFrame
        Indexed by key; columns ``ZPE``, ``CpdT``, ``TS``, ``G_correction`` (eV), ``pressure_bar``,
        ``temperature_K``, ``S_J_per_mol_K``, ``point_group``, ``symmetry_number``, ``treatment``.
    """
    import pandas as pd

    t = float(temperature)
    if not (math.isfinite(t) and t > 0):
        raise ThermochemistryError(f"temperature must be a positive number of kelvin, got {temperature!r}")
    rows = []
    for key in keys:
        formula, phase = _formula_of(key)
        if phase == "l":
            if formula != "H2O":
                raise ThermochemistryError(
                    f"{key}: only liquid water has a built-in liquid treatment; reference {formula} as a gas "
                    f"('{formula}(g)') or give its free energy directly"
                )
            if water_vapour_pressure_bar is None:
                p = water_vapour_pressure_bar_at(t)
                treatment = f"liquid as vapour at {p:.4g} bar (Antoine, {t:g} K)"
            elif isinstance(water_vapour_pressure_bar, str):
                if water_vapour_pressure_bar != "convention":
                    raise ThermochemistryError(
                        f"water_vapour_pressure_bar must be 'convention', a number of bar or None, got {water_vapour_pressure_bar!r}"
                    )
                p = water_pressure_convention_bar(t)
                treatment = f"liquid as vapour at {p:.4g} bar (CHE convention, {t:g} K)"
            else:
                p = float(water_vapour_pressure_bar)
                if not (math.isfinite(p) and p > 0):
                    raise ThermochemistryError(f"water_vapour_pressure_bar must be a positive number of bar, got {p!r}")
                if abs(t - STANDARD_TEMPERATURE) > 1.0:
                    warnings.warn(
                        f"H2O(l) is referenced through {p:g} bar of vapour, a 298.15 K value, at T = {t:g} K; "
                        "pass water_vapour_pressure_bar=None to use the vapour pressure at this temperature",
                        CorrectionWarning,
                        stacklevel=2,
                    )
                treatment = f"liquid as vapour at {p:g} bar"
        elif phase == "aq":
            raise ThermochemistryError(f"{key}: no built-in treatment for dissolved species; give their free energy directly")
        else:
            p = float(pressure_bar.get(key, 1.0)) if isinstance(pressure_bar, Mapping) else float(pressure_bar)
            treatment = f"ideal gas at {p:g} bar"
        sigma = (symmetry_numbers or {}).get(formula)
        model = gas_molecule(formula, symmetry_number=sigma)
        corr = model.correction(t, p)
        rows.append(
            {
                "key": key,
                "ZPE": corr.zpe,
                "CpdT": corr.heat_integral,
                "TS": corr.ts,
                "G_correction": corr.free_energy_correction,
                "temperature_K": t,
                "pressure_bar": p,
                "S_J_per_mol_K": corr.as_dict()["S_J_per_mol_K"],
                "point_group": model.symmetry.point_group,
                "symmetry_number": model.symmetry.symmetry_number,
                "treatment": treatment,
            }
        )
    return pd.DataFrame(rows).set_index("key").rename_axis(None)


#: Alias used inside :func:`reference_corrections`, whose argument shadows the function name.
water_vapour_pressure_bar_at = water_vapour_pressure_bar
