"""Open a catalog and use it: add, import, export, list, show, find, remove.

:func:`open_catalog` takes a file path (SQLite) or a SQLAlchemy URL (anything with ``://``);
without one it uses ``PARTCHECK_DB``, else the per-user file
``$XDG_DATA_HOME/partcheck/catalog.sqlite`` (``~/.local/share/partcheck/catalog.sqlite``).
SQLite catalogs run in WAL mode with a 10 s busy timeout and foreign keys on; every write is
one ``BEGIN IMMEDIATE`` transaction, so an import either writes everything or nothing.
PostgreSQL catalogs run every transaction at ``REPEATABLE READ``: a reader sees one snapshot
(the catalog before or after a concurrent import, never half of it), as SQLite's WAL gives.

Concurrency: a write that finds the catalog busy (SQLite "database is locked" after the busy
timeout, a PostgreSQL serialization failure, deadlock or lock timeout) or that collides on a
unique key is rolled back and run again, at most :data:`WRITE_ATTEMPTS` times with exponential
backoff from :data:`BACKOFF_S`; the re-run re-reads the catalog, so a real conflict ("added by
someone else") then fails with a clear error, never a partial write.

The code is dialect-neutral SQLAlchemy Core (PostgreSQL is the other target); the only
dialect-specific parts are the connection set-up (hooks, isolation level, the collation that
sorts in code-point order) and the form of the upgrade backup.
"""

from __future__ import annotations

import hashlib
import os
import random
import sqlite3
import time
from collections import defaultdict
from collections.abc import Callable, Iterable, Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import UTC, datetime
from itertools import repeat, zip_longest
from operator import itemgetter
from pathlib import Path
from typing import IO, Literal, Self

from sqlalchemy import Engine, bindparam, create_engine, delete, event, func, insert, select, update
from sqlalchemy.engine import URL, make_url
from sqlalchemy.exc import ArgumentError, DBAPIError, IntegrityError, NoSuchModuleError, SQLAlchemyError
from sqlalchemy.orm import Session

from ..errors import CatalogError, CatalogInputError, NotFoundError
from . import io as cio
from . import validate as cval
from .migrations import CURRENT_VERSION, backup_tables, check_version, migrate, schema_version
from .models import CATEGORIES, CATEGORY_FIELDS, FIELDS, Curve, CurvePoint, Part, PartRecord, part_number_key

PART = Part.__table__
POINT = CurvePoint.__table__
_COLUMNS = [PART.c[name] for name in FIELDS]

#: SQLite busy timeout [s]: how long a writer waits for another writer before giving up.
BUSY_TIMEOUT_S = 10.0

#: How many times a write is tried when the catalog is busy or changed under it (first try included).
WRITE_ATTEMPTS = 5
#: First wait between tries [s]; doubled after each, with random jitter (0.5x to 1.5x).
BACKOFF_S = 0.2

#: Rows per chunk when streaming parts (iter_parts, export, copy).
CHUNK = 2000

#: Rows per chunk of a streamed import; a file with at most this many rows is validated whole first.
IMPORT_CHUNK = 20_000

#: PostgreSQL SQLSTATEs worth a retry: serialization_failure, deadlock_detected, lock_not_available.
_RETRY_SQLSTATES = frozenset({"40001", "40P01", "55P03"})

#: Per dialect, the collation under which the database sorts text in code-point order (as Python does).
_CODEPOINT_COLLATION = {"sqlite": "BINARY", "postgresql": "C"}


class CatalogBusyError(CatalogError):
    """The catalog stayed busy (locked by another writer) through every retry; nothing was written."""

    exit_code = 1


def _is_busy(orig: BaseException | None) -> bool:
    if getattr(orig, "sqlstate", None) in _RETRY_SQLSTATES:
        return True
    name = str(getattr(orig, "sqlite_errorname", ""))
    return name.startswith(("SQLITE_BUSY", "SQLITE_LOCKED")) or "database is locked" in str(orig)


def _now() -> str:
    return datetime.now(UTC).isoformat(timespec="seconds")


def default_location() -> Path:
    """The per-user catalog file: ``$XDG_DATA_HOME/partcheck/catalog.sqlite`` or ``~/.local/share/...``."""
    base = os.environ.get("XDG_DATA_HOME", "")
    root = Path(base) if base and Path(base).is_absolute() else Path.home() / ".local" / "share"
    return root / "partcheck" / "catalog.sqlite"


def _failure(message: str) -> CatalogError:
    """A database failure that is not the user's input (exit code 1)."""
    exc = CatalogError(message)
    exc.exit_code = 1
    return exc


@dataclass(frozen=True)
class ImportReport:
    """What an import wrote."""

    file: str
    added: int
    updated: int
    curve_points: int
    curves_file: str | None
    method: str = "bulk"

    def __str__(self) -> str:
        curves = f", {_n(self.curve_points, 'curve point')}" + (f" from {self.curves_file}" if self.curves_file else "")
        return f"{self.file}: {_n(self.added, 'part')} added, {self.updated} updated{curves}"


def _n(count: int, noun: str) -> str:
    return f"{count} {noun}{'' if count == 1 else 's'}"


@dataclass(frozen=True)
class CopyReport:
    """What a copy wrote, verified: the canonical exports of source and target were identical."""

    source: str
    target: str
    parts: int
    curve_points: int
    export_bytes: int
    schema_version: int

    def __str__(self) -> str:
        return (f"copied {_n(self.parts, 'part')}, {_n(self.curve_points, 'curve point')} from {self.source} to "
                f"{self.target} (schema version {self.schema_version}); exports identical "
                f"({self.export_bytes} bytes of JSON)")


@dataclass(frozen=True)
class ExportReport:
    """What an export wrote; ``curves_skipped`` counts points that had nowhere to go (CSV to a stream)."""

    parts: int
    curve_points: int
    curves_file: str | None = None
    curves_skipped: int = 0


