"""The archive of lab records: records, their input files and outputs, in one database.

A record (``activolt-record/1``, :mod:`activolt.io.record`) is stored under the SHA-256 of its
canonical JSON (:func:`canonical_json`), so adding it twice stores it once and an archived
record can never change: a re-reduction is a new record whose ``supersedes`` names the one it
replaces. Beside each record the archive keeps its input files (run table and metadata, byte for
byte) and its output set, file contents stored once by their own SHA-256.

Where: ``open_archive(location)`` with a path (an SQLite file) or an SQLAlchemy URL (any
database SQLAlchemy speaks; PostgreSQL for a lab that shares one); without a location, the
environment variable ``ACTIVOLT_ARCHIVE`` (a path or a URL), else
``$XDG_DATA_HOME/activolt/archive.sqlite`` (``~/.local/share/…``; ``%LOCALAPPDATA%`` on
Windows).

Safety: every write is one transaction. SQLite runs in WAL mode with a busy timeout and takes
its write lock at ``BEGIN IMMEDIATE``, so two processes adding at once both land, one after the
other; a process killed mid-add leaves the archive as it was (the journal rolls the partial
transaction back). PostgreSQL does the same by its own transactions. The tables and their
migrations are in :mod:`activolt.io.migrations`.

The outbox (:meth:`Archive.queue_upload`, :meth:`Archive.pending_uploads`,
:meth:`Archive.mark_uploaded`, :meth:`Archive.note_upload_failure`) keeps what must still be
sent to a lab-records endpoint, so nothing is lost while the endpoint is down.
"""

from __future__ import annotations

import hashlib
import io
import json
import os
import sys
from collections.abc import Iterable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from datetime import UTC, date, datetime, timedelta
from functools import lru_cache
from pathlib import Path
from typing import IO, Any

from sqlalchemy import (
    Connection,
    Engine,
    and_,
    create_engine,
    event,
    func,
    make_url,
    or_,
    select,
    true,
    update,
)
from sqlalchemy.exc import SQLAlchemyError

from ..errors import InputError
from ..safe_text import neutralise_formula
from .migrations import (
    SCHEMA_VERSION,
    blobs,
    current_version,
    migrate,
    outbox,
    record_electrodes,
    record_files,
    records,
)
from .record import RECORD_SCHEMA, record_schema

__all__ = ["ENVIRONMENT_VARIABLE", "EXPORT_FORMATS", "FRAME_COLUMNS", "Archive", "ArchiveEntry",
           "ArchivedRecord", "PendingUpload", "archive_url", "canonical_json",
           "default_location", "open_archive", "record_hash"]

#: The environment variable holding the archive's location (a path or an SQLAlchemy URL).
ENVIRONMENT_VARIABLE = "ACTIVOLT_ARCHIVE"
#: What :meth:`Archive.export` writes.
EXPORT_FORMATS = ("csv", "jsonl", "parquet")
#: The columns of :meth:`Archive.to_frame` (one row per record), in order.
FRAME_COLUMNS = ("hash", "kind", "created_utc", "added_utc", "electrolyte", "cell", "lab",
                 "operator", "instrument", "model", "temperature_K", "standard_potential_V",
                 "u_standard_potential_V", "software_version", "input_sha256", "supersedes",
                 "electrodes")
#: Seconds a writer waits for another's transaction before giving up (SQLite).
BUSY_TIMEOUT_S = 60.0
_TEXT_FILTERS = ("electrolyte", "cell", "lab", "operator", "model", "kind")


def _now() -> str:
    return datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def canonical_json(record: Mapping[str, Any]) -> bytes:
    """The record's canonical JSON: keys sorted, no blanks, UTF-8, numbers as Python writes
    them (shortest round trip), no NaN.

    Examples
    --------
    >>> canonical_json({"b": 1.5, "a": ["γ±", None]})
    b'{"a":["\\xce\\xb3\\xc2\\xb1",null],"b":1.5}'
    """
    try:
        text = json.dumps(record, sort_keys=True, separators=(",", ":"), ensure_ascii=False,
                          allow_nan=False)
    except (TypeError, ValueError) as error:
        raise InputError(f"the record cannot be written as JSON: {error}") from None
    return text.encode("utf-8")


def record_hash(record: Mapping[str, Any]) -> str:
    """SHA-256 (hex) of :func:`canonical_json` — the record's key in the archive.

    Examples
    --------
    >>> record_hash({"a": 1}) == record_hash({"a": 1})
    True
    >>> record_hash({"a": 1})[:12]
    '015abd7f5cc5'
    """
    return hashlib.sha256(canonical_json(record)).hexdigest()


