"""Read a bill of materials as a schematic tool or a spreadsheet wrote it.

:func:`read_bom` accepts CSV, TSV, semicolon-separated text and XLSX.  It sniffs the delimiter,
finds the header row even below title rows, maps the columns through the synonym table in
:mod:`partcheck.bom.columns`, expands reference ranges, and reads each line's values with the
project's quantity parser.  Cells are plain text: nothing is evaluated, nothing is treated as
HTML or as a formula.

A line that cannot be fully read keeps its place in :attr:`Bom.lines` with a warning saying why;
only a file that is not a BOM at all (binary, empty, no reference column) raises
:class:`~partcheck.errors.BomError`.
"""

from __future__ import annotations

import csv
import io
import math
import re
from collections import Counter
from dataclasses import dataclass, field
from os import PathLike
from pathlib import Path
from typing import Any, Final, Mapping

import pandas as pd

from ..errors import BomError, PartcheckError
from .columns import POSITIVE_FIT_HEADERS, classify_header, map_header, merge_overrides, normalise_header
from .values import read_content

#: The largest number of references one range may expand to.
MAX_EXPANSION: Final = 10_000
#: How many rows from the top are searched for the header row.
HEADER_SEARCH_ROWS: Final = 40

_DELIMITERS: Final = (",", ";", "\t", "|")
_DELIMITER_NAMES: Final = {",": "comma", ";": "semicolon", "\t": "tab", "|": "pipe"}
_TRUE_WORDS: Final = frozenset({"x", "yes", "y", "1", "true", "dnf", "dnp", "nf", "np", "not fitted",
                                "do not fit", "do not populate", "no pop", "nopop", "omit", "n/f"})
_FALSE_WORDS: Final = frozenset({"no", "n", "0", "false", "dnf", "dnp", "nf", "np", "not fitted", "-", "omit", "none"})
_DNF_VALUES: Final = frozenset({"dnf", "dnp", "nf", "np", "not fitted", "do not fit", "do not populate",
                                "no pop", "nopop", "n/f"})


@dataclass
class BomLine:
    """One line of a BOM, as read.

    ``line`` is the 1-based line in the file (the spreadsheet row for XLSX).  ``raw`` holds every
    cell of the row under its header text, untouched.  ``values`` holds the quantities read from
    the cells in SI units (``capacitance`` [F], ``resistance`` [Ω], ``inductance`` [H],
    ``v_rated`` [V], ``i_rated`` [A], ``p_rated`` [W], ``tolerance`` [fraction]).
    """

    line: int
    refs: tuple[str, ...]
    qty: int | None = None
    value_text: str = ""
    description: str = ""
    part_number: str = ""
    package: str | None = None
    voltage_text: str = ""
    dielectric: str | None = None
    tolerance_text: str = ""
    dnf: bool = False
    raw: dict[str, str] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)
    values: dict[str, float] = field(default_factory=dict)
    category_hint: str | None = None
    categories: tuple[str, ...] = ()
    subtype_hint: str | None = None
    uncatalogued: str | None = None
    package_text: str = ""

    @property
    def text(self) -> str:
        """The line's value and description as read (what the user recognises the line by)."""
        parts = [p for p in (self.value_text.strip(), self.description.strip()) if p]
        if not parts and self.part_number:
            parts = [self.part_number.strip()]
        return " | ".join(parts)


