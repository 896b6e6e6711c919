"""pyproject.toml declares the third-party packages exactly as the code uses them.

The imports are read with ``ast`` (no module is executed); an import name is mapped to its
distribution with ``importlib.metadata.packages_distributions()`` (standard library: the installed
packages' own RECORD metadata), so e.g. ``sklearn`` -> scikit-learn, ``PIL`` -> pillow,
``IPython`` -> ipython. Requirement names are normalised as in PEP 503 (lower case, runs of
``-_.`` -> ``-``).
"""

from __future__ import annotations

import ast
import functools
import importlib.metadata
import pathlib
import re
import sys
import tomllib

ROOT = pathlib.Path(__file__).resolve().parents[1]


def _norm(name: str) -> str:
    return re.sub(r"[-_.]+", "-", name).lower()


def _requirement_name(req: str) -> str:
    return _norm(re.match(r"[A-Za-z0-9_.-]+", req).group(0))


def _declared(reqs) -> set[str]:
    """Distribution names a list of requirements installs directly: each name, plus the packages
    its bracketed extras add (``dask[distributed]`` -> dask, distributed), read from the installed
    distribution's own metadata."""
    out = set()
    for req in reqs:
        name = _requirement_name(req)
        out.add(name)
        extras = re.search(r"\[([^\]]+)\]", req)
        if not extras:
            continue
        wanted = {e.strip() for e in extras.group(1).split(",")}
        for dep in importlib.metadata.requires(name) or []:
            marker = re.search(r"extra\s*==\s*['\"]([^'\"]+)['\"]", dep)
            if marker and marker.group(1) in wanted:
                out.add(_requirement_name(dep))
    return out


def _project():
    return tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))["project"]


def _imports(folder: pathlib.Path) -> dict[str, set[str]]:
    """Top-level module names imported anywhere under ``folder`` -> files (absolute imports only)."""
    found: dict[str, set[str]] = {}
    for path in folder.rglob("*.py"):
        tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
        for node in ast.walk(tree):
            if isinstance(node, ast.Import):
                names = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
                names = [node.module]
            else:
                continue
            for name in names:
                found.setdefault(name.split(".")[0], set()).add(path.relative_to(ROOT).as_posix())
    return found


def _third_party(found: dict[str, set[str]], local: set[str]) -> dict[str, set[str]]:
    std = set(sys.stdlib_module_names)
    return {m: files for m, files in found.items() if m not in std and m not in local and m != "ecatlab"}


@functools.lru_cache(maxsize=1)
def _module_map() -> dict:
    return importlib.metadata.packages_distributions()


def _distributions(module: str) -> set[str]:
    return {_norm(d) for d in _module_map().get(module, [])}


def test_every_runtime_import_is_declared_and_every_core_dependency_is_used():
    project = _project()
    core = _declared(project["dependencies"])
    extras = _declared(r for reqs in project["optional-dependencies"].values() for r in reqs)
    used = _third_party(_imports(ROOT / "ecatlab"), set())
    undeclared = {}
    used_dists = set()
    for module, files in used.items():
        dists = _distributions(module)
        assert dists, f"{module} (imported in {sorted(files)[0]}) is not installed: cannot map it to a distribution"
        used_dists |= dists
        if not dists & (core | extras):
            undeclared[module] = sorted(files)[:3]
    assert not undeclared, f"imported but not declared in pyproject.toml: {undeclared}"
    unused = sorted(core - used_dists)
    assert not unused, f"declared in [project].dependencies but never imported by ecatlab/: {unused}"


def test_optional_imports_are_only_in_optional_modules():
    """A package that is only an extra (ase) is imported in the module that needs it, inside functions."""
    project = _project()
    core = _declared(project["dependencies"])
    used = _third_party(_imports(ROOT / "ecatlab"), set())
    for module, files in used.items():
        if _distributions(module) & core:
            continue
        for rel in files:
            tree = ast.parse((ROOT / rel).read_text(encoding="utf-8"))
            top_level = [n for n in tree.body if isinstance(n, (ast.Import, ast.ImportFrom))
                         and any((getattr(n, "module", None) or a.name).split(".")[0] == module for a in n.names)]
            assert not top_level, f"{rel} imports the optional {module} at module level; import it where it is used"


def test_test_imports_are_declared_in_the_test_extra():
    project = _project()
    declared = _declared(project["dependencies"]) | _declared(
        project["optional-dependencies"]["test"] + project["optional-dependencies"].get("e2e", []))
    local = {p.stem for p in (ROOT / "tests").rglob("*.py")}
    used = _third_party(_imports(ROOT / "tests"), local)
    missing = {m: sorted(f)[:2] for m, f in used.items() if m != "pytest" and not (_distributions(m) & declared)}
    assert not missing, f"tests import packages the test extra does not declare: {missing}"
    assert "tabulate" not in declared  # the table writer is ecatlab's own (no pandas.to_markdown)


def test_no_test_only_writer_ships_in_the_package():
    """The fake-VASP writer lives in tests/, and nothing in the package imports it."""
    assert not (ROOT / "ecatlab" / "ingest" / "synthetic.py").exists()
    assert (ROOT / "tests" / "fake_vasp.py").exists()
    for path in (ROOT / "ecatlab").rglob("*.py"):
        text = path.read_text(encoding="utf-8")
        assert "fake_vasp" not in text and "ingest.synthetic" not in text, path
