"""Model files (TOML) → a frozen :class:`Model`: inputs, definitions, measurands, units.

Method: GUM 4.1 — the measurand Y is a function f(X_1, …, X_N) of input quantities; each
input carries an estimate x_i, a standard uncertainty u(x_i), degrees of freedom ν_i and a
probability distribution (JCGM 101 6.4). Definitions are substituted into the equations
before differentiation, so they carry no uncertainty of their own. Every symbol stands
for its input's value *in the input's own unit*; each measurand expression returns the
value in the measurand's unit (see ``units.py``).
"""

from __future__ import annotations

import datetime as dt
import hashlib
import keyword
import re
import tomllib
from dataclasses import dataclass, field, replace
from fractions import Fraction
from functools import partial
from pathlib import Path
from types import MappingProxyType, SimpleNamespace
from typing import Any, Callable

import numpy as np

from . import _algebra as alg
from ._chemistry import CONVENTIONS, DEFAULT_CONVENTION
from ._errors import (InputError, Location, ModelSyntaxError, UnitError,
                     did_you_mean)
from ._tomlkeys import check_keys
from ._limits import (LIMITS_PAGE, MAX_FILE_BYTES, check_digits, check_probability,
                     check_seed, check_strings, check_trials, shorten)
from ._expressions import Term, build, names_in, parse_expression
from ._gcpause import paused_collection
from ._register import (CertificateUse, Register, agreement_warnings, date_warnings,
                       load_register, read_date)
from ._statements import STATEMENT_WAYS, read_statement
from ._units import UnitInfo, dimension_text, known_unit, parse_unit
from . import _correlations as corr
from . import _together as together
from ._together import Together
from ._arguments import keywords_checked

__all__ = ["Input", "Definition", "Measurand", "Settings", "Model", "load_model",
           "parse_model", "DEFAULT_SEED"]

DEFAULT_SEED = 20260601
_TOP_KEYS = ("title", "description", "measurands", "definitions", "inputs", "correlations",
             "estimated_together", "settings", "fits", "records", "register", "measured")
_SETTING_KEYS = ("coverage", "trials", "seed", "digits", "atomic_weights",
                 "reported_interval")
REPORTED_INTERVALS = ("gum", "monte_carlo", "monte_carlo_shortest")
_MEASURAND_KEYS = ("equation", "unit", "description")
_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*\Z")


@dataclass(frozen=True, slots=True, kw_only=True)
class Input:
    """An input quantity X_i: its distribution (which holds the estimate and the widths),
    ν, Type A/B and where it came from."""

    name: str
    unit: str
    distribution: Any
    dof: float
    type: str
    basis: str
    description: str = ""
    source: str = ""
    molar_mass: Any = None
    line: int | None = None  # of its [inputs.NAME] header, for messages about it

    def __post_init__(self) -> None:
        """A distribution object (it validated its own parameters) and ν > 0."""
        if not (hasattr(self.distribution, "estimate")
                and hasattr(self.distribution, "standard_uncertainty")):
            raise InputError(f"expected a budget.distributions object for input "
                             f"'{self.name}', found {self.distribution!r}")
        if not self.dof > 0:  # also refuses NaN
            raise InputError(f"expected degrees of freedom > 0 for input '{self.name}', "
                             f"found {self.dof!r}")

    @property
    def estimate(self) -> float:
        """x_i, held by the distribution (computed once when it was built)."""
        return float(self.distribution.estimate)

    @property
    def standard_uncertainty(self) -> float:
        """u(x_i), held by the distribution (computed once when it was built)."""
        return float(self.distribution.standard_uncertainty)

    @property
    def symbol(self) -> Any:
        """The input's sympy symbol (loads sympy)."""
        import sympy

        return sympy.Symbol(self.name)


@dataclass(frozen=True, slots=True, kw_only=True)
class Definition:
    name: str
    text: str
    shown_graph: alg.Node = field(repr=False)  # deep graphs: repr would recurse past Python's limit
    unit: str

    @property
    def shown(self) -> Any:
        """The definition as written, as a sympy expression (loads sympy)."""
        return alg.to_sympy(self.shown_graph)


