"""`python -m proportio.cli` runs the command line."""

import sys

from . import main

sys.exit(main())
