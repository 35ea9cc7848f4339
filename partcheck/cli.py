"""The ``partcheck`` command line.

This is the only module that imports typer.  Each command parses its arguments, makes one
library call, renders the result and returns an exit code.  A :class:`PartcheckError` becomes a
one-line message on standard error and exit code 2 in exactly one place
(:class:`_PartcheckGroup.invoke`); nothing the user typed produces a traceback.

Exit codes: 0 success (or a passing check), 1 a failing check / unmatched BOM lines / other
failure, 2 bad input.
"""

from __future__ import annotations

import sys
from typing import Annotated, Optional

import click
import typer
from rich.console import Console
from typer.core import TyperGroup

from . import __version__
from .errors import PartcheckError

out = Console(highlight=False, soft_wrap=True)
err = Console(stderr=True, highlight=False, soft_wrap=True)


class _PartcheckGroup(TyperGroup):
    """Turns the project's own errors into a message and exit code 2, for every subcommand."""

    def invoke(self, ctx: click.Context):
        try:
            return super().invoke(ctx)
        except PartcheckError as exc:
            err.print(f"[bold red]error:[/] {exc}", markup=True, highlight=False)
            raise typer.Exit(exc.exit_code) from None


app = typer.Typer(
    cls=_PartcheckGroup,
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
    help="Check a flyback converter's bill of materials against a derating policy.",
)


def _version(value: bool) -> None:
    if value:
        out.print(f"partcheck {__version__}")
        raise typer.Exit()


@app.callback()
def _root(
    version: Annotated[
        Optional[bool], typer.Option("--version", callback=_version, is_eager=True, help="Print the version and exit.")
    ] = None,
) -> None:
    """partcheck: every part of a flyback converter's BOM against its worst corner and your derating policy."""


# ---- catalog commands (partcheck catalog ...) -------------------------------------------------

# ---- BOM matching (partcheck match) -----------------------------------------------------------

# ---- stress engine (partcheck stress) ---------------------------------------------------------

# ---- policy (partcheck policy ...) ------------------------------------------------------------

# ---- check, report and demo -------------------------------------------------------------------


def main() -> None:
    """Console-script entry point."""
    app(prog_name="partcheck")


if __name__ == "__main__":  # pragma: no cover
    main()
