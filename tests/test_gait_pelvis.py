"""Pelvic obliquity from the two pelvis markers (lean_video.gait_pelvis) and its use in the gait stage."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from lean_video.gait import analyse_keypoints
from lean_video.gait_pelvis import line_obliquity_deg, marker_obliquity, marker_track

try:
    from tests.gait_walker import make_walk
except ImportError:  # tests/ not a package: pytest puts tests/ itself on sys.path
    from gait_walker import make_walk

COLUMNS = ["frame", "time_s", "landmark", "x_px", "y_px", "z", "visibility", "presence"]


def _markers(frames, time_s, a_xy, b_xy, *, names=("left_pelvis_marker", "right_pelvis_marker")):
    rows = []
    for f, t, a, b in zip(frames, time_s, a_xy, b_xy):
        for name, (x, y) in zip(names, (a, b)):
            seen = bool(np.isfinite(x) and np.isfinite(y))
            rows.append((f, t, name, x, y, np.nan, 1.0 if seen else 0.0, np.nan))
    return pd.DataFrame(rows, columns=COLUMNS)


def test_table_without_markers_gives_none():
    kp = pd.DataFrame([(0, 0.0, "left_hip", 1.0, 2.0, 0.0, 1.0, 1.0)], columns=COLUMNS)
    assert marker_track(kp, np.array([0])) is None
    assert marker_obliquity(kp, np.array([0]), np.array([0.0]), direction="toward") is None


def test_track_orders_by_image_x_and_hides_half_pairs():
    frames = np.arange(3)
    a = np.array([[300.0, 100.0], [100.0, 100.0], [np.nan, np.nan]])
    b = np.array([[100.0, 110.0], [300.0, 110.0], [300.0, 110.0]])
    pair = marker_track(_markers(frames, frames / 30.0, a, b), frames)
    assert pair.shape == (3, 2, 2)
    np.testing.assert_allclose(pair[0], [[100.0, 110.0], [300.0, 100.0]])  # labels swapped: re-ordered
    np.testing.assert_allclose(pair[1], [[100.0, 100.0], [300.0, 110.0]])
    assert np.isnan(pair[2]).all()  # one marker alone is no pelvis line


@pytest.mark.parametrize("direction, sign", [("toward", 1.0), ("away", -1.0)])
def test_known_tilt_and_side_by_direction(direction, sign):
    # Image-right marker 10 px lower over 200 px: atan(10/200) = 2.862 deg. Walking
    # toward, the image right is the client's left, so the left side is lower (+).
    n = 40
    t = np.arange(n) / 30.0
    a = np.tile([200.0, 300.0], (n, 1))
    b = np.tile([400.0, 310.0], (n, 1))
    m = marker_obliquity(_markers(np.arange(n), t, a, b), np.arange(n), t, direction=direction)
    np.testing.assert_allclose(m.obliquity_deg, sign * math.degrees(math.atan2(10, 200)), atol=1e-6)
    assert m.seen_fraction == 1.0


@pytest.mark.parametrize("roll_deg", [-4.0, 2.5])
def test_camera_roll_is_removed(roll_deg):
    # A level pelvis filmed with a rolled camera: its image line is turned clockwise by the roll.
    r = math.radians(roll_deg)
    centre = np.array([300.0, 300.0])
    half = 100.0 * np.array([math.cos(r), math.sin(r)])
    n = 30
    t = np.arange(n) / 30.0
    m = marker_obliquity(_markers(np.arange(n), t, np.tile(centre - half, (n, 1)), np.tile(centre + half, (n, 1))),
                         np.arange(n), t, direction="toward", camera_roll_deg=roll_deg)
    np.testing.assert_allclose(m.obliquity_deg, 0.0, atol=1e-6)
    assert line_obliquity_deg(np.array([[0.0, 0.0]]), np.array([[-100.0, 0.0]]))[0] == pytest.approx(0.0)


def test_irregular_timestamps_and_long_gaps():
    rng = np.random.default_rng(3)
    n = 90
    t = np.cumsum(rng.uniform(0.025, 0.045, n))
    a = np.tile([200.0, 300.0], (n, 1)).astype(float)
    b = np.column_stack([np.full(n, 400.0), 300.0 + 20.0 * np.sin(2 * np.pi * 0.8 * t)])  # slow 0.8 Hz tilt
    b[40:52] = np.nan      # about 0.4 s hidden: stays missing
    b[70:72] = np.nan      # about 0.07 s: filled
    m = marker_obliquity(_markers(np.arange(n), t, a, b), np.arange(n), t, direction="away", max_gap_s=0.1)
    assert np.isnan(m.obliquity_deg[42:50]).all()
    assert np.isfinite(m.obliquity_deg[70:72]).all()
    truth = -np.degrees(np.arctan2(b[:, 1] - 300.0, 200.0))
    ok = np.isfinite(b[:, 1])
    ok[:5] = ok[-5:] = False  # filter edges
    # 6 Hz zero-lag low-pass of a 0.8 Hz tilt: within 0.15 deg of the unfiltered tilt
    assert np.nanmax(np.abs(m.obliquity_deg[ok] - truth[ok])) < 0.15
    assert m.seen_fraction == pytest.approx((n - 14) / n)


def _walk_with_markers(hide_phase: int | None = None):
    """The synthetic walker with its hip points made level (as a pose model's can be wrong)
    and two markers 25 px above the true hips; the markers carry the true obliquity."""
    w = make_walk(drop_amp_deg=(3.0, 6.0), lean_amp_deg=(2.0, 5.0))
    kp = w.keypoints.copy()
    frames = np.sort(kp["frame"].unique())
    hips = {s: kp[kp["landmark"] == f"{s}_hip"].sort_values("frame")[["x_px", "y_px"]].to_numpy()
            for s in ("left", "right")}
    a, b = hips["left"] - [0.0, 25.0], hips["right"] - [0.0, 25.0]
    if hide_phase is not None:
        ph = w.phases.iloc[hide_phase]
        hidden = (w.time_s >= ph["start_s"] - 0.1) & (w.time_s <= ph["end_s"] + 0.1)
        a[hidden] = np.nan
    mid = (hips["left"][:, 1] + hips["right"][:, 1]) / 2
    for s in ("left", "right"):
        sel = kp["landmark"] == f"{s}_hip"
        kp.loc[sel, "y_px"] = pd.Series(mid, index=kp[sel].sort_values("frame").index)
    kp = pd.concat([kp, _markers(frames, w.time_s, a, b)], ignore_index=True)
    return w, kp


def _true_drop(w, side, found):
    """The walker's true mean drop of the swing side over the phases on ``side`` that the analysis found.

    Over the found windows, not the true ones: the drop peaks mid-phase, so a found phase a few
    frames shorter than the true one has a larger true mean (the event timing is tested elsewhere).
    """
    vals = []
    for _, ph in found[found["stance_side"] == side].iterrows():
        sel = (w.time_s >= ph["start_s"]) & (w.time_s <= ph["end_s"])
        vals.append(np.mean(w.obliquity_deg[sel] * (1.0 if side == "right" else -1.0)))
    return float(np.mean(vals))


def test_gait_stage_measures_pelvic_drop_from_markers():
    w, kp = _walk_with_markers()
    r = analyse_keypoints(kp, width=w.width, height=w.height)
    assert r.summary["pelvic_obliquity_source"] == "pelvis markers"
    for side in ("left", "right"):
        # Known answer: the walker's true mean drop of the swing side over the found phases (hip
        # points are level, so only the markers can give it).
        assert r.summary["sides"][side]["n_phases"] >= 3
        # Measured within 0.01 deg (the 6 Hz filter); 0.4 allowed while true windows were compared.
        assert r.summary["sides"][side]["pelvic_drop_mean_deg"] == pytest.approx(_true_drop(w, side, r.strides),
                                                                                  abs=0.1)
    without = analyse_keypoints(kp[~kp["landmark"].str.endswith("pelvis_marker")], width=w.width, height=w.height)
    assert without.summary["pelvic_obliquity_source"] == "hip landmarks"
    assert abs(without.summary["sides"]["right"]["pelvic_drop_mean_deg"]) < 0.5


def test_phase_with_hidden_markers_keeps_its_lean_and_says_so():
    w, kp = _walk_with_markers(hide_phase=3)
    r = analyse_keypoints(kp, width=w.width, height=w.height)
    full = analyse_keypoints(_walk_with_markers()[1], width=w.width, height=w.height)
    assert len(r.strides) == len(full.strides)  # no phase lost for want of markers
    missing = r.strides[r.strides["pelvic_drop_mean_deg"].isna()]
    assert len(missing) == 1 and missing["lean_mean_deg"].notna().all()
    side = missing["stance_side"].iloc[0]
    assert r.summary["sides"][side]["n_pelvic_drop_phases"] == r.summary["sides"][side]["n_phases"] - 1
    assert any("pelvic drop is missing in 1 of" in m for m in r.summary["quality"]["warnings"])
    assert r.frames["valid"].all() == full.frames["valid"].all()
