"""Validation of catalog cells: every cell checked, every problem collected, one error raised.

:func:`validate` turns a :class:`Table` (header and cells as read, with the line of every row)
into one list of values per column of :data:`FIELDS` (SI floats, stripped text), checking unit
kinds, owning categories, zero/negative ratings, plausible maxima, duplicate part numbers and
the curves.  It touches no database; problems become one :class:`CatalogInputError` naming the
file, line and column of each.  Plain numbers take a fast path with the same result as
:func:`partcheck.units.parse_quantity`; the loops run column by column so that 100,000 rows
validate in about a second.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass, replace
from itertools import compress

from ..errors import CatalogInputError, QuantityError
from ..units import format_quantity, parse_quantity
from .models import CATEGORIES, CURVE_COLUMNS, CURVES, DIELECTRICS, FIELDS, STATUSES, Curve, part_number_key

#: How many problems an error message lists before "... and N more".
MAX_LISTED = 20

@dataclass(frozen=True)
class Problem:
    """One bad cell (or header, or row) of an import file."""

    message: str
    line: int | None = None
    column: str | None = None
    key: str | None = None
    file: str | None = None  # set when the problem is in another file (the curve side file)

    def where(self) -> str:
        parts = [self.file] if self.file else []
        if self.line is not None:
            parts.append(f"line {self.line}")
        if self.key is not None:
            parts.append(self.key)
        if self.column is not None:
            parts.append(f"column {self.column!r}")
        return ", ".join(parts)


@dataclass
class Table:
    """Cells of one file or sheet as read: the header and each row with its line number."""

    file: str
    header: list[str]
    rows: list[list[object]]
    lines: list[int | None]
    header_line: int | None = 1
    keys: list[str | None] | None = None  # JSON: "parts[3]" per row
    curves: list[tuple[str, str, object, object, int | None, str | None]] | None = None  # JSON curves
    text_only: bool = False  # every cell is a str (CSV, TSV): lets validation skip empty cells at C speed
    decimal_comma: bool = False  # numbers written with ',' as the decimal point ("4,7 uF")
    shown_columns: dict[str, str] | None = None  # a column mapping: catalog column -> the header as written


@dataclass
class Validated:
    """A validated import, nothing written yet: one list of values (SI floats) per column of FIELDS."""

    file: str
    columns: dict[str, list]
    lines: list[int | None]
    keys: list[str | None]
    curves: dict[str, dict[str, Curve]] | None  # None: no curve data given (existing curves stay)
    curves_file: str | None = None

    def __len__(self) -> int:
        return len(self.columns["part_number"])

    def records(self, indices: Iterable[int] | None = None) -> list[dict[str, object]]:
        """Complete column mappings of the rows ``indices`` (all rows when None)."""
        cols = [self.columns[name] for name in FIELDS]
        rows = zip(*cols) if indices is None else ([c[i] for c in cols] for i in indices)
        return [dict(zip(FIELDS, row)) for row in rows]


_ORDER = {name: i for i, name in enumerate([*FIELDS, *CURVE_COLUMNS])}


def raise_problems(file: str, problems: list[Problem], verb: str = "imported", *, footer: str | None = None,
                   columns: dict[str, str] | None = None) -> None:
    """Raise one :class:`CatalogInputError` listing ``problems`` (sorted by line), if any.

    ``footer`` is a line said once after the list (the valid column names); ``columns`` maps
    catalog column names to the headers as written in ``file`` (a column mapping), so that each
    problem names the column the user sees."""
    if not problems:
        return
    problems = sorted(problems, key=lambda p: (p.file or "", p.line or 0, p.key or "", _ORDER.get(p.column, 99)))
    if columns:
        problems = [replace(p, column=columns[p.column]) if p.file is None and p.column in columns else p
                    for p in problems]
    if len(problems) == 1:
        p = problems[0]
        exc = CatalogInputError(
            f"{p.message}; nothing was {verb}", file=p.file or file, line=p.line, column=p.column, key=p.key
        )
    else:
        listed = "\n".join(f"  {p.where()}: {p.message}" for p in problems[:MAX_LISTED])
        more = f"\n  ... and {len(problems) - MAX_LISTED} more" if len(problems) > MAX_LISTED else ""
        tail = f"\n  {footer}" if footer else ""
        exc = CatalogInputError(f"{len(problems)} problems, nothing was {verb}:\n{listed}{more}{tail}", file=file)
    exc.problems = problems  # type: ignore[attr-defined]
    raise exc


def closest(name: str, choices: Iterable[str], cutoff: float = 60.0) -> str | None:
    """The choice closest to ``name`` (rapidfuzz ratio), or None when nothing is near."""
    from rapidfuzz import fuzz, process

    hit = process.extractOne(name, list(choices), scorer=fuzz.ratio, score_cutoff=cutoff)
    return hit[0] if hit else None


def unknown_column_message(name: str, valid: Iterable[str], *, listed: bool = True) -> str:
    """``unknown column 'x'; did you mean 'y'?``, followed by the valid names when ``listed``."""
    valid = list(valid)
    near = closest(name.lower(), valid)
    hint = f"; did you mean {near!r}?" if near else ""
    if not listed:
        return f"unknown column {name!r}{hint}"
    return f"unknown column {name!r}{hint or ';'} valid columns are: {', '.join(valid)}"


_NOT_FINITE = frozenset({"nan", "+nan", "-nan", "inf", "+inf", "-inf", "infinity", "+infinity", "-infinity"})


def _is_empty(cell: object) -> bool:
    return cell is None or (isinstance(cell, str) and not cell.strip())


def parse_cell(cell: object, kind: str | None, decimal_comma: bool = False) -> float:
    """One numeric cell as an SI float; plain numbers take a fast path with the same result."""
    if isinstance(cell, str):
        text = cell.strip()
        if text.lower() in _NOT_FINITE:
            raise QuantityError(f"{cell!r} is not a number; NaN and infinite values are not allowed")
        if "_" not in text:
            try:
                value = float(text)  # what parse_quantity returns for a plain number, 100x faster
            except ValueError:
                pass
            else:
                if math.isfinite(value):
                    return value + 0.0  # -0.0 → 0.0: databases do not keep the sign of zero
    return parse_quantity(cell, kind, decimal_comma=decimal_comma) + 0.0  # type: ignore[arg-type]


def _check_value(name: str, value: float, cell: object) -> str | None:
    """Why ``value`` cannot be a value of column ``name`` (None when it can)."""
    spec = FIELDS[name]
    if spec.positive and not value > 0:
        return f"{cell!r} is not allowed: {name} must be greater than zero"
    if spec.minimum is not None and value < spec.minimum:
        return f"{cell!r} is below absolute zero" if spec.kind == "degC" else f"{cell!r} is below {spec.minimum}"
    if spec.maximum is not None and value > spec.maximum:
        msg = (f"{cell!r} is {format_quantity(value, spec.kind)}, more than the plausible "
               f"{format_quantity(spec.maximum, spec.kind)}")
        if spec.kind == "%" and not (isinstance(cell, str) and "%" in cell):
            msg += "; a number without '%' is a fraction (write '10%' for ten percent)"
        return msg
    return None


def _choice_message(what: str, text: str, choices: Iterable[str]) -> str:
    choices = list(choices)
    near = closest(text, choices)
    hint = f"; did you mean {near!r}?" if near else ";"
    return f"unknown {what} {text!r}{hint} expected one of {', '.join(choices)}"


def _header(table: Table, valid: Iterable[str], problems: list[Problem], *, each_lists: bool = False
            ) -> tuple[list[str | None], str | None]:
    """Canonical column names of ``table.header`` (None for a bad one, which is reported) and the
    footer of the error message.

    One unknown header is one problem with a did-you-mean; with two or more, the valid names are
    said once, in the footer, instead of after every header (``each_lists`` keeps them on each
    problem, for the four columns of a curve file)."""
    valid = list(valid)
    names: list[str | None] = []
    seen: dict[str, int] = {}
    unknown: list[Problem] = []
    for position, raw in enumerate(table.header):
        name = str(raw).strip().lower()
        if name == "":  # a trailing empty column from a spreadsheet: fine unless it holds data
            names.append(None)
            continue
        if name not in valid:
            names.append(None)
            text = str(raw).strip()
            unknown.append(Problem(unknown_column_message(text, valid, listed=False), table.header_line, text))
            continue
        if name in seen:
            names.append(None)
            problems.append(Problem(f"column {name!r} appears twice in the header", table.header_line, name))
            continue
        seen[name] = position
        names.append(name)
    footer = None
    if unknown:
        semicolons = any(";" in str(p.column) and "," not in str(p.column) for p in unknown)
        hint = " (the file seems to be separated by ';'; name it .csv to have the separator detected)" \
            if semicolons else ""
        if len(unknown) == 1 or each_lists:
            unknown = [replace(p, message=unknown_column_message(str(p.column), valid) + hint) for p in unknown]
        else:
            footer = f"valid columns are: {', '.join(valid)}{hint}"
            if table.shown_columns is not None:
                footer += "; map a header to one of them with [columns] in the mapping file or --column HEADER=COLUMN"
        problems.extend(unknown)
    return names, footer


def _where(table: Table, i: int) -> tuple[int | None, str | None]:
    return table.lines[i], (table.keys[i] if table.keys else None)


_TWIN = "(differs only in letter case or Unicode form)"


def shown(part_number: str) -> str:
    """A part number quoted for a twin message: ``repr``, escaped (``ascii``) when not plain ASCII,
    so that spellings which look alike (composed and decomposed accents, µ and μ) read differently."""
    return repr(part_number) if part_number.isascii() else ascii(part_number)


def validate(table: Table, curve_table: Table | None = None, *, existing: Iterable[str] = (),
             update: bool = False, verb: str = "imported", seen: dict[str, int | None] | None = None,
             twins: dict[str, list[str]] | None = None, seen_keys: dict[str, str] | None = None) -> Validated:
    """Validate every cell of ``table`` (and its curves); raise one error listing every problem.

    ``existing`` are the part numbers already in the catalog: each of them in ``table`` is a
    problem unless ``update`` is true.  ``seen`` maps the part numbers of earlier chunks of the
    same file to their lines (a chunked import passes one dict through every chunk, so a part
    number repeated across chunks is found); it is updated with this table's part numbers.

    Part numbers with the same :func:`~partcheck.catalog.models.part_number_key` but another
    spelling are twins, always a problem: two rows of the file (``seen_keys`` maps the keys of
    earlier chunks to their first spelling, updated like ``seen``), or a row and a stored part
    (``twins`` maps keys to the stored spellings; only the keys of this table's part numbers are
    needed).  Re-importing the stored spelling itself is the ``existing`` rule above.
    """
    existing = existing if isinstance(existing, (set, frozenset, dict)) else set(existing)
    problems: list[Problem] = []
    names, footer = _header(table, FIELDS, problems)
    present = {n for n in names if n}
    shown_columns = table.shown_columns
    for required in ("part_number", "category"):
        if required not in present and not any("unknown column" in p.message for p in problems if p.column):
            hint = (f"; map the file's header to it with [columns] in the mapping file or --column HEADER={required}"
                    if shown_columns is not None else "")
            problems.append(Problem(f"the required column {required!r} is missing{hint}", table.header_line))
    # nothing more can be checked with a broken header
    raise_problems(table.file, problems, verb, footer=footer, columns=shown_columns)

    width = len(names)
    n = len(table.rows)
    rows = table.rows
    padded = False
    for i in ([] if set(map(len, rows)) <= {width} else range(n)):
        row = rows[i]
        if len(row) > width:
            extra = row[width:]
            if any(not _is_empty(c) for c in extra):
                line, key = _where(table, i)
                problems.append(Problem(f"the row has {len(row)} cells, the header has {width}", line, key=key))
            rows[i] = row = row[:width]
        if len(row) < width:
            rows[i] = list(row) + [None] * (width - len(row))
            padded = True
    for position, name in enumerate(names):
        if name is None and not str(table.header[position]).strip():
            filled = [i for i, row in enumerate(rows) if not _is_empty(row[position])]
            if filled:
                line, key = _where(table, filled[0])
                problems.append(Problem(f"column {position + 1} has no name in the header but holds data",
                                        line, key=key))
    columns = dict(zip(names, zip(*rows))) if n else {name: () for name in names}
    out: dict[str, list] = {}

    # Identity columns first: everything else is checked against the category.
    cats: list[str | None] = [None] * n
    for i, cell in enumerate(columns["category"]):
        if isinstance(cell, str) and cell in CATEGORIES:  # the common case, checked first and at once
            cats[i] = cell
            continue
        line, key = _where(table, i)
        if _is_empty(cell):
            problems.append(Problem("the category is empty; expected one of " + ", ".join(CATEGORIES), line,
                                    "category", key))
            continue
        text = str(cell).strip().lower()
        if text not in CATEGORIES:
            problems.append(Problem(_choice_message("category", str(cell).strip(), CATEGORIES), line, "category", key))
            continue
        cats[i] = text
    out["category"] = cats

    pns: list[str | None] = [None] * n
    first_line: dict[str, int | None] = {} if seen is None else seen
    first_spelling: dict[str, str] = {} if seen_keys is None else seen_keys
    stored = twins or {}
    first_index: dict[str, int] = {}  # this table's rows, to name a JSON row by its key
    for i, cell in enumerate(columns["part_number"]):
        if _is_empty(cell):
            line, key = _where(table, i)
            problems.append(Problem("the part number is empty", line, "part_number", key))
            continue
        if isinstance(cell, bool) or not isinstance(cell, (str, int, float)):  # JSON lists, objects, true/false
            line, key = _where(table, i)
            problems.append(Problem(f"{cell!r} is not a part number; expected text", line, "part_number", key))
            continue
        pn = _text_cell(cell)
        if not pn.isprintable():
            line, key = _where(table, i)
            problems.append(Problem(f"{pn!r} contains a control character", line, "part_number", key))
            continue
        if pn in first_line:
            line, key = _where(table, i)
            where = f"line {first_line[pn]}" if first_line[pn] is not None else "earlier"
            problems.append(Problem(f"part number {pn!r} appears twice (first on {where})", line, "part_number", key))
            pns[i] = pn
            continue
        first_line[pn] = table.lines[i]
        first_index[pn] = i
        norm = part_number_key(pn)
        other = first_spelling.setdefault(norm, pn)
        if other != pn:
            line, key = _where(table, i)
            if first_line.get(other) is not None:
                where = f"on line {first_line[other]}"
            elif table.keys and other in first_index:
                where = f"in {table.keys[first_index[other]]}"
            else:
                where = "earlier"
            problems.append(Problem(f"part number {shown(pn)} is the same part number as {shown(other)} {where} "
                                    f"{_TWIN}", line, "part_number", key))
        elif pn in existing:
            if not update:
                line, key = _where(table, i)
                problems.append(Problem(f"part number {pn!r} is already in the catalog; "
                                        "import with --update to replace it", line, "part_number", key))
        elif norm in stored:
            line, key = _where(table, i)
            names = " and ".join(shown(s) for s in sorted(stored[norm]))
            problems.append(Problem(f"part number {shown(pn)} is the same part number as the stored {names} {_TWIN}",
                                    line, "part_number", key))
        pns[i] = pn
    out["part_number"] = pns

    for name, cells in columns.items():
        if name in (None, "part_number", "category"):
            continue
        out[name] = _validate_column(name, cells, cats, table, problems, table.text_only and not padded)

    empty = [None] * n
    values = {name: out.get(name, empty) for name in FIELDS}
    values["status"] = ["approved" if s is None else s for s in values["status"]]
    _cross_checks(values, table, problems)

    curves = None
    curves_file = None
    category = {pn: cat for pn, cat in zip(pns, cats) if pn is not None}
    if table.curves is not None:  # JSON: curves inside each part
        curves = _validate_curves(table.curves, category, table.file, problems, side=False,
                                  decimal_comma=table.decimal_comma)
    elif curve_table is not None:
        curves_file = curve_table.file
        curves = _validate_curve_table(curve_table, category, problems)
    raise_problems(table.file, problems, verb, columns=shown_columns)
    return Validated(table.file, values, list(table.lines), list(table.keys or [None] * n), curves, curves_file)


_FREE_TEXT = frozenset({"description", "package", "notes"})


def _validate_column(name: str, cells: tuple, cats: list[str | None], table: Table, problems: list[Problem],
                     text_only: bool) -> list:
    """Parse and check one column; returns its values (None where empty or bad)."""
    spec = FIELDS[name]
    allowed = set(spec.categories)
    values: list = [None] * len(cells)
    cache: dict[object, float | str] = {}
    missing = object()
    if text_only and spec.common and name in _FREE_TEXT:  # any text, any category: strip only
        return [c.strip() or None for c in cells]
    if text_only:
        filled = list(compress(range(len(cells)), cells))  # non-empty strings, at C speed
    else:  # spreadsheets and JSON: 0 is a value, not an empty cell
        filled = [i for i, c in enumerate(cells) if c is not None and c != ""]
    for i in filled:
        cell = cells[i]
        cat = cats[i]
        if cat is not None and cat not in allowed:
            if isinstance(cell, str) and not cell.strip():
                continue
            line, key = _where(table, i)
            problems.append(Problem(f"{name} belongs to {', '.join(spec.categories)}, not to {cat}; "
                                    f"leave it empty for a {cat}", line, name, key))
            continue
        value = cache.get(cell, missing) if isinstance(cell, str) else missing
        if value is missing:
            if isinstance(cell, str) and not cell.strip():
                continue
            try:
                if spec.text:
                    value = _text_value(name, cell, cat)
                else:
                    value = parse_cell(cell, spec.kind, table.decimal_comma)
                    why = _check_value(name, value, cell)  # type: ignore[arg-type]
                    if why:
                        raise QuantityError(why)
            except QuantityError as exc:
                line, key = _where(table, i)
                problems.append(Problem(exc.message, line, name, key))
                continue
            if name != "subtype" and isinstance(cell, str):  # the subtype check depends on the category
                cache[cell] = value
        values[i] = value
    return values


def _text_cell(cell: object) -> str:
    if isinstance(cell, float) and cell.is_integer():
        return str(int(cell))
    return str(cell).strip()


def _text_value(name: str, cell: object, cat: str | None) -> str:
    if isinstance(cell, bool) or not isinstance(cell, (str, int, float)):
        raise QuantityError(f"{cell!r} is not text")
    text = _text_cell(cell)
    if name == "subtype":
        text = text.lower()
        if cat is not None and text not in CATEGORIES[cat]:
            raise QuantityError(_choice_message(f"subtype of a {cat}", text, CATEGORIES[cat]))
    elif name == "status":
        text = text.lower()
        if text not in STATUSES:
            raise QuantityError(_choice_message("status", text, STATUSES))
    elif name == "dielectric":
        text = text.upper()
        if text not in DIELECTRICS:
            hint = " (NP0 is written C0G)" if text in ("NP0", "NPO") else ""
            raise QuantityError(_choice_message("dielectric", text, DIELECTRICS) + hint)
    return text


def _cross_checks(values: dict[str, list], table: Table, problems: list[Problem]) -> None:
    for low, high in (("ctr_min", "ctr_max"), ("ika_min", "ika_max")):
        if not (any(values[low]) and any(values[high])):
            continue
        for i, (lo, hi) in enumerate(zip(values[low], values[high])):
            if lo is not None and hi is not None and lo > hi:
                line, key = _where(table, i)
                problems.append(Problem(f"{low} {lo!r} is above {high} {hi!r}", line, low, key))
    for i, (dielectric, subtype) in enumerate(zip(values["dielectric"], values["subtype"]) if any(
            values["dielectric"]) else ()):
        if dielectric is not None and subtype not in (None, "ceramic"):
            line, key = _where(table, i)
            problems.append(Problem(f"a dielectric code is for ceramic capacitors, not {subtype}",
                                    line, "dielectric", key))


def _validate_curve_table(table: Table, category: dict[str, str | None], problems: list[Problem]) -> dict:
    own: list[Problem] = []
    names, _ = _header(table, CURVE_COLUMNS, own, each_lists=True)
    missing = [c for c in CURVE_COLUMNS if c not in names]
    if missing and not own:
        own.append(Problem(f"the curve file needs the columns {', '.join(CURVE_COLUMNS)}; "
                           f"missing: {', '.join(missing)}", table.header_line))
    if own:
        problems.extend(Problem(p.message, p.line, p.column, p.key, table.file) for p in own)
        return {}
    idx = {name: names.index(name) for name in CURVE_COLUMNS}
    points = []
    for row, line in zip(table.rows, table.lines):
        cells = list(row) + [None] * (len(names) - len(row))
        points.append((_text_cell(cells[idx["part_number"]]) if not _is_empty(cells[idx["part_number"]]) else "",
                       "" if _is_empty(cells[idx["curve"]]) else _text_cell(cells[idx["curve"]]).lower(),
                       cells[idx["x"]], cells[idx["y"]], line, None))
    return _validate_curves(points, category, table.file, problems, side=True, decimal_comma=table.decimal_comma)


def _validate_curves(points, category: dict[str, str | None], file: str, problems: list[Problem], *,
                     side: bool, decimal_comma: bool = False) -> dict:
    """Check curve points; returns {part_number: {curve: ((x, y), ...)}} for every part in the file."""
    out: dict[str, dict[str, list[tuple[float, float]]]] = {pn: {} for pn in category}
    sfile = file if side else None

    first_point: dict[tuple[str, str], tuple[int | None, str | None]] = {}
    spoiled: set[tuple[str, str]] = set()  # curves with a bad point: "one point" would be a follow-on error

    def bad(msg, line, column, key, curve=None):
        problems.append(Problem(msg, line, column, key, sfile))
        if curve is not None:
            spoiled.add(curve)

    for pn, name, xcell, ycell, line, key in points:
        if not pn:
            bad("the part number is empty", line, "part_number", key)
            continue
        if pn not in category:
            bad(f"part {pn!r} is not among the parts of this import", line, "part_number", key)
            continue
        if name not in CURVES:
            bad(_choice_message("curve", name or "(empty)", CURVES), line, "curve", key)
            continue
        spec = CURVES[name]
        cat = category[pn]
        if cat is not None and cat not in spec.categories:
            bad(f"a {name} curve is for {', '.join(spec.categories)}, not for {cat} {pn!r}", line, "curve", key)
            continue
        first_point.setdefault((pn, name), (line, key))
        try:
            if _is_empty(xcell):
                raise QuantityError("x is empty")
            x = parse_cell(xcell, spec.x_kind, decimal_comma)
        except QuantityError as exc:
            bad(exc.message, line, "x", key, (pn, name))
            continue
        try:
            if _is_empty(ycell):
                raise QuantityError("y is empty")
            y = parse_cell(ycell, None, decimal_comma)
            if y < 0:
                raise QuantityError(f"{ycell!r} is not allowed: y is a multiplier or fraction and cannot be negative")
        except QuantityError as exc:
            bad(exc.message, line, "y", key, (pn, name))
            continue
        curve = out[pn].setdefault(name, [])
        if curve and not x > curve[-1][0]:
            bad(f"x {format_quantity(x, spec.x_kind)} does not increase on the previous point's "
                f"{format_quantity(curve[-1][0], spec.x_kind)}; list the points of a curve in increasing x",
                line, "x", key, (pn, name))
            continue
        curve.append((x, y))
    for pn, curves in out.items():
        for name, pts in curves.items():
            if len(pts) == 1 and (pn, name) not in spoiled:
                line, key = first_point[(pn, name)]
                bad(f"the {name} curve of {pn!r} has one point; a curve needs at least two", line, "curve", key)
    return {pn: {name: tuple(pts) for name, pts in sorted(c.items(), key=lambda kv: list(CURVES).index(kv[0]))}
            for pn, c in out.items()}
