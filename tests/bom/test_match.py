"""Matching BOM lines to catalog parts: tiers, blocking, ambiguity, conflicts, pins, do-not-fit."""

from __future__ import annotations

import csv

import pytest

from partcheck.bom.export import neutralise, write_annotated_bom
from partcheck.bom.match import Matcher, match_bom, normalise_part_number, parse_pins
from partcheck.bom.read import read_bom
from partcheck.errors import BomError

HEADER = "Reference,Qty,Value,Description,Package,Part Number\n"


def one(write, parts, row: str, pins=None, **kw):
    bom = read_bom(write("bom.csv", HEADER + row + "\n"))
    (m,) = match_bom(bom, parts, pins, **kw)
    return m


@pytest.mark.parametrize(
    ("text", "key"),
    [
        ("KC-106-25-X7R-1206", "KC10625X7R1206"),
        ("kc 106_25.x7r-1206", "KC10625X7R1206"),
        ("KC-106-25-X7R-1206-TR", "KC10625X7R1206"),
        ("KC-106-25-X7R-1206/TR", "KC10625X7R1206"),
        ("KC-106-25-X7R-1206-REEL", "KC10625X7R1206"),
        ("KC-106-25-X7R-1206-CT-ND", "KC10625X7R1206"),
        ("KC-106-25-X7R-1206-ND", "KC10625X7R1206"),
        ("KC-106-25-X7R-1206#", "KC10625X7R1206"),
        ("KC-106-25-X7R-1206-T", "KC10625X7R1206"),
        ("KQT", "KQT"),  # a T without a separator is part of the number
    ],
)
def test_normalise_part_number(text, key):
    assert normalise_part_number(text) == key


def test_exact_part_number(write, parts):
    m = one(write, parts, "D1,1,,,,KD-SK-40V-3A-SMA")
    assert (m.status, m.part_number, m.method, m.score) == ("matched", "KD-SK-40V-3A-SMA", "exact", 100.0)
    assert m.reason == "part number 'KD-SK-40V-3A-SMA' equals the catalog part KD-SK-40V-3A-SMA"


def test_exact_part_number_in_value_column(write, parts):
    m = one(write, parts, "Q1,1,KQ-650V-4A-DPAK,,,")
    assert (m.status, m.part_number, m.method) == ("matched", "KQ-650V-4A-DPAK", "exact")
    assert m.reason.startswith("value 'KQ-650V-4A-DPAK' equals")


def test_normalised_part_number(write, parts):
    m = one(write, parts, "C1,1,10uF 25V,,1206,kc-106-25-x7r-1206-TR")
    assert (m.status, m.part_number, m.method, m.score) == ("matched", "KC-106-25-X7R-1206", "normalized", 98.0)
    assert m.reason.endswith("; 10 µF / 25 V / 1206 agree")


def test_fuzzy_right_neighbour_wins(write, parts):
    # 25 V and 50 V parts of the same capacitance and case: the BOM's 25 V picks the 25 V one,
    # and 1206 beats the 0805 part of the same rating.
    m = one(write, parts, "C1,1,10uF 25V X7R,MLCC,1206,")
    assert (m.status, m.part_number, m.method) == ("matched", "KC-106-25-X7R-1206", "fuzzy")
    assert m.candidates[0] == ("KC-106-25-X7R-1206", m.score)
    assert m.candidates[1][0] == "KC-106-50-X7R-1206" and m.candidates[1][1] < m.score - 3
    assert "KC-106-25-X7R-0805" not in [c[0] for c in m.candidates]
    assert m.reason.startswith("description and 10 µF / 25 V / X7R / 1206 agree with KC-106-25-X7R-1206")


def test_fuzzy_voltage_above_the_bom_is_accepted(write, parts):
    m = one(write, parts, "C5,1,4.7uF 35V,MLCC,1210,")
    assert (m.status, m.part_number) == ("matched", "KC-475-50-X7R-1210")


def test_category_blocking_never_crosses(write, parts):
    # A "C" line described like the diode: it must not match the diode.
    m = one(write, parts, "C9,1,,schottky rectifier 40V 3A SMA,SMA,")
    assert m.part_number is None or m.part_number.startswith("KC")
    assert all(c[0].startswith(("KC", "KE")) for c in m.candidates)
    assert "reference prefix C means capacitor" in " ".join(m.warnings)


def test_zener_keyword_picks_clamps_on_a_d_line(write, parts):
    m = one(write, parts, "D7,1,,TVS 150V,SMB,")
    assert (m.status, m.part_number, m.category) == ("matched", "KZ-150V-SMB", "clamp")


