"""Where a result came from: file digest, versions, seed, trials, date, conventions."""

from __future__ import annotations

import datetime as _dt
import platform
from importlib import metadata
from typing import Any

__all__ = ["describe", "versions"]

_LIBRARIES = ("numpy", "scipy", "sympy", "pint", "pandas", "jinja2")


def versions() -> dict[str, str]:
    from . import __version__

    found = {"budget": __version__, "python": platform.python_version()}
    for name in _LIBRARIES:
        found[name] = _version(name)
    return found


def _version(name: str) -> str:
    try:
        return metadata.version(name)
    except metadata.PackageNotFoundError:
        return "not installed"


def files(model: Any) -> list[dict[str, str]]:
    """Every file that fed the model (model, register, …) with its SHA-256 digest.

    For a what-if (a changed copy), the model file's role says that its digest is that of
    the file before the changes, never the result's own.
    """
    changed = bool(getattr(model, "changes", ()))
    return [{"role": f"{role} (before the changes)" if changed and role == "model" else role,
             "path": path, "sha256": digest}
            for role, path, digest in model.files]


def _generator(simulation: Any) -> str | None:
    """How the Monte Carlo numbers were drawn (None without Monte Carlo)."""
    if not simulation or not simulation.trials:
        return None
    from ._montecarlo import BLOCK, GENERATOR, NORMALS

    return (f"numpy {GENERATOR}, one stream per block of at most {BLOCK} trials seeded "
            f"by SeedSequence(seed, spawn_key=(block,)); standard normals by a {NORMALS}")


def describe(model: Any, simulation: Any = None) -> dict[str, Any]:
    used = any(i.molar_mass is not None for i in model.inputs)
    changed = bool(model.changes)
    return {
        "model_file": model.source,
        "model_sha256": None if changed else model.sha256,
        "files": files(model),
        "changes": list(model.changes),
        "versions": versions(),
        "seed": simulation.seed if simulation else model.settings.seed,
        "trials": simulation.trials if simulation else 0,
        "adaptive": bool(simulation and simulation.adaptive),
        "random_generator": _generator(simulation),
        "date": _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC"),
        "atomic_weights": model.settings.atomic_weights if used else None,
        "machine": f"{platform.system()} {platform.machine()}",
    }
