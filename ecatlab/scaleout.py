"""Screening beyond one machine's memory: the CHE engine per partition of a Dask DataFrame.

The functions here take an energy dataset (a Parquet file or folder, an
:class:`~ecatlab.datasets.EnergyDataset` or a Dask DataFrame in the long or wide layout) and build
**lazy** Dask results. Every partition (one Parquet file) is turned into an
:class:`~ecatlab.energies.EnergyTable` by :func:`ecatlab.read_energies` and evaluated by the
in-memory engine :func:`ecatlab.che.limiting_potentials` with ``map_partitions`` — never row by
row, and with no CHE equation of its own: the numbers are the in-memory engine's (which calls
:mod:`ecatlab.che.kernel`). One surface's rows are always in one partition (proven from the file
statistics, or regrouped by a shuffle on ``surface``), so partitioning never changes a number.

* :func:`limiting_potentials` — lazy Dask DataFrame, columns of
  :data:`ecatlab.che.LIMITING_POTENTIAL_COLUMNS` (or a subset);
* :func:`gmax` — the chemical-step-aware measure (G_max, its step, blocked, max_chemical_dG);
* :func:`top_k` — the k best surfaces per pathway by :func:`ecatlab.che.kernel.ranking_order`
  (unblocked first, then lower G_max; ties by surface name), reduced across partitions;
* :func:`summary` — per-pathway counts and min/mean/max, reduced across partitions;
* :func:`screen` — summary and top-k in one pass with flat memory per worker (the way to go for
  very large datasets);
* :func:`compute` / :func:`dask_client` — run on the active Dask client, on a cluster given by
  its scheduler address, or on a new ``dask.distributed.LocalCluster``, with a progress bar.

Results are theoretical estimates (CHE model, thermodynamics only).

Notes
-----
Top-k across partitions is exact: the best k of the whole table are among the union of each
partition's best k under the same total order (ranking_order with ties broken by surface name),
so a tree reduction "rank the union, keep k" gives the in-memory answer. Counts, minima and maxima
reduce exactly; means are sums over counts (equal to the in-memory mean to floating-point
summation order, ~1e-15 relative).
"""

from __future__ import annotations

import contextlib
import dataclasses
import warnings
from typing import Sequence

import numpy as np
import pandas as pd

from ecatlab.che import kernel
from ecatlab.constants import STANDARD_TEMPERATURE
from ecatlab.datasets import EnergyDataset, dataset_kind, energy_table_from_partition, open_energy_dataset
from ecatlab.errors import DatasetError, EcatlabError, MissingDataWarning

__all__ = [
    "limiting_potentials",
    "gmax",
    "top_k",
    "summary",
    "screen",
    "top_k_frame",
    "summary_frame",
    "energy_partitions",
    "is_lazy_source",
    "compute",
    "dask_client",
    "GMAX_COLUMNS",
    "SUMMARY_COLUMNS",
]

#: Columns of :func:`gmax` (see LIMITING_POTENTIAL_COLUMNS for their meaning and units).
GMAX_COLUMNS = ("surface", "pathway", "G_max", "G_max_step", "blocked", "max_chemical_dG", "missing_species", "scale", "pH", "temperature")

#: Column documentation of :func:`summary` / :func:`summary_frame` (units in brackets).
SUMMARY_COLUMNS: dict[str, str] = {
    "pathway": "pathway key",
    "surfaces": "surfaces in the dataset [-]",
    "evaluated": "surfaces with all adsorbates present (finite G_max) [-]",
    "missing": "surfaces lacking an adsorbate of the pathway [-]",
    "blocked": "evaluated surfaces whose pathway an uphill chemical step blocks at every potential [-]",
    "unblocked": "evaluated surfaces not blocked [-]",
    "G_max_min": "lowest G_max [eV]", "G_max_mean": "mean G_max [eV]", "G_max_max": "highest G_max [eV]",
    "overpotential_min": "lowest theoretical overpotential [V]", "overpotential_mean": "mean overpotential [V]", "overpotential_max": "highest overpotential [V]",
    "limiting_potential_min": "lowest limiting potential [V vs scale]", "limiting_potential_mean": "mean limiting potential [V vs scale]",
    "limiting_potential_max": "highest limiting potential [V vs scale]",
    "best_surface": "first surface by ranking_order (unblocked first, then lower G_max; ties by name)",
    "best_G_max": "G_max of best_surface [eV]",
}
_STATS = ("G_max", "overpotential", "limiting_potential")
_PARTIAL_COLUMNS = ["pathway", "surfaces", "evaluated", "missing", "blocked"] + [f"{c}_{a}" for c in _STATS for a in ("sum", "min", "max")] + ["best_surface", "best_G_max", "best_blocked"]