def default_location() -> Path:
    """The per-user archive: ``$XDG_DATA_HOME/activolt/archive.sqlite`` (``~/.local/share`` when
    unset), ``%LOCALAPPDATA%\\activolt\\archive.sqlite`` on Windows."""
    if sys.platform == "win32" and os.environ.get("LOCALAPPDATA"):
        return Path(os.environ["LOCALAPPDATA"]) / "activolt" / "archive.sqlite"
    base = os.environ.get("XDG_DATA_HOME") or str(Path.home() / ".local" / "share")
    return Path(base) / "activolt" / "archive.sqlite"


def archive_url(location: str | os.PathLike[str] | None = None) -> str:
    """The SQLAlchemy URL of the archive at ``location`` (an option's value), else of
    ``ACTIVOLT_ARCHIVE``, else of :func:`default_location`.

    A value with ``://`` is a URL as it stands; anything else is the path of an SQLite file.

    Examples
    --------
    >>> archive_url("/data/lab/archive.sqlite")
    'sqlite:////data/lab/archive.sqlite'
    >>> archive_url("postgresql+psycopg://lab@db.example/records")
    'postgresql+psycopg://lab@db.example/records'
    """
    chosen: str | os.PathLike[str] | None = location
    if chosen is None or str(chosen) == "":
        chosen = os.environ.get(ENVIRONMENT_VARIABLE) or default_location()
    value = str(chosen)
    if "://" in value:
        return value
    return "sqlite:///" + os.path.abspath(os.path.expanduser(value))


@dataclass(frozen=True)
class PendingUpload:
    """A record waiting in the outbox for an endpoint.

    ``attachments`` are output names (``report.html``, a certificate) sent with it;
    ``attempts`` counts failed sends, ``last_error`` says why the last one failed;
    ``queued_at`` is when it was queued (UTC).
    """

    record_hash: str
    endpoint: str
    attachments: tuple[str, ...]
    attempts: int
    last_error: str | None
    queued_at: datetime


@dataclass(frozen=True)
class ArchiveEntry:
    """One archived record as listed: the columns searched on (see :data:`FRAME_COLUMNS`)."""

    hash: str
    kind: str
    created_utc: str | None
    added_utc: str
    electrolyte: str | None
    cell: str | None
    lab: str | None
    operator: str | None
    instrument: str | None
    model: str | None
    temperature_K: float | None
    standard_potential_V: float | None
    u_standard_potential_V: float | None
    software_version: str | None
    input_sha256: str | None
    supersedes: str | None
    electrodes: tuple[str, ...]


@dataclass(frozen=True)
class ArchivedRecord:
    """One record with what the archive keeps beside it (the files by name)."""

    entry: ArchiveEntry
    record: dict[str, Any]
    inputs: tuple[str, ...]
    outputs: tuple[str, ...]
    superseded_by: tuple[str, ...]

    @property
    def hash(self) -> str:
        return self.entry.hash


def _kind(record: Mapping[str, Any]) -> str:
    kind = record.get("record_kind")
    if isinstance(kind, str) and kind:
        return kind
    return "temperature_study" if record.get("temperature_study") else "reduction"


def _text(value: Any) -> str | None:
    return value if isinstance(value, str) and value else None


def _number(value: Any) -> float | None:
    return float(value) if isinstance(value, (int, float)) and not isinstance(value, bool) \
        else None


def _electrodes(record: Mapping[str, Any]) -> list[str]:
    """Every electrode the record names (calibrated electrodes, readings, metadata)."""
    found: dict[str, None] = {}
    for entry in record.get("electrodes") or []:
        if isinstance(entry, Mapping) and entry.get("electrode") not in (None, ""):
            found[str(entry["electrode"])] = None
    for point in record.get("points") or []:
        if isinstance(point, Mapping) and isinstance(point.get("electrode"), str) \
                and point["electrode"]:
            found[point["electrode"]] = None
    info = record.get("run_info") or {}
    if isinstance(info, Mapping) and isinstance(info.get("electrode"), str) and info["electrode"]:
        found[info["electrode"]] = None
    return list(found)


