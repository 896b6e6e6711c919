"""Hostile inputs: pathway files, DFT folders, thermo arguments, Python API calls, explorer values and
security cases (formula injection in every CSV writer, '|' in Markdown, HTML in names).

The energy-table reader and engine potentials have their own suite. Demo data and the small tables
here are ILLUSTRATIVE invented numbers.
"""

from __future__ import annotations

import csv
import inspect
import io
import json
import pathlib

import matplotlib

matplotlib.use("Agg")

import pandas as pd  # noqa: E402
import pytest  # noqa: E402

import ecatlab  # noqa: E402
from _hostile import DEMO, copy_demo, fails, no_temp_files, run, sha, table_with_surfaces  # noqa: E402
from ecatlab import errors  # noqa: E402
from ecatlab.errors import EcatlabError, PathwayError  # noqa: E402
from ecatlab.notation import Pathway, read_pathway_file  # noqa: E402

ORR = ecatlab.pathway("orr-4e").to_text()

# OWASP "CSV Injection" payloads: cells starting with = + - @ tab CR (owasp.org/www-community/attacks/CSV_Injection)
# (a leading tab or CR in an energy-table name is stripped by the reader; the writer-level cases below cover them)
PAYLOADS = ["=cmd|' /C calc'!A0", "@SUM(1+1)*cmd|' /C calc'!A0", "+cmd|' /C calc'!A0", "-2+3+cmd|' /C calc'!A0",
            "=HYPERLINK(\"http://x\")"]


# ------------------------------------------------------------------------------------------------
# pathway files
# ------------------------------------------------------------------------------------------------
def _pw(tmp_path, content, name="mine.txt"):
    p = tmp_path / name
    if isinstance(content, bytes):
        p.write_bytes(content)
    else:
        p.write_text(content, encoding="utf-8")
    return p


@pytest.mark.parametrize("content, fragments", [
    (b"O2(g) + * \x00\x01\x02 -> OOH*", ["binary file", "NUL byte"]),
    ("O2(g) + * + H+ + e- -> OOH*  # caf\xe9\n".encode("latin-1"), ["line 1", "not UTF-8", "save the file as UTF-8"]),
    (bytes(range(128, 256)) * 4, ["not UTF-8"]),
    ("", ["no steps found"]),
    ("# only a comment\n\n   \n", ["no steps found"]),
    ("O2(g) + * + H+ + e- -> OOH*\nOOH* + H+ + e- -> O*\n", ["not balanced", "line 2"]),
    ("O2(g) + * + H+ + e- -> OOH*\nO* + H+ + e- -> OH*\nOOH* + H+ + e- -> O* + H2O(l)\nOH* + H+ + e- -> * + H2O(l)\n",
     ["step 2", "consumes O*", "formed only later, in step 3", "formed before it is consumed"]),
    ("OH* + H+ + e- -> * + H2O(l)\n* + H2O(l) -> OH* + H+ + e-\n", ["mixes reduction and oxidation"]),
    ("OH* + H+ + e- -> * + H2O(l)\nO2(g) + * + H+ + e- -> OOH*\nOOH* + H+ + e- -> O* + H2O(l)\nO* + H+ + e- -> OH*\n",
     ["step 1", "consumes OH*", "formed only later, in step 4"]),
    ("1/2 O2(g) + * -> O*\nO* + 2 H+ + 2 e- -> * + H2O(l)\n", ["write fractions as decimals", "'0.5 O2(g)'", "line 1"]),
    ("½ O2(g) + * -> O*\nO* + 2 H+ + 2 e- -> * + H2O(l)\n", ["write fractions as decimals", "'0.5 O2(g)'"]),
    ("0.5 O2(g) + * -> O*\nO* + 2 H+ + 2e0 e- -> * + H2O(l)\n", ["line 2"]),
    ("O2(g) + * + 1e0 H+ + e- -> OOH*\n", ["plain decimal", "'1 H+'", "not in exponent notation"]),
    ("O2(g) + * + H+ + e- + -1 H2O(l) -> OOH*\n", ["coefficients are positive", "other side"]),
    ("O2(g) + * + H+ + e- -> OOH*\nOOH* + H+ + e- -> O* + 1/0 H2O(l)\n", ["divides by zero"]),
    ("2H+ + 2e- + * -> * + H2(g)\n", ["put a space between coefficient and species", "'2H+'"]),
    ("O2(g) + * + H+ + e- -> OOH* -> O*\n", ["exactly one '->'"]),
    ("O2 + * + H+ + e- -> OOH*\n", ["O2"]),
    ("Xx2(g) + * -> Xx2*\n", ["Xx"]),
    ("O2(g) + * -> O2*\n", ["no electrochemical step"]),
    ("O2(g) + * + H+ + e- -> OOH*\n", ["does not return to the clean surface", "OOH*"]),
])
def test_bad_pathway_files(capsys, tmp_path, content, fragments):
    path = _pw(tmp_path, content)
    before = sha(path)
    fails(capsys, ["table", DEMO, "--pathway-file", path], str(path), *fragments, inputs=[path])
    assert sha(path) == before


