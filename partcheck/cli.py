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

import typer
from rich.console import Console
from rich.markup import escape
from typer.core import TyperGroup

from . import __version__
from .errors import PartcheckError

out = Console(highlight=False, soft_wrap=True)
err = Console(stderr=True, highlight=False, soft_wrap=True)


class _PartcheckGroup(TyperGroup):
    """Turns the project's own errors into a message and exit code 2, for every subcommand."""

    def invoke(self, ctx: typer.Context):
        try:
            return super().invoke(ctx)
        except PartcheckError as exc:
            # escape: messages quote TOML tables such as [converter], which rich would take as markup
            err.print(f"[bold red]error:[/] {escape(str(exc))}", markup=True, highlight=False)
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

catalog_app = typer.Typer(
    no_args_is_help=True,
    help="The parts catalog: the ratings of the team's approved parts (SQLite file or database URL).",
)
app.add_typer(catalog_app, name="catalog")

_CatDb = Annotated[
    Optional[str],
    typer.Option(
        "--db",
        envvar="PARTCHECK_DB",
        show_default=False,
        help="The catalog: a file path (SQLite) or a SQLAlchemy URL. "
        "Default: $XDG_DATA_HOME/partcheck/catalog.sqlite (~/.local/share/partcheck/catalog.sqlite).",
    ),
]
_CatFormat = Annotated[str, typer.Option("--format", help="table or json.")]


def _cat_choice(value: str, allowed: tuple[str, ...], option: str) -> str:
    if value not in allowed:
        raise typer.BadParameter(f"{value!r} is not one of {', '.join(allowed)}", param_hint=option)
    return value


def _cat_pairs(items: Optional[list[str]], option: str) -> dict[str, str]:
    pairs: dict[str, str] = {}
    for item in items or []:
        name, sep, value = item.partition("=")
        if not sep or not name.strip():
            raise typer.BadParameter(f"{item!r} is not COLUMN=VALUE (for example vds_max=100V)", param_hint=option)
        pairs[name.strip()] = value.strip()
    return pairs


def _cat_value(record, name: str) -> str:
    from .catalog.models import FIELDS
    from .units import format_quantity

    value = getattr(record, name)
    if value is None:
        return "—"
    spec = FIELDS[name]
    if spec.text:
        return str(value)
    if spec.kind is None:
        return f"{value:g}"
    return format_quantity(value, spec.kind)


def _cat_json(obj) -> None:
    from .catalog.io import dumps

    sys.stdout.write(dumps(obj))


def _cat_parts_table(records) -> "object":
    from rich.table import Table

    from .catalog.models import SUMMARY_FIELDS

    table = Table("part number", "type", "ratings", "status", "description")
    for column in table.columns[:3]:
        column.no_wrap = True
    for r in records:
        ratings = "\n".join(f"{n} {_cat_value(r, n)}" for n in SUMMARY_FIELDS[r.category] if getattr(r, n) is not None)
        table.add_row(*_cat_cells(r.part_number, f"{r.category}\n{r.subtype or '—'}", ratings or "—",
                                  r.status or "approved", r.description or ""))
    return table


def _cat_cells(*texts: str) -> list:
    """Table cells as plain text: catalog data and docs ("[s]", "[h]") must not be read as rich markup."""
    from rich.text import Text

    return [Text(t) for t in texts]


@catalog_app.command("init")
def catalog_init(db: _CatDb = None) -> None:
    """Create an empty catalog (or bring an existing one to the current schema); safe to repeat."""
    from .catalog import open_catalog

    with open_catalog(db, create=True) as cat:
        cat.init()
        if cat.upgraded_from is not None:
            out.print(f"upgraded {cat.location} from schema version {cat.upgraded_from} to {cat.schema_version}; "
                      f"backup: {cat.backup}", markup=False)
        out.print(f"catalog ready at {cat.location} (schema version {cat.schema_version}, "
                  f"{cat.count()} parts)", markup=False)


