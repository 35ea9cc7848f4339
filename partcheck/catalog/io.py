"""Catalog exchange files: read CSV, TSV, XLSX and JSON into cells; write CSV and JSON.

Importing is two steps that touch no database: :func:`read_table` turns a file into header and
cells (with the line of every row), :func:`partcheck.catalog.validate.validate` turns those into
SI floats, collecting *every* problem before raising one :class:`CatalogInputError`.  The store
writes the result in one transaction, so a file with one bad cell writes nothing.

Curves travel in a side file: for ``X.csv`` the curves are read from ``X.curves.csv`` beside it
(columns ``part_number,curve,x,y``; ``X.curves.tsv`` / ``X.curves.xlsx`` for the other
formats, or a sheet named ``curves`` in the workbook).  In JSON each part carries a ``curves``
object: ``{"dc_bias": [[0.0, 1.0], [12.0, 0.55]]}``.

A ``.csv`` file may be separated by ``,``, ``;`` or tabs (sniffed from its first lines, as the
BOM reader does), and numbers may be written with decimal commas (``4,7 uF``): forced with
:attr:`ReadOptions.decimal_comma`, else detected when the rating cells hold decimal commas and no
decimal points.  A spreadsheet with its own headers is read through a column mapping
(:func:`load_mapping`, :func:`add_column_options`): each mapped header is renamed to its catalog
column before validation, and every problem still names the header as written.

Export is deterministic: parts sorted by part number, columns in :data:`FIELDS` order, floats
written with ``repr`` so that every value reads back to the identical float.
"""

from __future__ import annotations

import csv
import json
import re
from collections import Counter
from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from pathlib import Path
from typing import IO

from ..errors import CatalogInputError
from .migrations import CURRENT_VERSION
from .models import CATEGORY_FIELDS, CURVE_COLUMNS, CURVES, FIELDS, PartRecord
from .validate import Problem, Table, _is_empty, _text_cell, closest, raise_problems

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
            raise CatalogInputError(f"is not valid {_DELIMITER_NAMES.get(delimiter, 'CSV')}: {exc}", file=path,
                                    line=reader.line_num) from None
    if header is None:
        raise CatalogInputError("the file is empty; expected a header row such as 'part_number,category,...'",
                                file=path)
    if rows or not yielded:
        yield Table(str(path), header, rows, lines, header_line, text_only=True)


def _read_delimited(path: Path, delimiter: str) -> Table:
    return next(iter_delimited(path, delimiter))


_DELIMITERS = (",", ";", "\t")
_DELIMITER_NAMES = {",": "CSV", ";": "semicolon-separated text", "\t": "TSV"}


def sniff_delimiter(path: Path) -> str:
    """``,``, ``;`` or tab: the delimiter whose field count is the same on the most of the first 200
    non-empty lines (the BOM reader's rule).  Unreadable files give ``,`` (the reader reports them)."""
    lines: list[str] = []
    try:
        with open(path, encoding="utf-8-sig", errors="replace", newline="") as f:
            for text in f:
                if text.strip():
                    lines.append(text)
                    if len(lines) >= 200:
                        break
    except OSError:
        return ","
    best, best_key = ",", (-1, -1)
    for delimiter in _DELIMITERS:
        try:
            counts = [len(row) for row in csv.reader(lines, delimiter=delimiter)]
        except csv.Error:
            continue
        multi = [c for c in counts if c > 1]
        if not multi:
            continue
        mode, n = Counter(multi).most_common(1)[0]
        if (n, mode) > best_key:
            best, best_key = delimiter, (n, mode)
    return best


def _delimiter(path: Path, fmt: str, options: ReadOptions | None) -> str:
    if fmt == "tsv":
        return "\t"
    delimiter = sniff_delimiter(path)
    if delimiter != "," and options is not None:
        options.note(f"{path}: read as {_DELIMITER_NAMES[delimiter]} (separated by {delimiter!r})")
    return delimiter


