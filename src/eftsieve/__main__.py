"""``python -m eftsieve``: the ``eftsieve`` command (the same as ``python -m eftsieve.cli``)."""

import sys

from eftsieve.cli.main import main

sys.exit(main())
