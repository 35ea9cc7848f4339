"""Catalog exchange files: read CSV, TSV, XLSX and JSON into cells; write CSV and JSON.

Importing is two steps that touch no database: :func:`read_table` turns a file into header and
cells (with the line of every row), :func:`partcheck.catalog.validate.validate` turns those into
SI floats, collecting *every* problem before raising one :class:`CatalogInputError`.  The store
writes the result in one transaction, so a file with one bad cell writes nothing.

Curves travel in a side file: for ``X.csv`` the curves are read from ``X.curves.csv`` beside it
(columns ``part_number,curve,x,y``; ``X.curves.tsv`` / ``X.curves.xlsx`` for the other
formats, or a sheet named ``curves`` in the workbook).  In JSON each part carries a ``curves``
object: ``{"dc_bias": [[0.0, 1.0], [12.0, 0.55]]}``.

Export is deterministic: parts sorted by part number, columns in :data:`FIELDS` order, floats
written with ``repr`` so that every value reads back to the identical float.
"""

from __future__ import annotations

import csv
import json
import re
from collections.abc import Iterable, Iterator
from pathlib import Path
from typing import IO

from ..errors import CatalogInputError
from .migrations import CURRENT_VERSION
from .models import CATEGORY_FIELDS, CURVE_COLUMNS, CURVES, FIELDS, PartRecord
from .validate import Problem, Table, _is_empty, _text_cell, raise_problems

#: File formats by extension.
FORMATS = {".csv": "csv", ".tsv": "tsv", ".txt": "tsv", ".xlsx": "xlsx", ".json": "json"}

FORMAT_NAME = "partcheck-catalog"


# --------------------------------------------------------------------------------------------
# Reading files into tables
# --------------------------------------------------------------------------------------------


def file_format(path: str | Path) -> str:
    """``csv``, ``tsv``, ``xlsx`` or ``json`` from the file's extension."""
    suffix = Path(path).suffix.lower()
    if suffix not in FORMATS:
        raise CatalogInputError(
            f"cannot tell the format from the extension {suffix or '(none)'!r}; "
            "expected .csv, .tsv, .xlsx or .json",
            file=path,
        )
    return FORMATS[suffix]


def curves_path(path: str | Path) -> Path:
    """The curve side file that belongs to catalog file ``path`` (``X.csv`` → ``X.curves.csv``)."""
    path = Path(path)
    return path.with_name(f"{path.stem}.curves{path.suffix}")


def _read_text(path: Path) -> str:
    try:
        text = path.read_text(encoding="utf-8-sig")
    except FileNotFoundError:
        raise CatalogInputError("file not found", file=path) from None
    except IsADirectoryError:
        raise CatalogInputError("is a directory, expected a catalog file", file=path) from None
    except UnicodeDecodeError as exc:
        line = path.read_bytes()[: exc.start].count(b"\n") + 1
        raise CatalogInputError("is not UTF-8 text; save it as 'CSV UTF-8'", file=path, line=line) from None
    except OSError as exc:
        raise CatalogInputError(f"cannot read the file: {exc.strerror or exc}", file=path) from None
    if "\x00" in text:
        line = text[: text.index("\x00")].count("\n") + 1
        raise CatalogInputError("contains NUL characters: UTF-16 text without a byte-order mark, or a binary "
                                "file; save it as 'CSV UTF-8'", file=path, line=line)
    return text


def _scan_text(path: Path) -> int:
    """Check, reading in bounded blocks, that ``path`` is UTF-8 text without NUL characters; returns
    the number of line breaks (for a progress bar).  On any problem the whole-file reader
    :func:`_read_text` runs to raise its precise error (file, line)."""
    import codecs

    decoder = codecs.getincrementaldecoder("utf-8")()
    newlines = 0
    try:
        with open(path, "rb") as f:
            while block := f.read(1 << 20):
                if b"\x00" in block:
                    raise ValueError("NUL")
                decoder.decode(block)
                newlines += block.count(b"\n")
            decoder.decode(b"", final=True)
    except (OSError, ValueError):  # UnicodeDecodeError is a ValueError
        _read_text(path)  # raises the precise CatalogInputError
        raise CatalogInputError("cannot read the file", file=path) from None  # pragma: no cover - changed meanwhile
    return newlines


