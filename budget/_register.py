"""The calibration register: the certificates behind Type B inputs, and their validity.

Method: ISO/IEC 17025 (6.5, metrological traceability) asks that a result be related to
the SI through a documented, unbroken chain of calibrations, each contributing its stated
measurement uncertainty (VIM 2.41). A register file lists the laboratory's calibration
certificates once; a model input names the certificate (and the stated value on it) that
its estimate and uncertainty come from. ``budget`` then checks, for every measurement
date, that the certificate had been issued and had not expired (the valid-until day
itself counts as valid), and that the input states what the certificate states. The
certificate's traceability statement is generated from the certificates used.

Register files are TOML::

    [certificates.R10]
    instrument = "standard resistor 10 Ω"
    issuer = "…"
    number = "…"
    calibrated = 2025-01-20
    valid_until = 2026-01-20          # or interval_months = 12
    traceable_to = "the SI ohm through …"

    [certificates.R10.values.R]       # one table per stated value, keyed like an input
    value = 10.000021
    unit = "ohm"
    expanded = 0.000020
    k = 2
"""

from __future__ import annotations

import calendar
import datetime as dt
import hashlib
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ._errors import InputError, Location, did_you_mean
from ._tomlkeys import check_keys

__all__ = ["StatedValue", "Certificate", "Register", "CertificateUse", "load_register",
           "read_date", "validity", "date_problems", "date_warnings", "traceability_statement",
           "REGISTER_KEYS"]

REGISTER_KEYS = ("title", "certificates")
CERTIFICATE_KEYS = ("instrument", "issuer", "number", "calibrated", "valid_until",
                    "interval_months", "traceable_to", "si_unit", "values", "note")


@dataclass(frozen=True, slots=True, kw_only=True)
class StatedValue:
    """A value stated on a certificate, with its uncertainty, in the certificate's unit."""

    name: str
    table: dict[str, Any] = field(compare=False)  # the raw keys, read like an input table
    unit: str
    estimate: float
    standard_uncertainty: float
    basis: str
    reading: bool = False  # states the uncertainty of any reading, not a value


@dataclass(frozen=True, slots=True, kw_only=True)
class Certificate:
    identifier: str
    instrument: str
    issuer: str
    number: str
    calibrated: dt.date
    valid_until: dt.date
    traceable_to: str
    si_unit: str
    values: tuple[StatedValue, ...]

    def value(self, name: str | None, where: Location) -> StatedValue:
        """The stated value ``name``; without a name, the only one there is."""
        names = [v.name for v in self.values]
        if name is None:
            if len(self.values) == 1:
                return self.values[0]
            raise InputError(f"expected 'stated' naming one of the values of certificate "
                             f"'{self.identifier}' ({', '.join(names)}), found none", where)
        for stated in self.values:
            if stated.name == name:
                return stated
        raise InputError(f"expected a value stated on certificate '{self.identifier}' "
                         f"({', '.join(names)}), found '{name}'{did_you_mean(name, names)}",
                         where)


@dataclass(frozen=True, slots=True, kw_only=True)
class Register:
    source: str
    sha256: str
    title: str
    certificates: tuple[Certificate, ...]

    def certificate(self, identifier: str, where: Location) -> Certificate:
        for item in self.certificates:
            if item.identifier == identifier:
                return item
        names = [c.identifier for c in self.certificates]
        raise InputError(f"expected a certificate of the register {self.source}, found "
                         f"'{identifier}'{did_you_mean(identifier, names)}", where)


@dataclass(frozen=True, slots=True, kw_only=True)
class CertificateUse:
    """An input of a model and the certificate (and stated value) it comes from."""

    input: str
    certificate: Certificate
    stated: str
    # the measurement dates of the earlier model that uses it, when it comes through a
    # chain (that stage's own `measured`); None: the dates of the model or campaign at hand
    dates: tuple[dt.date, ...] | None = None


def load_register(path: Path, where: Location, convention: str) -> Register:
    """Read a register file; every problem names the file and the key."""
    from ._model import LineIndex, decode, read_toml

    shown = str(path)
    try:
        raw = path.read_bytes()
    except OSError as exc:
        reason = "no such file" if isinstance(exc, FileNotFoundError) else exc.strerror
        raise InputError(f"expected a calibration register file '{path}', found {reason}",
                         where) from exc
    text = decode(raw, shown, "register")
    document = read_toml(text, shown)
    index = LineIndex(text.splitlines())

    def at(table: str | None, key: str | None = None) -> Location:
        return Location(file=shown, table=table, key=key, line=index.find(table, key))

    _known(document, REGISTER_KEYS, at, None)
    tables = document.get("certificates", {})
    if not isinstance(tables, dict) or not tables:
        raise InputError("expected [certificates.ID] tables, found none", at(None))
    made = tuple(_certificate(ident, data, at, convention) for ident, data in tables.items())
    return Register(source=shown, sha256=hashlib.sha256(raw).hexdigest(),
                    title=str(document.get("title", "")), certificates=made)


def _known(data: dict[str, Any], keys: tuple[str, ...], at: Any, table: str | None) -> None:
    check_keys(data, keys, lambda key: at(table, key))