@dataclass(frozen=True, slots=True, kw_only=True)
class Measurand:
    """An output quantity: its expression in the inputs, in its own unit.

    ``graph`` is the expression graph the numeric path compiles; ``expression``,
    ``shown`` and ``opaque`` are its sympy forms for display (built on first use)."""

    name: str
    equation: str
    unit: str
    graph: alg.Node = field(repr=False)  # the equation says it; a deep graph's repr would
    shown_graph: alg.Node = field(repr=False)  # recurse past Python's limit
    opaque_graph: alg.Node = field(repr=False)
    description: str = ""
    line: int | None = None

    @property
    def expression(self) -> Any:
        """In coherent SI with definitions substituted, in the measurand's unit (sympy)."""
        return alg.to_sympy(self.graph)

    @property
    def shown(self) -> Any:
        """The equation as written (sympy)."""
        return alg.to_sympy(self.shown_graph)

    @property
    def opaque(self) -> Any:
        """As ``expression`` with built-in formulas kept as calls (sympy)."""
        return alg.to_sympy(self.opaque_graph)


@dataclass(frozen=True, slots=True, kw_only=True)
class Settings:
    coverage_probability: float = 0.95
    trials: int | str = 1_000_000
    seed: int = DEFAULT_SEED
    digits: int = 2
    atomic_weights: str = DEFAULT_CONVENTION
    reported_interval: str = "gum"  # which interval is the result: REPORTED_INTERVALS


@dataclass(frozen=True, slots=True, kw_only=True)
class Model:
    title: str
    description: str
    inputs: tuple[Input, ...]
    definitions: tuple[Definition, ...]
    measurands: tuple[Measurand, ...]
    correlations: tuple[tuple[str, str, float], ...]
    settings: Settings
    estimated_together: tuple[Together, ...] = ()
    source: str = "<string>"
    sha256: str = ""
    warnings: tuple[str, ...] = field(default=())
    certificates: tuple[CertificateUse, ...] = field(default=())
    measured: tuple[dt.date, ...] = field(default=())
    files: tuple[tuple[str, str, str], ...] = field(default=())  # (role, path, sha256)
    changes: tuple[str, ...] = field(default=())  # what-if changes against the file

    def changed(self, inputs: tuple[Input, ...], change: str) -> "Model":
        """A what-if copy: new inputs, the change recorded, the file's digest dropped."""
        return replace(self, inputs=inputs, changes=self.changes + (change,), sha256="")
    records: tuple[Any, ...] = field(default=())  # RecordView of each [fits]/[records] table
    chain: tuple[Any, ...] = field(default=())  # chained.Link: results of earlier models

    def __repr__(self) -> str:
        """One line, as the results show themselves (the fields of a model of 10⁴ inputs
        would be megabytes, and a deep expression's graph beyond Python's recursion)."""
        names = ", ".join(m.name for m in self.measurands[:5])
        more = f" and {len(self.measurands) - 5} more" if len(self.measurands) > 5 else ""
        changed = f"; what-if: {'; '.join(self.changes)}" if self.changes else ""
        return (f"<Model {self.title!r} ({self.source}): {names}{more} from "
                f"{len(self.inputs)} inputs{changed}>")

    def input(self, name: str) -> Input:
        """The input called ``name`` (a ``KeyError`` with a "did you mean")."""
        from ._notebook import lookup

        return lookup(self.inputs, name, "input")

    def correlation_matrix(self) -> np.ndarray:
        return corr.matrix([i.name for i in self.inputs], self.correlations)

    @keywords_checked
    def with_uncertainty(self, name: str, *, u: float | None = None,
                         factor: float | None = None) -> "Model":
        """A what-if copy in which input ``name`` has the standard uncertainty ``u`` (in the
        input's unit), or its uncertainty multiplied by ``factor``: give exactly one.
        Every width of the distribution changes in proportion; its shape is kept."""
        from ._whatif import input_with_uncertainty

        self.input(name)  # a KeyError with a "did you mean" for an unknown name
        inputs = tuple(input_with_uncertainty(i, u=u, factor=factor) if i.name == name
                       else i for i in self.inputs)
        change = f"u({name}) = {float(u):g}" if u is not None else \
            f"u({name}) × {float(factor):g}"  # type: ignore[arg-type]  # checked above
        return self.changed(inputs, change)

    @keywords_checked
    def with_value(self, name: str, value: float) -> "Model":
        """A what-if copy in which input ``name`` has the estimate ``value`` (its unit);
        the distribution moves with it and keeps its widths."""
        from ._whatif import input_with_value

        self.input(name)
        inputs = tuple(input_with_value(i, value) if i.name == name else i
                       for i in self.inputs)
        return self.changed(inputs, f"{name} = {float(value):g}")

    @keywords_checked
    def with_distribution(self, name: str, distribution: Any) -> "Model":
        """A what-if copy in which input ``name`` is drawn from ``distribution``: a shape
        name (``"normal"``, ``"rectangular"``, ``"triangular"``, ``"arcsine"``) keeping the
        estimate and the standard uncertainty, or a distribution object
        (``budget.distributions.Rectangular(estimate=…, half_width=…)`` …)."""
        from ._whatif import input_with_distribution

        self.input(name)
        inputs = tuple(input_with_distribution(i, distribution) if i.name == name else i
                       for i in self.inputs)
        shown = distribution if isinstance(distribution, str) else distribution.name
        return self.changed(inputs, f"{name} drawn from a {shown} distribution")


