"""Bad input, end to end through the real command line in a separate process.

Every case asserts: a clear one-line message (no traceback), a non-zero exit
where nothing usable came out, and a client database left byte-for-byte as it
was. Cases are built from ffmpeg test patterns and the rendered demo clips.
"""

from __future__ import annotations

import hashlib
import json
import os
import sqlite3
import subprocess
import sys
from pathlib import Path

import pytest

from tests.conftest import DEMO, ffmpeg

WALKER = DEMO / "HP-014_2026-09-01.mp4"
pytestmark = pytest.mark.slow


def run_cli(*args: str, data_dir: Path, cwd: Path | None = None) -> subprocess.CompletedProcess:
    env = {**os.environ, "LEAN_VIDEO_DATA_DIR": str(data_dir)}
    return subprocess.run([sys.executable, "-m", "lean_video.cli", *args], capture_output=True, text=True,
                          env=env, cwd=cwd, timeout=600)


def db_digest(data_dir: Path) -> str:
    db = data_dir / "lean_video.sqlite3"
    return hashlib.sha256(db.read_bytes()).hexdigest() if db.exists() else "absent"


@pytest.fixture(scope="module")
def seeded(tmp_path_factory):
    """A database holding one stored session, made by a real analysis."""
    data = tmp_path_factory.mktemp("seeded_db")
    out = tmp_path_factory.mktemp("seed_out")
    proc = run_cli("analyse", str(WALKER), "--out", str(out), "--client", "HP-001", "--date", "2026-09-01",
                   data_dir=data)
    assert proc.returncode == 0, proc.stderr
    return data


