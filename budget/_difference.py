"""Two budgets side by side: what changed, and why the expanded uncertainty moved.

Method: for each measurand the GUM writes u_c² = Σ_i (c_i u_i)² + Σ_{i≠j} c_i c_j u(x_i, x_j)
(+ the higher-order terms when asked for; GUM 5.1.2, 5.2.2). The change of u_c² from
budget A to budget B is therefore exactly the sum of the changes of these terms: each
input's variance term before and after says how much it moved u_c², and the correlation
and higher-order terms are rows of their own. One input's change splits further by the
identity c_B²u_B² − c_A²u_A² = c_B²(u_B² − u_A²) + u_A²(c_B² − c_A²): the part due to its
uncertainty and the part due to its sensitivity. The expanded uncertainty U = k·u_c
changes through u_c and through k (ν_eff): U_B − U_A = k_A (u_B − u_A) + u_B (k_B − k_A).

Both sides are read from the JSON result document (a saved ``budget run --json`` or a
model evaluated now), so a model and a saved result compare alike.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from pathlib import Path, PurePath
from typing import Any

from ._savedresult import misshapen
from ._errors import InputError, Location
from ._arguments import keywords_checked

__all__ = ["Term", "Side", "InputChange", "MeasurandChange", "Difference", "compare",
           "compare_budgets", "load_side", "side_from_document"]


@dataclass(frozen=True, slots=True, kw_only=True)
class Term:
    """One input's line of a budget, as the JSON document gives it."""

    input: str
    estimate: float
    unit: str
    standard_uncertainty: float
    distribution: str
    dof: float
    sensitivity: float
    variance: float  # (c_i u_i)² in the measurand's unit squared


@dataclass(frozen=True, slots=True, kw_only=True)
class MeasurandSide:
    name: str
    unit: str
    estimate: float
    combined_uncertainty: float
    coverage_factor: float
    expanded_uncertainty: float
    dof: float
    terms: tuple[Term, ...]
    correlation_variance: float
    higher_order_variance: float
    correlations: tuple[tuple[str, str, float], ...] = ()  # (input, input, r) as stated


@dataclass(frozen=True, slots=True, kw_only=True)
class Side:
    """One budget: where it came from and what it says."""

    label: str
    title: str
    sha256: str | None
    settings: tuple[tuple[str, Any], ...]
    measurands: tuple[MeasurandSide, ...]


@dataclass(frozen=True, slots=True, kw_only=True)
class InputChange:
    input: str
    status: str  # "added", "removed", "changed", "unchanged"
    what: tuple[str, ...]  # what changed, in words
    before: Term | None
    after: Term | None
    share_before: float  # percent of u_c² (A)
    share_after: float  # percent of u_c² (B)
    variance_change: float  # change of the variance term
    from_uncertainty: float  # c_B²(u_B² − u_A²)
    from_sensitivity: float  # u_A²(c_B² − c_A²)


@dataclass(frozen=True, slots=True, kw_only=True)
class MeasurandChange:
    name: str
    unit: str
    before: MeasurandSide
    after: MeasurandSide
    inputs: tuple[InputChange, ...]  # largest |variance_change| first
    correlation_change: float
    higher_order_change: float
    correlation_what: tuple[str, ...] = ()  # coefficients added, removed or changed

    @property
    def variance_change(self) -> float:
        """u_c²(B) − u_c²(A)."""
        a, b = self.before.combined_uncertainty, self.after.combined_uncertainty
        return b * b - a * a

    @property
    def expanded_change_from_uncertainty(self) -> float:
        """The part k_A (u_B − u_A) of U_B − U_A."""
        a, b = self.before, self.after
        return a.coverage_factor * (b.combined_uncertainty - a.combined_uncertainty)

    @property
    def expanded_change_from_coverage_factor(self) -> float:
        """The part u_B (k_B − k_A) of U_B − U_A."""
        a, b = self.before, self.after
        return b.combined_uncertainty * (b.coverage_factor - a.coverage_factor)


