"""Kinetics outputs: G_max descriptor, CLI ``ecatlab currents``, plots, report section, explorer tab,
and hypothesis property tests of the model's invariants."""

from __future__ import annotations

import warnings

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

import ecatlab
from ecatlab.che import limiting_potentials
from ecatlab.cli import main
from ecatlab.energies import EnergyTable
from ecatlab.kinetics import BarrierSettings, build_model, solve_steady_state
from ecatlab.kinetics import analysis as A

matplotlib = pytest.importorskip("matplotlib")
matplotlib.use("Agg")


@pytest.fixture(scope="module")
def demo():
    return ecatlab.demo_energies()


def test_gmax_descriptor_at_equilibrium_equals_kernel_gmax(demo):
    model = build_model(demo, "orr-4e")
    u_eq = model.pathways[0].equilibrium_potential
    ss = solve_steady_state(model, [u_eq, u_eq - 0.3])
    g = A.gmax_descriptor(ss)
    che = limiting_potentials(demo, "orr-4e").set_index("surface")
    at_eq = g[np.isclose(g["potential"], u_eq)].set_index("surface")
    assert np.allclose(at_eq["G_max"], che.loc[at_eq.index, "G_max"], atol=1e-12)  # Exner descriptor via the CHE kernel
    assert np.allclose(at_eq["overpotential"], 0.0)
    # transition states included: never below the thermodynamic value nor below 0
    assert (g["G_max_TS"] >= np.maximum(g["G_max"], 0) - 1e-12).all()
    lower = g[np.isclose(g["potential"], u_eq - 0.3)]
    assert np.allclose(lower["G_max"].to_numpy(), at_eq["G_max"].to_numpy() - 0.3, atol=1e-12)  # one-electron steps: slope 1 eV/V


