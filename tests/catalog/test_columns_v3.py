"""The exchange columns of schema version 3: ``i_frm`` (diodes) and ``b_sat`` (magnetics)."""

from __future__ import annotations

import json

import pytest

from partcheck.catalog import FIELDS, open_catalog
from partcheck.catalog.models import CATEGORY_FIELDS
from partcheck.errors import CatalogInputError

from .conftest import write

HEAD = "part_number,category,subtype,if_avg,ifsm,i_frm,isat,b_sat\n"


def test_registry_places_the_columns_beside_their_relatives():
    names = list(FIELDS)
    assert names[names.index("ifsm") + 1] == "i_frm" and names[names.index("isat") + 1] == "b_sat"
    assert (FIELDS["i_frm"].kind, FIELDS["i_frm"].categories) == ("A", ("diode",))
    assert (FIELDS["b_sat"].kind, FIELDS["b_sat"].categories, FIELDS["b_sat"].maximum) == ("T", ("magnetic",), 3.0)
    assert "repetitive peak forward current" in FIELDS["i_frm"].doc
    assert "100 °C" in FIELDS["b_sat"].doc and FIELDS["b_sat"].doc.endswith("[T]")
    assert "i_frm" in CATEGORY_FIELDS["diode"] and "b_sat" in CATEGORY_FIELDS["magnetic"]


def test_values_with_units_are_parsed(tmp_path, catalog_url):
    path = write(tmp_path / "in.csv", HEAD + "D1,diode,schottky,3 A,80 A,12 A,,\n"
                                            "T1,magnetic,transformer,,,,1.8 A,390 mT\n"
                                            "T2,magnetic,transformer,,,,2,0.35\n")
    with open_catalog(catalog_url) as cat:
        assert cat.import_file(path).added == 3
        assert (cat.get("D1").i_frm, cat.get("D1").ifsm) == (12.0, 80.0)
        assert cat.get("T1").b_sat == 0.39 and cat.get("T2").b_sat == 0.35


def test_wrong_unit_category_and_implausible_values_are_refused_with_line_and_column(tmp_path, catalog):
    path = write(tmp_path / "bad.csv", HEAD + (
        "D1,diode,schottky,3 A,80 A,12 V,,\n"            # line 2: a voltage for a current
        "T1,magnetic,transformer,,,,1.8 A,2 A\n"         # line 3: a current for a flux density
        "T2,magnetic,transformer,,,,2,5 T\n"             # line 4: more than the plausible 3 T
        "T3,magnetic,transformer,,,,2,0\n"               # line 5: zero
        "D2,diode,schottky,3 A,80 A,,,0.39\n"            # line 6: b_sat on a diode
        "T4,magnetic,inductor,,,12 A,2,\n"               # line 7: i_frm on a magnetic
    ))
    before = catalog.snapshot_hash()
    with pytest.raises(CatalogInputError) as info:
        catalog.import_file(path)
    assert str(info.value) == (
        f"{path}: 6 problems, nothing was imported:\n"
        "  line 2, column 'i_frm': '12 V' is not a current (A) (the unit says a voltage (V))\n"
        "  line 3, column 'b_sat': '2 A' is not a flux density (T) (the unit says a current (A))\n"
        "  line 4, column 'b_sat': '5 T' is 5 T, more than the plausible 3 T\n"
        "  line 5, column 'b_sat': '0' is not allowed: b_sat must be greater than zero\n"
        "  line 6, column 'b_sat': b_sat belongs to magnetic, not to diode; leave it empty for a diode\n"
        "  line 7, column 'i_frm': i_frm belongs to diode, not to magnetic; leave it empty for a magnetic")
    assert catalog.snapshot_hash() == before and catalog.count() == 12


def test_round_trip_with_the_new_columns_is_byte_identical(tmp_path, catalog_url):
    path = write(tmp_path / "in.csv", HEAD + "D1,diode,schottky,3 A,80 A,12 A,,\n"
                                            "T1,magnetic,transformer,,,,1.8 A,390 mT\n")
    with open_catalog(catalog_url) as cat:
        cat.import_file(path)
        cat.export(tmp_path / "a.csv")
        cat.export(tmp_path / "a.json")
    header = (tmp_path / "a.csv").read_text(encoding="utf-8").splitlines()[0].split(",")
    assert header == list(FIELDS)  # export order is FIELDS order: i_frm after ifsm, b_sat after isat
    parts = {p["part_number"]: p for p in json.loads((tmp_path / "a.json").read_text(encoding="utf-8"))["parts"]}
    assert parts["D1"]["i_frm"] == 12.0 and parts["T1"]["b_sat"] == 0.39
    assert "part_number_key" not in parts["D1"] and "updated_at" not in parts["D1"]
    for source in ("a.csv", "a.json"):
        with open_catalog(tmp_path / f"{source}.sqlite") as again:
            again.import_file(tmp_path / source)
            again.export(tmp_path / f"b-{source}")
        assert (tmp_path / f"b-{source}").read_bytes() == (tmp_path / source).read_bytes(), source


def test_avalanche_energy_columns(tmp_path):
    """``e_as`` / ``e_ar`` (switches, joules): single-pulse and repetitive avalanche energy ratings."""
    assert (FIELDS["e_as"].kind, FIELDS["e_as"].categories) == ("J", ("switch",))
    assert (FIELDS["e_ar"].kind, FIELDS["e_ar"].categories) == ("J", ("switch",))
    names = list(FIELDS)
    assert names[names.index("qg") + 1: names.index("qg") + 3] == ["e_as", "e_ar"]
    csv = tmp_path / "p.csv"
    csv.write_text("part_number,category,subtype,vds_max,e_as,e_ar\nQ1,switch,mosfet,100 V,120 mJ,4 mJ\n",
                   encoding="utf-8")
    from partcheck.catalog.store import open_catalog

    cat = open_catalog(tmp_path / "c.sqlite", create=True)
    try:
        cat.import_file(csv)
        q = cat.get("Q1")
        assert (q.e_as, q.e_ar) == (0.12, 0.004)
    finally:
        cat.close()
