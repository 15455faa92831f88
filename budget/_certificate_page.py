"""View-model of the certificate page: what ISO 17034 and ISO Guide 31 ask a reference
material certificate to state, in the certificate's own unit.

The value line names the certified quantity; the next sentence gives the expanded
uncertainty, its coverage factor and the coverage probability it corresponds to (for a
stated k: p = 2·F_t(k; ν_eff) − 1, the t distribution at the effective degrees of freedom
of u_CRM, GUM G.3 and G.4, common practice of certificates) and the method that gave the
interval. Intended use, instructions for handling and use, and health-and-safety
information are prompted: each has its own section, and a campaign that does not state one
gets a section marked missing rather than no section at all. Warnings of the
characterization model are restated in the certificate's unit.
"""

from __future__ import annotations

import re
from typing import Any

from markupsafe import Markup

from ._errors import BudgetError, Location
from ._formatting import format_number
from ._special import t_cdf
from ._unit_display import display_unit
from ._units import parse_unit

__all__ = ["PROMPTED", "SAFETY_CAUTION", "certificate_page"]

# key in [certificate] → (heading, what to write there)
PROMPTED = {
    "intended_use": ("Intended use", "what the material is for (and what it is not for)"),
    "instructions": ("Instructions for handling and use",
                     "preparation before use (drying, equilibration), minimum sample intake, "
                     "storage after opening"),
    "safety": ("Health and safety information",
               "the hazards of the material and the precautions to take"),
}
SAFETY_CAUTION = ("Before handling the material read its safety data sheet and follow local "
                  "regulations and the laboratory’s own safety rules; this certificate does "
                  "not replace them.")
_SHOWN_ELSEWHERE = ("quantity", *PROMPTED)


def certificate_page(cert: Any) -> dict[str, Any]:
    """Value line, uncertainty sentence, prompted sections and the other fields."""
    campaign = cert.campaign
    fields = dict(campaign.certificate)
    return {
        "quantity": _quantity(campaign, fields),
        "unit": display_unit(campaign.unit),
        "sentence": _sentence(cert),
        "method": _method(cert),
        "sections": [{"key": key, "heading": heading, "text": _paragraphs(fields.get(key, "")),
                      "prompt": prompt} for key, (heading, prompt) in PROMPTED.items()],
        "missing": [key for key in PROMPTED if not fields.get(key, "").strip()],
        "safety_caution": SAFETY_CAUTION,
        "fields": [(key.replace("_", " "), " ".join(_paragraphs(text)))
                   for key, text in campaign.certificate if key not in _SHOWN_ELSEWHERE],
        "warnings": certificate_warnings(cert),
    }


def _paragraphs(text: str) -> list[str]:
    """Free text as paragraphs: single line breaks of a TOML string are not kept."""
    return [re.sub(r"\s+", " ", part).strip() for part in re.split(r"\n\s*\n", text)
            if part.strip()]


def _quantity(campaign: Any, fields: dict[str, str]) -> str:
    if fields.get("quantity", "").strip():
        return fields["quantity"].strip()
    measurand = next(m for m in campaign.model.measurands if m.name == campaign.measurand)
    return measurand.description.strip() or f"the measurand {measurand.name}"


def coverage_of(k: float, dof: float) -> float:
    """The coverage probability of ±k·u for a t distribution with ``dof`` (normal if ∞)."""
    return 2.0 * t_cdf(k, dof) - 1.0


def _sentence(cert: Any) -> Markup:
    k = cert.coverage_factor
    dof = cert.dof
    nu = "∞" if dof == float("inf") else f"{dof:.0f}" if dof >= 10 else f"{dof:.1f}"
    if cert.coverage_probability is not None:
        p = f"{100 * cert.coverage_probability:g} %"
        return Markup(f"The expanded uncertainty U = k·u<sub>CRM</sub>, with the coverage "
                      f"factor k = {k:.3g} taken from the t distribution with "
                      f"ν<sub>eff</sub> = {nu} degrees of freedom, defines an interval "
                      f"expected to contain the value of the measurand with a coverage "
                      f"probability of {p}.")
    percent = 100 * coverage_of(k, dof)
    return Markup(f"The expanded uncertainty U = k·u<sub>CRM</sub> with the coverage factor "
                  f"k = {k:.3g} corresponds to a coverage probability of about {percent:.1f} % "
                  f"(t distribution with ν<sub>eff</sub> = {nu} degrees of freedom).")


def _method(cert: Any) -> str:
    chosen = cert.reported_result
    if chosen.monte_carlo:  # JCGM 101 8.2: the Monte Carlo interval is the certificate's
        trials = cert.simulation.trials if cert.simulation is not None else 0
        return (f"The interval is the Monte Carlo one ({chosen.description}): the certified "
                f"value was propagated by Monte Carlo ({trials:,} trials), the "
                "characterization model, its repeatability, the between-unit and the "
                "stability components each drawn from its distribution (JCGM 101, ISO "
                "Guide 35).")
    result = cert.characterization.result
    simulation = result.simulation
    text = ("The interval is the GUM one, ±k·u(CRM), u(CRM) combining characterization, "
            "between-unit homogeneity and stability (ISO Guide 35); u of the "
            "characterization model comes from the law of propagation (JCGM 100)")
    if simulation is None or not simulation.trials:
        return text + "; no Monte Carlo check was run."
    index = [m.name for m in result.model.measurands].index(cert.campaign.measurand)
    validation = simulation.measurands[index].validation
    if validation is None:
        return text + f", checked by Monte Carlo ({simulation.trials:,} trials, JCGM 101)."
    verdict = "validates" if validation.validated else "does not validate"
    return (text + f"; Monte Carlo ({simulation.trials:,} trials, JCGM 101 8.2) {verdict} "
            "that linear result.")


def certificate_warnings(cert: Any) -> list[str]:
    """Every warning, a Monte Carlo validation stated in another unit of the same dimension
    (a model in g/g or mg/kg, a certificate in %) restated in the certificate's unit."""
    campaign = cert.campaign
    return [_restate(w, campaign.unit, campaign.source) for w in cert.warnings]


_VALIDATION = re.compile(r"(?P<head>.*Monte Carlo does not validate the GUM result at )"
                         r"(?P<tol>\S+) (?P<unit>\S+) \(d_low = (?P<low>\S+), "
                         r"d_high = (?P<high>[^,\s]+)(?P<tail>.*)", re.S)


def _restate(warning: str, unit: str, source: str) -> str:
    match = _VALIDATION.fullmatch(warning)
    if match is None or match["unit"] == unit:
        return warning
    where = Location(file=source, key="unit")
    try:
        given, wanted = parse_unit(match["unit"], where), parse_unit(unit, where)
        numbers = [float(match[k]) for k in ("tol", "low", "high")]
    except (BudgetError, ValueError):
        return warning
    if given.unit.dims != wanted.unit.dims or given.offset or wanted.offset:
        return warning
    scale = float(given.factor / wanted.factor)
    tol, low, high = (format_number(x * scale, 2) for x in numbers)
    shown = display_unit(unit)
    return (f"{match['head']}{tol} {shown} (d_low = {low}, d_high = {high} {shown}"
            f"{match['tail']}")
