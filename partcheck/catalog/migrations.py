"""Catalog schema versions: an ordered list of named migrations, each applied once and recorded.

The schema version lives in ``catalog_meta`` (key ``schema_version``); every applied migration
is recorded in ``catalog_migration`` with its name and UTC time.  :func:`migrate` applies the
missing ones in order inside the caller's transaction, so it is safe to run again.  A catalog
whose version is newer than :data:`CURRENT_VERSION` (or not a number) is refused.

Adding a migration: append ``Migration(n + 1, "what it does", function)`` to
:data:`MIGRATIONS`; the function receives a SQLAlchemy ``Connection`` and must be written in
dialect-neutral SQLAlchemy Core (SQLite and PostgreSQL).  Version 1 creates the tables from a
frozen copy of their original definitions (:data:`V1_TABLES`), never from the live models, so an
old catalog and a new one migrated from scratch end with the same schema.

Versions:

1. the ``part``, ``curve_point``, ``catalog_meta`` and ``catalog_migration`` tables;
2. ``part.updated_at``: when each part was last written (UTC, ISO 8601), set by every add,
   import and update; NULL for parts written before version 2 (their time is unknown).  It is
   provenance of this catalog, not a property of the part, so exports leave it out.
3. the exchange columns ``part.i_frm`` (diodes: repetitive peak forward current) and
   ``part.b_sat`` (magnetics: saturation flux density at 100 °C), ``part.e_as`` and ``part.e_ar``
   (switches: single-pulse and repetitive avalanche energy), NULL for existing parts; and
   ``part.part_number_key`` (:func:`partcheck.catalog.models.part_number_key` of the part number,
   filled for every existing part here, with the non-unique index ``ix_part_part_number_key``), so
   imports find part numbers that differ only in letter case or Unicode form.  The index is not
   unique because a catalog written before version 3 may already hold such twins: the upgrade
   keeps them, imports refuse new ones.  Provenance like ``updated_at``, not exported.

Before an existing catalog is upgraded the store takes a backup (see :func:`backup_tables` and
``Catalog._upgrade``).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from datetime import UTC, datetime
from typing import Final

from sqlalchemy import (
    Column,
    Connection,
    Float,
    ForeignKey,
    Index,
    Integer,
    MetaData,
    String,
    Table,
    UniqueConstraint,
    bindparam,
    insert,
    inspect,
    select,
    text,
    update,
)

from .. import __version__
from ..errors import CatalogError
from .models import CatalogMeta, CatalogMigration, CurvePoint, Part, part_number_key

META = CatalogMeta.__table__
MIGRATION = CatalogMigration.__table__
TABLES: Final = (META, MIGRATION, Part.__table__, CurvePoint.__table__)

# ---- version 1, frozen: the tables exactly as the first release created them ----------------

_V1 = MetaData()
_V1_TEXT = frozenset({"part_number", "category", "subtype", "description", "package", "notes", "status",
                      "dielectric", "case_size"})
_V1_PART_COLUMNS: Final = (
    "part_number", "category", "subtype", "description", "package", "notes", "status", "vds_max", "id_max",
    "id_pulse", "rds_on", "rds_on_125", "coss", "qg", "vrrm", "if_avg", "ifsm", "vf", "vf_current", "trr",
    "qrr", "cj", "v_breakdown", "v_clamp", "p_max", "p_pulse", "capacitance", "tolerance", "v_rated",
    "dielectric", "esr", "esl", "ripple_current", "ripple_freq", "ripple_temp", "ripple_rise", "life_hours",
    "life_temp", "case_size", "resistance", "p_rated", "t_knee", "v_max", "lm", "turns_ratio", "llk", "isat",
    "dcr_pri", "dcr_sec", "v_isolation", "ctr_min", "ctr_max", "if_max", "vceo", "ic_max", "v_ref", "vka_max",
    "ika_max", "ika_min", "tj_max", "rth_ja", "t_max",
)
V1_TABLES: Final = (
    Table("catalog_meta", _V1, Column("key", String, primary_key=True), Column("value", String, nullable=False)),
    Table("catalog_migration", _V1, Column("version", Integer, primary_key=True, autoincrement=False),
          Column("name", String, nullable=False), Column("applied_at", String, nullable=False)),
    Table("part", _V1, Column("id", Integer, primary_key=True),
          *(Column(name, String if name in _V1_TEXT else Float, nullable=name not in ("part_number", "category"))
            for name in _V1_PART_COLUMNS),
          Index("ix_part_part_number", "part_number", unique=True), Index("ix_part_category", "category"),
          Index("ix_part_subtype", "subtype"), Index("ix_part_category_subtype", "category", "subtype")),
    Table("curve_point", _V1, Column("id", Integer, primary_key=True),
          Column("part_id", Integer, ForeignKey("part.id", ondelete="CASCADE"), nullable=False, index=True),
          Column("curve", String, nullable=False), Column("seq", Integer, nullable=False),
          Column("x", Float, nullable=False), Column("y", Float, nullable=False),
          UniqueConstraint("part_id", "curve", "seq", name="uq_curve_point")),
)


@dataclass(frozen=True)
class Migration:
    """One step of the schema: ``apply(conn)`` brings version ``version - 1`` to ``version``."""

    version: int
    name: str
    apply: Callable[[Connection], None]


def _v1_create_tables(conn: Connection) -> None:
    for table in V1_TABLES:
        table.create(conn, checkfirst=True)


def _add_column(conn: Connection, table: str, column: Column) -> None:
    """``ALTER TABLE ... ADD COLUMN`` (nullable, no default): the same statement on SQLite and PostgreSQL,
    with the column type compiled for the connection's dialect."""
    kind = column.type.compile(dialect=conn.dialect)
    preparer = conn.dialect.identifier_preparer
    conn.execute(text(f"ALTER TABLE {preparer.quote(table)} ADD COLUMN {preparer.quote(column.name)} {kind}"))