def open_catalog(url: str | os.PathLike[str] | None = None, *, create: bool = True) -> Catalog:
    """Open (and with ``create`` make) the catalog at ``url``; see the module docstring for defaults.

    Raises :class:`CatalogError` when the target is not a catalog, holds a newer schema version,
    or does not exist and ``create`` is false.
    """
    if url is None or (isinstance(url, str) and not url.strip()):
        url = os.environ.get("PARTCHECK_DB", "").strip() or None
    is_default = url is None
    target = str(default_location() if url is None else url)
    sqlite_path: Path | None = None
    if "://" in target:
        try:
            sa_url = make_url(target)
        except ArgumentError:
            raise CatalogError(f"{target!r} is not a database URL such as postgresql://host/dbname") from None
        location = sa_url.render_as_string(hide_password=True)
        if sa_url.get_backend_name() == "sqlite" and sa_url.database not in (None, "", ":memory:"):
            sqlite_path = Path(sa_url.database)
    else:
        sqlite_path = Path(target).expanduser()
        sa_url = URL.create("sqlite", database=str(sqlite_path))
        location = str(sqlite_path)
    if sqlite_path is not None:
        if sqlite_path.is_dir():
            raise CatalogError(f"{location} is a directory; expected a catalog file such as catalog.sqlite")
        if not sqlite_path.exists():
            if not create:
                raise CatalogError(f"there is no catalog at {location}; create it with `partcheck catalog init`")
            if is_default:
                sqlite_path.parent.mkdir(parents=True, exist_ok=True)
            elif not sqlite_path.parent.is_dir():
                raise CatalogError(f"cannot create {location}: the directory {sqlite_path.parent} does not exist")
    try:
        backend = sa_url.get_backend_name()
        kwargs: dict = {}
        if backend == "sqlite":
            kwargs = {"connect_args": {"timeout": BUSY_TIMEOUT_S}}
        elif backend == "postgresql":
            kwargs = {"isolation_level": "REPEATABLE READ", "pool_pre_ping": True}
        engine = create_engine(sa_url, **kwargs)
    except (ArgumentError, NoSuchModuleError, ImportError) as exc:
        raise CatalogError(f"cannot use the database URL {location}: {exc}") from None
    if engine.dialect.name == "sqlite":
        _sqlite_hooks(engine)
    catalog = Catalog(engine, location, sqlite_path)
    try:
        catalog._open(create)
    except BaseException:
        catalog.close()
        raise
    return catalog


def _sqlite_hooks(engine: Engine) -> None:
    @event.listens_for(engine, "connect")
    def _on_connect(dbapi_conn, _record):  # pragma: no cover - exercised by every test
        dbapi_conn.isolation_level = None  # the driver must not BEGIN on its own; we do (below)
        cursor = dbapi_conn.cursor()
        cursor.execute(f"PRAGMA busy_timeout = {int(BUSY_TIMEOUT_S * 1000)}")
        cursor.execute("PRAGMA foreign_keys = ON")
        cursor.close()

    @event.listens_for(engine, "begin")
    def _on_begin(conn):  # pragma: no cover
        # Writers take the write lock up front so two importers queue instead of deadlocking.
        conn.exec_driver_sql("BEGIN IMMEDIATE" if conn.get_execution_options().get("partcheck_write") else "BEGIN")


