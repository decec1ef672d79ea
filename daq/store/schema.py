"""The schema of the store: reading statuses, storage scales, numbered migrations."""

from __future__ import annotations

from datetime import UTC, datetime

from soaklog.records import STATUS_CODES, status_code, status_name

__all__ = ["STATUS_CODES", "TEMP_SCALE", "U_SCALE", "MIGRATIONS", "SCHEMA_VERSION", "status_code", "status_name", "iso_utc", "statements"]

TEMP_SCALE = 1_000_000  # stored temperature: micro-degrees Celsius
U_SCALE = 10_000  # stored expanded uncertainty: units of 0.1 mK


def iso_utc(t_ms: int | float | None) -> str | None:
    """ISO 8601 UTC with milliseconds and a Z, as the public views give it."""
    if t_ms is None:
        return None
    dt = datetime.fromtimestamp(t_ms / 1000.0, tz=UTC)
    return dt.strftime("%Y-%m-%dT%H:%M:%S.") + f"{dt.microsecond // 1000:03d}Z"


# ---------------------------------------------------------------- schema

_ISO = "strftime('%Y-%m-%dT%H:%M:%fZ', {col} / 1000.0, 'unixepoch')"

MIGRATIONS: list[tuple[int, str]] = [
    (
        1,
        f"""
        CREATE TABLE IF NOT EXISTS runs (
            id INTEGER PRIMARY KEY,
            started_utc TEXT NOT NULL,
            ended_utc TEXT,
            config TEXT NOT NULL,
            config_sha256 TEXT NOT NULL,
            station TEXT NOT NULL DEFAULT '',
            name TEXT NOT NULL DEFAULT '',
            software TEXT NOT NULL DEFAULT '',
            config_path TEXT NOT NULL DEFAULT ''
        );
        CREATE TABLE IF NOT EXISTS channels (
            id INTEGER PRIMARY KEY,
            run_id INTEGER NOT NULL REFERENCES runs(id),
            name TEXT NOT NULL,
            label TEXT NOT NULL DEFAULT '',
            instrument TEXT NOT NULL DEFAULT '',
            raw_unit TEXT NOT NULL DEFAULT 'ohm',
            meta TEXT NOT NULL DEFAULT '{{}}',
            UNIQUE (run_id, name)
        );
        CREATE TABLE IF NOT EXISTS statuses (
            code INTEGER PRIMARY KEY,
            name TEXT NOT NULL UNIQUE
        );
        CREATE TABLE IF NOT EXISTS samples (
            ch INTEGER NOT NULL,
            t_ms INTEGER NOT NULL,
            raw REAL,
            temp_uc INTEGER,
            u_e4 INTEGER,
            status INTEGER NOT NULL DEFAULT 0,
            flags INTEGER NOT NULL DEFAULT 0
        );
        CREATE TABLE IF NOT EXISTS minute_index (
            run_id INTEGER NOT NULL,
            minute INTEGER NOT NULL,
            first_rowid INTEGER NOT NULL,
            PRIMARY KEY (run_id, minute)
        ) WITHOUT ROWID;
        CREATE TABLE IF NOT EXISTS rollup_1m (
            ch INTEGER NOT NULL,
            minute INTEGER NOT NULL,
            n INTEGER NOT NULL,
            n_bad INTEGER NOT NULL,
            t_min REAL,
            t_max REAL,
            t_sum REAL,
            u_max REAL,
            PRIMARY KEY (ch, minute)
        ) WITHOUT ROWID;
        CREATE TABLE IF NOT EXISTS latest (
            ch INTEGER PRIMARY KEY,
            t_ms INTEGER NOT NULL,
            raw REAL,
            temp_c REAL,
            u_c REAL,
            status INTEGER NOT NULL,
            flags INTEGER NOT NULL,
            last_ok_ms INTEGER,
            last_ok_temp_c REAL,
            t_min_c REAL,
            t_max_c REAL
        );
        CREATE TABLE IF NOT EXISTS events (
            id INTEGER PRIMARY KEY,
            run_id INTEGER NOT NULL,
            t_ms INTEGER NOT NULL,
            kind TEXT NOT NULL,
            ch INTEGER,
            severity TEXT NOT NULL DEFAULT 'info',
            message TEXT NOT NULL,
            data TEXT NOT NULL DEFAULT '{{}}'
        );
        CREATE INDEX IF NOT EXISTS events_run_t ON events (run_id, t_ms);
        CREATE TABLE IF NOT EXISTS instruments (
            run_id INTEGER NOT NULL,
            name TEXT NOT NULL,
            updated_ms INTEGER NOT NULL,
            connected INTEGER NOT NULL,
            identity TEXT NOT NULL DEFAULT '',
            health TEXT NOT NULL DEFAULT '{{}}',
            PRIMARY KEY (run_id, name)
        );
        CREATE VIEW IF NOT EXISTS readings_v AS
            SELECT c.run_id AS run_id,
                   c.name AS channel,
                   {_ISO.format(col="s.t_ms")} AS t_utc,
                   s.raw AS raw,
                   c.raw_unit AS raw_unit,
                   s.temp_uc / {TEMP_SCALE}.0 AS temperature_c,
                   s.u_e4 / {U_SCALE}.0 AS uncertainty_c,
                   COALESCE(st.name, 'status_' || s.status) AS status
            FROM samples s
            JOIN channels c ON c.id = s.ch
            LEFT JOIN statuses st ON st.code = s.status;
        CREATE VIEW IF NOT EXISTS events_v AS
            SELECT e.run_id AS run_id,
                   {_ISO.format(col="e.t_ms")} AS t_utc,
                   e.kind AS kind,
                   c.name AS channel,
                   e.severity AS severity,
                   e.message AS message
            FROM events e
            LEFT JOIN channels c ON c.id = e.ch
            ORDER BY e.t_ms, e.id;
        """,
    ),
    (
        2,
        """
        CREATE TABLE IF NOT EXISTS operator_actions (
            id INTEGER PRIMARY KEY,
            t_ms INTEGER NOT NULL,
            kind TEXT NOT NULL,
            target TEXT NOT NULL DEFAULT '',
            note TEXT NOT NULL DEFAULT '',
            actor TEXT NOT NULL DEFAULT '',
            until_ms INTEGER,
            applied_ms INTEGER,
            outcome TEXT
        );
        """,
    ),
    (
        3,
        """
        ALTER TABLE latest ADD COLUMN n INTEGER NOT NULL DEFAULT 0;
        ALTER TABLE latest ADD COLUMN n_bad INTEGER NOT NULL DEFAULT 0;
        ALTER TABLE latest ADD COLUMN t_sum REAL;
        ALTER TABLE latest ADD COLUMN u_max REAL;
        UPDATE latest SET
            n = COALESCE((SELECT SUM(r.n) FROM rollup_1m r WHERE r.ch = latest.ch), 0),
            n_bad = COALESCE((SELECT SUM(r.n_bad) FROM rollup_1m r WHERE r.ch = latest.ch), 0),
            t_sum = (SELECT SUM(r.t_sum) FROM rollup_1m r WHERE r.ch = latest.ch),
            u_max = (SELECT MAX(r.u_max) FROM rollup_1m r WHERE r.ch = latest.ch);
        """,
    ),
    (
        4,
        """
        CREATE TABLE IF NOT EXISTS alarm_states (
            run_id INTEGER NOT NULL,
            id TEXT NOT NULL,
            rule TEXT NOT NULL,
            kind TEXT NOT NULL,
            source TEXT NOT NULL DEFAULT '',
            ch INTEGER,
            state TEXT NOT NULL,
            severity TEXT NOT NULL,
            condition INTEGER NOT NULL DEFAULT 0,
            acked INTEGER NOT NULL DEFAULT 1,
            since_ms INTEGER,
            shelved_until_ms INTEGER,
            value REAL,
            message TEXT NOT NULL DEFAULT '',
            updated_ms INTEGER NOT NULL,
            PRIMARY KEY (run_id, id)
        );
        """,
    ),
]

