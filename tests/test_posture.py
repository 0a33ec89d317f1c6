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