def _v2_part_updated_at(conn: Connection) -> None:
    _add_column(conn, "part", Column("updated_at", String(32)))


#: Rows per batch when version 3 fills ``part_number_key`` for the existing parts.
V3_BATCH: Final = 5000


def _v3_columns_and_part_number_key(conn: Connection) -> None:
    for name in ("i_frm", "b_sat", "e_as", "e_ar"):
        _add_column(conn, "part", Column(name, Float))
    _add_column(conn, "part", Column("part_number_key", String))
    # The part table as far as this step needs it (frozen here, not the live model).
    part = Table("part", MetaData(), Column("id", Integer, primary_key=True), Column("part_number", String),
                 Column("part_number_key", String))
    fill = update(part).where(part.c.id == bindparam("pid")).values(part_number_key=bindparam("key"))
    last = None
    while True:  # in id order, one batch at a time: memory does not grow with the catalog
        query = select(part.c.id, part.c.part_number).order_by(part.c.id).limit(V3_BATCH)
        rows = conn.execute(query if last is None else query.where(part.c.id > last)).all()
        if not rows:
            break
        conn.execute(fill, [{"pid": pid, "key": part_number_key(pn)} for pid, pn in rows])
        last = rows[-1][0]
    Index("ix_part_part_number_key", part.c.part_number_key).create(conn)


MIGRATIONS: Final[tuple[Migration, ...]] = (
    Migration(1, "create the part, curve_point, catalog_meta and catalog_migration tables", _v1_create_tables),
    Migration(2, "add part.updated_at (when each part was last written, UTC)", _v2_part_updated_at),
    Migration(3, "add part.i_frm, part.b_sat, part.e_as, part.e_ar and part.part_number_key (normalised part "
                 "number, indexed)",
              _v3_columns_and_part_number_key),
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
        raise CatalogError(f"{location} has an unknown catalog schema version {value!r}; "
                           f"expected 1 to {CURRENT_VERSION}")
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


def backup_tables(conn: Connection, version: int, stamp: str) -> list[str]:
    """Copy ``part`` and ``curve_point`` (every row, every column) into new tables
    ``catalog_backup_v<version>_<stamp>_<table>`` inside ``conn``'s transaction; returns their names.

    The backup of a database-server catalog before an upgrade (a SQLite catalog is copied as a
    whole file instead).  Columns only, no indexes or constraints: the copy is for restoring by
    hand, and index names would clash with the live tables'.
    """
    names = []
    meta = MetaData()
    for name in ("part", "curve_point"):
        live = Table(name, meta, autoload_with=conn)
        copy = Table(f"catalog_backup_v{version}_{stamp}_{name}", meta,
                     *(Column(c.name, c.type, nullable=True) for c in live.columns))
        copy.create(conn)
        cols = [c.name for c in live.columns]
        conn.execute(insert(copy).from_select(cols, select(*live.c)))
        names.append(copy.name)
    return names