@dataclass
class Bom:
    """A BOM as read: its lines in file order, notices about the file as a whole, the column map."""

    path: str
    lines: list[BomLine]
    notices: list[str] = field(default_factory=list)
    column_map: dict[str, str] = field(default_factory=dict)  # canonical field → header text
    headers: list[str] = field(default_factory=list)  # every header, in file order
    header_line: int = 0
    delimiter: str | None = None  # None for XLSX
    encoding: str | None = None  # None for XLSX
    decimal_comma: bool = False
    sheet: str | None = None
    column_index: dict[str, int] = field(default_factory=dict)  # canonical field → index into headers
    # canonical field → how its column was chosen: "given" (an override), "name" (a synonym of the
    # field), "partial" (the header only contains a synonym, "Supplier Part Number")
    column_basis: dict[str, str] = field(default_factory=dict)

    def column_report(self) -> list[str]:
        """Which column each field was read from and which columns were ignored, as lines of text.

        The first line is the summary, ``"BOM columns: ref ← 'Designator', part_number ← 'Mfr P/N';
        ignored: 'Footprint'"`` (fields in column order); one more line follows for each column
        taken by a partial name match, which is a guess the user should confirm.
        """
        index = dict(self.column_index)
        for f, header in self.column_map.items():  # a Bom built by hand: find the header by its text
            if f not in index and header in self.headers:
                index[f] = self.headers.index(header)
        used = sorted(index.items(), key=lambda item: (item[1], item[0]))
        taken = set(index.values())
        fields = ", ".join(f"{f} ← {self._header(i)!r}" for f, i in used) or "none"
        ignored = ", ".join(repr(h) for i, h in enumerate(self.headers) if i not in taken) or "none"
        lines = [f"BOM columns: {fields}; ignored: {ignored}"]
        for f, i in used:
            if self.column_basis.get(f) == "partial":
                lines.append(f"BOM column {self._header(i)!r} was read as {f} because its name contains a {f} "
                             f"header word; if that is wrong, name the column with --columns {f}=<header> "
                             "or [bom_read] columns in the design file")
        return lines

    def _header(self, i: int) -> str:
        return self.headers[i] if 0 <= i < len(self.headers) else f"column {i + 1}"


# --------------------------------------------------------------------------------------------
# Reference designators
# --------------------------------------------------------------------------------------------

_REF_RE: Final = re.compile(r"^([A-Za-z][A-Za-z_]*?)(\d+)([A-Za-z]?)$")
_RANGE_RE: Final = re.compile(r"^(\S+?)\s*(?:\.\.|-|–|—|:)\s*(\S+)$")


def expand_refs(text: str) -> tuple[str, ...]:
    """Expand ``"C1-C4"``, ``"C1, C2 C3"``, ``"R1..R3"``, ``"C7-9"`` into single references.

    Raises
    ------
    BomError
        For a backwards range (``C4-C1``), a range across prefixes (``C1-R3``), a range end that
        is not a reference, or a range of more than :data:`MAX_EXPANSION` references.
    """
    if text is None:
        return ()
    # Join "C1 - C4" and "R1 .. R3" so that whitespace splitting keeps a range together.
    joined = re.sub(r"\s*(\.\.|–|—)\s*", r"\1", str(text).strip())
    joined = re.sub(r"(?<=\w)\s+-\s+(?=\w)", "-", joined)
    refs: list[str] = []
    for tok in re.split(r"[\s,;/+]+", joined):
        if not tok:
            continue
        m = _RANGE_RE.match(tok)
        if m and not _REF_RE.match(tok):
            refs.extend(_expand_range(tok, m.group(1), m.group(2)))
        else:
            refs.append(tok)
    return tuple(refs)


def _expand_range(tok: str, start: str, end: str) -> list[str]:
    ms = _REF_RE.match(start)
    if not ms or ms.group(3):
        raise BomError(f"reference range {tok!r}: {start!r} is not a reference such as C1")
    prefix, first = ms.group(1), int(ms.group(2))
    if end.isdigit():
        last, end_prefix = int(end), prefix
    else:
        me = _REF_RE.match(end)
        if not me or me.group(3):
            raise BomError(f"reference range {tok!r}: {end!r} is not a reference such as {prefix}{first + 3}")
        end_prefix, last = me.group(1), int(me.group(2))
    if end_prefix.upper() != prefix.upper():
        raise BomError(f"reference range {tok!r} runs from prefix {prefix!r} to {end_prefix!r}; "
                       f"a range must keep one prefix (for example {prefix}{first}-{prefix}{max(last, first)})")
    if last < first:
        raise BomError(f"reference range {tok!r} runs backwards; write it as {prefix}{last}-{prefix}{first}")
    if last - first + 1 > MAX_EXPANSION:
        raise BomError(f"reference range {tok!r} would expand to {last - first + 1:,} references "
                       f"(at most {MAX_EXPANSION:,} are read from one range)")
    return [f"{prefix}{n}" for n in range(first, last + 1)]


# --------------------------------------------------------------------------------------------
# File → grid of (line number, cells)
# --------------------------------------------------------------------------------------------

