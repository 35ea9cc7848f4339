"""Schema upgrades: a catalog written by schema version 1 or 2 is upgraded in place after a backup,
and every stored value is the same afterwards.

The old catalogs come from frozen data, never from today's models: on SQLite the file is rebuilt
from ``data/catalog-v<N>.sqlite.sql`` (a dump of a catalog that partcheck wrote with schema
version N); on PostgreSQL the frozen version-1 table definitions (``migrations.V1_TABLES``) are
created, brought to version N by the frozen migrations up to N, and filled with the rows of that
same dump.  The version-2 catalog holds two pairs of part-number twins (version 2 allowed them).
"""

from __future__ import annotations

import io
import re
import sqlite3

import pytest
from sqlalchemy import MetaData, Table, insert, text

from partcheck.catalog import migrations, open_catalog, store
from partcheck.catalog.migrations import CURRENT_VERSION, MIGRATIONS, V1_TABLES
from partcheck.catalog.models import part_number_key
from partcheck.errors import CatalogError, CatalogInputError, NotFoundError

from .conftest import DATA, engine_for, write
from .test_cli import cli

DUMPS = {1: DATA / "catalog-v1.sqlite.sql", 2: DATA / "catalog-v2.sqlite.sql"}
V1_DUMP = DUMPS[1]
TABLES = ("catalog_meta", "catalog_migration", "part", "curve_point")
#: The columns each version added to ``part`` after version 1 (in the order its migration adds them).
ADDED = {2: ["updated_at"], 3: ["i_frm", "b_sat", "e_as", "e_ar", "part_number_key"]}


def _dump_rows(version: int) -> dict[str, tuple[list[str], list[tuple]]]:
    """Every row of every table of the frozen catalog of ``version``, with the column names."""
    con = sqlite3.connect(":memory:")
    con.executescript(DUMPS[version].read_text(encoding="utf-8"))
    out = {}
    for table in TABLES:
        cur = con.execute(f"select * from {table} order by 1, 2")
        out[table] = ([d[0] for d in cur.description], cur.fetchall())
    con.close()
    return out


def _v1_rows() -> dict[str, tuple[list[str], list[tuple]]]:
    return _dump_rows(1)


def _make_v1(location: str) -> None:
    _make_old(location, 1)


def _make_old(location: str, version: int) -> None:
    if "://" not in location:
        con = sqlite3.connect(location)
        con.executescript(DUMPS[version].read_text(encoding="utf-8"))
        con.close()
        return
    engine = engine_for(location)
    try:
        with engine.begin() as conn:
            for table in V1_TABLES:
                table.create(conn)
            for migration in MIGRATIONS[1:version]:  # the frozen steps up to the old version
                migration.apply(conn)
            rows = _dump_rows(version)
            meta = MetaData()
            for table in V1_TABLES:
                live = Table(table.name, meta, autoload_with=conn)
                names, values = rows[table.name]
                conn.execute(insert(live), [dict(zip(names, r)) for r in values])
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


@pytest.mark.parametrize("old", [1, 2])
def test_an_old_catalog_is_upgraded_in_place_with_every_value_kept(tmp_path, catalog_url, old):
    _make_old(catalog_url, old)
    before = _rows(catalog_url)
    assert before["catalog_meta"][1] == [("format", "partcheck-catalog"), ("schema_version", str(old))]
    assert len(before["part"][1]) == {1: 13, 2: 17}[old] and len(before["curve_point"][1]) == 8

    with open_catalog(catalog_url) as cat:
        assert (cat.schema_version, cat.upgraded_from) == (CURRENT_VERSION, old)
        backup = cat.backup
        first = io.StringIO()
        cat.export(first, "json")
        parts = cat.parts()
    after = _rows(catalog_url)

    # every value of every old column is unchanged; the new columns are NULL (updated_at: time not
    # known; i_frm, b_sat: not given) except part_number_key, filled from each part number
    names, old_parts = before["part"]
    new_names, new_parts = after["part"]
    added = [c for v in range(old + 1, CURRENT_VERSION + 1) for c in ADDED[v]]
    assert new_names == [*names, *added]
    assert [r[:len(names)] for r in new_parts] == old_parts
    for row in new_parts:
        extra = dict(zip(added, row[len(names):]))
        key = extra.pop("part_number_key")
        assert key == part_number_key(row[1]) and set(extra.values()) == {None}, row[1]
    assert after["curve_point"] == before["curve_point"]
    assert after["catalog_meta"][1] == [("format", "partcheck-catalog"), ("schema_version", str(CURRENT_VERSION))]
    assert after["catalog_migration"][1][:old] == before["catalog_migration"][1]  # the old records, untouched
    assert [r[:2] for r in after["catalog_migration"][1]] == [(m.version, m.name) for m in MIGRATIONS]
    awkward = next(p for p in parts if p.part_number == "TST-C-AWKWARD")
    assert (awkward.capacitance, awkward.esr, awkward.t_max) == (0.1 + 0.2, 1 / 3, -40.5)
    assert awkward.description == 'quote " comma, newline\nand ±µΩ'
    assert all(p.i_frm is None and p.b_sat is None for p in parts)

    # the backup holds the catalog as it was
    if "://" in catalog_url:
        assert re.fullmatch(rf"catalog_backup_v{old}_\d{{8}}t\d{{6}}z_part, "
                            rf"catalog_backup_v{old}_\d{{8}}t\d{{6}}z_curve_point", backup)
        prefix = backup.split(", ")[0].removesuffix("part")
        saved = _rows(catalog_url, prefix)
        assert saved["part"] == before["part"] and saved["curve_point"] == before["curve_point"]
    else:
        assert re.fullmatch(re.escape(catalog_url) + rf"\.v{old}-\d{{8}}T\d{{6}}Z\.bak", backup)
        assert _rows(backup) == before
        assert sorted(p.name for p in tmp_path.iterdir() if p.suffix == ".bak") == [backup.rsplit("/", 1)[1]]

    # opening again changes nothing and takes no second backup
    with open_catalog(catalog_url) as cat:
        assert cat.upgraded_from is None and cat.backup is None
    assert _rows(catalog_url) == after
    if "://" not in catalog_url:
        assert len([p for p in tmp_path.iterdir() if p.suffix == ".bak"]) == 1

    # export → import → export stays byte-identical; the provenance columns are not exported
    source = tmp_path / "first.json"
    source.write_text(first.getvalue(), encoding="utf-8")
    assert "updated_at" not in first.getvalue() and "part_number_key" not in first.getvalue()
    with open_catalog(tmp_path / "again.sqlite") as again:
        if old == 2:  # the twins the old catalog holds are kept, but an import refuses them
            with pytest.raises(CatalogInputError) as info:
                again.import_file(source)
            assert str(info.value) == (
                f"{source}: 2 problems, nothing was imported:\n"
                "  parts[16], column 'part_number': part number 'tst-r-4k7-0w25' is the same part number as "
                "'TST-R-4K7-0W25' in parts[10] (differs only in letter case or Unicode form)\n"
                "  parts[7], column 'part_number': part number 'TST-L-4\\u03bc7' is the same part number as "
                "'TST-L-4\\xb57' in parts[6] (differs only in letter case or Unicode form)")
            assert again.count() == 0
            return
        again.import_file(source)
        second = io.StringIO()
        again.export(second, "json")
    assert second.getvalue() == first.getvalue()


