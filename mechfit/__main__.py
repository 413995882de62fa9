"""``python -m mechfit`` runs the command line."""

import sys

from mechfit.cli import main

sys.exit(main())
