"""Tests of ecatlab.energies: reading, validation and the E -> G bookkeeping."""

import numpy as np
import pandas as pd
import pytest

from ecatlab.energies import EnergyTable, read_energies
from ecatlab.errors import EnergyTableError
from ecatlab.references import ReferenceScheme


pytestmark = pytest.mark.usefixtures("reader_routes")  # every test down the reader's three routes (conftest)


def write(tmp_path, text, name="e.csv"):
    path = tmp_path / name
    path.write_text(text)
    return path


def test_read_g_table_case_insensitive_headers(tmp_path):
    path = write(tmp_path, "# comment line\nSurface,SPECIES,g,source\nA,OH*,0.8,x\nA,O*,1.9,x\n\nB,OH*,1.0,y\n")
    table = read_energies(path)
    assert table.surfaces == ["A", "B"]
    assert table.species == ["OH*", "O*"]
    assert table.matrix.loc["A", "O*"] == 1.9
    assert np.isnan(table.matrix.loc["B", "O*"])
    assert list(table.frame["line"]) == [3, 4, 6]
    assert "source" in table.frame.columns


def test_line_column_is_worked_out_when_the_frame_is_first_read(tmp_path):
    """The reader keeps the row -> file line map and writes the line column only when the frame is
    read (or a subset / another temperature needs it); the numbers are the exact file lines."""
    path = write(tmp_path, "# c\nsurface,species,G\nA,OH*,0.8\n\nA,O*,1.9\n# mid\nB,OH*,1.0\n")
    table = read_energies(path)
    assert "_pending_lines" in table.__dict__ and "line" not in table.__dict__["_frame"].columns
    assert table.matrix.loc["B", "OH*"] == 1.0  # the numbers do not need it
    assert list(table.subset(["B"]).frame["line"]) == [7]
    assert list(table.frame["line"]) == [3, 5, 7]
    assert "_pending_lines" not in table.__dict__
    assert list(table.frame.columns[:5]) == ["surface", "species", "G", "G_origin", "line"]
    assert list(read_energies(path).at_temperature(320.0).frame["line"]) == [3, 5, 7]


def test_e_rows_converted_with_reference_corrections(tmp_path):
    corr = pd.DataFrame(
        {"ZPE": {"H2(g)": 0.3, "H2O(l)": 0.5, "CO2(g)": 0.3, "N2(g)": 0.1},
         "CpdT": {"H2(g)": 0.1, "H2O(l)": 0.1, "CO2(g)": 0.1, "N2(g)": 0.1},
         "TS": {"H2(g)": 0.4, "H2O(l)": 0.6, "CO2(g)": 0.6, "N2(g)": 0.6}}
    )
    scheme = ReferenceScheme(corrections=corr)
    frame = pd.DataFrame({"surface": ["A"], "species": ["OOH*"], "E": [3.5], "ZPE": [0.40], "CpdT": [0.08], "TS": [0.15], "solvation": [-0.2]})
    table = read_energies(frame, references=scheme)
    # OOH = 2 H2O - 1.5 H2: reference part = 2*(0.5+0.1-0.6) - 1.5*(0.3+0.1-0.4) = 0.0 - 0.0
    # adsorbate part = 0.40 + 0.08 - 0.15 - 0.2 = 0.13
    assert table.matrix.loc["A", "OOH*"] == pytest.approx(3.5 + 0.13 - 0.0)
    # N-containing: NH2 = 0.5 N2 + H2 -> reference part 0.5*(0.1+0.1-0.6) + 1*(0.0) = -0.2
    frame2 = pd.DataFrame({"surface": ["A"], "species": ["NH2*"], "E": [1.0], "ZPE": [0.5], "CpdT": [0.05], "TS": [0.1]})
    t2 = read_energies(frame2, references=scheme)
    assert t2.matrix.loc["A", "NH2*"] == pytest.approx(1.0 + 0.45 + 0.2)
    assert any("G computed from E" in n for n in t2.notes)


def test_mixed_g_and_e_rows(tmp_path):
    path = write(tmp_path, "surface,species,G,E,ZPE,CpdT,TS\nA,OH*,0.8,,,,\nA,H*,,0.1,0.2,0.0,0.01\n")
    table = read_energies(path)
    assert table.frame["G_origin"].tolist() == ["G given", "from E + corrections"]


