"""Plausibility guards: checks that catch the slips laboratories make with valid files.

Each guard returns warnings (plain strings, starting ``plausibility:``); the command line
prints them as ``warning:`` lines and ``--strict`` turns any warning into exit status 3.
The guards:

* ``air_density`` arguments outside the range of validity stated for the CIPM-2007
  equation: 600 hPa to 1100 hPa, 15 °C to 27 °C (Picard, Davis, Gläser, Fujii,
  Metrologia 45 (2008) 149), and a relative humidity that is a fraction in [0, 1]
  (a humidity of 41 meant as 41 % is 41 times saturation);
* a measurand described as a mass fraction or purity whose unit is not a ratio of
  masses (``deg`` and ``cmol/mol`` are dimensionless too);
* a run's input estimate that differs from the model's estimate by more than a factor
  (default 3; a unit slip is a factor 10, 100 or 1000);
* homogeneity or stability data whose mean differs from the characterization value by
  more than ``CONSISTENCY`` combined standard uncertainties (data in another unit, or
  of another material);
* a shelf life longer than the span of the stability study (extrapolation);
* a certificate's ``valid_until`` later than the shelf life allows, counted from the last
  characterization run (u_lts covers the shelf life and no more), or before that run;
* a unit symbol that pint reads as a unit of the same kind but a very different size
  than a laboratory means by it: ``gr`` is the grain (64.8 mg), not the gram; ``Mg``,
  ``ML``, ``Mmol``, ``MM`` and ``Ms`` are mega-, not milli-units; ``ppt`` is a picopint.
"""

from __future__ import annotations

import datetime as dt
import math
import re
from typing import Any, Mapping, Sequence

import numpy as np

__all__ = ["AIR_DENSITY_VALIDITY", "DEFAULT_ESTIMATE_FACTOR", "CONSISTENCY",
           "model_warnings", "air_density_warnings", "mass_fraction_warning",
           "estimate_warnings", "consistency_warning", "shelf_life_warning",
           "campaign_unit_warning", "validity_warning"]

# (argument, low, high, unit of the value as the engine holds it, range as written)
AIR_DENSITY_VALIDITY = (
    ("temperature", 15.0, 27.0, "°C", "15 °C to 27 °C"),
    ("pressure", 60_000.0, 110_000.0, "Pa", "600 hPa to 1100 hPa"),
    ("relative humidity", 0.0, 1.0, "", "0 to 1 (a fraction, not a percentage)"),
)
_SOURCE = "CIPM-2007, Picard et al., Metrologia 45 (2008) 149"
DEFAULT_ESTIMATE_FACTOR = 3.0
CONSISTENCY = 5.0
_MASS_FRACTION = re.compile(r"mass fraction|purity|\bw/w\b", re.IGNORECASE)
_MASS_RATIOS = {"1", "", "%", "percent", "ppm", "ppb", "permille", "g/g", "kg/kg", "mg/g",
                "mg/kg", "ug/g", "µg/g", "μg/g", "ug/kg", "µg/kg", "μg/kg", "ng/g", "g/kg",
                "cg/g", "mg/mg", "dimensionless"}


# unit symbols that parse, in the dimension meant, to a unit of another size than the
# one a laboratory means: symbol -> (what pint reads, what was probably meant)
_LOOKALIKE_UNITS = {
    "gr": ("grain (64.8 mg)", "g"), "Mg": ("megagram (10⁶ g)", "mg"),
    "ML": ("megalitre (10⁶ L)", "mL"), "Ml": ("megalitre (10⁶ L)", "mL"),
    "Mmol": ("megamole", "mmol"), "MM": ("megamolar", "mM"),
    "Ms": ("megasecond", "ms"), "ppt": ("picopint, a volume", "ppm or 1e-3"),
}
_UNIT_WORDS = re.compile(r"[^\W\d_]+")


def model_warnings(model: Any) -> tuple[str, ...]:
    """The guards that need only the model: air_density at the estimates, the unit."""
    values = {i.name: i.estimate for i in model.inputs}
    found = [*air_density_warnings(model, values, "at the model's estimates")]
    found += [w for m in model.measurands
              if (w := mass_fraction_warning(m, model)) is not None]
    found += lookalike_unit_warnings(
        [(f"input '{i.name}'", i.unit) for i in model.inputs]
        + [(f"measurand '{m.name}'", m.unit) for m in model.measurands])
    return tuple(found)


def lookalike_unit_warnings(units: Sequence[tuple[str, str]]) -> list[str]:
    """A warning for each unit string with a symbol of ``_LOOKALIKE_UNITS``."""
    found = []
    for owner, text in units:
        for word in dict.fromkeys(_UNIT_WORDS.findall(text or "")):
            if word in _LOOKALIKE_UNITS:
                meaning, meant = _LOOKALIKE_UNITS[word]
                found.append(f"plausibility: {owner} has the unit '{text}', where '{word}' "
                             f"is the {meaning}; if '{meant}' was meant, it is a unit slip")
    return found


