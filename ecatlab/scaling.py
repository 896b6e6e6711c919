r"""Linear scaling relations between adsorption free energies.

A scaling relation ties the adsorption free energy of a target adsorbate to one or two
descriptor adsorbates across surfaces:

.. math::

    \Delta G(X^*) = \sum_k a_k\,\Delta G(D_k^*) + b \qquad [\mathrm{eV}]

Fits are ordinary least squares over the surfaces of an energy table that have the target and
every descriptor. With ``p`` free parameters (free slopes + intercept) and ``n`` surfaces:

.. math::

    \hat\beta = (X^\top X)^{-1} X^\top y, \qquad r = y - X\hat\beta, \qquad
    s^2 = \frac{r^\top r}{n - p}, \qquad \mathrm{Cov}(\hat\beta) = s^2 (X^\top X)^{-1}

* ``r_squared`` :math:`= 1 - r^\top r / \sum (y - \bar y)^2` (can be negative for a fixed slope
  that does not suit the data);
* ``rmse`` :math:`= \sqrt{r^\top r / n}` (root-mean-square residual, eV);
* ``residual_std_error`` :math:`= s` (eV); standard errors are the square roots of the diagonal
  of :math:`\mathrm{Cov}(\hat\beta)` — the same formulas as ``scipy.stats.linregress``
  (``stderr``, ``intercept_stderr``) for one descriptor.

A slope can be fixed instead of fitted, e.g. from bond counting: for an adsorbate
:math:`AH_x^*` against :math:`A^*` the slope is :math:`(x_\max - x)/x_\max` with :math:`x_\max` the
number of bonds A needs (C 4, N 3, O 2, S 2), so 1/2 for OH* vs O* (Abild-Pedersen et al., Phys.
Rev. Lett. 99, 016105 (2007)); see :func:`bond_counting_slope`. A fixed slope removes one free
parameter; its standard error is reported as 0 (not estimated).

Descriptors may be linear combinations of adsorbates (``"O* - OH*"``), see :class:`Descriptor`.

:func:`auto_scaling` finds, for every adsorbate, the best one- or two-descriptor model by exact
leave-one-out error (bond-counting slopes as the prior), and :func:`fill_missing_energies` fills
missing energies from those models into a new table, every estimate flagged (``status``,
``estimate_error``, a note and an :class:`~ecatlab.errors.EstimatedValueWarning`) with a provenance
table; see ``docs/descriptors_and_pourbaix.md``.

This module is pure computation (no plotting, no files).
"""

from __future__ import annotations

import math
import re
import warnings
from dataclasses import dataclass, field
from typing import Iterable, Mapping, Sequence

import numpy as np
import pandas as pd

from ecatlab.energies import EnergyTable, read_energies
from ecatlab.errors import MissingDataWarning, NotationError, ScalingError
from ecatlab.notation import Species

__all__ = [
    "Descriptor",
    "ScalingRelation",
    "fit_scaling",
    "fit_scaling_relations",
    "scaling_table",
    "residual_table",
    "bond_counting_slope",
    "BOND_COUNTING_VALENCE",
    "SCALING_TABLE_COLUMNS",
    "ScalingModel",
    "AutoScaling",
    "auto_scaling",
    "fill_missing_energies",
    "estimated_species_column",
    "AUTO_SCALING_COLUMNS",
    "PROVENANCE_COLUMNS",
]

#: Bonds the central atom needs to be saturated, used by :func:`bond_counting_slope`
#: (Abild-Pedersen et al., Phys. Rev. Lett. 99, 016105 (2007)).
BOND_COUNTING_VALENCE: dict[str, int] = {"C": 4, "N": 3, "O": 2, "S": 2}

#: Columns of :func:`scaling_table` (units in brackets).
SCALING_TABLE_COLUMNS: dict[str, str] = {
    "target": "adsorbate whose dG is predicted",
    "descriptors": "descriptor adsorbate(s), comma separated",
    "equation": "the relation as text [eV]",
    "slope_1": "slope on the first descriptor [-]",
    "slope_1_stderr": "standard error of slope_1 (0 if fixed) [-]",
    "slope_2": "slope on the second descriptor (NaN for one-descriptor relations) [-]",
    "slope_2_stderr": "standard error of slope_2 [-]",
    "intercept": "intercept b [eV]",
    "intercept_stderr": "standard error of b [eV]",
    "fixed_slopes": "descriptors whose slope was fixed, not fitted",
    "n_surfaces": "surfaces in the fit [-]",
    "r_squared": "coefficient of determination [-]",
    "rmse": "root-mean-square residual sqrt(sum r^2 / n) [eV]",
    "residual_std_error": "s = sqrt(sum r^2 / (n - p)) [eV]",
    "max_abs_residual": "largest |residual| [eV]",
    "source": "fitted to which table, or where a given relation comes from",
}


# ------------------------------------------------------------------------------------------------
# descriptors
# ------------------------------------------------------------------------------------------------
_TERM = re.compile(r"\s*([+-])?\s*(\d+(?:\.\d*)?|\.\d+)?\s*(?:\*\s+)?([A-Za-z][A-Za-z0-9()]*\*)")