def iter_tables(path: str | Path, chunk: int, options: ReadOptions | None = None) -> Iterator[Table]:
    """The cells of a catalog file in tables of at most ``chunk`` rows: CSV and TSV are streamed;
    XLSX and JSON are read whole (one table).  ``options`` (a column mapping, decimal commas) apply
    to every table; decimal commas are detected on the first one and kept for the rest."""
    path = Path(path)
    fmt = file_format(path)
    if fmt in ("csv", "tsv"):
        state: dict[str, bool] = {}
        for table in iter_delimited(path, _delimiter(path, fmt, options), chunk):
            yield prepare(table, options, state)
    else:
        yield read_table(path, options)


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


def read_table(path: str | Path, options: ReadOptions | None = None) -> Table:
    """Read the cells of a catalog file (CSV, TSV, XLSX or JSON by extension), through ``options``."""
    path = Path(path)
    fmt = file_format(path)
    if fmt in ("csv", "tsv"):
        table = _read_delimited(path, _delimiter(path, fmt, options))
    elif fmt == "xlsx":
        found = _read_xlsx(path)
        assert found is not None
        table = found
    else:
        table = _read_json(path)
    return prepare(table, options)


def read_curve_table(path: str | Path, options: ReadOptions | None = None) -> Table | None:
    """The curve side file (or ``curves`` sheet) of catalog file ``path``, None when there is none.

    The column mapping does not apply (a curve file has its own four columns); the delimiter is
    sniffed and decimal commas are forced or detected as for the catalog file."""
    path = Path(path)
    fmt = file_format(path)
    if fmt == "json":
        return None
    side = curves_path(path)
    if side.exists():
        table = _read_delimited(side, _delimiter(side, fmt, options)) if fmt != "xlsx" else _read_xlsx(side)
    elif fmt == "xlsx":
        table = _read_xlsx(path, sheet="curves")
    else:
        return None
    if table is not None:
        table.decimal_comma = _decide_decimal_comma(table, ("x", "y"), options)
    return table


# --------------------------------------------------------------------------------------------
# Column mappings and decimal commas
# --------------------------------------------------------------------------------------------


@dataclass
class ReadOptions:
    """How to read a catalog file that is not in the catalog's own layout.

    ``columns`` maps a header as written in the file to a catalog column (headers match ignoring
    letter case and repeated spaces); ``values`` maps a catalog column to ``{cell text: value}``
    (``{"category": {"Cap": "capacitor"}}``); ``units`` gives the unit of a mapped header's plain
    numbers (``{"Cap. (uF)": "uF"}``: ``4,7`` reads as 4.7 µF).  ``decimal_comma`` forces (True) or forbids (False)
    decimal commas; None detects them.  ``origins`` says where each mapping entry was given (the
    mapping file and key, or the command-line option), for error messages; ``notices`` collects
    what the reader decided (a detected separator or decimal comma) for the caller to show.
    """

    columns: dict[str, str] = field(default_factory=dict)
    values: dict[str, dict[str, str]] = field(default_factory=dict)
    units: dict[str, str] = field(default_factory=dict)  # header as written -> unit of its plain numbers
    decimal_comma: bool | None = None
    origins: dict[str, str] = field(default_factory=dict)
    notices: list[str] = field(default_factory=list)
    _sources: dict[str, str] = field(default_factory=dict, repr=False)

    def note(self, text: str) -> None:
        if text not in self.notices:
            self.notices.append(text)


def _norm_header(text: object) -> str:
    return " ".join(str(text).split()).casefold()


def _target(target: object, file: str | None, key: str | None, where: str) -> str:
    """The catalog column ``target`` names; an error naming the mapping entry when it names none."""
    if not isinstance(target, str):
        raise CatalogInputError(f"{where}expected a catalog column name as text, got {target!r}", file=file, key=key)
    name = target.strip().lower()
    if name in FIELDS:
        return name
    near = closest(name, FIELDS)
    hint = f"; did you mean {near!r}?" if near else ";"
    raise CatalogInputError(f"{where}{target!r} is not a catalog column{hint} valid columns are: "
                            f"{', '.join(FIELDS)}", file=file, key=key)


def _toml_key(*parts: str) -> str:
    return ".".join(p if re.fullmatch(r"[A-Za-z0-9_-]+", p) else json.dumps(p, ensure_ascii=False) for p in parts)


