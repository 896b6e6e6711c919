"""Energy tables: adsorption free energies of adsorbates on surfaces.

An energy table has one row per (surface, adsorbate) and, per row, either

* ``G``: the adsorption free energy in eV relative to the clean surface and the reference
  molecules of the :class:`~ecatlab.references.ReferenceScheme`; or
* ``E``: the electronic adsorption energy in eV against the same references, with the adsorbate's
  own corrections ``ZPE``, ``CpdT`` (integral of Cp dT from 0 K), ``TS`` (T times entropy) and
  optionally ``solvation`` (all eV). ecatlab then computes

      G = E + (ZPE + CpdT - TS + solvation)_adsorbate - sum_i n_i (ZPE + CpdT - TS)_ref_i

  where ``n_i`` are the reference-molecule coefficients of the adsorbate's composition, so the
  references' corrections are subtracted exactly once. The table's :attr:`EnergyTable.notes` say
  which rows were converted and with which reference corrections.

Headers are case-insensitive. Other columns (e.g. ``source``) are kept as provenance.
"""

from __future__ import annotations

import io
import os
from dataclasses import dataclass, field
from functools import cached_property
from typing import Iterable, Mapping

import numpy as np
import pandas as pd

from ecatlab.errors import EnergyTableError, NotationError, ReferenceSchemeError
from ecatlab.notation import Species
from ecatlab.references import ReferenceScheme

__all__ = ["EnergyTable", "read_energies", "as_energy_table", "ENERGY_COLUMNS"]

#: Recognised columns (lower-case) and their meaning; units eV.
ENERGY_COLUMNS: dict[str, str] = {
    "surface": "surface / site name (text)",
    "species": "adsorbate in ecatlab notation, e.g. OOH* (text)",
    "g": "adsorption free energy vs clean surface and reference molecules (eV)",
    "e": "electronic adsorption energy vs clean surface and reference molecules (eV)",
    "zpe": "zero-point energy of the adsorbate (eV); only with E",
    "cpdt": "integral of Cp dT from 0 K to T of the adsorbate (eV); only with E",
    "ts": "temperature times entropy of the adsorbate (eV); only with E",
    "solvation": "solvation correction of the adsorbate (eV); only with E; empty = 0",
}
_CANONICAL = {"surface": "surface", "species": "species", "g": "G", "e": "E", "zpe": "ZPE", "cpdt": "CpdT", "ts": "TS", "solvation": "solvation"}
_CORRECTIONS = ("ZPE", "CpdT", "TS", "solvation")


