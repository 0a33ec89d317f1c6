"""Local client history: one SQLite file per user, nothing leaves the machine.

The store sits beside the pipeline (it imports no other stage). It keeps
pseudonymous clients, one session per analysed clip and one row per
single-support phase of that session.

Location
    ``open_store(data_dir)``; without ``data_dir`` the folder is
    ``$LEAN_VIDEO_DATA_DIR``, else ``$XDG_DATA_HOME/lean_video``, else
    ``~/.local/share/lean_video`` (XDG Base Directory Specification 0.8).
    The database file is ``<data_dir>/lean_video.sqlite3``.

Schema (``PRAGMA user_version`` holds the version, currently 3)
    ``clients``  id (pseudonym, primary key), display_name, birth_year,
                 mass_kg, height_m, side_of_interest, notes, created_utc
    ``sessions`` id, client_id, date_filmed (YYYY-MM-DD), clip_sha256,
                 settings_json, software_version, summary_json, created_utc;
                 re-analysing a clip adds a session and keeps the earlier
                 ones (a stored session is never changed or overwritten); the
                 history report uses the latest analysis of each clip
    ``phases``   session_id, phase_index and the per-phase columns of the
                 gait/mechanics ``strides`` table (:data:`PHASE_COLUMNS`)
    ``reports``  client_id, session_id, path, created_utc (report files the
                 CLI wrote, so ``forget_client`` can delete them)

    Version 1 had no ``clients.notes`` and no ``reports`` table; migration
    1 -> 2 adds both. Version 2 allowed one session per client and clip and
    replaced it on re-analysis; migration 2 -> 3 rebuilds ``sessions``
    without that rule (rows, ids and phases kept). Migrations run inside one
    ``BEGIN IMMEDIATE`` transaction, with foreign-key actions off while a
    table is rebuilt and ``PRAGMA foreign_key_check`` before the commit
    (SQLite documentation, "ALTER TABLE", section "Making Other Kinds Of
    Table Schema Changes"), so a crash leaves the file at the old version.

Concurrency
    WAL journal, ``busy_timeout`` and ``BEGIN IMMEDIATE`` on every write, so
    two processes writing at once both land (the second waits for the lock;
    SQLite documentation, "Write-Ahead Logging", sqlite.org/wal.html).
    ``secure_delete`` is on so forgotten clients are overwritten in the file.
"""

from __future__ import annotations

import csv
import datetime as _dt
import json
import logging
import math
import os
import re
import sqlite3
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Iterator, Mapping

import pandas as pd

from lean_video.errors import LeanVideoError

logger = logging.getLogger(__name__)

SCHEMA_VERSION = 3
DB_FILENAME = "lean_video.sqlite3"
BUSY_TIMEOUT_MS = 30_000

#: Per-phase columns stored from the ``strides`` table; the first five are required.
PHASE_COLUMNS = (
    "stance_side", "start_s", "end_s", "duration_s", "lean_mean_deg",
    "lean_peak_deg", "pelvic_drop_mean_deg", "pelvic_drop_peak_deg",
    "lever_arm_cm", "lever_arm_shortening_cm", "lever_arm_shortening_pct",
    "abductor_force_bw", "hip_force_bw", "hip_force_change_pct",
)
_REQUIRED_PHASE_COLUMNS = PHASE_COLUMNS[:5]

_CLIENT_ID_RE = re.compile(r"^[A-Za-z0-9_\-][A-Za-z0-9_.\-]{0,63}$")
_DATE_RE = re.compile(r"^\d{4}-\d{2}-\d{2}$")
_SHA256_RE = re.compile(r"^[0-9a-f]{64}$")
MASS_RANGE_KG = (20.0, 300.0)     # common practice, no source: plausible adult/adolescent range
HEIGHT_RANGE_M = (1.0, 2.3)       # common practice, no source; as the hip model's (mechanics_params)
MAX_TEXT_CHARS = 10_000
BIRTH_YEAR_MIN = 1900

