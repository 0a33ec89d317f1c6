"""Tests for lean_video.gait (+ gait_clean, gait_events) on synthetic keypoints.

The synthetic walker (tests/gait_walker.py) is a 3-D kinematic model seen by
a pinhole camera, so true events, phases and angles are known exactly.
"""

import json
import math

import numpy as np
import pandas as pd
import pytest
from scipy import signal

from lean_video.errors import LeanVideoError
from lean_video.gait import analyse_keypoints, frame_angles
from lean_video.gait_phases import PARTIAL_PHASE, summarise_sides
from lean_video.gait_clean import (
    butter_sos, fill_short_gaps, keypoints_to_track, lowpass_irregular, repair_swaps,
)
from lean_video.gait_events import merge_overlapping, refine_event_times, rest_noise, walking_direction
from lean_video.gait_frontal import (
    bound_by_double_support, drop_short_contacts, foot_centre_events, order_events, untime_cut_strikes,
)

try:
    from tests.gait_walker import make_walk, match_events, phases_found_in_place
except ImportError:  # tests/ not a package: pytest puts tests/ itself on sys.path
    from gait_walker import make_walk, match_events, phases_found_in_place


@pytest.fixture(scope="module")
def toward():
    w = make_walk(direction="toward", noise_px=0.5, seed=1)
    return w, analyse_keypoints(w.keypoints, width=w.width, height=w.height)


@pytest.fixture(scope="module")
def away():
    w = make_walk(direction="away", start_m=2.0, end_m=7.0, noise_px=0.5, seed=1)
    return w, analyse_keypoints(w.keypoints, width=w.width, height=w.height)


def _truth_per_side(w):
    """Mean lean toward stance and swing-side pelvic drop over the true phases."""
    out = {}
    for side in ("left", "right"):
        lean, drop = [], []
        for _, p in w.phases[w.phases["stance_side"] == side].iterrows():
            sel = (w.time_s >= p["start_s"]) & (w.time_s <= p["end_s"])
            sign = 1.0 if side == "right" else -1.0
            lean.append(np.mean(sign * w.lean_deg[sel]))
            drop.append(np.mean(sign * w.obliquity_deg[sel]))  # swing side = other side
        out[side] = (np.mean(lean), np.mean(drop))
    return out


# --- filter -----------------------------------------------------------------