@dataclass(frozen=True)
class Descriptor:
    """A descriptor: one adsorbate or a linear combination of adsorbates, value in eV.

    ``D = sum_k w_k dG(X_k*)``. Written as text such as ``"OH*"``, ``"O* - OH*"`` or
    ``"2 OH* - O*"`` (coefficients before the species, separated by a space).

    Attributes
    ----------
    terms : tuple of (str, float)
        (adsorbate key, weight) pairs.
    """

    terms: tuple[tuple[str, float], ...]

    @classmethod
    def parse(cls, text: "str | Descriptor") -> "Descriptor":
        """Read ``"OH*"``, ``"O* - OH*"``, ``"0.5 O* + OH*"``..."""
        if isinstance(text, Descriptor):
            return text
        raw = str(text).strip()
        if not raw:
            raise NotationError(str(text), "empty descriptor; give an adsorbate such as 'OH*' or a combination such as 'O* - OH*'")
        pos, weights = 0, {}
        while pos < len(raw):
            m = _TERM.match(raw, pos)
            if m is None or (pos > 0 and m.group(1) is None):
                raise NotationError(
                    raw,
                    "a descriptor is an adsorbate ('OH*') or a sum of adsorbates with optional coefficients "
                    "('O* - OH*', '2 OH* - O*'); every species must end in '*'",
                )
            sign = -1.0 if m.group(1) == "-" else 1.0
            coef = float(m.group(2)) if m.group(2) else 1.0
            key = Species.parse(m.group(3)).key
            weights[key] = weights.get(key, 0.0) + sign * coef
            pos = m.end()
        terms = tuple((k, w) for k, w in weights.items() if w != 0.0)
        if not terms:
            raise NotationError(raw, "the terms cancel; the descriptor is identically zero")
        return cls(terms)

    @property
    def species(self) -> tuple[str, ...]:
        return tuple(k for k, _ in self.terms)

    @property
    def is_single(self) -> bool:
        return len(self.terms) == 1 and self.terms[0][1] == 1.0

    @property
    def text(self) -> str:
        """Canonical text, e.g. ``"O* - OH*"``."""
        out = ""
        for i, (k, w) in enumerate(self.terms):
            sign = "-" if w < 0 else "+"
            mag = abs(w)
            coef = "" if mag == 1.0 else f"{mag:g} "
            if i == 0:
                out += ("-" if w < 0 else "") + coef + k
            else:
                out += f" {sign} {coef}{k}"
        return out

    def label(self) -> str:
        """Axis label in mathtext, e.g. ``ΔG(O*) − ΔG(OH*) / eV`` without the unit."""
        parts = []
        for i, (k, w) in enumerate(self.terms):
            mag = abs(w)
            coef = "" if mag == 1.0 else f"{mag:g}"
            term = f"{coef}ΔG({Species.parse(k).latex()})"
            if i == 0:
                parts.append(("−" if w < 0 else "") + term)
            else:
                parts.append(("− " if w < 0 else "+ ") + term)
        return " ".join(parts)

    def weights(self, keys: Sequence[str]) -> np.ndarray:
        """Weight vector over ``keys`` (0 where a key is not in the descriptor)."""
        d = dict(self.terms)
        return np.array([d.get(k, 0.0) for k in keys], dtype=float)

    def evaluate(self, energies) -> pd.Series:
        """Descriptor value per surface (eV); NaN where a surface lacks one of the species."""
        table = _as_table(energies)
        values = table.values(table.surfaces, self.species)
        return pd.Series(values @ np.array([w for _, w in self.terms]), index=pd.Index(table.surfaces, name="surface"), name=self.text)

    def __str__(self) -> str:
        return self.text


