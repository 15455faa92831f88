"""budget: measurement-uncertainty budgets to the GUM (JCGM 100), cross-checked by the
Monte Carlo method (JCGM 101), for the certification of reference materials.

The public API; every name is loaded on first use so that the command line starts fast
(type checkers see the imports below, the interpreter does not run them)::

    import budget
    model = budget.load_model("models/vics-as-25a/coulometric-purity.toml")
    result = budget.evaluate(model, trials=200_000)
    result.budget.measurand("w").to_frame()
"""

from __future__ import annotations

from importlib import import_module
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # the same names, eagerly, for type checkers only
    from ._analysis import Result as Result, evaluate as evaluate
    from ._campaign import Campaign as Campaign, load_campaign as load_campaign
    from ._certification import Certification as Certification, certify as certify
    from ._chemistry import air_density as air_density, molar_mass as molar_mass
    from ._combination import Combined as Combined, combine as combine
    from ._difference import Difference as Difference, compare_budgets as compare_budgets
    from ._joint import Joint as Joint, Member as Member, join as join
    from ._document import (certification_document as certification_document,
                           result_document as result_document)
    from ._errors import BudgetError as BudgetError, Location as Location
    from ._explanation import Explanation as Explanation, explain as explain
    from ._gum import (Budget as Budget, Contribution as Contribution,
                      MeasurandBudget as MeasurandBudget, propagate as propagate)
    from ._model import (Input as Input, Measurand as Measurand, Model as Model,
                        load_model as load_model, parse_model as parse_model)
    from ._montecarlo import (MeasurandSimulation as MeasurandSimulation,
                             Simulation as Simulation, simulate as simulate)
    from ._report import (render_certification_report as render_certification_report,
                         render_report as render_report)

__version__ = "0.2.0"

__all__ = [
    "BudgetError", "Location", "Model", "Input", "Measurand", "load_model", "parse_model",
    "Budget", "MeasurandBudget", "Contribution", "propagate", "Simulation",
    "MeasurandSimulation", "simulate", "Result", "evaluate", "result_document",
    "molar_mass", "air_density", "load_campaign", "Campaign", "certify", "Certification",
    "certification_document", "explain", "render_report", "render_certification_report",
    "combine", "Combined", "join", "Joint", "Member", "compare_budgets", "Difference",
    "Explanation",
    "__version__",
]

_WHERE = {
    "BudgetError": "_errors", "Location": "_errors", "Model": "_model", "Input": "_model",
    "Measurand": "_model", "load_model": "_model", "parse_model": "_model", "Budget": "_gum",
    "MeasurandBudget": "_gum", "Contribution": "_gum", "propagate": "_gum",
    "Simulation": "_montecarlo", "MeasurandSimulation": "_montecarlo",
    "simulate": "_montecarlo", "Result": "_analysis", "evaluate": "_analysis",
    "result_document": "_document", "molar_mass": "_chemistry", "air_density": "_chemistry",
    "load_campaign": "_campaign", "Campaign": "_campaign", "certify": "_certification",
    "Certification": "_certification", "certification_document": "_document",
    "explain": "_explanation", "Explanation": "_explanation",
    "compare_budgets": "_difference", "Difference": "_difference", "render_report": "_report",
    "render_certification_report": "_report",
    "combine": "_combination", "Combined": "_combination", "join": "_joint", "Joint": "_joint",
    "Member": "_joint",
}


def __getattr__(name: str) -> Any:
    if name in _WHERE:
        value = getattr(import_module(f".{_WHERE[name]}", __name__), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'budget' has no attribute {name!r}")


def __dir__() -> list[str]:
    return sorted(__all__)
