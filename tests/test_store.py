"""Tests for lean_video.store (SQLite client history)."""

from __future__ import annotations

import csv
import json
import multiprocessing as mp
import sqlite3

import numpy as np
import pandas as pd
import pytest

from lean_video.errors import LeanVideoError
from lean_video.store import PHASE_COLUMNS, SCHEMA_VERSION, neutralise_cell, open_store

SHA_A = "a" * 64
SHA_B = "b" * 64


def _strides(n: int = 4, lean0: float = 5.0) -> pd.DataFrame:
    rows = []
    for i in range(n):
        side = "left" if i % 2 == 0 else "right"
        rows.append({"stance_side": side, "start_s": 0.5 * i, "end_s": 0.5 * i + 0.4, "duration_s": 0.4,
                     "lean_mean_deg": lean0 + i, "lean_peak_deg": lean0 + i + 2.0,
                     "pelvic_drop_mean_deg": -1.5, "pelvic_drop_peak_deg": 3.0,
                     "lever_arm_cm": 9.0 - 0.1 * i, "lever_arm_shortening_cm": 1.0 + 0.1 * i,
                     "lever_arm_shortening_pct": 10.0, "abductor_force_bw": 1.8,
                     "hip_force_bw": 2.7, "hip_force_change_pct": -12.5})
    return pd.DataFrame(rows)


SUMMARY = {"direction": "toward", "sides": {"left": {"n_phases": 2, "lean_mean_deg": 6.0}}}
SETTINGS = {"filter_cutoff_hz": 6.0, "min_visibility": 0.5}


@pytest.fixture
def store(tmp_path):
    s = open_store(tmp_path / "data")
    s.upsert_client("HP-014", display_name="Client HP-014", mass_kg=72.5, height_m=1.70,
                    birth_year=1961, side_of_interest="left", notes="walks with a stick")
    yield s
    s.close()


def test_round_trip(store, tmp_path):
    sid, replaced = store.save_session("HP-014", "2026-11-03", SHA_A, SETTINGS, "0.1.0", SUMMARY, _strides())
    assert replaced is False
    c = store.get_client("HP-014")
    assert (c.mass_kg, c.height_m, c.birth_year, c.notes) == (72.5, 1.70, 1961, "walks with a stick")
    assert (c.n_sessions, c.last_date) == (1, "2026-11-03")
    [s] = store.list_sessions("HP-014")
    assert (s.id, s.settings, s.summary, s.software_version, s.n_phases) == (sid, SETTINGS, SUMMARY, "0.1.0", 4)
    ph = store.get_phases(sid)
    pd.testing.assert_frame_equal(ph, _strides()[list(PHASE_COLUMNS)], check_dtype=False)
    con = sqlite3.connect(store.path)
    assert con.execute("PRAGMA journal_mode").fetchone()[0] == "wal"     # persistent, set by open_store
    con.close()
    # Reopening the file gives the same data (durable, not in-memory).
    store.close()
    with open_store(tmp_path / "data") as s2:
        assert [c.id for c in s2.list_clients()] == ["HP-014"]
        assert s2.list_clients()[0].n_sessions == 1


def test_default_data_dir_from_env(tmp_path, monkeypatch):
    monkeypatch.setenv("LEAN_VIDEO_DATA_DIR", str(tmp_path / "envdir"))
    with open_store() as s:
        assert s.path == tmp_path / "envdir" / "lean_video.sqlite3"
    monkeypatch.delenv("LEAN_VIDEO_DATA_DIR")
    monkeypatch.setenv("XDG_DATA_HOME", str(tmp_path / "xdg"))
    with open_store() as s:
        assert s.path == tmp_path / "xdg" / "lean_video" / "lean_video.sqlite3"


def test_upsert_updates_only_given_fields(store):
    c, created = store.upsert_client("HP-014", mass_kg=70.0)
    assert created is False
    assert (c.mass_kg, c.height_m, c.notes) == (70.0, 1.70, "walks with a stick")