@dataclass(frozen=True)
class EnergyTable:
    """Validated adsorption free energies, one value per (surface, adsorbate).

    Attributes
    ----------
    frame : DataFrame
        Long table: ``surface``, ``species`` (canonical key), ``G`` (eV), ``G_origin`` (``"G given"``
        or ``"from E + corrections"``), ``location`` (file line or frame row) and any extra input
        columns.
    scheme : ReferenceScheme
        References against which all energies are given.
    source : str
        File name or ``"<DataFrame>"``.
    notes : tuple of str
        What was computed or assumed while reading.
    """

    frame: pd.DataFrame = field(repr=False)
    scheme: ReferenceScheme = field(repr=False)
    source: str = "<DataFrame>"
    notes: tuple[str, ...] = ()

    # -- constructors ------------------------------------------------------------------------------
    @classmethod
    def from_matrix(cls, matrix: pd.DataFrame | Mapping, scheme: ReferenceScheme | None = None, source: str = "<matrix>") -> "EnergyTable":
        """Build from a wide table: index = surfaces, columns = adsorbate keys, values = G (eV).

        NaN cells mean "not computed" and are left out (pathways needing them report them missing).
        """
        wide = pd.DataFrame(matrix)
        wide.index = wide.index.map(str)
        wide.index.name = "surface"
        long = wide.stack(future_stack=True).rename("G").reset_index()
        long.columns = ["surface", "species", "G"]
        long = long[np.isfinite(long["G"].to_numpy(dtype=float))]
        return read_energies(long, references=scheme, name=source)

    # -- access ------------------------------------------------------------------------------------
    @property
    def surfaces(self) -> list[str]:
        """Surface names in order of first appearance."""
        return list(self._surface_list)

    @cached_property
    def _surface_list(self) -> list[str]:
        return list(self._wide.index)

    @property
    def species(self) -> list[str]:
        """Adsorbate keys in order of first appearance."""
        return list(self._wide.columns)

    @property
    def matrix(self) -> pd.DataFrame:
        """Wide table of G (eV): index surfaces, columns adsorbate keys; NaN where not given (a copy)."""
        return self._wide.copy()

    @cached_property
    def _wide(self) -> pd.DataFrame:
        rows, surfaces = _codes(self.frame["surface"])
        cols, species = _codes(self.frame["species"])
        surfaces, species = pd.Index(surfaces, name="surface", dtype=object), pd.Index(species, name="species", dtype=object)
        values = np.full((len(surfaces), len(species)), np.nan)
        values[rows, cols] = self.frame["G"].to_numpy(dtype=float)
        return pd.DataFrame(values, index=surfaces, columns=species)

    def values(self, surfaces: Iterable[str] | None, species: Iterable[str]) -> np.ndarray:
        """G (eV) as a float array (n_surfaces, n_species), NaN where missing (``surfaces=None``: all)."""
        wide = self._wide
        species = list(species)
        if surfaces is None or surfaces is self._surface_list:
            r = np.arange(len(wide.index))
        else:
            r = wide.index.get_indexer(list(surfaces))
        c = wide.columns.get_indexer(species)
        base = wide.to_numpy()
        out = np.full((len(r), len(species)), np.nan)
        ok_r, ok_c = r >= 0, c >= 0
        out[np.ix_(ok_r, ok_c)] = base[np.ix_(r[ok_r], c[ok_c])]
        return out

    def subset(self, surfaces: Iterable[str]) -> "EnergyTable":
        """The same table restricted to some surfaces (unknown names raise)."""
        wanted = list(surfaces)
        unknown = [s for s in wanted if s not in set(self.surfaces)]
        if unknown:
            raise EnergyTableError(self.source, f"unknown surface(s) {unknown}; known: {self.surfaces}")
        frame = self.frame[self.frame["surface"].isin(wanted)].copy()
        return EnergyTable(frame, self.scheme, self.source, self.notes)

    def with_values(self, updates: pd.DataFrame) -> "EnergyTable":
        """A copy where the (surface, species) -> G cells of ``updates`` (wide form) replace or add values."""
        wide = self.matrix.copy()
        for col in updates.columns:
            key = Species.parse(col).key
            for surf, val in updates[col].items():
                wide.loc[str(surf), key] = float(val)
        return EnergyTable.from_matrix(wide, self.scheme, self.source)

    @property
    def temperature(self) -> float:
        """Temperature (K) at which the table's free energies and its scheme's molecules apply."""
        return float(self.scheme.temperature)

    def at_temperature(self, temperature: float) -> "EnergyTable":
        """The same table evaluated at another temperature, K.

        Rows given as ``E`` + corrections are converted again with the reference corrections and
        molecule free energies at ``temperature``; the adsorbates' own ZPE, CpdT, TS and solvation
        are used as given (they must be the ones for ``temperature``; a note says so). Rows given
        as ``G`` are taken as given at ``temperature`` (a note says so).

        Raises
        ------
        ReferenceSchemeError
            When the scheme carries a user-given reference-correction table (valid at one
            temperature only).
        """
        from ecatlab.che.conditions import check_temperature

        t = check_temperature(temperature)
        if abs(t - self.temperature) < 1e-9:
            return self
        scheme = self.scheme.at_temperature(t)
        cols = [c for c in ("surface", "species", "G", "E", "ZPE", "CpdT", "TS", "solvation") if c in self.frame.columns]
        raw = self.frame[cols].copy()
        if "E" in raw.columns:
            from_e = raw["E"].notna().to_numpy()
            raw.loc[from_e, "G"] = np.nan
        loc_kind = "line" if "line" in self.frame.columns else "row"
        locations = _Locations(self.frame[loc_kind].to_numpy(), loc_kind) if loc_kind in self.frame.columns else _Locations(np.arange(len(raw)), "row")
        table = _validate(raw.reset_index(drop=True), locations, self.source, scheme)
        note = (
            f"re-evaluated at {t:g} K (read at {self.temperature:g} K): reference corrections and molecule free energies "
            f"at {t:g} K; adsorbate corrections and G values used as given, so they must be the ones for {t:g} K"
        )
        return EnergyTable(table.frame, scheme, self.source, tuple(table.notes) + (note,))

    def to_dict(self) -> dict:
        """Plain-data form with schema version (round-trips through :meth:`from_dict`)."""
        cols = ["surface", "species", "G"]
        return {
            "schema": "ecatlab.energies/1",
            "source": self.source,
            "rows": self.frame[cols].to_dict(orient="records"),
            "references": self.scheme.to_dict(),
            "notes": list(self.notes),
        }

    @classmethod
    def from_dict(cls, data: Mapping) -> "EnergyTable":
        if data.get("schema") != "ecatlab.energies/1":
            raise EnergyTableError(str(data.get("source", "<dict>")), f"unknown schema {data.get('schema')!r}; expected 'ecatlab.energies/1'")
        scheme = ReferenceScheme.from_dict(data["references"])
        table = read_energies(pd.DataFrame(data["rows"]), references=scheme, name=data.get("source", "<dict>"))
        return cls(table.frame, scheme, table.source, tuple(data.get("notes", ())))

    def describe(self) -> str:
        return f"{len(self.surfaces)} surfaces, {len(self.species)} adsorbates, {len(self.frame)} energies from {self.source}"

    def __repr__(self) -> str:
        return f"EnergyTable({self.describe()})"

    def _repr_html_(self) -> str:
        notes = "".join(f"<li>{n}</li>" for n in self.notes)
        return (
            f"<p><b>Energy table</b>: {self.describe()}. G in eV vs clean surface and "
            f"{', '.join(self.scheme.references)}.</p><ul>{notes}</ul>" + self.matrix.round(3).to_html()
        )