# ------------------------------------------------------------------------------------------------
def is_lazy_source(energies) -> bool:
    """True for sources the Dask path handles: Dask DataFrame, EnergyDataset or a dataset folder."""
    return dataset_kind(energies) in ("dask", "dataset", "parquet-folder")


def _dataset(energies, grouped=None) -> EnergyDataset:
    if isinstance(energies, EnergyDataset):
        return energies
    kind = dataset_kind(energies)
    if kind is None:
        raise DatasetError(repr(energies)[:80], "not an energy dataset; give a Parquet file or folder, an EnergyDataset or a Dask DataFrame")
    return open_energy_dataset(energies, grouped=grouped)


def _long_meta(ds: EnergyDataset) -> pd.DataFrame:
    cols = {}
    for _, canon in ds.columns:
        cols[canon] = pd.Series([], dtype=str) if canon in ("surface", "species") else pd.Series([], dtype=float)
    return pd.DataFrame(cols, index=pd.Index([], dtype="int64"))


def energy_partitions(energies, grouped: bool | None = None):
    """The dataset as a Dask DataFrame with canonical columns, every surface in one partition.

    One partition per Parquet file (index: row location codes, see
    :meth:`EnergyDataset.locate`); a Dask DataFrame keeps its partitions. When grouping by surface
    is not proven (see :func:`ecatlab.datasets.open_energy_dataset`), rows are regrouped with a
    shuffle on ``surface`` (all rows of a surface land in the same partition).
    """
    import dask.dataframe as dd

    ds = _dataset(energies, grouped)
    if ds.files:
        frame = dd.from_map(_ReadFile(ds), range(len(ds.files)), meta=_long_meta(ds), enforce_metadata=False)
    else:
        frame = ds.frame[[name for name, _ in ds.columns]]
        frame = frame.rename(columns={name: canon for name, canon in ds.columns})
    if not ds.grouped and frame.npartitions > 1:
        method = None if _active_client() is not None else "tasks"  # p2p needs a distributed client
        frame = frame.shuffle("surface", npartitions=frame.npartitions, shuffle_method=method)
    return ds, frame


class _ReadFile:
    """Picklable reader of file i of a dataset (a Dask task per file)."""

    def __init__(self, ds: EnergyDataset):
        self.ds = ds

    def __call__(self, i: int) -> pd.DataFrame:
        return self.ds.read_file(i)


# ------------------------------------------------------------------------------------------------
def _lp_dtypes(pathways: Sequence, scheme) -> dict:
    """Output dtypes of one partition: text with a fixed vocabulary as Categorical (same categories
    in every partition), free text as object (str values), numbers as in the engine."""
    from ecatlab.che.engine import LIMITING_POTENTIAL_COLUMNS
    from ecatlab.che.conditions import SCALES
    from ecatlab.pathways import resolve

    paths = [resolve(p) for p in pathways]
    steps = list(dict.fromkeys([""] + [s.equation for p in paths for s in p.steps]))
    cat = lambda values: pd.CategoricalDtype(list(dict.fromkeys(values)))  # noqa: E731
    dtypes = {
        "surface": object,
        "pathway": cat([p.name for p in paths]),
        "reaction": cat([p.overall_step().equation for p in paths]),
        "direction": cat(["reduction", "oxidation"]),
        "electrons": float,
        "limiting_potential": float,
        "equilibrium_potential": float,
        "overpotential": float,
        "determining_step": cat(steps),
        "determining_step_index": np.int64,
        "G_max": float,
        "G_max_step": cat(steps),
        "blocked": bool,
        "max_chemical_dG": float,
        "uphill_chemical_steps": object,
        "missing_species": object,
        "scale": cat(list(SCALES)),
        "pH": float,
        "temperature": float,
    }
    assert set(dtypes) == set(LIMITING_POTENTIAL_COLUMNS), "keep the Dask dtypes in step with the engine's columns"
    return {c: dtypes[c] for c in LIMITING_POTENTIAL_COLUMNS}