def test_reanalysis_keeps_the_earlier_session(store):
    # A stored session is never overwritten: analysing the same clip again adds one.
    sid_a, _ = store.save_session("HP-014", "2026-11-03", SHA_A, SETTINGS, "0.1.0", SUMMARY, _strides(4))
    sid_b, _ = store.save_session("HP-014", "2026-11-10", SHA_B, SETTINGS, "0.1.0", SUMMARY, _strides(6))
    sid_a2, earlier = store.save_session("HP-014", "2026-11-03", SHA_A, {"x": 1}, "0.1.1", SUMMARY, _strides(2, 3.0))
    assert earlier is True and sid_a2 not in (sid_a, sid_b)
    sessions = {s.id: s for s in store.list_sessions("HP-014")}
    assert set(sessions) == {sid_a, sid_b, sid_a2}
    assert sessions[sid_a].settings == SETTINGS and sessions[sid_a].software_version == "0.1.0"
    assert store.get_phases(sid_a)["lean_mean_deg"].tolist() == [5.0, 6.0, 7.0, 8.0]
    assert store.get_phases(sid_a2)["lean_mean_deg"].tolist() == [3.0, 4.0]
    assert len(store.get_phases(sid_b)) == 6
    # the history trends each clip once: its latest analysis
    hist = store.history("HP-014")
    assert [(h["session_id"], h["n_earlier_analyses"]) for h in hist] == [(sid_a2, 1), (sid_b, 0)]
    assert store.get_client("HP-014").n_sessions == 3


def test_same_clip_other_client_is_separate(store):
    store.upsert_client("HP-015")
    store.save_session("HP-014", "2026-11-03", SHA_A, SETTINGS, "0.1.0", SUMMARY, _strides())
    _, earlier = store.save_session("HP-015", "2026-11-03", SHA_A, SETTINGS, "0.1.0", SUMMARY, _strides())
    assert earlier is False
    assert len(store.list_sessions("HP-014")) == 1 and len(store.list_sessions("HP-015")) == 1


def test_forget_removes_every_row_and_report_files(store, tmp_path):
    store.upsert_client("HP-015")
    sid, _ = store.save_session("HP-014", "2026-11-03", SHA_A, SETTINGS, "0.1.0", SUMMARY, _strides())
    store.save_session("HP-015", "2026-11-03", SHA_B, SETTINGS, "0.1.0", SUMMARY, _strides())
    report = tmp_path / "r.html"
    report.write_text("x")
    store.record_report("HP-014", report, session_id=sid)
    counts = store.forget_client("HP-014")
    assert counts == {"sessions": 1, "phases": 4, "reports": 1, "report_files_deleted": 1}
    assert not report.exists()
    con = sqlite3.connect(store.path)
    for table, col in (("clients", "id"), ("sessions", "client_id"), ("reports", "client_id")):
        assert con.execute(f"SELECT COUNT(*) FROM {table} WHERE {col}='HP-014'").fetchone()[0] == 0
    assert con.execute("SELECT COUNT(*) FROM phases").fetchone()[0] == 4   # HP-015's only
    con.close()
    with pytest.raises(LeanVideoError, match="not in the store"):
        store.get_client("HP-014")
    # secure_delete + checkpoint: the pseudonym's notes are gone from the file bytes
    assert b"walks with a stick" not in store.path.read_bytes()


@pytest.mark.parametrize("bad", ["", ".hidden", "a/b", "../x", "a b", "x" * 65, "é", None, 14])
def test_client_id_validated(store, bad):
    with pytest.raises(LeanVideoError, match="client id must be"):
        store.upsert_client(bad)


@pytest.mark.parametrize("kw, match", [
    ({"mass_kg": 19.9}, "mass_kg must be between 20 and 300 kg"),
    ({"mass_kg": float("nan")}, "mass_kg must be"),
    ({"height_m": 170}, "height_m must be between 1 and 2.3 m"),
    ({"birth_year": 1850}, "birth_year must be"),
    ({"side_of_interest": "both"}, "side_of_interest must be"),
])
def test_client_fields_validated(store, kw, match):
    with pytest.raises(LeanVideoError, match=match):
        store.upsert_client("HP-016", **kw)


@pytest.mark.parametrize("date", ["2026-13-01", "03/11/2026", "2026-02-30", "20261103"])
def test_dates_validated(store, date):
    with pytest.raises(LeanVideoError, match="YYYY-MM-DD"):
        store.save_session("HP-014", date, SHA_A, SETTINGS, "0.1.0", SUMMARY, _strides())


