"""Walks with turns: passes found from apparent body size, each analysed with its own direction."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from lean_video.errors import LeanVideoError
from lean_video.gait import analyse_keypoints
from lean_video.gait_passes import analyse_walk, find_passes

try:
    from tests.gait_walker import make_walk
except ImportError:  # tests/ not a package: pytest puts tests/ itself on sys.path
    from gait_walker import make_walk

FPS = 30.0


def _size_of_distance(distance_m):
    # Apparent size of a pinhole image is inversely proportional to distance.
    return 1000.0 / np.asarray(distance_m, float)


def test_one_straight_walk_is_one_pass():
    t = np.arange(0, 5, 1 / FPS)
    passes = find_passes(_size_of_distance(7.0 - 1.0 * t), t)
    assert len(passes) == 1
    assert passes[0].direction == "toward"
    assert passes[0].start_s == pytest.approx(0.0) and passes[0].end_s == pytest.approx(t[-1])


def test_walk_there_and_back_is_two_passes_with_the_turn_left_out():
    # 4 s toward (7 -> 3 m), 2 s turning on the spot, 4 s away (3 -> 7 m).
    t = np.arange(0, 10, 1 / FPS)
    d = np.where(t < 4, 7 - t, np.where(t < 6, 3.0, 3 + (t - 6)))
    passes = find_passes(_size_of_distance(d), t, turn_margin_s=1.5)
    assert [p.direction for p in passes] == ["toward", "away"]
    # The turn (the size extremum, at 5 s, middle of the plateau) +- 1.5 s is in neither pass.
    assert passes[0].start_s == pytest.approx(0.0)
    assert passes[0].end_s == pytest.approx(3.5, abs=0.1)
    assert passes[1].start_s == pytest.approx(6.5, abs=0.1)
    assert passes[1].end_s == pytest.approx(t[-1])


def test_standing_then_walking_and_small_sway_do_not_split():
    t = np.arange(0, 8, 1 / FPS)
    d = np.where(t < 2, 7.0, 7.0 - 1.0 * (t - 2))
    d = d + 0.05 * np.sin(2 * np.pi * 0.8 * t)  # swaying 5 cm: far below one pass
    passes = find_passes(_size_of_distance(d), t)
    assert len(passes) == 1 and passes[0].direction == "toward"


def test_short_return_is_not_a_pass():
    # Walks toward for 5 s, then steps back for 1 s (shorter than min_pass_s = 2 s): one pass.
    t = np.arange(0, 6, 1 / FPS)
    d = np.where(t < 5, 7 - t, 2 + (t - 5))
    assert len(find_passes(_size_of_distance(d), t)) == 1


def test_missing_frames_and_too_little_data():
    t = np.arange(0, 5, 1 / FPS)
    size = _size_of_distance(7.0 - t)
    size[30:40] = np.nan
    assert len(find_passes(size, t)) == 1
    assert find_passes(np.full(5, np.nan), np.arange(5) / FPS) == []


def test_find_passes_rejects_bad_input():
    with pytest.raises(LeanVideoError, match="same length"):
        find_passes(np.ones(5), np.arange(4.0))
    with pytest.raises(LeanVideoError, match="min_change and min_pass_s must be positive"):
        find_passes(np.ones(5), np.arange(5.0), min_change=0)


def _two_pass_walk():
    """Walker toward the camera (7 -> 2 m), 2 s standing at the near end, then away (2 -> 7 m).

    Lean amplitudes are (left, right) = (3, 6) deg in both passes, so a side
    mix-up in either pass shows as a 3-degree error.
    """
    toward = make_walk(direction="toward", noise_px=0.5, seed=3)
    away = make_walk(direction="away", start_m=2.0, end_m=7.0, noise_px=0.5, seed=4)
    last = toward.keypoints[toward.keypoints["frame"] == toward.keypoints["frame"].max()]
    n_t = int(toward.keypoints["frame"].max()) + 1
    t_end = float(toward.time_s[-1])
    stand = []
    for k in range(1, int(2 * FPS) + 1):  # standing still, facing the camera
        f = last.copy()
        f["frame"], f["time_s"] = n_t + k - 1, t_end + k / FPS
        stand.append(f)
    shift_t = t_end + (int(2 * FPS) + 1) / FPS
    back = away.keypoints.copy()
    back["frame"] += n_t + int(2 * FPS)
    back["time_s"] += shift_t
    kp = pd.concat([toward.keypoints, *stand, back], ignore_index=True)
    return toward, away, shift_t, kp


def _per_side_lean(strides, lo, hi):
    s = strides[(strides["start_s"] >= lo) & (strides["end_s"] <= hi)]
    return {side: float(s.loc[s["stance_side"] == side, "lean_mean_deg"].mean()) for side in ("left", "right")}


def test_walk_there_and_back_keeps_the_clients_sides_in_both_passes():
    toward, away, shift_t, kp = _two_pass_walk()
    r = analyse_walk(kp, width=toward.width, height=toward.height)
    passes = r.summary["passes"]
    assert [p["direction"] for p in passes] == ["toward", "away"]
    assert all(p["n_phases"] >= 2 for p in passes)
    assert r.summary["quality"]["warnings"][0].startswith("the clip holds 2 passes")
    # Known answer: sin^2 bumps of 3 (left) and 6 deg (right) have a mean of half the amplitude
    # over the phase; measured per side in each pass, never swapped.
    for lo, hi in ((0.0, passes[0]["end_s"]), (passes[1]["start_s"], np.inf)):
        lean = _per_side_lean(r.strides, lo, hi)
        assert lean["left"] == pytest.approx(1.5, abs=0.6), (lo, lean)
        assert lean["right"] == pytest.approx(3.0, abs=0.6), (lo, lean)
    # Every input frame is kept; the turn has no angles and is not valid.
    assert len(r.frames) == kp["frame"].nunique()
    turn = r.frames[(r.frames["time_s"] > passes[0]["end_s"]) & (r.frames["time_s"] < passes[1]["start_s"])]
    assert len(turn) > 0 and not turn["valid"].any() and turn["trunk_lean_deg"].isna().all()
    assert r.summary["sides"]["left"]["n_phases"] + r.summary["sides"]["right"]["n_phases"] == len(r.strides)


def test_whole_two_pass_walk_as_one_pass_mixes_up_the_sides():
    # What the pass split prevents: analysed with one direction, the away pass's sides are swapped.
    toward, away, shift_t, kp = _two_pass_walk()
    r = analyse_keypoints(kp, width=toward.width, height=toward.height)
    lean = _per_side_lean(r.strides, shift_t + 1.5, np.inf)
    assert lean["left"] > lean["right"]


def test_single_pass_is_unchanged():
    w = make_walk(direction="toward", noise_px=0.5, seed=1)
    a = analyse_keypoints(w.keypoints, width=w.width, height=w.height)
    b = analyse_walk(w.keypoints, width=w.width, height=w.height)
    pd.testing.assert_frame_equal(a.strides, b.strides)
    pd.testing.assert_frame_equal(a.frames, b.frames)
    assert b.summary["passes"] == [{"start_s": 0.0, "end_s": pytest.approx(w.time_s[-1]),
                                    "direction": "toward", "n_phases": len(a.strides)}]
    assert {k: v for k, v in b.summary.items() if k != "passes"} == a.summary


@pytest.mark.slow
def test_rendered_walk_away_then_back(tmp_path):
    """Whole pipeline on two rendered clips joined: walking away, then back toward the camera.

    Each found phase must overlap a true single-support window of the same
    stance side in its own clip (a side mix-up makes every phase of a pass
    spurious), and the direction check accepts the turn.
    """
    from lean_video import pipeline
    from tests.conftest import DEMO, ffmpeg
    from tools.eval_accuracy import phase_match

    first, second = "truth_walk_away", "truth_contralateral_lean"
    listing = tmp_path / "list.txt"
    listing.write_text("".join(f"file '{DEMO / (n + '.mp4')}'\n" for n in (first, second)))
    joined = tmp_path / "there_and_back.mp4"
    ffmpeg("-f", "concat", "-safe", "0", "-i", str(listing), "-c", "copy", str(joined))
    import json

    truth = {n: json.loads((DEMO / f"{n}.truth.json").read_text()) for n in (first, second)}
    offset = truth[first]["duration_s"]
    a = pipeline.analyse(joined)
    passes = a.summary["passes"]
    assert [p["direction"] for p in passes] == ["away", "toward"]
    check = next(c for c in a.summary["quality"]["checks"] if c["name"] == "direction")
    assert check["status"] == "pass" and check["value"] == 2
    for name, sel, shift in ((first, a.strides["end_s"] <= offset, 0.0),
                             (second, a.strides["start_s"] >= offset, offset)):
        part = a.strides[sel].copy()
        part[["start_s", "end_s"]] -= shift
        m = phase_match(part, truth[name])
        assert m["spurious"] == 0, (name, m)
        assert m["found"] >= 4, (name, m)


def test_bad_option_is_named_not_read_as_no_phase_found():
    # Each pass used to swallow the option's error, leaving "no single-support phase".
    try:
        from tests.gait_walker import make_walk
    except ImportError:  # tests/ not a package
        from gait_walker import make_walk
    w = make_walk(start_m=3.0, end_m=2.0)
    with pytest.raises(LeanVideoError, match="cutoff_hz must be positive"):
        analyse_walk(w.keypoints, width=w.width, height=w.height, cutoff_hz=0.0)
    with pytest.raises(LeanVideoError, match=r"unknown gait option\(s\) \['cutof_hz'\]"):
        analyse_walk(w.keypoints, width=w.width, height=w.height, cutof_hz=5.0)
