"""wzq: work-zone queue calculator.

``wzq.analyse(plan)`` computes work-zone capacity from published methods, the
exact deterministic queue carried from hour to hour, the physical queue length
by shockwave analysis and the delay, hour by hour.

The public names below are loaded when first used (PEP 562), so ``import wzq``
and ``wzq --help`` start at once: the engine's numpy and pandas are imported by
the first ``wzq.analyse`` or ``wzq.Plan``, not before. The layers and what each
holds are in DEVELOPERS.md; the public API in docs/api.md.

Results support, and never replace, the judgement of a qualified engineer and
the local agency's rules.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

__version__ = "0.1.0"

CAUTION = (
    "Results support, and never replace, the judgement of a qualified engineer "
    "and the local agency's rules."
)

#: Public name -> the module that defines it.
_PUBLIC = {
    "analyse": "wzq.engine.evaluate",
    "Result": "wzq.engine.results",
    "Summary": "wzq.engine.results",
    "PlanError": "wzq.engine.problems",
    "Problem": "wzq.engine.problems",
    **{
        name: "wzq.engine.plan"
        for name in (
            "Approach",
            "Closure",
            "Costs",
            "Demand",
            "Landmark",
            "Meta",
            "Options",
            "Plan",
            "RiskOptions",
            "Site",
            "Thresholds",
        )
    },
}

__all__ = [
    "CAUTION",
    "Approach",
    "Closure",
    "Costs",
    "Demand",
    "Landmark",
    "Meta",
    "Options",
    "Plan",
    "PlanError",
    "Problem",
    "Result",
    "RiskOptions",
    "Site",
    "Summary",
    "Thresholds",
    "__version__",
    "analyse",
]

if TYPE_CHECKING:  # what the lazy names are, for type checkers and editors
    from wzq.engine.evaluate import analyse
    from wzq.engine.plan import (
        Approach,
        Closure,
        Costs,
        Demand,
        Landmark,
        Meta,
        Options,
        Plan,
        RiskOptions,
        Site,
        Thresholds,
    )
    from wzq.engine.problems import PlanError, Problem
    from wzq.engine.results import Result, Summary


def __getattr__(name: str) -> Any:
    module = _PUBLIC.get(name)
    if module is None:
        raise AttributeError(f"module 'wzq' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value  # the next look-up is a plain attribute
    return value


def __dir__() -> list[str]:
    return sorted(set(globals()) | set(_PUBLIC))
