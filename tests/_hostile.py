"""Helpers of the hostile-input suite (tests/test_hostile_*.py).

Every CLI case runs ``ecatlab.cli.main`` in-process and checks the contract of docs/bad_input.md:
exit code 2, exactly one error line on stderr that names the culprit and the fix, no traceback,
nothing on stdout (no partial output), and the input files unchanged (SHA-256 before/after).
"""

from __future__ import annotations

import hashlib
import os
import pathlib
import shutil

from ecatlab.cli import main
from ecatlab.demo import demo_path

DEMO = str(demo_path())

# INVENTED energies (eV) for hostile-name cases; G of ORR intermediates roughly like Pt(111) (from memory),
# not literature values; only the names matter here.
ORR_ROWS = (("OH*", 0.8), ("O*", 1.6), ("OOH*", 4.0))


def sha(path) -> str:
    return hashlib.sha256(pathlib.Path(path).read_bytes()).hexdigest()


def tree_state(folder) -> dict[str, str]:
    """Relative path -> hash of every file under ``folder`` (to prove nothing was added or changed)."""
    folder = pathlib.Path(folder)
    return {str(p.relative_to(folder)): sha(p) for p in sorted(folder.rglob("*")) if p.is_file()}


def copy_demo(tmp_path, name: str = "energies.csv") -> pathlib.Path:
    target = pathlib.Path(tmp_path) / name
    shutil.copyfile(DEMO, target)
    return target


def table_with_surfaces(tmp_path, names, name: str = "hostile.csv") -> pathlib.Path:
    """An energy CSV whose surfaces carry the given (hostile) names; cells quoted per RFC 4180."""
    import csv

    path = pathlib.Path(tmp_path) / name
    with open(path, "w", encoding="utf-8", newline="") as fh:
        w = csv.writer(fh)
        w.writerow(["surface", "species", "G"])
        for i, surface in enumerate(names):
            for species, g in ORR_ROWS:
                w.writerow([surface, species, g + 0.01 * i])
    return path


def run(capsys, argv):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


def fails(capsys, argv, *fragments, inputs=(), allow_stdout: bool = False) -> str:
    """Run a command that must be refused; return its one error line."""
    hashes = {str(p): sha(p) for p in (DEMO, *inputs) if pathlib.Path(p).is_file()}  # the bundled table too
    code, out, err = run(capsys, argv)
    assert code == 2, f"exit {code}; stdout={out[:500]!r}; stderr={err[:500]!r}"
    assert "Traceback" not in err and "Traceback" not in out
    lines = [line for line in err.splitlines() if line.strip() and not line.startswith("warning:")]
    assert len(lines) == 1, f"expected one error line, got {lines!r}"
    line = lines[0]
    assert "error:" in line, line
    assert len(line) < 3000, f"error line of {len(line)} characters"
    for fragment in fragments:
        assert fragment in line, f"{fragment!r} not in {line!r}"
    if not allow_stdout:
        assert out == "", f"partial output on stdout: {out[:300]!r}"
    for p, h in hashes.items():
        assert sha(p) == h, f"input {p} changed"
    return line


def no_temp_files(folder) -> bool:
    return not [p for p in pathlib.Path(folder).rglob("*") if p.name.endswith(".part")]


def lines_of(path) -> list[str]:
    return pathlib.Path(path).read_text(encoding="utf-8").splitlines()


__all__ = ["DEMO", "sha", "tree_state", "copy_demo", "table_with_surfaces", "run", "fails", "no_temp_files", "lines_of", "os"]
