"""The history store: every recorded sweep of every antenna, in SQLite (default) or PostgreSQL.

One store holds many sites; a site holds antennas (a site file's ``[[antenna]]`` entries, or the
``--name`` of a ``correct``/``compare`` run); an antenna holds sweeps, each keyed by the SHA-256 of the
sweep file's bytes, so recording the same file again changes nothing.

Where the store lives
---------------------
``open_store(target)`` takes either a file name (a SQLite database, created when missing; Python's own
:mod:`sqlite3`) or a URL ``postgresql://user@host:port/dbname`` (also ``postgres://``) for a shared
PostgreSQL server, reached through psycopg 3 (the optional ``postgres`` extra). The same SQL runs on
both: portable column types, ``INSERT ... ON CONFLICT DO NOTHING`` (SQLite 3.24 and later, PostgreSQL 9.5
and later), and every value reaches the database as a bound parameter, never inside the SQL text.

Schema (version 2)
------------------
::

    deembed_meta    key TEXT PRIMARY KEY, value TEXT NOT NULL
                    rows: schema_version = "2", created_by = "deembed X.Y.Z"
    deembed_sweeps  one row per recorded sweep
                    site, antenna, sweep_sha256          TEXT    primary key (the three together)
                    sweep_file                           TEXT    the path as given when recorded
                    sweep_date                           TEXT    YYYY-MM-DD
                    date_source                          TEXT    site_file | option | file_mtime
                    role                                 TEXT    baseline | latest | single
                    line                                 TEXT    the line's description
                    verdict                              TEXT    within_limits | outside_limits | NULL
                    cause_code, cause_text               TEXT    the comparison's cause, or NULL
                    baseline_sha256                      TEXT    the sweep it was compared with, or NULL
                    recorded_at                          TEXT    UTC, ISO 8601, when first recorded
                    tool_version                         TEXT    deembed's version that recorded it
    deembed_values  one row per recorded number
                    site, antenna, sweep_sha256          TEXT    the sweep (foreign key)
                    quantity                             TEXT    e.g. resonance_hz, min_swr, line_loss_db
                    idx                                  INTEGER 0, 1, ... for quantities with several values
                    value, low, high                     DOUBLE  the value and its interval (NULL: none)
                    unit                                 TEXT    Hz, dB, "" (a ratio)
                    method                               TEXT    how it was found (free text)
                    run_low, run_high                    DOUBLE  the per-run interval: only what differs
                                                                 from run to run (NULL: none); version 2
                    primary key (site, antenna, sweep_sha256, quantity, idx)

Both intervals are 95 % ones. ``low``/``high`` hold every source of uncertainty; ``run_low``/``run_high``
leave out what is common to every run of the feed (the line description's tolerance, the calibration
kit's residuals), which is what a trend weighs each run by (:mod:`deembed.analysis.recording`).

Versions and migrations
-----------------------
``SCHEMA_VERSION`` is the version this code writes. Opening a store:

- an empty database (or a new file) gets the current schema, in one transaction;
- a store at the current version is used as it is;
- an older store is upgraded step by step with :data:`MIGRATIONS` (``{from_version: [SQL, ...]}``,
  each step taking version v to v + 1), all in one transaction, so it is either fully upgraded or
  untouched;
- a newer store is refused (:class:`InputFileError`: "upgrade deembed") before anything is written.

Reading (:meth:`HistoryStore.sweeps`) takes an older store as it is, without upgrading it: the columns
added since read as NULL (a version 1 store has no per-run intervals). Nothing is created for reading or
checking: :func:`check_target` looks at a store without creating it, and a SQLite file is only made when
there is something to record.

History: version 1 (the first); version 2 adds ``deembed_values.run_low`` and ``run_high``
(``MIGRATIONS[1]``: two ``ALTER TABLE ... ADD COLUMN``, portable to SQLite and PostgreSQL).

To change the schema: bump ``SCHEMA_VERSION``, change ``_SCHEMA`` (what a new store gets) and add
``MIGRATIONS[old]`` with the statements that bring an old store to the same shape.

Concurrency
-----------
Each :meth:`HistoryStore.record` call is one transaction. On SQLite it starts with ``BEGIN IMMEDIATE``
(one writer at a time; others wait up to :data:`SQLITE_BUSY_TIMEOUT_S`). On PostgreSQL writers run side
by side (row-level conflicts on the same sweep are settled by ``ON CONFLICT DO NOTHING``); only creating
or upgrading the schema takes a transaction-level advisory lock, so two first runs do not race to create
the tables. Two runs writing the same store at once therefore both land, each whole.
"""
from __future__ import annotations

