"""Packaging facts that a test can check without building: every imported package is
declared, the version has one source, the licence is stated and shipped, the demo files
are package data, and the sdist manifest holds what the tests need."""

from __future__ import annotations

import ast
import re
import sys
import tomllib
from pathlib import Path

import budget
from conftest import ROOT

PROJECT = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
# import name -> distribution name, where they differ
_DISTRIBUTION = {"yaml": "pyyaml"}


def _declared() -> set[str]:
    project = PROJECT["project"]
    wanted = [*project["dependencies"],
              *(d for extra in project["optional-dependencies"].values() for d in extra)]
    return {re.split(r"[<>=!~\[ ;]", item, maxsplit=1)[0].lower() for item in wanted}


def _imported() -> set[str]:
    found = set()
    for path in (ROOT / "budget").rglob("*.py"):
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.Import):
                found |= {alias.name.split(".")[0] for alias in node.names}
            elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
                found.add(node.module.split(".")[0])
    return {name for name in found
            if name not in sys.stdlib_module_names and name not in ("budget", "__future__")}


def test_every_imported_package_is_declared() -> None:
    missing = {_DISTRIBUTION.get(n, n) for n in _imported()} - _declared()
    assert not missing, f"imported but not declared in pyproject.toml: {sorted(missing)}"
    runtime = {re.split(r"[<>=]", d)[0] for d in PROJECT["project"]["dependencies"]}
    assert "markupsafe" in runtime  # imported by the report itself, not only via jinja2


def test_distribution_name_version_and_licence() -> None:
    project = PROJECT["project"]
    assert project["name"] == "budget-gum"  # 'budget' belongs to another project
    assert PROJECT["project"]["scripts"] == {"budget": "budget._cli:console"}
    assert PROJECT["tool"]["setuptools"]["dynamic"]["version"] == {
        "attr": "budget.__version__"}
    assert re.fullmatch(r"\d+\.\d+\.\d+", budget.__version__)
    assert project["license"] == "MIT"
    assert (ROOT / "LICENSE").read_text(encoding="utf-8").startswith("MIT License")
    assert any(c.startswith("Typing :: Typed") for c in project["classifiers"])
    assert (ROOT / "budget" / "py.typed").exists()


def test_the_demo_is_package_data() -> None:
    setuptools = PROJECT["tool"]["setuptools"]
    assert setuptools["package-dir"]["budget.demo"] == "models"
    patterns = setuptools["package-data"]["budget.demo"]
    for path in (ROOT / "models").rglob("*"):
        if path.is_file() and path.suffix in (".toml", ".csv", ".xlsx"):
            relative = path.relative_to(ROOT / "models")
            assert any(relative.match(p) and len(relative.parts) == len(Path(p).parts)
                       for p in patterns), f"{relative} would not be installed"


def test_the_sdist_manifest_holds_what_the_tests_read() -> None:
    manifest = (ROOT / "MANIFEST.in").read_text(encoding="utf-8")
    for needed in ("recursive-include tests *.py", "recursive-include docs *.md",
                   "recursive-include models *.toml *.csv", "include LICENSE README.md"):
        assert needed in manifest
