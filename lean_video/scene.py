"""Scene geometry: camera roll from the background's vertical lines.

Conventions (stated once, tested in ``tests/test_scene.py``)
-----------------------------------------------------------
* Image coordinates are upright-image pixels, x to the right, y down.
  Frames are ``(height, width, 3)`` RGB ``uint8`` arrays as
  :func:`lean_video.video.iter_frames` yields them.
* ``roll_deg`` (the project's ``camera_roll_deg``) is positive when lines that
  are vertical in the world appear turned CLOCKWISE in the upright image: the
  true "up" direction in image coordinates is then ``(sin r, -cos r)``.
  ``cv2.getRotationMatrix2D(c, angle, 1)`` turns picture content
  counter-clockwise for a positive ``angle``, so content warped with
  ``angle = -r`` shows a roll of ``+r``.
* With the camera pitched, world-vertical lines converge on a vanishing point
  (keystone): lines left and right of the centre tilt opposite ways. The roll
  is the tilt at the principal point, taken as the image centre: the direction
  from the image centre to the vertical vanishing point.
* Person boxes are ``(x0, y0, x1, y1)`` in the pixels of the frames given
  (for clips: full-size upright pixels, as the keypoint table uses), or
  ``None`` when no person was found. Line segments touching the box, widened
  by ``box_margin_frac``, are ignored because the body's own edges are not
  world-vertical.

Camera motion of hand-held clips lives in :mod:`lean_video.scene_motion`
(``estimate_camera_motion``, ``stabilise_points``, ``classify``,
``CameraMotion``); those names can also be imported from this module.

Method: line segments from the LSD detector (von Gioi, Jakubowicz, Morel &
Randall 2010, "LSD: a fast line segment detector with a false detection
control", IEEE TPAMI 32(4):722-732), as implemented by OpenCV; the vertical
vanishing point as the least-squares null vector of the segments' homogeneous
lines (Hartley & Zisserman 2004, Multiple View Geometry, 2nd ed., ch. 8 on
vanishing points; section from memory),
refined by iteratively reweighted least squares with Huber weights (Huber 1964,
Ann. Math. Stat. 35:73-101).
"""

from __future__ import annotations

import logging
import math
import os
from dataclasses import dataclass
from typing import Mapping, Sequence

import cv2
import numpy as np

from lean_video.errors import LeanVideoError
from lean_video.video import iter_frames, probe_clip

log = logging.getLogger(__name__)

Box = tuple[float, float, float, float]

#: Segments tilted more than this from image vertical are not taken as
#: world-vertical candidates. 15 deg covers a roll of up to ~8 deg plus the
#: keystone tilt at the picture's edge for a pitch of ~15 deg (engineering
#: choice, no source).
MAX_TILT_DEG = 15.0

#: Shortest segment kept, as a fraction of the picture height: short segments
#: come from texture and carry little angular information (engineering choice).
MIN_LENGTH_FRAC = 0.05

#: Fewest segments per frame for a usable estimate (engineering choice).
MIN_SEGMENTS = 6

#: Widening of a person box on each side, as fractions of its width and height.
#: Keypoint boxes span joints, not the body outline: the top of the head lies
#: roughly 7 % of the box height above the eyes (from memory), and arms and
#: clothing stick out sideways, so boxes are widened generously (engineering
#: choice). Boxes from
#: keypoints without face points need a larger top margin (about 0.3): a
#: head left in view drags the camera-motion fit as the client approaches.
BOX_MARGIN_FRAC = (0.30, 0.15)

#: Huber tuning constant for the angular residuals, degrees (engineering
#: choice: about twice the LSD angular noise of a clean 100 px edge).
_HUBER_DEG = 0.75

#: Largest plausible |kappa| (inverse vanishing-point distance, in half long
#: sides): 1.0 means a pitch of roughly 55 deg for a phone's 67 deg vertical
#: field of view, far beyond any filming set-up (engineering choice).
MAX_KAPPA = 1.0

#: Shrinkage of the vanishing point's inverse distance toward 0 (no keystone),
#: relative to the total weight; keeps the fit defined when all segments sit
#: at the same x (engineering choice).
_KAPPA_RIDGE = 1e-4


