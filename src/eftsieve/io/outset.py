"""Atomic output sets: an output folder holds one complete run, the previous one, or nothing.

Use :func:`output_set` around all the work of a run that writes a folder::

    with output_set("fit_check", inputs=[card, samples]) as stage:
        ...write every file of the run into ``stage``...

What it does, in order:

1. refuses an output path that is a file, that is an input, that contains an input or
   that lies inside an input folder (:func:`refuse_inputs`), and an existing folder that
   holds files that are not an eftsieve output set;
2. takes a lock beside the target (``.<name>.lock``); a second run into the same folder
   fails at once with :class:`~eftsieve.errors.OutputError`;
3. yields a fresh staging folder beside the target (``.<name>.staging.*``, same file
   system), into which the caller writes the whole set;
4. when the block ends normally, writes ``manifest.json`` (every file of the set with its
   size and SHA-256) and swaps the staging folder into place (an atomic exchange where
   the kernel offers one, else two renames); the previous set is then removed;
5. when the block raises (an error, Ctrl-C, SIGTERM, a full disk), removes the staging
   folder and leaves the target untouched.  The lock file is removed on every path.

:func:`output_files` does the same for verbs whose output is one or two named files
(``region -o FILE [--plot PNG]``, ``cite -o FILE``): the same refusals and lock, a
staging file beside each target, all renamed into place only when the run succeeds.
"""

from __future__ import annotations

import ctypes
import errno
import hashlib
import json
import os
import shutil
import tempfile
import time
from collections.abc import Iterable, Iterator
from contextlib import contextmanager
from pathlib import Path

from eftsieve.errors import InputError, OutputError

#: the manifest written into every output set
MANIFEST_NAME = "manifest.json"
#: the format tag of the manifest
MANIFEST_FORMAT = "eftsieve-output-set"
#: errno values that mean "the disk is full"
_FULL = {errno.ENOSPC, getattr(errno, "EDQUOT", errno.ENOSPC), errno.EFBIG}
_RENAME_EXCHANGE = 2  # renameat2 flag (Linux >= 3.15)
_AT_FDCWD = -100


def _resolved(p: str | Path) -> Path:
    return Path(os.path.abspath(Path(p).expanduser())).resolve()


def refuse_inputs(target: str | Path, inputs: Iterable[str | Path | None],
                  kind: str = "folder", option: str = "-o") -> None:
    """Refuse an output folder (or file) that is, contains, or lies inside an input."""
    t = _resolved(target)
    for raw in inputs:
        if raw is None:
            continue
        i = _resolved(raw)
        if i == t or t in i.parents or i in t.parents:
            rel = ("is" if i == t else "contains" if t in i.parents else "lies inside")
            raise InputError(target, option, f"the output {kind} {rel} the input {raw}; "
                             "writing there could change or delete an input",
                             f"choose an output {kind} outside every input")


def _check_target(target: Path, known: Iterable[str] | None) -> None:
    if target.exists() and not target.is_dir():
        raise InputError(target, "-o", "the output path names an existing file, not a folder",
                         "give a folder name with -o (it is created)")
    if not target.is_dir() or (target / MANIFEST_NAME).is_file():
        return
    names = {p.name for p in target.iterdir()}
    allowed = set(known or ())
    strange = sorted(names - allowed)
    if strange:
        raise InputError(target, "-o", f"the output folder holds files that are not an "
                         f"eftsieve output set (e.g. {strange[0]!r}); the run replaces the "
                         "whole folder", "choose a new or empty output folder")


@contextmanager
def _lock(target: Path) -> Iterator[None]:
    """An exclusive lock ``.<name>.lock`` beside ``target``; fails at once when held."""
    import fcntl

    path = target.parent / f".{target.name}.lock"
    while True:
        try:
            fd = os.open(path, os.O_RDWR | os.O_CREAT, 0o644)
        except OSError as err:
            raise OutputError(target, f"cannot create the lock file {path}: "
                              f"{err.strerror}", "check that the folder is writable") from err
        try:
            fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
        except BlockingIOError as err:
            os.close(fd)
            raise OutputError(target, "another eftsieve run is writing this output folder "
                              f"(lock {path})", "wait for it to end, or choose another "
                              "folder with -o") from err
        try:  # the holder before us may have removed the file: lock the live one
            same = os.fstat(fd).st_ino == os.stat(path).st_ino
        except FileNotFoundError:
            same = False
        if same:
            break
        os.close(fd)
    try:
        os.write(fd, f"{os.getpid()}\n".encode())
        yield
    finally:
        Path(path).unlink(missing_ok=True)
        os.close(fd)


def _umask() -> int:
    mask = os.umask(0)
    os.umask(mask)
    return mask