def load_model(path: str | Path, *, register: Path | None = None, **overrides: Any
               ) -> Model:
    """Read a model file; every problem is a :class:`BudgetError` naming the file.

    ``register``: the calibration register to use when the file names none (a campaign's).
    """
    from ._files import read_input

    data = read_input(path, limit=MAX_FILE_BYTES, what="model file", error=InputError)
    return parse_model(data, name=str(path), register=register, **overrides)


def load_model_in_chain(path: Path, loading: tuple[str, ...], where: Location) -> Model:
    """An earlier model of a chain (``result_of``); ``loading`` guards against cycles."""
    try:
        data = path.read_bytes()
    except OSError as exc:
        reason = "no such file" if isinstance(exc, FileNotFoundError) else exc.strerror
        raise InputError(f"expected a model file '{path}', found {reason}", where) from exc
    text = decode(data, str(path))
    reader = _Reader(text, str(path), read_toml(text, str(path)), loading)
    return reader.model(hashlib.sha256(data).hexdigest(), {})


def decode(data: bytes | str, name: str, what: str = "model") -> str:
    """The text of a TOML file, refusing binary and empty files with a clear message."""
    if isinstance(data, str):
        text = data
    else:
        if b"\x00" in data:
            raise ModelSyntaxError("expected a UTF-8 text file, found binary data",
                                   Location(file=name))
        try:
            text = data.decode("utf-8-sig")
        except UnicodeDecodeError as exc:
            raise ModelSyntaxError(f"expected UTF-8 text, found an undecodable byte at "
                                   f"byte {exc.start + 1}", Location(file=name)) from exc
    if not text.strip():
        raise ModelSyntaxError(f"expected a TOML {what}, found an empty file",
                               Location(file=name))
    return text


def _loads(text: str) -> dict[str, Any]:
    """TOML through rtoml (a compiled parser, seven times faster than the standard
    library's on a 5 MB correlation matrix) where installed. Only its successes are
    used: on any error, including the documents it declines (nesting past its limit,
    integers beyond 64 bits), the standard tomllib reads the text again, so messages and
    limits are the standard parser's."""
    try:
        import rtoml
    except ImportError:
        return tomllib.loads(text)
    try:
        loaded = rtoml.loads(text)
    except Exception:  # noqa: BLE001 - any refusal: the standard parser decides
        return tomllib.loads(text)
    if not isinstance(loaded, dict):
        return tomllib.loads(text)
    return loaded


def read_toml(text: str, name: str) -> dict[str, Any]:
    try:
        return _loads(text)
    except RecursionError as exc:
        raise ModelSyntaxError(f"expected TOML nested at most a few hundred levels deep "
                               f"(limits: {LIMITS_PAGE}), found deeper nesting",
                               Location(file=name)) from exc
    except tomllib.TOMLDecodeError as exc:
        found = re.search(r"\(at line (\d+), column (\d+)\)", str(exc))
        line = int(found.group(1)) if found else None
        reason = re.sub(r"\s*\(at line.*\)$", "", str(exc))
        raise ModelSyntaxError(f"expected valid TOML, found a syntax error: {reason}",
                               Location(file=name, line=line)) from exc


def parse_model(data: bytes | str, name: str = "<string>", *, register: Path | None = None,
                **overrides: Any) -> Model:
    """Parse model text (or bytes); ``overrides`` replace ``[settings]`` values."""
    if not isinstance(data, (str, bytes)) or not isinstance(name, str):
        wrong, argument = (data, "text") if not isinstance(data, (str, bytes)) else \
            (name, "name")
        raise InputError(f"expected {argument} as a string, found {type(wrong).__name__} "
                         f"{shorten(repr(wrong))}", Location(file="parse_model()", key=argument))
    text = decode(data, name)
    raw = data if isinstance(data, bytes) else data.encode("utf-8")
    with paused_collection():
        return _parse_text(text, raw, name, register, overrides)


def _parse_text(text: str, raw: bytes, name: str, register: Path | None,
                overrides: dict[str, Any]) -> Model:
    document = read_toml(text, name)
    try:
        reader = _Reader(text, name, document)
        reader.default_register = register
        return reader.model(hashlib.sha256(raw).hexdigest(), overrides)
    except RecursionError as exc:  # a safety net: the builders walk without recursion
        raise ModelSyntaxError(f"expected a model nested less deeply (expressions and "
                               f"chains of definitions; limits: {LIMITS_PAGE}), found one "
                               "too deep to evaluate", Location(file=name)) from exc


