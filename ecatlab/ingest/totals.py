"""Electronic adsorption energies from DFT total energies.

For an adsorbate X* on a surface, with reference-molecule coefficients ``n_i`` of X's composition
(from :meth:`ecatlab.references.ReferenceScheme.balance`, the same balance the CHE engine uses):

    E_ads(X*) = E_tot(slab + X) - E_tot(slab) - sum_i n_i E_tot(ref_i)          [eV]

``E_tot(ref_i)`` is the DFT total energy of the isolated reference molecule (H2O(l) uses the DFT
energy of an isolated water molecule; the liquid enters through the thermochemical corrections).

Input table (CSV or DataFrame), one row per calculation, energies in eV:

==============  =====================================================================
column          meaning
==============  =====================================================================
surface         surface name; empty for gas molecules
species         ``OOH*`` (adsorbate on the surface), ``*`` (the clean slab), ``H2(g)``
                or ``H2O(g)`` / ``H2O(l)`` (molecule; matched to a reference by formula)
total_energy    DFT total energy, eV
ZPE, CpdT, TS   optional adsorbate corrections (eV), passed through
other columns   kept as provenance (e.g. ``source``)
==============  =====================================================================
"""

from __future__ import annotations

import math
import os
from typing import Iterable, Mapping

import numpy as np
import pandas as pd

from ecatlab.errors import IngestError, NotationError, ReferenceSchemeError

__all__ = ["adsorption_energy", "adsorption_energies", "reference_totals_by_key"]

_TOTAL_COLUMN = "total_energy"


def _scheme(references):
    from ecatlab.references import ReferenceScheme

    if references is None:
        return ReferenceScheme()
    if isinstance(references, ReferenceScheme):
        return references
    return ReferenceScheme(tuple(references))


def adsorption_energy(
    total_energy: float,
    slab_energy: float,
    elements: Mapping[str, float],
    molecule_energies: Mapping[str, float],
    references=None,
    *,
    where: str = "<input>",
) -> tuple[float, dict[str, float]]:
    """Electronic adsorption energy of one adsorbate.

    ``E_ads = E_total - E_slab - sum_i n_i E_ref_i`` (all eV).

    Parameters
    ----------
    total_energy : float
        Total energy of slab + adsorbate, eV.
    slab_energy : float
        Total energy of the clean slab, eV.
    elements : mapping
        Element counts of the adsorbate.
    molecule_energies : mapping
        DFT total energies (eV) of the reference molecules, by reference key (``"H2(g)"``).
    references : ReferenceScheme or list of str, optional
    where : str
        Name of the file/row used in error messages.

    Returns
    -------
    (float, dict)
        The adsorption energy in eV and the reference coefficients used.
    """
    scheme = _scheme(references)
    try:
        coefficients = scheme.balance(elements)
    except ReferenceSchemeError as exc:
        raise IngestError(where, f"adsorbate composition {dict(elements)} cannot be built from the references: {exc}") from None
    missing = [k for k, n in coefficients.items() if abs(n) > 0 and k not in molecule_energies]
    if missing:
        raise IngestError(
            where,
            f"needs the DFT total energy of reference molecule(s) {', '.join(missing)}; "
            "add a row for each (species e.g. 'H2O(g)', empty surface) or a gas/<formula>/ folder",
        )
    e = float(total_energy) - float(slab_energy) - sum(n * float(molecule_energies[k]) for k, n in coefficients.items() if abs(n) > 0)
    return e, coefficients


def reference_totals_by_key(molecule_totals: Mapping[str, float], references=None) -> dict[str, float]:
    """Map molecule DFT energies given by any name with a formula (``"H2O"``, ``"H2O(g)"``) to the
    reference keys of the scheme with the same formula (``"H2O(l)"``)."""
    from ecatlab.notation import Species

    scheme = _scheme(references)
    by_formula = {Species.parse(r).formula: r for r in scheme.references}
    out: dict[str, float] = {}
    for name, value in molecule_totals.items():
        text = str(name).strip()
        formula = text.split("(")[0]
        if formula in by_formula:
            out[by_formula[formula]] = float(value)
    return out


def _read_table(source) -> tuple[pd.DataFrame, str, list[str]]:
    if isinstance(source, pd.DataFrame):
        frame = source.copy()
        return frame.reset_index(drop=True), "<DataFrame>", [f"row {i!r}" for i in source.index]
    path = os.fspath(source)
    if not os.path.isfile(path):
        raise IngestError(path, "file not found; give a CSV with columns surface, species, total_energy")
    try:
        frame = pd.read_csv(path, dtype=str, keep_default_na=False, skipinitialspace=True, comment="#")
    except (pd.errors.ParserError, UnicodeDecodeError) as exc:
        raise IngestError(path, f"not a readable CSV table ({str(exc).strip()})") from None
    return frame, path, [f"data row {i + 1}" for i in range(len(frame))]