def _add_column(options: ReadOptions, header: str, target: str, origin: str, file: str | None, key: str | None,
                where: str, unit: str | None = None) -> None:
    """Map ``header`` to ``target``; the same header twice from one source is an error, and the command
    line wins over the mapping file (``origin`` names the source in messages)."""
    if not header.strip():
        raise CatalogInputError(f"{where}the header to map is empty", file=file, key=key)
    norm = _norm_header(header)
    source = file or "command line"
    for known in [h for h in options.columns if _norm_header(h) == norm]:
        if options._sources.get(known) == source:
            raise CatalogInputError(f"{where}the header {header.strip()!r} is mapped twice (also by "
                                    f"{options.origins[known]})", file=file, key=key)
        del options.columns[known]
        options.units.pop(known, None)
    options.columns[header.strip()] = target
    options.origins[header.strip()] = origin
    options._sources[header.strip()] = source
    if unit is not None:
        _check_unit(unit, target, file, key, where)
        options.units[header.strip()] = unit.strip()


def _check_unit(unit: object, target: str, file: str | None, key: str | None, where: str) -> None:
    from ..errors import QuantityError
    from ..units import parse_quantity

    spec = FIELDS[target]
    if spec.text:
        raise CatalogInputError(f"{where}{target} is a text column; a unit is for rating columns", file=file, key=key)
    if not isinstance(unit, str) or not unit.strip():
        raise CatalogInputError(f"{where}expected a unit as text such as \"uF\", got {unit!r}", file=file, key=key)
    try:
        parse_quantity(f"1 {unit.strip()}", spec.kind)
    except QuantityError as exc:
        raise CatalogInputError(f"{where}{unit!r} is not a unit of {target}: {exc.message}", file=file,
                                key=key) from None


def load_mapping(path: str | Path, options: ReadOptions | None = None) -> ReadOptions:
    """Read a column-mapping TOML file into ``options`` (a new one when None).

    ``[columns]`` maps headers as written to catalog columns; ``[values.COLUMN]`` maps cell texts
    to the values to import.  A target that is not a catalog column is an error naming the file and
    the key."""
    import tomllib

    options = options or ReadOptions()
    path = Path(path)
    try:
        doc = tomllib.loads(path.read_text(encoding="utf-8-sig"))
    except FileNotFoundError:
        raise CatalogInputError("mapping file not found", file=path) from None
    except (OSError, UnicodeDecodeError) as exc:
        raise CatalogInputError(f"cannot read the mapping file: {exc}", file=path) from None
    except tomllib.TOMLDecodeError as exc:
        m = re.search(r"\(at line (\d+)", str(exc))
        raise CatalogInputError(f"is not valid TOML: {str(exc).split(' (at line')[0]}", file=path,
                                line=int(m.group(1)) if m else None) from None
    file = str(path)
    for key in doc:
        if key not in ("columns", "values"):
            near = closest(key, ("columns", "values"))
            hint = f"did you mean {near!r}? " if near else ""
            raise CatalogInputError(f"unknown table {key!r}; {hint}a mapping file has [columns] and [values.COLUMN]",
                                    file=path, key=key)
    columns = doc.get("columns", {})
    if not isinstance(columns, dict):
        raise CatalogInputError('expected a table such as [columns] "Mfr Part" = "part_number"', file=path,
                                key="columns")
    for header, target in columns.items():
        key = _toml_key("columns", header)
        unit = None
        if isinstance(target, dict):  # "Cap. (uF)" = {column = "capacitance", unit = "uF"}
            extra = sorted(set(target) - {"column", "unit"})
            if extra or "column" not in target:
                raise CatalogInputError('expected {column = "capacitance", unit = "uF"}' + (
                    f"; unknown key {extra[0]!r}" if extra else "; the column is missing"), file=path, key=key)
            unit = target.get("unit")
            target = target["column"]
        name = _target(target, file, key, "")
        _add_column(options, header, name, f"{file} key {key}", file, key, "", unit)
    values = doc.get("values", {})
    if not isinstance(values, dict):
        raise CatalogInputError('expected tables such as [values.category] "Cap" = "capacitor"', file=path,
                                key="values")
    for column, table in values.items():
        key = _toml_key("values", column)
        name = _target(column, file, key, "")
        if not isinstance(table, dict):
            raise CatalogInputError('expected a table of cell texts such as "Cap" = "capacitor"', file=path, key=key)
        for text, value in table.items():
            if not isinstance(value, (str, int, float)) or isinstance(value, bool):
                raise CatalogInputError(f"expected the value to import as text, got {value!r}", file=path,
                                        key=_toml_key("values", column, text))
        options.values.setdefault(name, {}).update({_norm_header(t): v for t, v in table.items()})
        options.origins[f"values.{name}"] = f"{file} key {key}"
    return options


