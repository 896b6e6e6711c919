"""Tests of the `ecatlab table` and `ecatlab pathways` commands."""

import io
import json
import subprocess
import sys
from contextlib import redirect_stderr, redirect_stdout

import pandas as pd
import pytest

import ecatlab
from ecatlab.cli import main


def run(*argv):
    out, err = io.StringIO(), io.StringIO()
    with redirect_stdout(out), redirect_stderr(err):
        code = main(list(argv))
    return code, out.getvalue(), err.getvalue()


def test_table_csv_matches_engine():
    code, out, err = run("table", str(ecatlab.demo_path()), "--pathway", "orr-4e", "oer-4e", "--decimals", "6")
    assert code == 0, err
    lines = out.splitlines()
    # the demo numbers are invented: the label comes first in the caption comment
    assert lines[0].startswith("# ILLUSTRATIVE data") and "Limiting potentials [V vs RHE] at pH 0" in lines[0]
    frame = pd.read_csv(io.StringIO("\n".join(lines[1:])))
    expected = ecatlab.limiting_potentials(ecatlab.demo_energies(), ["orr-4e", "oer-4e"])
    assert list(frame.surface) == list(expected.surface)
    assert frame.limiting_potential.to_numpy() == pytest.approx(expected.limiting_potential.to_numpy(), abs=1e-6)


def test_table_json_and_markdown():
    code, out, _ = run("table", str(ecatlab.demo_path()), "-p", "her-volmer-heyrovsky", "--format", "json", "--pH", "7", "--scale", "she")
    assert code == 0
    data = json.loads(out)
    assert data["conditions"]["scale"] == "SHE" and data["conditions"]["pH"] == 7.0
    assert len(data["rows"]) == 12
    assert "limiting_potential" in data["columns"]
    code, out, _ = run("table", str(ecatlab.demo_path()), "-p", "co2rr-co", "--format", "markdown")
    # the one Markdown writer (ecatlab.tables.to_markdown) pads cells to the column width
    rows = [[c.strip() for c in line.strip("|").split("|")] for line in out.splitlines() if line.startswith("|")]
    assert code == 0 and rows[0][:2] == ["surface", "pathway"] and ["ALY-01", "co2rr-co"] in [r[:2] for r in rows]


def test_pathways_listing():
    code, out, _ = run("pathways")
    assert code == 0
    for key in ecatlab.list_pathways().key:
        assert key in out
    code, out, _ = run("pathways", "--steps", "nrr-distal")
    assert "NNH2* + H+ + e- -> N* + NH3(g)" in out and "[chemical]" in out


@pytest.mark.parametrize(
    "content, fragment",
    [
        ("surface,G\nA,0.1\n", "missing column(s) ['species']"),
        ("surface,species,G\nA,OH*,x\n", "line 2, column 'G': not a finite number"),
        ("surface,species,G\nA,OH*,\n", "no energy"),
        ("surface,species,G\nA,OH*,1\nA,OH*,2\n", "duplicate rows"),
        ("surface,species,G\nA,QQ*,1\n", "species 'QQ*'"),
    ],
)
def test_bad_files_exit_2_without_traceback(tmp_path, content, fragment):
    path = tmp_path / "bad.csv"
    path.write_text(content)
    code, out, err = run("table", str(path), "-p", "orr-4e")
    assert code == 2
    assert fragment in err
    assert "Traceback" not in err
    assert str(path) in err


def test_missing_species_is_reported_not_dropped(tmp_path):
    path = tmp_path / "partial.csv"
    path.write_text("surface,species,G\nA,OH*,0.8\nA,O*,1.9\nA,OOH*,4.0\nB,OH*,1.0\n")
    code, out, err = run("table", str(path), "-p", "orr-4e")
    assert code == 0
    assert "B: OOH*, O*" in err
    assert "B,orr-4e" in out and "\"OOH*, O*\"" in out


def test_unbalanced_user_pathway_file(tmp_path):
    bad = tmp_path / "mine.txt"
    bad.write_text("O2(g) + * + H+ + e- -> OOH*\nOOH* + H+ + e- -> O*\n")
    code, _, err = run("table", str(ecatlab.demo_path()), "--pathway-file", str(bad))
    assert code == 2
    assert "not balanced" in err and "line 2 of pathway 'mine'" in err and "H: -2" in err


def test_user_pathway_file_matches_builtin(tmp_path):
    good = tmp_path / "my-orr.txt"
    good.write_text("# my ORR\n" + ecatlab.pathway("orr-4e").to_text() + "\n")
    code, out, _ = run("table", str(ecatlab.demo_path()), "--pathway-file", str(good), "--decimals", "6")
    assert code == 0
    frame = pd.read_csv(io.StringIO("\n".join(out.splitlines()[1:])))
    assert set(frame.pathway) == {"my-orr"}
    expected = ecatlab.limiting_potentials(ecatlab.demo_energies(), "orr-4e").limiting_potential.to_numpy()
    assert frame.limiting_potential.to_numpy() == pytest.approx(expected, abs=1e-6)


def test_unknown_pathway_and_traceback_flag(tmp_path):
    code, _, err = run("table", str(ecatlab.demo_path()), "-p", "orr-5e")
    assert code == 2 and "known keys: orr-4e" in err
    with pytest.raises(Exception):
        main(["--traceback", "table", str(ecatlab.demo_path()), "-p", "orr-5e"])


def test_console_script_entry_point():
    proc = subprocess.run([sys.executable, "-m", "ecatlab", "pathways"], capture_output=True, text=True, timeout=120)
    assert proc.returncode == 0 and "orr-4e" in proc.stdout


def test_import_is_light():
    code = "import sys, ecatlab; ecatlab.__version__; print(any(m.startswith(('pymatgen','matplotlib','ipywidgets','scipy','pandas')) for m in sys.modules))"
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert proc.stdout.strip() == "False"
