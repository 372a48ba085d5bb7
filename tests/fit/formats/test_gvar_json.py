"""gvar JSON dumps written by the real gvar and lsqfit, read without gvar.

The reference is gvar itself: ``gvar.mean`` and ``gvar.evalcov`` of the in-memory
GVars that were dumped (means and covariance agree to 1e-12).
"""

from __future__ import annotations

import json
import pickle

import numpy as np
import pytest

from eftsieve.api import load_fit
from eftsieve.cli.args import load_fit_arg
from eftsieve.errors import InputError
from eftsieve.fit.formats.gvar_json import read_gvar_json
from tests.fit.formats.common import assert_one_line, block_import, cli_args, write_card

gv = pytest.importorskip("gvar")
lsqfit = pytest.importorskip("lsqfit")

TOL = 1e-12


def _close(a, b):
    a, b = np.asarray(a, dtype=float), np.asarray(b, dtype=float)
    scale = max(float(np.max(np.abs(b))), 1e-300)
    assert a.shape == b.shape and float(np.max(np.abs(a - b))) <= TOL * scale


@pytest.fixture(scope="module")
def lsq(tmp_path_factory):
    """A real lsqfit fit of correlated data (quadratic in x, three parameters)."""
    rng = np.random.default_rng(7)
    x = np.linspace(0.1, 1.0, 12)
    corr = 0.3 ** np.abs(np.subtract.outer(np.arange(12), np.arange(12)))
    cov = 0.05**2 * corr
    y = gv.gvar(1.0 - 0.5 * x + 0.3 * x**2 + rng.multivariate_normal(np.zeros(12), cov), cov)
    prior = gv.BufferDict(l=gv.gvar(["0(5)", "0(5)"]), c=gv.gvar("0(1)"))
    fit = lsqfit.nonlinear_fit(data=(x, y), prior=prior,
                               fcn=lambda x, p: p["l"][0] + p["l"][1] * x + p["c"] * x**2)
    folder = tmp_path_factory.mktemp("gvar")
    path = folder / "fit.json"
    gv.gdump(fit.p, str(path), method="json")
    chosen = [fit.p["l"][0], fit.p["l"][1], fit.p["c"]]
    return {"p": fit.p, "path": path, "folder": folder,
            "mean": np.array(gv.mean(chosen)), "cov": np.array(gv.evalcov(chosen))}


def test_lsqfit_dump_gives_means_and_full_covariance(lsq):
    s = read_gvar_json(lsq["path"], ["l[0]", "l[1]", "c"])
    _close(s.mean, lsq["mean"])
    _close(s.cov, lsq["cov"])
    assert abs(s.cov[0, 1]) > 0.1 * np.sqrt(s.cov[0, 0] * s.cov[1, 1])  # really correlated


def test_card_selects_array_elements_by_key(lsq):
    card = write_card(lsq["folder"], {
        "parameters": [{"name": "lbar1", "convention": "lbar"},
                       {"name": "lbar2", "convention": "lbar"},
                       {"name": "c_sys", "convention": "none"}],
        "gaussian": {"file": "fit.json", "format": "gvar-json",
                     "keys": {"lbar1": "l[0]", "lbar2": "l[1]", "c_sys": "c"}}}, "map.yaml")
    fit = load_fit(card)
    assert fit.is_gaussian and fit.samples is None
    _close(fit.mean, lsq["mean"])
    _close(fit.cov, lsq["cov"])


def test_key_list_in_parameter_order_and_reordering(lsq):
    card = write_card(lsq["folder"], {"gaussian": {"file": "fit.json", "keys": ["l[1]", "c"]}},
                      "list.yaml")
    fit = load_fit(card)
    _close(fit.mean, lsq["mean"][[1, 2]])
    _close(fit.cov, lsq["cov"][np.ix_([1, 2], [1, 2])])


