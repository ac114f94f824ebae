"""Presentation: the display tables, the one formatting of limits and units, the
terminal tables, the figures and the space-time picture. Imports the engine, never
the adapters."""

__all__: list[str] = []