def test_an_upgraded_catalog_keeps_its_twins_and_refuses_new_ones(catalog_url, tmp_path):
    _make_old(catalog_url, 2)
    with open_catalog(catalog_url) as cat:
        before = cat.snapshot_hash()
        # lookups: the exact spelling wins; a third spelling of a key held twice finds nothing
        assert cat.get("tst-r-4k7-0w25").description.startswith("case twin")
        assert cat.get("TST-R-4K7-0W25").resistance == 4700.0
        assert cat.get("TST-L-4\u03bc7").isat == 2.2 and cat.get("TST-L-4\u00b57").isat == 2.0
        with pytest.raises(NotFoundError, match="is not in the catalog"):
            cat.get("Tst-R-4k7-0W25")
        assert cat.get("tst-d-45v-10a").part_number == "TST-D-45V-10A"  # one stored part of that key

        new = write(tmp_path / "new.csv", "part_number,category,resistance\nTst-R-4k7-0W25,resistor,4k7\n")
        with pytest.raises(CatalogInputError) as info:
            cat.import_file(new)
        assert str(info.value) == (
            f"{new}, line 2, column 'part_number': part number 'Tst-R-4k7-0W25' is the same part number as the "
            "stored 'TST-R-4K7-0W25' and 'tst-r-4k7-0w25' (differs only in letter case or Unicode form); "
            "nothing was imported")
        assert cat.snapshot_hash() == before
        # re-importing a stored spelling itself with --update stays allowed
        upd = write(tmp_path / "upd.csv", "part_number,category,resistance\ntst-r-4k7-0w25,resistor,4k8\n")
        assert cat.import_file(upd, update=True).updated == 1
        assert cat.get("tst-r-4k7-0w25").resistance == 4800.0 and cat.get("TST-R-4K7-0W25").resistance == 4700.0


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


def test_a_failing_version_3_migration_leaves_the_version_2_catalog_as_it_was(catalog_url, monkeypatch):
    _make_old(catalog_url, 2)
    before = _rows(catalog_url)

    def broken(conn):
        migrations._v3_columns_and_part_number_key(conn)  # columns, keys and index go in ...
        raise CatalogError("the migration broke half-way")  # ... then the step fails

    monkeypatch.setattr(migrations, "MIGRATIONS", (*MIGRATIONS[:2], migrations.Migration(3, "broken", broken)))
    with pytest.raises(CatalogError, match="the migration broke half-way"):
        open_catalog(catalog_url)
    assert _rows(catalog_url) == before


def test_version_3_fills_the_keys_in_batches(catalog_url, monkeypatch):
    monkeypatch.setattr(migrations, "V3_BATCH", 4)  # 17 parts: five batches
    _make_old(catalog_url, 2)
    with open_catalog(catalog_url):
        pass
    rows = _rows(catalog_url)["part"]
    i = rows[0].index("part_number_key")
    assert [r[i] for r in rows[1]] == [part_number_key(r[1]) for r in rows[1]] and len(rows[1]) == 17


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
