"""The Recalculate plan command in LibreOffice Calc.

* ``extension/`` — the sources of the LibreOffice extension: its description,
  manifest, menu and toolbar (``Addons.xcu``), settings (``Settings.xcs``) and
  the macro ``python/wzq_calc.py``, which runs in LibreOffice's own Python;
* :mod:`wzq.office.build` — builds the ``.oxt`` from them (icons by
  :mod:`wzq.office.icons`);
* :mod:`wzq.office.runner` — what the macro runs in the user's Python: the
  file backend of ``wzq run``;
* :mod:`wzq.office.commands` — ``wzq calc install|remove|build``.
"""
