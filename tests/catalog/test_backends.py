"""The same catalog behaviour on every backend (SQLite file, PostgreSQL URL): dialect-neutral code."""

from __future__ import annotations

import io

import pytest

from partcheck.catalog import open_catalog
from partcheck.errors import CatalogInputError

from .conftest import SMALL


def test_import_query_round_trip_and_atomicity_on_each_backend(catalog_url, tmp_path):
    with open_catalog(catalog_url) as cat:
        report = cat.import_file(SMALL)
        assert (report.added, report.curve_points) == (12, 8)
        assert [p.part_number for p in cat.parts(category="switch", min_ratings={"vds_max": "200 V"})] == [
            "TST-SW-650V-2A"]
        assert cat.get("TST-C-10U-25V").curves["dc_bias"] == ((0.0, 1.0), (12.0, 0.55), (25.0, 0.3))
        assert cat.find("electrolytic")[0][0].part_number == "TST-C-470U-35V"
        first = io.StringIO()
        cat.export(first, "json")
        before = cat.snapshot_hash()

        bad = tmp_path / "bad.csv"
        bad.write_text("part_number,category,vds_max\nNEW-1,switch,100\nNEW-2,switch,22uF\n", encoding="utf-8")
        with pytest.raises(CatalogInputError):
            cat.import_file(bad)
        assert cat.snapshot_hash() == before

        upd = tmp_path / "upd.csv"
        upd.write_text("part_number,category,vds_max\nTST-SW-150V-8A,switch,200\nNEW-1,switch,100\n", encoding="utf-8")
        assert (cat.import_file(upd, update=True).updated, cat.count()) == (1, 13)
        assert cat.get("TST-SW-150V-8A").vds_max == 200.0
        cat.remove("NEW-1")
        assert cat.count() == 12
    source = tmp_path / "first.json"
    source.write_text(first.getvalue(), encoding="utf-8")
    with open_catalog(tmp_path / "check.sqlite") as check:
        check.import_file(source)
        again = io.StringIO()
        check.export(again, "json")
    assert again.getvalue() == first.getvalue()
