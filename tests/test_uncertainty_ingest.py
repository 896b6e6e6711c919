"""Tests of ecatlab.ingest.ensembles: BEEF ensemble blocks in OUTCAR, deviation files.

The OUTCAR files written here are INVENTED fixtures: a few lines around an ensemble block with
made-up numbers, enough for the reader; they are not output of any calculation.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

import ecatlab
from ecatlab.errors import IngestError
from ecatlab.ingest.ensembles import (
    ensemble_from_structures,
    ensemble_from_vasp_tree,
    read_beef_ensemble,
    read_deviations,
    write_deviations,
)
from ecatlab.references import ReferenceScheme
from ecatlab.uncertainty import propagate


def _outcar(path, energies, per_line=1, header=True, prefix_blocks=()):
    """Write an INVENTED OUTCAR fragment with a BEEF ensemble block (made-up numbers)."""
    path.mkdir(parents=True, exist_ok=True)
    lines = [" INVENTED TEST FIXTURE - not the output of a calculation", "  free  energy   TOTEN  =       -10.00000000 eV"]
    for block in prefix_blocks:  # an earlier ionic step's block, which the reader must skip
        lines.append(f" BEEFens {len(block)} ensemble energies")
        lines += [f"  {v: .8E}" for v in block]
    if header:
        lines.append(f" BEEFens {len(energies)} ensemble energies")
    vals = [f"{v: .8E}" for v in energies]
    lines += ["  " + "  ".join(vals[i:i + per_line]) for i in range(0, len(vals), per_line)]
    lines.append(" General timing and accounting informations for this job:")
    (path / "OUTCAR").write_text("\n".join(lines) + "\n")
    return path / "OUTCAR"


def test_read_beef_block_last_block_and_layouts(tmp_path):
    e = np.array([-1.25, -1.5, 0.75, 2.0e-3, -3.0])
    f = _outcar(tmp_path / "a", e, per_line=1, prefix_blocks=[np.zeros(5) + 9.0])
    np.testing.assert_array_equal(read_beef_ensemble(f), e)
    g = _outcar(tmp_path / "b", e, per_line=3)
    np.testing.assert_array_equal(read_beef_ensemble(tmp_path / "b"), e)  # folder works too


@pytest.mark.parametrize("case, match", [("none", "no 'BEEFens"), ("short", "file ends after"), ("text", "not a number")])
def test_read_beef_errors_name_the_problem(tmp_path, case, match):
    if case == "none":
        f = _outcar(tmp_path, [1.0, 2.0], header=False)
    elif case == "short":
        f = tmp_path / "OUTCAR"
        f.write_text(" BEEFens 4 ensemble energies\n  1.0\n  2.0\n")
    else:
        f = tmp_path / "OUTCAR"
        f.write_text(" BEEFens 3 ensemble energies\n  1.0\n  abc\n  2.0\n")
    with pytest.raises(IngestError, match=match):
        read_beef_ensemble(f)


def test_reference_molecules_are_folded_in_member_by_member():
    """delta_k(OH*) = [E_k(slab+OH) - E_k(slab) - (E_k(H2O) - 0.5 E_k(H2))] - mean, by hand."""
    rng = np.random.default_rng(0)
    K = 6
    h2, h2o, slab, oh = (rng.normal(0, 0.1, K) for _ in range(4))
    ens = ensemble_from_structures({("S", "OH*"): oh}, {"S": slab}, {"H2(g)": h2, "H2O(l)": h2o})
    by_hand = oh - slab - (h2o - 0.5 * h2)  # OH = H2O - 1/2 H2 (ReferenceScheme.balance)
    np.testing.assert_allclose(ens.deviations[:, 0, 0], by_hand - by_hand.mean(), atol=1e-14)
    # a common shift of every structure of a member cancels exactly in an adsorption energy? Not
    # for OH (one slab, 1/2 H2 and H2O: net coefficient 1 - 1 - 1 + 0.5); check the arithmetic:
    shift = rng.normal(0, 1, K)
    ens2 = ensemble_from_structures({("S", "OH*"): oh + shift}, {"S": slab + shift}, {"H2(g)": h2 + 2 * shift, "H2O(l)": h2o})
    np.testing.assert_allclose(ens2.deviations[:, 0, 0], ens.deviations[:, 0, 0] + shift - shift.mean(), atol=1e-12)


def test_missing_reference_is_refused():
    with pytest.raises(IngestError, match="reference molecule H2O"):
        ensemble_from_structures({("S", "OH*"): np.zeros(3)}, {"S": np.zeros(3)}, {"H2(g)": np.zeros(3)})
    with pytest.raises(IngestError, match="different sizes"):
        ensemble_from_structures({("S", "H*"): np.zeros(3)}, {"S": np.zeros(4)}, {"H2(g)": np.zeros(3)})


def test_vasp_tree_to_propagation(tmp_path):
    """A small INVENTED tree: gas/H2, gas/H2O, two surfaces with H* -> HER uncertainty."""
    rng = np.random.default_rng(1)
    K = 40
    _outcar(tmp_path / "gas" / "H2", -6.8 + rng.normal(0, 0.05, K))
    _outcar(tmp_path / "gas" / "H2O", -14.2 + rng.normal(0, 0.05, K))
    for s in ("ALY-01", "ALY-02"):
        _outcar(tmp_path / s / "slab", -100 + rng.normal(0, 0.2, K))
        _outcar(tmp_path / s / "H", -103.5 + rng.normal(0, 0.2, K))
    ens = ensemble_from_vasp_tree(tmp_path)
    assert ens.members == K and ens.surfaces == ("ALY-01", "ALY-02") and ens.species == ("H*",)
    assert "H2O(l)" not in ens.molecules and "folded" in " ".join(ens.notes)
    res = propagate(ecatlab.demo_energies(), "her-volmer-heyrovsky", ens, surfaces=["ALY-01", "ALY-02"])
    assert res.n_samples == K
    assert res.summary()["std"].iloc[0] > 0


@pytest.mark.parametrize("suffix", [".csv", ".parquet", ".npz"])
def test_deviation_files_round_trip(tmp_path, suffix):
    rng = np.random.default_rng(2)
    from ecatlab.uncertainty import EnsembleErrors

    ens = EnsembleErrors(rng.normal(0, 0.1, (5, 2, 3)), ("A", "B"), ("OH*", "O*", "OOH*"),
                         rng.normal(0, 0.05, (5, 1)), ("O2(g)",), "invented")
    path = write_deviations(ens, tmp_path / f"dev{suffix}")
    back = read_deviations(path)
    np.testing.assert_allclose(back.deviations, ens.deviations, rtol=1e-9)
    np.testing.assert_allclose(back.molecule_deviations, ens.molecule_deviations, rtol=1e-9)
    assert back.molecules == ("O2(g)",) and back.surfaces == ("A", "B")
    with pytest.raises(IngestError, match="--force"):
        write_deviations(ens, path)


def test_deviation_csv_errors_name_the_line(tmp_path):
    f = tmp_path / "d.csv"
    f.write_text("# invented\nsurface,species,member,deviation\nA,OH*,0,0.1\nA,OH*,1,abc\n")
    with pytest.raises(IngestError, match="line 4, column 'deviation'"):
        read_deviations(f)
    f.write_text("surface,species,member,deviation\nA,OH*,0,0.1\nA,OH*,1,0.2\nA,O*,0,0.1\n")
    with pytest.raises(IngestError, match="A/O\\* has 1 members"):
        read_deviations(f)
    f.write_text("surface,species,member,deviation\nA,O2(g),0,0.1\n")
    with pytest.raises(IngestError, match="leave 'surface' empty"):
        read_deviations(f)
    f.write_text("surface,species,deviation\nA,OH*,0.1\n")
    with pytest.raises(IngestError, match="missing column"):
        read_deviations(f)