def _columns(record: Mapping[str, Any]) -> dict[str, Any]:
    """The searched-on columns of ``record``."""
    info = record.get("run_info") if isinstance(record.get("run_info"), Mapping) else {}
    model = record.get("model")
    e0 = record.get("standard_potential_V")
    e0 = e0 if isinstance(e0, Mapping) else {}
    software = record.get("software") if isinstance(record.get("software"), Mapping) else {}
    source = record.get("input") if isinstance(record.get("input"), Mapping) else {}
    return {
        "kind": _kind(record),
        "created_utc": _text(record.get("created_utc")),
        "electrolyte": _text(record.get("electrolyte")),
        "cell": _text(record.get("cell")),
        "lab": _text(info.get("lab")),
        "operator": _text(info.get("operator")),
        "instrument": _text(info.get("instrument")),
        "model": _text(model.get("name")) if isinstance(model, Mapping) else None,
        "temperature_K": _number(record.get("temperature_K")),
        "standard_potential_V": _number(e0.get("value")),
        "u_standard_potential_V": _number(e0.get("uncertainty")),
        "software_version": _text(software.get("version")),
        "input_sha256": _text(source.get("sha256")),
        "supersedes": _text(record.get("supersedes")),
    }


@lru_cache(maxsize=1)
def _required_keys() -> tuple[str, ...]:
    return tuple(record_schema()["required"])


def _check_record(record: Mapping[str, Any]) -> None:
    """The keys every record has (those the schema requires), else a clear InputError."""
    if not isinstance(record, Mapping) or record.get("record_schema") != RECORD_SCHEMA:
        raise InputError(f"not an {RECORD_SCHEMA} record; only records are archived")
    missing = [key for key in _required_keys() if key not in record]
    if missing:
        raise InputError(f"the record lacks '{missing[0]}'")


def _files(files: Mapping[str, bytes | str | os.PathLike[str]] | Iterable[os.PathLike[str] | str]
           | None) -> dict[str, bytes]:
    """Name → bytes from a mapping (bytes, text or paths) or from paths (their file names)."""
    if files is None:
        return {}
    out: dict[str, bytes] = {}
    items = files.items() if isinstance(files, Mapping) else (
        (Path(p).name, Path(p)) for p in files)
    for name, content in items:
        if isinstance(content, bytes):
            out[str(name)] = content
        elif isinstance(content, str) and isinstance(files, Mapping) and not isinstance(
                content, os.PathLike):
            out[str(name)] = content.encode("utf-8")
        else:
            path = Path(content)
            try:
                out[str(name)] = path.read_bytes()
            except OSError as error:
                raise InputError(f"cannot read the file to archive: {error.strerror}",
                                 file=str(path)) from None
    return out


def _instant(value: str | date | datetime | None, end: bool) -> str | None:
    """An ISO 8601 bound as the archive's UTC text; a bare date covers its whole day."""
    if value is None:
        return None
    if isinstance(value, datetime):
        moment = value if value.tzinfo else value.replace(tzinfo=UTC)
    elif isinstance(value, date):
        moment = datetime(value.year, value.month, value.day, tzinfo=UTC) + (
            timedelta(days=1) if end else timedelta())
        return moment.strftime("%Y-%m-%dT%H:%M:%SZ")
    else:
        text = str(value).strip()
        try:
            if len(text) == 10:
                return _instant(date.fromisoformat(text), end)
            moment = datetime.fromisoformat(text.replace("Z", "+00:00"))
        except ValueError:
            raise InputError(f"'{text}' is not an ISO 8601 date or time (e.g. 2026-11-18 or "
                             "2026-11-18T14:00:00Z)", column="--until" if end else "--since"
                             ) from None
        moment = moment if moment.tzinfo else moment.replace(tzinfo=UTC)
    return moment.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def _sqlite_setup(engine: Engine) -> None:
    """WAL, a busy timeout, foreign keys, and the write lock taken at BEGIN (IMMEDIATE)."""

    @event.listens_for(engine, "connect")
    def _connect(dbapi_connection: Any, _record: Any) -> None:
        dbapi_connection.isolation_level = None  # transactions begun below, not by pysqlite
        cursor = dbapi_connection.cursor()
        cursor.execute(f"PRAGMA busy_timeout = {int(BUSY_TIMEOUT_S * 1000)}")
        cursor.execute("PRAGMA journal_mode = WAL")
        cursor.execute("PRAGMA synchronous = NORMAL")  # WAL: safe against a crashed process
        cursor.execute("PRAGMA foreign_keys = ON")
        cursor.close()

    @event.listens_for(engine, "begin")
    def _begin(connection: Connection) -> None:
        connection.connection.dbapi_connection.execute("BEGIN IMMEDIATE")


