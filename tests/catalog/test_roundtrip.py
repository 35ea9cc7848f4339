"""Export is deterministic and lossless: export → import → export gives identical bytes."""

from __future__ import annotations

import io
import json
import random

import pytest

from partcheck.catalog import open_catalog
from partcheck.catalog.migrations import CURRENT_VERSION
from partcheck.catalog.models import CATEGORY_FIELDS, FIELDS
from partcheck.errors import CatalogInputError


def _export_all(cat, folder):
    folder.mkdir()
    cat.export(folder / "parts.csv")
    cat.export(folder / "parts.json")
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir())}


def test_csv_and_json_round_trip_byte_identical_with_curves(tmp_path, catalog):
    first = _export_all(catalog, tmp_path / "a")
    assert set(first) == {"parts.csv", "parts.curves.csv", "parts.json"}
    assert first["parts.curves.csv"].count(b"\n") == 9  # header + the fixture's 8 points

    with open_catalog(tmp_path / "from_csv.sqlite") as cat:
        report = cat.import_file(tmp_path / "a" / "parts.csv")
        assert (report.added, report.curve_points) == (12, 8)
        assert _export_all(cat, tmp_path / "b") == first
        assert cat.snapshot_hash() == catalog.snapshot_hash()
        assert cat.parts() == catalog.parts()

    with open_catalog(tmp_path / "from_json.sqlite") as cat:
        report = cat.import_file(tmp_path / "a" / "parts.json")
        assert (report.added, report.curve_points) == (12, 8)
        assert _export_all(cat, tmp_path / "c") == first


def test_export_layout(tmp_path, catalog):
    text = io.StringIO()
    catalog.export(text, "csv")
    lines = text.getvalue().splitlines()
    assert lines[0] == ",".join(FIELDS)
    numbers = [line.split(",", 1)[0] for line in lines[1:]]
    assert numbers == sorted(numbers) and len(numbers) == 12
    stream = io.StringIO()
    catalog.export(stream, "json")
    doc = json.loads(stream.getvalue())
    assert doc["format"] == "partcheck-catalog" and doc["schema_version"] == CURRENT_VERSION
    first = doc["parts"][0]
    assert first["part_number"] == "TST-C-10U-25V"
    assert list(first) == [*CATEGORY_FIELDS["capacitor"], "curves"]
    assert first["curves"] == {"dc_bias": [[0.0, 1.0], [12.0, 0.55], [25.0, 0.3]]}
    assert first["esl"] is None  # empty stays null, never 0


def test_awkward_floats_and_text_round_trip_exactly(tmp_path, catalog_url):
    rng = random.Random(7)
    values = [rng.uniform(1e-13, 1e-3) for _ in range(20)] + [0.1 + 0.2, 1 / 3, 4.7e-9, 1e300, 5e-324 * 1e10]
    with open_catalog(catalog_url) as cat:
        for i, v in enumerate(values):
            cat.add({"part_number": f"F{i:02d}", "category": "capacitor", "capacitance": v,
                     "description": f'quote " comma, newline\nand ±µΩ {i}', "t_max": -40.0 + i})
        first = io.StringIO()
        cat.export(first, "csv")
    source = tmp_path / "in.csv"
    source.write_text(first.getvalue(), encoding="utf-8")
    with open_catalog(tmp_path / "b.sqlite") as cat:
        cat.import_file(source)
        assert [cat.get(f"F{i:02d}").capacitance for i in range(len(values))] == values  # exact floats
        assert cat.get("F03").description == 'quote " comma, newline\nand ±µΩ 3'
        second = io.StringIO()
        cat.export(second, "csv")
    assert second.getvalue() == first.getvalue()


def test_csv_to_stream_reports_the_curves_it_could_not_write(catalog):
    report = catalog.export(io.StringIO(), "csv")
    assert (report.parts, report.curve_points, report.curves_skipped) == (12, 0, 8)
    curves = io.StringIO()
    report = catalog.export(io.StringIO(), "csv", curves_stream=curves)
    assert report.curves_skipped == 0 and curves.getvalue().count("\n") == 9


def test_snapshot_hash_changes_with_any_value(catalog):
    before = catalog.snapshot_hash()
    assert len(before) == 64
    catalog.add({"part_number": "TST-SW-150V-8A", "category": "switch", "subtype": "mosfet", "vds_max": "150 V",
                 "id_max": "8 A", "rds_on": "45m", "qg": "18 nC", "tj_max": "150", "rth_ja": "62.000001",
                 "description": "test switch 150 V 8 A", "package": "TO-220"}, update=True)
    assert catalog.snapshot_hash() != before


def test_export_format_from_the_file_name(tmp_path, catalog):
    catalog.export(tmp_path / "a.json")
    assert (tmp_path / "a.json").read_text(encoding="utf-8").startswith('{\n  "format": "partcheck-catalog"')
    catalog.export(tmp_path / "b.txt", "csv")
    assert (tmp_path / "b.curves.txt").exists()
    with pytest.raises(CatalogInputError) as info:
        catalog.export(tmp_path / "c.xlsx")
    assert str(info.value) == (f"{tmp_path / 'c.xlsx'}: cannot tell the export format from '.xlsx'; "
                               "name the file .csv or .json, or give the format")
    with pytest.raises(CatalogInputError, match="unknown export format 'xml'; expected csv or json"):
        catalog.export(tmp_path / "d.csv", "xml")
    assert not (tmp_path / "c.xlsx").exists() and not (tmp_path / "d.csv").exists()


def test_json_from_a_newer_schema_is_refused(tmp_path, catalog):
    stream = io.StringIO()
    catalog.export(stream, "json")
    newer = tmp_path / "newer.json"
    newer.write_text(stream.getvalue().replace(f'"schema_version": {CURRENT_VERSION}',
                                               f'"schema_version": {CURRENT_VERSION + 1}'), encoding="utf-8")
    with pytest.raises(CatalogInputError) as info:
        catalog.import_file(newer, update=True)
    assert str(info.value) == (f"{newer}, key 'schema_version': was written with catalog schema version "
                               f"{CURRENT_VERSION + 1}, newer than version {CURRENT_VERSION} that this partcheck "
                               "understands; upgrade partcheck to import it")


def test_export_into_a_missing_folder(tmp_path, catalog):
    with pytest.raises(CatalogInputError, match="the directory .*nowhere does not exist"):
        catalog.export(tmp_path / "nowhere" / "x.csv")


def test_json_export_keeps_bracketed_numbers_in_text_verbatim(tmp_path, catalog_url):
    # The exporter folds each curve point onto one line; text that looks like a point must stay as typed.
    with open_catalog(catalog_url) as cat:
        cat.add({"part_number": "[ 1, 2 ]", "category": "resistor", "description": "pair [ 0.5,  7 ] and [\t1, 2 ]"})
        cat.export(tmp_path / "a.json")
    doc = json.loads((tmp_path / "a.json").read_text(encoding="utf-8"))
    assert doc["parts"][0]["part_number"] == "[ 1, 2 ]"
    assert doc["parts"][0]["description"] == "pair [ 0.5,  7 ] and [\t1, 2 ]"
