"""Where a result came from: file digest, versions, seed, trials, date, conventions."""

from __future__ import annotations

import datetime as _dt
import platform
from importlib import metadata
from typing import Any

__all__ = ["describe", "versions"]

_LIBRARIES = ("numpy", "scipy", "sympy", "pint", "pandas", "jinja2")


def versions() -> dict[str, str]:
    found = {"budget": _version("budget"), "python": platform.python_version()}
    for name in _LIBRARIES:
        found[name] = _version(name)
    return found


def _version(name: str) -> str:
    try:
        return metadata.version(name)
    except metadata.PackageNotFoundError:
        return "not installed"


def describe(model: Any, simulation: Any = None) -> dict[str, Any]:
    used = any(i.molar_mass is not None for i in model.inputs)
    return {
        "model_file": model.source,
        "model_sha256": model.sha256,
        "versions": versions(),
        "seed": simulation.seed if simulation else model.settings.seed,
        "trials": simulation.trials if simulation else 0,
        "adaptive": bool(simulation and simulation.adaptive),
        "date": _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC"),
        "atomic_weights": model.settings.atomic_weights if used else None,
        "machine": f"{platform.system()} {platform.machine()}",
    }