@lru_cache(maxsize=32)
def _ignoring_insert(dialect: Any, table: Any) -> tuple[str, tuple[str, ...]]:
    """``INSERT … ON CONFLICT DO NOTHING`` of every column of ``table`` as the driver's SQL
    (SQLite ≥ 3.24 and PostgreSQL ≥ 9.5 both understand it), and the columns in order.

    Sent with the driver's executemany: a bulk add spends its time in the database, not in
    building statements.
    """
    names = tuple(column.name for column in table.columns)
    quote = dialect.identifier_preparer.quote  # temperature_K keeps its case on PostgreSQL
    mark = "?" if dialect.paramstyle == "qmark" else "%s"
    sql = (f"INSERT INTO {quote(table.name)} ({', '.join(quote(n) for n in names)}) VALUES "
           f"({', '.join(mark for _ in names)}) ON CONFLICT DO NOTHING")
    return sql, names


def _insert_ignore(connection: Connection, table: Any, rows: list[dict[str, Any]]) -> None:
    """Insert rows, leaving alone those whose key is there already (another writer's)."""
    if not rows:
        return
    dialect = connection.dialect
    if dialect.name in ("sqlite", "postgresql") and dialect.paramstyle in (
            "qmark", "format", "pyformat"):
        sql, names = _ignoring_insert(dialect, table)
        connection.exec_driver_sql(sql, [tuple(row.get(name) for name in names)
                                         for row in rows])
        return
    keys = [column.name for column in table.primary_key.columns]
    for row in rows:
        there = connection.execute(select(1).select_from(table).where(
            *[table.c[key] == row[key] for key in keys])).first()
        if there is None:
            connection.execute(table.insert(), row)


