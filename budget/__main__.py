"""``python -m budget``: the same as the ``budget`` command."""

from ._cli import console

console()