def iter_delimited(path: Path, delimiter: str, chunk: int | None = None) -> Iterator[Table]:
    """The cells of a CSV/TSV file as tables of at most ``chunk`` rows (one table when None), read
    as a stream: memory holds one chunk, whatever the size of the file.  Every table has the
    file's header; a file with a header only gives one table without rows."""
    _scan_text(path)
    try:
        f = open(path, encoding="utf-8-sig", newline="")
    except OSError as exc:  # pragma: no cover - checked by _scan_text just before
        raise CatalogInputError(f"cannot read the file: {exc.strerror or exc}", file=path) from None
    with f:
        reader = csv.reader(f, delimiter=delimiter, strict=True)
        header: list[str] | None = None
        header_line = 1
        rows: list[list[object]] = []
        lines: list[int | None] = []
        previous = 0
        yielded = False
        try:
            for cells in reader:
                start = previous + 1
                previous = reader.line_num
                if not "".join(cells).strip():
                    continue
                if header is None:
                    header, header_line = [h.strip() for h in cells], start
                    continue
                rows.append(cells)  # type: ignore[arg-type]
                lines.append(start)
                if chunk is not None and len(rows) >= chunk:
                    yield Table(str(path), header, rows, lines, header_line, text_only=True)
                    yielded = True
                    rows, lines = [], []
        except csv.Error as exc:
            raise CatalogInputError(f"is not valid {'CSV' if delimiter == ',' else 'TSV'}: {exc}", file=path,
                                    line=reader.line_num) from None
    if header is None:
        raise CatalogInputError("the file is empty; expected a header row such as 'part_number,category,...'",
                                file=path)
    if rows or not yielded:
        yield Table(str(path), header, rows, lines, header_line, text_only=True)


def _read_delimited(path: Path, delimiter: str) -> Table:
    return next(iter_delimited(path, delimiter))


def iter_tables(path: str | Path, chunk: int) -> Iterator[Table]:
    """The cells of a catalog file in tables of at most ``chunk`` rows: CSV and TSV are streamed;
    XLSX and JSON are read whole (one table)."""
    path = Path(path)
    fmt = file_format(path)
    if fmt in ("csv", "tsv"):
        yield from iter_delimited(path, "," if fmt == "csv" else "\t", chunk)
    else:
        yield read_table(path)


def count_lines(path: str | Path) -> int | None:
    """Line breaks in a CSV/TSV file (a progress bar's total), None for other formats or unreadable files."""
    try:
        return _scan_text(Path(path)) if file_format(path) in ("csv", "tsv") else None
    except CatalogInputError:
        return None


def _xlsx_cell(value: object) -> object:
    if isinstance(value, str) or value is None or isinstance(value, (int, float)):
        return value
    return f"<{type(value).__name__} {value}>"  # dates and formulas' errors fail validation visibly


def _read_xlsx(path: Path, sheet: str | None = None) -> Table | None:
    try:
        from openpyxl import load_workbook
    except ImportError:  # pragma: no cover - openpyxl is a dependency
        raise CatalogInputError("reading .xlsx needs the openpyxl package", file=path) from None
    try:
        book = load_workbook(path, read_only=True, data_only=True)
    except FileNotFoundError:
        raise CatalogInputError("file not found", file=path) from None
    except Exception as exc:  # noqa: BLE001 - openpyxl raises many kinds for a file that is not a workbook
        raise CatalogInputError(f"is not a readable .xlsx workbook ({exc})", file=path) from None
    try:
        if sheet is not None:
            if sheet not in book.sheetnames:
                return None
            ws = book[sheet]
        else:
            ws = book.worksheets[0]
        header: list[str] | None = None
        header_line: int | None = 1
        rows: list[list[object]] = []
        lines: list[int | None] = []
        empty: list[tuple[int, int]] = []  # (row, column) of empty cells in data rows
        for number, values in enumerate(ws.iter_rows(values_only=True), start=1):
            cells = [_xlsx_cell(v) for v in values]
            if all(c is None or (isinstance(c, str) and not c.strip()) for c in cells):
                continue
            if header is None:
                header = ["" if c is None else str(c).strip() for c in cells]
                while header and header[-1] == "":
                    header.pop()
                header_line = number
                continue
            rows.append(cells)
            lines.append(number)
            empty.extend((number, i) for i, c in enumerate(cells) if c is None and i < len(header))
        sheet_name = ws.title
    finally:
        book.close()
    if header is None:
        raise CatalogInputError("the sheet is empty; expected a header row", file=path)
    if empty:
        _refuse_uncomputed_formulas(path, sheet_name, header, empty)
    return Table(str(path), header, rows, lines, header_line)


