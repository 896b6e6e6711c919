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