class Archive:
    """An archive of records (see the module's description); from :func:`open_archive`.

    Use it as a context manager, or call :meth:`close`, to release the database connections.
    """

    def __init__(self, engine: Engine) -> None:
        self.engine = engine

    # ---------------------------------------------------------------- set-up

    @property
    def url(self) -> str:
        """The database's URL, password hidden."""
        return self.engine.url.render_as_string(hide_password=True)

    def close(self) -> None:
        """Release the connections."""
        self.engine.dispose()

    def __enter__(self) -> Archive:
        return self

    def __exit__(self, *_exc: object) -> None:
        self.close()

    def schema_version(self) -> int:
        """The archive's layout version (see :mod:`activolt.io.migrations`)."""
        with self.engine.connect() as connection:
            return current_version(connection)

    def __len__(self) -> int:
        with self.engine.connect() as connection:
            return int(connection.execute(select(func.count()).select_from(records)).scalar()
                       or 0)

    def __contains__(self, record_hash: object) -> bool:
        if not isinstance(record_hash, str):
            return False
        with self.engine.connect() as connection:
            return connection.execute(select(records.c.hash).where(
                records.c.hash == record_hash)).first() is not None

    # ---------------------------------------------------------------- writing

    def add(self, record: Mapping[str, Any],
            inputs: Mapping[str, bytes | str | os.PathLike[str]]
            | Iterable[os.PathLike[str] | str] | None = None,
            outputs: Mapping[str, bytes | str | os.PathLike[str]]
            | Iterable[os.PathLike[str] | str] | None = None,
            supersedes: str | None = None) -> str:
        """Store a record with its input files and outputs; returns its hash.

        Parameters
        ----------
        record : mapping
            An ``activolt-record/1`` record (the dict of its JSON).
        inputs, outputs : mapping of name to bytes, str or pathlib.Path; or paths
            The record's input files (run table, metadata) and output set: a ``str`` value is
            the file's text (stored as UTF-8), a ``pathlib.Path`` value the file to read; a
            plain sequence of paths stores each under its file name.
        supersedes : str, optional
            The hash of the archived record this one replaces (a re-reduction); written into
            the record as ``supersedes`` before it is hashed.

        Returns
        -------
        str
            SHA-256 of the record's canonical JSON. Adding the same record again stores
            nothing new (files not yet there are added beside it).

        Raises
        ------
        InputError
            Not a record, a record that cannot be JSON, or ``supersedes`` not in the archive.
        """
        return self.add_many([(record, inputs, outputs, supersedes)])[0]

    def add_many(self, items: Iterable[tuple[Mapping[str, Any], Any, Any, str | None]]
                 ) -> list[str]:
        """:meth:`add` for many ``(record, inputs, outputs, supersedes)`` in one transaction
        (all of them land, or none)."""
        prepared = []
        for record, inputs, outputs, supersedes in items:
            _check_record(record)
            stored = dict(record)
            if supersedes is not None:
                stored["supersedes"] = supersedes
            text = canonical_json(stored)
            digest = hashlib.sha256(text).hexdigest()
            files = {"input": _files(inputs), "output": _files(outputs)}
            prepared.append((digest, stored, text, files))
        added = _now()
        record_rows, electrode_rows, blob_rows, file_rows = [], [], {}, []
        for digest, stored, text, files in prepared:
            record_rows.append({"hash": digest, "added_utc": added,
                                "record_json": text.decode("utf-8"), **_columns(stored)})
            electrode_rows += [{"record_hash": digest, "electrode": name}
                               for name in _electrodes(stored)]
            for role, named in files.items():
                for name, content in named.items():
                    sha = hashlib.sha256(content).hexdigest()
                    blob_rows[sha] = {"sha256": sha, "size": len(content), "content": content}
                    file_rows.append({"record_hash": digest, "role": role, "name": name,
                                      "sha256": sha})
        superseded = {row["supersedes"] for row in record_rows if row["supersedes"]}
        own = {row["hash"] for row in record_rows}
        with self.engine.begin() as connection:
            missing = superseded - own
            if missing:
                missing -= set(connection.execute(
                    select(records.c.hash).where(records.c.hash.in_(missing))).scalars())
            if missing:
                raise InputError(f"the superseded record {sorted(missing)[0]} is not in the "
                                 "archive")
            _insert_ignore(connection, blobs, list(blob_rows.values()))
            _insert_ignore(connection, records, record_rows)
            _insert_ignore(connection, record_electrodes, electrode_rows)
            _insert_ignore(connection, record_files, file_rows)
        return [digest for digest, *_ in prepared]

    # ---------------------------------------------------------------- reading

    def resolve(self, prefix: str) -> str:
        """The full hash of the one record whose hash starts with ``prefix`` (at least 4 hex
        digits); InputError when none or several do."""
        key = prefix.strip().lower()
        if len(key) < 4 or any(c not in "0123456789abcdef" for c in key):
            raise InputError(f"'{prefix}' is not a record hash or a prefix of at least 4 hex "
                             "digits")
        with self.engine.connect() as connection:
            found = list(connection.execute(select(records.c.hash).where(
                records.c.hash.like(key + "%")).limit(2)).scalars())
        if not found:
            raise InputError(f"no record {key} in the archive {self.url}")
        if len(found) > 1:
            raise InputError(f"several records start with {key}; give more digits")
        return found[0]

    def record(self, record_hash: str) -> dict[str, Any]:
        """The record (the dict of its JSON) stored under ``record_hash`` (or a prefix)."""
        full = self.resolve(record_hash)
        with self.engine.connect() as connection:
            text = connection.execute(select(records.c.record_json).where(
                records.c.hash == full)).scalar_one()
        return json.loads(text)

    def get(self, record_hash: str) -> ArchivedRecord:
        """The record stored under ``record_hash`` (or a unique prefix) with its listing entry,
        the names of its input and output files, and the records that supersede it."""
        full = self.resolve(record_hash)
        entry = self.find(hashes=[full])[0]
        with self.engine.connect() as connection:
            text = connection.execute(select(records.c.record_json).where(
                records.c.hash == full)).scalar_one()
            names = connection.execute(select(record_files.c.role, record_files.c.name).where(
                record_files.c.record_hash == full).order_by(record_files.c.name)).all()
            later = tuple(connection.execute(select(records.c.hash).where(
                records.c.supersedes == full).order_by(records.c.added_utc)).scalars())
        return ArchivedRecord(
            entry=entry, record=json.loads(text),
            inputs=tuple(n for role, n in names if role == "input"),
            outputs=tuple(n for role, n in names if role == "output"), superseded_by=later)

    def _file(self, record_hash: str, role: str, name: str) -> bytes:
        full = self.resolve(record_hash)
        with self.engine.connect() as connection:
            rows = connection.execute(
                select(record_files.c.name, blobs.c.content)
                .join(blobs, blobs.c.sha256 == record_files.c.sha256)
                .where(record_files.c.record_hash == full, record_files.c.role == role,
                       or_(record_files.c.name == name,
                           record_files.c.name.like("%." + name)))).all()
        exact = [content for found, content in rows if found == name]
        if exact:
            return bytes(exact[0])
        ending = [content for found, content in rows if found.endswith("." + name)]
        if len(ending) == 1:
            return bytes(ending[0])
        what = "no" if not ending else "more than one"
        raise InputError(f"the record {full[:12]} has {what} {role} file '{name}' in the archive")

    def input(self, record_hash: str, name: str) -> bytes:
        """An input file of the record, byte for byte, by its name (or the end of its name)."""
        return self._file(record_hash, "input", name)

    def output(self, record_hash: str, name: str) -> bytes:
        """An output of the record by its name, or the end of it after a dot: ``report.html``
        finds ``RUN.report.html``."""
        return self._file(record_hash, "output", name)

    def _query(self, hashes: Sequence[str] | None = None, electrolyte: str | None = None,
               cell: str | None = None, electrode: str | None = None, lab: str | None = None,
               operator: str | None = None, model: str | None = None,
               since: str | date | datetime | None = None,
               until: str | date | datetime | None = None, kind: str | None = None,
               current_only: bool = False) -> Any:
        conditions = []
        if hashes is not None:
            conditions.append(records.c.hash.in_(list(hashes)))
        if electrolyte:
            conditions.append(records.c.electrolyte == electrolyte)
        if cell:
            conditions.append(func.replace(records.c.cell, " ", "") == cell.replace(" ", ""))
        for column, value in (("lab", lab), ("operator", operator)):
            if value:
                conditions.append(func.lower(records.c[column]).contains(
                    value.lower(), autoescape=True))
        if model:
            conditions.append(records.c.model == model)
        if kind:
            conditions.append(records.c.kind == kind)
        start, end = _instant(since, False), _instant(until, True)
        if start:
            conditions.append(records.c.created_utc >= start)
        if end:
            inclusive = isinstance(until, datetime) or (isinstance(until, str)
                                                        and len(until.strip()) > 10)
            conditions.append(records.c.created_utc <= end if inclusive
                              else records.c.created_utc < end)
        if electrode:
            conditions.append(records.c.hash.in_(select(record_electrodes.c.record_hash).where(
                record_electrodes.c.electrode == electrode)))
        if current_only:
            later = records.alias("later")
            conditions.append(~select(later.c.hash).where(
                later.c.supersedes == records.c.hash).exists())
        columns = [records.c[name] for name in FRAME_COLUMNS if name != "electrodes"]
        return select(*columns).where(and_(true(), *conditions)).order_by(records.c.created_utc,
                                                                  records.c.hash)

    def find(self, *, electrolyte: str | None = None, cell: str | None = None,
             electrode: str | None = None, lab: str | None = None, operator: str | None = None,
             model: str | None = None, since: str | date | datetime | None = None,
             until: str | date | datetime | None = None, kind: str | None = None,
             current_only: bool = False, hashes: Sequence[str] | None = None
             ) -> list[ArchiveEntry]:
        """The records matching every filter given, oldest first.

        Parameters
        ----------
        electrolyte, model, kind : str, optional
            Exact (``HCl``; ``hueckel``; ``reduction``, ``calibration``,
            ``temperature_study``).
        cell : str, optional
            The cell diagram, blanks ignored.
        electrode : str, optional
            An electrode ID the record names (exact).
        lab, operator : str, optional
            Part of the metadata's text, any case.
        since, until : str, date or datetime, optional
            ``created_utc`` from / up to (ISO 8601; a bare date includes its whole day).
        current_only : bool
            Leave out records superseded by a re-reduction.
        hashes : sequence of str, optional
            Only these records.
        """
        query = self._query(hashes, electrolyte, cell, electrode, lab, operator, model, since,
                            until, kind, current_only)
        with self.engine.connect() as connection:
            rows = connection.execute(query).mappings().all()
            found = [row["hash"] for row in rows]
            names: dict[str, list[str]] = {}
            for start in range(0, len(found), 500):
                chunk = found[start:start + 500]
                for record_key, name in connection.execute(
                        select(record_electrodes.c.record_hash, record_electrodes.c.electrode)
                        .where(record_electrodes.c.record_hash.in_(chunk))):
                    names.setdefault(record_key, []).append(name)
        return [ArchiveEntry(**dict(row), electrodes=tuple(sorted(names.get(row["hash"], []))))
                for row in rows]

    def electrode_history(self, electrode: str) -> list[dict[str, Any]]:
        """The calibration records of one electrode, oldest first, each with that electrode's
        entry only — ready for :func:`activolt.procedures.calibration.electrode_history` — and
        its hash in the archive as ``archive_hash``.

        Records superseded by a re-reduction are left out (their successor stands in).
        """
        entries = self.find(electrode=electrode, kind="calibration", current_only=True)
        history = []
        for entry in entries:
            record = self.record(entry.hash)
            record["electrodes"] = [e for e in record.get("electrodes") or []
                                    if str(e.get("electrode")) == electrode]
            if record["electrodes"]:
                history.append({**record, "archive_hash": entry.hash})
        return history

    def to_frame(self, **filters: Any) -> Any:
        """The records matching ``filters`` (those of :meth:`find`) as a tidy pandas DataFrame:
        one row per record, the columns :data:`FRAME_COLUMNS` (electrodes joined by ``;``)."""
        import pandas as pd

        entries = self.find(**filters)
        rows = [{**{name: getattr(e, name) for name in FRAME_COLUMNS if name != "electrodes"},
                 "electrodes": ";".join(e.electrodes)} for e in entries]
        frame = pd.DataFrame(rows, columns=list(FRAME_COLUMNS))
        for name in ("temperature_K", "standard_potential_V", "u_standard_potential_V"):
            frame[name] = frame[name].astype("float64")
        return frame

    def export(self, format: str, destination: IO[bytes], **filters: Any) -> int:
        """Write the records matching ``filters`` to a binary stream; returns how many.

        ``csv`` (RFC 4180, UTF-8): :meth:`to_frame` with every text cell that a spreadsheet
        would read as a formula (``=``, ``+``, ``-``, ``@``, tab, CR, LF at its start) prefixed
        with ``'``
        (:func:`activolt.safe_text.neutralise_formula`); ``jsonl``: one line per record,
        ``{"hash", "added_utc", "supersedes", "inputs", "outputs", "record"}``; ``parquet``:
        :meth:`to_frame` through pyarrow.
        """
        if format not in EXPORT_FORMATS:
            raise InputError(f"unknown export format '{format}'; give one of "
                             + ", ".join(EXPORT_FORMATS), column="--format")
        if format == "jsonl":
            count = 0
            for line in self.iter_jsonl(**filters):
                destination.write(line.encode("utf-8"))
                count += 1
            return count
        frame = self.to_frame(**filters)
        if format == "csv":
            from pandas.api.types import is_numeric_dtype

            safe = frame.copy()
            for name in safe.columns:
                if not is_numeric_dtype(safe[name]):  # text, whatever pandas calls its dtype
                    safe[name] = safe[name].map(neutralise_formula)
            # CRLF line ends (RFC 4180): a CR or LF inside a cell is then always quoted
            destination.write(safe.to_csv(index=False, lineterminator="\r\n").encode("utf-8"))
        else:
            buffer = io.BytesIO()
            frame.to_parquet(buffer, engine="pyarrow", index=False)
            destination.write(buffer.getvalue())
        return len(frame)

    def iter_jsonl(self, **filters: Any) -> Iterator[str]:
        """The records matching ``filters`` as JSON Lines (each line ends with a newline)."""
        for entry in self.find(**filters):
            archived = self.get(entry.hash)
            yield json.dumps({"hash": entry.hash, "added_utc": entry.added_utc,
                              "supersedes": entry.supersedes, "inputs": list(archived.inputs),
                              "outputs": list(archived.outputs), "record": archived.record},
                             ensure_ascii=False, allow_nan=False, sort_keys=True) + "\n"

    # ---------------------------------------------------------------- outbox

    def queue_upload(self, record_hash: str, endpoint: str,
                     attachments: Sequence[str] = ()) -> None:
        """Queue a record (with outputs named in ``attachments``) for ``endpoint``.

        A record already waiting there keeps its attempts and takes the new attachments; one
        already sent is queued again (a new send; the endpoint recognises it by its hash).
        """
        full = self.resolve(record_hash)
        names = json.dumps(list(dict.fromkeys(attachments)))
        queued = datetime.now(UTC).isoformat()
        with self.engine.begin() as connection:
            row = connection.execute(select(outbox.c.sent_utc).where(
                outbox.c.record_hash == full, outbox.c.endpoint == endpoint)).first()
            if row is None:
                connection.execute(outbox.insert().values(
                    record_hash=full, endpoint=endpoint, attachments=names, queued_utc=queued,
                    attempts=0))
            elif row.sent_utc is None:
                connection.execute(update(outbox).where(
                    outbox.c.record_hash == full, outbox.c.endpoint == endpoint).values(
                    attachments=names))
            else:
                connection.execute(update(outbox).where(
                    outbox.c.record_hash == full, outbox.c.endpoint == endpoint).values(
                    attachments=names, queued_utc=queued, attempts=0, last_error=None,
                    sent_utc=None, receipt=None))

    def pending_uploads(self, endpoint: str | None = None) -> list[PendingUpload]:
        """What is still to be sent (to ``endpoint``, or to any), oldest first."""
        query = select(outbox).where(outbox.c.sent_utc.is_(None))
        if endpoint is not None:
            query = query.where(outbox.c.endpoint == endpoint)
        with self.engine.connect() as connection:
            rows = connection.execute(query.order_by(outbox.c.queued_utc,
                                                     outbox.c.record_hash)).mappings().all()
        return [PendingUpload(record_hash=row["record_hash"], endpoint=row["endpoint"],
                              attachments=tuple(json.loads(row["attachments"])),
                              attempts=int(row["attempts"]), last_error=row["last_error"],
                              queued_at=datetime.fromisoformat(row["queued_utc"]))
                for row in rows]

    def _outbox_row(self, connection: Connection, full: str, endpoint: str) -> bool:
        return connection.execute(select(outbox.c.record_hash).where(
            outbox.c.record_hash == full, outbox.c.endpoint == endpoint)).first() is not None

    def mark_uploaded(self, record_hash: str, endpoint: str, receipt: str | None = None) -> None:
        """Note that the endpoint accepted the record (with its receipt, if it gave one)."""
        full = self.resolve(record_hash)
        now = datetime.now(UTC).isoformat()
        with self.engine.begin() as connection:
            if self._outbox_row(connection, full, endpoint):
                connection.execute(update(outbox).where(
                    outbox.c.record_hash == full, outbox.c.endpoint == endpoint).values(
                    sent_utc=now, receipt=receipt, last_error=None))
            else:
                connection.execute(outbox.insert().values(
                    record_hash=full, endpoint=endpoint, attachments="[]", queued_utc=now,
                    attempts=0, sent_utc=now, receipt=receipt))

    def note_upload_failure(self, record_hash: str, endpoint: str, error: str) -> None:
        """Count a failed send and keep its reason; the record stays pending (queued now if it
        was not queued)."""
        full = self.resolve(record_hash)
        with self.engine.begin() as connection:
            if self._outbox_row(connection, full, endpoint):
                connection.execute(update(outbox).where(
                    outbox.c.record_hash == full, outbox.c.endpoint == endpoint).values(
                    attempts=outbox.c.attempts + 1, last_error=error, sent_utc=None))
            else:
                connection.execute(outbox.insert().values(
                    record_hash=full, endpoint=endpoint, attachments="[]",
                    queued_utc=datetime.now(UTC).isoformat(), attempts=1, last_error=error))

    def uploads(self, record_hash: str) -> list[dict[str, Any]]:
        """Every endpoint the record was queued for or sent to: ``endpoint``, ``sent_utc``
        (None while pending), ``receipt``, ``attempts``, ``last_error``."""
        full = self.resolve(record_hash)
        with self.engine.connect() as connection:
            rows = connection.execute(select(outbox).where(outbox.c.record_hash == full)
                                      .order_by(outbox.c.queued_utc)).mappings().all()
        return [{key: row[key] for key in ("endpoint", "sent_utc", "receipt", "attempts",
                                           "last_error")} for row in rows]


