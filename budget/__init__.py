"""budget: measurement-uncertainty budgets to the GUM (JCGM 100), cross-checked by the
Monte Carlo method (JCGM 101), for the certification of reference materials.

The public API; every name is loaded on first use so that the command line starts fast::

    import budget
    model = budget.load_model("models/vics-as-25a/coulometric-purity.toml")
    result = budget.evaluate(model, trials=200_000)
    result.budget.measurand("w").to_frame()
"""

from __future__ import annotations

from importlib import import_module
from typing import Any

__all__ = [
    "BudgetError", "Location", "Model", "Input", "Measurand", "load_model", "parse_model",
    "Budget", "MeasurandBudget", "Contribution", "propagate", "Simulation",
    "MeasurandSimulation", "simulate", "Result", "evaluate", "result_document",
    "molar_mass", "air_density", "load_campaign", "Campaign", "certify", "Certification",
    "certification_document", "explain", "render_report", "render_certification_report",
]

_WHERE = {
    "BudgetError": "errors", "Location": "errors", "Model": "model", "Input": "model",
    "Measurand": "model", "load_model": "model", "parse_model": "model", "Budget": "gum",
    "MeasurandBudget": "gum", "Contribution": "gum", "propagate": "gum",
    "Simulation": "montecarlo", "MeasurandSimulation": "montecarlo",
    "simulate": "montecarlo", "Result": "analysis", "evaluate": "analysis",
    "result_document": "document", "molar_mass": "chemistry", "air_density": "chemistry",
    "load_campaign": "campaign", "Campaign": "campaign", "certify": "certification",
    "Certification": "certification", "certification_document": "document",
    "explain": "explain", "render_report": "report",
    "render_certification_report": "report",
}


def __getattr__(name: str) -> Any:
    if name in _WHERE:
        value = getattr(import_module(f".{_WHERE[name]}", __name__), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'budget' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(__all__)
