"""Campaign files (shared/spec/certification.md) and their data tables → a :class:`Campaign`.

Every problem is a :class:`CampaignError` that names the file, the table and key or the
data row and column, what was expected and what was found. Data tables (CSV in any
common locale, or ``.xlsx``) are read by ``datafiles.py`` and converted into the units
the computation needs by ``studydata.py``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from ._datafiles import FORMAT_KEYS, FileFormat, parse_declared_format
from ._errors import BudgetError, CampaignError, Location, close_match, did_you_mean
from ._tomlkeys import check_keys
from ._limits import (LIMITS_PAGE, MAX_DATA_BYTES, MAX_FILE_BYTES, as_float,
                     check_probability, check_strings, shorten)
from ._model import LineIndex, Model, decode, load_model, read_toml
from ._studydata import Exclusion, Runs
from ._arguments import keywords_checked

__all__ = ["Campaign", "Comparison", "load_campaign", "read_runs_file"]

_TOP = ("title", "material", "unit", "description", "producer", "characterization",
        "homogeneity", "stability", "comparison", "certificate",
        "method", "shared", "combination",  # these three: methods.py
        "register")
_SECTIONS = {
    "characterization": ("model", "measurand", "runs", "scatter_covers", "label",
                         "estimate_factor", "label_columns", *FORMAT_KEYS),
    "homogeneity": ("data", "value_unit", *FORMAT_KEYS),
    "stability": ("data", "shelf_life", "u_short_term", "value_unit", "time_unit",
                  "time_origin", *FORMAT_KEYS,
                  "label", "evaluation", "series", "short_term"),  # the last four: stability.py
    "comparison": ("label", "value", "expanded", "k", "u", "unit"),
}


@dataclass(frozen=True, slots=True, kw_only=True)
class Comparison:
    label: str
    estimate: float
    standard_uncertainty: float
    expanded_uncertainty: float


@dataclass(frozen=True, slots=True, kw_only=True)
class Campaign:
    title: str
    material: str
    unit: str
    source: str
    sha256: str
    model: Model
    measurand: str
    runs: Runs
    run_inputs: tuple[str, ...]
    scatter_covers: tuple[str, ...]
    homogeneity: tuple[tuple[str, np.ndarray], ...] | None
    stability: tuple[np.ndarray, np.ndarray] | None
    shelf_life: float
    u_short_term: float
    comparisons: tuple[Comparison, ...]
    coverage_factor: float | None
    coverage_probability: float | None
    certificate: tuple[tuple[str, str], ...] = field(default=())
    extra: tuple[tuple[str, str], ...] = field(default=())
    data_files: tuple[tuple[str, str, str], ...] = field(default=())  # (role, path, sha256)
    method_label: str = "characterization"
    methods: Any = None  # methods.MethodsPlan: further methods, shared inputs, combination
    stability_plan: Any = None  # stability.StabilityPlan: more series, short-term study
    time_unit: str = ""
    excluded: tuple[Exclusion, ...] = field(default=())
    warnings: tuple[str, ...] = field(default=())
    reported_interval: str = "gum"  # [certificate]: which interval the certificate states


class _Reader:
    def __init__(self, path: Path, text: str, document: dict[str, Any],
                 allow_outside: bool = False) -> None:
        self.path, self.index, self.doc = path, LineIndex(text.splitlines()), document
        self.name = str(path)
        self.files: list[tuple[str, str, str]] = []
        self.register: Path | None = None  # the campaign's calibration register, if any
        self.allow_outside = allow_outside

    def confined(self, relative: str, table: str | None, key: str, nth: int = 0) -> Path:
        """``relative`` resolved beside the campaign file; refused when it leads out of the
        campaign's folder tree (absolute, '..' or a link) unless ``allow_outside``."""
        path = self.path.parent / relative
        if self.allow_outside:
            return self.bounded(path, table, key, nth)
        folder = self.path.parent.resolve()
        try:
            inside = path.resolve().is_relative_to(folder)
        except (OSError, RuntimeError, ValueError):
            inside = False
        if not inside:
            raise self.fail(f"expected a path inside the campaign's folder, found "
                            f"'{relative}', which leads outside it (allowed only when "
                            f"paths outside the folder are allowed)", table, key, nth)
        return self.bounded(path, table, key, nth)

    def bounded(self, path: Path, table: str | None, key: str, nth: int = 0) -> Path:
        """Refuse a data file beyond the size limit before anything reads it."""
        try:
            large = path.is_file() and path.stat().st_size > MAX_DATA_BYTES
        except OSError:
            large = False
        if large:
            raise self.fail(f"expected a data file of at most {MAX_DATA_BYTES // 2 ** 20} MiB "
                            f"(limits: {LIMITS_PAGE}), found a larger file", table, key, nth)
        return path

    def where(self, table: str | None, key: str | None = None, nth: int = 0) -> Location:
        return Location(file=self.name, table=table, key=key,
                        line=self.index.find(table, key, nth))

    def fail(self, message: str, table: str | None, key: str | None = None,
             nth: int = 0) -> CampaignError:
        return CampaignError(message, self.where(table, key, nth))

    def section(self, name: str, required: bool) -> dict[str, Any] | None:
        value = self.doc.get(name)
        if value is None:
            if required:
                raise self.fail(f"expected a [{name}] table, found none", None)
            return None
        if not isinstance(value, dict):
            raise self.fail(f"expected a table [{name}], found {value!r}", None, name)
        self.known(value, name, _SECTIONS[name])
        return value

    def known(self, data: dict[str, Any], table: str, keys: tuple[str, ...], nth: int = 0) -> None:
        check_keys(data, keys, lambda key: self.where(table, key, nth), error=CampaignError)

    def text(self, data: dict[str, Any], key: str, table: str | None, nth: int = 0) -> str:
        value = data.get(key)
        if not isinstance(value, str) or not value.strip():
            found = "none" if value is None else repr(value)
            raise self.fail(f"expected a '{key}' string, found {found}", table, key, nth)
        return value.strip()

    def names(self, given: Any, allowed: list[str], table: str, key: str,
              kind: tuple[str, str]) -> list[str]:
        """A list of names each of which is one of ``allowed``; ``kind``: what a name is
        and what the list holds, e.g. ("input", "input names")."""
        one, many = kind
        if not isinstance(given, list) or not all(isinstance(c, str) for c in given):
            raise self.fail(f"expected a list of {many}, found {given!r}", table, key)
        for name in given:
            if name not in allowed:
                raise self.fail(f"unknown {one} '{name}'{did_you_mean(name, allowed)}",
                                table, key)
        return given

    def number(self, data: dict[str, Any], key: str, table: str, *, positive: bool = False,
               nth: int = 0, default: float | None = None) -> float:
        value = data.get(key, default)
        if value is None:
            raise self.fail(f"expected a number '{key}', found none", table, key, nth)
        if isinstance(value, bool) or not isinstance(value, (int, float)) \
                or not math.isfinite(value):
            raise self.fail(f"expected a finite number, found {value!r}", table, key, nth)
        if positive and value <= 0:
            raise self.fail(f"expected a number > 0, found {value:g}", table, key, nth)
        if value < 0:
            raise self.fail(f"expected a number ≥ 0, found {value:g}", table, key, nth)
        return float(value)

    def file(self, data: dict[str, Any], key: str, table: str) -> Path:
        relative = self.text(data, key, table)
        path = self.confined(relative, table, key)
        if not path.is_file():
            raise self.fail(f"expected a file '{relative}' beside the campaign file, found "
                            "none", table, key)
        import hashlib

        try:
            digest = hashlib.sha256(path.read_bytes()).hexdigest()
        except OSError as exc:
            raise self.fail(f"expected a readable file '{relative}', found {exc.strerror}",
                            table, key) from exc
        self.files.append((f"{table}.{key}", str(path), digest))
        return path