def open_archive(location: str | os.PathLike[str] | None = None) -> Archive:
    """Open (creating or migrating it when needed) the archive at ``location``.

    Parameters
    ----------
    location : str or path-like, optional
        An SQLite file's path or an SQLAlchemy URL; default ``ACTIVOLT_ARCHIVE``, else
        :func:`default_location` (see :func:`archive_url`).

    Returns
    -------
    Archive

    Raises
    ------
    InputError
        The database cannot be reached or opened, or it was written by a newer activolt.
    """
    url = archive_url(location)
    shown = url.split("@")[-1] if "@" in url else url
    try:
        if url.startswith("sqlite"):
            database = make_url(url).database
            if database and database != ":memory:" and not database.startswith("file:"):
                Path(database).parent.mkdir(parents=True, exist_ok=True)
            engine = create_engine(url, connect_args={"timeout": BUSY_TIMEOUT_S})
            _sqlite_setup(engine)
        else:
            engine = create_engine(url, pool_pre_ping=True)
        with engine.begin() as connection:
            found = current_version(connection)
            if found > SCHEMA_VERSION:
                raise InputError(f"the archive's layout is version {found}, newer than this "
                                 f"activolt's ({SCHEMA_VERSION}); update activolt",
                                 file=shown)
            if found < SCHEMA_VERSION:
                migrate(connection)
    except InputError:
        raise
    except (SQLAlchemyError, OSError, ImportError, ValueError) as error:
        reason = " ".join(str(getattr(error, "orig", None) or error).split())[:300]
        raise InputError(f"cannot open the archive: {reason}; check the path or URL (option "
                         f"--archive or {ENVIRONMENT_VARIABLE})", file=shown) from None
    return Archive(engine)