import dataclasses
import datetime as _dt
import hashlib
import math
import os
import sqlite3
from dataclasses import dataclass
from urllib.parse import urlsplit, urlunsplit

from .. import __version__
from ..base.errors import InputFileError, OptionError

SCHEMA_VERSION = 2
"""The schema version this code reads and writes (see the module notes)."""

SQLITE_BUSY_TIMEOUT_S = 120.0
"""How long a SQLite writer waits for another run's transaction to finish."""

PG_LOCK_KEY = 0x6465656D62  # "deemb": the advisory lock that serialises writers on PostgreSQL

DATE_SOURCES = ("site_file", "option", "file_mtime")
ROLES = ("baseline", "latest", "single")

_SCHEMA = (
    "CREATE TABLE deembed_meta (key TEXT PRIMARY KEY, value TEXT NOT NULL)",
    "CREATE TABLE deembed_sweeps ("
    " site TEXT NOT NULL, antenna TEXT NOT NULL, sweep_sha256 TEXT NOT NULL,"
    " sweep_file TEXT NOT NULL, sweep_date TEXT NOT NULL, date_source TEXT NOT NULL,"
    " role TEXT NOT NULL, line TEXT NOT NULL,"
    " verdict TEXT, cause_code TEXT, cause_text TEXT, baseline_sha256 TEXT,"
    " recorded_at TEXT NOT NULL, tool_version TEXT NOT NULL,"
    " PRIMARY KEY (site, antenna, sweep_sha256))",
    "CREATE TABLE deembed_values ("
    " site TEXT NOT NULL, antenna TEXT NOT NULL, sweep_sha256 TEXT NOT NULL,"
    " quantity TEXT NOT NULL, idx INTEGER NOT NULL,"
    " value DOUBLE PRECISION, low DOUBLE PRECISION, high DOUBLE PRECISION,"
    " unit TEXT NOT NULL, method TEXT NOT NULL,"
    " run_low DOUBLE PRECISION, run_high DOUBLE PRECISION,"
    " PRIMARY KEY (site, antenna, sweep_sha256, quantity, idx),"
    " FOREIGN KEY (site, antenna, sweep_sha256) REFERENCES deembed_sweeps (site, antenna, sweep_sha256))",
    "CREATE INDEX deembed_sweeps_by_date ON deembed_sweeps (site, antenna, sweep_date)",
)

MIGRATIONS: dict = {
    1: ("ALTER TABLE deembed_values ADD COLUMN run_low DOUBLE PRECISION",
        "ALTER TABLE deembed_values ADD COLUMN run_high DOUBLE PRECISION"),
}
"""``{from_version: (SQL, ...)}``: the statements taking a store from that version to the next."""

_TABLES = ("deembed_meta", "deembed_sweeps", "deembed_values")

_SWEEP_COLS = ("site", "antenna", "sweep_sha256", "sweep_file", "sweep_date", "date_source", "role", "line",
               "verdict", "cause_code", "cause_text", "baseline_sha256", "recorded_at", "tool_version")
_VALUE_COLS = ("site", "antenna", "sweep_sha256", "quantity", "idx", "value", "low", "high", "unit", "method",
               "run_low", "run_high")
_VALUE_COLS_SINCE = {"run_low": 2, "run_high": 2}
"""Columns added after version 1, and the version that added each (an older store reads them as NULL)."""


@dataclass(frozen=True)
class Value:
    """One recorded number: ``quantity`` (index ``idx`` when there are several), its interval and its per-run
    interval (``run_low``/``run_high``, see the module notes), each None when there is none."""

    quantity: str
    value: float | None
    low: float | None = None
    high: float | None = None
    unit: str = ""
    method: str = ""
    idx: int = 0
    run_low: float | None = None
    run_high: float | None = None


