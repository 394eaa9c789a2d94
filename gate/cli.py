"""The ``rankgate`` command line: parse options, call the library, render, map errors to exit codes.

Exit codes: 0 every check passed; 1 at least one check failed (or an alarm fired); 2 cannot
evaluate (a user mistake, printed as one ``error: ...`` line); 3 an unexpected exception (a bug,
printed with its traceback so it can never be read as a verdict).

Only this module writes to the terminal. Heavy modules are imported inside the commands.
"""

from __future__ import annotations

import functools
import sys
import traceback
from collections.abc import Callable
from typing import Any, TypeVar

import typer

from gate.errors import GateError

EXIT_PASS = 0
EXIT_FAIL = 1
EXIT_ERROR = 2
EXIT_BUG = 3

app = typer.Typer(
    name="rankgate",
    help="Release gate for retrained binary scoring classifiers.",
    add_completion=False,
    no_args_is_help=True,
    pretty_exceptions_enable=False,
)

F = TypeVar("F", bound=Callable[..., Any])


def guarded(fn: F) -> F:
    """Map GateError to ``error: ...`` + exit 2 and any other exception to a traceback + exit 3."""

    @functools.wraps(fn)
    def wrapper(*args: Any, **kwargs: Any) -> Any:
        try:
            return fn(*args, **kwargs)
        except typer.Exit:
            raise
        except GateError as exc:
            message = " ".join(str(exc).split())  # one line, whatever the cause contained
            typer.echo(f"error: {message}", err=True)
            raise typer.Exit(EXIT_ERROR) from None
        except KeyboardInterrupt:
            typer.echo("error: interrupted", err=True)
            raise typer.Exit(EXIT_ERROR) from None
        except Exception:  # a bug: never a verdict
            typer.echo("internal error (a bug in rankgate, please report it):", err=True)
            typer.echo(traceback.format_exc(), err=True)
            raise typer.Exit(EXIT_BUG) from None

    return wrapper  # type: ignore[return-value]


def _version_callback(value: bool) -> None:
    if value:
        from gate import __version__

        typer.echo(f"rankgate {__version__}")
        raise typer.Exit(0)


@app.callback()
def _root(
    version: bool = typer.Option(
        False, "--version", help="Print the version and exit.", callback=_version_callback, is_eager=True
    ),
) -> None:
    """Release gate for retrained binary scoring classifiers."""


# --- commands are registered below this line -------------------------------------------------


def main() -> None:
    """Console-script entry point."""
    try:
        app(standalone_mode=True)
    except SystemExit as exc:
        code = exc.code if isinstance(exc.code, int) else (0 if exc.code is None else EXIT_ERROR)
        sys.exit(code)
