"""The fault catalogue (issue 17): every case of catalogue.yaml, run in-process.

Each case starts from a folder of good inputs (a Gaussian card, a samples card with its
CSV, the default chpt-su2 region) and an output folder holding a complete previous
output set, changes or adds the files the case names, runs ``eftsieve`` through
:func:`eftsieve.cli.main.main` and asserts:

* the exit code the case records, and no traceback;
* an error case prints one line that holds the case's message fragment and names the
  file or option at fault;
* no input changed (SHA-256 of every file in the case folder outside the output);
* the output folder holds the complete previous set, unchanged (or, for a case that
  succeeds, a new complete set whose manifest checks out); no staging, old-set or lock
  files are left beside it.
"""

from __future__ import annotations

import copy
import hashlib
import importlib
import json
import os
import shutil
import signal
from pathlib import Path
from typing import Any

import pytest
import yaml

from tests.faults.builders import (
    BUILDERS,
    GOOD_CARD,
    GOOD_INTERVAL_CARD,
    GOOD_SAMPLES_CARD,
    card_text,
    good_samples,
    merge,
    write_csv,
    write_record,
)

HERE = Path(__file__).parent
CASES: list[dict[str, Any]] = yaml.safe_load((HERE / "catalogue.yaml").read_text())["cases"]
CHECK_ARGS = ["--draws", "2000", "--no-plots", "--seed", "1"]
#: a case that hangs fails after this long (``--chunk-rows 0`` once hung for ever)
CASE_SECONDS = 60
IMPOSE_ARGS = ["--samples", "400", "--no-progress", "--no-plots"]
LIMITS_ARGS = ["--no-plots", "-q"]
#: the input and region of a ``verb: limits`` case unless it says otherwise
LIMITS_INPUT, LIMITS_REGION = "{d}/limits.csv", "{d}/higgs.json"


@pytest.fixture(scope="session")
def region_dict(su2_region) -> dict[str, Any]:
    return su2_region.to_dict()


@pytest.fixture(scope="session")
def higgs_region_text() -> str:
    """The default higgs-quartic region (the theory of the limits cases), as JSON."""
    from eftsieve.region.build import build_region

    return json.dumps(build_region("higgs-quartic", {}).to_dict())


def _is_limits(case: dict[str, Any]) -> bool:
    return case.get("verb") == "limits" or (case.get("argv") or [""])[0] == "limits"


def _write_base(d: Path, region: dict[str, Any], limits_region: str | None = None) -> None:
    (d / "card.yaml").write_text(card_text(GOOD_CARD, "card.yaml"))
    (d / "samples_card.yaml").write_text(card_text(GOOD_SAMPLES_CARD, "samples_card.yaml"))
    write_csv(d / "samples.csv", good_samples())
    (d / "region.json").write_text(json.dumps(region))
    if limits_region is not None:  # an interval card, a record and the higgs region
        (d / "limits.csv").write_text(GOOD_INTERVAL_CARD, encoding="utf-8")
        write_record(d, "rec")
        (d / "higgs.json").write_text(limits_region)


def _region_file(region: dict[str, Any], spec: dict[str, Any]) -> str:
    from eftsieve.region.model import content_hash

    body = copy.deepcopy({k: v for k, v in region.items() if k != "hash"})
    for k, v in spec.get("region", {}).items():
        if k.startswith("facet") and k[5:].isdigit():
            body["facets"][int(k[5:])].update(v)
        elif k == "all_facets":
            for f in body["facets"]:
                f.update(v)
        else:
            body = merge(body, {k: v})
    if spec.get("rehash", True):
        body["hash"] = content_hash(body)
    else:
        body["hash"] = region["hash"]
    return json.dumps(body)


def _make_file(d: Path, name: str, spec: Any, region: dict[str, Any]) -> None:
    (d / name).parent.mkdir(parents=True, exist_ok=True)
    if isinstance(spec, str):
        (d / name).write_text(spec, encoding="utf-8")
    elif "card" in spec:
        (d / name).write_text(card_text(merge(GOOD_CARD, spec["card"]), name))
    elif "samples_card" in spec:
        (d / name).write_text(card_text(merge(GOOD_SAMPLES_CARD, spec["samples_card"]), name))
    elif "builder" in spec:
        BUILDERS[spec["builder"]](d, name)
    elif "region" in spec:
        (d / name).write_text(_region_file(region, spec))
    elif "bytes" in spec:
        (d / name).write_bytes(bytes.fromhex(spec["bytes"]))
    else:
        raise ValueError(f"unknown file spec {spec!r}")