@catalog_app.command("add")
def catalog_add(
    part: Annotated[str, typer.Argument(help="The new part number.", show_default=False)],
    category: Annotated[str, typer.Option("--category", help="switch, diode, clamp, capacitor, resistor, magnetic, "
                                          "optocoupler or reference.", show_default=False)],
    subtype: Annotated[Optional[str], typer.Option("--subtype", help="Subtype within the category.")] = None,
    description: Annotated[Optional[str], typer.Option("--description", help="Free text.")] = None,
    package: Annotated[Optional[str], typer.Option("--package", help="Package or footprint.")] = None,
    notes: Annotated[Optional[str], typer.Option("--notes", help="Free text.")] = None,
    status: Annotated[Optional[str], typer.Option("--status", help="approved, restricted or obsolete.")] = None,
    set_: Annotated[Optional[list[str]], typer.Option("--set", help="A rating as COLUMN=VALUE, units allowed "
                                                      "(vds_max=100V); repeat for more.")] = None,
    update: Annotated[bool, typer.Option("--update", help="Replace the part if it exists.")] = False,
    db: _CatDb = None,
) -> None:
    """Add one part from options, for example: add SW-100 --category switch --set vds_max=100V --set id_max=5A."""
    from .catalog import open_catalog

    fields: dict[str, str] = {"part_number": part, "category": category}
    for name, value in (("subtype", subtype), ("description", description), ("package", package),
                        ("notes", notes), ("status", status)):
        if value is not None:
            fields[name] = value
    fields.update(_cat_pairs(set_, "--set"))
    with open_catalog(db, create=True) as cat:
        record = cat.add(fields, update=update)
        out.print(f"added {record.part_number} ({record.category}) to {cat.location}", markup=False)


@catalog_app.command("import")
def catalog_import(
    file: Annotated[str, typer.Argument(help="CSV (separated by ',', ';' or tabs), TSV, XLSX or JSON file; curves "
                                        "from X.curves.csv beside X.csv.", show_default=False)],
    update: Annotated[bool, typer.Option("--update", help="Replace parts that are already in the catalog.")] = False,
    map_file: Annotated[Optional[str], typer.Option("--map", help="A TOML column mapping for a spreadsheet with its "
                                                    "own headers: [columns] \"Mfr Part\" = \"part_number\", and "
                                                    "optionally [values.category] \"Cap\" = \"capacitor\" "
                                                    "(docs/catalog-columns.md).", show_default=False)] = None,
    column: Annotated[Optional[list[str]], typer.Option("--column", help="HEADER=COLUMN: read the file's header "
                                                        "as this catalog column (repeatable; wins over --map).",
                                                        show_default=False)] = None,
    decimal_comma: Annotated[Optional[bool], typer.Option("--decimal-comma/--no-decimal-comma",
                                                          help="Force or forbid decimal commas ('4,7 uF'); default: "
                                                               "detected.", show_default=False)] = None,
    db: _CatDb = None,
) -> None:
    """Import parts all-or-nothing: every bad cell is reported with its line and column, and nothing is written."""
    from .catalog import open_catalog
    from .catalog.io import ReadOptions, add_column_options, load_mapping

    options = ReadOptions(decimal_comma=decimal_comma)
    if map_file is not None:
        load_mapping(map_file, options)
    add_column_options(options, column or [])
    with open_catalog(db, create=True) as cat, _cat_progress("importing parts") as progress:
        report = cat.import_file(file, update=update, progress=progress, read=options)
    for notice in options.notices:
        err.print(f"note: {notice}", markup=False)
    out.print(f"imported {report} into {cat.location}", markup=False)


@catalog_app.command("export")
def catalog_export(
    target: Annotated[str, typer.Argument(help="Output file, or - for standard output.", show_default=False)],
    format: Annotated[Optional[str], typer.Option("--format", help="csv or json (default: from the file name; "
                                                  "csv for -).", show_default=False)] = None,
    db: _CatDb = None,
) -> None:
    """Export every part, sorted by part number; importing the export and exporting again gives identical bytes."""
    from .catalog import open_catalog

    if format is not None:
        _cat_choice(format, ("csv", "json"), "--format")
    with open_catalog(db, create=False) as cat:
        if target == "-":
            report = cat.export(sys.stdout, format or "csv")
        else:
            report = cat.export(target, format)
    if report.curves_skipped:
        err.print(f"warning: {report.curves_skipped} curve points were not written: CSV on standard output "
                  "carries no curves; export to a file (X.curves.csv is written beside it) or use --format json",
                  markup=False)
    if target != "-":
        side = f" and {report.curve_points} curve points to {report.curves_file}" if report.curves_file else ""
        out.print(f"exported {report.parts} parts to {target}{side}", markup=False)


