"""Tests of ``ecatlab routes`` (demo data are ILLUSTRATIVE invented numbers)."""

from __future__ import annotations

import io
import json

import matplotlib

matplotlib.use("Agg")

import pandas as pd
import pytest

from ecatlab import che
from ecatlab.cli import main
from ecatlab.demo import demo_path
from ecatlab.network import best_route


def _run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_routes_csv_matches_engine(capsys):
    code, out, _ = _run(capsys, "routes", str(demo_path()), "--from", "CO2", "--to", "CH4", "--surface", "ALY-01", "SAS-03")
    assert code == 0
    assert out.startswith("# ILLUSTRATIVE data") and "best routes CO2(g) -> CH4(g); RHE scale, pH 0" in out.splitlines()[0]
    frame = pd.read_csv(io.StringIO(out), comment="#")
    assert frame["surface"].tolist() == ["ALY-01", "SAS-03"]
    for _, row in frame.iterrows():
        p = best_route(str(demo_path()), row["surface"], "CO2", "CH4")
        lp = che.limiting_potentials(str(demo_path()), p, surfaces=[row["surface"]]).iloc[0]["limiting_potential"]
        assert row["limiting_potential"] == pytest.approx(lp, abs=1e-6)  # CSV keeps 6 decimals (tables.CSV_DECIMALS)


def test_routes_ranking_json_markdown_and_figure(capsys, tmp_path):
    code, out, _ = _run(capsys, "routes", str(demo_path()), "--from", "CO2", "--surface", "ALY-01", "--format", "json")
    assert code == 0
    data = json.loads(out)
    products = [r["product"] for r in data["rows"]]
    assert "H2(g)" in products and "CH4(g)" in products
    assert [r["rank"] for r in data["rows"]] == list(range(1, len(products) + 1))
    fig = tmp_path / "net.svg"
    code, out, err = _run(capsys, "routes", str(demo_path()), "--from", "N2", "--to", "NH3", "--top", "2", "--format", "markdown",
                          "--pH", "7", "--scale", "SHE", "--figure", str(fig))
    assert code == 0 and "| surface" in out and "SHE scale, pH 7" in out
    assert fig.exists() and fig.stat().st_size > 5000


def test_routes_restrictions_and_edges(capsys):
    step = "CO* + H+ + e- -> CHO*"
    code, out, _ = _run(capsys, "routes", str(demo_path()), "--from", "CO2", "--to", "CH4", "--forbid", step, "--top", "3")
    assert code == 0 and step not in out
    code, out, _ = _run(capsys, "routes", str(demo_path()), "--from", "CO2", "--edges", "--allow", "COOH*", "CO*", "--surface", "ALY-02")
    frame = pd.read_csv(io.StringIO(out), comment="#")
    assert set(frame["kind"]) == {"electrochemical", "desorption", "adsorption"}
    assert len(frame) == len(frame.drop_duplicates("step"))


def test_routes_bad_input_gives_short_error(capsys):
    code, _, err = _run(capsys, "routes", str(demo_path()), "--from", "CO2", "--to", "C2H4")
    assert code == 2 and "C2H4" in err and "Traceback" not in err
    code, _, err = _run(capsys, "routes", "missing.csv", "--from", "CO2", "--to", "CH4")
    assert code == 2 and "missing.csv" in err
    code, _, err = _run(capsys, "routes", str(demo_path()), "--from", "CO2", "--to", "CH4", "--forbid", "CH3* + H+ + e- -> CH4*")
    assert code == 2 and "do not occur" in err


# INVENTED energies (eV) for a C2 test: not literature values; chosen so that 2 CO2 -> C2H4 needs
# two sites and the chemical coupling step 2 CO* -> OCCO* + *.
C2_TABLE = """surface,species,G
TST-1,COOH*,0.35
TST-1,CO*,-0.20
TST-1,OCCO*,0.05
TST-1,OCCOH*,-0.15
TST-1,OCC*,-0.40
TST-1,OCCH*,-0.80
TST-1,OCCH2*,-1.10
TST-1,OCHCH2*,-1.30
TST-1,O*,0.80
TST-1,OH*,0.40
TST-1,H*,0.25
"""


def test_routes_c2_with_sites_and_coupling(capsys, tmp_path):
    path = tmp_path / "c2_invented.csv"
    path.write_text(C2_TABLE)
    code, out, err = _run(capsys, "routes", str(path), "--from", "2 CO2", "--to", "C2H4", "--sites", "2", "--coupling", "--format", "json")
    assert code == 0, err
    row = json.loads(out)["rows"][0]
    assert row["product"] == "C2H4(g)" and row["electrons"] == 12
    p = best_route(str(path), "TST-1", "2 CO2", "C2H4", sites=2, coupling=True)
    assert "; ".join(s.equation for s in p.steps) == row["route_steps"]
    assert any(s.equation == "2 CO* -> OCCO* + *" for s in p.steps)  # the C-C coupling step is on the route
    engine = che.limiting_potentials(str(path), p).iloc[0]["limiting_potential"]
    assert row["limiting_potential"] == pytest.approx(engine, abs=1e-9)  # pandas JSON keeps 10 digits


def test_routes_c2_needs_sites_coupling_and_two_reactants(capsys, tmp_path):
    path = tmp_path / "c2_invented.csv"
    path.write_text(C2_TABLE)
    code, _, err = _run(capsys, "routes", str(path), "--from", "CO2", "--to", "C2H4")
    assert code == 2 and "--from '2 CO2'" in err and "--sites 2 --coupling" in err and "Traceback" not in err
    code, _, err = _run(capsys, "routes", str(path), "--from", "2 CO2", "--to", "C2H4")
    assert code == 2 and "routes to C2H4 exist with --sites 2 --coupling" in err
    code, _, err = _run(capsys, "routes", str(path), "--from", "2 CO2", "--to", "C2H4", "--coupling")
    assert code == 2 and "sites=2" in err