@keywords_checked
def load_campaign(path: str | Path, *, allow_outside: bool = False) -> Campaign:
    """Read and check a campaign file and everything it refers to; the files it names
    must lie in its folder tree unless ``allow_outside``."""
    from ._arguments import check_flag
    from ._files import read_input

    check_flag(allow_outside, Location(file="load_campaign()", key="allow_outside"))
    raw = read_input(path, limit=MAX_FILE_BYTES, what="campaign file", error=CampaignError)
    path = Path(path)
    text = decode(raw, str(path), "campaign")
    reader = _Reader(path, text, read_toml(text, str(path)), allow_outside)
    import hashlib

    return _campaign(reader, hashlib.sha256(raw).hexdigest())


def _register(r: _Reader) -> Path | None:
    """The campaign's calibration register, for models that name none themselves."""
    if "register" not in r.doc:
        return None
    path = r.confined(r.text(r.doc, "register", None), None, "register")
    if not path.is_file():
        raise r.fail(f"expected a register file '{r.doc['register']}' beside the campaign "
                     "file, found none", None, "register")
    return path


def _campaign(r: _Reader, sha256: str) -> Campaign:
    check_keys(r.doc, _TOP, lambda key: r.where(None, key), error=CampaignError,
               kind="top-level key")
    check_strings(r.doc, r.where)
    title = r.text(r.doc, "title", None)
    unit = r.text(r.doc, "unit", None)
    char = r.section("characterization", True) or {}
    r.register = _register(r)
    model = load_model(r.file(char, "model", "characterization"), register=r.register)
    measurand = r.text(char, "measurand", "characterization")
    names = [m.name for m in model.measurands]
    if measurand not in names:
        raise r.fail(f"expected a measurand of {model.source} ({', '.join(names)}), found "
                     f"'{measurand}'{did_you_mean(measurand, names)}", "characterization",
                     "measurand")
    _check_unit(r, unit, model.measurands[names.index(measurand)].unit)
    runs = _runs(r, char, model)
    run_inputs = runs.names
    covers = _covers(r, char, model)
    warnings = _run_warnings(r, char, model, runs)
    from ._plausibility import campaign_unit_warning

    found = campaign_unit_warning(model.measurands[names.index(measurand)], model, unit,
                                  title)
    warnings += [found] if found else []
    from ._methods import check_primary_references, read_methods

    label = r.text(char, "label", "characterization") if "label" in char \
        else "characterization"
    plan = read_methods(r, label)
    if plan is not None:
        check_primary_references(r, plan, model, run_inputs)
        warnings += _method_run_warnings(plan)
    homogeneity, excluded = _homogeneity(r, unit, warnings)
    stability_section = r.section("stability", False)
    stability, time_unit, shelf, more = _stability(r, stability_section, unit, warnings)
    from ._stability import read_stability_plan

    stability_plan = read_stability_plan(r, stability_section)
    u_sts = 0.0
    if stability_section is not None:
        u_sts = r.number(stability_section, "u_short_term", "stability", default=0.0)
    k, coverage, fields = _certificate(r)
    if stability is not None:
        warnings += _validity(r, runs.dates or model.measured, shelf, time_unit)
    return Campaign(
        title=title, material=str(r.doc.get("material", "")), unit=unit, source=r.name,
        sha256=sha256, model=model, measurand=measurand, runs=runs, run_inputs=run_inputs,
        scatter_covers=covers, homogeneity=homogeneity, stability=stability,
        shelf_life=shelf, u_short_term=u_sts, comparisons=_comparisons(r, unit),
        coverage_factor=k,
        coverage_probability=coverage, certificate=fields,
        extra=tuple((key, str(r.doc[key])) for key in ("producer", "description")
                    if key in r.doc),
        data_files=tuple(entry for entry in r.files if entry[0] != "characterization.model"),
        method_label=label, methods=plan, stability_plan=stability_plan,
        time_unit=time_unit, excluded=excluded + more, warnings=tuple(warnings),
        reported_interval=_reported_interval(r))