_V1_SQL = """
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

_MIGRATIONS = {
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


def _err(msg: str) -> LeanVideoError:
    return LeanVideoError(msg)


def _now_utc() -> str:
    return _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat()


def validate_client_id(client_id: Any) -> str:
    """Return ``client_id`` if it is a safe pseudonym, else raise.

    Allowed: 1-64 characters from letters, digits, ``-``, ``_``, ``.``, not
    starting with ``.`` (so it is also a safe file-name stem).
    """
    if not isinstance(client_id, str) or not _CLIENT_ID_RE.match(client_id):
        raise _err(
            f"client id must be 1-64 letters, digits, '-', '_' or '.' not starting with '.', "
            f"got {client_id!r}; choose a pseudonym such as HP-014."
        )
    return client_id


def validate_date(date: Any, name: str = "date") -> str:
    """Return an ISO ``YYYY-MM-DD`` date string if valid and not in the future, else raise.

    A day of slack allows for time zones (the clinic's today may be UTC's tomorrow).
    """
    if isinstance(date, _dt.date):
        date = date.isoformat()[:10]
    if isinstance(date, str) and _DATE_RE.match(date):
        try:
            day = _dt.date.fromisoformat(date)
        except ValueError:
            day = None
        if day is not None:
            latest = _dt.date.today() + _dt.timedelta(days=1)
            if day > latest:
                raise _err(f"{name} must not lie in the future, got {date!r} (today is {_dt.date.today()}); "
                           "give the day the clip was filmed.")
            return date
    raise _err(f"{name} must be a calendar date written YYYY-MM-DD, got {date!r}; fix the date.")


def check_client_text(*, display_name: Any = None, notes: Any = None) -> None:
    """Validate a client's free-text fields (either may be None) before any work is done."""
    for name, text in (("display_name", display_name), ("notes", notes)):
        if text is None:
            continue
        if not isinstance(text, str):
            raise _err(f"{name} must be text, got {type(text).__name__}; pass a string or leave it out.")
        if len(text) > MAX_TEXT_CHARS:
            raise _err(f"{name} must be at most {MAX_TEXT_CHARS} characters, got {len(text)}; shorten it.")


def _check_range(value: Any, name: str, lo: float, hi: float, unit: str) -> float | None:
    if value is None:
        return None
    try:
        v = float(value)
    except (TypeError, ValueError):
        v = math.nan
    if not (lo <= v <= hi):
        raise _err(f"{name} must be between {lo:g} and {hi:g} {unit}, got {value!r}; check the value and its unit.")
    return v


def check_body(*, mass_kg: Any = None, height_m: Any = None) -> tuple[float | None, float | None]:
    """Validate body mass and height (either may be None) before any work is done."""
    return (_check_range(mass_kg, "mass_kg", *MASS_RANGE_KG, "kg"),
            _check_range(height_m, "height_m", *HEIGHT_RANGE_M, "m"))


@dataclass(frozen=True)
class Client:
    """One pseudonymous client as stored."""

    id: str
    display_name: str | None
    birth_year: int | None
    mass_kg: float | None
    height_m: float | None
    side_of_interest: str | None
    notes: str | None
    created_utc: str
    n_sessions: int = 0
    last_date: str | None = None

    def as_dict(self) -> dict[str, Any]:
        return dict(self.__dict__)


@dataclass(frozen=True)
class Session:
    """One analysed clip (settings and summary decoded from JSON)."""

    id: int
    client_id: str
    date_filmed: str
    clip_sha256: str
    settings: dict
    software_version: str
    summary: dict
    created_utc: str
    n_phases: int


