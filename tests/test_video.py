"""Video ingest on clips made by ffmpeg with known geometry and timestamps."""

from __future__ import annotations

import hashlib

import cv2
import numpy as np
import pytest

from lean_video.errors import LeanVideoError
from lean_video.video import file_sha256, frames_at, iter_frames, probe_clip
from tests.conftest import ffmpeg


def test_plain_clip_described(clip_factory):
    clip = clip_factory("plain.mp4", size="320x240", rate=30, seconds=3)
    info = probe_clip(clip)
    assert (info.width, info.height, info.rotation_deg) == (320, 240, 0)
    assert info.fps == pytest.approx(30.0)
    assert info.frame_count == 90
    assert info.duration_s == pytest.approx(3.0)
    assert info.codec == "h264"
    # Reference: Python's hashlib over the same bytes.
    assert info.sha256 == hashlib.sha256(clip.read_bytes()).hexdigest() == file_sha256(clip)


def test_portrait_stored_landscape_with_rotation_is_turned_upright(clip_factory, tmp_path):
    landscape = clip_factory("land.mp4", size="320x240", seconds=2.5)
    rotated = tmp_path / "portrait.mov"
    # Phones store portrait clips as landscape plus a display rotation of 90 degrees.
    ffmpeg("-i", str(landscape), "-c", "copy", "-metadata:s:v:0", "rotate=90", str(rotated))
    info = probe_clip(rotated)
    assert (info.width, info.height) == (240, 320)
    assert info.rotation_deg in (90, 270)
    _, _, rgb = next(iter_frames(rotated))
    assert rgb.shape == (320, 240, 3)
    assert rgb.dtype == np.uint8 and rgb.flags["C_CONTIGUOUS"]


def test_rotation_direction_matches_ffmpeg(tmp_path):
    """The upright picture must equal what ffmpeg's own autorotation shows.

    Reference: ffmpeg's default 'autorotate' behaviour (ffmpeg documentation),
    which applies the container's display matrix as every player does.
    """
    marked = tmp_path / "mark.mp4"
    ffmpeg("-f", "lavfi", "-i", "color=c=black:size=320x240:rate=30", "-t", "2.5",
           "-vf", "drawbox=x=0:y=0:w=60:h=60:color=white:t=fill", "-c:v", "libx264", "-pix_fmt", "yuv420p",
           str(marked))
    rotated = tmp_path / "mark_rot.mp4"
    ffmpeg("-i", str(marked), "-c", "copy", "-metadata:s:v:0", "rotate=90", str(rotated))
    reference = tmp_path / "reference.png"
    ffmpeg("-i", str(rotated), "-frames:v", "1", str(reference))
    expected = cv2.cvtColor(cv2.imread(str(reference)), cv2.COLOR_BGR2RGB)
    _, _, rgb = next(iter_frames(rotated))
    assert rgb.shape == expected.shape == (320, 240, 3)
    assert np.abs(rgb.astype(int) - expected.astype(int)).mean() < 2.0
    # ffprobe reports this tag as a display-matrix rotation of 90 degrees.
    assert probe_clip(rotated).rotation_deg == 90


def test_variable_frame_rate_times_come_from_timestamps(tmp_path):
    clip = tmp_path / "vfr.mp4"
    # Irregular spacing: 40 ms steps plus 15 ms on every other frame.
    ffmpeg("-f", "lavfi", "-i", "testsrc2=size=160x120:rate=30", "-t", "2.4",
           "-vf", "settb=1/1000,setpts='(N*0.04+0.015*mod(N*N\\,4))/TB'",
           "-fps_mode", "passthrough", "-enc_time_base", "1/1000", "-video_track_timescale", "1000",
           "-c:v", "libx264", "-pix_fmt", "yuv420p", str(clip))
    times = np.array([t for _, t, _ in iter_frames(clip)])
    n = np.arange(len(times))
    expected = n * 0.04 + 0.015 * np.mod(n * n, 4)
    assert len(times) >= 40
    np.testing.assert_allclose(times, expected, atol=0.0011)
    # And index / fps would have been wrong by more than a frame somewhere.
    assert np.max(np.abs(n / probe_clip(clip).fps - expected)) > 0.01