# What a model without [fits] or [records] tables generates: nothing (their reader, with
# the data-file and fitting modules, is then not loaded at all)
_NOTHING_GENERATED = SimpleNamespace(inputs=(), correlations=(), together=(),
                                     definitions=MappingProxyType({}), views=(), warnings=())


class _Reader:
    """Walks one parsed TOML document; knows how to point at a key's line."""

    def __init__(self, text: str, name: str, document: dict[str, Any],
                 loading: tuple[str, ...] = ()) -> None:
        self.index, self.name, self.doc = LineIndex(text.splitlines()), name, document
        self.loading = loading or ((str(Path(name).resolve()),) if name != "<string>" else ())
        self.links: list[Any] = []
        self.default_register: Path | None = None

    def where(self, table: str | None, key: str | None = None, nth: int = 0) -> Location:
        return Location(file=self.name, table=table, key=key,
                        line=self.index.find(table, key, nth))

    def model(self, sha256: str, overrides: dict[str, Any]) -> Model:
        check_keys(self.doc, _TOP_KEYS, lambda key: self.where(None, key),
                   kind="top-level key")
        check_strings(self.doc, self.where)
        title = self.doc.get("title")
        if not isinstance(title, str) or not title.strip():
            raise InputError(f"expected a 'title' string, found "
                             f"{'none' if title is None else repr(title)}",
                             self.where(None, "title"))
        settings = replace(self.settings(), **_overrides(overrides, self.name))
        self.register = self.read_register(settings.atomic_weights)
        self.uses: list[CertificateUse] = []
        self.checks: list[str] = []
        generated: Any = _NOTHING_GENERATED
        if "fits" in self.doc or "records" in self.doc:
            from ._recordinputs import generate

            generated = generate(self.doc, _base(self.name), self.where)
        inputs = self.inputs(settings.atomic_weights, bool(generated.inputs))
        inputs += self.made_inputs(generated, {i.name for i in inputs})
        measured = self.measured()

        def home(name: str) -> Location:
            return self.where(*self.home(generated, name))

        table = {i.name: _input_term(i, partial(home, i.name)) for i in inputs}
        definitions, terms = self.definitions(table, generated.definitions)
        measurands = self.measurands(terms)
        pairs = corr.read(self.doc.get("correlations", []), [i.name for i in inputs],
                          self.where) + tuple(generated.correlations)
        sets = together.read(self.doc.get(together.KEY, []), inputs, self.where)
        sets += tuple(Together(inputs=names, dof=dof, note=note)
                      for names, dof, note in generated.together)
        uses = tuple(self.uses)
        warnings = (_unused_inputs(inputs, measurands) + tuple(self.checks)
                    + date_warnings(uses, measured) + tuple(generated.warnings))
        files: tuple[tuple[str, str, str], ...] = (("model", self.name, sha256),)
        if self.register is not None:
            files += (("register", self.register.source, self.register.sha256),)
        files += tuple((view.table, str(_base(self.name) / view.file),
                        _digest(_base(self.name) / view.file)) for view in generated.views)
        made = Model(title=title.strip(),
                     description=_text(self.doc, "description", self.where, None),
                     inputs=inputs, definitions=definitions, measurands=measurands,
                     correlations=pairs, settings=settings, estimated_together=sets,
                     source=self.name, sha256=sha256, warnings=warnings, certificates=uses,
                     measured=measured, files=files, records=tuple(generated.views))
        from ._plausibility import model_warnings

        model = replace(made, warnings=warnings + model_warnings(made))
        if self.links:
            from ._chained import resolve

            self.check_not_grouped({link.input: str(self.doc["inputs"][link.input]["result_of"])
                                    for link in self.links})
            return resolve(model, tuple(self.links))
        return model

    def check_not_grouped(self, chained: dict[str, str]) -> None:
        """Refuse a chained input in [[correlations]] or [[estimated_together]]: it is
        replaced by the earlier model's equation, so its correlations are those of the
        inputs it shares (``shares``), never a coefficient of its own."""
        for table, key in (("correlations", "between"), (together.KEY, "inputs")):
            for n, entry in enumerate(self.doc.get(table, [])):
                named = [name for name in entry.get(key, []) if name in chained]
                if named:
                    raise InputError(
                        f"expected inputs that are not results of another model, found "
                        f"{named[0]!r} (result_of = {chained[named[0]]!r}): its "
                        "correlations with this model come from the inputs it shares "
                        "(shares = { this_input = \"earlier_input\" })",
                        self.where(table, key, n))

    def read_register(self, convention: str) -> Register | None:
        if "register" not in self.doc:
            if self.default_register is None:
                return None
            return load_register(self.default_register, self.where(None), convention)
        relative = self.doc["register"]
        where = self.where(None, "register")
        if not isinstance(relative, str) or not relative.strip():
            raise InputError(f"expected the path of a register file, found {relative!r}",
                             where)
        folder = Path(self.name).parent if self.name != "<string>" else Path(".")
        return load_register(folder / relative.strip(), where, convention)

    def measured(self) -> tuple[dt.date, ...]:
        value = self.doc.get("measured")
        if value is None:
            return ()
        where = self.where(None, "measured")
        days = value if isinstance(value, list) else [value]
        if not days:
            raise InputError("expected a date or a list of dates, found an empty list", where)
        return tuple(read_date(day, where) for day in days)

    def home(self, generated: Any, name: str) -> tuple[str, str | None]:
        """The table and key where an input (typed in or generated) is stated."""
        for item in generated.inputs:
            if item.name == name:
                return item.table, None
        return "inputs." + name, "unit"

    def made_inputs(self, generated: Any, taken: set[str]) -> tuple[Input, ...]:
        if not generated.inputs:
            return ()
        from ._recordinputs import made_input

        made = []
        in_sets = {n for names, _, _ in generated.together for n in names}
        for item in generated.inputs:
            where = self.where(item.table, None)
            _check_name(item.name, where)
            if item.name in taken:
                raise InputError(f"expected a new name, found '{item.name}' which is also "
                                 "an [inputs] table", where)
            taken.add(item.name)
            made.append(made_input(item, item.name in in_sets))
        return tuple(made)

    def table(self, key: str) -> dict[str, Any]:
        value = self.doc.get(key, {})
        if not isinstance(value, dict):
            raise InputError(f"expected a table [{key}], found {type(value).__name__}",
                             self.where(None, key))
        return value

    def settings(self) -> Settings:
        data = self.table("settings")
        check_keys(data, _SETTING_KEYS, lambda key: self.where("settings", key))
        return check_settings(data, lambda key: self.where("settings", key))

    def inputs(self, convention: str, generated: bool = False) -> tuple[Input, ...]:
        tables = self.table("inputs")
        if not tables and not generated:
            raise InputError("expected at least one [inputs.NAME] table, found none",
                             self.where(None))
        made = []
        for name, data in tables.items():
            made.append(self.one_input(name, data, convention))
        return tuple(made)

    def one_input(self, name: str, data: Any, convention: str) -> Input:
        where = self.where("inputs." + name)
        _check_name(name, where)
        if not isinstance(data, dict):
            raise InputError(f"expected a table [inputs.{name}], found {data!r}", where)
        if "result_of" in data:
            from ._chained import read_link

            link, placeholder = read_link(name, data, _base(self.name),
                                          lambda key: self.where("inputs." + name, key),
                                          self.loading)
            self.links.append(link)
            return placeholder
        use = self.certificate_use(name, data)
        if use is not None and not any(key in data for key in STATEMENT_WAYS):
            data = self.from_certificate(name, data, use)
        statement = read_statement(data, lambda key: self.where("inputs." + name, key),
                                   convention)
        def unit_where() -> Location:  # found only when needed: 10⁵ inputs look it up
            return self.where("inputs." + name, "unit")

        unit_text = statement.unit if statement.unit is not None else "1"
        unit = known_unit(unit_text) or parse_unit(unit_text, unit_where())
        distribution = _in_unit(statement, unit, unit_where)
        made = Input(name=name, unit=unit.text, distribution=distribution,
                     dof=statement.dof, type=statement.type, basis=statement.basis,
                     description=_text(data, "description", self.where, "inputs." + name),
                     source=_text(data, "source", self.where, "inputs." + name),
                     molar_mass=statement.molar_mass, line=where.line)
        if use is not None:
            stated = use.certificate.value(use.stated, where)
            self.checks.extend(agreement_warnings(
                name, unit, made.estimate, made.standard_uncertainty, use, stated,
                self.where("inputs." + name, "certificate")))
        return made

    def certificate_use(self, name: str, data: dict[str, Any]) -> CertificateUse | None:
        """The certificate an input names (``certificate``, ``stated``), if any."""
        table = "inputs." + name
        if "certificate" not in data:
            if "stated" in data:
                raise InputError("expected 'certificate' with 'stated', found none",
                                 self.where(table, "stated"))
            return None
        where = self.where(table, "certificate")
        if self.register is None:
            raise InputError("expected a top-level 'register' file for inputs that name a "
                             "certificate, found none", where)
        ident = data["certificate"]
        if not isinstance(ident, str):
            raise InputError(f"expected a certificate identifier string, found {ident!r}",
                             where)
        certificate = self.register.certificate(ident, where)
        stated = data.get("stated")
        if stated is not None and not isinstance(stated, str):
            raise InputError(f"expected the name of a stated value, found {stated!r}",
                             self.where(table, "stated"))
        value = certificate.value(stated, self.where(table, "stated" if stated else
                                                     "certificate"))
        use = CertificateUse(input=name, certificate=certificate, stated=value.name)
        self.uses.append(use)
        return use

    def from_certificate(self, name: str, data: dict[str, Any],
                         use: CertificateUse) -> dict[str, Any]:
        """An input that states nothing itself takes the certificate's statement whole."""
        stated = use.certificate.value(use.stated, self.where("inputs." + name))
        own = ("unit", "distribution", "dof", "reliability", "k", "level")
        for key in own if stated.reading else ("value", *own):
            if key in data:
                raise InputError(f"expected either a full statement of the uncertainty or "
                                 f"none (taken from certificate '{use.certificate.identifier}'"
                                 f"), found '{key}' alone", self.where("inputs." + name, key))
        if stated.reading and "value" not in data:
            raise InputError(f"expected the 'value' read (certificate "
                             f"'{use.certificate.identifier}' states only the uncertainty of "
                             f"a reading), found none", self.where("inputs." + name))
        return {**stated.table, **data}

    def definitions(self, table: dict[str, Term], generated: dict[str, str]
                    ) -> tuple[tuple[Definition, ...], dict[str, Any]]:
        texts = dict(self.table("definitions"))
        for name in generated:
            if name in texts:
                raise InputError(f"expected a new name, found '{name}' which is also a "
                                 "record", self.where("definitions", name))
        texts.update(generated)
        trees = {}
        places = {}
        for name, text in texts.items():
            where = self.where("definitions", name) if name not in generated else \
                self.where("records." + name)
            places[name] = where
            _check_name(name, where)
            if name in table:
                raise InputError(f"expected a new name, found '{name}' which is also an "
                                 "input", where)
            trees[name] = parse_expression(text, where)
        order = _definition_order(trees, self.where("definitions"))
        terms = dict(table)
        made = []
        for name in order:
            term = build(trees[name], terms, texts[name], places[name])
            terms[name] = Term(term.expr, alg.symbol(name), term.unit, term.offset,
                               term.opaque)
            made.append(Definition(name=name, text=texts[name].strip(),
                                   shown_graph=term.shown,
                                   unit=f"{term.unit:~}"))
        return tuple(made), terms

    def measurands(self, terms: dict[str, Term]) -> tuple[Measurand, ...]:
        tables = self.table("measurands")
        if not tables:
            raise InputError("expected at least one [measurands.NAME] table, found none",
                             self.where(None))
        return tuple(self.one_measurand(name, data, terms) for name, data in tables.items())

    def one_measurand(self, name: str, data: Any, terms: dict[str, Term]) -> Measurand:
        where = self.where("measurands." + name)
        _check_name(name, where)
        if name in terms:
            raise InputError(f"expected a new name, found '{name}' which is also an input "
                             "or a definition", where)
        if not isinstance(data, dict):
            raise InputError(f"expected a table [measurands.{name}], found {data!r}", where)
        check_keys(data, _MEASURAND_KEYS, lambda key: self.where("measurands." + name, key))
        if "equation" not in data:
            raise InputError("expected an 'equation', found none", where)
        eq_where = self.where("measurands." + name, "equation")
        term = build(parse_expression(data["equation"], eq_where), terms, data["equation"],
                     eq_where)
        unit_where = self.where("measurands." + name, "unit")
        unit = _measurand_unit(data.get("unit"), term, unit_where)
        factor = alg.number(Fraction(unit.factor))
        return Measurand(name=name, equation=data["equation"].strip(), unit=unit.text,
                         graph=term.expr / factor, shown_graph=term.shown,
                         opaque_graph=term.opaque / factor,
                         description=_text(data, "description", self.where,
                                           "measurands." + name), line=eq_where.line)


