"""`ecatlab report` and `ecatlab demo` on the command line (through ecatlab.cli.main)."""

import matplotlib

matplotlib.use("Agg")

import xml.etree.ElementTree as ET

import pytest

from ecatlab.cli import main
from ecatlab.demo import demo_path
from ecatlab.pathways import BUILTIN_PATHWAYS, REACTION_FAMILIES


def test_report_command(tmp_path, capsys):
    out = tmp_path / "r.html"
    code = main(["report", str(demo_path()), "--pathway", "orr-4e", "oer-4e", "--pH", "1", "--scale", "she",
                 "--surface", "ALY-01", "SAS-02", "-o", str(out)])
    assert code == 0
    assert str(out) in capsys.readouterr().out
    text = out.read_text(encoding="utf-8")
    ET.fromstring(text.split("\n", 1)[1])
    assert "ecatlab report " in text and "--pathway orr-4e oer-4e --pH 1 --scale SHE" in text
    assert "V vs SHE" in text and "pH 1" in text
    assert text.count("<svg ") == 4


def test_report_command_bad_input_is_a_short_error(tmp_path, capsys):
    code = main(["report", str(demo_path()), "--pathway", "orr-5e", "-o", str(tmp_path / "r.html")])
    err = capsys.readouterr().err
    assert code == 2
    assert "orr-5e" in err and "known keys" in err and "Traceback" not in err
    assert not (tmp_path / "r.html").exists()
    code = main(["report", str(tmp_path / "none.csv"), "--pathway", "orr-4e", "-o", str(tmp_path / "r.html")])
    assert code == 2


@pytest.fixture(scope="module")
def demo_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo") / "demo-out"
    import io
    from contextlib import redirect_stdout

    buf = io.StringIO()
    with redirect_stdout(buf):
        code = main(["demo", "-o", str(out)])
    return code, out, buf.getvalue()


def test_demo_writes_tables_diagrams_and_report(demo_run):
    code, out, printed = demo_run
    assert code == 0
    assert str(out.resolve()) in printed
    assert "safety codes" in printed and "ILLUSTRATIVE" in printed
    for name in ("limiting_potentials.csv", "limiting_potentials.md", "limiting_potentials.tex", "report.html"):
        assert (out / name).stat().st_size > 500
    for key in BUILTIN_PATHWAYS:
        for suffix in ("svg", "png"):
            assert (out / "diagrams" / f"{key}.{suffix}").stat().st_size > 1000
    report = (out / "report.html").read_text(encoding="utf-8")
    ET.fromstring(report.split("\n", 1)[1])
    assert "http" not in report
    for family, keys in REACTION_FAMILIES.items():
        for key in keys:
            assert f'id="diagram-{key}"' in report
    assert "ILLUSTRATIVE" in report and "ecatlab demo -o" in report
    tex = (out / "limiting_potentials.tex").read_text()
    assert r"\toprule" in tex and "SAS-06" in tex


def test_demo_reuses_its_own_folder_but_refuses_foreign_ones(demo_run, tmp_path, capsys):
    _, out, _ = demo_run
    from ecatlab.cli.demo import OutputFolderError, prepare_output

    assert prepare_output(out) == out  # made by ecatlab: reused
    foreign = tmp_path / "mine"
    foreign.mkdir()
    (foreign / "thesis.docx").write_text("precious")
    with pytest.raises(OutputFolderError, match="not made by ecatlab"):
        prepare_output(foreign)
    code = main(["demo", "-o", str(foreign)])
    assert code == 2
    assert "not made by ecatlab" in capsys.readouterr().err
    assert sorted(p.name for p in foreign.iterdir()) == ["thesis.docx"]
    assert (foreign / "thesis.docx").read_text() == "precious"
    empty = tmp_path / "empty"
    empty.mkdir()
    assert prepare_output(empty) == empty and (empty / ".ecatlab-output").exists()
    afile = tmp_path / "file.txt"
    afile.write_text("x")
    with pytest.raises(OutputFolderError, match="not a folder"):
        prepare_output(afile)