def test_nan_in_summary_refused(store):
    with pytest.raises(LeanVideoError, match="summary must be JSON-serialisable"):
        store.save_session("HP-014", "2026-11-03", SHA_A, SETTINGS, "0.1.0", {"x": float("nan")}, _strides())
    assert store.list_sessions("HP-014") == []     # nothing half-written


def _build_v1(path):
    """A database as schema version 1 wrote it (no clients.notes, no reports table)."""
    con = sqlite3.connect(path)
    con.executescript("""
        CREATE TABLE clients (id TEXT PRIMARY KEY, display_name TEXT, birth_year INTEGER, mass_kg REAL,
            height_m REAL, side_of_interest TEXT CHECK (side_of_interest IN ('left','right')), created_utc TEXT NOT NULL);
        CREATE TABLE sessions (id INTEGER PRIMARY KEY AUTOINCREMENT,
            client_id TEXT NOT NULL REFERENCES clients(id) ON DELETE CASCADE, date_filmed TEXT NOT NULL,
            clip_sha256 TEXT NOT NULL, settings_json TEXT NOT NULL, software_version TEXT NOT NULL,
            summary_json TEXT NOT NULL, created_utc TEXT NOT NULL, UNIQUE (client_id, clip_sha256));
        CREATE TABLE phases (session_id INTEGER NOT NULL REFERENCES sessions(id) ON DELETE CASCADE,
            phase_index INTEGER NOT NULL, stance_side TEXT NOT NULL, start_s REAL NOT NULL, end_s REAL NOT NULL,
            duration_s REAL NOT NULL, lean_mean_deg REAL NOT NULL, lean_peak_deg REAL, pelvic_drop_mean_deg REAL,
            pelvic_drop_peak_deg REAL, lever_arm_cm REAL, lever_arm_shortening_cm REAL,
            lever_arm_shortening_pct REAL, abductor_force_bw REAL, hip_force_bw REAL, hip_force_change_pct REAL,
            PRIMARY KEY (session_id, phase_index));
        CREATE INDEX sessions_by_client ON sessions(client_id, date_filmed);
        INSERT INTO clients VALUES ('HP-007', NULL, 1970, 80.0, 1.8, 'right', '2026-01-01T00:00:00+00:00');
        INSERT INTO sessions VALUES (1, 'HP-007', '2026-01-05', '%s', '{}', '0.0.9', '{"a": 1}', '2026-01-05');
        INSERT INTO phases (session_id, phase_index, stance_side, start_s, end_s, duration_s, lean_mean_deg)
            VALUES (1, 0, 'right', 0.0, 0.4, 0.4, 4.5);
        PRAGMA user_version = 1;
    """ % SHA_A)
    con.close()


def test_v1_database_is_migrated(tmp_path):
    _build_v1(tmp_path / "lean_video.sqlite3")
    with open_store(tmp_path) as s:
        c = s.get_client("HP-007")
        assert (c.mass_kg, c.notes, c.n_sessions) == (80.0, None, 1)
        assert s.get_phases(1)["lean_mean_deg"].tolist() == [4.5]
        s.upsert_client("HP-007", notes="migrated")          # new v2 column works
        s.record_report("HP-007", tmp_path / "x.html")       # new v2 table works
    con = sqlite3.connect(tmp_path / "lean_video.sqlite3")
    assert con.execute("PRAGMA user_version").fetchone()[0] == SCHEMA_VERSION == 3
    con.close()


def test_newer_schema_refused(tmp_path):
    con = sqlite3.connect(tmp_path / "lean_video.sqlite3")
    con.execute("CREATE TABLE clients (id TEXT)")
    con.execute(f"PRAGMA user_version = {SCHEMA_VERSION + 1}")
    con.close()
    with pytest.raises(LeanVideoError, match="schema version 4 .* update lean_video"):
        open_store(tmp_path)


def test_corrupt_file_refused(tmp_path):
    (tmp_path / "lean_video.sqlite3").write_bytes(b"this is not a database at all" * 200)
    with pytest.raises(LeanVideoError, match="damaged or not a lean_video database"):
        open_store(tmp_path)