# 5: the record keeps every flag. ``flag_names`` names each bit of ``samples.flags``
# (filled from soaklog.sensors.flags at every open, as ``statuses`` is), and
# ``readings_v`` gains the integer time ``t_ms`` and ``flags``: the names of the
# flags a reading carries, comma-separated in bit order ('' when none), as
# ``convert --json`` names them. Columns are CAST so that other SQL engines
# reading the file see numbers as numbers.
MIGRATIONS.append((
    5,
    f"""
    CREATE TABLE IF NOT EXISTS flag_names (
        bit INTEGER PRIMARY KEY,
        name TEXT NOT NULL UNIQUE
    );
    DROP VIEW IF EXISTS readings_v;
    CREATE VIEW readings_v AS
        SELECT c.run_id AS run_id,
               c.name AS channel,
               {_ISO.format(col="s.t_ms")} AS t_utc,
               CAST(s.t_ms AS INTEGER) AS t_ms,
               CAST(s.raw AS REAL) AS raw,
               c.raw_unit AS raw_unit,
               CAST(s.temp_uc AS REAL) / {TEMP_SCALE}.0 AS temperature_c,
               CAST(s.u_e4 AS REAL) / {U_SCALE}.0 AS uncertainty_c,
               COALESCE(st.name, 'status_' || s.status) AS status,
               CASE WHEN s.flags = 0 THEN ''
                    ELSE COALESCE((SELECT group_concat(f.name, ',') FROM flag_names f WHERE (s.flags & f.bit) != 0),
                                  'flags_' || s.flags)
               END AS flags
        FROM samples s
        JOIN channels c ON c.id = s.ch
        LEFT JOIN statuses st ON st.code = s.status
    """,
))

SCHEMA_VERSION = MIGRATIONS[-1][0]




def statements(sql: str) -> list[str]:
    """Split a migration script into statements (none of ours holds a ';' inside)."""
    return [s.strip() for s in sql.split(";") if s.strip()]


