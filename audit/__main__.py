"""``python -m audit``: the same as the ``truss-audit`` command."""

import sys

from audit.cli import main

sys.exit(main())
