"""``python -m bayesirl`` runs the ``bayesirl`` command."""

import sys

from bayesirl.cli import main

sys.exit(main())
