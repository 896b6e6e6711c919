"""Energy tables as Parquet files and partitioned Parquet datasets (IO only).

Two layouts, both with energies in eV against the clean surface and the reference molecules of the
:class:`~ecatlab.references.ReferenceScheme` (the same meaning as the CSV columns of
:func:`ecatlab.read_energies`):

* **long**: one row per (surface, adsorbate): ``surface``, ``species`` and ``G``, or ``E`` with the
  adsorbate's ``ZPE``, ``CpdT``, ``TS`` and optional ``solvation`` (headers case-insensitive);
* **wide**: one row per surface: ``surface`` and one column of G per adsorbate (``OH*``, ``O*``...);
  an empty (null/NaN) cell means "not computed".

A *dataset* is a folder of ``*.parquet`` files (any depth; files and folders whose names start with
``.`` or ``_`` are ignored, as in Apache Arrow). Every file becomes one partition of the Dask path
(:mod:`ecatlab.scaleout`), so **one surface's rows must all be in one file**. Datasets written by
:func:`write_energies_parquet` and :class:`EnergyDatasetWriter` hold the surfaces sorted by name with
non-overlapping name ranges per file; :func:`open_energy_dataset` proves this from the files' footer
statistics (min/max of ``surface``) and, when it cannot, the Dask path regroups rows by surface with
a shuffle before computing (same numbers, more time).

Validation: the schema (columns, types, layout) of every file is checked when a dataset is opened
(footers only); the values are checked by :func:`ecatlab.read_energies` when a partition is read.
Errors are :class:`~ecatlab.errors.DatasetError` naming file, row group, row, column, species and
the fix, in one line.

Files written here carry their provenance in the Parquet schema metadata (key ``ecatlab``):
layout, units (eV), reference molecules, temperature and the source table.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import sys
import uuid
from dataclasses import dataclass, field
from typing import Iterable, Iterator

import numpy as np
import pandas as pd

from ecatlab.errors import DatasetError, EcatlabError, EnergyTableError, NotationError

__all__ = [
    "DATASET_COLUMNS",
    "EnergyDataset",
    "EnergyDatasetWriter",
    "dataset_kind",
    "open_energy_dataset",
    "read_energies_parquet",
    "write_energies_parquet",
    "write_parquet_folder",
    "ParquetFolderOutput",
    "read_energies_dataset",
    "wide_to_long",
]

#: Columns of the long layout (lower-case names; headers are case-insensitive); energies in eV.
DATASET_COLUMNS: dict[str, str] = {
    "surface": "surface / site name (text); all rows of a surface in one file",
    "species": "adsorbate in ecatlab notation, e.g. OOH* (text); long layout only",
    "g": "adsorption free energy vs clean surface and reference molecules (eV)",
    "e": "electronic adsorption energy vs clean surface and reference molecules (eV)",
    "zpe": "zero-point energy of the adsorbate (eV); only with E",
    "cpdt": "integral of Cp dT from 0 K to T of the adsorbate (eV); only with E",
    "ts": "temperature times entropy of the adsorbate (eV); only with E",
    "solvation": "solvation correction of the adsorbate (eV); only with E; empty = 0",
    "<adsorbate>*": "wide layout: one column of G (eV) per adsorbate, empty = not computed",
}
_CANONICAL = {"surface": "surface", "species": "species", "g": "G", "e": "E", "zpe": "ZPE", "cpdt": "CpdT", "ts": "TS", "solvation": "solvation"}
_NUMERIC = ("G", "E", "ZPE", "CpdT", "TS", "solvation")
METADATA_KEY = b"ecatlab"
SCHEMA = "ecatlab.dataset/1"
#: Row location codes of the Dask path: file index * 2**40 + row within the file.
_ROW_BITS = 40


# ------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class _FileInfo:
    path: str
    rows: int
    row_groups: tuple[int, ...]
    columns: tuple[tuple[str, str], ...]  # (name in file, canonical name or adsorbate key)
    surface_range: tuple[str, str] | None  # (min, max) from footer statistics, None if unknown
    metadata: dict


@dataclass(frozen=True)
class EnergyDataset:
    """A validated (schema-level) energy dataset: Parquet file(s) or a Dask DataFrame.

    Attributes
    ----------
    source : str
        Folder or file path, or ``"<Dask DataFrame>"``.
    layout : {"long", "wide"}
    columns : tuple of (str, str)
        (column name as stored, canonical name) pairs that are read: for the long layout the
        canonical names are ``surface, species, G, E, ZPE, CpdT, TS, solvation``; for the wide
        layout ``surface`` and the adsorbate keys.
    files : tuple of str
        The Parquet files, one partition each (empty for a Dask DataFrame).
    row_groups : tuple of tuple of int
        Rows per row group of every file (for error locations).
    grouped : bool
        True when every surface's rows are proven to be in one partition; False makes the Dask path
        regroup by surface (shuffle) first.
    references : tuple of str or None
        Reference molecules recorded in the files' metadata (None: not recorded).
    frame : dask DataFrame or None
        The user's Dask DataFrame (``files`` empty), else None.
    """

    source: str
    layout: str
    columns: tuple[tuple[str, str], ...]
    files: tuple[str, ...] = ()
    row_groups: tuple[tuple[int, ...], ...] = ()
    grouped: bool = False
    references: tuple[str, ...] | None = None
    frame: object = field(default=None, repr=False, compare=False)

    @property
    def npartitions(self) -> int:
        return len(self.files) if self.files else int(self.frame.npartitions)

    @property
    def rows(self) -> int | None:
        """Total rows (files only; None for a Dask DataFrame)."""
        return sum(sum(rg) for rg in self.row_groups) if self.files else None

    def locate(self, code: int) -> str:
        """Human location of a row code (file, row group, row; 0-based rows within the file)."""
        if not self.files:
            return f"row label {code!r}"
        code = int(code)
        i, row = code >> _ROW_BITS, code & ((1 << _ROW_BITS) - 1)
        if not 0 <= i < len(self.files):
            return f"row label {code!r}"
        bounds = np.cumsum((0,) + tuple(self.row_groups[i]))
        g = int(np.searchsorted(bounds, row, side="right") - 1)
        return f"file {self.files[i]}, row group {g}, row {row - int(bounds[g])} (row {row} of the file)"

    def read_file(self, i: int) -> pd.DataFrame:
        """File ``i`` as a long-layout DataFrame with canonical columns; index = row location codes."""
        import pyarrow.parquet as pq

        path = self.files[i]
        try:
            table = pq.read_table(path, columns=[c for c, _ in self.columns])
        except Exception as exc:  # noqa: BLE001 - pyarrow raises several types for unreadable files
            raise DatasetError(path, f"cannot be read as Parquet ({_short(exc)}); rewrite the file or remove it from the folder") from None
        frame = table.to_pandas()
        frame.columns = [canon for _, canon in self.columns]
        frame.index = pd.Index((np.int64(i) << _ROW_BITS) + np.arange(len(frame), dtype=np.int64))
        return frame

    def describe(self) -> str:
        where = f"{len(self.files)} file(s)" if self.files else f"{self.npartitions} partition(s)"
        rows = f", {self.rows:,} rows" if self.rows is not None else ""
        grouped = "grouped by surface" if self.grouped else "not proven grouped by surface (regrouped before computing)"
        return f"{self.layout} layout, {where}{rows}, {grouped}"

    def __repr__(self) -> str:
        return f"EnergyDataset({self.source!r}: {self.describe()})"


def _short(exc: BaseException) -> str:
    text = " ".join(str(exc).split())
    return text[:200] if text else type(exc).__name__


# ------------------------------------------------------------------------------------------------
def dataset_kind(source) -> str | None:
    """What kind of dataset ``source`` is, without importing dask or pyarrow when not needed.

    Returns ``"dask"`` (a Dask DataFrame), ``"dataset"`` (an :class:`EnergyDataset`),
    ``"parquet-file"`` (a path ending in ``.parquet``/``.pq``), ``"parquet-folder"`` (an existing
    folder that contains Parquet files) or None (CSV paths, pandas frames, EnergyTables...).
    """
    if isinstance(source, EnergyDataset):
        return "dataset"
    if "dask.dataframe" in sys.modules:
        import dask.dataframe as dd

        if isinstance(source, dd.DataFrame):
            return "dask"
    if isinstance(source, (str, os.PathLike)):
        path = os.fspath(source)
        if path.lower().endswith((".parquet", ".pq")) and not os.path.isdir(path):
            return "parquet-file"
        if os.path.isdir(path) and any(True for _ in _walk_parquet(path)):
            return "parquet-folder"
    return None


def _ignored(name: str) -> bool:
    return name.startswith((".", "_"))


def _walk_parquet(folder: str) -> Iterator[str]:
    for root, dirs, files in os.walk(folder):
        dirs[:] = sorted(d for d in dirs if not _ignored(d))
        for f in sorted(files):
            if not _ignored(f) and f.lower().endswith((".parquet", ".pq")):
                yield os.path.join(root, f)


def _list_files(path: str) -> list[str]:
    if not os.path.exists(path):
        raise DatasetError(path, "not found; give a .parquet file or a folder of .parquet files")
    if not os.path.isdir(path):
        if not path.lower().endswith((".parquet", ".pq")):
            raise DatasetError(path, "is not a Parquet file (expected the extension .parquet); for CSV use read_energies")
        return [path]
    files, stray = [], []
    for root, dirs, names in os.walk(path):
        dirs[:] = sorted(d for d in dirs if not _ignored(d))
        for f in sorted(names):
            if _ignored(f):
                continue
            (files if f.lower().endswith((".parquet", ".pq")) else stray).append(os.path.join(root, f))
    if stray:
        more = f" (and {len(stray) - 1} more)" if len(stray) > 1 else ""
        raise DatasetError(
            path,
            f"contains a file that is not Parquet: {stray[0]}{more}; move it out of the dataset folder "
            "(or rename it to start with '_' or '.' to have it ignored)",
        )
    if not files:
        raise DatasetError(path, "folder holds no .parquet files; write a dataset with write_energies_parquet or 'ecatlab dataset convert'")
    return files


def _text_type(t) -> bool:
    import pyarrow as pa

    if pa.types.is_dictionary(t):
        t = t.value_type
    return pa.types.is_string(t) or pa.types.is_large_string(t) or getattr(pa.types, "is_string_view", lambda _: False)(t)


def _numeric_type(t) -> bool:
    import pyarrow as pa

    return pa.types.is_floating(t) or pa.types.is_integer(t) or pa.types.is_null(t)


def _inspect(path: str, layout: str | None) -> tuple[_FileInfo, str]:
    import pyarrow.parquet as pq

    try:
        pf = pq.ParquetFile(path)
    except Exception as exc:  # noqa: BLE001
        raise DatasetError(path, f"is not a readable Parquet file ({_short(exc)}); rewrite it or remove it from the folder") from None
    schema = pf.schema_arrow
    raw_meta = (schema.metadata or {}).get(METADATA_KEY)
    meta = {}
    if raw_meta:
        try:
            meta = json.loads(raw_meta)
        except ValueError:
            meta = {}
    names = list(schema.names)
    lower: dict[str, str] = {}
    for n in names:
        low = n.strip().lower()
        if low in _CANONICAL:
            if low in lower:
                raise DatasetError(path, f"columns {lower[low]!r} and {n!r} are the same (headers are case-insensitive); keep one", column=n)
            lower[low] = n
    if "surface" not in lower:
        raise DatasetError(path, f"missing column 'surface'; found {names}; required: surface, species and G or E (long) or surface and one column per adsorbate (wide)")
    kind = layout or meta.get("layout") or ("long" if "species" in lower else "wide")
    if kind not in ("long", "wide"):
        raise DatasetError(path, f"unknown layout {kind!r}; use 'long' or 'wide'")
    cols: list[tuple[str, str]] = []
    if kind == "long":
        if "species" not in lower:
            raise DatasetError(path, f"long layout needs a column 'species'; found {names}")
        if "g" not in lower and "e" not in lower:
            raise DatasetError(path, f"needs a column G (free energy, eV) or E (electronic energy, eV); found {names}")
        for low, canon in _CANONICAL.items():
            if low in lower:
                cols.append((lower[low], canon))
    else:
        from ecatlab.notation import Species

        cols.append((lower["surface"], "surface"))
        seen: dict[str, str] = {}
        for n in names:
            if n == lower["surface"] or n.startswith("__index_level_"):
                continue
            try:
                sp = Species.parse(n)
            except NotationError as exc:
                raise DatasetError(path, f"wide layout: column is not an adsorbate ({exc.reason}); every column other than surface is the G (eV) of one adsorbate, drop or rename it", column=n) from None
            if not sp.is_adsorbate:
                raise DatasetError(path, "wide layout: column is not an adsorbate (adsorbates end in '*'); drop or rename it", column=n)
            if sp.key in seen:
                raise DatasetError(path, f"wide layout: columns {seen[sp.key]!r} and {n!r} are the same adsorbate {sp.key}; keep one", column=n)
            seen[sp.key] = n
            cols.append((n, sp.key))
        if len(cols) == 1:
            raise DatasetError(path, f"wide layout needs at least one adsorbate column besides surface; found {names}")
    for name, canon in cols:
        t = schema.field(name).type
        if canon in ("surface", "species"):
            if not _text_type(t):
                raise DatasetError(path, f"is of type {t}, expected text (string); write names as strings", column=name)
        elif not _numeric_type(t):
            raise DatasetError(path, f"is of type {t}, expected numbers in eV (float64); cast the column to float64", column=name)
    md = pf.metadata
    rgs = tuple(md.row_group(g).num_rows for g in range(md.num_row_groups))
    surface_range = _surface_range(md, names.index(lower["surface"]))
    return _FileInfo(path, int(md.num_rows), rgs, tuple(cols), surface_range, meta), kind


def _surface_range(md, col: int) -> tuple[str, str] | None:
    lo = hi = None
    for g in range(md.num_row_groups):
        rg = md.row_group(g)
        if rg.num_rows == 0:
            continue
        st = rg.column(col).statistics
        if st is None or not st.has_min_max or (st.null_count or 0) > 0:
            return None
        mn, mx = st.min, st.max
        if isinstance(mn, bytes):
            mn, mx = mn.decode("utf-8", "replace"), mx.decode("utf-8", "replace")
        lo = mn if lo is None or mn < lo else lo
        hi = mx if hi is None or mx > hi else hi
    return None if lo is None else (lo, hi)


def _proven_grouped(infos: list[_FileInfo]) -> bool:
    """True when the files' surface name ranges do not overlap (so no surface spans two files)."""
    if len(infos) <= 1:
        return True
    ranges = []
    for info in infos:
        if info.rows == 0:
            continue
        if info.surface_range is None:
            return False
        ranges.append(info.surface_range)
    ranges.sort()
    # UTF-8 byte order equals code-point order, so Python's str comparison matches Parquet statistics
    return all(prev[1] < nxt[0] for prev, nxt in zip(ranges, ranges[1:]))


