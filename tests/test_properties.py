"""Property tests (hypothesis): damaged keypoint tracks and extreme inputs never crash the
gait and mechanics stages, and never give a NaN in a summary without a warning."""

from __future__ import annotations

import json
import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from lean_video.errors import LeanVideoError
from lean_video.gait import analyse_keypoints
from lean_video.mechanics import hip_model_table
from tests.gait_walker import make_walk

BASE = make_walk(noise_px=0.5, seed=11)


def _nones(value, path=""):
    """Paths of every None inside a JSON-like structure."""
    if value is None:
        yield path
    elif isinstance(value, dict):
        for k, v in value.items():
            yield from _nones(v, f"{path}.{k}")
    elif isinstance(value, list):
        for i, v in enumerate(value):
            yield from _nones(v, f"{path}[{i}]")


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    drop_fraction=st.floats(0.0, 0.6),
    nan_fraction=st.floats(0.0, 0.4),
    gap_start=st.floats(0.0, 1.0),
    gap_len_s=st.floats(0.0, 2.0),
    jitter_s=st.floats(0.0, 0.012),
    scale=st.sampled_from([1e-3, 1.0, 1e3]),
    seed=st.integers(0, 10_000),
)
def test_gait_survives_damage(drop_fraction, nan_fraction, gap_start, gap_len_s, jitter_s, scale, seed):
    rng = np.random.default_rng(seed)
    kp = BASE.keypoints.copy()
    frames = kp["frame"].unique()
    times = kp.groupby("frame")["time_s"].first()
    # Irregular timestamps (kept increasing), dropped frames, a long gap and scattered NaNs.
    new_t = times.to_numpy() + rng.uniform(-jitter_s, jitter_s, len(times))
    new_t = np.maximum.accumulate(new_t + np.arange(len(new_t)) * 1e-6)
    kp["time_s"] = kp["frame"].map(dict(zip(times.index, new_t)))
    dropped = frames[rng.random(len(frames)) < drop_fraction]
    t0 = new_t[0] + gap_start * (new_t[-1] - new_t[0])
    gap = (kp["time_s"] >= t0) & (kp["time_s"] < t0 + gap_len_s)
    mask = kp["frame"].isin(dropped) | gap | (rng.random(len(kp)) < nan_fraction)
    kp.loc[mask, ["x_px", "y_px", "visibility"]] = np.nan
    kp[["x_px", "y_px"]] *= scale
    try:
        result = analyse_keypoints(kp, width=max(1, int(BASE.width * scale)), height=max(1, int(BASE.height * scale)))
    except LeanVideoError as exc:
        assert str(exc) and "\n" not in str(exc)
        return
    text = json.dumps(result.summary, allow_nan=False)  # a NaN or inf here raises
    assert text
    missing = [p for p in _nones(result.summary) if not p.startswith(".settings")]
    if missing:
        assert result.summary["quality"]["warnings"], f"None without a warning: {missing[:5]}"
    for col in ("lean_mean_deg", "duration_s"):
        assert result.strides[col].notna().all()


@settings(max_examples=60, deadline=None)
@given(
    lean=st.one_of(st.floats(-90, 90), st.sampled_from([math.nan, math.inf, -math.inf])),
    drop=st.floats(-40, 40),
    mass=st.one_of(st.none(), st.floats(-100, 1000)),
    height=st.floats(-1, 5),
    cane=st.floats(-10, 80),
)
def test_hip_model_never_returns_nan(lean, drop, mass, height, cane):
    # The input limits the hip model documents (mechanics_params: lean +-30 deg, drop +-20 deg,
    # mass 20-300 kg, height 1-2.3 m, cane 0-50 % BW). Inside them a refusal is a defect, so a
    # model that refused everything cannot pass here.
    in_range = (math.isfinite(lean) and abs(lean) <= 30 and abs(drop) <= 20 and 1.0 <= height <= 2.3
                and 0 <= cane <= 50 and (mass is None or 20 <= mass <= 300))
    try:
        rows = hip_model_table([lean], mass_kg=mass, height_m=height, pelvic_drop_deg=drop, cane_pct_bw=cane)
    except LeanVideoError as exc:
        assert str(exc) and "\n" not in str(exc)
        assert not in_range, f"refused inputs inside the documented limits: {exc}"
        return
    assert in_range, "accepted inputs outside the documented limits"
    assert len(rows) == 1
    for row in rows:
        for key, value in row.items():
            assert value is not None and math.isfinite(value), (key, value)


