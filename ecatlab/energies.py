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

Checks on every table (each failure is one :class:`~ecatlab.errors.EnergyTableError` naming the
file, the file line or frame row, the column and the fix):

* the file is UTF-8 text (no NUL bytes, no UTF-16, no other 8-bit encoding), one row per line
  (no quoted line breaks), every row has the header's number of fields, no header twice;
* lines whose first non-blank character is ``#`` are comments, blank lines are skipped; a ``#``
  anywhere else (e.g. inside a surface name) is data. Line numbers in messages are the file's own;
* surface names are non-empty, at most :data:`MAX_NAME_LENGTH` characters, without control
  characters (echoed values are cut to a readable length);
* energies are finite numbers with ``|value| <=`` :data:`ENERGY_BOUND_EV` eV (an adsorption energy
  against gas references beyond that is a unit or reference mistake: total DFT energies, kJ/mol);
* a negative adsorbate correction ZPE, CpdT or TS gets a :class:`~ecatlab.errors.CorrectionWarning`
  naming the rows (each is positive by definition: a zero-point energy, an integral of a positive
  heat capacity, T times an entropy; a negative value is usually ``-TS`` typed into the TS column,
  which flips the correction's sign, but corrections shifted on purpose against shifted reference
  corrections are legitimate, so the values are used as given); solvation may have either sign.