def test_filtfilt_gain_is_minus_6db_at_cutoff():
    # Butterworth: |H(fc)| = 1/sqrt(2) for one pass (definition of the
    # Butterworth cut-off; scipy pre-warps the bilinear transform so it holds
    # exactly at fc). Forward-backward squares it: |H|^2 = 0.5 = -6.02 dB
    # (Winter 2009, ch. 3, from memory: dual-pass filters shift the -3 dB point).
    fs, fc = 30.0, 6.0
    sos = butter_sos(fc, fs)
    f, h = signal.sosfreqz(sos, worN=[fc, 1.0, 12.0], fs=fs)
    gain2 = np.abs(h) ** 2
    assert gain2[0] == pytest.approx(0.5, abs=1e-9)
    assert 20 * np.log10(gain2[0]) == pytest.approx(-6.0206, abs=1e-3)
    # the applied filter matches the reference response on long sinusoids
    t = np.arange(0, 40, 1 / fs)
    for freq, g in zip([fc, 1.0, 12.0], gain2):
        y = lowpass_irregular(np.sin(2 * np.pi * freq * t), t, cutoff_hz=fc)
        mid = slice(len(t) // 4, 3 * len(t) // 4)
        amp = np.sqrt(2 * np.mean(y[mid] ** 2))
        assert amp == pytest.approx(g, abs=0.01)


def test_lowpass_handles_irregular_timestamps():
    # variable frame rate: 15 % of frames dropped, small jitter on the rest. The
    # response must follow the design in Hz: |H(f)|^2 from sosfreqz at 30 fps.
    rng = np.random.default_rng(3)
    t = np.arange(1800) / 30.0 + rng.uniform(-0.002, 0.002, 1800)
    t = np.sort(t[rng.uniform(size=1800) > 0.15])
    f, h = signal.sosfreqz(butter_sos(6.0, 30.0), worN=[1.0, 4.0], fs=30.0)
    for freq, g in zip(f, np.abs(h) ** 2):
        y = lowpass_irregular(np.sin(2 * np.pi * freq * t), t, cutoff_hz=6.0)
        mid = slice(100, -100)
        fit = np.linalg.lstsq(np.column_stack([np.sin(2 * np.pi * freq * t[mid]),
                                               np.cos(2 * np.pi * freq * t[mid])]), y[mid], rcond=None)[0]
        assert np.hypot(*fit) == pytest.approx(g, abs=0.02)
        assert abs(math.atan2(fit[1], fit[0])) < 0.02  # zero lag


def test_lowpass_filters_segments_separately_and_keeps_gaps():
    t = np.arange(200) / 30.0
    x = np.concatenate([np.zeros(100), np.full(100, 50.0)])
    x[95:105] = np.nan
    y = lowpass_irregular(x, t, cutoff_hz=6.0)
    assert np.all(np.isnan(y[95:105]))
    # no leakage of the step across the gap
    assert np.allclose(y[:95], 0.0, atol=1e-9) and np.allclose(y[105:], 50.0, atol=1e-9)


def test_bad_cutoff_is_rejected():
    with pytest.raises(LeanVideoError, match="cutoff_hz must lie between 0 and half"):
        butter_sos(20.0, 30.0)


# --- gaps, visibility, swaps -------------------------------------------------

@pytest.mark.parametrize("fps, n_missing, filled", [
    (30.0, 3, True), (30.0, 4, False), (60.0, 6, True), (60.0, 7, False)])
def test_gap_fill_limit_is_in_seconds(fps, n_missing, filled):
    t = np.arange(40) / fps
    x = 2.0 * t
    x[10:10 + n_missing] = np.nan
    y = fill_short_gaps(x, t, max_gap_s=0.1)
    if filled:
        assert np.allclose(y, 2.0 * t)
    else:
        assert np.all(np.isnan(y[10:10 + n_missing]))


def test_gap_fill_never_extrapolates_ends():
    t = np.arange(20) / 30.0
    x = t.copy()
    x[:2] = np.nan
    x[-1] = np.nan
    y = fill_short_gaps(x, t, max_gap_s=0.1)
    assert np.isnan(y[:2]).all() and np.isnan(y[-1])


def test_visibility_gate():
    w = make_walk()
    kp = w.keypoints.copy()
    low = (kp["landmark"] == "left_heel") & kp["frame"].between(10, 12)
    kp.loc[low, "visibility"] = 0.3
    _, _, track = keypoints_to_track(kp, min_visibility=0.5)
    assert np.isnan(track["left_heel"][10:13]).all()
    assert np.isfinite(track["left_heel"][9]).all() and np.isfinite(track["right_heel"][11]).all()


def test_swap_repair_restores_labels():
    w = make_walk()
    frame, t, track = keypoints_to_track(w.keypoints)
    bad = {k: v.copy() for k, v in track.items()}
    for a, b in (("left_heel", "right_heel"), ("left_ankle", "right_ankle"),
                 ("left_foot_index", "right_foot_index"), ("left_knee", "right_knee")):
        bad[a][40:44], bad[b][40:44] = track[b][40:44], track[a][40:44]
    for a, b in (("left_hip", "right_hip"), ("left_shoulder", "right_shoulder")):
        bad[a][70], bad[b][70] = track[b][70], track[a][70]
    fixed, n, blanked = repair_swaps(bad, t)
    assert n == 5 and blanked == 0
    for k in track:
        assert np.allclose(fixed[k], track[k], equal_nan=True), k


def test_swap_repair_undoes_a_longer_flip_but_not_a_whole_run():
    w = make_walk()
    frame, t, track = keypoints_to_track(w.keypoints)
    legs = ("knee", "ankle", "heel", "foot_index")

    def flipped(lo, hi):
        bad = {k: v.copy() for k, v in track.items()}
        for part in legs:
            a, b = f"left_{part}", f"right_{part}"
            bad[a][lo:hi], bad[b][lo:hi] = track[b][lo:hi], track[a][lo:hi]
        return bad

    # 12 frames flipped in the middle of the walk: undone (moving least wins over the swap cost)
    fixed, n, blanked = repair_swaps(flipped(50, 62), t)
    assert (n, blanked) == (12, 0)
    for k in track:
        assert np.allclose(fixed[k], track[k], equal_nan=True), k
    # every frame flipped: the labels are consistent, so they are kept (sides are
    # decided later from geometry, not from the model's labels)
    fixed, n, blanked = repair_swaps(flipped(0, len(t)), t)
    assert (n, blanked) == (0, 0)
    assert np.allclose(fixed["left_ankle"], track["right_ankle"], equal_nan=True)


def test_swap_repair_with_one_leg_out_of_sight():
    # The far leg below the visibility gate for a while (0.1 s and 0.5 s): the labels
    # of the leg still seen are kept, and a short mislabelling of it is undone. Before,
    # a labelling with no point to compare counted as no movement, so the seen leg's
    # labels alternated from frame to frame (8 wrong swaps over 16 frames).
    w = make_walk(noise_px=0.5)
    frame, t, track = keypoints_to_track(w.keypoints)
    legs = ("knee", "ankle", "heel", "foot_index")
    for lo, hi in ((40, 43), (40, 56)):
        hidden = {k: v.copy() for k, v in track.items()}
        for part in legs:
            hidden[f"right_{part}"][lo:hi] = np.nan
        fixed, n, blanked = repair_swaps(hidden, t)
        assert (n, blanked) == (0, 0), (lo, hi)
        for k in track:
            assert np.allclose(fixed[k], hidden[k], equal_nan=True), (lo, hi, k)
    bad = {k: v.copy() for k, v in hidden.items()}
    for part in legs:
        a, b = f"left_{part}", f"right_{part}"
        bad[a][46:50], bad[b][46:50] = hidden[b][46:50], hidden[a][46:50]
    fixed, n, blanked = repair_swaps(bad, t)
    assert (n, blanked) == (4, 0)
    for k in track:
        assert np.allclose(fixed[k], hidden[k], equal_nan=True), k


def test_frame_with_merged_legs_is_blanked_not_carried_on():
    # A frame where the model draws both legs between the real ones (it does so on
    # a frame whose fast limb is blurred into two): neither labelling fits. Before
    # it was blanked, it set the predicted velocity so that the next, correct frames
    # were swapped for the rest of the walk.
    w = make_walk()
    frame, t, track = keypoints_to_track(w.keypoints)
    bad = {k: v.copy() for k, v in track.items()}
    legs = ("knee", "ankle", "heel", "foot_index")
    for part in legs:
        mid = (track[f"left_{part}"][60] + track[f"right_{part}"][60]) / 2
        bad[f"left_{part}"][60] = mid + (0.5, 0.0)
        bad[f"right_{part}"][60] = mid - (0.5, 0.0)
    fixed, n, blanked = repair_swaps(bad, t)
    assert (n, blanked) == (0, 1)
    for part in legs:
        for side in ("left", "right"):
            name = f"{side}_{part}"
            assert np.isnan(fixed[name][60]).all(), name
            keep = np.ones(len(t), bool)
            keep[60] = False
            assert np.allclose(fixed[name][keep], track[name][keep], equal_nan=True), name
    # the torso was clear in that frame and is kept
    assert np.isfinite(fixed["left_hip"][60]).all()
    # the analysis bridges the blanked frame and finds the same phases as without it
    kp = w.keypoints.copy()
    for part in legs:
        for side, sign in (("left", 1), ("right", -1)):
            sel = (kp["frame"] == frame[60]) & (kp["landmark"] == f"{side}_{part}")
            kp.loc[sel, ["x_px", "y_px"]] = bad[f"{side}_{part}"][60]
    ref = analyse_keypoints(w.keypoints, width=w.width, height=w.height)
    got = analyse_keypoints(kp, width=w.width, height=w.height)
    assert got.summary["quality"]["n_merged_sides_left_out"] == 1
    assert len(got.strides) == len(ref.strides)
    assert np.allclose(got.strides["start_s"], ref.strides["start_s"], atol=0.02)
    assert (got.strides["stance_side"] == ref.strides["stance_side"]).all()


def test_several_merged_frames_in_a_row_are_all_blanked():
    # Three merged frames in a row: the middle one has merged neighbours and looked
    # like them, so it stood (with both legs in one place) and, at frames 17-19, 66-68
    # and 101-103, cost the analysis a phase. Judged again against the frames left
    # standing, every merged frame goes, at the ends of the walk too, and nothing else.
    w = make_walk(noise_px=0.5)
    frame, t, track = keypoints_to_track(w.keypoints)
    n = len(t)
    legs = ("knee", "ankle", "heel", "foot_index")
    for lo, length in ((17, 3), (66, 3), (101, 3), (50, 5), (0, 3), (n - 3, 3)):
        bad = {k: v.copy() for k, v in track.items()}
        seg = slice(lo, lo + length)
        for part in legs:
            a, b = f"left_{part}", f"right_{part}"
            mid = (track[a][seg] + track[b][seg]) / 2
            bad[a][seg], bad[b][seg] = mid + (0.5, 0.0), mid - (0.5, 0.0)
        fixed, swapped, blanked = repair_swaps(bad, t)
        assert (swapped, blanked) == (0, length), lo
        gone = np.zeros(n, bool)
        gone[seg] = True
        for part in legs:
            for side in ("left", "right"):
                name = f"{side}_{part}"
                assert np.isnan(fixed[name][gone]).all(), (lo, name)
                assert np.allclose(fixed[name][~gone], track[name][~gone]), (lo, name)


def test_swapped_frames_do_not_change_results():
    w = make_walk(noise_px=0.5, seed=2)
    ref = analyse_keypoints(w.keypoints, width=w.width, height=w.height)
    kp = w.keypoints.copy()
    sel = kp["frame"].between(50, 52)
    kp.loc[sel, "landmark"] = kp.loc[sel, "landmark"].str.replace("left", "#").str.replace(
        "right", "left").str.replace("#", "right")
    got = analyse_keypoints(kp, width=w.width, height=w.height)
    assert got.summary["quality"]["n_label_swaps_repaired"] >= 3
    pd.testing.assert_frame_equal(got.strides, ref.strides)


# --- sign conventions (hand-made keypoints) ----------------------------------

def _pose(dx_shoulder_px=0.0, left_hip_dy_px=0.0, *, facing_camera=True):
    """One frame: hips 100 px apart, shoulders 300 px above; client's left on image right if facing."""
    s = 1.0 if facing_camera else -1.0
    track = {
        "left_hip": np.array([[500 + s * 50, 1000 + left_hip_dy_px]]),
        "right_hip": np.array([[500 - s * 50, 1000.0]]),
        "left_shoulder": np.array([[500 + s * 80 + dx_shoulder_px, 700.0]]),
        "right_shoulder": np.array([[500 - s * 80 + dx_shoulder_px, 700.0]]),
    }
    return track


def test_lean_sign_facing_camera():
    # shoulders moved to the image LEFT = the client's RIGHT when facing the camera
    lean, obl = frame_angles(_pose(-30.0), direction="toward")
    assert lean[0] == pytest.approx(math.degrees(math.atan2(30, 300)))
    assert obl[0] == pytest.approx(0.0)


def test_lean_sign_from_behind():
    # from behind the client's right is on the image RIGHT
    lean, _ = frame_angles(_pose(30.0, facing_camera=False), direction="away")
    assert lean[0] == pytest.approx(math.degrees(math.atan2(30, 300)))


@pytest.mark.parametrize("facing, direction", [(True, "toward"), (False, "away")])
def test_obliquity_positive_when_left_hip_lower(facing, direction):
    # y grows downward: +10 px is lower in the image
    _, obl = frame_angles(_pose(0.0, 10.0, facing_camera=facing), direction=direction)
    assert obl[0] == pytest.approx(math.degrees(math.atan2(10, 100)), abs=1e-9)


def test_camera_roll_corrects_vertical():
    # world-vertical trunk seen turned clockwise by 5 deg (top moves to the image right)
    r = math.radians(5.0)
    hip = np.array([500.0, 1000.0])
    up = np.array([math.sin(r), -math.cos(r)])
    side = np.array([math.cos(r), math.sin(r)])
    track = {"left_hip": [hip + 50 * side], "right_hip": [hip - 50 * side],
             "left_shoulder": [hip + 300 * up + 80 * side], "right_shoulder": [hip + 300 * up - 80 * side]}
    track = {k: np.array(v) for k, v in track.items()}
    lean, obl = frame_angles(track, direction="toward", camera_roll_deg=5.0)
    assert lean[0] == pytest.approx(0.0, abs=1e-9) and obl[0] == pytest.approx(0.0, abs=1e-9)
    lean0, _ = frame_angles(track, direction="toward", camera_roll_deg=0.0)
    assert lean0[0] == pytest.approx(-5.0)  # top to image right = client's left when facing


# --- direction, events, phases, summary --------------------------------------

def test_direction_from_apparent_size(toward, away):
    assert toward[1].summary["direction"] == "toward"
    assert away[1].summary["direction"] == "away"


def test_direction_falls_back_to_labels_when_size_is_constant():
    # constant apparent size: the labels decide (left on the image right = front view)
    t = np.arange(30) / 30.0
    pts = {"shoulder": (80, 700), "hip": (50, 1000), "knee": (45, 1200), "ankle": (45, 1400),
           "heel": (45, 1410), "foot_index": (45, 1430)}
    track = {}
    for part, (dx, y) in pts.items():
        track[f"left_{part}"] = np.tile([500.0 + dx, y], (30, 1))
        track[f"right_{part}"] = np.tile([500.0 - dx, y], (30, 1))
    direction, _, warnings = walking_direction(track, t)
    assert direction == "toward" and "pose model's side labels" in warnings[0]
    back = {k.replace("left", "#").replace("right", "left").replace("#", "right"): v
            for k, v in track.items()}
    assert walking_direction(back, t)[0] == "away"


# Synthetic walker, 0.5 px noise, 30 fps. Measured: toward foot strike median
# -9 ms (max 24), foot off median -17 ms (max 40; +51 ms, max 133, from the
# footprint departure alone: the toe's lift and approach cancel in the image);
# away foot strike median -24 ms (max 66; -80 ms, max 154, from the footprint
# arrival alone), foot off +10 ms (max 18). With 2 px noise: toward foot off
# -10 ms (max 192), away foot strike about -40 ms (max 177).
# Target (issue): median <= 33 ms (one frame) and none > 100 ms: met at 0.5 px
# noise, not at 2 px. Bounds: measured plus about half a frame.
@pytest.mark.parametrize("which, event, median_ms, max_ms", [
    ("toward", "foot_strike", 33, 60), ("toward", "foot_off", 33, 60),
    ("away", "foot_strike", 33, 85), ("away", "foot_off", 33, 60)])
def test_event_timing_synthetic(toward, away, which, event, median_ms, max_ms):
    w, r = toward if which == "toward" else away
    err, missed = match_events(r.events[r.events["event"] == event],
                               w.events[w.events["event"] == event], max_s=0.2)
    inner = w.events[(w.events["event"] == event) & w.events["time_s"].between(0.2, w.time_s[-1] - 0.2)]
    assert missed <= len(w.events[w.events["event"] == event]) - len(inner)
    assert abs(np.median(err)) * 1000 <= median_ms
    assert np.max(np.abs(err)) * 1000 <= max_ms


@pytest.mark.parametrize("which", ["toward", "away"])
def test_every_inner_phase_found(toward, away, which):
    w, r = toward if which == "toward" else away
    inner = w.phases[(w.phases["start_s"] > 0.1) & (w.phases["end_s"] < w.time_s[-1] - 0.1)]
    for _, p in inner.iterrows():
        mid = (p["start_s"] + p["end_s"]) / 2
        hit = r.strides[(r.strides["start_s"] < mid) & (r.strides["end_s"] > mid)]
        assert len(hit) == 1 and hit["stance_side"].iloc[0] == p["stance_side"]


@pytest.mark.parametrize("which", ["toward", "away"])
def test_per_side_angles_match_truth(toward, away, which):
    # Measured (0.5 px noise): lean within 0.6 deg, pelvic drop within 0.5 deg of
    # the truth over the true phases; detected phases are shorter than true ones
    # (late foot off / early strike), centring them on the peaks of the sin^2 bumps.
    w, r = toward if which == "toward" else away
    truth = _truth_per_side(w)
    for side in ("left", "right"):
        s = r.summary["sides"][side]
        assert s["lean_mean_deg"] == pytest.approx(truth[side][0], abs=0.8)
        assert s["pelvic_drop_mean_deg"] == pytest.approx(truth[side][1], abs=0.8)
    # the weaker side (right here) shows more lean and more drop
    assert r.summary["sides"]["right"]["lean_mean_deg"] > r.summary["sides"]["left"]["lean_mean_deg"] + 1.0


def test_away_with_flipped_labels_gives_same_sides():
    # The pose model flips left/right for back views; sides come from geometry.
    w = make_walk(direction="away", start_m=2.0, end_m=7.0, noise_px=0.5, seed=4)
    flipped = make_walk(direction="away", start_m=2.0, end_m=7.0, noise_px=0.5, seed=4, flip_labels=True)
    a = analyse_keypoints(w.keypoints, width=w.width, height=w.height)
    b = analyse_keypoints(flipped.keypoints, width=w.width, height=w.height)
    pd.testing.assert_frame_equal(a.strides, b.strides)
    assert b.summary["quality"]["n_side_relabellings"] >= 1


def test_toward_and_away_agree_per_side(toward, away):
    for side in ("left", "right"):
        a, b = toward[1].summary["sides"][side], away[1].summary["sides"][side]
        assert a["lean_mean_deg"] == pytest.approx(b["lean_mean_deg"], abs=0.6)
        assert a["pelvic_drop_mean_deg"] == pytest.approx(b["pelvic_drop_mean_deg"], abs=0.6)


def test_irregular_timestamps_and_gaps():
    w = make_walk(noise_px=0.5, seed=5, time_jitter_s=0.008)
    kp = w.keypoints.copy()
    # a 2-frame dropout (filled) and a 0.5 s dropout (left as a gap)
    kp.loc[kp["frame"].between(30, 31), ["x_px", "y_px", "visibility"]] = np.nan
    kp.loc[kp["frame"].between(80, 94), ["x_px", "y_px", "visibility"]] = np.nan
    r = analyse_keypoints(kp, width=w.width, height=w.height)
    f = r.frames.set_index("frame")
    assert f.loc[30:31, "valid"].all()
    assert not f.loc[80:94, "valid"].any()
    dropped = r.summary["quality"]["dropped_phases"]
    assert len(dropped) == r.summary["quality"]["n_dropped_phases"] >= 1
    assert all(d["reason"] and d["stance_side"] in ("left", "right") for d in dropped)  # each says why
    # the phase running into the long gap cannot see its closing foot strike: a partial phase
    assert any(d["start_s"] < w.time_s[80] and d["reason"].startswith(PARTIAL_PHASE) for d in dropped)
    assert len(r.strides) > 0
    for _, s in r.strides.iterrows():  # no kept phase spans the long gap
        assert not (s["start_s"] < w.time_s[94] and s["end_s"] > w.time_s[80])


def test_summary_contents_and_json(toward):
    w, r = toward
    s = r.summary
    json.dumps(s)  # JSON-able: None for missing, no numpy types
    assert set(r.frames.columns) == {"frame", "time_s", "trunk_lean_deg", "pelvic_obliquity_deg",
                                     "left_contact", "right_contact", "valid"}
    assert set(r.events["event"]) == {"foot_strike", "foot_off"}
    for side in ("left", "right"):
        d = s["sides"][side]
        assert d["n_phases"] == int((r.strides["stance_side"] == side).sum())
        lo, hi = d["lean_ci95_deg"]
        assert lo < d["lean_mean_deg"] < hi
    # cadence: true step time is cycle_s / 2 = 0.55 s -> 109.1 steps/min
    assert s["cadence_steps_per_min"] == pytest.approx(60 / 0.55, rel=0.03)
    assert s["settings"]["cutoff_hz"] == 6.0 and s["settings"]["max_gap_s"] == 0.1
    # this clean walk drops no phase; the reasons given for dropped phases are
    # checked in test_irregular_timestamps_and_gaps, where one is dropped
    assert len(s["quality"]["dropped_phases"]) == s["quality"]["n_dropped_phases"]


def test_few_phases_warn():
    w = make_walk(start_m=4.0, end_m=2.0, noise_px=0.5)
    r = analyse_keypoints(w.keypoints, width=w.width, height=w.height)
    assert any("usable" in x for x in r.summary["quality"]["warnings"])


def test_standing_still_raises():
    w = make_walk()
    kp = w.keypoints.copy()
    first = kp[kp["frame"] == 0].set_index("landmark")
    for c in ("x_px", "y_px"):
        kp[c] = kp["landmark"].map(first[c]) + np.random.default_rng(0).normal(0, 0.3, len(kp))
    with pytest.raises(LeanVideoError, match="no single-support phase was found"):
        analyse_keypoints(kp, width=w.width, height=w.height)


def test_bad_parameters_raise():
    w = make_walk(start_m=3.0, end_m=2.0)
    with pytest.raises(LeanVideoError, match="width must be a positive integer"):
        analyse_keypoints(w.keypoints, width=0, height=100)
    with pytest.raises(LeanVideoError, match="min_visibility must lie in"):
        analyse_keypoints(w.keypoints, width=10, height=10, min_visibility=2.0)
    with pytest.raises(LeanVideoError, match="missing columns"):
        analyse_keypoints(w.keypoints.drop(columns="visibility"), width=10, height=10)


def test_contact_on_each_point_also_finds_phases():
    # Measured: every inner phase found with contact_points="each" too (0.5 px noise).
    w = make_walk(noise_px=0.5, seed=6)
    r = analyse_keypoints(w.keypoints, width=w.width, height=w.height, contact_points="each")
    inner = w.phases[(w.phases["start_s"] > 0.1) & (w.phases["end_s"] < w.time_s[-1] - 0.1)]
    assert len(inner) >= 4
    assert phases_found_in_place(r.strides, inner) >= len(inner) - 1
    with pytest.raises(LeanVideoError, match="contact_points must be"):
        analyse_keypoints(w.keypoints, width=w.width, height=w.height, contact_points="toes")


# --- frontal-view re-timing (foot_centre_events) -------------------------------

def _foot(t, heel_y, toe_y):
    z = np.zeros_like(t)
    return {"left_heel": np.stack([z + 500, heel_y], 1), "left_foot_index": np.stack([z + 500, toe_y], 1),
            "right_heel": np.full((len(t), 2), np.nan), "right_foot_index": np.full((len(t), 2), np.nan)}


def _gauss_cdf(x):
    return 0.5 * (1 + np.vectorize(math.erf)(x / math.sqrt(2)))


def test_foot_off_toward_at_peak_upward_velocity_of_toe():
    # Known answer: the foot centre rises 20 px along a Gaussian-CDF profile,
    # so its upward velocity peaks exactly at t_peak (between two frames).
    t = np.arange(0, 2, 1 / 30)
    t_peak = 1.013
    y = 800 - 20 * _gauss_cdf((t - t_peak) / 0.05)
    track = _foot(t, y - 10, y + 10)
    iv = [(0.4, 1.1, 12, 34, True, True)]  # position-based foot off 87 ms late
    out = foot_centre_events(track, t, "left", iv, direction="toward")
    assert out[0][1] == pytest.approx(t_peak, abs=0.004)
    assert out[0][0] == 0.4  # foot strike is well seen toward the camera: unchanged
    # the other foot's strike, less a 0.1 s margin for strikes found late,
    # bounds the search from below (double support): a strike at 1.05 s still
    # admits the peak at 1.013 s ...
    other = [(1.05, 1.6, 31, 48, True, True)]
    out = foot_centre_events(track, t, "left", iv, direction="toward", other_intervals=other)
    assert out[0][1] == pytest.approx(t_peak, abs=0.004)
    # ... one at 1.15 s does not (position-based foot off at 1.2 s): no turning
    # point after 1.05 s, the position-based time is kept
    other = [(1.15, 1.6, 34, 48, True, True)]
    late = [(0.4, 1.2, 12, 36, True, True)]
    out = foot_centre_events(track, t, "left", late, direction="toward", other_intervals=other)
    assert out[0][1] == 1.2
    with pytest.raises(LeanVideoError, match="off_point must be 'toe' or 'centre'"):
        foot_centre_events(track, t, "left", iv, direction="toward", off_point="heel")
    # walking away foot off is well seen and kept
    assert foot_centre_events(track, t, "left", iv, direction="away")[0][1] == 1.1


def test_foot_off_toward_searched_after_the_other_foots_strike():
    # Known answer: the toe's upward velocity peaks at 1.3 s, but the
    # position-based foot off is 0.2 s early (the model's toe left with the
    # heel). The search window then ends at 1.25 s, before the peak; the other
    # foot's strike at 1.2 s, inside this contact, says foot off comes after
    # it (double support), so the window reaches off_after_strike_s past it.
    t = np.arange(0, 2, 1 / 30)
    t_peak = 1.3
    y = 800 - 20 * _gauss_cdf((t - t_peak) / 0.05)
    track = _foot(t, y - 10, y + 10)
    early = [(0.4, 1.1, 12, 33, True, True)]
    other = [(1.2, 1.8, 36, 54, True, True)]
    out = foot_centre_events(track, t, "left", early, direction="toward", other_intervals=other)
    assert out[0][1] == pytest.approx(t_peak, abs=0.004)
    # the same strike 0.1 s too early to bound it: window ends 0.1 s short, no turning point, kept
    out = foot_centre_events(track, t, "left", early, direction="toward", other_intervals=other,
                             off_after_strike_s=0.05)
    assert out[0][1] == 1.1
    # without the other foot's strike nothing says the peak is still to come
    assert foot_centre_events(track, t, "left", early, direction="toward")[0][1] == 1.1


def test_foot_off_away_searched_after_the_other_foots_strike():
    # Known answer: the heel's upward velocity peaks at 1.43 s (Gaussian, SD
    # 0.05 s: 80 % of it 33.4 ms before, at 1.397 s), but the position-based
    # foot off is 0.33 s early, as in a slow walk seen from behind, so the
    # search window (to 0.25 s past it) ends at 1.35 s, before the peak. The
    # other foot's re-timed strike at 1.2 s, inside this contact, says foot
    # off comes after it (double support), so the window reaches
    # away_off_after_strike_s past it.
    t = np.arange(0, 2.5, 1 / 30)
    t_peak, sigma = 1.43, 0.05
    heel_y = 800 - 25 * _gauss_cdf((t - t_peak) / sigma)
    track = _foot(t, heel_y, heel_y + 15)
    early = [(0.3, 1.1, 9, 33, True, True)]
    assert foot_centre_events(track, t, "left", early, direction="away")[0][1] == 1.1
    out = foot_centre_events(track, t, "left", early, direction="away", other_strikes_s=[1.2])
    assert out[0][1] == pytest.approx(t_peak - sigma * np.sqrt(2 * np.log(1 / 0.8)), abs=0.004)
    # a strike 0.35 s before the peak with a window reaching 0.25 s past it: still short, kept
    out = foot_centre_events(track, t, "left", early, direction="away", other_strikes_s=[1.08],
                             away_off_after_strike_s=0.25)
    assert out[0][1] == 1.1
    # a strike outside this contact (before its strike) does not count
    assert foot_centre_events(track, t, "left", early, direction="away", other_strikes_s=[0.2])[0][1] == 1.1


def test_foot_off_toward_takes_the_toes_own_peak_not_the_windows_edge():
    # Known answer: a faster rise of the toe before the window (the model's
    # toe lifting with the heel in terminal stance, velocity peak at 0.9 s)
    # leaves the window's first sample (0.95 s) higher than the toe-off peak
    # at 1.15 s; the toe-off peak is the largest turning point inside.
    t = np.arange(0, 2, 1 / 30)
    y = 800 - 40 * _gauss_cdf((t - 0.9) / 0.06) - 20 * _gauss_cdf((t - 1.15) / 0.05)
    track = _foot(t, y - 10, y + 10)
    v = -np.gradient(y, t)
    lo = 1.05 - 0.1
    assert v[t >= lo][0] > v[np.argmin(np.abs(t - 1.15))]  # the edge is higher
    out = foot_centre_events(track, t, "left", [(0.4, 1.1, 12, 33, True, True)], direction="toward",
                             other_intervals=[(1.05, 1.7, 32, 51, True, True)])
    assert out[0][1] == pytest.approx(1.15, abs=0.006)


def test_foot_strike_away_when_heel_halfway_down_from_highest_image_point():
    # Known answer: the heel rises in the image while it recedes, turns at
    # 1.207 s, then drops 4 px to its footprint at 60 px/s; foot strike is
    # where it is halfway down: 1.207 + 2/60 s (to within the 0.02 px by which
    # the sampled top misses the true one).
    t = np.arange(0, 2, 1 / 30)
    t_turn = 1.207
    heel_y = np.where(t < t_turn, 700 + 400 * (t - t_turn) ** 2,
                      np.minimum(700 + 60 * (t - t_turn), 704))
    track = _foot(t, heel_y, heel_y + 15)
    iv = [(1.12, 1.8, 34, 54, True, True)]  # position-based strike too early
    out = foot_centre_events(track, t, "left", iv, direction="away")
    assert out[0][0] == pytest.approx(t_turn + 2 / 60, abs=0.002)
    assert foot_centre_events(track, t, "left", iv, direction="toward")[0][0] == 1.12
    # The other foot's (position-based, found early) foot off at 1.15 s bounds
    # the search only up to 0.1 s after it: the turn at 1.207 s is still found ...
    other = [(0.5, 1.15, 15, 35, True, True)]
    out = foot_centre_events(track, t, "left", iv, direction="away", other_intervals=other)
    assert out[0][0] == pytest.approx(t_turn + 2 / 60, abs=0.002)
    # ... but not without the margin (the search then ends before the turn).
    out = foot_centre_events(track, t, "left", iv, direction="away", other_intervals=other,
                             away_strike_margin_s=0.0)
    assert out[0][0] == 1.12


def _away_strike(heel_knots, strike_s, **kw):
    """Left foot walking away: foot off 0.45 s, stride 1.2 s, heel image row through ``heel_knots``.

    Returns (intervals out, the previous contact) for a position-based strike at
    ``strike_s``; foot offs are left as given (``away_off=False``).
    """
    t = np.arange(0, 2.4, 1 / 30)
    heel_y = np.interp(t, *zip(*heel_knots))
    prev = (-0.75, 0.45, 0, 14, False, True)
    iv = [prev, (strike_s, 1.65, int(strike_s * 30), 50, True, True)]
    other = [(-0.2, 0.05, 0, 2, False, True), (0.25, 1.25, 8, 38, True, True)]
    return foot_centre_events(_foot(t, heel_y, heel_y + 15), t, "left", iv, direction="away",
                              other_intervals=other, away_off=False, **kw), prev


def test_foot_strike_away_after_a_mid_swing_pause():
    # Walking away, far: the receding heel pauses in the image in mid-swing
    # (0.55-0.75 s) where it will land, then creeps up 5 px to its highest
    # image point at the real landing, 1.10 s, and rests 1 px lower. Foot off
    # 0.45 s, stride 1.2 s: a strike at 0.55 s would leave a 0.1 s swing.
    knots = [(0.0, 760), (0.45, 760), (0.55, 745), (0.75, 744), (1.10, 739), (1.13, 740), (2.4, 740)]
    out, prev = _away_strike(knots, 0.55)
    # strike found where the heel is halfway down from its top (1.10 s) to its footprint
    assert out[1][0] == pytest.approx(1.10 + 0.5 / 30, abs=0.01)
    assert out[0] == prev
    # the rule switched off: the search stays near the pause, no turning point, 0.55 s kept
    assert _away_strike(knots, 0.55, min_swing_fraction=0.0)[0][1][0] == 0.55
    with pytest.raises(LeanVideoError, match="min_swing_fraction must lie in"):
        _away_strike(knots, 0.55, min_swing_fraction=1.0)


def test_foot_strike_away_search_starts_a_quarter_stride_after_foot_off():
    # Far walking away: the heel, high in initial swing (0.60 s), comes down the
    # image, turns at its landing approach (highest point 0.94 s) and rests at
    # 1.0 s. The position-based strike, 0.78 s, is early but not within a
    # quarter stride (0.30 s) of the foot off (0.45 s). Its usual window,
    # 0.71-0.95 s, begins on the initial-swing descent, higher than the turn;
    # started (and ended) 0.04 s later, at 0.75 s, it holds the turn.
    knots = [(0.0, 760), (0.45, 760), (0.60, 725), (0.76, 736), (0.94, 733), (0.97, 735), (2.4, 735)]
    assert _away_strike(knots, 0.78)[0][1][0] == pytest.approx(0.94 + 0.015, abs=0.01)
    assert _away_strike(knots, 0.78, min_swing_fraction=0.0)[0][1][0] == 0.78


def test_foot_strike_away_when_the_heel_comes_down_the_image_to_land():
    # A low camera and a far walker: the heel's lift outweighs its recession,
    # so after its mid-swing top (0.60 s, where the pose-based strike 0.55 s
    # was found) it comes down the image at 30 px/s until it lands at 1.05 s
    # and rests at row 735. No turning point in the search window: the strike
    # is where the heel comes within 0.5 px (the floor of the tolerance; exact
    # points rest still) of its footprint, 1.05 - 0.5/30 s.
    knots = [(0.0, 760), (0.45, 760), (0.60, 720), (0.75, 726), (1.05, 735), (2.4, 735)]
    out, prev = _away_strike(knots, 0.55)
    assert out[1][0] == pytest.approx(1.05 - 0.5 / 30, abs=0.005)
    assert out[0] == prev
    # without the quarter-stride rule the mid-swing top is taken for the landing
    assert _away_strike(knots, 0.55, min_swing_fraction=0.0)[0][1][0] < 0.8


def test_contacts_overlapping_after_timing_are_one_contact():
    # A far foot's contact split by a speed spike: after position-based timing
    # the second part begins (6.08 s) before the first ends (6.48 s).
    iv = [(4.94, 5.48, 10, 20, True, True), (6.05, 6.48, 30, 40, True, True),
          (6.08, 6.89, 42, 50, True, False)]
    assert merge_overlapping(iv) == [iv[0], (6.05, 6.89, 30, 50, True, False)]
    assert merge_overlapping(iv[:2]) == iv[:2]
    assert merge_overlapping([]) == []


def test_foot_centre_timing_rejects_bad_cutoff():
    w = make_walk(direction="toward", noise_px=0.5, seed=1)
    with pytest.raises(LeanVideoError, match="foot_centre_cutoff_hz must be positive"):
        analyse_keypoints(w.keypoints, width=w.width, height=w.height, foot_centre_cutoff_hz=0.0)


def test_short_mid_swing_contact_is_dropped():
    # stance about 0.7 s; a 0.2 s "contact" in mid-swing (the swing foot
    # pausing in the image) is removed, edge-cut contacts are kept
    iv = [(0.0, 0.5, 0, 15, False, True), (1.0, 1.7, 30, 51, True, True),
          (1.9, 2.1, 57, 63, True, True), (2.2, 2.9, 66, 87, True, True),
          (3.4, 4.1, 102, 123, True, True), (4.6, 4.75, 138, 142, True, False)]
    kept, n = drop_short_contacts(iv)
    assert n == 1 and (1.9, 2.1, 57, 63, True, True) not in kept
    assert kept[0] == iv[0] and kept[-1] == iv[-1]
    assert drop_short_contacts(iv[:3]) == (iv[:3], 0)  # too few full contacts to judge


def test_strike_of_a_contact_cut_short_by_the_clip_end_is_left_untimed():
    # stance 0.7 s (median of the full contacts); the last contact runs into the
    # end of the tracked stretch 0.1 s after its strike (< 0.2 x 0.7 s): too little
    # stance to find the footprint, so the strike is not reported. A cut contact of
    # 0.3 s keeps its strike; a contact cut by the start keeps its foot off.
    full = [(1.0, 1.7, 30, 51, True, True), (2.2, 2.9, 66, 87, True, True), (3.4, 4.1, 102, 123, True, True)]
    start = (0.0, 0.1, 0, 3, False, True)
    out, n = untime_cut_strikes([start, *full, (4.6, 4.7, 138, 141, True, False)])
    assert n == 1
    assert out[-1] == (4.6, 4.7, 138, 141, False, False)
    assert out[:4] == [start, *full]
    kept = [*full, (4.6, 4.9, 138, 147, True, False)]
    assert untime_cut_strikes(kept) == (kept, 0)
    assert untime_cut_strikes(full[:2] + [(4.6, 4.7, 138, 141, True, False)])[1] == 0  # too few full contacts


# --- event order (order_events) ----------------------------------------------

def test_strike_after_other_foot_off_is_resolved_by_the_event_the_view_hides():
    # Left lands at 1.15 s, but the right foot was found leaving at 1.10 s:
    # impossible in walking (double support; Perry & Burnfield 2010, from memory).
    left = [(0.2, 0.9, 6, 27, True, True), (1.15, 1.9, 34, 57, True, True)]
    right = [(0.65, 1.10, 19, 33, True, True), (1.75, 2.4, 52, 72, True, True)]
    l2, r2, n = order_events(left, right, direction="toward")
    # toward the camera the strike is the late one: moved back to the foot off
    assert n == 1 and l2[1][0] == 1.10 and r2 == right and l2[0] == left[0]
    l3, r3, n = order_events(left, right, direction="away")
    # away from the camera the foot off is the early one: moved on to the strike
    assert n == 1 and r3[0][1] == 1.15 and l3 == left and r3[1] == right[1]


def test_strike_anywhere_in_the_other_foots_swing_belongs_to_that_step():
    # Left found landing 0.3 s after the right foot left, but before the right
    # foot lands again: one foot must be on the floor (walking has no flight
    # phase), so it is the same step however large the contradiction.
    left = [(0.2, 0.9, 6, 27, True, True), (1.40, 2.1, 42, 63, True, True)]
    right = [(0.65, 1.10, 19, 33, True, True), (1.75, 2.4, 52, 72, True, True)]
    l2, r2, n = order_events(left, right, direction="toward")
    assert n == 1 and l2[1][0] == 1.10 and r2 == right
    # found after the right foot's next strike: a step is missing, leave it alone
    late = [(0.2, 0.9, 6, 27, True, True), (1.80, 2.5, 54, 75, True, True)]
    assert order_events(late, right, direction="toward") == (late, right, 0)


def test_consistent_or_distant_events_are_left_alone():
    left = [(0.2, 0.9, 6, 27, True, True), (1.15, 1.9, 34, 57, True, True)]
    right = [(0.65, 1.25, 19, 37, True, True)]          # proper double support 1.15-1.25
    assert order_events(left, right, direction="toward") == (left, right, 0)
    gap = [(0.65, 0.80, 19, 24, True, True)]            # 0.35 s apart: not the same step
    assert order_events(left, gap, direction="toward") == (left, gap, 0)
    unseen = [(0.65, 1.10, 19, 33, True, False)]        # foot off not seen: nothing to compare
    assert order_events(left, unseen, direction="toward") == (left, unseen, 0)
    with pytest.raises(LeanVideoError, match="direction must be 'toward' or 'away'"):
        order_events(left, right, direction="sideways")


def test_event_order_option_is_recorded():
    w = make_walk(direction="toward", noise_px=0.5, seed=1)
    on = analyse_keypoints(w.keypoints, width=w.width, height=w.height)
    off = analyse_keypoints(w.keypoints, width=w.width, height=w.height, event_order=False)
    assert on.summary["settings"]["event_order"] is True and off.summary["settings"]["event_order"] is False
    # The walker's steps are consistent (each strike falls in the other foot's
    # stance), so ordering must move nothing and change no result; a real
    # contradiction is tested in test_strike_after_other_foot_off_is_resolved_...
    assert on.summary["quality"]["n_events_reordered"] == 0
    pd.testing.assert_frame_equal(on.events, off.events)
    pd.testing.assert_frame_equal(on.strides, off.strides)
    assert off.summary["quality"]["n_events_reordered"] == 0


def test_foot_off_away_on_the_rise_of_the_heel_upward_velocity():
    # Known answer: the heel rises 25 px along a Gaussian-CDF profile with its
    # fastest rise at t_peak (a Gaussian velocity of SD 0.05 s); the
    # position-based foot off (1.0 s) is early. The velocity reaches 80 % of
    # its peak sigma * sqrt(2 ln(1 / 0.8)) = 33.4 ms before it (Gaussian
    # function, analytic), found by linear interpolation between 30 fps samples.
    t = np.arange(0, 2, 1 / 30)
    t_peak, sigma = 1.113, 0.05
    t_80 = t_peak - sigma * np.sqrt(2 * np.log(1 / 0.8))
    heel_y = 800 - 25 * _gauss_cdf((t - t_peak) / sigma)
    track = _foot(t, heel_y, heel_y + 15)
    iv = [(0.3, 1.0, 9, 30, True, True)]
    out = foot_centre_events(track, t, "left", iv, direction="away")
    assert out[0][1] == pytest.approx(t_80, abs=0.004)
    # at the whole peak (the rule before version 0.2.4)
    assert foot_centre_events(track, t, "left", iv, direction="away", away_off_fraction=1.0)[0][1] == \
        pytest.approx(t_peak, abs=0.004)
    half = foot_centre_events(track, t, "left", iv, direction="away", away_off_fraction=0.5)[0][1]
    # lower down the flank the sampled pulse (central differences over two
    # frames widen it) runs a few ms ahead of the analytic one: 6.6 ms here
    assert half == pytest.approx(t_peak - sigma * np.sqrt(2 * np.log(2)), abs=0.008)
    assert foot_centre_events(track, t, "left", iv, direction="away", away_off=False)[0][1] == 1.0
    for bad in (0.0, 1.2, float("nan")):
        with pytest.raises(LeanVideoError, match=r"away_off_fraction must lie in \(0, 1\]"):
            foot_centre_events(track, t, "left", iv, direction="away", away_off_fraction=bad)
    # Body 1000 px tall: at the position-based foot off the heel is 0.3 px up,
    # far below 6 % of body height, so the toe is taken as the model's guess ...
    scale = np.full(len(t), 1000.0)
    out = foot_centre_events(track, t, "left", iv, direction="away", scale_px=scale)
    assert out[0][1] == pytest.approx(t_80, abs=0.004)
    # ... while with the heel already 80 px (8 %) up, the foot off is kept
    raised = _foot(t, np.where(t < 0.8, 800.0, 720.0) - 25 * _gauss_cdf((t - t_peak) / 0.05), heel_y + 15)
    kept = foot_centre_events(raised, t, "left", iv, direction="away", scale_px=scale)
    assert kept[0][1] == 1.0


# --- footprint tolerance shared by both feet ---------------------------------

def _resting_foot(t, *, drift_px=0.0, jitter_px=0.0, seed=0):
    """Left heel/ankle/toe landing at 0.5 s (from 60 px above), resting until 1.5 s, drifting and jittering at rest."""
    rng = np.random.default_rng(seed)
    y = np.where(t < 0.5, 700 - 120 * (0.5 - t), 700.0)
    rest = (t >= 0.5) & (t <= 1.5)
    y = y + rest * drift_px * (t - 0.5) + jitter_px * rng.normal(size=len(t)) * rest
    track = {}
    for k, name in enumerate(("left_heel", "left_ankle", "left_foot_index")):
        track[name] = np.stack([np.full_like(t, 500.0 + 10 * k), y - 20 * k], 1)
    for name in ("right_heel", "right_ankle", "right_foot_index"):
        track[name] = np.full((len(t), 2), np.nan)
    return track


def test_refine_noise_override_and_detrended_noise():
    t = np.arange(0, 2, 1 / 30)
    scale = np.full(len(t), 1000.0)
    iv = [(0.5, 1.5, 15, 45, True, True)]
    drifting = _resting_foot(t, drift_px=8.0)
    sigma, jitter = rest_noise(drifting, t, "left", scale, iv)
    # A straight slide at rest is drift, not jitter: about a line in time it leaves nothing.
    assert sigma > 1e-3 and jitter < 1e-6
    # A wider tolerance (larger noise level) declares the arrival earlier, never later.
    early = refine_event_times(drifting, t, "left", scale, iv, sigma_rel=0.02)[0][0][0]
    late = refine_event_times(drifting, t, "left", scale, iv, sigma_rel=0.0)[0][0][0]
    assert early < late <= 0.5 + 1e-9
    with pytest.raises(LeanVideoError, match="sigma_rel must be a non-negative number"):
        refine_event_times(drifting, t, "left", scale, iv, sigma_rel=-1.0)


def test_one_truly_noisier_foot_keeps_its_own_tolerance():
    # One foot's points jittered by about 4 px (smoothed white noise): its
    # jitter is 4-7 times the other's, more than max_jitter_ratio, so each
    # foot keeps its own tolerance and the walk's equal sides stay equal
    # (measured 3.9 %). A shared level makes a false symmetry index: 57 %
    # here until the toe's foot off was searched past the other foot's strike
    # (gait_frontal.foot_centre_events), which repairs part of it, 10 % since.
    from scipy.ndimage import gaussian_filter1d

    w = make_walk(direction="toward", noise_px=0.5, seed=1)
    kp = w.keypoints.copy()
    rng = np.random.default_rng(1)
    n = kp["frame"].nunique()
    for name in ("right_heel", "right_ankle", "right_foot_index"):
        m = kp["landmark"] == name
        for col in ("x_px", "y_px"):
            kp.loc[m, col] += gaussian_filter1d(rng.normal(0, 1, n), 3) * 12
    r = analyse_keypoints(kp, width=w.width, height=w.height)
    assert abs(r.summary["asymmetry"]["single_support_symmetry_index_pct"]) <= 10
    forced = analyse_keypoints(kp, width=w.width, height=w.height, max_jitter_ratio=100.0)
    assert abs(forced.summary["asymmetry"]["single_support_symmetry_index_pct"]) > 8
    assert r.summary["settings"]["shared_noise"] is True and r.summary["settings"]["max_jitter_ratio"] == 3.0


def test_short_side_advice_follows_why_phases_were_left_out():
    cols = ["stance_side", "start_s", "end_s", "duration_s", "lean_mean_deg", "lean_peak_deg",
            "pelvic_drop_mean_deg", "pelvic_drop_peak_deg"]
    rows = [("left", 1.0, 1.4, 0.4, 3.0, 4.0, 1.0, 2.0)] + \
        [("right", 0.4 + k, 0.8 + k, 0.4, 2.0, 3.0, 1.0, 2.0) for k in range(4)]
    strides = pd.DataFrame(rows, columns=cols)
    events = pd.DataFrame({"time_s": [0.5, 1.1, 1.7], "frame": [15, 33, 51], "side": ["left", "right", "left"],
                           "event": ["foot_strike"] * 3})
    unclear = [{"stance_side": "left", "start_s": 2.0, "reason": "stance foot not seen in contact for the whole phase"},
               {"stance_side": "left", "start_s": 3.0, "reason": "12 % of frames without shoulders/hips"},
               {"stance_side": "left", "start_s": 0.1, "reason": "partial phase: the swing foot's next foot strike is not seen"}]
    warnings: list[str] = []
    summarise_sides(strides, events, warnings, dropped=unclear)
    left = [w for w in warnings if w.startswith("only 1 usable left")]
    assert len(left) == 1 and "2 more left out because the feet or body were not tracked clearly" in left[0]
    assert "film a longer walk" not in left[0] and not any("usable right" in w for w in warnings)
    # only partial phases (clip ends) were left out: the walk was too short
    warnings = []
    summarise_sides(strides, events, warnings, dropped=unclear[2:])
    assert any(w.startswith("only 1 usable left") and w.endswith("(film a longer walk)") for w in warnings)


# --- the hidden event kept a minimum double support away (bound_by_double_support) ---

def test_late_strike_is_bounded_by_a_minimum_double_support():
    # Strides of 1.0 s; the right foot leaves at 1.10 s, the left strike was found
    # at 1.08 s (late: only 0.02 s of double support). With at least 8 % of the
    # stride (Perry & Burnfield 2010 give about 10 % per double support, from
    # memory) the strike can be no later than 1.10 - 0.08 = 1.02 s.
    left = [(0.08, 0.62, 2, 19, True, True), (1.08, 1.62, 32, 49, True, True)]
    right = [(0.58, 1.10, 17, 33, True, True), (1.58, 2.10, 47, 63, True, True)]
    l2, r2, n = bound_by_double_support(left, right, direction="toward")
    assert n == 3  # the left strike at 1.08 and the right strikes at 0.58 and 1.58
    assert l2[1][0] == pytest.approx(1.02) and l2[1][1:] == left[1][1:]
    assert r2[0][0] == pytest.approx(0.62 - 0.08) and r2[1][0] == pytest.approx(1.62 - 0.08)
    # a strike already early enough, and walking away, are left alone
    early = [(0.08, 0.62, 2, 19, True, True), (0.98, 1.62, 29, 49, True, True)]
    assert bound_by_double_support(early, right, direction="toward")[0][1] == early[1]
    # walking away the strikes are not the late events: they stay
    l3, r3, _ = bound_by_double_support(left, right, direction="away")
    assert [iv[0] for iv in l3 + r3] == [iv[0] for iv in left + right]
    assert bound_by_double_support(left, right, direction="toward", min_double_support_fraction=0.0) == (left, right, 0)


def test_bound_never_moves_a_strike_before_the_feet_own_last_foot_off():
    # The other foot's off comes so soon after this foot's own off that the
    # bound would put the strike before the foot had even left: not moved.
    left = [(0.0, 0.95, 0, 28, True, True), (1.0, 1.6, 30, 48, True, True)]
    right = [(0.5, 1.02, 15, 31, True, True), (1.5, 2.0, 45, 60, True, True)]
    l2, _, _ = bound_by_double_support(left, right, direction="toward")
    assert l2[1] == left[1]
    with pytest.raises(LeanVideoError, match="min_double_support_fraction must lie in 0..0.25"):
        bound_by_double_support(left, right, direction="toward", min_double_support_fraction=0.3)


def test_early_foot_off_walking_away_is_bounded_by_a_minimum_double_support():
    # Walking away the toe leaves hidden behind the heel and foot offs are found
    # early: the right foot was found leaving at 1.05 s, only 0.03 s after the
    # left landed at 1.02 s. With at least 8 % of the 1.0 s stride it leaves
    # no earlier than 1.10 s; an off already late enough stays.
    left = [(0.02, 0.55, 1, 17, True, True), (1.02, 1.55, 31, 47, True, True)]
    right = [(0.50, 1.05, 15, 32, True, True), (1.50, 2.15, 45, 65, True, True)]
    l2, r2, n = bound_by_double_support(left, right, direction="away")
    assert r2[0][1] == pytest.approx(1.10) and r2[0][0] == right[0][0]
    assert r2[1] == right[1]                             # no left strike after 1.50 is seen: left alone
    # the left offs at 0.55 and 1.55 were 0.05 s after the right strikes at 0.50 and 1.50
    assert l2[0][1] == pytest.approx(0.58) and l2[1][1] == pytest.approx(1.58) and n == 3


# --- boundary checks of the whole stage (review of 2026-12-03) ------------------

def test_pad_time_gaps_inserts_missing_samples_only_beyond_the_gap_limit():
    from lean_video.gait_clean import pad_time_gaps
    t = np.r_[np.arange(10) / 30, np.arange(20, 30) / 30]      # 9 frames (0.3 s) missing
    padded, real = pad_time_gaps(t, max_gap_s=0.1)
    assert real.sum() == 20 and len(padded) == 30
    np.testing.assert_allclose(padded, np.arange(30) / 30, atol=1e-12)
    short = np.r_[np.arange(10) / 30, np.arange(12, 20) / 30]  # one frame missing: left alone
    padded, real = pad_time_gaps(short, max_gap_s=0.1)
    assert real.all() and len(padded) == len(short)


def test_frames_missing_from_the_table_are_a_gap_like_rows_without_a_person():
    # Keypoints from another source may leave out frames without a person. Before,
    # a phase spanning the jump was measured from the one frame beside it.
    w = make_walk(direction="toward", noise_px=0.5, seed=1)
    kp = w.keypoints
    cut = kp[(kp["frame"] < 60) | (kp["frame"] > 75)]
    hidden = kp.assign(x_px=np.where((kp["frame"] >= 60) & (kp["frame"] <= 75), np.nan, kp["x_px"]))
    a = analyse_keypoints(cut, width=w.width, height=w.height)
    b = analyse_keypoints(hidden, width=w.width, height=w.height)
    pd.testing.assert_frame_equal(a.strides, b.strides)
    assert len(a.frames) == cut["frame"].nunique() and (a.frames["frame"] >= 0).all()
    assert a.summary["quality"]["time_gaps_s"] == [pytest.approx(17 / 30, abs=1e-3)]
    assert any("skip time" in x for x in a.summary["quality"]["warnings"])
    assert set(a.events["frame"]) <= set(cut["frame"])


def test_results_do_not_depend_on_where_the_clock_starts():
    # A run of exactly a minimum duration was kept or not depending on float rounding.
    w = make_walk(direction="toward", noise_px=0.5, seed=1)
    a = analyse_keypoints(w.keypoints, width=w.width, height=w.height)
    b = analyse_keypoints(w.keypoints.assign(time_s=w.keypoints["time_s"] + 1000.0), width=w.width, height=w.height)
    assert len(a.strides) == len(b.strides) and len(a.events) == len(b.events)
    np.testing.assert_allclose(b.strides["start_s"] - 1000.0, a.strides["start_s"], atol=1e-6)


@pytest.mark.parametrize("option, value, message", [
    ("max_phase_s", float("nan"), r"max_phase_s must lie in \(0, 5\] \(a finite number\), got nan; use 1.0"),
    ("max_gap_s", float("nan"), r"max_gap_s must lie in \[0, 1\]"),
    ("max_missing_fraction", 1.0, r"max_missing_fraction must lie in \[0, 1\)"),
    ("footprint_tolerance", float("inf"), r"footprint_tolerance must lie in \[0, 0.2\]"),
    ("max_jitter_ratio", 0.5, r"max_jitter_ratio must be >= 1"),
    ("camera_roll_deg", "2", r"camera_roll_deg must lie in \[-45, 45\] \(a finite number\), got '2'"),
    ("cutoff_hz", 0.0, r"cutoff_hz must be positive"),
    ("min_phase_s", 1.5, r"min_phase_s must be below max_phase_s, got 1.5 and 1.0"),
])
def test_every_numeric_option_is_checked_by_name(option, value, message):
    w = make_walk(start_m=3.0, end_m=2.0)
    with pytest.raises(LeanVideoError, match=message):
        analyse_keypoints(w.keypoints, width=w.width, height=w.height, **{option: value})


def test_cutoff_at_or_above_half_the_frame_rate_is_refused():
    # It used to leave the data unfiltered while the settings said filtered.
    w = make_walk(fps=10.0, start_m=5.0, end_m=2.0)
    with pytest.raises(LeanVideoError, match=r"cutoff_hz must lie below half the clip's frame rate \(5.0 Hz at 10.0 fps\), got 6"):
        analyse_keypoints(w.keypoints, width=w.width, height=w.height)
    w = make_walk(start_m=3.0, end_m=2.0)
    with pytest.raises(LeanVideoError, match="event_cutoff_hz must lie below half"):
        analyse_keypoints(w.keypoints, width=w.width, height=w.height, event_cutoff_hz=16.0)
    with pytest.raises(LeanVideoError, match=r"time_s must be in seconds.*milliseconds / 1000"):
        analyse_keypoints(w.keypoints.assign(time_s=w.keypoints["time_s"] * 1000), width=w.width, height=w.height)


def test_table_errors_name_what_is_wrong():
    w = make_walk(start_m=3.0, end_m=2.0)
    with pytest.raises(LeanVideoError, match="keypoints must be a pandas DataFrame .* got ndarray"):
        analyse_keypoints(w.keypoints.to_numpy(), width=w.width, height=w.height)
    no_hip = w.keypoints[w.keypoints["landmark"] != "right_hip"]
    with pytest.raises(LeanVideoError, match="never hold a usable right_hip"):
        analyse_keypoints(no_hip, width=w.width, height=w.height)
    bad_frame = w.keypoints.astype({"frame": float})
    bad_frame.loc[5, "frame"] = np.nan
    with pytest.raises(LeanVideoError, match="frame must hold whole frame numbers"):
        analyse_keypoints(bad_frame, width=w.width, height=w.height)


def test_rest_points_use_speed_so_dropped_frames_do_not_look_like_motion():
    # A foot point creeping at a steady 6 px/s; the phone dropped three frames. The
    # moves across the holes are twice and three times as long, but the speed is the
    # same: the point is equally still throughout, so every sample can be "at rest".
    from lean_video.gait_events import _rest_points

    t = np.delete(np.arange(0, 2, 1 / 30), [20, 33, 34])
    track = _resting_foot(t)
    for name in ("left_heel", "left_ankle", "left_foot_index"):
        track[name][:, 1] = 700.0 + 6.0 * t
    iv = [(0.0, t[-1], 0, len(t), True, True)]
    rest = list(_rest_points(track, t, "left", iv))
    # each of the three foot points is judged (an empty result would assert nothing)
    assert [name for _, name, *_ in rest] == ["left_heel", "left_ankle", "left_foot_index"]
    for _, name, seen, p, speed, still in rest:
        assert len(seen) == len(t)
        assert speed == pytest.approx(np.full(len(t) - 1, 6.0), rel=1e-9)


def test_foot_standing_still_before_walking_is_in_contact():
    # A foot standing still for 1.5 s, then walking: stance 0.6 s and swing 0.4 s, swing
    # speed peaking at 1.0 (normalised), at rest noise up to 0.06 of it (the pose model's
    # feet standing, measured on a rendered standing start). With no swing within the
    # 1.2 s window the local swing speed is only the noise, and the thresholds (a fifth
    # and three tenths of it) would read the still foot as moving; the scale kept at a
    # quarter of the clip's typical swing speed leaves it in contact throughout.
    from lean_video.gait_events import detect_contacts

    fps = 30.0
    t = np.arange(0, 6.0, 1 / fps)
    rng = np.random.default_rng(5)
    speed = rng.uniform(0.0, 0.06, len(t))
    walking = t >= 1.5
    phase = np.mod(t - 1.5, 1.0)
    swing = walking & (phase >= 0.6)
    speed[swing] = np.sin(np.pi * (phase[swing] - 0.6) / 0.4)
    contact, intervals = detect_contacts({"centroid": speed}, t)
    assert contact[t < 1.5].all()
    assert intervals[0][0] == t[0] and not intervals[0][4]  # seen from the first frame: strike unseen
    assert intervals[0][1] == pytest.approx(2.1, abs=0.05)  # first foot off at the first swing
    # without the floor the still foot leaves contact somewhere in the first second
    contact_old, _ = detect_contacts({"centroid": speed}, t, min_peak_fraction=0.0)
    assert not contact_old[t < 1.0].all()
    # walking itself is read the same either way
    assert (contact[t > 2.5] == contact_old[t > 2.5]).all()
