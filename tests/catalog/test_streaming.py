"""Large files: a CSV longer than one chunk is streamed through one transaction with the same result,
the same errors and the same all-or-nothing rule as a file validated whole; reads stream too."""

from __future__ import annotations

import pytest

from partcheck.catalog import open_catalog, store
from partcheck.errors import CatalogInputError

from .conftest import SMALL, write


def _both_ways(monkeypatch, location_whole, location_chunked, path, **kwargs):
    """Import ``path`` validated whole, then streamed in chunks of 5 rows; return (result, result)."""
    out = []
    for location, chunk in ((location_whole, store.IMPORT_CHUNK), (location_chunked, 5)):
        monkeypatch.setattr(store, "IMPORT_CHUNK", chunk)
        with open_catalog(location) as cat:
            try:
                report = cat.import_file(path, **kwargs)
                out.append((report, cat.snapshot_hash(), None))
            except CatalogInputError as exc:
                out.append((None, cat.snapshot_hash(), exc))
    return out


def test_a_streamed_import_equals_a_whole_one(tmp_path, catalog_url, monkeypatch):
    calls = []
    monkeypatch.setattr(store, "IMPORT_CHUNK", 5)
    with open_catalog(catalog_url) as cat:
        report = cat.import_file(SMALL, progress=lambda done, total: calls.append((done, total)))
        streamed = cat.snapshot_hash()
    assert (report.added, report.updated, report.curve_points) == (12, 0, 8)
    assert calls == [(5, 13), (10, 13), (12, 13)]  # 12 rows; the total is the line breaks (header + 12)
    with open_catalog(tmp_path / "whole.sqlite") as whole:
        whole.import_file(SMALL)
        assert whole.snapshot_hash() == streamed


def test_streamed_update_with_curves_equals_a_whole_one(tmp_path, catalog_url, monkeypatch, small_copy):
    text = small_copy.read_text(encoding="utf-8").replace("test switch 150 V 8 A", "changed")
    upd = write(tmp_path / "upd.csv", text)
    side = small_copy.with_name("small.curves.csv").read_text(encoding="utf-8").replace(",12 V,0.55", ",12 V,0.5")
    write(tmp_path / "upd.curves.csv", side)
    hashes = []
    for location, chunk in ((tmp_path / "whole.sqlite", 10_000), (catalog_url, 4)):
        with open_catalog(location) as cat:
            cat.import_file(SMALL)
            monkeypatch.setattr(store, "IMPORT_CHUNK", chunk)
            report = cat.import_file(upd, update=True)
            assert (report.added, report.updated, report.curve_points) == (0, 12, 8)
            assert cat.get("TST-C-10U-25V").curves["dc_bias"][1] == (12.0, 0.5)
            assert cat.get("TST-SW-150V-8A").description == "changed"
            hashes.append(cat.snapshot_hash())
    assert hashes[0] == hashes[1]


def test_problems_in_several_chunks_are_all_reported_and_nothing_is_written(tmp_path, catalog_url, monkeypatch):
    rows = [f"R-{i:03d},resistor,,{i + 1}k\n" for i in range(30)]
    rows[2] = "R-002,resistor,,22uF\n"        # line 4, chunk 1
    rows[17] = "R-017,resistor,,-5\n"         # line 19, chunk 4
    rows[28] = "R-003,resistor,,1k\n"         # line 30, chunk 6: duplicate of line 5 (chunk 1)
    bad = write(tmp_path / "bad.csv", "part_number,category,subtype,resistance\n" + "".join(rows))
    (whole, h_whole, e_whole), (_, h_chunked, e_chunked) = _both_ways(
        monkeypatch, tmp_path / "whole.sqlite", catalog_url, bad)
    assert e_whole is not None and e_chunked is not None
    assert str(e_chunked) == str(e_whole) == (
        f"{bad}: 3 problems, nothing was imported:\n"
        "  line 4, column 'resistance': '22uF' is not a resistance (Ω) (the unit says a capacitance (F))\n"
        "  line 19, column 'resistance': '-5' is not allowed: resistance must be greater than zero\n"
        "  line 30, column 'part_number': part number 'R-003' appears twice (first on line 5)")
    with open_catalog(catalog_url) as cat:
        assert cat.count() == 0  # chunks 2 and 3 were fine, and were rolled back with the rest


def test_a_bad_header_fails_at_once_with_the_same_message(tmp_path, catalog_url, monkeypatch):
    bad = write(tmp_path / "bad.csv", "part_number,category,resistanse\n" + "".join(
        f"R-{i},resistor,1k\n" for i in range(12)))
    (_, _, e_whole), (_, _, e_chunked) = _both_ways(monkeypatch, tmp_path / "whole.sqlite", catalog_url, bad)
    assert str(e_chunked) == str(e_whole)
    assert "unknown column 'resistanse'; did you mean 'resistance'?" in str(e_whole)


def test_already_in_the_catalog_across_chunks(tmp_path, catalog_url, monkeypatch):
    with open_catalog(catalog_url) as cat:
        cat.add({"part_number": "R-011", "category": "resistor"})
        before = cat.snapshot_hash()
        monkeypatch.setattr(store, "IMPORT_CHUNK", 5)
        body = "".join(f"R-{i:03d},resistor\n" for i in range(12))
        path = write(tmp_path / "in.csv", "part_number,category\n" + body)
        with pytest.raises(CatalogInputError) as info:
            cat.import_file(path)
        assert str(info.value) == (f"{path}, line 13, column 'part_number': part number 'R-011' is already in the "
                                   "catalog; import with --update to replace it; nothing was imported")
        assert cat.snapshot_hash() == before


def test_iter_parts_streams_in_order_with_curves(catalog, monkeypatch):
    assert [p.part_number for p in catalog.iter_parts(chunk=1)] == [p.part_number for p in catalog.parts()]
    assert list(catalog.iter_parts(chunk=3)) == catalog.parts()
    with pytest.raises(CatalogInputError, match="chunk must be at least 1"):
        next(catalog.iter_parts(chunk=0))


def test_curve_problems_of_a_streamed_import_read_as_for_a_whole_one(tmp_path, catalog_url, monkeypatch):
    rows = "".join(f"C-{i:02d},capacitor,ceramic,1u,25 V,X7R\n" for i in range(12))
    rows = rows.replace("C-07,capacitor,ceramic,1u,25 V,X7R", "C-07,capacitor,ceramic,1u,22uF,X7R")  # line 9
    path = write(tmp_path / "caps.csv", "part_number,category,subtype,capacitance,v_rated,dielectric\n" + rows)
    write(tmp_path / "caps.curves.csv", "part_number,curve,x,y\n"
          "C-01,dc_bias,0,1\nC-01,dc_bias,10 V,0.6\n"   # fine
          "C-07,dc_bias,0,1\nC-07,dc_bias,5 A,0.6\n"    # line 5: wrong unit, on the part with a bad row
          "C-99,dc_bias,0,1\n"                          # line 6: not in the import
          "C-11,dc_bias,0,1\n")                         # line 7: one point only
    (_, _, e_whole), (_, _, e_chunked) = _both_ways(monkeypatch, tmp_path / "whole.sqlite", catalog_url, path)
    assert e_whole is not None and str(e_chunked) == str(e_whole)
    assert [(p.line, p.column) for p in e_whole.problems] == [(9, "v_rated"), (5, "x"), (6, "part_number"),
                                                              (7, "curve")]