def _format(r: _Reader, data: dict[str, Any], table: str) -> FileFormat:
    return parse_declared_format(data, lambda message, key: r.fail(message, table, key))


def _check_unit(r: _Reader, unit: str, measurand_unit: str) -> None:
    """The campaign's unit, of the certified measurand's dimension (values are converted)."""
    from ._units import parse_unit

    where = r.where(None, "unit")
    wanted, given = parse_unit(unit, where), parse_unit(measurand_unit, where)
    if wanted.unit.dims != given.unit.dims or wanted.offset or given.offset:
        raise r.fail(f"expected a unit of the measurand's dimension ('{measurand_unit}'), "
                     f"found '{unit}'", None, "unit")


def _runs(r: _Reader, char: dict[str, Any], model: Model) -> Runs:
    path = r.file(char, "runs", "characterization")
    return read_runs_file(r, path, _format(r, char, "characterization"), model,
                          "characterization", declared=label_columns(r, char, "characterization"))


def label_columns(r: _Reader, data: dict[str, Any], table: str, nth: int = 0
                  ) -> tuple[str, ...]:
    """The ``label_columns`` key: run columns declared labels though named like an input."""
    found = data.get("label_columns", [])
    if not isinstance(found, list) or not all(isinstance(c, str) for c in found):
        raise r.fail(f"expected a list of column names, found {found!r}", table,
                     "label_columns", nth)
    return tuple(found)