class Catalog:
    """An open catalog.  Use as a context manager or call :meth:`close`."""

    def __init__(self, engine: Engine, location: str, path: Path | None) -> None:
        self._engine = engine
        self.location = location
        self.path = path
        self.schema_version: int | None = None
        #: Set when opening upgraded the catalog: the version it had, and where the backup is.
        self.upgraded_from: int | None = None
        self.backup: str | None = None
        self._collation = _CODEPOINT_COLLATION.get(engine.dialect.name)

    # ---- plumbing --------------------------------------------------------------------------

    def __enter__(self) -> Self:
        return self

    def __exit__(self, *exc) -> None:
        self.close()

    def __repr__(self) -> str:
        return f"Catalog({self.location!r})"

    def close(self) -> None:
        """Close every connection (SQLite folds its WAL back into the file)."""
        self._engine.dispose()

    @contextmanager
    def _conn(self, write: bool) -> Iterator:
        try:
            connection = self._engine.connect()
        except DBAPIError as exc:
            if self.path is None:
                first = str(exc.orig).strip().splitlines()[0] if str(exc.orig).strip() else type(exc.orig).__name__
                raise _failure(f"cannot connect to {self.location}: is the server running, and are the host, port, "
                               f"user, password and database name right? ({first})") from None
            raise _failure(f"cannot open {self.location}: {exc.orig}") from None
        try:
            with connection as conn:
                if write:
                    conn = conn.execution_options(partcheck_write=True)
                with conn.begin():
                    yield conn
        except IntegrityError as exc:
            busy = CatalogBusyError(f"{self.location}: the catalog changed during the write and nothing was written "
                                    f"({str(exc.orig).strip()}); try again")
            raise busy from None
        except DBAPIError as exc:
            text = str(exc.orig).strip()
            if _is_busy(exc.orig):
                raise CatalogBusyError(f"{self.location}: the catalog is busy (another process is writing: {text}); "
                                       "nothing was written, try again") from None
            if "file is not a database" in text or "not a database" in text:
                raise CatalogError(f"{self.location} is not a partcheck catalog (not an SQLite database)") from None
            raise _failure(f"{self.location}: database error: {text}") from None
        except SQLAlchemyError as exc:
            raise _failure(f"{self.location}: database error: {exc}") from None

    def _retrying(self, step: Callable[[], object]):
        """Run ``step`` (one whole write transaction); run it again while the catalog is busy."""
        delay = BACKOFF_S
        for attempt in range(1, WRITE_ATTEMPTS + 1):
            try:
                return step()
            except CatalogBusyError as exc:
                if attempt == WRITE_ATTEMPTS:
                    raise CatalogBusyError(f"{exc} (gave up after {WRITE_ATTEMPTS} tries)") from None
            time.sleep(delay * (0.5 + random.random()))
            delay *= 2
        raise AssertionError("unreachable")  # pragma: no cover

    def _open(self, create: bool) -> None:
        with self._conn(write=False) as conn:
            version = schema_version(conn, self.location)
        if version is not None:
            check_version(version, self.location)
        if version is None and not create:
            raise CatalogError(f"{self.location} is an empty database, not a catalog yet; "
                               "create it with `partcheck catalog init`")
        if version is None:
            self.init()
        elif version < CURRENT_VERSION:
            self._upgrade(version)
        else:
            self.schema_version = version
        self._ensure_wal()

    def _upgrade(self, version: int) -> None:
        """Bring a catalog of an older schema to the current one, after a backup.

        SQLite: the whole file is first copied with SQLite's online backup API to
        ``<name>.v<old>-<UTC time>.bak`` beside it.  A database server: ``part`` and ``curve_point``
        are copied into ``catalog_backup_v<old>_<time>_part`` / ``..._curve_point`` in the same
        transaction as the migration.  Either way the migration is one transaction.
        """
        stamp = datetime.now(UTC).strftime("%Y%m%dT%H%M%SZ")
        backup_file: Path | None = None
        if self.path is not None:
            backup_file = self.path.with_name(f"{self.path.name}.v{version}-{stamp}.bak")
            self._backup_sqlite(backup_file)

        def step() -> list[str] | None:
            with self._conn(write=True) as conn:
                current = schema_version(conn, self.location)
                if current is None or current >= CURRENT_VERSION:  # someone else upgraded it meanwhile
                    if current is not None:
                        check_version(current, self.location)
                    return None
                tables = backup_tables(conn, current, stamp.lower()) if backup_file is None else []
                migrate(conn, current)
                return tables

        tables = self._retrying(step)
        self.schema_version = CURRENT_VERSION
        if tables is None:
            if backup_file is not None:
                backup_file.unlink(missing_ok=True)
            return
        self.upgraded_from = version
        self.backup = str(backup_file) if backup_file is not None else ", ".join(tables)

    def _backup_sqlite(self, target: Path) -> None:
        assert self.path is not None
        try:
            source = sqlite3.connect(self.path)
            try:
                copy = sqlite3.connect(target)
                try:
                    source.backup(copy)
                finally:
                    copy.close()
            finally:
                source.close()
        except sqlite3.Error as exc:
            raise _failure(f"{self.location}: cannot back up the catalog to {target} before upgrading it "
                           f"({exc}); nothing was changed") from None

    def _ensure_wal(self) -> None:
        if self._engine.dialect.name != "sqlite" or self.path is None:
            return
        raw = self._engine.raw_connection()  # journal mode cannot change inside a transaction
        try:
            cursor = raw.cursor()
            mode = cursor.execute("PRAGMA journal_mode").fetchone()[0]
            if str(mode).lower() != "wal" and os.access(self.path, os.W_OK):
                cursor.execute("PRAGMA journal_mode = WAL")
            cursor.close()
        except DBAPIError as exc:  # pragma: no cover - e.g. a read-only medium
            raise _failure(f"{self.location}: cannot switch to WAL mode: {exc.orig}") from None
        finally:
            raw.close()

    def init(self) -> None:
        """Create the tables (or apply missing migrations); safe to run on an existing catalog.

        An existing catalog of an older schema is upgraded after a backup (see :meth:`_upgrade`).
        """
        def step() -> int | None:
            with self._conn(write=True) as conn:
                version = schema_version(conn, self.location)
                if version is not None:
                    check_version(version, self.location)
                    if version < CURRENT_VERSION:
                        return version
                migrate(conn, version)
                return None

        older = self._retrying(step)
        if older is not None:
            self._upgrade(older)
        self.schema_version = CURRENT_VERSION

    # ---- writing ---------------------------------------------------------------------------

    def _existing(self, part_numbers: set[str] | None = None) -> dict[str, int]:
        """``{part_number: id}`` of the catalog's parts (only those of ``part_numbers`` when given)."""
        with self._conn(write=False) as conn:
            if part_numbers is None:
                return dict(conn.execute(select(PART.c.part_number, PART.c.id)).all())
            return self._ids(conn, part_numbers)

    def _stored(self, part_numbers: set[str]) -> tuple[dict[str, int], dict[str, list[str]]]:
        """What the catalog holds of ``part_numbers``: ``({part_number: id}, {key: [stored spellings]})``
        (see :meth:`_lookup`), in a read transaction of its own."""
        with self._conn(write=False) as conn:
            return self._lookup(conn, part_numbers)

    @staticmethod
    def _lookup(conn, part_numbers: set[str], per_query: int = 500) -> tuple[dict[str, int], dict[str, list[str]]]:
        """``{part_number: id}`` of the stored parts among ``part_numbers``, and ``{key: [spellings]}`` of the
        stored parts whose :func:`part_number_key` is the key of one of them (twins included), by the
        indexed ``part_number`` and ``part_number_key`` columns, ``per_query`` part numbers at a time."""
        numbers = sorted(part_numbers)
        ids: dict[str, int] = {}
        spellings: dict[str, list[str]] = defaultdict(list)
        for start in range(0, len(numbers), per_query):
            some = numbers[start:start + per_query]
            keys = sorted({part_number_key(pn) for pn in some})
            rows = conn.execute(select(PART.c.part_number, PART.c.id, PART.c.part_number_key)
                                .where(PART.c.part_number.in_(some) | PART.c.part_number_key.in_(keys))).all()
            for pn, _pid, key in rows:
                if pn not in spellings[key]:
                    spellings[key].append(pn)
            ids.update((pn, pid) for pn, pid, _ in rows if pn in part_numbers)
        return ids, dict(spellings)

    def _validate(self, table: cval.Table, curve_table: cval.Table | None, *, update: bool,
                  verb: str = "imported") -> cval.Validated:
        existing, twins = self._stored(_part_numbers(table))
        return cval.validate(table, curve_table, existing=existing, twins=twins, update=update, verb=verb)

    def add(self, fields: dict[str, str | float], *, update: bool = False) -> PartRecord:
        """Add one part from column values (text with units, or SI numbers); returns it as stored."""
        table = cval.Table("", list(fields), [list(fields.values())], [None], None)
        validated = self._validate(table, None, update=update, verb="added")
        self._write(validated, update=update)
        return self.get(str(validated.columns["part_number"][0]))

    def import_file(self, path: str | os.PathLike[str], *, update: bool = False,
                    method: Literal["bulk", "orm"] = "bulk",
                    progress: Callable[[int, int | None], None] | None = None,
                    read: cio.ReadOptions | None = None) -> ImportReport:
        """Import a CSV, TSV, XLSX or JSON catalog file (and its curve side file) all-or-nothing.

        ``read`` is passed to the file reader (:class:`partcheck.catalog.io.ReadOptions`: a column
        mapping, value translations, decimal commas; what it detects lands in ``read.notices``).

        Every cell is validated; all problems are reported in one :class:`CatalogInputError` and
        nothing is written.  A part number already in the catalog is an error unless ``update``
        is true, which replaces the stored part (and, when curve data is given, its curves).
        ``method="orm"`` writes row by row through the ORM, for the benchmark only.

        A file of up to :data:`IMPORT_CHUNK` rows is validated whole before the write transaction
        starts.  A longer CSV/TSV file is streamed: each chunk is validated and written inside
        one write transaction (held for the whole file), the problems of every chunk are
        collected, and any problem rolls the whole import back; memory holds one chunk plus the
        part numbers seen (for duplicates across chunks).  ``progress(rows done, about how many
        lines)`` is called after each chunk.
        """
        chunks = cio.iter_tables(path, IMPORT_CHUNK, read)
        first = next(chunks)
        if next(chunks, None) is None:
            curve_table = cio.read_curve_table(path, read)
            validated = self._validate(first, curve_table, update=update)
            report = self._write(validated, update=update, method=method)
            if progress:
                progress(len(first.rows), len(first.rows))
            return report
        chunks.close()
        del first
        return self._retrying(lambda: self._import_streaming(Path(path), update, method, progress, read))

    def _import_streaming(self, path: Path, update: bool, method: str, progress,
                          read: cio.ReadOptions | None = None) -> ImportReport:
        total = cio.count_lines(path)
        curve_table = cio.read_curve_table(path, read)
        stamp = _now()
        problems: list[cval.Problem] = []
        seen: dict[str, int | None] = {}
        seen_keys: dict[str, str] = {}
        category: dict[str, str | None] = {}
        replaced: list[int] = []  # ids of updated parts whose curves the curve file replaces
        with_curves = _part_numbers(curve_table) if curve_table is not None else set()  # categories kept for these
        added = updated = done = points = 0
        with self._conn(write=True) as conn:
            for table in cio.iter_tables(path, IMPORT_CHUNK, read):
                # only this chunk's part numbers and their twins: memory stays bounded
                existing, twins = self._lookup(conn, _part_numbers(table))
                try:
                    v = cval.validate(table, None, existing=existing, update=update, seen=seen, twins=twins,
                                      seen_keys=seen_keys)
                except CatalogInputError as exc:
                    found = getattr(exc, "problems", None)
                    if not found or any(p.line == table.header_line and p.file is None for p in found):
                        raise  # the header is every chunk's header: nothing more to learn from the rows
                    problems.extend(found)
                    v = None
                if v is not None:
                    if with_curves:
                        category.update((pn, cat) for pn, cat in zip(v.columns["part_number"], v.columns["category"])
                                        if pn in with_curves)
                    if not problems:  # once anything is wrong, only validate (the write is rolled back)
                        a, u, _ = self._write_rows(conn, v, update=update, method=method, stamp=stamp,
                                                   existing=existing, twins=twins)
                        added, updated = added + a, updated + u
                        if curve_table is not None and u:
                            replaced.extend(existing[pn] for pn in v.columns["part_number"] if pn in existing)
                done += len(table.rows)
                if progress:
                    progress(done, total)
                del table, v
            curves = None
            if curve_table is not None:
                known = {pn: category.get(pn) for pn in with_curves if pn in seen}  # None: its row had a problem
                curves = cval._validate_curve_table(curve_table, known, problems)
            cval.raise_problems(str(path), problems)  # inside the transaction: rolls everything back
            if curves is not None:
                if replaced:
                    conn.execute(delete(POINT).where(POINT.c.part_id == bindparam("pid")),
                                 [{"pid": pid} for pid in replaced])
                ids = self._ids(conn, {pn for pn, c in curves.items() if c})
                rows = [(ids[pn], name, seq, x, y) for pn, c in curves.items() for name, pts in c.items()
                        for seq, (x, y) in enumerate(pts)]
                for start in range(0, len(rows), IMPORT_CHUNK):
                    _executemany(conn, POINT, ("part_id", "curve", "seq", "x", "y"), rows[start:start + IMPORT_CHUNK])
                points = len(rows)
        return ImportReport(str(path), added, updated, points, curve_table.file if curve_table else None, method)

    def _write(self, v: cval.Validated, *, update: bool, method: str = "bulk") -> ImportReport:
        """Write a validated import in one transaction, retried while the catalog is busy."""
        return self._retrying(lambda: self._write_once(v, update=update, method=method))

    def _write_once(self, v: cval.Validated, *, update: bool, method: str = "bulk") -> ImportReport:
        with self._conn(write=True) as conn:
            existing, twins = self._lookup(conn, {pn for pn in v.columns["part_number"] if pn is not None})
            added, updated, points = self._write_rows(conn, v, update=update, method=method, stamp=_now(),
                                                      existing=existing, twins=twins)
        return ImportReport(v.file, added, updated, points, v.curves_file, method)

    def _write_rows(self, conn, v: cval.Validated, *, update: bool, method: str, stamp: str,
                    existing: dict[str, int], twins: dict[str, list[str]]) -> tuple[int, int, int]:
        """Insert/update the rows of ``v`` (and its curves, if given) on ``conn``; (added, updated, points).

        ``existing`` and ``twins`` are :meth:`_lookup` of the rows' part numbers on ``conn``."""
        pns = v.columns["part_number"]
        new = [i for i, pn in enumerate(pns) if pn not in existing]
        old = [i for i, pn in enumerate(pns) if pn in existing]
        if old and not update:  # appeared since validation: another writer was faster
            raise _failure(f"{v.file or self.location}: part {pns[old[0]]!r} was added to the catalog by "
                           "someone else during this import; nothing was written, try again")
        for i in new if twins else ():  # a twin that appeared since validation: another writer was faster
            others = [s for s in twins.get(part_number_key(pns[i]), ()) if s != pns[i]]
            if others:
                raise _failure(f"{v.file or self.location}: part {cval.shown(pns[i])} was added to the catalog by "
                               f"someone else as {cval.shown(others[0])} during this import {cval._TWIN}; "
                               "nothing was written")
        if method == "orm":
            self._insert_orm(conn, v.records(new), stamp)
        else:
            self._insert_bulk(conn, v, new, stamp)
        if old:
            self._update_bulk(conn, v.records(old), stamp)
        points = 0
        if v.curves is not None:
            ids = self._ids(conn, {pn for pn, c in v.curves.items() if c})
            if old:
                conn.execute(delete(POINT).where(POINT.c.part_id == bindparam("pid")),
                             [{"pid": existing[pns[i]]} for i in old])
            rows = [(ids[pn], name, seq, x, y)
                    for pn, curves in v.curves.items() for name, pts in curves.items()
                    for seq, (x, y) in enumerate(pts)]
            if rows:
                _executemany(conn, POINT, ("part_id", "curve", "seq", "x", "y"), rows)
            points = len(rows)
        return len(new), len(old), points

    @staticmethod
    def _insert_bulk(conn, v: cval.Validated, indices: list[int], stamp: str) -> None:
        # One executemany per category, binding only that category's columns (the rest are NULL).
        by_category: dict[str, list[int]] = defaultdict(list)
        cats = v.columns["category"]
        for i in indices:
            by_category[cats[i]].append(i)  # type: ignore[index]
        for category, group in by_category.items():
            cols = CATEGORY_FIELDS[category]
            if len(group) == len(cats):
                picked = [v.columns[c] for c in cols]
            else:
                take = itemgetter(*group) if len(group) > 1 else (lambda col, i=group[0]: (col[i],))
                picked = [take(v.columns[c]) for c in cols]
            # cols[0] is part_number: its key goes in beside it
            _executemany(conn, PART, (*cols, "updated_at", "part_number_key"),
                         list(zip(*picked, repeat(stamp), map(part_number_key, picked[0]))))

    @staticmethod
    def _insert_orm(conn, records: list[dict], stamp: str) -> None:
        # Row by row through the ORM (one INSERT per part): the slow path the benchmark compares with.
        session = Session(bind=conn)
        for r in records:
            session.add(Part(**r, updated_at=stamp, part_number_key=part_number_key(r["part_number"])))
            session.flush()
        session.close()

    @staticmethod
    def _update_bulk(conn, records: list[dict], stamp: str) -> None:
        names = [n for n in FIELDS if n != "part_number"]
        stmt = (update(PART).where(PART.c.part_number == bindparam("k_part_number"))
                .values({**{n: bindparam(f"k_{n}") for n in names}, "updated_at": bindparam("k_updated_at"),
                         "part_number_key": bindparam("k_part_number_key")}))
        conn.execute(stmt, [{**{f"k_{n}": r[n] for n in FIELDS}, "k_updated_at": stamp,
                             "k_part_number_key": part_number_key(r["part_number"])} for r in records])

    def remove(self, part_number: str) -> PartRecord:
        """Remove a part and its curves; returns what was removed.  NotFoundError when absent.

        Only the exact spelling removes a part (no twin lookup as in :meth:`get`)."""
        with self._conn(write=False) as conn:
            found = self._records(conn, [PART.c.part_number == part_number])
        if not found:
            raise self._not_found(part_number)
        record = found[0]

        def step() -> None:
            with self._conn(write=True) as conn:
                pid = conn.execute(select(PART.c.id).where(PART.c.part_number == part_number)).scalar()
                if pid is None:
                    raise self._not_found(part_number)
                conn.execute(delete(POINT).where(POINT.c.part_id == pid))
                conn.execute(delete(PART).where(PART.c.id == pid))

        self._retrying(step)
        return record

    # ---- reading ---------------------------------------------------------------------------

    def count(self, category: str | None = None) -> int:
        """Number of parts (of ``category``)."""
        q = select(func.count()).select_from(PART)
        if category is not None:
            q = q.where(PART.c.category == category)
        with self._conn(write=False) as conn:
            return int(conn.execute(q).scalar() or 0)

    def _records(self, conn, where: list) -> list[PartRecord]:
        rows = conn.execute(select(*_COLUMNS, PART.c.id).where(*where)).all()
        if not rows:
            return []
        q = select(POINT.c.part_id, POINT.c.curve, POINT.c.x, POINT.c.y).order_by(
            POINT.c.part_id, POINT.c.curve, POINT.c.seq)
        if where:
            q = q.where(POINT.c.part_id.in_(select(PART.c.id).where(*where)))
        curves: dict[int, dict[str, list]] = defaultdict(lambda: defaultdict(list))
        for pid, name, x, y in conn.execute(q):
            curves[pid][name].append((x, y))
        names = list(FIELDS)
        out = []
        fast = PartRecord._fast
        for row in rows:  # zip stops before the trailing id
            c = curves.get(row[-1]) if curves else None
            out.append(fast(dict(zip(names, row)), {k: tuple(v) for k, v in c.items()} if c else None))
        out.sort(key=lambda r: r.part_number)  # code-point order on every database
        return out

    def updated_at(self, part_number: str) -> str | None:
        """When the part was last written (UTC, ISO 8601); None when written before schema version 2.

        The part is found as by :meth:`get` (the exact spelling, else its one twin)."""
        with self._conn(write=False) as conn:
            found = conn.execute(select(PART.c.id, PART.c.updated_at)
                                 .where(*self._where_number(conn, part_number))).first()
        if found is None:
            raise self._not_found(part_number)
        return found[1]

    def iter_parts(self, chunk: int = CHUNK) -> Iterator[PartRecord]:
        """Every part with its curves, sorted by part number, streamed ``chunk`` rows at a time.

        Memory stays bounded by the chunk whatever the size of the catalog; all rows come from
        one read transaction (one snapshot), like :meth:`parts`.  Close the iterator (or read it
        to the end) to end the transaction.
        """
        with self._conn(write=False) as conn:
            yield from self._iter_records(conn, chunk)

    def _order(self):
        pn = PART.c.part_number
        return pn.collate(self._collation) if self._collation else pn

    def _iter_records(self, conn, chunk: int = CHUNK) -> Iterator[PartRecord]:
        if chunk < 1:
            raise CatalogInputError(f"chunk must be at least 1, got {chunk}", key="chunk")
        streaming = conn.execution_options(stream_results=True, yield_per=chunk)
        order = self._order()
        rows = streaming.execute(select(*_COLUMNS, PART.c.id).order_by(order))
        points = streaming.execute(
            select(POINT.c.part_id, POINT.c.curve, POINT.c.x, POINT.c.y).select_from(POINT.join(PART))
            .order_by(order, POINT.c.curve, POINT.c.seq))
        names = list(FIELDS)
        fast = PartRecord._fast
        pending = next(points, None)
        try:
            for row in rows:
                pid = row[-1]
                curves: dict[str, list] | None = None
                while pending is not None and pending[0] == pid:
                    if curves is None:
                        curves = {}
                    curves.setdefault(pending[1], []).append((pending[2], pending[3]))
                    pending = next(points, None)
                yield fast(dict(zip(names, row)), {k: tuple(v) for k, v in curves.items()} if curves else None)
        finally:
            rows.close()
            points.close()

    def parts(self, category: str | None = None, subtype: str | None = None,
              min_ratings: dict[str, float | str] | None = None) -> list[PartRecord]:
        """Every part (matching the filters), sorted by part number, curves included.

        ``min_ratings`` maps numeric columns to minimum values (SI floats, or text with units
        such as ``"100 V"``); a part without a value for such a column is left out.
        """
        where = []
        if category is not None:
            if category not in CATEGORIES:
                raise CatalogInputError(cval._choice_message("category", category, CATEGORIES), column="category")
            where.append(PART.c.category == category)
        if subtype is not None:
            valid = sorted({s for subs in CATEGORIES.values() for s in subs}) if category is None \
                else CATEGORIES[category]
            if subtype not in valid:
                raise CatalogInputError(cval._choice_message("subtype", subtype, valid), column="subtype")
            where.append(PART.c.subtype == subtype)
        for name, value in (min_ratings or {}).items():
            spec = FIELDS.get(name)
            if spec is None or spec.text:
                numeric = [n for n, s in FIELDS.items() if not s.text]
                raise CatalogInputError(cval.unknown_column_message(name, numeric).replace(
                    "unknown column", "no numeric column").replace("valid columns", "numeric columns"), key=name)
            try:
                minimum = cval.parse_cell(value, spec.kind)
            except CatalogInputError:
                raise
            except ValueError as exc:
                raise CatalogInputError(getattr(exc, "message", str(exc)), column=name) from None
            where.append(PART.c[name] >= minimum)
        with self._conn(write=False) as conn:
            return self._records(conn, where)

    def _not_found(self, part_number: str) -> NotFoundError:
        from rapidfuzz import fuzz, process

        with self._conn(write=False) as conn:
            numbers = list(conn.execute(select(PART.c.part_number)).scalars())
        near = [hit[0] for hit in process.extract(part_number, numbers, scorer=fuzz.ratio, limit=3, score_cutoff=50)]
        hint = f" (closest: {', '.join(near)})" if near else ""
        return NotFoundError(f"part {part_number!r} is not in the catalog{hint}; add it with `partcheck catalog add`")

    @staticmethod
    def _where_number(conn, part_number: str) -> list:
        """The condition that picks the part ``part_number``: the exact spelling when stored, else the one
        stored twin (same :func:`part_number_key`, by its index); matches nothing when there are several."""
        exact = PART.c.part_number == part_number
        if conn.execute(select(PART.c.id).where(exact)).first() is not None:
            return [exact]
        ids = conn.execute(select(PART.c.id).where(PART.c.part_number_key == part_number_key(part_number))
                           .limit(2)).scalars().all()
        return [PART.c.id == ids[0]] if len(ids) == 1 else [exact]

    def get(self, part_number: str) -> PartRecord:
        """One part by its part number; NotFoundError naming the closest ones when absent.

        The exact spelling wins; without it, a spelling that differs only in letter case or
        Unicode form finds the part when exactly one stored part has that spelling's key.
        """
        with self._conn(write=False) as conn:
            found = self._records(conn, self._where_number(conn, part_number))
        if not found:
            raise self._not_found(part_number)
        return found[0]

    def find(self, text: str, limit: int = 10, category: str | None = None) -> list[tuple[PartRecord, float]]:
        """Fuzzy search over part number and description: ``[(part, score 0..100), ...]`` best first."""
        from rapidfuzz import fuzz, process, utils

        if not text or not text.strip():
            raise CatalogInputError("the search text is empty; give part of a part number or description")
        if limit < 1:
            raise CatalogInputError(f"limit must be at least 1, got {limit}", key="limit")
        where = [PART.c.category == category] if category else []
        with self._conn(write=False) as conn:
            rows = conn.execute(select(PART.c.id, PART.c.part_number, PART.c.description).where(*where)).all()
        choices = {pid: f"{pn} {desc or ''}" for pid, pn, desc in rows}
        number = {pid: pn for pid, pn, _ in rows}
        # Token-set similarity ranks "10uF 25V X7R" above parts sharing only one token; the
        # weighted ratio breaks its ties (it prefers the closer spelling), then the part number.
        hits = process.extract(text, choices, scorer=fuzz.token_set_ratio, processor=utils.default_process,
                               limit=None, score_cutoff=40)
        query = utils.default_process(text)
        tie = {h[2]: fuzz.WRatio(query, utils.default_process(h[0])) for h in hits}
        hits.sort(key=lambda h: (-h[1], -tie[h[2]], number[h[2]]))
        hits = hits[:limit]
        if not hits:
            return []
        with self._conn(write=False) as conn:
            records = {r.part_number: r for r in self._records(conn, [PART.c.id.in_([h[2] for h in hits])])}
        return [(records[number[h[2]]], round(float(h[1]), 1)) for h in hits]

    # ---- export ----------------------------------------------------------------------------

    def export(self, target: str | os.PathLike[str] | IO[str], fmt: str | None = None, *,
               curves_stream: IO[str] | None = None) -> ExportReport:
        """Write every part as ``csv`` or ``json`` to a path or text stream (format from the suffix if None).

        A CSV path also gets its curve side file (``X.curves.csv``, header only when there are
        no curves); to a stream the curves go to ``curves_stream`` if given.  The output is
        deterministic: exporting, importing and exporting again gives identical bytes.
        """
        is_path = isinstance(target, (str, os.PathLike))
        if fmt is None:
            suffix = Path(target).suffix.lower() if is_path else ".csv"  # type: ignore[arg-type]
            if suffix not in (".csv", ".json"):
                raise CatalogInputError(f"cannot tell the export format from {suffix or 'a name without extension'!r}; "
                                        "name the file .csv or .json, or give the format", file=str(target))
            fmt = suffix[1:]
        if fmt not in ("csv", "json"):
            raise CatalogInputError(f"unknown export format {fmt!r}; expected csv or json", key="format")
        version = self.schema_version or CURRENT_VERSION
        with self._conn(write=False) as conn:  # one snapshot, streamed: memory does not grow with the catalog
            counter = _Counter(self._iter_records(conn))
            if fmt == "json":
                if is_path:
                    _write_atomic(Path(target), cio.iter_json(counter, version))  # type: ignore[arg-type]
                else:
                    for piece in cio.iter_json(counter, version):
                        target.write(piece)  # type: ignore[union-attr]
                return ExportReport(counter.parts, counter.points)
            if is_path:
                side = cio.curves_path(target)  # type: ignore[arg-type]
                with _atomic_pair(Path(target), side) as (main, curves):  # type: ignore[arg-type]
                    _write_csv_pair(counter, main, curves)
                return ExportReport(counter.parts, counter.points, str(side))
            if curves_stream is not None:
                _write_csv_pair(counter, target, curves_stream)  # type: ignore[arg-type]
                return ExportReport(counter.parts, counter.points)
            cio.write_csv(counter, target)  # type: ignore[arg-type]
            return ExportReport(counter.parts, 0, None, counter.points)

    def snapshot_hash(self) -> str:
        """sha256 (hex) of the canonical JSON export: equal hashes mean equal catalogs."""
        digest = hashlib.sha256()
        with self._conn(write=False) as conn:
            for piece in cio.iter_json(self._iter_records(conn), self.schema_version or CURRENT_VERSION):
                digest.update(piece.encode("utf-8"))
        return digest.hexdigest()

    # ---- copy ------------------------------------------------------------------------------

    def copy_to(self, target: str | os.PathLike[str] | Catalog, *, replace: bool = False,
                progress: Callable[[int, int], None] | None = None) -> CopyReport:
        """Copy every part and curve into the catalog ``target`` (path, URL or open catalog) in one transaction.

        ``target`` must be empty unless ``replace``, which first deletes everything in it.  Before
        committing, the canonical JSON exports of this catalog and of the written target (inside
        the copy's transaction) are compared piece by piece; any difference rolls the copy back
        with a :class:`CatalogError`.  ``progress(done, total)`` is called as parts and points go in.
        """
        dest = target if isinstance(target, Catalog) else open_catalog(target, create=True)
        try:
            if dest.location == self.location:
                raise CatalogError(f"cannot copy {self.location} onto itself; give another --to")
            return dest._retrying(lambda: dest._receive(self, replace, progress))
        finally:
            if dest is not target:
                dest.close()

    @staticmethod
    def _ids(conn, part_numbers: set[str], per_query: int = 500) -> dict[str, int]:
        """``{part_number: id}`` for ``part_numbers``, looked up ``per_query`` at a time (bound-parameter limits)."""
        numbers = sorted(part_numbers)
        out: dict[str, int] = {}
        for start in range(0, len(numbers), per_query):
            some = numbers[start:start + per_query]
            out.update(conn.execute(select(PART.c.part_number, PART.c.id).where(PART.c.part_number.in_(some))).all())
        return out

    def _receive(self, source: Catalog, replace: bool, progress) -> CopyReport:
        cols = (*FIELDS, "updated_at", "part_number_key")
        with self._conn(write=True) as conn, source._conn(write=False) as sconn:
            have = int(conn.execute(select(func.count()).select_from(PART)).scalar() or 0)
            if have and not replace:
                raise CatalogError(f"{self.location} already holds {_n(have, 'part')}; copy into an empty catalog, "
                                   "or give --replace to delete them first")
            if replace:
                conn.execute(delete(POINT))
                conn.execute(delete(PART))
            n_parts = int(sconn.execute(select(func.count()).select_from(PART)).scalar() or 0)
            n_points = int(sconn.execute(select(func.count()).select_from(POINT)).scalar() or 0)
            total = n_parts + n_points
            done = 0
            streaming = sconn.execution_options(stream_results=True, yield_per=CHUNK)
            result = streaming.execute(select(*(PART.c[c] for c in cols)).order_by(PART.c.id))
            for batch in result.partitions(CHUNK):
                _executemany(conn, PART, cols, [tuple(r) for r in batch])
                done += len(batch)
                if progress:
                    progress(done, total)
            result = streaming.execute(
                select(PART.c.part_number, POINT.c.curve, POINT.c.seq, POINT.c.x, POINT.c.y)
                .select_from(POINT.join(PART)).order_by(POINT.c.id))
            for batch in result.partitions(CHUNK):
                ids = self._ids(conn, {row[0] for row in batch})  # the new ids of this batch's parts only
                _executemany(conn, POINT, ("part_id", "curve", "seq", "x", "y"),
                             [(ids[pn], curve, seq, x, y) for pn, curve, seq, x, y in batch])
                done += len(batch)
                if progress:
                    progress(done, total)
            # Verify before committing: the two canonical exports, compared piece by piece.
            mine = cio.iter_json(self._iter_records(conn), CURRENT_VERSION)
            theirs = cio.iter_json(source._iter_records(sconn), CURRENT_VERSION)
            size = 0
            for a, b in zip_longest(mine, theirs):
                if a != b:
                    raise _failure(f"copying {source.location} to {self.location}: the exports differ after the copy "
                                   f"(near byte {size}); nothing was written")
                size += len(a.encode("utf-8"))
        return CopyReport(source.location, self.location, n_parts, n_points, size, source.schema_version or 0)