def open_energy_dataset(source, layout: str | None = None, grouped: bool | None = None) -> EnergyDataset:
    """Open a Parquet file, a folder of Parquet files or a Dask DataFrame as an :class:`EnergyDataset`.

    Only footers are read here (schema, row counts, statistics); values are validated when the
    partitions are read.

    Parameters
    ----------
    source : path or dask DataFrame
    layout : {"long", "wide"}, optional
        Default: from the files' metadata, else "long" when a ``species`` column exists.
    grouped : bool, optional
        Files: None proves grouping from the footer statistics; False forces regrouping.
        Dask DataFrame: True declares that no surface spans two partitions (not checked: wrong
        results if false); None/False regroups by surface with a shuffle.

    Raises
    ------
    DatasetError
        Naming the file, the column and the fix.
    """
    if isinstance(source, EnergyDataset):
        return source
    kind = dataset_kind(source)
    if kind == "dask":
        return _open_dask(source, layout, grouped)
    if not isinstance(source, (str, os.PathLike)):
        raise DatasetError(repr(type(source).__name__), "not a dataset: give a .parquet file, a folder of .parquet files or a Dask DataFrame")
    path = os.fspath(source)
    files = _list_files(path)
    infos, kinds = [], set()
    for f in files:
        info, k = _inspect(f, layout)
        infos.append(info)
        kinds.add(k)
    if len(kinds) > 1:
        raise DatasetError(path, "mixes long and wide files; keep one layout per dataset")
    first = infos[0]
    want = {canon for _, canon in first.columns}
    for info in infos[1:]:
        have = {canon for _, canon in info.columns}
        if have != want:
            extra, lack = sorted(have - want), sorted(want - have)
            raise DatasetError(
                info.path,
                f"columns differ from {first.path} (extra {extra}, missing {lack}); every file of a dataset needs the same columns",
            )
        names = {canon: n for n, canon in info.columns}
        first_names = {canon: n for n, canon in first.columns}
        if names != first_names:
            raise DatasetError(info.path, f"column names differ in case or spelling from {first.path}; use the same headers in every file")
    refs = first.metadata.get("references")
    return EnergyDataset(
        source=path,
        layout=kinds.pop(),
        columns=first.columns,
        files=tuple(files),
        row_groups=tuple(i.row_groups for i in infos),
        grouped=_proven_grouped(infos) if grouped is not False else False,
        references=tuple(refs) if refs else None,
    )


