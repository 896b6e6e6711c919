r"""Uncertainty band of a 1-D volcano from the standard errors of its fitted scaling relations.

Each sample shifts the intercept of every fitted relation :math:`\Delta G_j = s_j D + b_j` by
:math:`\delta b_j \sim N(0, \mathrm{SE}(b_j)^2)`, the same shift along the whole descriptor axis
(a :class:`~ecatlab.uncertainty.DescriptorErrors` model with ``descriptor_sigma = 0``,
``residual_sigma = SE(b_j)`` and ``surface_correlation = 1``, the grid points playing the
surfaces), and the shifted volcano goes through :func:`ecatlab.uncertainty.propagate`. The band is
the percentile interval of :math:`U_L(D)`; the apex of each sample is the best :math:`U_L` on the
grid. Slope errors are not included (stated in the result). Theoretical estimates.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ecatlab.energies import EnergyTable, as_energy_table
from ecatlab.errors import UncertaintyError
from ecatlab.uncertainty.models import DescriptorErrors, ErrorModel
from ecatlab.uncertainty.propagate import propagate

__all__ = ["VolcanoBand", "volcano_band"]


@dataclass(frozen=True)
class VolcanoBand:
    """Percentile band of the volcano line and the distribution of its apex.

    Attributes
    ----------
    x : ndarray (n_grid,), descriptor values, eV
    low, median, high : ndarray (n_grid,), U_L in V vs the scale
    apex_x : ndarray (samples,), eV; apex_U : ndarray (samples,), V vs the scale
    deterministic : ndarray (n_grid,), the volcano's own U_L (no errors)
    conditions : dict
    """

    x: np.ndarray
    low: np.ndarray
    median: np.ndarray
    high: np.ndarray
    apex_x: np.ndarray
    apex_U: np.ndarray
    deterministic: np.ndarray
    conditions: dict = field(default_factory=dict)

    def apex_summary(self, interval: float = 0.9) -> pd.DataFrame:
        """Mean, standard deviation and percentile interval of the apex position (eV) and U_L (V)."""
        lo_q, hi_q = 50 * (1 - interval), 50 * (1 + interval)
        rows = {}
        for name, arr, unit in (("apex_descriptor", self.apex_x, "eV"), ("apex_limiting_potential", self.apex_U, f"V vs {self.conditions.get('scale')}")):
            lo, hi = np.percentile(arr, [lo_q, hi_q])
            rows[name] = {"unit": unit, "mean": arr.mean(), "std": arr.std(ddof=1), "low": lo, "high": hi}
        out = pd.DataFrame(rows).T
        out.attrs.update(self.conditions)
        out.attrs["interval"] = f"central {100 * interval:g}%"
        return out


def volcano_band(curve, energies, model: ErrorModel | None = None, n_samples: int = 500, seed: int = 0,
                 interval: float = 0.9) -> VolcanoBand:
    """Band and apex distribution of a :class:`~ecatlab.volcano.VolcanoCurve` (one descriptor adsorbate).

    Parameters
    ----------
    curve : VolcanoCurve
        From :func:`ecatlab.volcano`.
    energies : EnergyTable, DataFrame or path
        The table the curve was fitted on (gives the reference scheme).
    model : ErrorModel, optional
        Default: intercept standard errors of the fitted relations, shared along the axis.
    n_samples, seed, interval
        As in :func:`ecatlab.uncertainty.propagate` / :meth:`UncertaintyResult.summary`.
    """
    cond = curve.conditions
    table = as_energy_table(energies, cond["temperature"])
    species = [a.key for a in curve.pathway.adsorbates]
    grid = curve.space.energies(curve.x[:, None], species)
    names = [f"x{i:04d}" for i in range(len(curve.x))]
    synthetic = EnergyTable.from_matrix(pd.DataFrame(grid, index=names, columns=species), table.scheme, source="volcano grid")
    if model is None:
        fitted = [r for r in curve.relations if r.intercept_stderr is not None]
        if not fitted:
            raise UncertaintyError("the volcano's relations carry no fit statistics (all given); pass model= yourself")
        descriptors = {r.descriptors for r in fitted}
        if len(descriptors) != 1 or len(next(iter(descriptors))) != 1:
            raise UncertaintyError("volcano_band's default model needs relations against one descriptor adsorbate; pass model=")
        (desc,) = next(iter(descriptors))
        model = DescriptorErrors(desc, 0.0, {r.target: r.slopes[0] for r in fitted},
                                 {r.target: float(r.intercept_stderr) for r in fitted}, default_slope=0.0, surface_correlation=1.0,
                                 source="intercept standard errors of the fitted relations (slope errors not included)")
    res = propagate(synthetic, curve.pathway, model, n_samples=n_samples, pH=cond["pH"], scale=cond["scale"],
                    temperature=cond["temperature"], seed=seed)
    u = res.results[curve.pathway.name].limiting_potential  # (samples, grid)
    lo_q, hi_q = 50 * (1 - interval), 50 * (1 + interval)
    low, med, high = np.percentile(u, [lo_q, 50, hi_q], axis=0)
    clean = np.where(np.isnan(u), -np.inf if curve.direction == "reduction" else np.inf, u)
    best = np.argmax(clean, axis=1) if curve.direction == "reduction" else np.argmin(clean, axis=1)
    conditions = dict(cond)
    conditions.update({"model": model.describe(), "samples": res.n_samples, "seed": seed, "interval": f"central {100 * interval:g}%"})
    return VolcanoBand(curve.x.copy(), low, med, high, curve.x[best], u[np.arange(u.shape[0]), best],
                       res.deterministic["limiting_potential"].to_numpy(dtype=float), conditions)
