"""wzq: work-zone queue calculator.

``wzq.analyse(plan)`` computes work-zone capacity from published methods, the
exact deterministic queue carried from hour to hour, the physical queue length
by shockwave analysis and the delay, hour by hour.

Results support, and never replace, the judgement of a qualified engineer and
the local agency's rules.
"""

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
    PlanError,
    Problem,
    Site,
    Thresholds,
)
from wzq.engine.results import Result

__version__ = "0.1.0"

CAUTION = (
    "Results support, and never replace, the judgement of a qualified engineer "
    "and the local agency's rules."
)

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
    "Site",
    "Thresholds",
    "__version__",
    "analyse",
]
