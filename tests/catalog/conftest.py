"""Shared fixtures: a temporary catalog holding the small invented fixture catalog of tests/catalog/data."""

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
def catalog(db_path: Path):
    with open_catalog(db_path) as cat:
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
