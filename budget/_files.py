"""Reading input files within bounds: a size limit, and no hang on devices or FIFOs.

A model, campaign or data file is read with at most its limit plus one byte, so that
``/dev/zero`` or a file of many gigabytes is refused at once instead of filling memory,
and a FIFO without a writer reads as empty instead of blocking.
"""

from __future__ import annotations

import os
from pathlib import Path

from ._errors import BudgetError, Location
from ._limits import LIMITS_PAGE, shorten

__all__ = ["read_input"]


def read_input(path: str | Path, *, limit: int, what: str,
               error: type[BudgetError]) -> bytes:
    """The bytes of ``path`` (at most ``limit``), or ``error`` naming the file and why."""
    shown = str(path)
    if not isinstance(path, (str, os.PathLike)):
        raise error(f"expected the path of a {what} (a string or a pathlib.Path), found "
                    f"{type(path).__name__} {shorten(repr(path))}",
                    Location(file="<argument>", key="path"))
    try:
        descriptor = os.open(path, os.O_RDONLY | getattr(os, "O_NONBLOCK", 0))
    except FileNotFoundError as exc:
        raise error(f"expected a {what}, found no such file", Location(file=shown)) from exc
    except (OSError, ValueError) as exc:
        reason = exc.strerror if isinstance(exc, OSError) and exc.strerror else str(exc)
        raise error(f"expected a readable {what}, found {reason}", Location(file=shown)
                    ) from exc
    try:
        os.set_blocking(descriptor, True)
        chunks, size = [], 0
        while size <= limit:
            chunk = os.read(descriptor, min(1 << 20, limit + 1 - size))
            if not chunk:
                break
            chunks.append(chunk)
            size += len(chunk)
    except OSError as exc:
        raise error(f"expected a readable {what}, found {exc.strerror}",
                    Location(file=shown)) from exc
    finally:
        os.close(descriptor)
    if size > limit:
        raise error(f"expected a {what} of at most {limit // 2 ** 20} MiB (limits: "
                    f"{LIMITS_PAGE}), found a larger file", Location(file=shown))
    return b"".join(chunks)
