"""Gait stage on the rendered truth clips' own keypoints (no pose model involved).

demo_clips/<name>.truth.json (written by tools/synth) holds, per frame, the
true image positions of the body points (``per_frame.image_px``), the true
events, single-support phases and angles. Feeding the true image positions to
analyse_keypoints isolates the gait stage's own error from the pose model's.
Skipped where the clips are not there.
"""

import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from lean_video.gait import analyse_keypoints

try:
    from tests.gait_walker import match_events
except ImportError:  # tests/ not a package: pytest puts tests/ itself on sys.path
    from gait_walker import match_events

CLIPS = Path(__file__).resolve().parents[1] / "demo_clips"
TRUTHS = sorted(CLIPS.glob("*.truth.json"))


def _keypoints(d):
    pf = d["per_frame"]
    rows = []
    for name, xy in pf["image_px"].items():
        xy = np.asarray(xy, float)
        rows.append(pd.DataFrame({"frame": pf["frame"], "time_s": pf["time_s"], "landmark": name,
                                  "x_px": xy[:, 0], "y_px": xy[:, 1], "z": 0.0,
                                  "visibility": 1.0, "presence": 1.0}))
    return pd.concat(rows, ignore_index=True)


@pytest.fixture(scope="module", params=TRUTHS, ids=[p.name.split(".")[0] for p in TRUTHS])
def clip(request):
    d = json.loads(request.param.read_text())
    r = analyse_keypoints(_keypoints(d), width=d["video"]["upright_width_px"],
                          height=d["video"]["upright_height_px"],
                          camera_roll_deg=d["camera"].get("roll_deg", 0.0))
    return d, r


if not TRUTHS:
    pytestmark = pytest.mark.skip(reason="no demo_clips/*.truth.json (render them with tools/synth)")


def test_direction(clip):
    d, r = clip
    assert r.summary["direction"] == d["direction"]


# Measured on the four HP-014 sessions (toward, 30 fps): foot strike median
# -9..0 ms, max 21 ms; foot off median +58..+64 ms, max 81 ms (the toe slides
# forward along the floor after foot off and moves only 1-2 px per frame in a
# frontal view, see lean_video.gait_events). Issue target: median <= 33 ms.
def test_event_timing(clip):
    d, r = clip
    t_end = d["per_frame"]["time_s"][-1]
    fps = d["fps"]
    for event, key, med_ms in (("foot_strike", "foot_strike_s", 33), ("foot_off", "foot_off_s", 90)):
        truth = pd.DataFrame([(t, side, event) for side in ("left", "right")
                              for t in d["events"][key][side] if 0.1 < t < t_end - 0.1],
                             columns=["time_s", "side", "event"])
        err, missed = match_events(r.events[r.events["event"] == event], truth, max_s=0.2)
        assert missed <= 1
        assert abs(np.median(err)) * 1000 <= med_ms
        assert np.max(np.abs(err)) <= 4.0 / fps


# Measured: 9-10 of 10-11 complete phases; per-side mean lean 0.1-0.8 deg and
# pelvic drop 0.3-0.6 deg above the truth (phases start late, see above).
def test_phases_and_angles(clip):
    d, r = clip
    ss = pd.DataFrame(d["single_support"])
    ss = ss[ss["complete"]]
    hits = 0
    for _, p in ss.iterrows():
        mid = (p["start_s"] + p["end_s"]) / 2
        h = r.strides[(r.strides["start_s"] < mid) & (r.strides["end_s"] > mid)]
        hits += int(len(h) == 1 and h["stance_side"].iloc[0] == p["stance_side"])
    assert hits >= len(ss) - 1
    for side in ("left", "right"):
        s, t = r.summary["sides"][side], ss[ss["stance_side"] == side]
        assert s["lean_mean_deg"] == pytest.approx(t["mean_lean_toward_stance_deg"].mean(), abs=1.0)
        assert s["pelvic_drop_mean_deg"] == pytest.approx(t["mean_pelvic_drop_deg"].mean(), abs=1.5)
