"""Catalog schema versions: an ordered list of named migrations, each applied once and recorded.

The schema version lives in ``catalog_meta`` (key ``schema_version``); every applied migration
is recorded in ``catalog_migration`` with its name and UTC time.  :func:`migrate` applies the
missing ones in order inside the caller's transaction, so it is safe to run again.  A catalog
whose version is newer than :data:`CURRENT_VERSION` (or not a number) is refused.

Adding a migration: append ``Migration(n + 1, "what it does", function)`` to
:data:`MIGRATIONS`; the function receives a SQLAlchemy ``Connection`` and must be written in
dialect-neutral SQLAlchemy Core (SQLite and PostgreSQL).  Once a later migration changes a
table, give version 1 a frozen copy of the original table definitions instead of the models.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from datetime import UTC, datetime
from typing import Final

from sqlalchemy import Connection, insert, inspect, select, update

from .. import __version__
from ..errors import CatalogError
from .models import CatalogMeta, CatalogMigration, CurvePoint, Part

META = CatalogMeta.__table__
MIGRATION = CatalogMigration.__table__
TABLES: Final = (META, MIGRATION, Part.__table__, CurvePoint.__table__)


@dataclass(frozen=True)
class Migration:
    """One step of the schema: ``apply(conn)`` brings version ``version - 1`` to ``version``."""

    version: int
    name: str
    apply: Callable[[Connection], None]


def _v1_create_tables(conn: Connection) -> None:
    for table in TABLES:
        table.create(conn, checkfirst=True)


MIGRATIONS: Final[tuple[Migration, ...]] = (
    Migration(1, "create the part, curve_point, catalog_meta and catalog_migration tables", _v1_create_tables),
)

#: The schema version this code reads and writes.
CURRENT_VERSION: Final = MIGRATIONS[-1].version


def schema_version(conn: Connection, location: str) -> int | None:
    """The catalog's schema version; None for an empty database (no tables at all).

    Raises :class:`CatalogError` for a database that holds other tables (not a catalog), or a
    version that is not a number.
    """
    tables = set(inspect(conn).get_table_names())
    if not tables:
        return None
    if META.name not in tables:
        shown = ", ".join(sorted(tables)[:5]) + (", ..." if len(tables) > 5 else "")
        raise CatalogError(
            f"{location} is not a partcheck catalog (it holds the tables {shown} but no {META.name}); "
            "point --db or PARTCHECK_DB at a catalog file, or at a new file to create one"
        )
    value = conn.execute(select(META.c.value).where(META.c.key == "schema_version")).scalar()
    if value is None:
        return None
    try:
        version = int(value)
    except ValueError:
        version = 0
    if version < 1:
        raise CatalogError(f"{location} has an unknown catalog schema version {value!r}; expected 1 to {CURRENT_VERSION}")
    return version


def check_version(version: int, location: str) -> None:
    """Refuse a catalog written by a newer partcheck."""
    if version > CURRENT_VERSION:
        raise CatalogError(
            f"{location} has catalog schema version {version}, newer than version {CURRENT_VERSION} "
            f"that partcheck {__version__} understands; upgrade partcheck to use this catalog"
        )


def migrate(conn: Connection, current: int | None) -> list[Migration]:
    """Apply every migration above ``current`` (None = empty database) inside ``conn``'s transaction."""
    start = current or 0
    check_version(start, "the catalog")
    applied = []
    for migration in MIGRATIONS:
        if migration.version <= start:
            continue
        migration.apply(conn)
        conn.execute(insert(MIGRATION).values(
            version=migration.version, name=migration.name,
            applied_at=datetime.now(UTC).isoformat(timespec="seconds")))
        applied.append(migration)
    if applied:
        version = str(applied[-1].version)
        if current is None:
            conn.execute(insert(META), [{"key": "schema_version", "value": version},
                                        {"key": "format", "value": "partcheck-catalog"}])
        else:
            conn.execute(update(META).where(META.c.key == "schema_version").values(value=version))
    return applied
