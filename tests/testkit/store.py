"""Store files as an older soaklog wrote them: the schema up to a version, for the migration tests."""

from __future__ import annotations

import sqlite3
from pathlib import Path


def old_store(path: Path, version: int) -> sqlite3.Connection:
    """A new file at ``path`` with the migrations up to schema ``version`` and run 1; an autocommit connection.

    The caller adds the rows the old version would have written, then closes the connection.
    """
    from soaklog.store.schema import MIGRATIONS, statements

    conn = sqlite3.connect(path, isolation_level=None)
    for v, sql in MIGRATIONS[:version]:
        for stmt in statements(sql):
            conn.execute(stmt)
        conn.execute(f"PRAGMA user_version = {v}")
    conn.execute("INSERT INTO runs (id, started_utc, config, config_sha256) VALUES (1, 'x', 'c', 'h')")
    return conn
