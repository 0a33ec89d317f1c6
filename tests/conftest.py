"""Shared fixtures: small clips made with the system ffmpeg, and repo paths."""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "demo_clips"


def ffmpeg(*args: str) -> None:
    """Run ffmpeg quietly; fail the test with its message if it fails."""
    exe = shutil.which("ffmpeg")
    if exe is None:
        pytest.fail("ffmpeg is required for these tests (Debian package 'ffmpeg'; .ci/run installs it)")
    proc = subprocess.run([exe, "-hide_banner", "-loglevel", "error", "-y", *args], capture_output=True, text=True)
    if proc.returncode != 0:
        pytest.fail(f"ffmpeg failed: {proc.stderr.strip()}")


@pytest.fixture(scope="session")
def clip_factory(tmp_path_factory):
    """Make small synthetic clips (a moving test pattern) on demand."""
    root = tmp_path_factory.mktemp("clips")

    def make(name: str, *, size: str = "320x240", rate: int = 30, seconds: float = 3.0,
             codec: str = "libx264", extra_out: tuple[str, ...] = (), vf: str | None = None) -> Path:
        out = root / name
        args = ["-f", "lavfi", "-i", f"testsrc2=size={size}:rate={rate}", "-t", str(seconds)]
        if vf:
            args += ["-vf", vf]
        args += ["-c:v", codec, "-pix_fmt", "yuv420p", *extra_out, str(out)]
        ffmpeg(*args)
        return out

    return make


@pytest.fixture(scope="session", autouse=True)
def _private_dirs(tmp_path_factory):
    """Keep caches and client databases of the test run out of the user's folders.

    The pose cache is shared by every test of one run, so each demo clip goes
    through the pose model once.
    """
    mp = pytest.MonkeyPatch()
    mp.setenv("LEAN_VIDEO_CACHE_DIR", str(tmp_path_factory.mktemp("pose_cache")))
    mp.setenv("LEAN_VIDEO_DATA_DIR", str(tmp_path_factory.mktemp("data")))
    yield
    mp.undo()


def demo_manifest() -> dict:
    """The manifest of the rendered clips in demo_clips/."""
    import json

    return json.loads((DEMO / "manifest.json").read_text())


def demo_clip(name: str) -> tuple[Path, dict]:
    """Path of a rendered clip and its ground-truth dict."""
    import json

    clip = DEMO / f"{name}.mp4"
    truth = json.loads((DEMO / f"{name}.truth.json").read_text())
    return clip, truth
