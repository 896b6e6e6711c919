"""Hostile energy tables: every bad file or frame gets one EnergyTableError line naming file, line,
column and the fix; nothing else escapes; good-but-odd files are read exactly.

The line numbers asserted here are counted by hand in each literal (the file's own lines, comment
and blank lines included). The plausibility bound (|energy| <= 50 eV) and the refusal of negative
ZPE/CpdT/TS are ecatlab's documented policy (common practice, no source).
"""

from __future__ import annotations

import gzip
import warnings

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ecatlab.che import limiting_potentials, state_free_energies, step_free_energies
from ecatlab.energies import ENERGY_BOUND_EV, MAX_NAME_LENGTH, EnergyTable, read_energies
from ecatlab.errors import ConditionError, EcatlabError, EnergyTableError


pytestmark = pytest.mark.usefixtures("reader_routes")  # every test down the reader's three routes (conftest)

HEAD = b"surface,species,G\n"

# (id, file bytes, fragments that must appear, line named or None, column named or None)
BAD_FILES = [
    # -- not text / wrong encodings --------------------------------------------------------------
    ("binary-bytes", bytes(range(256)) * 8, ["NUL byte", "line 1", "CSV UTF-8"], 1, None),
    ("png-header", b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR", ["NUL byte", "not a text"], None, None),
    ("gzip", gzip.compress(HEAD + b"A,OH*,0.1\n"), ["not", "UTF-8"], None, None),
    ("latin-1", "surface,species,G\nCaf\u00e9,OH*,0.1\n".encode("latin-1"), ["not UTF-8", "0xe9", "line 2", "Latin-1"], 2, None),
    ("cp1252-euro", HEAD + b"A,OH*,0.1\nB\x80,OH*,0.2\n", ["not UTF-8", "0x80", "line 3"], 3, None),
    ("utf-16-le-bom", "surface,species,G\nA,OH*,0.1\n".encode("utf-16"), ["UTF-16", "save the table as CSV UTF-8"], None, None),
    ("utf-16-be-bom", b"\xfe\xff" + "surface,species,G\n".encode("utf-16-be"), ["UTF-16"], None, None),
    ("utf-16-no-bom", "surface,species,G\nA,OH*,0.1\n".encode("utf-16-le"), ["NUL byte", "line 1"], 1, None),
    ("utf-32", "surface,species,G\n".encode("utf-32"), ["UTF-16", "CSV UTF-8"], None, None),
    ("truncated-multibyte-at-end", HEAD + b"A,OH*,0.1\nB\xc3", ["UTF-8", "line 3"], 3, None),
    ("nul-after-comments", b"# one\n# two\n" + HEAD + b"A\x00,OH*,0.1\n", ["NUL byte", "line 4"], 4, None),
    ("cr-only-line-ends", b"surface,species,G\rA,OH*,0.1\rB,OH*,0.2\r", ["CR-only", "LF"], None, None),
    # -- structure --------------------------------------------------------------------------------------
    ("empty-file", b"", ["is empty", "header line"], None, None),
    ("only-blank-lines", b"\n \n\t\n", ["is empty"], None, None),
    ("only-comments", b"# a\n# b\n", ["is empty"], None, None),
    ("header-only", HEAD, ["header but no rows"], None, None),
    ("header-and-comments-only", b"# x\n" + HEAD + b"# y\n\n", ["header but no rows"], None, None),
    ("duplicated-header", b"surface,species,G,G\nA,OH*,0.1,0.2\n", ["header at line 1", "same", "keep one"], None, "G"),
    ("duplicated-header-case", b"surface,species,G,g\nA,OH*,0.1,0.2\n", ["case-insensitive", "keep one"], None, "g"),
    ("duplicated-extra-header", b"surface,species,G,src,src\nA,OH*,0.1,a,b\n", ["same", "keep one"], None, "src"),
    ("duplicated-header-after-comment", b"# note\nSurface,species,G,surface\nA,OH*,0.1,B\n", ["header at line 2"], None, "surface"),
    ("quoted-line-break", HEAD + b'"A\nB",OH*,0.1\nC,OH*,0.2\n', ["lines 2-3", "spans several lines", "one row per line"], None, None),
    ("quoted-line-break-after-comments", b"# c\n\n" + HEAD + b"A,OH*,0.1\n# mid\n" + b'"x\ny",O*,0.2\n',
     ["lines 6-7", "spans several lines"], None, None),
    ("unclosed-quote", HEAD + b'A,OH*,0.1\n"B,OH*,0.2\nC,OH*,0.3\n', ["line 3", "never closed"], 3, None),
    ("too-many-fields", HEAD + b"A,OH*,0.1\nB,OH*,0.2,7\n", ["line 3 has 4 fields", "header has 3"], 3, None),
    ("too-many-fields-first-row", HEAD + b"A,OH*,0.1,9\n", ["line 2 has 4 fields"], 2, None),
    ("missing-species-column", b"surface,G\nA,0.1\n", ["missing column(s) ['species']"], None, None),
    ("no-energy-column", b"surface,species,energy\nA,OH*,0.1\n", ["needs a column G"], None, None),
    ("too-few-fields", HEAD + b"A,OH*,0.1\nB,OH*\n", ["line 3", "no energy"], 3, "G"),
    # -- line numbers with comments and blank lines before the error ------------------------------------
    ("comments-before-bad-number", b"# c1\n# c2\n" + HEAD + b"A,OH*,0.1\n# mid\n\nB,OH*,abc\n", ["line 7", "not a finite number", "'abc'"], 7, "G"),
    ("indented-comment-before-error", HEAD + b"A,OH*,0.1\n   # indented\nB,OH*,x\n", ["line 4", "'x'"], 4, "G"),
    ("blank-lines-before-error", HEAD + b"\nA,OH*,0.1\n\n\nB,OH*,zz\n", ["line 6", "'zz'"], 6, "G"),
    ("crlf-blank-lines-before-error", b"surface,species,G\r\nA,OH*,0.1\r\n\r\nB,OH*,q\r\n", ["line 4", "'q'"], 4, "G"),
    ("hash-name-and-comment-before-error", b"# top\n" + HEAD + b'"#1",OH*,0.1\nB#2,OH*,0.2\n# c\nC,OH*,bad\n', ["line 6", "'bad'"], 6, "G"),
    ("bom-comment-before-error", b"\xef\xbb\xbf# c\n" + HEAD + b"A,OH*,1e999\n", ["line 3", "not a finite number"], 3, "G"),
    # -- numbers -----------------------------------------------------------------------------------------
    ("nan-energy", HEAD + b"A,OH*,nan\n", ["line 2", "not a finite number", "'nan'"], 2, "G"),
    ("inf-energy", HEAD + b"A,OH*,0.1\nB,OH*,inf\n", ["line 3", "not a finite number"], 3, "G"),
    ("minus-infinity", HEAD + b"A,OH*,-Infinity\n", ["line 2", "not a finite number"], 2, "G"),
    ("overflow-1e400", HEAD + b"A,OH*,1e400\n", ["line 2", "not a finite number"], 2, "G"),
    ("huge-1e300", HEAD + b"A,OH*,1e300\n", ["line 2", "plausibility bound", "|G| <= 50 eV", "not total DFT energies"], 2, "G"),
    ("total-dft-energy", HEAD + b"A,OH*,-312.45\n", ["line 2", "plausibility bound"], 2, "G"),
    ("kj-per-mol", HEAD + b"A,OH*,0.1\nB,OH*,96.5\n", ["line 3", "plausibility bound", "kJ/mol"], 3, "G"),
    ("huge-E", b"surface,species,E,ZPE,CpdT,TS\nA,OH*,-1234.5,0.3,0.05,0.1\n", ["line 2", "plausibility bound"], 2, "E"),
    ("hex-number", HEAD + b"A,OH*,0x10\n", ["line 2", "'0x10'"], 2, "G"),
    ("semicolon-separated", b"surface;species;G\nA;OH*;0,1\n", ["header at line 1", "separated by ';'", "comma-separated"], None, None),
    ("tab-separated", b"surface\tspecies\tG\nA\tOH*\t0.1\n", ["separated by tabs"], None, None),
    # -- names ---------------------------------------------------------------------------------------------
    ("control-character-name", HEAD + b"A\x07B,OH*,0.1\n", ["line 2", "control character", "\\x07"], 2, "surface"),
    ("tab-in-quoted-name", HEAD + b'"A\tB",OH*,0.1\n', ["line 2", "control character"], 2, "surface"),
    ("escape-sequence-name", HEAD + b"ok,OH*,0.1\n\x1b[31mred,OH*,0.2\n", ["line 3", "control character"], 3, "surface"),
    ("over-long-name", HEAD + b"x" * 300 + b",OH*,0.1\n", ["line 2", f"longer than {MAX_NAME_LENGTH}", "(300 characters)"], 2, "surface"),
    ("empty-name", HEAD + b",OH*,0.1\n", ["line 2", "empty surface name"], 2, "surface"),
    ("blank-name", HEAD + b"   ,OH*,0.1\n", ["line 2", "empty surface name"], 2, "surface"),
    ("nan-name", HEAD + b"NaN,OH*,0.1\n", ["line 2", "empty surface name"], 2, "surface"),
    ("duplicate-after-strip", HEAD + b"A,OH*,0.1\n A ,OH*,0.2\n", ["line 2, line 3", "duplicate rows"], None, None),
    ("bad-species", HEAD + b"A,OH,0.1\n", ["line 2", "needs its phase"], 2, "species"),
    ("molecule-as-species", HEAD + b"A,CO(g),0.1\n", ["line 2", "not an adsorbate"], 2, "species"),
    ("formula-injection-species", HEAD + b"A,=cmd|' /C calc'!A0,0.1\n", ["line 2"], 2, "species"),
    ("delete-character-name", HEAD + b"ok,OH*,0.1\nA\x7fB,OH*,0.1\n", ["line 3", "control character", "\\x7f"], 3, "surface"),
    ("none-name-after-good-runs", HEAD + b"A,OH*,0.1\nA,O*,1.1\nB,OH*,0.2\nNone,OH*,0.3\n", ["line 5", "empty surface name"], 5, "surface"),
    ("duplicate-in-a-later-run", HEAD + b"A,OH*,0.1\nA,O*,1.1\nB,OH*,0.2\n# again\nA,OH*,0.3\n", ["line 2, line 6", "duplicate rows"], None, None),
    ("infinite-after-finite", HEAD + b"A,OH*,0.1\nB,OH*,0.2\nC,OH*,-inf\n", ["line 4", "not a finite number"], 4, "G"),
    ("beyond-bound-after-finite", HEAD + b"A,OH*,0.1\nB,OH*,0.2\nC,OH*,-50.01\n", ["line 4", "plausibility bound"], 4, "G"),
]


def _read_expecting_error(tmp_path, data: bytes) -> tuple[EnergyTableError, str]:
    path = tmp_path / "table.csv"
    path.write_bytes(data)
    try:
        read_energies(path)
    except EcatlabError as exc:
        assert isinstance(exc, EnergyTableError), f"{type(exc).__name__}: {exc}"
        return exc, str(path)
    except Exception as exc:  # noqa: BLE001 - the point of the test
        pytest.fail(f"a non-ecatlab exception escaped: {type(exc).__name__}: {exc}")
    pytest.fail("the hostile table was accepted")


@pytest.mark.parametrize("case, data, fragments, line, column", BAD_FILES, ids=[c[0] for c in BAD_FILES])
def test_hostile_file_gets_one_clear_line(tmp_path, case, data, fragments, line, column):
    err, path = _read_expecting_error(tmp_path, data)
    message = str(err)
    assert "\n" not in message and "Traceback" not in message
    assert message.startswith(path), message  # names the file first
    assert len(message) < 420, f"message too long ({len(message)} chars)"
    for fragment in fragments:
        assert fragment in message, f"{fragment!r} not in {message!r}"
    if line is not None:
        assert f"line {line}" in message
        assert any(str(r) == f"line {line}" for r in err.rows) or f"line {line}" in err.problem
    if column is not None:
        assert err.column == column, (err.column, message)


def test_cases_cover_at_least_forty_kinds():
    assert len(BAD_FILES) >= 40
    assert len({c[0] for c in BAD_FILES}) == len(BAD_FILES)


def test_ten_megabyte_name_is_refused_with_a_cut_echo(tmp_path):
    err, _ = _read_expecting_error(tmp_path, HEAD + b"A,OH*,0.1\n" + b"y" * 10_000_000 + b",OH*,0.2\n")
    message = str(err)
    assert "line 3" in message and "characters" in message
    assert len(message) < 420


def test_many_bad_rows_name_a_few_and_count_the_rest(tmp_path):
    rows = b"".join(b"s%d,OH*,oops\n" % i for i in range(500))
    err, _ = _read_expecting_error(tmp_path, HEAD + rows)
    message = str(err)
    assert "line 2, line 3" in message and "more" in message and "500 rows in all" in message
    assert len(message) < 420


# -- odd but valid files are read exactly ----------------------------------------------------------------
def test_hash_inside_names_is_kept_and_comment_lines_are_skipped(tmp_path):
    path = tmp_path / "t.csv"
    path.write_bytes(b"# header comment\n" + HEAD + b'"#1 site",OH*,0.1\nB#2,OH*,0.2\n  # indented comment\n\nC,OH*,0.3\n')
    table = read_energies(path)
    assert table.surfaces == ["#1 site", "B#2", "C"]
    assert list(table.frame["line"]) == [3, 4, 7]


def test_bom_crlf_numeric_names_spaces_and_no_final_newline(tmp_path):
    path = tmp_path / "t.csv"
    path.write_bytes(b"\xef\xbb\xbfSurface , Species , G\r\n001 , OH* , 0.1 \r\n002,O*,0.2")
    table = read_energies(path)
    assert table.surfaces == ["001", "002"]  # names stay text: no leading zeros lost
    assert table.species == ["OH*", "O*"]
    assert list(table.frame["line"]) == [2, 3]
    np.testing.assert_allclose(table.frame["G"].to_numpy(), [0.1, 0.2])


@pytest.mark.parametrize(
    "text, column, fragments",
    [
        ("A,OH*,0.1,-0.3,0.0,0.1\n", "ZPE", ["line 2", "zero-point energy", "used as given"]),
        ("A,OH*,0.1,0.3,0.0,0.1\nB,OH*,0.2,0.3,0.0,-0.2\n", "TS", ["line 3", "not -TS"]),
        ("A,OH*,0.1,0.3,-0.05,0.1\n", "CpdT", ["line 2", "positive heat capacity"]),
    ],
)
def test_negative_corrections_warn_naming_the_row(tmp_path, text, column, fragments):
    """Policy: a warning, not an error (corrections shifted together with the reference corrections are legitimate)."""
    from ecatlab.errors import CorrectionWarning

    path = tmp_path / "t.csv"
    path.write_text("surface,species,E,ZPE,CpdT,TS\n" + text)
    with pytest.warns(CorrectionWarning) as record:
        table = read_energies(path)
    message = str(record[0].message)
    assert message.startswith(str(path)) and f"column {column!r}" in message and "\n" not in message
    for fragment in fragments:
        assert fragment in message
    assert np.isfinite(table.frame["G"]).all()


def test_utf8_names_are_fine(tmp_path):
    path = tmp_path / "t.csv"
    path.write_bytes("surface,species,G\nCaf\u00e9-Pt\u2082,OH*,0.1\n".encode("utf-8"))
    assert read_energies(path).surfaces == ["Caf\u00e9-Pt\u2082"]


def test_bound_is_inclusive(tmp_path):
    path = tmp_path / "t.csv"
    path.write_bytes(HEAD + f"A,OH*,{ENERGY_BOUND_EV}\nB,OH*,{-ENERGY_BOUND_EV}\n".encode())
    assert read_energies(path).n_surfaces == 2


@settings(max_examples=25, deadline=None)
@given(
    comments=st.lists(st.tuples(st.integers(0, 6), st.sampled_from(["# note", "", "   ", "\t# x, with, commas", "#"])), max_size=8),
    bad_at=st.integers(0, 5),
)
def test_reported_line_is_the_files_own_line(tmp_path_factory, comments, bad_at):
    """Insert comment/blank lines anywhere; the bad cell is reported at its true file line."""
    rows = [f"s{i},OH*,{0.1 * i:.2f}" for i in range(6)]
    rows[bad_at] = f"s{bad_at},OH*,notanumber"
    lines = ["surface,species,G"] + rows
    for position, text in sorted(comments, reverse=True):
        lines.insert(1 + min(position, len(lines) - 1), text)  # never before the header
    true_line = lines.index(rows[bad_at]) + 1
    path = tmp_path_factory.mktemp("h") / "t.csv"
    path.write_text("\n".join(lines) + "\n")
    with pytest.raises(EnergyTableError) as err:
        read_energies(path)
    assert f"line {true_line}," in str(err.value) or str(err.value).split(":")[0].endswith(f"line {true_line}, column 'G'")


# -- frames and the matrix constructor ----------------------------------------------------------------------
def test_from_matrix_refuses_inf_instead_of_calling_it_missing():
    wide = pd.DataFrame({"OH*": [0.8, np.inf], "O*": [1.9, np.nan]}, index=["A", "B"])
    with pytest.raises(EnergyTableError) as err:
        EnergyTable.from_matrix(wide)
    message = str(err.value)
    assert "'B'" in message and "'OH*'" in message and "not a finite number" in message and err.value.column == "OH*"


def test_from_matrix_nan_stays_missing():
    table = EnergyTable.from_matrix(pd.DataFrame({"OH*": [0.8, np.nan]}, index=["A", "B"]))
    assert table.surfaces == ["A"]


def test_from_matrix_refuses_text_cells():
    with pytest.raises(EnergyTableError, match="not a number"):
        EnergyTable.from_matrix(pd.DataFrame({"OH*": [0.8, "high"]}, index=["A", "B"]))


@pytest.mark.parametrize(
    "frame, fragments",
    [
        (pd.DataFrame({"surface": ["A", None], "species": ["OH*", "O*"], "G": [0.1, 0.2]}, index=[5, 6]), ["row 6", "empty surface name"]),
        (pd.DataFrame({"surface": ["A", "B"], "species": ["OH*", "O*"], "G": [0.1, np.inf]}, index=[5, 6]), ["row 6", "not a finite number"]),
        (pd.DataFrame({"surface": ["A"], "species": ["OH*"], "G": ["1e300"]}), ["row 0", "plausibility bound"]),
        (pd.DataFrame({"surface": ["A\x00"], "species": ["OH*"], "G": [0.1]}), ["row 0", "control character"]),
    ],
)
def test_hostile_frames(frame, fragments):
    with pytest.raises(EnergyTableError) as err:
        read_energies(frame)
    for fragment in fragments:
        assert fragment in str(err.value)


# -- API boundary: conditions are validated where the engine is called ----------------------------------------
@pytest.fixture
def table():
    return EnergyTable.from_matrix(pd.DataFrame({"OH*": [0.8], "O*": [1.9], "OOH*": [4.0]}, index=["A"]))


@pytest.mark.parametrize("potential", [np.nan, np.inf, -np.inf, 1e9, "high", [0.1, np.nan]])
def test_step_and_state_free_energies_refuse_bad_potentials(table, potential):
    for fn in (step_free_energies, state_free_energies):
        with pytest.raises(ConditionError):
            fn(table, "orr-4e", potential=potential)


@pytest.mark.parametrize("kwargs", [{"pH": np.nan}, {"pH": 99}, {"temperature": -5}, {"temperature": np.inf}, {"scale": "XYZ"}])
def test_engine_refuses_bad_conditions(table, kwargs):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for call in (lambda: step_free_energies(table, "orr-4e", **kwargs), lambda: limiting_potentials(table, "orr-4e", **kwargs)):
            with pytest.raises(ConditionError):
                call()


def test_non_ascii_names_are_not_control_characters(tmp_path):
    # UTF-8 encodes characters beyond ASCII with bytes >= 0x80 only: no false "control character"
    path = tmp_path / "names.csv"
    path.write_bytes(HEAD + "Pt₃Ni(111),OH*,0.1\nCu—step,OH*,0.2\nÅ-site,OH*,0.3\n".encode("utf-8"))
    table = read_energies(path)
    assert table.surfaces == ["Pt₃Ni(111)", "Cu—step", "Å-site"]
    assert table.frame["line"].tolist() == [2, 3, 4]