def _open_dask(ddf, layout: str | None, grouped: bool | None) -> EnergyDataset:
    label = "<Dask DataFrame>"
    names = [str(c) for c in ddf.columns]
    lower: dict[str, str] = {}
    for n in names:
        low = n.strip().lower()
        if low in _CANONICAL:
            if low in lower:
                raise DatasetError(label, f"columns {lower[low]!r} and {n!r} are the same (headers are case-insensitive); keep one", column=n)
            lower[low] = n
    if "surface" not in lower:
        raise DatasetError(label, f"missing column 'surface'; found {names}")
    kind = layout or ("long" if "species" in lower else "wide")
    cols: list[tuple[str, str]] = []
    if kind == "long":
        if "species" not in lower or ("g" not in lower and "e" not in lower):
            raise DatasetError(label, f"long layout needs surface, species and G or E; found {names}")
        cols = [(lower[low], canon) for low, canon in _CANONICAL.items() if low in lower]
    else:
        from ecatlab.notation import Species

        cols = [(lower["surface"], "surface")]
        for n in names:
            if n == lower["surface"]:
                continue
            try:
                sp = Species.parse(n)
            except NotationError as exc:
                raise DatasetError(label, f"wide layout: column is not an adsorbate ({exc.reason}); drop or rename it", column=n) from None
            if not sp.is_adsorbate:
                raise DatasetError(label, "wide layout: column is not an adsorbate (adsorbates end in '*'); drop or rename it", column=n)
            cols.append((n, sp.key))
    dtypes = ddf.dtypes
    for name, canon in cols:
        dt = dtypes[name]
        if canon in ("surface", "species"):
            if pd.api.types.is_numeric_dtype(dt) or pd.api.types.is_bool_dtype(dt):
                raise DatasetError(label, f"is of type {dt}, expected text; convert with .astype(str)", column=name)
        elif not (pd.api.types.is_numeric_dtype(dt) and not pd.api.types.is_bool_dtype(dt)):
            raise DatasetError(label, f"is of type {dt}, expected numbers in eV (float64); convert with dd.to_numeric or .astype(float)", column=name)
    return EnergyDataset(label, kind, tuple(cols), grouped=bool(grouped), frame=ddf)


