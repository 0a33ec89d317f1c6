"""Capture check: clips made to fail each check get the right flag and suggestion,
and camera roll and shake are handled on rendered clips with known truth."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

from lean_video import capture, pipeline
from lean_video.errors import LeanVideoError
from lean_video.pose import COLUMNS
from lean_video.video import probe_clip
from tests.conftest import DEMO, demo_clip, ffmpeg

WALKER = DEMO / "HP-014_2026-09-01.mp4"
OTHER = DEMO / "truth_symmetric_lean.mp4"
pytestmark = pytest.mark.slow


def _by_name(result: dict) -> dict:
    return {c["name"]: c for c in result["checks"]}


def test_good_clip_passes_every_check():
    checks = _by_name(capture.quick_check(WALKER))
    assert all(c["status"] == "pass" for c in checks.values()), {k: v["detail"] for k, v in checks.items()}


@pytest.mark.parametrize(
    ("name", "vf", "check", "status", "hint"),
    [
        ("dark", "eq=brightness=-0.45:contrast=0.5", "lighting", ("warn", "fail"), "light"),
        ("small", "scale=240:-2,pad=720:1280:(ow-iw)/2:(oh-ih)/2:color=gray", "person_size", ("warn", "fail"),
         "closer"),
        ("tilted", "rotate=10*PI/180:fillcolor=gray", "camera_roll", ("fail",), "level the phone"),
    ],
)
def test_clip_made_to_fail_gets_flag_and_suggestion(tmp_path, name, vf, check, status, hint):
    bad = tmp_path / f"{name}.mp4"
    ffmpeg("-i", str(WALKER), "-vf", vf, "-c:v", "libx264", "-crf", "20", "-pix_fmt", "yuv420p", str(bad))
    result = _by_name(capture.quick_check(bad))[check]
    assert result["status"] in status, result
    assert hint in result["suggestion"]


def test_tilted_camera_roll_is_measured(tmp_path):
    # ffmpeg's rotate filter turns the picture clockwise for a positive angle
    # (ffmpeg filter documentation), so the roll grows by that angle.
    bad = tmp_path / "tilt4.mp4"
    ffmpeg("-i", str(WALKER), "-vf", "rotate=4*PI/180:fillcolor=gray", "-c:v", "libx264", "-crf", "20",
           "-pix_fmt", "yuv420p", str(bad))
    _, truth = demo_clip("HP-014_2026-09-01")
    roll = _by_name(capture.quick_check(bad))["camera_roll"]["value"]
    assert roll == pytest.approx(truth["camera"]["roll_deg"] + 4.0, abs=0.5)


def test_second_person_is_flagged(tmp_path):
    two = tmp_path / "two.mp4"
    ffmpeg("-i", str(WALKER), "-i", str(OTHER), "-filter_complex",
           "[0:v]scale=360:640[a];[1:v]scale=360:640[b];[a][b]hstack=inputs=2,pad=720:1280:0:320:color=gray",
           "-t", "6", "-c:v", "libx264", "-crf", "20", "-pix_fmt", "yuv420p", str(two))
    result = _by_name(capture.quick_check(two))["other_people"]
    assert result["status"] == "fail" and "only the client" in result["suggestion"]


def test_too_few_steps_flagged_by_analyse(tmp_path):
    short = tmp_path / "short.mp4"
    ffmpeg("-i", str(WALKER), "-t", "2.6", "-c:v", "libx264", "-crf", "20", "-pix_fmt", "yuv420p", str(short))
    try:
        analysis = pipeline.analyse(short)
    except LeanVideoError as exc:  # no phase at all is also a correct answer
        assert "single-support" in str(exc)
        return
    checks = {c["name"]: c for c in analysis.summary["quality"]["checks"]}
    assert checks["phases_per_side"]["status"] in ("warn", "fail")
    assert "three steps" in checks["phases_per_side"]["suggestion"]


def _shaken(src, dst, *, amp_deg: float, amp_px: float, seed: int = 4) -> None:
    """Apply a known small rotation and shift to every frame (a hand-held phone)."""
    from tools.eval_conditions import sway

    sway(src, dst, amp_deg=amp_deg, amp_px=amp_px, seed=seed)


def _sway_phases(seed: int = 4) -> np.ndarray:
    from tools.eval_conditions import sway_phases

    return sway_phases(seed)


def test_moderate_shake_is_stabilised(tmp_path):
    """Hand-held sway of up to 1.5 deg and 10 px: stabilised, and still within the gait-signal tolerances of the truth."""
    from tools.eval_accuracy import evaluate

    steady = pipeline.analyse(WALKER)
    shaky = tmp_path / "shaky.mp4"
    _shaken(WALKER, shaky, amp_deg=1.5, amp_px=10.0)
    moved = pipeline.analyse(shaky)
    assert moved.summary["quality"]["camera_motion"] == "moderate"
    for side in ("left", "right"):
        a = steady.summary["sides"][side]["lean_mean_deg"]
        b = moved.summary["sides"][side]["lean_mean_deg"]
        # Issue tolerance for per-side mean lean: 1.0 degree.
        assert b == pytest.approx(a, abs=1.0), side
    assert abs(len(moved.strides) - len(steady.strides)) <= 1
    # Against the rendered truth (the gait-signal targets): every steady phase found, none
    # spurious, per-side lean within 1.0 deg, event medians within one frame (33 ms).
    # Measured 2026-12-04: 9 of 9 phases, lean -0.05 / -0.13 deg, foot strike median 20 ms
    # (max 65), foot off 8 ms (max 17); unshaken 9 of 9, +0.04 / +0.33, 24 ms and 6 ms.
    r = evaluate(WALKER.stem, video=shaky)
    assert r["phases_matched"] == r["phases_true"] and r["phases_spurious"] == 0
    assert abs(r["left_lean_err"]) <= 1.0 and abs(r["right_lean_err"]) <= 1.0
    assert r["foot_strike_median_ms"] <= 33 and r["foot_off_median_ms"] <= 33
    # The scene roll is the first frame's, into whose pixels every frame is mapped: the
    # camera's 0.4 deg less the sway's angle there (OpenCV's positive angle turns the picture
    # counter-clockwise, against camera_roll_deg; measured 0.88 against 0.93). Issue
    # tolerance for the roll: 0.5 deg.
    assert r["roll"] == pytest.approx(r["roll_true"] - 1.5 * np.sin(_sway_phases()[0]), abs=0.5)


@pytest.fixture(scope="module")
def away_shaken(tmp_path_factory):
    """The walk away from the camera with the same 1.5 deg / 10 px sway, compared with its truth."""
    from tools.eval_accuracy import evaluate

    shaky = tmp_path_factory.mktemp("away_shake") / "away_shaky.mp4"
    _shaken(DEMO / "truth_walk_away.mp4", shaky, amp_deg=1.5, amp_px=10.0)
    return evaluate("truth_walk_away", video=shaky)


def test_moderate_shake_walking_away(away_shaken):
    # Measured 2026-12-04 with this sway on three walks away (4 sway phases each, 12 runs):
    # per-side lean within 0.57 deg of truth, no spurious phase, at most one phase missed
    # (in 3 runs: the last foot strike, 7-8 m away, found late, early or not at all), event
    # medians 11-36 ms (strikes) and 5-16 ms (foot offs; 4-18 ms on unshaken clips walking
    # away). This run: 7 of 8 phases, lean +0.16 / +0.10 deg, strikes 17 ms, offs 12 ms.
    # (With version 0.2.3, before foot offs walking away were taken on the rise of the heel's
    # upward speed: lean within 0.75 deg, foot offs 29-44 ms; this run offs 32 ms. With 0.2.4,
    # before that search was anchored on the other foot's landing: offs 4-20 ms.)
    r = away_shaken
    assert r["direction"] == "away"
    assert abs(r["left_lean_err"]) <= 1.0 and abs(r["right_lean_err"]) <= 1.0  # issue tolerance
    assert r["phases_spurious"] == 0 and r["phases_matched"] >= r["phases_true"] - 1
    assert r["foot_strike_median_ms"] <= 40 and r["foot_off_median_ms"] <= 50  # measured + a few ms


@pytest.mark.xfail(strict=True, reason="walking away under moderate sway, one of 8 phases is missed: the last "
                                       "foot strike, far from the camera, is found 339 ms late (measured 2026-12-04)")
def test_target_every_phase_found_walking_away_with_shake(away_shaken):
    assert away_shaken["phases_matched"] == away_shaken["phases_true"]


def test_large_shake_is_refused(tmp_path):
    shaky = tmp_path / "wild.mp4"
    _shaken(WALKER, shaky, amp_deg=9.0, amp_px=60.0)
    with pytest.raises(LeanVideoError, match="camera moved too much"):
        pipeline.analyse(shaky)


def test_roll_clip_corrected_from_scene():
    """Rendered with a 3 degree camera roll: measured within 0.5 deg, lean within 1.0 deg after correction."""
    from tools.eval_accuracy import truth_sides

    clip, truth = demo_clip("truth_camera_roll")
    analysis = pipeline.analyse(clip)
    assert analysis.summary["camera_roll_source"] == "scene"
    assert analysis.summary["camera_roll_deg"] == pytest.approx(truth["camera"]["roll_deg"], abs=0.5)
    expected = truth_sides(truth)
    for side in ("left", "right"):
        assert analysis.summary["sides"][side]["lean_mean_deg"] == pytest.approx(expected[side]["lean"], abs=1.0)
    json.dumps(analysis.summary, allow_nan=False)


def _size_track(distance_m, fps=30.0):
    """Keypoint table of two landmarks whose vertical spacing is a pinhole image of a 1.7 m body."""
    t = np.arange(len(distance_m)) / fps
    size = 1000.0 * 1.7 / np.asarray(distance_m, float)
    rows = [(i, ti, name, 360.0, y, 0.0, 0.99, 0.99)
            for i, (ti, s) in enumerate(zip(t, size)) for name, y in (("nose", 640 - s / 2), ("left_heel", 640 + s / 2))]
    return pd.DataFrame(rows, columns=list(COLUMNS))


def test_direction_check_straight_walk_and_wording():
    # Straight walk away (2 -> 7 m): size falls all the way, rank correlation -1.
    check = capture.direction_check(_size_track(np.linspace(2, 7, 150)), "away")
    assert check["status"] == "pass" and check["value"] == -1.0
    assert check["detail"].startswith("walking away from the camera")


def test_direction_check_accepts_a_walk_there_and_back():
    # 4 s toward (7 -> 3 m), 2 s turning, 4 s away: two passes, each analysed on its own.
    t = np.arange(0, 10, 1 / 30)
    d = np.where(t < 4, 7 - t, np.where(t < 6, 3.0, 3 + (t - 6)))
    check = capture.direction_check(_size_track(d), None)
    assert check["status"] == "pass" and check["value"] == 2
    assert "toward" in check["detail"] and "away" in check["detail"]


def test_direction_check_fails_wandering_in_view():
    # Back and forth by half a metre several times: no pass, no clear direction.
    t = np.arange(0, 10, 1 / 30)
    check = capture.direction_check(_size_track(5 + 0.25 * np.sin(2 * np.pi * 0.4 * t)), None)
    assert check["status"] == "fail"
    assert "turning only at the ends" in check["suggestion"]


def test_phase_check_says_when_unclear_tracking_cost_the_phases():
    # Phases dropped by the quality gates need a clearer picture, not only a longer walk.
    from lean_video.pose import LANDMARK_NAMES

    size = 1000.0 * 1.7 / np.linspace(7, 3, 120)
    # every landmark on a vertical line, spread over the body's height (only the table's shape matters here)
    keypoints = pd.DataFrame(
        [(i, i / 30.0, name, 360.0 + (5.0 if name.startswith("left") else -5.0), 640 - s / 2 + s * k / len(LANDMARK_NAMES),
          0.0, 0.99, 0.99) for i, s in enumerate(size) for k, name in enumerate(LANDMARK_NAMES)],
        columns=list(COLUMNS))
    clip = {"width": 720, "height": 1280, "fps": 30.0, "duration_s": 4.0}
    dropped = [{"stance_side": "left", "reason": "stance foot not seen in contact for the whole phase"},
               {"stance_side": "right", "reason": "partial phase: the swing foot's next foot strike is not seen"}]
    summary = {"direction": "toward", "sides": {"left": {"n_phases": 1}, "right": {"n_phases": 3}},
               "quality": {"dropped_phases": dropped}}
    check = _by_name({"checks": capture.capture_checks(keypoints, clip, summary)})["phases_per_side"]
    assert check["status"] != "pass" and "1 phase(s) left out because the feet or body were not tracked" in check["detail"]
    assert check["suggestion"].startswith("film closer, in even light, at 720p or more")
    summary["quality"]["dropped_phases"] = dropped[1:]   # only the clip's end: a longer walk is the fix
    check = _by_name({"checks": capture.capture_checks(keypoints, clip, summary)})["phases_per_side"]
    assert check["suggestion"].startswith("film a longer walk") and "not tracked" not in check["detail"]


@pytest.mark.parametrize("n_drop, status", [(8, "pass"), (5, "warn"), (3, "fail")])
def test_pelvis_marker_check_grades_the_share_of_phases(n_drop, status):
    sides = {"left": {"n_phases": 5, "n_pelvic_drop_phases": min(n_drop, 5)},
             "right": {"n_phases": 5, "n_pelvic_drop_phases": max(n_drop - 5, 0)}}
    check = capture.pelvis_marker_check(sides)
    assert check["status"] == status and check["value"] == pytest.approx(n_drop / 10)
    assert f"in {n_drop} of 10 single-support phases" in check["detail"]
    assert ("keep both stickers in view" in check["suggestion"]) is (status != "pass")


def test_quick_check_sees_the_pelvis_markers():
    clip = DEMO / "truth_markers_drop_lean.mp4"
    check = _by_name(capture.quick_check(clip, pelvis_markers="green"))["pelvis_markers"]
    # the markers are in every sampled frame of this rendered walk toward the camera
    assert check["status"] == "pass" and check["value"] == 1.0
    wrong = _by_name(capture.quick_check(clip, pelvis_markers="pink"))["pelvis_markers"]
    assert wrong["status"] == "fail" and "check the colour given" in wrong["suggestion"]
    assert "pelvis_markers" not in _by_name(capture.quick_check(clip))


@pytest.mark.parametrize(
    ("frame_count", "sampled", "status", "lost"),
    [
        (100, [0, 25, 50, 74, 99], "pass", 0),       # every sample decoded
        (100, [0, 25, 74, 99], "warn", 1),           # one bad frame in the middle, the end is there
        (100, [0, 25, 50, 74], "warn", 1),           # only the last frame missing: at least 1 lost
        (100, [0, 25, 50], "fail", 26),              # stopped before frame 74: at least 26 of 100 lost
        (100, [], "fail", 100),                      # nothing decoded
    ],
)
def test_file_check_grades_frames_lost_from_the_samples(frame_count, sampled, status, lost):
    # Sample indices as sample_frames asks for them: 5 spread over 100 frames are 0, 25, 50, 74, 99
    # (numpy linspace rounded). The fail limit is the full analysis's 10 % (pose.MAX_LOST_FRACTION).
    check = capture.file_check(frame_count, sampled, n_samples=5)
    assert (check["status"], check["value"]) == (status, lost), check


def test_quick_check_flags_a_file_cut_short(tmp_path):
    # A copy cut at 40 % of its bytes (index first, as phones write it) decoded in part and
    # passed the quick check before (review of 2026-12-03).
    data = WALKER.read_bytes()
    cut = tmp_path / "cut.mp4"
    cut.write_bytes(data[: int(0.4 * len(data))])
    checks = _by_name(capture.quick_check(cut))
    assert checks["file"]["status"] == "fail" and "export the clip" in checks["file"]["suggestion"]
    assert checks["file"]["value"] > 0.3 * probe_clip(WALKER).frame_count
    assert _by_name(capture.quick_check(WALKER))["file"]["status"] == "pass"
