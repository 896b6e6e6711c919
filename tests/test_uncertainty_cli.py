"""Tests of the ``ecatlab robustness`` subcommand."""

from __future__ import annotations

import numpy as np
import pandas as pd

import ecatlab
from ecatlab.cli import main
from ecatlab.demo import demo_path


def test_robustness_prints_probabilities_and_writes_files(tmp_path, capsys):
    out = tmp_path / "summary.csv"
    fig = tmp_path / "rank.png"
    code = main(["robustness", str(demo_path()), "-p", "orr-4e", "--samples", "200", "--correlation", "0.5",
                 "-o", str(out), "--figure", str(fig)])
    text = capsys.readouterr().out
    assert code == 0
    assert "P(best)" in text and "Theoretical estimates" in text and "200 samples" in text
    frame = pd.read_csv(out, comment="#")
    assert {"mean", "std", "low", "high", "unit"} <= set(frame.columns)
    assert fig.stat().st_size > 1000
    # refuses to overwrite without --force, one line, exit 2
    code = main(["robustness", str(demo_path()), "-p", "orr-4e", "--samples", "50", "-o", str(out)])
    err = capsys.readouterr().err
    assert code == 2 and "--force" in err and err.count("\n") == 1
    assert main(["robustness", str(demo_path()), "-p", "orr-4e", "--samples", "50", "-o", str(out), "--force"]) == 0


def test_same_seed_same_output(capsys):
    args = ["robustness", str(demo_path()), "-p", "co2rr-co", "--samples", "100", "--seed", "5", "--surface", "ALY-01", "--surface", "SAS-03"]
    main(args)
    first = capsys.readouterr().out
    main(args)
    assert capsys.readouterr().out == first


def test_ensemble_file_and_bad_options(tmp_path, capsys):
    from ecatlab.ingest.ensembles import write_deviations
    from ecatlab.uncertainty import EnsembleErrors

    t = ecatlab.demo_energies()
    dev = np.random.default_rng(0).normal(0, 0.1, (40, len(t.surfaces), len(t.species)))
    path = write_deviations(EnsembleErrors(dev, t.surfaces, t.species, source="ILLUSTRATIVE random"), tmp_path / "ens.npz")
    assert main(["robustness", str(demo_path()), "-p", "orr-4e", "--ensemble", str(path)]) == 0
    assert "40 samples; ensemble of 40 members" in capsys.readouterr().out
    assert main(["robustness", str(demo_path()), "-p", "orr-4e", "--sigma-of", "OOH*"]) == 2
    assert "ADSORBATE=NUMBER" in capsys.readouterr().err
    assert main(["robustness", str(demo_path()), "-p", "orr-4e", "--ensemble", str(path), "--scaling-residuals", "OH*"]) == 2
    assert "choose one error source" in capsys.readouterr().err
    assert main(["robustness", str(demo_path()), "-p", "orr-4e", "--scaling-residuals", "OH*", "--samples", "50"]) == 0


def test_too_many_samples_for_the_memory_exit_2_in_one_line(capsys, monkeypatch):
    import importlib

    monkeypatch.setattr(importlib.import_module("ecatlab.uncertainty.propagate"), "_available_memory_bytes", lambda: 10**9)
    assert main(["robustness", str(demo_path()), "-p", "orr-4e", "--samples", "100000000"]) == 2
    err = capsys.readouterr().err
    assert "GB available; ask for at most about" in err and err.count("\n") == 1


def test_sigma_of_with_sigma_as_default_for_the_others_runs():
    """--sigma-of for a species outside the pathway is fine when --sigma covers the pathway's adsorbates
    (the refusals are in tests/test_hostile_cli.py)."""
    assert main(["robustness", str(demo_path()), "-p", "orr-4e", "--sigma-of", "CO*=0.1", "--sigma", "0.1", "-n", "20"]) == 0
