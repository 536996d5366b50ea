"""`python -m segment` runs the command line."""

import sys

from segment.cli import main

sys.exit(main())
