"""`ecatlab thermo` and `ecatlab ingest` commands, and the route folder -> energies.csv -> table."""

import pandas as pd
import pytest

from ecatlab.cli import main
from ecatlab.thermochemistry import HarmonicAdsorbate
from fake_vasp import fcc111_slab
from test_ingest import make_tree


def run(capsys, *argv):
    code = main(list(argv))
    out, err = capsys.readouterr()
    return code, out, err


def test_thermo_table(capsys):
    code, out, err = run(capsys, "thermo", "3650", "760", "90", "--unit", "cm^-1", "-T", "298.15", "500", "--species", "OH*")
    assert code == 0, err
    ref = HarmonicAdsorbate.from_frequencies([3650, 760, 90], "cm^-1").correction(500.0)
    assert f"{ref.free_energy_correction:.4f}" in out and "OH*" in out and "harmonic" in out


def test_thermo_imaginary_and_unit_errors(capsys):
    code, _, err = run(capsys, "thermo", "3650", "-120", "--unit", "cm^-1")
    assert code == 2 and "mode 1 is imaginary (120.0i cm^-1)" in err
    code, out, _ = run(capsys, "thermo", "3650", "-120", "--unit", "cm^-1", "--imaginary", "drop")
    assert code == 0 and "dropped imaginary" in out
    code, _, err = run(capsys, "thermo", "3650")
    assert code == 2 and "declared unit" in err


def test_thermo_gas(capsys):
    code, out, _ = run(capsys, "thermo", "--gas", "H2O(l)")
    assert code == 0 and "0.035 bar" in out and "C2v" in out


def test_ingest_then_table(tmp_path, capsys):
    root = make_tree(tmp_path / "dft", fcc111_slab("Pt", a=3.92, size=(2, 2, 3)))
    out_csv = tmp_path / "energies.csv"
    code, out, err = run(capsys, "ingest", str(root), "-o", str(out_csv))
    assert code == 0, err
    table = pd.read_csv(out_csv)
    assert list(table.columns[:6]) == ["surface", "species", "E", "ZPE", "CpdT", "TS"]
    assert set(table["species"]) == {"OH*", "O*", "OOH*"}
    # never overwrite without --force
    before = out_csv.read_text()
    code, _, err = run(capsys, "ingest", str(root), "-o", str(out_csv))
    assert code == 2 and "--force" in err and out_csv.read_text() == before
    code, out, err = run(capsys, "table", str(out_csv), "-p", "orr-4e")
    assert code == 0, err
    assert "Pt111" in out


def test_ingest_error_is_short(tmp_path, capsys):
    code, _, err = run(capsys, "ingest", str(tmp_path / "missing"), "-o", str(tmp_path / "x.csv"), "--format", "vasp")
    assert code == 2 and "folder not found" in err and "Traceback" not in err
