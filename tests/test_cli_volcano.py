"""Tests of ``ecatlab volcano``."""

import json

import matplotlib

matplotlib.use("Agg")

import pytest  # noqa: E402

from ecatlab.cli import main  # noqa: E402
from ecatlab.demo import demo_path  # noqa: E402
from ecatlab.scaling import ScalingRelation  # noqa: E402


def test_volcano_command_prints_apex_and_fits(tmp_path, capsys):
    out = tmp_path / "volcano.svg"
    rc = main(["volcano", str(demo_path()), "--pathway", "orr-4e", "--descriptor", "OH*", "--fix-slope", "OOH*=1", "-o", str(out)])
    text = capsys.readouterr().out
    assert rc == 0 and out.exists() and out.stat().st_size > 10000
    assert "apex: descriptor" in text and "minimum overpotential" in text
    assert "R² " in text and "(fixed)" in text and "ALY-01" in text
    assert "Theoretical estimates" in text


def test_volcano_command_json_and_given_relations(tmp_path, capsys):
    # Man et al., ChemCatChem 3, 1159 (2011): OOH* = OH* + 3.2 eV gives 0.37 V at the apex
    rels = tmp_path / "rels.json"
    rels.write_text(json.dumps([ScalingRelation.given("OOH*", "OH*", 1.0, 3.2).to_dict(), ScalingRelation.given("O*", "OH*", 2.0, 0.2).to_dict()]))
    rc = main(["volcano", str(demo_path()), "-p", "orr-4e", "-d", "OH*", "--relations", str(rels), "--json"])
    data = json.loads(capsys.readouterr().out)
    assert rc == 0
    values = {row["quantity"]: row["value"] for row in data["summary"]}
    assert values["minimum overpotential"] == pytest.approx(0.37, abs=0.005)
    assert len(data["surfaces"]) == 12 and data["conditions"]["scale"] == "RHE"


def test_volcano_command_errors(tmp_path, capsys):
    assert main(["volcano", str(tmp_path / "missing.csv"), "-p", "orr-4e", "-d", "OH*"]) == 2
    assert "file not found" in capsys.readouterr().err
    assert main(["volcano", str(demo_path()), "-p", "orr-4e", "-d", "OH*", "--fix-slope", "OOH*"]) == 2
    assert "ADSORBATE=SLOPE" in capsys.readouterr().err
    bad = tmp_path / "bad.json"
    bad.write_text("{not json")
    assert main(["volcano", str(demo_path()), "-p", "orr-4e", "-d", "OH*", "--relations", str(bad)]) == 2
    assert "not valid JSON" in capsys.readouterr().err
