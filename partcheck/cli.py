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

_MATCH_STYLES = {"matched": "green", "ambiguous": "yellow", "unmatched": "red", "conflict": "bold red",
                 "not_fitted": "dim"}


@app.command("match")
def match_command(
    bom: Annotated[str, typer.Argument(help="The BOM: CSV, TSV, semicolon text or XLSX.", show_default=False)],
    db: Annotated[Optional[str], typer.Option("--db", help="Catalog file or database URL (default: PARTCHECK_DB "
                                                           "or the per-user catalog).")] = None,
    format: Annotated[str, typer.Option("--format", help="table, json or csv.")] = "table",
    pin: Annotated[Optional[list[str]], typer.Option("--pin", help="REF=PART: use this catalog part for the "
                                                                   "reference (repeatable; always wins).")] = None,
    columns: Annotated[Optional[str], typer.Option("--columns", help="Header overrides, e.g. "
                                                                     "ref=Designator,value=Val.")] = None,
    sheet: Annotated[Optional[str], typer.Option("--sheet", help="XLSX sheet to read (default: the first).")] = None,
) -> None:
    """Match every line of BOM to a catalog part and say how sure each match is.

    Each line gets a status (matched, ambiguous, unmatched, conflict, not_fitted), the catalog
    part, a score 0-100, the method (exact, normalized, fuzzy, pinned) and a reason in words.
    Exit code 0 when every fitted line is matched, 1 when any is not, 2 when the BOM or the
    catalog cannot be read.
    """
    import csv as _csv
    import json as _json

    from rich.table import Table
    from rich.text import Text

    from .bom.columns import parse_column_overrides
    from .bom.export import neutralise
    from .bom.match import match_bom_file, parse_pins

    if format not in ("table", "json", "csv"):
        raise typer.BadParameter(f"{format!r} is not a format; expected table, json or csv", param_hint="--format")
    report = match_bom_file(bom, db=db, pins=parse_pins(pin), columns=parse_column_overrides(columns), sheet=sheet)
    if format == "json":
        sys.stdout.write(_json.dumps(report.to_dict(), indent=2, ensure_ascii=False) + "\n")
    elif format == "csv":
        writer = _csv.writer(sys.stdout, lineterminator="\n")
        writer.writerow(["line", "refs", "qty", "text", "status", "part_number", "score", "method", "reason",
                         "candidates"])
        for m in report.matches:
            writer.writerow([neutralise(v) for v in (
                m.line, " ".join(m.refs), "" if m.qty is None else m.qty, m.text, m.status, m.part_number or "",
                f"{m.score:.1f}", m.method or "", m.reason, " ".join(f"{pn}:{s:.1f}" for pn, s in m.candidates))])
    else:
        table = Table(title=report.bom.path)
        for name, opts in (("line", {"justify": "right"}), ("refs", {"overflow": "fold", "max_width": 18}),
                           ("qty", {"justify": "right"}), ("status", {"no_wrap": True}), ("part", {"no_wrap": True}),
                           ("score", {"justify": "right"}), ("method", {"no_wrap": True}),
                           ("reason", {"ratio": 1, "min_width": 30})):
            table.add_column(name, **opts)
        for m in report.matches:
            style = _MATCH_STYLES.get(m.status, "")
            table.add_row(str(m.line), Text(", ".join(m.refs)), "" if m.qty is None else str(m.qty),
                          Text(m.status, style=style), Text(m.part_number or "—"), f"{m.score:.1f}",
                          m.method or "—", Text(m.reason), style=None)
        out.print(table)
        counts = ", ".join(f"{n} {s}" for s, n in report.counts().items() if n)
        out.print(Text(f"{len(report.matches)} lines: {counts}"))
    for notice in report.bom.notices:
        err.print(Text(f"note: {notice}"))
    for m in report.matches:
        for w in m.warnings:
            err.print(Text(f"warning: line {m.line}: {w}"))
    raise typer.Exit(report.exit_code)


# ---- stress engine (partcheck stress) ---------------------------------------------------------


@app.command("stress")
def stress_command(
    design: Annotated[str, typer.Argument(help="The design file (TOML).", show_default=False)],
    format: Annotated[str, typer.Option("--format", help="table or json.")] = "table",
) -> None:
    """Compute what each power-stage role sees at every corner of DESIGN.

    The table shows, per role, each stress at its worst corner; --format json prints every corner
    with its role stresses in SI units (°C for temperatures).
    """
    import json as _json

    from rich.table import Table

    from .stress.flyback import evaluate
    from .units import format_quantity

    if format not in ("table", "json"):
        raise typer.BadParameter(f"{format!r} is not a format; expected table or json", param_hint="--format")
    result = evaluate(design)
    if format == "json":
        out.print(_json.dumps(result.to_dict(), indent=2), markup=False, highlight=False)
        return
    modes = ", ".join(f"{c.id} {c.mode} D={c.duty:.3f} f={format_quantity(c.fsw, 'Hz')}" for c in result.corners)
    out.print(f"{result.design_name}: {modes}", markup=False)
    table = Table("role", "stress", "worst", "corner")
    for row in result.worst():
        table.add_row(row["role"], row["stress"], format_quantity(row["value"], row["kind"]), row["corner"] or "—")
    out.print(table)
    for note in result.notes:
        out.print(f"note: {note}", markup=False)


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
