"""Global camera motion of hand-held clips, measured on the background.

Conventions (stated once, tested in ``tests/test_scene.py``)
-----------------------------------------------------------
* Image coordinates: pixels of the frames given (for a clip path: full-size
  upright pixels, as the keypoint table uses), x to the right, y down.
* ``CameraMotion.matrices[k]`` is a 2x3 similarity ``A_k`` that maps a
  background point's position in the reference frame (the first frame) to
  its position in frame ``k``: ``p_k = A_k[:, :2] @ p_ref + A_k[:, 2]``.
  :func:`stabilise_points` applies the inverse.
* ``rotation_deg[k]`` is the angle of ``A_k``; positive means the background
  appears turned CLOCKWISE in frame ``k`` relative to the reference, the same
  sense as ``camera_roll_deg`` (see :mod:`lean_video.scene`): the roll of
  frame ``k`` is the reference roll plus ``rotation_deg[k]``.
* ``tx_px, ty_px`` are the displacement of the picture centre,
  ``A_k(c) - c``, so they do not depend on where the origin is.

Method: Shi-Tomasi corners (Shi & Tomasi 1994, "Good features to track",
CVPR) outside the widened person box, tracked frame to frame with pyramidal
Lucas-Kanade optical flow (Bouguet 2000, Intel technical report; Lucas &
Kanade 1981) with a forward-backward check (Kalal, Mikolajczyk & Matas 2010,
ICPR), a 4-degree-of-freedom similarity fitted with RANSAC (Fischler & Bolles
1981, Commun. ACM 24:381) and chained from the first frame.
"""

from __future__ import annotations

import logging
import math
import os
from dataclasses import dataclass
from typing import Mapping

import cv2
import numpy as np
from scipy.signal import savgol_filter

from lean_video.errors import LeanVideoError
from lean_video.scene import BOX_MARGIN_FRAC, Box, _check_box, expand_box, nearest_box
from lean_video.video import iter_frames

log = logging.getLogger(__name__)

#: Limits of :func:`classify` (engineering choice, no source). "Still": under
#: 0.5 % of the picture height (5 px at 1080 px) and 0.3 deg, below the
#: frame-to-frame jitter of pose keypoints (several pixels) and a tenth of a
#: 3 deg lean, so stabilising changes nothing measurable. "Too large": over
#: 10 % of the height or 5 deg, where the background changes so much that
#: chained tracking drifts and the rotation alone is as large as the lean
#: effect being measured (a few degrees).
STILL_TRANSLATION_FRAC = 0.005
STILL_ROTATION_DEG = 0.3
TOO_LARGE_TRANSLATION_FRAC = 0.10
TOO_LARGE_ROTATION_DEG = 5.0
#: More than this share of frames without a trusted estimate also counts as
#: "too_large": the motion could not be measured (engineering choice).
MAX_FAILED_FRACTION = 0.2

_MIN_INLIERS = 12
_BORDER_PX = 16


@dataclass(frozen=True, eq=False)
class CameraMotion:
    """Per-frame similarity of the background relative to the first frame.

    Attributes
    ----------
    frame_indices : ndarray (n,) int
    time_s : ndarray (n,) float
    matrices : ndarray (n, 2, 3)
        Reference -> frame ``k`` (module convention), in input pixels.
    rotation_deg, scale, tx_px, ty_px : ndarray (n,)
        Angle (clockwise positive), scale and picture-centre displacement.
    n_inliers : ndarray (n,) int
        RANSAC inliers of the step into each frame (0 for the first).
    tracked : ndarray (n,) bool
        False where the step could not be measured and was taken as no motion.
    width_px, height_px : int
        Size of the input frames.
    max_rotation_deg, max_translation_frac : float
        Largest ``|rotation_deg|`` and largest centre displacement / height.
    jitter_rms_frac, jitter_rms_deg : float
        RMS of the centre displacement (/ height) and rotation after removing
        a moving average over ``jitter_window_s``: the shake, not the sway.
    failed_fraction : float
        Share of steps without a trusted estimate.
    """

    frame_indices: np.ndarray
    time_s: np.ndarray
    matrices: np.ndarray
    rotation_deg: np.ndarray
    scale: np.ndarray
    tx_px: np.ndarray
    ty_px: np.ndarray
    n_inliers: np.ndarray
    tracked: np.ndarray
    width_px: int
    height_px: int
    max_rotation_deg: float
    max_translation_frac: float
    jitter_rms_frac: float
    jitter_rms_deg: float
    failed_fraction: float


