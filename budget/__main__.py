"""``python -m budget``: the same as the ``budget`` command."""

from .cli import main

main(prog_name="budget")