def test_pathway_file_named_like_a_builtin_is_refused(capsys, tmp_path):
    path = _pw(tmp_path, ORR, "orr-4e.txt")
    fails(capsys, ["table", DEMO, "--pathway-file", path], "'orr-4e' is a built-in pathway key", "rename the file (e.g. my-orr-4e.txt)")


@pytest.mark.parametrize("make, fragment", [
    (lambda t: t / "nope.txt", "pathway file not found"),
    (lambda t: t, "is a folder"),
])
def test_pathway_file_missing_or_folder(capsys, tmp_path, make, fragment):
    fails(capsys, ["table", DEMO, "--pathway-file", make(tmp_path)], fragment)


def test_oversized_pathway_file(capsys, tmp_path):
    path = _pw(tmp_path, "#" * 1_100_000)
    fails(capsys, ["table", DEMO, "--pathway-file", path], "too large for a pathway file")


@pytest.mark.parametrize("content", ["\ufeff" + ORR, ORR.replace("\n", "\r\n"), "# my ORR\n" + ORR + "\n\n# end\n"])
def test_good_pathway_file_variants_are_read(tmp_path, content):
    p = read_pathway_file(_pw(tmp_path, content, "my-orr.txt"))
    assert p.name == "my-orr" and p.to_text() == ORR


def test_pathway_file_in_report_and_volcano(capsys, tmp_path):
    path = _pw(tmp_path, ORR, "my-orr.txt")
    code, out, err = run(capsys, ["volcano", DEMO, "--pathway-file", path, "-d", "OH*", "--json"])
    assert code == 0, err
    assert json.loads(out)["conditions"]
    fails(capsys, ["volcano", DEMO, "--pathway-file", path, "-p", "orr-4e", "-d", "OH*"], "give one pathway")


def test_chain_rule_in_the_api():
    with pytest.raises(PathwayError, match="formed only later"):
        Pathway.parse("O2(g) + * + H+ + e- -> OOH*\nO* + H+ + e- -> OH*\nOOH* + H+ + e- -> O* + H2O(l)\nOH* + H+ + e- -> * + H2O(l)")
    for key in ecatlab.list_pathways().key:  # every built-in pathway chains
        assert ecatlab.pathway(key).steps


# ------------------------------------------------------------------------------------------------
# DFT folders and ingestion
# ------------------------------------------------------------------------------------------------
def test_ingest_missing_path_does_not_talk_about_ase(capsys, tmp_path):
    line = fails(capsys, ["ingest", tmp_path / "no_such_run", "-o", tmp_path / "e.csv"], "file or folder not found", "VASP")
    assert "ASE" not in line.split("or a file ASE")[0]


@pytest.mark.parametrize("content, fragment", [
    (b"\x89PNG\r\n\x1a\n\x00\x00\x00", "not a readable CSV table"),
    ("surface,species,total_energy\n,H2(g),-6.77\nA,*,-10\nA,OH*,abc\n", "data row 3, column total_energy"),
    ("surface,species\nA,OH*\n", "missing column"),
])
def test_ingest_bad_totals_files(capsys, tmp_path, content, fragment):
    src = tmp_path / "totals.csv"
    src.write_bytes(content if isinstance(content, bytes) else content.encode())
    fails(capsys, ["ingest", src, "-o", tmp_path / "e.csv", "--zero-corrections"], fragment, inputs=[src])
    assert not (tmp_path / "e.csv").exists()