def read_runs_file(r: _Reader, path: Path, fmt: FileFormat, model: Model, table: str,
                   nth: int = 0, declared: tuple[str, ...] = ()) -> Runs:
    """A runs table whose input columns are converted into the model inputs' units; a
    label column named like an input or definition, or nearly so, is refused."""
    from ._studydata import read_runs

    runs = read_runs(path, fmt, model, str(path))
    if len(runs) < 2:  # the mean of the runs needs their scatter s (s²/n, ν = n − 1)
        raise r.fail(f"expected at least 2 runs in '{path.name}', found {len(runs)}", table,
                     "runs", nth)
    if not runs.inputs:
        raise r.fail(f"expected columns named like inputs of the model in '{path.name}', "
                     "found none", table, "runs", nth)
    defined = {d.name: d.text for d in model.definitions}
    for name, _ in runs.labels:
        if name in defined:  # else read as a label and silently not used
            raise r.fail(f"expected run columns named like inputs of the model in "
                         f"'{path.name}', found '{name}', which the model defines "
                         f"({name} = {defined[name]}): a run cannot set it, give the "
                         "columns of its inputs", table, "runs", nth)
    _near_misses(r, path, runs, model, declared, (table, nth))
    for name in runs.names:
        if model.input(name).molar_mass is not None:
            raise r.fail(f"expected run columns for measured inputs, found '{name}', which "
                         "a formula gives", table, "runs", nth)
    return runs


def _near_misses(r: _Reader, path: Path, runs: Runs, model: Model,
                 declared: tuple[str, ...], where: tuple[str, int]) -> None:
    """Refuse a label column whose name nearly names an input or definition (a typo would
    otherwise leave the model's estimate in force for every run)."""
    table, nth = where
    for name in declared:
        if name not in dict(runs.labels):
            raise r.fail(f"expected a column of '{path.name}', found '{name}'"
                         f"{did_you_mean(name, dict(runs.labels))}", table, "label_columns",
                         nth)
    names = [i.name for i in model.inputs] + [d.name for d in model.definitions]
    for name, _ in runs.labels:
        close = None if name in declared else close_match(name, names)
        if close is not None:
            raise r.fail(f"expected the columns of '{path.name}' to name inputs of the "
                         f"model or labels, found column '{name}', a near miss of '{close}' "
                         f"(did you mean '{close}'? a label so named must be listed in "
                         "label_columns)", table, "runs", nth)


def _run_warnings(r: _Reader, char: dict[str, Any], model: Model, runs: Runs) -> list[str]:
    """Plausibility of each run: input estimates near the model's, air density in range."""
    from ._plausibility import DEFAULT_ESTIMATE_FACTOR

    factors = _estimate_factors(r, char, runs.names, DEFAULT_ESTIMATE_FACTOR)
    return run_guards(model, runs, factors)