@catalog_app.command("list")
def catalog_list(
    category: Annotated[Optional[str], typer.Option("--category", help="Only this category.")] = None,
    subtype: Annotated[Optional[str], typer.Option("--subtype", help="Only this subtype.")] = None,
    minimum: Annotated[Optional[list[str]], typer.Option("--min", help="A minimum rating as COLUMN=VALUE "
                                                         "(v_rated=50V); repeat for more.")] = None,
    format: _CatFormat = "table",
    db: _CatDb = None,
) -> None:
    """List parts (sorted by part number) with their headline ratings, filtered by category, subtype and minimums."""
    from .catalog import open_catalog
    from .catalog.io import part_to_json

    _cat_choice(format, ("table", "json"), "--format")
    with open_catalog(db, create=False) as cat:
        records = cat.parts(category=category, subtype=subtype, min_ratings=_cat_pairs(minimum, "--min"))
    if format == "json":
        _cat_json([part_to_json(r) for r in records])
        return
    out.print(_cat_parts_table(records))
    out.print(f"{len(records)} part{'s' if len(records) != 1 else ''}", markup=False)


@catalog_app.command("show")
def catalog_show(
    part: Annotated[str, typer.Argument(help="The part number (letter case and Unicode form may differ from the "
                                        "stored spelling).", show_default=False)],
    format: _CatFormat = "table",
    db: _CatDb = None,
) -> None:
    """Show every rating and curve of one part (the stored spelling when the given one differs only in letter case)."""
    from rich.table import Table

    from .catalog import open_catalog
    from .catalog.io import part_to_json
    from .catalog.models import CATEGORY_FIELDS, CURVES, FIELDS
    from .units import format_quantity

    _cat_choice(format, ("table", "json"), "--format")
    with open_catalog(db, create=False) as cat:
        record = cat.get(part)
        written = cat.updated_at(record.part_number)
    if record.part_number != part:
        err.print(f"note: showing the stored part number {_cat_shown(record.part_number)} for {_cat_shown(part)} "
                  "(they differ only in letter case or Unicode form)", markup=False)
    if format == "json":
        _cat_json(part_to_json(record))
        return
    table = Table("column", "value", "meaning", title=_cat_cells(record.part_number)[0])
    for name in CATEGORY_FIELDS[record.category]:
        table.add_row(*_cat_cells(name, _cat_value(record, name), FIELDS[name].doc))
    out.print(table)
    for name, points in record.curves.items():
        spec = CURVES[name]
        text = ", ".join(f"{format_quantity(x, spec.x_kind)} → {y:g}" for x, y in points)
        out.print(f"curve {name} ({spec.doc}): {text}", markup=False)
    out.print(f"last written: {written or 'before schema version 2 (not recorded)'}", markup=False)


def _cat_shown(part_number: str) -> str:
    """A part number quoted, escaped when not plain ASCII (look-alike spellings read differently)."""
    from .catalog.validate import shown

    return shown(part_number)


@catalog_app.command("find")
def catalog_find(
    text: Annotated[str, typer.Argument(help="Part of a part number or description.", show_default=False)],
    limit: Annotated[int, typer.Option("--limit", help="At most this many results.")] = 10,
    category: Annotated[Optional[str], typer.Option("--category", help="Only this category.")] = None,
    format: _CatFormat = "table",
    db: _CatDb = None,
) -> None:
    """Fuzzy search over part numbers and descriptions, best match first."""
    from rich.table import Table

    from .catalog import open_catalog
    from .catalog.io import part_to_json

    _cat_choice(format, ("table", "json"), "--format")
    with open_catalog(db, create=False) as cat:
        hits = cat.find(text, limit=limit, category=category)
    if format == "json":
        _cat_json([{"score": score, "part": part_to_json(r)} for r, score in hits])
        return
    if not hits:
        out.print(f"no part matches {text!r}", markup=False)
        return
    table = Table("score", "part number", "category", "subtype", "description")
    table.columns[1].no_wrap = True
    for r, score in hits:
        table.add_row(*_cat_cells(f"{score:.0f}", r.part_number, r.category, r.subtype or "—", r.description or ""))
    out.print(table)


@catalog_app.command("remove")
def catalog_remove(
    part: Annotated[str, typer.Argument(help="The exact part number.", show_default=False)],
    db: _CatDb = None,
) -> None:
    """Remove one part and its curves from the catalog."""
    from .catalog import open_catalog

    with open_catalog(db, create=False) as cat:
        record = cat.remove(part)
        out.print(f"removed {record.part_number} from {cat.location}", markup=False)