# ------------------------------------------------------------------------------------------------
# relation value object
# ------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class ScalingRelation:
    r"""One scaling relation :math:`\Delta G(\mathrm{target}) = \sum_k a_k \Delta G(D_k) + b` (eV).

    Attributes
    ----------
    target : str
        Adsorbate key predicted by the relation.
    descriptors : tuple of str
        Descriptor adsorbate keys (0, 1 or 2; zero means a constant value ``b``).
    slopes : tuple of float
        :math:`a_k`, dimensionless.
    intercept : float
        :math:`b` in eV.
    fixed : tuple of bool
        Per descriptor: slope fixed (not fitted).
    source : str
        Where the relation comes from (fitted table, or the literature for a given relation).
    n_surfaces : int
        Surfaces in the fit (0 for a given relation).
    r_squared, rmse, residual_std_error : float or None
        Fit statistics (None for a given relation); rmse and residual_std_error in eV.
    slope_stderr : tuple of float or None
        Standard errors of the slopes (0 for fixed slopes).
    intercept_stderr : float or None
        Standard error of the intercept, eV.
    residuals : tuple of (str, float)
        (surface, dG_computed - dG_predicted in eV) for every surface in the fit.
    """

    target: str
    descriptors: tuple[str, ...]
    slopes: tuple[float, ...]
    intercept: float
    fixed: tuple[bool, ...] = ()
    source: str = "given"
    n_surfaces: int = 0
    r_squared: float | None = None
    rmse: float | None = None
    residual_std_error: float | None = None
    slope_stderr: tuple[float, ...] | None = None
    intercept_stderr: float | None = None
    residuals: tuple[tuple[str, float], ...] = field(default=(), repr=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "target", Species.parse(self.target).key)
        object.__setattr__(self, "descriptors", tuple(Species.parse(d).key for d in self.descriptors))
        object.__setattr__(self, "slopes", tuple(float(s) for s in self.slopes))
        if not self.fixed:
            object.__setattr__(self, "fixed", tuple(False for _ in self.descriptors))
        if len(self.slopes) != len(self.descriptors) or len(self.fixed) != len(self.descriptors):
            raise ScalingError(f"relation for {self.target}: give one slope per descriptor ({len(self.descriptors)} descriptors, {len(self.slopes)} slopes)")
        if len(set(self.descriptors)) != len(self.descriptors):
            raise ScalingError(f"relation for {self.target}: descriptors repeat ({', '.join(self.descriptors)})")
        if self.target in self.descriptors:
            raise ScalingError(f"relation for {self.target}: the target cannot be its own descriptor")
        if not all(math.isfinite(v) for v in self.slopes + (float(self.intercept),)):
            raise ScalingError(f"relation for {self.target}: slopes and intercept must be finite numbers")

    # -- constructors --------------------------------------------------------------------------
    @classmethod
    def given(cls, target: str, descriptors: str | Sequence[str] = (), slopes: float | Sequence[float] = (), intercept: float = 0.0, source: str = "given by the user") -> "ScalingRelation":
        """A relation with known parameters (no fit), e.g. ``given("OOH*", "OH*", 1.0, 3.2, source=...)``."""
        descs = (descriptors,) if isinstance(descriptors, str) else tuple(descriptors)
        sl = (slopes,) if np.ndim(slopes) == 0 and not isinstance(slopes, (tuple, list)) else tuple(slopes)
        return cls(target, descs, tuple(float(s) for s in sl), float(intercept), tuple(True for _ in descs), source)

    # -- use -----------------------------------------------------------------------------------
    @property
    def is_fitted(self) -> bool:
        return self.n_surfaces > 0

    @property
    def equation(self) -> str:
        """Text form, e.g. ``"G(OOH*) = 1.000 G(OH*) + 3.200 eV"``."""
        rhs = " ".join(f"{'+' if i and a >= 0 else ('-' if a < 0 else '')}{' ' if i else ''}{abs(a):.3f} G({d})" for i, (a, d) in enumerate(zip(self.slopes, self.descriptors)))
        b = self.intercept
        if rhs:
            rhs += f" {'+' if b >= 0 else '-'} {abs(b):.3f} eV"
        else:
            rhs = f"{b:.3f} eV"
        return f"G({self.target}) = {rhs}"

    def predict(self, values) -> np.ndarray:
        """Predicted dG(target) in eV.

        Parameters
        ----------
        values : Mapping descriptor -> array, or array (..., n_descriptors)
        """
        if isinstance(values, Mapping):
            missing = [d for d in self.descriptors if d not in values]
            if missing:
                raise ScalingError(f"relation for {self.target} needs values of {', '.join(missing)}")
            arr = np.stack([np.asarray(values[d], dtype=float) for d in self.descriptors], axis=-1) if self.descriptors else np.zeros((1, 0))
        else:
            arr = np.asarray(values, dtype=float)
        return arr @ np.asarray(self.slopes) + self.intercept

    def residual_frame(self) -> pd.DataFrame:
        """Residuals per surface (eV), columns ``surface``, ``residual``."""
        return pd.DataFrame(list(self.residuals), columns=["surface", "residual"])

    def to_dict(self) -> dict:
        """Plain-data form (JSON-safe) with a schema version; round-trips via :meth:`from_dict`."""
        return {
            "schema": "ecatlab.scaling/1",
            "target": self.target,
            "descriptors": list(self.descriptors),
            "slopes": list(self.slopes),
            "intercept": self.intercept,
            "fixed": list(self.fixed),
            "source": self.source,
            "n_surfaces": self.n_surfaces,
            "r_squared": self.r_squared,
            "rmse": self.rmse,
            "residual_std_error": self.residual_std_error,
            "slope_stderr": None if self.slope_stderr is None else list(self.slope_stderr),
            "intercept_stderr": self.intercept_stderr,
            "residuals": [[s, r] for s, r in self.residuals],
        }

    @classmethod
    def from_dict(cls, data: Mapping) -> "ScalingRelation":
        if data.get("schema") != "ecatlab.scaling/1":
            raise ScalingError(f"unknown scaling-relation schema {data.get('schema')!r}; expected 'ecatlab.scaling/1'")
        try:
            return cls(
                target=data["target"],
                descriptors=tuple(data.get("descriptors", ())),
                slopes=tuple(data.get("slopes", ())),
                intercept=float(data["intercept"]),
                fixed=tuple(bool(f) for f in data.get("fixed", ())),
                source=str(data.get("source", "given")),
                n_surfaces=int(data.get("n_surfaces", 0)),
                r_squared=data.get("r_squared"),
                rmse=data.get("rmse"),
                residual_std_error=data.get("residual_std_error"),
                slope_stderr=None if data.get("slope_stderr") is None else tuple(data["slope_stderr"]),
                intercept_stderr=data.get("intercept_stderr"),
                residuals=tuple((str(s), float(r)) for s, r in data.get("residuals", ())),
            )
        except KeyError as exc:
            raise ScalingError(f"scaling relation data lacks the field {exc.args[0]!r}") from None

    def __str__(self) -> str:
        stats = f" (R² = {self.r_squared:.3f}, RMSE = {self.rmse:.3f} eV, n = {self.n_surfaces})" if self.is_fitted and self.r_squared is not None else f" ({self.source})"
        return self.equation + stats


# ------------------------------------------------------------------------------------------------
# fitting
# ------------------------------------------------------------------------------------------------
def _as_table(energies) -> EnergyTable:
    if isinstance(energies, EnergyTable):
        return energies
    return read_energies(energies)


def _slope_spec(slope, n: int, target: str) -> list[float | None]:
    if slope is None:
        return [None] * n
    if np.ndim(slope) == 0 and not isinstance(slope, (list, tuple)):
        if n != 1:
            raise ScalingError(f"fit for {target}: one fixed slope given for {n} descriptors; give a list with None for the free ones")
        return [float(slope)]
    spec = [None if s is None else float(s) for s in slope]
    if len(spec) != n:
        raise ScalingError(f"fit for {target}: {len(spec)} slopes given for {n} descriptors")
    return spec


