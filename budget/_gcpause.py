"""A pause of Python's cyclic garbage collector while many small objects are made.

Reading a model of 10⁴–10⁵ inputs, propagating it and writing its document make millions
of small objects (graph nodes, rows, dicts) and no reference cycles that need collecting
there; the collector would traverse the growing heap again and again (a quarter of the
time of a 10⁴-definition model). Reference counting frees everything as usual; the
collector is switched back on (if it was on) when the block ends, and then collects
whatever cycles were left.
"""

from __future__ import annotations

import gc
from collections.abc import Iterator
from contextlib import contextmanager

__all__ = ["paused_collection"]


@contextmanager
def paused_collection() -> Iterator[None]:
    """``with paused_collection(): …`` runs the block with the cyclic collector off."""
    was_on = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_on:
            gc.enable()
