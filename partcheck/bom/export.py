"""Write a BOM back out with extra columns (the check's verdict per line), as CSV or XLSX.

The annotated file keeps every column of the original row, in the original order, and appends
the extra columns.  The original cells are written as text, as read.  The ``line`` column and
extra values that are numbers stay numbers: in XLSX a numeric cell (with the column's number
format from ``number_formats``, e.g. ``"0.0%"`` for a utilisation held as a fraction), in CSV the
shortest text that reads back as the same float (``repr``).  Spreadsheet programs run a text cell
that starts with ``=``, ``+``, ``-``, ``@``, a tab or a carriage return as a formula, so every such
text cell gets a leading apostrophe (common practice against formula injection); a number is
never a formula and is written as it is.

Only ``.csv`` and ``.xlsx`` are written; any other extension is a :class:`BomError` (an input
error, exit code 2) naming the path and the accepted extensions.
"""

from __future__ import annotations

import csv
import math
from collections.abc import Callable
from os import PathLike
from pathlib import Path
from typing import Any, Final

from ..errors import BomError
from .read import Bom

FORMULA_STARTS: Final = ("=", "+", "-", "@", "\t", "\r")

#: The file name extensions :func:`write_annotated_bom` writes.
EXTENSIONS: Final = (".csv", ".xlsx")

Cell = str | int | float


def percent_format(fraction: float, decimals: int = 1) -> str:
    """An XLSX percent format for ``fraction`` with ``decimals`` decimals, or more when fewer would
    round a value above 1 to "100.0%" or below 1 to "100.0%" (a FAIL just over its limit must not
    read like a WARN at it)."""
    for d in range(decimals, 8):
        shown = round(fraction * 100.0, d)
        if (fraction > 1.0) == (shown > 100.0) and (fraction < 1.0) == (shown < 100.0):
            break
    return "0." + "0" * d + "%" if d else "0%"


def neutralise(value: Any) -> str:
    """The cell text with a leading apostrophe when a spreadsheet would run it as a formula."""
    if value is None:
        return ""
    text = str(value)
    return "'" + text if text.startswith(FORMULA_STARTS) else text


def _cell(value: Any) -> Cell:
    """A finite int or float stays a number; anything else becomes neutralised text."""
    if isinstance(value, bool):
        return neutralise(value)
    if isinstance(value, int):
        return value
    if isinstance(value, float):
        return value if math.isfinite(value) else neutralise(value)
    return neutralise(value)


def check_extension(path: str | PathLike[str]) -> str:
    """The lower-case extension of ``path`` when it is one :func:`write_annotated_bom` writes, else
    a :class:`BomError` naming the path and the accepted extensions."""
    target = Path(path)
    suffix = target.suffix.lower()
    if suffix not in EXTENSIONS:
        shown = f"extension {target.suffix!r}" if target.suffix else "no extension"
        raise BomError(f"cannot write the annotated BOM: {shown}; accepted extensions are "
                       f"{' and '.join(EXTENSIONS)}", file=target)
    return suffix


def annotated_rows(bom: Bom, extra_columns: dict[str, list] | None = None) -> tuple[list[str], list[list[Cell]]]:
    """Header and rows: the original columns (neutralised text), a ``line`` column (int), then the
    extra ones (numbers kept as numbers, everything else neutralised text)."""
    extra = dict(extra_columns or {})
    for name, values in extra.items():
        if len(values) != len(bom.lines):
            raise BomError(f"extra column {name!r} has {len(values)} values for {len(bom.lines)} BOM lines")
    clash = [n for n in extra if n in bom.headers or n == "line"]
    if clash:
        raise BomError(f"extra column {clash[0]!r} has the name of a column already in the BOM")
    header = ["line"] + list(bom.headers) + list(extra)
    rows = []
    for i, line in enumerate(bom.lines):
        row: list[Cell] = [int(line.line)]
        row += [neutralise(line.raw.get(h, "")) for h in bom.headers]
        row += [_cell(extra[n][i]) for n in extra]
        rows.append(row)
    return [neutralise(h) for h in header], rows


def write_annotated_bom(bom: Bom, extra_columns: dict[str, list] | None, path: str | PathLike[str], *,
                        number_formats: dict[str, str | Callable[[float], str]] | None = None) -> Path:
    """Write ``bom`` with ``extra_columns`` (one value per BOM line) to ``path`` (``.csv`` or ``.xlsx``).

    ``number_formats`` maps an extra column's name to the XLSX number format of its numeric cells,
    a format text (``"0.0%"``) or a function of the value giving one (:func:`percent_format`); CSV
    has no formats and writes the number itself.
    """
    target = Path(path)
    suffix = check_extension(target)
    header, rows = annotated_rows(bom, extra_columns)
    if suffix == ".xlsx":
        from openpyxl import Workbook
        from openpyxl.styles import Font

        formats = {header.index(name): fmt for name, fmt in (number_formats or {}).items() if name in header}
        book = Workbook()
        sheet = book.active
        sheet.title = "BOM"
        sheet.append(header)
        for row in rows:
            sheet.append(row)
        for cell in sheet[1]:
            cell.font = Font(bold=True)
            cell.data_type = "s"
        for row in sheet.iter_rows(min_row=2):
            for j, cell in enumerate(row):
                if isinstance(cell.value, (int, float)) and not isinstance(cell.value, bool):
                    cell.data_type = "n"
                    if j in formats:
                        fmt = formats[j]
                        cell.number_format = fmt(float(cell.value)) if callable(fmt) else fmt
                else:
                    cell.data_type = "s"  # text, never a formula or a number guessed from text
        book.save(target)
    else:
        with target.open("w", encoding="utf-8-sig", newline="") as fh:
            writer = csv.writer(fh)
            writer.writerow(header)
            writer.writerows([[repr(c) if isinstance(c, float) else c for c in row] for row in rows])
    return target
