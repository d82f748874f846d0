"""`python -m generator` is the `thermofolio` command."""

import sys

from generator.cli import main

sys.exit(main())