def _frames_from(source):
    if isinstance(source, (str, os.PathLike)):
        yield from iter_frames(source)
        return
    for item in source:
        if not (isinstance(item, tuple) and len(item) == 3 and isinstance(item[2], np.ndarray)):
            raise LeanVideoError(
                "source must be a clip path or an iterable of (index, time_s, rgb) tuples as "
                f"video.iter_frames yields; an item of type {type(item).__name__} was given."
            )
        yield item


def _mask(shape, box: Box | None, margin_frac) -> np.ndarray:
    """255 where corners may be tracked: off the picture border and off the person."""
    h, w = shape
    mask = np.zeros((h, w), np.uint8)
    # Corners whose Lucas-Kanade window crosses the border are biased toward
    # the centre, which chains into a spurious zoom (seen on synthetic clips).
    mask[_BORDER_PX:h - _BORDER_PX, _BORDER_PX:w - _BORDER_PX] = 255
    if box is not None:
        x0, y0, x1, y1 = expand_box(box, margin_frac=margin_frac)
        mask[max(int(y0), 0):max(int(math.ceil(y1)), 0), max(int(x0), 0):max(int(math.ceil(x1)), 0)] = 0
    return mask


def _step(prev: np.ndarray, cur: np.ndarray, mask_prev, mask_cur) -> tuple[np.ndarray | None, int]:
    """Similarity mapping ``prev`` pixel positions to ``cur``, and its inlier count."""
    pts = cv2.goodFeaturesToTrack(prev, maxCorners=400, qualityLevel=0.01, minDistance=7,
                                  mask=mask_prev, blockSize=7)
    if pts is None or len(pts) < _MIN_INLIERS:
        return None, 0
    lk = dict(winSize=(21, 21), maxLevel=3,
              criteria=(cv2.TERM_CRITERIA_EPS | cv2.TERM_CRITERIA_COUNT, 30, 0.01))
    nxt, st, _ = cv2.calcOpticalFlowPyrLK(prev, cur, pts, None, **lk)
    back, st2, _ = cv2.calcOpticalFlowPyrLK(cur, prev, nxt, None, **lk)
    fb = np.linalg.norm((back - pts).reshape(-1, 2), axis=1)
    good = (st.ravel() == 1) & (st2.ravel() == 1) & (fb < 1.0)
    p0, p1 = pts.reshape(-1, 2)[good], nxt.reshape(-1, 2)[good]
    if len(p1):
        xi = np.clip(np.round(p1[:, 0]).astype(int), 0, cur.shape[1] - 1)
        yi = np.clip(np.round(p1[:, 1]).astype(int), 0, cur.shape[0] - 1)
        inside = mask_cur[yi, xi] == 0
        p0, p1 = p0[~inside], p1[~inside]
    if len(p0) < _MIN_INLIERS:
        return None, int(len(p0))
    a, inl = cv2.estimateAffinePartial2D(p0, p1, method=cv2.RANSAC, ransacReprojThreshold=1.0,
                                         maxIters=2000, confidence=0.995, refineIters=10)
    n_in = int(inl.sum()) if inl is not None else 0
    if a is None or n_in < _MIN_INLIERS:
        return None, n_in
    return a, n_in


def _smooth(x: np.ndarray, window: int) -> np.ndarray:
    """Local straight-line fit (Savitzky & Golay 1964, Anal. Chem. 36:1627, order 1).

    A moving mean in the interior; at the ends it fits a line instead of
    padding, so a steady pan is not mistaken for shake.
    """
    window = min(window, len(x) if len(x) % 2 else len(x) - 1)
    if window % 2 == 0:
        window -= 1
    if window < 3:
        return x.copy()
    return savgol_filter(x, window, 1, mode="interp")


