"""The bundled seed catalog (``db/parts.csv`` + ``db/parts.curves.csv``, invented demo data).

``seed_catalog(catalog)`` imports it into an open catalog; ``demo_catalog(tmpdir)`` makes a
fresh temporary SQLite catalog holding it, which is what the demo and the tests use so that
nobody's own catalog is touched.
"""

from __future__ import annotations

import os
from pathlib import Path

from ..errors import CatalogError
from .store import Catalog, ImportReport, open_catalog

#: The seed data folder of the source tree.
SEED_DIR = Path(__file__).resolve().parents[2] / "db"
SEED_FILE = SEED_DIR / "parts.csv"


def seed_catalog(catalog: Catalog, *, update: bool = False) -> ImportReport:
    """Import the seed parts (and curves) into ``catalog``; all-or-nothing like any import."""
    if not SEED_FILE.is_file():
        raise CatalogError(f"the seed catalog {SEED_FILE} is missing; run partcheck from a source checkout")
    return catalog.import_file(SEED_FILE, update=update)


def demo_catalog(tmpdir: str | os.PathLike[str]) -> Catalog:
    """A new SQLite catalog ``tmpdir/demo-catalog.sqlite`` seeded from ``db/`` (replaced if present)."""
    path = Path(tmpdir) / "demo-catalog.sqlite"
    for stale in (path, path.with_name(path.name + "-wal"), path.with_name(path.name + "-shm")):
        stale.unlink(missing_ok=True)
    catalog = open_catalog(path, create=True)
    try:
        seed_catalog(catalog)
    except BaseException:
        catalog.close()
        raise
    return catalog
