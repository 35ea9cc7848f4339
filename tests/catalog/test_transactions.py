"""The write itself is one transaction: a failure half-way writes nothing; a busy writer is waited for,
and a write that finds the catalog busy or changed under it is retried, a bounded number of times."""

from __future__ import annotations

import sqlite3
import threading

import pytest
from sqlalchemy.exc import OperationalError

from partcheck.catalog import io as cio
from partcheck.catalog import store
from partcheck.catalog import validate as cval
from partcheck.errors import CatalogError

from .conftest import SMALL, write


def test_failure_half_way_through_the_write_rolls_everything_back(catalog_url, monkeypatch):
    with store.open_catalog(catalog_url) as cat:
        cat.add({"part_number": "KEEP-1", "category": "resistor", "resistance": "1k"})
        before = cat.snapshot_hash()
        calls = []
        real = store._executemany

        def flaky(conn, table, cols, rows):
            calls.append(len(rows))
            if len(calls) == 3:  # after two categories' rows went in
                raise OperationalError("INSERT ...", {}, sqlite3.OperationalError("disk I/O error"))
            real(conn, table, cols, rows)

        monkeypatch.setattr(store, "_executemany", flaky)
        with pytest.raises(CatalogError) as info:
            cat.import_file(SMALL)
        assert info.value.exit_code == 1
        assert str(info.value) == f"{catalog_url}: database error: disk I/O error"
        assert len(calls) == 3  # not a busy error: not retried
        assert cat.snapshot_hash() == before and cat.count() == 1


def test_part_added_by_someone_else_during_the_import(catalog_url):
    with store.open_catalog(catalog_url) as cat:
        table = cio.read_table(SMALL)
        validated = cval.validate(table, cio.read_curve_table(SMALL), existing=cat._existing())
        cat.add({"part_number": "TST-Z-150V", "category": "clamp"})  # the other writer
        with pytest.raises(CatalogError) as info:
            cat._write(validated, update=False)
        assert info.value.exit_code == 1
        assert "part 'TST-Z-150V' was added to the catalog by someone else during this import" in str(info.value)
        assert cat.count() == 1


def test_a_busy_writer_is_waited_for(tmp_path):
    path = tmp_path / "c.sqlite"
    store.open_catalog(path).close()
    other = sqlite3.connect(path, isolation_level=None, check_same_thread=False)
    other.execute("BEGIN IMMEDIATE")  # another process holds the write lock ...
    release = threading.Timer(0.5, lambda: other.execute("COMMIT"))  # ... for half a second
    release.start()
    try:
        with store.open_catalog(path) as cat:
            cat.add({"part_number": "R-1", "category": "resistor", "resistance": "4k7"})
            committed_first = not other.in_transaction  # the other writer had finished when ours went in
            assert cat.get("R-1").resistance == 4700.0
        assert committed_first  # it waited (busy timeout 10 s) instead of failing with "database is locked"
    finally:
        release.join()
        other.close()


def _count_attempts(monkeypatch) -> list[int]:
    attempts: list[int] = []
    real = store.Catalog._write_once

    def counting(self, *args, **kwargs):
        attempts.append(1)
        return real(self, *args, **kwargs)

    monkeypatch.setattr(store.Catalog, "_write_once", counting)
    return attempts


def test_sqlite_locked_past_the_busy_timeout_is_retried(tmp_path, monkeypatch):
    monkeypatch.setattr(store, "BUSY_TIMEOUT_S", 0.05)
    monkeypatch.setattr(store, "BACKOFF_S", 0.1)
    path = tmp_path / "c.sqlite"
    store.open_catalog(path).close()
    attempts = _count_attempts(monkeypatch)
    other = sqlite3.connect(path, isolation_level=None, check_same_thread=False)
    other.execute("BEGIN IMMEDIATE")
    other.execute("INSERT INTO catalog_meta (key, value) VALUES ('other', 'writer')")
    first_try_failed = threading.Event()
    real_sleep = store.time.sleep

    def sleep_then_release(seconds):  # the first backoff: the other writer commits meanwhile
        first_try_failed.set()
        if other.in_transaction:
            other.execute("COMMIT")
        real_sleep(seconds)

    monkeypatch.setattr(store.time, "sleep", sleep_then_release)
    try:
        with store.open_catalog(path) as cat:
            report = cat.import_file(SMALL)
            assert (report.added, cat.count()) == (12, 12)
    finally:
        other.close()
    assert first_try_failed.is_set() and len(attempts) == 2


def test_sqlite_locked_for_good_gives_up_cleanly(tmp_path, monkeypatch):
    monkeypatch.setattr(store, "BUSY_TIMEOUT_S", 0.02)
    monkeypatch.setattr(store, "BACKOFF_S", 0.01)
    monkeypatch.setattr(store, "WRITE_ATTEMPTS", 3)
    path = tmp_path / "c.sqlite"
    store.open_catalog(path).close()
    attempts = _count_attempts(monkeypatch)
    other = sqlite3.connect(path, isolation_level=None)
    other.execute("BEGIN IMMEDIATE")
    try:
        with store.open_catalog(path) as cat:
            with pytest.raises(store.CatalogBusyError) as info:
                cat.import_file(SMALL)
            assert info.value.exit_code == 1
            assert str(info.value) == (f"{path}: the catalog is busy (another process is writing: database is "
                                       "locked); nothing was written, try again (gave up after 3 tries)")
            other.execute("ROLLBACK")
            assert cat.count() == 0
    finally:
        other.close()
    assert len(attempts) == 3


@pytest.mark.postgres
def test_postgresql_serialization_failure_is_retried(postgres_url, postgres_server, tmp_path, monkeypatch):
    import psycopg

    monkeypatch.setattr(store, "BACKOFF_S", 0.01)
    with store.open_catalog(postgres_url) as cat:
        cat.import_file(SMALL)
        attempts = _count_attempts(monkeypatch)
        dbname = postgres_url.rsplit("/", 1)[1]
        other = psycopg.connect(f"host=127.0.0.1 port={postgres_server.port} user=partcheck dbname={dbname}")
        # Another engineer's transaction changes the same part and has not committed yet ...
        other.execute("UPDATE part SET vds_max = 175.0 WHERE part_number = 'TST-SW-150V-8A'")
        upd = write(tmp_path / "upd.csv", "part_number,category,vds_max\nTST-SW-150V-8A,switch,200\n")
        real = store.Catalog._write_once

        def first_try_while_the_other_commits(self, *args, **kwargs):
            if not attempts:  # our UPDATE waits on the row lock; the other commits 0.3 s later
                threading.Timer(0.3, other.commit).start()
            return real(self, *args, **kwargs)

        monkeypatch.setattr(store.Catalog, "_write_once", first_try_while_the_other_commits)
        try:
            report = cat.import_file(upd, update=True)
        finally:
            other.close()
        # ... our first try saw a snapshot from before that commit: "could not serialize access due to
        # concurrent update"; the second try read the committed row and wrote over it.
        assert report.updated == 1 and len(attempts) == 2
        assert cat.get("TST-SW-150V-8A").vds_max == 200.0