def test_derived_entries_and_added_dependencies(tmp_path, lsq):
    p = lsq["p"]
    g = {"l": p["l"], "ratio": p["l"][1] / p["l"][0], "m": np.array([[p["c"], p["l"][0]],
                                                                      [p["l"][1], p["c"]]])}
    for deps in (False, True):
        path = tmp_path / f"derived_{deps}.json"
        gv.gdump(g, str(path), method="json", add_dependencies=deps)
        s = read_gvar_json(path, ["ratio", "m[1][0]", "m[0,0]", "l[0]"])
        ref = [g["ratio"], g["m"][1, 0], g["m"][0, 0], g["l"][0]]
        _close(s.mean, gv.mean(ref))
        _close(s.cov, gv.evalcov(ref))


def test_array_dump_and_non_string_keys(tmp_path):
    a = gv.gvar([1.0, 2.0], [[0.04, 0.01], [0.01, 0.09]])
    gv.gdump(a, str(tmp_path / "arr.json"), method="json")
    s = read_gvar_json(tmp_path / "arr.json")
    assert s.names == ("[0]", "[1]")
    _close(s.cov, gv.evalcov(a))
    gv.gdump({(1, "x"): a[0], 3: a[1]}, str(tmp_path / "k.json"), method="json")
    s = read_gvar_json(tmp_path / "k.json", ["3", "(1, 'x')"])
    _close(s.cov, gv.evalcov([a[1], a[0]]))


def test_bare_dump_on_the_command_line(lsq):
    args = cli_args(str(lsq["path"]), "--theory", "chpt-su2", "--convention", "lbar",
                    "--pion-mass", "139.57", "--columns", "lbar1=l[0],lbar2=l[1]")
    fit = load_fit_arg(args)
    assert fit.names == ("lbar1", "lbar2") and fit.samples is None
    _close(fit.cov, lsq["cov"][:2, :2])


def test_read_without_gvar_installed(lsq, monkeypatch):
    block_import(monkeypatch, "gvar", "lsqfit")
    with pytest.raises(ImportError):
        import gvar  # noqa: F401
    s = read_gvar_json(lsq["path"], ["l[0]", "l[1]", "c"])
    _close(s.cov, lsq["cov"])


# ---- bad files: one test per rule ---------------------------------------------------------

def test_pickle_dump_is_refused_never_unpickled(tmp_path, monkeypatch):
    a = gv.gvar([1.0, 2.0], [0.1, 0.2])
    gv.gdump(a, str(tmp_path / "fit.pickle"), method="pickle")
    gv.gdump(a, str(tmp_path / "named.json"), method="pickle")  # a pickle under a JSON name

    def boom(*args, **kwargs):
        raise AssertionError("unpickled")
    monkeypatch.setattr(pickle, "load", boom)
    monkeypatch.setattr(pickle, "loads", boom)
    for name in ("fit.pickle", "named.json"):
        with pytest.raises(InputError) as info:
            read_gvar_json(tmp_path / name)
        err = assert_one_line(info, name, "gaussian.file", "never unpickled")
        assert "method='json'" in err.hint


def _edited(lsq, tmp_path, name, edit):
    data = json.loads(lsq["path"].read_text())
    edit(data)
    path = tmp_path / name
    path.write_text(json.dumps(data))
    return path


@pytest.mark.parametrize("name, edit, field, words", [
    ("no_bcovs.json", lambda d: d.pop("bcovs"), "gaussian.file", "not a gvar JSON dump"),
    ("bad_means.json", lambda d: d.update(means="1.0"), "gaussian.file:means", "list of numbers"),
    ("bad_layouts.json", lambda d: d.pop("layouts"), "gaussian.file:layouts", "not one per key"),
    ("evil_keys.json", lambda d: d.update(keys="[__import__('os').getcwd()]"),
     "gaussian.file:keys", "cannot parse the keys"),
    ("out_of_range.json", lambda d: d["bcovs"][-1][0].__setitem__(0, 999),
     "gaussian.file:bcovs[1]", "outside the"),
    ("twice.json", lambda d: d["bcovs"].append([[0], [1.0], [], []]),
     "gaussian.file:bcovs[2]", "two blocks"),
    ("bad_block.json", lambda d: d["bcovs"][-1].__setitem__(1, [[1.0]]),
     "gaussian.file:bcovs[1]", "bcov of shape"),
])
def test_damaged_dump_is_refused(lsq, tmp_path, name, edit, field, words):
    path = _edited(lsq, tmp_path, name, edit)
    with pytest.raises(InputError) as info:
        read_gvar_json(path, ["l[0]", "l[1]"])
    assert_one_line(info, name, field, words)