@dataclass(frozen=True)
class RollEstimate:
    """Camera roll measured from the scene.

    Attributes
    ----------
    roll_deg : float
        Camera roll in degrees (module convention); 0.0 when ``source`` is
        ``"none"``.
    confidence : float
        0..1, from the number of segments, their total length and their
        spread about the fitted vanishing point (engineering choice).
    n_segments : int
        Near-vertical segments kept (inliers), pooled over all frames used.
    spread_deg : float
        Robust standard deviation (1.4826 x median absolute residual) of the
        segments' angles about the fit, degrees (0.0 when there was no fit).
    source : str
        ``"scene"`` when estimated, ``"none"`` when the scene held too few
        vertical lines to trust.
    n_frames : int
        Frames that were searched.
    """

    roll_deg: float
    confidence: float
    n_segments: int
    spread_deg: float
    source: str = "scene"
    n_frames: int = 0


def _check_box(box, name: str) -> Box | None:
    if box is None:
        return None
    try:
        x0, y0, x1, y1 = (float(v) for v in box)
    except (TypeError, ValueError):
        raise LeanVideoError(f"{name} must be (x0, y0, x1, y1) or None; {box!r} was given.") from None
    if not all(math.isfinite(v) for v in (x0, y0, x1, y1)) or x1 <= x0 or y1 <= y0:
        raise LeanVideoError(
            f"{name} must hold finite numbers with x1 > x0 and y1 > y0; {box!r} was given, "
            "so pass None for frames without a detected person."
        )
    return x0, y0, x1, y1


def expand_box(box: Box, *, margin_frac: tuple[float, float] = BOX_MARGIN_FRAC) -> Box:
    """Widen a box by a fraction of its width (left/right) and height (top/bottom)."""
    x0, y0, x1, y1 = box
    mx, my = margin_frac[0] * (x1 - x0), margin_frac[1] * (y1 - y0)
    return x0 - mx, y0 - my, x1 + mx, y1 + my


def person_box_from_points(x_px: np.ndarray, y_px: np.ndarray) -> Box | None:
    """Bounding box of one frame's keypoints, ignoring missing (NaN) ones.

    Parameters
    ----------
    x_px, y_px : array_like, shape (n,)
        Keypoint coordinates of one frame (upright pixels).

    Returns
    -------
    tuple or None
        ``(x0, y0, x1, y1)``, or ``None`` with fewer than two finite points.
    """
    x = np.asarray(x_px, dtype=float).ravel()
    y = np.asarray(y_px, dtype=float).ravel()
    if x.shape != y.shape:
        raise LeanVideoError(f"x_px and y_px must have the same length; got {x.size} and {y.size}.")
    ok = np.isfinite(x) & np.isfinite(y)
    if ok.sum() < 2 or np.ptp(x[ok]) <= 0 or np.ptp(y[ok]) <= 0:
        return None
    return float(x[ok].min()), float(y[ok].min()), float(x[ok].max()), float(y[ok].max())


def person_boxes_by_frame(frame, x_px, y_px) -> dict[int, Box]:
    """Person box per frame from a long keypoint table given as plain arrays.

    Parameters
    ----------
    frame : array_like of int, shape (n,)
        Frame index of each row (the keypoint table's ``frame`` column).
    x_px, y_px : array_like, shape (n,)
        Keypoint coordinates (upright full-size pixels; NaN when missing).

    Returns
    -------
    dict
        ``{frame: (x0, y0, x1, y1)}`` for frames with at least two keypoints.
    """
    f = np.asarray(frame).ravel()
    x = np.asarray(x_px, dtype=float).ravel()
    y = np.asarray(y_px, dtype=float).ravel()
    if not f.shape == x.shape == y.shape:
        raise LeanVideoError(f"frame, x_px and y_px must have one value per row; got {f.size}, {x.size}, {y.size}.")
    order = np.argsort(f, kind="stable")
    f, x, y = f[order], x[order], y[order]
    keys, starts = np.unique(f, return_index=True)
    out = {}
    for key, a, b in zip(keys, starts, list(starts[1:]) + [len(f)]):
        box = person_box_from_points(x[a:b], y[a:b])
        if box is not None:
            out[int(key)] = box
    return out