def test_ingest_empty_folder(capsys, tmp_path):
    (tmp_path / "runs").mkdir()
    fails(capsys, ["ingest", tmp_path / "runs", "-o", tmp_path / "e.csv"], "no adsorbate folders")


def test_ingest_garbage_vasprun(capsys, tmp_path):
    from ecatlab.errors import IngestError
    from ecatlab.ingest import read_vasp_run

    run_dir = tmp_path / "run"
    run_dir.mkdir()
    (run_dir / "vasprun.xml").write_bytes(b"\x00\x01<modeling><broken")
    with pytest.raises(IngestError, match="pymatgen cannot read this vasprun.xml") as info:
        read_vasp_run(run_dir)
    assert "\n" not in str(info.value) and len(str(info.value)) < 600


@pytest.mark.parametrize("content, fragment", [
    (b"\x00\x00\x00binary\x00", "binary file"),
    (b"no modes here\n", "no 'Eigenvectors and eigenvalues"),
])
def test_bad_frequency_files_from_dft(tmp_path, content, fragment):
    from ecatlab.errors import IngestError
    from ecatlab.ingest import outcar_frequencies_cm

    p = tmp_path / "OUTCAR"
    p.write_bytes(content)
    with pytest.raises(IngestError, match=fragment):
        outcar_frequencies_cm(p)


@pytest.mark.parametrize("content, fragment", [
    (b"\xff\xfe\x00b\x00i\x00n", "not a readable CSV table"),
    ("species,ZPE,CpdT,TS\nOH*,inf,0,0\n", "finite"),
    ("species,ZPE,CpdT,TS\nOH,0.3,0.05,0.1\n", "data row 1, column species"),
    ("species,ZPE\nOH*,0.3\n", "lacks column"),
])
def test_ingest_bad_corrections_file(tmp_path, content, fragment):
    from ecatlab.errors import IngestError
    from ecatlab.ingest import _correction_table

    p = tmp_path / "corr.csv"
    p.write_bytes(content if isinstance(content, bytes) else content.encode())
    with pytest.raises(IngestError, match=fragment):
        _correction_table(p)


def test_ingest_missing_corrections_file(capsys, tmp_path):
    src = tmp_path / "runs"
    src.mkdir()
    fails(capsys, ["ingest", src, "-o", tmp_path / "e.csv", "--corrections", tmp_path / "none.csv"], "--corrections file not found")


# ------------------------------------------------------------------------------------------------
# thermo arguments
# ------------------------------------------------------------------------------------------------
@pytest.mark.parametrize("freqs, fragments", [
    (["nan"], ["finite"]),
    (["3650", "inf"], ["finite"]),
    (["0"], ["zero frequency"]),
    (["12x"], ["'12x' is not a frequency"]),
    (["3650", "-120"], ["imaginary"]),
])
def test_thermo_bad_frequencies(capsys, freqs, fragments):
    fails(capsys, ["thermo", *freqs, "--unit", "cm^-1"], *fragments)


def test_thermo_binary_frequency_file(capsys, tmp_path):
    p = tmp_path / "freqs.dat"
    p.write_bytes(b"\x00\x12\x34\x00")
    fails(capsys, ["thermo", p, "--unit", "cm^-1"], str(p), "binary file", inputs=[p])


def test_thermo_text_in_frequency_file_names_the_file(capsys, tmp_path):
    p = tmp_path / "freqs.txt"
    p.write_text("3650\n760\nabc\n")
    fails(capsys, ["thermo", p, "--unit", "cm^-1"], "'abc' is not a frequency", f"in file {p}", inputs=[p])


def test_thermo_unknown_gas(capsys):
    line = fails(capsys, ["thermo", "--gas", "Unobtainium"])
    assert "Unobtainium" in line