def _text(data: dict[str, Any], key: str, at: Any, table: str) -> str:
    value = data.get(key)
    if not isinstance(value, str) or not value.strip():
        found = "none" if value is None else repr(value)
        raise InputError(f"expected a '{key}' string, found {found}", at(table, key))
    return value.strip()


def read_date(value: Any, where: Location) -> dt.date:
    """A TOML date or an ISO 8601 date string (YYYY-MM-DD)."""
    if isinstance(value, dt.datetime):
        return value.date()
    if isinstance(value, dt.date):
        return value
    if isinstance(value, str):
        try:
            return dt.date.fromisoformat(value.strip())
        except ValueError:
            pass
    raise InputError(f"expected a date such as 2026-03-14, found {value!r}", where)


def _add_months(day: dt.date, months: int) -> dt.date:
    total = day.month - 1 + months
    year, month = day.year + total // 12, total % 12 + 1
    return dt.date(year, month, min(day.day, calendar.monthrange(year, month)[1]))


def _certificate(ident: str, data: Any, at: Any, convention: str) -> Certificate:
    table = "certificates." + ident
    if not isinstance(data, dict):
        raise InputError(f"expected a table [{table}], found {data!r}", at(table))
    _known(data, CERTIFICATE_KEYS, at, table)
    calibrated = read_date(data.get("calibrated"), at(table, "calibrated"))
    if ("valid_until" in data) == ("interval_months" in data):
        raise InputError("expected exactly one of 'valid_until' or 'interval_months', found "
                         + ("both" if "valid_until" in data else "neither"), at(table))
    if "valid_until" in data:
        until = read_date(data["valid_until"], at(table, "valid_until"))
    else:
        months = data["interval_months"]
        if isinstance(months, bool) or not isinstance(months, int) or not 0 < months <= 600:
            raise InputError(f"expected a whole number of months in 1…600, found {months!r}",
                             at(table, "interval_months"))
        until = _add_months(calibrated, months)
    if until < calibrated:
        raise InputError(f"expected a date on or after the calibration date {calibrated}, "
                         f"found {until}", at(table, "valid_until"))
    values = data.get("values")
    if not isinstance(values, dict) or not values:
        raise InputError(f"expected at least one [{table}.values.NAME] table, found none",
                         at(table))
    stated = tuple(_stated(name, raw, at, f"{table}.values.{name}", convention)
                   for name, raw in values.items())
    return Certificate(identifier=ident, instrument=_text(data, "instrument", at, table),
                       issuer=_text(data, "issuer", at, table),
                       number=_text(data, "number", at, table), calibrated=calibrated,
                       valid_until=until, traceable_to=str(data.get("traceable_to", "")),
                       si_unit=str(data.get("si_unit", "")), values=stated)


def _stated(name: str, raw: Any, at: Any, table: str, convention: str) -> StatedValue:
    from ._statements import read_statement
    from ._units import parse_unit

    if not isinstance(raw, dict):
        raise InputError(f"expected a table [{table}], found {raw!r}", at(table))
    reading = "value" not in raw and not any(key in raw for key in _WHOLE)
    statement = read_statement({**raw, "value": 0.0} if reading else raw,
                               lambda key: at(table, key), convention)
    unit = parse_unit(statement.unit if statement.unit is not None else "1",
                      at(table, "unit"))
    return StatedValue(name=name, table=dict(raw), unit=unit.text,
                       estimate=float(statement.distribution.estimate),
                       standard_uncertainty=float(statement.distribution.standard_uncertainty),
                       basis=statement.basis, reading=reading)


# ways of stating an input that give the estimate themselves (no 'value' key needed)
_WHOLE = ("lower", "observations", "formula", "constant")


def validity(certificate: Certificate, day: dt.date) -> str | None:
    """None when the certificate was valid on ``day``; otherwise why it was not."""
    if day < certificate.calibrated:
        return f"not yet issued on {day} (calibrated {certificate.calibrated})"
    if day > certificate.valid_until:
        return f"expired on {day} (valid until {certificate.valid_until})"
    return None


def date_problems(certificate: Certificate, days: tuple[dt.date, ...]) -> tuple[str, ...]:
    """Why ``certificate`` was not valid on some of ``days``: one phrase for the days before
    it was issued and one for the days after it expired, each naming its dates once."""
    early = sorted({day for day in days if day < certificate.calibrated})
    late = sorted({day for day in days if day > certificate.valid_until})
    found = []
    if early:
        found.append(f"not yet issued on {_listed(early)} (calibrated {certificate.calibrated})")
    if late:
        found.append(f"expired on {_listed(late)} (valid until {certificate.valid_until})")
    return tuple(found)


def _listed(days: list[dt.date]) -> str:
    """'2025-05-06', '2025-05-06 and 2025-05-07', … and N more dates beyond three."""
    shown = [day.isoformat() for day in days[:3]]
    if len(days) > 3:
        return f"{', '.join(shown)} and {len(days) - 3} more dates"
    return " and ".join([", ".join(shown[:-1]), shown[-1]]) if len(shown) > 1 else shown[0]


