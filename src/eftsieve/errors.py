"""Errors and warnings raised by eftsieve.

Every error derives from :class:`EftsieveError`, so ``except EftsieveError`` catches
everything of ours.  Each subclass carries the data a user needs to fix the problem
(the file, the field and a hint) and renders it as one line, which the command line
prints without a traceback.
"""

from __future__ import annotations

from pathlib import Path


class EftsieveError(Exception):
    """Base class of every error raised by eftsieve."""

    exit_code: int = 1

    def one_line(self) -> str:
        """The error as a single line for the command line."""
        return " ".join(str(self).split())


class InputError(EftsieveError):
    """A user input (fit card, samples file, option) is invalid.

    Parameters
    ----------
    path
        The file that holds the bad input, or ``None`` for a command-line option.
    field
        The field inside the file, in dotted form (``parameters[1].name``).
    problem
        What is wrong.
    hint
        How to fix it.
    """

    exit_code = 2

    def __init__(
        self, path: str | Path | None, field: str | None, problem: str, hint: str = ""
    ) -> None:
        self.path = None if path is None else str(path)
        self.field = field
        self.problem = problem
        self.hint = hint
        where = self.path or "<command line>"
        if field:
            where = f"{where}: {field}"
        msg = f"{where}: {problem}"
        if hint:
            msg += f" (fix: {hint})"
        super().__init__(msg)


class RegionFileError(EftsieveError):
    """A region file is corrupt, edited by hand, or made with other settings."""

    exit_code = 3

    def __init__(
        self, path: str | Path | None, problem: str, expected_hash: str = "", found_hash: str = ""
    ) -> None:
        self.path = None if path is None else str(path)
        self.expected_hash = expected_hash
        self.found_hash = found_hash
        msg = f"{self.path or '<region>'}: {problem}"
        if expected_hash or found_hash:
            msg += f" (stored hash {found_hash[:12]}, recomputed {expected_hash[:12]})"
        super().__init__(msg)


class SolverError(EftsieveError):
    """A numerical solve failed or ended inaccurate; its result is never used as a bound."""

    exit_code = 4

    def __init__(self, status: str, problem: str) -> None:
        self.status = status
        self.problem = problem
        super().__init__(f"solver ended with status '{status}' in {problem}; no bound reported")


class SamplingError(EftsieveError):
    """A sampler cannot deliver a trustworthy posterior (too few effective samples, ...)."""

    exit_code = 5

    def __init__(self, problem: str, hint: str = "") -> None:
        self.problem = problem
        self.hint = hint
        super().__init__(problem + (f" (fix: {hint})" if hint else ""))

class TaskFailedError(EftsieveError):
    """A partition or a distributed task failed, or rows went missing; nothing is written.

    Parameters
    ----------
    task
        Which task: ``partition 2 of 5 (part-0002.parquet, rows 40000..59999)``.
    problem
        What happened.
    hint
        What to do.
    """

    exit_code = 7

    def __init__(self, task: str, problem: str, hint: str = "") -> None:
        self.task = task
        self.problem = problem
        self.hint = hint
        super().__init__(f"{task}: {problem}" + (f" (fix: {hint})" if hint else ""))


class OutputError(EftsieveError):
    """An output folder or file cannot be written: in use by another run, a full disk,
    no permission.  The previous output set (if any) is left as it was."""

    exit_code = 2

    def __init__(self, path: str | Path | None, problem: str, hint: str = "") -> None:
        self.path = None if path is None else str(path)
        self.problem = problem
        self.hint = hint
        super().__init__(f"{self.path or '<output>'}: {problem}"
                         + (f" (fix: {hint})" if hint else ""))


class EftsieveWarning(UserWarning):
    """Base class of every warning issued by eftsieve."""


class InputNotice(EftsieveWarning):
    """A default or an inference applied to the user's input (a kinematic default, a
    theory read from column names, a weight or bookkeeping column recognised).  The
    command line prints it as a one-line notice, so that no default is silent."""


class KinematicsWarning(EftsieveWarning):
    """A kinematic input lies where the EFT expansion is not trustworthy."""


class ConvergenceWarning(EftsieveWarning):
    """A chain or estimator has not demonstrably converged."""


class PolytopeInputError(EftsieveError, ValueError):
    """Invalid mean, covariance or constraints for the truncated normal."""

    exit_code = 2


class EmptyPolytopeError(PolytopeInputError):
    """The polyhedron ``{x : A x >= b}`` is empty."""


class DegeneratePolytopeError(PolytopeInputError):
    """The polyhedron is not empty but has no interior (numerically zero volume)."""
