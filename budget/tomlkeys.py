"""The one "unknown key" check shared by every TOML reader (models, inputs, settings,
campaigns, registers, records): the same message everywhere, with a "did you mean"."""

from __future__ import annotations

from collections.abc import Callable, Iterable, Sequence

from .errors import BudgetError, InputError, Location, did_you_mean

__all__ = ["check_keys"]


def check_keys(data: Iterable[str], allowed: Sequence[str], where: Callable[[str], Location],
               *, error: type[BudgetError] = InputError, kind: str = "key") -> None:
    """Refuse the first key of ``data`` that is not in ``allowed``, at ``where(key)``."""
    for key in data:
        if key not in allowed:
            raise error(f"unknown {kind} '{key}'{did_you_mean(key, allowed)}; expected one "
                        f"of {', '.join(allowed)}", where(key))