Reading a CSV uses pandas' C parser straight from the file (numbers as float, names encoded once
per distinct value); text is checked per distinct value, not per cell; file line numbers are
worked out only when a message needs them.
"""

from __future__ import annotations

import contextlib
import csv
import os
import re
import sys
import warnings
from dataclasses import dataclass, field
from functools import cached_property
from typing import Iterable, Mapping

import numpy as np
import pandas as pd

from ecatlab.errors import EnergyTableError, NotationError, ReferenceSchemeError
from ecatlab.notation import Species
from ecatlab.references import ReferenceScheme

__all__ = ["EnergyTable", "read_energies", "as_energy_table", "ENERGY_COLUMNS", "ENERGY_BOUND_EV", "MAX_NAME_LENGTH"]

#: Recognised columns (lower-case) and their meaning; units eV.
ENERGY_COLUMNS: dict[str, str] = {
    "surface": "surface / site name (text)",
    "species": "adsorbate in ecatlab notation, e.g. OOH* (text)",
    "g": "adsorption free energy vs clean surface and reference molecules (eV)",
    "e": "electronic adsorption energy vs clean surface and reference molecules (eV)",
    "zpe": "zero-point energy of the adsorbate (eV, >= 0); only with E",
    "cpdt": "integral of Cp dT from 0 K to T of the adsorbate (eV, >= 0); only with E",
    "ts": "temperature times entropy of the adsorbate (eV, >= 0); only with E",
    "solvation": "solvation correction of the adsorbate (eV); only with E; empty = 0",
}
_CANONICAL = {"surface": "surface", "species": "species", "g": "G", "e": "E", "zpe": "ZPE", "cpdt": "CpdT", "ts": "TS", "solvation": "solvation"}
_CORRECTIONS = ("ZPE", "CpdT", "TS", "solvation")
_NUMERIC = ("G", "E") + _CORRECTIONS

#: Plausibility bound on every energy of a table, eV. Adsorption energies against gas-phase
#: references lie within a few eV (common practice, no source); a value beyond 50 eV means total
#: DFT energies, kJ/mol or a wrong reference and is refused with the row named.
ENERGY_BOUND_EV = 50.0
#: Longest accepted surface name, characters.
MAX_NAME_LENGTH = 200
_ECHO = 60  # longest echoed value in a message, characters
_CONTROL = re.compile(r"[\x00-\x1f\x7f]")
_MAX_ROWS_NAMED = 200  # at most this many row locations are worked out for one message


def _cut(value, limit: int = _ECHO) -> str:
    """repr of a value, cut to ``limit`` characters (a 10 MB cell is not echoed in full)."""
    text = repr(value)
    return text if len(text) <= limit else text[: limit - 4] + "...'" + f" ({len(str(value)):,} characters)"


class _ReadOnlyFrame:
    """Data descriptor behind :attr:`EnergyTable.frame`: every read gives a new shallow copy.

    Adding, replacing or dropping a column of what ``table.frame`` returns cannot change the
    table; with pandas' copy-on-write (default from pandas 3) writing values into it copies only
    the touched column first, and ``to_numpy()`` gives read-only arrays. A shallow copy costs
    microseconds whatever the size of the table.
    """

    def __get__(self, obj, objtype=None):
        if obj is None:
            raise AttributeError("frame")  # no class-level default (a required dataclass field)
        return _full_frame(obj).copy(deep=False)

    def __set__(self, obj, value):
        obj.__dict__["_frame"] = value


def _full_frame(table) -> pd.DataFrame:
    """The table's frame with every column, its ``line`` column worked out on first use.

    A table read from a file holds, instead of a ``line`` column, the map from row positions to
    file line numbers (comment and blank lines counted); the column (4 bytes per row) is made the
    first time the frame is read, so that reading a large file does not write a line number per
    row that no message may ever need."""
    pending = table.__dict__.get("_pending_lines")
    if pending is not None:
        locations, position = pending
        frame = table.__dict__["_frame"].copy(deep=False)
        frame.insert(position, locations.kind, locations.labels)
        table.__dict__["_frame"] = frame
        del table.__dict__["_pending_lines"]
    return table.__dict__["_frame"]


@dataclass(frozen=True)
class EnergyTable:
    """Validated adsorption free energies, one value per (surface, adsorbate). Immutable.

    Attributes
    ----------
    frame : DataFrame
        Long table: ``surface``, ``species`` (canonical key), ``G`` (eV), ``G_origin`` (``"G given"``
        or ``"from E + corrections"``), ``location`` (file line or frame row) and any extra input
        columns. Each access returns a new shallow copy, so changing it never changes the table.
    scheme : ReferenceScheme
        References against which all energies are given.
    source : str
        File name or ``"<DataFrame>"``.
    notes : tuple of str
        What was computed or assumed while reading.
    """

    frame: pd.DataFrame = field(default=_ReadOnlyFrame(), repr=False)  # type: ignore[assignment]
    scheme: ReferenceScheme = field(default=None, repr=False)  # type: ignore[assignment]
    source: str = "<DataFrame>"
    notes: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        if not isinstance(self.__dict__.get("_frame"), pd.DataFrame):
            raise TypeError("EnergyTable needs a DataFrame; build tables with read_energies or EnergyTable.from_matrix")
        if self.scheme is None:
            raise TypeError("EnergyTable needs a ReferenceScheme")
        object.__setattr__(self, "notes", tuple(self.notes))

    # -- constructors ------------------------------------------------------------------------------
    @classmethod
    def from_matrix(cls, matrix: pd.DataFrame | Mapping, scheme: ReferenceScheme | None = None, source: str = "<matrix>") -> "EnergyTable":
        """Build from a wide table: index = surfaces, columns = adsorbate keys, values = G (eV).

        NaN cells mean "not computed" and are left out (pathways needing them report them
        missing). Infinite or non-numeric cells are refused (an infinite energy is not "missing").
        """
        wide = pd.DataFrame(matrix)
        try:
            values = wide.to_numpy(dtype=float)
        except (TypeError, ValueError):
            bad = [c for c in wide.columns if pd.to_numeric(wide[c], errors="coerce").isna().to_numpy().sum() > wide[c].isna().to_numpy().sum()]
            raise EnergyTableError(source, "not a number; give G in eV as plain numbers (NaN where not computed)", column=str(bad[0]) if bad else None) from None
        inf = np.isinf(values)
        if inf.any():
            r, c = (int(v[0]) for v in np.nonzero(inf))
            raise EnergyTableError(
                source,
                f"G of {_cut(str(wide.columns[c]))} on surface {_cut(str(wide.index[r]))} is {values[r, c]!r}, not a finite number "
                f"({int(inf.sum())} such cells); give energies in eV, NaN only where not computed",
                column=str(wide.columns[c]),
            )
        rows, cols = np.nonzero(~np.isnan(values))  # row-major: surfaces in order, species within
        surf_codes, surf_names = pd.factorize(pd.Index(wide.index).map(str))
        spec_codes, spec_names = pd.factorize(pd.Index(wide.columns).map(str))
        long = pd.DataFrame(
            {
                "surface": pd.Categorical.from_codes(surf_codes[rows], dtype=pd.CategoricalDtype(pd.Index(surf_names, dtype=object))) if len(surf_names) else pd.Categorical([]),
                "species": pd.Categorical.from_codes(spec_codes[cols], dtype=pd.CategoricalDtype(pd.Index(spec_names, dtype=object))) if len(spec_names) else pd.Categorical([]),
                "G": values[rows, cols],
            }
        )
        locations = _Locations(np.arange(len(long)), "row")
        return _validate(long, locations, source, _scheme(scheme, None))

    # -- access ------------------------------------------------------------------------------------
    @property
    def surfaces(self) -> list[str]:
        """Surface names in order of first appearance."""
        return list(self._surface_list)

    @cached_property
    def _surface_list(self) -> list[str]:
        return list(self._surface_index)

    @property
    def species(self) -> list[str]:
        """Adsorbate keys in order of first appearance."""
        return list(self._species_index)

    @property
    def n_surfaces(self) -> int:
        """Number of surfaces (without building the list of names)."""
        return len(self._surface_index)

    @property
    def matrix(self) -> pd.DataFrame:
        """Wide table of G (eV): index surfaces, columns adsorbate keys; NaN where not given (a copy)."""
        return self._wide.copy()

    @cached_property
    def _layout(self) -> tuple[pd.Index, pd.Index, np.ndarray]:
        """(surface index, species index, dense G (n_surfaces, n_species), Fortran order, read-only)."""
        frame = self.__dict__["_frame"]
        rows, surfaces = _codes(frame["surface"])
        cols, species = _codes(frame["species"])
        dense = _dense(rows, cols, frame["G"].to_numpy(dtype=float), len(surfaces), len(species))
        return pd.Index(surfaces, name="surface", dtype=object), pd.Index(species, name="species", dtype=object), dense

    @property
    def _surface_index(self) -> pd.Index:
        return self._layout[0]

    @property
    def _species_index(self) -> pd.Index:
        return self._layout[1]

    @cached_property
    def _wide(self) -> pd.DataFrame:
        surfaces, species, dense = self._layout
        return pd.DataFrame(dense, index=surfaces, columns=species, copy=False)

    def surface_positions(self, surfaces: Iterable[str]) -> np.ndarray:
        """Row positions of the named surfaces (one hash lookup per name).

        Raises
        ------
        EnergyTableError
            Naming the unknown surfaces (cut to a readable length) and the known ones.
        """
        wanted = [surfaces] if isinstance(surfaces, str) else list(surfaces)
        pos = self._surface_index.get_indexer(pd.Index(wanted, dtype=object)) if wanted else np.zeros(0, dtype=np.intp)
        if (pos < 0).any():
            unknown = [wanted[i] for i in np.flatnonzero(pos < 0)]
            raise EnergyTableError(self.source, f"unknown surface(s) {_names(unknown)}; known: {_names(self._surface_index)}")
        return pos

    def values(self, surfaces: Iterable[str] | None, species: Iterable[str]) -> np.ndarray:
        """G (eV) as a float array (n_surfaces, n_species), NaN where missing (``surfaces=None``: all)."""
        surface_index, species_index, base = self._layout
        species = list(species)
        c = species_index.get_indexer(pd.Index(species, dtype=object)) if species else np.zeros(0, dtype=np.intp)
        if surfaces is None or surfaces is self.__dict__.get("_surface_list"):
            if (c >= 0).all():
                return base.T[c].T  # one contiguous copy per species column (Fortran order)
            r = None
        else:
            r = surface_index.get_indexer(pd.Index(list(surfaces), dtype=object))
        n_r = base.shape[0] if r is None else len(r)
        out = np.full((n_r, len(species)), np.nan)
        ok_c = c >= 0
        if r is None:
            out[:, ok_c] = base[:, c[ok_c]]
        else:
            ok_r = r >= 0
            out[np.ix_(ok_r, ok_c)] = base[np.ix_(r[ok_r], c[ok_c])]
        return out

    def subset(self, surfaces: Iterable[str]) -> "EnergyTable":
        """The same table restricted to some surfaces (unknown names raise); table order is kept."""
        pos = self.surface_positions(surfaces)
        frame = _full_frame(self)
        codes, _ = _codes(frame["surface"])
        keep = np.zeros(self.n_surfaces, dtype=bool)
        keep[pos] = True
        picked = frame[keep[codes]].reset_index(drop=True)
        for col in ("surface", "species"):
            if isinstance(picked[col].dtype, pd.CategoricalDtype):
                picked[col] = picked[col].cat.remove_unused_categories()
        return EnergyTable(picked, self.scheme, self.source, self.notes)

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
        frame = _full_frame(self)
        cols = [c for c in ("surface", "species", "G", "E", "ZPE", "CpdT", "TS", "solvation") if c in frame.columns]
        raw = frame[cols].copy()
        if "E" in raw.columns:
            from_e = raw["E"].notna().to_numpy()
            raw.loc[from_e, "G"] = np.nan
        loc_kind = "line" if "line" in frame.columns else "row"
        locations = _Locations(frame[loc_kind].to_numpy(), loc_kind) if loc_kind in frame.columns else _Locations(np.arange(len(raw)), "row")
        table = _validate(raw.reset_index(drop=True), locations, self.source, scheme)
        note = (
            f"re-evaluated at {t:g} K (read at {self.temperature:g} K): reference corrections and molecule free energies "
            f"at {t:g} K; adsorbate corrections and G values used as given, so they must be the ones for {t:g} K"
        )
        return EnergyTable(table.__dict__["_frame"], scheme, self.source, tuple(table.notes) + (note,))

    def to_dict(self) -> dict:
        """Plain-data form with schema version (round-trips through :meth:`from_dict`)."""
        cols = ["surface", "species", "G"]
        return {
            "schema": "ecatlab.energies/1",
            "source": self.source,
            "rows": self.__dict__["_frame"][cols].astype({"surface": object, "species": object}).to_dict(orient="records"),
            "references": self.scheme.to_dict(),
            "notes": list(self.notes),
        }

    @classmethod
    def from_dict(cls, data: Mapping) -> "EnergyTable":
        if data.get("schema") != "ecatlab.energies/1":
            raise EnergyTableError(str(data.get("source", "<dict>")), f"unknown schema {data.get('schema')!r}; expected 'ecatlab.energies/1'")
        scheme = ReferenceScheme.from_dict(data["references"])
        table = read_energies(pd.DataFrame(data["rows"]), references=scheme, name=data.get("source", "<dict>"))
        return cls(table.__dict__["_frame"], scheme, table.source, tuple(data.get("notes", ())))

    def describe(self) -> str:
        return f"{self.n_surfaces} surfaces, {len(self._species_index)} adsorbates, {len(self.__dict__['_frame'])} energies from {self.source}"

    def __repr__(self) -> str:
        return f"EnergyTable({self.describe()})"

    def _repr_html_(self) -> str:
        import html

        notes = "".join(f"<li>{html.escape(n)}</li>" for n in self.notes)
        shown = self._wide if self.n_surfaces <= 60 else self._wide.iloc[:60]
        more = "" if self.n_surfaces <= 60 else f"<p>(first 60 of {self.n_surfaces:,} surfaces)</p>"
        return (
            f"<p><b>Energy table</b>: {html.escape(self.describe())}. G in eV vs clean surface and "
            f"{html.escape(', '.join(self.scheme.references))}.</p><ul>{notes}</ul>" + shown.round(3).to_html() + more
        )


def _names(names, limit: int = 8) -> str:
    """A readable, cut list of names for messages: 'A', 'B', ... (N in all)."""
    names = list(names[: limit + 1]) if not isinstance(names, list) else names
    total = len(names)
    shown = ", ".join(_cut(str(n), 40) for n in names[:limit])
    return f"[{shown}{', ...' if total > limit else ''}]"


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
        CSV file (UTF-8; lines whose first non-blank character is ``#`` are comments) or a
        DataFrame with columns ``surface``, ``species`` and ``G`` or ``E`` (+ ``ZPE``, ``CpdT``,
        ``TS``, ``solvation``), energies in eV.
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
        Naming the file, the line (files: the file's own line numbers, comment lines counted) or
        row label (frames), the column, and the fix. See the module docstring for the checks.

    Notes
    -----
    A ``.parquet`` file or a Parquet dataset folder is read through :mod:`ecatlab.datasets` (into
    memory), a Dask DataFrame gives a lazy :class:`ecatlab.datasets.EnergyDataset` for the Dask path
    (:mod:`ecatlab.scaleout`).
    """
    from ecatlab.datasets import dataset_kind

    if dataset_kind(source) is not None:  # .parquet file or folder -> EnergyTable; Dask DataFrame -> lazy EnergyDataset
        from ecatlab.datasets import read_energies_dataset

        return read_energies_dataset(source, references=references, temperature=temperature, name=name)
    scheme = _scheme(references, temperature)
    if isinstance(source, pd.DataFrame):
        label = name or "<DataFrame>"
        raw = source.reset_index(drop=True)  # a new frame; the caller's is never modified
        locations = _Locations(source.index.to_numpy(), "row")
    else:
        path = os.fspath(source)
        label = name or path
        return _validate(*_read_csv(path, label), label, scheme)  # no reference kept here: _validate frees columns early
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
        from ecatlab.errors import ConditionsWarning

        warnings.warn(
            f"energy table {energies.source!r} was read at {energies.temperature:g} K and is re-evaluated at "
            f"{float(temperature):g} K (reference corrections and molecules recomputed; adsorbate corrections used as given)",
            ConditionsWarning,
            stacklevel=3,
        )
        return energies.at_temperature(temperature)
    return read_energies(energies, references=references, temperature=temperature)


