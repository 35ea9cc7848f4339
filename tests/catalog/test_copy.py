"""`catalog copy`: every part, curve and provenance time into another catalog, one transaction, verified."""

from __future__ import annotations

import io

import pytest

from partcheck.catalog import open_catalog, store
from partcheck.catalog.seed import seed_catalog
from partcheck.errors import CatalogError

from .conftest import SMALL, execute
from .test_cli import cli


def _exports(cat, folder):
    folder.mkdir()
    cat.export(folder / "parts.csv")
    cat.export(folder / "parts.json")
    return {p.name: p.read_bytes() for p in sorted(folder.iterdir())}


def _awkward(cat):
    for i, v in enumerate([0.1 + 0.2, 1 / 3, 4.7e-9, 1e300, 5e-314, 123456789.123456789]):
        cat.add({"part_number": f"ZZ-F{i}", "category": "capacitor", "capacitance": v, "t_max": -40.0 - i / 7,
                 "description": f'quote " comma, newline\nand ±µΩ, ünïcode {i} ☃'})
    cat.add({"part_number": "Ä-after-every-ascii-name", "category": "resistor"})  # code-point order, not a locale's
    cat.add({"part_number": "a-lower", "category": "resistor"})


@pytest.mark.postgres
def test_sqlite_to_postgresql_and_back_is_byte_identical(tmp_path, postgres_server):
    # The team database sorts text the English way (letters first, accents and case later); exports
    # must still be in code-point order ("Z" < "a" < "Ä"), as from SQLite.
    postgres_url = postgres_server.new_database(icu_locale="en-US")
    source = tmp_path / "mine.sqlite"
    with open_catalog(source) as cat:
        seed_catalog(cat)
        _awkward(cat)
        first = _exports(cat, tmp_path / "a")
        n = cat.count()
        points = sum(len(c) for r in cat.parts() for c in r.curves.values())
        written = {r.part_number: cat.updated_at(r.part_number) for r in cat.parts()}
        report = cat.copy_to(postgres_url)
    assert (report.parts, report.curve_points) == (n, points) and points > 100
    assert str(report) == (f"copied {n} parts, {points} curve points from {source} to {postgres_url} "
                           f"(schema version 3); exports identical ({report.export_bytes} bytes of JSON)")
    assert report.export_bytes == len(first["parts.json"])
    with open_catalog(postgres_url) as team:
        with team._engine.connect() as conn:  # the database's own order differs from code-point order
            own = conn.exec_driver_sql("select part_number from part where part_number in ('a-lower', "
                                       "'Ä-after-every-ascii-name', 'ZZ-F0') order by part_number").scalars().all()
            assert own == ["Ä-after-every-ascii-name", "a-lower", "ZZ-F0"]
        assert _exports(team, tmp_path / "b") == first
        assert {pn: team.updated_at(pn) for pn in written} == written  # provenance travels with the parts
        back = team.copy_to(tmp_path / "back.sqlite")
    assert (back.parts, back.curve_points) == (n, points)
    with open_catalog(tmp_path / "back.sqlite") as again:
        assert _exports(again, tmp_path / "c") == first


def test_target_must_be_empty_unless_replace(tmp_path, catalog_url):
    with open_catalog(catalog_url) as target:
        target.add({"part_number": "THEIRS-1", "category": "resistor", "resistance": "1k"})
        before = target.snapshot_hash()
    with open_catalog(tmp_path / "src.sqlite") as src:
        src.import_file(SMALL)
        with pytest.raises(CatalogError) as info:
            src.copy_to(catalog_url)
        assert str(info.value) == (f"{catalog_url} already holds 1 part; copy into an empty catalog, "
                                   "or give --replace to delete them first")
        assert info.value.exit_code == 2
        with open_catalog(catalog_url) as target:
            assert target.snapshot_hash() == before
        report = src.copy_to(catalog_url, replace=True)
        assert (report.parts, report.curve_points) == (12, 8)
        with open_catalog(catalog_url) as target:
            assert target.snapshot_hash() == src.snapshot_hash()
        with pytest.raises(CatalogError, match="onto itself"):
            src.copy_to(tmp_path / "src.sqlite")


def test_a_copy_whose_export_differs_is_rolled_back(tmp_path, catalog_url, monkeypatch):
    real = store._executemany

    def corrupting(conn, table, cols, rows):  # the write path silently changes one curve point
        if table is store.POINT:
            rows = [rows[0][:3] + (rows[0][3] + 1e-12,) + rows[0][4:], *rows[1:]]
        real(conn, table, cols, rows)

    with open_catalog(tmp_path / "src.sqlite") as src:
        src.import_file(SMALL)
        monkeypatch.setattr(store, "_executemany", corrupting)
        with pytest.raises(CatalogError) as info:
            src.copy_to(catalog_url)
    assert info.value.exit_code == 1
    assert str(info.value).startswith(f"copying {tmp_path / 'src.sqlite'} to {catalog_url}: the exports differ "
                                      "after the copy (near byte ")
    assert str(info.value).endswith("); nothing was written")
    assert execute(catalog_url, "select count(*) from part") == [(0,)]


def test_copy_command(tmp_path, catalog_url):
    src = tmp_path / "src.sqlite"
    assert cli("import", str(SMALL), db=src).exit_code == 0
    result = cli("copy", "--to", catalog_url, db=src)
    assert result.exit_code == 0, result.output
    assert result.stdout.startswith(f"copied 12 parts, 8 curve points from {src} to {catalog_url} (schema version 3)"
                                    "; exports identical (")
    assert result.stderr == ""  # no progress bar when standard error is not a terminal
    exported = [cli("export", "-", "--format", "json", db=where).stdout for where in (src, catalog_url)]
    assert exported[0] == exported[1] and exported[0].count('"part_number"') == 12
    again = cli("copy", "--to", catalog_url, db=src)
    assert again.exit_code == 2 and "already holds 12 parts" in again.stderr and "Traceback" not in again.output
    assert cli("copy", "--to", catalog_url, "--replace", db=src).exit_code == 0


def test_copy_from_a_missing_catalog_creates_nothing(tmp_path):
    result = cli("copy", "--to", str(tmp_path / "to.sqlite"), db=tmp_path / "absent.sqlite")
    assert result.exit_code == 2 and "there is no catalog at" in result.stderr
    assert not (tmp_path / "to.sqlite").exists()


def test_json_export_is_the_same_streamed_or_whole(catalog):
    # export() streams the parts in chunks; the text is the one to_json makes from the whole list
    from partcheck.catalog import io as cio

    whole = cio.to_json(catalog.parts(), catalog.schema_version)
    streamed = io.StringIO()
    catalog.export(streamed, "json")
    assert streamed.getvalue() == whole
    assert list(catalog.iter_parts(chunk=5)) == catalog.parts()