@dataclass(frozen=True, slots=True, kw_only=True)
class Difference:
    before: Side
    after: Side
    measurands: tuple[MeasurandChange, ...]
    notes: tuple[str, ...]  # settings, conventions, seeds, measurands added or removed

    def __repr__(self) -> str:
        from ._unit_display import display_unit, spaced_unit

        moved = "; ".join(f"{m.name}: u {m.before.combined_uncertainty:.3g} → "
                          f"{m.after.combined_uncertainty:.3g}"
                          f"{spaced_unit(display_unit(m.unit))}"
                          for m in self.measurands)
        return f"<Difference {self.before.label} → {self.after.label}: {moved}>"

    def measurand(self, name: str) -> MeasurandChange:
        """The change of measurand ``name`` (a ``KeyError`` with a "did you mean")."""
        from ._notebook import lookup

        return lookup(self.measurands, name, "measurand")

    def summary(self, digits: int = 2) -> str:
        """The terminal text of ``budget compare``."""
        from ._difference_view import render_difference
        from ._notebook import summary_digits

        return render_difference(self, summary_digits(digits))

    def _repr_html_(self) -> str:
        from ._formatting import format_percent
        from ._notebook import table_html

        rows = [[m.name, c.input, c.status, format_percent(c.share_before),
                 format_percent(c.share_after), f"{c.variance_change:+.3g}", "; ".join(c.what)]
                for m in self.measurands for c in m.inputs]
        return table_html(f"{self.before.label} → {self.after.label}",
                          ["measurand", "input", "status", "share before / %",
                           "share after / %", "change of (c·u)²", "what changed"], rows,
                          notes=list(self.notes))

    def to_frame(self) -> Any:
        """One row per measurand and input (``share_before``, ``share_after``,
        ``variance_change`` …: the JSON names)."""
        from ._notebook import frame

        rows = [{"measurand": m.name, "input": c.input, "status": c.status,
                 "share_before": c.share_before, "share_after": c.share_after,
                 "variance_change": c.variance_change, "from_uncertainty": c.from_uncertainty,
                 "from_sensitivity": c.from_sensitivity, "what": "; ".join(c.what)}
                for m in self.measurands for c in m.inputs]
        return frame(rows, ["measurand", "input"], {
            "before": self.before.label, "after": self.after.label,
            "notes": list(self.notes)})

    def to_dict(self) -> dict[str, Any]:
        """The JSON document of ``budget compare --json``."""
        from ._difference_view import difference_document

        return difference_document(self)


# what _measurand_side reads (kinds: _savedresult.misshapen)
_MEASURAND_FIELDS = (("name", "name"), ("unit", "name"), ("value", "number"), ("u", "u"),
                     ("k", "u"), ("U", "u"), ("dof", "dof"), ("contributions", "list"),
                     ("second_order_variance?", "u?"))
_INPUT_FIELDS = (("input", "name"), ("estimate", "number"), ("unit", "text"), ("u", "u"),
                 ("distribution", "name"), ("dof", "dof"), ("sensitivity", "number"),
                 ("contribution", "u"))
_TERM_FIELDS = (("r", "number"), ("variance", "number"))


def _number(value: Any) -> float:
    return math.inf if value is None else float(value)


def side_from_document(document: dict[str, Any], label: str) -> Side:
    """A budget read from a JSON result document (``budget run --json``)."""
    where = Location(file=label)
    found = misshapen(document, _MEASURAND_FIELDS, _INPUT_FIELDS, _TERM_FIELDS)
    if found:
        raise InputError(f"expected a JSON result document (schema result.schema.json), "
                         f"found {found}", where)
    try:
        measurands = tuple(_measurand_side(m) for m in document["measurands"])
        provenance = document.get("provenance", {})
        settings = (("coverage", document.get("coverage")),
                    ("atomic weights", document.get("atomic_weights")),
                    ("seed", document.get("seed")),
                    ("Monte Carlo trials", provenance.get("trials")),
                    ("significant digits", document.get("digits")))
        changed = bool(provenance.get("changes"))  # a what-if: not the file's budget
        return Side(label=label, title=str(document.get("title", "")),
                    sha256=None if changed else document.get("model_sha256"),
                    settings=settings,
                    measurands=measurands)
    except (KeyError, TypeError, ValueError) as exc:
        raise InputError(f"expected a JSON result document (schema result.schema.json), found a "
                         f"JSON document without {exc}", where) from exc


def _measurand_side(m: dict[str, Any]) -> MeasurandSide:
    terms = tuple(Term(input=c["input"], estimate=float(c["estimate"]), unit=str(c["unit"]),
                       standard_uncertainty=float(c["u"]), distribution=str(c["distribution"]),
                       dof=_number(c["dof"]), sensitivity=float(c["sensitivity"]),
                       variance=float(c["contribution"]) * float(c["contribution"]))
                  for c in m["contributions"])
    correlation = math.fsum(float(t["variance"]) for t in m.get("correlation_terms", []))
    higher = m.get("second_order_variance") or 0.0
    pairs = tuple((str(t["inputs"][0]), str(t["inputs"][1]), float(t["r"]))
                  for t in m.get("correlation_terms", []))
    return MeasurandSide(name=m["name"], unit=m["unit"], estimate=float(m["value"]),
                         combined_uncertainty=float(m["u"]),
                         coverage_factor=float(m["k"]),
                         expanded_uncertainty=float(m["U"]),
                         dof=_number(m["dof"]), terms=terms,
                         correlation_variance=correlation,
                         higher_order_variance=float(higher), correlations=pairs)