# -- integer codes ----------------------------------------------------------------------------------
def _first_appearance(codes: np.ndarray, n_values: int) -> np.ndarray:
    """Position of the first row holding each code (len(codes) where a code does not occur); O(n).

    A table's few species all occur within its first rows: a prefix is tried first.
    """
    n = len(codes)
    first = np.full(n_values, n, dtype=np.int64)
    if not n:
        return first
    head = min(n, 1 << 16)
    first[codes[:head][::-1]] = np.arange(head - 1, -1, -1, dtype=np.int64)  # repeated indices: the last write wins
    if head == n or (first < n).all():
        return first
    first[:] = n
    first[codes[::-1]] = np.arange(n - 1, -1, -1, dtype=np.int64)
    return first


def _codes(column: pd.Series) -> tuple[np.ndarray, list]:
    """Integer codes and distinct values of a column, in order of first appearance."""
    if isinstance(column.dtype, pd.CategoricalDtype):
        codes = column.cat.codes.to_numpy()
        cats = column.cat.categories
        first = _first_appearance(codes, len(cats))
        if len(codes) and np.all(first[:-1] < first[1:]) and first[-1] < len(codes):
            return codes, list(cats)  # already in order of first appearance, all used
        used = np.flatnonzero(first < len(codes))
        order = used[np.argsort(first[used], kind="stable")]
        remap = np.full(len(cats), -1, dtype=np.int64)
        remap[order] = np.arange(len(order))
        return remap[codes], [cats[i] for i in order]
    codes, uniques = pd.factorize(column)
    return codes, list(uniques)


def _dense(rows: np.ndarray, cols: np.ndarray, values: np.ndarray, n_rows: int, n_cols: int) -> np.ndarray:
    """Dense (n_rows, n_cols) float matrix in Fortran order (one species = one contiguous column), read-only."""
    flat = np.full(n_rows * n_cols, np.nan)
    index_type = np.int32 if n_rows * n_cols < 2**31 - 1 else np.int64
    index = np.multiply(cols, n_rows, dtype=index_type)
    index += rows.astype(index_type, copy=False)
    flat[index] = values
    del index
    dense = flat.reshape(n_cols, n_rows).T
    dense.flags.writeable = False
    return dense


def _small_code_type(n_values: int) -> type:
    """Smallest signed integer type that holds codes 0..n_values-1."""
    return np.int8 if n_values < 2**7 else np.int16 if n_values < 2**15 else np.int32 if n_values < 2**31 else np.int64