@pytest.mark.parametrize("freqs, fragments", [
    (["1e9"], ["above 5000 cm^-1", "check the unit"]),
    (["3650", "1e-9"], ["below 10 cm^-1", "low-frequency treatment", "--low-frequency"]),
])
def test_implausible_frequencies_warn_with_the_fix(capsys, freqs, fragments):
    code, out, err = run(capsys, ["thermo", *freqs, "--unit", "cm^-1"])
    assert code == 0 and "Traceback" not in err
    warning = [line for line in err.splitlines() if line.startswith("warning:")]
    assert len(warning) == 1 and all(f in warning[0] for f in fragments), err


def test_soft_modes_do_not_warn_under_quasi_rrho():
    import warnings

    from ecatlab.thermochemistry import HarmonicAdsorbate

    with warnings.catch_warnings():
        warnings.simplefilter("error")
        HarmonicAdsorbate.from_frequencies([3650, 1e-3], "cm^-1", low_frequency="quasi-rrho")


# ------------------------------------------------------------------------------------------------
# Python API calls
# ------------------------------------------------------------------------------------------------
def test_every_error_class_is_an_ecatlab_error_and_a_builtin():
    classes = [c for _, c in inspect.getmembers(errors, inspect.isclass)
               if issubclass(c, Exception) and not issubclass(c, Warning) and c.__module__ == errors.__name__]
    assert len(classes) >= 15
    for cls in classes:
        assert issubclass(cls, EcatlabError), cls
        assert any(b in cls.__mro__ for b in (ValueError, KeyError, TypeError, FileExistsError, OSError)) or cls is EcatlabError, cls


def test_unknown_pathway_is_a_key_error_with_a_suggestion():
    with pytest.raises(KeyError) as info:
        ecatlab.pathway("orr_4e")
    assert isinstance(info.value, EcatlabError) and "did you mean 'orr-4e'" in str(info.value)


@pytest.mark.parametrize("call, exc, fragment", [
    (lambda t, p: ecatlab.export_table(t, p / "x.xlsx"), ValueError, "unknown table format"),
    (lambda t, p: ecatlab.export_table(t, p / "x.csv", decimals=-3), ValueError, "0 to 12"),
    (lambda t, p: ecatlab.export_table(t, p / "x.md", fmt="latex"), ValueError, "does not match"),
    (lambda t, p: ecatlab.export_table(t, p / "x.csv", fmt="word"), ValueError, "unknown table format"),
    (lambda t, p: ecatlab.export_table(t, p), ValueError, "unknown table format"),
    (lambda t, p: __import__("ecatlab.tables").tables.to_markdown(t, decimals=100), ValueError, "0 to 12"),
    (lambda t, p: __import__("ecatlab.tables").tables.to_latex(t, decimals=2.5), ValueError, "whole number"),
    (lambda t, p: __import__("ecatlab.tables").tables.render_table(t, "pdf"), ValueError, "unknown table format"),
])
def test_table_api_errors(tmp_path, call, exc, fragment):
    lp = ecatlab.limiting_potentials(ecatlab.demo_energies(), "orr-4e", surfaces=["ALY-01"])
    t = ecatlab.limiting_potential_table(lp)
    with pytest.raises(exc, match=fragment) as info:
        call(t, tmp_path)
    assert isinstance(info.value, EcatlabError)
    assert not list(tmp_path.iterdir())


@pytest.mark.parametrize("path, fragment", [(None, "empty file name"), ("", "empty file name"), ("a\x00b.csv", "control characters")])
def test_check_output_api(path, fragment):
    from ecatlab.safe_io import check_output

    with pytest.raises(ValueError, match=fragment):
        check_output(path)


def test_clip_keeps_messages_short():
    from ecatlab.errors import clip

    assert clip("x" * 10_000_000).endswith("(10000000 characters)") and len(clip("x" * 10_000_000)) < 120
    assert clip("short") == "short" and clip("a\x00b") == "a\\x00b"


def test_pathway_from_dict_with_a_built_in_key_still_works():
    p = Pathway.from_dict(ecatlab.pathway("orr-4e").to_dict())
    assert p.name == "orr-4e"


