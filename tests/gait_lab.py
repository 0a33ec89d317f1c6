"""Turn the lab treadmill trial into a virtual phone clip (test helper).

Source: ``tests/treadmill_events.c3d`` from the gaitalytics 0.2.2 source
distribution (MIT, see ``tests/data/gait_lab_treadmill.LICENSE``), reduced to
``tests/data/gait_lab_treadmill.npz`` by ``tests/data/make_gait_lab_fixture.py``.
Lab axes of the file: x to the subject's left, y backward, z up, millimetres,
100 Hz, 43 annotated foot strikes/offs.

Steps: hip joint centres from the pelvis markers (Harrington et al. 2007, J
Biomech 40:595-602, regression on pelvic width and depth, from memory);
shoulders by offsetting the upper-trunk centre (C7/JN midpoint) sideways,
square to the trunk line, along the thorax's mediolateral axis; treadmill to
overground by adding the belt displacement (belt speed = median backward speed
of heel and metatarsal markers near the floor); then a level pinhole camera
projects hips, shoulders, heel (HEE), ankle (malleoli midpoint) and foot index
(MT2) into a keypoint table at 30 fps.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

FIXTURE = Path(__file__).parent / "data" / "gait_lab_treadmill.npz"
SHOULDER_HALF_WIDTH_M = 0.18  # half biacromial width, adult (from memory)


def load():
    d = np.load(FIXTURE)
    names = list(d["marker_names"])
    m = {n: d["markers"][:, i].astype(float) / 1000.0 for i, n in enumerate(names)}
    events = pd.DataFrame({"time_s": d["event_time_s"], "side": d["event_side"],
                           "event": d["event_kind"]}).sort_values("time_s").reset_index(drop=True)
    return d["time_s"].astype(float), m, events


def _unit(v):
    return v / np.linalg.norm(v, axis=-1, keepdims=True)


def harrington_hjc(m):
    """Left and right hip joint centres (m), Harrington et al. 2007 (PW/PD-only equations).

    Pelvis frame: origin mid-ASIS, z toward RASIS, x anterior (in the ASIS/mid-PSIS
    plane), y up; in mm: x = -0.24 PD - 9.9, y = -0.30 PW - 10.9,
    z = +/-(0.33 PW + 7.3) (from memory).
    """
    la, ra, lp, rp = m["LASIS"], m["RASIS"], m["LPSIS"], m["RPSIS"]
    o = (la + ra) / 2
    z = _unit(ra - la)
    back = (lp + rp) / 2
    xa = o - back
    x = _unit(xa - np.sum(xa * z, axis=1, keepdims=True) * z)
    y = np.cross(z, x)
    pw = np.linalg.norm(ra - la, axis=1, keepdims=True) * 1000
    pd_ = np.linalg.norm(o - back, axis=1, keepdims=True) * 1000
    ox = (-0.24 * pd_ - 9.9) / 1000
    oy = (-0.30 * pw - 10.9) / 1000
    oz = (0.33 * pw + 7.3) / 1000
    right = o + ox * x + oy * y + oz * z
    left = o + ox * x + oy * y - oz * z
    return left, right


def body_points(m):
    """Keypoint-like 3-D points (m) in the file's lab frame, plus 3-D truth angles."""
    lh, rh = harrington_hjc(m)
    hip_mid = (lh + rh) / 2
    upper = (m["C7"] + m["JN"]) / 2
    trunk = _unit(upper - hip_mid)
    anterior = (m["JN"] + m["XIPH"]) / 2 - (m["C7"] + m["T10"]) / 2
    up = (m["C7"] + m["JN"]) / 2 - (m["T10"] + m["XIPH"]) / 2
    ml = _unit(np.cross(up, anterior))
    ml *= np.sign(np.sum(ml * (m["RASIS"] - m["LASIS"]), axis=1, keepdims=True))  # to the right
    ml = _unit(ml - np.sum(ml * trunk, axis=1, keepdims=True) * trunk)
    pts = {
        "left_hip": lh, "right_hip": rh,
        "left_shoulder": upper - SHOULDER_HALF_WIDTH_M * ml,
        "right_shoulder": upper + SHOULDER_HALF_WIDTH_M * ml,
    }
    for side, s in (("left", "L"), ("right", "R")):
        pts[f"{side}_heel"] = m[f"{s}HEE"]
        pts[f"{side}_ankle"] = (m[f"{s}LM"] + m[f"{s}MM"]) / 2
        pts[f"{side}_foot_index"] = m[f"{s}MT2"]
        pts[f"{side}_knee"] = (pts[f"{side}_hip"] + pts[f"{side}_ankle"]) / 2
    # frontal plane of the lab (x-z): lean + toward the right (-x); obliquity + left lower
    v = upper - hip_mid
    lean = np.degrees(np.arctan2(-v[:, 0], v[:, 2]))
    obl = np.degrees(np.arctan2(rh[:, 2] - lh[:, 2], np.abs(lh[:, 0] - rh[:, 0])))
    return pts, lean, obl


def belt_speed_m_s(time_s, m):
    """Median backward (+y) speed of heel/MT2 markers within 2 cm of their lowest height."""
    vals = []
    for k in ("LHEE", "RHEE", "LMT2", "RMT2"):
        p = m[k]
        vy = np.gradient(p[:, 1], time_s)
        low = p[:, 2] < np.percentile(p[:, 2], 5) + 0.02
        vals.append(vy[low])
    v = np.concatenate(vals)
    # the low-marker set also holds touch-down/lift-off samples: re-centre on the mode
    return float(np.median(v[np.abs(v - np.median(v)) < 0.15]))


def virtual_clip(time_s, m, *, t_start, t_end, direction="toward", fps=30.0,
                 cam_height_m=1.2, focal_px=1000.0, width=1080, height=1920,
                 end_distance_m=2.5, lateral_m=0.1):
    """Keypoint table of the window [t_start, t_end] seen by a level phone camera.

    Toward: the camera stands in front of the walker, the pelvis ends
    ``end_distance_m`` from it. Away: the camera stands behind, the pelvis
    starts ``end_distance_m`` from it.
    """
    pts, lean, obl = body_points(m)
    belt = belt_speed_m_s(time_s, m)
    t = np.arange(t_start, t_end, 1.0 / fps)
    og = {}
    for k, p in pts.items():
        q = np.stack([np.interp(t, time_s, p[:, i]) for i in range(3)], 1)
        q[:, 1] -= belt * (t - t_start)   # walker now moves along -y over a still floor
        og[k] = q
    hip_y = (og["left_hip"][:, 1] + og["right_hip"][:, 1]) / 2
    rows = []
    for k, q in og.items():
        if direction == "toward":   # camera at -y looking +y; image right = +x (subject's left)
            depth = q[:, 1] - (hip_y[-1] - end_distance_m)
            X = q[:, 0] + lateral_m
        else:                        # camera at +y looking -y; image right = -x (subject's right)
            depth = (hip_y[0] + end_distance_m) - q[:, 1]
            X = -(q[:, 0] + lateral_m)
        x = width / 2 + focal_px * X / depth
        y = height / 2 - focal_px * (q[:, 2] - cam_height_m) / depth
        rows.append(pd.DataFrame({"frame": np.arange(len(t)), "time_s": t - t_start,
                                  "landmark": k, "x_px": x, "y_px": y, "z": 0.0,
                                  "visibility": 1.0, "presence": 1.0}))
    kp = pd.concat(rows, ignore_index=True)
    truth_lean = np.interp(t, time_s, lean)
    truth_obl = np.interp(t, time_s, obl)
    return kp, t, truth_lean, truth_obl, belt