def test_frames_at_finds_every_frame_of_a_clip_that_changes_frame_rate(tmp_path):
    """Seeking by time overshoots on a 30 -> 60 fps clip; every frame must still be found.

    Reference: the frames decoded in order (iter_frames) at the same times.
    """
    clip = tmp_path / "vfr3060.mp4"
    ffmpeg("-f", "lavfi", "-i", "testsrc2=size=320x240:rate=60", "-t", "4",
           "-vf", "select='lt(t\\,2)*not(mod(n\\,2))+gte(t\\,2)',settb=1/1000,setpts='PTS'",
           "-fps_mode", "passthrough", "-enc_time_base", "1/1000", "-video_track_timescale", "1000",
           "-c:v", "libx264", "-g", "30", "-pix_fmt", "yuv420p", str(clip))
    in_order = list(iter_frames(clip))
    steps = np.diff([t for _, t, _ in in_order])
    assert steps.max() > 0.03 and steps.min() < 0.02       # the clip really changes rate
    wanted = {i: t for i, t, _ in in_order[::5]}
    found = frames_at(clip, wanted)
    assert sorted(found) == sorted(wanted)
    for i in wanted:
        np.testing.assert_array_equal(found[i], in_order[i][2])


def test_hevc_clip(clip_factory):
    clip = clip_factory("hevc.mp4", codec="libx265", seconds=2.5, extra_out=("-tag:v", "hvc1", "-x265-params", "log-level=error"))
    info = probe_clip(clip)
    assert info.codec in ("hevc", "hvc1", "hev1")
    assert sum(1 for _ in iter_frames(clip)) == 75


def test_sixty_fps_and_downscale(clip_factory):
    clip = clip_factory("sixty.mp4", size="640x360", rate=60, seconds=2.5)
    info = probe_clip(clip)
    assert info.fps == pytest.approx(60.0)
    _, t1, rgb = next(iter_frames(clip, max_side_px=320))
    assert rgb.shape == (180, 320, 3)
    times = [t for _, t, _ in iter_frames(clip)]
    assert np.diff(times) == pytest.approx(np.full(len(times) - 1, 1 / 60), abs=1e-3)


def test_input_never_modified(clip_factory):
    clip = clip_factory("keep.mp4", seconds=2.5)
    before = (clip.read_bytes(), clip.stat().st_mtime_ns)
    probe_clip(clip)
    for _ in iter_frames(clip):
        pass
    assert (clip.read_bytes(), clip.stat().st_mtime_ns) == before


@pytest.mark.parametrize(
    ("content", "name", "message"),
    [
        (b"", "empty.mp4", "is empty"),
        (b"this is a clinic note, not a video\n" * 50, "note.mp4", "not a video|no decodable"),
    ],
)
def test_bad_files_refused(tmp_path, content, name, message):
    path = tmp_path / name
    path.write_bytes(content)
    with pytest.raises(LeanVideoError, match=message):
        probe_clip(path)


def test_missing_file_refused(tmp_path):
    with pytest.raises(LeanVideoError, match="Clip not found"):
        probe_clip(tmp_path / "nope.mp4")


def test_too_short_refused(clip_factory):
    clip = clip_factory("short.mp4", seconds=1.0)
    with pytest.raises(LeanVideoError, match=r"lasts 1\.0 s; at least 2 s"):
        probe_clip(clip)


def test_truncated_clip_decodes_what_it_can(clip_factory, tmp_path):
    # faststart puts the index first, as phones do, so a cut file stays readable.
    full = clip_factory("whole.mp4", seconds=4, extra_out=("-movflags", "+faststart"))
    data = full.read_bytes()
    cut = tmp_path / "cut.mp4"
    cut.write_bytes(data[: len(data) * 6 // 10])
    info = probe_clip(cut)
    decoded = sum(1 for _ in iter_frames(cut))
    assert 0 < decoded < info.frame_count


def test_truncated_without_index_is_refused(clip_factory, tmp_path):
    full = clip_factory("noindex.mp4", seconds=3)
    data = full.read_bytes()
    cut = tmp_path / "cut_noindex.mp4"
    cut.write_bytes(data[: len(data) // 2])
    with pytest.raises(LeanVideoError, match="damaged|not a video|no decodable"):
        probe_clip(cut)