def date_warnings(uses: tuple[CertificateUse, ...], days: tuple[dt.date, ...],
                  what: str = "") -> tuple[str, ...]:
    """One warning per input whose certificate was not valid on some of ``days``."""
    found = []
    for use in uses:
        problems = date_problems(use.certificate, days)
        if problems:
            found.append(f"input '{use.input}': certificate '{use.certificate.identifier}' "
                         f"({use.certificate.number}) {'; '.join(problems)}{what}")
    return tuple(found)


def agreement_warnings(name: str, unit: Any, estimate: float, u: float,
                       use: CertificateUse, stated: StatedValue, where: Location
                       ) -> tuple[str, ...]:
    """Warnings when an input's estimate or uncertainty differs from its certificate's."""
    from ._errors import UnitError
    from ._units import parse_unit

    theirs = parse_unit(stated.unit, where)
    if theirs.dimensionality != unit.dimensionality or theirs.offset != unit.offset:
        raise UnitError(f"expected a unit of {theirs.describe()} as on certificate "
                        f"'{use.certificate.identifier}' ('{stated.unit}'), found "
                        f"'{unit.text}' ({unit.describe()})", where)
    scale = float(theirs.factor / unit.factor)
    value, u_cert = stated.estimate * scale, stated.standard_uncertainty * scale
    label = f"certificate '{use.certificate.identifier}' ({use.certificate.number})"
    found = []
    if not stated.reading and not math.isclose(estimate, value, rel_tol=1e-9,
                                               abs_tol=1e-300):
        found.append(f"input '{name}': estimate {estimate:.12g} {unit.text} differs from "
                     f"{label}, which states {value:.12g} {unit.text}")
    if not math.isclose(u, u_cert, rel_tol=1e-6, abs_tol=1e-300):
        found.append(f"input '{name}': standard uncertainty {u:.6g} {unit.text} differs "
                     f"from {label}, which states {u_cert:.6g} {unit.text} "
                     f"({stated.basis})")
    return tuple(found)


_SI_NAMES = (("ohm", "ohm"), ("V", "volt"), ("A", "ampere"), ("s", "second"),
             ("kg", "kilogram"), ("m", "metre"), ("K", "kelvin"), ("mol", "mole"),
             ("cd", "candela"), ("Pa", "pascal"), ("kg/m^3", "kilogram per cubic metre"),
             ("Hz", "hertz"), ("C", "coulomb"), ("W", "watt"), ("m^3", "cubic metre"))


def si_unit_name(certificate: Certificate) -> str:
    """The SI unit a certificate is traceable to: its ``si_unit``, else from its values."""
    from ._units import parse_unit

    if certificate.si_unit:
        return certificate.si_unit
    where = Location(file="<register>")
    first = parse_unit(certificate.values[0].unit, where)
    if first.offset:
        return "kelvin"
    for text, name in _SI_NAMES:
        if parse_unit(text, where).dimensionality == first.dimensionality:
            return name
    return "the SI" if not first.dimensionality else first.text


def traceability_statement(uses: tuple[CertificateUse, ...]) -> str:
    """A sentence naming each SI unit and the certificates it is realised through."""
    by_unit: dict[str, list[Certificate]] = {}
    for use in uses:
        listed = by_unit.setdefault(si_unit_name(use.certificate), [])
        if use.certificate not in listed:
            listed.append(use.certificate)
    if not by_unit:
        return ""
    parts = []
    for unit, certificates in by_unit.items():
        links = " and ".join(f"certificate {c.number} issued by {c.issuer}"
                             + (f", traceable to {c.traceable_to}" if c.traceable_to else "")
                             for c in certificates)
        parts.append(f"the {unit} through {links}")
    return ("The measurement results are traceable to the SI: " + "; ".join(parts) + ".")


def certificates_document(model: Any, days: tuple[dt.date, ...]) -> list[dict[str, Any]]:
    """Every certificate a model uses, what it feeds and its validity on the dates.

    An input of the model at hand is checked on ``days``; an input that comes through a
    chained earlier model on that model's own measurement dates.
    """
    found: dict[str, dict[str, Any]] = {}
    dates: dict[str, set[dt.date]] = {}
    for use in model.certificates:
        c = use.certificate
        entry = found.setdefault(c.identifier, {
            "certificate": c.identifier, "number": c.number, "instrument": c.instrument,
            "issuer": c.issuer, "calibrated": c.calibrated.isoformat(),
            "valid_until": c.valid_until.isoformat(), "traceable_to": c.traceable_to,
            "si_unit": si_unit_name(c), "inputs": []})
        entry["inputs"].append({"input": use.input, "stated": use.stated})
        dates.setdefault(c.identifier, set()).update(
            days if use.dates is None else use.dates)
    for ident, entry in found.items():
        c = next(u.certificate for u in model.certificates
                 if u.certificate.identifier == ident)
        entry["measurement_dates"] = [day.isoformat() for day in sorted(dates[ident])]
        entry["problems"] = [reason for day in sorted(dates[ident])
                             if (reason := validity(c, day))]
    return list(found.values())