def test_property_base_walk_is_analysable():
    # Guard: the undamaged walk itself must analyse, or the properties above test nothing.
    result = analyse_keypoints(BASE.keypoints, width=BASE.width, height=BASE.height)
    assert result.summary["sides"]["left"]["n_phases"] >= 3
    assert isinstance(result.strides, pd.DataFrame)


@pytest.mark.parametrize("bad_time", [np.nan, np.inf])
def test_non_finite_timestamps_are_refused(bad_time):
    # A result from a clock that is not finite would have no meaning in seconds: refused, by name.
    kp = BASE.keypoints.copy()
    kp.loc[kp["frame"] == 5, "time_s"] = bad_time
    with pytest.raises(LeanVideoError, match=r"keypoints time_s must be finite and strictly increasing"):
        analyse_keypoints(kp, width=BASE.width, height=BASE.height)


_FRAME, _TIME, _TRACK = None, None, None


def _walker_track():
    """The noisy walker's track, labelled as the model would (made once)."""
    global _FRAME, _TIME, _TRACK
    if _TRACK is None:
        from lean_video.gait_clean import keypoints_to_track

        _FRAME, _TIME, _TRACK = keypoints_to_track(BASE.keypoints)
    return _TIME, _TRACK


@settings(max_examples=40, deadline=None)
@given(data=st.data())
def test_label_repair_never_leaves_a_wrong_label(data):
    """Short flips (1-10 frames) and frames with both legs merged, placed at random at least 6
    frames apart and away from the ends of the walk (a flip there has one edge only, see
    repair_swaps): every label left standing is right, only merged frames (or their
    neighbours) are blanked, and the count returned says how many."""
    from lean_video.gait_clean import SWAP_GROUPS, PAIRS, repair_swaps

    t, track = _walker_track()
    n = len(t)
    bad = {k: v.copy() for k, v in track.items()}
    legs = [name for part in SWAP_GROUPS["legs"] for name in PAIRS[part]]
    pos, merged = 5, []
    while True:
        pos += data.draw(st.integers(6, 40), label="clean frames")
        kind = data.draw(st.sampled_from(["flip", "merge"]), label="damage")
        length = data.draw(st.integers(1, 10), label="flip length") if kind == "flip" else 1
        if pos + length + 5 >= n:
            break
        for part in SWAP_GROUPS["legs"]:
            a, b = PAIRS[part]
            seg = slice(pos, pos + length)
            if kind == "flip":
                bad[a][seg], bad[b][seg] = track[b][seg], track[a][seg]
            else:
                mid = (track[a][seg] + track[b][seg]) / 2
                bad[a][seg], bad[b][seg] = mid + (0.5, 0.0), mid - (0.5, 0.0)
                merged.append(pos)
        pos += length
    fixed, _, blanked = repair_swaps(bad, t)
    lost = np.zeros(n, bool)
    for name in legs:
        gone = np.isnan(fixed[name]).any(axis=1) & np.isfinite(track[name]).all(axis=1)
        lost |= gone
        kept = ~gone
        assert np.allclose(fixed[name][kept], track[name][kept], equal_nan=True), name  # no wrong label
    near_merge = np.zeros(n, bool)
    for m in merged:
        near_merge[max(m - 1, 0):m + 2] = True
    assert not (lost & ~near_merge).any()          # nothing blanked away from a merged frame
    assert all(lost[m] for m in merged)            # every merged frame blanked
    assert blanked == int(lost.sum())              # only the legs were damaged: one blank per lost frame
    for name in (n_ for part in SWAP_GROUPS["torso"] for n_ in PAIRS[part]):
        assert np.allclose(fixed[name], track[name], equal_nan=True), name  # the torso was never touched
