"""eftsieve: positivity bounds on fitted effective-field-theory constants.

The short public API; heavy libraries (cvxpy, matplotlib, emcee, scipy.stats) load
only when a function needs them.
"""

from eftsieve._version import __version__
from eftsieve.errors import EftsieveError, EftsieveWarning, InputError
from eftsieve.fit.model import Fit, load_fit
from eftsieve.region.build import build_region
from eftsieve.region.model import Facet, Region

__all__ = [
    "EftsieveError",
    "EftsieveWarning",
    "Facet",
    "Fit",
    "InputError",
    "Region",
    "__version__",
    "build_region",
    "load_fit",
]
