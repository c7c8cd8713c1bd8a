"""The archive's tables and the ordered steps that bring any older archive up to date.

The archive (:mod:`activolt.io.archive`) keeps its layout version in the table
``schema_version`` (one row per step applied: ``version``, ``description``, ``applied_utc``).
:data:`MIGRATIONS` lists the steps in order; :func:`migrate` applies, in one transaction each,
every step above the version found, so an archive written by any earlier release opens in this
one. Steps are only ever appended; a step already released is never edited. An archive whose
version is above :data:`SCHEMA_VERSION` was written by a newer activolt and is refused.

Tables (version 2):

``records``
    One row per record: ``hash`` (SHA-256 of the canonical JSON, the key), the canonical JSON
    itself (``record_json``), and the columns searched on (kind, created and added times in UTC
    ISO 8601, electrolyte, cell, lab, operator, instrument, model, temperature, E° and its u,
    software version, the input table's SHA-256, ``supersedes``: the record a re-reduction
    replaces).
``record_electrodes``
    (record, electrode) for every electrode a record names: the calibrated electrodes of a
    batch, the ``electrode`` column of a run's readings, the metadata's ``electrode``.
``blobs``
    File contents by their SHA-256 (stored once however many records name them).
``record_files``
    (record, role ``input`` | ``output``, file name) → blob: the record's table and metadata
    byte for byte, and its output set (points, report, figures, certificate).
``outbox`` (added by step 2)
    Records queued for an upload endpoint, their attachments, attempts, last error, and when
    they were sent (with the receiving end's receipt).

Adding a column: append a step ``(n, "what and why", function)`` whose function runs
``ALTER TABLE … ADD COLUMN …`` (nullable, or with a default) through the connection it is
given, add the column to the table definition below, and raise :data:`SCHEMA_VERSION`.
"""

from __future__ import annotations

from collections.abc import Callable
from datetime import UTC, datetime

from sqlalchemy import (
    Column,
    Connection,
    Float,
    ForeignKey,
    Index,
    Integer,
    LargeBinary,
    MetaData,
    String,
    Table,
    Text,
    inspect,
    select,
    text,
)

__all__ = ["MIGRATIONS", "SCHEMA_VERSION", "blobs", "current_version", "metadata", "migrate",
           "outbox", "record_electrodes", "record_files", "records", "schema_version"]

metadata = MetaData()

schema_version = Table(
    "schema_version", metadata,
    Column("version", Integer, primary_key=True, autoincrement=False),
    Column("description", Text, nullable=False),
    Column("applied_utc", String(20), nullable=False),
)

records = Table(
    "records", metadata,
    Column("hash", String(64), primary_key=True),
    Column("kind", String(32), nullable=False),
    Column("created_utc", String(20)),
    Column("added_utc", String(20), nullable=False),
    Column("electrolyte", Text),
    Column("cell", Text),
    Column("lab", Text),
    Column("operator", Text),
    Column("instrument", Text),
    Column("model", Text),
    Column("temperature_K", Float),
    Column("standard_potential_V", Float),
    Column("u_standard_potential_V", Float),
    Column("software_version", String(64)),
    Column("input_sha256", String(64)),
    Column("supersedes", String(64)),
    Column("record_json", Text, nullable=False),
    Index("ix_records_created", "created_utc"),
    Index("ix_records_supersedes", "supersedes"),
)

record_electrodes = Table(
    "record_electrodes", metadata,
    Column("record_hash", String(64), ForeignKey("records.hash"), primary_key=True),
    Column("electrode", String(200), primary_key=True),
    Index("ix_record_electrodes_electrode", "electrode"),
)

blobs = Table(
    "blobs", metadata,
    Column("sha256", String(64), primary_key=True),
    Column("size", Integer, nullable=False),
    Column("content", LargeBinary, nullable=False),
)

record_files = Table(
    "record_files", metadata,
    Column("record_hash", String(64), ForeignKey("records.hash"), primary_key=True),
    Column("role", String(8), primary_key=True),
    Column("name", String(400), primary_key=True),
    Column("sha256", String(64), ForeignKey("blobs.sha256"), nullable=False),
)

outbox = Table(
    "outbox", metadata,
    Column("record_hash", String(64), ForeignKey("records.hash"), primary_key=True),
    Column("endpoint", String(1000), primary_key=True),
    Column("attachments", Text, nullable=False),
    Column("queued_utc", String(32), nullable=False),
    Column("attempts", Integer, nullable=False, default=0),
    Column("last_error", Text),
    Column("sent_utc", String(32)),
    Column("receipt", Text),
    Index("ix_outbox_sent", "sent_utc"),
)


def _step_1(connection: Connection) -> None:
    for table in (records, record_electrodes, blobs, record_files):
        table.create(connection, checkfirst=True)


def _step_2(connection: Connection) -> None:
    outbox.create(connection, checkfirst=True)


#: The ordered steps: (version reached, what it does, the function doing it).
MIGRATIONS: tuple[tuple[int, str, Callable[[Connection], None]], ...] = (
    (1, "records, their electrodes, input and output files, file contents", _step_1),
    (2, "outbox of uploads to a lab-records endpoint", _step_2),
)
#: The layout version this release writes.
SCHEMA_VERSION = MIGRATIONS[-1][0]


def current_version(connection: Connection) -> int:
    """The archive's layout version (0 for an empty database)."""
    if not inspect(connection).has_table("schema_version"):
        return 0
    found = connection.execute(select(schema_version.c.version)
                               .order_by(schema_version.c.version.desc()).limit(1)).scalar()
    return int(found or 0)


def migrate(connection: Connection, target: int = SCHEMA_VERSION) -> list[int]:
    """Apply every step above the archive's version up to ``target`` (inside the caller's
    transaction); returns the versions applied.

    On PostgreSQL a transaction-scoped advisory lock makes concurrent first openings wait for
    each other; on SQLite the caller's ``BEGIN IMMEDIATE`` does the same.
    """
    if connection.dialect.name == "postgresql":
        connection.execute(text("SELECT pg_advisory_xact_lock(7243916)"))
    schema_version.create(connection, checkfirst=True)
    found = current_version(connection)
    applied = []
    for version, description, step in MIGRATIONS:
        if found < version <= target:
            step(connection)
            connection.execute(schema_version.insert().values(
                version=version, description=description,
                applied_utc=datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")))
            applied.append(version)
    return applied