def run_guards(model: Model, runs: Runs, factors: dict[str, float]) -> list[str]:
    """The run guards with a factor per column (``factors["default"]`` for the rest)."""
    from ._plausibility import air_density_warnings, estimate_warnings

    found: list[str] = []
    for name in runs.names:
        item = model.input(name)
        found += estimate_warnings(name, runs.values(name), item.estimate, item.unit,
                                   factors.get(name, factors["default"]), runs.source,
                                   runs.rows)
    values: dict[str, Any] = {i.name: i.estimate for i in model.inputs}
    values.update({name: runs.values(name) for name in runs.names})
    labels = [f"row {row}" for row in runs.rows]
    found += air_density_warnings(model, values, f"in {runs.source}", labels)
    return found


def _method_run_warnings(plan: Any) -> list[str]:
    """The air-density guard for the runs of further methods and mass-balance impurities
    (their models' estimates may describe another sample, so no estimate factor)."""
    from ._methods import MassBalance

    sources = []
    for method in plan.methods:
        if isinstance(method, MassBalance):
            sources += [i.source for i in method.impurities if i.source is not None]
        else:
            sources.append(method)
    found: list[str] = []
    for source in sources:
        if source.runs is not None:
            found += run_guards(source.model, source.runs, {"default": math.inf})
    return found


def _estimate_factors(r: _Reader, char: dict[str, Any], names: tuple[str, ...], default: float
                      ) -> dict[str, float]:
    given = char.get("estimate_factor", default)
    table = given if isinstance(given, dict) else {"default": given}
    factors = {"default": default}
    for key in table:
        if key != "default" and key not in names:
            raise r.fail(f"expected a run column or 'default', found '{key}'"
                         f"{did_you_mean(key, names)}", "characterization", "estimate_factor")
        number = r.number(table, key, "characterization", positive=True)
        if number <= 1:
            raise r.fail(f"expected a factor > 1, found {number:g}", "characterization",
                         "estimate_factor")
        factors[key] = number
    return factors


def _covers(r: _Reader, char: dict[str, Any], model: Model) -> tuple[str, ...]:
    return tuple(r.names(char.get("scatter_covers", []), [i.name for i in model.inputs],
                         "characterization", "scatter_covers", ("input", "input names")))


def _optional_unit(r: _Reader, data: dict[str, Any], key: str, table: str) -> str | None:
    if key not in data:
        return None
    from ._units import parse_unit

    text = r.text(data, key, table)
    parse_unit(text, r.where(table, key))
    return text


def _homogeneity(r: _Reader, unit: str, warnings: list[str]
                 ) -> tuple[tuple[tuple[str, np.ndarray], ...] | None, tuple[Exclusion, ...]]:
    from ._studydata import read_homogeneity

    section = r.section("homogeneity", False)
    if section is None:
        return None, ()
    path = r.file(section, "data", "homogeneity")
    value_unit = _optional_unit(r, section, "value_unit", "homogeneity")
    groups, excluded, slips = read_homogeneity(path, _format(r, section, "homogeneity"),
                                               unit, value_unit, str(path))
    warnings += slips
    shown = Location(file=str(path))
    if len(groups) < 2:
        raise CampaignError(f"expected at least 2 units with a value, found {len(groups)}",
                            shown)
    if all(values.size < 2 for _, values in groups):
        raise CampaignError("expected at least one unit with 2 or more replicates, found a "
                            "single replicate for every unit: the within-unit variance "
                            "cannot be estimated", shown)
    return groups, excluded


def _stability(r: _Reader, section: dict[str, Any] | None, unit: str, warnings: list[str]
               ) -> tuple[tuple[np.ndarray, np.ndarray] | None, str, float,
                          tuple[Exclusion, ...]]:
    from ._plausibility import shelf_life_warning
    from ._studydata import read_stability

    if section is None:
        return None, "", 0.0, ()
    path = r.file(section, "data", "stability")
    time_unit = _optional_unit(r, section, "time_unit", "stability")
    shelf_text = section.get("shelf_life")
    shelf_unit = _shelf_unit(r, shelf_text) if isinstance(shelf_text, str) else None
    data = read_stability(path, _format(r, section, "stability"), unit,
                          _optional_unit(r, section, "value_unit", "stability"), time_unit,
                          _origin(r, section), str(path), date_unit=time_unit or shelf_unit)
    shelf = _shelf_life(r, section, data.time_unit)
    warnings += data.slips
    if data.times.size < 3 or np.unique(data.times).size < 2:
        raise CampaignError(f"expected at least 3 points at 2 or more different times, found "
                            f"{data.times.size} at {np.unique(data.times).size}",
                            Location(file=str(path)))
    if not data.time_unit:
        warnings.append(f"plausibility: {path}: no time unit stated for the stability study "
                        "(times and shelf life are taken in the same, unnamed unit); declare "
                        "time_unit = \"month\" or write it in the header, 'time / month'")
    found = shelf_life_warning(data.times, shelf, data.time_unit, str(path))
    if found:
        warnings.append(found)
    return (data.times, data.values), data.time_unit, shelf, data.excluded


