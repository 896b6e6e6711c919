"""A report section on uncertainty (presentation layer: calls propagation, plotting and the report's HTML helpers).

:func:`uncertainty_section` propagates an error model for one pathway and returns a
:class:`ecatlab.report.ReportSection` with the ranking-probability figure, the determining-step
figure and a table per surface (P(best), P(top k), U_L and G_max mean, standard deviation and
interval). :func:`ecatlab.report.build_report` includes it with ``uncertainty=[(pathway, model)]``.
Kept apart from the computation (:mod:`ecatlab.uncertainty.propagate`), which never imports it.
"""

from __future__ import annotations

import pandas as pd

from ecatlab.constants import STANDARD_TEMPERATURE

__all__ = ["uncertainty_section"]


def uncertainty_section(energies, pathway, model=None, *, n_samples: int | None = 1000, seed: int = 0, pH: float = 0.0,
                        scale: str = "RHE", temperature: float = STANDARD_TEMPERATURE, surfaces=None, top: int = 3,
                        interval: float = 0.9, style: str = "double"):
    """Report section: how sure the ranking, U_L, G_max and the determining steps of ``pathway`` are.

    Parameters
    ----------
    energies, pathway, pH, scale, temperature, surfaces
        As in :func:`ecatlab.uncertainty.propagate`.
    model : ErrorModel, optional
        Default :class:`~ecatlab.uncertainty.GaussianErrors` (0.1 eV, correlation 0.5 by binding atom).
    n_samples, seed, top, interval
        Samples (None: the ensemble size), seed, the k of P(top k), the central interval.
    """
    from ecatlab.plotting.uncertainty import plot_determining_step_probabilities, plot_ranking_probabilities
    from ecatlab.report import ReportSection, _anchor, _esc, _svg_figure
    from ecatlab.tables import to_html
    from ecatlab.uncertainty import GaussianErrors, propagate

    model = model if model is not None else GaussianErrors(0.1, 0.5)
    res = propagate(energies, pathway, model, n_samples=n_samples, pH=pH, scale=scale, temperature=temperature,
                    surfaces=surfaces, seed=seed)
    key = res.pathways[0]
    c = res.conditions
    rank = res.ranking(key, top=top)
    summary = res.summary(("limiting_potential", "G_max"), interval=interval)
    ul = summary[summary["quantity"] == "limiting_potential"].set_index("surface")
    gm = summary[summary["quantity"] == "G_max"].set_index("surface")
    steps = res.determining_steps()
    steps = steps[steps["pathway"] == key]
    likely = steps.loc[steps.groupby("surface", sort=False)["probability"].idxmax()].set_index("surface")
    s = list(rank.index)
    shown = pd.DataFrame({
        "surface": s,
        "P(best)": rank["p_best"].map("{:.3f}".format).to_numpy(),
        f"P(top {top})": rank[f"p_top{top}"].map("{:.3f}".format).to_numpy(),
        "rank without errors": rank["deterministic_rank"].to_numpy(),
        f"U_L mean ± sd [V vs {c['scale']}]": [f"{ul.loc[x, 'mean']:.3f} ± {ul.loc[x, 'std']:.3f}" for x in s],
        f"U_L {100 * interval:g}% interval [V]": [f"{ul.loc[x, 'low']:.3f} to {ul.loc[x, 'high']:.3f}" for x in s],
        "G_max mean ± sd [eV]": [f"{gm.loc[x, 'mean']:.3f} ± {gm.loc[x, 'std']:.3f}" for x in s],
        "P(blocked)": rank["p_blocked"].map("{:.2f}".format).to_numpy(),
        "most likely determining step (P)": [f"{likely.loc[x, 'step']} ({likely.loc[x, 'probability']:.2f})" for x in s],
    })
    illustrative = "illustrative" in str(c.get("energy_source", "")).lower()
    shown.attrs["caption"] = (
        ("ILLUSTRATIVE data. " if illustrative else "")
        + f"{key}: {res.n_samples} samples of {c['model']} (seed {seed}); pH {float(pH):g}, {float(temperature):.2f} K. "
        f"Ranking per sample: unblocked first, then lower G_max. Monte-Carlo standard error of a probability <= {0.5 / res.n_samples ** 0.5:.3f}. "
        "Theoretical estimates."
    )
    anchor = _anchor(f"uncertainty {key}")
    intro = (
        f"<p>How sure is the ranking of {_esc(key)}? Every sample perturbs the free energies with the error model "
        f"({_esc(c['model'])}) and goes through the same CHE kernel as the tables above. The table gives the "
        "probability that each surface ranks first or in the top group, the spread of its limiting potential and "
        "G<sub>max</sub>, and the step most likely to determine the potential.</p>"
    )
    fig1 = _svg_figure(plot_ranking_probabilities(res, key, top=top, style=style), anchor + "-rank",
                       f"Ranking probabilities for {key} ({res.n_samples} samples).")
    fig2 = _svg_figure(plot_determining_step_probabilities(res, key, style=style), anchor + "-steps",
                       f"Probability of each potential-determining step, {key}.")
    return ReportSection(f"Uncertainty: {key}", intro + fig1 + fig2 + to_html(shown), anchor)
