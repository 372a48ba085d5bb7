"""The corner plot loads ``corner`` without arviz (and with it xarray, pandas and
scipy.stats; about 0.8 s of a check's plots, issue 18) and leaves the import system
as it found it."""

from __future__ import annotations

import json
import subprocess
import sys

SCRIPT = """
import json, sys
import numpy as np
from eftsieve.report.plots import save_corner
x = np.random.default_rng(0).normal(size=(500, 2))
save_corner(sys.argv[1], x, ["a", "b"])
print(json.dumps({"arviz": "arviz" in sys.modules, "pandas": "pandas" in sys.modules,
                  "scipy.stats": "scipy.stats" in sys.modules,
                  "blocked": "corner.arviz_corner" in sys.modules}))
"""


def test_corner_plot_does_not_load_arviz(tmp_path):
    out = tmp_path / "corner.png"
    res = subprocess.run([sys.executable, "-c", SCRIPT, str(out)], capture_output=True,
                         text=True, check=True)
    loaded = json.loads(res.stdout.strip().splitlines()[-1])
    assert out.stat().st_size > 1000
    assert loaded == {"arviz": False, "pandas": False, "scipy.stats": False,
                      "blocked": False}