def load_side(path: str | Path, *, trials: int = 0, seed: int | None = None) -> Side:
    """A model file (evaluated now) or a saved JSON result document."""
    path = Path(path)
    if path.suffix.lower() == ".json":
        try:
            document = json.loads(path.read_text(encoding="utf-8"))
        except FileNotFoundError as exc:
            raise InputError("expected a saved result document, found no such file",
                             Location(file=str(path))) from exc
        except (OSError, UnicodeDecodeError, json.JSONDecodeError) as exc:
            raise InputError(f"expected a JSON result document, found {exc}",
                             Location(file=str(path))) from exc
        if not isinstance(document, dict):
            raise InputError("expected a JSON result document, found another JSON value",
                             Location(file=str(path)))
        return side_from_document(document, str(path))
    from ._analysis import evaluate
    from ._document import result_document
    from ._model import load_model

    result = evaluate(load_model(path), trials=trials, seed=seed)
    return side_from_document(result_document(result), str(path))


@keywords_checked
def compare_budgets(before: Any, after: Any, *, trials: int = 0,
                    seed: int | None = None) -> Difference:
    """What changed from budget ``before`` to budget ``after`` and why U moved, as
    ``budget compare A B``: each a model file or a ``Model`` (a what-if, say), evaluated
    now with ``trials`` Monte Carlo trials, a saved JSON result document or a ``Result``."""
    return compare(_side(before, "before", trials, seed), _side(after, "after", trials, seed))


def _side(given: Any, argument: str, trials: int, seed: int | None) -> Side:
    """One side of ``compare_budgets``: a path, a model or an evaluated result."""
    from ._analysis import Result, evaluate
    from ._document import result_document
    from ._model import Model

    if isinstance(given, Model):
        given = evaluate(given, trials=trials, seed=seed)
    if isinstance(given, Result):
        model = given.model
        label = model.source if not model.changes else \
            f"{model.source} (what-if: {'; '.join(model.changes)})"
        return side_from_document(result_document(given), label)
    if isinstance(given, (str, PurePath)):
        return load_side(str(given), trials=trials, seed=seed)
    from ._limits import shorten

    raise InputError(f"expected a model file or a saved JSON result document (a path), a "
                     f"budget.Model or a budget.Result, found {type(given).__name__} "
                     f"{shorten(repr(given))}", Location(file="compare_budgets()", key=argument))


def compare(before: Side, after: Side) -> Difference:
    """What changed from ``before`` to ``after``, measurand by measurand."""
    notes = [f"{key}: {a} → {b}" for (key, a), (_, b) in zip(before.settings, after.settings)
             if a != b and key != "Monte Carlo trials"]
    names_b = {m.name: m for m in after.measurands}
    changes = []
    for m in before.measurands:
        if m.name not in names_b:
            notes.append(f"measurand '{m.name}' only in A")
            continue
        changes.append(_measurand_change(m, _in_unit(names_b[m.name], m.unit, after.label)))
    names_a = {m.name for m in before.measurands}
    notes += [f"measurand '{m.name}' only in B" for m in after.measurands
              if m.name not in names_a]
    if before.sha256 and before.sha256 == after.sha256:
        notes.append("both come from the same model file (same SHA-256)")
    return Difference(before=before, after=after, measurands=tuple(changes),
                      notes=tuple(notes))


def _in_unit(m: MeasurandSide, unit: str, label: str) -> MeasurandSide:
    """B's measurand converted to A's unit (e.g. g/g to %), when they differ."""
    if m.unit == unit:
        return m
    from dataclasses import replace

    from ._units import parse_unit

    where = Location(file=label)
    theirs, ours = parse_unit(m.unit, where), parse_unit(unit, where)
    if theirs.dimensionality != ours.dimensionality or theirs.offset or ours.offset:
        raise InputError(f"expected measurand '{m.name}' in a unit of the dimension of "
                         f"'{unit}', found '{m.unit}'", where)
    s = float(theirs.factor / ours.factor)
    return replace(m, unit=unit, estimate=m.estimate * s,
                   combined_uncertainty=m.combined_uncertainty * s,
                   expanded_uncertainty=m.expanded_uncertainty * s,
                   terms=tuple(replace(t, sensitivity=t.sensitivity * s,
                                       variance=t.variance * s * s) for t in m.terms),
                   correlation_variance=m.correlation_variance * s * s,
                   higher_order_variance=m.higher_order_variance * s * s)


