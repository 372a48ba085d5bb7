"""Keep the public functions of :mod:`eftsieve` that share a name with a sub-package.

``eftsieve.check``, ``eftsieve.impose`` and ``eftsieve.theories`` are functions of the
public API and also sub-packages.  Importing a sub-package (``import eftsieve.check.run``)
makes Python's import system set the attribute ``eftsieve.check`` to the sub-package,
which would hide the function.  :class:`PublicModule` ignores exactly that assignment;
the sub-packages stay importable by their dotted names (``sys.modules``), as every
``from eftsieve.check.run import ...`` does.

``import eftsieve.check.verdicts as v`` resolves ``eftsieve.check`` to the function and
then looks for ``verdicts`` on it; Python's fallback for a missing attribute looks the
module up as ``<__name__ of the object>.verdicts`` in ``sys.modules``
(:func:`name_for_imports` sets each function's ``__name__`` to the dotted name of its
sub-package, so that lookup finds it).  ``__qualname__`` stays the plain name, so the
functions' repr and pickling are unchanged.
"""

from __future__ import annotations

import types
from typing import Any

#: public functions whose names are also sub-packages
SHADOWED = frozenset({"check", "impose", "theories"})


class PublicModule(types.ModuleType):
    """The ``eftsieve`` package module: sub-package imports do not replace the functions."""

    def __setattr__(self, name: str, value: Any) -> None:
        if name in SHADOWED and isinstance(value, types.ModuleType) and name in self.__dict__:
            return
        super().__setattr__(name, value)


def name_for_imports(module: types.ModuleType) -> None:
    """Give each shadowing function of ``module`` the dotted name of its sub-package
    (module docstring)."""
    for name in SHADOWED:
        func = module.__dict__.get(name)
        if isinstance(func, types.FunctionType):
            func.__name__ = f"{module.__name__}.{name}"