def estimate_camera_motion(
    source,
    *,
    person_boxes_by_frame: Mapping[int, Box | None] | None = None,
    max_side_px: int = 640,
    jitter_window_s: float = 0.5,
    box_margin_frac: tuple[float, float] = BOX_MARGIN_FRAC,
) -> CameraMotion:
    """Measure how the background moves in a hand-held clip.

    Parameters
    ----------
    source : path-like or iterable of (index, time_s, rgb)
        A clip, or frames as :func:`lean_video.video.iter_frames` yields them.
    person_boxes_by_frame : mapping frame index -> box or None, keyword-only
        Person boxes ``(x0, y0, x1, y1)`` in input pixels; corners inside the
        widened box are not tracked. A frame without a box uses the nearest
        frame's box within 15 frames.
    max_side_px : int, keyword-only
        Frames are scaled down to this longer side for tracking; results are
        scaled back to input pixels.
    jitter_window_s : float, keyword-only
        Moving-average window separating slow sway from shake (engineering
        choice: 0.5 s keeps components above ~2 Hz, the walking-step rate of
        a person holding the phone, as shake).
    box_margin_frac : (float, float), keyword-only
        Widening of each person box (fractions of its width, height).

    Returns
    -------
    CameraMotion
    """
    if not 64 <= max_side_px <= 4096:
        raise LeanVideoError(f"max_side_px must lie within 64..4096; {max_side_px} was given.")
    if not jitter_window_s > 0:
        raise LeanVideoError(f"jitter_window_s must be positive; {jitter_window_s} was given.")
    idx, times, mats, n_inl, ok = [], [], [], [], []
    prev = mask_prev = None
    total = np.eye(3)
    width = height = k = None
    for index, time_s, rgb in _frames_from(source):
        if rgb.dtype != np.uint8 or rgb.ndim != 3 or rgb.shape[2] != 3:
            raise LeanVideoError(f"frame {index} must be uint8 RGB (h, w, 3); got {rgb.dtype} {rgb.shape}.")
        if width is None:
            height, width = rgb.shape[:2]
            k = min(1.0, max_side_px / max(height, width))
        elif rgb.shape[:2] != (height, width):
            raise LeanVideoError(f"frame {index} is {rgb.shape[1]}x{rgb.shape[0]}, unlike the first "
                                 f"frame's {width}x{height}; all frames must share one size.")
        gray = cv2.cvtColor(rgb, cv2.COLOR_RGB2GRAY)
        if k < 1.0:
            gray = cv2.resize(gray, (round(width * k), round(height * k)), interpolation=cv2.INTER_AREA)
        box = _check_box(nearest_box(person_boxes_by_frame, index), f"person_boxes_by_frame[{index}]")
        mask = _mask(gray.shape, None if box is None else tuple(v * k for v in box), box_margin_frac)
        if prev is None:
            a, n, good = np.eye(2, 3), 0, True
        else:
            a, n = _step(prev, gray, mask_prev, mask)
            good = a is not None
            if not good:
                log.debug("camera motion: step into frame %d not measurable (%d inliers)", index, n)
                a = np.eye(2, 3)
        total = np.vstack([a, [0, 0, 1]]) @ total
        idx.append(int(index))
        times.append(float(time_s))
        mats.append(total[:2].copy())
        n_inl.append(n)
        ok.append(good)
        prev, mask_prev = gray, mask
    if len(idx) < 2:
        raise LeanVideoError(f"camera motion needs at least 2 frames; {len(idx)} could be read, so check the clip.")
    mats = np.array(mats)
    mats[:, :, 2] /= k  # scale translations from tracking pixels back to input pixels
    c = np.array([width / 2.0, height / 2.0])
    centre = mats[:, :, :2] @ c + mats[:, :, 2] - c
    rot = np.degrees(np.arctan2(mats[:, 1, 0], mats[:, 0, 0]))
    times = np.array(times)
    dt = np.diff(times)
    fps = 1.0 / float(np.median(dt[dt > 0])) if np.any(dt > 0) else 30.0
    window = max(1, int(round(jitter_window_s * fps)) | 1)  # odd, as the filter needs
    shake = np.column_stack([centre[:, j] - _smooth(centre[:, j], window) for j in (0, 1)])
    ok = np.array(ok)
    motion = CameraMotion(
        frame_indices=np.array(idx), time_s=times, matrices=mats, rotation_deg=rot,
        scale=np.hypot(mats[:, 0, 0], mats[:, 1, 0]), tx_px=centre[:, 0], ty_px=centre[:, 1],
        n_inliers=np.array(n_inl), tracked=ok, width_px=int(width), height_px=int(height),
        max_rotation_deg=float(np.abs(rot).max()),
        max_translation_frac=float(np.hypot(centre[:, 0], centre[:, 1]).max() / height),
        jitter_rms_frac=float(np.sqrt((shake ** 2).sum(axis=1).mean()) / height),
        jitter_rms_deg=float(np.sqrt(((rot - _smooth(rot, window)) ** 2).mean())),
        failed_fraction=float(1.0 - ok[1:].mean()),
    )
    log.info("camera motion over %d frames: max rotation %.2f deg, max shift %.1f %% of height, "
             "jitter %.2f %%, %.0f %% of steps unmeasured", len(idx), motion.max_rotation_deg,
             100 * motion.max_translation_frac, 100 * motion.jitter_rms_frac, 100 * motion.failed_fraction)
    return motion


