"""A simple kinematic walker in 3-D, seen by a pinhole phone camera (test helper).

World axes: X to the image right, Y up, Z away from the camera (depth). The
camera sits at ``(0, cam_height_m, 0)``, level, looking along +Z. Walking
"toward" the camera means moving along -Z and facing it, so the client's right
lies at -X; walking "away" the client's right lies at +X.

Per foot a gait cycle of ``cycle_s`` has stance (first ``stance_fraction``)
and swing. The stance foot is fixed on the floor (flat, then rolling over the
toe in late stance: heel rise); the swing foot moves with a minimum-jerk
profile to the next footprint. The pelvis moves at constant speed. Trunk lean
toward the stance side and drop of the swing-side pelvis are sin^2 bumps of
known amplitude over each single-support phase, so the truth is known exactly.
"""

from __future__ import annotations

import dataclasses

import numpy as np
import pandas as pd

FOOT_LENGTH_M = 0.22


@dataclasses.dataclass
class Walk:
    keypoints: pd.DataFrame
    time_s: np.ndarray
    lean_deg: np.ndarray          # true trunk lean, + toward client's right
    obliquity_deg: np.ndarray     # true pelvic obliquity, + left hip lower
    events: pd.DataFrame          # time_s, side, event
    phases: pd.DataFrame          # stance_side, start_s, end_s
    width: int
    height: int


def _bump(t, t0, t1):
    x = np.clip((t - t0) / (t1 - t0), 0, 1)
    return np.where((t > t0) & (t < t1), np.sin(np.pi * x) ** 2, 0.0)


def _minjerk(x):
    x = np.clip(x, 0, 1)
    return 10 * x**3 - 15 * x**4 + 6 * x**5


