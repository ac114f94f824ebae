"""The space-time check: the kinematic-wave (LWR) model solved by Godunov's scheme
(:mod:`.scheme`, the numerical method on its own) and the simulation of a plan's
approach compared with the engine (:mod:`.simulation`)."""

from wzq.engine.lwr.scheme import *  # noqa: F403
from wzq.engine.lwr.scheme import __all__ as _scheme
from wzq.engine.lwr.simulation import *  # noqa: F403
from wzq.engine.lwr.simulation import __all__ as _simulation

__all__ = [*_scheme, *_simulation]
