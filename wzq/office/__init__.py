"""Compatibility only: LibreOffice extensions installed before the layered layout run
``python -m wzq.office.runner``; :mod:`wzq.office.runner` keeps that working. The
extension's sources are in :mod:`wzq.io.office`, the runner is :mod:`wzq.cli.calc_runner`."""

__all__: list[str] = []