def _as(column: pd.Series, dtype) -> pd.Series:
    if dtype is object:  # free text: Python str objects (no per-row conversion cost)
        if isinstance(column.dtype, pd.CategoricalDtype):
            cats = np.asarray(column.cat.categories, dtype=object)
            return pd.Series(cats[column.cat.codes.to_numpy()], index=column.index, dtype=object)
        return column.astype(object)
    if isinstance(dtype, pd.CategoricalDtype) and isinstance(column.dtype, pd.CategoricalDtype):
        target = pd.Index(dtype.categories)  # recode the few categories, not the rows
        remap = target.get_indexer(pd.Index(column.cat.categories))
        if (remap >= 0).all():
            codes = column.cat.codes.to_numpy()
            new = np.where(codes >= 0, remap[np.maximum(codes, 0)], -1)
            return pd.Series(pd.Categorical.from_codes(new, dtype=dtype), index=column.index)
    return column.astype(dtype)


def _empty(dtypes: dict) -> pd.DataFrame:
    return pd.DataFrame({c: pd.Series([], dtype=t) for c, t in dtypes.items()})


def _scheme(ds: EnergyDataset, references, temperature):
    """The reference scheme at ``temperature`` (K), built once and shipped to every partition; the
    same one ``read_energies(frame, references, temperature)`` builds in memory."""
    from ecatlab.references import ReferenceScheme

    refs = references if references is not None else ds.references
    t = float(temperature)
    if isinstance(refs, ReferenceScheme):
        return refs if abs(refs.temperature - t) < 1e-9 else refs.at_temperature(t)
    kwargs = {"temperature": t}
    if refs is not None:
        kwargs["references"] = tuple(refs)
    return ReferenceScheme(**kwargs)


def _conditions(scale, pH, temperature) -> str:
    """Validate the conditions with ecatlab.che.conditions; returns the canonical scale."""
    from ecatlab.che.conditions import check_pH, check_scale, check_temperature
    from ecatlab.errors import ConditionError

    sc = check_scale(scale)
    check_temperature(temperature)
    check_pH(pH)
    if np.ndim(pH) != 0:
        raise ConditionError("the Dask path takes one pH value; run once per pH")
    return sc


class _PartitionLP:
    """map_partitions function: validate the partition, run the in-memory engine, fix the dtypes."""

    def __init__(self, ds, scheme, pathways, pH, scale, temperature, on_missing, dtypes):
        self.ds = dataclasses.replace(ds, frame=None)  # never ship the user's graph to workers
        self.scheme, self.pathways, self.pH, self.scale = scheme, list(pathways), pH, scale
        self.temperature, self.on_missing, self.dtypes = temperature, on_missing, dtypes

    def __call__(self, part: pd.DataFrame, partition_info=None) -> pd.DataFrame:
        from ecatlab.che.engine import limiting_potentials as engine_lp

        if len(part) == 0:
            return _empty(self.dtypes)
        number = partition_info.get("number") if partition_info else None
        label = self.ds.source if number is None else f"{self.ds.source} [partition {number}]"
        table = energy_table_from_partition(part, self.ds, self.scheme, self.temperature, label)
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", MissingDataWarning)  # reported in missing_species
                lp = engine_lp(table, self.pathways, pH=self.pH, scale=self.scale, temperature=self.temperature, on_missing=self.on_missing)
        except EcatlabError as exc:
            raise DatasetError(label, str(exc)) from None
        out = pd.DataFrame({c: _as(lp[c], t) for c, t in self.dtypes.items()})
        out.attrs.update(_attrs(self.ds, self.scheme, self.scale, self.pH, self.temperature))
        return out