# ------------------------------------------------------------------------------------------------
# explorer values
# ------------------------------------------------------------------------------------------------
@pytest.fixture(scope="module")
def explorer(tmp_path_factory):
    src = table_with_surfaces(tmp_path_factory.mktemp("ex"), ["=cmd|' /C calc'!A0", "+SUM(1)", "ALY-ok"])
    ex = ecatlab.explore(str(src), reaction="ORR", render="inline")
    yield ex
    import matplotlib.pyplot as plt

    plt.close("all")


@pytest.fixture(scope="module")
def exported(explorer, tmp_path_factory):
    folder = tmp_path_factory.mktemp("snap")
    return folder, explorer.export(folder)


@pytest.mark.parametrize("value", [float("nan"), float("inf"), float("-inf")])
def test_explorer_potential_entry_refuses_non_finite(explorer, value):
    before = explorer.state.potential
    explorer.potential_entry.value = value
    assert explorer.state.potential == before
    assert "not a finite number of volts" in explorer.error.value


def test_explorer_export_refuses_to_overwrite(explorer, exported):
    folder, files = exported
    assert len(files) == 4 and all(p.exists() for p in files)
    state = {p: sha(p) for p in files}
    from ecatlab.errors import OutputExistsError

    with pytest.raises(OutputExistsError, match="force"):
        explorer.export(folder)
    assert {p: sha(p) for p in files} == state and no_temp_files(folder)


def test_explorer_export_into_a_file_is_refused(explorer, tmp_path):
    afile = tmp_path / "plain.txt"
    afile.write_text("x")
    from ecatlab.errors import OutputPathError

    with pytest.raises(OutputPathError, match="is a file, not a folder"):
        explorer.export(afile)
    assert afile.read_text() == "x"


def test_formula_injection_in_explorer_snapshot(exported):
    _, files = exported
    csvs = [p for p in files if p.suffix == ".csv"]
    assert len(csvs) == 2
    for p in csvs:
        text = p.read_text(encoding="utf-8")
        _no_live_formula(_csv_cells(text))
    assert "'=cmd|' /C calc'!A0" in csvs[1].read_text(encoding="utf-8")


# ------------------------------------------------------------------------------------------------
# security: formula injection, Markdown pipes, HTML in names, path-like names
# ------------------------------------------------------------------------------------------------
def _csv_cells(text: str) -> list[list[str]]:
    return list(csv.reader(io.StringIO("\n".join(line for line in text.splitlines() if not line.startswith("#")))))


def _no_live_formula(cells) -> None:
    for row in cells:
        for cell in row:
            if cell and cell[0] in "=+-@\t\r":
                float(cell)  # only numbers may start with a trigger character


@pytest.mark.parametrize("payload", PAYLOADS)
def test_formula_injection_in_table_stdout_csv(capsys, tmp_path, payload):
    src = table_with_surfaces(tmp_path, [payload, "ALY-ok"])
    code, out, err = run(capsys, ["table", src, "-p", "orr-4e"])
    assert code == 0, err
    cells = _csv_cells(out)
    _no_live_formula(cells)
    assert "'" + payload.strip() in [r[0] for r in cells]
    assert any(r[0] == "ALY-ok" for r in cells)  # ordinary names untouched


@pytest.mark.parametrize("suffix", ["csv", "tsv"])
def test_formula_injection_in_table_o(capsys, tmp_path, suffix):
    src = table_with_surfaces(tmp_path, PAYLOADS[:3])
    out = tmp_path / f"t.{suffix}"
    code, _, err = run(capsys, ["table", src, "-p", "orr-4e", "-o", out])
    assert code == 0, err
    rows = list(csv.reader(io.StringIO("\n".join(l for l in out.read_text().splitlines() if not l.startswith("#"))),
                           delimiter="\t" if suffix == "tsv" else ","))
    _no_live_formula(rows)
    numbers = [float(r[2]) for r in rows[1:]]
    assert any(v < 0 for v in numbers) or all(isinstance(v, float) for v in numbers)  # numeric cells stay numbers