def fit_scaling(
    energies,
    target: str,
    descriptors: str | Sequence[str],
    slope: float | Sequence[float | None] | None = None,
    surfaces: Iterable[str] | None = None,
) -> ScalingRelation:
    r"""Fit :math:`\Delta G(\mathrm{target}) = \sum_k a_k \Delta G(D_k) + b` by least squares.

    Parameters
    ----------
    energies : EnergyTable, DataFrame or path
        Adsorption free energies (eV).
    target : str
        Adsorbate to predict, e.g. ``"OOH*"``.
    descriptors : str or list of str
        One or two descriptor adsorbates, e.g. ``"OH*"`` or ``["CO*", "OH*"]`` (an empty list fits
        a constant, the mean).
    slope : float or list, optional
        Fixed slope(s); in a list, ``None`` marks a slope to fit. E.g. ``slope=0.5`` for OH* vs O*
        from bond counting (see :func:`bond_counting_slope`).
    surfaces : list of str, optional
        Surfaces to use (default: all that have the target and every descriptor).

    Returns
    -------
    ScalingRelation
        With slopes, intercept (eV), standard errors, R², RMSE (eV), residuals per surface.

    Raises
    ------
    ScalingError
        Fewer usable surfaces than free parameters + 1, unknown species, or a descriptor without
        spread (slope undefined).

    Warns
    -----
    MissingDataWarning
        Naming surfaces left out because they lack the target or a descriptor.
    """
    table = _as_table(energies)
    tkey = Species.parse(target).key
    descs = (descriptors,) if isinstance(descriptors, str) else tuple(descriptors)
    dkeys = tuple(Species.parse(d).key for d in descs)
    if len(dkeys) > 2:
        raise ScalingError(f"fit for {tkey}: at most two descriptors are supported, got {', '.join(dkeys)}")
    for key in (tkey,) + dkeys:
        if key not in table.species:
            raise ScalingError(f"{table.source}: no energies of {key}; species in the table: {', '.join(table.species)}")
    spec = _slope_spec(slope, len(dkeys), tkey)
    names = table.surfaces if surfaces is None else list(surfaces)
    unknown = [s for s in names if s not in set(table.surfaces)]
    if unknown:
        raise ScalingError(f"{table.source}: unknown surface(s) {unknown}; known: {table.surfaces}")
    values = table.values(names, (tkey,) + dkeys)
    ok = np.all(np.isfinite(values), axis=1)
    if not ok.all():
        left = [s for s, k in zip(names, ok) if not k]
        warnings.warn(f"scaling fit of {tkey} vs {', '.join(dkeys) or 'constant'}: surfaces lacking one of these adsorbates are left out: {', '.join(left)}", MissingDataWarning, stacklevel=2)
    used = [s for s, k in zip(names, ok) if k]
    y = values[ok, 0]
    x = values[ok, 1:]
    free = [j for j, s in enumerate(spec) if s is None]
    p = len(free) + 1
    n = len(y)
    if n < p + 1:
        raise ScalingError(
            f"fit of {tkey} vs {', '.join(dkeys) or 'constant'}: {n} surface(s) with all energies, need at least {p + 1} "
            f"for {p} free parameter(s) and an error estimate; add surfaces or fix a slope"
        )
    y_adj = y.copy()
    for j, s in enumerate(spec):
        if s is not None:
            y_adj = y_adj - s * x[:, j]
    X = np.column_stack([x[:, j] for j in free] + [np.ones(n)])
    xtx = X.T @ X
    if np.linalg.cond(xtx) > 1e12:
        raise ScalingError(
            f"fit of {tkey} vs {', '.join(dkeys)}: the descriptor values have no spread or are collinear across the {n} surfaces; "
            "the slope is undefined — use more varied surfaces or fix the slope"
        )
    beta, *_ = np.linalg.lstsq(X, y_adj, rcond=None)
    resid = y_adj - X @ beta
    ssr = float(resid @ resid)
    sst = float(((y - y.mean()) ** 2).sum())
    dof = n - p
    s2 = ssr / dof
    cov = s2 * np.linalg.inv(xtx)
    se = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    slopes, slope_se = [], []
    it = iter(range(len(free)))
    for j in range(len(dkeys)):
        if spec[j] is None:
            k = next(it)
            slopes.append(float(beta[k]))
            slope_se.append(float(se[k]))
        else:
            slopes.append(spec[j])
            slope_se.append(0.0)
    return ScalingRelation(
        target=tkey,
        descriptors=dkeys,
        slopes=tuple(slopes),
        intercept=float(beta[-1]),
        fixed=tuple(s is not None for s in spec),
        source=f"least-squares fit to {table.source}",
        n_surfaces=n,
        r_squared=(1.0 - ssr / sst) if sst > 0 else float("nan"),
        rmse=math.sqrt(ssr / n),
        residual_std_error=math.sqrt(s2),
        slope_stderr=tuple(slope_se),
        intercept_stderr=float(se[-1]),
        residuals=tuple((s, float(r)) for s, r in zip(used, resid)),
    )


def fit_scaling_relations(
    energies,
    targets: Iterable[str],
    descriptors: str | Sequence[str],
    fixed_slopes: Mapping[str, float | Sequence[float | None]] | None = None,
    surfaces: Iterable[str] | None = None,
) -> list[ScalingRelation]:
    """Fit every target against the same descriptor(s); ``fixed_slopes`` maps target -> slope(s)."""
    fixed = {Species.parse(k).key: v for k, v in (fixed_slopes or {}).items()}
    descs = (descriptors,) if isinstance(descriptors, str) else tuple(descriptors)
    dkeys = {Species.parse(d).key for d in descs}
    out = []
    for t in targets:
        key = Species.parse(t).key
        if key in dkeys:
            continue
        out.append(fit_scaling(energies, key, descs, fixed.get(key), surfaces))
    return out


def scaling_table(relations: Iterable[ScalingRelation]) -> pd.DataFrame:
    """One row per relation with slopes, intercept, standard errors and fit statistics.

    Columns are documented in :data:`SCALING_TABLE_COLUMNS` (also in ``.attrs["columns"]``).
    """
    rows = []
    for r in relations:
        se = r.slope_stderr or (None, None)
        res = np.array([v for _, v in r.residuals]) if r.residuals else np.array([])
        rows.append(
            {
                "target": r.target,
                "descriptors": ", ".join(r.descriptors),
                "equation": r.equation,
                "slope_1": r.slopes[0] if r.slopes else np.nan,
                "slope_1_stderr": se[0] if r.slope_stderr and len(se) > 0 else np.nan,
                "slope_2": r.slopes[1] if len(r.slopes) > 1 else np.nan,
                "slope_2_stderr": se[1] if r.slope_stderr and len(se) > 1 else np.nan,
                "intercept": r.intercept,
                "intercept_stderr": np.nan if r.intercept_stderr is None else r.intercept_stderr,
                "fixed_slopes": ", ".join(d for d, f in zip(r.descriptors, r.fixed) if f),
                "n_surfaces": r.n_surfaces,
                "r_squared": np.nan if r.r_squared is None else r.r_squared,
                "rmse": np.nan if r.rmse is None else r.rmse,
                "residual_std_error": np.nan if r.residual_std_error is None else r.residual_std_error,
                "max_abs_residual": float(np.abs(res).max()) if res.size else np.nan,
                "source": r.source,
            }
        )
    frame = pd.DataFrame(rows, columns=list(SCALING_TABLE_COLUMNS))
    frame.attrs.update({"quantity": "scaling relations dG(target) = sum a_k dG(D_k) + b", "columns": SCALING_TABLE_COLUMNS, "note": "NaN statistics: given (not fitted) relations"})
    return frame


