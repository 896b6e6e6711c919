"""Nothing lost, nothing half-written: output files under hostile conditions.

Existing files are never replaced without --force, an input is never an output, targets are checked
before anything is computed or printed, and a write that fails midway leaves the old file intact
and no temporary file behind (simulated with a patched os.replace, a render error and, in one
subprocess, a file-size limit RLIMIT_FSIZE).
"""

from __future__ import annotations

import os
import pathlib
import subprocess
import sys

import matplotlib

matplotlib.use("Agg")

import pytest  # noqa: E402

from _hostile import DEMO, copy_demo, fails, no_temp_files, run, sha, tree_state  # noqa: E402

PRECIOUS = "my thesis table, do not lose\n"


@pytest.fixture
def energies(tmp_path):
    return copy_demo(tmp_path)


@pytest.fixture
def existing(tmp_path):
    def make(name):
        p = tmp_path / name
        p.write_text(PRECIOUS)
        return p
    return make


# -- no overwrite without --force (every command) ------------------------------------------------
@pytest.mark.parametrize("name, argv", [
    ("t.csv", ["table", "{E}", "-p", "orr-4e", "-o", "{O}"]),
    ("t.md", ["table", "{E}", "-p", "orr-4e", "-o", "{O}"]),
    ("r.html", ["report", "{E}", "-p", "orr-4e", "-o", "{O}"]),
    ("v.svg", ["volcano", "{E}", "-p", "orr-4e", "-d", "OH*", "-o", "{O}"]),
    ("net.svg", ["routes", "{E}", "--from", "CO2", "--to", "CH4", "--figure", "{O}"]),
    ("routes.csv", ["routes", "{E}", "--from", "CO2", "--to", "CH4", "-o", "{O}"]),
    ("thermo.csv", ["thermo", "3650", "--unit", "cm^-1", "-o", "{O}"]),
    ("e.csv", ["ingest", "{E}", "-o", "{O}"]),
])
def test_existing_output_is_kept_without_force(capsys, energies, existing, name, argv):
    out = existing(name)
    argv = [a.replace("{E}", str(energies)).replace("{O}", str(out)) for a in argv]
    fails(capsys, argv, str(out), "already exists", "--force", inputs=[energies, out])
    assert out.read_text() == PRECIOUS and no_temp_files(out.parent)


@pytest.mark.parametrize("argv", [
    ["table", "{E}", "-p", "orr-4e", "-o", "{E}"],
    ["table", "{E}", "-p", "orr-4e", "-o", "{E}", "--force"],
    ["report", "{E}", "-p", "orr-4e", "-o", "{E}", "--force"],
    ["routes", "{E}", "--from", "CO2", "-o", "{E}", "--force"],
    ["ingest", "{E}", "-o", "{E}", "--force"],
])
def test_output_onto_the_input_csv_is_refused_even_with_force(capsys, energies, argv):
    argv = [a.replace("{E}", str(energies)) for a in argv]
    fails(capsys, argv, "is the input file", "Choose another output name", inputs=[energies])


def test_report_onto_the_input_csv_is_refused_even_with_html_suffix(capsys, tmp_path):
    energies = copy_demo(tmp_path, "energies.html")  # an energy table that happens to be named .html
    fails(capsys, ["report", energies, "-p", "orr-4e", "-o", energies, "--force"], "is the input file", inputs=[energies])


def test_input_reached_by_another_spelling_is_refused(capsys, energies, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "sub").mkdir()
    fails(capsys, ["table", energies, "-p", "orr-4e", "-o", "sub/../energies.csv", "--force"], "is the input file", inputs=[energies])


def test_input_through_a_symlink_is_refused(capsys, energies, tmp_path):
    link = tmp_path / "link.csv"
    link.symlink_to(energies)
    fails(capsys, ["table", energies, "-p", "orr-4e", "-o", link, "--force"], "is the input file", inputs=[energies])


def test_input_through_a_hard_link_is_refused(capsys, energies, tmp_path):
    hard = tmp_path / "hard.csv"
    os.link(energies, hard)
    fails(capsys, ["table", energies, "-p", "orr-4e", "-o", hard, "--force"], "is the input file", inputs=[energies])


def test_pathway_file_as_report_output_is_refused(capsys, energies, tmp_path):
    import ecatlab

    pw = tmp_path / "mine.html"
    pw.write_text(ecatlab.pathway("orr-4e").to_text())
    fails(capsys, ["report", energies, "--pathway-file", pw, "-o", pw, "--force"], "is the input file", inputs=[energies, pw])


def test_relations_file_as_volcano_output_is_refused(capsys, energies, tmp_path):
    rel = tmp_path / "rel.svg"
    rel.write_text("[]")
    fails(capsys, ["volcano", energies, "-p", "orr-4e", "-d", "OH*", "--relations", rel, "-o", rel, "--force"], "is the input file",
          inputs=[energies, rel])


def test_routes_figure_and_table_cannot_share_a_name(capsys, energies, tmp_path):
    fails(capsys, ["routes", energies, "--from", "CO2", "-o", tmp_path / "x.svg", "--figure", tmp_path / "x.svg"])


