"""Genuine HEPData records written with hepdata_lib (the test-only dependency)."""

from __future__ import annotations

import os
import warnings
from pathlib import Path

import numpy as np

with warnings.catch_warnings():  # hepdata_lib imports a deprecated jsonschema API
    warnings.simplefilter("ignore", DeprecationWarning)
    import hepdata_lib  # noqa: F401


def variable(name: str, values, independent: bool, units: str = ""):
    from hepdata_lib import Variable

    v = Variable(name, is_independent=independent, is_binned=False, units=units)
    v.digits = 12  # hepdata_lib rounds to 5 significant digits by default
    v.values = list(values)
    return v


def write_record(folder: Path, tables) -> Path:
    """Write tables (hepdata_lib Table objects) as a record; returns submission.yaml."""
    import warnings

    from hepdata_lib import Submission

    sub = Submission()
    for t in tables:
        sub.add_table(t)
    import gc

    # hepdata_lib's validator uses a deprecated jsonschema API, and its archive step
    # leaves a file object for the garbage collector: both are the library's, not ours
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", DeprecationWarning)
        warnings.simplefilter("ignore", ResourceWarning)
        here = os.getcwd()
        os.chdir(folder.parent)  # the archive submission.tar.gz is written to the cwd
        try:
            sub.create_files(str(folder), remove_old=True)
        finally:
            os.chdir(here)
        gc.collect()
    return folder / "submission.yaml"


def scan_1d_table(name: str, coefficient_header: str, x, q, quantity: str = "-2\\Delta\\ln L"):
    from hepdata_lib import Table

    t = Table(name)
    t.add_variable(variable(f"${coefficient_header}$", x, True, "TeV$^{-4}$"))
    t.add_variable(variable(f"${quantity}$", q, False))
    return t


def scan_2d_table(name: str, headers: tuple[str, str], x, y, q):
    from hepdata_lib import Table

    gx, gy = np.meshgrid(x, y, indexing="ij")
    t = Table(name)
    t.add_variable(variable(f"${headers[0]}$", gx.ravel(), True))
    t.add_variable(variable(f"${headers[1]}$", gy.ravel(), True))
    t.add_variable(variable("$\\Delta\\chi^2$", np.asarray(q).ravel(), False))
    return t


def contour_table(name: str, headers: tuple[str, str], x, y, cl: str = "95%"):
    from hepdata_lib import Table

    t = Table(name)
    t.add_variable(variable(f"${headers[0]}$", x, True))
    yv = variable(f"${headers[1]}$", y, False)
    yv.add_qualifier("CL", cl)
    t.add_variable(yv)
    return t


def central_tables(names, mean, err, corr):
    from hepdata_lib import Table, Uncertainty, Variable

    c = Table("Central values")
    lab = Variable("Coefficient", is_independent=True, is_binned=False)
    lab.values = list(names)
    c.add_variable(lab)
    val = variable("Value", mean, False)
    unc = Uncertainty("total", is_symmetric=True)
    unc.values = list(err)
    val.add_uncertainty(unc)
    c.add_variable(val)
    m = Table("Correlations")
    a = Variable("Coefficient 1", is_independent=True, is_binned=False)
    b = Variable("Coefficient 2", is_independent=True, is_binned=False)
    a.values = [i for i in names for _ in names]
    b.values = [j for _ in names for j in names]
    m.add_variable(a)
    m.add_variable(b)
    m.add_variable(variable("Correlation", np.asarray(corr).ravel(), False))
    return [c, m]