def residual_table(relations: Iterable[ScalingRelation]) -> pd.DataFrame:
    """Wide table of residuals (eV): index surfaces, one column per relation target."""
    cols = {r.target: pd.Series(dict(r.residuals), dtype=float) for r in relations if r.residuals}
    frame = pd.DataFrame(cols)
    frame.index.name = "surface"
    frame.attrs["quantity"] = "residual dG_computed - dG_predicted [eV]"
    return frame


def bond_counting_slope(target: str, descriptor: str) -> float:
    r"""Slope of :math:`AH_x^*` against :math:`A^*` from bond counting, :math:`(x_\max - x)/x_\max`.

    ``x_max`` is the number of bonds the central atom A needs (C 4, N 3, O 2, S 2); e.g.
    ``bond_counting_slope("OH*", "O*") == 0.5``, ``("CH3*", "C*") == 0.25``, ``("NH2*", "N*") == 1/3``.
    Source: Abild-Pedersen et al., Phys. Rev. Lett. 99, 016105 (2007).

    Raises
    ------
    ScalingError
        If the target is not A plus hydrogens with the descriptor being the bare A.
    """
    t = Species.parse(target)
    d = Species.parse(descriptor)
    de = d.elements
    te = t.elements
    if not (t.is_adsorbate and d.is_adsorbate) or len(de) != 1:
        raise ScalingError(f"bond counting needs a single-atom descriptor such as 'O*' and a target AH_x*, got {target!r} vs {descriptor!r}")
    (atom, count), = de.items()
    if count != 1 or atom not in BOND_COUNTING_VALENCE or set(te) - {atom, "H"} or te.get(atom) != 1:
        raise ScalingError(
            f"bond counting applies to AH_x* vs A* with A in {sorted(BOND_COUNTING_VALENCE)}; {target!r} vs {descriptor!r} does not fit that pattern — fit the slope instead"
        )
    x_max = BOND_COUNTING_VALENCE[atom]
    x = te.get("H", 0.0)
    if x >= x_max:
        raise ScalingError(f"{target!r}: {atom} is saturated by {x:g} H (needs {x_max} bonds); bond counting gives no slope")
    return (x_max - x) / x_max


# ------------------------------------------------------------------------------------------------
# automatic scaling relations: best one- or two-descriptor model per adsorbate, LOO errors,
# missing energies filled and flagged
# ------------------------------------------------------------------------------------------------
#: Columns of :meth:`AutoScaling.table` (units in brackets).
AUTO_SCALING_COLUMNS: dict[str, str] = {
    "target": "adsorbate whose dG is modelled",
    "rank": "1 = the selected model; higher = fall-back models used when a descriptor is missing on a surface [-]",
    "kind": "bond-counting (slope fixed by bond counting, intercept fitted), one-descriptor or two-descriptor (free slopes)",
    "descriptors": "descriptor adsorbate(s), comma separated",
    "equation": "the relation as text [eV]",
    "prior_slope": "bond-counting slope (x_max - x)/x_max of the target vs the descriptor, NaN where bond counting does not apply [-]",
    "n_surfaces": "surfaces with the target and every descriptor computed [-]",
    "n_parameters": "free parameters (fitted slopes + intercept) [-]",
    "rmse": "in-sample root-mean-square residual [eV]",
    "loo_rmse": "leave-one-out root-mean-square prediction error sqrt(mean (r_i/(1-h_ii))^2) [eV]",
    "loo_max_abs": "largest leave-one-out prediction error [eV]",
    "r_squared": "coefficient of determination (in-sample) [-]",
}

#: Columns of the provenance table returned by :func:`fill_missing_energies`.
PROVENANCE_COLUMNS: dict[str, str] = {
    "surface": "surface name",
    "species": "adsorbate key",
    "G": "adsorption free energy [eV]; NaN where neither computed nor estimable",
    "status": "computed (from the input table), estimated (from a scaling relation) or missing (no model could be applied)",
    "model": "equation of the scaling relation used (empty for computed values)",
    "descriptors": "descriptor adsorbates the estimate was made from (their computed values on this surface)",
    "estimate_error": "leave-one-out RMSE of the model: the expected error of the estimate [eV]; 0 for computed values",
    "n_surfaces": "surfaces the model was fitted to [-]",
}

#: A model with more free parameters is chosen only if its leave-one-out RMSE is lower by more
#: than this (eV). Parsimony margin: common practice, no source.
DEFAULT_COMPLEXITY_MARGIN = 0.02


@dataclass(frozen=True)
class ScalingModel:
    """One candidate scaling model of an adsorbate, with its leave-one-out error.

    Attributes
    ----------
    relation : ScalingRelation
        The fitted relation (slopes, intercept, in-sample statistics, residuals).
    kind : str
        ``"bond-counting"``, ``"one-descriptor"`` or ``"two-descriptor"``.
    loo_rmse : float
        Leave-one-out root-mean-square prediction error, eV.
    loo_max_abs : float
        Largest absolute leave-one-out prediction error, eV.
    prior_slope : float or None
        Bond-counting slope for the (target, descriptor) pair, where defined.
    loo_residuals : tuple of (str, float)
        (surface, leave-one-out prediction error in eV).
    """

    relation: ScalingRelation
    kind: str
    loo_rmse: float
    loo_max_abs: float
    prior_slope: float | None = None
    loo_residuals: tuple[tuple[str, float], ...] = field(default=(), repr=False)

    @property
    def n_parameters(self) -> int:
        return sum(1 for f in self.relation.fixed if not f) + 1