@dataclass(frozen=True)
class SweepRecord:
    """One sweep of one antenna as the store keeps it (see the schema in the module notes)."""

    site: str
    antenna: str
    sweep_sha256: str
    sweep_file: str
    sweep_date: str
    date_source: str
    role: str
    line: str
    values: tuple = ()
    verdict: str | None = None
    cause_code: str | None = None
    cause_text: str | None = None
    baseline_sha256: str | None = None
    recorded_at: str = ""
    tool_version: str = ""

    def value(self, quantity: str, idx: int = 0) -> Value | None:
        for v in self.values:
            if v.quantity == quantity and v.idx == idx:
                return v
        return None

    def to_dict(self) -> dict:
        d = dataclasses.asdict(self)
        d["values"] = [dataclasses.asdict(v) for v in self.values]
        return d


@dataclass(frozen=True)
class RecordResult:
    """What one :meth:`HistoryStore.record` call did: sweeps added and sweeps already there, and for those
    already there the date they were first recorded with (``stored_dates``: (site, antenna, sweep_sha256) ->
    YYYY-MM-DD; that date stands, whatever date the new call gave)."""

    added: int
    already: int
    stored_dates: dict = dataclasses.field(default_factory=dict)


# ----------------------------------------------------------------------------------------- targets

def is_url(target: str) -> bool:
    return str(target).lower().startswith(("postgresql://", "postgres://"))


def display_name(target: str) -> str:
    """The store's name for messages: a URL with its password hidden."""
    t = str(target)
    if not is_url(t):
        return t
    parts = urlsplit(t)
    if parts.password is not None:
        host = parts.hostname or ""
        if parts.port:
            host += f":{parts.port}"
        netloc = f"{parts.username or ''}:***@{host}"
        return urlunsplit((parts.scheme, netloc, parts.path, parts.query, parts.fragment))
    return t


def default_store_path(site_file: str) -> str:
    """The store beside a site file: ``ridgeback-hill.site.toml`` -> ``ridgeback-hill.history.sqlite``."""
    folder, base = os.path.split(os.path.abspath(site_file))
    for suffix in (".site.toml", ".toml"):
        if base.lower().endswith(suffix):
            base = base[: -len(suffix)]
            break
    return os.path.join(folder, (base or "site") + ".history.sqlite")


# ----------------------------------------------------------------------------------------- backends

class _SQLite:
    kind = "sqlite"

    def __init__(self, path: str, create: bool):
        self.name = path
        if not create and not os.path.isfile(path):
            raise InputFileError(path, "no such history store; record sweeps first (deembed site, or correct/"
                                       "compare with `record`)")
        if create:
            self.check_place(path)
        elif os.path.isdir(path):
            raise InputFileError(path, "is a folder; give a file name for the history store")
        try:
            self.conn = sqlite3.connect(path, timeout=SQLITE_BUSY_TIMEOUT_S, isolation_level=None)
            self.conn.execute("PRAGMA foreign_keys = ON")
        except sqlite3.Error as exc:
            raise InputFileError(path, f"cannot open it as a history store ({exc}); give a SQLite file made by "
                                       "deembed, or a new file name") from None
        self.errors = (sqlite3.Error,)

    @staticmethod
    def check_place(path: str) -> None:
        """Refuse a place where the SQLite store cannot be written (a folder, a missing folder, no permission)."""
        if os.path.isdir(path):
            raise InputFileError(path, "is a folder; give a file name for the history store")
        folder = os.path.dirname(os.path.abspath(path))
        if not os.path.isdir(folder):
            raise InputFileError(path, "its folder does not exist; create it or give another file name")
        if not os.access(path if os.path.exists(path) else folder, os.W_OK):
            raise InputFileError(path, "cannot write the history store there (no permission); give another "
                                       "place for it (`record`), or record nothing (`no_record`) for a site run")

    def begin(self, write: bool):
        self.conn.execute("BEGIN IMMEDIATE" if write else "BEGIN")

    def lock_schema(self):
        pass  # BEGIN IMMEDIATE already holds the database's one write lock

    def execute(self, sql: str, params=()):
        return self.conn.execute(sql, tuple(params))

    def commit(self):
        self.conn.execute("COMMIT")

    def rollback(self):
        if self.conn.in_transaction:
            self.conn.execute("ROLLBACK")

    def has_table(self, name: str) -> bool:
        row = self.execute("SELECT count(*) FROM sqlite_master WHERE type = 'table' AND name = ?", (name,)).fetchone()
        return bool(row[0])

    def close(self):
        self.conn.close()


