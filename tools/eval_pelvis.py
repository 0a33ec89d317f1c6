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

Candidate "mirror" (and "mirror12"): the tilt of the mirror-symmetry axis of the
segmentation mask in a band around the hips. The crop around the hip-landmark
midpoint is rotated by each candidate angle (-12..12 deg in 0.5 deg steps,
parabolic sub-step refinement); in the rotated frame the band of rows from
1.0 (mirror12: 1.2) hip-landmark widths above to as far below the hip
landmarks is mirrored about its own mask centroid column, and the angle with the
least squared difference between band and mirror image wins (pixels near the
forearm/hand landmarks, and their mirror images, are left out). The hip line is
taken perpendicular to that axis. Assumes a left-right symmetric body outline
(clothing included) in the band, so the crotch, the thigh gap and the waist
carry the tilt. Engineering choice, no published source. Measured on the 11
rendered truth clips (2026-12-02, MediaPipe masks at 960 px): per-side error
max 2.61 deg (mirror) / 2.55 deg (mirror12), mean 1.05 / 1.06 deg; mirror12 has
the wrong sign in two left-stance windows. Not a pelvis measurement: over the 22
per-side windows the mirror estimate regresses as 0.42 x true drop + 0.46 x
trunk lean toward stance (mirror12: 0.23 and 0.25), and the band choice moves
it strongly (1.0 over-, 1.2 under-estimates), so it missed the 1.5 deg target.

Candidate "bump": on each side the lateral-most point of the outline (vertex
of a least-squares parabola fitted to the lateral outline distance over rows
0.4 hip widths above to 0.6 below the hip landmarks); the line through the two
vertices. Fails (no vertex) whenever a hand lies on the outline.
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


def _arm_mask(shape, lm, x0, y0, r):
    arm = np.zeros(shape, np.uint8)
    for a, b in ARM:
        pa, pb = lm[a, :2], lm[b, :2]
        if np.isfinite(pa).all() and np.isfinite(pb).all():
            cv2.line(arm, (int(pa[0] - x0), int(pa[1] - y0)), (int(pb[0] - x0), int(pb[1] - y0)), 255, 2 * r)
    return arm


def mirror_tilt_deg(mask, lm, *, band=(-1.0, 1.0), arm_r=0.15, grid_deg=np.arange(-12.0, 12.01, 0.5)):
    """Clockwise (on screen) tilt of the mask's mirror axis near the hips, or NaN.

    A shape tilted clockwise by t (its image-right side lower) becomes symmetric
    after a counter-clockwise rotation by t, which is what the search finds.
    """
    hips = lm[23:25, :2]
    if not np.isfinite(hips).all():
        return np.nan
    hw = abs(hips[0, 0] - hips[1, 0]) + 1e-6
    xm, yh = hips[:, 0].mean(), hips[:, 1].mean()
    H, W = mask.shape
    R = int(2.5 * hw)
    x0, y0 = int(round(xm)) - R, int(round(yh)) - R
    crop = np.zeros((2 * R, 2 * R), np.float32)
    ys, xs, ye, xe = max(0, y0), max(0, x0), min(H, y0 + 2 * R), min(W, x0 + 2 * R)
    crop[ys - y0:ye - y0, xs - x0:xe - x0] = mask[ys:ye, xs:xe] / 255.0
    arm = _arm_mask(crop.shape, lm, x0, y0, max(2, int(arm_r * hw)))
    c = (xm - x0, yh - y0)
    r0, r1 = int(R + band[0] * hw), int(R + band[1] * hw)
    costs = []
    for th in grid_deg:
        M = cv2.getRotationMatrix2D(c, float(th), 1.0)   # counter-clockwise on screen by th
        B = cv2.warpAffine(crop, M, crop.shape[::-1], flags=cv2.INTER_LINEAR)[r0:r1]
        A = cv2.warpAffine(arm, M, crop.shape[::-1], flags=cv2.INTER_NEAREST)[r0:r1] > 0
        wgt = B * ~A
        cx = (wgt.sum(0) * np.arange(B.shape[1])).sum() / max(wgt.sum(), 1e-6)
        flip = np.float32([[-1, 0, 2 * cx], [0, 1, 0]])
        F = cv2.warpAffine(B, flip, B.shape[::-1], flags=cv2.INTER_LINEAR)
        FA = cv2.warpAffine(A.astype(np.uint8), flip, B.shape[::-1], flags=cv2.INTER_NEAREST) > 0
        ok = ~(A | FA)
        costs.append(((B - F) ** 2)[ok].sum() / max(ok.sum(), 1))
    costs = np.array(costs); k = int(np.argmin(costs))
    off = 0.0
    if 0 < k < len(costs) - 1:
        den = costs[k - 1] - 2 * costs[k] + costs[k + 1]
        off = 0.5 * (costs[k - 1] - costs[k + 1]) / den if den > 0 else 0.0
    return float(grid_deg[k] + off * (grid_deg[1] - grid_deg[0]))


