"""A report section with steady-state microkinetics: polarization and Tafel curves, onset
potentials and the convergence report (the :class:`ecatlab.report.ReportSection` type).

Used by :func:`ecatlab.report.build_report` through its ``kinetics=`` option (a pathway key, a
list of keys, or a dict of :func:`kinetics_section` keyword arguments). Estimated barriers are
named in the section text and the table caption; the section states that the curves are
theoretical estimates.
"""

from __future__ import annotations

import html
from typing import Iterable

import numpy as np
import pandas as pd

from ecatlab.constants import STANDARD_TEMPERATURE

__all__ = ["kinetics_section", "kinetics_section_from_option"]


def kinetics_section(
    energies,
    pathways,
    *,
    pH: float = 0.0,
    scale: str = "RHE",
    temperature: float = STANDARD_TEMPERATURE,
    surfaces: Iterable[str] | None = None,
    barriers=None,
    activities=None,
    settings=None,
    potentials=None,
    onset_current: float = 10.0,
    style: str = "double",
):
    """Build the section: figure (linear + Tafel), onset table per surface, convergence numbers.

    Parameters are those of :func:`ecatlab.kinetics.build_model`; ``potentials`` (V on ``scale``)
    defaults to U_eq - 1 V .. U_eq + 0.1 V (reductions) in 10 mV steps; ``onset_current`` in mA/cm^2.
    """
    import matplotlib.pyplot as plt

    from ecatlab.che.conditions import Conditions
    from ecatlab.kinetics import build_model, solve_steady_state
    from ecatlab.kinetics import analysis as A
    from ecatlab.plotting.export import svg_fragment
    from ecatlab.plotting.kinetics import plot_polarization, plot_tafel
    from ecatlab.report import ReportSection
    from ecatlab.tables import to_html

    cond = Conditions(scale, pH, temperature)
    model = build_model(energies, pathways, cond, barriers=barriers, activities=activities, settings=settings,
                        surfaces=None if surfaces is None else list(surfaces), on_missing="drop")
    info = model.pathways[0]
    if potentials is None:
        u_eq = info.equilibrium_potential_at_activities
        lo, hi = (u_eq - 1.0, u_eq + 0.1) if info.direction == "reduction" else (u_eq - 0.1, u_eq + 1.0)
        potentials = np.round(np.arange(lo, hi + 1e-9, 0.01), 6)
    ss = solve_steady_state(model, potentials)
    pol = A.polarization_curve(ss)
    summary = A.kinetics_summary(ss, onset_current)
    rep = ss.report()
    names = ", ".join(p.name for p in model.pathways)
    anchor = "kinetics-" + "-".join(p.name for p in model.pathways)
    fig, axs = plt.subplots(1, 2, figsize=(11.0, 4.3))
    try:
        plot_polarization(pol, ax=axs[0], surfaces=list(model.surfaces)[:8], current_limit=20 * onset_current, caption=False)
        plot_tafel(pol, ax=axs[1], surfaces=list(model.surfaces)[:8], caption=False)
        fig.tight_layout()
        svg = svg_fragment(fig, element_id=anchor + "-fig")
    finally:
        plt.close(fig)
    est = model.any_estimated
    shown = summary[["surface", "onset_potential", "onset_overpotential", "reached", "max_abs_current_density", "barriers", "all_converged", "max_steady_states"]].copy()
    shown.attrs["columns"] = {**A.ONSET_COLUMNS, "max_abs_current_density": "largest |j| on the potential grid [mA/cm^2]",
                              "all_converged": "every potential of the grid converged", "max_steady_states": "most steady states found at one potential"}
    shown.attrs["caption"] = (
        f"Onset potential at {onset_current:g} mA/cm² (V vs {cond.scale}; current in the driving direction, moving from "
        f"U_eq = {info.equilibrium_potential_at_activities:.3f} V), {cond.describe()}, site density "
        f"{model.settings.site_density:g} cm⁻². " + ("ESTIMATED barriers. " if est else "Barriers from user input. ")
        + "Theoretical estimates."
    )
    intro = (
        f"<p>Steady-state mean-field microkinetics of <b>{html.escape(names)}</b> on the same CHE free energies "
        f"({len(model.surfaces)} surfaces, {model.n_steps} steps, {np.size(potentials)} potentials). Rate constants by "
        "transition-state theory, k = (k<sub>B</sub>T/h) exp(−G<sub>a</sub>/k<sub>B</sub>T), detailed-balance consistent; "
        + (f"<b>barriers ESTIMATED</b> ({html.escape(model.settings.describe())})" if est else "barriers from the user's transition-state table")
        + f". Convergence: {rep['converged']}/{rep['points']} points, {rep['multiple_steady_states']} with several steady states, "
        f"largest residual {rep['max_residual']:.1e}. No mass transport, so currents far beyond the onset are not limited; "
        "the curves are theoretical estimates.</p>"
    )
    figure = (f'<figure class="wide">{svg}<figcaption>{html.escape(f"Polarization curves (left) and Tafel plot (right) of {names}; " + ("estimated barriers." if est else "user barriers."))}'
              "</figcaption></figure>")
    return ReportSection(f"Kinetics: {names}", intro + figure + to_html(shown), anchor)


def kinetics_section_from_option(table, option, *, pH, scale, temperature, surfaces=None):
    """The section from the ``kinetics=`` option of :func:`ecatlab.report.build_report`.

    ``option``: a pathway key or Pathway, a list of them, or a dict of :func:`kinetics_section`
    keyword arguments with a ``"pathways"`` entry.
    """
    if isinstance(option, dict):
        kwargs = dict(option)
        paths = kwargs.pop("pathways")
    else:
        paths, kwargs = option, {}
    kwargs.setdefault("surfaces", surfaces)
    return kinetics_section(table, paths, pH=pH, scale=scale, temperature=temperature, **kwargs)
