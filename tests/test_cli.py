"""The command line end to end: help, pose, analyse with a client, history, export,
forget, interruption, concurrency and no network."""

from __future__ import annotations

import json
import os
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pandas as pd
import pytest

from lean_video import __version__
from tests.conftest import DEMO, REPO

WALKER = DEMO / "HP-014_2026-09-01.mp4"
LATER = DEMO / "HP-014_2026-10-13.mp4"


def cli(*args: str, data_dir: Path | None = None, env: dict | None = None, **kw) -> subprocess.CompletedProcess:
    full_env = {**os.environ, **(env or {})}
    if data_dir is not None:
        full_env["LEAN_VIDEO_DATA_DIR"] = str(data_dir)
    return subprocess.run([sys.executable, "-m", "lean_video.cli", *args], capture_output=True, text=True,
                          env=full_env, timeout=900, **kw)


def sessions(data_dir: Path) -> list[tuple]:
    with sqlite3.connect(data_dir / "lean_video.sqlite3") as conn:
        return conn.execute("SELECT client_id, date_filmed, clip_sha256 FROM sessions ORDER BY id").fetchall()


def test_help_and_version():
    out = cli("--help")
    assert out.returncode == 0
    for command in ("analyse", "check", "pose", "history", "hip-model", "export", "forget", "clients"):
        assert command in out.stdout
    version = cli("--version")
    assert version.returncode == 0 and __version__ in version.stdout


def test_missing_clip_one_line_no_traceback(tmp_path):
    out = cli("pose", str(tmp_path / "absent.mp4"), "--out", str(tmp_path / "o"))
    assert out.returncode != 0
    assert "Traceback" not in out.stderr
    assert out.stderr.strip().splitlines()[-1].startswith("lean-video: error: Clip not found")


def test_hip_model_json_matches_library():
    from lean_video.mechanics import hip_model_table

    out = cli("hip-model", "--mass-kg", "70", "--height-m", "1.75", "--lean-deg", "0", "5", "10", "--json")
    assert out.returncode == 0, out.stderr
    rows = json.loads(out.stdout)
    assert [r["lean_deg"] for r in rows] == [0.0, 5.0, 10.0]
    expected = hip_model_table([0, 5, 10], mass_kg=70, height_m=1.75)
    assert len(rows) == len(expected)
    for got, want in zip(rows, expected):   # every library column of every row, not one value
        assert got["abductors_active"] is want["abductors_active"]
        numbers = {k: v for k, v in want.items() if k != "abductors_active"}
        assert {k: got[k] for k in numbers} == pytest.approx(numbers, rel=1e-12)
    table = cli("hip-model", "--mass-kg", "70", "--lean-deg", "4")
    assert "simplified static model" in table.stdout and "not to diagnose" in table.stdout


@pytest.mark.slow
def test_pose_command_writes_handover(tmp_path):
    out = cli("pose", str(WALKER), "--out", str(tmp_path), "--no-mirror")  # the faster pose pass
    assert out.returncode == 0, out.stderr
    table = pd.read_csv(tmp_path / "keypoints.csv")
    clip = json.loads((tmp_path / "clip.json").read_text())
    assert list(table.columns) == ["frame", "time_s", "landmark", "x_px", "y_px", "z", "visibility", "presence"]
    assert {"width", "height", "fps", "duration_s", "rotation_deg"} <= clip.keys()
    assert (clip["width"], clip["height"]) == (720, 1280)
    # The hand-over folder is accepted by analyse in place of the video.
    res = cli("analyse", str(tmp_path), "--out", str(tmp_path / "from_keypoints"))
    assert res.returncode == 0, res.stderr
    summary = json.loads((tmp_path / "from_keypoints" / "summary.json").read_text())
    assert summary["camera_roll_source"] == "none"