def make_walk(
    *, direction="toward", fps=30.0, start_m=7.0, end_m=2.0, speed_m_s=1.2,
    cycle_s=1.1, stance_fraction=0.62, lean_amp_deg=(3.0, 6.0), drop_amp_deg=(2.0, 4.0),
    lean_offset_deg=0.0, cam_height_m=1.0, focal_px=1150.0, width=1080, height=1920,
    roll_deg=0.0, noise_px=0.0, seed=0, time_jitter_s=0.0, flip_labels=False,
):
    """Synthetic keypoint table of a walk; amplitudes are (left, right) stance sides."""
    rng = np.random.default_rng(seed)
    duration = abs(start_m - end_m) / speed_m_s
    t = np.arange(0.0, duration, 1.0 / fps)
    if time_jitter_s:
        t = t + rng.uniform(-time_jitter_s, time_jitter_s, len(t))
        t[0] = 0.0
        t = np.sort(t)
    sgn = -1.0 if direction == "toward" else 1.0      # sign of Z motion
    right_x = -1.0 if direction == "toward" else 1.0  # client's right in world X
    fwd = speed_m_s * t                               # progression, metres
    T = cycle_s
    out = {}
    ev_rows, ph_rows = [], []
    lean = np.full(len(t), lean_offset_deg)
    obl = np.zeros(len(t))
    stride = speed_m_s * T
    for side, lat, phase0 in (("left", -0.08, -0.3 * T), ("right", 0.08, 0.2 * T)):
        heel_f = np.zeros(len(t))
        heel_h = np.zeros(len(t))
        pitch = np.zeros(len(t))
        ks = np.arange(-3, int(duration / T) + 4)
        for k in ks:
            ts = phase0 + k * T                 # strike
            to = ts + stance_fraction * T       # foot off
            tn = ts + T                         # next strike
            p = speed_m_s * ts + 0.25           # heel lands ahead of the pelvis
            # stance: flat, then heel rise over the toe in the last 35 % of stance
            st = (t >= ts) & (t < to)
            hr = (t - (ts + 0.65 * (to - ts))) / (0.35 * (to - ts))
            ang = np.where(hr > 0, np.radians(25) * np.clip(hr, 0, 1) ** 2, 0.0)
            toe = p + FOOT_LENGTH_M
            heel_f[st] = (toe - FOOT_LENGTH_M * np.cos(ang))[st]
            heel_h[st] = (FOOT_LENGTH_M * np.sin(ang))[st]
            pitch[st] = ang[st]
            sw = (t >= to) & (t < tn)
            # toe already moving at foot off and heel still moving at strike,
            # as in marker data (about 0.5-0.7 m/s at the annotated events)
            tau = np.clip((t - to) / (tn - to), 0, 1)
            s = 0.2 * tau + 0.8 * _minjerk(tau)
            a0 = np.radians(25)
            h0f = toe - FOOT_LENGTH_M * np.cos(a0)
            heel_f[sw] = (h0f + (p + stride - h0f) * s)[sw]
            heel_h[sw] = (FOOT_LENGTH_M * np.sin(a0) * (1 - s) + 0.06 * np.sin(np.pi * tau))[sw]
            pitch[sw] = (a0 * (1 - s) ** 2)[sw]
            if 0 <= ts <= duration:
                ev_rows.append((ts, side, "foot_strike"))
            if 0 <= to <= duration:
                ev_rows.append((to, side, "foot_off"))
            # this foot's swing = other side's single support
            other = "right" if side == "left" else "left"
            amp_i = 0 if other == "left" else 1
            sign_lean = 1.0 if other == "right" else -1.0
            lean += sign_lean * lean_amp_deg[amp_i] * _bump(t, to, tn)
            # swing side (this side) drops; + obliquity = left lower
            obl += (1.0 if side == "left" else -1.0) * drop_amp_deg[amp_i] * _bump(t, to, tn)
            if to >= 0 and tn <= duration:
                ph_rows.append((other, to, tn))
        Xl = right_x * lat
        z_heel = start_m + sgn * heel_f
        out[f"{side}_heel"] = (np.full(len(t), Xl), heel_h + 0.02, z_heel)
        cp, sp = np.cos(pitch), np.sin(pitch)  # pitch > 0: toe lower than heel
        out[f"{side}_foot_index"] = (np.full(len(t), Xl), heel_h + 0.02 - FOOT_LENGTH_M * sp,
                                     z_heel + sgn * FOOT_LENGTH_M * cp)
        out[f"{side}_ankle"] = (np.full(len(t), Xl), heel_h + 0.02 + 0.08 * cp - 0.05 * sp,
                                z_heel + sgn * (0.05 * cp + 0.08 * sp))
    pz = start_m + sgn * fwd
    hip_c = np.stack([0.015 * np.sin(2 * np.pi * t / T) * 0, np.full(len(t), 0.92), pz], 1)
    up = np.array([0.0, 1.0, 0.0])
    rdir = np.array([right_x, 0.0, 0.0])
    o = np.radians(obl)[:, None]
    half = 0.09 * (rdir * np.cos(o) + up * np.sin(o))
    out["right_hip"] = tuple((hip_c + half).T)
    out["left_hip"] = tuple((hip_c - half).T)
    L = np.radians(lean)[:, None]
    sho_c = hip_c + 0.5 * (up * np.cos(L) + rdir * np.sin(L))
    shalf = 0.19 * (rdir * np.cos(L) - up * np.sin(L))
    out["right_shoulder"] = tuple((sho_c + shalf).T)
    out["left_shoulder"] = tuple((sho_c - shalf).T)
    for side in ("left", "right"):
        h, a = np.array(out[f"{side}_hip"]), np.array(out[f"{side}_ankle"])
        out[f"{side}_knee"] = tuple((h + a) / 2 + np.array([[0], [0], [sgn * 0.03]]))
    rows = []
    c, s_ = np.cos(np.radians(roll_deg)), np.sin(np.radians(roll_deg))
    for name, (X, Y, Z) in out.items():
        X, Y, Z = (np.broadcast_to(np.asarray(v, float), t.shape) for v in (X, Y, Z))
        dx = focal_px * X / Z
        dy = -focal_px * (Y - cam_height_m) / Z
        x = width / 2 + c * dx - s_ * dy + rng.normal(0, noise_px, len(t)) * (noise_px > 0)
        y = height / 2 + s_ * dx + c * dy + rng.normal(0, noise_px, len(t)) * (noise_px > 0)
        label = name
        if flip_labels:
            label = name.replace("left", "#").replace("right", "left").replace("#", "right")
        rows.append(pd.DataFrame({
            "frame": np.arange(len(t)), "time_s": t, "landmark": label, "x_px": x,
            "y_px": y, "z": 0.0, "visibility": 0.95, "presence": 0.95}))
    kp = pd.concat(rows, ignore_index=True).sort_values(["frame", "landmark"], kind="stable")
    events = pd.DataFrame(ev_rows, columns=["time_s", "side", "event"]).sort_values("time_s")
    phases = pd.DataFrame(ph_rows, columns=["stance_side", "start_s", "end_s"]).sort_values("start_s")
    return Walk(kp.reset_index(drop=True), t, lean, obl, events.reset_index(drop=True),
                phases.reset_index(drop=True), width, height)


def match_events(found: pd.DataFrame, truth: pd.DataFrame, *, max_s=0.15):
    """Signed timing errors (found - truth) of the nearest same-side, same-type event."""
    errs, missed = [], 0
    for _, ev in truth.iterrows():
        f = found[(found["side"] == ev["side"]) & (found["event"] == ev["event"])]
        if f.empty:
            missed += 1
            continue
        d = f["time_s"].to_numpy() - ev["time_s"]
        j = np.argmin(np.abs(d))
        if abs(d[j]) <= max_s:
            errs.append(d[j])
        else:
            missed += 1
    return np.array(errs), missed


def phases_found_in_place(strides: pd.DataFrame, phases: pd.DataFrame) -> int:
    """How many true phases have exactly one found phase over their midpoint, on the same stance side.

    A count of found phases alone would pass phases found in the wrong place or on the wrong side.
    """
    hits = 0
    for _, p in phases.iterrows():
        mid = (p["start_s"] + p["end_s"]) / 2
        h = strides[(strides["start_s"] < mid) & (strides["end_s"] > mid)]
        hits += int(len(h) == 1 and h["stance_side"].iloc[0] == p["stance_side"])
    return hits
