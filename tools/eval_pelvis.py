"""Development measurement: pelvic obliquity from BlazePose hip landmarks vs a
silhouette prototype, against the rendered truth clips (tools/synth).

NOT a runtime module; the prototype below did not reach the accuracy target
(measured numbers are in README.md, "How accurate it is"). Run from the repository root:

    .venv/bin/python -m tools.eval_pelvis demo_clips/*.mp4 [--cache /tmp/pelvis_cache]

Per clip and method it prints the per-frame correlation with
``per_frame.pelvic_obliquity_2d_deg`` and the per-side mean pelvic drop over the
complete single-support windows against ``single_support[*].mean_pelvic_drop_deg``.

Prototype ("outer"): the lateral outline of the segmentation mask on each side,
rows from 1.0 hip-landmark widths above to 0.8 below the hip landmarks, rows
whose outline touches a band around the forearm/hand landmarks dropped; the
vertical shift that best aligns the mirrored left and right outline profiles
(least squares over integer shifts, parabolic sub-pixel refinement) gives the
height difference of the two sides. Engineering choice, no published source.
"""
from __future__ import annotations

import argparse
import json
from pathlib import Path

import cv2
import numpy as np

from lean_video.video import iter_frames

ARM = [(13, 15), (15, 17), (15, 19), (15, 21), (14, 16), (16, 18), (16, 20), (16, 22)]


def extract(path: Path, out: Path) -> None:
    import mediapipe as mp
    pose = mp.solutions.pose.Pose(static_image_mode=False, model_complexity=1, smooth_landmarks=False,
                                  enable_segmentation=True)
    lms, masks = [], []
    for _, _, rgb in iter_frames(path, max_side_px=960):
        h, w = rgb.shape[:2]
        r = pose.process(rgb)
        if r.pose_landmarks is None:
            lms.append(np.full((33, 5), np.nan)); masks.append(np.zeros((h, w), np.uint8)); continue
        a = np.array([(p.x, p.y, p.z, p.visibility, p.presence) for p in r.pose_landmarks.landmark])
        a[:, 0] *= w; a[:, 1] *= h; a[:, 2] *= w
        lms.append(a); masks.append((np.clip(r.segmentation_mask, 0, 1) * 255).astype(np.uint8))
    pose.close()
    np.savez_compressed(out, lm=np.array(lms), mask=np.array(masks))


def outline_profiles(mask, lm, *, band=(-1.0, 0.8), arm_r=0.15, thr=0.5):
    hips = lm[23:25, :2]
    if not np.isfinite(hips).all():
        return None
    hw = abs(hips[0, 0] - hips[1, 0]) + 1e-6
    xm, yh = hips[:, 0].mean(), hips[:, 1].mean()
    H, W = mask.shape
    y0, y1 = int(max(0, yh + band[0] * hw)), int(min(H, yh + band[1] * hw))
    x0, x1 = int(max(0, xm - 3 * hw)), int(min(W, xm + 3 * hw))
    sub = mask[y0:y1, x0:x1] > thr * 255
    arm = np.zeros(sub.shape, np.uint8)
    r = max(2, int(arm_r * hw))
    for a, b in ARM:
        pa, pb = lm[a, :2], lm[b, :2]
        if np.isfinite(pa).all() and np.isfinite(pb).all():
            cv2.line(arm, (int(pa[0] - x0), int(pa[1] - y0)), (int(pb[0] - x0), int(pb[1] - y0)), 1, 2 * r)
    cm = int(round(xm - x0))
    if not 0 <= cm < sub.shape[1]:
        return None
    n = sub.shape[0]
    pa_, pb_ = np.full(n, np.nan), np.full(n, np.nan)
    for i in range(n):
        row = sub[i]
        if not row[cm]:
            continue
        left = row[:cm + 1][::-1]; k = np.argmin(left)
        if not left[k]:
            xa = cm - k
            if not arm[i, min(xa + 1, arm.shape[1] - 1)] and not arm[i, xa]:
                pa_[i] = cm - (xa + 1) + 0.5
        right = row[cm:]; k = np.argmin(right)
        if not right[k]:
            xb = cm + k
            if not arm[i, xb - 1] and not arm[i, xb]:
                pb_[i] = (xb - 1) - cm + 0.5
    return pa_, pb_, yh, xm, hw


