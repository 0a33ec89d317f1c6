"""Single-support phases from contacts, and per-side statistics, on small known answers."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from lean_video.gait_phases import PARTIAL_PHASE, cadence_steps_per_min, ci95, phases_from_contacts

FPS = 30.0


def _contacts(strikes, stance_s, *, clip_end_s):
    """Contact tuples (strike_s, off_s, first_frame, last_frame, strike_seen, off_seen)."""
    out = []
    for s in strikes:
        off = s + stance_s
        out.append((s, min(off, clip_end_s), int(round(s * FPS)), int(round(min(off, clip_end_s) * FPS)),
                    s > 0.0, off < clip_end_s))
    return out


def _walk():
    # A 1.2 s stride, stance 60 % of it (Perry & Burnfield 2010, Gait Analysis, 2nd ed.: stance about
    # 60 % of the cycle, from memory): the right foot strikes at 0, 1.2, 2.4, 3.6 s, the left half a
    # stride later; each stays 0.72 s. Single support: the other foot's off -> its next strike, 0.48 s.
    t = np.arange(0.0, 4.0, 1.0 / FPS)
    intervals = {"right": _contacts([0.0, 1.2, 2.4, 3.6], 0.72, clip_end_s=4.0),
                 "left": _contacts([0.6, 1.8, 3.0], 0.72, clip_end_s=4.0)}
    lean = np.full(t.size, 3.0)    # shoulders 3 deg toward the client's right throughout
    obliq = np.full(t.size, 2.0)   # left hip 2 deg lower throughout
    return phases_from_contacts(intervals, t, lean, obliq, min_phase_s=0.2, max_phase_s=1.0,
                                max_missing_fraction=0.2, frame_s=1.0 / FPS)


def test_phases_are_other_foot_off_to_its_next_strike():
    strides, drops = _walk()
    expected = [("left", 0.72, 1.2), ("right", 1.32, 1.8), ("left", 1.92, 2.4), ("right", 2.52, 3.0),
                ("left", 3.12, 3.6)]
    got = [(r.stance_side, r.start_s, r.end_s) for r in strides.itertuples()]
    assert [g[0] for g in got] == [e[0] for e in expected]
    assert np.allclose([g[1:] for g in got], [e[1:] for e in expected])
    assert np.allclose(strides["duration_s"], 0.48)
    # the left foot's last swing has no strike in the clip: a partial phase, said so
    assert len(drops) == 1 and drops[0]["stance_side"] == "right" and drops[0]["reason"].startswith(PARTIAL_PHASE)


def test_lean_toward_stance_and_drop_of_swing_side_signs():
    strides, _ = _walk()
    right = strides[strides["stance_side"] == "right"]
    left = strides[strides["stance_side"] == "left"]
    # leaning toward the client's right is toward the right stance leg, away from the left
    assert np.allclose(right["lean_mean_deg"], 3.0) and np.allclose(left["lean_mean_deg"], -3.0)
    # the left hip lower is a drop of the swing side when the left leg swings (right stance)
    assert np.allclose(right["pelvic_drop_mean_deg"], 2.0) and np.allclose(left["pelvic_drop_mean_deg"], -2.0)


def test_phase_with_the_stance_foot_lifted_is_dropped():
    t = np.arange(0.0, 4.0, 1.0 / FPS)
    intervals = {"right": _contacts([0.0, 1.2, 2.4, 3.6], 0.72, clip_end_s=4.0),
                 "left": _contacts([0.6, 1.8, 3.0], 0.3, clip_end_s=4.0)}  # left contacts far too short
    strides, drops = phases_from_contacts(intervals, t, np.zeros(t.size), np.zeros(t.size), min_phase_s=0.2,
                                          max_phase_s=1.0, max_missing_fraction=0.2, frame_s=1.0 / FPS)
    assert "left" not in set(strides["stance_side"])
    assert any(d["reason"] == "stance foot not seen in contact for the whole phase" for d in drops)


def test_ci95_matches_scipy_t_interval():
    # Reference: scipy.stats.t.interval (Student's t), a general-purpose reference library.
    x = np.array([4.1, 5.3, 3.8, 6.0, 4.9, 5.5])
    mean, sd, (lo, hi) = ci95(x)
    ref = stats.t.interval(0.95, x.size - 1, loc=x.mean(), scale=stats.sem(x))
    assert mean == pytest.approx(x.mean()) and sd == pytest.approx(x.std(ddof=1))
    assert (lo, hi) == pytest.approx(ref)
    assert ci95(np.array([2.0])) == (2.0, None, None) and ci95(np.array([])) == (None, None, None)


def test_cadence_from_strike_intervals():
    strikes = pd.DataFrame({"time_s": np.arange(0.0, 5.0, 0.5), "event": "foot_strike"})
    assert cadence_steps_per_min(strikes) == pytest.approx(120.0)   # one step every 0.5 s
    assert cadence_steps_per_min(strikes.iloc[:1]) is None