def check_settings(data: dict[str, Any], where: Any) -> Settings:
    made: dict[str, Any] = {}
    if "coverage" in data:
        made["coverage_probability"] = check_probability(data["coverage"], where("coverage"))
    if "trials" in data:
        trials = data["trials"]
        if trials != "adaptive" and (isinstance(trials, bool) or not isinstance(trials, int)
                                     or trials < 0):
            raise InputError(f"expected a whole number ≥ 0 or \"adaptive\", found "
                             f"{shorten(repr(trials))}", where("trials"))
        made["trials"] = trials if trials == "adaptive" else check_trials(trials,
                                                                          where("trials"))
    if "seed" in data:
        made["seed"] = check_seed(data["seed"], where("seed"))
    if "digits" in data:
        made["digits"] = check_digits(data["digits"], where("digits"))
    if "atomic_weights" in data:
        value = data["atomic_weights"]
        if value not in CONVENTIONS:
            raise InputError(f"expected one of {', '.join(CONVENTIONS)}, found {value!r}"
                             f"{did_you_mean(str(value), CONVENTIONS)}",
                             where("atomic_weights"))
        made["atomic_weights"] = value
    if "reported_interval" in data:
        made["reported_interval"] = check_reported(data["reported_interval"],
                                                   where("reported_interval"))
    return Settings(**made)