# ------------------------------------------------------------------------------------------------
def wide_to_long(frame: pd.DataFrame, source: str = "<wide table>", locate=None) -> pd.DataFrame:
    """Wide partition (``surface`` + adsorbate key columns, G in eV) to long rows ``surface, species, G``.

    Empty cells (NaN) are left out (not computed); infinite values, duplicate surfaces and
    non-numeric values raise :class:`DatasetError`. The index of each long row is the index label
    of its wide row (so errors found later point at the file row).
    """
    ads = [c for c in frame.columns if c != "surface"]
    locate = locate or (lambda code: f"row label {code!r}")
    surf = frame["surface"]
    dup = surf.duplicated(keep=False).to_numpy()
    if dup.any():
        rows = frame.index[dup]
        raise DatasetError(source, f"duplicate rows for surface {surf[dup].iloc[0]!r} (wide layout: one row per surface); keep one", location="; ".join(locate(r) for r in rows[:3]), column="surface")
    values = np.empty((len(frame), len(ads)))
    for j, c in enumerate(ads):
        col = frame[c]
        try:
            values[:, j] = col.to_numpy(dtype=float, na_value=np.nan)
        except (TypeError, ValueError):
            raise DatasetError(source, f"not numbers ({col.dtype}); give G in eV as float64", column=c) from None
    bad = np.isinf(values)
    if bad.any():
        r, j = np.argwhere(bad)[0]
        raise DatasetError(source, f"not a finite number ({values[r, j]!r}); give energies in eV as plain numbers (empty = not computed)", location=locate(frame.index[r]), column=ads[j])
    keep = np.isfinite(values)
    r_idx, c_idx = np.nonzero(keep)  # row-major: surface by surface, adsorbates in column order
    return pd.DataFrame(
        {"surface": surf.to_numpy()[r_idx], "species": np.asarray(ads, dtype=object)[c_idx], "G": values[r_idx, c_idx]},
        index=frame.index[r_idx],
    )