def _cat_progress(label: str):
    """A progress bar on standard error for long catalog steps; None (no bar) unless stderr is a terminal."""
    from contextlib import contextmanager

    @contextmanager
    def bar():
        if not sys.stderr.isatty():
            yield None
            return
        from rich.progress import BarColumn, MofNCompleteColumn, Progress, TextColumn, TimeRemainingColumn

        with Progress(TextColumn(label), BarColumn(), MofNCompleteColumn(), TimeRemainingColumn(), console=err,
                      transient=True) as progress:
            task = progress.add_task(label, total=None)
            yield lambda done, total: progress.update(task, completed=done, total=total)

    return bar()


@catalog_app.command("copy")
def catalog_copy(
    to: Annotated[str, typer.Option("--to", help="The target catalog: a file path (SQLite) or a database URL such "
                                    "as postgresql+psycopg://USER@HOST/partcheck; created when missing, and it must "
                                    "be empty unless --replace.", show_default=False)],
    replace: Annotated[bool, typer.Option("--replace", help="Delete every part already in the target first "
                                          "(in the same transaction as the copy).")] = False,
    db: _CatDb = None,
) -> None:
    """Copy every part and curve into another catalog (SQLite to PostgreSQL or back) in one transaction.

    Before committing, the canonical exports of both catalogs are compared; any difference rolls the
    copy back and nothing is written.
    """
    from .catalog import open_catalog

    with open_catalog(db, create=False) as cat, _cat_progress("copying parts and curves") as progress:
        report = cat.copy_to(to, replace=replace, progress=progress)
    out.print(str(report), markup=False)


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
    decimal_comma: Annotated[Optional[bool], typer.Option("--decimal-comma/--no-decimal-comma",
                                                          help="Force or forbid decimal commas (default: "
                                                               "detected).")] = None,
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
    from contextlib import nullcontext

    with _cat_progress("matching BOM lines") if format == "table" else nullcontext() as progress:  # terminal only
        report = match_bom_file(bom, db=db, pins=parse_pins(pin), columns=parse_column_overrides(columns), sheet=sheet,
                                decimal_comma=decimal_comma, progress=progress)
    if format == "table":
        for line in report.bom.column_report():
            err.print(Text(line))
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
                           ("qty", {"justify": "right"}), ("text", {"max_width": 28, "overflow": "fold"}),
                           ("status", {"no_wrap": True}), ("part", {"no_wrap": True}),
                           ("score", {"justify": "right"}), ("method", {"no_wrap": True}),
                           ("reason", {"ratio": 1, "min_width": 30})):
            table.add_column(name, **opts)
        for m in report.matches:
            style = _MATCH_STYLES.get(m.status, "")
            table.add_row(str(m.line), Text(", ".join(m.refs)), "" if m.qty is None else str(m.qty), Text(m.text),
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
    bom: Annotated[Optional[str], typer.Option("--bom", help="Also compute each BOM part's stresses.")] = None,
    db: Annotated[Optional[str], typer.Option("--db", envvar="PARTCHECK_DB", help="Catalog path or URL.")] = None,
    samples: Annotated[Optional[int], typer.Option("--samples", min=1, help="Monte Carlo samples over [tolerances].")] = None,
    seed: Annotated[int, typer.Option("--seed", help="Seed of the Monte Carlo draw (reproducible).")] = 0,
) -> None:
    """Compute what each power-stage role sees at every corner of DESIGN.

    The table shows, per role, each stress at its worst corner; --format json prints every corner
    with its role stresses in SI units (°C for temperatures).  With --bom, each part's stresses
    (capacitor-bank sharing, DC bias, losses and temperatures) are added; with a [tolerances]
    table, the worst case by the extremes and, with --samples N, a seeded Monte Carlo run.
    """
    import json as _json

    from rich.table import Table

    from .pipeline import stress_report
    from .stress.flyback import STRESS_KINDS
    from .units import format_quantity

    if format not in ("table", "json"):
        raise typer.BadParameter(f"{format!r} is not a format; expected table or json", param_hint="--format")
    data = stress_report(design, bom=bom, db=db, samples=samples, seed=seed)
    if format == "json":
        out.print(_json.dumps(data, indent=2, allow_nan=False), markup=False, highlight=False)
        return
    corners = data["corners"]
    modes = ", ".join(f"{c['id']} {c['mode']} D={c['duty']:.3f} f={format_quantity(c['fsw'], 'Hz')}" for c in corners)
    out.print(f"{data['design']}: {modes}", markup=False)
    worst: dict[tuple[str, str], tuple[float, str]] = {}
    for c in corners:
        for role, stresses in c["roles"].items():
            for key, value in stresses.items():
                if value is not None and ((role, key) not in worst or value > worst[(role, key)][0]):
                    worst[(role, key)] = (value, c["id"])
    table = Table("role", "stress", "worst", "corner")
    for (role, key), (value, corner) in worst.items():
        table.add_row(role, key, format_quantity(value, STRESS_KINDS.get(key.split(":")[0])), corner)
    out.print(table)
    if "parts" in data:
        parts = Table("refs", "part", "role", "stress", "worst", "corner")
        from .rules.policy import PARAMETERS as kinds

        for p in data["parts"]:
            for name, value in p["stresses"].items():
                parts.add_row(", ".join(p["refs"]), p["part_number"], p["role"], name,
                              format_quantity(value, kinds.get(name)), p["worst_corner"].get(name, "—"))
        out.print(parts)
    for method, tol in data.get("tolerances", {}).items():
        t = Table("stress", "nominal", "worst", *(["99.7 %"] if method == "monte_carlo" else []), "corner",
                  title=f"tolerances: {method.replace('_', ' ')}")
        for key, row in tol["stresses"].items():
            kind = row.get("kind")
            t.add_row(key, format_quantity(row["nominal"], kind), format_quantity(row["worst"], kind),
                      *([format_quantity(row["p99_7"], kind)] if method == "monte_carlo" else []), row["corner"] or "—")
        out.print(t)
    for note in data.get("notes", []):
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