# ------------------------------------------------------------------------------------------------
def read_energies(
    source: str | os.PathLike | pd.DataFrame,
    references: ReferenceScheme | Iterable[str] | None = None,
    temperature: float | None = None,
    name: str | None = None,
) -> EnergyTable:
    """Read and validate an energy table (CSV file or DataFrame).

    Parameters
    ----------
    source : path or DataFrame
        CSV file (lines starting with ``#`` are comments) or a DataFrame with columns ``surface``,
        ``species`` and ``G`` or ``E`` (+ ``ZPE``, ``CpdT``, ``TS``, ``solvation``), energies in eV.
    references : ReferenceScheme or list of str, optional
        Reference molecules (default H2(g), H2O(l), CO2(g), N2(g)).
    temperature : float, optional
        Temperature in K for the reference corrections (default: the scheme's, 298.15 K).
    name : str, optional
        Name used in messages (default: the file name).

    Returns
    -------
    EnergyTable

    Raises
    ------
    EnergyTableError
        Naming the file, the line (files) or row label (frames), the column, and the fix.
    """
    scheme = _scheme(references, temperature)
    if isinstance(source, pd.DataFrame):
        label = name or "<DataFrame>"
        raw = source.reset_index(drop=True)  # a new frame; the caller's is never modified
        locations = _Locations(source.index.to_numpy(), "row")
    else:
        path = os.fspath(source)
        label = name or path
        raw, locations = _read_csv(path, label)
    return _validate(raw, locations, label, scheme)


def as_energy_table(
    energies,
    temperature: float | None = None,
    references: ReferenceScheme | Iterable[str] | None = None,
) -> EnergyTable:
    """The one way every analysis turns its ``energies`` argument into an :class:`EnergyTable`.

    Parameters
    ----------
    energies : EnergyTable, DataFrame or path
    temperature : float, optional
        Temperature (K) of the analysis. A file or frame is read at it; an :class:`EnergyTable`
        read at another temperature is re-evaluated with :meth:`EnergyTable.at_temperature` and a
        :class:`~ecatlab.errors.ConditionsWarning` says so. ``None``: as read (files at the scheme's
        default, 298.15 K).
    references : ReferenceScheme or list of str, optional
        Only for files and frames (an EnergyTable keeps its own scheme).
    """
    if isinstance(energies, EnergyTable):
        if temperature is None or abs(float(temperature) - energies.temperature) < 1e-9:
            return energies
        import warnings

        from ecatlab.errors import ConditionsWarning

        warnings.warn(
            f"energy table {energies.source!r} was read at {energies.temperature:g} K and is re-evaluated at "
            f"{float(temperature):g} K (reference corrections and molecules recomputed; adsorbate corrections used as given)",
            ConditionsWarning,
            stacklevel=3,
        )
        return energies.at_temperature(temperature)
    return read_energies(energies, references=references, temperature=temperature)


