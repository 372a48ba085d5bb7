"""Write the INVENTED vector-boson-scattering demo inputs of ``eftsieve demo``.

Everything here is invented for the demo: the fictional experiment "Borealis" and its
numbers are no measurement.  Writes ``vbs_intervals.csv`` (an interval card) and
``vbs_hepdata/`` (a HEPData record made with hepdata_lib: one 2-D likelihood scan and
one 2-D contour).  The theory and convention of the demo are set here, once:
``THEORY``/``CONVENTION`` (the demo reads them back from the card).

Run: ``python data_examples/make_vbs_limits.py`` (needs hepdata_lib, the [test] extra).
"""

from __future__ import annotations

import csv
import warnings
from pathlib import Path

import numpy as np

HERE = Path(__file__).parent
#: the demo's theory and convention (the only place they are named)
THEORY, CONVENTION = "aqgc-dim8", "hat-i"
LABEL = "INVENTED demo data: fictional experiment 'Borealis', not a measurement"
#: invented one-coefficient 95% CL intervals, TeV^-4 (coefficient, low, high, others;
#: ``free``: the other coefficients profiled, checked against the cone's projection)
INTERVALS = (("fT0", -0.34, 0.37, ""), ("fT1", -0.21, 0.24, ""), ("fT2", -0.55, 0.71, ""),
             ("fT2", -0.62, -0.04, "fT0=0.1"), ("fT1", -0.30, 0.85, "fT0=-0.2"),
             ("fT7", -0.45, 0.52, "free"))


def write_card(path: Path) -> None:
    with open(path, "w", newline="", encoding="utf-8") as fh:
        fh.write(f"# {LABEL}\n# written by make_vbs_limits.py\n")
        w = csv.writer(fh, lineterminator="\n")
        w.writerow(["theory", "coefficient", "low", "high", "cl", "others", "convention",
                    "units", "source", "label"])
        for k, (c, lo, hi, others) in enumerate(INTERVALS):
            w.writerow([THEORY, c, lo, hi, 95, others, CONVENTION, "TeV^-4",
                        f"Borealis VBS note, Table {k + 1} (INVENTED)",
                        f"Borealis {c}" + (f" ({others})" if others else "")])


def _var(name: str, values, independent: bool):  # type: ignore[no-untyped-def]
    from hepdata_lib import Variable

    v = Variable(name, is_independent=independent, is_binned=False,
                 units="TeV$^{-4}$" if independent else "")
    v.digits = 6
    v.values = [float(x) for x in values]
    return v


def write_record(folder: Path) -> None:
    from hepdata_lib import Submission, Table

    sub = Submission()
    sub.comment = LABEL
    # a 2-D scan of (fT0, fT1): a correlated Gaussian with a small quartic term
    g0, g1 = np.linspace(-0.6, 0.6, 25), np.linspace(-0.4, 0.4, 25)
    x, y = np.meshgrid(g0, g1, indexing="ij")
    u, v = (x + 0.05) / 0.16, (y - 0.02) / 0.10
    q = (u * u - 1.2 * u * v + v * v) / (1 - 0.36) + 0.02 * u ** 4
    scan = Table("Scan fT0 fT1")
    scan.description = f"{LABEL}. Delta chi^2 of a 2-D scan, other coefficients at zero."
    scan.add_variable(_var("$f_{T0}/\\Lambda^4$", x.ravel(), True))
    scan.add_variable(_var("$f_{T1}/\\Lambda^4$", y.ravel(), True))
    scan.add_variable(_var("$\\Delta\\chi^2$", q.ravel() - q.min(), False))
    sub.add_table(scan)
    # a 95% CL contour of (fT0, fT2): a tilted ellipse
    phi = np.linspace(0, 2 * np.pi, 120, endpoint=False)
    a, b, tilt = 0.42, 0.22, np.radians(35)
    cx = 0.02 + a * np.cos(phi) * np.cos(tilt) - b * np.sin(phi) * np.sin(tilt)
    cy = -0.05 + a * np.cos(phi) * np.sin(tilt) + b * np.sin(phi) * np.cos(tilt)
    cont = Table("Contour fT0 fT2")
    cont.description = f"{LABEL}. Observed 95% CL contour, other coefficients at zero."
    cont.add_variable(_var("$f_{T0}/\\Lambda^4$", cx, True))
    yv = _var("$f_{T2}/\\Lambda^4$", cy, False)
    yv.add_qualifier("CL", "95%")
    cont.add_variable(yv)
    sub.add_table(cont)
    import os
    import tempfile

    here = os.getcwd()
    with warnings.catch_warnings(), tempfile.TemporaryDirectory() as tmp:
        warnings.simplefilter("ignore")
        os.chdir(tmp)  # hepdata_lib writes its archive submission.tar.gz to the cwd
        try:
            sub.create_files(str(folder.resolve()), remove_old=True)
        finally:
            os.chdir(here)


if __name__ == "__main__":
    write_card(HERE / "vbs_intervals.csv")
    write_record(HERE / "vbs_hepdata")