class _Postgres:
    kind = "postgresql"

    def __init__(self, url: str, create: bool):
        self.name = display_name(url)
        try:
            import psycopg
        except ImportError:
            raise InputFileError(self.name, "a PostgreSQL store needs the psycopg package: pip install "
                                            "'deembed[postgres]'") from None
        try:
            self.conn = psycopg.connect(url, autocommit=False, connect_timeout=15)
        except psycopg.Error as exc:
            msg = " ".join(str(exc).split())
            raise InputFileError(self.name, f"cannot connect to the PostgreSQL server ({msg}); check the URL, "
                                            "that the server runs and that the user may log in") from None
        self.errors = (psycopg.Error,)

    def begin(self, write: bool):
        pass  # psycopg opens a transaction at the first statement

    def lock_schema(self):
        """Serialise schema creation and upgrades between writers (held until the transaction ends)."""
        self.conn.execute("SELECT pg_advisory_xact_lock(%s)", (PG_LOCK_KEY,))

    def execute(self, sql: str, params=()):
        return self.conn.execute(sql.replace("?", "%s"), tuple(params))

    def commit(self):
        self.conn.commit()

    def rollback(self):
        self.conn.rollback()

    def has_table(self, name: str) -> bool:
        row = self.execute("SELECT count(*) FROM information_schema.tables "
                           "WHERE table_schema = current_schema() AND table_name = ?", (name,)).fetchone()
        return bool(row[0])

    def close(self):
        self.conn.close()


# ----------------------------------------------------------------------------------------- the store