def _decode(data: bytes, path: Path, notices: list[str]) -> tuple[str, str]:
    if data.startswith(b"\xef\xbb\xbf"):
        try:
            return data[3:].decode("utf-8"), "utf-8-sig"
        except UnicodeDecodeError as exc:
            raise BomError(f"starts with a UTF-8 byte-order mark but byte {exc.start + 3} is not UTF-8",
                           file=path) from None
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        try:
            return data.decode("utf-16"), "utf-16"
        except UnicodeDecodeError:
            raise BomError("starts with a UTF-16 byte-order mark but is not UTF-16 text", file=path) from None
    try:
        return data.decode("utf-8"), "utf-8"
    except UnicodeDecodeError as exc:
        text = data.decode("cp1252", errors="replace")
        notices.append(f"the file is not UTF-8 (byte {exc.start} is 0x{data[exc.start]:02x}); "
                       "read it as Windows-1252 (cp1252) — check that µ, Ω and ± read correctly")
        return text, "cp1252"


def _not_a_table(data: bytes, path: Path) -> None:
    if not data.strip():
        raise BomError("the file is empty; expected a table with a header row such as "
                       "Reference, Qty, Value, Description", file=path)
    if data.startswith(b"%PDF"):
        raise BomError("this is a PDF document, not a table; export the BOM from the schematic tool "
                       "or spreadsheet as CSV or XLSX", file=path)
    if data.startswith(b"\xd0\xcf\x11\xe0"):
        raise BomError("this is an old binary Office file (.xls); save it as .xlsx or .csv", file=path)
    head = data[:4096]
    if b"\x00" in head and not head.startswith((b"\xff\xfe", b"\xfe\xff")):
        half = len(head) // 2
        if half >= 2 and max(head[1::2].count(0), head[0::2].count(0)) > 0.9 * half:  # every other byte NUL
            raise BomError("this looks like UTF-16 text without a byte-order mark; save it as UTF-8 "
                           "(or as UTF-16 with a byte-order mark)", file=path)
        raise BomError("this is a binary file, not a text table; expected CSV, TSV, semicolon text or XLSX",
                       file=path)


def _sniff(text: str) -> str:
    """The delimiter whose field count is the same on the most lines (title rows are outvoted)."""
    lines = [ln for ln in text.splitlines()[:200] if ln.strip()]
    best, best_key = ",", (-1, -1)
    for delim in _DELIMITERS:
        try:
            counts = [len(row) for row in csv.reader(lines, delimiter=delim)]
        except csv.Error:  # a cell beyond the field limit: _text_grid reports it with its line
            continue
        multi = [c for c in counts if c > 1]
        if not multi:
            continue
        mode, n = Counter(multi).most_common(1)[0]
        key = (n, mode)
        if key > best_key:
            best, best_key = delim, key
    return best


def _text_grid(text: str, delimiter: str) -> list[tuple[int, list[str]]]:
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter)
    grid: list[tuple[int, list[str]]] = []
    line = 1
    try:
        for row in reader:
            grid.append((line, row))
            line = reader.line_num + 1
    except csv.Error as exc:
        if "field limit" in str(exc):
            raise BomError(f"a cell is longer than {csv.field_size_limit():,} characters, more than any BOM cell "
                           "holds; is this the right file?", line=reader.line_num) from None
        raise BomError(f"cannot split the text into cells: {exc}", line=reader.line_num) from None
    if text.count('"') % 2 and grid:
        # An odd number of quotes may mean the file ends inside a quoted cell (a truncated file);
        # the lenient reader above would swallow the rest of the file into that cell silently.
        try:
            for _row in csv.reader(io.StringIO(text, newline=""), delimiter=delimiter, strict=True):
                pass
        except csv.Error as exc:
            if "unexpected end of data" in str(exc):
                raise BomError("the file ends inside a quoted cell that starts on this line; is the file "
                               "truncated, or is a closing '\"' missing?", line=grid[-1][0]) from None
    return grid


def _xlsx_grid(path: Path, sheet: str | None, notices: list[str]) -> tuple[list[tuple[int, list[str]]], str]:
    try:
        book = pd.ExcelFile(path, engine="openpyxl")
    except Exception as exc:  # noqa: BLE001 - zip/XML errors of every kind: the file is not a workbook
        raise BomError(f"cannot open it as an XLSX workbook ({type(exc).__name__}: {exc})", file=path) from None
    with book:
        names = [str(n) for n in book.sheet_names]
        if sheet is None:
            if not names:
                raise BomError("the workbook has no sheets", file=path)
            chosen = names[0]
            if len(names) > 1:
                notices.append(f"read the first sheet {chosen!r} of {len(names)} ({', '.join(names)}); "
                               "choose another with --sheet")
        elif sheet in names:
            chosen = sheet
        else:
            raise BomError(f"no sheet named {sheet!r}; the workbook has {', '.join(map(repr, names))}", file=path)
        frame = pd.read_excel(book, sheet_name=chosen, header=None, dtype=object, keep_default_na=False,
                              na_filter=False)
    grid = []
    for idx, row in enumerate(frame.itertuples(index=False, name=None)):
        grid.append((idx + 1, [_cell_text(v) for v in row]))
    return grid, chosen