def limiting_potentials(
    energies,
    pathways,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    on_missing: str = "report",
    references=None,
    columns: Sequence[str] | None = None,
    grouped: bool | None = None,
):
    """Lazy limiting potentials, overpotentials, G_max and determining steps of a dataset.

    Same meaning, units and numbers as :func:`ecatlab.che.limiting_potentials` (which runs on every
    partition); rows are ordered partition by partition, pathway by pathway within a partition.

    Parameters
    ----------
    energies : Parquet file or folder, EnergyDataset or dask DataFrame
        Long or wide layout, energies in eV (see :mod:`ecatlab.datasets`).
    pathways : str, Pathway or list of them
    pH : float
    scale : {"RHE", "SHE"}
        Scale of the returned potentials (V).
    temperature : float
        K; energies are read at it (E rows get their reference corrections at T).
    on_missing : {"report", "drop", "raise"}
        As in the engine; "report" (default) keeps incomplete surfaces with NaN numbers and the
        missing adsorbates in ``missing_species`` (no warnings are raised on the workers).
    references : ReferenceScheme or list of str, optional
        Default: the references recorded in the files, else the default scheme.
    columns : list of str, optional
        Keep only these columns (fewer bytes to move or write).
    grouped : bool, optional
        See :func:`ecatlab.datasets.open_energy_dataset`.

    Returns
    -------
    dask DataFrame
        ``meta`` gives the columns of :data:`ecatlab.che.LIMITING_POTENTIAL_COLUMNS`; text with a
        fixed vocabulary (pathway, reaction, direction, steps, scale) is Categorical with the same
        categories in every partition, free text (surface, uphill steps, missing species) is object (Python str).

    Raises
    ------
    ConditionError, PathwayError
        At once, for bad conditions or pathways. Bad values in the data raise
        :class:`DatasetError` when the partition holding them is computed.
    """
    from ecatlab.notation import Pathway

    sc = _conditions(scale, pH, temperature)
    if on_missing not in ("report", "drop", "raise"):
        raise ValueError(f"on_missing must be one of ('report', 'drop', 'raise'), got {on_missing!r}")
    if isinstance(pathways, (str, Pathway)):
        pathways = [pathways]
    ds, frame = energy_partitions(energies, grouped)
    scheme = _scheme(ds, references, temperature)
    dtypes = _lp_dtypes(pathways, scheme)
    fn = _PartitionLP(ds, scheme, pathways, float(pH), sc, float(temperature), on_missing, dtypes)
    result = frame.map_partitions(fn, meta=_empty(dtypes), enforce_metadata=False, align_dataframes=False)
    if columns is not None:
        unknown = [c for c in columns if c not in dtypes]
        if unknown:
            raise ValueError(f"unknown column(s) {unknown}; choose from {list(dtypes)}")
        result = result[list(columns)]
    return result


def _attrs(ds, scheme, scale, pH, temperature) -> dict:
    return {
        "quantity": "limiting potentials (Dask)",
        "units": {"limiting_potential": f"V vs {scale}", "equilibrium_potential": f"V vs {scale}", "overpotential": "V", "G_max": "eV", "max_chemical_dG": "eV"},
        "scale": scale,
        "pH": float(pH),
        "temperature": float(temperature),
        "references": scheme.describe(),
        "energy_source": ds.source,
    }


def gmax(energies, pathways, pH: float = 0.0, scale: str = "RHE", temperature: float = STANDARD_TEMPERATURE, references=None, grouped=None):
    """Lazy G_max per (surface, pathway): the largest step free energy at U_eq over all steps,
    chemical ones included (eV; Exner, ACS Catal. 10, 12607 (2020)), its step, ``blocked`` and
    ``max_chemical_dG`` (eV). Columns :data:`GMAX_COLUMNS`; computed by the in-memory engine per
    partition (see :func:`limiting_potentials`)."""
    return limiting_potentials(energies, pathways, pH, scale, temperature, "report", references, GMAX_COLUMNS, grouped)


