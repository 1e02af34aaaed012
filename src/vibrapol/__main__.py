"""``python -m vibrapol`` runs the command line, like the ``vibrapol`` script."""

import sys

from vibrapol.cli import main

sys.exit(main())