def test_damaged_pages_refused(tmp_path):
    with open_store(tmp_path) as s:
        s.upsert_client("HP-014")
        for i in range(30):
            s.upsert_client(f"HP-{i:03d}x", notes="n" * 2000)
    s.close()
    raw = bytearray((tmp_path / "lean_video.sqlite3").read_bytes())
    assert len(raw) > 8192
    rng = np.random.default_rng(1)
    raw[4096:8192] = rng.integers(0, 256, 4096, dtype=np.uint8).tobytes()   # trash page 2
    (tmp_path / "lean_video.sqlite3").write_bytes(bytes(raw))
    with pytest.raises(LeanVideoError, match="damaged"):
        open_store(tmp_path)


def test_foreign_sqlite_file_refused(tmp_path):
    con = sqlite3.connect(tmp_path / "lean_video.sqlite3")
    con.execute("CREATE TABLE bookmarks (url TEXT)")
    con.close()
    with pytest.raises(LeanVideoError, match="another program"):
        open_store(tmp_path)


def _writer(data_dir, client_id, sha, barrier):
    s = open_store(data_dir)
    barrier.wait(timeout=120)     # start writing at the same moment (a lost partner raises, not hangs)
    for k in range(5):
        s.upsert_client(client_id, notes=f"round {k}")
        s.save_session(client_id, "2026-11-03", sha[:-1] + str(k), SETTINGS, "0.1.0", SUMMARY, _strides(8))
    s.close()


def test_two_processes_writing_both_land(tmp_path):
    ctx = mp.get_context("spawn")
    barrier = ctx.Barrier(2)
    procs = [ctx.Process(target=_writer, args=(tmp_path, cid, sha, barrier))
             for cid, sha in (("HP-100", SHA_A), ("HP-101", SHA_B))]
    try:
        for p in procs:
            p.start()
        for p in procs:
            p.join(180)
    finally:
        for p in procs:    # a writer left waiting would keep the test session from ending
            if p.is_alive():
                p.terminate()
                p.join(10)
    assert [p.exitcode for p in procs] == [0, 0]
    with open_store(tmp_path) as s:
        assert {c.id: c.n_sessions for c in s.list_clients()} == {"HP-100": 5, "HP-101": 5}
        assert all(len(s.get_phases(x.id)) == 8 for x in s.list_sessions("HP-100") + s.list_sessions("HP-101"))


def test_neutralise_cell():
    # OWASP "CSV Injection" guidance (common practice): text starting = + - @ tab CR is prefixed.
    assert [neutralise_cell(v) for v in ["=1+1", "+x", "-cmd", "@SUM(A1)", "\tx", "ok", -3.2, 5]] == \
        ["'=1+1", "'+x", "'-cmd", "'@SUM(A1)", "'\tx", "ok", -3.2, 5]


def _read_csv(path):
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


def test_export_neutralises_formulas_but_keeps_negative_numbers(store, tmp_path):
    store.upsert_client("HP-014", display_name="=HYPERLINK(\"http://x\")", notes="@evil")
    sid, _ = store.save_session("HP-014", "2026-11-03", SHA_A, SETTINGS, "=cmd|' /C calc'!A0", SUMMARY, _strides())
    paths = store.export_client("HP-014", tmp_path / "out")
    assert [p.name for p in paths] == ["HP-014_client.json", "HP-014_client.csv", "HP-014_sessions.csv",
                                      "HP-014_phases.csv"]
    client_row = _read_csv(paths[1])[0]
    assert client_row["display_name"].startswith("'=HYPERLINK") and client_row["notes"] == "'@evil"
    sess = _read_csv(paths[2])
    assert sess[0]["software_version"] == "'=cmd|' /C calc'!A0"
    phases = _read_csv(paths[3])
    assert len(phases) == 4
    assert phases[0]["pelvic_drop_mean_deg"] == "-1.5"          # a number: no apostrophe
    assert float(phases[0]["hip_force_change_pct"]) == -12.5
    doc = json.loads(paths[0].read_text(encoding="utf-8"))
    assert doc["client"]["display_name"] == "=HYPERLINK(\"http://x\")"   # JSON is not a spreadsheet
    assert doc["sessions"][0]["id"] == sid


