"""Explorer network tab and the new ``ecatlab routes`` options (demo data are ILLUSTRATIVE).

The tab's numbers are checked against NetworkAnalysis directly (the tab computes nothing itself);
the CLI's against the library calls it wraps.
"""

from __future__ import annotations

import io

import matplotlib

matplotlib.use("Agg")

import pandas as pd  # noqa: E402
import pytest  # noqa: E402

from ecatlab.cli import main  # noqa: E402
from ecatlab.demo import demo_energies, demo_path  # noqa: E402
from ecatlab.network import NetworkAnalysis, build_network  # noqa: E402


def test_network_panel_compute_matches_analysis():
    from ecatlab.explorer.network_tab import NetworkPanel

    t = demo_energies()
    panel = NetworkPanel(t, with_widget=False)
    assert "CH4(g)" in panel.products("CO2")
    png, table = panel.compute("CO2", "CH4(g)", "ALY-01", -0.3)
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    an = NetworkAnalysis(build_network(t, "CO2"), t)
    best = an.best_routes("CH4", top=1).iloc[0]
    assert f"{best['limiting_potential']:+.3f}" in table
    assert an.stuck_points("CH4", potential=-0.3).iloc[0]["stuck_at"] in table
    assert "ILLUSTRATIVE" in table


def test_explorer_has_network_tab():
    pytest.importorskip("ipywidgets")
    from ecatlab.explorer.widget import Explorer

    ex = Explorer(demo_energies())
    assert "network" in ex.tabs.titles
    ex.tabs.selected_index = 2
    assert ex.network_panel.image.value[:4] == b"\x89PNG"
    before = ex.network_panel.image.value
    ex.network_panel.surface.value = "SAS-03"
    assert ex.network_panel.image.value != before


def _run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_routes_cli_estimates_stuck_prune_and_errors(capsys, tmp_path):
    demo = str(demo_path())
    code, out, _ = _run(capsys, "routes", demo, "--from", "CO2", "--to", "CH3OH", "--estimate", "additivity", "--surface", "ALY-01")
    assert code == 0
    frame = pd.read_csv(io.StringIO(out), comment="#")
    t = demo_energies()
    an = NetworkAnalysis(build_network(t, "CO2", uncomputed=True), t, estimates="additivity", surfaces=["ALY-01"])
    assert frame["limiting_potential"].iloc[0] == pytest.approx(an.best_routes("CH3OH").iloc[0]["limiting_potential"], abs=1e-4)
    assert "estimated" in frame.columns
    code, out, _ = _run(capsys, "routes", demo, "--from", "CO2", "--to", "CH4", "--stuck", "-0.4", "--surface", "ALY-01")
    stuck = pd.read_csv(io.StringIO(out), comment="#")
    assert stuck["stuck_at"].iloc[0] == NetworkAnalysis(build_network(t, "CO2"), t).stuck_points("CH4", -0.4).iloc[0]["stuck_at"]
    code, out, _ = _run(capsys, "routes", demo, "--from", "CO2", "--prune", "-0.5", "--surface", "SAS-03")
    pruned = pd.read_csv(io.StringIO(out), comment="#")
    assert (pruned["dG"] <= 1e-9).all()
    code, _, err = _run(capsys, "routes", demo, "--from", "CO2", "--structure", "nonsense")
    assert code == 2 and "NAME=SMILES" in err
    fig = tmp_path / "n.png"
    fig.write_text("keep")
    code, _, err = _run(capsys, "routes", demo, "--from", "CO2", "--to", "CH4", "--figure", str(fig))
    assert code == 2 and "--force" in err and fig.read_text() == "keep"
    code, _, _ = _run(capsys, "routes", demo, "--from", "CO2", "--to", "CH4", "--figure", str(fig), "--force")
    assert code == 0 and fig.read_bytes()[:4] == b"\x89PNG"
