"""Screenshots of report.html for the three verdict cases, taken in headless Chromium.

Skips cleanly when no Chromium is installed (``apt-get install chromium``).  The PNGs go
to $EFTSIEVE_SCREENSHOT_DIR when it is set (``make screenshots``), else to a temporary
folder.  The test asserts that the banner's colour fills the top of the page, so a
report that lost its banner fails.
"""

from __future__ import annotations

import os
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest

import eftsieve as es
from eftsieve.region.model import Region
from eftsieve.report.document import BANNER_STYLE
from eftsieve.report.outputs import write_check_outputs

CASES = Path(__file__).parent / "verdict_cases"
LABELS = {"inside": "consistent", "tension": "tension", "excluded": "excluded"}


def chromium() -> str | None:
    for name in ("chromium", "chromium-browser", "google-chrome", "chrome"):
        if shutil.which(name):
            return shutil.which(name)
    return None


def shoot(browser: str, html: Path, png: Path) -> None:
    subprocess.run([browser, "--headless", "--no-sandbox", "--disable-gpu",
                    "--hide-scrollbars", f"--screenshot={png}", "--window-size=1100,1400",
                    html.resolve().as_uri()], check=True, capture_output=True, timeout=120)


@pytest.mark.parametrize("case", sorted(LABELS))
def test_report_screenshot_shows_the_banner(case, tmp_path):
    browser = chromium()
    if browser is None:
        pytest.skip("no Chromium on this machine")
    import matplotlib.image as mpimg

    out = Path(os.environ.get("EFTSIEVE_SCREENSHOT_DIR") or tmp_path)
    out.mkdir(parents=True, exist_ok=True)
    reg = Region.load(CASES / "su2_physical_region.json")
    fit = es.load_fit(CASES / f"{case}.yaml")
    res = es.check(fit, reg, draws=20_000, seed=1)
    folder = tmp_path / case
    folder.mkdir()
    written = write_check_outputs(fit, res, folder)
    png = out / f"report_{case}.png"
    shoot(browser, written["report_html"], png)
    img = mpimg.imread(png)[:400, :, :3]
    bg = BANNER_STYLE[LABELS[case]][1]
    rgb = np.array([int(bg[i:i + 2], 16) for i in (1, 3, 5)]) / 255
    share = np.mean(np.all(np.abs(img - rgb) < 0.02, axis=-1))
    assert share > 0.05, f"banner colour {bg} covers {share:.3f} of the top of {png}"
