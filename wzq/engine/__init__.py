"""The engine: the plan, the site model, the time grid, evaluation, result types, the
queue-length method, the window search, the scenarios and the LWR check. Pure: no
files, no printing; imports only :mod:`wzq.models` and :mod:`wzq.units`."""

__all__: list[str] = []