def nearest_box(boxes_by_frame: Mapping[int, Box | None] | None, index: int, *, max_gap_frames: int = 15):
    """The person box of ``index`` or of the nearest frame within ``max_gap_frames``."""
    if not boxes_by_frame:
        return None
    if index in boxes_by_frame and boxes_by_frame[index] is not None:
        return boxes_by_frame[index]
    keys = [k for k, b in boxes_by_frame.items() if b is not None and abs(k - index) <= max_gap_frames]
    if not keys:
        return None
    return boxes_by_frame[min(keys, key=lambda k: (abs(k - index), k))]


def _segments(gray: np.ndarray, box: Box | None, *, min_length_px: float, max_tilt_deg: float,
              margin_frac: tuple[float, float]) -> np.ndarray:
    """Near-vertical LSD segments outside the person box as rows ``(mx, my, dx, dy, length)``.

    ``(dx, dy)`` is the unit direction pointing up the picture (dy < 0).
    """
    lines = cv2.createLineSegmentDetector(cv2.LSD_REFINE_STD).detect(gray)[0]
    if lines is None or len(lines) == 0:
        return np.zeros((0, 5))
    p = lines.reshape(-1, 4).astype(float)
    d = p[:, 2:4] - p[:, 0:2]
    length = np.hypot(d[:, 0], d[:, 1])
    keep = length >= min_length_px
    p, d, length = p[keep], d[keep], length[keep]
    d = d / length[:, None]
    d = np.where((d[:, 1] > 0)[:, None], -d, d)  # orient every segment upward
    tilt = np.degrees(np.arctan2(d[:, 0], -d[:, 1]))
    keep = np.abs(tilt) <= max_tilt_deg
    p, d, length = p[keep], d[keep], length[keep]
    if box is not None and len(p):
        x0, y0, x1, y1 = expand_box(box, margin_frac=margin_frac)
        t = np.linspace(0.0, 1.0, 11)
        xs = p[:, 0:1] + (p[:, 2:3] - p[:, 0:1]) * t
        ys = p[:, 1:2] + (p[:, 3:4] - p[:, 1:2]) * t
        touches = ((xs >= x0) & (xs <= x1) & (ys >= y0) & (ys <= y1)).any(axis=1)
        p, d, length = p[~touches], d[~touches], length[~touches]
    mid = (p[:, 0:2] + p[:, 2:4]) / 2
    return np.column_stack([mid, d, length])


def _map_segments(seg: np.ndarray, a: np.ndarray, name: str) -> np.ndarray:
    """Move segment rows ``(mx, my, dx, dy, length)`` through the 2x3 map ``a``."""
    if a.shape != (2, 3) or not np.isfinite(a).all():
        raise LeanVideoError(f"{name} must be a finite 2x3 similarity matrix; got shape {a.shape}.")
    lin, t = a[:, :2], a[:, 2]
    mid = seg[:, 0:2] @ lin.T + t
    d = seg[:, 2:4] @ lin.T
    norm = np.hypot(d[:, 0], d[:, 1])
    d = d / norm[:, None]
    d = np.where((d[:, 1] > 0)[:, None], -d, d)
    return np.column_stack([mid, d, seg[:, 4] * norm])


def _weighted_median(values: np.ndarray, weights: np.ndarray) -> float:
    order = np.argsort(values)
    cum = np.cumsum(weights[order])
    return float(values[order][np.searchsorted(cum, 0.5 * cum[-1])])