@pytest.mark.parametrize(
    "text, fragments",
    [
        ("surface,G\nA,0.1\n", ["missing column(s) ['species']"]),
        ("surface,species,energy\nA,OH*,0.1\n", ["needs a column G"]),
        ("surface,species,G\nA,OH*,abc\n", ["line 2", "column 'G'", "not a finite number", "'abc'"]),
        ("surface,species,G\nA,OH*,\n", ["line 2", "no energy"]),
        ("surface,species,G\nA,OH*,nan\n", ["line 2", "not a finite number"]),
        ("surface,species,G\nA,OH*,inf\n", ["line 2", "not a finite number"]),
        ("surface,species,G\nA,OH*,0.1\nA,OH*,0.2\n", ["line 2, line 3", "duplicate rows", "'OH*'"]),
        ("surface,species,G\nA,OH,0.1\n", ["line 2", "column 'species'", "needs its phase"]),
        ("surface,species,G\nA,CO(g),0.1\n", ["not an adsorbate", "overrides"]),
        ("surface,species,G\nA,*,0.0\n", ["zero of adsorption energies"]),
        ("surface,species,G\nA,SO4*,0.0\n", ["SO4*", "S cannot be built"]),
        ("surface,species,G\n,OH*,0.1\n", ["empty surface name", "line 2"]),
        ("surface,species,G,ZPE\nA,OH*,0.1,0.3\n", ["counted twice", "column 'ZPE'"]),
        ("surface,species,E\nA,OH*,0.1\n", ["need the adsorbate's ZPE"]),
        ("surface,species,E,ZPE,CpdT,TS\nA,OH*,0.1,,0.0,0.0\n", ["ZPE is empty", "line 2"]),
        ("surface,species,G,E\nA,OH*,0.1,0.2\n", ["both G and E"]),
        ("surface,species,G,g\nA,OH*,0.1,0.2\n", ["case-insensitive"]),
        ("surface,species,G\n", ["no rows"]),
        ("# only a comment\n", ["is empty"]),
    ],
)
def test_bad_tables_give_clear_errors(tmp_path, text, fragments):
    path = write(tmp_path, text)
    with pytest.raises(EnergyTableError) as err:
        read_energies(path)
    message = str(err.value)
    assert str(path) in message
    for fragment in fragments:
        assert fragment in message


def test_missing_file_and_folder(tmp_path):
    with pytest.raises(EnergyTableError, match="file not found"):
        read_energies(tmp_path / "nope.csv")
    with pytest.raises(EnergyTableError, match="is a folder"):
        read_energies(tmp_path)


def test_dataframe_errors_name_the_row_label():
    frame = pd.DataFrame({"surface": ["A", "B"], "species": ["OH*", "O*"], "G": [0.1, "x"]}, index=[10, 11])
    with pytest.raises(EnergyTableError, match=r"<DataFrame> at row 11, column 'G'"):
        read_energies(frame)


def test_input_frame_not_modified():
    frame = pd.DataFrame({"Surface": ["A"], "Species": ["OH*"], "G": [0.1]})
    before = frame.copy()
    read_energies(frame)
    pd.testing.assert_frame_equal(frame, before)


def test_from_matrix_subset_and_roundtrip():
    wide = pd.DataFrame({"OH*": [0.8, 1.0], "O*": [1.9, np.nan]}, index=["A", "B"])
    table = EnergyTable.from_matrix(wide)
    assert len(table.frame) == 3
    assert table.subset(["B"]).surfaces == ["B"]
    with pytest.raises(EnergyTableError, match="unknown surface"):
        table.subset(["C"])
    again = EnergyTable.from_dict(table.to_dict())
    pd.testing.assert_frame_equal(again.matrix, table.matrix)
    updated = table.with_values(pd.DataFrame({"O*": [2.5]}, index=["B"]))
    assert updated.matrix.loc["B", "O*"] == 2.5


# -- immutability, layout and the scalable paths -------------------------------------------------------
def test_table_is_immutable_and_replace_loses_nothing():
    import dataclasses

    wide = pd.DataFrame({"OH*": [0.8, 1.0], "O*": [1.9, np.nan]}, index=["A", "B"])
    table = EnergyTable.from_matrix(wide)
    frame = table.frame
    frame["G"] = 99.0  # changing the returned frame never changes the table
    del frame["species"]
    assert table.frame["G"].tolist() == [0.8, 1.9, 1.0]
    with pytest.raises(ValueError):
        table.frame["G"].to_numpy()[0] = 5.0  # read-only under copy-on-write
    with pytest.raises(dataclasses.FrozenInstanceError):
        table.source = "x"
    again = dataclasses.replace(table, notes=("n",))
    pd.testing.assert_frame_equal(again.matrix, table.matrix)
    assert again.notes == ("n",) and again.scheme is table.scheme and again.temperature == table.temperature
    assert again.at_temperature(table.temperature) is again