class Store:
    """Open handle on the SQLite file; use :func:`open_store` to create one."""

    def __init__(self, path: Path, conn: sqlite3.Connection) -> None:
        self.path = path
        self._conn = conn

    # -- plumbing -------------------------------------------------------
    def close(self) -> None:
        self._conn.close()

    def __enter__(self) -> "Store":
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    @contextmanager
    def _write(self) -> Iterator[sqlite3.Connection]:
        c = self._conn
        try:
            c.execute("BEGIN IMMEDIATE")
            try:
                yield c
            except BaseException:
                # SQLite may already have rolled back (e.g. disk full): do not hide that error
                if c.in_transaction:
                    c.execute("ROLLBACK")
                raise
            c.execute("COMMIT")
        except sqlite3.OperationalError as exc:
            raise _sqlite_error(exc, self.path) from None

    def _require_client(self, client_id: str) -> None:
        validate_client_id(client_id)
        if self._conn.execute("SELECT 1 FROM clients WHERE id=?", (client_id,)).fetchone() is None:
            raise _err(f"client {client_id!r} is not in the store at {self.path.parent.name}/; add the client first.")

    # -- clients --------------------------------------------------------
    def upsert_client(
        self, client_id: str, *, display_name: str | None = None, birth_year: int | None = None,
        mass_kg: float | None = None, height_m: float | None = None,
        side_of_interest: str | None = None, notes: str | None = None,
    ) -> tuple[Client, bool]:
        """Create a client or update the fields given (``None`` keeps the stored value).

        Returns ``(client, created)``.
        """
        validate_client_id(client_id)
        mass_kg = _check_range(mass_kg, "mass_kg", *MASS_RANGE_KG, "kg")
        height_m = _check_range(height_m, "height_m", *HEIGHT_RANGE_M, "m")
        if birth_year is not None:
            this_year = _dt.date.today().year
            if isinstance(birth_year, bool) or not isinstance(birth_year, int) or not (
                BIRTH_YEAR_MIN <= birth_year <= this_year
            ):
                raise _err(f"birth_year must be a whole year {BIRTH_YEAR_MIN}-{this_year}, got {birth_year!r}; fix it or leave it out.")
        if side_of_interest is not None and side_of_interest not in ("left", "right"):
            raise _err(f"side_of_interest must be 'left' or 'right', got {side_of_interest!r}; use the client's own side.")
        check_client_text(display_name=display_name, notes=notes)
        fields = {"display_name": display_name, "birth_year": birth_year, "mass_kg": mass_kg,
                  "height_m": height_m, "side_of_interest": side_of_interest, "notes": notes}
        with self._write() as c:
            exists = c.execute("SELECT 1 FROM clients WHERE id=?", (client_id,)).fetchone() is not None
            if not exists:
                c.execute(
                    "INSERT INTO clients (id, display_name, birth_year, mass_kg, height_m, side_of_interest, notes, created_utc)"
                    " VALUES (?,?,?,?,?,?,?,?)", (client_id, *fields.values(), _now_utc()))
            else:
                given = {k: v for k, v in fields.items() if v is not None}
                if given:
                    sets = ", ".join(f"{k}=?" for k in given)  # keys are our own literals
                    c.execute(f"UPDATE clients SET {sets} WHERE id=?", (*given.values(), client_id))
        return self.get_client(client_id), not exists

    def get_client(self, client_id: str) -> Client:
        """Return one client with its session count and last filming date."""
        self._require_client(client_id)
        row = self._conn.execute(_CLIENT_SELECT + " WHERE c.id=? GROUP BY c.id", (client_id,)).fetchone()
        return Client(*row)

    def list_clients(self) -> list[Client]:
        """All clients, ordered by id, with ``n_sessions`` and ``last_date``."""
        rows = self._conn.execute(_CLIENT_SELECT + " GROUP BY c.id ORDER BY c.id").fetchall()
        return [Client(*r) for r in rows]

    # -- sessions -------------------------------------------------------
    def save_session(
        self, client_id: str, date: str, clip_sha256: str, settings: Mapping, version: str,
        summary: Mapping, strides_df: pd.DataFrame,
    ) -> tuple[int, bool]:
        """Store one analysed clip and its phases in one transaction, as a new session.

        A stored session is never changed: analysing the same clip again
        (other settings, a newer version) adds a session and keeps the earlier
        ones; :meth:`history` then uses the latest analysis of each clip.

        Returns
        -------
        (session_id, earlier_kept) : tuple[int, bool]
            ``earlier_kept`` is True when this client already had a session of the same clip.
        """
        self._require_client(client_id)
        date = validate_date(date, "date filmed")
        check_provenance(clip_sha256=clip_sha256, settings=settings, version=version)
        settings_json = _to_json(settings, "settings")
        summary_json = _to_json(summary, "summary")
        rows = _phase_rows(strides_df)
        with self._write() as c:
            earlier = c.execute("SELECT COUNT(*) FROM sessions WHERE client_id=? AND clip_sha256=?",
                                (client_id, clip_sha256)).fetchone()[0]
            cur = c.execute(
                "INSERT INTO sessions (client_id, date_filmed, clip_sha256, settings_json, software_version,"
                " summary_json, created_utc) VALUES (?,?,?,?,?,?,?)",
                (client_id, date, clip_sha256, settings_json, version, summary_json, _now_utc()))
            sid = int(cur.lastrowid)
            cols = ", ".join(("session_id", "phase_index") + PHASE_COLUMNS)
            marks = ", ".join("?" * (2 + len(PHASE_COLUMNS)))
            c.executemany(f"INSERT INTO phases ({cols}) VALUES ({marks})",
                          [(sid, i, *r) for i, r in enumerate(rows)])
        logger.info("session %d for client %s saved%s", sid, client_id,
                    f" ({earlier} earlier analysis/analyses of this clip kept)" if earlier else "")
        return sid, earlier > 0

    def list_sessions(self, client_id: str) -> list[Session]:
        """Sessions of one client, oldest filming date first."""
        self._require_client(client_id)
        rows = self._conn.execute(
            "SELECT s.id, s.client_id, s.date_filmed, s.clip_sha256, s.settings_json, s.software_version,"
            " s.summary_json, s.created_utc, (SELECT COUNT(*) FROM phases p WHERE p.session_id=s.id)"
            " FROM sessions s WHERE s.client_id=? ORDER BY s.date_filmed, s.id", (client_id,)).fetchall()
        return [Session(r[0], r[1], r[2], r[3], json.loads(r[4]), r[5], json.loads(r[6]), r[7], r[8]) for r in rows]

    def get_phases(self, session_id: int) -> pd.DataFrame:
        """Per-phase table of one session (columns :data:`PHASE_COLUMNS`; NULL -> NaN)."""
        cols = ", ".join(PHASE_COLUMNS)
        rows = self._conn.execute(f"SELECT {cols} FROM phases WHERE session_id=? ORDER BY phase_index",
                                  (int(session_id),)).fetchall()
        df = pd.DataFrame(rows, columns=list(PHASE_COLUMNS))
        num = list(PHASE_COLUMNS[1:])
        df[num] = df[num].astype(float)
        return df

    def history(self, client_id: str) -> list[dict[str, Any]]:
        """The latest analysis of each clip, in the shape :func:`lean_video.report.render_history_report` takes.

        Earlier analyses of the same clip stay stored (:meth:`list_sessions`,
        :meth:`export_client`) but are not trended: they are the same walk.
        Each entry's ``n_earlier_analyses`` says how many were left out.
        """
        sessions = self.list_sessions(client_id)
        latest: dict[str, Session] = {}
        for s in sessions:
            if s.clip_sha256 not in latest or s.id > latest[s.clip_sha256].id:
                latest[s.clip_sha256] = s
        counts = {sha: sum(1 for s in sessions if s.clip_sha256 == sha) for sha in latest}
        return [{"session_id": s.id, "date": s.date_filmed, "clip_sha256": s.clip_sha256,
                 "version": s.software_version, "settings": s.settings, "summary": s.summary,
                 "n_earlier_analyses": counts[s.clip_sha256] - 1,
                 "phases": self.get_phases(s.id)} for s in sessions if latest[s.clip_sha256] is s]

    # -- reports, export, forget ---------------------------------------
    def record_report(self, client_id: str, path: str | os.PathLike, session_id: int | None = None) -> None:
        """Remember a report file written for ``client_id`` so :meth:`forget_client` can delete it."""
        self._require_client(client_id)
        with self._write() as c:
            c.execute("INSERT INTO reports (client_id, session_id, path, created_utc) VALUES (?,?,?,?)",
                      (client_id, session_id, str(Path(path).resolve()), _now_utc()))

    def export_client(self, client_id: str, out_dir: str | os.PathLike) -> list[Path]:
        """Write ``<id>_client.json``, ``<id>_client.csv``, ``<id>_sessions.csv`` and ``<id>_phases.csv``.

        Text cells starting with ``= + - @`` (or tab / carriage return) get a
        leading apostrophe so spreadsheets do not run them as formulas
        (OWASP, "CSV Injection", common practice); numbers are written as
        numbers, so ``-3.2`` stays a negative number.
        """
        client = self.get_client(client_id)
        sessions = self.list_sessions(client_id)
        out = Path(out_dir)
        out.mkdir(parents=True, exist_ok=True)
        doc = {"client": client.as_dict(),
               "sessions": [{k: v for k, v in s.__dict__.items()} for s in sessions]}
        json_path, client_csv = out / f"{client_id}_client.json", out / f"{client_id}_client.csv"
        sessions_csv, phases_csv = out / f"{client_id}_sessions.csv", out / f"{client_id}_phases.csv"
        json_path.write_text(json.dumps(doc, indent=2, ensure_ascii=False, allow_nan=False), encoding="utf-8")
        fields = client.as_dict()
        _write_csv(client_csv, list(fields), [list(fields.values())])
        s_cols = ["session_id", "client_id", "date_filmed", "clip_sha256", "software_version", "created_utc", "n_phases"]
        _write_csv(sessions_csv, s_cols, [[s.id, s.client_id, s.date_filmed, s.clip_sha256, s.software_version,
                                           s.created_utc, s.n_phases] for s in sessions])
        p_rows = []
        for s in sessions:
            df = self.get_phases(s.id)
            for i, rec in enumerate(df.itertuples(index=False)):
                p_rows.append([s.id, s.date_filmed, i, *rec])
        _write_csv(phases_csv, ["session_id", "date_filmed", "phase_index", *PHASE_COLUMNS], p_rows)
        paths = [json_path, client_csv, sessions_csv, phases_csv]
        for p in paths:
            try:
                os.chmod(p, 0o600)   # client data: owner only, like the store and the reports
            except OSError:
                pass
        return paths

    def forget_client(self, client_id: str) -> dict[str, int]:
        """Delete the client, every session, phase and recorded report file.

        Returns counts ``{"sessions", "phases", "reports", "report_files_deleted"}``.
        """
        self._require_client(client_id)
        with self._write() as c:
            n_sess = c.execute("SELECT COUNT(*) FROM sessions WHERE client_id=?", (client_id,)).fetchone()[0]
            n_ph = c.execute("SELECT COUNT(*) FROM phases WHERE session_id IN (SELECT id FROM sessions WHERE client_id=?)",
                             (client_id,)).fetchone()[0]
            # Several clients' reports can go to the same path (one --out folder):
            # the file holds whoever's report was written last, so it is deleted
            # only when that was this client's.
            paths = [r[0] for r in c.execute(
                "SELECT path FROM reports r WHERE client_id=? GROUP BY path HAVING MAX(id) > "
                "COALESCE((SELECT MAX(id) FROM reports o WHERE o.path=r.path AND o.client_id<>?), 0)",
                (client_id, client_id))]
            c.execute("DELETE FROM phases WHERE session_id IN (SELECT id FROM sessions WHERE client_id=?)", (client_id,))
            c.execute("DELETE FROM reports WHERE client_id=?", (client_id,))
            c.execute("DELETE FROM sessions WHERE client_id=?", (client_id,))
            c.execute("DELETE FROM clients WHERE id=?", (client_id,))
        deleted = 0
        for p in paths:
            try:
                Path(p).unlink()
                deleted += 1
            except FileNotFoundError:
                pass
        # Push deleted pages out of the WAL into the (secure_delete) main file.
        self._conn.execute("PRAGMA wal_checkpoint(TRUNCATE)")
        return {"sessions": n_sess, "phases": n_ph, "reports": len(paths), "report_files_deleted": deleted}