class HistoryStore:
    """An open history store. Use :func:`open_store`; close it (or use it in a ``with`` block)."""

    def __init__(self, backend):
        self._db = backend
        self.name = backend.name
        self.kind = backend.kind

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()

    def close(self):
        self._db.close()

    # -- schema --------------------------------------------------------------------------------------

    def _version(self) -> int | None:
        """The stored schema version; None for a database without deembed's tables."""
        if not self._db.has_table("deembed_meta"):
            others = [t for t in _TABLES[1:] if self._db.has_table(t)]
            if others:
                raise InputFileError(self.name, f"has {', '.join(others)} but no deembed_meta table; it is not a "
                                                "history store deembed can use")
            return None
        row = self._db.execute("SELECT value FROM deembed_meta WHERE key = ?", ("schema_version",)).fetchone()
        try:
            return int(row[0])
        except (TypeError, ValueError):
            raise InputFileError(self.name, "its deembed_meta table has no readable schema_version; it is not a "
                                            "history store deembed can use") from None

    def _prepare(self, version: int | None) -> None:
        """Inside a write transaction: create, keep, upgrade or refuse (see the module notes)."""

        if version is None:
            for sql in _SCHEMA:
                self._db.execute(sql)
            self._db.execute("INSERT INTO deembed_meta (key, value) VALUES (?, ?)",
                             ("schema_version", str(SCHEMA_VERSION)))
            self._db.execute("INSERT INTO deembed_meta (key, value) VALUES (?, ?)",
                             ("created_by", f"deembed {__version__}"))
            return
        self._refuse_newer(version)
        while version < SCHEMA_VERSION:
            steps = MIGRATIONS.get(version)
            if steps is None:
                raise InputFileError(self.name, f"schema version {version} has no upgrade path to version "
                                                f"{SCHEMA_VERSION}; it was not changed")
            for sql in steps:
                self._db.execute(sql)
            version += 1
            self._db.execute("UPDATE deembed_meta SET value = ? WHERE key = ?", (str(version), "schema_version"))

    def _refuse_newer(self, version: int) -> None:
        if version > SCHEMA_VERSION:
            raise InputFileError(self.name, f"the history store has schema version {version}, newer than this "
                                            f"deembed reads (version {SCHEMA_VERSION}); it was left as it is: "
                                            "upgrade deembed to use it")

    def check_usable(self) -> None:
        """Refuse, reading only, a store this deembed cannot record into (newer, or not a history store)."""
        try:
            self._db.begin(False)
            try:
                version = self._version()
            finally:
                self._db.rollback()
        except self._db.errors as exc:
            raise self._failed(exc) from None
        if version is not None:
            self._refuse_newer(version)
            if version < SCHEMA_VERSION and not all(v in MIGRATIONS for v in range(version, SCHEMA_VERSION)):
                raise InputFileError(self.name, f"schema version {version} has no upgrade path to version "
                                                f"{SCHEMA_VERSION}; it was not changed")

    def schema_version(self) -> int | None:
        """The stored schema version (None when the database is still empty)."""
        try:
            self._db.begin(False)
            try:
                return self._version()
            finally:
                self._db.rollback()
        except self._db.errors as exc:
            raise self._failed(exc) from None

    def ensure_schema(self) -> None:
        """Create, upgrade or refuse the schema now (one transaction)."""
        self._write(lambda: None)

    def _write(self, body):
        try:
            self._db.begin(True)
            try:
                version = self._version()
                if version != SCHEMA_VERSION:  # create or upgrade: one writer at a time, then look again
                    self._db.lock_schema()
                    version = self._version()
                self._prepare(version)
                result = body()
                self._db.commit()
                return result
            except BaseException:
                self._db.rollback()
                raise
        except self._db.errors as exc:
            raise self._failed(exc) from None

    def _failed(self, exc) -> InputFileError:
        msg = " ".join(str(exc).split())
        return InputFileError(self.name, f"the history store could not be used ({type(exc).__name__}: {msg}); "
                                         "nothing was recorded by this run")

    # -- writing -------------------------------------------------------------------------------------

    def record(self, records) -> RecordResult:
        """Record sweeps, all in one transaction; a sweep already there (same site, antenna and content
        hash) is left exactly as it was."""

        records = list(records)
        now = _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat()
        prepared = []
        for r in records:
            check_record(r, self.name)
            prepared.append(dataclasses.replace(r, recorded_at=r.recorded_at or now,
                                                tool_version=r.tool_version or __version__))

        def body():
            added = 0
            stored = {}
            cols = ", ".join(_SWEEP_COLS)
            marks = ", ".join("?" * len(_SWEEP_COLS))
            vcols = ", ".join(_VALUE_COLS)
            vmarks = ", ".join("?" * len(_VALUE_COLS))
            for r in prepared:
                cur = self._db.execute(
                    f"INSERT INTO deembed_sweeps ({cols}) VALUES ({marks}) "
                    "ON CONFLICT (site, antenna, sweep_sha256) DO NOTHING",
                    [getattr(r, c) for c in _SWEEP_COLS])
                if cur.rowcount != 1:
                    row = self._db.execute("SELECT sweep_date FROM deembed_sweeps WHERE site = ? AND antenna = ? "
                                           "AND sweep_sha256 = ?", (r.site, r.antenna, r.sweep_sha256)).fetchone()
                    if row is not None:
                        stored[(r.site, r.antenna, r.sweep_sha256)] = row[0]
                    continue
                added += 1
                for v in r.values:
                    self._db.execute(f"INSERT INTO deembed_values ({vcols}) VALUES ({vmarks})",
                                     (r.site, r.antenna, r.sweep_sha256, v.quantity, int(v.idx), _num(v.value),
                                      _num(v.low), _num(v.high), v.unit, v.method, _num(v.run_low),
                                      _num(v.run_high)))
            return RecordResult(added, len(prepared) - added, stored)

        return self._write(body)

    # -- reading -------------------------------------------------------------------------------------

    def sweeps(self, *, site: str | None = None, antenna: str | None = None) -> list[SweepRecord]:
        """Every recorded sweep (optionally of one site and/or antenna), by site, antenna and date."""
        where, params = [], []
        if site is not None:
            where.append("site = ?")
            params.append(site)
        if antenna is not None:
            where.append("antenna = ?")
            params.append(antenna)
        clause = (" WHERE " + " AND ".join(where)) if where else ""
        try:
            self._db.begin(False)
            try:
                version = self._version()
                if version is None:
                    return []
                self._refuse_newer(version)
                # an older store is read as it is: the columns added since read as NULL
                vsel = ", ".join(c if _VALUE_COLS_SINCE.get(c, 1) <= version else f"NULL AS {c}"
                                 for c in _VALUE_COLS)
                rows = self._db.execute(f"SELECT {', '.join(_SWEEP_COLS)} FROM deembed_sweeps{clause} "
                                        "ORDER BY site, antenna, sweep_date, sweep_sha256", params).fetchall()
                vrows = self._db.execute(f"SELECT {vsel} FROM deembed_values{clause} "
                                         "ORDER BY site, antenna, sweep_sha256, quantity, idx", params).fetchall()
            finally:
                self._db.rollback()
        except self._db.errors as exc:
            raise self._failed(exc) from None
        values: dict = {}
        for row in vrows:
            d = dict(zip(_VALUE_COLS, row))
            key = (d.pop("site"), d.pop("antenna"), d.pop("sweep_sha256"))
            values.setdefault(key, []).append(Value(**d))
        out = []
        for row in rows:
            d = dict(zip(_SWEEP_COLS, row))
            key = (d["site"], d["antenna"], d["sweep_sha256"])
            out.append(SweepRecord(values=tuple(values.get(key, ())), **d))
        return out