def _digest(root: Path, skip: Path) -> dict[str, str]:
    out = {}
    for p in sorted(root.rglob("*")):
        if p.is_file() and skip not in p.parents:
            out[p.relative_to(root).as_posix()] = hashlib.sha256(p.read_bytes()).hexdigest()
    return out


@pytest.fixture(scope="session")
def previous_sets(tmp_path_factory, region_dict, higgs_region_text) -> dict[str, Path]:
    """A complete check, impose and limits output set of the good inputs."""
    from eftsieve.cli.main import main

    d = tmp_path_factory.mktemp("previous")
    _write_base(d, region_dict, higgs_region_text)
    sets = {"check": d / "prev_check", "impose": d / "prev_impose",
            "limits": d / "prev_limits"}
    assert main(["check", str(d / "card.yaml"), "--region", str(d / "region.json"), "-o",
                 str(sets["check"]), *CHECK_ARGS]) == 0
    assert main(["impose", str(d / "card.yaml"), "--region", str(d / "region.json"), "-o",
                 str(sets["impose"]), *IMPOSE_ARGS]) == 0
    assert main(["limits", str(d / "limits.csv"), "--region", str(d / "higgs.json"), "-o",
                 str(sets["limits"]), *LIMITS_ARGS]) == 0
    return sets


def _argv(case: dict[str, Any], d: Path, out: Path) -> list[str]:
    def sub(s: str) -> str:
        return s.replace("{d}", str(d)).replace("{out}", str(out))

    if "argv" in case:
        return [sub(a) for a in case["argv"]]
    verb = case.get("verb", "check")
    limits = verb == "limits"
    fit = sub(case.get("fit", LIMITS_INPUT if limits else "{d}/card.yaml"))
    region = [] if case.get("no_region") else [
        "--region", sub(case.get("region", LIMITS_REGION if limits else "{d}/region.json"))]
    base = {"check": CHECK_ARGS, "impose": IMPOSE_ARGS, "limits": LIMITS_ARGS}[verb]
    return [verb, fit, *region, "-o", str(out), *base, *[sub(a) for a in case.get("args", [])]]


def _names(case: dict[str, Any]) -> str:
    if "names" in case:
        return case["names"]
    if case.get("files"):
        return next(iter(case["files"]))
    opts = [a for a in case.get("args", []) if a.startswith("--")]
    return opts[0] if opts else "card.yaml"


def _unreadable(monkeypatch: Any, target: Path) -> None:
    """Opening ``target`` for reading fails with EACCES (what chmod 0 does to a user who
    is not root; the tests may run as root, who reads every file)."""
    import builtins
    import errno

    real_open = builtins.open

    def guarded(file: Any, *args: Any, **kw: Any) -> Any:
        if isinstance(file, (str, Path)) and Path(file).resolve() == target.resolve():
            raise PermissionError(errno.EACCES, "Permission denied", str(file))
        return real_open(file, *args, **kw)
    monkeypatch.setattr("eftsieve.io.textfile.open", guarded, raising=False)


def _read_only(monkeypatch: Any, folder: Path) -> None:
    """Creating anything in ``folder`` fails with EACCES (what a read-only folder does to
    a user who is not root; as root the folder's mode is not enough, so the refusal is
    injected into os.open and os.mkdir as well)."""
    import errno

    if os.geteuid() != 0:
        os.chmod(folder, 0o555)
    real_open, real_mkdir = os.open, os.mkdir
    ro = folder.resolve()

    def inside(path: Any) -> bool:
        return Path(os.path.abspath(path)).parent.resolve() == ro

    def open_(path: Any, flags: int, *args: Any, **kw: Any) -> int:
        if flags & (os.O_CREAT | os.O_WRONLY | os.O_RDWR) and inside(path):
            raise PermissionError(errno.EACCES, "Permission denied", str(path))
        return real_open(path, flags, *args, **kw)

    def mkdir_(path: Any, *args: Any, **kw: Any) -> None:
        if inside(path):
            raise PermissionError(errno.EACCES, "Permission denied", str(path))
        real_mkdir(path, *args, **kw)
    monkeypatch.setattr(os, "open", open_)
    monkeypatch.setattr(os, "mkdir", mkdir_)


