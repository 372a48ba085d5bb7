"""The ``eftsieve`` command line: one module per verb, parsing only; the library does the work."""

from __future__ import annotations

import importlib.util
import os
import sys

if "check" in sys.argv[1:3] and importlib.util.find_spec("threadpoolctl") is None:
    # without threadpoolctl, one BLAS thread for the streaming check is set here, before
    # numpy loads BLAS (docs/performance.md); an explicit setting is kept
    for _var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
        os.environ.setdefault(_var, "1")

from eftsieve.cli.main import main  # noqa: E402

__all__ = ["main"]