def mirror_points(mask, lm, **kw):
    """(2, 2) points on the line perpendicular to the mirror axis; NaN if none."""
    t = mirror_tilt_deg(mask, lm, **kw)
    if not np.isfinite(t):
        return np.full((2, 2), np.nan)
    hips = lm[23:25, :2]; mid = hips.mean(0); hw = abs(hips[0, 0] - hips[1, 0])
    d = np.array([np.cos(np.radians(t)), np.sin(np.radians(t))]) * hw / 2   # y down: +t lowers image right
    return np.array([mid - d, mid + d])


def _parabola_vertex(y, x, min_rows=5):
    ok = np.isfinite(x)
    if ok.sum() < min_rows:
        return np.nan, np.nan
    c = np.polyfit(y[ok], x[ok], 2)
    if c[0] >= 0:
        return np.nan, np.nan
    yv = -c[1] / (2 * c[0])
    if not y[ok].min() <= yv <= y[ok].max():
        return np.nan, np.nan
    return yv, np.polyval(c, yv)


def bump_points(mask, lm, band=(-0.4, 0.6)):
    """(2, 2) lateral-most outline points [image-left, image-right]; NaN if not found."""
    pr = outline_profiles(mask, lm, band=band)
    if pr is None:
        return np.full((2, 2), np.nan)
    pa, pb, yh, xm, hw = pr
    y = int(max(0, yh + band[0] * hw)) + np.arange(len(pa)) + 0.5
    ya, wa = _parabola_vertex(y, pa); yb, wb = _parabola_vertex(y, pb)
    return np.array([[xm - wa, ya], [xm + wb, yb]])


def obliquity_deg(p_left, p_right, roll_deg):
    r = np.radians(roll_deg)
    up = np.array([np.sin(r), -np.cos(r)]); hz = np.array([np.cos(r), np.sin(r)])
    return np.degrees(np.arctan2((p_right - p_left) @ up, np.abs((p_left - p_right) @ hz)))


def evaluate(mp4: Path, cache: Path, errors: dict) -> None:
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
        "bump": np.array([bump_points(mask[i], lm[i]) for i in range(n)]),
        "mirror": np.array([mirror_points(mask[i], lm[i], band=(-1.0, 1.0)) for i in range(n)]),
        "mirror12": np.array([mirror_points(mask[i], lm[i], band=(-1.2, 1.2)) for i in range(n)]),
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
        line = f"{mp4.stem:26s} {name:8s} r={r:+.2f} valid {ok.mean():.2f}"
        for side in ("right", "left"):
            est, tru = [], []
            for ss in truth["single_support"]:
                if ss["complete"] and ss["stance_side"] == side:
                    w = (t >= ss["start_s"]) & (t < ss["end_s"]) & ok
                    if w.any():
                        est.append((1 if side == "right" else -1) * ob[w].mean()); tru.append(ss["mean_pelvic_drop_deg"])
            if est:
                err = np.mean(est) - np.mean(tru)
                errors.setdefault(name, []).append(err)
                line += f" | {side}-stance drop est {np.mean(est):+.2f} true {np.mean(tru):+.2f} err {err:+.2f}"
        print(line)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("clips", nargs="+", type=Path)
    ap.add_argument("--cache", type=Path, default=Path("/tmp/pelvis_cache"))
    a = ap.parse_args()
    a.cache.mkdir(parents=True, exist_ok=True)
    errors: dict = {}
    for c in a.clips:
        # 10 kB skips the placeholder file of a clip still being rendered.
        if c.stat().st_size > 10_000 and c.with_suffix(".truth.json").exists():
            evaluate(c, a.cache, errors)
    for name, e in errors.items():
        e = np.abs(e)
        print(f"{name:8s} per-side error over all clips: max {np.nanmax(e):.2f} deg, mean {np.nanmean(e):.2f} deg, n={len(e)}")


if __name__ == "__main__":
    main()
