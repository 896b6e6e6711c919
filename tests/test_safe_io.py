"""Tests of ecatlab.safe_io: target checks, atomic writes, cell neutralisation (property-based)."""

from __future__ import annotations

import os

import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

from ecatlab import safe_io
from ecatlab.errors import OutputExistsError, OutputPathError

TRIGGERS = "=+-@\t\r"  # OWASP "CSV Injection" (owasp.org/www-community/attacks/CSV_Injection)


def _is_number(text: str) -> bool:
    try:
        float(text)
        return text.strip().lower() not in ("nan", "inf", "-inf", "+inf", "infinity", "-infinity", "+infinity")
    except ValueError:
        return False


@given(st.text(max_size=40))
def test_neutralised_cells_never_start_a_formula(text):
    out = safe_io.neutralise_cell(text)
    assert out in (text, "'" + text)
    if out and out[0] in TRIGGERS:
        assert _is_number(out)  # only plain numbers may keep a leading sign


@given(st.text(alphabet=st.characters(blacklist_characters=TRIGGERS), max_size=40))
def test_safe_text_is_never_changed(text):
    assert safe_io.neutralise_cell(text) == text


@given(st.floats(allow_nan=False, allow_infinity=False))
def test_numbers_written_as_text_are_untouched(x):
    assert safe_io.neutralise_cell(repr(x)) == repr(x)
    assert safe_io.neutralise_cell(x) == x


def test_frame_keeps_numeric_columns_and_attrs():
    frame = pd.DataFrame({"name": ["=1", "ok"], "G": [-0.5, 2.0], "flag": [True, False]})
    frame.attrs["caption"] = "x"
    out = safe_io.neutralise_frame(frame)
    assert out["name"].tolist() == ["'=1", "ok"] and out["G"].tolist() == [-0.5, 2.0] and out["flag"].tolist() == [True, False]
    assert out.attrs == {"caption": "x"} and frame["name"].tolist() == ["=1", "ok"]  # the input is not modified


def test_markdown_and_html_cells():
    assert safe_io.markdown_cell("a|b\nc") == r"a\|b c"
    assert safe_io.html_text('<a href="x">') == "&lt;a href=&quot;x&quot;&gt;"


def test_check_output_rules(tmp_path):
    src = tmp_path / "in.csv"
    src.write_text("x")
    assert safe_io.check_output(tmp_path / "new.csv", suffixes=("csv",)) == tmp_path / "new.csv"
    with pytest.raises(OutputExistsError):
        safe_io.check_output(src)
    with pytest.raises(OutputPathError, match="is the input file"):
        safe_io.check_output(src, force=True, inputs=[src])
    with pytest.raises(OutputPathError, match="extension .txt"):
        safe_io.check_output(tmp_path / "a.txt", suffixes=("csv",))
    assert safe_io.same_file(src, tmp_path / "." / "in.csv")
    assert not safe_io.same_file(src, tmp_path / "other.csv")


def test_atomic_write_replaces_in_one_step(tmp_path, monkeypatch):
    target = tmp_path / "t.txt"
    target.write_text("old")
    seen = []
    real = os.replace

    def spy(src, dst):
        seen.append((os.path.dirname(src), open(src).read()))
        return real(src, dst)

    monkeypatch.setattr(os, "replace", spy)
    safe_io.atomic_write_text(target, "new", force=True)
    assert target.read_text() == "new"
    assert seen == [(str(tmp_path), "new")]  # the temporary file lived in the target folder
    assert [p.name for p in tmp_path.iterdir()] == ["t.txt"]


def test_written_files_get_the_ordinary_mode_not_a_private_one(tmp_path):
    # mkstemp makes 0600 files; a table or report moved into place must be readable as an ordinary
    # write would leave it (0666 minus the umask), e.g. for a web server or a co-worker
    import os
    import stat

    from ecatlab.safe_io import atomic_write_text

    umask = os.umask(0o022)
    try:
        path = atomic_write_text(tmp_path / "t.csv", "a,b\n1,2\n")
    finally:
        os.umask(umask)
    assert stat.S_IMODE(os.stat(path).st_mode) == 0o644