# ------------------------------------------------------------------------------------------------
def top_k_frame(lp: pd.DataFrame, k: int) -> pd.DataFrame:
    """The k best rows per pathway of a limiting-potential frame (in memory), with their rank.

    Order: :func:`ecatlab.che.kernel.ranking_order` (unblocked before blocked, then lower G_max,
    missing data last), ties broken by surface name (so the answer does not depend on row order or
    partitioning). Returns the input columns plus ``rank`` (1 = best), pathways in input order.
    """
    k = int(k)
    if k < 1:
        raise ValueError(f"k must be >= 1, got {k}")
    if len(lp) == 0:
        out = lp.iloc[:0].copy()
        out.insert(1, "rank", pd.Series([], dtype=np.int64))
        return out
    path_codes, _ = pd.factorize(lp["pathway"])  # pathways in order of appearance
    g = lp["G_max"].to_numpy(dtype=float)
    b = lp["blocked"].to_numpy(dtype=bool)
    surface = lp["surface"]
    picked, ranks = [], []
    for p in range(int(path_codes.max()) + 1):
        rows = np.flatnonzero(path_codes == p)
        if len(rows) > k:
            # candidates: every row whose ranking key (missing, blocked, G_max) is not worse than the
            # k-th best one (ties included), so the name tie-break below only sorts a few names
            kth = rows[kernel.ranking_order(g[rows], b[rows])[k - 1]]
            miss, gg = np.isnan(g[rows]), np.where(np.isnan(g[rows]), np.inf, g[rows])
            km, kb, kg = np.isnan(g[kth]), b[kth], (np.inf if np.isnan(g[kth]) else g[kth])
            br = b[rows]
            rows = rows[(miss < km) | ((miss == km) & ((br < kb) | ((br == kb) & (gg <= kg))))]
        names = np.asarray(surface.iloc[rows], dtype=object).astype(str)
        rows = rows[np.argsort(names, kind="stable")]
        best = rows[kernel.ranking_order(g[rows], b[rows])[:k]]
        picked.append(best)
        ranks.append(np.arange(1, len(best) + 1, dtype=np.int64))
    out = lp.iloc[np.concatenate(picked)].reset_index(drop=True)
    out.insert(1, "rank", np.concatenate(ranks))
    return out


def _combine_top(parts: list[pd.DataFrame], k: int, pathway_order: list[str]) -> pd.DataFrame:
    frame = pd.concat([p.drop(columns="rank") for p in parts], ignore_index=True)
    out = top_k_frame(frame, k)
    pos = {p: i for i, p in enumerate(pathway_order)}
    key = out["pathway"].astype(str).map(pos).to_numpy()
    return out.iloc[np.lexsort((out["rank"].to_numpy(), key))].reset_index(drop=True)


def _tree(parts: list, combine, split_every: int = 16):
    import dask

    level = list(parts)
    if not level:
        raise DatasetError("<dataset>", "has no partitions")
    split_every = max(2, int(split_every))
    while True:  # combine at least once (the combine step also orders the result)
        level = [dask.delayed(combine)(level[i : i + split_every]) for i in range(0, len(level), split_every)]
        if len(level) == 1:
            return level[0]


def top_k(energies, pathways, k: int = 10, pH: float = 0.0, scale: str = "RHE", temperature: float = STANDARD_TEMPERATURE, references=None, grouped=None, split_every: int = 16):
    """Lazy top-k surfaces per pathway (a ``dask.delayed`` that computes to a pandas DataFrame).

    ``energies`` may also be the lazy frame of :func:`limiting_potentials`. Each partition keeps
    its own best k (:func:`top_k_frame`), a tree reduction ranks the union and keeps k: exactly
    the in-memory ``top_k_frame(ecatlab.limiting_potentials(...), k)``.
    """
    from ecatlab.notation import Pathway
    from ecatlab.pathways import resolve

    if int(k) < 1:
        raise ValueError(f"k must be >= 1, got {k}")
    if isinstance(pathways, (str, Pathway)):
        pathways = [pathways]
    lp = energies if _is_lp_frame(energies) else limiting_potentials(energies, pathways, pH, scale, temperature, "report", references, None, grouped)
    order = [resolve(p).name for p in pathways]
    meta = lp._meta.iloc[:0].copy()
    meta.insert(1, "rank", pd.Series([], dtype=np.int64))
    local = lp.map_partitions(top_k_frame, int(k), meta=meta, enforce_metadata=False)
    return _tree(local.to_delayed(optimize_graph=False), _Combine(_combine_top, int(k), order), split_every)


class _Combine:
    def __init__(self, fn, *args):
        self.fn, self.args = fn, args
        self.__name__ = fn.__name__.strip("_")  # names the Dask tasks

    def __call__(self, parts):
        return self.fn(parts, *self.args)


def _is_lp_frame(obj) -> bool:
    return dataset_kind(obj) == "dask" and {"pathway", "G_max", "blocked", "surface"}.issubset(set(obj.columns))


