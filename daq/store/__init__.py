"""The SQLite store: the only package with SQL (schema, migrations, writer, reader, public views).

Viewers open a ``StoreReader`` (read-only); the service opens the
``StoreWriter``. Every row comes back as a frozen record of ``records``; every
``sqlite3.Error`` leaves as a ``StorageError``.
"""

from __future__ import annotations

from soaklog.store.reader import StoreReader
from soaklog.store.records import (
    AlarmRow,
    ChannelInfo,
    ChannelSummary,
    EventRow,
    InstrumentRow,
    LatestRow,
    OperatorAction,
    RawWindow,
    ReadingChunk,
    RunInfo,
    RunRow,
    SampleBatch,
    Trend,
    config_digest,
)
from soaklog.store.schema import SCHEMA_VERSION, STATUS_CODES, TEMP_SCALE, U_SCALE, iso_utc, status_code, status_name
from soaklog.store.writer import StoreWriter

__all__ = [
    "SCHEMA_VERSION",
    "STATUS_CODES",
    "TEMP_SCALE",
    "U_SCALE",
    "AlarmRow",
    "ChannelInfo",
    "ChannelSummary",
    "EventRow",
    "InstrumentRow",
    "LatestRow",
    "OperatorAction",
    "RawWindow",
    "ReadingChunk",
    "RunInfo",
    "RunRow",
    "SampleBatch",
    "StoreReader",
    "StoreWriter",
    "Trend",
    "config_digest",
    "iso_utc",
    "status_code",
    "status_name",
]
