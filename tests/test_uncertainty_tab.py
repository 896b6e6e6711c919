"""Tests of the explorer's uncertainty tab (ecatlab.explorer.uncertainty_tab), driven by `.value`.

Cross-check outside the tab: its ranking probabilities equal ecatlab.uncertainty.propagate on the
same inputs and seed; the PNG is decoded with Pillow (an independent PNG decoder).
"""

from __future__ import annotations

import io

import matplotlib

matplotlib.use("Agg")

import pytest  # noqa: E402

from ecatlab.demo import demo_energies  # noqa: E402
from ecatlab.explorer import explore  # noqa: E402
from ecatlab.explorer.uncertainty_tab import DEFAULT_SAMPLES  # noqa: E402
from ecatlab.uncertainty import GaussianErrors, propagate  # noqa: E402


@pytest.fixture(scope="module")
def table():
    return demo_energies()


def test_option_samples_only_when_ticked_and_the_diagram_tab_is_shown(table):
    ex = explore(table, reaction="ORR", render="inline")
    panel = ex.uncertainty
    assert panel.widget in ex.main.children and ex.tabs.titles[0] == "diagram"  # the option sits on the diagram tab
    assert panel.propagations == 0 and panel.draws == 0  # not ticked: nothing sampled
    ex.tabs.selected_index = 1
    panel.show.value = True  # ticked while the volcano tab is shown: nothing sampled
    assert panel.propagations == 0 and panel.draws == 0
    ex.tabs.selected_index = 0
    assert panel.propagations == 1 and panel.draws == 1 and not ex.errors
    from PIL import Image

    img = Image.open(io.BytesIO(panel.image.value))
    assert img.size[0] > 300 and img.size[1] > 300
    # a potential move neither samples nor redraws (the figures do not depend on U)
    ex.potential.value = 0.4
    assert panel.propagations == 1 and panel.draws == 1
    # a change of sigma or pH samples again
    panel.sigma.value = 0.2
    assert panel.propagations == 2 and panel.draws == 2
    ex.pH.value = 1.0
    assert panel.propagations == 3 and panel.draws == 3
    assert "Theoretical estimates" in panel.info.value and f"{DEFAULT_SAMPLES} samples" in panel.info.value
    # unticked: nothing more is drawn
    panel.show.value = False
    ex.pH.value = 2.0
    assert panel.draws == 3 and panel.propagations == 3


def test_tab_numbers_equal_propagate(table):
    ex = explore(table, reaction="ORR", render="inline")
    ex.uncertainty.show.value = True
    s = ex.state
    mine = ex.uncertainty.result.ranking(s.pathway.name)
    ref = propagate(table, s.pathway, GaussianErrors(0.1, 0.5), n_samples=DEFAULT_SAMPLES, pH=s.pH, scale=s.scale,
                    temperature=s.temperature, surfaces=list(s.surfaces), seed=0).ranking(s.pathway.name)
    assert mine.equals(ref)


def test_bands_panel_shows_the_focus_surface_levels_at_equilibrium(table):
    # the third panel: the focus surface's levels (engine's state free energies at U_eq) with the central
    # 90 % band of the samples; a potential move does not redraw it, a new focus surface does (no resampling)
    import numpy as np

    from ecatlab import che

    ex = explore(table, reaction="ORR", render="inline")
    panel = ex.uncertainty
    panel.show.value = True
    s = ex.state
    data = panel.bands.data
    assert set(data["surface"]) == {s.focus}
    u_eq = float(s.equilibrium_potential())
    assert data.attrs["potential"] == pytest.approx(u_eq) and u_eq == pytest.approx(1.2288, abs=2e-4)  # ORR, CRC Handbook 1.229 V
    engine = che.state_free_energies(table, s.pathway, potential=u_eq, surfaces=[s.focus]).to_numpy()[0]
    assert np.allclose(data["level"].to_numpy(), engine, atol=1e-9)
    assert (data["low"] <= data["median"]).all() and (data["median"] <= data["high"]).all()
    width = (data["high"] - data["low"]).to_numpy()
    assert (width[1:-1] > 0.05).all()  # sigma 0.1 eV: visible bands on the adsorbate states
    assert abs(width[0]) < 1e-12 and abs(width[-1]) < 1e-12  # O2(g) and 2 H2O(l): no adsorbate, no spread
    draws, props = panel.draws, panel.propagations
    ex.potential.value = 0.3
    assert (panel.draws, panel.propagations) == (draws, props)
    other = next(x for x in s.surfaces if x != s.focus)
    ex.focus.value = other
    assert panel.propagations == props and panel.draws == draws + 1 and set(panel.bands.data["surface"]) == {other}
