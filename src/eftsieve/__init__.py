"""eftsieve: positivity bounds on fitted effective-field-theory constants.

The short public API.  Heavy libraries (cvxpy, matplotlib, emcee) load lazily.
"""

from eftsieve._version import __version__

__all__ = ["__version__"]
