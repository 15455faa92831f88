"""The demo and reference models with their data, copied out for a new user.

They are installed with the package as ``budget.demo`` (the repository's ``models/``
folder). ``budget demo DIR`` copies them into DIR without overwriting anything.
"""

from __future__ import annotations

import shutil
from importlib import resources
from importlib.abc import Traversable
from pathlib import Path

from ._errors import InputError, Location

__all__ = ["demo_root", "demo_files", "copy_demo"]

_KINDS = (".toml", ".csv", ".xlsx")


def demo_root() -> Traversable:
    """The installed demo folder (in a source checkout: the repository's ``models/``)."""
    try:
        return resources.files("budget.demo")
    except ModuleNotFoundError:  # an older editable install that does not map it
        return Path(__file__).resolve().parent.parent / "models"


def demo_files(root: Traversable | None = None, prefix: str = "") -> list[tuple[str, Traversable]]:
    """(relative path, file) of every model and data file, sorted."""
    root = demo_root() if root is None else root
    found: list[tuple[str, Traversable]] = []
    for entry in root.iterdir():
        name = f"{prefix}{entry.name}"
        if entry.is_dir() and not entry.name.startswith(("_", ".")):
            found += demo_files(entry, name + "/")
        elif entry.is_file() and entry.name.endswith(_KINDS):
            found.append((name, entry))
    return sorted(found, key=lambda item: item[0])


def copy_demo(target: str | Path) -> list[Path]:
    """Copy every demo file into ``target``; refuse if any of them is already there."""
    target = Path(target)
    files = demo_files()
    clashes = [name for name, _ in files if (target / name).exists()]
    if clashes:
        raise InputError(f"expected a folder without the demo files, found {len(clashes)} "
                         f"of them already there (for example '{clashes[0]}'); nothing "
                         "was copied", Location(file=str(target)))
    written = []
    for name, source in files:
        path = target / name
        path.parent.mkdir(parents=True, exist_ok=True)
        with source.open("rb") as incoming, open(path, "xb") as outgoing:
            shutil.copyfileobj(incoming, outgoing)
        written.append(path)
    return written
