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

policy_app = typer.Typer(no_args_is_help=True, help="Derating policies: shipped presets and your own rules files.")
app.add_typer(policy_app, name="policy")


@policy_app.command("list")
def policy_list() -> None:
    """List the shipped policy presets with their rule counts and descriptions."""
    from rich.table import Table

    from .rules.policy import DEFAULT_POLICY, list_presets, load_preset

    table = Table("preset", "rules", "description", title="shipped policy presets")
    for name in list_presets():
        preset = load_preset(name)
        label = f"{name} (default)" if name == DEFAULT_POLICY else name
        table.add_row(label, str(len(preset.rules)), preset.description)
    out.print(table)


@policy_app.command("show")
def policy_show(
    spec: Annotated[
        Optional[str], typer.Argument(metavar="[NAME|FILE]", help="A preset name or a policy file (default: industrial).")
    ] = None,
    fmt: Annotated[str, typer.Option("--format", help="table or json.")] = "table",
) -> None:
    """Print the effective rules of a policy (after extends) with their sources."""
    import json

    from rich.table import Table

    from .errors import InputError
    from .rules.policy import effective_rules_table, load_policy

    if fmt not in ("table", "json"):
        raise InputError(f"--format {fmt!r}: expected table or json")
    policy = load_policy(spec)
    if fmt == "json":
        out.print_json(json.dumps(policy.to_dict(), ensure_ascii=False))
        return
    chain = " → ".join(policy.chain)
    table = Table(title=f"policy {policy.name}: {len(policy.rules)} rules ({chain})")
    for header in ("id", "applies to", "parameter"):
        table.add_column(header, no_wrap=True)
    table.add_column("limit", ratio=2)
    table.add_column("warn", no_wrap=True)
    table.add_column("source", ratio=3)
    table.add_column("confidence", no_wrap=True)
    for row in effective_rules_table(policy):
        table.add_row(row["id"], row["applies_to"], row["parameter"], row["limit"], row["warn"], row["source"],
                      row["confidence"])
    out.print(table)
    unassessed = "fail" if policy.fail_unassessed else "do not fail"
    unmatched = "fail" if policy.fail_unmatched else "do not fail"
    out.print(f"parts that cannot be assessed {unassessed} the design; unmatched BOM lines {unmatched} it.")


@policy_app.command("validate")
def policy_validate(
    file: Annotated[str, typer.Argument(metavar="FILE", help="The policy file to check.")],
) -> None:
    """Check a policy file (and what it extends); print the rule count or the first error."""
    from .rules.policy import load_policy_file

    policy = load_policy_file(file)
    out.print(f"valid: {len(policy.rules)} rules (policy {policy.name})")


# ---- check, report and demo -------------------------------------------------------------------


def main() -> None:
    """Console-script entry point."""
    app(prog_name="partcheck")


if __name__ == "__main__":  # pragma: no cover
    main()