_CLIENT_SELECT = (
    "SELECT c.id, c.display_name, c.birth_year, c.mass_kg, c.height_m, c.side_of_interest, c.notes,"
    " c.created_utc, COUNT(s.id), MAX(s.date_filmed) FROM clients c LEFT JOIN sessions s ON s.client_id=c.id"
)


def check_provenance(*, clip_sha256: Any, settings: Any, version: Any) -> None:
    """Refuse a session without its provenance: the clip's content hash, the settings used, the version."""
    if not isinstance(clip_sha256, str) or not _SHA256_RE.match(clip_sha256):
        raise _err(f"the clip's SHA-256 must be 64 lower-case hex digits, got {clip_sha256!r}; analyse the video "
                   "itself, or a keypoint folder whose clip.json holds the video's sha256.")
    if not isinstance(settings, Mapping) or not settings:
        raise _err(f"settings must be the non-empty mapping of every parameter used, got {settings!r}; "
                   "pass the analysis summary's settings.")
    if not isinstance(version, str) or not version.strip():
        raise _err(f"version must be the software version that made the analysis, got {version!r}; "
                   "pass lean_video.__version__.")


def _sqlite_error(exc: sqlite3.Error, path: Path) -> LeanVideoError:
    """A clinician-readable error for a failed write to the store (nothing was changed)."""
    text = str(exc).lower()
    if "locked" in text or "busy" in text:
        return _err(f"the client store {path.name} is in use by another lean-video (waited "
                    f"{BUSY_TIMEOUT_MS // 1000} s); let that one finish and run this again. Nothing was changed.")
    if "full" in text:
        return _err(f"the disk holding the client store {path.name} is full; free some space and run this again. "
                    "Nothing was changed.")
    return _err(f"the client store {path.name} could not be written ({exc}); check the data folder and run "
                "this again. Nothing was changed.")


