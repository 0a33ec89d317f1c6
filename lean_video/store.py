"""Local client history: one SQLite file per user, nothing leaves the machine.

The store sits beside the pipeline (it imports no other stage). It keeps
pseudonymous clients, one session per analysed clip and one row per
single-support phase of that session.

Location
    ``open_store(data_dir)``; without ``data_dir`` the folder is
    ``$LEAN_VIDEO_DATA_DIR``, else ``$XDG_DATA_HOME/lean_video``, else
    ``~/.local/share/lean_video`` (XDG Base Directory Specification 0.8).
    The database file is ``<data_dir>/lean_video.sqlite3``.

Schema (``PRAGMA user_version`` holds the version, currently 3; see
:mod:`lean_video.store_schema`)
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

Validation of what is stored is in :mod:`lean_video.store_checks`, the schema
scripts and migrations in :mod:`lean_video.store_schema`.
"""

from __future__ import annotations

import csv
import datetime as _dt
import json
import logging
import math
import os
import sqlite3
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Iterator, Mapping

import pandas as pd

from lean_video.errors import LeanVideoError
from lean_video.store_checks import (BIRTH_YEAR_MIN, HEIGHT_RANGE_M, MASS_RANGE_KG, MAX_TEXT_CHARS, PHASE_COLUMNS,
                                     check_body, check_client_text, check_provenance, check_range, neutralise_cell,
                                     phase_rows, to_json, validate_client_id, validate_date)
from lean_video.store_schema import SCHEMA_VERSION, migrate

__all__ = ["BIRTH_YEAR_MIN", "Client", "HEIGHT_RANGE_M", "MASS_RANGE_KG", "MAX_TEXT_CHARS", "PHASE_COLUMNS",
           "SCHEMA_VERSION", "Session", "Store", "check_body", "check_client_text", "check_provenance",
           "default_data_dir", "neutralise_cell", "open_store", "validate_client_id", "validate_date"]

logger = logging.getLogger(__name__)

DB_FILENAME = "lean_video.sqlite3"
BUSY_TIMEOUT_MS = 30_000



def _now_utc() -> str:
    return _dt.datetime.now(_dt.timezone.utc).replace(microsecond=0).isoformat()


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
            raise LeanVideoError(f"client {client_id!r} is not in the store at {self.path.parent.name}/; add the client first.")

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
        mass_kg = check_range(mass_kg, "mass_kg", *MASS_RANGE_KG, "kg")
        height_m = check_range(height_m, "height_m", *HEIGHT_RANGE_M, "m")
        if birth_year is not None:
            this_year = _dt.date.today().year
            if isinstance(birth_year, bool) or not isinstance(birth_year, int) or not (
                BIRTH_YEAR_MIN <= birth_year <= this_year
            ):
                raise LeanVideoError(f"birth_year must be a whole year {BIRTH_YEAR_MIN}-{this_year}, got {birth_year!r}; fix it or leave it out.")
        if side_of_interest is not None and side_of_interest not in ("left", "right"):
            raise LeanVideoError(f"side_of_interest must be 'left' or 'right', got {side_of_interest!r}; use the client's own side.")
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
        settings_json = to_json(settings, "settings")
        summary_json = to_json(summary, "summary")
        rows = phase_rows(strides_df)
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


def _sqlite_error(exc: sqlite3.Error, path: Path) -> LeanVideoError:
    """A clinician-readable error for a failed write to the store (nothing was changed)."""
    text = str(exc).lower()
    if "locked" in text or "busy" in text:
        return LeanVideoError(f"the client store {path.name} is in use by another lean-video (waited "
                    f"{BUSY_TIMEOUT_MS // 1000} s); let that one finish and run this again. Nothing was changed.")
    if "full" in text:
        return LeanVideoError(f"the disk holding the client store {path.name} is full; free some space and run this again. "
                    "Nothing was changed.")
    return LeanVideoError(f"the client store {path.name} could not be written ({exc}); check the data folder and run "
                "this again. Nothing was changed.")


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
        raise LeanVideoError(f"data folder {folder} cannot be created ({exc.strerror}); pass a writable --data-dir.") from None
    path = folder / DB_FILENAME
    new_file = not path.exists()
    try:
        conn = sqlite3.connect(path, isolation_level=None, timeout=BUSY_TIMEOUT_MS / 1000)
    except sqlite3.Error as exc:
        raise LeanVideoError(f"client store {path.name} in the data folder cannot be opened ({exc}); check the folder permissions.") from None
    if new_file:
        try:
            os.chmod(path, 0o600)   # client data: owner only
        except OSError:
            pass
    try:
        conn.execute(f"PRAGMA busy_timeout={BUSY_TIMEOUT_MS}")
        conn.execute("PRAGMA foreign_keys=ON")
        conn.execute("PRAGMA secure_delete=ON")
        migrate(conn, path)
        if conn.execute("PRAGMA journal_mode").fetchone()[0].lower() != "wal":
            conn.execute("PRAGMA journal_mode=WAL")
    except LeanVideoError:
        conn.close()
        raise
    except sqlite3.OperationalError as exc:
        conn.close()
        if any(w in str(exc).lower() for w in ("locked", "busy", "full")):
            raise _sqlite_error(exc, path) from None
        raise LeanVideoError(f"client store {path.name} in the data folder is damaged or not a lean_video database ({exc}); "
                   "restore it from a backup or move it aside to start a new one.") from None
    except sqlite3.DatabaseError as exc:
        conn.close()
        raise LeanVideoError(f"client store {path.name} in the data folder is damaged or not a lean_video database ({exc}); "
                   "restore it from a backup or move it aside to start a new one.") from None
    return Store(path, conn)