def _loo_fit(y: np.ndarray, X: np.ndarray):
    """OLS with exact leave-one-out residuals r_i / (1 - h_ii) (PRESS; Allen, Technometrics 16, 125 (1974)).

    Returns (beta, residuals, loo_residuals); ``X`` includes the intercept column.
    """
    q, r = np.linalg.qr(X)
    beta = np.linalg.solve(r, q.T @ y)
    resid = y - X @ beta
    h = np.einsum("ij,ij->i", q, q)
    loo = resid / np.clip(1.0 - h, 1e-12, None)
    return beta, resid, loo


def _fit_candidate(table: EnergyTable, names: list[str], values: np.ndarray, col: dict, target: str, descs: tuple[str, ...],
                   fixed: tuple[float | None, ...], kind: str, prior: float | None, min_surfaces: int):
    """Fit one candidate on the surfaces that have every needed value; None when too few surfaces."""
    cols = [col[target]] + [col[d] for d in descs]
    sub = values[:, cols]
    ok = np.all(np.isfinite(sub), axis=1)
    free = [j for j, s in enumerate(fixed) if s is None]
    p = len(free) + 1
    n = int(ok.sum())
    if n < max(min_surfaces, p + 2):
        return None
    y = sub[ok, 0].copy()
    x = sub[ok, 1:]
    for j, s in enumerate(fixed):
        if s is not None:
            y = y - s * x[:, j]
    X = np.column_stack([x[:, j] for j in free] + [np.ones(n)])
    if np.linalg.cond(X) > 1e6:
        return None
    beta, resid, loo = _loo_fit(y, X)
    ssr = float(resid @ resid)
    yy = sub[ok, 0]
    sst = float(((yy - yy.mean()) ** 2).sum())
    s2 = ssr / (n - p)
    cov = s2 * np.linalg.inv(X.T @ X)
    se = np.sqrt(np.clip(np.diag(cov), 0.0, None))
    slopes, slope_se, it = [], [], iter(range(len(free)))
    for j in range(len(descs)):
        if fixed[j] is None:
            k = next(it)
            slopes.append(float(beta[k]))
            slope_se.append(float(se[k]))
        else:
            slopes.append(float(fixed[j]))
            slope_se.append(0.0)
    used = [s for s, k in zip(names, ok) if k]
    rel = ScalingRelation(
        target=target, descriptors=descs, slopes=tuple(slopes), intercept=float(beta[-1]), fixed=tuple(s is not None for s in fixed),
        source=f"automatic scaling fit ({kind}) to {table.source}", n_surfaces=n,
        r_squared=(1.0 - ssr / sst) if sst > 0 else float("nan"), rmse=math.sqrt(ssr / n), residual_std_error=math.sqrt(s2),
        slope_stderr=tuple(slope_se), intercept_stderr=float(se[-1]), residuals=tuple((s, float(r)) for s, r in zip(used, resid)),
    )
    return ScalingModel(rel, kind, float(np.sqrt(np.mean(loo**2))), float(np.abs(loo).max()), prior,
                        tuple((s, float(r)) for s, r in zip(used, loo)))


def _prior(target: str, descriptor: str) -> float | None:
    try:
        return bond_counting_slope(target, descriptor)
    except ScalingError:
        return None


def _select(models: list[ScalingModel], margin: float) -> list[ScalingModel]:
    """Order candidates best first: the simplest model (bond-counting prior, then one, then two
    descriptors) whose LOO RMSE is within ``margin`` eV of the lowest; the rest by LOO RMSE."""
    if not models:
        return []
    complexity = {"bond-counting": 0, "one-descriptor": 1, "two-descriptor": 2}
    best = min(m.loo_rmse for m in models)
    eligible = [m for m in models if m.loo_rmse <= best + margin]
    chosen = min(eligible, key=lambda m: (complexity[m.kind], m.loo_rmse))
    rest = sorted((m for m in models if m is not chosen), key=lambda m: (m.loo_rmse, complexity[m.kind]))
    return [chosen] + rest


@dataclass(frozen=True)
class AutoScaling:
    """Automatic scaling relations of every adsorbate of a table (see :func:`auto_scaling`).

    Attributes
    ----------
    models : dict of str to tuple of ScalingModel
        Per target, candidate models best first (the first is the selected one; the others are
        fall-backs for surfaces where a descriptor of a better model is missing).
    source : str
        The energy table the models were fitted to.
    margin : float
        Parsimony margin used in the selection, eV.
    """

    models: Mapping[str, tuple[ScalingModel, ...]]
    source: str
    margin: float = DEFAULT_COMPLEXITY_MARGIN

    @property
    def targets(self) -> list[str]:
        return [t for t, m in self.models.items() if m]

    def best(self, target: str) -> ScalingModel:
        """The selected model of ``target``."""
        key = Species.parse(target).key
        found = self.models.get(key)
        if not found:
            raise ScalingError(f"no scaling model for {key} (too few surfaces, or not in the table {self.source}); modelled: {', '.join(self.targets)}")
        return found[0]

    def relations(self) -> list[ScalingRelation]:
        """The selected relation of every modelled adsorbate."""
        return [m[0].relation for m in self.models.values() if m]

    def table(self, fallbacks: int = 0) -> pd.DataFrame:
        """One row per target (and up to ``fallbacks`` fall-back models); columns in :data:`AUTO_SCALING_COLUMNS`."""
        rows = []
        for target, models in self.models.items():
            for rank, m in enumerate(models[: 1 + fallbacks], start=1):
                r = m.relation
                rows.append({
                    "target": target, "rank": rank, "kind": m.kind, "descriptors": ", ".join(r.descriptors), "equation": r.equation,
                    "prior_slope": np.nan if m.prior_slope is None else m.prior_slope, "n_surfaces": r.n_surfaces,
                    "n_parameters": m.n_parameters, "rmse": r.rmse, "loo_rmse": m.loo_rmse, "loo_max_abs": m.loo_max_abs,
                    "r_squared": r.r_squared,
                })
        frame = pd.DataFrame(rows, columns=list(AUTO_SCALING_COLUMNS))
        frame.attrs.update({"quantity": "automatic scaling relations dG(target) = sum a_k dG(D_k) + b", "columns": AUTO_SCALING_COLUMNS,
                            "source": self.source, "selection": _selection_text(self.margin)})
        return frame

    def mean_loo_rmse(self) -> float:
        """Root mean square over targets of the selected models' LOO RMSE, eV."""
        vals = np.array([m[0].loo_rmse for m in self.models.values() if m])
        return float(np.sqrt(np.mean(vals**2))) if vals.size else float("nan")


