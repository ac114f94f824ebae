"""Compatibility only: ``python -m wzq.office.runner`` as extensions installed before the
layered layout run it; the runner is :mod:`wzq.cli.calc_runner` (``wzq calc install``
installs an extension that runs it by that name)."""

import sys

from wzq.cli.calc_runner import main

__all__ = ["main"]

if __name__ == "__main__":
    sys.exit(main())
