"""The ``eftsieve`` command line: assemble the verbs' parsers, run one, choose the exit code.

No physics and no statistics live here.  Every :class:`~eftsieve.errors.EftsieveError`
is printed as one line (what failed, where, how to fix it) with its exit code; a
traceback appears only with ``--debug``.  eftsieve's own warnings are printed as one
line each.

Exit codes: 0 success, 2 input error, 3 region-file error, 4 solver error, 5 sampling
refused, 6 ``check --fail-below`` threshold not met, 7 a task failed on the dask engine,
70 internal error, 130 interrupted (Ctrl-C), 141 output pipe closed, 143 terminated
(SIGTERM).
"""

from __future__ import annotations

import argparse
import logging
import signal
import sys
import threading
import warnings
from collections.abc import Iterator, Sequence
from contextlib import contextmanager
from typing import Any

from eftsieve._version import __version__
from eftsieve.cli import check, cite, demo, impose, limits, region, theories

EXIT_OK = 0
EXIT_USAGE = 2
EXIT_INTERNAL = 70
EXIT_INTERRUPTED = 130
EXIT_BROKEN_PIPE = 141
EXIT_TERMINATED = 143
#: the verbs, in the order ``eftsieve --help`` lists them; each module has add_parser(sub)
VERBS = (theories, region, check, impose, limits, cite, demo)


class Terminated(BaseException):
    """Raised in the main thread when the process receives SIGTERM.

    A BaseException, like KeyboardInterrupt, so that no ``except Exception`` in the
    library swallows it; ``finally`` blocks (temporary files) still run.
    """


def build_parser() -> argparse.ArgumentParser:
    """The parser of ``eftsieve`` with one sub-parser per verb."""
    parser = argparse.ArgumentParser(
        prog="eftsieve",
        description="Positivity bounds (causality, unitarity, crossing) on fitted EFT constants.")
    parser.add_argument("--version", action="version", version=f"eftsieve {__version__}")
    parser.add_argument("--debug", action="store_true", help="show tracebacks and debug logs")
    sub = parser.add_subparsers(dest="verb", metavar="VERB")
    for verb in VERBS:
        verb.add_parser(sub)
    return parser


def _one_line_warning(verb: str, fallback: Any) -> Any:
    """A showwarning that prints eftsieve's own warnings as one line, without source code."""
    from eftsieve.errors import EftsieveWarning, InputNotice

    def show(message: Any, category: type, filename: str, lineno: int, file: Any = None,
             line: str | None = None) -> None:
        if issubclass(category, InputNotice):
            print(f"eftsieve {verb}: notice: {message}", file=sys.stderr)
        elif issubclass(category, EftsieveWarning):
            print(f"eftsieve {verb}: warning: {message}", file=sys.stderr)
        else:
            fallback(message, category, filename, lineno, file, line)
    return show


@contextmanager
def _sigterm_raises() -> Iterator[None]:
    """Within the block, SIGTERM raises :class:`Terminated` (main thread only)."""
    if threading.current_thread() is not threading.main_thread():
        yield
        return

    def handler(signum: int, frame: Any) -> None:
        raise Terminated()

    previous = signal.signal(signal.SIGTERM, handler)
    try:
        yield
    finally:
        signal.signal(signal.SIGTERM, previous)


def _configure_logging(debug: bool) -> None:
    level = logging.DEBUG if debug else logging.WARNING
    logging.basicConfig(level=level, format="%(levelname)s %(name)s: %(message)s")
    for handler in logging.getLogger().handlers:  # libraries' INFO chatter stays quiet
        handler.setLevel(level)


def _environment_line(err: BaseException) -> str:
    """One line for an error of the machine rather than of eftsieve: a full disk, a file
    that cannot be read or written, too little memory or stack."""
    import errno

    if isinstance(err, RecursionError):
        return ("an input is nested too deeply to read (fix: check that the file is a fit "
                "card, samples or region file)")
    if isinstance(err, MemoryError):
        return ("out of memory (fix: use fewer --draws, a smaller --chunk-rows, or split the "
                "samples into Parquet parts)")
    if not isinstance(err, OSError):  # pragma: no cover - the three classes above
        return str(err)
    where = err.filename if getattr(err, "filename", None) else "a file"
    if err.errno in (errno.ENOSPC, getattr(errno, "EDQUOT", errno.ENOSPC)):
        return (f"{where}: no space left on the device (fix: free some space or choose "
                "another output folder; the previous output set is unchanged)")
    reason = err.strerror or type(err).__name__
    return f"{where}: {reason} (fix: check the path and its permissions)"


def _interrupted_line(verb: str, what: str, code: int, err: BaseException) -> str:
    """One line after Ctrl-C or SIGTERM: the verb, the signal, the exit code and what the
    output folder holds now (the previous complete run, or nothing of this run)."""
    from eftsieve.io.outset import OUTPUT_STATE_ATTR

    state = getattr(err, OUTPUT_STATE_ATTR, None)
    return f"eftsieve {verb}: {what}, exit {code}" + (f"; {state}" if state else "")


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``eftsieve`` command."""
    parser = build_parser()
    args = parser.parse_args(argv)
    _configure_logging(args.debug)
    if args.verb is None:
        parser.print_help()
        return EXIT_USAGE
    with _sigterm_raises():
        return _run(args)


def _run(args: argparse.Namespace) -> int:
    from eftsieve.errors import EftsieveError

    try:
        with warnings.catch_warnings():
            if not args.debug:
                warnings.showwarning = _one_line_warning(args.verb, warnings.showwarning)
            if getattr(args, "quiet", False) or getattr(args, "json", False):
                from eftsieve.errors import InputNotice

                warnings.simplefilter("ignore", InputNotice)
            return int(args.func(args))
    except EftsieveError as err:
        if args.debug:
            raise
        print(f"eftsieve {args.verb}: error: {err.one_line()}", file=sys.stderr)
        return err.exit_code
    except KeyboardInterrupt as err:
        print(_interrupted_line(args.verb, "interrupted (Ctrl-C)", EXIT_INTERRUPTED, err),
              file=sys.stderr)
        return EXIT_INTERRUPTED
    except Terminated as err:
        print(_interrupted_line(args.verb, "terminated (SIGTERM)", EXIT_TERMINATED, err),
              file=sys.stderr)
        return EXIT_TERMINATED
    except BrokenPipeError:  # the reader of our output went away (e.g. `| head`)
        import os

        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return EXIT_BROKEN_PIPE
    except (OSError, RecursionError, MemoryError) as err:  # the environment, not a bug
        if args.debug:
            raise
        print(f"eftsieve {args.verb}: error: {_environment_line(err)}", file=sys.stderr)
        return EXIT_USAGE
    except Exception as err:  # an internal error: say so, point to --debug
        if args.debug:
            raise
        print(f"eftsieve {args.verb}: internal error: {type(err).__name__}: {err} "
              "(rerun with --debug for the traceback, and please report it)", file=sys.stderr)
        return EXIT_INTERNAL


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
