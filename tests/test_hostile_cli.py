"""Hostile CLI options: every bad value gets exit 2 and one line naming the option and the fix.

Run in-process through ``ecatlab.cli.main`` (fast); see tests/_hostile.py for the contract checked.
"""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import pytest  # noqa: E402

from _hostile import DEMO, copy_demo, fails, run  # noqa: E402

TABLE = ["table", DEMO, "-p", "orr-4e"]
ROUTES = ["routes", DEMO, "--from", "CO2", "--to", "CH4"]
VOLCANO = ["volcano", DEMO, "-p", "orr-4e", "-d", "OH*"]
REPORT = ["report", DEMO, "-p", "orr-4e"]
POURBAIX = ["pourbaix", "--demo"]
CURRENTS = ["currents", DEMO, "-p", "orr-4e"]
ROBUSTNESS = ["robustness", DEMO, "-p", "orr-4e", "-n", "20"]
THERMO = ["thermo", "3650", "760", "--unit", "cm^-1"]


# -- numeric option ranges ------------------------------------------------------------------------
@pytest.mark.parametrize("argv, fragments", [
    (TABLE + ["--decimals", "-3"], ["--decimals", "-3", "0 to 12"]),
    (TABLE + ["--decimals", "99"], ["--decimals", "0 to 12"]),
    (TABLE + ["--decimals", "two"], ["--decimals", "'two'", "whole number"]),
    (ROUTES + ["--top", "0"], ["--top", "1 to 50"]),
    (ROUTES + ["--top", "-2"], ["--top", "1 to 50"]),
    (REPORT + ["--top", "0", "-o", "x.html"], ["--top", "1 to 50"]),
    (ROUTES + ["--chemical-limit", "nan"], ["--chemical-limit", "finite"]),
    (ROUTES + ["--chemical-limit", "inf"], ["--chemical-limit", "finite"]),
    (ROUTES + ["--chemical-limit=-inf"], ["--chemical-limit", "finite"]),
    (ROUTES + ["--chemical-limit", "-inf"], ["--chemical-limit", "expected one argument"]),
    (ROUTES + ["--sites", "0"], ["--sites", "1 to 4"]),
    (TABLE + ["--pH", "nan"], ["--pH", "finite"]),
    (TABLE + ["--pH", "inf"], ["--pH", "finite"]),
    (TABLE + ["--pH", "seven"], ["--pH", "not a number"]),
    (TABLE + ["-T", "-5"], ["-T/--temperature", "absolute zero"]),
    (TABLE + ["-T", "nan"], ["-T/--temperature", "finite"]),
    (TABLE + ["--temperature", "0"], ["--temperature", "absolute zero"]),
    (ROUTES + ["-T", "inf"], ["-T/--temperature", "finite"]),
    (VOLCANO + ["-T", "-1"], ["-T/--temperature", "absolute zero"]),
    (REPORT + ["-T", "nan"], ["-T/--temperature", "finite"]),
    (THERMO + ["-T", "300", "nan"], ["-T/--temperature", "finite"]),
    (["ingest", DEMO, "-o", "x.csv", "-T", "0"], ["-T/--temperature", "absolute zero"]),
    (THERMO + ["--cutoff", "-5"], ["--cutoff", "above 0"]),
    (["thermo", "--gas", "H2", "--pressure", "0"], ["--pressure", "above 0"]),
    (VOLCANO + ["--span", "nan", "1"], ["--span", "finite"]),
    (VOLCANO + ["--fix-slope", "OOH*=inf"], ["--fix-slope", "finite"]),
    (VOLCANO + ["--span", "2", "1"], ["--span", "LOW must be below HIGH"]),
    (VOLCANO + ["--span", "0", "1e9"], ["--span", "0.001 to 50 eV wide"]),
    (VOLCANO + ["--span", "0", "1e-9"], ["--span", "0.001 to 50 eV wide"]),
    (POURBAIX + ["--range", "0", "nan"], ["--range", "'nan' is not a finite number"]),
    (POURBAIX + ["--range", "2", "-1"], ["--range", "UMIN must be below UMAX"]),
    (POURBAIX + ["--range", "0", "1e9"], ["--range", "give at most 20 V"]),  # was a 3.6 TiB allocation
    (POURBAIX + ["--tolerance", "-1"], ["--tolerance", "eV >= 0"]),
    (POURBAIX + ["--pH", "inf"], ["--pH", "finite"]),
    (CURRENTS + ["--potentials", "0", "nan", "0.1"], ["--potentials", "finite"]),  # was an internal error
    (CURRENTS + ["--symmetry-factor", "nan"], ["--symmetry-factor", "finite"]),
    (ROBUSTNESS + ["--sigma", "inf"], ["--sigma", "finite"]),
    (ROBUSTNESS + ["--sigma-of", "Q*=0.1"], ["--sigma-of 'Q*'", "cannot read 'Q'"]),
    (ROBUSTNESS + ["--sigma-of", "CO*=0.1"], ["--sigma-of gives no standard deviation for O*, OH*, OOH*", "--sigma"]),
])
def test_numeric_options_out_of_range(capsys, argv, fragments):
    fails(capsys, argv, *fragments)