def _refuse_uncomputed_formulas(path: Path, sheet: str, header: list[str], empty: list[tuple[int, int]]) -> None:
    """A formula cell whose result was never stored (a workbook written by a script) reads as
    empty; importing it would silently drop a rating, so it is an error naming the cell."""
    from openpyxl import load_workbook

    book = load_workbook(path, read_only=True, data_only=False)
    try:
        wanted = set(empty)
        found = []
        for number, values in enumerate(book[sheet].iter_rows(values_only=True), start=1):
            for i, value in enumerate(values):
                if (number, i) in wanted and isinstance(value, str) and value.startswith("="):
                    found.append((number, i, value))
    finally:
        book.close()
    if found:
        number, i, formula = found[0]
        more = f" (and {len(found) - 1} more such cells)" if len(found) > 1 else ""
        raise CatalogInputError(
            f"the cell holds the formula {formula[:40]!r} with no stored result{more}; open and save the workbook "
            "in a spreadsheet program (or paste values) so the computed ratings are stored, then import again",
            file=path, line=number, column=header[i])


def _read_json(path: Path) -> Table:
    try:
        doc = json.loads(_read_text(path), parse_constant=lambda c: c)  # keep NaN/Infinity as text: rejected later
    except json.JSONDecodeError as exc:
        raise CatalogInputError(f"is not valid JSON: {exc.msg}", file=path, line=exc.lineno) from None
    except RecursionError:
        raise CatalogInputError("is not a catalog: its JSON arrays or objects are nested too deeply",
                                file=path) from None
    except ValueError as exc:  # an integer of more than 4300 digits ("Exceeds the limit ...")
        raise CatalogInputError(f"is not a catalog: {exc}", file=path) from None
    parts = doc.get("parts") if isinstance(doc, dict) else doc
    if not isinstance(parts, list):
        raise CatalogInputError('expected a JSON object with a "parts" list', file=path)
    version = doc.get("schema_version") if isinstance(doc, dict) else None
    if isinstance(version, int) and version > CURRENT_VERSION:
        raise CatalogInputError(f"was written with catalog schema version {version}, newer than version "
                                f"{CURRENT_VERSION} that this partcheck understands; upgrade partcheck to import it",
                                file=path, key="schema_version")
    header: list[str] = []
    seen: set[str] = set()
    for item in parts:
        if isinstance(item, dict):
            for k in item:
                if k != "curves" and k not in seen:
                    seen.add(k)
                    header.append(k)
    rows: list[list[object]] = []
    keys: list[str | None] = []
    curves: list[tuple[str, str, object, object, int | None, str | None]] = []
    problems: list[Problem] = []
    for i, item in enumerate(parts):
        key = f"parts[{i}]"
        if not isinstance(item, dict):
            problems.append(Problem("expected an object with the part's columns", key=key))
            continue
        rows.append([item.get(h) for h in header])
        keys.append(key)
        item_curves = item.get("curves") or {}
        if not isinstance(item_curves, dict):
            problems.append(Problem('"curves" must be an object such as {"dc_bias": [[0, 1.0], [12, 0.55]]}',
                                    key=f"{key}.curves"))
            continue
        for name, points in item_curves.items():
            if not isinstance(points, list):
                problems.append(Problem("expected a list of [x, y] points", key=f"{key}.curves.{name}"))
                continue
            for j, point in enumerate(points):
                pkey = f"{key}.curves.{name}[{j}]"
                if not (isinstance(point, list) and len(point) == 2):
                    problems.append(Problem("expected an [x, y] pair", key=pkey))
                    continue
                pn = item.get("part_number")
                curves.append(("" if _is_empty(pn) else _text_cell(pn), str(name), point[0], point[1], None, pkey))
    raise_problems(str(path), problems)
    return Table(str(path), header, rows, [None] * len(rows), None, keys, curves)