def _sha256(path: Path) -> str:
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def write_manifest(stage: Path) -> Path:
    """``manifest.json``: every file of the set (relative path, bytes, SHA-256)."""
    from eftsieve._version import __version__

    files = {}
    for p in sorted(q for q in stage.rglob("*") if q.is_file()):
        rel = p.relative_to(stage).as_posix()
        if rel != MANIFEST_NAME:
            files[rel] = {"bytes": p.stat().st_size, "sha256": _sha256(p)}
    doc = {"format": MANIFEST_FORMAT, "version": 1, "eftsieve_version": __version__,
           "created_utc": time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime()), "files": files}
    path = stage / MANIFEST_NAME
    with open(path, "w", encoding="utf-8") as fh:
        fh.write(json.dumps(doc, indent=2, sort_keys=True) + "\n")
        fh.flush()
        os.fsync(fh.fileno())
    return path


def verify_manifest(folder: str | Path) -> list[str]:
    """The problems of an output set against its manifest (empty: complete and intact)."""
    folder = Path(folder)
    try:
        doc = json.loads((folder / MANIFEST_NAME).read_text(encoding="utf-8"))
    except (OSError, ValueError) as err:
        return [f"manifest unreadable: {err}"]
    problems = []
    listed = set(doc.get("files", {}))
    present = {p.relative_to(folder).as_posix() for p in folder.rglob("*") if p.is_file()}
    present.discard(MANIFEST_NAME)
    problems += [f"missing {n}" for n in sorted(listed - present)]
    problems += [f"not in manifest: {n}" for n in sorted(present - listed)]
    for n in sorted(listed & present):
        if _sha256(folder / n) != doc["files"][n]["sha256"]:
            problems.append(f"checksum differs: {n}")
    return problems


def _exchange(a: Path, b: Path) -> bool:
    """Swap two paths atomically (Linux renameat2); False where unavailable."""
    try:
        libc = ctypes.CDLL(None, use_errno=True)
        fn = libc.renameat2
    except (OSError, AttributeError):
        return False
    fn.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p,
                   ctypes.c_uint]
    rc = fn(_AT_FDCWD, os.fsencode(a), _AT_FDCWD, os.fsencode(b), _RENAME_EXCHANGE)
    return rc == 0


def _swap_in(stage: Path, target: Path) -> None:
    """Put ``stage`` at ``target``; the previous set (if any) is removed afterwards."""
    if not target.exists():
        os.rename(stage, target)
        return
    if _exchange(stage, target):
        shutil.rmtree(stage, ignore_errors=True)  # now holds the previous set
        return
    old = Path(tempfile.mkdtemp(prefix=f".{target.name}.old.", dir=target.parent))
    os.rmdir(old)
    os.rename(target, old)
    try:
        os.rename(stage, target)
    except BaseException:
        os.rename(old, target)
        raise
    shutil.rmtree(old, ignore_errors=True)


def _clear_stale(target: Path) -> None:
    """Staging folders of a run that was killed (SIGKILL) while we now hold the lock."""
    for p in target.parent.glob(f".{target.name}.staging.*"):
        shutil.rmtree(p, ignore_errors=True)
    for p in target.parent.glob(f".{target.name}.old.*"):
        shutil.rmtree(p, ignore_errors=True)


@contextmanager
def output_set(target: str | Path, inputs: Iterable[str | Path | None] = (), *,
               known: Iterable[str] | None = None) -> Iterator[Path]:
    """Build a complete output set in a staging folder and swap it in at the end.

    Parameters
    ----------
    target
        The output folder (created; its parent too).
    inputs
        Every input file or folder of the run; the target may not be, contain or lie
        inside any of them.
    known
        Names an existing folder without a manifest may hold (an earlier version's
        output set); anything else there is refused rather than deleted.

    Yields
    ------
    pathlib.Path
        The staging folder to write the whole set into.

    Raises
    ------
    InputError
        The target is a file, an input, contains or lies inside an input, or holds files
        that are not an output set.
    OutputError
        Another run holds the folder, or the disk is full.
    """
    target = _resolved(target)
    refuse_inputs(target, inputs)
    _check_target(target, known)
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
    except OSError as err:
        raise OutputError(target, f"cannot create the parent folder: {err.strerror}",
                          "choose a writable output folder") from err
    previous = (target / MANIFEST_NAME).is_file()
    try:
        with _lock(target):
            _clear_stale(target)
            stage = Path(tempfile.mkdtemp(prefix=f".{target.name}.staging.",
                                          dir=target.parent))
            try:
                os.chmod(stage, 0o777 & ~_umask())
                yield stage
                write_manifest(stage)
                _swap_in(stage, target)
            except OSError as err:
                if err.errno in _FULL:
                    raise OutputError(target, "no space left on the device while writing "
                                      "the output set; the previous set (if any) is "
                                      "unchanged", "free some space or choose another "
                                      "folder") from err
                raise
            finally:
                if stage.exists():
                    shutil.rmtree(stage, ignore_errors=True)
    except BaseException as err:  # Ctrl-C, SIGTERM: say what the folder now holds
        if not isinstance(err, Exception):
            note_output_state(err, target, previous)
        raise