_OVERRIDE_KEYS = {"coverage_probability": "coverage", "trials": "trials", "seed": "seed",
                  "digits": "digits", "atomic_weights": "atomic_weights",
                  "reported_interval": "reported_interval"}


def _overrides(given: dict[str, Any], name: str) -> dict[str, Any]:
    """Keyword overrides of ``[settings]`` (``load_model(path, trials=2000)``), checked as
    the table's keys are; ``None`` keeps the file's value."""
    given = {("coverage_probability" if k == "coverage" else k): v  # evaluate's word too
             for k, v in given.items() if v is not None}
    for key in given:
        if key not in _OVERRIDE_KEYS:
            raise InputError(f"expected a setting to override, one of "
                             f"{', '.join(_OVERRIDE_KEYS)}, found '{key}'"
                             f"{did_you_mean(key, _OVERRIDE_KEYS)}",
                             Location(file=name, key=key))
    checked = check_settings({_OVERRIDE_KEYS[k]: v for k, v in given.items()},
                             lambda key: Location(file=name, key=key))
    return {k: getattr(checked, k) for k in given}


def check_reported(value: Any, where: Location) -> str:
    """A ``reported_interval`` value: gum, monte_carlo or monte_carlo_shortest."""
    if value not in REPORTED_INTERVALS:
        raise InputError(f"expected one of {', '.join(REPORTED_INTERVALS)}, found {value!r}"
                         f"{did_you_mean(str(value), REPORTED_INTERVALS)}", where)
    return str(value)


