"""Gait stage against real lab data: a marker-based treadmill trial, seen by a virtual phone.

Data: gaitalytics 0.2.2 sdist, tests/treadmill_events.c3d (MIT, attribution in
tests/data/gait_lab_treadmill.LICENSE), reduced to tests/data/gait_lab_treadmill.npz
by tests/data/make_gait_lab_fixture.py. 100 Hz markers, 43 annotated foot
strikes/offs. tests/gait_lab.py builds hip joint centres (Harrington et al. 2007),
shoulders, overground walking (belt displacement added) and a level pinhole
camera at 1.2 m, f = 1000 px, 1080x1920, 30 fps; the trial is cut into three
4-s passes (pelvis from about 6.8 m to 2.5 m from the camera).

Truth: annotated events; lean/obliquity computed in 3-D in the lab's frontal
plane from the same points over the annotated single-support phases.
"""

import numpy as np
import pandas as pd
import pytest

from lean_video.gait import analyse_keypoints

try:
    from tests.gait_lab import FIXTURE, body_points, load, virtual_clip
    from tests.gait_walker import match_events
except ImportError:  # tests/ not a package: pytest puts tests/ itself on sys.path
    from gait_lab import FIXTURE, body_points, load, virtual_clip
    from gait_walker import match_events

WINDOWS = [(0.44, 4.44), (4.45, 8.45), (8.46, 12.46)]
EDGE_S = 0.15  # events/phases this close to a pass's ends cannot be judged


def _run(direction):
    time_s, m, ev = load()
    _, lean3, obl3 = body_points(m)
    errs = {"foot_strike": [], "foot_off": []}
    found, true_phases, n_true_events = [], [], 0
    for t0, t1 in WINDOWS:
        kp, t, _, _, _ = virtual_clip(time_s, m, t_start=t0, t_end=t1, direction=direction)
        r = analyse_keypoints(kp, width=1080, height=1920)
        tev = ev[(ev["time_s"] > t0 + EDGE_S) & (ev["time_s"] < t1 - EDGE_S)].copy()
        tev["time_s"] -= t0
        n_true_events += len(tev)
        for e in errs:
            err, _ = match_events(r.events[r.events["event"] == e], tev[tev["event"] == e], max_s=0.2)
            errs[e] += list(err)
        s = r.strides.copy()
        s[["start_s", "end_s"]] += t0
        found.append(s)
        win = ev[(ev["time_s"] > t0) & (ev["time_s"] < t1)]
        for stance, swing in (("left", "right"), ("right", "left")):
            sw = win[win["side"] == swing]
            for off in sw.loc[sw["event"] == "foot_off", "time_s"]:
                nxt = sw.loc[(sw["event"] == "foot_strike") & (sw["time_s"] > off), "time_s"]
                if len(nxt) and off > t0 + EDGE_S and nxt.iloc[0] < t1 - EDGE_S:
                    true_phases.append((stance, off, nxt.iloc[0]))
    truth = pd.DataFrame(true_phases, columns=["stance_side", "start_s", "end_s"])
    sign = np.where(truth["stance_side"] == "right", 1.0, -1.0)
    lean, drop = [], []
    for (_, p), sg in zip(truth.iterrows(), sign):
        sel = (time_s >= p["start_s"]) & (time_s <= p["end_s"])
        lean.append(np.mean(sg * lean3[sel]))
        drop.append(np.mean(sg * obl3[sel]))  # swing side is the other side
    truth["lean_deg"], truth["drop_deg"] = lean, drop
    return {k: np.array(v) for k, v in errs.items()}, pd.concat(found), truth, n_true_events


@pytest.fixture(scope="module", params=["toward", "away"])
def lab(request):
    if not FIXTURE.exists():
        pytest.skip("tests/data/gait_lab_treadmill.npz missing; build it with tests/data/make_gait_lab_fixture.py")
    return request.param, _run(request.param)


# Measured (this code, 30 fps virtual clip), signed error found - annotated:
#   toward: foot strike median -21 ms, max |e| 37 ms (18 of 19 inner events);
#           foot off    median +1 ms, max |e| 13 ms (19 of 19; with the toe's
#           peak upward velocity, gait_frontal; -27 ms with the foot centre's;
#           max 101 ms while the toe's peak was searched only 0.07 s past the
#           position-based foot off)
#   away:   foot strike median -15 ms, max |e| 66 ms (18 of 19);
#           foot off    median -21 ms, max |e| 67 ms (19 of 19; 41 ms before
#           version 0.2.4 took a re-timed foot off where the heel's upward
#           speed reaches 80 % of its peak rather than at the peak: the one
#           foot off re-timed here, its heel barely up, moved from -23 to
#           -67 ms, because this marker heel's speed peaked before the toe
#           left, unlike the pose model's heel, gait_frontal)
# Unmatched events sit next to the partial first/last steps of a pass.
# One frame is 33 ms. Bounds: measured plus up to half a frame.
LIMITS_MS = {("toward", "foot_strike"): (40, 55), ("toward", "foot_off"): (20, 30),
             ("away", "foot_strike"): (40, 85), ("away", "foot_off"): (40, 85)}


def test_event_timing_against_annotations(lab):
    direction, (errs, _, _, n_true) = lab
    for event, err in errs.items():
        med, mx = LIMITS_MS[(direction, event)]
        assert len(err) >= 17
        assert abs(np.median(err)) * 1000 <= med
        assert np.max(np.abs(err)) * 1000 <= mx


def test_inner_single_support_phases_found(lab):
    # Measured: toward 16 of 17 inner phases, away 15 of 17 (13 before short
    # mid-swing "contacts" were dropped; the lost phases sit next to a partial
    # step at the start/end of a pass).
    direction, (_, found, truth, _) = lab
    hits = 0
    for _, p in truth.iterrows():
        mid = (p["start_s"] + p["end_s"]) / 2
        hit = found[(found["start_s"] < mid) & (found["end_s"] > mid)]
        if len(hit):
            assert hit["stance_side"].iloc[0] == p["stance_side"]
            hits += 1
    assert hits >= (15 if direction == "toward" else 14)


def test_per_side_lean_and_drop_against_3d(lab):
    # Measured toward: lean left 1.31 vs 3-D 1.29, right -1.70 vs -1.75; drop left
    # 0.54 vs 0.48, right 2.20 vs 2.31; single support 0.405/0.414 s vs 0.416/0.427 s.
    # Away: lean 1.27 vs 1.29 and -1.73 vs -1.75; drop 0.68 vs 0.48, 2.39 vs 2.31;
    # single support 0.416/0.400 s.
    # Bounds 0.4 deg and 0.04 s (issue targets: lean 1.0 deg, obliquity 1.5 deg).
    direction, (_, found, truth, _) = lab
    for side in ("left", "right"):
        f, t = found[found["stance_side"] == side], truth[truth["stance_side"] == side]
        assert f["lean_mean_deg"].mean() == pytest.approx(t["lean_deg"].mean(), abs=0.4)
        assert f["pelvic_drop_mean_deg"].mean() == pytest.approx(t["drop_deg"].mean(), abs=0.4)
        assert f["duration_s"].mean() == pytest.approx((t["end_s"] - t["start_s"]).mean(), abs=0.04)
