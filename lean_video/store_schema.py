"""Schema of the client store and its migrations (see :mod:`lean_video.store`).

``PRAGMA user_version`` holds the version. Each migration ``k -> k+1`` is one
SQL script in :data:`MIGRATIONS`; :func:`migrate` runs every script the file
still needs inside one ``BEGIN IMMEDIATE`` transaction, with foreign-key
actions off while a table is rebuilt and ``PRAGMA foreign_key_check`` before
the commit (SQLite documentation, "ALTER TABLE", section "Making Other Kinds
Of Table Schema Changes"), so a crash leaves the file at the old version.
"""

from __future__ import annotations

import logging
import sqlite3
from pathlib import Path

from lean_video.errors import LeanVideoError

logger = logging.getLogger(__name__)

SCHEMA_VERSION = 3

V1_SQL = """
CREATE TABLE clients (
    id TEXT PRIMARY KEY,
    display_name TEXT,
    birth_year INTEGER,
    mass_kg REAL,
    height_m REAL,
    side_of_interest TEXT CHECK (side_of_interest IN ('left', 'right')),
    created_utc TEXT NOT NULL
);
CREATE TABLE sessions (
    id INTEGER PRIMARY KEY AUTOINCREMENT,
    client_id TEXT NOT NULL REFERENCES clients(id) ON DELETE CASCADE,
    date_filmed TEXT NOT NULL,
    clip_sha256 TEXT NOT NULL,
    settings_json TEXT NOT NULL,
    software_version TEXT NOT NULL,
    summary_json TEXT NOT NULL,
    created_utc TEXT NOT NULL,
    UNIQUE (client_id, clip_sha256)
);
CREATE TABLE phases (
    session_id INTEGER NOT NULL REFERENCES sessions(id) ON DELETE CASCADE,
    phase_index INTEGER NOT NULL,
    stance_side TEXT NOT NULL CHECK (stance_side IN ('left', 'right')),
    start_s REAL NOT NULL, end_s REAL NOT NULL, duration_s REAL NOT NULL,
    lean_mean_deg REAL NOT NULL, lean_peak_deg REAL,
    pelvic_drop_mean_deg REAL, pelvic_drop_peak_deg REAL,
    lever_arm_cm REAL, lever_arm_shortening_cm REAL, lever_arm_shortening_pct REAL,
    abductor_force_bw REAL, hip_force_bw REAL, hip_force_change_pct REAL,
    PRIMARY KEY (session_id, phase_index)
);
CREATE INDEX sessions_by_client ON sessions(client_id, date_filmed);
"""

MIGRATIONS = {
    # 1 -> 2: free-text notes on a client; record of report files written.
    1: """
ALTER TABLE clients ADD COLUMN notes TEXT;
CREATE TABLE reports (
    id INTEGER PRIMARY KEY AUTOINCREMENT,
    client_id TEXT NOT NULL REFERENCES clients(id) ON DELETE CASCADE,
    session_id INTEGER REFERENCES sessions(id) ON DELETE SET NULL,
    path TEXT NOT NULL,
    created_utc TEXT NOT NULL
);
""",
    # 2 -> 3: several sessions per client and clip (re-analysis keeps the earlier one).
    2: """
CREATE TABLE sessions_v3 (
    id INTEGER PRIMARY KEY AUTOINCREMENT,
    client_id TEXT NOT NULL REFERENCES clients(id) ON DELETE CASCADE,
    date_filmed TEXT NOT NULL,
    clip_sha256 TEXT NOT NULL,
    settings_json TEXT NOT NULL,
    software_version TEXT NOT NULL,
    summary_json TEXT NOT NULL,
    created_utc TEXT NOT NULL
);
INSERT INTO sessions_v3 (id, client_id, date_filmed, clip_sha256, settings_json, software_version, summary_json,
                         created_utc)
    SELECT id, client_id, date_filmed, clip_sha256, settings_json, software_version, summary_json, created_utc
    FROM sessions;
DROP TABLE sessions;
ALTER TABLE sessions_v3 RENAME TO sessions;
CREATE INDEX sessions_by_client ON sessions(client_id, date_filmed);
CREATE INDEX sessions_by_clip ON sessions(client_id, clip_sha256)
""",
}


def migrate(conn: sqlite3.Connection, path: Path) -> None:
    """Check the file and bring its schema to :data:`SCHEMA_VERSION` in one transaction.

    Raises
    ------
    LeanVideoError
        If the file was written by a newer lean_video or belongs to another program.
    sqlite3.DatabaseError
        If the file is damaged (the caller words the message).
    """
    check = conn.execute("PRAGMA quick_check").fetchone()[0]
    if check != "ok":
        raise sqlite3.DatabaseError(f"integrity check: {check}")
    version = conn.execute("PRAGMA user_version").fetchone()[0]
    if version < 0:
        raise sqlite3.DatabaseError(f"schema version {version}")
    if version > SCHEMA_VERSION:
        raise LeanVideoError(f"client store {path.name} has schema version {version} but this lean_video understands up to "
                   f"{SCHEMA_VERSION}; update lean_video before opening it.")
    if version == SCHEMA_VERSION:
        return
    # A table rebuild drops the old table; with foreign-key actions on that
    # would cascade into the phases. The pragma only changes outside a
    # transaction; the rebuilt schema is checked before the commit.
    conn.execute("PRAGMA foreign_keys=OFF")
    conn.execute("BEGIN IMMEDIATE")
    try:
        # Re-read under the write lock: another process may have migrated meanwhile.
        version = conn.execute("PRAGMA user_version").fetchone()[0]
        if version == 0:
            tables = conn.execute("SELECT COUNT(*) FROM sqlite_master").fetchone()[0]
            if tables:
                raise LeanVideoError(f"{path.name} in the data folder is an SQLite file of another program; "
                           "move it aside or choose another --data-dir.")
            exec_script(conn, V1_SQL)
            version = 1
        while version < SCHEMA_VERSION:
            exec_script(conn, MIGRATIONS[version])
            version += 1
            logger.info("client store migrated to schema %d", version)
        broken = conn.execute("PRAGMA foreign_key_check").fetchall()
        if broken:
            raise sqlite3.DatabaseError(f"foreign keys broken by the migration: {broken[:3]}")
        conn.execute(f"PRAGMA user_version={int(version)}")
    except BaseException:
        if conn.in_transaction:
            conn.execute("ROLLBACK")
        raise
    finally:
        if not conn.in_transaction:
            conn.execute("PRAGMA foreign_keys=ON")
    conn.execute("COMMIT")
    conn.execute("PRAGMA foreign_keys=ON")


def exec_script(conn: sqlite3.Connection, script: str) -> None:
    """Run a multi-statement script inside the caller's transaction."""
    # executescript() would COMMIT our transaction first; run statement by statement.
    for stmt in script.split(";"):
        if stmt.strip():
            conn.execute(stmt)