@pytest.mark.slow
def test_analyse_store_history_export_forget(tmp_path):
    data, out = tmp_path / "db", tmp_path / "out"
    first = cli("analyse", str(WALKER), "--out", str(out / "a"), "--client", "HP-077", "--date", "2026-09-01",
                "--mass-kg", "80", "--height-m", "1.70", "--notes", "=cmd|' /C calc'!A0 <script>x</script>",
                data_dir=data)
    assert first.returncode == 0, first.stderr
    for name in ("frames.csv", "events.csv", "strides.csv", "summary.json", "report.html"):
        assert (out / "a" / name).exists(), name
    summary = json.loads((out / "a" / "summary.json").read_text())
    assert summary["clip"]["sha256"] and summary["version"] == __version__
    assert summary["settings"]["analysis"]["mass_kg"] == 80
    assert summary["settings"]["analysis"]["pose_mirror_average"] is True
    assert summary["pose"]["settings"]["mirror_average"] is True
    strides = pd.read_csv(out / "a" / "strides.csv")
    for col in ("lever_arm_cm", "lever_arm_shortening_cm", "lever_arm_shortening_pct", "abductor_force_bw",
                "hip_force_bw", "hip_force_change_pct", "hip_force_n"):
        assert col in strides.columns
    html = (out / "a" / "report.html").read_text()
    assert "<script>x</script>" not in html
    # how far each angle was checked travels with the numbers
    assert summary["trunk_lean_method"]["per_side_error_max_deg"] > 0
    assert summary["pelvic_obliquity_method"]["validated"] is False
    assert 'id="lean-accuracy"' in html and "do not shrink with more steps" in html
    assert 'id="timing-accuracy"' in html and summary["events_method"]["foot_strike_median_error_ms"]["toward"][1] > 0
    # Same clip again: a new session, the earlier one kept (a stored session is never
    # overwritten); the history uses the latest analysis; mass and height are remembered.
    again = cli("analyse", str(WALKER), "--out", str(out / "a"), "--client", "HP-077", "--date", "2026-09-01",
                data_dir=data)
    assert again.returncode == 0, again.stderr
    assert "earlier session is kept" in again.stderr
    later = cli("analyse", str(LATER), "--out", str(out / "b"), "--client", "HP-077", "--date", "2026-10-13",
                data_dir=data)
    assert later.returncode == 0, later.stderr
    assert len(sessions(data)) == 3
    assert json.loads((out / "b" / "summary.json").read_text())["settings"]["analysis"]["mass_kg"] == 80
    hist = cli("history", "HP-077", "--out", str(out), data_dir=data)
    assert hist.returncode == 0, hist.stderr
    assert (out / "history.html").exists()
    listing = cli("clients", data_dir=data)
    assert "HP-077" in listing.stdout and "2026-10-13" in listing.stdout
    exp = cli("export", "HP-077", "--out", str(out / "export"), data_dir=data)
    assert exp.returncode == 0, exp.stderr
    client_json = json.loads((out / "export" / "HP-077_client.json").read_text())
    assert client_json["client"]["notes"].startswith("=cmd")
    import csv

    with open(out / "export" / "HP-077_client.csv", newline="", encoding="utf-8") as handle:
        row = next(csv.DictReader(handle))
    # OWASP "CSV Injection" guidance: a leading apostrophe stops spreadsheets running the cell.
    assert row["notes"].startswith("'=cmd")
    refused = cli("forget", "HP-077", data_dir=data, stdin=subprocess.DEVNULL)
    assert refused.returncode != 0 and "--yes" in refused.stderr
    gone = cli("forget", "HP-077", "--yes", data_dir=data)
    assert gone.returncode == 0, gone.stderr
    assert sessions(data) == []
    assert not (out / "history.html").exists() and not (out / "a" / "report.html").exists()


def _sigint_as_at_a_terminal():
    # A shell that runs the test suite in the background (`bash .ci/run &`)
    # starts its children with SIGINT ignored (POSIX, asynchronous lists), and
    # Python then never raises KeyboardInterrupt: the run would finish with
    # exit 0. Restore the default disposition, as at a terminal, where the
    # clinician presses Ctrl-C.
    signal.signal(signal.SIGINT, signal.SIG_DFL)


@pytest.mark.slow
@pytest.mark.parametrize("sig", [signal.SIGINT, signal.SIGKILL])
def test_interrupted_run_leaves_nothing_half_written(tmp_path, sig):
    data, out = tmp_path / "db", tmp_path / "out"
    env = {**os.environ, "LEAN_VIDEO_DATA_DIR": str(data), "LEAN_VIDEO_CACHE_DIR": str(tmp_path / "fresh_cache")}
    proc = subprocess.Popen([sys.executable, "-m", "lean_video.cli", "analyse", str(WALKER), "--out", str(out),
                             "--client", "HP-050", "--date", "2026-09-01"], env=env,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, start_new_session=True,
                            preexec_fn=_sigint_as_at_a_terminal)
    time.sleep(4.0)  # well inside pose estimation
    assert proc.poll() is None, "the run finished before it could be interrupted"
    os.killpg(proc.pid, sig)
    _, err = proc.communicate(timeout=60)
    if sig == signal.SIGINT:
        assert proc.returncode == 130
        assert "Traceback" not in err and "interrupted" in err
    else:
        assert proc.returncode == -signal.SIGKILL
    assert not (out / "report.html").exists() and not (out / "summary.json").exists()
    if (data / "lean_video.sqlite3").exists():
        assert sessions(data) == []