def test_values_and_matrix_agree_in_any_order():
    rng = np.random.default_rng(3)
    wide = pd.DataFrame(rng.uniform(-1, 3, (50, 4)), columns=["OH*", "O*", "OOH*", "H*"], index=[f"s{i}" for i in range(50)])
    wide.iloc[::5, 1] = np.nan
    table = EnergyTable.from_matrix(wide)
    np.testing.assert_array_equal(table.values(None, ["H*", "OH*"]), wide[["H*", "OH*"]].to_numpy())
    picked = ["s7", "s2", "nope"]
    got = table.values(picked, ["O*", "XX*"])
    np.testing.assert_array_equal(got[:2, 0], wide.loc[["s7", "s2"], "O*"].to_numpy())
    assert np.isnan(got[2]).all() and np.isnan(got[:, 1]).all()


def test_subset_keeps_table_order_and_names_unknowns_briefly():
    wide = pd.DataFrame({"OH*": np.arange(300) / 100.0}, index=[f"s{i}" for i in range(300)])
    table = EnergyTable.from_matrix(wide)
    sub = table.subset(["s9", "s3"])
    assert sub.surfaces == ["s3", "s9"] and sub.frame["surface"].cat.categories.tolist() == ["s3", "s9"]
    with pytest.raises(EnergyTableError) as err:
        table.subset(["s1", "nope"])
    assert "'nope'" in str(err.value) and len(str(err.value)) < 400  # the 300 known names are cut


def test_comment_lines_and_line_numbers_in_the_frame(tmp_path):
    path = write(tmp_path, "# a\n\n# b\nsurface,species,G\nA,OH*,0.1\n# c\nB,OH*,0.2\n\n\nC,O*,0.3\n")
    table = read_energies(path)
    assert list(table.frame["line"]) == [5, 7, 10]
    assert table.surfaces == ["A", "B", "C"]


def test_large_file_matches_a_plain_pandas_read(tmp_path):
    """The fast path (C parser, Arrow codes) gives what read_csv + pivot gives (pandas as the reference)."""
    rng = np.random.default_rng(7)
    n = 3000
    species = ["OH*", "O*", "OOH*"]
    frame = pd.DataFrame({"surface": np.repeat([f"m{i:04d}" for i in range(n)], 3), "species": species * n, "G": np.round(rng.uniform(-2, 4, 3 * n), 6)})
    frame = frame.sample(frac=1.0, random_state=1).reset_index(drop=True)  # any row order
    path = tmp_path / "big.csv"
    frame.to_csv(path, index=False)
    table = read_energies(path)
    ref = pd.read_csv(path).pivot(index="surface", columns="species", values="G")
    got = table.matrix
    pd.testing.assert_frame_equal(got.loc[sorted(got.index), sorted(got.columns)], ref.loc[sorted(ref.index), sorted(ref.columns)],
                                  check_names=False, check_index_type=False, check_column_type=False)
    assert table.surfaces == list(dict.fromkeys(frame["surface"]))  # order of first appearance
    assert list(table.frame["line"]) == list(range(2, 3 * n + 2))


# -- the fast paths of the CSV reader (runs of equal surface names, the grouped dense matrix) ----------
def _pivot(path):
    """Independent reference: pandas' own read_csv + pivot (no ecatlab code)."""
    raw = pd.read_csv(path, dtype={"surface": str, "species": str})
    return raw.pivot(index="surface", columns="species", values="G")


def _write_grouped(path, n_surfaces, species, order_per_surface=None, seed=0):
    rng = np.random.default_rng(seed)
    g = np.round(rng.uniform(-1.5, 4.5, (n_surfaces, len(species))), 6)
    with open(path, "w") as fh:
        fh.write("surface,species,G\n")
        for i in range(n_surfaces):
            order = order_per_surface(i) if order_per_surface else range(len(species))
            fh.writelines(f"s{i},{species[j]},{float(g[i, j])!r}\n" for j in order)
    return g


@pytest.mark.parametrize("n_surfaces", [40_000, 500])  # 40,000: the grouped (no scatter) path; 500: the scatter
def test_grouped_table_matches_pandas_pivot(tmp_path, monkeypatch, n_surfaces):
    import ecatlab.energies as energies

    path = tmp_path / "grouped.csv"
    species = ["OH*", "O*", "OOH*"]
    _write_grouped(path, n_surfaces, species, order_per_surface=lambda i: (2, 0, 1))
    scattered = []
    monkeypatch.setattr(energies, "_dense", lambda *a, _dense=energies._dense: scattered.append(1) or _dense(*a))
    table = read_energies(path)
    assert bool(scattered) == (n_surfaces < 1 << 15)  # which path built the matrix
    ref = _pivot(path).loc[table.surfaces, table.species]
    assert table.species == ["OOH*", "OH*", "O*"]  # order of first appearance
    assert table.surfaces[:3] == ["s0", "s1", "s2"] and table.n_surfaces == n_surfaces
    np.testing.assert_array_equal(table.matrix.to_numpy(), ref.to_numpy())
    assert table.frame["line"].iloc[-1] == 1 + 3 * n_surfaces  # header on line 1