# -- output path checked before anything is computed or printed ----------------------------------
@pytest.mark.parametrize("argv, fragment", [
    (["volcano", "{E}", "-p", "orr-4e", "-d", "OH*", "-o", "{T}/v.jpeg"], "extension .jpeg"),
    (["volcano", "{E}", "-p", "orr-4e", "-d", "OH*", "-o", "{T}/v"], "no extension"),
    (["routes", "{E}", "--from", "CO2", "--figure", "{T}/n.gif"], "extension .gif"),
    (["report", "{E}", "-p", "orr-4e", "-o", "{T}/r.pdf"], "extension .pdf"),
    (["ingest", "{E}", "-o", "{T}/e.xlsx"], "extension .xlsx"),
    (["thermo", "3650", "--unit", "cm^-1", "-o", "{T}/t.json"], "extension .json"),
    (["table", "{E}", "-p", "orr-4e", "-o", "{T}"], "is a folder"),
    (["report", "{E}", "-p", "orr-4e", "-o", "{T}/"], "is a folder"),
    (["table", "{E}", "-p", "orr-4e", "-o", "{E}/x.csv"], "is a file, not a folder"),
    (["table", "{E}", "-p", "orr-4e", "-o", "{T}/bad\x07name.csv"], "control characters"),
    (["table", "{E}", "-p", "orr-4e", "-o", ""], "empty file name"),
    (["demo", "-o", "{E}"], "not a folder"),
])
def test_bad_output_paths_fail_before_any_work(capsys, energies, tmp_path, argv, fragment):
    before = tree_state(tmp_path)
    argv = [a.replace("{E}", str(energies)).replace("{T}", str(tmp_path)) for a in argv]
    fails(capsys, argv, fragment, inputs=[energies])
    assert tree_state(tmp_path) == before


def test_unwritable_folder_is_named(capsys, energies, tmp_path):
    locked = tmp_path / "locked"
    locked.mkdir()
    locked.chmod(0o500)
    try:
        if os.access(locked, os.W_OK):
            pytest.skip("running as a user who can write anywhere (root)")
        fails(capsys, ["table", energies, "-p", "orr-4e", "-o", locked / "t.csv"], "not writable")
    finally:
        locked.chmod(0o700)


@pytest.mark.parametrize("argv", [
    ["table", "{E}", "-p", "orr-4e", "-o", "{T}/new/deeper/t.csv"],
    ["thermo", "3650", "--unit", "cm^-1", "-o", "{T}/new/deeper/t.csv"],
])
def test_missing_output_folders_are_created_the_same_way_everywhere(capsys, energies, tmp_path, argv):
    argv = [a.replace("{E}", str(energies)).replace("{T}", str(tmp_path)) for a in argv]
    code, out, err = run(capsys, argv)
    assert code == 0, err
    assert (tmp_path / "new" / "deeper" / "t.csv").is_file() and "wrote" in out


def test_force_replaces_atomically(capsys, energies, existing):
    out = existing("t.csv")
    code, printed, err = run(capsys, ["table", energies, "-p", "orr-4e", "-o", out, "--force"])
    assert code == 0, err
    assert out.read_text().startswith("# ILLUSTRATIVE data") and "Limiting potentials" in out.read_text().splitlines()[0]
    assert no_temp_files(out.parent)


def test_table_o_writes_what_the_screen_shows(capsys, energies, tmp_path):
    for fmt in ("csv", "markdown", "latex", "html", "json"):
        code, shown, _ = run(capsys, ["table", energies, "-p", "orr-4e", "--format", fmt])
        assert code == 0
        suffix = {"markdown": "md", "latex": "tex"}.get(fmt, fmt)
        target = tmp_path / f"t.{suffix}"
        code, _, err = run(capsys, ["table", energies, "-p", "orr-4e", "-o", target])
        assert code == 0, err
        assert target.read_text(encoding="utf-8") == shown


def test_demo_twice_needs_force(capsys, tmp_path, monkeypatch):
    import ecatlab.cli.demo as demo

    folder = tmp_path / "demo-out"
    folder.mkdir()
    (folder / demo.MARKER).write_text("{}")
    (folder / "report.html").write_text(PRECIOUS)
    fails(capsys, ["demo", "-o", folder], "earlier demo run", "--force")
    assert (folder / "report.html").read_text() == PRECIOUS


# -- writes that fail midway ----------------------------------------------------------------------
def test_failed_rename_keeps_the_old_file_and_leaves_no_temp(capsys, energies, existing, monkeypatch):
    out = existing("t.csv")

    def broken_replace(src, dst):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(os, "replace", broken_replace)
    fails(capsys, ["table", energies, "-p", "orr-4e", "-o", out, "--force"], "No space left on device", inputs=[energies])
    assert out.read_text() == PRECIOUS and no_temp_files(out.parent)


def test_failed_render_keeps_the_old_figure(capsys, energies, existing, monkeypatch):
    from ecatlab.plotting import export

    out = existing("v.svg")

    def half_written(fig, target, fmt, dpi, transparent):
        pathlib.Path(target).write_text("<svg half")
        raise OSError(27, "File too large")

    monkeypatch.setattr(export, "_savefig", half_written)
    fails(capsys, ["volcano", energies, "-p", "orr-4e", "-d", "OH*", "-o", out, "--force"], "File too large", inputs=[energies])
    assert out.read_text() == PRECIOUS and no_temp_files(out.parent)


