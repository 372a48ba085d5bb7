"""Builders of the fault catalogue's input files (binary or large ones that a YAML
catalogue cannot hold literally).  Each takes the case folder and the file name and
writes the file; :data:`BUILDERS` maps the names used in catalogue.yaml to them.

The numbers here are invented test data (common practice for fault tests): they only
need to be well-formed or malformed in the stated way.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import yaml

#: the good fit card every card case starts from (a Gaussian in lbar1, lbar2, mean
#: inside the default chpt-su2 region; invented numbers)
GOOD_CARD: dict[str, Any] = {
    "format_version": 1, "name": "good", "theory": "chpt-su2",
    "kinematics": {"pion_mass_mev": 139.57},
    "parameters": [{"name": "lbar1", "convention": "lbar"},
                   {"name": "lbar2", "convention": "lbar"}],
    "mean": [3.0, 4.0], "covariance": [[0.25, 0.0], [0.0, 0.09]],
}
#: the good samples card (reads samples.csv beside it)
GOOD_SAMPLES_CARD: dict[str, Any] = {
    **{k: v for k, v in GOOD_CARD.items() if k not in ("mean", "covariance")},
    "name": "good-samples", "samples": {"path": "samples.csv"},
}


def good_samples(n: int = 300, seed: int = 7) -> np.ndarray:
    """Invented posterior rows of (lbar1, lbar2) around the good card's mean."""
    rng = np.random.default_rng(seed)
    return rng.normal([3.0, 4.0], [0.5, 0.3], size=(n, 2))


def write_csv(path: Path, data: np.ndarray, header: str = "lbar1,lbar2") -> None:
    lines = [header] + [",".join(f"{v:.6g}" for v in row) for row in data]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def write_parquet(path: Path, data: np.ndarray, names: tuple[str, ...] = ("lbar1", "lbar2")
                  ) -> None:
    import pandas as pd

    pd.DataFrame(data, columns=list(names)).to_parquet(path, index=False)


def merge(base: Any, patch: Any) -> Any:
    """Deep-merge ``patch`` into a copy of ``base``; a ``__delete__`` value removes a key."""
    if isinstance(base, dict) and isinstance(patch, dict):
        out = dict(base)
        for k, v in patch.items():
            if v == "__delete__":
                out.pop(k, None)
            else:
                out[k] = merge(base.get(k), v)
        return out
    return patch


def card_text(card: dict[str, Any], name: str) -> str:
    if name.endswith(".json"):
        return json.dumps(card, ensure_ascii=False)
    return yaml.safe_dump(card, sort_keys=False, allow_unicode=True)


# ---- builders -------------------------------------------------------------------
def latin1_card(d: Path, name: str) -> None:
    text = card_text({**GOOD_CARD, "name": "caf\u00e9 fit"}, name)
    (d / name).write_bytes(text.encode("latin-1"))


def utf16_card(d: Path, name: str) -> None:
    (d / name).write_bytes(card_text(GOOD_CARD, name).encode("utf-16"))


def utf16_csv(d: Path, name: str) -> None:
    write_csv(d / "tmp.csv", good_samples())
    (d / name).write_bytes((d / "tmp.csv").read_text().encode("utf-16"))
    (d / "tmp.csv").unlink()


def latin1_csv(d: Path, name: str) -> None:
    text = "lbar1,lbar2,caf\u00e9\n" + "\n".join(f"{a},{b},1" for a, b in good_samples(50))
    (d / name).write_bytes(text.encode("latin-1"))


def binary_junk(d: Path, name: str) -> None:
    (d / name).write_bytes(bytes(range(256)) * 8)


def good_parquet(d: Path, name: str) -> None:
    write_parquet(d / name, good_samples())