#: the attribute :func:`note_output_state` sets on an interruption (read by the CLI)
OUTPUT_STATE_ATTR = "eftsieve_output_state"


def note_output_state(err: BaseException, target: Path, previous: bool,
                      kind: str = "folder") -> None:
    """Record on an interruption what ``target`` holds now: the previous complete run
    (unchanged) or nothing of this run.  The command line prints it in its one line."""
    state = (f"the output {kind} {target} still holds the previous complete run"
             if previous else f"nothing was written to {target}")
    if not hasattr(err, OUTPUT_STATE_ATTR):  # the innermost set is the one that counts
        setattr(err, OUTPUT_STATE_ATTR, state)


def _check_file_target(target: Path, option: str) -> None:
    if target.is_dir():
        raise InputError(target, option, "is a folder, not a file name",
                         "give a file name, e.g. region.json")
    if target.exists() and not target.is_file():  # a device, a pipe: never replaced
        raise InputError(target, option, "is not a regular file; the run would replace it",
                         "give the name of a new or regular file")


@contextmanager
def output_files(targets: dict[str, str | Path], inputs: Iterable[str | Path | None] = ()
                 ) -> Iterator[dict[str, Path]]:
    """Write one run's output files atomically, under the output-set lock.

    Parameters
    ----------
    targets
        Option (``-o``, ``--plot``) -> the file it names.  Each target gets the lock
        ``.<name>.lock`` beside it (the lock of :func:`output_set`), so a second run
        writing the same file fails at once with :class:`~eftsieve.errors.OutputError`.
    inputs
        Input files of the run; no target may be one of them (or lie inside one).

    Yields
    ------
    dict[str, pathlib.Path]
        Option -> the staging file to write (beside the target, same suffix).  When the
        block ends normally, each staging file is renamed onto its target; when it
        raises, they are removed and the targets keep the previous run's files.

    Raises
    ------
    InputError
        A target is a folder, or is (or lies inside) an input.
    OutputError
        Another run holds a target, or the disk is full.
    """

    paths = {opt: _resolved(t) for opt, t in targets.items()}
    if len(set(paths.values())) < len(paths):
        raise InputError(next(iter(targets.values())), "/".join(paths), "the options name "
                         "the same file", "give each output its own file name")
    for opt, t in paths.items():
        _check_file_target(t, opt)
        refuse_inputs(t, inputs, kind="file", option=opt)
    previous = all(t.is_file() for t in paths.values())
    try:
        with _files_written(paths) as stages:
            yield stages
    except BaseException as err:  # Ctrl-C, SIGTERM: say what the files now hold
        if not isinstance(err, Exception):
            note_output_state(err, next(iter(paths.values())), previous, kind="file")
        raise


@contextmanager
def _files_written(paths: dict[str, Path]) -> Iterator[dict[str, Path]]:
    """The lock, staging files and final renames of :func:`output_files`."""
    from contextlib import ExitStack

    stages: dict[str, Path] = {}
    with ExitStack() as stack:
        for t in sorted(set(paths.values())):
            try:
                t.parent.mkdir(parents=True, exist_ok=True)
            except OSError as err:
                raise OutputError(t, f"cannot create the parent folder: {err.strerror}",
                                  "choose a writable place") from err
            stack.enter_context(_lock(t))
        try:
            for opt, t in paths.items():
                for old in t.parent.glob(f".{t.name}.staging.*"):  # a killed run's
                    old.unlink(missing_ok=True)
                fd, tmp = tempfile.mkstemp(prefix=f".{t.name}.staging.", suffix=t.suffix,
                                           dir=t.parent)
                os.close(fd)
                os.unlink(tmp)  # the writer creates it (some refuse an existing file)
                stages[opt] = Path(tmp)
            yield stages
            for opt, t in paths.items():
                if not stages[opt].is_file():
                    raise OutputError(t, "the run wrote no file here", "please report it")
            for opt, t in paths.items():
                os.chmod(stages[opt], 0o666 & ~_umask())
                os.replace(stages[opt], t)
        except OSError as err:
            if err.errno in _FULL:
                raise OutputError(next(iter(paths.values())), "no space left on the device "
                                  "while writing; the previous file (if any) is unchanged",
                                  "free some space or choose another place") from err
            raise
        finally:
            for st in stages.values():
                st.unlink(missing_ok=True)
