"""eftsieve: positivity bounds on fitted effective-field-theory constants.

The public API (docs/api.md); heavy libraries (cvxpy, matplotlib, emcee, scipy.stats)
load only when a function needs them.
"""

# The (light) sub-packages named like API functions load first, so that importing one
# of their modules later (``import eftsieve.check.verdict``) cannot rebind
# ``eftsieve.check`` from the function to the package.
import eftsieve.check
import eftsieve.impose
import eftsieve.theories  # noqa: F401
from eftsieve import errors
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