def _executemany(conn, table, cols: tuple[str, ...] | list[str], rows: list[tuple]) -> None:
    """INSERT ``rows`` (tuples in ``cols`` order) with one executemany of the Core statement compiled
    for the connection's dialect: no per-row parameter processing, any paramstyle."""
    compiled = insert(table).compile(dialect=conn.dialect, column_keys=list(cols))
    if compiled.positional:
        order = [list(cols).index(name) for name in compiled.positiontup]
        params = rows if order == list(range(len(cols))) else [tuple(r[j] for j in order) for r in rows]
    else:
        params = [dict(zip(cols, r)) for r in rows]
    conn.exec_driver_sql(compiled.string, params)


def _part_numbers(table: cval.Table) -> set[str]:
    """The part numbers a table of cells holds (as validation will read them), to look up only those."""
    names = [str(h).strip().lower() for h in table.header]
    if "part_number" not in names:
        return set()
    i = names.index("part_number")
    return {cval._text_cell(row[i]) for row in table.rows
            if len(row) > i and isinstance(row[i], (str, int, float)) and not cval._is_empty(row[i])}


class _Counter:
    """Passes records through, counting parts and curve points on the way."""

    def __init__(self, records: Iterable[PartRecord]) -> None:
        self._records = records
        self.parts = 0
        self.points = 0

    def __iter__(self) -> Iterator[PartRecord]:
        for record in self._records:
            self.parts += 1
            self.points += sum(len(p) for p in record.curves.values())
            yield record


