"""Header spellings of the manufacturer part number, R-suffix and fractional-watt values, the column
report and the read settings a design file gives (``read_bom(..., defaults=...)``)."""

from __future__ import annotations

import pytest
from openpyxl import Workbook

from partcheck.bom.columns import SYNONYMS, classify_header, map_header, merge_overrides, normalise_header
from partcheck.bom.read import Bom, read_bom
from partcheck.bom.values import ohm_text, read_content, scan_text
from partcheck.errors import BomError

# ------------------------------------------------------------------ part-number header spellings

#: How schematic tools, distributors' BOM tools and spreadsheets head the manufacturer part number.
PART_NUMBER_HEADERS = (
    "Manufacturer Part Number", "Manufacturer P/N", "Manufacturer PN", "Manufacturer Part No.",
    "Manufacturer_Part_Number", "ManufacturerPartNumber", "Manufacturer's Part Number",
    "Mfr Part Number", "Mfr. Part #", "Mfr. Part No.", "MFR PN", "Mfr P/N", "Mfr#", "Mfr. #", "MfrPN",
    "Mfg Part Number", "Mfg. P/N", "MFG PN", "Mfg Part #", "Mfgr Part Number",
    "MPN", "mpn", "Part No", "Part No.", "Part #", "Part Number", "P/N", "PN", "p/n", " Part  No. ",
)

#: Headers that must NOT read as the part number: the maker, and columns of other fields.
NOT_PART_NUMBER = ("Manufacturer", "MANUFACTURER", "Mfr", "Mfr.", "Mfg", "Mfg.", "Manufacturer Name", "Mfr. Name",
                   "Maker", "#", "Item #", "No.")


@pytest.mark.parametrize("header", PART_NUMBER_HEADERS)
def test_part_number_header_spellings_are_exact_synonyms(header):
    # Exact (1.0), not a partial match, so they beat "Supplier Part Number" (0.6) in any column order.
    assert classify_header(header) == ("part_number", 1.0)


@pytest.mark.parametrize("header", NOT_PART_NUMBER)
def test_maker_and_number_sign_alone_are_not_the_part_number(header):
    assert classify_header(header)[0] != "part_number"


def test_number_sign_reads_as_no():
    assert normalise_header("Mfr. Part #") == "mfr part no"
    assert normalise_header("Mfr #") == "mfr no" and normalise_header("Mfr") == "mfr"


def test_no_synonym_is_claimed_by_two_fields():
    owners: dict[str, set[str]] = {}
    for field, names in SYNONYMS.items():
        for name in names:
            owners.setdefault(normalise_header(name).replace(" ", ""), set()).add(field)
    assert {k: v for k, v in owners.items() if len(v) > 1} == {}


@pytest.mark.parametrize("order", ["maker first", "supplier first"])
def test_maker_supplier_and_manufacturer_part_number_side_by_side(order):
    cells = ["Designator", "Manufacturer", "Supplier Part Number", "Mfg Part Number", "Comment"]
    if order == "supplier first":
        cells = ["Designator", "Supplier Part Number", "Manufacturer", "Mfr. Part #", "Comment"]
    mapping, _score = map_header(cells)
    assert cells[mapping["part_number"]] in ("Mfg Part Number", "Mfr. Part #")
    assert "Manufacturer" not in [cells[i] for i in mapping.values()]


@pytest.mark.parametrize("header", ["Manufacturer P/N", "Mfr. Part #", "MPN", "Part No.", "P/N", "Mfg Part Number"])
def test_bom_file_with_each_part_number_header(write, header):
    text = f'Designator,Manufacturer,"{header}",Comment\nD1,Invented Semi,KD-SK-40V-3A-SMA,Schottky\n'
    bom = read_bom(write("bom.csv", text))
    assert bom.column_map["part_number"] == header
    assert bom.lines[0].part_number == "KD-SK-40V-3A-SMA"
    assert bom.column_report()[0] == (f"BOM columns: ref ← 'Designator', part_number ← {header!r}, "
                                      "value ← 'Comment'; ignored: 'Manufacturer'")


# ------------------------------------------------------------------ resistance with an R

# IEC 60062 (letter and digit code): the R stands where the decimal point is, "4R7" = 4.7 Ω.
@pytest.mark.parametrize(("text", "ohms"), [("4R7", 4.7), ("R47", 0.47), ("0R1", 0.1), ("1R5", 1.5), ("10R", 10.0),
                                            ("470R", 470.0)])