def energy_table_from_partition(part: pd.DataFrame, dataset: EnergyDataset, scheme, temperature, label: str | None = None):
    """Validate one partition with :func:`ecatlab.read_energies`; errors become :class:`DatasetError`.

    ``part`` is a canonical-column frame (long or wide per ``dataset.layout``) whose index holds
    row location codes (see :meth:`EnergyDataset.locate`).
    """
    from ecatlab.energies import read_energies

    label = label or dataset.source
    if dataset.layout == "wide":
        part = wide_to_long(part, label, dataset.locate)
        if part.empty:
            raise DatasetError(label, "a partition has no energies (every cell empty); fill G values or drop the rows")
    try:
        return read_energies(part, references=scheme, temperature=temperature, name=label)
    except EnergyTableError as exc:
        raise _remap(exc, dataset, label) from None
    except EcatlabError as exc:
        raise DatasetError(label, str(exc)) from None


_ROW_RE = re.compile(r"^row (-?\d+)$")


def _remap(exc: EnergyTableError, dataset: EnergyDataset, label: str) -> DatasetError:
    rows = []
    for r in exc.rows[:3]:
        m = _ROW_RE.match(str(r))
        rows.append(dataset.locate(int(m.group(1))) if m else str(r))
    if len(exc.rows) > 3:
        rows.append(f"and {len(exc.rows) - 3} more rows")
    return DatasetError(label, exc.problem, location="; ".join(rows) or None, column=exc.column)


# ------------------------------------------------------------------------------------------------
def read_energies_parquet(source, references=None, temperature: float | None = None, name: str | None = None, layout: str | None = None):
    """Read a Parquet file or dataset folder into an in-memory :class:`~ecatlab.energies.EnergyTable`.

    Parameters
    ----------
    source : path
        ``.parquet`` file or folder of them (long or wide layout, see the module docstring).
    references : ReferenceScheme or list of str, optional
        Default: the reference molecules recorded in the files, else H2(g), H2O(l), CO2(g), N2(g).
    temperature : float, optional
        K, as in :func:`ecatlab.read_energies`.
    name : str, optional
        Name used in messages and as the table's source (default: the path).
    layout : {"long", "wide"}, optional

    Returns
    -------
    EnergyTable
        Surfaces in file order; the frame's ``row`` column holds row location codes.

    Raises
    ------
    DatasetError
        Naming file, row group, row, column (and species) and the fix.
    """
    ds = open_energy_dataset(source, layout=layout)
    label = name or ds.source
    parts = [ds.read_file(i) for i in range(len(ds.files))]
    frame = pd.concat(parts) if len(parts) > 1 else parts[0]
    if len(frame) == 0:
        raise DatasetError(label, "has a schema but no rows")
    refs = references if references is not None else ds.references  # a surface split over files is fine in memory
    return energy_table_from_partition(frame, ds, refs, temperature, label)


