r"""Propagation of energy errors through the CHE kernel, vectorised over samples.

For every chunk of samples, the step free energies :math:`a_i` (eV, at U = 0 V on the scale) of
all steps of all pathways, for every (sample, surface) pair, are one array: the deterministic
engine's values (:meth:`ecatlab.che.CompiledPathway.affine` on the table), plus the sampled
deviations mapped through the stoichiometry (:math:`\delta a = \delta G\,S^T`, one matrix
product of the draws, :meth:`ecatlab.uncertainty.sampler.SampleChunk.add_linear`), plus the
molecules' deviations. :func:`ecatlab.che.kernel.stacked_measures` then gives the limiting
potential and determining step (:func:`~ecatlab.che.kernel.envelope`), :math:`G_\mathrm{max}` at
:math:`U_\mathrm{eq}` (:func:`~ecatlab.che.kernel.gmax`, Exner, ACS Catal. 10, 12607 (2020)) and
the chemical-step measure (:func:`~ecatlab.che.kernel.chemical_obstacle`) of every pathway, the
same numbers as those functions; :func:`~ecatlab.che.kernel.signed_overpotential`,
:func:`~ecatlab.che.kernel.is_blocked` and :func:`~ecatlab.che.kernel.ranking_order_rows` follow.
The sample is just an array axis; no Python loop runs per sample. With zero deviations every
number equals :func:`ecatlab.che.limiting_potentials`.

Results are theoretical estimates (CHE thermodynamics with the stated error model); they do not
replace measurements, and any experiment follows local safety codes and licensed practice.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Iterable, Mapping, Sequence

import numpy as np
import pandas as pd

from ecatlab.che import kernel
from ecatlab.che.conditions import check_pH, check_scale, check_temperature
from ecatlab.che.engine import compile_pathway, compile_steps, limiting_potentials
from ecatlab.constants import STANDARD_TEMPERATURE
from ecatlab.energies import EnergyTable, as_energy_table
from ecatlab.errors import EnergyTableError, UncertaintyError
from ecatlab.notation import HYDROXIDE, Pathway, Species
from ecatlab.pathways import resolve
from ecatlab.uncertainty import sampler
from ecatlab.uncertainty.models import ErrorModel

__all__ = ["propagate", "default_workers", "PathwaySamples", "UncertaintyResult", "SUMMARY_COLUMNS", "QUANTITY_UNITS"]

#: Long/progress threshold: show a tqdm bar when samples x surfaces x pathways exceeds this.
PROGRESS_THRESHOLD = 20_000_000

#: Units of the propagated quantities ("{scale}" is filled in with the potential scale).
QUANTITY_UNITS: dict[str, str] = {
    "limiting_potential": "V vs {scale}",
    "overpotential": "V",
    "G_max": "eV",
    "max_chemical_dG": "eV",
    "equilibrium_potential": "V vs {scale}",
}

#: Column documentation of :meth:`UncertaintyResult.summary`.
SUMMARY_COLUMNS: dict[str, str] = {
    "pathway": "pathway key",
    "surface": "surface name",
    "quantity": "limiting_potential, overpotential, G_max or max_chemical_dG (see ecatlab.LIMITING_POTENTIAL_COLUMNS)",
    "unit": "unit of the numbers in this row",
    "deterministic": "the value without errors (ecatlab.limiting_potentials) [unit]",
    "mean": "mean over the samples [unit]",
    "std": "standard deviation over the samples (ddof=1) [unit]",
    "mean_se": "Monte-Carlo standard error of the mean, std/sqrt(samples) [unit]",
    "median": "median over the samples [unit]",
    "low": "lower end of the central percentile interval [unit]",
    "high": "upper end of the central percentile interval [unit]",
    "p_blocked": "fraction of samples in which an uphill chemical step blocks the pathway [-]",
    "samples": "number of samples [-]",
}


@dataclass(frozen=True)
class PathwaySamples:
    """Per-sample results of one pathway, arrays of shape (samples, surfaces).

    Attributes
    ----------
    pathway : Pathway
    limiting_potential : ndarray float64, V vs the scale
    equilibrium_potential : ndarray (samples,) or float, V vs the scale
    G_max : ndarray float64, eV
    determining_step : ndarray int8, 0-based step index (-1 where the data are missing)
    G_max_step : ndarray int8, 0-based step index (-1 where missing)
    blocked : ndarray bool
    max_chemical_dG : ndarray float64, eV, or None when the pathway has no chemical step
    G_max_is_overpotential : bool
        True when the G_max samples are, number for number, the overpotential samples (every step
        electrochemical with one electron; ``kernel.stacked_measures``), so statistics are shared.
    """

    pathway: Pathway
    limiting_potential: np.ndarray
    equilibrium_potential: np.ndarray | float
    G_max: np.ndarray
    determining_step: np.ndarray
    G_max_step: np.ndarray
    blocked: np.ndarray
    max_chemical_dG: np.ndarray | None
    G_max_is_overpotential: bool = False

    @property
    def overpotential(self) -> np.ndarray:
        """Signed overpotential per sample and surface, V (kernel.signed_overpotential)."""
        u_eq = self.equilibrium_potential
        if np.ndim(u_eq):
            u_eq = np.asarray(u_eq)[:, None]
        return kernel.signed_overpotential(self.limiting_potential, u_eq, self.pathway.direction)

    def quantity(self, name: str) -> np.ndarray:
        """Samples of one quantity, (samples, surfaces)."""
        if name == "overpotential":
            return self.overpotential
        if name == "equilibrium_potential":
            u = np.asarray(self.equilibrium_potential, dtype=float)
            return np.broadcast_to(u[:, None] if u.ndim else u, self.limiting_potential.shape)
        if name == "max_chemical_dG":
            if self.max_chemical_dG is None:
                return np.full(self.limiting_potential.shape, np.nan)
            return self.max_chemical_dG
        if name in ("limiting_potential", "G_max"):
            return getattr(self, name)
        raise UncertaintyError(f"unknown quantity {name!r}; use one of {list(QUANTITY_UNITS)}")

    def order(self) -> np.ndarray:
        """Surfaces best first in every sample, (samples, surfaces) positions, by the kernel's ranking rule
        (:func:`kernel.ranking_order_rows`, the same positions as :func:`kernel.ranking_order`)."""
        return kernel.ranking_order_rows(self.G_max, self.blocked)

    def ranks(self) -> np.ndarray:
        """Rank of every surface in every sample (0 = best), by :func:`kernel.ranking_order`."""
        order = self.order()
        ranks = np.empty_like(order)
        np.put_along_axis(ranks, order, np.broadcast_to(np.arange(order.shape[-1]), order.shape), axis=-1)
        return ranks


@dataclass(frozen=True)
class UncertaintyResult:
    """Samples of every pathway and the tables that answer "how sure is it".

    Attributes
    ----------
    surfaces : tuple of str
    results : dict of str to PathwaySamples
        Keyed by pathway name.
    deterministic : DataFrame
        :func:`ecatlab.limiting_potentials` on the same table and conditions.
    n_samples : int
    conditions : dict
        scale, pH, temperature (K), references, energy source, error model, seed.
    species_samples : dict of str to ndarray (samples, surfaces)
        Sampled free energies (eV) of the species asked for with ``keep_species``.
    """

    surfaces: tuple[str, ...]
    results: Mapping[str, PathwaySamples]
    deterministic: pd.DataFrame = field(repr=False)
    n_samples: int = 0
    conditions: Mapping = field(default_factory=dict)
    species_samples: Mapping[str, np.ndarray] = field(default_factory=dict, repr=False)
    inputs: Mapping = field(default_factory=dict, repr=False)

    # -- helpers --------------------------------------------------------------------------------
    @property
    def pathways(self) -> list[str]:
        return list(self.results)

    def _path(self, pathway) -> PathwaySamples:
        key = pathway if isinstance(pathway, str) else getattr(pathway, "name", str(pathway))
        if key not in self.results:
            try:
                key = resolve(pathway).name
            except Exception:  # noqa: BLE001 - reported below with the known names
                pass
        if key not in self.results:
            raise UncertaintyError(f"pathway {pathway!r} was not propagated; propagated: {self.pathways}")
        return self.results[key]

    def _attrs(self, quantity: str, columns: dict) -> dict:
        out = dict(self.conditions)
        out.update({"quantity": quantity, "columns": columns, "samples": self.n_samples,
                    "note": "theoretical estimates (CHE model with the stated error model)"})
        return out

    def _det(self, path: str) -> pd.DataFrame:
        """The deterministic rows of one pathway, indexed by surface in the result's order (cached;
        the table's attrs are left behind so that pandas does not copy them at every step)."""
        cache = self.__dict__.setdefault("_det_cache", {})  # frozen dataclass: the cache lives in __dict__
        if not cache:
            d = self.deterministic.copy(deep=False)
            d.attrs = {}
            d["surface"] = d["surface"].astype(str)
            names = list(self.surfaces)
            for key, part in d.groupby("pathway", observed=True, sort=False):
                cache[str(key)] = part.set_index("surface").reindex(names)
        if path not in cache:
            raise UncertaintyError(f"pathway {path!r} has no deterministic result; propagated: {self.pathways}")
        return cache[path]

    @property
    def workers(self) -> int:
        """Threads the tables may use (those :func:`propagate` used)."""
        return int(self.inputs.get("workers", 1)) if self.inputs else 1

    def _map(self, fn, items: list) -> list:
        """``[fn(x) for x in items]``, in :attr:`workers` threads when there are several items (numpy
        releases the GIL in the sorts and reductions the tables are made of); same results, same order."""
        from ecatlab._threads import map_in_threads

        return map_in_threads(fn, items, self.workers)

    def _order(self, ps: "PathwaySamples") -> np.ndarray:
        """:meth:`PathwaySamples.order`, its samples split between the worker threads."""
        n = ps.G_max.shape[0]
        parts = min(self.workers, max(1, n // 64))
        if parts <= 1:
            return ps.order()
        cuts = np.linspace(0, n, parts + 1).astype(int)
        pieces = self._map(lambda k: kernel.ranking_order_rows(ps.G_max[cuts[k]:cuts[k + 1]], ps.blocked[cuts[k]:cuts[k + 1]]),
                           list(range(parts)))
        return np.concatenate(pieces, axis=0)

    # -- tables ---------------------------------------------------------------------------------
    def summary(self, quantities: Sequence[str] = ("limiting_potential", "overpotential", "G_max", "max_chemical_dG"),
                interval: float = 0.9) -> pd.DataFrame:
        """Mean, standard deviation, median and central percentile interval per (pathway, surface, quantity).

        Parameters
        ----------
        quantities : sequence of str
            From :data:`QUANTITY_UNITS`.
        interval : float
            Probability content of the central interval (0.9: 5th to 95th percentile).

        Returns
        -------
        DataFrame, long form; columns in :data:`SUMMARY_COLUMNS`; ``.attrs`` hold units and conditions.
        """
        if not 0.0 < float(interval) < 1.0:
            raise UncertaintyError(f"interval must lie strictly between 0 and 1, got {interval!r}")
        lo_q, hi_q = 50.0 * (1.0 - interval), 50.0 * (1.0 + interval)
        unknown = [q for q in quantities if q not in QUANTITY_UNITS]
        if unknown:
            raise UncertaintyError(f"unknown quantity {unknown[0]!r}; use one of {list(QUANTITY_UNITS)}")
        scale = self.conditions.get("scale", "RHE")
        S = len(self.surfaces)
        cols: dict[str, list] = {k: [] for k in ("deterministic", "mean", "std", "median", "low", "high", "p_blocked")}
        labels: list[tuple[str, str]] = []
        n = self.n_samples

        def one(item):  # the statistics of one pathway (pathways run in the result's worker threads)
            name, ps = item
            det = self._det(name)
            stats = _PathwayStats(ps, (lo_q, 50.0, hi_q))
            p_blocked = ps.blocked.mean(axis=0)
            found = []
            for q in quantities:
                mean, std, (lo, med, hi) = stats.get(q)
                found.append(((name, q), (("deterministic", det[q].to_numpy(dtype=float) if q in det.columns else np.full(S, np.nan)),
                                          ("mean", mean), ("std", std), ("median", med), ("low", lo), ("high", hi), ("p_blocked", p_blocked))))
            return ps.limiting_potential.shape[0], found

        if self.results:
            self._det(next(iter(self.results)))  # fill the cache before the threads read it
        for n, found in self._map(one, list(self.results.items())):
            for label, values in found:
                labels.append(label)
                for k, v in values:
                    cols[k].append(v)
        blocks = len(labels)
        # one frame built once (labels repeated with numpy; no per-block frames to concatenate)
        surfaces = np.tile(np.array(self.surfaces, dtype=object), blocks)
        std_all = np.concatenate(cols["std"]) if blocks else np.zeros(0)
        out = pd.DataFrame({
            "pathway": np.repeat(np.array([p for p, _ in labels], dtype=object), S),
            "surface": surfaces,
            "quantity": np.repeat(np.array([q for _, q in labels], dtype=object), S),
            "unit": np.repeat(np.array([QUANTITY_UNITS[q].format(scale=scale) for _, q in labels], dtype=object), S),
            "deterministic": np.concatenate(cols["deterministic"]) if blocks else np.zeros(0),
            "mean": np.concatenate(cols["mean"]) if blocks else np.zeros(0),
            "std": std_all,
            "mean_se": std_all / np.sqrt(n),
            "median": np.concatenate(cols["median"]) if blocks else np.zeros(0),
            "low": np.concatenate(cols["low"]) if blocks else np.zeros(0),
            "high": np.concatenate(cols["high"]) if blocks else np.zeros(0),
            "p_blocked": np.concatenate(cols["p_blocked"]) if blocks else np.zeros(0),
            "samples": n,
        })
        out.attrs.update(self._attrs("uncertainty summary", SUMMARY_COLUMNS))
        out.attrs["interval"] = f"central {100 * interval:g}% ({lo_q:g}th to {hi_q:g}th percentile)"
        out.attrs["units"] = {q: QUANTITY_UNITS[q].format(scale=scale) for q in quantities}
        return out

    def determining_steps(self) -> pd.DataFrame:
        """Probability that each step determines the potential (and that it carries G_max).

        Returns
        -------
        DataFrame with columns pathway, surface, step_index (1-based), step (equation),
        probability (of being the potential-determining step), probability_se (Monte-Carlo
        standard error sqrt(p(1-p)/N)), p_G_max_step, deterministic (True for the step the
        deterministic analysis names). Probabilities over a surface's steps sum to 1 (surfaces
        with missing data: 0).
        """
        frames = []
        n = self.n_samples
        for name, ps in self.results.items():
            steps = ps.pathway.steps
            k = np.arange(len(steps))
            p = _step_frequencies(ps.determining_step, len(steps))
            pg = _step_frequencies(ps.G_max_step, len(steps))
            det = self._det(name)["determining_step_index"].to_numpy()
            S = len(self.surfaces)
            frames.append(pd.DataFrame({
                "pathway": name,
                "surface": np.repeat(list(self.surfaces), len(steps)),
                "step_index": np.tile(k + 1, S),
                "step": np.tile([s.equation for s in steps], S),
                "probability": p.ravel(),
                "probability_se": np.sqrt(p * (1 - p) / n).ravel(),
                "p_G_max_step": pg.ravel(),
                "deterministic": (np.asarray(det, dtype=float)[:, None] == (k + 1)[None, :]).ravel(),
            }))
        out = pd.concat(frames, ignore_index=True)
        out.attrs.update(self._attrs("probability of each potential-determining step", {
            "probability": "fraction of samples in which the step is the potential-determining step [-]",
            "probability_se": "Monte-Carlo standard error of probability [-]",
            "p_G_max_step": "fraction of samples in which the step carries G_max [-]",
            "deterministic": "the deterministic analysis names this step",
        }))
        return out

    def ranking(self, pathway, top: int = 3) -> pd.DataFrame:
        """Probability that each surface is best and in the top ``top``, by the kernel's ranking rule.

        The rule is :func:`ecatlab.che.kernel.ranking_order`: unblocked before blocked, then
        lower G_max, applied in every sample.

        Returns
        -------
        DataFrame indexed by surface, sorted by p_best then mean rank: p_best, p_best_se,
        p_top (in the top ``top``), p_top_se, mean_rank (1 = best), deterministic_rank, p_blocked.
        """
        ps = self._path(pathway)
        top = int(top)
        if top < 1:
            raise UncertaintyError(f"top must be >= 1, got {top}")
        order = self._order(ps)
        n, S = order.shape
        p_best = np.bincount(order[:, 0], minlength=S) / n
        p_top = np.bincount(order[:, :top].ravel(), minlength=S) / n
        rank_sum = np.bincount(order.ravel(), weights=np.broadcast_to(np.arange(S, dtype=float), order.shape).ravel(), minlength=S)
        det = self._det(ps.pathway.name)
        det_order = kernel.ranking_order(det["G_max"].to_numpy(dtype=float), det["blocked"].to_numpy(dtype=bool))
        det_rank = np.empty(len(det_order), dtype=int)
        det_rank[det_order] = np.arange(len(det_order))
        out = pd.DataFrame({
            "p_best": p_best, "p_best_se": np.sqrt(p_best * (1 - p_best) / n),
            f"p_top{top}": p_top, f"p_top{top}_se": np.sqrt(p_top * (1 - p_top) / n),
            "mean_rank": rank_sum / n + 1.0, "deterministic_rank": det_rank + 1,
            "p_blocked": ps.blocked.mean(axis=0),
        }, index=pd.Index(list(self.surfaces), name="surface"))
        out = out.sort_values(["p_best", "mean_rank"], ascending=[False, True], kind="stable")
        out.attrs.update(self._attrs(f"ranking probabilities, {ps.pathway.name}", {
            "p_best": "fraction of samples in which the surface ranks first [-]",
            f"p_top{top}": f"fraction of samples in which the surface is among the best {top} [-]",
            "mean_rank": "mean rank over the samples (1 = best) [-]",
            "deterministic_rank": "rank without errors (1 = best) [-]",
            "p_blocked": "fraction of samples in which an uphill chemical step blocks the pathway [-]",
        }))
        out.attrs["ranking_rule"] = "kernel.ranking_order: unblocked first, then lower G_max (per sample)"
        out.attrs["pathway"] = ps.pathway.name
        return out

    def pairwise(self, pathway, surfaces: Sequence[str] | None = None, max_surfaces: int = 40) -> pd.DataFrame:
        """P(row surface ranks before column surface), over the samples, by the kernel's ranking rule.

        ``surfaces`` defaults to all when there are at most ``max_surfaces`` of them, else to the
        ``max_surfaces`` with the best mean rank (``.attrs['selection']`` says so). The diagonal is NaN.
        """
        ps = self._path(pathway)
        ranks = ps.ranks()
        names = list(self.surfaces)
        selection = "all surfaces"
        if surfaces is None:
            idx = np.arange(len(names))
            if len(names) > max_surfaces:
                idx = np.argsort(ranks.mean(axis=0), kind="stable")[:max_surfaces]
                selection = f"the {max_surfaces} surfaces with the best mean rank"
        else:
            pos = {s: i for i, s in enumerate(names)}
            bad = [s for s in surfaces if s not in pos]
            if bad:
                raise UncertaintyError(f"unknown surface(s) {bad}; known: {names}")
            idx = np.array([pos[s] for s in surfaces], dtype=int)
            selection = "given surfaces"
        r = ranks[:, idx]
        m = len(idx)
        counts = np.zeros((m, m))
        step = max(1, 4_000_000 // max(1, m * m))
        for start in range(0, r.shape[0], step):
            block = r[start:start + step]
            counts += (block[:, :, None] < block[:, None, :]).sum(axis=0)
        p = counts / r.shape[0]
        np.fill_diagonal(p, np.nan)
        labels = [names[i] for i in idx]
        out = pd.DataFrame(p, index=pd.Index(labels, name="surface"), columns=pd.Index(labels, name="beats"))
        out.attrs.update(self._attrs(f"P(row beats column), {ps.pathway.name}", {"value": "fraction of samples in which the row surface ranks before the column surface [-]"}))
        out.attrs["selection"] = selection
        out.attrs["standard_error"] = "sqrt(p(1-p)/samples)"
        return out

    def samples(self, pathway, quantity: str = "limiting_potential") -> pd.DataFrame:
        """The samples of one quantity as a DataFrame (rows: samples, columns: surfaces); unit in attrs."""
        ps = self._path(pathway)
        frame = pd.DataFrame(ps.quantity(quantity), columns=pd.Index(list(self.surfaces), name="surface"))
        frame.index.name = "sample"
        frame.attrs.update(self._attrs(quantity, {}))
        frame.attrs["unit"] = QUANTITY_UNITS.get(quantity, "").format(scale=self.conditions.get("scale", "RHE"))
        return frame

    def volcano_points(self, pathway, descriptor: str, interval: float = 0.9) -> pd.DataFrame:
        """Each surface's position on a volcano with intervals: descriptor G (x, eV) and the
        limiting potential and effective limiting potential from G_max (y, V), per sample.

        Needs ``keep_species=[descriptor]`` in :func:`propagate`.
        """
        key = Species.parse(descriptor).key
        if key not in self.species_samples:
            raise UncertaintyError(f"descriptor {key} was not kept; call propagate(..., keep_species=['{key}'])")
        ps = self._path(pathway)
        lo_q, hi_q = 50.0 * (1.0 - interval), 50.0 * (1.0 + interval)
        x = self.species_samples[key]
        u_eq = ps.equilibrium_potential
        u_eq = np.asarray(u_eq)[:, None] if np.ndim(u_eq) else u_eq
        y_eff = kernel.effective_limiting_potential(ps.G_max, u_eq, ps.pathway.direction)
        cols = {}
        for label, arr in (("x", x), ("U_L", ps.limiting_potential), ("U_eff", y_eff)):
            with np.errstate(invalid="ignore"):
                lo, hi = np.percentile(arr, [lo_q, hi_q], axis=0)
            cols[f"{label}_mean"] = arr.mean(axis=0)
            cols[f"{label}_std"] = arr.std(axis=0, ddof=1)
            cols[f"{label}_low"] = lo
            cols[f"{label}_high"] = hi
        det = self._det(ps.pathway.name)
        cols["U_L_deterministic"] = det["limiting_potential"].to_numpy(dtype=float)
        out = pd.DataFrame(cols, index=pd.Index(list(self.surfaces), name="surface"))
        out.attrs.update(self._attrs(f"volcano positions, {ps.pathway.name} vs {key}", {
            "x_*": f"free energy of {key} [eV]", "U_L_*": f"limiting potential [V vs {self.conditions.get('scale')}]",
            "U_eff_*": "effective limiting potential from G_max, kernel.effective_limiting_potential [V vs scale]",
        }))
        out.attrs["descriptor"] = key
        out.attrs["pathway"] = ps.pathway.name
        out.attrs["interval"] = f"central {100 * interval:g}%"
        return out

    def state_samples(self, pathway, surface: str, potential: float = 0.0) -> np.ndarray:
        """Free energies of the states of ``pathway`` on one surface at ``potential`` (V vs scale),
        per sample: array (samples, n_states), first state 0 eV. The same samples as the tables
        (the sampler is re-run with the same seed, surfaces and species: one pass of the sampler,
        about the cost of drawing the samples once)."""
        inp = self.inputs
        names = list(self.surfaces)
        if surface not in names:
            raise UncertaintyError(f"unknown surface {surface!r}; known: {names}")
        path = self._path(pathway).pathway
        table: EnergyTable = inp["table"]
        compiled = compile_pathway(path, table.scheme)
        species = list(inp["species"])
        cols = [species.index(a) for a in compiled.adsorbates]
        s = names.index(surface)
        base = table.values([surface], species)[0]
        cmol = _molecule_matrix(path.steps, inp["molecules"])
        out = []
        for ch in sampler.chunks(inp["plan"]):
            g = base[None, :] + ch.adsorbates[:, s, :]
            a, n = compiled.affine(g[:, cols], self.conditions["pH"], self.conditions["scale"], self.conditions["temperature"])
            if cmol is not None:
                a = a + ch.molecules @ cmol.T
            dG = kernel.step_free_energy(a, n, float(potential))
            out.append(np.concatenate([np.zeros((dG.shape[0], 1)), np.cumsum(dG, axis=1)], axis=1))
        return np.concatenate(out, axis=0)

    def _repr_html_(self) -> str:
        c = self.conditions
        return (
            f"<p><b>Uncertainty</b>: {self.n_samples} samples, {len(self.surfaces)} surfaces, pathways "
            f"{', '.join(self.pathways)}; {c.get('model')}; {c.get('scale')}, pH {c.get('pH')}, "
            f"{c.get('temperature')} K. Theoretical estimates.</p>"
        )


def _step_frequencies(index: np.ndarray, n_steps: int) -> np.ndarray:
    """Fraction of the samples (axis 0) in which each step index occurs, per surface: (surfaces, steps).

    One comparison per step over the int8 index array (no (samples, surfaces, steps) temporary)."""
    out = np.empty((index.shape[1], n_steps))
    for k in range(n_steps):
        out[:, k] = (index == k).sum(axis=0, dtype=np.int32 if index.shape[0] < 2**31 else np.int64)
    return out / index.shape[0]


def _percentiles_of_sorted(xs: np.ndarray, qs: Sequence[float]) -> list[np.ndarray]:
    """Percentiles along the last axis of an array sorted along it, as ``np.percentile``
    (method "linear": virtual index (n - 1) q / 100, numpy's two-sided linear interpolation)."""
    n = xs.shape[-1]
    out = []
    for q in qs:
        h = (n - 1) * (q / 100.0)
        lo = int(np.floor(h))
        hi = min(lo + 1, n - 1)
        t = h - lo
        a, b = xs[..., lo], xs[..., hi]
        diff = b - a
        out.append(b - diff * (1.0 - t) if t >= 0.5 else a + diff * t)
    return out


def _transposed(x: np.ndarray, rows: int = 256) -> np.ndarray:
    """A C-contiguous copy of ``x.T`` for a 2-D ``x``, copied ``rows`` rows of ``x`` at a time (the
    reads stay in cache: about 4x faster than ``np.ascontiguousarray(x.T)`` for 2,000 x 1,000)."""
    out = np.empty((x.shape[1], x.shape[0]), dtype=x.dtype)
    for start in range(0, x.shape[0], rows):
        out[:, start:start + rows] = x[start:start + rows].T
    return out


class _PathwayStats:
    """Mean, standard deviation (ddof=1) and percentiles of one pathway's sampled quantities over
    the samples, per surface.

    Each distinct array is sorted once, surface by surface (a transposed copy, so every surface's
    samples are contiguous). The overpotential is the kernel's monotonic map of U_L
    (:func:`ecatlab.che.kernel.signed_overpotential`) when U_eq is the same in every sample, so its
    mean and percentiles are the mapped ones of U_L (equal to rounding) and its standard deviation
    is U_L's; G_max reuses them when its samples equal the
    overpotential's (one-electron steps and no chemical step). A surface with any NaN sample gets
    NaN statistics, as ``np.percentile`` gives."""

    def __init__(self, ps: "PathwaySamples", qs: Sequence[float]) -> None:
        self.ps, self.qs, self.cache = ps, tuple(qs), {}

    def _from_sorted(self, xs: np.ndarray, bad: np.ndarray) -> tuple:
        n = xs.shape[-1]
        with np.errstate(invalid="ignore"):
            mean = xs.mean(axis=-1)
            if n > 1:  # two-pass variance, ddof=1: sums of squared deviations, a block of surfaces at a time
                ss = np.empty(xs.shape[0])
                for lo in range(0, xs.shape[0], 64):  # the block's deviations stay in cache
                    d = xs[lo:lo + 64] - mean[lo:lo + 64, None]
                    ss[lo:lo + 64] = np.einsum("ij,ij->i", d, d)
                std = np.sqrt(ss / (n - 1))
            else:
                std = np.zeros(xs.shape[0])
        pct = _percentiles_of_sorted(xs, self.qs)
        if bad.any():
            for arr in (mean, std, *pct):
                arr[bad] = np.nan
        return mean, std, pct

    def _sorted(self, x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        xs = _transposed(np.asarray(x, dtype=float))  # (surfaces, samples)
        xs.sort(axis=-1)  # NaN last
        return xs, np.isnan(xs[:, -1])

    def get(self, q: str) -> tuple:
        if q in self.cache:
            return self.cache[q]
        ps = self.ps
        if q == "max_chemical_dG" and ps.max_chemical_dG is None:
            S = ps.limiting_potential.shape[1]
            res = (np.full(S, np.nan), np.full(S, np.nan), [np.full(S, np.nan) for _ in self.qs])
        elif q == "overpotential" and np.ndim(ps.equilibrium_potential) == 0 and self._symmetric():
            # eta = U_eq - U_L (reduction) or U_L - U_eq (oxidation) with one U_eq: its mean, percentiles and
            # standard deviation are the kernel's map of those of U_L (the interval's ends swap for a reduction)
            mean, std, pct = self.get("limiting_potential")
            u_eq, d = ps.equilibrium_potential, ps.pathway.direction
            mapped = [kernel.signed_overpotential(x, u_eq, d) for x in pct]
            res = (kernel.signed_overpotential(mean, u_eq, d), std.copy(), mapped[::-1] if d == "reduction" else mapped)
        elif q == "G_max" and ps.G_max_is_overpotential:
            res = self.get("overpotential")
        elif q == "limiting_potential":
            res = self._from_sorted(*self._sorted_ul())
        else:
            res = self._from_sorted(*self._sorted(ps.quantity(q)))
        self.cache[q] = res
        return res

    def _symmetric(self) -> bool:
        """True when the percentiles asked for mirror each other (q and 100 - q), as summary's do."""
        return all(abs(a + b - 100.0) < 1e-12 for a, b in zip(self.qs, self.qs[::-1]))

    def _sorted_ul(self) -> tuple[np.ndarray, np.ndarray]:
        if "_ul" not in self.cache:
            self.cache["_ul"] = self._sorted(self.ps.limiting_potential)
        return self.cache["_ul"]


#: Most threads :func:`default_workers` gives (beyond a few, the memory bandwidth is shared anyway).
MAX_DEFAULT_WORKERS = 4


def default_workers() -> int:
    """Threads :func:`propagate` uses when not told: the CPUs this process may run on (its
    affinity mask, not the machine's count), at most :data:`MAX_DEFAULT_WORKERS`."""
    from ecatlab._threads import available_cpus

    return available_cpus(MAX_DEFAULT_WORKERS)


#: Largest share of the available memory the results of :func:`propagate` may take (the rest is
#: left for the chunk buffers and the tables' working copies, one array at a time).
MEMORY_SHARE = 0.5


def _available_memory_bytes() -> int | None:
    """Memory the system can give this process now (``MemAvailable`` of /proc/meminfo), or None."""
    try:
        with open("/proc/meminfo", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("MemAvailable:"):
                    return int(line.split()[1]) * 1024
    except (OSError, ValueError, IndexError):
        pass
    import os

    try:
        return int(os.sysconf("SC_AVPHYS_PAGES")) * int(os.sysconf("SC_PAGE_SIZE"))
    except (AttributeError, ValueError, OSError):  # pragma: no cover - not a POSIX system
        return None


def _check_result_memory(n_samples: int, n_surfaces: int, store: list, n_kept: int, varying_u_eq: bool) -> None:
    """Refuse, before anything is drawn, a run whose result arrays would not fit in memory."""
    per_pair = sum(8 + 8 + 3 + (8 if st["chem"] is not None else 0) for st in store) + 8 * n_kept
    need = n_samples * n_surfaces * per_pair + (8 * n_samples * len(store) if varying_u_eq else 0)
    avail = _available_memory_bytes()
    if avail is None or need <= MEMORY_SHARE * avail:
        return
    fit = max(1, int(MEMORY_SHARE * avail // max(1, n_surfaces * per_pair)))
    raise UncertaintyError(
        f"the results of {n_samples} samples x {n_surfaces} surfaces x {len(store)} pathway(s) would take "
        f"{need / 1e9:.1f} GB ({per_pair} bytes per sample and surface), more than {MEMORY_SHARE:.0%} of the "
        f"{avail / 1e9:.1f} GB available; ask for at most about {fit} samples, or fewer surfaces or pathways"
    )


def _molecule_matrix(steps, molecules: Sequence[str]) -> np.ndarray | None:
    """Net coefficient of each error-carrying molecule in each step (n_steps, n_molecules); None if none."""
    if not molecules:
        return None
    pos = {m: j for j, m in enumerate(molecules)}
    c = np.zeros((len(steps), len(molecules)))
    for i, step in enumerate(steps):
        for sp, coef in step.net().items():
            if sp.is_molecule and sp.key in pos:
                c[i, pos[sp.key]] += coef
            elif sp == HYDROXIDE and "H2O(l)" in pos:  # OH- carries G(H2O(l)) in the CHE bookkeeping
                c[i, pos["H2O(l)"]] += coef
    return c


def _single_threaded_blas():
    """Limit BLAS to one thread: the (rows x few) @ (few x few) products of the propagation run
    several times faster single-threaded than with threads competing for the cores."""
    try:
        from threadpoolctl import threadpool_limits
    except ImportError:  # pragma: no cover - threadpoolctl is a dependency
        import contextlib

        return contextlib.nullcontext()
    return threadpool_limits(limits=1, user_api="blas")


@dataclass(frozen=True)
class _Stack:
    """All steps of all pathways (and the kept species) as rows of one array, for one table.

    ``matrix`` (species x rows) maps adsorbate deviations to step free energies (the compiled
    stoichiometries, transposed) and to the kept species (unit columns); ``central`` (rows x
    surfaces, eV) holds the deterministic engine's step free energies (``CompiledPathway.affine``
    on the table) and the kept species' table values; ``molecules`` (rows x molecules) the net
    coefficient of each error-carrying molecule."""

    matrix: np.ndarray
    central: np.ndarray
    molecules: np.ndarray | None
    electrons: np.ndarray
    bounds: tuple[int, ...]
    directions: tuple[str, ...]
    n_steps: int


def _stack(paths, compiled, cols, base, keep_cols, pH, sc, temperature, mols) -> _Stack:
    sizes = [len(p.steps) for p in paths]
    bounds = tuple(int(x) for x in np.concatenate([[0], np.cumsum(sizes)]))
    P = bounds[-1]
    rows = P + len(keep_cols)
    A, S = base.shape[1], base.shape[0]
    matrix = np.zeros((A, rows))
    central = np.empty((rows, S))
    electrons = np.empty(P)
    cmol = np.zeros((rows, len(mols))) if mols else None
    for j, (path, c, col) in enumerate(zip(paths, compiled, cols)):
        lo, hi = bounds[j], bounds[j + 1]
        np.add.at(matrix, (col[:, None], np.arange(lo, hi)[None, :]), c.adsorbate_stoichiometry.T)
        a, n = c.affine(base[:, col], pH, sc, temperature)  # (S, steps): the engine's own numbers
        central[lo:hi] = a.T
        electrons[lo:hi] = n
        if cmol is not None:
            cmol[lo:hi] = _molecule_matrix(path.steps, mols)
    for k, j in enumerate(keep_cols):
        matrix[j, P + k] = 1.0
        central[P + k] = base[:, j]
    return _Stack(matrix, central, cmol, electrons, bounds, tuple(p.direction for p in paths), P)


def _propagate_chunk(ch, stack: _Stack, store, kept, kept_names, buffers: dict) -> None:
    """Push one chunk of samples through the kernel for every pathway (no loop over samples).

    The step free energies of all pathways for all (sample, surface) pairs of the chunk are one
    array (rows x samples x surfaces): the central values, plus the molecules' deviations, plus the
    adsorbate deviations mapped through the stoichiometry in one matrix product; the kernel's
    :func:`~ecatlab.che.kernel.stacked_measures` then writes U_L, G_max, the chemical-step measure
    and the step indices straight into the result arrays."""
    c = ch.size
    rows_total, S = stack.central.shape
    key = (rows_total, c, S)
    a = buffers.get(key)
    if a is None:
        a = buffers[key] = np.empty(key)
    rows = slice(ch.start, ch.start + c)
    common = ch.shared_linear(stack.matrix)  # (c, rows): deviations shared by all surfaces
    if stack.molecules is not None:
        mol = ch.molecules @ stack.molecules.T
        common = mol if common is None else common + mol
    if common is not None:  # one pass: central values plus the per-sample terms
        np.add(stack.central[:, None, :], common.T[:, :, None], out=a)
    else:
        np.copyto(a, stack.central[:, None, :])
    ch.add_linear(stack.matrix, a, shared=False)
    P = stack.n_steps
    u_eqs, outs = [], []
    for st in store:
        if st["cmol"] is not None:
            a_eq = st["eq_affine"][0] + ch.molecules @ st["eq_mol"].T  # (c, 1)
            u_eq = kernel.equilibrium_potential_from_affine(a_eq, st["eq_affine"][1])  # (c,)
            st["U_eq"][rows] = u_eq
            u_eqs.append(u_eq[:, None])
        else:
            u_eqs.append(st["u_eq"])
        outs.append({"U_L": st["U_L"][rows], "step": st["det"][rows], "G_max": st["G"][rows],
                     "G_max_step": st["gst"][rows], "max_chemical_dG": st["chem"][rows] if st["chem"] is not None else None})
    results = kernel.stacked_measures(a[:P], stack.electrons, stack.bounds, stack.directions, u_eqs, out=outs)
    for st, res in zip(store, results):
        st["g_is_eta"] = res["G_max_is_overpotential"]
        if res["max_chemical_dG"] is not None:
            st["blk"][rows] = kernel.is_blocked(res["max_chemical_dG"])
        else:
            st["blk"][rows] = False
        if not st["may_miss"]:
            continue
        missing = np.isnan(res["U_L"])
        if missing.any():
            res["step"][missing] = -1
            res["G_max_step"][missing] = -1
    for k, name in enumerate(kept_names):
        kept[name][rows] = a[P + k]


def propagate(
    energies,
    pathways,
    model: ErrorModel,
    n_samples: int | None = None,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    surfaces: Iterable[str] | None = None,
    seed: int = 0,
    chunk_size: int | None = None,
    members: str = "all",
    keep_species: Sequence[str] = (),
    progress: bool | None = None,
    workers: int | None = None,
) -> UncertaintyResult:
    """Propagate an error model through the CHE analysis of one or more pathways.

    Parameters
    ----------
    energies : EnergyTable, DataFrame or path
        Central free energies (eV); read at ``temperature`` with :func:`ecatlab.energies.as_energy_table`.
    pathways : str, Pathway or list of them
        Built-in keys, Pathway objects or step text.
    model : ErrorModel
        :class:`~ecatlab.uncertainty.GaussianErrors`, :class:`~ecatlab.uncertainty.DescriptorErrors`,
        :class:`~ecatlab.uncertainty.CovarianceErrors` or :class:`~ecatlab.uncertainty.EnsembleErrors`.
    n_samples : int, optional
        Default 1000 (Gaussian) or the ensemble size.
    pH, scale, temperature
        Conditions as in :func:`ecatlab.limiting_potentials` (pH, "RHE"/"SHE", K).
    surfaces : list of str, optional
    seed : int
        Seed; the same seed gives the same numbers, whatever ``chunk_size``.
    chunk_size : int, optional
        Samples per chunk (memory bound); see :func:`ecatlab.uncertainty.sampler.plan`.
    members : {"all", "bootstrap"}
        Ensembles: every member once, or members drawn with replacement.
    keep_species : sequence of str
        Adsorbates whose sampled G (eV) to keep, e.g. a volcano descriptor.
    progress : bool, optional
        tqdm bar over the chunks; default on for long runs.
    workers : int, optional
        Threads that take chunks of samples in turn (each draws its own chunk and writes its own
        rows of the results; numpy releases the GIL in the draws, the matrix product and the
        kernel's array operations); 1 runs in the calling thread. Default: the cores this process
        may use (:func:`default_workers`, at most 4). Same numbers for any value.

    Returns
    -------
    UncertaintyResult

    Notes
    -----
    Memory: per pathway the result keeps, per sample and surface, U_L, G_max and (for pathways with
    a chemical step) the chemical-step measure (float64), the two step indices (int8) and the
    blocked flag: 27 bytes, e.g. 54 MB for 1,000 surfaces x 2,000 samples; the sampled deviations
    exist one chunk at a time.
    """
    sc = check_scale(scale)
    check_temperature(temperature)
    check_pH(pH)
    if np.ndim(pH) != 0:
        raise UncertaintyError("propagate takes one pH value")
    table = as_energy_table(energies, temperature)
    paths = [resolve(p) for p in ([pathways] if isinstance(pathways, (str, Pathway)) else list(pathways))]
    if not paths:
        raise UncertaintyError("no pathway given")
    if len({p.name for p in paths}) != len(paths):
        raise UncertaintyError(f"pathway names repeat in {[p.name for p in paths]}; give each pathway once")
    if surfaces is None:
        names = list(table.surfaces)
    else:
        names = [surfaces] if isinstance(surfaces, str) else list(surfaces)
        unknown = [s for s in names if s not in set(table.surfaces)]
        if unknown:
            raise EnergyTableError(table.source, f"unknown surface(s) {unknown}; known: {table.surfaces}")
    compiled = [compile_pathway(p, table.scheme) for p in paths]
    keep = [Species.parse(k).key for k in keep_species]
    species: list[str] = []
    for c in compiled:
        species.extend(a for a in c.adsorbates if a not in species)
    species.extend(k for k in keep if k not in species)
    refs = set(table.scheme.references)
    mols = tuple(m for m in model.molecules_with_errors())
    bad_refs = [m for m in mols if m in refs]
    if bad_refs:
        raise UncertaintyError(
            f"reference molecule(s) {bad_refs} are 0 by definition in every sample; fold their member energies into the "
            "adsorbates (ecatlab.ingest.ensembles.ensemble_from_structures) instead of giving them errors"
        )
    p = sampler.plan(model, names, species, mols, n_samples, seed, chunk_size, members)
    base = table.values(names, species)  # (S, A), NaN where missing
    cols = [np.array([species.index(a) for a in c.adsorbates], dtype=int) for c in compiled]
    deterministic = limiting_potentials(table, paths, pH=pH, scale=sc, temperature=temperature, surfaces=names, on_missing="report")

    N, S = p.n_samples, len(names)
    store = []
    for path, c in zip(paths, compiled):
        chem = ~c.electrochemical
        eq_affine = compile_steps((path.overall_step(),), (), table.scheme).affine(np.zeros((1, 0)), pH, sc, temperature)
        store.append({
            "U_L": np.empty((N, S)), "G": np.empty((N, S)), "det": np.empty((N, S), dtype=np.int8),
            "gst": np.empty((N, S), dtype=np.int8), "blk": np.empty((N, S), dtype=bool),
            "chem": np.empty((N, S)) if chem.any() else None,
            "cmol": _molecule_matrix(path.steps, mols),
            "eq_affine": eq_affine,
            "eq_mol": _molecule_matrix((path.overall_step(),), mols),
            "U_eq": np.empty(N) if mols else None,
            "u_eq": float(kernel.equilibrium_potential_from_affine(*eq_affine)[0]) + 0.0,
            # NaN can come only from missing table values or an ensemble that does not cover a species
            "g_is_eta": False,
            "may_miss": bool(np.isnan(base[:, [species.index(x) for x in c.adsorbates]]).any()) or getattr(model, "kind", "") == "ensemble",
        })
    _check_result_memory(N, S, store, len(keep), bool(mols))
    kept = {k: np.empty((N, S)) for k in keep}
    stack = _stack(paths, compiled, cols, base, [species.index(k) for k in keep], pH, sc, temperature, mols)
    if workers is None:
        workers = default_workers()
    if not isinstance(workers, (int, np.integer)) or isinstance(workers, bool) or workers < 1:
        raise UncertaintyError(f"workers must be a positive integer, got {workers!r}")
    show = progress if progress is not None else N * S * len(paths) > PROGRESS_THRESHOLD
    starts = sampler.chunk_starts(p)
    prepared = sampler.prepare(p)
    bar = None
    if show:
        from tqdm.auto import tqdm

        bar = tqdm(total=p.n_chunks, desc="propagating samples", unit="chunk")
    with _single_threaded_blas():
        if int(workers) == 1:
            buffers: dict = {}
            for start in starts:
                _propagate_chunk(sampler.chunk_at(p, start, prepared), stack, store, kept, keep, buffers)
                if bar is not None:
                    bar.update(1)
        else:
            import threading
            from concurrent.futures import ThreadPoolExecutor

            local = threading.local()

            def work(start):  # chunks are independent and write disjoint rows of the results
                if not hasattr(local, "buffers"):
                    local.buffers = {}
                _propagate_chunk(sampler.chunk_at(p, start, prepared), stack, store, kept, keep, local.buffers)

            with ThreadPoolExecutor(max_workers=int(workers)) as pool:
                for _ in pool.map(work, starts):
                    if bar is not None:
                        bar.update(1)
    if bar is not None:
        bar.close()
    results = {}
    for path, st in zip(paths, store):
        u_eq = st["U_eq"] if st["U_eq"] is not None else st["u_eq"]
        results[path.name] = PathwaySamples(path, st["U_L"], u_eq, st["G"], st["det"], st["gst"], st["blk"], st["chem"],
                                            st["g_is_eta"])
    conditions = {
        "scale": sc, "pH": float(pH), "temperature": float(temperature),
        "references": table.scheme.describe(), "energy_source": table.source,
        "model": model.describe(), "seed": int(seed), "samples": N,
        "sampling": "ensemble members in order" if (getattr(model, "kind", "") == "ensemble" and members == "all") else f"seeded draws (seed {seed})",
    }
    inputs = {"table": table, "species": tuple(species), "molecules": mols, "plan": p, "workers": int(workers)}
    return UncertaintyResult(tuple(names), results, deterministic, N, conditions, kept, inputs)