def _calls(model: Any) -> list[tuple[Any, ...]]:
    """The argument graphs of every ``air_density`` call (no sympy: the model's graphs)."""
    from . import _algebra as alg

    written = [m.equation for m in model.measurands] + [
        d.text for d in getattr(model, "definitions", ())]
    if not any("air_density" in text for text in written):  # no graph of 10⁵ nodes walked
        return []
    calls: dict[int, tuple[Any, ...]] = {}
    for measurand in model.measurands:
        graph = getattr(measurand, "opaque_graph", None)
        if graph is None:
            continue
        for node in alg.walk(graph):
            if node.kind == "call" and node.name == "air_density":
                calls.setdefault(id(node), tuple(node.args))
    return list(calls.values())


def air_density_warnings(model: Any, values: Mapping[str, Any], context: str,
                         labels: Sequence[str] | None = None) -> list[str]:
    """Every ``air_density`` argument outside the CIPM-2007 range, at the given values."""
    from . import _algebra as alg
    from ._program import Program

    found: list[str] = []
    for args in _calls(model):
        for (label, low, high, unit, stated), arg in zip(AIR_DENSITY_VALIDITY, args):
            names = sorted(alg.symbols_in([arg]))
            with np.errstate(all="ignore"):
                result = Program([arg], names).evaluate([values[n] for n in names])[0]
                got = np.atleast_1d(np.asarray(result, dtype=float))
            bad = np.flatnonzero(~((got >= low) & (got <= high)))
            if bad.size:
                where = context if labels is None or got.size == 1 else (
                    f"{context}, {labels[int(bad[0])]}")
                source = ", ".join(names) or "a number"
                found.append(f"plausibility: air_density() {label} {float(got[bad[0]]):.6g}"
                             f"{' ' + unit if unit else ''} (from {source}) {where} is outside"
                             f" the range of validity {stated} ({_SOURCE}); a unit slip?")
    return found


def mass_fraction_warning(measurand: Any, model: Any) -> str | None:
    """A mass fraction or purity in a unit that is not a ratio of masses."""
    text = measurand.description or (model.title if len(model.measurands) == 1 else "")
    if not _MASS_FRACTION.search(text) or _is_mass_ratio(measurand.unit):
        return None
    return (f"plausibility: measurand '{measurand.name}' is described as a mass fraction or "
            f"purity but its unit '{measurand.unit}' is not a ratio of masses; use '%', "
            "'g/g', 'mg/g' or '1'")


def campaign_unit_warning(measurand: Any, model: Any, unit: str, title: str) -> str | None:
    """A campaign certifying a mass fraction or purity in a unit that is no mass ratio."""
    text = " ".join((measurand.description, title,
                     model.title if len(model.measurands) == 1 else ""))
    if not _MASS_FRACTION.search(text) or _is_mass_ratio(unit):
        return None
    return (f"plausibility: the certified value ('{measurand.name}', a mass fraction or "
            f"purity) is given in '{unit}', which is not a ratio of masses; use '%', 'g/g', "
            "'mg/g' or '1'")


def _is_mass_ratio(text: str) -> bool:
    cleaned = text.strip()
    if cleaned in _MASS_RATIOS:
        return True
    from ._units import registry

    reg = registry()
    try:
        unit = reg.Unit(cleaned)
    except Exception:  # pint raises several unrelated types; the model parsed it already
        return False
    if unit.dimensionality:
        return False
    roots = [reg.get_root_units(name)[1] for name in unit._units]
    return all(not r.dimensionality and not str(r) or str(r) == "kilogram" for r in roots)


def estimate_warnings(name: str, values: np.ndarray, estimate: float, unit: str,
                      factor: float, source: str, rows: Sequence[int]) -> list[str]:
    """Run values of one input further than ``factor`` from the model's estimate."""
    if estimate == 0 or not math.isfinite(estimate):
        return []
    with np.errstate(all="ignore"):
        ratio = values / estimate
        off = (ratio <= 0) | (ratio > factor) | (ratio < 1.0 / factor)
    found = []
    unit = "" if unit in ("", "1") else f" {unit}"  # a plain number has no unit to show
    for index in np.flatnonzero(off)[:3]:
        head = f"plausibility: {source}:{rows[int(index)]}: column '{name}': "
        if ratio[index] <= 0:  # whatever the factor (further methods check only the sign)
            what = "is zero, unlike" if ratio[index] == 0 else "has the opposite sign of"
            found.append(f"{head}{values[index]:.6g}{unit} {what} the model's estimate "
                         f"{estimate:.6g}{unit}")
            continue
        found.append(f"{head}{values[index]:.6g}{unit} differs from the model's estimate "
                     f"{estimate:.6g}{unit} by more than a factor {factor:g} "
                     f"({_slip(float(ratio[index]))})")
    return found