SHELF_LIFE = ("shelf life", "36 month")


def _shelf_unit(r: _Reader, text: str) -> str:
    return span_unit(r, text, "stability", "shelf_life", SHELF_LIFE)


def _shelf_life(r: _Reader, section: dict[str, Any], time_unit: str) -> float:
    return time_span(r, section, "stability", "shelf_life", time_unit, SHELF_LIFE)


def span_unit(r: _Reader, text: str, table: str, key: str, words: tuple[str, str]) -> str:
    """The unit written after the number of a period such as ``"36 month"``; ``words``:
    what the period is and an example."""
    import re

    found = re.match(r"^\s*[-+0-9.eE]+\s*(\S.*)$", text)
    if not found:
        raise r.fail(f"expected a {words[0]} as a number or as \"{words[1]}\", found {text!r}",
                     table, key)
    return found.group(1).strip()


def time_span(r: _Reader, data: dict[str, Any], table: str, key: str, time_unit: str,
              words: tuple[str, str]) -> float:
    """A period (shelf life, transport time): a number in ``time_unit``, or a text with its
    own unit of time, converted to ``time_unit`` (taken as that unit when empty)."""
    value = data.get(key)
    if not isinstance(value, str):
        return r.number(data, key, table, positive=True)
    from ._datafiles import convert
    from ._units import parse_unit

    what = words[0]
    unit_text = span_unit(r, value, table, key, words)
    try:
        number = float(value.strip()[: len(value.strip()) - len(unit_text)])
    except ValueError:
        raise r.fail(f"expected a {what} as a number or as \"{words[1]}\", found {value!r}",
                     table, key) from None
    where = r.where(table, key)
    if not math.isfinite(number) or number <= 0:
        raise r.fail(f"expected a {what} > 0, found {number:g}", table, key)
    given = parse_unit(unit_text, where)
    if given.offset or given.unit.dims != parse_unit("s", where).unit.dims:
        raise r.fail(f"expected a {what} in a unit of time (such as month, d, year), "
                     f"found '{unit_text}' ({given.describe()})", table, key)
    return float(convert(np.array([number]), given, parse_unit(time_unit or unit_text, where),
                         source=r.name, column=key)[0])


def _origin(r: _Reader, section: dict[str, Any]) -> Any:
    from datetime import date, datetime

    value = section.get("time_origin")
    if value is None:
        return None
    if isinstance(value, datetime):
        return value.replace(tzinfo=None)
    if isinstance(value, date):
        return datetime(value.year, value.month, value.day)
    if isinstance(value, str):
        try:
            return datetime.fromisoformat(value.strip())
        except ValueError:
            pass
    raise r.fail(f"expected an ISO 8601 date such as 2025-06-30, found {value!r}",
                 "stability", "time_origin")


