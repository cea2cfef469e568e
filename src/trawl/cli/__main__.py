"""`python -m trawl.cli`: the same commands as the `trawl` entry point."""

import sys

from . import main

sys.exit(main())