def test_formula_injection_in_export_table_and_numbers_untouched(tmp_path):
    src = table_with_surfaces(tmp_path, ["=1+2", "-neg"])
    lp = ecatlab.limiting_potentials(str(src), "orr-4e")
    out = ecatlab.export_table(ecatlab.limiting_potential_table(lp), tmp_path / "lp.csv")
    back = pd.read_csv(out)
    assert set(back["surface"]) == {"'=1+2", "'-neg"}
    assert back["U_L [V vs RHE]"].to_numpy() == pytest.approx(lp["limiting_potential"].to_numpy(), abs=1e-12)
    assert (back["U_L [V vs RHE]"] < 0).any() or (back["U_L [V vs RHE]"] > 0).any()


def test_formula_injection_in_ingest_output(capsys, tmp_path):
    src = tmp_path / "totals.csv"
    src.write_text("surface,species,total_energy\n,H2(g),-6.77\n,H2O(g),-14.22\n=cmd|' /C calc'!A0,*,-10\n=cmd|' /C calc'!A0,OH*,-20.5\n")
    out = tmp_path / "e.csv"
    code, _, err = run(capsys, ["ingest", src, "-o", out, "--zero-corrections", "--references", "H2(g)", "H2O(g)"])
    assert code == 0, err
    frame = pd.read_csv(out, comment="#")
    assert frame["surface"].tolist() == ["'=cmd|' /C calc'!A0"]
    assert frame["E"].dtype.kind == "f"


def test_formula_injection_in_routes_csv(capsys, tmp_path):
    src = copy_demo(tmp_path)
    text = src.read_text().replace("ALY-01", "=ALY-01")
    src.write_text(text)
    code, out, err = run(capsys, ["routes", src, "--from", "CO2", "--to", "CH4", "--surface", "=ALY-01"])
    assert code == 0, err
    cells = _csv_cells(out)
    _no_live_formula(cells)
    assert cells[1][0] == "'=ALY-01"


def test_formula_injection_in_thermo_csv(capsys, tmp_path):
    out = tmp_path / "t.csv"
    code, _, err = run(capsys, ["thermo", "3650", "760", "--unit", "cm^-1", "--species", "@SUM(A1)", "-o", out])
    assert code == 0, err
    frame = pd.read_csv(out, comment="#")
    assert frame["species"].tolist() == ["'@SUM(A1)"] and frame["ZPE"].dtype.kind == "f"


def test_tab_and_cr_cells_in_written_csv(tmp_path):
    from ecatlab.safe_io import write_csv

    out = write_csv(pd.DataFrame({"name": ["\tx", "\r=1", "ok"], "G": [-0.5, 1.0, 2.0]}), tmp_path / "x.csv", index=False)
    back = pd.read_csv(out)
    assert back["name"].tolist() == ["'\tx", "'\r=1", "ok"] and back["G"].tolist() == [-0.5, 1.0, 2.0]


@pytest.mark.parametrize("value, expected", [
    ("=1+1", "'=1+1"), ("+1+1x", "'+1+1x"), ("-cmd", "'-cmd"), ("@x", "'@x"), ("\tx", "'\tx"), ("\rx", "'\rx"),
    ("-0.25", "-0.25"), ("+1e-3", "+1e-3"), ("ALY-01", "ALY-01"), ("", ""), (-0.25, -0.25), (None, None),
])
def test_neutralise_cell(value, expected):
    from ecatlab.safe_io import neutralise_cell

    assert neutralise_cell(value) == expected


def test_pipe_in_names_keeps_the_markdown_table_intact(capsys, tmp_path):
    src = table_with_surfaces(tmp_path, ["A|B", "C||D"])
    code, out, err = run(capsys, ["table", src, "-p", "orr-4e", "--format", "markdown"])
    assert code == 0, err
    rows = [line for line in out.splitlines() if line.startswith("|")]
    counts = {line.replace("\\|", "").count("|") for line in rows}
    assert len(counts) == 1 and "A\\|B" in out and "C\\|\\|D" in out


@pytest.mark.parametrize("fmt", ["html", "markdown", "latex"])
def test_html_and_markup_in_names_are_escaped(capsys, tmp_path, fmt):
    src = table_with_surfaces(tmp_path, ["<script>alert(1)</script>", "a&b"])
    code, out, err = run(capsys, ["table", src, "-p", "orr-4e", "--format", fmt])
    assert code == 0, err
    if fmt == "html":
        assert "<script>" not in out and "&lt;script&gt;" in out and "a&amp;b" in out
    elif fmt == "latex":
        assert "a\\&b" in out