def _to_json(obj: Any, name: str) -> str:
    try:
        return json.dumps(obj, sort_keys=True, allow_nan=False, default=_json_default)
    except (TypeError, ValueError) as exc:
        raise _err(f"{name} must be JSON-serialisable without NaN/inf ({exc}); replace missing numbers by null.") from None


def _json_default(o: Any) -> Any:
    if hasattr(o, "item"):          # numpy scalar
        v = o.item()
        if isinstance(v, float) and not math.isfinite(v):
            raise ValueError("non-finite number")
        return v
    if hasattr(o, "tolist"):        # numpy array
        return o.tolist()
    raise TypeError(f"cannot encode {type(o).__name__}")


def _phase_rows(df: pd.DataFrame) -> list[tuple]:
    if not isinstance(df, pd.DataFrame):
        raise _err(f"strides_df must be a pandas DataFrame, got {type(df).__name__}; pass the gait strides table.")
    missing = [c for c in _REQUIRED_PHASE_COLUMNS if c not in df.columns]
    if missing:
        raise _err(f"strides_df lacks columns {missing}; pass the strides table from the gait stage.")
    bad_side = set(df["stance_side"]) - {"left", "right"}
    if bad_side:
        raise _err(f"stance_side must be 'left' or 'right', got {sorted(map(str, bad_side))}; fix the strides table.")
    rows = []
    for rec in df.reindex(columns=list(PHASE_COLUMNS)).itertuples(index=False):
        vals = [rec[0]]
        for name, v in zip(PHASE_COLUMNS[1:], rec[1:]):
            try:
                v = None if v is None or pd.isna(v) else float(v)
            except (TypeError, ValueError):
                raise _err(f"strides_df column {name} holds {v!r}, not a number; pass the gait strides table.") from None
            if v is None and name in _REQUIRED_PHASE_COLUMNS:
                raise _err(f"strides_df column {name} has a missing value; drop incomplete phases before saving.")
            if v is not None and not math.isfinite(v):
                raise _err(f"strides_df column {name} holds {v}, not a finite number; fix the analysis before saving.")
            vals.append(v)
        rows.append(tuple(vals))
    return rows