@pytest.fixture(scope="module")
def bad(tmp_path_factory):
    """Folder of bad inputs, made once."""
    root = tmp_path_factory.mktemp("bad inputs ü")
    (root / "empty.mp4").write_bytes(b"")
    (root / "notes.mp4").write_text("Client walked well today.\n" * 40)
    png = root / "frame.png"
    ffmpeg("-f", "lavfi", "-i", "testsrc2=size=320x240", "-frames:v", "1", str(png))
    (root / "picture.mp4").write_bytes(png.read_bytes())
    (root / "report.mov").write_bytes(b"%PDF-1.4\n1 0 obj << /Type /Catalog >> endobj\ntrailer << >>\n%%EOF\n")
    ffmpeg("-f", "lavfi", "-i", "sine=frequency=440:duration=3", "-c:a", "aac", str(root / "audio_only.mp4"))
    data = WALKER.read_bytes()
    for pct in (5, 40, 80, 97):
        (root / f"cut_{pct}.mp4").write_bytes(data[: len(data) * pct // 100])
    ffmpeg("-f", "lavfi", "-i", "testsrc2=size=320x240:rate=30", "-frames:v", "1", "-pix_fmt", "yuv420p",
           str(root / "one_frame.mp4"))
    ffmpeg("-f", "lavfi", "-i", "testsrc2=size=320x240:rate=30", "-t", "1", "-pix_fmt", "yuv420p",
           str(root / "one_second.mp4"))
    ffmpeg("-f", "lavfi", "-i", "testsrc2=size=7680x4320:rate=30", "-frames:v", "3", "-pix_fmt", "yuv420p",
           "-preset", "ultrafast", str(root / "eight_k.mp4"))
    ffmpeg("-f", "lavfi", "-i", "testsrc2=size=320x240:rate=1", "-t", "5", "-pix_fmt", "yuv420p",
           str(root / "one_fps.mp4"))
    ffmpeg("-f", "lavfi", "-i", "testsrc2=size=320x240:rate=240", "-t", "2.5", "-pix_fmt", "yuv420p",
           str(root / "fast_240fps.mp4"))
    ffmpeg("-f", "lavfi", "-i", "testsrc2=size=360x640:rate=30", "-t", "3", "-pix_fmt", "yuv420p",
           str(root / "nobody.mp4"))
    still = root / "still.png"
    ffmpeg("-ss", "3", "-i", str(WALKER), "-frames:v", "1", str(still))
    ffmpeg("-loop", "1", "-i", str(still), "-t", "4", "-r", "30", "-pix_fmt", "yuv420p", str(root / "standing.mp4"))
    ffmpeg("-i", str(WALKER), "-vf", "vflip,hflip", "-pix_fmt", "yuv420p", str(root / "upside_down.mp4"))
    return root


def _one_line_error(proc: subprocess.CompletedProcess, pattern: str) -> None:
    import re

    assert proc.returncode != 0, proc.stdout
    assert "Traceback" not in proc.stderr
    lines = [ln for ln in proc.stderr.splitlines() if ln.startswith("lean-video: error:")]
    assert len(lines) == 1, proc.stderr
    assert re.search(pattern, lines[0]), lines[0]


CASES = [
    ("empty.mp4", "is empty"),
    ("notes.mp4", "not a video|no decodable"),
    ("picture.mp4", "not a video|no decodable|lasts|frames per second"),
    ("report.mov", "not a video|no decodable"),
    ("audio_only.mp4", "not a video|no decodable|audio"),
    ("cut_5.mp4", "not a video|no decodable|damaged|lasts"),
    ("one_frame.mp4", r"lasts 0\.0 s"),
    ("one_second.mp4", r"lasts 1\.0 s"),
    ("eight_k.mp4", "up to 4K"),
    ("one_fps.mp4", "frames per second"),
    ("fast_240fps.mp4", "Nobody was found"),
    ("nobody.mp4", "Nobody was found"),
    ("standing.mp4", "single-support|walking"),
    ("upside_down.mp4", "upside down"),
    ("missing.mp4", "not found"),
]


@pytest.mark.parametrize(("name", "pattern"), CASES, ids=[c[0] for c in CASES])
def test_bad_clip(bad, seeded, tmp_path, name, pattern):
    before = db_digest(seeded)
    proc = run_cli("analyse", str(bad / name), "--out", str(tmp_path / "out"), "--client", "HP-001",
                   "--date", "2026-10-01", data_dir=seeded)
    _one_line_error(proc, pattern)
    assert db_digest(seeded) == before
    assert not (tmp_path / "out" / "report.html").exists()


@pytest.mark.parametrize("pct", [40, 80])
def test_truncated_walker_is_refused(bad, tmp_path, pct):
    """A clip cut short by more than a tenth of its frames gives no result from part of the walk."""
    proc = run_cli("analyse", str(bad / f"cut_{pct}.mp4"), "--out", str(tmp_path / "out"), data_dir=tmp_path / "db")
    # measured: 107 of 220 frames decode at 40 % of the bytes, 191 at 80 %
    _one_line_error(proc, r"only \d+ of the 220 frames .* truncated or damaged")
    assert not (tmp_path / "out" / "summary.json").exists()


def test_slightly_truncated_walker_is_analysed_with_a_warning(bad, tmp_path):
    """A few frames missing at the end (7 of 220 at 97 % of the bytes): analysed, and the summary says so."""
    proc = run_cli("analyse", str(bad / "cut_97.mp4"), "--out", str(tmp_path / "out"), data_dir=tmp_path / "db")
    assert proc.returncode == 0, proc.stderr
    summary = json.loads((tmp_path / "out" / "summary.json").read_text())
    assert summary["pose"]["frames_lost"] > 2
    notes = [w for w in summary["quality"]["warnings"] if "may be truncated" in w]
    assert len(notes) == 1 and f"({summary['pose']['frames_lost']} lost)" in notes[0]
    assert "may be truncated" in proc.stderr
    again = run_cli("analyse", str(bad / "cut_97.mp4"), "--out", str(tmp_path / "again"), data_dir=tmp_path / "db")
    assert again.returncode == 0 and "keypoints read from cache" in again.stderr  # said again from the cache
    assert again.stderr.count("may be truncated") == 1


BAD_ARGS = [
    (["--client", "../../x"], "client id"),
    (["--client", "HP;DROP TABLE clients;--"], "client id"),
    (["--client", "Anna's \"file\""], "client id"),
    (["--client", "HP-001", "--mass-kg", "-70"], "mass_kg must be between"),
    (["--client", "HP-001", "--mass-kg", "0"], "mass_kg must be between"),
    (["--client", "HP-001", "--mass-kg", "5000"], "mass_kg must be between"),
    (["--client", "HP-001", "--height-m", "0"], "height_m must be between"),
    (["--client", "HP-001", "--height-m", "17"], "height_m must be between"),
    (["--client", "HP-001", "--date", "2026-02-30"], "YYYY-MM-DD"),
    (["--client", "HP-001", "--date", "yesterday"], "YYYY-MM-DD"),
    (["--camera-roll-deg", "80"], "camera-roll-deg must lie within"),
]


@pytest.mark.parametrize(("extra", "pattern"), BAD_ARGS, ids=[" ".join(a) for a, _ in BAD_ARGS])
def test_bad_arguments(seeded, tmp_path, extra, pattern):
    before = db_digest(seeded)
    proc = run_cli("analyse", str(WALKER), "--out", str(tmp_path / "out"), *extra, data_dir=seeded)
    _one_line_error(proc, pattern)
    assert db_digest(seeded) == before


def test_output_folder_is_a_file(seeded, tmp_path):
    target = tmp_path / "taken"
    target.write_text("not a folder")
    proc = run_cli("analyse", str(WALKER), "--out", str(target), data_dir=seeded)
    _one_line_error(proc, "is a file, not a folder")


def test_output_folder_read_only(seeded, tmp_path):
    ro = tmp_path / "ro"
    ro.mkdir()
    mounted = False
    if os.geteuid() == 0:
        # Root ignores permission bits, so use a read-only file system.
        mounted = subprocess.run(["mount", "-t", "tmpfs", "-o", "ro", "tmpfs", str(ro)]).returncode == 0
        if not mounted:
            pytest.skip("running as root without permission to mount a read-only tmpfs")
    else:
        ro.chmod(0o555)
    try:
        proc = run_cli("analyse", str(WALKER), "--out", str(ro / "results"), data_dir=seeded)
        _one_line_error(proc, "not writable|Could not create")
    finally:
        if mounted:
            subprocess.run(["umount", str(ro)])


def test_existing_folder_of_another_clip_needs_force(seeded, tmp_path):
    out = tmp_path / "out"
    first = run_cli("analyse", str(DEMO / "HP-014_2026-09-15.mp4"), "--out", str(out), data_dir=seeded)
    assert first.returncode == 0, first.stderr
    before = (out / "summary.json").read_bytes()
    proc = run_cli("analyse", str(WALKER), "--out", str(out), data_dir=seeded)
    _one_line_error(proc, "different clip.*--force")
    assert (out / "summary.json").read_bytes() == before


def test_path_with_spaces_and_non_ascii(bad, tmp_path):
    clip = bad / "Gång vidéo 1.mp4"
    clip.write_bytes(WALKER.read_bytes())
    out = tmp_path / "résultats du jour"
    proc = run_cli("analyse", str(clip), "--out", str(out), data_dir=tmp_path / "db")
    assert proc.returncode == 0, proc.stderr
    assert (out / "report.html").exists()
    assert "Gång" not in (out / "report.html").read_text(encoding="utf-8")


def test_corrupt_database(tmp_path):
    data = tmp_path / "db"
    data.mkdir()
    (data / "lean_video.sqlite3").write_bytes(b"SQLite format 3\x00" + os.urandom(3000))
    before = db_digest(data)
    proc = run_cli("analyse", str(WALKER), "--out", str(tmp_path / "out"), "--client", "HP-001", data_dir=data)
    _one_line_error(proc, "database")
    assert db_digest(data) == before


def test_database_from_newer_schema(tmp_path):
    data = tmp_path / "db"
    data.mkdir()
    with sqlite3.connect(data / "lean_video.sqlite3") as conn:
        conn.execute("PRAGMA user_version = 99")
        conn.execute("CREATE TABLE future (x)")
    before = db_digest(data)
    proc = run_cli("clients", data_dir=data)
    _one_line_error(proc, "schema version 99")
    assert db_digest(data) == before
