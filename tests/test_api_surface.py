"""The public surface is frozen: changing it is a deliberate act."""

from __future__ import annotations

import subprocess
import sys

import eftsieve


def test_all_is_exact():
    assert eftsieve.__all__ == ["EftsieveError", "EftsieveWarning", "InputError", "__version__",
                                "build_region", "check", "errors", "get_theory", "impose",
                                "load_fit", "load_region", "load_samples", "theories"]


def test_import_does_not_load_heavy_libraries():
    code = ("import sys, eftsieve, eftsieve.cli.main; "
            "print(','.join(m for m in ('cvxpy', 'matplotlib', 'emcee', 'scipy.stats') "
            "if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == ""


def test_public_functions_survive_importing_their_sub_packages():
    """Regression: ``import eftsieve.check.run`` replaced the function ``eftsieve.check``."""
    import eftsieve.check.run  # noqa: F401
    import eftsieve.impose.api  # noqa: F401
    import eftsieve.theories.base  # noqa: F401

    assert callable(eftsieve.check) and callable(eftsieve.impose)
    assert "chpt-su2" in eftsieve.theories()


def test_subpackages_named_like_functions_import_with_as():
    # `import a.b.c as x` looks c up on the *function* eftsieve.check; Python's fallback
    # then uses its __name__ to find the module in sys.modules (eftsieve._names)
    import eftsieve as es
    import eftsieve.check.verdicts as verdicts
    import eftsieve.impose.core as core
    import eftsieve.theories.aqgc_dim8 as aqgc

    assert verdicts.__name__ == "eftsieve.check.verdicts"
    assert core.__name__ == "eftsieve.impose.core"
    assert aqgc.__name__ == "eftsieve.theories.aqgc_dim8"
    assert callable(es.check) and es.check.__qualname__ == "check"
    assert "aqgc-dim8" in es.theories()