def adsorption_energies(source, references=None) -> pd.DataFrame:
    """Electronic adsorption energies from a table of total energies.

    Parameters
    ----------
    source : path or DataFrame
        Long table with ``surface``, ``species``, ``total_energy`` (eV); see the module docstring.
    references : ReferenceScheme or list of str, optional
        Reference molecules (default H2(g), H2O(l), CO2(g), N2(g)).

    Returns
    -------
    DataFrame
        ``surface``, ``species`` (key), ``E`` (eV) and the input's other columns (provenance),
        one row per adsorbate, ready for :func:`ecatlab.energies.read_energies` once ZPE, CpdT
        and TS are present.

    Raises
    ------
    IngestError
        Naming the file and row: missing columns, bad numbers, unknown species, missing clean
        slab or reference molecule, a composition the references cannot build.
    """
    from ecatlab.notation import Species

    scheme = _scheme(references)
    frame, label, rows = _read_table(source)
    cols = {str(c).strip().lower(): c for c in frame.columns}
    missing = [c for c in ("surface", "species", _TOTAL_COLUMN) if c not in cols]
    if missing:
        raise IngestError(label, f"missing column(s) {missing}; found {list(frame.columns)}")
    frame = frame.rename(columns={cols["surface"]: "surface", cols["species"]: "species", cols[_TOTAL_COLUMN]: _TOTAL_COLUMN})
    surfaces = frame["surface"].astype(str).str.strip().replace({"nan": "", "None": ""})
    totals = pd.to_numeric(frame[_TOTAL_COLUMN].astype(str).str.strip(), errors="coerce").to_numpy(dtype=float)
    bad = ~np.isfinite(totals)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise IngestError(label, f"{rows[i]}, column total_energy: {frame[_TOTAL_COLUMN].iloc[i]!r} is not a finite number of eV")

    parsed: list[Species] = []
    for i, text in enumerate(frame["species"].astype(str).str.strip()):
        try:
            parsed.append(Species.parse(text))
        except NotationError as exc:
            raise IngestError(label, f"{rows[i]}, column species: {exc}") from None

    molecule_totals: dict[str, float] = {}
    slabs: dict[str, tuple[float, int]] = {}
    for i, sp in enumerate(parsed):
        if sp.is_molecule:
            key = sp.formula
            if key in molecule_totals and not math.isclose(molecule_totals[key], totals[i]):
                raise IngestError(label, f"{rows[i]}: two different total energies for molecule {sp.formula}; keep one")
            molecule_totals[key] = float(totals[i])
        elif sp.is_site:
            s = surfaces.iloc[i]
            if not s:
                raise IngestError(label, f"{rows[i]}: clean-slab row '*' needs a surface name")
            if s in slabs:
                raise IngestError(label, f"{rows[i]}: second clean-slab row for surface {s!r}; keep one")
            slabs[s] = (float(totals[i]), i)
        elif not sp.is_adsorbate:
            raise IngestError(label, f"{rows[i]}, column species: {sp.key} is neither an adsorbate (X*), the clean slab (*) nor a molecule")
    reference_totals = reference_totals_by_key(molecule_totals, scheme)

    out_rows = []
    extra_cols = [c for c in frame.columns if c not in ("surface", "species", _TOTAL_COLUMN)]
    for i, sp in enumerate(parsed):
        if not sp.is_adsorbate:
            continue
        s = surfaces.iloc[i]
        if not s:
            raise IngestError(label, f"{rows[i]}: adsorbate {sp.key} has no surface name")
        if s not in slabs:
            raise IngestError(label, f"{rows[i]}: no clean-slab row (species '*') for surface {s!r}; add its total energy")
        e, _ = adsorption_energy(
            totals[i], slabs[s][0], sp.elements, reference_totals, scheme, where=f"{label}, {rows[i]} ({s}, {sp.key})"
        )
        row = {"surface": s, "species": sp.key, "E": e}
        for c in extra_cols:
            row[c] = frame[c].iloc[i]
        out_rows.append(row)
    if not out_rows:
        raise IngestError(label, "no adsorbate rows (species ending in '*') found")
    return pd.DataFrame(out_rows)
