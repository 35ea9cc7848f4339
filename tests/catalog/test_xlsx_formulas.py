"""A catalog workbook written by a script holds formulas without stored results; openpyxl reads
those cells as empty, which would silently drop a rating.  The import refuses such a file."""

from __future__ import annotations

import pytest
from openpyxl import Workbook

from partcheck.catalog.store import open_catalog
from partcheck.errors import CatalogInputError


def test_formula_without_stored_result_is_refused(tmp_path):
    book = Workbook()
    sheet = book.active
    sheet.append(["part_number", "category", "subtype", "capacitance", "v_rated"])
    sheet.append(["CX-1", "capacitor", "ceramic", "1e-6", "50"])
    sheet.append(["CX-2", "capacitor", "ceramic", "2.2e-6", "=20+5"])
    path = tmp_path / "parts.xlsx"
    book.save(path)
    catalog = open_catalog(tmp_path / "c.sqlite")
    try:
        with pytest.raises(CatalogInputError) as info:
            catalog.import_file(path)
        assert (info.value.line, info.value.column) == (3, "v_rated")
        assert "'=20+5' with no stored result" in info.value.message
        assert catalog.count() == 0  # all-or-nothing: the good row was not written either
    finally:
        catalog.close()


def test_empty_cells_without_formulas_still_import(tmp_path):
    book = Workbook()
    sheet = book.active
    sheet.append(["part_number", "category", "subtype", "capacitance", "v_rated", "esr"])
    sheet.append(["CX-1", "capacitor", "ceramic", "1e-6", "50", None])
    path = tmp_path / "parts.xlsx"
    book.save(path)
    catalog = open_catalog(tmp_path / "c.sqlite")
    try:
        catalog.import_file(path)
        assert catalog.get("CX-1").esr is None
    finally:
        catalog.close()