def _codes(column: pd.Series) -> tuple[np.ndarray, list]:
    """Integer codes and distinct values of a column, in order of first appearance."""
    if isinstance(column.dtype, pd.CategoricalDtype):
        codes = column.cat.codes.to_numpy()
        cats = list(column.cat.categories)
        used, first = np.unique(codes, return_index=True)
        order = used[np.argsort(first)]
        remap = np.full(len(cats), -1, dtype=np.int64)
        remap[order] = np.arange(len(order))
        return remap[codes], [cats[i] for i in order]
    codes, uniques = pd.factorize(column)
    return codes, list(uniques)


class _Locations:
    """Row locations for messages: file line numbers or DataFrame index labels, formatted lazily."""

    def __init__(self, labels: np.ndarray, kind: str):
        self.labels = np.asarray(labels)
        self.kind = kind  # "line" (file line number) or "row" (DataFrame index label)

    def _fmt(self, value) -> str:
        return f"line {value}" if self.kind == "line" else f"row {value!r}"

    def __getitem__(self, item):
        picked = self.labels[item]
        if np.ndim(picked) == 0:
            return self._fmt(picked.item() if hasattr(picked, "item") else picked)
        return [self._fmt(v.item() if hasattr(v, "item") else v) for v in picked]


def _scheme(references, temperature) -> ReferenceScheme:
    if isinstance(references, ReferenceScheme):
        if temperature is not None and abs(float(temperature) - references.temperature) > 1e-9:
            return references.at_temperature(float(temperature))  # keeps overrides; refuses user corrections
        return references
    kwargs = {}
    if references is not None:
        kwargs["references"] = tuple(references)
    if temperature is not None:
        kwargs["temperature"] = float(temperature)
    return ReferenceScheme(**kwargs)


def _read_csv(path: str, label: str) -> tuple[pd.DataFrame, "_Locations"]:
    if not os.path.exists(path):
        raise EnergyTableError(label, "file not found; check the path")
    if os.path.isdir(path):
        raise EnergyTableError(label, "is a folder; give the CSV file (for DFT output folders use 'ecatlab ingest')")
    try:
        with open(path, encoding="utf-8-sig") as fh:
            lines = fh.read().splitlines()
    except UnicodeDecodeError:
        raise EnergyTableError(label, "is not a UTF-8 text file; save the table as CSV (UTF-8)") from None
    kept, linenos = [], []
    for i, line in enumerate(lines, start=1):
        if not line.strip() or line.lstrip().startswith("#"):
            continue
        kept.append(line)
        linenos.append(i)
    if not kept:
        raise EnergyTableError(label, "is empty; expected a header line 'surface,species,G' (or E with corrections)")
    try:
        frame = pd.read_csv(io.StringIO("\n".join(kept)), dtype=str, keep_default_na=False, skipinitialspace=True)
    except pd.errors.ParserError as exc:
        raise EnergyTableError(label, f"is not a valid CSV table ({str(exc).strip()}); check separators and quoting") from None
    if len(frame) != len(kept) - 1:
        raise EnergyTableError(label, "rows could not be matched to lines (quoted line breaks?); keep one row per line")
    return frame, _Locations(np.array(linenos[1:]), "line")