def _digest(path: Path) -> str:
    """The SHA-256 of a data file that fed the model (read again for the digest)."""
    try:
        return hashlib.sha256(Path(path).read_bytes()).hexdigest()
    except OSError:
        return "unreadable"


def _base(name: str) -> Path:
    """Record files are found next to the model file (or in the working directory)."""
    path = Path(name)
    return path.parent if path.is_file() else Path.cwd()


def _text(data: dict[str, Any], key: str, where: Callable[..., Location],
          table: str | None) -> str:
    """A free-text key (description, source): a string, never a number or list shown as
    Python would print it."""
    value = data.get(key, "")
    if not isinstance(value, str):
        raise InputError(f"expected a text string, found {shorten(repr(value))}",
                         where(table, key))
    return value


def _check_name(name: str, where: Location) -> None:
    if not _NAME.match(name) or name.startswith("__"):
        raise InputError(f"expected a name of letters, digits and '_' not starting with a "
                         f"digit or '__', found '{name}'", where)
    if keyword.iskeyword(name):  # an equation could never name it (read as Python syntax)
        raise InputError(f"expected a name that is not a reserved word of the expression "
                         f"syntax, found '{name}' (write for example '{name}_')", where)


def _in_unit(statement: Any, unit: Any, found_at: Callable[[], Location]) -> Any:
    """Express a constant's or a molar mass's distribution in the unit the user chose."""
    if statement.molar_mass is None and statement.si_value is None:
        return statement.distribution
    from .distributions import Exact

    where = found_at()
    wanted = parse_unit("g/mol" if statement.molar_mass is not None else statement.si_unit,
                        where)
    if unit.dimensionality != wanted.dimensionality or unit.offset:
        raise UnitError(f"expected a unit of {wanted.describe()}, found '{unit.text}' "
                        f"({unit.describe()})", where)
    scale = float(wanted.factor / unit.factor)
    if statement.molar_mass is not None:
        return replace(statement.distribution, scale=scale)
    return Exact(statement.si_value * scale)


def _input_term(item: Input, found_at: Callable[[], Location]) -> Term:
    unit = known_unit(item.unit) or parse_unit(item.unit, found_at())
    symbol = alg.symbol(item.name)
    factor = Fraction(unit.factor)
    scaled = symbol if factor == 1 else alg.number(factor) * symbol
    return Term(scaled, symbol, unit.unit, unit.offset, scaled)