def _partial_summary(lp: pd.DataFrame) -> pd.DataFrame:
    """Per-pathway partial aggregates of one partition (counts, sums, minima, maxima, best row)."""
    if len(lp) == 0:
        return pd.DataFrame(columns=_PARTIAL_COLUMNS)
    path_codes, paths = pd.factorize(lp["pathway"])
    g_all = lp["G_max"].to_numpy(dtype=float)
    blocked_all = lp["blocked"].to_numpy(dtype=bool)
    missing_all = (lp["missing_species"] != "").to_numpy(dtype=bool)
    stats = {c: lp[c].to_numpy(dtype=float) for c in _STATS}
    best = top_k_frame(lp, 1)
    best_by = {str(p): i for i, p in enumerate(best["pathway"].astype(str))}
    rows = []
    for code, p in enumerate(paths):
        sel = path_codes == code
        ok = sel & np.isfinite(g_all)
        row = {"pathway": str(p), "surfaces": int(sel.sum()), "evaluated": int(ok.sum()), "missing": int((sel & missing_all).sum()), "blocked": int((ok & blocked_all).sum())}
        for c in _STATS:
            v = stats[c][ok]
            row[f"{c}_sum"] = float(v.sum()) if len(v) else 0.0
            row[f"{c}_min"] = float(v.min()) if len(v) else np.nan
            row[f"{c}_max"] = float(v.max()) if len(v) else np.nan
        b = best.iloc[best_by[str(p)]]
        row.update({"best_surface": str(b["surface"]), "best_G_max": float(b["G_max"]), "best_blocked": bool(b["blocked"])})
        rows.append(row)
    return pd.DataFrame(rows, columns=_PARTIAL_COLUMNS)


def _finish_summary(parts: list[pd.DataFrame], order: list[str], conditions: dict) -> pd.DataFrame:
    frame = pd.concat(parts, ignore_index=True)
    out = []
    for p in order:
        sub = frame[frame["pathway"] == p]
        if sub.empty:
            continue
        row = {"pathway": p}
        for c in ("surfaces", "evaluated", "missing", "blocked"):
            row[c] = int(sub[c].sum())
        row["unblocked"] = row["evaluated"] - row["blocked"]
        for c in _STATS:
            n = row["evaluated"]
            row[f"{c}_min"] = float(np.nanmin(sub[f"{c}_min"])) if n else np.nan
            row[f"{c}_mean"] = float(sub[f"{c}_sum"].sum() / n) if n else np.nan
            row[f"{c}_max"] = float(np.nanmax(sub[f"{c}_max"])) if n else np.nan
        # the best of the partitions' best rows, by the same rule as top_k_frame
        cand = pd.DataFrame({"pathway": p, "surface": sub["best_surface"].to_numpy(), "G_max": sub["best_G_max"].to_numpy(), "blocked": sub["best_blocked"].to_numpy()})
        top = top_k_frame(cand, 1).iloc[0]
        row["best_surface"], row["best_G_max"] = str(top["surface"]), float(top["G_max"])
        out.append(row)
    result = pd.DataFrame(out, columns=list(SUMMARY_COLUMNS))
    result.attrs.update({"columns": SUMMARY_COLUMNS, **conditions})
    return result


def summary_frame(lp: pd.DataFrame) -> pd.DataFrame:
    """Per-pathway summary of an in-memory limiting-potential frame (columns :data:`SUMMARY_COLUMNS`)."""
    order = list(pd.unique(lp["pathway"].astype(str)))
    return _finish_summary([_partial_summary(lp)], order, {k: lp.attrs[k] for k in ("scale", "pH", "temperature") if k in lp.attrs})