def study_value_warnings(values: np.ndarray, rows: Sequence[int], source: str, unit: str,
                         what: str, factor: float = 3.0) -> list[str]:
    """Values of a homogeneity or stability study further than ``factor`` from the study's
    median: one material in one unit, so a decimal or unit slip in a single cell."""
    median = float(np.median(values)) if values.size else 0.0
    if median == 0 or not math.isfinite(median):
        return []
    with np.errstate(all="ignore"):
        ratio = values / median
        off = (ratio <= 0) | (ratio > factor) | (ratio < 1.0 / factor)
    found = []
    for index in np.flatnonzero(off)[:3]:
        head = (f"plausibility: {source}:{rows[int(index)]}: column 'value': "
                f"{values[index]:.6g} {unit}")
        if ratio[index] <= 0:
            what_sign = "is zero, unlike" if ratio[index] == 0 else "has the opposite sign of"
            found.append(f"{head} {what_sign} the median {median:.6g} {unit} of the {what}")
            continue
        found.append(f"{head} differs from the median {median:.6g} {unit} of the {what} by "
                     f"more than a factor {factor:g} ({_slip(float(ratio[index]))})")
    return found


def _slip(ratio: float) -> str:
    if not math.isfinite(ratio):
        return "an estimate of 0 to working precision"
    power = math.log10(ratio)
    near = round(power)
    if near != 0 and abs(power - near) < 0.05:
        return f"a factor 10^{near}: a unit slip?"
    return f"ratio {ratio:.3g}"


def consistency_warning(what: str, mean: float, u_mean: float, value: float,
                        u_value: float, unit: str, source: str) -> str | None:
    """A study mean further than CONSISTENCY combined uncertainties from the value."""
    scale = math.hypot(u_mean, u_value)
    if not math.isfinite(mean) or scale <= 0 or abs(mean - value) <= CONSISTENCY * scale:
        return None
    return (f"plausibility: {source}: the {what} mean {mean:.6g} {unit} differs from the "
            f"characterization value {value:.6g} {unit} by {abs(mean - value) / scale:.3g} "
            f"combined standard uncertainties (more than {CONSISTENCY:g}): data in another "
            "unit or of another material?")


def shelf_life_warning(times: np.ndarray, shelf_life: float, unit: str,
                       source: str) -> str | None:
    """A shelf life beyond the time span the stability study covered."""
    span = float(np.max(times) - np.min(times))
    if shelf_life <= span:
        return None
    words = f" {unit}" if unit else ""
    return (f"plausibility: {source}: the shelf life {shelf_life:g}{words} is longer than "
            f"the span of the stability study, {span:.4g}{words}: u_lts extrapolates the "
            "trend beyond the data")


def validity_warning(valid_until: dt.date, where: str, last_run: dt.date,
                     shelf_life: float, time_unit: str) -> str | None:
    """A period of validity that ends after the shelf life, counted from the last
    characterization run (the day the certified value was measured), or before that run.

    The shelf life in whole months or years is counted in calendar months (36 months
    after 2025-05-08 is 2028-05-08); in other units in days, rounded up."""
    if valid_until < last_run:
        return (f"plausibility: {where} {valid_until} is before the last characterization "
                f"run ({last_run}): the certified value would be valid for no time; a slip "
                "in the year?")
    end = _shelf_end(last_run, shelf_life, time_unit)
    if end is None or valid_until <= end:
        return None
    from ._studydata import time_words

    late = (valid_until - end).days
    return (f"plausibility: {where} {valid_until} is {late} day{'s' * (late > 1)} after "
            f"the end of the shelf life: u_lts covers {time_words(time_unit, shelf_life)} "
            f"from the last characterization run ({last_run}), up to {end}; end the period "
            "of validity by then, or support a longer shelf_life with stability data")


_MONTH_DAYS = 365.25 / 12  # a twelfth of the Julian year, as pint's month
_ROUNDING = 1e-9  # a shelf life converted between units is whole within this (relative)


def _shelf_end(start: dt.date, shelf_life: float, time_unit: str) -> dt.date | None:
    """The last day of a shelf life from ``start``; None beyond the calendar or without a
    unit of time (the study's times then have no calendar meaning)."""
    from ._errors import Location
    from ._units import parse_unit

    if not time_unit:
        return None
    days = shelf_life * float(parse_unit(time_unit, Location()).factor) / 86400.0
    if not days < (dt.date.max - start).days - 31:  # months of up to 31 days
        return None
    months = days / _MONTH_DAYS
    if abs(months - round(months)) <= _ROUNDING * months:
        from ._register import _add_months

        return _add_months(start, round(months))
    return start + dt.timedelta(days=math.ceil(days * (1.0 - _ROUNDING)))