def test_species_order_changing_between_surfaces_falls_back_to_the_scatter(tmp_path, monkeypatch):
    import ecatlab.energies as energies

    path = tmp_path / "mixed.csv"
    species = ["OH*", "O*", "OOH*"]
    _write_grouped(path, 40_000, species, order_per_surface=lambda i: (0, 1, 2) if i != 39_999 else (1, 2, 0))
    scattered = []
    monkeypatch.setattr(energies, "_dense", lambda *a, _dense=energies._dense: scattered.append(1) or _dense(*a))
    table = read_energies(path)
    assert scattered
    ref = _pivot(path).loc[table.surfaces, table.species]
    np.testing.assert_array_equal(table.matrix.to_numpy(), ref.to_numpy())


def test_surface_rows_split_into_several_runs(tmp_path):
    # s1 comes back after s2: the run heads are not distinct, so the names are hashed; the codes
    # must still put both runs of s1 on one row of the matrix (reference: pandas pivot).
    path = write(tmp_path, "surface,species,G\ns1,OH*,0.5\ns2,OH*,0.7\ns2,O*,1.7\ns1,O*,1.5\ns3,OH*,0.9\ns1,OOH*,3.9\n")
    table = read_energies(path)
    assert table.surfaces == ["s1", "s2", "s3"]
    ref = _pivot(path).loc[table.surfaces, table.species]
    np.testing.assert_array_equal(table.matrix.to_numpy(), ref.to_numpy())


def test_duplicate_in_a_later_run_names_both_file_lines(tmp_path):
    path = write(tmp_path, "surface,species,G\n# note\ns1,OH*,0.5\ns1,O*,1.5\ns2,OH*,0.7\ns1,OH*,0.6\n")
    with pytest.raises(EnergyTableError) as err:
        read_energies(path)
    message = str(err.value)
    assert "duplicate" in message and "line 3" in message and "line 6" in message  # the file's own lines (comment counted)


def test_names_that_differ_only_by_surrounding_blanks_are_one_surface(tmp_path):
    path = write(tmp_path, "surface,species,G\nPt(111),OH*,0.5\n Pt(111) ,O*,1.5\nAu,OH*,1.0\n")
    table = read_energies(path)
    assert table.surfaces == ["Pt(111)", "Au"]
    assert table.matrix.loc["Pt(111)", "O*"] == 1.5


def test_control_character_in_a_name_is_refused_with_its_line(tmp_path):
    path = tmp_path / "ctrl.csv"
    path.write_bytes(b"surface,species,G\nPt,OH*,0.5\nP\x07t,OH*,0.6\n")
    with pytest.raises(EnergyTableError) as err:
        read_energies(path)
    assert "line 3" in str(err.value) and "control character" in str(err.value) and "surface" in str(err.value)


def test_nan_and_none_as_surface_names_are_refused(tmp_path):
    for bad in ("nan", "None", "NaN"):
        path = write(tmp_path, f"surface,species,G\nPt,OH*,0.5\n{bad},OH*,0.6\n", name=f"{bad}.csv")
        with pytest.raises(EnergyTableError, match="line 3"):
            read_energies(path)
    table = read_energies(write(tmp_path, "surface,species,G\nnano,OH*,0.5\nNone2,OH*,0.6\n", name="ok.csv"))
    assert table.surfaces == ["nano", "None2"]


def test_energy_beyond_the_bound_or_not_finite_named_by_line(tmp_path):
    for value in ("51.0", "-50.5", "inf"):
        path = write(tmp_path, f"surface,species,G\nPt,OH*,0.5\nAu,OH*,{value}\n", name="b.csv")
        with pytest.raises(EnergyTableError) as err:
            read_energies(path)
        assert "line 3" in str(err.value) and "column 'G'" in str(err.value)
    table = read_energies(write(tmp_path, "surface,species,G\nPt,OH*,50.0\nAu,OH*,-50.0\n", name="edge.csv"))
    assert table.matrix["OH*"].tolist() == [50.0, -50.0]  # the bound itself is accepted (|G| <= 50 eV)