def summary(energies, pathways, pH: float = 0.0, scale: str = "RHE", temperature: float = STANDARD_TEMPERATURE, references=None, grouped=None, split_every: int = 16):
    """Lazy per-pathway summary (a ``dask.delayed`` computing to a pandas DataFrame).

    Counts, minima, maxima and the best surface are exact reductions; means are sums / counts.
    Equals :func:`summary_frame` of the in-memory result. ``energies`` may also be the lazy frame of
    :func:`limiting_potentials` (share it with :func:`top_k` and compute both at once with
    :func:`compute` to read the data once).
    """
    import dask

    from ecatlab.notation import Pathway
    from ecatlab.pathways import resolve

    if isinstance(pathways, (str, Pathway)):
        pathways = [pathways]
    lp = energies if _is_lp_frame(energies) else limiting_potentials(energies, pathways, pH, scale, temperature, "report", references, None, grouped)
    lacking = [c for c in ("pathway", "surface", "G_max", "blocked", "missing_species") + _STATS if c not in lp.columns]
    if lacking:
        raise ValueError(f"summary needs the limiting-potential columns {lacking}; pass the full scaleout.limiting_potentials frame")
    order = [resolve(p).name for p in pathways]
    conditions = {"scale": _conditions(scale, pH, temperature), "pH": float(pH), "temperature": float(temperature)}
    parts = [dask.delayed(_partial_summary)(d) for d in lp.to_delayed(optimize_graph=False)]

    def combine_partials(chunk):  # partial summaries of several partitions -> one frame
        return pd.concat(chunk, ignore_index=True)

    while len(parts) > split_every:
        parts = [dask.delayed(combine_partials)(parts[i : i + split_every]) for i in range(0, len(parts), split_every)]
    return dask.delayed(_finish_summary)(parts, order, conditions)


class _PartitionScreen:
    """One task per partition: read (files), validate, engine, then only the partition's top k and
    partial summary leave the task (the per-row results never wait in worker memory)."""

    def __init__(self, lp_fn: _PartitionLP, k: int):
        self.lp_fn, self.k = lp_fn, int(k)
        self.__name__ = "screen-partition"

    def __call__(self, item):
        if isinstance(item, int):  # file index of a dataset: read inside the task
            lp = self.lp_fn(self.lp_fn.ds.read_file(item), partition_info={"number": item})
        else:
            lp = self.lp_fn(item)
        return top_k_frame(lp, self.k), _partial_summary(lp)


def screen(energies, pathways, k: int = 10, pH: float = 0.0, scale: str = "RHE", temperature: float = STANDARD_TEMPERATURE, references=None, grouped=None, split_every: int = 16):
    """Summary and top-k of a dataset in one pass, with flat memory per worker (lazy).

    Each partition is read, validated, evaluated and reduced to its best ``k`` and its partial
    summary inside one task, so only small frames stay in worker memory whatever the dataset size.
    Same results as :func:`summary` and :func:`top_k` (and as the in-memory
    :func:`summary_frame` / :func:`top_k_frame`).

    Returns
    -------
    (dask.delayed, dask.delayed)
        Summary (columns :data:`SUMMARY_COLUMNS`) and top-k frames; compute both together with
        :func:`compute`.
    """
    import dask

    from ecatlab.notation import Pathway
    from ecatlab.pathways import resolve

    if int(k) < 1:
        raise ValueError(f"k must be >= 1, got {k}")
    sc = _conditions(scale, pH, temperature)
    if isinstance(pathways, (str, Pathway)):
        pathways = [pathways]
    ds = _dataset(energies, grouped)
    scheme = _scheme(ds, references, temperature)
    fn = _PartitionScreen(_PartitionLP(ds, scheme, pathways, float(pH), sc, float(temperature), "report", _lp_dtypes(pathways, scheme)), k)
    if ds.files and ds.grouped:
        items = list(range(len(ds.files)))
    else:
        _, frame = energy_partitions(ds, grouped)
        items = frame.to_delayed()
    task = dask.delayed(fn, nout=2, pure=True)
    pairs = [task(item) for item in items]
    order = [resolve(p).name for p in pathways]
    top = _tree([p[0] for p in pairs], _Combine(_combine_top, int(k), order), split_every)
    parts = [p[1] for p in pairs]

    def combine_partials(chunk):
        return pd.concat(chunk, ignore_index=True)

    while len(parts) > split_every:
        parts = [dask.delayed(combine_partials)(parts[i : i + split_every]) for i in range(0, len(parts), split_every)]
    conditions = {"scale": sc, "pH": float(pH), "temperature": float(temperature)}
    return dask.delayed(_finish_summary)(parts, order, conditions), top


# ------------------------------------------------------------------------------------------------
def _active_client():
    try:
        from distributed import default_client

        return default_client()
    except (ImportError, ValueError):
        return None