def _measurand_change(a: MeasurandSide, b: MeasurandSide) -> MeasurandChange:
    terms_a = {t.input: t for t in a.terms}
    terms_b = {t.input: t for t in b.terms}
    names = list(terms_a) + [n for n in terms_b if n not in terms_a]
    u_a, u_b = a.combined_uncertainty, b.combined_uncertainty
    var_a, var_b = u_a * u_a, u_b * u_b
    inputs = [_input_change(n, terms_a.get(n), terms_b.get(n), var_a, var_b) for n in names]
    inputs.sort(key=lambda c: -abs(c.variance_change))
    return MeasurandChange(name=a.name, unit=a.unit, before=a, after=b, inputs=tuple(inputs),
                           correlation_change=b.correlation_variance - a.correlation_variance,
                           higher_order_change=b.higher_order_variance
                           - a.higher_order_variance,
                           correlation_what=_correlations_changed(a, b))


def _correlations_changed(a: MeasurandSide, b: MeasurandSide) -> tuple[str, ...]:
    """Correlation coefficients added, removed or changed, in words (r(x,y) 0.5 → 0.2)."""
    def table(side: MeasurandSide) -> dict[frozenset[str], tuple[str, float]]:
        return {frozenset((x, y)): (f"r({x},{y})", r) for x, y, r in side.correlations}

    before, after = table(a), table(b)
    found = []
    for key in list(before) + [k for k in after if k not in before]:
        name, r_a = before.get(key, after.get(key, ("", 0.0)))
        r_b = after[key][1] if key in after else 0.0
        r_a = r_a if key in before else 0.0
        if not math.isclose(r_a, r_b, rel_tol=1e-12, abs_tol=0.0):
            found.append(f"{name} {r_a:.4g} → {r_b:.4g}")
    return tuple(found)


def _share(variance: float, total: float) -> float:
    return 100.0 * variance / total if total > 0 else 0.0


def _input_change(name: str, a: Term | None, b: Term | None, var_a: float,
                  var_b: float) -> InputChange:
    before = a.variance if a else 0.0
    after = b.variance if b else 0.0
    if a is None or b is None:
        status = "added" if a is None else "removed"
        what: tuple[str, ...] = (status,)
        from_u, from_c = after - before, 0.0
    else:
        what = _what_changed(a, b)
        status = "changed" if what else "unchanged"
        c2a, c2b = a.sensitivity * a.sensitivity, b.sensitivity * b.sensitivity
        u_a, u_b = a.standard_uncertainty, b.standard_uncertainty
        u2a, u2b = u_a * u_a, u_b * u_b
        if a.unit != b.unit:  # sensitivities per different input units: split by ratio
            from_u, from_c = after - before, 0.0
        else:
            from_u, from_c = c2b * (u2b - u2a), u2a * (c2b - c2a)
    return InputChange(input=name, status=status, what=what, before=a, after=b,
                       share_before=_share(before, var_a), share_after=_share(after, var_b),
                       variance_change=after - before, from_uncertainty=from_u,
                       from_sensitivity=from_c)


def _what_changed(a: Term, b: Term) -> tuple[str, ...]:
    from ._unit_display import display_unit, spaced_unit

    found = []
    unit = spaced_unit(display_unit(b.unit))  # nothing after a number for a ratio ('1')
    if a.unit != b.unit:
        found.append(f"unit {a.unit} → {b.unit}")
    if not math.isclose(a.estimate, b.estimate, rel_tol=1e-12, abs_tol=0.0):
        found.append(f"value {a.estimate:.10g} → {b.estimate:.10g}{unit}")
    u_a, u_b = a.standard_uncertainty, b.standard_uncertainty
    if not math.isclose(u_a, u_b, rel_tol=1e-12, abs_tol=0.0):
        ratio = f" (× {u_b / u_a:.3g})" if u_a > 0 and a.unit == b.unit else ""
        found.append(f"u {u_a:.4g} → {u_b:.4g}{unit}{ratio}")
    if a.distribution != b.distribution:
        found.append(f"distribution {a.distribution} → {b.distribution}")
    if a.dof != b.dof:
        found.append(f"ν {_dof(a.dof)} → {_dof(b.dof)}")
    if not math.isclose(a.sensitivity, b.sensitivity, rel_tol=1e-9, abs_tol=0.0) \
            and a.unit == b.unit:
        found.append(f"sensitivity {a.sensitivity:.4g} → {b.sensitivity:.4g}")
    return tuple(found)


def _dof(dof: float) -> str:
    return "∞" if math.isinf(dof) else f"{dof:.3g}"
