"""Schema upgrades: a catalog written by schema version 1 is upgraded in place after a backup, and
every stored value is the same afterwards.

The version-1 catalog comes from frozen data, never from today's models: on SQLite the file is
rebuilt from ``data/catalog-v1.sqlite.sql`` (an ``sqlite3 .dump`` of a catalog that partcheck
wrote with schema version 1); on PostgreSQL the frozen version-1 table definitions
(``migrations.V1_TABLES``) are created and filled with the rows of that same dump.
"""

from __future__ import annotations

import io
import re
import sqlite3

import pytest
from sqlalchemy import insert, text

from partcheck.catalog import migrations, open_catalog, store
from partcheck.catalog.migrations import CURRENT_VERSION, MIGRATIONS, V1_TABLES
from partcheck.errors import CatalogError

from .conftest import DATA, engine_for
from .test_cli import cli

V1_DUMP = DATA / "catalog-v1.sqlite.sql"
TABLES = ("catalog_meta", "catalog_migration", "part", "curve_point")


def _v1_rows() -> dict[str, tuple[list[str], list[tuple]]]:
    """Every row of every table of the frozen version-1 catalog, with the column names."""
    con = sqlite3.connect(":memory:")
    con.executescript(V1_DUMP.read_text(encoding="utf-8"))
    out = {}
    for table in TABLES:
        cur = con.execute(f"select * from {table} order by 1, 2")
        out[table] = ([d[0] for d in cur.description], cur.fetchall())
    con.close()
    return out


def _make_v1(location: str) -> None:
    if "://" not in location:
        con = sqlite3.connect(location)
        con.executescript(V1_DUMP.read_text(encoding="utf-8"))
        con.close()
        return
    engine = engine_for(location)
    try:
        with engine.begin() as conn:
            for table in V1_TABLES:
                table.create(conn)
            rows = _v1_rows()
            for table in V1_TABLES:
                names, values = rows[table.name]
                conn.execute(insert(table), [dict(zip(names, r)) for r in values])
            # ids were given explicitly: move PostgreSQL's sequences past them, as the old catalog's would be
            for name in ("part", "curve_point"):
                conn.execute(text(f"select setval(pg_get_serial_sequence('{name}', 'id'), "
                                  f"(select max(id) from {name}))"))
    finally:
        engine.dispose()


def _rows(location: str, prefix: str = "") -> dict[str, tuple[list[str], list[tuple]]]:
    engine = engine_for(location)
    out = {}
    try:
        with engine.connect() as conn:
            for table in TABLES if not prefix else ("part", "curve_point"):
                result = conn.execute(text(f"select * from {prefix}{table} order by 1, 2"))
                out[table] = (list(result.keys()), [tuple(r) for r in result])
    finally:
        engine.dispose()
    return out


def test_frozen_v1_definitions_are_what_version_1_wrote():
    # The frozen tables compile to the same columns as the dump of a real version-1 catalog.
    rows = _v1_rows()
    assert {t.name: [c.name for c in t.columns] for t in V1_TABLES} == {name: cols for name, (cols, _) in rows.items()}
    assert len(rows["part"][1]) == 13 and len(rows["curve_point"][1]) == 8


