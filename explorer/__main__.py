"""``python -m explorer`` runs the ``rift`` command line (useful where scripts are not on PATH)."""

import sys

from explorer.cli import main

sys.exit(main())
