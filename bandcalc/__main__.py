"""``python -m bandcalc``: the command line."""

import sys

from bandcalc.cli.commands import main

sys.exit(main())
