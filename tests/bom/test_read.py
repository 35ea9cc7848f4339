"""Reading BOM files: every layout, encoding and failure the reader promises to handle."""

from __future__ import annotations

import pytest
from openpyxl import Workbook

from partcheck.bom.read import read_bom
from partcheck.errors import BomError

TIDY = (
    "Reference,Qty,Value,Description,Package,Voltage,Tolerance,Part Number\n"
    "\"C1, C2\",2,10uF,MLCC X7R,1206,25V,10%,\n"
    "R1,1,4k7,thick film,0603,,1%,\n"
    "D1,1,,Schottky 40V 3A,SMA,,,KD-SK-40V-3A-SMA\n"
)


def test_tidy_csv(write):
    bom = read_bom(write("bom.csv", TIDY))
    assert bom.delimiter == "," and bom.header_line == 1 and bom.notices == []
    assert bom.column_map == {"ref": "Reference", "qty": "Qty", "value": "Value", "description": "Description",
                              "package": "Package", "voltage": "Voltage", "tolerance": "Tolerance",
                              "part_number": "Part Number"}
    c, r, d = bom.lines
    assert (c.line, c.refs, c.qty) == (2, ("C1", "C2"), 2)
    assert c.values == {"capacitance": pytest.approx(10e-6), "v_rated": 25.0, "tolerance": pytest.approx(0.10)}
    assert (c.package, c.dielectric, c.category_hint) == ("1206", "X7R", "capacitor")
    assert r.values == {"resistance": 4700.0, "tolerance": pytest.approx(0.01)}
    assert (r.package, r.category_hint, r.subtype_hint) == ("0603", "resistor", "thick_film")
    assert d.part_number == "KD-SK-40V-3A-SMA" and d.categories == ("diode",) and d.subtype_hint == "schottky"
    assert d.values == {"v_rated": 40.0, "i_rated": 3.0}
    assert c.raw["Reference"] == "C1, C2" and c.warnings == []


def test_tsv(write):
    bom = read_bom(write("bom.tsv", TIDY.replace(",", "\t").replace('"C1\t C2"', "C1 C2")))
    assert bom.delimiter == "\t"
    assert [ln.refs for ln in bom.lines] == [("C1", "C2"), ("R1",), ("D1",)]
    assert bom.lines[0].values["capacitance"] == pytest.approx(10e-6)


def test_semicolon_decimal_comma_title_row(write):
    # Two title rows above the header, values with decimal commas, reference ranges.
    text = (
        "Battery monitor flyback - BOM rev B;;;;\n"
        ";;;;\n"
        "Designator;Qty;Value;Description;Footprint\n"
        "C7-C9;3;4,7µF 50V;MLCC X7R;1210\n"
        "R3;1;0,47;current sense 1%;2512\n"
        "R4;1;2,2k;thick film;0603\n"
    )
    bom = read_bom(write("bom.csv", text))
    assert bom.delimiter == ";" and bom.header_line == 3 and bom.decimal_comma
    assert "read numbers with decimal commas (cells such as '4,7µF 50V')" in bom.notices[0]
    c, r3, r4 = bom.lines
    assert (c.line, c.refs, c.qty) == (4, ("C7", "C8", "C9"), 3)
    assert c.values["capacitance"] == pytest.approx(4.7e-6) and c.values["v_rated"] == 50.0
    assert r3.values["resistance"] == pytest.approx(0.47) and r3.values["tolerance"] == pytest.approx(0.01)
    assert r4.values["resistance"] == pytest.approx(2200.0)
    assert r3.package == "2512"


def test_decimal_comma_can_be_forbidden(write):
    text = "Ref;Value\nR3;0,47\n"
    bom = read_bom(write("bom.csv", text), decimal_comma=False)
    assert not bom.decimal_comma
    assert "resistance" not in bom.lines[0].values
    assert any("a comma is not a decimal point" in w for w in bom.lines[0].warnings)


def _xlsx(path, sheets: dict[str, list[list]]):
    book = Workbook()
    book.remove(book.active)
    for name, rows in sheets.items():
        ws = book.create_sheet(name)
        for row in rows:
            ws.append(row)
    book.save(path)
    return path


ODD = [
    ["Gate-drive supply", None, None, None, None],
    [None, None, None, None, None],
    ["Designator", "Comment", "Footprint", "Qty.", "Fitted"],
    ["C1-C3", "1uF 50V X7R", "C_1206_3216Metric", 3, "yes"],
    ["R10", "10k", "R_0603_1608Metric", 1, "no"],
    ["T1", "transformer", None, 1.0, "yes"],
]