_STATUS_STYLE = {"fail": "bold red", "unmatched": "red", "not_assessed": "magenta", "warn": "yellow",
                 "waived": "cyan", "out_of_scope": "blue", "info": "dim", "pass": "green"}


def _print_findings(result) -> None:
    from rich.table import Table
    from rich.text import Text

    from .pipeline import affected
    from .units import format_quantity

    table = Table("status", "refs", "part", "parameter", "stress", "limit", "rating", "use", "corner", "rule")
    shown = affected(result.findings)
    for f in shown:
        kind = f.get("unit")
        util = f.get("utilization")
        table.add_row(Text(f["status"].upper(), style=_STATUS_STYLE.get(f["status"], "")), ", ".join(f["refs"]),
                      f.get("part_number") or "—", f.get("parameter") or "—", format_quantity(f.get("stress"), kind),
                      format_quantity(f.get("limit"), kind), format_quantity(f.get("rating"), kind),
                      f"{util:.0%}" if util is not None else "—", f.get("corner") or "—", f.get("rule") or "—")
    if shown:
        out.print(table)
    for f in shown:
        if f.get("steady") is not None and f["status"] in ("fail", "warn"):
            kind = f.get("unit")
            out.print(Text(f"  {', '.join(f['refs'])} {f['parameter']}: peak {format_quantity(f['stress'], kind)} "
                           f"over steady {format_quantity(f['steady'], kind)}, set by {f.get('dominant') or '—'}"))
        if f["status"] == "fail" and f.get("alternatives"):
            alts = ", ".join(f"{a['part_number']} (margin {a['min_margin']:.0%})" for a in f["alternatives"])
            out.print(Text(f"  order instead of {', '.join(f['refs'])} ({f['part_number']}): {alts}"))
        elif f["status"] in ("not_assessed", "unmatched") and f.get("detail"):
            out.print(Text(f"  {', '.join(f['refs'])}: {f['detail']}"))
    for warning in result.bom_warnings:
        out.print(Text(f"bom reader: {warning}", style="yellow"))


def _print_verdict(result) -> None:
    from rich.text import Text

    counts = ", ".join(f"{n} {s}" for s, n in result.counts().items() if n)
    origin = {"default": "the shipped default: no --policy and none in the design file",
              "design": "named in the design file", "option": "from --policy"}[result.policy_origin]
    out.print(Text(f"policy: {result.policy} ({origin})"))
    style = "bold green" if result.verdict == "pass" else "bold red"
    out.print(Text(f"{result.design}: {result.verdict.upper()} ({counts})", style=style))