def test_failed_figure_write_leaves_no_routes_table(capsys, energies, tmp_path, monkeypatch):
    from ecatlab.plotting import export

    def broken(fig, target, fmt, dpi, transparent):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(export, "_savefig", broken)
    table = tmp_path / "routes.csv"
    fails(capsys, ["routes", energies, "--from", "CO2", "--to", "CH4", "--surface", "ALY-01", "-o", table,
                   "--figure", tmp_path / "net.svg"], "No space left on device", inputs=[energies])
    assert not table.exists() and not (tmp_path / "net.svg").exists() and no_temp_files(tmp_path)


def test_api_writers_leave_no_temp_on_error(tmp_path, monkeypatch):
    from ecatlab import safe_io

    target = tmp_path / "x.txt"
    target.write_text(PRECIOUS)
    with pytest.raises(RuntimeError):
        with safe_io.atomic_path(target, force=True) as tmp:
            tmp.write_text("partial")
            raise RuntimeError("renderer crashed")
    assert target.read_text() == PRECIOUS and no_temp_files(tmp_path)


_FSIZE_SCRIPT = r"""
import resource, sys
resource.setrlimit(resource.RLIMIT_FSIZE, (4096, 4096))
from ecatlab.cli import main
sys.exit(main(sys.argv[1:]))
"""


@pytest.mark.skipif(sys.platform == "win32", reason="RLIMIT_FSIZE is POSIX")
def test_file_size_limit_midway_keeps_old_report_and_table(tmp_path):
    energies = copy_demo(tmp_path)
    table = tmp_path / "t.md"
    table.write_text(PRECIOUS)
    before = sha(energies)
    env = dict(os.environ, PYTHONPATH=str(pathlib.Path(__file__).resolve().parents[1]))
    proc = subprocess.run([sys.executable, "-c", _FSIZE_SCRIPT, "table", str(energies), "-p", "orr-4e", "oer-4e",
                           "-o", str(table), "--force"], capture_output=True, text=True, timeout=120, env=env)
    assert proc.returncode == 2, proc.stderr
    assert "Traceback" not in proc.stderr and len(proc.stderr.strip().splitlines()) == 1
    assert "File too large" in proc.stderr or "[Errno 27]" in proc.stderr
    assert table.read_text() == PRECIOUS and sha(energies) == before and no_temp_files(tmp_path)


# -- API writers: same rules -----------------------------------------------------------------------
def test_export_table_refuses_to_overwrite(tmp_path):
    from ecatlab import limiting_potentials
    from ecatlab.demo import demo_energies
    from ecatlab.errors import EcatlabError, OutputExistsError
    from ecatlab.tables import export_table, limiting_potential_table

    t = limiting_potential_table(limiting_potentials(demo_energies(), "orr-4e"))
    out = tmp_path / "t.csv"
    out.write_text(PRECIOUS)
    with pytest.raises(OutputExistsError, match="force") as info:
        export_table(t, out)
    assert isinstance(info.value, EcatlabError) and isinstance(info.value, FileExistsError)
    assert out.read_text() == PRECIOUS
    export_table(t, out, force=True)
    assert out.read_text() != PRECIOUS


def test_save_figure_checks_before_drawing(tmp_path):
    from ecatlab.errors import OutputExistsError, OutputPathError
    from ecatlab.plotting.export import save_figure

    class Fig:
        def savefig(self, *a, **k):
            raise AssertionError("drawn although the target was bad")

    (tmp_path / "a.png").write_text(PRECIOUS)
    with pytest.raises(OutputExistsError):
        save_figure(Fig(), tmp_path / "a", formats=("svg", "png"))  # a.png exists: a.svg is not written either
    assert not (tmp_path / "a.svg").exists()
    with pytest.raises(OutputPathError, match="jpeg"):
        save_figure(Fig(), tmp_path / "b.jpeg")
    with pytest.raises(OutputPathError, match="dpi"):
        save_figure(Fig(), tmp_path / "b.png", dpi=float("nan"))


def test_write_report_checks_before_computing(tmp_path, monkeypatch):
    import ecatlab.report as report
    from ecatlab.errors import OutputExistsError, OutputPathError

    def never(*a, **k):
        raise AssertionError("computed although the target was bad")

    monkeypatch.setattr(report, "build_report", never)
    energies = copy_demo(tmp_path)
    with pytest.raises(OutputPathError, match="is the input file"):
        report.write_report(energies, energies, "orr-4e", force=True)
    (tmp_path / "r.html").write_text(PRECIOUS)
    with pytest.raises(OutputExistsError):
        report.write_report(tmp_path / "r.html", energies, "orr-4e")
    with pytest.raises(OutputPathError, match="extension .txt"):
        report.write_report(tmp_path / "r.txt", energies, "orr-4e")
    assert (tmp_path / "r.html").read_text() == PRECIOUS