def add_column_options(options: ReadOptions, items: Iterable[str], option: str = "--column") -> ReadOptions:
    """Add ``HEADER=COLUMN`` (or ``HEADER=COLUMN:UNIT``, such as ``Cap. (uF)=capacitance:uF``) pairs
    given on the command line; they win over a mapping file's."""
    for item in items:
        header, sep, target = item.rpartition("=")
        where = f"{option} {item!r}: "
        if not sep:
            raise CatalogInputError(f"{where}expected HEADER=COLUMN, for example 'Mfr Part=part_number'")
        target, colon, unit = target.partition(":")
        name = _target(target, None, None, where)
        _add_column(options, header, name, f"{option} {item!r}", None, None, where, unit if colon else None)
    return options


def prepare(table: Table, options: ReadOptions | None, state: dict[str, bool] | None = None) -> Table:
    """``table`` with the column mapping, the value translations and the decimal-comma decision of
    ``options`` applied (``state`` carries the decision from a streamed file's first chunk on)."""
    if options is None:
        return table
    if options.columns:
        _map_columns(table, options)
    state = {} if state is None else state
    if "decimal_comma" not in state:  # on the cells as written, before units are appended
        numeric = [name for name in FIELDS if not FIELDS[name].text]
        state["decimal_comma"] = _decide_decimal_comma(table, numeric, options)
    if options.units:
        _apply_units(table, options)
    if options.values:
        _translate_values(table, options)
    table.decimal_comma = state["decimal_comma"]
    return table


def _map_columns(table: Table, options: ReadOptions) -> None:
    """Rename the mapped headers of ``table`` to their catalog columns (``table.shown_columns`` keeps
    the headers as written); a mapped header the file lacks, or two headers for one column, is an error."""
    wanted = {_norm_header(h): h for h in options.columns}
    header = list(table.header)
    shown: dict[str, str] = {}  # catalog column -> header as written in the file
    entry: dict[str, str] = {}  # catalog column -> the mapping's key
    problems: list[Problem] = []
    for position, raw in enumerate(table.header):
        mapped = wanted.get(_norm_header(raw))
        if mapped is None:
            continue
        written, target = str(raw).strip(), options.columns[mapped]
        if target in shown:
            problems.append(Problem(f"both {shown[target]!r} and {written!r} are mapped to {target}; "
                                    "map only one of them", table.header_line, written))
            continue
        header[position] = target
        shown[target] = written
        entry[target] = mapped
    for raw in table.header:
        name = str(raw).strip().lower()
        if name in shown and _norm_header(raw) not in wanted:
            problems.append(Problem(f"the header has the catalog column {name!r} and also {shown[name]!r}, which "
                                    f"{options.origins[entry[name]]} maps to {name}; map or remove one of them",
                                    table.header_line, str(raw).strip()))
    present = {_norm_header(h) for h in table.header}
    names = ", ".join(repr(str(h).strip()) for h in table.header if str(h).strip())
    missing = [mapped for norm, mapped in wanted.items() if norm not in present]
    for mapped in missing:  # the header's names once: inline for one, after the list for several
        problems.append(Problem(f"{options.origins[mapped]} maps the column {mapped!r} to {options.columns[mapped]}, "
                                f"but the header has no such column{'; it has ' + names if len(missing) == 1 else ''}",
                                table.header_line, mapped))
    for target, written in shown.items():  # "Cap. (uF)": plain numbers would be read as farads
        said = _HEADER_UNIT.search(written)
        if said and not FIELDS[target].text and entry[target] not in options.units and _scales(said.group(1), target):
            problems.append(Problem(f"the header names the unit {said.group(1)!r}, but plain numbers in {target} are "
                                    f"read in SI units; give the unit in {options.origins[entry[target]]} "
                                    f"({_toml_key(entry[target])} = {{column = \"{target}\", unit = "
                                    f"\"{said.group(1)}\"}}, or --column '{entry[target]}={target}:{said.group(1)}')",
                                    table.header_line, written))
    raise_problems(table.file, problems, footer=f"the header has {names}" if len(missing) > 1 else None)
    table.header = header
    table.shown_columns = shown


