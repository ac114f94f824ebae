"""``python -m wzq`` runs the ``wzq`` command."""

import sys

from wzq.cli import main

__all__: list[str] = []

sys.exit(main())