def _validate(raw: pd.DataFrame, locations: "_Locations", label: str, scheme: ReferenceScheme) -> EnergyTable:
    if raw.shape[1] == 0:
        raise EnergyTableError(label, "has no columns; expected surface, species and G or E")
    # -- headers ----------------------------------------------------------------------------
    rename, seen = {}, {}
    for col in raw.columns:
        low = str(col).strip().lower()
        if low in _CANONICAL:
            if low in seen:
                raise EnergyTableError(label, f"columns {seen[low]!r} and {col!r} are the same (headers are case-insensitive); keep one", column=str(col))
            seen[low] = col
            rename[col] = _CANONICAL[low]
    frame = raw.rename(columns=rename)
    missing = [c for c in ("surface", "species") if c not in frame.columns]
    if missing:
        raise EnergyTableError(label, f"missing column(s) {missing}; found {list(raw.columns)}; required: surface, species and G or E")
    if "G" not in frame.columns and "E" not in frame.columns:
        raise EnergyTableError(label, f"needs a column G (free energy, eV) or E (electronic energy, eV); found {list(raw.columns)}")
    if len(frame) == 0:
        raise EnergyTableError(label, "has a header but no rows")
    loc = locations

    def text_codes(name: str) -> tuple[np.ndarray, np.ndarray]:
        """(codes, distinct stripped texts) of a text column; each distinct value is cleaned once."""
        codes, uniques = pd.factorize(frame[name], use_na_sentinel=True)
        cleaned = [("" if u is None or (isinstance(u, float) and u != u) else str(u).strip()) for u in uniques]
        merged, distinct = pd.factorize(np.array(cleaned + [""], dtype=object))  # index -1 (missing) -> ""
        row_codes = merged[codes]
        used, first = np.unique(row_codes, return_index=True)  # keep used values, in order of appearance
        order = used[np.argsort(first)]
        remap = np.full(len(distinct), -1, dtype=np.int64)
        remap[order] = np.arange(len(order))
        return remap[row_codes], np.asarray(distinct, dtype=object)[order]

    # -- surfaces and species -----------------------------------------------------------------
    surface_codes, surface_names = text_codes("surface")
    bad_names = np.array([t == "" or t.lower() in ("nan", "none") for t in surface_names], dtype=bool)
    bad = bad_names[surface_codes]
    if bad.any():
        raise EnergyTableError(label, "empty surface name; give every row a surface", rows=loc[bad], column="surface")
    species_codes, species_texts = text_codes("species")
    parsed_cache: dict[str, Species] = {}
    for j, text in enumerate(species_texts):
        first = [loc[int(np.argmax(species_codes == j))]]  # the first row with this species (codes are dense)
        try:
            sp = Species.parse(text)
        except NotationError as exc:
            raise EnergyTableError(label, f"species {text!r}: {exc.reason}", rows=first, column="species") from None
        if sp.is_site:
            raise EnergyTableError(label, "the clean surface '*' is the zero of adsorption energies; remove this row", rows=first, column="species")
        if not sp.is_adsorbate:
            raise EnergyTableError(
                label,
                f"species {text!r} is not an adsorbate; adsorbates end in '*'. Free energies of molecules are set "
                "with ReferenceScheme(overrides={...})",
                rows=first,
                column="species",
            )
        parsed_cache[text] = sp
    key_codes, key_names = pd.factorize(np.array([parsed_cache[t].key for t in species_texts], dtype=object))
    species_codes = key_codes[species_codes]
    key_names = np.asarray(key_names, dtype=object)
    # reachability from references
    for k, key in enumerate(key_names):
        try:
            scheme.balance(Species.parse(key).elements)
        except ReferenceSchemeError as exc:
            raise EnergyTableError(label, f"species {key}: {exc}", rows=loc[species_codes == k], column="species") from None

    # -- numbers --------------------------------------------------------------------------------
    numeric: dict[str, np.ndarray] = {}
    for col in ("G", "E") + _CORRECTIONS:
        if col not in frame.columns:
            continue
        column = frame[col]
        if pd.api.types.is_numeric_dtype(column) and not pd.api.types.is_bool_dtype(column):
            values = column.to_numpy(dtype=float)
            not_number = np.isinf(values)
            text = column.astype(str)
        else:
            text = column.where(column.notna(), "").astype(str).str.strip()
            values = pd.to_numeric(text.where(text != "", None), errors="coerce").to_numpy(dtype=float)
            not_number = text.ne("").to_numpy() & ~np.isfinite(values)
        if not_number.any():
            examples = ", ".join(repr(v) for v in text[not_number].head(3))
            raise EnergyTableError(label, f"not a finite number ({examples}); give energies in eV as plain numbers", rows=list(loc[not_number]), column=col)
        numeric[col] = values
    n = len(frame)
    has_g = np.isfinite(numeric["G"]) if "G" in numeric else np.zeros(n, bool)
    has_e = np.isfinite(numeric["E"]) if "E" in numeric else np.zeros(n, bool)
    neither = ~has_g & ~has_e
    if neither.any():
        raise EnergyTableError(label, "no energy: fill G (free energy) or E (electronic energy), in eV", rows=list(loc[neither]), column="G" if "G" in numeric else "E")
    both = has_g & has_e
    if both.any():
        raise EnergyTableError(label, "both G and E given; give one of them per row (G already contains the corrections)", rows=list(loc[both]))
    for col in _CORRECTIONS:
        if col in numeric:
            on_g = has_g & np.isfinite(numeric[col])
            if on_g.any():
                raise EnergyTableError(
                    label,
                    f"{col} given on a row with G; G already includes corrections, so they would be counted twice. "
                    "Give E with corrections, or G alone",
                    rows=list(loc[on_g]),
                    column=col,
                )
    for col in ("ZPE", "CpdT", "TS"):
        if has_e.any() and col not in numeric:
            raise EnergyTableError(
                label,
                f"rows with E need the adsorbate's {col} column (eV) so that G = E + ZPE + CpdT - TS (+ solvation); "
                "add the column, or give G instead of E",
                rows=list(loc[has_e][:3]),
                column=col,
            )
        if col in numeric:
            empty = has_e & ~np.isfinite(numeric[col])
            if empty.any():
                raise EnergyTableError(label, f"{col} is empty on a row with E; give the adsorbate's {col} in eV (0 if truly none)", rows=list(loc[empty]), column=col)

    # -- duplicates ---------------------------------------------------------------------------------
    pair = surface_codes.astype(np.int64) * (len(key_names) + 1) + species_codes
    dup = pd.Series(pair).duplicated(keep=False).to_numpy()
    if dup.any():
        first = pair[dup][0]
        s, k = surface_names[surface_codes[dup][0]], key_names[species_codes[dup][0]]
        rows = loc[pair == first]
        raise EnergyTableError(label, f"duplicate rows for surface {s!r} and species {k!r}; keep one value per (surface, species)", rows=rows)

    # -- free energies ---------------------------------------------------------------------------------
    G = np.where(has_g, numeric.get("G", np.full(n, np.nan)), np.nan)
    notes = []
    if has_e.any():
        coef = scheme.balance_matrix([Species.parse(k) for k in key_names])  # (n_keys, n_refs)
        ref_corr = scheme.reference_correction().to_numpy(dtype=float)  # (n_refs,)
        per_key = coef @ ref_corr
        own = numeric["ZPE"] + numeric["CpdT"] - numeric["TS"]
        if "solvation" in numeric:
            own = own + np.nan_to_num(numeric["solvation"], nan=0.0)
        subtract = per_key[species_codes]
        G = np.where(has_e, numeric["E"] + own - subtract, G)
        corr_text = ", ".join(f"{r} {v:+.3f}" for r, v in scheme.reference_correction().items())
        notes.append(
            f"G computed from E for {int(has_e.sum())} rows: G = E + ZPE + CpdT - TS + solvation - "
            f"sum n_i (ZPE + CpdT - TS)_ref_i with reference corrections (eV) {corr_text} "
            f"[{scheme.correction_provenance}] at {scheme.temperature:g} K"
        )
        if "solvation" in numeric:
            empty_solv = int((has_e & ~np.isfinite(numeric["solvation"])).sum())
            if empty_solv:
                notes.append(f"solvation empty on {empty_solv} rows with E: taken as 0 eV")
    if has_g.any():
        notes.append(f"G taken as given for {int(has_g.sum())} rows")

    origin = pd.Categorical.from_codes(has_e.astype(np.int8), ["G given", "from E + corrections"])
    out = pd.DataFrame(
        {
            "surface": pd.Categorical.from_codes(surface_codes, list(surface_names)),
            "species": pd.Categorical.from_codes(species_codes, list(key_names)),
            "G": G,
            "G_origin": origin,
            loc.kind: loc.labels,
        }
    )
    for col in frame.columns:
        if col not in ("surface", "species", "G") and col not in out.columns:
            out[col] = numeric[col] if col in numeric else frame[col].to_numpy()
    return EnergyTable(out, scheme, label, tuple(notes))