def test_iec_60062_r_codes(text, ohms):
    for decimal_comma in (False, True):
        values, *_ = scan_text(text, "ohm", decimal_comma)
        assert values["resistance"] == pytest.approx(ohms)


# Common practice (not IEC 60062): a decimal number followed by R as the ohm sign.
@pytest.mark.parametrize(("text", "ohms"), [("1.5R", 1.5), ("0.1R", 0.1), ("2.2 R", 2.2), (".5R", 0.5),
                                            ("0.47r", 0.47)])
def test_trailing_r_after_a_decimal_point(text, ohms):
    values, *_ = scan_text(text, "ohm", False)
    assert values["resistance"] == pytest.approx(ohms)


def test_trailing_r_with_decimal_comma():
    values, *_ = scan_text("1,5R", "ohm", True)
    assert values["resistance"] == pytest.approx(1.5)
    # Without decimal commas the comma is refused, as "0,47" is: no silent 15 Ω or 1 Ω.
    content = read_content(("R1",), value_text="1,5R", decimal_comma=False)
    assert "resistance" not in content.values
    assert any("'1,5R'" in w and "a comma is not a decimal point" in w for w in content.warnings)


def test_ohm_text_leaves_iec_codes_alone():
    assert ohm_text("1.5R") == "1.5Ω" and ohm_text("1,5R") == "1,5Ω"
    assert [ohm_text(t) for t in ("4R7", "R47", "10R", "1.5k", "R")] == ["4R7", "R47", "10R", "1.5k", "R"]


def test_trailing_r_is_never_a_capacitance():
    content = read_content(("C1",), value_text="1.5R")
    assert "capacitance" not in content.values
    assert any("no capacitance could be read" in w for w in content.warnings)


# ------------------------------------------------------------------ fractional power ratings

# Fractional wattage ("1/4 W") is common practice on resistor descriptions.
@pytest.mark.parametrize(("text", "watts"), [("1/10 W", 0.1), ("1/4W", 0.25), ("1/8 W", 0.125), ("1/2w", 0.5),
                                             ("1/8 Watt", 0.125), ("¼W", 0.25), ("1½ W", 1.5)])
def test_fractional_watts(text, watts):
    for decimal_comma in (False, True):
        values, *_ = scan_text(text, "ohm", decimal_comma)
        assert values["p_rated"] == pytest.approx(watts)


@pytest.mark.parametrize(("value", "description", "decimal_comma", "ohms", "watts"), [
    ("1.5R", "RES 1/4W 1% 1206", False, 1.5, 0.25),
    ("1,5R", "Widerstand 1/8 W 1 % 0805", True, 1.5, 0.125),
    ("0.1R", "current sense 1/2 W", False, 0.1, 0.5),
    ("10R", "thick film 1/10 W 0603", False, 10.0, 0.1),
    ("4R7", "RES 4R7 1/10W", False, 4.7, 0.1),
    ("", "RES 10K,1/4W,5%", False, 10e3, 0.25),
])
def test_resistor_lines_read_value_and_power(value, description, decimal_comma, ohms, watts):
    content = read_content(("R1",), value_text=value, description=description, decimal_comma=decimal_comma)
    assert content.values["resistance"] == pytest.approx(ohms)
    assert content.values["p_rated"] == pytest.approx(watts)
    assert content.warnings == []


def test_bom_file_with_r_values_and_fractions(write):
    text = ("Ref;Value;Description\n"
            "R1;1,5R;RES 1/4W 1%\n"
            "R2;0,1R;current sense 1/2 W\n"
            "R3;4R7;RES 1/10 W\n")
    bom = read_bom(write("bom.csv", text))
    assert bom.decimal_comma  # detected from "1,5R" and "0,1R"
    got = [(ln.values["resistance"], ln.values["p_rated"]) for ln in bom.lines]
    assert got == [pytest.approx((1.5, 0.25)), pytest.approx((0.1, 0.5)), pytest.approx((4.7, 0.1))]
    assert all(not ln.warnings for ln in bom.lines)


# ------------------------------------------------------------------ the column report

