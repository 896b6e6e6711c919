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


def test_report_command_volcano_and_routes(tmp_path, capsys):
    from ecatlab.demo import demo_energies
    from ecatlab.network import NetworkAnalysis, build_network
    from ecatlab.volcano import volcano_summary

    out = tmp_path / "r.html"
    code = main(["report", str(demo_path()), "--pathway", "oer-4e", "--surface", "ALY-01", "ALY-02",
                 "--volcano", "oer-4e=O* - OH*", "--routes", "N2:NH3", "-o", str(out)])
    assert code == 0, capsys.readouterr().err
    text = out.read_text(encoding="utf-8")
    ET.fromstring(text.split("\n", 1)[1])
    assert "http" not in text and "<script" not in text
    import html

    assert "--volcano 'oer-4e=O* - OH*' --routes N2:NH3" in html.unescape(text)  # the exact command, re-runnable
    # volcano over all surfaces of the file (the fit needs them), with fit_against defaulting to O*
    summary = volcano_summary(demo_energies(), "oer-4e", "O* - OH*").set_index("quantity")["value"]
    vol = text.split('<section id="volcano-oer-4e-o-oh">')[1].split("</section>")[0]
    assert f"<td>{summary['minimum overpotential']:.3f}</td>" in vol
    table = demo_energies()
    best = NetworkAnalysis(build_network(table, "N2"), table, surfaces=["ALY-01", "ALY-02"]).best_routes("NH3")
    routes = text.split('<section id="routes-n2-g-nh3-g">')[1].split("</section>")[0]
    for _, row in best.iterrows():
        assert f'<td class="num">{row["limiting_potential"]:.3f}</td>' in routes
    assert "SAS-01" not in routes  # the route search follows --surface


@pytest.mark.parametrize("option, message", [
    (["--volcano", "orr-4e=CO3*"], "volcano section orr-4e vs 'CO3*'"),
    (["--volcano", "orr-4e"], "expected KEY=DESCRIPTOR"),
    (["--volcano", "orr-4e=OH"], "every species must end in '*'"),
    (["--routes", "CO2:C2H6"], "routes section CO2 -> C2H6: no molecule 'C2H6'"),
    (["--routes", "CO2-CH4"], "expected REACTANT:PRODUCT"),
])
def test_report_section_errors_exit_2(tmp_path, capsys, option, message):
    out = tmp_path / "r.html"
    code = main(["report", str(demo_path()), "--pathway", "orr-4e", "--surface", "ALY-01", *option, "-o", str(out)])
    err = capsys.readouterr().err
    assert code == 2 and message in err and "Traceback" not in err
    assert not out.exists()


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
    # one volcano (orr-4e vs OH*) and one best-route section (CO2 -> CH4)
    from ecatlab.demo import demo_energies
    from ecatlab.network import best_routes
    from ecatlab.volcano import volcano_summary

    summary = volcano_summary(demo_energies(), "orr-4e", "OH*").set_index("quantity")["value"]
    vol = report.split('<section id="volcano-orr-4e-oh">')[1].split("</section>")[0]
    assert f"<td>{summary['best limiting potential']:.3f}</td>" in vol and "<svg " in vol
    routes = report.split('<section id="routes-co2-g-ch4-g">')[1].split("</section>")[0]
    for value in best_routes(demo_energies(), "CO2", "CH4")["limiting_potential"]:
        assert f'<td class="num">{value:.3f}</td>' in routes
    assert "<svg " in routes
    assert "done in" in printed
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
