"""``python -m wzq`` runs the ``wzq`` command."""

import sys

from wzq.cli import main

sys.exit(main())
