"""Standing posture at the start of a clip, on hand-made frame and keypoint tables."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from lean_video.errors import LeanVideoError
from lean_video.pose import LANDMARK_NAMES
from lean_video.posture import standing_posture


def _tables(still_s: float, *, fps: float = 30.0, total_s: float = 4.0, lean: float = 3.0):
    t = np.arange(0, total_s, 1 / fps)
    walking = t >= still_s
    # Hips move 100 px/s once walking (body about 500 px tall), not at all before.
    hip_x = 300 + np.where(walking, (t - still_s) * 100.0, 0.0)
    rows = []
    for i, ti in enumerate(t):
        for name in LANDMARK_NAMES:
            x, y = hip_x[i], 500.0
            if "shoulder" in name:
                y = 300.0
            elif "heel" in name:
                y = 710.0
            rows.append((i, ti, name, x + (10 if name.startswith("left") else -10), y, 0.0, 1.0, 1.0))
    kp = pd.DataFrame(rows, columns=["frame", "time_s", "landmark", "x_px", "y_px", "z", "visibility", "presence"])
    frames = pd.DataFrame({"frame": np.arange(len(t)), "time_s": t,
                           "trunk_lean_deg": np.where(walking, 8.0, lean),
                           "pelvic_obliquity_deg": np.where(walking, -2.0, 1.0),
                           "left_contact": ~walking | (np.arange(len(t)) % 2 == 0),
                           "right_contact": ~walking, "valid": True})
    return frames, kp


def test_standing_start_is_measured_apart_from_walking():
    frames, kp = _tables(1.5)
    out = standing_posture(frames, kp)
    assert out is not None
    assert out["duration_s"] == pytest.approx(1.5, abs=0.1)
    assert out["lean_deg"] == pytest.approx(3.0)
    assert out["pelvic_obliquity_deg"] == pytest.approx(1.0)


def test_short_pause_is_not_reported():
    frames, kp = _tables(0.5)
    assert standing_posture(frames, kp) is None


def test_walking_from_the_first_frame_gives_none():
    frames, kp = _tables(0.0)
    assert standing_posture(frames, kp) is None


def test_parameters_validated():
    frames, kp = _tables(1.5)
    with pytest.raises(LeanVideoError, match="must be positive"):
        standing_posture(frames, kp, min_still_s=0)


def _jitter_and_late_contact(frames, kp, *, jitter_px: float, late_s: float, seed: int = 3):
    """Hip points jittering from frame to frame, and both feet seen in contact only from ``late_s``."""
    rng = np.random.default_rng(seed)
    kp = kp.copy()
    hips = kp["landmark"].isin(["left_hip", "right_hip"])
    kp.loc[hips, "x_px"] += rng.uniform(-jitter_px, jitter_px, hips.sum())
    frames = frames.copy()
    early = frames["time_s"] < late_s
    frames.loc[early, "left_contact"] = False
    return frames, kp


def test_hip_jitter_of_a_far_client_still_counts_as_standing():
    # +-1.5 px frame to frame on a client 500 px tall: as a frame-to-frame speed that is up
    # to 90 px/s, 0.18 body heights per second (over the 0.05 limit); the speed over 0.3 s
    # stays near 10 px/s, so the stretch is still found.
    frames, kp = _tables(1.5)
    frames, kp = _jitter_and_late_contact(frames, kp, jitter_px=1.5, late_s=0.0)
    out = standing_posture(frames, kp)
    assert out is not None and out["duration_s"] == pytest.approx(1.4, abs=0.1)


def test_still_stretch_may_begin_a_little_after_the_first_frame():
    # A foot in contact from the first frame has no strike to start its contact, so the
    # first few frames can miss it: a stretch that begins within MAX_START_S still opens
    # the clip, one that begins later does not.
    from lean_video.posture import MAX_START_S

    frames, kp = _tables(1.8)
    late, _ = _jitter_and_late_contact(frames, kp, jitter_px=0.0, late_s=MAX_START_S - 0.1)
    out = standing_posture(late, kp)
    assert out is not None and out["start_s"] == pytest.approx(MAX_START_S - 0.1, abs=0.04)
    assert out["lean_deg"] == pytest.approx(3.0)
    later, _ = _jitter_and_late_contact(frames, kp, jitter_px=0.0, late_s=MAX_START_S + 0.1)
    assert standing_posture(later, kp) is None
