"""`python -m planner` runs the `planner` command (handy before installing the console script)."""

import sys

from planner.cli import main

sys.exit(main())