def truncated_parquet(d: Path, name: str) -> None:
    write_parquet(d / name, good_samples())
    raw = (d / name).read_bytes()
    (d / name).write_bytes(raw[: len(raw) // 2])


def csv_as_parquet(d: Path, name: str) -> None:
    write_csv(d / name, good_samples())


def parts_bad(d: Path, name: str) -> None:
    """A folder of Parquet parts whose second part is truncated."""
    folder = d / name
    folder.mkdir()
    data = good_samples(400)
    write_parquet(folder / "part-0000.parquet", data[:200])
    write_parquet(folder / "part-0001.parquet", data[200:])
    raw = (folder / "part-0001.parquet").read_bytes()
    (folder / "part-0001.parquet").write_bytes(raw[:100])


def parts_good(d: Path, name: str) -> None:
    folder = d / name
    folder.mkdir()
    data = good_samples(400)
    write_parquet(folder / "part-0000.parquet", data[:200])
    write_parquet(folder / "part-0001.parquet", data[200:])


def parts_mixed_columns(d: Path, name: str) -> None:
    folder = d / name
    folder.mkdir()
    data = good_samples(400)
    write_parquet(folder / "part-0000.parquet", data[:200])
    write_parquet(folder / "part-0001.parquet", data[200:], ("lbar1", "lbarX"))


def netcdf_no_posterior(d: Path, name: str) -> None:
    import xarray as xr

    ds = xr.Dataset({"lbar1": (("chain", "draw"), good_samples(200)[:, 0].reshape(2, 100)),
                     "lbar2": (("chain", "draw"), good_samples(200)[:, 1].reshape(2, 100))})
    ds.to_netcdf(d / name, engine="h5netcdf")


def wide_header(d: Path, name: str) -> None:
    """A CSV whose header has 300000 columns (above the width cap)."""
    cols = ",".join(f"c{i}" for i in range(300_000))
    (d / name).write_text(cols + "\n" + ",".join("1" for _ in range(3)) + "\n")


def deep_json(d: Path, name: str) -> None:
    (d / name).write_text("[" * 100_000 + "]" * 100_000)


def deep_yaml(d: Path, name: str) -> None:
    (d / name).write_text("a: " + "[" * 20_000 + "]" * 20_000 + "\n")


def many_columns_few_rows(d: Path, name: str) -> None:
    """3 rows of 8 columns (lbar1, lbar2 and six nuisances): fewer rows than columns."""
    rng = np.random.default_rng(3)
    data = np.column_stack([rng.normal(3, 0.5, 3), rng.normal(4, 0.3, 3),
                            rng.normal(size=(3, 6))])
    write_csv(d / name, data, ",".join(["lbar1", "lbar2"] + [f"n{i}" for i in range(6)]))


def sixty_columns(d: Path, name: str) -> None:
    rng = np.random.default_rng(4)
    data = np.column_stack([rng.normal(3, 0.5, 400), rng.normal(4, 0.3, 400),
                            rng.normal(size=(400, 58))])
    write_csv(d / name, data, ",".join(["lbar1", "lbar2"] + [f"n{i}" for i in range(58)]))


def big_card(d: Path, name: str) -> None:
    """A card padded with a long comment (above a lowered size cap)."""
    (d / name).write_text("# " + "x" * 5000 + "\n" + card_text(GOOD_CARD, name))


def one_row_1e300(d: Path, name: str) -> None:
    data = good_samples(1000)
    data[500, 0] = 1e300
    write_csv(d / name, data)


BUILDERS: dict[str, Callable[[Path, str], None]] = {
    f.__name__: f for f in (latin1_card, utf16_card, utf16_csv, latin1_csv, binary_junk,
                            good_parquet, truncated_parquet, csv_as_parquet, parts_bad,
                            parts_good, parts_mixed_columns, netcdf_no_posterior, wide_header,
                            deep_json, deep_yaml, many_columns_few_rows, sixty_columns,
                            big_card, one_row_1e300)}


# ---- eftsieve limits: interval cards and HEPData records -------------------------
#: the header of every interval card here (docs/formats.md, "Interval card")
CARD_HEADER = "theory,coefficient,low,high,cl,others,convention,units,source"
#: a good interval card: two invented intervals on higgs-quartic coefficients (a
#: fictional scenario; the numbers only need to be well-formed)
GOOD_INTERVAL_CARD = (f"# invented intervals (fictional scenario)\n{CARD_HEADER}\n"
                      "higgs-quartic,fS0,-1,2,95,,none,TeV^-4,invented\n"
                      "higgs-quartic,fS1,-1,2,0.68,fS0=0.5; fS2=0,none,TeV^-4,invented\n")


def _scan_var(name: str, values: list[Any]) -> dict[str, Any]:
    return {"header": {"name": name}, "values": [{"value": v} for v in values]}


#: a good 1-D likelihood scan of fS0 (invented: q = fS0^2 on a grid of 9 points)
GOOD_SCAN: dict[str, Any] = {
    "independent_variables": [_scan_var("$f_{S0}/\\Lambda^4$",
                                        [-2, -1.5, -1, -0.5, 0, 0.5, 1, 1.5, 2])],
    "dependent_variables": [_scan_var("$-2\\Delta\\ln L$",
                                      [4, 2.25, 1, 0.25, 0, 0.25, 1, 2.25, 4])]}


def write_record(d: Path, name: str, tables: dict[str, Any] | None = None,
                 submission: str | None = None) -> None:
    """A record folder ``name`` with submission.yaml and its table files (one table
    ``scan.yaml`` holding the good scan unless ``tables`` says otherwise; a table given
    as text is written as it is)."""
    folder = d / name
    folder.mkdir(parents=True, exist_ok=True)
    tables = {"scan.yaml": GOOD_SCAN} if tables is None else tables
    if submission is None:
        docs = [{"comment": "invented record (fictional scenario)"}] + [
            {"name": f"Table {k}", "description": "test", "data_file": f}
            for k, f in enumerate(tables)]
        submission = yaml.safe_dump_all(docs, explicit_start=True)
    (folder / "submission.yaml").write_text(submission, encoding="utf-8")
    for f, body in tables.items():
        text = body if isinstance(body, str) else yaml.safe_dump(body, sort_keys=False)
        (folder / f).write_text(text, encoding="utf-8")


def _scan_with(values: list[Any]) -> dict[str, Any]:
    return merge(GOOD_SCAN, {"dependent_variables": [_scan_var("$-2\\Delta\\ln L$",
                                                               values)]})


def _contour(xs: list[float], ys: list[float]) -> dict[str, Any]:
    y = _scan_var("$f_{S1}$", ys)
    y["qualifiers"] = [{"name": "CL", "value": "95%"}]
    return {"independent_variables": [_scan_var("$f_{S0}$", xs)], "dependent_variables": [y]}


def _central(names: list[str], values: list[float], errors: list[float]) -> dict[str, Any]:
    return {"independent_variables": [{"header": {"name": "Coefficient"},
                                       "values": [{"value": n} for n in names]}],
            "dependent_variables": [{"header": {"name": "Value"}, "values": [
                {"value": v, "errors": [{"symerror": e, "label": "total"}]}
                for v, e in zip(values, errors, strict=True)]}]}


_GRID = [-2, -1.5, -1, -0.5, 0, 0.5, 1, 1.5, 2]
#: record variants by name: the tables of each (the catalogue's ``{record: NAME}``)
RECORDS: dict[str, Callable[[], dict[str, Any]]] = {
    "good": lambda: {"scan.yaml": GOOD_SCAN},
    "scan_nan": lambda: {"scan.yaml": _scan_with([4, 2.25, float("nan"), 0.25, 0, 0.25, 1,
                                                  2.25, 4])},
    "scan_inf": lambda: {"scan.yaml": _scan_with([4, 2.25, 1, 0.25, 0, 0.25, 1, 2.25,
                                                  float("inf")])},
    "scan_placeholder": lambda: {"scan.yaml": _scan_with([4, 2.25, 1, 0.25, "-", 0.25, 1,
                                                          2.25, 4])},
    "scan_bool": lambda: {"scan.yaml": _scan_with([True, 2.25, 1, 0.25, 0, 0.25, 1, 2.25,
                                                   4])},
    "scan_repeated_point": lambda: {"scan.yaml": merge(GOOD_SCAN, {"independent_variables": [
        _scan_var("$f_{S0}$", [-2, -1.5, -1, -1, 0, 0.5, 1, 1.5, 2])]})},
    "scan_two_points": lambda: {"scan.yaml": {
        "independent_variables": [_scan_var("$f_{S0}$", [0, 1])],
        "dependent_variables": [_scan_var("$\\Delta\\chi^2$", [0, 1])]}},
    "scan_delta_ln_l_sign": lambda: {"scan.yaml": _scan_with([-4, -2.25, -1, -0.25, 0, -0.25,
                                                              -1, -2.25, -4])},
    "lengths_differ": lambda: {"scan.yaml": _scan_with([4, 2.25, 1, 0.25, 0, 0.25, 1, 2.25])},
    "three_independent": lambda: {"scan.yaml": {
        "independent_variables": [_scan_var(f"$f_{{S{k}}}$", [0, 1, 2]) for k in range(3)],
        "dependent_variables": [_scan_var("$\\Delta\\chi^2$", [0, 1, 2])]}},
    "unsupported_layout": lambda: {"scan.yaml": {
        "independent_variables": [{"header": {"name": "$m_{WW}$", "units": "GeV"},
                                   "values": [{"value": v} for v in (500, 1000, 1500)]}],
        "dependent_variables": [{"header": {"name": "$\\sigma$", "units": "fb"},
                                 "values": [{"value": v} for v in (1.2, 0.4, 0.1)]}]}},
    "binned": lambda: {"scan.yaml": {
        "independent_variables": [{"header": {"name": "$f_{S0}$"}, "values": [
            {"low": a, "high": a + 1} for a in (-1, 0, 1)]}],
        "dependent_variables": [_scan_var("$\\Delta\\chi^2$", [1, 0, 1])]}},
    "grid_incomplete": lambda: {"scan.yaml": {
        "independent_variables": [_scan_var("$f_{S0}$", [0, 0, 0, 1, 1, 1, 2, 2]),
                                  _scan_var("$f_{S1}$", [0, 1, 2, 0, 1, 2, 0, 1])],
        "dependent_variables": [_scan_var("$\\Delta\\chi^2$", [0, 1, 2, 1, 2, 3, 2, 3])]}},
    "contour_two_points": lambda: {"contour.yaml": _contour([-1, 1], [1, -1])},
    "contour_repeated_point": lambda: {"contour.yaml": _contour([1, 1, 1, 1], [2, 2, 2, 2])},
    "contour_collinear": lambda: {"contour.yaml": _contour([0, 1, 2, 3], [0, 1, 2, 3])},
    "contour_crossed": lambda: {"contour.yaml": _contour([-1, 1, 1, -1], [-1, 1, -1, 1])},
    # a figure of eight with lobes of unequal size: its signed area does not vanish
    "contour_figure_eight": lambda: {"contour.yaml": _contour([-1, 3, 3, -1], [-2, 1, -1, 2])},
    "central_no_error": lambda: {"central.yaml": merge(_central(["fS0", "fS1"], [0.5, 0.2],
                                                                [0.1, 0.1]), {
        "dependent_variables": [{"header": {"name": "Value"},
                                 "values": [{"value": 0.5}, {"value": 0.2}]}]})},
    "central_negative_error": lambda: {"central.yaml": _central(["fS0", "fS1"], [0.5, 0.2],
                                                                [-0.1, 0.1])},
    "central_repeated": lambda: {"central.yaml": _central(["fS0", "fS0"], [0.5, 0.2],
                                                          [0.1, 0.1])},
    "table_missing": lambda: {"scan.yaml": GOOD_SCAN},
    "table_yaml_syntax": lambda: {"scan.yaml": "independent_variables: [a, b\n"},
    "table_dup_key": lambda: {"scan.yaml": yaml.safe_dump(GOOD_SCAN, sort_keys=False)
                              + "independent_variables: []\n"},
    "table_deep": lambda: {"scan.yaml": "a: " + "[" * 20_000 + "]" * 20_000 + "\n"},
    "table_list": lambda: {"scan.yaml": "- 1\n- 2\n"},
}


def record_builder(variant: str) -> Callable[[Path, str], None]:
    """A builder of the record variant ``variant`` (``table_missing`` names scan.yaml in
    submission.yaml but writes no table file)."""
    def build(d: Path, name: str) -> None:
        if variant == "table_missing":
            write_record(d, name, {"scan.yaml": GOOD_SCAN})
            (d / name / "scan.yaml").unlink()
            return
        write_record(d, name, RECORDS[variant]())
    return build


def big_interval_card(d: Path, name: str) -> None:
    """An interval card padded with a long comment (above a lowered size cap)."""
    (d / name).write_text("# " + "x" * 5000 + "\n" + GOOD_INTERVAL_CARD, encoding="utf-8")


def latin1_interval_card(d: Path, name: str) -> None:
    text = GOOD_INTERVAL_CARD.replace("invented\n", "caf\u00e9 analysis\n", 1)
    (d / name).write_bytes(text.encode("latin-1"))


def utf16_interval_card(d: Path, name: str) -> None:
    (d / name).write_bytes(GOOD_INTERVAL_CARD.encode("utf-16"))


def big_record(d: Path, name: str) -> None:
    """A record whose table file is padded with a long comment."""
    write_record(d, name, {"scan.yaml": "# " + "x" * 5000 + "\n"
                           + yaml.safe_dump(GOOD_SCAN, sort_keys=False)})


BUILDERS.update({f.__name__: f for f in (big_interval_card, latin1_interval_card,
                                         utf16_interval_card, big_record)})
BUILDERS.update({f"record_{v}": record_builder(v) for v in RECORDS})