def test_xlsx_odd_headers_first_sheet(tmp_path):
    path = _xlsx(tmp_path / "bom.xlsx", {"Parts": ODD, "Notes": [["just", "notes"]]})
    bom = read_bom(path)
    assert bom.sheet == "Parts" and bom.header_line == 3
    assert bom.column_map == {"ref": "Designator", "value": "Comment", "package": "Footprint", "qty": "Qty.",
                              "dnf": "Fitted"}
    assert any("first sheet 'Parts' of 2" in n for n in bom.notices)
    c, r, t = bom.lines
    assert (c.line, c.refs, c.qty, c.package, c.dielectric) == (4, ("C1", "C2", "C3"), 3, "1206", "X7R")
    assert c.values["capacitance"] == pytest.approx(1e-6)
    assert (r.line, r.dnf, r.package) == (5, True, "0603")
    assert (t.line, t.qty, t.dnf, t.category_hint) == (6, 1, False, "magnetic")


def test_xlsx_sheet_option_and_unknown_sheet(tmp_path):
    path = _xlsx(tmp_path / "bom.xlsx", {"Cover": [["nothing here"]], "BOM": ODD})
    bom = read_bom(path, sheet="BOM")
    assert bom.sheet == "BOM" and len(bom.lines) == 3
    with pytest.raises(BomError) as info:
        read_bom(path, sheet="Missing")
    assert str(info.value) == f"{path}: no sheet named 'Missing'; the workbook has 'Cover', 'BOM'"


def test_column_override(write):
    text = "Part ID,Val,Notes\nC1,22uF,x\nC2,22uF,y\n"
    with pytest.raises(BomError) as info:
        read_bom(write("bom.csv", text))
    assert "found no reference column (Reference, Designator, RefDes, Ref, Parts)" in str(info.value)
    assert "'Part ID', 'Val', 'Notes'" in str(info.value)
    bom = read_bom(write("bom.csv", text), columns={"ref": "Part ID", "value": "Val"})
    assert bom.column_map == {"ref": "Part ID", "value": "Val"}
    assert [ln.refs for ln in bom.lines] == [("C1",), ("C2",)]
    assert bom.lines[0].values["capacitance"] == pytest.approx(22e-6)


def test_override_naming_a_missing_header(write):
    with pytest.raises(BomError, match=r"\(--columns or \[bom_read\] columns\) name 'Designator' but the header "
                                       r"row has 'Ref', 'Value'"):
        read_bom(write("bom.csv", "Ref,Value\nC1,1uF\n"), columns={"value": "Designator", "ref": "Ref"})


def test_missing_reference_column_lists_headers(write):
    path = write("bom.csv", "Item,Value,Description\n1,10uF,cap\n2,4k7,res\n")
    with pytest.raises(BomError) as info:
        read_bom(path)
    assert str(info.value) == (
        f"{path}, line 1: found no reference column (Reference, Designator, RefDes, Ref, Parts); the header row "
        "looks like: 'Item', 'Value', 'Description'. Name the column with --columns ref=<header> (or in the "
        "design file's [bom_read] columns)"
    )


@pytest.mark.parametrize("with_bom", [True, False])
def test_utf8_with_and_without_byte_order_mark(write, with_bom):
    text = "Ref,Value,Description\nC1,4.7µF,±10% X7R\nR1,4k7 Ω,<script>alert(1)</script>\n"
    data = ("\ufeff" if with_bom else "").encode("utf-8") + text.encode("utf-8")
    bom = read_bom(write("bom.csv", data))
    assert bom.encoding == ("utf-8-sig" if with_bom else "utf-8")
    assert bom.column_map["ref"] == "Ref"  # the mark is not part of the first header
    assert bom.lines[0].values["capacitance"] == pytest.approx(4.7e-6)
    assert bom.lines[0].values["tolerance"] == pytest.approx(0.10)
    assert not any("cp1252" in n for n in bom.notices)


def test_cp1252_fallback_with_notice(write):
    text = "Ref,Value,Description\nC1,4.7µF,±10% X7R\n"
    bom = read_bom(write("bom.csv", text, encoding="cp1252"))
    assert bom.encoding == "cp1252"
    assert any("not UTF-8" in n and "cp1252" in n for n in bom.notices)
    assert bom.lines[0].value_text == "4.7µF" and bom.lines[0].values["capacitance"] == pytest.approx(4.7e-6)


def test_script_in_description_is_kept_as_plain_text(write):
    text = 'Ref,Value,Description\nC1,1uF,"<script>alert(1)</script> & <b>bold</b>"\n'
    line = read_bom(write("bom.csv", text)).lines[0]
    assert line.description == "<script>alert(1)</script> & <b>bold</b>"
    assert line.raw["Description"] == "<script>alert(1)</script> & <b>bold</b>"


