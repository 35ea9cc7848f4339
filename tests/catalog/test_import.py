"""Import validation and atomicity: every bad cell reported with line and column, nothing written."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from openpyxl import Workbook

from partcheck.catalog import open_catalog
from partcheck.catalog.validate import MAX_LISTED
from partcheck.errors import CatalogInputError

HEAD = "part_number,category,subtype,vds_max,id_max,capacitance,v_rated,dielectric,tolerance,tj_max\n"


def csv_file(tmp_path: Path, body: str, name: str = "in.csv", head: str = HEAD) -> Path:
    path = tmp_path / name
    path.write_text(head + body, encoding="utf-8")
    return path


def problems_of(info) -> list[tuple[int | None, str | None]]:
    return [(p.line, p.column) for p in info.value.problems]


def test_fixture_values_are_parsed_exactly(catalog):
    sw = catalog.get("TST-SW-150V-8A")
    assert (sw.vds_max, sw.id_max, sw.rds_on, sw.qg, sw.tj_max, sw.rth_ja) == (150.0, 8.0, 0.045, 18e-9, 150.0, 62.0)
    assert sw.description == "test switch 150 V 8 A" and sw.status == "approved"  # empty status = approved
    c = catalog.get("TST-C-470U-35V")
    assert (c.capacitance, c.tolerance, c.esr, c.ripple_freq, c.life_hours) == (470e-6, 0.2, 0.06, 1e5, 2000.0)
    assert catalog.get("TST-R-0R1-1W").resistance == 0.1  # IEC 60062 code "R1" (derating-standards.md §8)
    assert catalog.get("TST-R-4K7-0W25").resistance == 4700.0  # IEC 60062 code "4k7"
    assert catalog.get("TST-O-CTR50").ctr_max == 6.0  # 600 % as a fraction
    assert catalog.get("TST-D-100V-3A").description == "test rectifier, 100 V 3 A"  # quoted comma
    assert catalog.get("TST-SW-650V-2A").status == "restricted"
    assert catalog.get("TST-C-10U-25V").curves == {"dc_bias": ((0.0, 1.0), (12.0, 0.55), (25.0, 0.3))}
    assert catalog.get("TST-R-4K7-0W25").curves == {"power_derating": ((70.0, 1.0), (155.0, 0.0))}
    assert catalog.count() == 12


def test_empty_cell_is_null_not_zero(catalog):
    sw = catalog.get("TST-SW-150V-8A")
    assert sw.id_pulse is None and sw.coss is None and sw.rds_on_125 is None
    assert catalog.get("TST-C-10U-25V").life_hours is None
    assert catalog.get("TST-D-100V-3A").curves == {}


def test_one_bad_row_writes_nothing_and_every_bad_cell_is_reported(tmp_path, catalog):
    path = csv_file(tmp_path, (
        "N1,switch,mosfet,100 V,5 A,,,,,150\n"
        "N2,switch,mosfet,22uF,5 A,,,,,150\n"          # line 3: wrong unit
        "N3,capacitor,ceramic,,,10u,abc,X7R,10%,\n"    # line 4: unparsable voltage
        "N4,switch,mosfet,-40 V,0,,,,,150\n"           # line 5: negative and zero rating
        "N5,capacitor,ceramic,,,1u,25 V,X7R,10,\n"     # line 6: tolerance 10 = 1000 %
    ))
    before = catalog.snapshot_hash()
    with pytest.raises(CatalogInputError) as info:
        catalog.import_file(path)
    assert str(info.value) == (
        f"{path}: 5 problems, nothing was imported:\n"
        "  line 3, column 'vds_max': '22uF' is not a voltage (V) (the unit says a capacitance (F))\n"
        "  line 4, column 'v_rated': 'abc' is not a voltage (V) (expected a number with an optional SI prefix "
        "and unit V/v, such as 4.7k or 22 mV)\n"
        "  line 5, column 'vds_max': '-40 V' is not allowed: vds_max must be greater than zero\n"
        "  line 5, column 'id_max': '0' is not allowed: id_max must be greater than zero\n"
        "  line 6, column 'tolerance': '10' is 1000 %, more than the plausible 100 %; a number without '%' is "
        "a fraction (write '10%' for ten percent)"
    )
    assert catalog.snapshot_hash() == before
    assert catalog.count() == 12 and "N1" not in {p.part_number for p in catalog.parts()}


def test_single_problem_names_file_line_and_column(tmp_path, catalog):
    path = csv_file(tmp_path, "N1,switch,mosfet,100 V,5 A,,,,,150\nN2,capacitor,ceramic,,,10u,22uF,X7R,,\n")
    with pytest.raises(CatalogInputError) as info:
        catalog.import_file(path)
    assert str(info.value) == (f"{path}, line 3, column 'v_rated': '22uF' is not a voltage (V) "
                               "(the unit says a capacitance (F)); nothing was imported")
    assert (info.value.file, info.value.line, info.value.column) == (str(path), 3, "v_rated")


def test_long_problem_lists_are_cut(tmp_path, catalog):
    body = "".join(f"N{i},switch,mosfet,fast,,,,,,\n" for i in range(MAX_LISTED + 7))
    with pytest.raises(CatalogInputError) as info:
        catalog.import_file(csv_file(tmp_path, body))
    message = str(info.value)
    assert message.startswith(f"{tmp_path / 'in.csv'}: {MAX_LISTED + 7} problems, nothing was imported:\n")
    assert message.count("\n  line ") == MAX_LISTED and message.endswith("\n  ... and 7 more")
    assert len(info.value.problems) == MAX_LISTED + 7


def test_unknown_column_lists_valid_names_and_suggests_the_closest(tmp_path, catalog):
    path = csv_file(tmp_path, "N1,switch,100\n", head="part_number,category,vds_mx\n")
    with pytest.raises(CatalogInputError) as info:
        catalog.import_file(path)
    message = str(info.value)
    assert message.startswith(f"{path}, line 1, column 'vds_mx': unknown column 'vds_mx'; did you mean "
                              "'vds_max'? valid columns are: part_number, category, subtype, description, ")
    assert message.endswith(", tj_max, rth_ja, t_max; nothing was imported")
    assert catalog.count() == 12


def test_semicolon_csv_is_read_and_a_semicolon_tsv_gets_a_hint(tmp_path, catalog):
    """A .csv is sniffed for ',', ';' or tab; a .tsv is tab-separated by name, so ';' there is a hint."""
    catalog.import_file(csv_file(tmp_path, "N1;switch\n", head="part_number;category\n"))
    assert catalog.get("N1").category == "switch"
    tsv = tmp_path / "parts.tsv"
    tsv.write_text("part_number;category\nN2;switch\n", encoding="utf-8")
    with pytest.raises(CatalogInputError, match="the file seems to be separated by ';'"):
        catalog.import_file(tsv)


def test_missing_required_column(tmp_path, catalog):
    with pytest.raises(CatalogInputError) as info:
        catalog.import_file(csv_file(tmp_path, "N1,100\n", head="part_number,vds_max\n"))
    assert str(info.value).endswith("line 1: the required column 'category' is missing; nothing was imported")


def test_duplicate_part_number_in_the_file(tmp_path, catalog):
    path = csv_file(tmp_path, "N1,switch,mosfet,100,,,,,,\nN2,switch,,60,,,,,,\nN1,switch,gan,650,,,,,,\n")
    with pytest.raises(CatalogInputError) as info:
        catalog.import_file(path)
    assert str(info.value) == (f"{path}, line 4, column 'part_number': part number 'N1' appears twice "
                               "(first on line 2); nothing was imported")


def test_duplicate_of_a_catalog_part_needs_update(tmp_path, catalog):
    path = csv_file(tmp_path, "TST-SW-150V-8A,switch,mosfet,200 V,10 A,,,,,175\nNEW-1,switch,,60,,,,,,\n")
    with pytest.raises(CatalogInputError) as info:
        catalog.import_file(path)
    assert str(info.value) == (f"{path}, line 2, column 'part_number': part number 'TST-SW-150V-8A' is already "
                               "in the catalog; import with --update to replace it; nothing was imported")
    assert catalog.get("TST-SW-150V-8A").vds_max == 150.0 and catalog.count() == 12


def test_update_upserts_and_empty_cells_clear_values(tmp_path, catalog):
    path = csv_file(tmp_path, "TST-SW-150V-8A,switch,mosfet,200 V,10 A,,,,,\nNEW-1,switch,gan,60,,,,,,\n")
    report = catalog.import_file(path, update=True)
    assert (report.added, report.updated, report.curve_points, report.curves_file) == (1, 1, 0, None)
    sw = catalog.get("TST-SW-150V-8A")
    assert (sw.vds_max, sw.id_max) == (200.0, 10.0)
    assert sw.tj_max is None and sw.rds_on is None  # the row is the whole part: empty means no value
    assert sw.description is None
    assert catalog.get("NEW-1").subtype == "gan" and catalog.count() == 13


def test_update_without_curve_file_keeps_curves_with_one_replaces_them(tmp_path, catalog):
    head = "part_number,category,subtype,capacitance,v_rated,dielectric\n"
    path = csv_file(tmp_path, "TST-C-10U-25V,capacitor,ceramic,10u,50 V,X7R\n", head=head)
    catalog.import_file(path, update=True)
    assert catalog.get("TST-C-10U-25V").curves["dc_bias"][1] == (12.0, 0.55)
    (tmp_path / "in.curves.csv").write_text("part_number,curve,x,y\nTST-C-10U-25V,dc_bias,0,1\n"
                                            "TST-C-10U-25V,dc_bias,50V,0.4\n")
    report = catalog.import_file(path, update=True)
    assert report.curve_points == 2 and report.curves_file == str(tmp_path / "in.curves.csv")
    assert catalog.get("TST-C-10U-25V").curves == {"dc_bias": ((0.0, 1.0), (50.0, 0.4))}
    assert catalog.get("TST-C-10U-25V").v_rated == 50.0


def test_nan_inf_and_other_oddities(tmp_path, catalog):
    path = csv_file(tmp_path, (
        "N1,switch,mosfet,nan,inf,,,,,-300\n"
        "N2,switch,mosfet,1_000,5,,,,,\n"
        "N3,capacitor,film,,,1u,100,X7R,,\n"
        "N4,capacitor,ceramic,,,1u,100,NP0,,\n"
        "N5,capacitor,ceramic,25,,1u,100,X7R,,\n"
        "N6,transistor,,,,,,,,\n"
        ",switch,,,,,,,,\n"
    ))
    with pytest.raises(CatalogInputError) as info:
        catalog.import_file(path)
    messages = {(p.line, p.column): p.message for p in info.value.problems}
    assert messages == {
        (2, "vds_max"): "'nan' is not a number; NaN and infinite values are not allowed",
        (2, "id_max"): "'inf' is not a number; NaN and infinite values are not allowed",
        (2, "tj_max"): "'-300' is below absolute zero",
        (3, "vds_max"): "'1_000' is not a voltage (V) (unexpected '_000' after the number)",
        (4, "dielectric"): "a dielectric code is for ceramic capacitors, not film",
        (5, "dielectric"): "unknown dielectric 'NP0'; expected one of C0G, X7R, X5R, X7S, X6S, Y5V "
                           "(NP0 is written C0G)",
        (6, "vds_max"): "vds_max belongs to switch, not to capacitor; leave it empty for a capacitor",
        (7, "category"): "unknown category 'transistor'; did you mean 'resistor'? expected one of switch, diode, "
                         "clamp, capacitor, resistor, magnetic, optocoupler, reference",
        (8, "part_number"): "the part number is empty",
    }


def test_bad_curve_file_is_reported_in_its_own_file(small_copy, catalog_url):
    side = small_copy.with_name("small.curves.csv")
    side.write_text(
        "part_number,curve,x,y\n"
        "TST-C-10U-25V,dc_bias,0 V,1.0\n"
        "TST-C-10U-25V,dc_bias,0 V,0.5\n"          # line 3: x does not increase
        "TST-C-10U-25V,dc_bias,5 A,0.4\n"          # line 4: wrong unit
        "TST-SW-150V-8A,dc_bias,0,1\n"             # line 5: wrong category
        "NOPE,dc_bias,0,1\n"                       # line 6: unknown part
        "TST-C-470U-35V,ripple_frq,1k,1\n"         # line 7: unknown curve
        "TST-R-4K7-0W25,power_derating,70,-1\n"    # line 8: negative y
    )
    with open_catalog(catalog_url) as cat:
        with pytest.raises(CatalogInputError) as info:
            cat.import_file(small_copy)
        assert cat.count() == 0
    messages = [(p.file, p.line, p.column, p.message) for p in info.value.problems]
    f = str(side)
    assert messages == [
        (f, 3, "x", "x 0 V does not increase on the previous point's 0 V; list the points of a curve in increasing x"),
        (f, 4, "x", "'5 A' is not a voltage (V) (the unit says a current (A))"),
        (f, 5, "curve", "a dc_bias curve is for capacitor, not for switch 'TST-SW-150V-8A'"),
        (f, 6, "part_number", "part 'NOPE' is not among the parts of this import"),
        (f, 7, "curve", ("unknown curve 'ripple_frq'; did you mean 'ripple_freq'? expected one of dc_bias, "
                         "ripple_freq, ripple_temp, power_derating")),
        (f, 8, "y", "'-1' is not allowed: y is a multiplier or fraction and cannot be negative"),
    ]
    assert str(info.value).startswith(f"{small_copy}: 6 problems, nothing was imported:\n  {f}, line 3, column 'x'")


def test_tsv_and_xlsx_import(tmp_path, catalog):
    tsv = tmp_path / "parts.tsv"
    tsv.write_text("part_number\tcategory\tresistance\tp_rated\nR-TSV\tresistor\t4k7\t250 mW\n", encoding="utf-8")
    assert catalog.import_file(tsv).added == 1
    assert catalog.get("R-TSV").resistance == 4700.0 and catalog.get("R-TSV").p_rated == 0.25

    book = Workbook()
    sheet = book.active
    sheet.append(["part_number", "category", "capacitance", "v_rated", "t_max"])
    sheet.append(["C-XL-1", "capacitor", "22u", 25, 0])        # numbers come as numbers; 0 °C is a value
    sheet.append(["C-XL-2", "capacitor", 4.7e-6, "22uF", None])  # row 3: wrong unit
    curves = book.create_sheet("curves")
    curves.append(["part_number", "curve", "x", "y"])
    curves.append(["C-XL-1", "dc_bias", 0, 1])
    curves.append(["C-XL-1", "dc_bias", 25, 0.5])
    xlsx = tmp_path / "parts.xlsx"
    book.save(xlsx)
    with pytest.raises(CatalogInputError) as info:
        catalog.import_file(xlsx)
    assert str(info.value) == (f"{xlsx}, line 3, column 'v_rated': '22uF' is not a voltage (V) "
                               "(the unit says a capacitance (F)); nothing was imported")
    sheet.delete_rows(3)
    book.save(xlsx)
    report = catalog.import_file(xlsx)
    assert (report.added, report.curve_points) == (1, 2)
    part = catalog.get("C-XL-1")
    assert (part.capacitance, part.v_rated, part.t_max) == (22e-6, 25.0, 0.0)
    assert part.curves == {"dc_bias": ((0.0, 1.0), (25.0, 0.5))}


def test_json_import_errors_name_the_part(tmp_path, catalog):
    path = tmp_path / "in.json"
    path.write_text(json.dumps({"parts": [
        {"part_number": "J1", "category": "switch", "vds_max": 100.0},
        {"part_number": "J2", "category": "switch", "vds_max": "22uF"},
        {"part_number": "J3", "category": "switch", "vds_max": NaN_TEXT},
    ]}).replace('"NaN-marker"', "NaN"))
    with pytest.raises(CatalogInputError) as info:
        catalog.import_file(path)
    assert [(p.key, p.column) for p in info.value.problems] == [("parts[1]", "vds_max"), ("parts[2]", "vds_max")]
    assert str(info.value).splitlines()[1] == (
        "  parts[1], column 'vds_max': '22uF' is not a voltage (V) (the unit says a capacitance (F))")
    assert info.value.problems[1].message == "'NaN' is not a number; NaN and infinite values are not allowed"


NaN_TEXT = "NaN-marker"


def test_unreadable_files(tmp_path, catalog):
    with pytest.raises(CatalogInputError) as info:
        catalog.import_file(tmp_path / "absent.csv")
    assert str(info.value) == f"{tmp_path / 'absent.csv'}: file not found"
    with pytest.raises(CatalogInputError, match=r"cannot tell the format from the extension '\.ods'"):
        catalog.import_file(tmp_path / "x.ods")
    latin = tmp_path / "latin.csv"
    latin.write_bytes("part_number,category,description\nN1,switch,25 \xb0C\n".encode("latin-1"))
    with pytest.raises(CatalogInputError) as info:
        catalog.import_file(latin)
    assert str(info.value) == f"{latin}, line 2: is not UTF-8 text; save it as 'CSV UTF-8'"
    empty = tmp_path / "empty.csv"
    empty.write_text("\n\n")
    with pytest.raises(CatalogInputError, match="the file is empty; expected a header row"):
        catalog.import_file(empty)


def test_add_validates_like_import(catalog):
    with pytest.raises(CatalogInputError) as info:
        catalog.add({"part_number": "A1", "category": "capacitor", "capacitance": "10u", "v_max": "4"})
    assert str(info.value) == ("column 'v_max': v_max belongs to resistor, not to capacitor; "
                               "leave it empty for a capacitor; nothing was added")
    record = catalog.add({"part_number": "A1", "category": "capacitor", "capacitance": "10u", "v_rated": 16.0})
    assert (record.capacitance, record.v_rated, record.status) == (10e-6, 16.0, "approved")
    with pytest.raises(CatalogInputError, match="'A1' is already in the catalog"):
        catalog.add({"part_number": "A1", "category": "capacitor"})
    assert catalog.add({"part_number": "A1", "category": "capacitor", "v_rated": "25"}, update=True).v_rated == 25.0


def test_unnamed_empty_columns_are_ignored_but_not_their_data(tmp_path, catalog):
    ok = csv_file(tmp_path, "R1,resistor,,\nR2,resistor,,\n", head="part_number,category,,\n")
    assert catalog.import_file(ok).added == 2
    bad = csv_file(tmp_path, "R3,resistor,,\nR4,resistor,,4k7\n", name="bad.csv", head="part_number,category,,\n")
    with pytest.raises(CatalogInputError) as info:
        catalog.import_file(bad)
    assert str(info.value) == (f"{bad}, line 3: column 4 has no name in the header but holds data; "
                               "nothing was imported")
    long_row = csv_file(tmp_path, "R5,resistor,1k,extra\n", name="long.csv", head="part_number,category,resistance\n")
    with pytest.raises(CatalogInputError) as info:
        catalog.import_file(long_row)
    assert str(info.value) == f"{long_row}, line 2: the row has 4 cells, the header has 3; nothing was imported"
    assert catalog.count() == 14