def best_shift(pa, pb, max_shift):
    cost = []
    for s in range(-max_shift, max_shift + 1):
        a = pa[max(0, -s):len(pa) - max(0, s)]; b = pb[max(0, s):len(pb) - max(0, -s)]
        ok = np.isfinite(a) & np.isfinite(b)
        cost.append(np.mean((a[ok] - b[ok]) ** 2) if ok.sum() >= 4 else np.inf)
    cost = np.array(cost); k = int(np.argmin(cost))
    if not np.isfinite(cost[k]):
        return np.nan
    off = 0.0
    if 0 < k < len(cost) - 1 and np.isfinite(cost[k - 1]) and np.isfinite(cost[k + 1]):
        den = cost[k - 1] - 2 * cost[k] + cost[k + 1]
        off = 0.5 * (cost[k - 1] - cost[k + 1]) / den if den > 0 else 0.0
    return k - max_shift + off   # image-right outline lower by this many px


def outline_points(mask, lm):
    """(2, 2) points [image-left, image-right]; NaN if not found."""
    pr = outline_profiles(mask, lm)
    if pr is None:
        return np.full((2, 2), np.nan)
    pa, pb, yh, xm, hw = pr
    s = best_shift(pa, pb, max(2, int(0.25 * hw)))
    w = np.nanmedian(np.concatenate([pa, pb])) if np.isfinite(np.concatenate([pa, pb])).any() else np.nan
    if not (np.isfinite(s) and np.isfinite(w)):
        return np.full((2, 2), np.nan)
    return np.array([[xm - w, yh - s / 2], [xm + w, yh + s / 2]])


def obliquity_deg(p_left, p_right, roll_deg):
    r = np.radians(roll_deg)
    up = np.array([np.sin(r), -np.cos(r)]); hz = np.array([np.cos(r), np.sin(r)])
    return np.degrees(np.arctan2((p_right - p_left) @ up, np.abs((p_left - p_right) @ hz)))


def evaluate(mp4: Path, cache: Path) -> None:
    truth = json.loads(mp4.with_suffix(".truth.json").read_text())
    npz = cache / (mp4.stem + ".npz")
    if not npz.exists():
        extract(mp4, npz)
    d = np.load(npz); lm, mask = d["lm"], d["mask"]
    n = len(lm)
    pf = truth["per_frame"]
    true_ob = np.array(pf["pelvic_obliquity_2d_deg"], float)[:n]
    t = np.array(pf["time_s"], float)[:n]
    methods = {
        "hips": lm[:, [23, 24], :2],
        "knees": lm[:, [25, 26], :2],
        "outline": np.array([outline_points(mask[i], lm[i]) for i in range(n)]),
    }
    for name, P in methods.items():
        # Sides from image geometry (as the gait stage does): toward the camera
        # the client's left is on the image right.
        swap = P[:, 0, 0] > P[:, 1, 0]
        img_r = np.where(swap[:, None], P[:, 0], P[:, 1]); img_l = np.where(swap[:, None], P[:, 1], P[:, 0])
        pl, pr = (img_r, img_l) if truth["direction"] == "toward" else (img_l, img_r)
        ob = obliquity_deg(pl, pr, truth["camera"]["roll_deg"])
        ok = np.isfinite(ob)
        r = np.corrcoef(ob[ok], true_ob[ok])[0, 1]
        line = f"{mp4.stem:26s} {name:8s} r={r:+.2f}"
        for side in ("right", "left"):
            est, tru = [], []
            for ss in truth["single_support"]:
                if ss["complete"] and ss["stance_side"] == side:
                    w = (t >= ss["start_s"]) & (t < ss["end_s"]) & ok
                    if w.any():
                        est.append((1 if side == "right" else -1) * ob[w].mean()); tru.append(ss["mean_pelvic_drop_deg"])
            if est:
                line += f" | {side}-stance drop est {np.mean(est):+.2f} true {np.mean(tru):+.2f}"
        print(line)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("clips", nargs="+", type=Path)
    ap.add_argument("--cache", type=Path, default=Path("/tmp/pelvis_cache"))
    a = ap.parse_args()
    a.cache.mkdir(parents=True, exist_ok=True)
    for c in a.clips:
        # 10 kB skips the placeholder file of a clip still being rendered.
        if c.stat().st_size > 10_000 and c.with_suffix(".truth.json").exists():
            evaluate(c, a.cache)


if __name__ == "__main__":
    main()