def test_not_json_is_refused(tmp_path):
    path = tmp_path / "cut.json"
    path.write_text('{"means": [1.0, ')
    with pytest.raises(InputError) as info:
        read_gvar_json(path)
    assert_one_line(info, "cut.json", "gaussian.file", "not JSON")


def test_unknown_key_lists_the_entries(lsq):
    with pytest.raises(InputError) as info:
        read_gvar_json(lsq["path"], ["l[2]"])
    err = assert_one_line(info, "fit.json", "gaussian.keys", "no entry 'l[2]'")
    assert "l[0], l[1], c" in err.hint


def test_key_naming_two_entries_is_ambiguous(tmp_path):
    a = gv.gvar([1.0, 2.0], [0.1, 0.2])
    gv.gdump({"l": a, "l[0]": a[1] * 2}, str(tmp_path / "amb.json"), method="json")
    assert read_gvar_json(tmp_path / "amb.json", ["l[1]"]).mean[0] == 2.0
    with pytest.raises(InputError) as info:
        read_gvar_json(tmp_path / "amb.json", ["l[0]"])
    assert_one_line(info, "amb.json", "gaussian.keys", "names two entries")


def test_non_psd_covariance_is_refused(lsq, tmp_path):
    def edit(d):
        block = d["bcovs"][-1][1]
        block[0][1] = block[1][0] = 10 * (block[0][0] * block[1][1]) ** 0.5
    path = _edited(lsq, tmp_path, "nonpsd.json", edit)
    card = write_card(tmp_path, {"gaussian": {"file": "nonpsd.json", "keys": ["l[0]", "l[1]"]}})
    with pytest.raises(InputError) as info:
        load_fit(card)
    assert_one_line(info, path.name, "covariance of the selected keys", "not positive semi")


@pytest.mark.parametrize("gaussian, field, words", [
    ({"file": "fit.json", "keys": ["l[0]"]}, "gaussian.keys", "1 entries for 2 parameters"),
    ({"file": "fit.json", "keys": {"lbar3": "c"}}, "gaussian.keys.lbar3", "not a parameter"),
    ({"file": "fit.json", "format": "hdf5"}, "gaussian.format", "unsupported format"),
    ({"file": "missing.json"}, "gaussian.file", "file not found"),
    ({"file": "fit.json", "key": ["c"]}, "gaussian.key", "unknown field"),
])
def test_bad_gaussian_card_entry(lsq, gaussian, field, words):
    card = write_card(lsq["folder"], {"gaussian": gaussian}, "bad_gaussian.yaml")
    with pytest.raises(InputError) as info:
        load_fit(card)
    assert_one_line(info, "bad_gaussian.yaml", field, words)


def test_card_with_mean_and_gaussian_is_refused(lsq):
    card = write_card(lsq["folder"], {"gaussian": {"file": "fit.json"}, "mean": [0.0, 1.0]},
                      "both.yaml")
    with pytest.raises(InputError) as info:
        load_fit(card)
    assert_one_line(info, "both.yaml", "mean/samples", "exactly one")


def test_samples_entry_pointing_at_a_gvar_dump_is_refused(lsq):
    card = write_card(lsq["folder"], {"samples": {"path": "fit.json"}}, "as_samples.yaml")
    with pytest.raises(InputError) as info:
        load_fit(card)
    assert_one_line(info, "as_samples.yaml", "samples.format", "gvar JSON dump")


def test_dump_without_keys_or_shape_is_refused(lsq, tmp_path):
    def edit(d):
        d.pop("keys")
        d.pop("layouts")
    path = _edited(lsq, tmp_path, "nolayout.json", edit)
    with pytest.raises(InputError) as info:
        read_gvar_json(path)
    assert_one_line(info, "nolayout.json", "gaussian.file:shape", "'keys' or 'shape'")