@pytest.mark.slow
def test_two_clients_at_once_and_same_clip_twice(tmp_path):
    data = tmp_path / "db"
    env = {**os.environ, "LEAN_VIDEO_DATA_DIR": str(data)}

    def start(client: str, clip: Path, out: str) -> subprocess.Popen:
        return subprocess.Popen([sys.executable, "-m", "lean_video.cli", "analyse", str(clip), "--out",
                                 str(tmp_path / out), "--client", client, "--date", "2026-09-01"],
                                env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)

    procs = [start("HP-101", WALKER, "a"), start("HP-102", LATER, "b"), start("HP-101", WALKER, "c")]
    for p in procs:
        _, err = p.communicate(timeout=600)
        assert p.returncode == 0, err
    stored = sessions(data)
    # all three land; the same clip twice is two sessions (the earlier is never overwritten)
    assert sorted(c for c, _, _ in stored) == ["HP-101", "HP-101", "HP-102"]


@pytest.mark.slow
def test_demo_runs_with_network_blocked(tmp_path):
    """The whole demo with socket creation made impossible in every process."""
    site = tmp_path / "site"
    site.mkdir()
    (site / "sitecustomize.py").write_text(
        "import socket\n"
        "class _NoNetwork(socket.socket):\n"
        "    def __init__(self, *a, **k):\n"
        "        raise OSError('network disabled for this test')\n"
        "socket.socket = _NoNetwork\n"
        "socket.create_connection = lambda *a, **k: (_ for _ in ()).throw(OSError('network disabled'))\n"
    )
    env = {**os.environ, "PYTHONPATH": f"{site}{os.pathsep}{REPO}"}
    code = ("import sys; from pathlib import Path; from tools.demo import run; "
            f"sys.exit(run(Path({str(tmp_path / 'demo')!r})))")
    proc = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, env=env, cwd=REPO,
                          timeout=1200)
    assert proc.returncode == 0, proc.stderr[-3000:]
    from tests.test_report import assert_no_external_reference

    reports = sorted((tmp_path / "demo").glob("*/report.html"))
    assert len(reports) == 4
    for page in [tmp_path / "demo" / "history.html", *reports]:
        assert_no_external_reference(page.read_text(encoding="utf-8"))


def _check_command_runs(monkeypatch, func) -> None:
    """Make ``lean-video check`` run ``func(args)`` instead of the real command."""
    from lean_video import cli

    parser = cli.build_parser

    def patched():
        p = parser()
        p._subparsers._group_actions[0].choices["check"].set_defaults(func=func)
        return p

    monkeypatch.setattr(cli, "build_parser", patched)


@pytest.mark.parametrize("late", [BrokenPipeError("worker pipe"), RuntimeError("pool broken")])
def test_ctrl_c_that_breaks_a_worker_pipe_still_exits_130(monkeypatch, capsys, late):
    # Ctrl-C also stops the pose workers; shutting them down can raise a second
    # error whose context is the KeyboardInterrupt: still an interruption.
    from lean_video import cli

    def interrupted_then_broken(args):
        try:
            raise KeyboardInterrupt
        except KeyboardInterrupt:
            raise late

    _check_command_runs(monkeypatch, interrupted_then_broken)
    assert cli.main(["check", "whatever.mp4"]) == 130
    assert "interrupted" in capsys.readouterr().err