def _measurand_unit(declared: Any, term: Term, where: Location) -> Any:
    if declared is None:
        if term.offset:
            return parse_unit("degC", where)
        return UnitInfo(text=term.unit.text, unit=term.unit, factor=term.unit.factor)
    unit = parse_unit(declared, where)
    if unit.offset != term.offset or unit.dimensionality != term.unit.dimensionality:
        found = "temperature on the Celsius scale" if term.offset else (
            dimension_text(term.unit))
        raise UnitError(f"expected the equation to give {unit.describe()} ('{unit.text}'), "
                        f"found {found}", where)
    return unit


def _definition_order(trees: dict[str, Any], where: Location) -> list[str]:
    """Definitions in dependency order; a cycle is an error naming its members.

    A depth-first search with an explicit stack, so a chain of 10⁵ definitions is fine."""
    order: list[str] = []
    state: dict[str, int] = {}
    uses = {name: [u for u in names_in(tree) if u in trees] for name, tree in trees.items()}
    for start in trees:
        if state.get(start) == 2:
            continue
        path: list[str] = [start]
        pending: list[list[str]] = [list(reversed(uses[start]))]
        state[start] = 1
        while path:
            if not pending[-1]:
                done = path.pop()
                pending.pop()
                state[done] = 2
                order.append(done)
                continue
            name = pending[-1].pop()
            if state.get(name) == 2:
                continue
            if state.get(name) == 1:
                cycle = path[path.index(name):] + [name]
                raise InputError(f"expected definitions without cycles, found the cycle "
                                 f"{' -> '.join(cycle)}", where)
            state[name] = 1
            path.append(name)
            pending.append(list(reversed(uses[name])))
    return order


def _unused_inputs(inputs: tuple[Input, ...],
                   measurands: tuple[Measurand, ...]) -> tuple[str, ...]:
    used = alg.symbols_in(m.graph for m in measurands)
    return tuple(f"input '{i.name}' appears in no measurand equation" for i in inputs
                 if i.name not in used and i.standard_uncertainty > 0)


_KEY = re.compile(r"\s*(?:[\"']([^\"']*)[\"']|([A-Za-z0-9_-]+))\s*=")
_HEADER = re.compile(r"\s*\[\[?([^\]]+)\]\]?\s*(#.*)?$")


class LineIndex:
    """Where each table header and key stands in a TOML text (built once per file)."""

    def __init__(self, lines: list[str]) -> None:
        self.lines = lines
        self.headers: list[tuple[int, str]] = []
        self.positions: dict[str, list[int]] = {}
        self.tables: dict[int, dict[str, int]] = {}
        for number, line in enumerate(lines):
            found = _HEADER.match(line)
            if found:
                name = ".".join(part.strip().strip('"').strip("'")
                                for part in found.group(1).split("."))
                self.positions.setdefault(name, []).append(len(self.headers))
                self.headers.append((number, name))

    def find(self, table: str | None, key: str | None, nth: int = 0) -> int | None:
        """1-based line of ``key`` in ``[table]`` (or of the table header), if found."""
        if table is None:
            return None if key is None else self._top(key)
        hits = self.positions.get(table, [])
        if len(hits) <= nth:
            return None
        position = hits[nth]
        start = self.headers[position][0]
        if key is None:
            return start + 1
        end = self.headers[position + 1][0] if position + 1 < len(self.headers) \
            else len(self.lines)
        return self._key(key, start + 1, end)

    def _top(self, key: str) -> int | None:
        end = self.headers[0][0] if self.headers else len(self.lines)
        found = self._key(key, 0, end)
        if found is not None:
            return found
        for number, name in self.headers:
            if name == key or name.startswith(key + "."):
                return number + 1
        return None

    def _key(self, key: str, start: int, end: int) -> int | None:
        found = self._keys(start, end).get(key)  # each table's keys indexed once
        if found is not None:
            return found + 1
        if end - start > 64:
            return None
        pattern = re.compile(r"\s*[\"']?" + re.escape(key) + r"[\"']?\s*=")
        for number in range(start, end):  # a key the index does not know ("a"b" = …)
            if pattern.match(self.lines[number]):
                return number + 1
        return None

    def _keys(self, start: int, end: int) -> dict[str, int]:
        """The first line of each plain key in lines start … end-1 (cached)."""
        cached = self.tables.get(start)
        if cached is None:
            cached = {}
            for number in range(start, end):
                found = _KEY.match(self.lines[number])
                if found:
                    cached.setdefault(found.group(1) or found.group(2), number)
            self.tables[start] = cached
        return cached
