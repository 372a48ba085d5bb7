"""eftsieve: positivity bounds on fitted effective-field-theory constants.

The public API (docs/api.md); heavy libraries (cvxpy, matplotlib, emcee, scipy.stats)
load only when a function needs them.
"""

import sys

from eftsieve import errors
from eftsieve._names import PublicModule, name_for_imports
from eftsieve._version import __version__
from eftsieve.api import (
    build_region,
    check,
    get_theory,
    impose,
    load_fit,
    load_region,
    load_samples,
    theories,
)
from eftsieve.errors import EftsieveError, EftsieveWarning, InputError

__all__ = [
    "EftsieveError",
    "EftsieveWarning",
    "InputError",
    "__version__",
    "build_region",
    "check",
    "errors",
    "get_theory",
    "impose",
    "load_fit",
    "load_region",
    "load_samples",
    "theories",
]

# the functions check, impose and theories share their names with sub-packages
sys.modules[__name__].__class__ = PublicModule
name_for_imports(sys.modules[__name__])