def read_energies_dataset(source, references=None, temperature: float | None = None, name: str | None = None):
    """Dispatch target of :func:`ecatlab.read_energies` for dataset sources.

    Parquet file or folder: an in-memory EnergyTable (:func:`read_energies_parquet`). Dask DataFrame
    or :class:`EnergyDataset`: the lazy :class:`EnergyDataset` (validated per partition when
    computed by :mod:`ecatlab.scaleout`); ``references``/``temperature`` are then given to the
    analysis functions.
    """
    kind = dataset_kind(source)
    if kind in ("dask", "dataset"):
        return open_energy_dataset(source)
    return read_energies_parquet(source, references=references, temperature=temperature, name=name)


# ------------------------------------------------------------------------------------------------
def _metadata(layout: str, scheme, source: str, extra: dict | None = None) -> bytes:
    meta = {
        "schema": SCHEMA,
        "layout": layout,
        "units": "eV",
        "energies": "adsorption (free) energies vs clean surface and reference molecules",
        "references": list(scheme.references) if scheme is not None else None,
        "temperature": float(scheme.temperature) if scheme is not None else None,
        "source": source,
    }
    meta.update(extra or {})
    return json.dumps(meta).encode()


def _long_frame(table) -> pd.DataFrame:
    """The long rows to store for an EnergyTable: G as given, or E + corrections as given."""
    f = table.frame
    out = pd.DataFrame({"surface": f["surface"].astype(str).to_numpy(), "species": f["species"].astype(str).to_numpy()})
    from_e = (f["G_origin"] == "from E + corrections").to_numpy() if "G_origin" in f.columns else np.zeros(len(f), bool)
    out["G"] = np.where(from_e, np.nan, f["G"].to_numpy(dtype=float))
    if from_e.any():
        for c in ("E", "ZPE", "CpdT", "TS", "solvation"):
            if c in f.columns:
                out[c] = pd.to_numeric(f[c], errors="coerce").to_numpy(dtype=float)
    return out


def _wide_frame(table) -> pd.DataFrame:
    if "G_origin" in table.frame.columns and (table.frame["G_origin"] == "from E + corrections").any():
        note = "the wide layout stores G only: rows given as E + corrections are stored as G at the table's temperature"
    else:
        note = None
    m = table.matrix
    out = pd.DataFrame({"surface": np.asarray(m.index, dtype=object).astype(str)})
    for c in m.columns:
        out[str(c)] = m[c].to_numpy(dtype=float)
    return out, note


def _arrow(frame: pd.DataFrame, meta: bytes):
    import pyarrow as pa

    cols = {}
    for c in frame.columns:
        if c in ("surface", "species"):
            cols[c] = pa.array(frame[c].astype(str).to_numpy(dtype=object), type=pa.string())
        else:
            cols[c] = pa.array(frame[c].to_numpy(dtype=float), type=pa.float64())
    table = pa.table(cols)
    return table.replace_schema_metadata({METADATA_KEY: meta})


def _check_target(path: str, force: bool, inputs: Iterable[str] = ()) -> str:
    target = os.path.abspath(path)
    for src in inputs:
        if src and os.path.exists(src) and os.path.exists(target):
            if os.path.samefile(src, target) or os.path.abspath(src).startswith(target + os.sep):
                raise DatasetError(path, "is the input; write the output elsewhere")
    if os.path.exists(target) and not force:
        raise DatasetError(path, "exists; choose another output or pass force=True (CLI: --force) to replace it")
    parent = os.path.dirname(target)
    if not os.path.isdir(parent):
        raise DatasetError(path, f"folder {parent} does not exist; create it first")
    return target


def _swap_into_place(tmp: str, target: str) -> None:
    """Move ``tmp`` (file or folder) to ``target``; an existing target is replaced only after success."""
    if os.path.isdir(target) and not os.path.islink(target):
        old = os.path.join(os.path.dirname(target), f".{os.path.basename(target)}.old-{uuid.uuid4().hex[:8]}")
        os.replace(target, old)
        try:
            os.replace(tmp, target)
        except OSError:
            os.replace(old, target)
            raise
        shutil.rmtree(old, ignore_errors=True)
    else:
        os.replace(tmp, target)