def test_a_version_1_catalog_is_upgraded_in_place_with_every_value_kept(tmp_path, catalog_url):
    _make_v1(catalog_url)
    before = _rows(catalog_url)
    assert before["catalog_meta"][1] == [("format", "partcheck-catalog"), ("schema_version", "1")]

    with open_catalog(catalog_url) as cat:
        assert (cat.schema_version, cat.upgraded_from) == (CURRENT_VERSION, 1)
        backup = cat.backup
        first = io.StringIO()
        cat.export(first, "json")
        parts = cat.parts()
    after = _rows(catalog_url)

    # every value of every version-1 column is unchanged; the new column is NULL (time not known)
    names, old_parts = before["part"]
    new_names, new_parts = after["part"]
    assert new_names == [*names, "updated_at"]
    assert [r[:-1] for r in new_parts] == old_parts and {r[-1] for r in new_parts} == {None}
    assert after["curve_point"] == before["curve_point"]
    assert after["catalog_meta"][1] == [("format", "partcheck-catalog"), ("schema_version", str(CURRENT_VERSION))]
    assert after["catalog_migration"][1][0] == before["catalog_migration"][1][0]  # the v1 record, untouched
    assert [r[:2] for r in after["catalog_migration"][1]] == [(m.version, m.name) for m in MIGRATIONS]
    awkward = next(p for p in parts if p.part_number == "TST-C-AWKWARD")
    assert (awkward.capacitance, awkward.esr, awkward.t_max) == (0.1 + 0.2, 1 / 3, -40.5)
    assert awkward.description == 'quote " comma, newline\nand ±µΩ'

    # the backup holds the catalog as it was
    if "://" in catalog_url:
        assert re.fullmatch(r"catalog_backup_v1_\d{8}t\d{6}z_part, catalog_backup_v1_\d{8}t\d{6}z_curve_point", backup)
        prefix = backup.split(", ")[0].removesuffix("part")
        saved = _rows(catalog_url, prefix)
        assert saved["part"] == before["part"] and saved["curve_point"] == before["curve_point"]
    else:
        assert re.fullmatch(re.escape(catalog_url) + r"\.v1-\d{8}T\d{6}Z\.bak", backup)
        assert _rows(backup) == before
        assert sorted(p.name for p in tmp_path.iterdir() if p.suffix == ".bak") == [backup.rsplit("/", 1)[1]]

    # opening again changes nothing and takes no second backup
    with open_catalog(catalog_url) as cat:
        assert cat.upgraded_from is None and cat.backup is None
    assert _rows(catalog_url) == after
    if "://" not in catalog_url:
        assert len([p for p in tmp_path.iterdir() if p.suffix == ".bak"]) == 1

    # export → import → export stays byte-identical; the provenance column is not exported
    source = tmp_path / "first.json"
    source.write_text(first.getvalue(), encoding="utf-8")
    assert "updated_at" not in first.getvalue()
    with open_catalog(tmp_path / "again.sqlite") as again:
        again.import_file(source)
        second = io.StringIO()
        again.export(second, "json")
    assert second.getvalue() == first.getvalue()


def test_writes_record_when_each_part_was_written(catalog_url, tmp_path):
    _make_v1(catalog_url)
    with open_catalog(catalog_url) as cat:
        assert cat.updated_at("TST-SW-150V-8A") is None
        cat.add({"part_number": "NEW-1", "category": "resistor", "resistance": "1k"})
        upd = tmp_path / "upd.csv"
        upd.write_text("part_number,category,vds_max\nTST-SW-150V-8A,switch,200\n", encoding="utf-8")
        cat.import_file(upd, update=True)
        for pn in ("NEW-1", "TST-SW-150V-8A"):
            assert re.fullmatch(r"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\+00:00", cat.updated_at(pn) or ""), pn
        assert cat.updated_at("TST-SW-650V-2A") is None  # untouched by the update
    shown = cli("show", "TST-SW-650V-2A", db=catalog_url).stdout
    assert "last written: before schema version 2 (not recorded)" in shown


def test_a_failing_migration_leaves_the_old_catalog_as_it_was(catalog_url, monkeypatch):
    _make_v1(catalog_url)
    before = _rows(catalog_url)

    def broken(conn):
        migrations._v2_part_updated_at(conn)  # the column goes in ...
        raise CatalogError("the migration broke half-way")  # ... then the step fails

    monkeypatch.setattr(migrations, "MIGRATIONS", (MIGRATIONS[0], migrations.Migration(2, "broken", broken)))
    with pytest.raises(CatalogError, match="the migration broke half-way"):
        open_catalog(catalog_url)
    assert _rows(catalog_url) == before  # the ALTER TABLE was rolled back too (transactional DDL)


def test_init_command_reports_the_upgrade_and_the_backup(tmp_path):
    db = tmp_path / "old.sqlite"
    _make_v1(str(db))
    result = cli("init", db=db)
    assert result.exit_code == 0, result.output
    first, second = result.stdout.splitlines()
    assert re.fullmatch(rf"upgraded {re.escape(str(db))} from schema version 1 to {CURRENT_VERSION}; "
                        rf"backup: {re.escape(str(db))}\.v1-\d{{8}}T\d{{6}}Z\.bak", first)
    assert second == f"catalog ready at {db} (schema version {CURRENT_VERSION}, 13 parts)"


def test_backup_failure_stops_the_upgrade(tmp_path, monkeypatch):
    db = tmp_path / "old.sqlite"
    _make_v1(str(db))
    before = _rows(str(db))

    def no_room(self, target):
        raise store._failure(f"{self.location}: cannot back up the catalog to {target} before upgrading it "
                             "(database or disk is full); nothing was changed")

    monkeypatch.setattr(store.Catalog, "_backup_sqlite", no_room)
    with pytest.raises(CatalogError, match="cannot back up the catalog .* nothing was changed"):
        open_catalog(db)
    assert _rows(str(db)) == before