def test_report_escapes_html_in_names(tmp_path):
    from ecatlab.report import write_report

    src = table_with_surfaces(tmp_path, ["<img src=x onerror=alert(1)>"], name="<i>x<i>.csv")
    out = write_report(tmp_path / "r.html", str(src), "orr-4e")
    text = out.read_text(encoding="utf-8")
    assert "<img src=x" not in text and "<i>x<i>" not in text


def test_pathway_html_repr_escapes_names():
    p = Pathway.parse(ORR, name="<script>x</script>", description="a <b>b</b>")
    html = p._repr_html_()
    assert "<script>" not in html and "&lt;script&gt;" in html and "&lt;b&gt;" in html


def test_path_like_names_stay_inside_the_export_folder():
    from types import SimpleNamespace

    from ecatlab.explorer.widget import _stem

    state = SimpleNamespace(potential=0.5, pathway=SimpleNamespace(name="../../../../tmp/evil\x00<x>"), route=None, scale="RHE", pH=0.0)
    stem = _stem(state)
    assert "/" not in stem and ".." not in stem and "\x00" not in stem and "<" not in stem


def test_path_like_pathway_file_name(capsys, tmp_path):
    sub = tmp_path / "a"
    sub.mkdir()
    path = _pw(sub, ORR, "..evil.txt")
    code, out, err = run(capsys, ["table", DEMO, "--pathway-file", path, "--surface", "ALY-01"])
    assert code == 0, err
    assert "ALY-01,..evil," in out


@pytest.mark.parametrize("call", [
    lambda: __import__("ecatlab.notation").notation.Species.parse(5),
    lambda: __import__("ecatlab.notation").notation.Step.parse(None),
    lambda: Pathway.parse(None),
    lambda: Pathway.parse(ORR, name=42),
    lambda: __import__("ecatlab.tables").tables.to_markdown([1, 2, 3]),
    lambda: __import__("ecatlab.tables").tables.render_table({"a": 1}, "csv"),
])
def test_wrong_types_are_ecatlab_type_errors(call):
    with pytest.raises((TypeError, ValueError)) as info:
        call()
    assert isinstance(info.value, EcatlabError) and len(str(info.value)) < 300


# ------------------------------------------------------------------------------------------------
# volcano --relations files
# ------------------------------------------------------------------------------------------------
@pytest.mark.parametrize("content, fragments", [
    (b"\x00\x01\x02", ["not valid JSON"]),
    (b"\xff\xfe{", ["not UTF-8 text"]),
    (b"{\"schema\": ", ["not valid JSON", "line 1"]),
    (b"42", ["expected a list of relation records", "int"]),
    (b"[1, 2]", ["record 1", "expected an object"]),
    (b"[{\"schema\": \"other/9\"}]", ["record 1", "unknown scaling-relation schema"]),
    (b"[{\"schema\": \"ecatlab.scaling/1\", \"target\": \"OOH*\"}]", ["record 1", "lacks the field 'intercept'"]),
    (b"[{\"schema\": \"ecatlab.scaling/1\", \"target\": \"OOH*\", \"intercept\": \"abc\"}]", ["record 1", "wrong type"]),
])
def test_bad_relations_files(capsys, tmp_path, content, fragments):
    rel = tmp_path / "rel.json"
    rel.write_bytes(content)
    fails(capsys, ["volcano", DEMO, "-p", "orr-4e", "-d", "OH*", "--relations", rel], *fragments, inputs=[rel])


def test_missing_relations_file(capsys, tmp_path):
    fails(capsys, ["volcano", DEMO, "-p", "orr-4e", "-d", "OH*", "--relations", tmp_path / "none.json"], "file not found")


def test_long_paths_keep_their_file_name_in_messages(capsys, tmp_path):
    deep = tmp_path.joinpath(*["very-long-folder-name"] * 12)
    deep.mkdir(parents=True)
    out = deep / "precious.csv"
    out.write_text("keep")
    line = fails(capsys, ["table", DEMO, "-p", "orr-4e", "-o", out], "precious.csv", "already exists")
    assert len(str(out)) > 200 and "..." in line