def _selection_text(margin: float) -> str:
    return (
        "candidates: every other adsorbate as one descriptor (free slope, and the bond-counting slope of Abild-Pedersen et al., "
        "PRL 99, 016105 (2007) where it applies), and pairs of the best one-descriptor candidates; selected: the simplest "
        f"model whose leave-one-out RMSE is within {margin:g} eV of the lowest (bond-counting < one < two descriptors)"
    )


def auto_scaling(
    energies,
    targets: Iterable[str] | None = None,
    candidates: Iterable[str] | None = None,
    max_descriptors: int = 2,
    margin: float = DEFAULT_COMPLEXITY_MARGIN,
    pair_pool: int = 8,
    min_surfaces: int = 4,
    fallbacks: int | None = None,
) -> AutoScaling:
    r"""The best one- or two-descriptor linear scaling model of every adsorbate, by leave-one-out error.

    Parameters
    ----------
    energies : EnergyTable, DataFrame or path
        Adsorption free energies (eV).
    targets : list of str, optional
        Adsorbates to model (default: every adsorbate of the table).
    candidates : list of str, optional
        Adsorbates allowed as descriptors (default: every adsorbate of the table).
    max_descriptors : {1, 2}
        Largest number of descriptors of one model.
    margin : float
        Parsimony margin, eV: a model with more free parameters must lower the LOO RMSE by more than
        this to be chosen (default 0.02 eV; common practice, no source).
    pair_pool : int
        Two-descriptor models are tried for all pairs of the ``pair_pool`` best one-descriptor candidates.
    min_surfaces : int
        Fewest surfaces a model is fitted on (and at least free parameters + 2).
    fallbacks : int, optional
        Fall-back models kept per target (default: all candidates; used by :func:`fill_missing_energies` where a descriptor of a
        better model is missing on a surface).

    Returns
    -------
    AutoScaling

    Notes
    -----
    Each candidate is an ordinary least-squares fit :math:`\Delta G(X) = \sum_k a_k \Delta G(D_k) + b`
    on the surfaces that have the target and every descriptor (see :func:`fit_scaling`). Its
    leave-one-out (LOO) prediction errors are exact without refitting,
    :math:`e_{(i)} = r_i / (1 - h_{ii})` with :math:`h_{ii}` the diagonal of the hat matrix
    :math:`X (X^\top X)^{-1} X^\top` (PRESS residuals; Allen, Technometrics 16, 125 (1974)).

    The bond-counting slope :math:`(x_\max - x)/x_\max` of :math:`AH_x^*` against :math:`A^*`
    (Abild-Pedersen et al., Phys. Rev. Lett. 99, 016105 (2007)) is the prior: for such pairs a model
    with that slope fixed (one free parameter, the intercept) is a candidate, and it is preferred
    over fitted slopes unless they lower the LOO RMSE by more than ``margin``.
    """
    table = _as_table(energies)
    if max_descriptors not in (1, 2):
        raise ScalingError(f"max_descriptors must be 1 or 2, got {max_descriptors!r}")
    species = table.species
    tkeys = species if targets is None else [Species.parse(t).key for t in targets]
    ckeys = species if candidates is None else [Species.parse(c).key for c in candidates]
    unknown = [k for k in list(tkeys) + list(ckeys) if k not in species]
    if unknown:
        raise ScalingError(f"{table.source}: no energies of {', '.join(dict.fromkeys(unknown))}; species in the table: {', '.join(species)}")
    names = table.surfaces
    values = table.values(names, species)
    col = {k: j for j, k in enumerate(species)}
    out: dict[str, tuple[ScalingModel, ...]] = {}
    for target in tkeys:
        models: list[ScalingModel] = []
        singles: list[ScalingModel] = []
        for d in ckeys:
            if d == target:
                continue
            m = _fit_candidate(table, names, values, col, target, (d,), (None,), "one-descriptor", None, min_surfaces)
            if m is not None:
                singles.append(m)
            prior = _prior(target, d)
            if prior is not None:
                mp = _fit_candidate(table, names, values, col, target, (d,), (prior,), "bond-counting", prior, min_surfaces)
                if mp is not None:
                    models.append(mp)
        models += singles
        if max_descriptors == 2 and len(singles) >= 2:
            pool = [m.relation.descriptors[0] for m in sorted(singles, key=lambda m: m.loo_rmse)[:pair_pool]]
            for i in range(len(pool)):
                for j in range(i + 1, len(pool)):
                    m = _fit_candidate(table, names, values, col, target, (pool[i], pool[j]), (None, None), "two-descriptor", None, min_surfaces)
                    if m is not None:
                        models.append(m)
        ordered = _select(models, margin)
        out[target] = tuple(ordered if fallbacks is None else ordered[: 1 + fallbacks])
    return AutoScaling(out, table.source, margin)


