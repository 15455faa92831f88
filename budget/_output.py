"""Writing output files safely: checks first, a temporary file beside the target, a rename.

* An interrupted run never leaves a half-written report: the target is either the old file
  or the complete new one (``os.replace`` is atomic on POSIX and Windows file systems).
* The target must be a regular file or not exist yet: a symbolic link, a directory, a
  device or a FIFO is refused, and so is a file that fed the run (the model, the campaign,
  a data file), so that a report can never overwrite its own evidence.
* An existing file keeps its permission bits; a new one gets 0o666 minus the umask.
* The temporary file is hidden (``.NAME.PID.XXXX.tmp``) and removed on every failure path;
  one left behind by a killed run is removed by the next write to the same target.
"""

from __future__ import annotations

import os
import stat
import tempfile
from pathlib import Path
from typing import Any, Iterable

from ._errors import InputError, Location

__all__ = ["write_atomic", "check_target", "files_of_model", "files_of_campaign"]

_KINDS = ((stat.S_ISDIR, "a directory"), (stat.S_ISCHR, "a character device"),
          (stat.S_ISBLK, "a block device"), (stat.S_ISFIFO, "a FIFO"),
          (stat.S_ISSOCK, "a socket"))


def write_atomic(path: str | Path, text: str | bytes, *,
                 protect: Iterable[tuple[str, str | Path]] = ()) -> None:
    """Write ``text`` to ``path``; ``protect`` lists (role, path) of files of the run."""
    target = Path(path)
    where = Location(file=str(target))
    mode = check_target(target, protect)
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise InputError("expected an existing folder for the output file, found none", where)
    prefix = _prefix(target)
    _remove_stale(folder, prefix)
    temporary = None
    try:
        descriptor, temporary = tempfile.mkstemp(prefix=prefix, suffix=".tmp", dir=folder)
        data = text if isinstance(text, bytes) else text.encode("utf-8")
        with os.fdopen(descriptor, "wb") as stream:
            stream.write(data)
            stream.flush()
            os.fsync(stream.fileno())
        os.chmod(temporary, mode)
        os.replace(temporary, target)
    except OSError as exc:
        _remove(temporary)
        raise InputError(f"expected a writable output file, found {exc.strerror or exc}",
                         where) from exc
    except BaseException:
        _remove(temporary)
        raise


def check_target(target: Path, protect: Iterable[tuple[str, str | Path]] = ()) -> int:
    """Refuse links, non-regular files and files of the run; the mode the file gets."""
    where = Location(file=str(target))
    try:
        info = os.lstat(target)
    except FileNotFoundError:
        mask = os.umask(0)
        os.umask(mask)
        return 0o666 & ~mask
    except OSError as exc:
        raise InputError(f"expected a writable output file, found {exc.strerror or exc}",
                         where) from exc
    if stat.S_ISLNK(info.st_mode):
        raise InputError("expected a regular file or a new name for the output, found a "
                         "symbolic link (outputs are never written through links)", where)
    for test, kind in _KINDS:
        if test(info.st_mode):
            raise InputError(f"expected a regular file or a new name for the output, found "
                             f"{kind}", where)
    for role, source in protect:
        try:
            same = os.path.samefile(target, source)
        except OSError:
            continue
        if same:
            raise InputError(f"expected an output file other than the files of the run, "
                             f"found the {role} file itself", where)
    return stat.S_IMODE(info.st_mode)


def same_target(one: Path, two: Path) -> bool:
    """Whether two output names lead to one file (resolved, or the same existing file)."""
    if os.path.realpath(one) == os.path.realpath(two):  # never raises, even on link loops
        return True
    try:
        return os.path.samefile(one, two)
    except OSError:
        return False


def files_of_model(model: Any) -> list[tuple[str, str]]:
    """(role, path) of the model file and every file that fed it: never overwritten."""
    return [("model", model.source), *((role, name) for role, name, _ in model.files)]


def files_of_campaign(campaign: Any) -> list[tuple[str, str]]:
    """(role, path) of the campaign file, its model's files and its data files."""
    return [("campaign", campaign.source), *files_of_model(campaign.model),
            *((role, name) for role, name, _ in campaign.data_files)]


def _prefix(target: Path) -> str:
    name = target.name if len(target.name) <= 120 else target.name[:120]
    return f".{name}.{os.getpid()}."


def _remove_stale(folder: Path, prefix: str) -> None:
    """Remove temporary files of this target left by runs that no longer exist."""
    stem = prefix.rsplit(".", 2)[0] + "."
    try:
        names = [n for n in os.listdir(folder) if n.startswith(stem) and n.endswith(".tmp")]
    except OSError:
        return
    for name in names:
        pid = name[len(stem):].split(".", 1)[0]
        if pid.isdigit() and not _alive(int(pid)):
            _remove(str(folder / name))


def _alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:
        return True
    return True


def _remove(path: str | None) -> None:
    if path is None:
        return
    try:
        os.unlink(path)
    except OSError:
        pass