def _write_csv_pair(records: Iterable[PartRecord], main: IO[str], curves: IO[str]) -> None:
    """The catalog CSV and its curve side file in one pass over the records."""
    import csv

    from .models import CURVE_COLUMNS, CURVES

    writer = csv.writer(curves, lineterminator="\n")
    writer.writerow(CURVE_COLUMNS)

    def parts() -> Iterator[PartRecord]:
        for record in records:
            for name in CURVES:
                for x, y in record.curves.get(name, ()):
                    writer.writerow([record.part_number, name, repr(float(x)), repr(float(y))])
            yield record

    cio.write_csv(parts(), main)


def _check_folder(path: Path) -> None:
    if not path.parent.is_dir():
        raise CatalogInputError(f"cannot write {path}: the directory {path.parent} does not exist", file=path)


@contextmanager
def _atomic_pair(first: Path, second: Path) -> Iterator[tuple[IO[str], IO[str]]]:
    """Two files written through temporary files and renamed into place only when both are complete."""
    _check_folder(first)
    tmps = [p.with_name(f".{p.name}.partcheck-tmp") for p in (first, second)]
    try:
        with open(tmps[0], "w", encoding="utf-8", newline="") as a, open(tmps[1], "w", encoding="utf-8",
                                                                            newline="") as b:
            yield a, b
        os.replace(tmps[0], first)
        os.replace(tmps[1], second)
    except OSError as exc:
        raise CatalogInputError(f"cannot write the file: {exc.strerror or exc}", file=first) from None
    finally:
        for tmp in tmps:
            tmp.unlink(missing_ok=True)


def _write_atomic(path: Path, text: str | Iterable[str]) -> None:
    """Write ``text`` (or its pieces) to ``path`` through a temporary file, so a failed export leaves no half file."""
    _check_folder(path)
    tmp = path.with_name(f".{path.name}.partcheck-tmp")
    try:
        with open(tmp, "w", encoding="utf-8", newline="") as f:
            for piece in [text] if isinstance(text, str) else text:
                f.write(piece)
        os.replace(tmp, path)
    except OSError as exc:
        raise CatalogInputError(f"cannot write the file: {exc.strerror or exc}", file=path) from None
    finally:
        tmp.unlink(missing_ok=True)


# Curve type re-exported for callers that annotate with it.
__all__ = ["BUSY_TIMEOUT_S", "Catalog", "CatalogBusyError", "CopyReport", "Curve", "ExportReport", "ImportReport",
           "default_location", "open_catalog"]
