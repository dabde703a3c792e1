"""The typer application and the one place where errors become ``Error: ...`` lines.

Only the ``selector.cli`` package imports typer. Each command module registers its commands on
``app`` (or a sub-typer added to it) and stays thin: parse options, call one library function,
format the result with the helpers below.
"""

from __future__ import annotations

import json
import math
import os
import sys
from typing import Annotated, Any

import typer
import typer.core

from ..errors import EXIT_BAD_INPUT, DropperError

#: exit code for a bug in dropper itself (outside the 0 / 1 / 2 contract, so scripts notice);
#: 4 (catalogue busy) is ``selector.errors.EXIT_BUSY``
EXIT_INTERNAL = 3

__all__ = [
    "CreateOpt",
    "app",
    "catalogue_url",
    "echo_cautions",
    "fail",
    "print_json",
    "printable",
    "to_jsonable",
    "warn_skipped_parts",
]


class _Group(typer.core.TyperGroup):
    """Command group that maps every error to one ``Error: ...`` line and the contract's exit
    code (0 success, 1 findings or infeasible, 2 bad input); no traceback reaches the user."""

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True, **extra):
        try:
            rv = super().main(
                args=args,
                prog_name=prog_name,
                complete_var=complete_var,
                standalone_mode=False,
                **extra,
            )
        except DropperError as exc:
            _error(str(exc), exc.exit_code)
        except typer.Exit as exc:
            sys.exit(exc.exit_code)
        except typer.Abort:
            _error("aborted", EXIT_BAD_INPUT)
        except (OSError, UnicodeError) as exc:
            _error(str(exc), EXIT_BAD_INPUT)
        except Exception as exc:
            # typer/click usage errors (typer may vendor click, so match by shape, not by class)
            if hasattr(exc, "format_message") and hasattr(exc, "exit_code"):
                if type(exc).__name__ == "NoArgsIsHelpError":
                    typer.echo(exc.format_message())
                    sys.exit(0)
                _error(exc.format_message(), EXIT_BAD_INPUT)
            if os.environ.get("DROPPER_DEBUG"):
                raise
            # a bug of ours: still one line, but with its own code so CI can tell it apart
            _error(
                f"internal error ({type(exc).__name__}: {exc}); please report it, and set "
                "DROPPER_DEBUG=1 to see the traceback",
                EXIT_INTERNAL,
            )
        sys.exit(rv if isinstance(rv, int) else 0)


def _error(message: str, code: int) -> None:
    # the last guard for secrets: a password in any URL or password=... pair is shown as ***
    # (URLs that dropper prints itself are masked where they are made, catalogue.paths.mask_url)
    from ..catalogue.paths import mask_secrets

    typer.echo(printable(mask_secrets(f"Error: {message}".replace("\n", " "))), err=True)
    sys.exit(code)


_EXIT_CODES = (
    "Exit codes: 0 ok, 1 findings or no feasible design, 2 bad input (or a write to a read-only "
    "catalogue), 3 a bug in dropper, 4 catalogue busy (locked by another process for longer "
    "than $DROPPER_BUSY_TIMEOUT seconds, default 60; nothing written)."
)

app = typer.Typer(
    cls=_Group,
    name="dropper",
    help="Select, check and audit parts for capacitive-dropper (transformerless) mains supplies.",
    epilog=_EXIT_CODES,
    add_completion=False,
    no_args_is_help=True,
    pretty_exceptions_enable=False,
    rich_markup_mode=None,
)


@app.callback()
def _root() -> None:
    """Select, check and audit parts for capacitive-dropper (transformerless) mains supplies."""


def to_jsonable(obj: Any) -> Any:
    """Plain JSON types from dataclasses, numpy scalars/arrays, tuples; NaN/inf become null."""
    import dataclasses

    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        return {k: to_jsonable(v) for k, v in dataclasses.asdict(obj).items()}
    if isinstance(obj, dict):
        return {str(k): to_jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [to_jsonable(v) for v in obj]
    if hasattr(obj, "tolist"):  # numpy array or scalar
        return to_jsonable(obj.tolist())
    if isinstance(obj, float) and not math.isfinite(obj):
        return None
    return obj


def print_json(obj: Any) -> None:
    """Print one JSON document on stdout."""
    typer.echo(json.dumps(to_jsonable(obj), indent=2, ensure_ascii=False))


def echo_cautions() -> None:
    """Print the safety cautions block (for outputs that propose or accept a design)."""
    from ..cautions import cautions_block

    typer.echo("")
    typer.echo(cautions_block())


def printable(text: object) -> str:
    """``text`` safe for a terminal: control characters (ESC, BEL, CR, ...) shown escaped as
    ``\x1b`` (:func:`selector.catalogue.row_ranges.escape_controls`), so that text from a file
    cannot retitle or rewrite the user's screen."""
    from ..catalogue.row_ranges import escape_controls

    return escape_controls(text)


def warn_skipped_parts(frame: Any) -> None:
    """One stderr line per catalogue row left out for a number out of range (at most five,
    then a count), so that the user knows which stored rows to fix or remove."""
    skipped = frame.attrs.get("skipped_parts") or []
    for text in skipped[:5]:
        typer.echo(
            f"Warning: catalogue row skipped, number out of range: {printable(text)}", err=True
        )
    if len(skipped) > 5:
        typer.echo(f"Warning: {len(skipped) - 5} more catalogue rows skipped", err=True)


CreateOpt = Annotated[
    bool,
    typer.Option(
        "--create",
        help="Make a new catalogue when the --db file does not exist (without it a missing "
        "file is refused, so that a mistyped path cannot hide your catalogue).",
    ),
]


def catalogue_url(db: str | None, create: bool = False) -> str:
    """The catalogue URL of a command's ``--db`` option (:func:`resolve_url`).

    A ``--db`` SQLite file that does not exist is refused (exit 2, naming the path and the
    nearest existing file) unless ``create``: only ``parts build`` and ``--create`` make a new
    catalogue. Without ``--db`` (``$DROPPER_DB`` or the per-user file) the first use builds the
    catalogue as before.
    """
    from ..catalogue.paths import missing_file, nearest_file, resolve_url

    url = resolve_url(db)
    if db is None or not db.strip() or create:
        return url
    path = missing_file(url)
    if path is None:
        return url
    if not path.parent.is_dir():
        hint = f" (the folder {path.parent} does not exist)"
    else:
        near = nearest_file(path)
        hint = f" (nearest existing file: {near})" if near is not None else ""
    raise DropperError(
        f"--db {db}: no catalogue file {path}{hint}. A new catalogue is made only by "
        "'dropper parts build --db PATH' or with --create."
    )


def fail(message: str, code: int = EXIT_BAD_INPUT) -> None:
    """Raise a DropperError with a given exit code from inside a command."""
    err = DropperError(message)
    err.exit_code = code
    raise err
