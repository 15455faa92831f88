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
    _check_folders(target, [name for name, _ in files])
    written: list[Path] = []
    made: list[Path] = []  # folders this call created, removed again on failure
    try:
        for name, source in files:
            path = target / name
            for folder in reversed(path.relative_to(target).parents):
                if not (target / folder).exists():
                    (target / folder).mkdir()
                    made.append(target / folder)
            with source.open("rb") as incoming, open(path, "xb") as outgoing:
                written.append(path)
                shutil.copyfileobj(incoming, outgoing)
    except BaseException:  # nothing half-copied: what this call wrote goes again
        for path in written:
            path.unlink(missing_ok=True)
        for folder in reversed(made):
            folder.rmdir()
        raise
    return written


def _check_folders(target: Path, names: list[str]) -> None:
    """Refuse, before copying anything, a file where the demo needs a folder."""
    if target.exists() and not target.is_dir():
        raise InputError("expected a folder for the demo files, found a file",
                         Location(file=str(target)))
    folders = sorted({str(p) for name in names for p in Path(name).parents if str(p) != "."})
    for folder in folders:
        if (target / folder).exists() and not (target / folder).is_dir():
            raise InputError(f"expected a folder '{folder}' for the demo files, found a file "
                             "of that name; nothing was copied", Location(file=str(target)))