def _build_v2(path, tmp_path):
    """A version-2 store as the previous release wrote it (one session per client and clip)."""
    con = sqlite3.connect(path)
    con.executescript("""
        CREATE TABLE clients (id TEXT PRIMARY KEY, display_name TEXT, birth_year INTEGER, mass_kg REAL,
            height_m REAL, side_of_interest TEXT CHECK (side_of_interest IN ('left', 'right')),
            created_utc TEXT NOT NULL, notes TEXT);
        CREATE TABLE sessions (id INTEGER PRIMARY KEY AUTOINCREMENT,
            client_id TEXT NOT NULL REFERENCES clients(id) ON DELETE CASCADE, date_filmed TEXT NOT NULL,
            clip_sha256 TEXT NOT NULL, settings_json TEXT NOT NULL, software_version TEXT NOT NULL,
            summary_json TEXT NOT NULL, created_utc TEXT NOT NULL, UNIQUE (client_id, clip_sha256));
        CREATE TABLE phases (session_id INTEGER NOT NULL REFERENCES sessions(id) ON DELETE CASCADE,
            phase_index INTEGER NOT NULL, stance_side TEXT NOT NULL, start_s REAL NOT NULL, end_s REAL NOT NULL,
            duration_s REAL NOT NULL, lean_mean_deg REAL NOT NULL, lean_peak_deg REAL, pelvic_drop_mean_deg REAL,
            pelvic_drop_peak_deg REAL, lever_arm_cm REAL, lever_arm_shortening_cm REAL,
            lever_arm_shortening_pct REAL, abductor_force_bw REAL, hip_force_bw REAL, hip_force_change_pct REAL,
            PRIMARY KEY (session_id, phase_index));
        CREATE INDEX sessions_by_client ON sessions(client_id, date_filmed);
        CREATE TABLE reports (id INTEGER PRIMARY KEY AUTOINCREMENT,
            client_id TEXT NOT NULL REFERENCES clients(id) ON DELETE CASCADE,
            session_id INTEGER REFERENCES sessions(id) ON DELETE SET NULL, path TEXT NOT NULL,
            created_utc TEXT NOT NULL);
        INSERT INTO clients VALUES ('HP-007', NULL, NULL, 80.0, 1.75, NULL, '2026-09-01T00:00:00+00:00', 'note');
        INSERT INTO sessions VALUES (1, 'HP-007', '2026-09-01', '%s', '{"cutoff_hz": 6.0}', '0.1.0', '{}',
            '2026-09-01T00:00:00+00:00');
        INSERT INTO sessions VALUES (2, 'HP-007', '2026-09-15', '%s', '{"cutoff_hz": 6.0}', '0.1.0', '{}',
            '2026-09-15T00:00:00+00:00');
        INSERT INTO phases (session_id, phase_index, stance_side, start_s, end_s, duration_s, lean_mean_deg)
            VALUES (1, 0, 'left', 0.1, 0.5, 0.4, 4.5), (1, 1, 'right', 0.6, 1.0, 0.4, 2.0),
                   (2, 0, 'left', 0.1, 0.5, 0.4, 3.5);
        INSERT INTO reports (client_id, session_id, path, created_utc)
            VALUES ('HP-007', 2, '%s', '2026-09-15T00:00:00+00:00');
        PRAGMA user_version = 2;
    """ % (SHA_A, SHA_B, tmp_path / "r.html"))
    con.close()


def test_v2_database_is_migrated_without_losing_a_row(tmp_path):
    # 2 -> 3 rebuilds the sessions table; with foreign-key actions on, dropping
    # the old table would have cascaded into the phases.
    _build_v2(tmp_path / "lean_video.sqlite3", tmp_path)
    with open_store(tmp_path) as s:
        assert [x.id for x in s.list_sessions("HP-007")] == [1, 2]
        assert s.get_phases(1)["lean_mean_deg"].tolist() == [4.5, 2.0]
        assert s.get_phases(2)["lean_mean_deg"].tolist() == [3.5]
        sid, earlier = s.save_session("HP-007", "2026-09-01", SHA_A, SETTINGS, "0.2.0", SUMMARY, _strides(1))
        assert earlier is True and sid == 3 and len(s.list_sessions("HP-007")) == 3
    con = sqlite3.connect(tmp_path / "lean_video.sqlite3")
    assert con.execute("PRAGMA user_version").fetchone()[0] == 3
    assert con.execute("SELECT session_id FROM reports").fetchall() == [(2,)]
    assert con.execute("PRAGMA foreign_key_check").fetchall() == []
    con.close()
    with open_store(tmp_path) as s:             # foreign keys are back on: forgetting cascades
        s.forget_client("HP-007")
    con = sqlite3.connect(tmp_path / "lean_video.sqlite3")
    assert con.execute("SELECT COUNT(*) FROM phases").fetchone()[0] == 0
    con.close()


