"""The one "unknown key" check shared by every TOML reader (models, inputs, settings,
measurands, correlations, estimated-together sets, campaigns, registers, records, chained
inputs): the same message everywhere, ``expected a key among …, found '…'`` with a "did you
mean"."""

from __future__ import annotations

from collections.abc import Callable, Iterable, Sequence

from ._errors import BudgetError, InputError, Location, did_you_mean

__all__ = ["check_keys", "unknown_key_message"]


def unknown_key_message(key: str, allowed: Sequence[str], *, kind: str = "key",
                        within: str = "") -> str:
    """``expected a key [within …] among a, b, found 'x' (did you mean 'a'?)``."""
    place = f" {within}" if within else ""
    return (f"expected a {kind}{place} among {', '.join(allowed)}, found '{key}'"
            f"{did_you_mean(key, allowed)}")


def check_keys(data: Iterable[str], allowed: Sequence[str], where: Callable[[str], Location],
               *, error: type[BudgetError] = InputError, kind: str = "key",
               within: str = "") -> None:
    """Refuse the first key of ``data`` that is not in ``allowed``, at ``where(key)``;
    ``within`` says where in the table when that is not the table itself ("in set 2")."""
    for key in data:
        if key not in allowed:
            raise error(unknown_key_message(str(key), allowed, kind=kind, within=within),
                        where(key))


def check_input_names(listed: list[str], names: Iterable[str], within: str,
                      where: Location, *, pair: bool = False) -> None:
    """Every name of ``listed`` (a ``between`` or ``inputs`` list) names an input, once;
    ``within`` says which entry ("in correlation 3", "in set 1"); ``pair``: a list of
    exactly two names."""
    for name in listed:
        if name not in names:
            raise InputError(f"unknown input '{name}' {within}{did_you_mean(name, names)}",
                             where)
    if len(set(listed)) != len(listed):
        twice = next(n for n in listed if listed.count(n) > 1)
        two = "two " if pair else ""
        raise InputError(f"expected {two}different inputs {within}, found '{twice}' twice",
                         where)
