"""Campaign files (shared/spec/certification.md) and their CSV tables → a :class:`Campaign`.

Every problem is a :class:`CampaignError` that names the file, the table and key or the
CSV row and column, what was expected and what was found. CSV tables are read with
pandas as text and converted column by column, so a bad cell is reported by its line.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from .errors import BudgetError, CampaignError, Location, did_you_mean
from .limits import LIMITS_PAGE, MAX_DATA_BYTES, MAX_FILE_BYTES, check_strings
from .model import LineIndex, Model, decode, load_model, read_toml

__all__ = ["Campaign", "Comparison", "load_campaign", "read_table"]

_TOP = ("title", "material", "unit", "description", "producer", "characterization",
        "homogeneity", "stability", "comparison", "certificate",
        "method", "shared", "combination")  # the last three: methods.py
_SECTIONS = {
    "characterization": ("model", "measurand", "runs", "scatter_covers", "label"),
    "homogeneity": ("data",),
    "stability": ("data", "shelf_life", "u_short_term",
                  "label", "evaluation", "series", "short_term"),  # the last four: stability.py
    "comparison": ("label", "value", "expanded", "k", "u"),
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
    runs: Any  # pandas DataFrame: labels and input columns
    run_inputs: tuple[str, ...]
    scatter_covers: tuple[str, ...]
    homogeneity: tuple[tuple[str, np.ndarray], ...] | None
    stability: tuple[np.ndarray, np.ndarray] | None
    shelf_life: float
    u_short_term: float
    comparisons: tuple[Comparison, ...]
    k: float | None
    coverage: float | None
    certificate: tuple[tuple[str, str], ...] = field(default=())
    extra: tuple[tuple[str, str], ...] = field(default=())
    data_files: tuple[tuple[str, str, str], ...] = field(default=())  # (role, path, sha256)
    method_label: str = "characterization"
    methods: Any = None  # methods.MethodsPlan: further methods, shared inputs, combination
    stability_plan: Any = None  # stability.StabilityPlan: more series, short-term study
    reported_interval: str = "gum"  # [certificate]: which interval the certificate states


class _Reader:
    def __init__(self, path: Path, text: str, document: dict[str, Any]) -> None:
        self.path, self.index, self.doc = path, LineIndex(text.splitlines()), document
        self.name = str(path)
        self.files: list[tuple[str, str, str]] = []

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
        for key in data:
            if key not in keys:
                raise self.fail(f"unknown key '{key}'{did_you_mean(key, keys)}; expected one "
                                f"of {', '.join(keys)}", table, key, nth)

    def text(self, data: dict[str, Any], key: str, table: str | None, nth: int = 0) -> str:
        value = data.get(key)
        if not isinstance(value, str) or not value.strip():
            found = "none" if value is None else repr(value)
            raise self.fail(f"expected a '{key}' string, found {found}", table, key, nth)
        return value.strip()

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
        path = (self.path.parent / relative)
        if not path.is_file():
            raise self.fail(f"expected a file '{relative}' beside the campaign file, found "
                            "none", table, key)
        if path.stat().st_size > MAX_DATA_BYTES:
            raise self.fail(f"expected a data file of at most {MAX_DATA_BYTES // 2 ** 20} MiB "
                            f"(limits: {LIMITS_PAGE}), found a larger file", table, key)
        import hashlib

        try:
            digest = hashlib.sha256(path.read_bytes()).hexdigest()
        except OSError as exc:
            raise self.fail(f"expected a readable file '{relative}', found {exc.strerror}",
                            table, key) from exc
        self.files.append((f"{table}.{key}", str(path), digest))
        return path


def load_campaign(path: str | Path) -> Campaign:
    """Read and check a campaign file and everything it refers to."""
    from .files import read_input

    path = Path(path)
    raw = read_input(path, limit=MAX_FILE_BYTES, what="campaign file", error=CampaignError)
    text = decode(raw, str(path), "campaign")
    reader = _Reader(path, text, read_toml(text, str(path)))
    import hashlib

    return _campaign(reader, hashlib.sha256(raw).hexdigest())


def _campaign(r: _Reader, sha256: str) -> Campaign:
    for key in r.doc:
        if key not in _TOP:
            raise r.fail(f"unknown top-level key '{key}'{did_you_mean(key, _TOP)}; expected "
                         f"one of {', '.join(_TOP)}", None, key)
    check_strings(r.doc, r.where)
    title = r.text(r.doc, "title", None)
    unit = r.text(r.doc, "unit", None)
    char = r.section("characterization", True) or {}
    model = load_model(r.file(char, "model", "characterization"))
    measurand = r.text(char, "measurand", "characterization")
    names = [m.name for m in model.measurands]
    if measurand not in names:
        raise r.fail(f"expected a measurand of {model.source} ({', '.join(names)}), found "
                     f"'{measurand}'{did_you_mean(measurand, names)}", "characterization",
                     "measurand")
    runs, run_inputs = _runs(r, char, model)
    covers = _covers(r, char, model)
    from .methods import check_primary_references, read_methods

    label = r.text(char, "label", "characterization") if "label" in char \
        else "characterization"
    plan = read_methods(r, label)
    if plan is not None:
        check_primary_references(r, plan, model, run_inputs)
    homogeneity = _homogeneity(r)
    stability_section = r.section("stability", False)
    stability = _stability(r, stability_section)
    from .stability import read_stability_plan

    stability_plan = read_stability_plan(r, stability_section)
    shelf = u_sts = 0.0
    if stability_section is not None:
        shelf = r.number(stability_section, "shelf_life", "stability", positive=True)
        u_sts = r.number(stability_section, "u_short_term", "stability", default=0.0)
    k, coverage, fields = _certificate(r)
    return Campaign(
        title=title, material=str(r.doc.get("material", "")), unit=unit, source=r.name,
        sha256=sha256, model=model, measurand=measurand, runs=runs, run_inputs=run_inputs,
        scatter_covers=covers, homogeneity=homogeneity, stability=stability,
        shelf_life=shelf, u_short_term=u_sts, comparisons=_comparisons(r), k=k,
        coverage=coverage, certificate=fields,
        extra=tuple((key, str(r.doc[key])) for key in ("producer", "description")
                    if key in r.doc),
        data_files=tuple(entry for entry in r.files if entry[0] != "characterization.model"),
        method_label=label, methods=plan, stability_plan=stability_plan,
        reported_interval=_reported_interval(r))


def read_table(path: Path, numeric: tuple[str, ...], text_columns: tuple[str, ...] = (),
               at_least: int = 2) -> Any:
    """A CSV table with the named columns; numeric columns converted cell by cell."""
    import pandas as pd

    shown = str(path)
    try:
        frame = pd.read_csv(path, dtype=str, keep_default_na=False, skipinitialspace=True)
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError) as exc:
        raise CampaignError(f"expected a CSV table with a header row, found "
                            f"{type(exc).__name__}: {str(exc).strip()}",
                            Location(file=shown)) from exc
    frame.columns = [str(c).strip() for c in frame.columns]
    for column in (*numeric, *text_columns):
        if column not in frame.columns:
            raise CampaignError(f"expected a column '{column}'"
                                f"{did_you_mean(column, frame.columns)}, found the columns "
                                f"{', '.join(frame.columns)}", Location(file=shown))
    if len(frame) < at_least:
        raise CampaignError(f"expected at least {at_least} data rows, found {len(frame)}",
                            Location(file=shown))
    for column in numeric:
        frame[column] = _numbers(frame[column], column, shown)
    return frame


def _numbers(cells: Any, column: str, shown: str) -> np.ndarray:
    values = np.empty(len(cells))
    for row, cell in enumerate(cells):
        try:
            values[row] = float(cell)
        except ValueError:
            values[row] = math.nan
        if not math.isfinite(values[row]):
            raise CampaignError(f"column '{column}': expected a finite number, found "
                                f"'{cell}'", Location(file=shown, line=row + 2))
    return values


def _runs(r: _Reader, char: dict[str, Any], model: Model) -> tuple[Any, tuple[str, ...]]:
    path = r.file(char, "runs", "characterization")
    import pandas as pd

    header = pd.read_csv(path, nrows=0, dtype=str).columns if path.stat().st_size else []
    inputs = tuple(str(c).strip() for c in header
                   if str(c).strip() in {i.name for i in model.inputs})
    if not inputs:
        raise r.fail(f"expected columns named like inputs of the model in '{path.name}', "
                     "found none", "characterization", "runs")
    for name in inputs:
        if model.input(name).molar_mass is not None:
            raise r.fail(f"expected run columns for measured inputs, found '{name}', which "
                         "a formula gives", "characterization", "runs")
    return read_table(path, inputs), inputs


def _covers(r: _Reader, char: dict[str, Any], model: Model) -> tuple[str, ...]:
    covers = char.get("scatter_covers", [])
    names = [i.name for i in model.inputs]
    if not isinstance(covers, list) or not all(isinstance(c, str) for c in covers):
        raise r.fail(f"expected a list of input names, found {covers!r}", "characterization",
                     "scatter_covers")
    for name in covers:
        if name not in names:
            raise r.fail(f"unknown input '{name}'{did_you_mean(name, names)}",
                         "characterization", "scatter_covers")
    return tuple(covers)


def _homogeneity(r: _Reader) -> tuple[tuple[str, np.ndarray], ...] | None:
    section = r.section("homogeneity", False)
    if section is None:
        return None
    path = r.file(section, "data", "homogeneity")
    frame = read_table(path, ("value",), ("unit",), at_least=4)
    groups = tuple((str(unit), group["value"].to_numpy(dtype=float))
                   for unit, group in frame.groupby("unit", sort=False))
    if len(groups) < 2:
        raise CampaignError(f"expected at least 2 units, found {len(groups)}",
                            Location(file=str(path)))
    few = [unit for unit, values in groups if values.size < 2]
    if few:
        raise CampaignError(f"expected at least 2 replicates per unit, found 1 for "
                            f"{', '.join(few)}", Location(file=str(path)))
    return groups


def _stability(r: _Reader, section: dict[str, Any] | None) -> tuple[np.ndarray, np.ndarray] | None:
    if section is None:
        return None
    path = r.file(section, "data", "stability")
    frame = read_table(path, ("time", "value"), at_least=3)
    times = frame["time"].to_numpy(dtype=float)
    if np.unique(times).size < 2:
        raise CampaignError(f"expected at least 2 different time points, found "
                            f"{np.unique(times).size}", Location(file=str(path)))
    return times, frame["value"].to_numpy(dtype=float)


def _comparisons(r: _Reader) -> tuple[Comparison, ...]:
    entries = r.doc.get("comparison", [])
    if not isinstance(entries, list):
        raise r.fail("expected [[comparison]] tables, found a single value", None, "comparison")
    made = []
    for nth, entry in enumerate(entries):
        if not isinstance(entry, dict):
            raise r.fail(f"expected a table, found {entry!r}", "comparison", None, nth)
        r.known(entry, "comparison", _SECTIONS["comparison"], nth)
        label = r.text(entry, "label", "comparison", nth)
        value = entry.get("value")
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise r.fail(f"expected a number 'value', found {value!r}", "comparison", "value",
                         nth)
        if ("u" in entry) == ("expanded" in entry):
            raise r.fail("expected either 'expanded' with 'k' or 'u', found "
                         + ("both" if "u" in entry else "neither"), "comparison", None, nth)
        if "u" in entry:
            u = r.number(entry, "u", "comparison", positive=True, nth=nth)
            expanded = 2.0 * u
        else:
            expanded = r.number(entry, "expanded", "comparison", positive=True, nth=nth)
            u = expanded / r.number(entry, "k", "comparison", positive=True, nth=nth)
        made.append(Comparison(label=label, estimate=float(value), standard_uncertainty=u,
                               expanded_uncertainty=expanded))
    return tuple(made)


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
        coverage = r.number(data, "coverage", "certificate", positive=True)
        if coverage >= 1:
            raise r.fail(f"expected a coverage probability in (0, 1), found {coverage:g}",
                         "certificate", "coverage")
    if k is None and coverage is None:
        k = 2.0
    fields = tuple((key, str(value)) for key, value in data.items()
                   if key not in ("k", "coverage", "reported_interval"))
    return k, coverage, fields


def _reported_interval(r: _Reader) -> str:
    """``[certificate] reported_interval``: gum (default), monte_carlo, monte_carlo_shortest."""
    from .model import check_reported

    data = r.doc.get("certificate", {})
    if "reported_interval" not in data:
        return "gum"
    try:
        return check_reported(data["reported_interval"],
                              r.where("certificate", "reported_interval"))
    except BudgetError as error:
        raise CampaignError(error.message, error.location) from error
