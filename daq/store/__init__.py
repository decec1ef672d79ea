"""The SQLite store: the only package with SQL (schema, migrations, writer, queries, public views)."""

from __future__ import annotations

from soaklog.store.core import Store
from soaklog.store.records import ChannelInfo, RunInfo, SampleBatch, config_digest
from soaklog.store.schema import SCHEMA_VERSION, STATUS_CODES, TEMP_SCALE, U_SCALE, iso_utc, status_code, status_name

__all__ = [
    "SCHEMA_VERSION",
    "STATUS_CODES",
    "TEMP_SCALE",
    "U_SCALE",
    "ChannelInfo",
    "RunInfo",
    "SampleBatch",
    "Store",
    "config_digest",
    "iso_utc",
    "status_code",
    "status_name",
]