def test_ambiguous_near_tie(write, parts):
    m = one(write, parts, "C2,1,10uF,MLCC X7R,1206,")
    assert m.status == "ambiguous" and m.part_number is None and m.method == "fuzzy"
    assert sorted(c[0] for c in m.candidates) == ["KC-106-25-X7R-1206", "KC-106-50-X7R-1206"]
    assert "2 candidates score within 3 points" in m.reason


def test_ambiguity_gap_is_a_parameter(write, parts):
    m = one(write, parts, "C1,1,10uF 25V X7R,MLCC,1206,", ambiguity_gap=20.0)
    assert m.status == "ambiguous"


def test_unmatched_below_threshold(write, parts):
    m = one(write, parts, "U3,1,,optocoupler,,", threshold=95.0)
    assert m.status == "unmatched" and m.part_number is None and m.method is None
    assert "below the threshold 95" in m.reason and m.candidates[0][0] == "KO-CTR100-DIP4"


def test_unmatched_no_part_with_that_value(write, parts):
    m = one(write, parts, "C3,1,22uF 25V,MLCC,1206,")
    assert m.status == "unmatched" and m.part_number is None
    assert m.reason.startswith("no ceramic capacitor of 22 µF within tolerance, rated ≥ 25 V, case 1206 in the catalog")


def test_unmatched_with_stated_tolerance_wording(write, parts):
    m = one(write, parts, "C3,1,22uF 25V 10%,,1206,")
    assert m.reason.startswith("no capacitor within 10 % of 22 µF, rated ≥ 25 V, case 1206 in the catalog")


def test_conflict_part_number_with_other_capacitance(write, parts):
    m = one(write, parts, "C5,1,22uF 25V,,,KC-106-25-X7R-1206")
    assert (m.status, m.part_number, m.method) == ("conflict", "KC-106-25-X7R-1206", "exact")
    assert m.reason.endswith("but the BOM says 22 µF and the part is 10 µF (more than 10 % apart)")


def test_conflict_voltage_above_rating(write, parts):
    m = one(write, parts, "C5,1,10uF 35V,,,KC-106-25-X7R-1206-TR")
    assert (m.status, m.method) == ("conflict", "normalized")
    assert "the BOM says 35 V and the part is rated only 25 V" in m.reason


def test_conflict_category(write, parts):
    m = one(write, parts, "C5,1,,,,KD-SK-40V-3A-SMA")
    assert m.status == "conflict"
    assert "C5 is a capacitor by its reference or description, and KD-SK-40V-3A-SMA is a diode" in m.reason


def test_conflict_copied_description(write, parts):
    m = one(write, parts, "C8,1,100uF,aluminium electrolytic 105C low ESR radial,,")
    assert (m.status, m.part_number, m.method) == ("conflict", "KE-471-35-RAD", "fuzzy")
    assert "the description is that of KE-471-35-RAD, but the BOM says 100 µF and the part is 470 µF" in m.reason


def test_pin_wins(write, parts):
    m = one(write, parts, "C1,1,10uF 25V X7R,MLCC,1206,", pins={"c1": "KC-106-50-X7R-1206"})
    assert (m.status, m.part_number, m.method, m.score) == ("matched", "KC-106-50-X7R-1206", "pinned", 100.0)
    assert m.reason == "pinned: C1 → KC-106-50-X7R-1206 (an override always wins)"


def test_pin_to_unknown_part(write, parts):
    m = one(write, parts, "C1,1,10uF 25V X7R,MLCC,1206,", pins={"C1": "NOPE-1"})
    assert (m.status, m.part_number, m.method) == ("unmatched", None, "pinned")
    assert m.reason == "pinned part 'NOPE-1' (C1) is not in the catalog"


def test_pins_disagreeing_within_one_line(write, parts):
    m = one(write, parts, "\"C1,C2\",2,10uF,,,", pins={"C1": "KC-106-25-X7R-1206", "C2": "KC-106-50-X7R-1206"})
    assert m.status == "conflict" and m.method == "pinned"


def test_not_fitted(write, parts):
    bom = read_bom(write("bom.csv", "Ref,Value,DNP\nC1,10uF,x\n"))
    (m,) = match_bom(bom, parts)
    assert (m.status, m.part_number, m.method) == ("not_fitted", None, None)