def read_table(path: str | Path) -> Table:
    """Read the cells of a catalog file (CSV, TSV, XLSX or JSON by extension)."""
    path = Path(path)
    fmt = file_format(path)
    if fmt == "csv":
        return _read_delimited(path, ",")
    if fmt == "tsv":
        return _read_delimited(path, "\t")
    if fmt == "xlsx":
        table = _read_xlsx(path)
        assert table is not None
        return table
    return _read_json(path)


def read_curve_table(path: str | Path) -> Table | None:
    """The curve side file (or ``curves`` sheet) of catalog file ``path``, None when there is none."""
    path = Path(path)
    fmt = file_format(path)
    if fmt == "json":
        return None
    side = curves_path(path)
    if side.exists():
        return read_table(side)
    if fmt == "xlsx":
        return _read_xlsx(path, sheet="curves")
    return None


# --------------------------------------------------------------------------------------------
# Writing
# --------------------------------------------------------------------------------------------


def _csv_cell(value: object) -> str:
    if value is None:
        return ""
    if isinstance(value, float):
        return repr(value)
    return str(value)


def write_csv(records: Iterable[PartRecord], stream: IO[str], delimiter: str = ",") -> int:
    """Write parts as catalog CSV (all :data:`FIELDS` columns); returns the number of rows."""
    writer = csv.writer(stream, delimiter=delimiter, lineterminator="\n")
    writer.writerow(FIELDS)
    count = 0
    for record in records:
        writer.writerow([_csv_cell(getattr(record, name)) for name in FIELDS])
        count += 1
    return count


def write_curves_csv(records: Iterable[PartRecord], stream: IO[str], delimiter: str = ",") -> int:
    """Write the curve side file (``part_number,curve,x,y``); returns the number of points."""
    writer = csv.writer(stream, delimiter=delimiter, lineterminator="\n")
    writer.writerow(CURVE_COLUMNS)
    count = 0
    for record in records:
        for name in CURVES:
            for x, y in record.curves.get(name, ()):
                writer.writerow([record.part_number, name, repr(float(x)), repr(float(y))])
                count += 1
    return count


def part_to_json(record: PartRecord) -> dict[str, object]:
    """A part as a JSON object: its category's columns (null when empty) and its curves."""
    obj: dict[str, object] = {name: getattr(record, name) for name in CATEGORY_FIELDS[record.category]}
    obj["curves"] = {name: [[x, y] for x, y in record.curves[name]] for name in CURVES if name in record.curves}
    return obj


def to_json(records: Iterable[PartRecord], schema_version: int) -> str:
    """The canonical JSON export (sorted keys within a fixed layout, floats as repr, one trailing newline)."""
    return "".join(iter_json(records, schema_version))


def iter_json(records: Iterable[PartRecord], schema_version: int) -> Iterator[str]:
    """The canonical JSON export in pieces (a head, one piece per part, a tail): the same text as
    ``dumps({"format": ..., "schema_version": ..., "parts": [...]})`` without holding every part."""
    yield (f'{{\n  "format": {json.dumps(FORMAT_NAME)},\n  "schema_version": {json.dumps(schema_version)},'
           '\n  "parts": [')
    first = True
    for record in records:
        text = json.dumps(part_to_json(record), indent=2, ensure_ascii=False, allow_nan=False)
        text = _POINT_RE.sub(r"[\1, \2]", text)  # JSON strings hold no raw newline: splitting lines is safe
        yield ("\n" if first else ",\n") + "\n".join("    " + line for line in text.split("\n"))
        first = False
    yield "]\n}\n" if first else "\n  ]\n}\n"


# A curve point as json.dumps(indent=...) lays it out: "[", newline, x, ",", newline, y, newline, "]".
# Requiring the newlines keeps text inside strings (which cannot hold a raw newline) untouched.
_POINT_RE = re.compile(r"\[\n\s+(-?[0-9][0-9.eE+-]*),\n\s+(-?[0-9][0-9.eE+-]*)\n\s+\]")


def dumps(obj: object) -> str:
    """Indented JSON with each curve point ``[x, y]`` kept on one line (JSON strings cannot hold a raw
    newline, so only number pairs are folded)."""
    return _POINT_RE.sub(r"[\1, \2]", json.dumps(obj, indent=2, ensure_ascii=False, allow_nan=False)) + "\n"