def _residual_deg(m: np.ndarray, d: np.ndarray, v: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Signed angle between each segment and the direction from it to the vanishing point.

    ``v = (s, c, kappa)``: the vertical vanishing point in homogeneous,
    centre-relative, normalised coordinates is ``(s, -c, kappa)``; the
    upward direction it implies at point ``m`` is ``(s - kappa mx, -c - kappa my)``.
    """
    e = np.column_stack([v[0] - v[2] * m[:, 0], -v[1] - v[2] * m[:, 1]])
    cross = d[:, 0] * e[:, 1] - d[:, 1] * e[:, 0]
    dot = (d * e).sum(axis=1)
    return np.degrees(np.arctan2(cross, dot)), np.hypot(e[:, 0], e[:, 1])


def fit_vertical_vanishing(seg: np.ndarray, *, width: int, height: int,
                           n_iter: int = 15) -> tuple[float, float, float, np.ndarray]:
    """Fit the vertical vanishing point to near-vertical segments.

    Parameters
    ----------
    seg : ndarray, shape (n, 5)
        Rows ``(mx, my, dx, dy, length)`` in pixels, direction unit and upward.
    width, height : int
        Picture size; the principal point is taken as its centre.
    n_iter : int, keyword-only
        IRLS iterations.

    Returns
    -------
    roll_deg : float
        Angle of the direction centre -> vanishing point (module convention).
    kappa : float
        Inverse distance of the vanishing point from the centre, in units of
        half the longer picture side, positive when it lies above (camera
        pitched up), 0 for parallel verticals.
    spread_deg : float
        Robust SD of the residual angles.
    residual_deg : ndarray, shape (n,)

    Notes
    -----
    Each segment gives a homogeneous line ``l``; the vanishing point ``v``
    minimises ``sum w (l . v)^2`` with ``|v| = 1`` (Hartley & Zisserman 2004,
    ch. 8, from memory). Weights are length x Huber weight of the angular residual,
    divided by ``|e|^2`` so the algebraic residual equals the sine of the angle.
    """
    scale = max(width, height) / 2.0
    m = (seg[:, 0:2] - np.array([width / 2.0, height / 2.0])) / scale
    d = seg[:, 2:4]
    length = seg[:, 4]
    rows = np.column_stack([-d[:, 1], -d[:, 0], d[:, 1] * m[:, 0] - d[:, 0] * m[:, 1]])
    tilt = np.degrees(np.arctan2(d[:, 0], -d[:, 1]))
    phi = math.radians(_weighted_median(tilt, length))
    v = np.array([math.sin(phi), math.cos(phi), 0.0])
    for _ in range(n_iter):
        res, e_norm = _residual_deg(m, d, v)
        a = np.abs(res)
        huber = np.where(a <= _HUBER_DEG, 1.0, _HUBER_DEG / np.maximum(a, 1e-12))
        w = length * huber / np.maximum(e_norm, 1e-6) ** 2
        mat = (rows * w[:, None]).T @ rows
        mat[2, 2] += _KAPPA_RIDGE * w.sum()
        vecs = np.linalg.eigh(mat)[1]
        norm = math.hypot(vecs[0, 0], vecs[1, 0])
        if norm < 1e-9:  # vanishing point at the centre: no direction to read a roll from
            break
        new = vecs[:, 0] / norm
        if new[1] < 0:
            new = -new
        if np.allclose(new, v, atol=1e-10):
            v = new
            break
        v = new
    res, _ = _residual_deg(m, d, v)
    spread = 1.4826 * _weighted_median(np.abs(res - _weighted_median(res, length)), length)
    return math.degrees(math.atan2(v[0], v[1])), float(v[2]), float(spread), res


def _confidence(n_per_frame: float, length_per_frame_frac: float, spread_deg: float) -> float:
    """Saturating 0..1 score from segment count, total length and spread.

    Engineering choice, no source: the standard error of the fit falls as
    spread / sqrt(n), so more and longer segments that agree closely score
    higher. Six segments spanning two picture heights at 0.5 deg spread score
    about 0.6; 20 long segments at 0.2 deg score above 0.9.
    """
    c_n = 1.0 - math.exp(-n_per_frame / 4.0)
    c_len = 1.0 - math.exp(-length_per_frame_frac)
    c_spread = 1.0 / (1.0 + (spread_deg / 1.5) ** 2)
    return float(np.clip(c_n * c_len * c_spread, 0.0, 1.0))


def estimate_camera_roll(
    frames: Sequence[np.ndarray],
    *,
    person_boxes: Sequence[Box | None] | None = None,
    max_tilt_deg: float = MAX_TILT_DEG,
    min_length_frac: float = MIN_LENGTH_FRAC,
    min_segments: int = MIN_SEGMENTS,
    box_margin_frac: tuple[float, float] = BOX_MARGIN_FRAC,
    to_reference: Sequence[np.ndarray | None] | None = None,
) -> RollEstimate:
    """Camera roll from straight background edges that are vertical in the world.

    Parameters
    ----------
    frames : sequence of ndarray, each (height, width, 3) uint8 RGB
        A few frames of one clip (same size), upright.
    person_boxes : sequence of box or None, keyword-only
        One entry per frame: ``(x0, y0, x1, y1)`` of the person in that
        frame's pixels, or ``None``. Segments touching the widened box are
        dropped.
    max_tilt_deg : float, keyword-only
        Largest tilt from image vertical a candidate segment may have.
    min_length_frac : float, keyword-only
        Shortest segment kept, as a fraction of the picture height.
    min_segments : int, keyword-only
        Fewest inlier segments per frame (on average) to report a roll.
    box_margin_frac : (float, float), keyword-only
        Widening of each person box (fractions of its width, height).
    to_reference : sequence of (2, 3) arrays or None, keyword-only
        For hand-held clips: per frame, the similarity mapping that frame's
        pixels into a reference frame's pixels (the inverse of
        ``CameraMotion.matrices[k]``). Segments are mapped before pooling, so
        the result is the roll of the reference frame.

    Returns
    -------
    RollEstimate
        ``source="none"``, ``roll_deg=0.0``, ``confidence=0.0`` when the scene
        holds too few vertical lines.

    Notes
    -----
    Segments: LSD (von Gioi et al. 2010, IEEE TPAMI 32:722). Keystone is
    handled by fitting the vertical vanishing point
    (:func:`fit_vertical_vanishing`); the roll is the direction from the image
    centre (principal point assumed there) to it. Segments pooled over frames.
    """
    frames = list(frames)
    if not frames:
        raise LeanVideoError("frames is empty; pass at least one upright RGB frame of the clip.")
    if person_boxes is not None and len(person_boxes) != len(frames):
        raise LeanVideoError(
            f"person_boxes must have one entry per frame ({len(frames)}); {len(person_boxes)} were given."
        )
    if not 1.0 <= max_tilt_deg <= 45.0:
        raise LeanVideoError(f"max_tilt_deg must lie within 1..45 degrees; {max_tilt_deg} was given.")
    shape = frames[0].shape
    for i, f in enumerate(frames):
        if not isinstance(f, np.ndarray) or f.dtype != np.uint8 or f.ndim != 3 or f.shape[2] != 3 or f.shape != shape:
            raise LeanVideoError(
                f"frames[{i}] must be a uint8 RGB array of shape {shape} like frames[0]; "
                f"got {getattr(f, 'dtype', type(f))} {getattr(f, 'shape', '')}."
            )
    height, width = shape[:2]
    if to_reference is not None and len(to_reference) != len(frames):
        raise LeanVideoError(
            f"to_reference must have one entry per frame ({len(frames)}); {len(to_reference)} were given."
        )
    pooled = []
    for i, f in enumerate(frames):
        box = _check_box(person_boxes[i], f"person_boxes[{i}]") if person_boxes is not None else None
        gray = cv2.cvtColor(f, cv2.COLOR_RGB2GRAY)
        seg = _segments(gray, box, min_length_px=min_length_frac * height,
                        max_tilt_deg=max_tilt_deg, margin_frac=box_margin_frac)
        if to_reference is not None and to_reference[i] is not None:
            seg = _map_segments(seg, np.asarray(to_reference[i], dtype=float), f"to_reference[{i}]")
        pooled.append(seg)
    seg = np.concatenate(pooled, axis=0)
    n_frames = len(frames)
    if len(seg) < min_segments * n_frames:
        log.info("camera roll: %d near-vertical segments in %d frames, too few to trust", len(seg), n_frames)
        return RollEstimate(0.0, 0.0, int(len(seg)), 0.0, "none", n_frames)
    roll, kappa, spread, res = fit_vertical_vanishing(seg, width=width, height=height)
    inlier = np.abs(res) <= max(3.0 * spread, 1.0)
    if inlier.sum() < min_segments * n_frames:
        log.info("camera roll: only %d of %d segments agree on one vanishing point", inlier.sum(), len(seg))
        return RollEstimate(0.0, 0.0, int(inlier.sum()), float(spread), "none", n_frames)
    roll, kappa, spread, res = fit_vertical_vanishing(seg[inlier], width=width, height=height)
    n_in = int(inlier.sum())
    if abs(kappa) > MAX_KAPPA:
        log.info("camera roll: vanishing point implausibly close (kappa %.2f); not trusted", kappa)
        return RollEstimate(0.0, 0.0, n_in, float(spread), "none", n_frames)
    conf = _confidence(n_in / n_frames, seg[inlier, 4].sum() / n_frames / height, spread)
    log.info("camera roll %.2f deg from %d segments (spread %.2f deg, kappa %.3f, confidence %.2f)",
             roll, n_in, spread, kappa, conf)
    return RollEstimate(float(roll), conf, n_in, float(spread), "scene", n_frames)


def estimate_roll_from_clip(
    path: str | os.PathLike,
    *,
    person_boxes_by_frame: Mapping[int, Box | None] | None = None,
    n_samples: int = 8,
    max_side_px: int = 960,
    motion=None,
    **options,
) -> RollEstimate:
    """Camera roll of a clip from ``n_samples`` evenly spaced frames.

    Parameters
    ----------
    path : path-like
        The clip.
    person_boxes_by_frame : mapping frame index -> box or None, keyword-only
        Person boxes in full-size upright pixels (the keypoint table's
        coordinates), keyed by 0-based frame index. A sampled frame without a
        box uses the nearest frame's box within 15 frames.
    n_samples : int, keyword-only
        Frames to search (1..64).
    max_side_px : int, keyword-only
        Frames are scaled down to this longer side for speed.
    motion : CameraMotion, optional, keyword-only
        Camera motion of the same clip (:func:`lean_video.scene_motion.estimate_camera_motion`).
        When given, segments are mapped into the first frame and the result
        is the roll of that reference frame, the frame
        :func:`~lean_video.scene_motion.stabilise_points` maps keypoints into.
    **options
        Passed to :func:`estimate_camera_roll`.

    Returns
    -------
    RollEstimate
    """
    if not 1 <= n_samples <= 64:
        raise LeanVideoError(f"n_samples must lie within 1..64; {n_samples} was given.")
    info = probe_clip(path, min_duration_s=0.0)
    total = max(info.frame_count, 1)
    wanted = set(np.unique(np.linspace(0, total - 1, n_samples + 2)[1:-1].round().astype(int)).tolist())
    if motion is not None:
        wanted &= set(int(i) for i in motion.frame_indices)
    frames, boxes, maps = [], [], []
    for index, _, rgb in iter_frames(path, max_side_px=max_side_px):
        if index not in wanted:
            continue
        k = rgb.shape[1] / info.width
        box = _check_box(nearest_box(person_boxes_by_frame, index), f"person_boxes_by_frame[{index}]")
        frames.append(rgb)
        boxes.append(None if box is None else tuple(v * k for v in box))
        if motion is not None:
            a = np.vstack([motion.matrices[int(np.searchsorted(motion.frame_indices, index))], [0, 0, 1]])
            inv = np.linalg.inv(a)[:2]
            inv[:, 2] *= k  # same map, expressed in the scaled-down pixels
            maps.append(inv)
        if len(frames) == len(wanted):
            break
    if not frames:
        raise LeanVideoError(f"no frames could be read from '{os.fspath(path)}'; export the clip again.")
    return estimate_camera_roll(frames, person_boxes=boxes, to_reference=maps if motion is not None else None,
                                **options)


_MOTION_NAMES = frozenset({"CameraMotion", "estimate_camera_motion", "stabilise_points", "classify"})


def __getattr__(name: str):
    # Lazy re-export: scene_motion imports this module's box helpers.
    if name in _MOTION_NAMES:
        from lean_video import scene_motion

        return getattr(scene_motion, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
