"""Shared fixtures: a temporary catalog holding the small invented fixture catalog of tests/catalog/data.

``catalog`` runs on every backend (``catalog_url`` from tests/conftest.py: an SQLite file, then a
fresh PostgreSQL database); ``db_path`` is for the tests that are about the SQLite file itself.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from partcheck.catalog import open_catalog

DATA = Path(__file__).parent / "data"
SMALL = DATA / "small.csv"


@pytest.fixture
def db_path(tmp_path: Path) -> Path:
    return tmp_path / "catalog.sqlite"


@pytest.fixture
def catalog(catalog_url: str):
    with open_catalog(catalog_url) as cat:
        cat.import_file(SMALL)
        yield cat


@pytest.fixture
def small_copy(tmp_path: Path) -> Path:
    """The fixture catalog and its curve side file copied to tmp_path (to edit freely)."""
    target = tmp_path / "small.csv"
    shutil.copy(SMALL, target)
    shutil.copy(DATA / "small.curves.csv", tmp_path / "small.curves.csv")
    return target


def write(path: Path, text: str) -> Path:
    path.write_text(text, encoding="utf-8")
    return path


def engine_for(location: str | Path):
    """A plain SQLAlchemy engine on a catalog location (file path or URL), to look under the store."""
    from sqlalchemy import create_engine

    text = str(location)
    return create_engine(text if "://" in text else f"sqlite:///{text}")


def execute(location: str | Path, sql: str, params: dict | None = None) -> list[tuple]:
    """Run one SQL statement on a catalog behind the store's back (committed); returns the rows, if any."""
    from sqlalchemy import text

    engine = engine_for(location)
    try:
        with engine.begin() as conn:
            result = conn.execute(text(sql), params or {})
            return [tuple(r) for r in result] if result.returns_rows else []
    finally:
        engine.dispose()