def test_uncatalogued_prefix(write, parts):
    m = one(write, parts, "F1,1,1A,fuse slow,,")
    assert m.status == "unmatched" and m.reason == "F1 is a fuse; the catalog holds no fuses"


def test_matcher_reuse_matches_match_bom(write, parts):
    bom = read_bom(write("bom.csv", HEADER + "C1,1,10uF 25V X7R,MLCC,1206,\nR1,1,4k7,,0603,\nD1,1,,Schottky 40V,SMA,\n"))
    matcher = Matcher(parts)
    assert [matcher.match_line(ln).part_number for ln in bom.lines] == \
        [m.part_number for m in match_bom(bom, parts)] == ["KC-106-25-X7R-1206", "KR-4K70-0603-1", "KD-SK-40V-3A-SMA"]


def test_to_dict_shape(write, parts):
    m = one(write, parts, "C1,1,10uF 25V X7R,MLCC,1206,")
    d = m.to_dict()
    assert {k: d[k] for k in ("line", "refs", "qty", "text", "status", "part_number", "method")} == {
        "line": 2, "refs": ["C1"], "qty": 1, "text": "10uF 25V X7R | MLCC", "status": "matched",
        "part_number": "KC-106-25-X7R-1206", "method": "fuzzy"}
    assert d["candidates"][0] == {"part_number": "KC-106-25-X7R-1206", "score": d["score"]}


def test_parse_pins():
    assert parse_pins(["C5=KC-1", " R1 = KR-2 "]) == {"C5": "KC-1", "R1": "KR-2"}
    with pytest.raises(BomError, match="is not REF=PART"):
        parse_pins(["C5"])


@pytest.mark.parametrize(("cell", "written"), [("=1+1", "'=1+1"), ("+A1", "'+A1"), ("-4 V", "'-4 V"),
                                              ("@SUM(A1)", "'@SUM(A1)"), ("\tx", "'\tx"), ("\rx", "'\rx"),
                                              ("10uF", "10uF"), ("", "")])
def test_neutralise(cell, written):
    assert neutralise(cell) == written


def test_annotated_csv_and_xlsx(write, tmp_path):
    from openpyxl import load_workbook

    bom = read_bom(write("bom.csv", 'Ref,Value,Description\nC1,1uF,"=HYPERLINK(""x"")"\nC2,2uF,<script>x</script>\n'))
    extra = {"status": ["pass", "=fail"]}
    out = write_annotated_bom(bom, extra, tmp_path / "out.csv")
    with out.open(encoding="utf-8-sig", newline="") as fh:
        rows = list(csv.reader(fh))
    assert rows == [["line", "Ref", "Value", "Description", "status"],
                    ["2", "C1", "1uF", "'=HYPERLINK(\"x\")", "pass"],
                    ["3", "C2", "2uF", "<script>x</script>", "'=fail"]]
    xl = write_annotated_bom(bom, extra, tmp_path / "out.xlsx")
    ws = load_workbook(xl).active
    # the BOM's own cells stay text; the line number is a number in the workbook
    assert [[c.value for c in row] for row in ws.iter_rows()] == [rows[0]] + [[int(r[0]), *r[1:]] for r in rows[1:]]
    with pytest.raises(BomError, match="has 1 values for 2 BOM lines"):
        write_annotated_bom(bom, {"x": [1]}, tmp_path / "bad.csv")


def test_unreadable_value_is_not_matched_by_package_alone(write, parts):
    m = one(write, parts, "R9,1,4k7x,,2512,")
    assert (m.status, m.part_number) == ("unmatched", None)
    assert m.reason.startswith("the value '4k7x' could not be read as a resistance")
    assert any("no resistance could be read" in w for w in m.warnings)


def test_a_code_on_the_line_breaks_a_tie_of_equal_ratings(write):
    from partcheck.catalog.models import PartRecord

    twins = [PartRecord(part_number=f"KQ-{k}", category="switch", subtype="mosfet", vds_max=100.0, id_max=4.0,
                        package="SO-8", description=f"N-channel MOSFET 100V 4A series M{k}") for k in (17, 71, 170)]
    m = one(write, twins, "Q1,1,,N-channel MOSFET 100V 4A series M71,SO-8,")
    assert (m.status, m.part_number, m.method) == ("matched", "KQ-71", "fuzzy")
    assert m.reason.endswith("; the code 'm71' appears only in KQ-71 among 2 close candidates")
    m = one(write, twins, "Q1,1,,N-channel MOSFET 100V 4A,SO-8,")
    assert m.status == "ambiguous" and len(m.candidates) == 3