def test_column_report_lists_used_and_ignored_columns(write):
    text = "Designator,Qty,Comment,Footprint,Mfr P/N,Notes,\nC1,1,10uF 25V,1206,KC-106-25-X7R-1206,x,\n"
    bom = read_bom(write("bom.csv", text))
    assert bom.column_report() == [
        "BOM columns: ref ← 'Designator', qty ← 'Qty', value ← 'Comment', package ← 'Footprint', "
        "part_number ← 'Mfr P/N'; ignored: 'Notes', 'column 7'"]
    assert bom.column_index == {"ref": 0, "qty": 1, "value": 2, "package": 3, "part_number": 4}
    assert bom.notices == []  # the report is not a notice: bom_warnings keep their meaning


def test_column_report_flags_a_partial_name_match(write):
    bom = read_bom(write("bom.csv", "Ref,Supplier Part Number\nC1,X-1\n"))
    first, second = bom.column_report()
    assert first == "BOM columns: ref ← 'Ref', part_number ← 'Supplier Part Number'; ignored: none"
    assert second.startswith("BOM column 'Supplier Part Number' was read as part_number because its name contains")
    assert "--columns part_number=<header>" in second and bom.column_basis["part_number"] == "partial"


def test_column_report_marks_nothing_for_overrides(write):
    bom = read_bom(write("bom.csv", "Label,Val\nC1,1uF\n"), columns={"ref": "Label", "value": "Val"})
    assert bom.column_report() == ["BOM columns: ref ← 'Label', value ← 'Val'; ignored: none"]
    assert bom.column_basis == {"ref": "given", "value": "given"}


def test_column_report_of_a_bom_built_by_hand():
    bom = Bom(path="x.csv", lines=[], column_map={"ref": "Ref"}, headers=["Ref", "Extra"])
    assert bom.column_report() == ["BOM columns: ref ← 'Ref'; ignored: 'Extra'"]


# ------------------------------------------------------------------ design-file settings (defaults)

def test_merge_overrides_command_line_wins_field_by_field():
    design = {"ref": "Label", "value": "Kommentar", "part_number": "Nr"}
    cli = {"value": "Val", "description": "Nr"}
    assert merge_overrides(design, cli) == {"ref": "Label", "value": "Val", "description": "Nr"}
    assert merge_overrides(None, {"reference": "X"}) == {"ref": "X"}
    with pytest.raises(BomError, match="unknown field 'colour'"):
        merge_overrides({"colour": "X"}, None)


def test_defaults_apply_where_arguments_are_not_given(write):
    path = write("bom.csv", "Label;Kommentar\nR1;1,5R\n")
    bom = read_bom(path, defaults={"columns": {"ref": "Label", "value": "Kommentar"}, "decimal_comma": True})
    assert bom.column_map == {"ref": "Label", "value": "Kommentar"}
    assert bom.lines[0].values["resistance"] == pytest.approx(1.5)
    # The argument wins over the default.
    bom = read_bom(path, decimal_comma=False, defaults={"columns": {"ref": "Label", "value": "Kommentar"},
                                                        "decimal_comma": True})
    assert not bom.decimal_comma and "resistance" not in bom.lines[0].values
    with pytest.raises(TypeError, match="unknown setting sheets"):
        read_bom(path, defaults={"sheets": "BOM"})


def test_default_sheet_is_ignored_for_a_text_table_with_a_notice(write):
    bom = read_bom(write("bom.csv", "Ref,Value\nC1,1uF\n"), defaults={"sheet": "BOM"})
    assert bom.notices == ["the design file's [bom_read] sheet 'BOM' does not apply to a text table; ignored"]
    with pytest.raises(BomError, match="--sheet 'BOM' was given but this is a text table"):
        read_bom(write("bom.csv", "Ref,Value\nC1,1uF\n"), sheet="BOM")


def test_default_sheet_and_the_sheet_argument_on_a_workbook(tmp_path):
    book = Workbook()
    book.active.title = "Cover"
    book.active.append(["nothing here"])
    ws = book.create_sheet("BOM")
    ws.append(["Designator", "Comment"])
    ws.append(["C1", "10uF 25V"])
    path = tmp_path / "bom.xlsx"
    book.save(path)
    assert read_bom(path, defaults={"sheet": "BOM"}).sheet == "BOM"
    with pytest.raises(BomError, match="this is not a table"):
        read_bom(path, sheet="Cover", defaults={"sheet": "BOM"})  # the argument wins
