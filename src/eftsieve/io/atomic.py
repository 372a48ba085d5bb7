"""Atomic output writing: a file appears complete or not at all, never half-written.

Outputs are written to a temporary file in the target directory and renamed into
place.  :func:`guard_inputs` refuses to write over any input file.
"""

from __future__ import annotations

import json
import os
import tempfile
from collections.abc import Iterable
from pathlib import Path
from typing import Any

from eftsieve.errors import InputError


def umask_mode() -> int:
    """The mode a plain open() would give a new file (0o666 minus the umask)."""
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


def atomic_write_bytes(path: str | Path, data: bytes) -> Path:
    """Write bytes to ``path`` atomically (temporary file + rename)."""
    def write(tmp: Path) -> None:
        with open(tmp, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())
    return atomic_write_with(path, write)


def atomic_write_text(path: str | Path, text: str) -> Path:
    """Write text (UTF-8) atomically."""
    return atomic_write_bytes(path, text.encode("utf-8"))


def atomic_write_json(path: str | Path, obj: Any) -> Path:
    """Write JSON atomically, with sorted keys and a trailing newline."""
    return atomic_write_text(path, json.dumps(obj, indent=2, sort_keys=True, default=_jsonable)
                             + "\n")


def atomic_write_with(path: str | Path, writer) -> Path:
    """Call ``writer(tmp_path)`` to produce a file, then move it into place atomically."""
    p = Path(path)
    p.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{p.name}.", suffix=p.suffix, dir=p.parent)
    os.close(fd)
    try:
        writer(Path(tmp))
        os.chmod(tmp, umask_mode())
        os.replace(tmp, p)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
    return p


def guard_inputs(outputs: Iterable[str | Path], inputs: Iterable[str | Path | None]) -> None:
    """Refuse to write an output over an input file."""
    ins = {Path(i).resolve() for i in inputs if i is not None}
    for out in outputs:
        if Path(out).resolve() in ins:
            raise InputError(out, None, "output would overwrite an input file",
                             "choose another output directory with -o")


def _jsonable(obj: Any) -> Any:
    import numpy as np

    if isinstance(obj, np.ndarray):
        return obj.tolist()
    if isinstance(obj, (np.floating, np.integer)):
        return obj.item()
    if isinstance(obj, np.bool_):
        return bool(obj)
    if isinstance(obj, Path):
        return str(obj)
    raise TypeError(f"not JSON serialisable: {type(obj).__name__}")
