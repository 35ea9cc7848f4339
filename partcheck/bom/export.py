"""Write a BOM back out with extra columns (the check's verdict per line), as CSV or XLSX.

The annotated file keeps every column of the original row, in the original order, and appends
the extra columns.  Spreadsheet programs run a cell that starts with ``=``, ``+``, ``-``, ``@``,
a tab or a carriage return as a formula, so every such cell gets a leading apostrophe
(common practice against formula injection); the text is otherwise written as read.
"""

from __future__ import annotations

import csv
from os import PathLike
from pathlib import Path
from typing import Any, Final

from ..errors import BomError
from .read import Bom

FORMULA_STARTS: Final = ("=", "+", "-", "@", "\t", "\r")


def neutralise(value: Any) -> str:
    """The cell text with a leading apostrophe when a spreadsheet would run it as a formula."""
    if value is None:
        return ""
    text = str(value)
    return "'" + text if text.startswith(FORMULA_STARTS) else text


def annotated_rows(bom: Bom, extra_columns: dict[str, list] | None = None) -> tuple[list[str], list[list[str]]]:
    """Header and rows (neutralised): the original columns, a ``line`` column, then the extra ones."""
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
        row = [str(line.line)] + [line.raw.get(h, "") for h in bom.headers] + [extra[n][i] for n in extra]
        rows.append([neutralise(c) for c in row])
    return [neutralise(h) for h in header], rows


def write_annotated_bom(bom: Bom, extra_columns: dict[str, list] | None, path: str | PathLike[str]) -> Path:
    """Write ``bom`` with ``extra_columns`` (one value per BOM line) to ``path`` (``.csv`` or ``.xlsx``)."""
    target = Path(path)
    header, rows = annotated_rows(bom, extra_columns)
    suffix = target.suffix.lower()
    if suffix == ".xlsx":
        from openpyxl import Workbook
        from openpyxl.styles import Font

        book = Workbook()
        sheet = book.active
        sheet.title = "BOM"
        sheet.append(header)
        for row in rows:
            sheet.append(row)
        for cell in sheet[1]:
            cell.font = Font(bold=True)
        for row in sheet.iter_rows():
            for cell in row:
                cell.data_type = "s"  # text, never a formula or a number guessed from text
        book.save(target)
    elif suffix in (".csv", ".txt", ""):
        with target.open("w", encoding="utf-8-sig", newline="") as fh:
            writer = csv.writer(fh)
            writer.writerow(header)
            writer.writerows(rows)
    else:
        raise BomError(f"cannot write {target.name}: expected a .csv or .xlsx file name", file=target)
    return target
