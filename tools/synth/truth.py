"""Ground truth for a rendered walk (schema in tools/synth/README.md).

Angles in degrees. ``lean_3d_deg``: frontal-plane angle of the hip-midpoint ->
shoulder-midpoint vector against gravity, positive toward the client's RIGHT (the
frontal plane is the vertical plane across the walking direction).
``pelvic_obliquity_deg``: angle of the right-hip -> left-hip line in the same plane,
positive when the client's LEFT hip is lower. Image angles are measured in the
upright image against the *projected true vertical* (or horizontal) through the hip
midpoint, positive with the same anatomical meaning.
"""
from __future__ import annotations

import numpy as np

from .scene import project

LANDMARKS = {  # MediaPipe-style name -> (kind, segment or foot point)
    "left_shoulder": ("joint", "upperarm.L"), "right_shoulder": ("joint", "upperarm.R"),
    "left_elbow": ("joint", "lowerarm.L"), "right_elbow": ("joint", "lowerarm.R"),
    "left_wrist": ("joint", "hand.L"), "right_wrist": ("joint", "hand.R"),
    "left_hip": ("joint", "thigh.L"), "right_hip": ("joint", "thigh.R"),
    "left_knee": ("joint", "shank.L"), "right_knee": ("joint", "shank.R"),
    "left_ankle": ("joint", "foot.L"), "right_ankle": ("joint", "foot.R"),
    "left_heel": ("foot", "left/heel"), "right_heel": ("foot", "right/heel"),
    "left_foot_index": ("foot", "left/toe"), "right_foot_index": ("foot", "right/toe"),
    "left_ball": ("foot", "left/ball"), "right_ball": ("foot", "right/ball"),
}


def _signed_angle_2d(a, b):
    """Angle (rad) turning 2D vector a onto b, positive clockwise in image (y down)."""
    return np.arctan2(a[0] * b[1] - a[1] * b[0], a[0] * b[0] + a[1] * b[1])


def frame_truth(walker, rots, jw, kcam, rcam, ccam):
    """Per-frame truth values (dict of scalars / 3-vectors / 2-vectors)."""
    b = walker.b
    feet = {s: walker.foot_world(rots, jw, s) for s in ("left", "right")}
    world = {}
    for name, (kind, ref) in LANDMARKS.items():
        if kind == "joint":
            world[name] = jw[b.index(ref)]
        else:
            side, pt = ref.split("/")
            world[name] = feet[side][pt]
    px = {n: project(p, kcam, rcam, ccam) for n, p in world.items()}
    hip_mid = 0.5 * (world["left_hip"] + world["right_hip"])
    sh_mid = 0.5 * (world["left_shoulder"] + world["right_shoulder"])
    right = walker.right
    d = sh_mid - hip_mid
    lean3 = np.degrees(np.arctan2(d @ right, d[2]))
    hd = world["left_hip"] - world["right_hip"]
    # Left hip lower -> left-minus-right height negative -> obliquity positive.
    obl3 = np.degrees(np.arctan2(-hd[2], abs(hd @ right)))
    p_h, p_s = project(hip_mid, kcam, rcam, ccam), project(sh_mid, kcam, rcam, ccam)
    p_v = project(hip_mid + np.array([0, 0, np.linalg.norm(d)]), kcam, rcam, ccam)
    p_r = project(hip_mid + 0.2 * right, kcam, rcam, ccam)
    v_img, d_img, r_img = p_v - p_h, p_s - p_h, p_r - p_h
    # Sign: + when the shoulders lie toward the side where the client's right projects.
    side_sign = np.sign(_signed_angle_2d(v_img, r_img))
    lean2 = np.degrees(side_sign * _signed_angle_2d(v_img, d_img))
    lean2_axis = np.degrees(side_sign * _signed_angle_2d(np.array([0.0, -1.0]), d_img))
    # Image pelvic obliquity: hip line vs the projected true horizontal (client's right).
    h_img = px["left_hip"] - px["right_hip"]
    # Clockwise from the client's-left direction means "left side lower" when the
    # client's left projects to image right (side_sign < 0), hence the minus sign.
    obl2 = np.degrees(-side_sign * _signed_angle_2d(r_img * -1, h_img))
    return {
        "world": world, "px": px, "lean_3d_deg": float(lean3), "lean_2d_deg": float(lean2),
        "lean_2d_image_axis_deg": float(lean2_axis), "pelvic_obliquity_deg": float(obl3),
        "pelvic_obliquity_2d_deg": float(obl2),
    }


def phase_summary(times, lean, obliq, windows):
    """Per single-support window: mean/peak lean toward stance and pelvic drop."""
    out = []
    t = np.asarray(times)
    for side, a, b, complete, tgt_lean, tgt_drop in windows:
        m = (t >= a) & (t < b)
        if not np.any(m):
            continue
        sg = 1.0 if side == "right" else -1.0
        toward = sg * np.asarray(lean)[m]
        drop = sg * np.asarray(obliq)[m]
        out.append({
            "stance_side": side, "start_s": float(a), "end_s": float(b), "complete": bool(complete),
            "n_frames": int(m.sum()),
            "mean_lean_toward_stance_deg": float(toward.mean()),
            "peak_lean_toward_stance_deg": float(toward.max()),
            "mean_pelvic_drop_deg": float(drop.mean()),
            "peak_pelvic_drop_deg": float(drop.max()),
            "target_peak_lean_toward_stance_deg": float(tgt_lean),
            "target_peak_pelvic_drop_deg": float(tgt_drop),
        })
    return out
