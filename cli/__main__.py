"""`python -m cli ...` runs the same command as the `rangefold` console script."""

import sys

from cli.main import main

sys.exit(main())
