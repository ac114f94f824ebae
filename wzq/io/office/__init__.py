"""The Recalculate plan command in LibreOffice Calc.

* ``extension/`` — the sources of the LibreOffice extension: its description,
  manifest, menu and toolbar (``Addons.xcu``), settings (``Settings.xcs``) and
  the macro ``python/wzq_calc.py``, which runs in LibreOffice's own Python;
* :mod:`wzq.io.office.build` — builds the ``.oxt`` from them (icons by
  :mod:`wzq.io.office.icons`);
* :mod:`wzq.cli.calc_runner` — what the macro runs in the user's Python: the
  file backend of ``wzq run``;
* :mod:`wzq.cli.calc` — ``wzq calc install|remove|build``.
"""

__all__ = []
