"""Writing output files atomically: a temporary file beside the target, then a rename.

An interrupted run never leaves a half-written report: the target is either the old file
or the complete new one (``os.replace`` is atomic on POSIX and Windows file systems).
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from .errors import InputError, Location

__all__ = ["write_atomic"]


def write_atomic(path: str | Path, text: str | bytes) -> None:
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise InputError("expected an existing folder for the output file, found none",
                         Location(file=str(target)))
    descriptor, temporary = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".tmp",
                                             dir=folder)
    try:
        if isinstance(text, bytes):
            with os.fdopen(descriptor, "wb") as binary:
                binary.write(text)
        else:
            with os.fdopen(descriptor, "w", encoding="utf-8") as stream:
                stream.write(text)
        mask = os.umask(0)
        os.umask(mask)
        os.chmod(temporary, 0o666 & ~mask)
        os.replace(temporary, target)
    except OSError as exc:
        _remove(temporary)
        raise InputError(f"expected a writable output file, found {exc.strerror}",
                         Location(file=str(target))) from exc
    except BaseException:
        _remove(temporary)
        raise


def _remove(path: str) -> None:
    try:
        os.unlink(path)
    except OSError:
        pass