def fill_missing_energies(energies, auto: AutoScaling | None = None, **auto_kwargs) -> tuple[EnergyTable, pd.DataFrame]:
    """Fill missing adsorption energies from automatic scaling relations, flagged as estimated.

    Parameters
    ----------
    energies : EnergyTable, DataFrame or path
        Adsorption free energies (eV) with gaps (a surface lacking an adsorbate).
    auto : AutoScaling, optional
        Models to use (default: :func:`auto_scaling` on ``energies`` with ``auto_kwargs``).

    Returns
    -------
    (EnergyTable, DataFrame)
        The new table: every computed value unchanged, plus one row per estimated value, whose
        ``G_origin`` is ``"estimated from scaling relation"`` and whose extra columns ``status``,
        ``estimate_error`` (LOO RMSE of the model, eV) and ``estimate_model`` say how; its ``notes``
        name the count and the models. And the provenance table, one row per (surface, adsorbate),
        columns documented in :data:`PROVENANCE_COLUMNS`.

    Notes
    -----
    Estimates use only *computed* descriptor values (never other estimates). Per missing cell the
    selected model of the adsorbate is used; where one of its descriptors is missing too, the next
    fall-back model whose descriptors are all computed on that surface. Cells no model can reach
    stay missing (status ``missing``). An :class:`~ecatlab.errors.EstimatedValueWarning` says how
    many values were estimated: estimates are never silent.
    """
    from ecatlab.energies import read_energies as _read
    from ecatlab.errors import EstimatedValueWarning

    table = _as_table(energies)
    auto = auto or auto_scaling(table, **auto_kwargs)
    names, species = table.surfaces, table.species
    values = table.values(names, species)
    col = {k: j for j, k in enumerate(species)}
    filled = values.copy()
    n_s, n_k = values.shape
    status = np.where(np.isfinite(values), "computed", "missing").astype(object)
    model_txt = np.full((n_s, n_k), "", dtype=object)
    desc_txt = np.full((n_s, n_k), "", dtype=object)
    err = np.where(np.isfinite(values), 0.0, np.nan)
    nsurf = np.zeros((n_s, n_k), dtype=np.int64)
    for target, models in auto.models.items():
        j = col[target]
        todo = ~np.isfinite(values[:, j])
        for m in models:
            if not todo.any():
                break
            r = m.relation
            dcols = [col[d] for d in r.descriptors]
            x = values[:, dcols]
            can = todo & np.all(np.isfinite(x), axis=1)
            if not can.any():
                continue
            filled[can, j] = r.predict(x[can])
            status[can, j] = "estimated"
            model_txt[can, j] = r.equation
            desc_txt[can, j] = ", ".join(r.descriptors)
            err[can, j] = m.loo_rmse
            nsurf[can, j] = r.n_surfaces
            todo &= ~can
    surf_idx, sp_idx = np.meshgrid(np.arange(n_s), np.arange(n_k), indexing="ij")
    prov = pd.DataFrame({
        "surface": np.asarray(names, dtype=object)[surf_idx.ravel()],
        "species": np.asarray(species, dtype=object)[sp_idx.ravel()],
        "G": filled.ravel(), "status": status.ravel(), "model": model_txt.ravel(), "descriptors": desc_txt.ravel(),
        "estimate_error": err.ravel(), "n_surfaces": nsurf.ravel(),
    })
    prov.attrs.update({"quantity": "provenance of every adsorption energy", "columns": PROVENANCE_COLUMNS, "source": table.source,
                       "selection": _selection_text(auto.margin)})
    est = prov["status"].to_numpy() == "estimated"
    n_est = int(est.sum())
    keep = prov["status"].to_numpy() != "missing"
    long = prov.loc[keep, ["surface", "species", "G"]].copy()
    long["status"] = prov.loc[keep, "status"].to_numpy()
    long["estimate_error"] = prov.loc[keep, "estimate_error"].to_numpy()
    long["estimate_model"] = prov.loc[keep, "model"].to_numpy()
    new = _read(long.reset_index(drop=True), references=table.scheme, name=f"{table.source} + scaling estimates")
    origin = table.frame.set_index(["surface", "species"])["G_origin"].astype(str)
    keys = list(zip(new.frame["surface"].astype(str), new.frame["species"].astype(str)))
    orig = origin.reindex(pd.MultiIndex.from_tuples(keys)).to_numpy(dtype=object)
    is_est = new.frame["status"].to_numpy() == "estimated"
    orig[is_est] = "estimated from scaling relation"
    frame = new.frame.copy()
    frame["G_origin"] = pd.Categorical(orig)
    if n_est:
        per = prov[est].groupby("species")["estimate_error"].first()
        text = ", ".join(f"{k} ({int((prov[est]['species'] == k).sum())}, ±{v:.2f} eV)" for k, v in per.items())
        note = (f"{n_est} missing adsorption energies ESTIMATED from automatic scaling relations (LOO RMSE as the error): {text}; "
                "see the provenance table; results using them are estimates of estimates")
        warnings.warn(f"{table.source}: {note}", EstimatedValueWarning, stacklevel=2)
    else:
        note = "no missing adsorption energies were estimated"
    still = int((prov["status"] == "missing").sum())
    notes = tuple(table.notes) + (note,) + ((f"{still} adsorption energies remain missing (no model with computed descriptors)",) if still else ())
    return EnergyTable(frame, table.scheme, new.source, notes), prov


def estimated_species_column(limiting: pd.DataFrame, provenance: pd.DataFrame) -> pd.DataFrame:
    """A copy of a limiting-potential table with a column ``estimated_species``: the adsorbates of
    each (surface, pathway) whose energies were estimated (see :func:`fill_missing_energies`).

    The column is empty where every adsorbate the pathway needs was computed.
    """
    from ecatlab.pathways import resolve

    est = provenance[provenance["status"] == "estimated"]
    by_surface: dict[str, set] = {}
    for s, k in zip(est["surface"], est["species"]):
        by_surface.setdefault(str(s), set()).add(str(k))
    needs = {p: {a.key for a in resolve(p).adsorbates} for p in limiting["pathway"].astype(str).unique()}
    out = limiting.copy()
    out["estimated_species"] = [
        ", ".join(sorted(by_surface.get(str(s), set()) & needs[str(p)])) for s, p in zip(limiting["surface"], limiting["pathway"])
    ]
    cols = dict(out.attrs.get("columns", {}))
    cols["estimated_species"] = "adsorbates of this pathway whose energies on this surface were ESTIMATED from scaling relations; empty if all computed"
    out.attrs["columns"] = cols
    return out