def _dense_grouped(rows: np.ndarray, cols: np.ndarray, values: np.ndarray, n_rows: int, n_cols: int, proven: bool = False) -> np.ndarray | None:
    """The dense matrix of :func:`_dense` for the usual layout, without a scatter: every surface's
    rows together (surface codes 0, 0, ..., 1, 1, ...), each with all species in one common order.
    ``None`` when the table has another layout (the caller scatters). ``proven``: the encoders
    already showed that layout (surface runs of ``n_cols`` rows, species repeating every ``n_cols``
    rows), so the codes are not compared again."""
    if n_rows < 1 << 15 or n_cols == 0 or len(values) != n_rows * n_cols:  # small tables: the scatter is as fast
        return None
    order = cols[:n_cols]
    if len(np.unique(order)) != n_cols:
        return None
    inverse = np.argsort(order)  # position within a surface's rows of species 0, 1, ...
    in_order = bool(np.array_equal(inverse, np.arange(n_cols)))  # species in code order: no column gather
    table, species, surfaces = values.reshape(n_rows, n_cols), cols.reshape(n_rows, n_cols), rows.reshape(n_rows, n_cols)
    out = np.empty((n_cols, n_rows))  # species-major: the transpose is the Fortran-ordered matrix
    block = 1 << 9  # surfaces per block: checked and transposed while in cache

    def fill(lo: int, hi: int) -> bool:
        for start in range(lo, hi, block):
            stop = min(start + block, hi)
            if not proven:
                expected = np.arange(start, stop, dtype=surfaces.dtype)[:, None]
                if not ((species[start:stop] == order).all() and (surfaces[start:stop] == expected).all()):
                    return False
            out[:, start:stop] = (table[start:stop] if in_order else table[start:stop, inverse]).T
        return True

    pieces = _row_pieces(n_rows * n_cols, align=block * n_cols)  # threads: the new matrix is written (and paged in) in parallel
    if not all(_concurrently([lambda lo=lo, hi=hi: fill(lo // n_cols, hi // n_cols) for lo, hi in pieces])):
        return None
    dense = out.T
    dense.flags.writeable = False
    return dense


def _categorical(codes: np.ndarray, categories: pd.Index) -> pd.Categorical:
    """Categorical from codes and categories known to be distinct (skips pandas' uniqueness check)."""
    fast = getattr(pd.CategoricalDtype, "_from_fastpath", None)
    dtype = fast(categories, False) if fast is not None else pd.CategoricalDtype(categories)
    return pd.Categorical.from_codes(codes, dtype=dtype, validate=False)


def _order_by_first(codes: np.ndarray, n_values: int) -> tuple[np.ndarray, np.ndarray]:
    """(new codes, old code of each new code): codes renumbered in order of first appearance, unused dropped."""
    first = _first_appearance(codes, n_values)
    used = np.flatnonzero(first < len(codes))
    order = used[np.argsort(first[used], kind="stable")]
    if len(order) == n_values and np.array_equal(order, np.arange(n_values)):
        return codes, order
    remap = np.full(n_values, -1, dtype=np.int64)
    remap[order] = np.arange(len(order))
    return remap[codes], order


def _encode_text(column: pd.Series, period: int | None = None) -> tuple[np.ndarray, object, int | None]:
    """(codes, distinct values, regular) of a text column in order of first appearance; missing -> ''.

    Arrow-backed strings (what the CSV reader hands over) are coded, cheapest first, as a column
    that repeats every ``period`` rows (:func:`_encode_periodic`: the species of a table where every
    surface lists them in one order), by runs of equal values (:func:`_encode_runs`: the surfaces),
    else dictionary-encoded by Arrow in one pass. Categoricals use their codes; anything else goes
    through :func:`pandas.factorize`. The distinct values come back as a pyarrow string array when
    pyarrow is installed, else as an object ndarray (not yet stripped).

    ``regular`` is L when the codes are known to follow row position: ``row // L`` (runs of L rows
    with distinct values) or the first L rows' codes repeated (periodic); else ``None``.
    """
    arr = column.array
    pa_array = getattr(arr, "_pa_array", None)
    if pa_array is not None:
        if period:
            periodic = _encode_periodic(pa_array, period)
            if periodic is not None:
                return (*periodic, period)
        runs = _encode_runs(pa_array)
        if runs is not None:
            return runs
        encoded = pa_array.dictionary_encode()
        chunks = encoded.chunks
        if not chunks:
            return np.zeros(0, dtype=np.int64), _as_distinct([]), None
        dictionary = chunks[-1].dictionary  # one memo table: each chunk's dictionary is a prefix of the last
        parts = [np.asarray(c.indices.fill_null(len(dictionary))) if c.null_count else np.asarray(c.indices) for c in chunks]
        codes = np.concatenate(parts) if len(parts) > 1 else parts[0]
        if any(c.null_count for c in chunks):  # missing cells: one more value, ''
            dictionary = _concat_distinct(dictionary, [""])
            codes, order = _order_by_first(codes, len(dictionary))
            return codes, dictionary.take(order), None
        return codes, dictionary, None
    if isinstance(column.dtype, pd.CategoricalDtype):
        codes = column.cat.codes.to_numpy()
        cats = list(column.cat.categories)
        if (codes < 0).any():
            codes = np.where(codes < 0, len(cats), codes)
            cats.append("")
        codes, order = _order_by_first(codes, len(cats))
        return codes, _as_distinct(["" if v is None or (isinstance(v, float) and v != v) else str(v) for v in (cats[i] for i in order)]), None
    codes, uniques = pd.factorize(column, use_na_sentinel=True)
    values = [str(u) for u in uniques]
    if (codes < 0).any():
        codes = np.where(codes < 0, len(values), codes)
        values.append("")
        codes, order = _order_by_first(codes, len(values))
        values = [values[i] for i in order]
    return codes, _as_distinct(values), None


def _encode_runs(chunked) -> tuple[np.ndarray, object, int | None] | None:
    """(codes, distinct values, run length) of an Arrow string column whose equal values mostly
    stand together.

    A row equal to the row above gets its code; only the first row of each run is looked at. When
    the run heads are in strictly increasing order (:func:`_strictly_increasing`: the usual table,
    each surface's rows together, surfaces in sorted or numbered order) they are distinct and the
    codes are the run numbers, else the heads are dictionary-encoded. The run length is L when the
    heads are distinct and every run has L rows (codes = row // L), else ``None``. ``None`` overall
    (the caller encodes every row) for missing cells or when runs are short (rows not grouped;
    a prefix of the column decides that before the whole column is compared).
    """
    pa = _pyarrow()
    n = len(chunked)
    if pa is None or n < 2 or chunked.null_count:
        return None
    pc = pa.compute
    probe = min(n, 1 << 16)
    if probe < n and pc.sum(pc.not_equal(chunked[1:probe], chunked[: probe - 1])).as_py() >= probe // 2:
        return None  # the first rows are not grouped: do not compare the whole column
    pieces = _row_pieces(n)  # consecutive row ranges, compared in parallel (Arrow kernels release the GIL)
    found = _concurrently([lambda lo=lo, hi=hi: _run_heads(chunked[lo:hi], lo) for lo, hi in pieces])
    starts_parts, head_chunks = [np.zeros(1, dtype=np.int64)], list(chunked[:1].chunks)
    for (lo, _), (starts_in, heads_in) in zip(pieces, found):
        if lo and chunked[lo].as_py() != chunked[lo - 1].as_py():  # the first row of a piece against the row above it
            starts_parts.append(np.array([lo], dtype=np.int64))
            head_chunks += chunked[lo : lo + 1].chunks
        starts_parts.append(starts_in)
        head_chunks += heads_in
    starts = np.concatenate(starts_parts)
    n_heads = len(starts)
    if n_heads > n // 2:  # not grouped: hashing every row is cheaper
        return None
    heads = pa.chunked_array(head_chunks, type=chunked.type).combine_chunks()
    del head_chunks, found
    lengths = np.diff(starts, append=n)
    if _strictly_increasing(heads):
        dictionary = heads
        run = int(lengths[0]) if lengths.min() == lengths.max() else None
        if run is None:
            return np.repeat(np.arange(n_heads, dtype=np.int32), lengths), dictionary, None
        codes = np.empty(n, dtype=np.int32)  # row // run, written by the lanes
        grid = codes.reshape(n_heads, run)

        def fill(lo: int, hi: int) -> None:
            grid[lo:hi] = np.arange(lo, hi, dtype=np.int32)[:, None]

        _concurrently([lambda lo=lo, hi=hi: fill(lo // run, hi // run) for lo, hi in _row_pieces(n, align=run)])
        return codes, dictionary, run
    encoded = heads.dictionary_encode()  # in order of first appearance
    head_codes, dictionary = np.asarray(encoded.indices, dtype=np.int32), encoded.dictionary
    run = int(lengths[0]) if len(dictionary) == n_heads and lengths.min() == lengths.max() else None
    return np.repeat(head_codes, lengths), dictionary, run


def _run_heads(piece, first_row: int) -> tuple[np.ndarray, list]:
    """Within one piece of a column: row numbers (in the whole column) of the rows that differ from
    the row above, and those rows (Arrow chunks)."""
    pc = _pyarrow().compute
    change = pc.not_equal(piece[1:], piece[:-1])
    starts = np.asarray(pc.indices_nonzero(change)).view(np.int64) + (first_row + 1)  # uint64 row numbers below 2**63
    return starts, piece[1:].filter(change).chunks


_PARALLEL_ROWS = 1 << 20  # rows from which per-row passes are split over threads


def _lanes() -> int:
    """Threads for the per-row passes of a large table: the CPUs this process may use, at most 4."""
    from ecatlab._threads import available_cpus

    return available_cpus(4)


def _row_pieces(n: int, align: int = 1) -> list[tuple[int, int]]:
    """(start, stop) of consecutive row ranges covering 0..n: one per lane for a large table, else
    one; inner bounds are multiples of ``align``."""
    lanes = _lanes() if n >= _PARALLEL_ROWS else 1
    bounds = [0] + [min(n, (n * k // lanes) // align * align) for k in range(1, lanes)] + [n]
    return [(lo, hi) for lo, hi in zip(bounds[:-1], bounds[1:]) if hi > lo]


def _concurrently(tasks: list) -> list:
    """Results of the callables in order, one thread each (numpy and Arrow kernels release the GIL)."""
    from ecatlab._threads import map_in_threads

    return map_in_threads(lambda task: task(), tasks, len(tasks))


def _strictly_increasing(strings) -> bool:
    """True when every value of an Arrow string array sorts after the one before it, either by its
    bytes or by (length, bytes); either order is strict and total, so the values are then pairwise
    distinct. False means "not shown" (the caller hashes them): names in another order, or repeats.
    """
    pa = _pyarrow()
    if len(strings) < 2:
        return True
    pc = pa.compute
    earlier, later = strings[:-1], strings[1:]
    by_bytes = pc.less(earlier, later)
    if pc.all(by_bytes).as_py():
        return True
    length = pc.binary_length(strings).to_numpy(zero_copy_only=False)
    shorter, same = length[:-1] < length[1:], length[:-1] == length[1:]
    return bool(np.all(shorter | (same & by_bytes.to_numpy(zero_copy_only=False))))


def _encode_periodic(chunked, period: int) -> tuple[np.ndarray, object] | None:
    """(codes, distinct values) of an Arrow string column whose rows repeat every ``period`` rows
    (row i holds the value of row i % period; the species when every surface lists them in one
    order), else ``None``.

    Shown without comparing strings row by row: within each chunk of the column the offsets show
    that row i + period has the length of row i, and one memory comparison of the value bytes
    against themselves shifted by one period's bytes shows equal contents; each chunk's first
    ``period`` rows are compared with the column's first ``period`` rows at the chunk's phase.
    """
    pa = _pyarrow()
    n = len(chunked)
    if pa is None or period < 1 or n < 2 * period or n % period or chunked.null_count:
        return None
    if not (pa.types.is_string(chunked.type) or pa.types.is_large_string(chunked.type)):
        return None
    offset_type = np.int64 if pa.types.is_large_string(chunked.type) else np.int32
    reference = chunked[:period].combine_chunks()
    position = 0
    for chunk in chunked.chunks:
        m = len(chunk)
        if not m:
            continue
        phase, head = position % period, min(m, period)
        position += m
        if phase + head <= period:
            expected = reference[phase : phase + head]
        else:
            expected = pa.concat_arrays([reference[phase:], reference[: phase + head - period]])
        if not chunk[:head].equals(expected):
            return None
        if m > period:
            buffers = chunk.buffers()
            offsets = np.frombuffer(buffers[1], dtype=offset_type)[chunk.offset : chunk.offset + m + 1]
            window = offsets[period:] - offsets[:-period]  # bytes of `period` rows from each row on
            step = int(window[0])
            if not (window == step).all():
                return None
            lo, hi = int(offsets[0]), int(offsets[-1])
            if hi - lo > step:
                data = buffers[2]
                if not data.slice(lo + step, hi - lo - step).equals(data.slice(lo, hi - lo - step)):
                    return None
    encoded = reference.dictionary_encode()  # in order of first appearance: every value occurs in the first period
    dictionary = encoded.dictionary
    first = np.asarray(encoded.indices).astype(_small_code_type(len(dictionary)))
    codes = np.empty(n, dtype=first.dtype)
    codes[:period] = first
    filled = period
    while filled < n:  # doubling copies
        step = min(filled, n - filled)
        codes[filled : filled + step] = codes[:step]
        filled += step
    return codes, dictionary


def _release_memory() -> None:
    """Hand freed memory back to the operating system (Arrow's pool; glibc's heap on Linux).

    Parsing a big file leaves many small freed blocks behind (the parser's per-cell strings, the
    hash table of the dictionary encoding); returning them keeps the peak of the next step low.
    """
    pa = _pyarrow()
    if pa is not None:
        pa.default_memory_pool().release_unused()
    if sys.platform.startswith("linux"):
        try:
            import ctypes

            ctypes.CDLL(None).malloc_trim(0)
        except (OSError, AttributeError):  # pragma: no cover - not glibc
            pass


_BIG = 1_000_000  # rows from which memory is handed back between steps


def _pyarrow():
    try:
        import pyarrow
        import pyarrow.compute
    except ImportError:  # pragma: no cover - pyarrow is optional
        return None
    return pyarrow


def _as_distinct(values: list):
    pa = _pyarrow()
    return pa.array(values, type=pa.string()) if pa is not None else np.asarray(values, dtype=object)


def _concat_distinct(dictionary, extra: list):
    pa = _pyarrow()
    return pa.concat_arrays([dictionary.cast(pa.string()), pa.array(extra, type=pa.string())])


def _clean_distinct(distinct) -> tuple[np.ndarray, bool, np.ndarray, np.ndarray, np.ndarray]:
    """Strip the distinct values and flag bad ones, vectorised (Arrow compute, else Python on the few values).

    Returns (stripped values as object ndarray, whether stripping changed any, empty mask,
    control-character mask, over-long mask).
    """
    pa = _pyarrow()
    if pa is not None and not isinstance(distinct, np.ndarray):
        pc = pa.compute
        distinct = distinct.cast(pa.string())
        stripped = pc.utf8_trim_whitespace(distinct)
        changed = bool(len(distinct)) and not pc.all(pc.equal(stripped, distinct)).as_py()
        lengths = pc.utf8_length(stripped).to_numpy(zero_copy_only=False)
        empty = lengths == 0
        word = np.flatnonzero((lengths == 3) | (lengths == 4))  # only these can spell nan / none
        if len(word):
            empty[word] = pc.is_in(pc.utf8_lower(stripped.take(pa.array(word))), value_set=pa.array(["nan", "none"])).to_numpy(zero_copy_only=False)
        if _has_control_byte(stripped):
            control = pc.match_substring_regex(stripped, _CONTROL.pattern).to_numpy(zero_copy_only=False)
        else:
            control = np.zeros(len(stripped), dtype=bool)
        return stripped.to_numpy(zero_copy_only=False), changed, empty, control, lengths > MAX_NAME_LENGTH
    values = np.asarray([str(v).strip() for v in distinct], dtype=object)
    changed = any(v != str(o) for v, o in zip(values, distinct))
    lengths = np.array([len(v) for v in values], dtype=np.int64)
    empty = np.array([v == "" or v.lower() in ("nan", "none") for v in values], dtype=bool)
    control = np.array([_CONTROL.search(v) is not None for v in values], dtype=bool)
    return values, changed, empty, control, lengths > MAX_NAME_LENGTH


def _has_control_byte(strings) -> bool:
    """Whether the bytes of an Arrow string array could hold a control character (a byte below 0x20
    or 0x7f; UTF-8 encodes no other character with such a byte). Looks at the value buffer in one
    pass; True may be a false alarm (bytes outside the array's slice), never a miss."""
    buffers = strings.buffers()
    if len(buffers) < 3 or buffers[2] is None:
        return False
    data = np.frombuffer(buffers[2], dtype=np.uint8)
    return bool(((data < 0x20) | (data == 0x7F)).any())


def _merge_codes(codes: np.ndarray, cleaned: np.ndarray, changed: bool) -> tuple[np.ndarray, np.ndarray]:
    """Codes and distinct values after cleaning (values that became equal share one code)."""
    if not changed:
        return codes, cleaned  # cleaning changed nothing: still distinct
    merged, distinct = pd.factorize(cleaned)  # in the order of ``cleaned``: first appearance kept
    if len(distinct) == len(cleaned):
        return codes, cleaned
    return merged[codes], np.asarray(distinct, dtype=object)


# -- locations --------------------------------------------------------------------------------------
class _Locations:
    """Row locations for messages: file line numbers or DataFrame index labels, formatted lazily.

    For files, ``labels`` may be a callable taking row positions and returning line numbers (so
    line numbers are only worked out for rows a message names, and for the ``line`` column).
    """

    def __init__(self, labels, kind: str, n: int | None = None):
        self._labels = labels if callable(labels) else np.asarray(labels)
        self.kind = kind  # "line" (file line number) or "row" (DataFrame index label)
        self.n = n if n is not None else (None if callable(labels) else len(self._labels))

    @property
    def labels(self) -> np.ndarray:
        if callable(self._labels):
            return self._labels.all(self.n) if hasattr(self._labels, "all") else self._labels(np.arange(self.n, dtype=np.int64))
        return self._labels

    def _lookup(self, positions: np.ndarray) -> np.ndarray:
        return self._labels(positions) if callable(self._labels) else self._labels[positions]

    def _fmt(self, value) -> str:
        value = value.item() if hasattr(value, "item") else value
        return f"line {value}" if self.kind == "line" else f"row {_cut(value, 40)}"

    def __getitem__(self, item):
        if isinstance(item, (int, np.integer)):
            return self._fmt(self._lookup(np.array([int(item)]))[0])
        mask = np.asarray(item)
        positions = np.flatnonzero(mask) if mask.dtype == bool else mask.astype(np.int64)
        return [self._fmt(v) for v in self._lookup(positions[:_MAX_ROWS_NAMED])]

    def rows(self, mask) -> list[str]:
        """Formatted locations of the rows in ``mask`` (at most 200 worked out; the count is in the message)."""
        return self[mask]


class _FileLines:
    """Maps data-row positions to file line numbers (1-based), comment and blank lines counted.

    ``skipped`` are the 0-based indices of the file's comment/blank lines, sorted; ``offset`` the
    number of kept lines before the first data row (1: the header).
    """

    def __init__(self, skipped: np.ndarray, offset: int = 1):
        s = np.asarray(skipped, dtype=np.int64)
        self._adjusted = s - np.arange(len(s), dtype=np.int64)  # kept lines before each skipped line
        self._offset = offset

    def all(self, n: int) -> np.ndarray:
        """Line numbers of data rows 0..n-1."""
        dtype = np.int32 if n + self._offset + len(self._adjusted) + 1 < 2**31 - 1 else np.int64
        if not len(self._adjusted):  # made when the table's frame is first read, not while reading the file
            return np.arange(self._offset + 1, n + self._offset + 1, dtype=dtype)
        return self(np.arange(n, dtype=np.int64)).astype(dtype, copy=False)

    def __call__(self, positions: np.ndarray) -> np.ndarray:
        k = np.asarray(positions, dtype=np.int64) + self._offset
        if len(self._adjusted):
            k = k + np.searchsorted(self._adjusted, k, side="right")
        return k + 1


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


# -- the CSV file -----------------------------------------------------------------------------------
_CHUNK = 1 << 18  # 256 KiB per read while scanning (bounded memory; stays in the CPU cache for the several passes)
_SKIP_LINE = re.compile(rb"\n(?=[ \t]*(?:#|\r?\n|\r?\Z))")  # a blank or comment line starts after this line end


class _Scan:
    """What one binary pass over the file found (cheap byte-level checks only)."""

    def __init__(self) -> None:
        self.n_lines = 0  # physical lines (a last line without line end counts)
        self.has_hash = False  # '#' anywhere (only then can there be comment lines)
        self.header_line = -1  # 0-based index of the first line that is neither blank nor a comment
        self.header_offset = 0  # byte offset of that line
        self.header_text = ""
        self.has_line_feed = False  # at least one LF in the file
        self.hash_after = False  # a '#' at or after the header line (set when the scan was asked for it)


def _line_of(data: bytes, pos: int, lines_before: int) -> int:
    return lines_before + data.count(b"\n", 0, pos) + 1


def _pieces(fh):
    """The file in pieces of about 4 MiB that end at a line end (the last one may not)."""
    carry = b""
    while True:
        piece = fh.read(_CHUNK)
        if not piece:
            if carry:
                yield carry
            return
        data = carry + piece
        cut = data.rfind(b"\n") + 1
        if cut == 0:
            carry = data
            continue
        carry = data[cut:]
        yield data[:cut]


def _scan_file(path: str, label: str) -> _Scan:
    """One binary pass in 256 KiB pieces: NUL bytes, UTF-16, invalid UTF-8 (with the line), the
    line count, whether ``#`` occurs at all; then the header line (first line neither blank nor a
    comment). Only C-level byte operations per piece, no copies."""
    scan = _Scan()
    _scan_body(path, label, scan)
    _scan_head(path, scan)
    _check_line_ends(label, scan)
    return scan


def _scan_head(path: str, scan: _Scan) -> None:
    """The header line of the file: the first line that is neither blank nor a comment (BOM
    skipped); sets ``header_line``, ``header_offset`` and ``header_text`` of ``scan``."""
    with open(path, "rb") as fh:
        offset = 0
        for k, raw in enumerate(fh):  # stops at the first line that is neither blank nor a comment
            text = raw.decode("utf-8", errors="replace")
            start = 0
            if k == 0 and raw.startswith(b"\xef\xbb\xbf"):
                text, start = text[1:], 3
            if not _is_skipped(text):
                scan.header_line, scan.header_offset, scan.header_text = k, offset + start, text.rstrip("\r\n")
                break
            offset += len(raw)


def _check_line_ends(label: str, scan: _Scan) -> None:
    if not scan.has_line_feed and "\r" in scan.header_text:  # no line feed at all, a CR in the first line
        raise EnergyTableError(label, "uses CR-only line ends (old Mac format); save the table with LF or CRLF line ends")


def _scan_body(path: str, label: str, scan: _Scan, hash_from: int | None = None) -> None:
    """The byte-level pass over the whole file (NUL, UTF-16, UTF-8, line count, ``#``): sets
    ``n_lines``, ``has_hash`` and ``has_line_feed`` of ``scan`` or raises the file's first problem;
    with ``hash_from`` (a byte offset) also ``hash_after``: a ``#`` at or after that offset."""
    import codecs

    position = 0
    lines_before = 0
    last = b""
    decoder = codecs.getincrementaldecoder("utf-8")()
    with open(path, "rb") as fh:
        head = fh.read(4)
        if head[:2] in (b"\xff\xfe", b"\xfe\xff"):
            raise EnergyTableError(label, "is UTF-16 text; save the table as CSV UTF-8 (in a spreadsheet: 'CSV UTF-8')")
        fh.seek(0)
        while True:
            piece = fh.read(_CHUNK)
            if not piece:
                break
            nul = piece.find(b"\x00")
            if nul >= 0:
                raise EnergyTableError(label, f"contains a NUL byte at line {_line_of(piece, nul, lines_before)}: this is not a text "
                                       "CSV file (binary, or UTF-16/32); save the table as CSV UTF-8")
            if not piece.isascii():
                pending = len(decoder.getstate()[0])
                try:
                    decoder.decode(piece)
                except UnicodeDecodeError as exc:
                    pos = max(0, exc.start - pending)
                    raise EnergyTableError(
                        label,
                        f"is not UTF-8 text: byte 0x{piece[pos:pos + 1].hex()} at line {_line_of(piece, pos, lines_before)} (the file looks "
                        "like Latin-1/Windows-1252 or another 8-bit encoding); save the table as CSV UTF-8",
                    ) from None
            elif decoder.getstate()[0]:
                decoder.decode(piece)  # raises: a multi-byte character cut off by plain ASCII
            scan.has_hash = scan.has_hash or b"#" in piece
            if hash_from is not None and not scan.hash_after and position + len(piece) > hash_from:
                scan.hash_after = piece.find(b"#", max(0, hash_from - position)) >= 0
            position += len(piece)
            lines_before += _newlines(piece)
            last = piece[-1:]
        try:
            decoder.decode(b"", final=True)
        except UnicodeDecodeError:
            raise EnergyTableError(label, f"is not UTF-8 text: the file ends inside a multi-byte character (line {lines_before + 1}); "
                                   "save the table as CSV UTF-8") from None
    scan.n_lines = lines_before + (1 if last and last != b"\n" else 0)
    scan.has_line_feed = lines_before > 0


def _is_skipped(line: str) -> bool:
    text = line.lstrip("\ufeff").strip(" \t\r\n")
    return text == "" or text.startswith("#")


def _skipped_lines(path: str) -> np.ndarray:
    """0-based indices of every blank or comment line (a regex pass; only when a '#' occurs or the
    row count shows blank lines)."""
    found: list[int] = []
    line0 = 0
    with open(path, "rb") as fh:
        for n, data in enumerate(_pieces(fh)):
            if n == 0 and data.startswith(b"\xef\xbb\xbf"):
                data = data[3:]
            buf = b"\n" + data
            end = len(buf) - 1 if buf.endswith(b"\n") else len(buf)  # a line end at the very end starts no line
            prev, count = 0, line0 - 1
            for m in _SKIP_LINE.finditer(buf, 0, len(buf)):
                if m.start() >= end:
                    break
                count += buf.count(b"\n", prev, m.start() + 1)
                prev = m.start() + 1
                found.append(count)
            line0 += _newlines(data)
    return np.asarray(found, dtype=np.int64)


def _header_names(scan: _Scan, label: str) -> list[str]:
    names = next(csv.reader([scan.header_text.lstrip("\ufeff")]), [])
    line = scan.header_line + 1
    seen: dict[str, str] = {}
    for col in names:
        key = col.strip()
        low = key.lower()
        slot = low if low in _CANONICAL else key
        if slot in seen:
            first = seen[slot]
            why = " (headers are case-insensitive)" if first.strip() != key else ""
            raise EnergyTableError(label, f"header at line {line}: columns {_cut(first)} and {_cut(col)} are the same{why}; keep one",
                                   column=col[:40])
        seen[slot] = col
    return names


def _read_csv(path: str, label: str) -> tuple[pd.DataFrame, "_Locations"]:
    if not os.path.exists(path):
        raise EnergyTableError(label, "file not found; check the path")
    if os.path.isdir(path):
        raise EnergyTableError(label, "is a folder; give the CSV file (for DFT output folders use 'ecatlab ingest')")
    if os.path.getsize(path) < _OVERLAP_BYTES:
        return _read_scanned(path, label, _scan_file(path, label))
    # A large file: the byte-level pass (it reads the file again, from the page cache) runs in a
    # thread while pandas parses, on the assumption that no comment line follows the header. Its
    # verdict comes first, as in the sequential order: a byte-level problem is the error the user
    # gets; a '#' at or after the header line sends the file the sequential way (comment lines
    # must be skipped by line number).
    scan = _Scan()
    _scan_head(path, scan)
    from concurrent.futures import ThreadPoolExecutor

    with ThreadPoolExecutor(max_workers=1) as pool:
        body = pool.submit(_scan_body, path, label, scan, scan.header_offset if scan.header_line >= 0 else 0)

        def verdict() -> bool:
            """True when the optimistic parse stands (the scan found no '#' from the header on)."""
            body.result()  # raises the file's byte-level problem
            _check_line_ends(label, scan)
            return not scan.hash_after

        try:
            found = _read_scanned(path, label, scan, verdict)
        except Exception:  # noqa: BLE001 - whatever the optimistic parse met, the scan's verdict comes first
            if verdict():
                raise
            found = None
    return found if found is not None else _read_scanned(path, label, scan)


#: Files from this size on (bytes) are scanned while pandas parses them (below: one after the other).
_OVERLAP_BYTES = 8 << 20
#: Files below this size (bytes) have their species column parsed as a categorical (one small code
#: per row: measured at 2.4 million rows, a peak of 136 MB instead of 150 MB for a 50 MB file); from
#: this size on as Arrow strings coded from their period (no per-row hashing: faster, where the
#: memory has room, e.g. 1.53 s instead of 1.90 s and a peak 2.3x the file at 24 million rows).
_CATEGORICAL_SPECIES_BYTES = 128 << 20


def _read_scanned(path: str, label: str, scan: _Scan, verdict=None) -> tuple[pd.DataFrame, "_Locations"] | None:
    """The parse and the line bookkeeping of :func:`_read_csv` after the scan (``verdict`` None),
    or alongside it: ``verdict()`` then waits for the byte-level pass, raises its error and says
    whether the parse, made as if no comment line followed the header, stands (else None)."""
    if scan.header_line < 0:
        raise EnergyTableError(label, "is empty; expected a header line 'surface,species,G' (or E with corrections)")
    names = _header_names(scan, label)
    h = scan.header_line
    if len(names) == 1:
        for sep, what in ((";", "';'"), ("\t", "tabs"), ("|", "'|'")):
            if sep in names[0]:
                raise EnergyTableError(label, f"header at line {h + 1} is one column {_cut(names[0])}: the table seems separated by {what}; "
                                       "save it comma-separated (CSV)")
    # only a file with '#' can have comment lines (alongside the scan: assumed none after the header)
    skipped = _skipped_lines(path) if verdict is None and scan.has_hash else None
    body = skipped[skipped > h] if skipped is not None else np.zeros(0, dtype=np.int64)
    frame = _parse(path, label, scan, names, [int(i - h) for i in body])
    if verdict is not None and not verdict():
        return None
    expected = scan.n_lines - h - 1  # data lines if none after the header is blank, a comment or a continuation
    if len(frame) >= _BIG:
        _release_memory()
    if len(frame) != expected - len(body):
        if skipped is None:  # blank lines (pandas skips them by itself): find them for the line numbers
            skipped = _skipped_lines(path)
            body = skipped[skipped > h]
        if len(frame) != expected - len(body):
            _diagnose(path, label, scan, len(names))
            raise EnergyTableError(label, "rows could not be matched to lines (quoted line breaks?); keep one row per line")
    prefix = np.arange(h, dtype=np.int64)  # every line before the header is blank or a comment
    lines = _FileLines(np.concatenate([prefix, body]))
    return frame, _Locations(lines, "line", n=len(frame))


def _parse(path: str, label: str, scan: _Scan, names: list[str], skiprows: list[int]) -> pd.DataFrame:
    """pandas' C parser straight from the file, from the header line on: numbers as float, text as ``str``.

    When the header is the file's first line pandas gets the path, as in a plain
    ``pd.read_csv(path)``: pandas 3.1 then reads a file of 5 MiB or more with several threads
    (falling back to one for anything its split cannot do, e.g. a list ``skiprows``); a file
    handle would always be read with one. Comment or blank lines (or a BOM) before the header:
    a handle positioned at the header.

    A number the C parser cannot read (text, ``nan``, blanks) sends the file through a second
    read with every column as text, so the validation can name the cell.
    """
    numeric = [c for c in names if c.strip().lower() in ("g", "e", "zpe", "cpdt", "ts", "solvation")]
    text = dict.fromkeys((c for c in names if c not in numeric), _text_dtype())  # species too: coded from its period, or hashed once
    if os.path.getsize(path) < _CATEGORICAL_SPECIES_BYTES:  # a few distinct species: the parser's categorical is smaller
        for c in names:
            if c.strip().lower() == "species":
                text[c] = "category"
    kwargs = dict(header=0, skiprows=set(skiprows) if skiprows else None, keep_default_na=False, index_col=False,
                  encoding="utf-8", engine="c", skip_blank_lines=True)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("error", pd.errors.ParserWarning)
            with contextlib.ExitStack() as stack:
                if scan.header_offset == 0:  # the header is the first line: give pandas the path (it may split the file over threads)
                    source = path
                else:  # comment or blank lines (or a BOM) before the header: start the parser at the header
                    source = stack.enter_context(open(path, "rb"))
                    source.seek(scan.header_offset)
                try:
                    return pd.read_csv(source, dtype={**text, **{c: float for c in numeric}}, na_values={c: [""] for c in numeric}, **kwargs)
                except ValueError as exc:
                    if isinstance(exc, (pd.errors.ParserError, UnicodeDecodeError)):
                        raise
                if not isinstance(source, str):
                    source.seek(scan.header_offset)
                return pd.read_csv(source, dtype=str, **kwargs)
    except (pd.errors.ParserError, pd.errors.ParserWarning, csv.Error) as exc:
        _diagnose(path, label, scan, len(names))
        raise EnergyTableError(label, f"is not a valid CSV table ({_cut(str(exc).strip(), 120)}); check separators and quoting") from None
    except UnicodeDecodeError:
        raise EnergyTableError(label, "is not UTF-8 text; save the table as CSV UTF-8") from None


def _text_dtype():
    """Arrow strings when pyarrow is there (the C parser hands them over without a per-cell step), else ``str``."""
    try:
        import pyarrow as pa
    except ImportError:  # pragma: no cover - pyarrow is optional
        return str
    return pd.ArrowDtype(pa.string())


def _newlines(data: bytes) -> int:
    """Number of line ends in ``data`` (numpy compares bytes faster than ``bytes.count``)."""
    return int(np.count_nonzero(np.frombuffer(data, dtype=np.uint8) == 10))


def _diagnose(path: str, label: str, scan: _Scan, n_fields: int) -> None:
    """Error path only: walk the file with the csv module and raise for the first bad line."""
    with open(path, encoding="utf-8-sig", newline="") as fh:
        lines = enumerate(fh, start=1)
        for number, line in lines:
            if number <= scan.header_line + 1 or _is_skipped(line):
                continue
            text, end = line, number
            while text.count('"') % 2:  # an open quote: the record goes on on the next line
                nxt = next(lines, None)
                if nxt is None:
                    raise EnergyTableError(label, f"line {number}: a quote (\") is opened and never closed; close it or remove it")
                end, more = nxt
                text += more
            if end != number:
                raise EnergyTableError(label, f"lines {number}-{end}: a quoted field spans several lines; keep one row per line "
                                       "(remove the line break inside the quotes)")
            fields = next(csv.reader([text.rstrip("\r\n")]), [])
            if len(fields) > n_fields:
                raise EnergyTableError(label, f"line {number} has {len(fields)} fields, the header has {n_fields}; check separators "
                                       "(a ',' inside a name needs quotes) and remove extra cells")


# -- validation -------------------------------------------------------------------------------------
def _text_checks(label: str, loc: _Locations, codes: np.ndarray, cleaned: np.ndarray, masks, column: str) -> None:
    """Refuse empty names, control characters (NUL included) and over-long names, per distinct value."""
    empty, control, long = masks
    for bad, problem in (
        (empty, f"empty {column} name; give every row a {column}"),
        (control, f"{column} name {{value}} contains a control character (NUL, tab, line break...); remove it"),
        (long, f"{column} name {{value}} is longer than {MAX_NAME_LENGTH} characters; shorten it"),
    ):
        if bad.any():
            j = np.flatnonzero(bad)
            rows = np.isin(codes, j)
            value = _cut(str(cleaned[int(j[0])]).encode("unicode_escape").decode("ascii"))
            raise EnergyTableError(label, problem.format(value=value) + _count_note(rows), rows=loc[rows], column=column)


def _count_note(mask: np.ndarray) -> str:
    n = int(np.count_nonzero(mask))
    return f" ({n:,} rows in all)" if n > _MAX_ROWS_NAMED else ""


def _numbers(frame: Mapping[str, pd.Series], col: str) -> tuple[np.ndarray, np.ndarray, object]:
    """(values, not-a-number mask, echo function) of an energy column; empty cells are NaN."""
    column = frame[col]
    if column.dtype == np.float64:
        values = column.to_numpy()  # no copy
        return values, np.isinf(values), lambda mask: [repr(v) for v in values[mask][:3]]
    if pd.api.types.is_numeric_dtype(column) and not pd.api.types.is_bool_dtype(column):
        values = column.to_numpy(dtype=float, na_value=np.nan)
        return values, np.isinf(values), lambda mask: [repr(v) for v in values[mask][:3]]
    text = column.astype(object).where(column.notna(), "").astype(str).str.strip()
    values = pd.to_numeric(text.where(text != "", None), errors="coerce").to_numpy(dtype=float)
    bad = text.ne("").to_numpy() & ~np.isfinite(values)
    return values, bad, lambda mask: [_cut(v) for v in text[mask].head(3)]


def _validate(raw: pd.DataFrame, locations: "_Locations", label: str, scheme: ReferenceScheme) -> EnergyTable:
    if raw.shape[1] == 0:
        raise EnergyTableError(label, "has no columns; expected surface, species and G or E")
    # -- headers ----------------------------------------------------------------------------
    rename, seen = {}, {}
    for col in raw.columns:
        low = str(col).strip().lower()
        if low in _CANONICAL:
            if low in seen:
                raise EnergyTableError(label, f"columns {_cut(seen[low])} and {_cut(col)} are the same (headers are case-insensitive); keep one", column=str(col))
            seen[low] = col
            rename[col] = _CANONICAL[low]
    n = len(raw)
    frame = {rename.get(col, col): raw.iloc[:, i] for i, col in enumerate(raw.columns)}  # name -> column, no frame copy
    raw_columns = [str(c) for c in raw.columns]
    del raw  # from here on ``frame`` holds the input; columns are dropped once encoded
    missing = [c for c in ("surface", "species") if c not in frame]
    if missing:
        raise EnergyTableError(label, f"missing column(s) {missing}; found {_names(raw_columns)}; required: surface, species and G or E")
    if "G" not in frame and "E" not in frame:
        raise EnergyTableError(label, f"needs a column G (free energy, eV) or E (electronic energy, eV); found {_names(raw_columns)}")
    if n == 0:
        raise EnergyTableError(label, "has a header but no rows")
    loc = locations

    # -- surfaces: checked once per distinct name -------------------------------------------------
    surface_codes, distinct, run = _encode_text(frame["surface"])  # run: L when surface codes are row // L
    cleaned, changed, *masks = _clean_distinct(distinct)
    _text_checks(label, loc, surface_codes, cleaned, masks, "surface")
    merged_codes, surface_names = _merge_codes(surface_codes, cleaned, changed)
    if merged_codes is not surface_codes:
        surface_codes, run = merged_codes, None
    del merged_codes
    del distinct, cleaned
    extra_columns = [c for c in frame if c not in ("surface", "species", "G")]
    del frame["surface"]  # the per-cell text is no longer needed
    if n >= _BIG:
        _release_memory()

    # -- species: parsed once per distinct text -------------------------------------------------------
    species_codes, distinct, period = _encode_text(frame["species"], period=run)  # period: species repeat every `run` rows
    species_texts, _, *_ignored = _clean_distinct(distinct)
    del frame["species"]
    keys = []
    for j, text in enumerate(species_texts):
        try:
            sp = Species.parse(text)
            problem = None
            if sp.is_site:
                problem = "the clean surface '*' is the zero of adsorption energies; remove this row"
            elif not sp.is_adsorbate:
                problem = (f"species {_cut(text)} is not an adsorbate; adsorbates end in '*'. Free energies of molecules are set "
                           "with ReferenceScheme(overrides={...})")
        except NotationError as exc:
            problem = f"species {_cut(text)}: {exc.reason}"
        if problem is not None:
            first = [loc[int(np.argmax(species_codes == j))]]  # error path: the first row with this text
            raise EnergyTableError(label, problem, rows=first, column="species")
        keys.append(sp.key)
    key_codes, key_names = pd.factorize(np.array(keys, dtype=object))
    if not np.array_equal(key_codes, np.arange(len(species_texts))):  # texts that name the same adsorbate share a code
        species_codes = key_codes.astype(_small_code_type(len(key_names)))[species_codes]
    key_names = np.asarray(key_names, dtype=object)
    parsed = [Species.parse(k) for k in key_names]
    for k, (key, sp) in enumerate(zip(key_names, parsed)):  # reachability from the references
        try:
            scheme.balance(sp.elements)
        except ReferenceSchemeError as exc:
            raise EnergyTableError(label, f"species {key}: {exc}", rows=loc[species_codes == k], column="species") from None

    # -- numbers --------------------------------------------------------------------------------
    numeric: dict[str, np.ndarray] = {}
    all_finite: set[str] = set()  # columns whose every value is a finite number within the bound
    for col in _NUMERIC:
        if col not in frame:
            continue
        if frame[col].dtype == np.float64:  # the usual case: one pass proves the column clean
            values = frame[col].to_numpy()
            with np.errstate(invalid="ignore"):  # two reductions, no temporary array; NaN makes both False
                if len(values) and bool(values.min() >= -ENERGY_BOUND_EV) and bool(values.max() <= ENERGY_BOUND_EV):
                    numeric[col] = values
                    all_finite.add(col)
                    continue
        values, not_number, echo = _numbers(frame, col)
        if not_number.any():
            examples = ", ".join(echo(not_number))
            raise EnergyTableError(label, f"not a finite number ({examples}){_count_note(not_number)}; give energies in eV as plain numbers",
                                   rows=loc[not_number], column=col)
        with np.errstate(invalid="ignore"):
            huge = (values > ENERGY_BOUND_EV) | (values < -ENERGY_BOUND_EV)
        if huge.any():
            raise EnergyTableError(
                label,
                f"{col} = {values[huge][0]:.6g} eV is beyond the plausibility bound |{col}| <= {ENERGY_BOUND_EV:g} eV{_count_note(huge)}; "
                "give adsorption energies in eV against the reference molecules (not total DFT energies, not kJ/mol)",
                rows=loc[huge],
                column=col,
            )
        numeric[col] = values
    has_g = (np.broadcast_to(True, n) if "G" in all_finite else np.isfinite(numeric["G"])) if "G" in numeric else np.zeros(n, bool)  # read-only
    has_e = (np.ones(n, bool) if "E" in all_finite else np.isfinite(numeric["E"])) if "E" in numeric else np.zeros(n, bool)
    if not ("G" in all_finite or "E" in all_finite):  # else every row has an energy
        neither = ~has_g & ~has_e
        if neither.any():
            raise EnergyTableError(label, "no energy: fill G (free energy) or E (electronic energy), in eV" + _count_note(neither), rows=loc[neither],
                                   column="G" if "G" in numeric else "E")
    both = has_g & has_e if ("G" in numeric and "E" in numeric) else np.zeros(0, bool)
    if both.any():
        raise EnergyTableError(label, "both G and E given; give one of them per row (G already contains the corrections)", rows=loc[both])
    any_e = bool(has_e.any())
    for col in _CORRECTIONS:
        if col in numeric:
            on_g = has_g & np.isfinite(numeric[col])
            if on_g.any():
                raise EnergyTableError(
                    label,
                    f"{col} given on a row with G; G already includes corrections, so they would be counted twice. "
                    "Give E with corrections, or G alone",
                    rows=loc[on_g],
                    column=col,
                )
    for col in ("ZPE", "CpdT", "TS"):
        if any_e and col not in numeric:
            raise EnergyTableError(
                label,
                f"rows with E need the adsorbate's {col} column (eV) so that G = E + ZPE + CpdT - TS (+ solvation); "
                "add the column, or give G instead of E",
                rows=loc[np.flatnonzero(has_e)[:3]],
                column=col,
            )
        if col in numeric:
            empty = has_e & ~np.isfinite(numeric[col])
            if empty.any():
                raise EnergyTableError(label, f"{col} is empty on a row with E; give the adsorbate's {col} in eV (0 if truly none)", rows=loc[empty], column=col)
            with np.errstate(invalid="ignore"):
                negative = numeric[col] < 0
            if negative.any():
                from ecatlab.errors import CorrectionWarning

                what = {"ZPE": "a zero-point energy", "CpdT": "an integral of a positive heat capacity", "TS": "T times an entropy"}[col]
                where = ", ".join(loc[negative][:10])
                warnings.warn(
                    f"{label} at {where}{_count_note(negative)}, column {col!r}: {col} = {numeric[col][negative][0]:.6g} eV is negative, "
                    f"but an adsorbate's own {col} is {what}; used as given. "
                    + ("Give TS itself (ecatlab subtracts it), not -TS, " if col == "TS" else "")
                    + "unless the corrections were shifted on purpose (e.g. relative to other reference corrections)",
                    CorrectionWarning,
                    stacklevel=3,
                )

    # -- dense matrix from the codes; duplicates show as fewer filled cells ------------------------------
    if "G" in numeric:
        G = numeric["G"] if has_g.all() else np.where(has_g, numeric["G"], np.nan)
    else:
        G = np.full(n, np.nan)
    notes = []
    if any_e:
        coef = scheme.balance_matrix(parsed)  # (n_keys, n_refs)
        ref_corr = scheme.reference_correction().to_numpy(dtype=float)  # (n_refs,)
        per_key = coef @ ref_corr
        own = numeric["ZPE"] + numeric["CpdT"] - numeric["TS"]
        if "solvation" in numeric:
            own = own + np.nan_to_num(numeric["solvation"], nan=0.0)
        G = np.where(has_e, numeric["E"] + own - per_key[species_codes], G)
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
    proven = run is not None and period == run == len(key_names)  # codes follow row position: the layout is known
    dense = _dense_grouped(surface_codes, species_codes, G, len(surface_names), len(key_names), proven)  # no duplicates possible
    scattered = dense is None
    if scattered:
        dense = _dense(surface_codes, species_codes, G, len(surface_names), len(key_names))
    if scattered and np.count_nonzero(~np.isnan(dense)) != n:
        pair = surface_codes.astype(np.int64) * (len(key_names) + 1) + species_codes
        dup = pd.Series(pair).duplicated(keep=False).to_numpy()
        first = pair[dup][0]
        s, k = surface_names[surface_codes[dup][0]], key_names[species_codes[dup][0]]
        raise EnergyTableError(label, f"duplicate rows for surface {_cut(s)} and species {k!r}; keep one value per (surface, species)",
                               rows=loc[pair == first])

    surface_index = pd.Index(surface_names, name="surface", dtype=object)
    species_index = pd.Index(key_names, name="species", dtype=object)
    origin = _categorical(has_e.view(np.int8), pd.Index(["G given", "from E + corrections"], dtype=object))  # 0/1, no copy
    data = {
        "surface": _categorical(surface_codes, surface_index),
        "species": _categorical(species_codes, species_index),
        "G": G,
        "G_origin": origin,
    }
    lazy = loc.kind == "line" and callable(loc._labels)  # file line numbers: worked out when the frame is read
    if not lazy:
        data[loc.kind] = loc.labels
    for col in extra_columns:
        if col not in data:
            data[col] = numeric[col] if col in numeric else frame[col].array
    out = pd.DataFrame(data, copy=False)
    table = EnergyTable(out, scheme, label, tuple(notes))
    if lazy:
        table.__dict__["_pending_lines"] = (loc, 4)  # after surface, species, G, G_origin
    table.__dict__["_layout"] = (surface_index, species_index, dense)
    return table