def test_dnf_marks(write):
    text = ("Ref,Value,DNP\nC1,1uF,\nC2,1uF,x\nC3,DNF,\n")
    bom = read_bom(write("bom.csv", text))
    assert [ln.dnf for ln in bom.lines] == [False, True, True]
    assert all(ln.warnings == [] for ln in bom.lines)
    text = ("Ref,Value\nC1,1uF\nC2,DNP\n")
    assert [ln.dnf for ln in read_bom(write("b2.csv", text)).lines] == [False, True]


def test_line_warnings_do_not_stop_reading(write):
    text = ("Ref,Qty,Value,Voltage\n"
            "C1-C3,2,1uF,50V\n"
            "C4,1,1uQ,banana\n"
            "C3,1,1uF,\n"
            "C5,one,100n,\n"
            ",1,10k,\n")
    bom = read_bom(write("bom.csv", text))
    a, b, c, d, e = bom.lines
    assert a.warnings == ["quantity says 2 but 3 references are listed (C1, C2, C3)"]
    assert len(b.warnings) == 2
    assert b.warnings[0].startswith("voltage 'banana' could not be read: 'banana' is not a voltage (V)")
    assert b.warnings[1].startswith("value '1uQ': no capacitance could be read")
    assert c.warnings == ["reference C3 appears twice: on line 2 and on line 4"]
    assert d.warnings == ["quantity 'one' is not a whole number; the reference count is used"]
    assert d.values["capacitance"] == pytest.approx(100e-9)
    assert e.refs == () and e.warnings == ["no reference designator in column 'Ref'"]


def test_reference_error_names_line_and_column(write):
    path = write("bom.csv", "Ref,Value\nC1,1uF\nC4-C1,1uF\n")
    with pytest.raises(BomError) as info:
        read_bom(path)
    assert str(info.value) == f"{path}, line 3, column 'Ref': reference range 'C4-C1' runs backwards; write it as C1-C4"


@pytest.mark.parametrize(
    ("content", "message"),
    [
        (b"", "the file is empty"),
        (b"   \n\n", "the file is empty"),
        (b"%PDF-1.7\n%\xe2\xe3\xcf\xd3\n1 0 obj\n", "this is a PDF document, not a table"),
        (b"\x7fELF\x02\x01\x01\x00\x00\x00\x00\x00", "this is a binary file, not a text table"),
        (b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1", "this is an old binary Office file (.xls)"),
        (b"This converter is a flyback.\nIt has a transformer.\nThat is all.\n",
         "this is not a table: every line holds a single cell"),
        (b"PK\x03\x04garbage", "cannot open it as an XLSX workbook"),
    ],
)
def test_not_a_table(write, content, message):
    path = write("bom.csv", content)
    with pytest.raises(BomError) as info:
        read_bom(path)
    assert str(info.value).startswith(f"{path}: {message}")


def test_missing_file(tmp_path):
    with pytest.raises(BomError, match="no such file"):
        read_bom(tmp_path / "nope.csv")


def test_sheet_on_a_text_file(write):
    with pytest.raises(BomError, match="--sheet 'A' was given but this is a text table"):
        read_bom(write("bom.csv", TIDY), sheet="A")


def test_xlsx_rows_are_spreadsheet_rows_even_with_leading_gaps(tmp_path):
    book = Workbook()
    ws = book.active
    ws["B3"], ws["C3"] = "Ref", "Value"
    ws["B4"], ws["C4"] = "C1", "1uF"
    ws["B6"], ws["C6"] = "C2", "2.2uF"
    book.save(tmp_path / "gaps.xlsx")
    bom = read_bom(tmp_path / "gaps.xlsx")
    assert bom.header_line == 3
    assert [(ln.line, ln.refs) for ln in bom.lines] == [(4, ("C1",)), (6, ("C2",))]
    assert bom.lines[1].values["capacitance"] == pytest.approx(2.2e-6)


def test_xlsx_content_under_a_csv_name(tmp_path):
    path = _xlsx(tmp_path / "bom.csv", {"S": [["Ref", "Value"], ["R1", "10k"]]})
    bom = read_bom(path)
    assert bom.sheet == "S" and bom.lines[0].values["resistance"] == 10_000.0


def test_row_wider_than_header_warns_on_that_line(tmp_path):
    """An unquoted comma in a description shifts cells past the header: a warning names the line."""
    path = tmp_path / "wide.csv"
    path.write_text("Reference,Quantity,Value,Description\nC1,1,10uF,MLCC 10uF 25V X7R 1206\n"
                    "R1,1,10k,Res 10k, 1%, 0603\n", encoding="utf-8")
    bom = read_bom(path)
    assert bom.lines[0].warnings == []
    assert bom.lines[1].line == 3
    assert bom.lines[1].warnings == ["2 cells beyond the header's 4 columns (ignored): '1%', '0603'; "
                                     "check for a stray delimiter"]
