"""Shared helpers: models from strings, the CLI run in process."""

from __future__ import annotations

import textwrap
from pathlib import Path

import pytest
from click.testing import CliRunner

from budget._cli import main
from budget._model import parse_model

ROOT = Path(__file__).resolve().parent.parent
MODELS = ROOT / "models"


def model(text: str, name: str = "test.toml", **overrides):
    """A model parsed from an indented TOML string."""
    return parse_model(textwrap.dedent(text), name=name, **overrides)


@pytest.fixture
def cli():
    """Run ``budget`` in process; returns (exit code, stdout, stderr)."""
    runner = CliRunner()

    def invoke(*args: str):
        result = runner.invoke(main, list(args), catch_exceptions=False)
        return result.exit_code, result.stdout, result.stderr

    return invoke


@pytest.fixture
def restore(monkeypatch):
    """Whatever a test switches between the compiled loops and the numpy path
    (budget/_ziggurat.py), the process's state is put back afterwards."""
    from budget import _ziggurat as zig

    for name in ("_compiled", "_rows", "_held", "_drawn"):
        monkeypatch.setattr(zig, name, getattr(zig, name))