def _cell_text(value: object) -> str:
    if value is None:
        return ""
    if isinstance(value, float):
        if math.isnan(value):
            return ""
        if value.is_integer() and abs(value) < 1e15:
            return str(int(value))
        return repr(value)
    if hasattr(value, "isoformat"):
        return value.isoformat()
    return str(value)


# --------------------------------------------------------------------------------------------
# Header, columns, lines
# --------------------------------------------------------------------------------------------

def _find_header(grid, overrides, path) -> tuple[int, dict[str, int]]:
    best_i, best_map, best_score = -1, {}, 0.0
    for i, (_line, cells) in enumerate(grid[:HEADER_SEARCH_ROWS]):
        mapping, score = map_header(cells, overrides)
        if "ref" in mapping:
            score += 1.0
        if score > best_score:
            best_i, best_map, best_score = i, mapping, score
    if best_i < 0 or "ref" not in best_map:
        widths = [len([c for c in cells if c.strip()]) for _l, cells in grid]
        if widths and max(widths) <= 1:
            raise BomError("this is not a table: every line holds a single cell; expected a CSV/TSV/semicolon "
                           "file or XLSX sheet with a header row such as Reference, Qty, Value, Description",
                           file=path)
        row = grid[best_i][1] if best_i >= 0 else next((c for _l, c in grid if any(x.strip() for x in c)), [])
        found = ", ".join(repr(c.strip()) for c in row if c.strip()) or "none"
        wanted = f"column named {overrides['ref']!r} (from the column overrides)" if "ref" in overrides else \
            "reference column (Reference, Designator, RefDes, Ref, Parts)"
        raise BomError(f"found no {wanted}; the header row looks like: {found}. "
                       "Name the column with --columns ref=<header> (or in the design file's [bom_read] "
                       "columns)", file=path,
                       line=grid[best_i][0] if best_i >= 0 else None)
    missing = [f for f in overrides if f not in best_map]
    if missing:
        raise BomError(f"the column overrides (--columns or [bom_read] columns) name "
                       f"{', '.join(repr(overrides[f]) for f in missing)} but the header row "
                       f"has {', '.join(repr(c) for c in grid[best_i][1] if c.strip())}",
                       file=path, line=grid[best_i][0])
    return best_i, best_map


def _detect_decimal_comma(rows, mapping) -> str | None:
    """The first cell written with a decimal comma ("4,7µF", "0,47"), when such cells outnumber decimal points."""
    cols = [mapping[f] for f in ("value", "voltage", "tolerance", "description") if f in mapping]
    comma = point = 0
    example = None
    for _line, cells in rows:
        for c in cols:
            if c < len(cells):
                hits = len(re.findall(r"(?<![\d,.])\d+,\d+(?![\d,.])", cells[c]))
                comma += hits
                point += len(re.findall(r"(?<![\d,.])\d+\.\d+(?![\d,.])", cells[c]))
                if hits and example is None:
                    example = cells[c].strip()
    return example if comma > 0 and comma >= point else None


def _parse_qty(text: str) -> tuple[int | None, str | None]:
    t = text.strip()
    if not t:
        return None, None
    m = re.fullmatch(r"(\d+)(?:[.,]0+)?\s*(?:pcs|pc|x|stk)?\.?", t, re.IGNORECASE)
    if m:
        return int(m.group(1)), None
    return None, f"quantity {t!r} is not a whole number; the reference count is used"


def _dnf_flag(header: str, cell: str, value_text: str) -> tuple[bool, str | None]:
    c = cell.strip().lower()
    if normalise_header(header) in POSITIVE_FIT_HEADERS:
        if c in _FALSE_WORDS:
            return True, f"column {header!r} says {cell.strip()!r}"
    elif c in _TRUE_WORDS:
        return True, f"column {header!r} says {cell.strip()!r}"
    if value_text.strip().lower() in _DNF_VALUES:
        return True, f"the value is {value_text.strip()!r}"
    return False, None


