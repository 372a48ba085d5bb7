"""``python -m eftsieve.cli``."""

import sys

from eftsieve.cli.main import main

sys.exit(main())