def _num(x):
    """A finite float, or None (NaN and infinities are stored as NULL)."""
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def check_record(r: SweepRecord, store_name: str) -> None:
    """Refuse what no store should hold, before anything is written."""
    texts = [(c, getattr(r, c)) for c in _SWEEP_COLS if c not in ("recorded_at", "tool_version")]
    texts += [(f"{v.quantity} {c}", getattr(v, c)) for v in r.values for c in ("quantity", "unit", "method")]
    for field_name, text in texts:
        if text is not None and not isinstance(text, str):
            raise InputFileError(store_name, f"{field_name} should be text, not {type(text).__name__}")
        if text is not None and "\x00" in text:
            raise InputFileError(store_name, f"{field_name} contains a NUL character, which a store cannot hold; "
                                             "rename it")
    if r.date_source not in DATE_SOURCES:
        raise InputFileError(store_name, f"date source {r.date_source!r}; use one of {', '.join(DATE_SOURCES)}")
    if r.role not in ROLES:
        raise InputFileError(store_name, f"role {r.role!r}; use one of {', '.join(ROLES)}")
    try:
        _dt.date.fromisoformat(r.sweep_date)
    except (TypeError, ValueError):
        raise InputFileError(store_name, f"sweep date {r.sweep_date!r} is not a date like 2026-03-14") from None
    seen = set()
    for v in r.values:
        if (v.quantity, v.idx) in seen:
            raise InputFileError(store_name, f"{v.quantity} index {v.idx} given twice for {r.sweep_file}")
        seen.add((v.quantity, v.idx))


def parse_date(text: str, option: str = "date") -> str:
    """A calendar date ``YYYY-MM-DD`` (returned as the same text); refuses anything else, and days in
    the future. ``option`` names the field (``date``) or the site-file key in the message."""
    t = str(text).strip()
    try:
        d = _dt.date.fromisoformat(t)
    except ValueError:
        raise OptionError(option, f"{text!r} is not a date; write it as YYYY-MM-DD, e.g. 2026-03-14") from None
    if len(t) != 10:
        raise OptionError(option, f"{text!r}: write the date as YYYY-MM-DD, e.g. 2026-03-14")
    if d > _dt.date.today() + _dt.timedelta(days=1):
        raise OptionError(option, f"{t} is in the future; give the day the sweep was taken")
    return d.isoformat()


def check_target(target: str) -> None:
    """Check that a store can be recorded into, without creating or changing anything: a SQLite file that
    does not exist yet needs an existing, writable folder (it is made at the first record); an existing file
    or a server must hold an empty database or a history store this deembed reads (a newer or foreign one is
    refused, :class:`InputFileError`)."""
    t = str(target)
    if not t.strip():
        raise InputFileError(t, "empty store name; give a file name or a postgresql:// URL")
    if not is_url(t) and not os.path.exists(t):
        _SQLite.check_place(t)
        return
    with open_store(t) as store:
        store.check_usable()


def open_store(target: str, *, create: bool = True) -> HistoryStore:
    """Open a history store: a SQLite file name, or a ``postgresql://`` URL.

    Parameters
    ----------
    target : str
        File name (created when missing, if ``create``) or PostgreSQL URL.
    create : bool
        False to refuse a SQLite file that does not exist yet (for reading).
    """
    t = str(target)
    if not t.strip():
        raise InputFileError(t, "empty store name; give a file name or a postgresql:// URL")
    backend = _Postgres(t, create) if is_url(t) else _SQLite(t, create)
    return HistoryStore(backend)


def file_sha256(path: str) -> str:
    """SHA-256 of a file's bytes, hex (the key that makes re-recording a file change nothing)."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


__all__ = ["DATE_SOURCES", "HistoryStore", "MIGRATIONS", "RecordResult", "ROLES", "SCHEMA_VERSION", "SweepRecord",
           "Value", "check_target", "default_store_path", "display_name", "file_sha256", "is_url", "open_store",
           "parse_date"]