@contextlib.contextmanager
def dask_client(address: str | None = None, n_workers: int = 2, threads_per_worker: int = 1, memory_limit: str | int = "2GiB", processes: bool = True, timeout: str = "10s"):
    """A ``dask.distributed`` client: to an existing scheduler (``address``) or a new LocalCluster.

    Parameters
    ----------
    address : str, optional
        Scheduler address of an existing cluster, e.g. ``"tcp://10.0.0.5:8786"``; that cluster is
        left running on exit (only the client is closed). Default: start a LocalCluster.
    n_workers, threads_per_worker : int
        LocalCluster size (worker processes with ``processes=True``).
    memory_limit : str or int
        Per worker, e.g. ``"2GiB"`` (Dask spills, pauses and restarts workers around this limit).
    processes : bool
        Workers as processes (True, default) or threads.
    timeout : str
        How long to try reaching ``address`` (Dask time string).

    Yields
    ------
    distributed.Client
        Closed (and the LocalCluster shut down) on exit.
    """
    try:
        from distributed import Client, LocalCluster
    except ImportError:  # pragma: no cover - part of the project's dependencies
        raise DatasetError("dask.distributed", "is not installed; pip install 'dask[distributed]'") from None
    cluster = None
    try:
        if address:
            client = Client(address, timeout=timeout)
        else:
            if int(n_workers) < 1 or int(threads_per_worker) < 1:
                raise DatasetError("LocalCluster", f"needs at least one worker and one thread per worker (got {n_workers} workers, {threads_per_worker} threads)")
            cluster = LocalCluster(n_workers=int(n_workers), threads_per_worker=int(threads_per_worker), memory_limit=memory_limit, processes=processes, dashboard_address=None)
            client = Client(cluster)
    except (OSError, TimeoutError) as exc:
        if cluster is not None:
            cluster.close()
        raise DatasetError(address or "LocalCluster", f"cannot connect to the Dask scheduler ({_short(exc)}); check the address, e.g. tcp://HOST:8786, and that the scheduler runs") from None
    except ValueError as exc:
        if cluster is not None:
            cluster.close()
        raise DatasetError("LocalCluster", f"bad cluster settings ({_short(exc)}); e.g. memory limit '2GiB'") from None
    try:
        yield client
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def _short(exc: BaseException) -> str:
    return " ".join(str(exc).split())[:200] or type(exc).__name__


def compute(*collections, progress: bool = True, address: str | None = None, **cluster):
    """Compute Dask collections on the active client, a cluster at ``address`` or a new LocalCluster.

    Parameters
    ----------
    *collections : dask collections or delayed objects
    progress : bool
        Show the progress bar (``distributed.progress``; a widget in notebooks, text otherwise).
    address : str, optional
        Scheduler address; ignored when a client is active.
    **cluster
        LocalCluster options of :func:`dask_client` (n_workers, memory_limit...).

    Returns
    -------
    tuple of results (or the single result for one collection).
    """
    client = _active_client()
    if client is None:
        with dask_client(address, **cluster) as client:
            return _run(client, collections, progress)
    return _run(client, collections, progress)


def _run(client, collections, progress: bool):
    from distributed import progress as show

    import dask

    # one future for all results: shared inputs are computed once, and the order is kept
    # (Client.compute on a list may return the futures of mixed collection types reordered)
    future = client.compute(dask.delayed(_bundle, pure=True)(*collections))
    try:
        if progress:
            if _in_notebook():
                show(future)
            else:  # the text bar goes to stderr, so stdout stays clean for results (e.g. JSON)
                import sys

                with contextlib.redirect_stdout(sys.stderr):
                    show(future)
                    print(flush=True)
        results = future.result()
    except DatasetError:
        raise
    except EcatlabError as exc:  # pragma: no cover - partition functions wrap their errors
        raise DatasetError("<dataset>", str(exc)) from None
    finally:
        future.release()
    return results[0] if len(results) == 1 else tuple(results)


def _bundle(*results):
    return results


def _in_notebook() -> bool:
    try:
        from IPython import get_ipython

        shell = get_ipython()
        return shell is not None and type(shell).__name__ == "ZMQInteractiveShell"
    except ImportError:
        return False
