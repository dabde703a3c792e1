"""The one exception hierarchy of dropper.

The library raises these; the CLI turns each into a single ``Error: ...`` line on stderr and
the exit code the class carries (see ``selector.cli``). Nothing else in the package prints.

Exit codes (the contract, DOMAIN.md section 9): 0 success, 1 findings or infeasible, 2 bad input;
beyond it, 3 a bug in dropper (``selector.cli._app``) and 4 catalogue busy: another process held
the catalogue's write lock for longer than the busy timeout (:class:`CatalogueBusyError`).
"""

from __future__ import annotations

__all__ = [
    "EXIT_BAD_INPUT",
    "EXIT_BUSY",
    "EXIT_FINDINGS",
    "EXIT_OK",
    "BadRowError",
    "BadValueError",
    "CatalogueBusyError",
    "CatalogueError",
    "DropperError",
    "InfeasibleError",
    "OutOfRangeError",
    "OutputWriteError",
    "ReadOnlyCatalogueError",
]

EXIT_OK = 0
EXIT_FINDINGS = 1
EXIT_BAD_INPUT = 2
EXIT_BUSY = 4


class DropperError(Exception):
    """Base of every error dropper raises on purpose. Default: bad input (exit 2)."""

    exit_code: int = EXIT_BAD_INPUT


class BadValueError(DropperError, ValueError):
    """A value the user typed (or a data file holds) cannot be read.

    The message quotes the text and shows a valid example.
    """


class BadRowError(DropperError):
    """A row of an input file is wrong; names the file, the row and the column."""

    def __init__(self, file: str, row: int | None, column: str | None, problem: str) -> None:
        self.file = file
        self.row = row
        self.column = column
        self.problem = problem
        where = str(file)
        if row is not None:
            where += f", row {row}"
        if column is not None:
            where += f", column '{column}'"
        super().__init__(f"{where}: {problem}")


class CatalogueError(DropperError):
    """The catalogue database is missing, outdated or cannot be opened."""


class CatalogueBusyError(CatalogueError):
    """Another process kept the catalogue locked for longer than the busy timeout (exit 4).

    Nothing was written; running the command again later is safe."""

    exit_code = EXIT_BUSY


class ReadOnlyCatalogueError(CatalogueError):
    """A command must write to a catalogue whose file or folder is read-only (exit 2)."""


class OutOfRangeError(DropperError, ValueError):
    """A model was asked outside the range where it holds; it does not extrapolate."""


class OutputWriteError(DropperError, OSError):
    """An output file could not be put in place (exit 2); names the file. Also an OSError, so
    callers that treat a failed write as an OS error (the caches) keep doing so."""

    def __init__(self, message: str, errno: int | None = None) -> None:
        super().__init__(message)
        self.errno = errno


class InfeasibleError(DropperError):
    """No selection satisfies every rule.

    ``rule`` names the blocking rule, ``relaxation`` the smallest change that would help.
    """

    exit_code = EXIT_FINDINGS

    def __init__(self, message: str, rule: str | None = None, relaxation: str | None = None):
        self.rule = rule
        self.relaxation = relaxation
        super().__init__(message)
