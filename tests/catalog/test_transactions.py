"""The write itself is one transaction: a failure half-way writes nothing; a busy writer is waited for."""

from __future__ import annotations

import sqlite3
import threading
import time

import pytest
from sqlalchemy.exc import OperationalError

from partcheck.catalog import io as cio
from partcheck.catalog import store
from partcheck.catalog import validate as cval
from partcheck.errors import CatalogError

from .conftest import SMALL


def test_failure_half_way_through_the_write_rolls_everything_back(tmp_path, monkeypatch):
    with store.open_catalog(tmp_path / "c.sqlite") as cat:
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
        assert str(info.value) == f"{tmp_path / 'c.sqlite'}: database error: disk I/O error"
        assert len(calls) == 3
        assert cat.snapshot_hash() == before and cat.count() == 1


def test_part_added_by_someone_else_during_the_import(tmp_path):
    with store.open_catalog(tmp_path / "c.sqlite") as cat:
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
            t0 = time.perf_counter()
            cat.add({"part_number": "R-1", "category": "resistor", "resistance": "4k7"})
            waited = time.perf_counter() - t0
            assert cat.get("R-1").resistance == 4700.0
        assert waited >= 0.3  # it waited (busy timeout 10 s) instead of failing with "database is locked"
    finally:
        release.join()
        other.close()
