"""One vocabulary: every public dataclass of the package spells its attributes with the
names of the vocabulary table in DEVELOPERS.md, never with the JSON contract's short keys
(those belong to the JSON documents and DataFrame columns only)."""

from __future__ import annotations

import dataclasses
import importlib
import pkgutil
import re
from dataclasses import dataclass

import pytest

import budget
from conftest import ROOT

# Short names the table replaces by a spelled-out attribute (name → the table's name).
FORBIDDEN = {
    "u": "standard_uncertainty or combined_uncertainty",
    "u_c": "combined_uncertainty",
    "uc": "combined_uncertainty",
    "U": "expanded_uncertainty",
    "k": "coverage_factor",
    "coverage": "coverage_probability",
    "p": "coverage_probability",
    "value": "estimate (or what the number is: sensitivity, derivative …)",
    "val": "estimate",
    "est": "estimate",
    "x": "estimate",
    "y": "estimate",
    "nu": "dof",
    "nu_eff": "dof",
    "dof_eff": "dof",
    "c": "sensitivity",
    "ci": "sensitivity",
    "index": "share",
    "idx": "share",
    "pct": "share",
    "percent": "share",
    "percentage": "share",
}

# Data arrays of a fit or a record (the abscissa and ordinate columns, not estimates), and
# the float of a number node of an expression graph (a constant as written, not a quantity).
ALLOWED = {("_fits", "Fit", "x"), ("_fits", "Fit", "y"), ("_records", "Series", "x"),
           ("_records", "Series", "y"), ("_algebra", "Node", "value")}


def short_names(cls: type, module: str) -> list[str]:
    """The forbidden attribute names (fields and properties) of one dataclass."""
    names = [f.name for f in dataclasses.fields(cls)]
    names += [n for n, v in vars(cls).items() if isinstance(v, property)]
    return [f"{module}.{cls.__name__}.{n}: use {FORBIDDEN[n]}" for n in names
            if n in FORBIDDEN and (module, cls.__name__, n) not in ALLOWED]


def public_dataclasses() -> list[tuple[str, type]]:
    found = []
    for info in pkgutil.iter_modules(budget.__path__):
        if info.name == "__main__":
            continue
        module = importlib.import_module(f"budget.{info.name}")
        for name, obj in vars(module).items():
            if (isinstance(obj, type) and dataclasses.is_dataclass(obj)
                    and obj.__module__ == module.__name__ and not name.startswith("_")):
                found.append((info.name, obj))
    return found


def test_the_walk_finds_the_result_classes() -> None:
    names = {f"{m}.{c.__name__}" for m, c in public_dataclasses()}
    assert {"_gum.MeasurandBudget", "_difference.MeasurandSide", "_combination.Combined",
            "_chain.Chain", "_recordinputs.Made", "_model.Input",
            "_certification.Certification"} <= names


def test_no_public_dataclass_uses_a_short_name() -> None:
    found = [line for module, cls in public_dataclasses() for line in short_names(cls, module)]
    assert not found, "\n".join(found)


def test_the_check_catches_a_short_name() -> None:
    @dataclass(frozen=True)
    class Slip:
        estimate: float
        u: float
        k: float

        @property
        def index(self) -> float:
            return 0.0

    assert short_names(Slip, "here") == [
        "here.Slip.u: use standard_uncertainty or combined_uncertainty",
        "here.Slip.k: use coverage_factor", "here.Slip.index: use share"]


@pytest.mark.parametrize("name", ["standard_uncertainty", "combined_uncertainty",
                                  "coverage_factor", "expanded_uncertainty",
                                  "coverage_probability", "estimate", "sensitivity",
                                  "derivative", "share", "dof"])
def test_every_attribute_name_used_is_in_the_vocabulary_table(name: str) -> None:
    table = (ROOT / "DEVELOPERS.md").read_text(encoding="utf-8").split("## Vocabulary")[1]
    assert re.search(rf"`(\w+\.)?{name}`", table), name