def _comparisons(r: _Reader, unit: str) -> tuple[Comparison, ...]:
    entries = r.doc.get("comparison", [])
    if not isinstance(entries, list):
        raise r.fail("expected [[comparison]] tables, found a single value", None, "comparison")
    made = []
    for nth, entry in enumerate(entries):
        if not isinstance(entry, dict):
            raise r.fail(f"expected a table, found {entry!r}", "comparison", None, nth)
        r.known(entry, "comparison", _SECTIONS["comparison"], nth)
        label = r.text(entry, "label", "comparison", nth)
        value = as_float(entry.get("value"))
        if value is None:
            raise r.fail(f"expected a finite number 'value', found "
                         f"{shorten(repr(entry.get('value')))}",
                         "comparison", "value", nth)
        if ("u" in entry) == ("expanded" in entry):
            raise r.fail("expected either 'expanded' with 'k' or 'u', found "
                         + ("both" if "u" in entry else "neither"), "comparison", None, nth)
        if "u" in entry:
            u = r.number(entry, "u", "comparison", positive=True, nth=nth)
            expanded = 2.0 * u
        else:
            expanded = r.number(entry, "expanded", "comparison", positive=True, nth=nth)
            u = expanded / r.number(entry, "k", "comparison", positive=True, nth=nth)
        scale = _comparison_scale(r, entry, unit, nth)
        made.append(Comparison(label=label, estimate=value * scale,
                               standard_uncertainty=u * scale,
                               expanded_uncertainty=expanded * scale))
    return tuple(made)


def _comparison_scale(r: _Reader, entry: dict[str, Any], unit: str, nth: int) -> float:
    """The factor from the comparison's declared unit to the certified value's unit."""
    if "unit" not in entry:
        return 1.0
    from ._units import parse_unit

    where = r.where("comparison", "unit", nth)
    given, wanted = parse_unit(r.text(entry, "unit", "comparison", nth), where), \
        parse_unit(unit, where)
    if given.offset or wanted.offset or given.unit.dims != wanted.unit.dims:
        raise r.fail(f"expected a unit of the certified value's kind ('{unit}', "
                     f"{wanted.describe()}), found '{given.text}' ({given.describe()})",
                     "comparison", "unit", nth)
    return float(given.factor / wanted.factor)


def _certificate(r: _Reader) -> tuple[float | None, float | None, tuple[Any, ...]]:
    data = r.doc.get("certificate", {})
    if not isinstance(data, dict):
        raise r.fail(f"expected a table [certificate], found {data!r}", None, "certificate")
    if "k" in data and "coverage" in data:
        raise r.fail("expected either 'k' or 'coverage', found both", "certificate",
                     "coverage")
    k = r.number(data, "k", "certificate", positive=True) if "k" in data else None
    coverage = None
    if "coverage" in data:
        coverage = check_probability(data["coverage"], r.where("certificate", "coverage"))
    if k is None and coverage is None:
        k = 2.0
    fields = tuple((key, str(value)) for key, value in data.items()
                   if key not in ("k", "coverage", "reported_interval"))
    return k, coverage, fields


def _validity(r: _Reader, days: tuple[Any, ...] | None, shelf_life: float,
              time_unit: str) -> list[str]:
    """``[certificate] valid_until`` against the shelf life from the last run, when both
    are dates (free text such as "36 months from dispatch" is shown as written)."""
    from ._plausibility import validity_warning

    valid_until = _valid_until(r)
    if valid_until is None or not days:
        return []
    found = validity_warning(valid_until, str(r.where("certificate", "valid_until")),
                             max(days), shelf_life, time_unit)
    return [found] if found else []


def _valid_until(r: _Reader) -> Any:
    """``[certificate] valid_until`` as a date: a TOML date or the text YYYY-MM-DD (a day
    that does not exist is refused); None when absent or other text."""
    from datetime import date, datetime
    import re

    value = r.doc.get("certificate", {}).get("valid_until")
    if isinstance(value, datetime):
        return value.date()
    if isinstance(value, date):
        return value
    if not isinstance(value, str) or not re.fullmatch(r"\s*\d{4}-\d{2}-\d{2}\s*", value):
        return None
    try:
        return date.fromisoformat(value.strip())
    except ValueError:
        raise r.fail(f"expected a date that exists, found {value!r}", "certificate",
                     "valid_until") from None


def _reported_interval(r: _Reader) -> str:
    """``[certificate] reported_interval``: gum (default), monte_carlo, monte_carlo_shortest."""
    from ._model import check_reported

    data = r.doc.get("certificate", {})
    if "reported_interval" not in data:
        return "gum"
    try:
        return check_reported(data["reported_interval"],
                              r.where("certificate", "reported_interval"))
    except BudgetError as error:
        raise CampaignError(error.message, error.location) from error