def test_forget_keeps_a_report_file_another_client_wrote_last(store, tmp_path):
    # Two clients analysed into the same --out folder: the file holds the last one's report.
    store.upsert_client("HP-015")
    shared, own = tmp_path / "report.html", tmp_path / "own.html"
    shared.write_text("x")
    own.write_text("y")
    store.record_report("HP-014", shared)
    store.record_report("HP-015", shared)
    store.record_report("HP-014", own)
    counts = store.forget_client("HP-014")
    assert shared.exists() and not own.exists()
    assert counts["report_files_deleted"] == 1


@pytest.mark.parametrize("kw, match", [
    ({"version": ""}, "version must be the software version"),
    ({"version": None}, "version must be the software version"),
    ({"settings": {}}, "settings must be the non-empty mapping"),
    ({"clip_sha256": ""}, "SHA-256 must be 64 lower-case hex digits"),
])
def test_session_without_provenance_refused(store, kw, match):
    args = {"clip_sha256": SHA_A, "settings": SETTINGS, "version": "0.1.0", **kw}
    with pytest.raises(LeanVideoError, match=match):
        store.save_session("HP-014", "2026-11-03", args["clip_sha256"], args["settings"], args["version"],
                           SUMMARY, _strides())
    assert store.list_sessions("HP-014") == []


def test_non_finite_phase_values_refused(store):
    bad = _strides()
    bad.loc[1, "hip_force_bw"] = np.inf
    with pytest.raises(LeanVideoError, match="hip_force_bw holds inf, not a finite number"):
        store.save_session("HP-014", "2026-11-03", SHA_A, SETTINGS, "0.1.0", SUMMARY, bad)


def test_future_filming_date_refused(store):
    with pytest.raises(LeanVideoError, match="must not lie in the future, got '2999-01-01'"):
        store.save_session("HP-014", "2999-01-01", SHA_A, SETTINGS, "0.1.0", SUMMARY, _strides())


def test_height_range_matches_the_hip_model(store):
    # A height the store accepts must not make every later analysis fail in the hip model.
    from lean_video.mechanics_params import _RANGES
    from lean_video.store import HEIGHT_RANGE_M
    assert HEIGHT_RANGE_M == _RANGES["height_m"]
    with pytest.raises(LeanVideoError, match="height_m must be between 1 and 2.3 m, got 0.95"):
        store.upsert_client("HP-014", height_m=0.95)


def test_negative_schema_version_is_not_a_lean_video_store(tmp_path):
    con = sqlite3.connect(tmp_path / "lean_video.sqlite3")
    con.execute("CREATE TABLE clients (id TEXT)")
    con.execute("PRAGMA user_version = -1")
    con.close()
    with pytest.raises(LeanVideoError, match="damaged or not a lean_video database"):
        open_store(tmp_path)


def test_locked_store_is_not_called_damaged(tmp_path, monkeypatch):
    import lean_video.store as store_mod
    monkeypatch.setattr(store_mod, "BUSY_TIMEOUT_MS", 200)
    open_store(tmp_path).close()
    holder = sqlite3.connect(tmp_path / "lean_video.sqlite3", isolation_level=None)
    holder.execute("BEGIN EXCLUSIVE")
    try:
        with pytest.raises(LeanVideoError, match="in use by another lean-video .* Nothing was changed"):
            with open_store(tmp_path) as s:
                s.upsert_client("HP-020")
    finally:
        holder.execute("ROLLBACK")
        holder.close()


def test_exported_files_are_for_the_owner_only(store, tmp_path):
    import os
    import stat
    store.save_session("HP-014", "2026-11-03", SHA_A, SETTINGS, "0.1.0", SUMMARY, _strides())
    paths = store.export_client("HP-014", tmp_path / "export")
    # every file the export writes, so an empty list cannot pass unchecked
    assert sorted(p.name for p in paths) == sorted(p.name for p in (tmp_path / "export").iterdir())
    assert len(paths) == 4
    for p in paths:
        assert stat.S_IMODE(os.stat(p).st_mode) == 0o600, p