def neutralise_cell(value: Any) -> Any:
    """Prefix text cells that a spreadsheet would run as a formula with ``'``.

    Only ``str`` values are changed; numbers (including negatives) are kept.
    """
    if isinstance(value, str) and value[:1] in ("=", "+", "-", "@", "\t", "\r"):
        return "'" + value
    return value


def _write_csv(path: Path, header: list[str], rows: list[list[Any]]) -> None:
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow([neutralise_cell(h) for h in header])
        for r in rows:
            w.writerow(["" if (isinstance(v, float) and math.isnan(v)) else neutralise_cell(v) for v in r])


def default_data_dir() -> Path:
    """Per-user data folder (see module docstring for the order of look-up)."""
    env = os.environ.get("LEAN_VIDEO_DATA_DIR")
    if env:
        return Path(env).expanduser()
    xdg = os.environ.get("XDG_DATA_HOME")
    base = Path(xdg).expanduser() if xdg and Path(xdg).is_absolute() else Path.home() / ".local" / "share"
    return base / "lean_video"


def open_store(data_dir: str | os.PathLike | None = None) -> Store:
    """Open (creating or migrating if needed) the store in ``data_dir``.

    Raises
    ------
    LeanVideoError
        If the file is not a readable SQLite database, or was written by a
        newer lean_video (schema version above :data:`SCHEMA_VERSION`).
    """
    folder = Path(data_dir).expanduser() if data_dir is not None else default_data_dir()
    try:
        folder.mkdir(parents=True, exist_ok=True, mode=0o700)
    except OSError as exc:
        raise _err(f"data folder {folder} cannot be created ({exc.strerror}); pass a writable --data-dir.") from None
    path = folder / DB_FILENAME
    new_file = not path.exists()
    try:
        conn = sqlite3.connect(path, isolation_level=None, timeout=BUSY_TIMEOUT_MS / 1000)
    except sqlite3.Error as exc:
        raise _err(f"client store {path.name} in the data folder cannot be opened ({exc}); check the folder permissions.") from None
    if new_file:
        try:
            os.chmod(path, 0o600)   # client data: owner only
        except OSError:
            pass
    try:
        conn.execute(f"PRAGMA busy_timeout={BUSY_TIMEOUT_MS}")
        conn.execute("PRAGMA foreign_keys=ON")
        conn.execute("PRAGMA secure_delete=ON")
        _check_and_migrate(conn, path)
        if conn.execute("PRAGMA journal_mode").fetchone()[0].lower() != "wal":
            conn.execute("PRAGMA journal_mode=WAL")
    except LeanVideoError:
        conn.close()
        raise
    except sqlite3.OperationalError as exc:
        conn.close()
        if any(w in str(exc).lower() for w in ("locked", "busy", "full")):
            raise _sqlite_error(exc, path) from None
        raise _err(f"client store {path.name} in the data folder is damaged or not a lean_video database ({exc}); "
                   "restore it from a backup or move it aside to start a new one.") from None
    except sqlite3.DatabaseError as exc:
        conn.close()
        raise _err(f"client store {path.name} in the data folder is damaged or not a lean_video database ({exc}); "
                   "restore it from a backup or move it aside to start a new one.") from None
    return Store(path, conn)


def _check_and_migrate(conn: sqlite3.Connection, path: Path) -> None:
    check = conn.execute("PRAGMA quick_check").fetchone()[0]
    if check != "ok":
        raise sqlite3.DatabaseError(f"integrity check: {check}")
    version = conn.execute("PRAGMA user_version").fetchone()[0]
    if version < 0:
        raise sqlite3.DatabaseError(f"schema version {version}")
    if version > SCHEMA_VERSION:
        raise _err(f"client store {path.name} has schema version {version} but this lean_video understands up to "
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
                raise _err(f"{path.name} in the data folder is an SQLite file of another program; "
                           "move it aside or choose another --data-dir.")
            _exec_script(conn, _V1_SQL)
            version = 1
        while version < SCHEMA_VERSION:
            _exec_script(conn, _MIGRATIONS[version])
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


def _exec_script(conn: sqlite3.Connection, script: str) -> None:
    # executescript() would COMMIT our transaction first; run statement by statement.
    for stmt in script.split(";"):
        if stmt.strip():
            conn.execute(stmt)