def write_energies_parquet(
    energies,
    path: str | os.PathLike,
    layout: str = "long",
    surfaces_per_file: int | None = None,
    force: bool = False,
    row_group_surfaces: int | None = None,
) -> str:
    """Write an energy table as one Parquet file or as a partitioned dataset folder.

    Parameters
    ----------
    energies : EnergyTable, DataFrame or CSV path
        Validated with :func:`ecatlab.read_energies` before anything is written.
    path : path
        A ``.parquet`` file (single file) or a folder (dataset of ``part-00000.parquet``...).
    layout : {"long", "wide"}
        Long keeps G as given, or E with ZPE/CpdT/TS/solvation as given (so the table can be
        re-evaluated at another temperature); wide stores G (eV) per adsorbate column.
    surfaces_per_file : int, optional
        Dataset folders: surfaces per file (= per partition of the Dask path; default 50,000).
        Surfaces are sorted by name, so the files' name ranges do not overlap.
    force : bool
        Replace an existing output (written to a temporary name first, then moved into place).
    row_group_surfaces : int, optional
        Surfaces per Parquet row group (default: the whole file).

    Returns
    -------
    str : the written path.
    """
    import pyarrow.parquet as pq

    from ecatlab.energies import EnergyTable, read_energies

    if layout not in ("long", "wide"):
        raise DatasetError(str(path), f"unknown layout {layout!r}; use 'long' or 'wide'")
    table = energies if isinstance(energies, EnergyTable) else read_energies(energies)
    inputs = [os.fspath(energies)] if isinstance(energies, (str, os.PathLike)) else []
    target = _check_target(os.fspath(path), force, inputs)
    single = target.lower().endswith((".parquet", ".pq"))
    extra = {}
    if layout == "long":
        frame = _long_frame(table)
    else:
        frame, note = _wide_frame(table)
        if note:
            extra["note"] = note
    meta = _metadata(layout, table.scheme, table.source, extra)
    tmp = os.path.join(os.path.dirname(target), f".{os.path.basename(target)}.tmp-{uuid.uuid4().hex[:8]}")
    try:
        if single:
            rows = _rows_per_group(frame, layout, row_group_surfaces)
            pq.write_table(_arrow(frame, meta), tmp, row_group_size=rows)
        else:
            os.mkdir(tmp)
            per_file = int(surfaces_per_file or 50_000)
            if per_file < 1:
                raise DatasetError(str(path), f"surfaces_per_file must be >= 1, got {surfaces_per_file}")
            codes, names = pd.factorize(frame["surface"])
            order = np.argsort(np.asarray(names, dtype=object).astype(str), kind="stable")  # surface names sorted
            rank = np.empty(len(order), dtype=np.int64)
            rank[order] = np.arange(len(order))
            row_rank = rank[codes]
            rows_sorted = np.argsort(row_rank, kind="stable")
            frame = frame.iloc[rows_sorted].reset_index(drop=True)
            file_of_row = row_rank[rows_sorted] // per_file
            bounds = np.flatnonzero(np.diff(file_of_row)) + 1
            starts = np.concatenate([[0], bounds])
            stops = np.concatenate([bounds, [len(frame)]])
            for i, (a, b) in enumerate(zip(starts, stops)):
                chunk = frame.iloc[a:b]
                pq.write_table(_arrow(chunk, meta), os.path.join(tmp, f"part-{i:05d}.parquet"), row_group_size=_rows_per_group(chunk, layout, row_group_surfaces))
        _swap_into_place(tmp, target)
    except BaseException:
        if os.path.isdir(tmp):
            shutil.rmtree(tmp, ignore_errors=True)
        elif os.path.exists(tmp):
            os.remove(tmp)
        raise
    return target


def _rows_per_group(frame: pd.DataFrame, layout: str, surfaces: int | None) -> int | None:
    if not surfaces:
        return max(len(frame), 1)
    if layout == "wide":
        return int(surfaces)
    per_surface = max(1, int(round(len(frame) / max(frame["surface"].nunique(), 1))))
    return int(surfaces) * per_surface