@pytest.mark.slow
def test_pelvis_markers_option(tmp_path):
    clip = DEMO / "truth_markers_drop_lean.mp4"
    run = cli("analyse", str(clip), "--out", str(tmp_path / "m"), "--pelvis-markers", "green",
              "--data-dir", str(tmp_path / "db"))
    assert run.returncode == 0, run.stderr
    summary = json.loads((tmp_path / "m" / "summary.json").read_text())
    assert summary["pelvic_obliquity_source"] == "pelvis markers"
    assert summary["pelvic_obliquity_method"]["validated"] is True
    assert summary["settings"]["analysis"]["pelvis_markers"] == "green"
    assert summary["quality"]["n_pelvis_marker_frames"] > 0.9 * summary["quality"]["n_frames"]
    # the client's right side drops 6 deg at its peak in this render: found the right way
    assert summary["sides"]["right"]["pelvic_drop_mean_deg"] > 2.0
    html = (tmp_path / "m" / "report.html").read_text()
    assert "Pelvic drop (°)" in html and "Blue: line between the pelvis markers." in html
    # a colour the search does not know is refused by the parser, before any work
    bad = cli("analyse", str(clip), "--out", str(tmp_path / "b"), "--pelvis-markers", "purple")
    assert bad.returncode == 2 and "invalid choice" in bad.stderr and not (tmp_path / "b").exists()
    # markers of another colour than the ones on the client: one line, non-zero exit, nothing written
    none = cli("-q", "analyse", str(clip), "--out", str(tmp_path / "n"), "--pelvis-markers", "pink")
    assert none.returncode != 0 and "Traceback" not in none.stderr
    (line,) = none.stderr.strip().splitlines()
    assert "pink pelvis markers were not found near the hips often enough" in line
    # The hand-over folder carries the markers: analysed with them, with or without the option.
    hand = tmp_path / "kp"
    pose_run = cli("pose", str(clip), "--out", str(hand), "--no-mirror", "--pelvis-markers", "green")
    assert pose_run.returncode == 0, pose_run.stderr
    table = pd.read_csv(hand / "keypoints.csv")
    assert set(table["landmark"]) >= {"left_pelvis_marker", "right_pelvis_marker"}
    from_folder = cli("analyse", str(hand), "--out", str(tmp_path / "f"))
    assert from_folder.returncode == 0, from_folder.stderr
    assert json.loads((tmp_path / "f" / "summary.json").read_text())["pelvic_obliquity_source"] == "pelvis markers"


def test_forget_prompt_is_seen_and_ctrl_d_deletes_nothing(tmp_path, monkeypatch, capsys):
    # The prompt goes to stdout (stderr may be diverted); Ctrl-D at it is "no".
    from lean_video import cli, store

    with store.open_store(tmp_path) as db:
        db.upsert_client("HP-300")
    monkeypatch.setattr(sys.stdin, "isatty", lambda: True)

    def eof(*_a):
        raise EOFError

    monkeypatch.setattr("builtins.input", eof)
    assert cli.main(["forget", "HP-300", "--data-dir", str(tmp_path)]) == 1
    out = capsys.readouterr().out
    assert "Type the id to confirm" in out and "nothing deleted" in out
    with store.open_store(tmp_path) as db:
        assert db.get_client("HP-300").id == "HP-300"


def test_client_text_checked_before_any_analysis(tmp_path, capsys):
    from lean_video import cli

    code = cli.main(["analyse", str(WALKER), "--out", str(tmp_path / "o"), "--client", "HP-301",
                     "--notes", "x" * 10_001, "--data-dir", str(tmp_path / "db")])
    assert code != 0 and "notes must be at most 10000 characters, got 10001" in capsys.readouterr().err
    assert not (tmp_path / "o").exists() and not (tmp_path / "db").exists()
    code = cli.main(["analyse", str(WALKER), "--out", str(tmp_path / "o"), "--name", "Ann"])
    assert code != 0 and "--name and --notes belong to a client" in capsys.readouterr().err


def test_interrupt_after_the_session_was_stored_says_so(monkeypatch, capsys):
    from lean_video import cli

    def stored_then_interrupted(args):
        args.stored_session = 7
        raise KeyboardInterrupt

    _check_command_runs(monkeypatch, stored_then_interrupted)
    assert cli.main(["check", "whatever.mp4"]) == 130
    err = capsys.readouterr().err
    assert "the analysis was stored (session 7)" in err and "nothing was stored" not in err


def test_pose_command_scales_frames_as_analyse_does():
    # A keypoint folder written by 'pose' must give the same results as analysing the
    # video itself; the two commands once scaled frames to 1280 and 960 px (README review).
    from lean_video import cli, pipeline
    from lean_video.pose import PoseSettings

    args = cli.build_parser().parse_args(["pose", "clip.mp4", "--out", "folder"])
    assert args.max_side_px == pipeline.AnalysisOptions().pose_max_side_px == PoseSettings().max_side_px
