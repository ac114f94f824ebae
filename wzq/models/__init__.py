"""The published models, one small function each, their sources in the docstrings:
capacity, fundamental diagrams, shockwave, queueing, Newell's method, values of
time, the AADT expansion. Pure functions; import only :mod:`wzq.units`."""

__all__: list[str] = []