@pytest.mark.parametrize("case", CASES, ids=[c["id"] for c in CASES])
def test_fault_case(case, tmp_path, region_dict, higgs_region_text, previous_sets, capsys,
                    monkeypatch):
    from eftsieve.cli.main import main
    from eftsieve.io.outset import verify_manifest

    if case.get("skip_root") and os.geteuid() == 0:
        pytest.skip("root reads every file")
    d = tmp_path / "case"
    d.mkdir()
    _write_base(d, region_dict, higgs_region_text if _is_limits(case) else None)
    for name, spec in (case.get("files") or {}).items():
        _make_file(d, name, spec, region_dict)
    for mod_attr, value in (case.get("limits") or {}).items():
        mod, attr = mod_attr.rsplit(".", 1)
        monkeypatch.setattr(importlib.import_module(mod), attr, value)
    if case.get("inject") == "enospc":  # a full disk while the output set is written
        import errno

        def full(path: Any, data: bytes) -> Path:
            raise OSError(errno.ENOSPC, "No space left on device", str(path))
        monkeypatch.setattr("eftsieve.io.atomic.atomic_write_bytes", full)
    if isinstance(case.get("inject"), dict) and "eacces" in case["inject"]:
        _unreadable(monkeypatch, d / case["inject"]["eacces"])
    if isinstance(case.get("inject"), dict) and "readonly" in case["inject"]:
        (d / case["inject"]["readonly"]).mkdir()
    out = Path(str(case.get("out", "{d}/out")).replace("{d}", str(d)))
    verb = case.get("verb", "check")
    prev = case.get("previous", verb if verb in ("impose", "limits") else "check")
    if prev != "none" and not out.exists():
        shutil.copytree(previous_sets[prev], out)
    before_out = _digest(out, tmp_path / "none") if out.is_dir() else None
    for p in case.get("chmod", []):
        os.chmod(d / p, 0)
    inputs = _digest(d, out)
    if isinstance(case.get("inject"), dict) and "readonly" in case["inject"]:
        _read_only(monkeypatch, d / case["inject"]["readonly"])
    capsys.readouterr()

    def too_long(signum: int, frame: Any) -> None:
        raise TimeoutError(f"case {case['id']} ran over {CASE_SECONDS} s")
    old = signal.signal(signal.SIGALRM, too_long)
    signal.alarm(CASE_SECONDS)
    try:
        code = main(_argv(case, d, out))
    except SystemExit as err:  # argparse refuses an option value
        code = err.code
    finally:
        signal.alarm(0)
        signal.signal(signal.SIGALRM, old)
    err_text = capsys.readouterr().err
    for p in case.get("chmod", []):
        os.chmod(d / p, 0o644)
    if isinstance(case.get("inject"), dict) and "readonly" in case["inject"]:
        monkeypatch.undo()
        os.chmod(d / case["inject"]["readonly"], 0o755)
    assert code == case["exit"], err_text
    assert "Traceback" not in err_text
    if case["exit"] != 0:
        lines = [ln for ln in err_text.splitlines() if "error" in ln]
        assert len(lines) == 1, err_text
        assert case["message"].lower() in lines[0].lower(), lines[0]
        assert _names(case) in lines[0], lines[0]
    assert _digest(d, out) == inputs, "an input changed"
    if case["exit"] == 0 and out.is_dir() and not case.get("out_not_a_set"):
        assert verify_manifest(out) == []
    elif before_out is not None and out.is_dir():
        assert _digest(out, tmp_path / "none") == before_out, "the previous set changed"
    elif before_out is None and not case.get("out_not_a_set"):
        assert not out.exists() or not any(out.iterdir()), "a failed run left outputs"
    leftovers = [p.name for p in out.parent.iterdir() if p.name.startswith(f".{out.name}.")]
    assert not leftovers, leftovers