class EnergyDatasetWriter:
    """Write a dataset folder part by part (for tables that never fit in memory at once).

    Each :meth:`write` call writes one file = one partition; give every surface's rows in one
    call and the parts in increasing surface-name order, so the files' name ranges do not overlap
    (checked here from the parts' min/max; a violation raises). Columns and types are checked per
    part; values are validated when read. The folder appears at ``path`` only on :meth:`close`
    (written under a temporary name until then; an error or :meth:`abort` removes it).

    Examples
    --------
    >>> with EnergyDatasetWriter("screen", layout="long") as w:   # doctest: +SKIP
    ...     for chunk in chunks:
    ...         w.write(chunk)
    """

    def __init__(self, path: str | os.PathLike, layout: str = "long", references: Iterable[str] | None = None, force: bool = False, source: str = "<writer>"):
        from ecatlab.references import ReferenceScheme

        if layout not in ("long", "wide"):
            raise DatasetError(str(path), f"unknown layout {layout!r}; use 'long' or 'wide'")
        self.layout = layout
        self.target = _check_target(os.fspath(path), force)
        scheme = ReferenceScheme(references=tuple(references)) if references is not None else ReferenceScheme()
        self._meta = _metadata(layout, scheme, source)
        self.tmp = os.path.join(os.path.dirname(self.target), f".{os.path.basename(self.target)}.tmp-{uuid.uuid4().hex[:8]}")
        os.mkdir(self.tmp)
        self.parts = 0
        self._last: str | None = None
        self._columns: list[str] | None = None

    def write(self, frame: pd.DataFrame) -> None:
        """Write one part (a DataFrame in the writer's layout, canonical column names)."""
        import pyarrow.parquet as pq

        label = f"{self.target} part {self.parts}"
        cols = list(frame.columns)
        if self._columns is None:
            need = ["surface", "species"] if self.layout == "long" else ["surface"]
            if [c for c in need if c not in cols] or (self.layout == "long" and "G" not in cols and "E" not in cols):
                raise DatasetError(label, f"{self.layout} layout needs columns {need} and G or E (long); got {cols}")
            self._columns = cols
        elif cols != self._columns:
            raise DatasetError(label, f"columns {cols} differ from the first part's {self._columns}; keep the same columns")
        if len(frame) == 0:
            return
        surf = frame["surface"].astype(str)
        lo, hi = surf.min(), surf.max()
        if self._last is not None and not lo > self._last:
            raise DatasetError(label, f"surface names must increase from part to part (this part starts at {lo!r}, the previous ended at {self._last!r}); sort the surfaces and keep each surface in one part")
        for c in cols:
            if c not in ("surface", "species") and not pd.api.types.is_numeric_dtype(frame[c]):
                raise DatasetError(label, f"is of type {frame[c].dtype}, expected numbers in eV (float64)", column=c)
        pq.write_table(_arrow(frame, self._meta), os.path.join(self.tmp, f"part-{self.parts:05d}.parquet"))
        self._last = hi
        self.parts += 1

    def close(self) -> str:
        """Move the finished folder into place; returns its path."""
        if self.parts == 0:
            self.abort()
            raise DatasetError(self.target, "no parts were written; nothing to save")
        _swap_into_place(self.tmp, self.target)
        return self.target

    def abort(self) -> None:
        shutil.rmtree(self.tmp, ignore_errors=True)

    def __enter__(self) -> "EnergyDatasetWriter":
        return self

    def __exit__(self, exc_type, exc, tb) -> None:
        if exc_type is None:
            self.close()
        else:
            self.abort()


class ParquetFolderOutput:
    """A safe partitioned-Parquet output: a lazy write job into a temporary folder beside ``path``,
    then :meth:`commit` (move into place, replacing an old folder only now) or :meth:`abort`.

    Use it to compute the write together with other results (so the data are read once); for a
    single write, :func:`write_parquet_folder` does everything.
    """

    def __init__(self, ddf, path: str | os.PathLike, force: bool = False, inputs: Iterable[str] = ()):
        self.target = _check_target(os.fspath(path), force, inputs)
        self.tmp = os.path.join(os.path.dirname(self.target), f".{os.path.basename(self.target)}.tmp-{uuid.uuid4().hex[:8]}")
        import pyarrow as pa

        meta = ddf._meta
        schema = pa.Schema.from_pandas(meta, preserve_index=False)
        for c, t in meta.dtypes.items():  # free-text (object) columns hold str; empty meta cannot tell
            if t == object:
                schema = schema.set(schema.get_field_index(str(c)), pa.field(str(c), pa.string()))
        self.job = ddf.to_parquet(self.tmp, write_index=False, compute=False, write_metadata_file=False, schema=schema)

    def commit(self) -> str:
        _swap_into_place(self.tmp, self.target)
        return self.target

    def abort(self) -> None:
        shutil.rmtree(self.tmp, ignore_errors=True)


def write_parquet_folder(ddf, path: str | os.PathLike, force: bool = False, inputs: Iterable[str] = (), compute=None) -> str:
    """Write a Dask DataFrame as a partitioned Parquet folder, safely.

    Written to a temporary folder beside ``path`` and moved into place when every partition is
    done; an existing ``path`` is refused unless ``force`` (and then replaced only after success);
    an output that is one of ``inputs`` is refused.

    Parameters
    ----------
    ddf : dask DataFrame
    path : folder path (must be visible to every Dask worker: local disk or a shared file system)
    force : bool
    inputs : paths the output must not overwrite
    compute : callable, optional
        ``compute(collection)`` runs the write (default: :func:`ecatlab.scaleout.compute`, which
        shows progress and uses the active Dask client or a LocalCluster).
    """
    out = ParquetFolderOutput(ddf, path, force, inputs)
    try:
        if compute is None:
            from ecatlab.scaleout import compute as compute
        compute(out.job)
        return out.commit()
    except BaseException:
        out.abort()
        raise