_HEADER_UNIT = re.compile(r"[(\[]\s*([^()\[\]]+?)\s*[)\]]\s*$")


def _scales(unit: str, target: str) -> bool:
    """True when ``unit`` is a unit of column ``target`` other than its SI unit (µF, mΩ, kHz, %)."""
    from ..errors import QuantityError
    from ..units import parse_quantity

    try:
        return parse_quantity(f"1 {unit}", FIELDS[target].kind) != 1.0
    except (QuantityError, ValueError):
        return False


_ENDS_IN_DIGIT = re.compile(r"\d\s*$")


def _apply_units(table: Table, options: ReadOptions) -> None:
    """Append the mapped unit to the plain numbers of its column ("4,7" → "4,7 uF"); cells that
    carry their own unit are left as written."""
    by_norm = {_norm_header(h): u for h, u in options.units.items()}
    assert table.shown_columns is not None
    for target, written in table.shown_columns.items():
        unit = by_norm.get(_norm_header(written))
        if unit is None:
            continue
        position = table.header.index(target)
        for row in table.rows:
            if position >= len(row):
                continue
            cell = row[position]
            if isinstance(cell, str) and _ENDS_IN_DIGIT.search(cell):
                row[position] = f"{cell.strip()} {unit}"
            elif isinstance(cell, (int, float)) and not isinstance(cell, bool):
                row[position] = f"{cell!r} {unit}"


def _translate_values(table: Table, options: ReadOptions) -> None:
    names = [str(h).strip().lower() for h in table.header]
    for column, table_values in options.values.items():
        if column not in names:
            continue
        position = names.index(column)
        for row in table.rows:
            if position < len(row) and isinstance(row[position], str):
                value = table_values.get(_norm_header(row[position]))
                if value is not None:
                    row[position] = str(value)


_DECIMAL_COMMA = re.compile(r"(?<![\d,.])\d+,\d+(?![\d,.])")
_DECIMAL_POINT = re.compile(r"(?<![\d,.])\d+\.\d+(?![\d,.])")


def _decide_decimal_comma(table: Table, columns: Iterable[str], options: ReadOptions | None) -> bool:
    """The option's decision, else True when the cells of ``columns`` hold decimal commas ("4,7 uF")
    and no decimal points (a file that has both is read with points; its comma cells are errors)."""
    if options is not None and options.decimal_comma is not None:
        return options.decimal_comma
    if options is None:
        return False
    wanted = set(columns)
    positions = [i for i, h in enumerate(table.header) if str(h).strip().lower() in wanted]
    comma = point = 0
    example: tuple[str, int | None] | None = None
    for row, line in zip(table.rows, table.lines):
        for i in positions:
            cell = row[i] if i < len(row) else None
            if not isinstance(cell, str) or "," not in cell and "." not in cell:
                continue
            hits = len(_DECIMAL_COMMA.findall(cell))
            point += len(_DECIMAL_POINT.findall(cell))
            if hits:
                comma += hits
                if example is None:
                    example = (cell.strip(), line)
    if comma and not point and example is not None:
        at = f" on line {example[1]}" if example[1] is not None else ""
        options.note(f"{table.file}: read numbers with decimal commas (such as {example[0]!r}{at}); if that is wrong, "
                     "import with --no-decimal-comma")
        return True
    return False


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
