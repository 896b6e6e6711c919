r"""How many independent descriptors a table of adsorption energies contains, and which energies stand for them.

Principal component analysis (PCA) of the surfaces x adsorbates matrix :math:`G` (eV) of an
energy table: rows are surfaces (observations), columns adsorbates (variables), all in eV, so the
columns are centred but not scaled by default (every column carries the same unit; scaling would
inflate adsorbates that barely change).

The method
----------
* **Centring and SVD**: :math:`X = G - \bar G` (column means), :math:`X = U S V^\top`. Component
  *k* has loadings :math:`V_{:,k}` (one weight per adsorbate, unit norm), scores
  :math:`U_{:,k} s_k` (eV, one per surface) and explained variance :math:`s_k^2 / (n - 1)` (eV²);
  the explained-variance ratio is :math:`s_k^2 / \sum_j s_j^2`. The sign of each component is
  fixed so that its loadings sum to a positive number (component 1 then reads "binding strength":
  every adsorbate binds weaker together).
* **Reconstruction error** with *k* components: :math:`\hat G_k = \bar G + \sum_{j \le k} U_{:,j}
  s_j V_{:,j}^\top`; its root-mean-square deviation from the *computed* entries (eV) is reported
  per *k*; for a complete matrix it equals :math:`\sqrt{\sum_{j>k} s_j^2 / (n m)}` (Eckart-Young:
  no *k*-dimensional linear model does better in-sample). :meth:`DescriptorAnalysis.components_for_error`
  returns the smallest *k* that reaches a target error in eV.
* **Missing entries** (a surface lacking an adsorbate) are imputed by iterative low-rank SVD
  ("hard impute"): start from the column means, then repeat *reconstruct at rank r, replace only
  the missing entries* until they change by less than ``tol`` eV (Troyanskaya et al.,
  Bioinformatics 17, 520 (2001), "SVDimpute"; Mazumder, Hastie & Tibshirani, J. Mach. Learn. Res.
  11, 2287 (2010) for the convergence of this fixed-point iteration). The rank *r* is chosen by
  cross-validation on computed entries (:func:`imputation_cv`): computed entries are hidden in
  folds, imputed, and compared with their values; the rank with the lowest held-out RMSE wins.
  Computed entries are never changed; which entries were imputed is kept (``missing``).
* **Stand-ins**: for each component, the adsorbate whose energy correlates best with the component's
  scores (``|r|``); and a greedy set of *k* adsorption energies that, as linear descriptors with
  an intercept, reproduce the whole matrix best (forward selection), with in-sample and exact
  leave-one-out RMSE, to compare with PCA's optimum and with the automatic scaling relations
  (:func:`ecatlab.scaling.auto_scaling`).

Pure computation: no plotting, no files.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field
from typing import Iterable, Sequence

import numpy as np
import pandas as pd

from ecatlab.errors import DescriptorError, MissingDataWarning

__all__ = [
    "DescriptorAnalysis",
    "analyse_descriptors",
    "impute_low_rank",
    "imputation_cv",
    "greedy_descriptor_set",
    "descriptor_section",
    "EXPLAINED_VARIANCE_COLUMNS",
    "STAND_IN_COLUMNS",
    "COMPARISON_COLUMNS",
]

#: Columns of :meth:`DescriptorAnalysis.explained_variance`.
EXPLAINED_VARIANCE_COLUMNS: dict[str, str] = {
    "component": "principal component, 1-based [-]",
    "singular_value": "s_k of the centred matrix [eV]",
    "explained_variance": "s_k^2 / (n_surfaces - 1) [eV^2]",
    "explained_variance_ratio": "s_k^2 / sum_j s_j^2 [-]",
    "cumulative_ratio": "sum of explained_variance_ratio up to this component [-]",
    "reconstruction_rmse": "RMSE of the rank-k reconstruction against the computed entries [eV]",
    "cv_rmse": "held-out RMSE when computed entries are hidden and imputed at this rank (cross-validation) [eV]; NaN where not evaluated",
}
#: Columns of :meth:`DescriptorAnalysis.stand_ins`.
STAND_IN_COLUMNS: dict[str, str] = {
    "component": "principal component, 1-based [-]",
    "adsorbate": "adsorbate whose energy correlates best with the component's scores",
    "correlation": "Pearson correlation of that adsorbate's energies with the scores [-]",
    "top_loadings": "the three largest loadings of the component (adsorbate: weight)",
}
#: Columns of :meth:`DescriptorAnalysis.comparison`.
COMPARISON_COLUMNS: dict[str, str] = {
    "model": "which linear model reproduces the matrix",
    "descriptors": "number of descriptors (components, or adsorption energies) [-]",
    "uses": "what the descriptors are",
    "rmse": "in-sample RMSE over the computed entries it predicts [eV]",
    "out_of_sample_rmse": "cross-validated RMSE: held-out entries (PCA), leave-one-surface-out (energy sets, scaling relations) [eV]",
}


# ------------------------------------------------------------------------------------------------
# imputation
# ------------------------------------------------------------------------------------------------
def _svd(x: np.ndarray):
    return np.linalg.svd(x, full_matrices=False)


def impute_low_rank(values, rank: int, max_iter: int = 1000, tol: float = 1e-8) -> tuple[np.ndarray, int, bool]:
    """Fill NaN entries of a matrix by iterative rank-``rank`` SVD reconstruction (hard impute).

    Parameters
    ----------
    values : array_like (n_rows, n_columns)
        Matrix with NaN for missing entries (eV).
    rank : int
        Rank of the reconstruction (>= 0; 0 fills with column means).
    max_iter : int
        Largest number of iterations.
    tol : float
        Stop when no imputed entry changes by more than ``tol`` (eV) in one iteration.

    Returns
    -------
    (filled, iterations, converged)
        ``filled`` equals ``values`` on every finite entry.

    Notes
    -----
    Each iteration centres the columns of the current matrix, reconstructs it at rank ``rank``
    from its SVD and replaces the missing entries only (Troyanskaya et al., Bioinformatics 17, 520
    (2001); Mazumder, Hastie & Tibshirani, JMLR 11, 2287 (2010)). A column without any computed
    entry cannot be imputed and raises.
    """
    x = np.array(values, dtype=float)
    if x.ndim != 2:
        raise DescriptorError(f"impute_low_rank needs a 2-D matrix, got shape {x.shape}")
    miss = ~np.isfinite(x)
    empty = np.flatnonzero(miss.all(axis=0))
    if empty.size:
        raise DescriptorError(f"columns {list(empty)} have no computed entry; remove them before imputing")
    if rank < 0 or rank > min(x.shape):
        raise DescriptorError(f"rank must be between 0 and {min(x.shape)}, got {rank}")
    if not miss.any():
        return x, 0, True
    col_mean = np.nanmean(np.where(miss, np.nan, x), axis=0)
    x[miss] = np.broadcast_to(col_mean, x.shape)[miss]
    for it in range(1, max_iter + 1):
        mean = x.mean(axis=0)
        if rank == 0:
            recon = np.broadcast_to(mean, x.shape)
        else:
            u, s, vt = _svd(x - mean)
            recon = (u[:, :rank] * s[:rank]) @ vt[:rank] + mean
        change = np.max(np.abs(recon[miss] - x[miss]))
        x[miss] = recon[miss]
        if change < tol:
            return x, it, True
    return x, max_iter, False


def imputation_cv(values, ranks: Iterable[int] | None = None, folds: int = 5, seed: int = 0, max_iter: int = 300, tol: float = 1e-6) -> pd.DataFrame:
    """Held-out error of low-rank imputation per rank (cross-validation on computed entries).

    The computed entries are split at random (seeded) into ``folds`` parts; each part in turn is
    hidden, the matrix imputed at each rank with :func:`impute_low_rank`, and the hidden entries
    compared with their computed values. Entries whose row or column would lose every computed
    value are never hidden. Default ranks: 0 to min(n_rows, n_columns) - 1, at most 8; each
    imputation stops after ``max_iter`` iterations or a change below ``tol`` eV.

    Returns
    -------
    DataFrame
        ``rank``, ``cv_rmse`` (eV), ``cv_max_abs`` (eV), ``n_held_out``.
    """
    x = np.asarray(values, dtype=float)
    obs = np.argwhere(np.isfinite(x))
    max_rank = max(0, min(min(x.shape) - 1, 8))
    ranks = list(range(0, max_rank + 1)) if ranks is None else [int(r) for r in ranks]
    rng = np.random.default_rng(seed)
    order = rng.permutation(len(obs))
    fold_of = np.empty(len(obs), dtype=int)
    fold_of[order] = np.arange(len(obs)) % max(folds, 2)
    errors = {r: [] for r in ranks}
    for f in range(max(folds, 2)):
        hide = obs[fold_of == f]
        trial = x.copy()
        trial[hide[:, 0], hide[:, 1]] = np.nan
        finite = np.isfinite(trial)
        ok = finite.any(axis=0)[hide[:, 1]] & finite.any(axis=1)[hide[:, 0]]
        hide = hide[ok]
        trial = x.copy()
        trial[hide[:, 0], hide[:, 1]] = np.nan
        if not len(hide):
            continue
        truth = x[hide[:, 0], hide[:, 1]]
        for r in ranks:
            if r > min(x.shape):
                continue
            filled, _, _ = impute_low_rank(trial, r, max_iter=max_iter, tol=tol)
            errors[r].append(filled[hide[:, 0], hide[:, 1]] - truth)
    rows = []
    for r in ranks:
        e = np.concatenate(errors[r]) if errors[r] else np.array([])
        rows.append({"rank": r, "cv_rmse": float(np.sqrt(np.mean(e**2))) if e.size else np.nan,
                     "cv_max_abs": float(np.abs(e).max()) if e.size else np.nan, "n_held_out": int(e.size)})
    out = pd.DataFrame(rows)
    out.attrs.update({"quantity": "cross-validated error of low-rank imputation", "units": {"cv_rmse": "eV", "cv_max_abs": "eV"},
                      "folds": folds, "seed": seed})
    return out


# ------------------------------------------------------------------------------------------------
# greedy descriptor set (which single adsorption energies stand in for the components)
# ------------------------------------------------------------------------------------------------
def _fit_all_columns(x: np.ndarray, chosen: Sequence[int]):
    """Least squares of every column of ``x`` on the chosen columns + intercept.

    Returns (in-sample residuals, leave-one-out residuals), both (n, m); the chosen columns
    themselves are reproduced exactly (their residuals are 0 and are excluded by the caller).
    """
    n = x.shape[0]
    X = np.column_stack([x[:, list(chosen)], np.ones(n)])
    q, _ = np.linalg.qr(X)
    resid = x - q @ (q.T @ x)
    h = np.einsum("ij,ij->i", q, q)
    loo = resid / np.clip(1.0 - h, 1e-12, None)[:, None]
    return resid, loo


def greedy_descriptor_set(values, species: Sequence[str], k: int) -> pd.DataFrame:
    """Forward selection of ``k`` columns that, with an intercept, reproduce all other columns best.

    Parameters
    ----------
    values : array (n_surfaces, n_adsorbates), complete (impute first), eV
    species : adsorbate keys of the columns
    k : number of adsorption energies to choose

    Returns
    -------
    DataFrame
        One row per step: ``step``, ``added`` (adsorbate), ``set`` (all chosen so far), ``rmse`` and
        ``loo_rmse`` (eV) over the entries of the *other* adsorbates (leave-one-surface-out residuals
        are exact, r_i / (1 - h_ii)).
    """
    x = np.asarray(values, dtype=float)
    n, m = x.shape
    if not np.all(np.isfinite(x)):
        raise DescriptorError("greedy_descriptor_set needs a complete matrix; impute missing entries first")
    k = min(k, m - 1, n - 3)
    chosen: list[int] = []
    rows = []
    for step in range(1, k + 1):
        best = None
        for j in range(m):
            if j in chosen:
                continue
            trial = chosen + [j]
            resid, _ = _fit_all_columns(x, trial)
            others = [c for c in range(m) if c not in trial]
            score = float(np.sqrt(np.mean(resid[:, others] ** 2)))
            if best is None or score < best[0] - 1e-15:
                best = (score, j)
        chosen.append(best[1])
        resid, loo = _fit_all_columns(x, chosen)
        others = [c for c in range(m) if c not in chosen]
        rows.append({"step": step, "added": species[best[1]], "set": ", ".join(species[c] for c in chosen),
                     "rmse": float(np.sqrt(np.mean(resid[:, others] ** 2))), "loo_rmse": float(np.sqrt(np.mean(loo[:, others] ** 2)))})
    out = pd.DataFrame(rows, columns=["step", "added", "set", "rmse", "loo_rmse"])
    out.attrs.update({"quantity": "greedy set of adsorption energies as linear descriptors", "units": {"rmse": "eV", "loo_rmse": "eV"}})
    return out


# ------------------------------------------------------------------------------------------------
# the analysis
# ------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class DescriptorAnalysis:
    """PCA of an energy table's surfaces x adsorbates matrix (see the module docstring).

    Attributes
    ----------
    surfaces, species : tuple of str
        Row and column labels.
    values : ndarray (n_surfaces, n_adsorbates)
        The matrix analysed, eV (computed entries, imputed where ``missing``).
    missing : ndarray of bool
        Entries that were imputed.
    mean : ndarray (n_adsorbates,)
        Column means, eV.
    singular_values : ndarray
        Of the centred matrix, eV.
    loadings_matrix : ndarray (n_components, n_adsorbates)
        Unit-norm loadings (rows: components).
    scores_matrix : ndarray (n_surfaces, n_components)
        Component scores, eV.
    imputation_rank : int or None
        Rank used to impute (None: nothing was missing).
    imputation_iterations : int
    cv : DataFrame or None
        :func:`imputation_cv` table (when something was missing or ``cv=True``).
    greedy : DataFrame
        :func:`greedy_descriptor_set` table.
    scaling : AutoScaling or None
        Automatic scaling relations for the comparison.
    source : str
        Energy table source.
    """

    surfaces: tuple[str, ...]
    species: tuple[str, ...]
    values: np.ndarray = field(repr=False)
    missing: np.ndarray = field(repr=False)
    mean: np.ndarray = field(repr=False)
    singular_values: np.ndarray = field(repr=False)
    loadings_matrix: np.ndarray = field(repr=False)
    scores_matrix: np.ndarray = field(repr=False)
    imputation_rank: int | None
    imputation_iterations: int
    cv: pd.DataFrame | None = field(repr=False, default=None)
    greedy: pd.DataFrame | None = field(repr=False, default=None)
    scaling: object = field(repr=False, default=None)
    source: str = "<table>"

    # -- per component -------------------------------------------------------------------------------
    @property
    def n_components(self) -> int:
        return len(self.singular_values)

    def reconstruction(self, k: int) -> np.ndarray:
        """Rank-``k`` reconstruction of the matrix, eV."""
        k = int(k)
        return self.mean + self.scores_matrix[:, :k] @ self.loadings_matrix[:k]

    def reconstruction_rmse(self) -> np.ndarray:
        """RMSE (eV) against the computed entries of the rank-k reconstruction, k = 0..n_components."""
        obs = ~self.missing
        out = []
        for k in range(self.n_components + 1):
            d = (self.reconstruction(k) - self.values)[obs]
            out.append(float(np.sqrt(np.mean(d**2))))
        return np.array(out)

    def components_for_error(self, target_rmse: float) -> int:
        """Smallest number of components whose reconstruction RMSE (eV) is at most ``target_rmse``."""
        if not (target_rmse >= 0):
            raise DescriptorError(f"target reconstruction error must be a non-negative number of eV, got {target_rmse!r}")
        rmse = self.reconstruction_rmse()
        hits = np.flatnonzero(rmse <= target_rmse + 1e-12)
        return int(hits[0]) if hits.size else self.n_components

    def explained_variance(self) -> pd.DataFrame:
        """One row per component; columns in :data:`EXPLAINED_VARIANCE_COLUMNS`."""
        s = self.singular_values
        ratio = s**2 / np.sum(s**2) if np.sum(s**2) > 0 else np.zeros_like(s)
        cv = np.full(len(s), np.nan)
        if self.cv is not None:
            m = dict(zip(self.cv["rank"], self.cv["cv_rmse"]))
            cv = np.array([m.get(k + 1, np.nan) for k in range(len(s))])
        frame = pd.DataFrame({
            "component": np.arange(1, len(s) + 1), "singular_value": s, "explained_variance": s**2 / max(len(self.surfaces) - 1, 1),
            "explained_variance_ratio": ratio, "cumulative_ratio": np.cumsum(ratio), "reconstruction_rmse": self.reconstruction_rmse()[1:],
            "cv_rmse": cv,
        })
        frame.attrs.update({"quantity": "PCA of the adsorption-energy matrix", "columns": EXPLAINED_VARIANCE_COLUMNS, "source": self.source})
        return frame

    def loadings(self, n: int | None = None) -> pd.DataFrame:
        """Loadings (unit-norm weights): index adsorbates, columns ``PC1``...; dimensionless."""
        n = self.n_components if n is None else min(int(n), self.n_components)
        frame = pd.DataFrame(self.loadings_matrix[:n].T, index=pd.Index(self.species, name="species"), columns=[f"PC{k + 1}" for k in range(n)])
        frame.attrs["quantity"] = "PCA loadings (unit-norm weight of each adsorbate) [-]"
        return frame

    def scores(self, n: int | None = None) -> pd.DataFrame:
        """Scores per surface (eV): index surfaces, columns ``PC1``..."""
        n = self.n_components if n is None else min(int(n), self.n_components)
        frame = pd.DataFrame(self.scores_matrix[:, :n], index=pd.Index(self.surfaces, name="surface"), columns=[f"PC{k + 1}" for k in range(n)])
        frame.attrs["quantity"] = "PCA scores [eV]"
        return frame

    def stand_ins(self, n: int | None = None) -> pd.DataFrame:
        """For each component, the adsorbate whose energies correlate best with its scores."""
        n = self.n_components if n is None else min(int(n), self.n_components)
        xc = self.values - self.values.mean(axis=0)
        rows = []
        for k in range(n):
            sc = self.scores_matrix[:, k]
            denom = np.linalg.norm(xc, axis=0) * np.linalg.norm(sc)
            r = np.where(denom > 0, (xc.T @ sc) / np.where(denom > 0, denom, 1.0), 0.0)
            j = int(np.argmax(np.abs(r)))
            top = np.argsort(-np.abs(self.loadings_matrix[k]))[:3]
            rows.append({"component": k + 1, "adsorbate": self.species[j], "correlation": float(r[j]),
                         "top_loadings": ", ".join(f"{self.species[i]}: {self.loadings_matrix[k, i]:+.2f}" for i in top)})
        frame = pd.DataFrame(rows, columns=list(STAND_IN_COLUMNS))
        frame.attrs.update({"quantity": "single adsorption energies standing in for the components", "columns": STAND_IN_COLUMNS})
        return frame

    def comparison(self, k: int | None = None) -> pd.DataFrame:
        """PCA with k components vs k greedy adsorption energies vs the automatic scaling relations.

        ``k`` defaults to the number of components of the greedy table (all computed steps).
        Columns in :data:`COMPARISON_COLUMNS`; errors in eV.
        """
        rows = []
        rmse = self.reconstruction_rmse()
        cv = {} if self.cv is None else dict(zip(self.cv["rank"], self.cv["cv_rmse"]))
        steps = len(self.greedy) if self.greedy is not None else 0
        kmax = steps if k is None else min(int(k), steps)
        for kk in range(1, kmax + 1):
            rows.append({"model": f"PCA, {kk} component(s)", "descriptors": kk, "uses": "principal components (combinations of all adsorbates)",
                         "rmse": float(rmse[kk]), "out_of_sample_rmse": float(cv.get(kk, np.nan))})
            g = self.greedy.iloc[kk - 1]
            rows.append({"model": f"{kk} adsorption energies", "descriptors": kk, "uses": g["set"], "rmse": float(g["rmse"]),
                         "out_of_sample_rmse": float(g["loo_rmse"])})
        if self.scaling is not None and self.scaling.targets:
            ins = np.array([self.scaling.best(t).relation.rmse for t in self.scaling.targets])
            loo = np.array([self.scaling.best(t).loo_rmse for t in self.scaling.targets])
            n_desc = sorted({len(self.scaling.best(t).relation.descriptors) for t in self.scaling.targets})
            rows.append({"model": "automatic scaling relations", "descriptors": max(n_desc),
                         "uses": "per adsorbate its own best 1 or 2 other adsorbates (see auto_scaling)",
                         "rmse": float(np.sqrt(np.mean(ins**2))), "out_of_sample_rmse": float(np.sqrt(np.mean(loo**2)))})
        frame = pd.DataFrame(rows, columns=list(COMPARISON_COLUMNS))
        frame.attrs.update({"quantity": "linear models of the adsorption-energy matrix compared", "columns": COMPARISON_COLUMNS,
                            "note": "PCA rmse is the in-sample optimum for k linear descriptors (Eckart-Young); energy sets and scaling "
                                    "relations use measurable adsorption energies instead"})
        return frame

    def summary(self, target_rmse: float = 0.1) -> str:
        """One paragraph: components needed for ``target_rmse`` eV, variance of the first two, stand-ins."""
        ev = self.explained_variance()
        k = self.components_for_error(target_rmse)
        st = self.stand_ins(2)
        parts = [f"{len(self.surfaces)} surfaces x {len(self.species)} adsorbates ({int(self.missing.sum())} imputed entries)",
                 f"{k} component(s) reproduce the computed energies within {target_rmse:g} eV RMSE",
                 "PC1 explains {:.1%}".format(ev["explained_variance_ratio"].iloc[0])]
        if len(ev) > 1:
            parts.append("PC2 {:.1%}".format(ev["explained_variance_ratio"].iloc[1]))
        parts.append("stand-ins: " + ", ".join(f"PC{r.component} ~ {r.adsorbate} (r = {r.correlation:+.2f})" for r in st.itertuples()))
        return "; ".join(parts) + "."

    def _repr_html_(self) -> str:
        return f"<p><b>Descriptor analysis</b> of {self.source}: {self.summary()}</p>" + self.explained_variance().head(6).round(3).to_html(index=False)


def _sign_fix(vt: np.ndarray, u: np.ndarray):
    s = np.sign(vt.sum(axis=1))
    zero = s == 0
    if zero.any():
        s[zero] = np.sign(vt[zero, np.argmax(np.abs(vt[zero]), axis=1)])
    s[s == 0] = 1.0
    return vt * s[:, None], u * s[None, :]


def analyse_descriptors(
    energies,
    species: Iterable[str] | None = None,
    surfaces: Iterable[str] | None = None,
    imputation_rank: int | None = None,
    standardize: bool = False,
    greedy_steps: int = 4,
    scaling: bool = True,
    cv_folds: int = 5,
    seed: int = 0,
    min_fraction: float = 0.5,
    cross_validate: bool = True,
) -> DescriptorAnalysis:
    """PCA of the surfaces x adsorbates matrix, with missing entries imputed (see the module docstring).

    Parameters
    ----------
    energies : EnergyTable, DataFrame or path
        Adsorption free energies (eV).
    species, surfaces : list of str, optional
        Adsorbates (columns) and surfaces (rows) to use (default all).
    imputation_rank : int, optional
        Rank for imputing missing entries (default: chosen by :func:`imputation_cv`).
    standardize : bool
        Divide each centred column by its standard deviation (dimensionless PCA). Default False:
        all columns are in eV.
    greedy_steps : int
        How many adsorption energies the greedy descriptor set chooses (for the comparison).
    scaling : bool
        Also fit :func:`ecatlab.scaling.auto_scaling` (for :meth:`DescriptorAnalysis.comparison`).
    cv_folds, seed : int
        Cross-validation of the imputation (folds, random seed).
    min_fraction : float
        Adsorbates computed on fewer than this fraction of the surfaces are left out (warned).
    cross_validate : bool
        Run :func:`imputation_cv` on a complete matrix too (the ``cv_rmse`` column and the PCA
        out-of-sample errors of :meth:`DescriptorAnalysis.comparison`); with missing entries it
        always runs unless ``imputation_rank`` is given.

    Returns
    -------
    DescriptorAnalysis

    Raises
    ------
    DescriptorError
        Fewer than 3 surfaces or 2 adsorbates with enough data.
    """
    from ecatlab.energies import EnergyTable, read_energies

    table = energies if isinstance(energies, EnergyTable) else read_energies(energies)
    cols = table.species if species is None else [str(s) for s in species]
    from ecatlab.notation import Species

    cols = [Species.parse(c).key for c in cols]
    unknown = [c for c in cols if c not in table.species]
    if unknown:
        raise DescriptorError(f"{table.source}: no energies of {', '.join(unknown)}; species in the table: {', '.join(table.species)}")
    rows = table.surfaces if surfaces is None else list(surfaces)
    bad = [s for s in rows if s not in set(table.surfaces)]
    if bad:
        raise DescriptorError(f"{table.source}: unknown surface(s) {bad}; known: {table.surfaces}")
    x = table.values(rows, cols)
    frac = np.isfinite(x).mean(axis=0)
    drop = [c for c, f in zip(cols, frac) if f < min_fraction]
    if drop:
        warnings.warn(f"descriptor analysis of {table.source}: adsorbates computed on fewer than {min_fraction:.0%} of the surfaces are left out: "
                      f"{', '.join(drop)}", MissingDataWarning, stacklevel=2)
        keep = frac >= min_fraction
        cols = [c for c, k in zip(cols, keep) if k]
        x = x[:, keep]
    if x.shape[0] < 3 or x.shape[1] < 2:
        raise DescriptorError(f"{table.source}: a descriptor analysis needs at least 3 surfaces and 2 adsorbates with data, got "
                              f"{x.shape[0]} x {x.shape[1]}")
    missing = ~np.isfinite(x)
    cv = None
    iterations = 0
    rank_used = None
    if missing.any():
        if imputation_rank is None or cross_validate:
            cv = imputation_cv(x, folds=cv_folds, seed=seed)
        rank_used = int(cv.loc[cv["cv_rmse"].idxmin(), "rank"]) if imputation_rank is None else int(imputation_rank)
        x, iterations, ok = impute_low_rank(x, rank_used)
        if not ok:
            warnings.warn(f"low-rank imputation of {table.source} did not converge in {iterations} iterations", MissingDataWarning, stacklevel=2)
    elif cross_validate:
        cv = imputation_cv(x, folds=cv_folds, seed=seed)
    mean = x.mean(axis=0)
    xc = x - mean
    if standardize:
        sd = xc.std(axis=0, ddof=1)
        if np.any(sd == 0):
            raise DescriptorError("an adsorbate has the same energy on every surface; it cannot be standardized (use standardize=False)")
        xc = xc / sd
    u, s, vt = _svd(xc)
    vt, u = _sign_fix(vt, u)
    scores = u * s
    greedy = greedy_descriptor_set(x, cols, greedy_steps)
    auto = None
    if scaling:
        from ecatlab.scaling import auto_scaling

        with warnings.catch_warnings():
            warnings.simplefilter("ignore", MissingDataWarning)
            auto = auto_scaling(table.subset(rows) if surfaces is not None else table, targets=cols, candidates=cols)
    if standardize:
        # report reconstructions in eV: undo the scaling of the loadings' space
        scores_ev, load_ev = scores, vt * sd
    else:
        scores_ev, load_ev = scores, vt
    return DescriptorAnalysis(tuple(rows), tuple(cols), x, missing, mean, s, load_ev, scores_ev, rank_used, iterations, cv, greedy, auto, table.source)


# ------------------------------------------------------------------------------------------------
# report section
# ------------------------------------------------------------------------------------------------
def descriptor_section(energies, target_rmse: float = 0.1, style: str = "double", **kwargs):
    """A report section (:class:`ecatlab.report.ReportSection`): scree plot, biplot, explained
    variance, stand-ins and the model comparison of :func:`analyse_descriptors` on ``energies``."""
    import html as _html

    from ecatlab.plotting.descriptors import plot_biplot, plot_scree
    from ecatlab.report import ReportSection, _svg_figure
    from ecatlab.tables import to_html

    an = analyse_descriptors(energies, **kwargs)
    ev = an.explained_variance().round(4)
    ev.attrs["caption"] = (f"Principal components of the adsorption-energy matrix of {an.source} (eV; centred, not scaled). "
                           "cv_rmse: error on computed entries hidden and imputed at that rank.")
    st = an.stand_ins(min(4, an.n_components))
    st.attrs["caption"] = "Which single adsorption energy stands in for each component (correlation with its scores)."
    cmp_ = an.comparison().round(4)
    cmp_.attrs["caption"] = "Linear models of the whole matrix: PCA (optimal in-sample), chosen adsorption energies, and automatic scaling relations (eV)."
    imputed = (f" The {int(an.missing.sum())} missing entries were imputed by iterative rank-{an.imputation_rank} SVD (rank chosen by "
               "cross-validation)." if an.missing.any() else "")
    intro = f"<p>{_html.escape(an.summary(target_rmse))}{imputed} Theoretical estimates.</p>"
    scree = _svg_figure(plot_scree(an, target_rmse=target_rmse, style=style), "descriptors-scree", "Scree plot: explained variance and reconstruction error per component.", size="medium")
    parts = [intro, scree]
    if an.n_components >= 2:
        parts.append(_svg_figure(plot_biplot(an, style=style), "descriptors-biplot", "Biplot: surfaces (scores, eV) and adsorbates (loadings) on PC1 and PC2.", size="medium"))
    parts += [to_html(ev), to_html(st), to_html(cmp_)]
    return ReportSection("Descriptors: principal components of the adsorption energies", "".join(parts), "descriptors")
