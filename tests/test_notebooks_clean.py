"""Committed notebooks carry no outputs, no execution counts and generic kernel metadata."""

from __future__ import annotations

import json
import pathlib

import pytest

ROOT = pathlib.Path(__file__).resolve().parents[1]
NOTEBOOKS = sorted((ROOT / "notebooks").glob("*.ipynb"))


def test_there_are_notebooks():
    assert len(NOTEBOOKS) >= 5


@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.name)
def test_notebook_is_stripped(path):
    nb = json.loads(path.read_text(encoding="utf-8"))
    for i, cell in enumerate(nb["cells"]):
        if cell["cell_type"] == "code":
            assert cell.get("outputs") == [], f"{path.name} cell {i} has outputs; strip them before committing"
            assert cell.get("execution_count") is None, f"{path.name} cell {i} has an execution count"
    assert nb["metadata"]["kernelspec"]["name"] == "python3"
    assert "widgets" not in nb["metadata"], f"{path.name} stores widget state; strip it"


@pytest.mark.parametrize("path", NOTEBOOKS, ids=lambda p: p.name)
def test_notebook_says_illustrative(path):
    text = path.read_text(encoding="utf-8")
    assert "Illustrative data" in text and "must not be cited" in text