def stabilise_points(x_px, y_px, motion: CameraMotion, frame_indices) -> tuple[np.ndarray, np.ndarray]:
    """Map image points of each frame into the reference (first) frame.

    Parameters
    ----------
    x_px, y_px : array_like
        Point coordinates in input pixels (any shape; NaN stays NaN, as a
        missing keypoint).
    motion : CameraMotion
    frame_indices : array_like of int
        Frame of each point, broadcastable to ``x_px``'s shape.

    Returns
    -------
    x_ref, y_ref : ndarray
        Coordinates in the reference frame: ``A_k^{-1}`` applied.
    """
    x = np.asarray(x_px, dtype=float)
    y = np.asarray(y_px, dtype=float)
    if x.shape != y.shape:
        raise LeanVideoError(f"x_px and y_px must have the same shape; got {x.shape} and {y.shape}.")
    fi = np.broadcast_to(np.asarray(frame_indices), x.shape)
    pos = np.searchsorted(motion.frame_indices, fi)
    found = (pos < len(motion.frame_indices)) & (
        motion.frame_indices[np.minimum(pos, len(motion.frame_indices) - 1)] == fi)
    if not found.all():
        missing = np.unique(fi[~found])[:5].tolist()
        raise LeanVideoError(f"frame_indices {missing} are not in the camera motion; estimate the "
                             "motion over the same frames as the keypoints.")
    a = motion.matrices[pos]
    lin, t = a[..., :2], a[..., 2]
    det = lin[..., 0, 0] * lin[..., 1, 1] - lin[..., 0, 1] * lin[..., 1, 0]
    qx, qy = x - t[..., 0], y - t[..., 1]
    x_ref = (lin[..., 1, 1] * qx - lin[..., 0, 1] * qy) / det
    y_ref = (-lin[..., 1, 0] * qx + lin[..., 0, 0] * qy) / det
    return x_ref, y_ref


def classify(
    motion: CameraMotion,
    *,
    still_translation_frac: float = STILL_TRANSLATION_FRAC,
    still_rotation_deg: float = STILL_ROTATION_DEG,
    too_large_translation_frac: float = TOO_LARGE_TRANSLATION_FRAC,
    too_large_rotation_deg: float = TOO_LARGE_ROTATION_DEG,
    max_failed_fraction: float = MAX_FAILED_FRACTION,
) -> str:
    """Sort a clip's camera motion into ``"still"``, ``"moderate"`` or ``"too_large"``.

    Parameters
    ----------
    motion : CameraMotion
    still_translation_frac, still_rotation_deg : float, keyword-only
        Both maxima below these: ``"still"`` (no correction needed).
    too_large_translation_frac, too_large_rotation_deg : float, keyword-only
        Either maximum above these: ``"too_large"`` (film again on a tripod or
        with the phone held against a wall).
    max_failed_fraction : float, keyword-only
        More unmeasured steps than this also give ``"too_large"``.

    Returns
    -------
    str
        Limits are the module constants; engineering choice, no source.
    """
    if not (0 < still_translation_frac < too_large_translation_frac and 0 < still_rotation_deg < too_large_rotation_deg):
        raise LeanVideoError("the 'still' limits must be positive and below the 'too_large' limits; "
                             f"got {still_translation_frac}/{too_large_translation_frac} and "
                             f"{still_rotation_deg}/{too_large_rotation_deg}.")
    if (motion.failed_fraction > max_failed_fraction
            or motion.max_translation_frac > too_large_translation_frac
            or motion.max_rotation_deg > too_large_rotation_deg):
        return "too_large"
    if motion.max_translation_frac < still_translation_frac and motion.max_rotation_deg < still_rotation_deg:
        return "still"
    return "moderate"