def read_bom(
    path: str | PathLike[str],
    *,
    sheet: str | None = None,
    columns: dict[str, str] | None = None,
    decimal_comma: bool | None = None,
    defaults: Mapping[str, Any] | None = None,
) -> Bom:
    """Read a BOM file into a :class:`Bom`.

    Parameters
    ----------
    path:
        A ``.csv``/``.tsv``/``.txt`` text table (comma, semicolon, tab or pipe; sniffed) or an
        ``.xlsx`` workbook (recognised by its content, whatever the suffix).
    sheet:
        The XLSX sheet to read; the first sheet when omitted.
    columns:
        Header overrides ``{"ref": "Designator", "value": "Val"}`` (canonical field names or
        their aliases) that win over the synonym table.
    decimal_comma:
        Force (``True``) or forbid (``False``) decimal commas; detected when ``None``.
    defaults:
        The same settings from a design file's ``[bom_read]`` table (``{"columns": {...},
        "sheet": ..., "decimal_comma": ...}``, see :attr:`partcheck.design.Design.bom_read`), used
        where the arguments above are ``None``; column overrides are merged field by field
        (:func:`~partcheck.bom.columns.merge_overrides`, the arguments win).  A ``sheet`` from
        the defaults is ignored, with a notice, when the file is a text table.

    Raises
    ------
    BomError
        When the file is missing, empty, binary, a PDF, not a table, has no reference column, or
        a reference range is nonsense; the message names the file, line and column.
    """
    p = Path(path)
    notices: list[str] = []
    defaults = dict(defaults or {})
    unknown = sorted(set(defaults) - {"columns", "sheet", "decimal_comma"})
    if unknown:
        raise TypeError(f"read_bom defaults: unknown setting {', '.join(unknown)}; expected columns, sheet, "
                        "decimal_comma")
    overrides = merge_overrides(defaults.get("columns"), columns)
    if decimal_comma is None:
        decimal_comma = defaults.get("decimal_comma")
    default_sheet = defaults.get("sheet") if sheet is None else None
    try:
        data = p.read_bytes()
    except FileNotFoundError:
        raise BomError("no such file", file=p) from None
    except IsADirectoryError:
        raise BomError("is a directory, not a BOM file", file=p) from None
    except OSError as exc:
        raise BomError(f"cannot read the file: {exc.strerror}", file=p) from None
    is_zip = data.startswith(b"PK\x03\x04")
    if not is_zip:
        _not_a_table(data, p)
    delimiter = encoding = chosen_sheet = None
    if is_zip or p.suffix.lower() in (".xlsx", ".xlsm"):
        grid, chosen_sheet = _xlsx_grid(p, sheet if sheet is not None else default_sheet, notices)
    else:
        if default_sheet is not None:
            notices.append(f"the design file's [bom_read] sheet {default_sheet!r} does not apply to a text table; "
                           "ignored")
        if sheet is not None:
            raise BomError(f"--sheet {sheet!r} was given but this is a text table, not an XLSX workbook", file=p)
        text, encoding = _decode(data, p, notices)
        delimiter = _sniff(text)
        try:
            grid = _text_grid(text, delimiter)
        except BomError as exc:
            raise exc.located(file=p) from None
    if not any(any(c.strip() for c in cells) for _l, cells in grid):
        raise BomError("the file holds no cells; expected a table with a header row", file=p)

    head_i, mapping = _find_header(grid, overrides, p)
    header_line, header_cells = grid[head_i]
    headers = [c.strip() for c in header_cells]
    body = grid[head_i + 1:]
    if decimal_comma is None:
        example = _detect_decimal_comma(body, mapping)
        decimal_comma = example is not None
        if decimal_comma:
            notices.append(f"read numbers with decimal commas (cells such as {example!r}); "
                           "if that is wrong, read the file with --no-decimal-comma")
    column_map = {f: headers[i] for f, i in mapping.items()}
    column_basis = {f: "given" if f in overrides else "name" if classify_header(headers[i])[1] >= 1.0 else "partial"
                    for f, i in mapping.items()}
    # pandas keeps the body as a frame of plain strings (no type guessing, no NaN).
    width = max([len(headers)] + [len(c) for _l, c in body])
    names = [h if h else f"column {i + 1}" for i, h in enumerate(headers + [""] * (width - len(headers)))]
    seen: Counter[str] = Counter()
    unique = []
    for n in names:
        seen[n] += 1
        unique.append(n if seen[n] == 1 else f"{n} ({seen[n]})")
    frame = pd.DataFrame([cells + [""] * (width - len(cells)) for _l, cells in body], columns=unique, dtype=object)
    frame.insert(0, "__line__", [ln for ln, _c in body])

    lines: list[BomLine] = []
    first_seen: dict[str, int] = {}
    for record in frame.itertuples(index=False, name=None):
        line_no, cells = record[0], [str(c) for c in record[1:]]
        if not any(c.strip() for c in cells):
            continue

        def cell(f: str, cells: list[str] = cells) -> str:
            i = mapping.get(f)
            return cells[i].strip() if i is not None and i < len(cells) else ""

        raw = {unique[i]: cells[i] for i in range(len(unique))}
        warnings: list[str] = []
        try:
            refs = expand_refs(cell("ref"))
        except BomError as exc:
            raise exc.located(file=p, line=line_no, column=column_map["ref"]) from None
        if not refs:
            warnings.append(f"no reference designator in column {column_map['ref']!r}")
        beyond = [c.strip() for c in cells[len(headers):] if c.strip()]
        if beyond:  # a row wider than the header: a stray delimiter shifts cells into the wrong columns
            warnings.append(f"{len(beyond)} cell{'s' if len(beyond) != 1 else ''} beyond the header's "
                            f"{len(headers)} columns (ignored): {', '.join(repr(c[:20]) for c in beyond[:3])}; "
                            "check for a stray delimiter")
        qty, qty_warning = _parse_qty(cell("qty"))
        if qty_warning:
            warnings.append(qty_warning)
        value_text = cell("value")
        dnf, _why = (False, None)
        if "dnf" in mapping:
            dnf, _why = _dnf_flag(column_map["dnf"], cell("dnf"), value_text)
        elif value_text.lower() in _DNF_VALUES:
            dnf = True
        if qty is not None and refs and qty != len(refs) and not (dnf and qty == 0):
            warnings.append(f"quantity says {qty} but {len(refs)} reference{'s' if len(refs) != 1 else ''} "
                            f"{'are' if len(refs) != 1 else 'is'} listed ({', '.join(refs[:12])}"
                            f"{', ...' if len(refs) > 12 else ''})")
        for r in refs:
            key = r.upper()
            if key in first_seen:
                where = "earlier on this line" if first_seen[key] == line_no else f"on line {first_seen[key]}"
                warnings.append(f"reference {r} appears twice: {where} and on line {line_no}")
            else:
                first_seen[key] = line_no
        try:
            content = read_content(
                refs, value_text=value_text, description=cell("description"), voltage_text=cell("voltage"),
                tolerance_text=cell("tolerance"), dielectric_text=cell("dielectric"),
                package_text=cell("package"), part_number=cell("part_number"), decimal_comma=decimal_comma,
            )
        except PartcheckError as exc:  # pragma: no cover - read_content reports, never raises
            raise exc.located(file=p, line=line_no) from None
        warnings.extend(w for w in content.warnings if not (dnf and w.startswith("value ")))
        lines.append(BomLine(
            line=line_no, refs=refs, qty=qty, value_text=value_text, description=cell("description"),
            part_number=cell("part_number"), package=content.package, voltage_text=cell("voltage"),
            dielectric=content.dielectric, tolerance_text=cell("tolerance"), dnf=dnf, raw=raw,
            warnings=warnings, values=content.values,
            category_hint=content.categories[0] if content.categories else None, categories=content.categories,
            subtype_hint=content.subtype_hint, uncatalogued=content.uncatalogued, package_text=cell("package"),
        ))
    if not lines:
        notices.append(f"the header row (line {header_line}) has no lines below it")
    if encoding == "utf-8-sig":
        notices.append("the file starts with a UTF-8 byte-order mark (read as UTF-8)")
    return Bom(path=str(p), lines=lines, notices=notices, column_map=column_map, headers=unique,
               header_line=header_line, delimiter=delimiter, encoding=encoding, decimal_comma=bool(decimal_comma),
               sheet=chosen_sheet, column_index=dict(mapping), column_basis=column_basis)