@pytest.mark.parametrize("argv", [TABLE + ["--pH", "20"], TABLE + ["-T", "5000"]])
def test_engine_ranges_reach_the_cli_as_one_line(capsys, argv):
    line = fails(capsys, argv)
    assert "pH" in line or "temperature" in line.lower()


# -- scales: one spelling rule everywhere ----------------------------------------------------------
@pytest.mark.parametrize("argv", [TABLE, ROUTES + ["--surface", "ALY-01"], VOLCANO + ["--json"]])
def test_scale_is_case_insensitive_on_every_command(capsys, argv):
    code, out, err = run(capsys, argv + ["--scale", "she"])
    assert code == 0, err
    assert "SHE" in out


@pytest.mark.parametrize("argv", [TABLE, ROUTES, VOLCANO, REPORT + ["-o", "x.html"]])
def test_unknown_scale_is_refused_everywhere(capsys, argv):
    fails(capsys, argv + ["--scale", "AgCl"], "--scale", "'AGCL'", "RHE", "SHE")


# -- did you mean ---------------------------------------------------------------------------------
@pytest.mark.parametrize("argv, fragments", [
    (["table", DEMO, "--pathwya", "orr-4e"], ["'--pathwya'", "did you mean '--pathway'"]),
    (["report", DEMO, "--pathway", "orr-4e", "--temprature", "300"], ["'--temprature'", "did you mean '--temperature'"]),
    (["volcano", DEMO, "-p", "orr-4e", "--descripter", "OH*"], ["'--descripter'", "did you mean '--descriptor'"]),
    (["routes", DEMO, "--fron", "CO2"], ["'--fron'", "did you mean '--from'"]),
    (["table", DEMO, "--path", "orr-4e"], ["ambiguous option '--path'", "--pathway or --pathway-file"]),
    (["table", DEMO, "-p", "orr-4e", "--forse"], ["'--forse'", "did you mean '--force'"]),
    (["thermo", "3650", "--unti", "cm^-1"], ["'--unti'", "did you mean '--unit'"]),
    (["tabel", DEMO], ["unknown command 'tabel'", "did you mean 'table'"]),
    (["raport", DEMO], ["unknown command 'raport'", "did you mean 'report'"]),
    (["table", DEMO, "-p", "orr-4"], ["'orr-4'", "did you mean 'orr-4e'", "known keys"]),
    (["table", DEMO, "-p", "co2rr-ch5"], ["'co2rr-ch5'", "did you mean 'co2rr-ch4'"]),
    (["pathways", "--steps", "nrr-distl"], ["'nrr-distl'", "did you mean 'nrr-distal'"]),
    (["table", DEMO, "-p", "orr-4e", "--surface", "ALY-1"], ["--surface 'ALY-1'", "did you mean 'ALY-01'"]),
    (["routes", DEMO, "--from", "CO2", "--surface", "SAS-3"], ["--surface 'SAS-3'", "did you mean"]),
    (["volcano", DEMO, "-p", "orr-4e", "-d", "OH*", "--surface", "ALY-01", "ALY-2"], ["'ALY-2'", "did you mean"]),
    (["report", DEMO, "-p", "oer-4"], ["did you mean 'oer-4e'"]),
    (["volcano", DEMO, "-p", "orr4e", "-d", "OH*"], ["did you mean 'orr-4e'"]),
    (["volcano", DEMO, "-p", "orr-4e", "-d", "OHH*"], ["--descriptor 'OHH*'", "did you mean 'OH*'"]),
    (["volcano", DEMO, "-p", "orr-4e", "-d", "O* - OHH*"], ["no energies of OHH*", "did you mean 'OH*'"]),
    (["volcano", DEMO, "-p", "orr-4e", "-d", "OH*", "--fit-against", "OOHH*"], ["--fit-against", "did you mean 'OOH*'"]),
    (["volcano", DEMO, "-p", "orr-4e", "-d", "OH*", "--fix-slope", "OOOH*=1"], ["--fix-slope", "did you mean 'OOH*'"]),
    (["routes", DEMO, "--from", "CO2", "--allow", "COOHH*", "CO*"], ["--allow 'COOHH*'", "did you mean 'COOH*'"]),
    (["routes", DEMO, "--from", "CO2", "--to", "CH5"], ["no molecule 'CH5'", "did you mean 'CH4(g)'"]),
    (["routes", DEMO, "--from", "CO3"], ["no molecule 'CO3'", "did you mean"]),
])
def test_did_you_mean(capsys, argv, fragments):
    fails(capsys, argv, *fragments)


def test_abbreviated_options_still_work(capsys):
    code, out, err = run(capsys, ["table", DEMO, "-p", "orr-4e", "--deci", "2", "--surf", "ALY-01"])
    assert code == 0, err
    assert "ALY-01,orr-4e" in out