def test_cli_currents_writes_tables_and_refuses_overwrite(tmp_path, capsys):
    energies = ecatlab.demo_path() if callable(getattr(ecatlab, "demo_path", None)) else None
    out = tmp_path / "pol.csv"
    cov = tmp_path / "cov.csv"
    fig = tmp_path / "pol.png"
    args = ["currents", str(energies), "-p", "orr-4e", "--surface", "ALY-01", "SAS-01", "--potentials", "0.4", "1.2", "0.05",
            "-o", str(out), "--coverages", str(cov), "--figure", str(fig)]
    assert main(args) == 0
    text = capsys.readouterr().out
    assert "ESTIMATED barriers" in text and "ALY-01" in text
    frame = pd.read_csv(out, comment="#")
    assert set(frame["surface"]) == {"ALY-01", "SAS-01"} and len(frame) == 2 * 17
    assert frame["converged"].all()
    assert out.read_text().startswith("# polarization curve; ESTIMATED")
    c = pd.read_csv(cov, comment="#")
    assert np.allclose(c.groupby(["surface", "potential"])["coverage"].sum(), 1.0)
    assert fig.stat().st_size > 1000
    before = out.read_text()
    assert main(args) == 2
    assert "--force" in capsys.readouterr().err
    assert out.read_text() == before
    assert main(["currents", str(energies), "-p", "orr-4e", "--activity", "O2(g)=abc"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and "O2(g)=abc" in err[0]
    assert main(["currents", str(energies), "-p", "orr-4e", "--barriers", str(tmp_path / "none.csv")]) == 2
    assert "not found" in capsys.readouterr().err


def test_plots_take_and_return_axes(demo):
    import matplotlib.pyplot as plt

    from ecatlab.plotting.kinetics import plot_coverages, plot_faradaic_efficiency, plot_polarization, plot_tafel

    model = build_model(demo, ["orr-4e", "orr-2e"], surfaces=["ALY-01", "SAS-02"], activities={"H2O2(aq)": 1e-6})
    ss = solve_steady_state(model, np.linspace(0.3, 1.0, 15))
    fig, axs = plt.subplots(2, 2)
    try:
        assert plot_polarization(ss, ax=axs[0, 0], current_limit=100) is axs[0, 0]
        assert axs[0, 0].get_ylim() == (-100, 100)
        assert plot_tafel(A.polarization_curve(ss), ax=axs[0, 1]) is axs[0, 1]
        assert plot_coverages(ss, "SAS-02", ax=axs[1, 0]) is axs[1, 0]
        assert len(axs[1, 0].get_lines()) == model.n_species
        assert plot_faradaic_efficiency(ss, "ALY-01", ax=axs[1, 1]) is axs[1, 1]
        assert "pH 0" in axs[1, 1].get_title()
    finally:
        plt.close(fig)
    with pytest.raises(ecatlab.errors.KineticsInputError, match="unknown surface"):
        plot_coverages(ss, "nope")


def test_report_section_included(demo):
    from ecatlab.report import build_report

    html = build_report(demo, ["orr-4e"], surfaces=["ALY-01", "SAS-01"], kinetics={"pathways": "orr-4e", "potentials": np.linspace(0.5, 1.2, 15)})
    assert 'id="kinetics-orr-4e"' in html
    part = html[html.index('id="kinetics-orr-4e"'):]
    assert "ESTIMATED" in part and "theoretical estimates" in part
    assert "<svg" in part and "Onset potential at 10 mA/cm" in part


def test_explorer_kinetics_tab_draws_when_visible_only(demo):
    pytest.importorskip("ipywidgets")
    from ecatlab.explorer import Explorer

    ex = Explorer(demo, surfaces=["ALY-01", "SAS-01"])
    assert ex.kinetics.draws == 0  # hidden: nothing computed
    from ecatlab.explorer.widget import KINETICS_TAB

    ex.tabs.selected_index = KINETICS_TAB
    assert ex.kinetics.draws == 1 and ex.kinetics.last_error is None
    assert "ESTIMATED" in ex.kinetics.info.value and "ALY-01" in ex.kinetics.summary.value
    ex.potential.value = 0.4  # the curves do not depend on the applied potential
    assert ex.kinetics.draws == 1
    ex.kinetics.intrinsic_barrier.value = 0.5
    assert ex.kinetics.draws == 2
    assert ex.kinetics.result.model.settings.intrinsic_barrier == 0.5


# ------------------------------------------------------------------------------------------------
# property tests: random surfaces, random conditions
_energy = st.floats(min_value=-1.5, max_value=2.5, allow_nan=False)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(oh=_energy, o=st.floats(min_value=-0.5, max_value=4.0), ooh=st.floats(min_value=2.5, max_value=5.5),
       g0=st.floats(min_value=0.0, max_value=0.8), beta=st.floats(min_value=0.2, max_value=0.8), pH=st.floats(min_value=0, max_value=14))
@example(oh=0.0, o=0.5, ooh=5.0, g0=0.0, beta=0.5, pH=0.0)  # found by hypothesis: net currents far below the exchange flux
def test_invariants_on_random_orr_surfaces(oh, o, ooh, g0, beta, pH):
    table = EnergyTable.from_matrix(pd.DataFrame({"OH*": [oh], "O*": [o], "OOH*": [ooh]}, index=["R"]))
    model = build_model(table, ["orr-4e", "orr-2e"], settings=BarrierSettings(intrinsic_barrier=g0, symmetry_factor=beta), pH=pH,
                        activities={"H2O2(aq)": 1e-3})
    u = np.linspace(0.0, 1.3, 14)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ss = solve_steady_state(model, u)
    assert ss.converged.all()
    assert np.allclose(ss.coverages.sum(axis=-1), 1.0, atol=1e-12)  # site balance
    fe = A.faradaic_efficiencies(ss)
    ok = fe["faradaic_efficiency"].notna()
    if ok.any():
        assert np.allclose(fe.loc[ok, "fe_unassigned"], 0.0, atol=1e-6)
    # detailed balance of the rate constants: ln kf - ln kb = -dG/kT exactly
    from ecatlab.kinetics.rates import rate_constants

    rc = rate_constants(ss.dG, model.raw_offset[:, None], model.raw_slope[:, None], model.ln_prefactor[:, None], model.temperature)
    assert np.allclose(rc.ln_kf - rc.ln_kb, -ss.dG / model.kT, atol=1e-9)


def test_whole_network_with_her_competitor(demo):
    from ecatlab.network import build_network

    net = build_network(demo, "CO2")
    model = build_model(demo, [net, "her-volmer-heyrovsky"], surfaces=["ALY-01", "SAS-03"])
    assert "CH4(g)" in model.products and "H2(g)" in model.products
    z = dict(zip(model.products, model.electrons_per_product))
    assert z["CH4(g)"] == 8 and z["CO(g)"] == 2 and z["H2(g)"] == 2  # CO2 + 8 (H+ + e-) -> CH4 + 2 H2O
    info = {p.name: p for p in model.pathways}
    assert info["CO2(g)->CH4(g)"].equilibrium_potential == pytest.approx(ecatlab.equilibrium_potential("co2rr-ch4"), abs=1e-12)
    ss = solve_steady_state(model, np.linspace(-1.0, -0.3, 8))
    assert ss.converged.all()
    fe = A.faradaic_efficiencies(ss)
    sums = fe.groupby(["surface", "potential"])["faradaic_efficiency"].sum()
    assert np.allclose(sums, 1.0, atol=1e-8)


def test_onset_flags_a_grid_that_starts_past_the_onset(demo):
    model = build_model(demo, "orr-4e", surfaces=["SAS-05"])
    far = A.onset_potentials(solve_steady_state(model, np.linspace(0.5, 0.9, 5)))
    assert far["reached"].all() and far["at_grid_edge"].all()  # the true onset lies between U_eq and 0.9 V
    full = A.onset_potentials(solve_steady_state(model, np.linspace(0.5, 1.2, 71)))
    assert full["reached"].all() and not full["at_grid_edge"].any()
    assert 0.9 < full["onset_potential"].iloc[0] < 1.2