@app.command("check")
def check_command(
    design: Annotated[str, typer.Argument(help="The design file (TOML).", show_default=False)],
    bom: Annotated[Optional[str], typer.Option("--bom", help="The BOM (default: the design file's bom).")] = None,
    policy: Annotated[Optional[str], typer.Option("--policy", help="A preset name or a policy file.")] = None,
    db: Annotated[Optional[str], typer.Option("--db", envvar="PARTCHECK_DB", help="Catalog path or URL.")] = None,
    report: Annotated[Optional[str], typer.Option("--report", help="Write the HTML report here.")] = None,
    annotate: Annotated[Optional[str], typer.Option("--annotate", help="Write the BOM with results (.csv/.xlsx).")] = None,
    pin: Annotated[Optional[list[str]], typer.Option("--pin", help="REF=PART: use this catalog part for REF.")] = None,
    format: Annotated[str, typer.Option("--format", help="table or json.")] = "table",
    columns: Annotated[Optional[str], typer.Option("--columns", help="BOM header overrides, e.g. "
                                                                     "ref=Designator,value=Val (win over the "
                                                                     "design file's [bom_read] columns).")] = None,
    sheet: Annotated[Optional[str], typer.Option("--sheet", help="XLSX sheet of the BOM to read (default: "
                                                                 "[bom_read] sheet, else the first).")] = None,
    decimal_comma: Annotated[Optional[bool], typer.Option("--decimal-comma/--no-decimal-comma",
                                                          help="Force or forbid decimal commas in the BOM "
                                                               "(default: [bom_read] decimal_comma, else "
                                                               "detected).")] = None,
) -> None:
    """Check every part of DESIGN's BOM against the derating policy at its worst corner.

    The BOM is read as `partcheck match` reads it; --columns, --sheet and --decimal-comma win over
    the design file's [bom_read] table.  Which column each BOM field was read from, and which
    columns were ignored, is printed on standard error.
    Exit code 0 when the verdict is pass, 1 when it is fail, 2 on bad input.
    """
    from rich.text import Text

    from .bom.columns import parse_column_overrides
    from .bom.match import parse_pins
    from .pipeline import check, write_annotated_bom

    if format not in ("table", "json"):
        raise typer.BadParameter(f"{format!r} is not a format; expected table or json", param_hint="--format")
    bom_options = {"columns": parse_column_overrides(columns) or None, "sheet": sheet, "decimal_comma": decimal_comma}

    def _column_report(bom_data) -> None:  # on standard error, so JSON on standard output stays JSON
        for line in bom_data.column_report():
            err.print(Text(line))

    result = check(design, bom=bom, policy=policy, db=db, pins=parse_pins(pin), command=" ".join(sys.argv),
                   bom_options=bom_options, on_bom=_column_report)
    if format == "json":
        out.print(result.to_json(), markup=False, highlight=False)
    else:
        _print_findings(result)
        _print_verdict(result)
    if report:
        from .report.html import write_html

        err.print(f"report: {write_html(result, report)}", markup=False)
    if annotate:
        err.print(f"annotated BOM: {write_annotated_bom(result, annotate)}", markup=False)
    raise typer.Exit(0 if result.verdict == "pass" else 1)


@app.command("report")
def report_command(
    result_json: Annotated[str, typer.Argument(help="A result saved with `partcheck check --format json`.")],
    out_path: Annotated[str, typer.Option("--out", help="The HTML file to write.")] = "report.html",
) -> None:
    """Render a saved check result as the self-contained HTML design-review report."""
    from .report.html import write_html
    from .result import CheckResult

    out.print(str(write_html(CheckResult.load(result_json), out_path)), markup=False)


@app.command("demo")
def demo_command(
    out_dir: Annotated[str, typer.Option("--out", help="Folder for the demo reports.")] = "partcheck-demo",
    scenario: Annotated[Optional[list[str]], typer.Option("--scenario", help="Only this scenario (repeatable).")] = None,
) -> None:
    """Check the bundled demo converters against a temporary seeded catalog and write their reports.

    The demo data (designs, BOMs, catalog) is invented; your own catalog is not opened.
    """
    from .demo import SCENARIOS, run_demo

    for run in run_demo(out_dir, tuple(scenario) if scenario else SCENARIOS):
        _print_verdict(run.result)
        out.print(f"report: {run.report.resolve()}", markup=False)


def main() -> None:
    """Console-script entry point."""
    app(prog_name="partcheck")


if __name__ == "__main__":  # pragma: no cover
    main()