# -- formats, missing pieces, conflicting choices --------------------------------------------------
@pytest.mark.parametrize("argv, fragments", [
    (["table", DEMO], ["give at least one --pathway KEY or --pathway-file FILE"]),
    (TABLE + ["--format", "xlsx"], ["--format", "invalid choice", "csv"]),
    (TABLE + ["-o", "out.xlsx"], ["'out.xlsx'", ".csv", ".md"]),
    (TABLE + ["-o", "out.csv", "--format", "markdown"], ["--format markdown", "extension", "out.csv"]),
    (TABLE + ["-o", "out"], ["'out'", "no extension", ".csv"]),
    (ROUTES + ["--format", "yaml"], ["--format", "invalid choice"]),
    (["volcano", DEMO, "-d", "OH*"], ["give one pathway: --pathway KEY or --pathway-file FILE"]),
    (["report", DEMO, "-o", "r.html"], ["give at least one --pathway KEY"]),
    (["thermo", "3650"], ["declared unit"]),
    (THERMO + ["--gas", "H2"], ["either frequencies or --gas"]),
    (["thermo", "3650", "--unit", "Hz"], ["--unit", "invalid choice"]),
    (["report", DEMO, "-p", "orr-4e", "--volcano", "orr-4e", "-o", "r.html"], ["expected KEY=DESCRIPTOR"]),
    (["report", DEMO, "-p", "orr-4e", "--routes", "CO2-CH4", "-o", "r.html"], ["expected REACTANT:PRODUCT"]),
    (VOLCANO + ["--fix-slope", "OOH*"], ["--fix-slope", "ADSORBATE=SLOPE"]),
])
def test_bad_choices_and_missing_pieces(capsys, argv, fragments, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    fails(capsys, argv, *fragments)
    assert not list(tmp_path.iterdir())  # nothing written


@pytest.mark.parametrize("command", ["table", "report", "volcano", "routes"])
def test_missing_energy_file_names_it(capsys, tmp_path, command):
    missing = tmp_path / "nope.csv"
    extra = {"table": ["-p", "orr-4e"], "report": ["-p", "orr-4e", "-o", str(tmp_path / "r.html")],
             "volcano": ["-p", "orr-4e", "-d", "OH*"], "routes": ["--from", "CO2"]}[command]
    fails(capsys, [command, missing, *extra], str(missing), "file not found")


@pytest.mark.parametrize("command", ["table", "routes"])
def test_energy_file_that_is_a_folder(capsys, tmp_path, command):
    extra = {"table": ["-p", "orr-4e"], "routes": ["--from", "CO2"]}[command]
    fails(capsys, [command, tmp_path, *extra], "is a folder")


def test_ten_megabyte_value_is_not_echoed_in_full(capsys):
    huge = "x" * 10_000_000
    line = fails(capsys, ["table", DEMO, "-p", huge])
    assert "characters)" in line and len(line) < 2000


def test_ten_kilobyte_surface_name_is_cut(capsys):
    line = fails(capsys, ["table", DEMO, "-p", "orr-4e", "--surface", "S" * 10_000])
    assert "(10000 characters)" in line and len(line) < 2000


def test_control_characters_are_shown_escaped(capsys):
    line = fails(capsys, ["table", DEMO, "-p", "orr\x00\n4e"])
    assert "\\x00" in line and "\\n" in line


def test_version_is_fast_path(capsys):
    import sys

    before = set(sys.modules)
    code, out, _ = run(capsys, ["--version"])
    assert code == 0 and out.startswith("ecatlab ")
    assert not {m for m in set(sys.modules) - before if m.startswith(("pandas", "matplotlib", "scipy", "pymatgen"))}


def test_only_the_used_subcommand_module_is_imported():
    import subprocess
    import sys

    code = ("import sys; from ecatlab.cli import build_parser; build_parser(['pathways']); "
            "print(sorted(m for m in sys.modules if m.startswith('ecatlab.cli.')))")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60)
    assert proc.stdout.strip() == "['ecatlab.cli._options', 'ecatlab.cli.table']", proc.stdout + proc.stderr


def test_new_subcommand_files_are_still_discovered(tmp_path, monkeypatch, capsys):
    import ecatlab.cli as cli

    plugin = tmp_path / "hello_plugin.py"
    plugin.write_text(
        "def register(sub):\n    p = sub.add_parser('hello_plugin')\n    p.set_defaults(func=lambda a: print('hi') or 0)\n"
    )
    monkeypatch.setattr(cli, "__path__", [*cli.__path__, str(tmp_path)])
    monkeypatch.syspath_prepend(str(tmp_path))
    import importlib

    real = importlib.import_module

    def fake(name, package=None):
        return real("hello_plugin") if name == "ecatlab.cli.hello_plugin" else real(name, package)

    monkeypatch.setattr(cli.importlib, "import_module", fake)
    code, out, _ = run(capsys, ["hello_plugin"])
    assert code == 0 and out == "hi\n"


def test_scale_option_accepted_in_report_command_line(capsys, tmp_path):
    # the report parses and validates before computing: a wrong output extension is refused even with --scale she
    energies = copy_demo(tmp_path)
    fails(capsys, ["report", energies, "-p", "orr-4e", "--scale", "she", "-o", tmp_path / "r.txt"], "extension .txt", ".html", inputs=[energies])
