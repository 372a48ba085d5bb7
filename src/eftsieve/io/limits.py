"""Caps on what a user's input can make eftsieve do (docs/reliability.md).

Each cap is refused early with a one-line error that names the file and the cap; a cap
is a module attribute so that a script (or a test) may change it, and readers look it
up at call time.
"""

from __future__ import annotations

#: largest fit card (YAML/JSON) read, in bytes
MAX_CARD_BYTES = 16 * 1024 * 1024
#: largest region file read, in bytes
MAX_REGION_BYTES = 64 * 1024 * 1024
#: largest header of a text samples file (CSV), in bytes
MAX_HEADER_BYTES = 1024 * 1024
#: most columns a samples file may have
MAX_COLUMNS = 10_000
#: deepest nesting of lists and mappings in a card or region file
MAX_NESTING = 64
#: most parameters drawn in a corner plot by default (the first ones of the fit)
MAX_PLOT_COLUMNS = 12
#: largest magnitude of a mean, a covariance entry's square root or a sample value:
#: beyond it squares and sums of squares overflow double precision
MAX_ABS_VALUE = 1e150
