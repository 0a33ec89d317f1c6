"""Pelvic obliquity from two skin markers over the pelvis (gait stage).

Input: the keypoint table's two marker landmarks
(:data:`lean_video.pose_markers.MARKER_NAMES`), found by the pose stage when
the clinician put stickers over both anterior (walking toward) or posterior
(walking away) superior iliac spines. Conventions are those of
:mod:`lean_video.gait`: upright-image pixels, x right, y down; tracks of shape
``(n_frames, 2)``; ``pelvic_obliquity_deg`` positive when the client's LEFT
side of the pelvis is lower; ``camera_roll_deg`` positive when world verticals
appear turned clockwise.

The markers are ordered by image x in each frame, not by their labels: toward
the camera the client's left is the image right, away from it the image left.
Short gaps are filled and both markers low-passed exactly like the pose
model's points (:func:`lean_video.gait_clean.fill_short_gaps`,
:func:`lean_video.gait_clean.lowpass_irregular`); longer gaps stay missing.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pandas as pd

from lean_video.gait_clean import fill_short_gaps, lowpass_irregular
from lean_video.pose_markers import MARKER_NAMES


@dataclasses.dataclass(frozen=True)
class MarkerPelvis:
    """Pelvic obliquity from the markers.

    Attributes
    ----------
    obliquity_deg : ndarray, shape (n,)
        Per frame; NaN where the markers were not seen (beyond short gaps).
    seen_fraction : float
        Share of frames with both markers seen (before gap filling).
    """

    obliquity_deg: np.ndarray
    seen_fraction: float


def marker_track(keypoints: pd.DataFrame, frame: np.ndarray) -> np.ndarray | None:
    """The two markers per frame, the one with the smaller image x first.

    Parameters
    ----------
    keypoints : DataFrame
        Keypoint table (frame, landmark, x_px, y_px, visibility ...).
    frame : ndarray of int, shape (n,)
        Frames to return, in order.

    Returns
    -------
    ndarray, shape (n, 2, 2) or None
        ``[frame, marker, (x, y)]``; NaN where a marker was not seen; None when
        the table has no marker rows at all (no markers were searched for).
    """
    sub = keypoints[keypoints["landmark"].isin(MARKER_NAMES)]
    if sub.empty:
        return None
    index = pd.Index(frame)
    pts = []
    for name in MARKER_NAMES:
        rows = sub[sub["landmark"] == name].drop_duplicates("frame").set_index("frame").reindex(index)
        xy = rows[["x_px", "y_px"]].to_numpy(float, copy=True)
        xy[~(rows["visibility"].to_numpy(float) > 0)] = np.nan
        pts.append(xy)
    pair = np.stack(pts, axis=1)
    swap = pair[:, 0, 0] > pair[:, 1, 0]
    pair[swap] = pair[swap][:, ::-1]
    both = np.isfinite(pair).all(axis=(1, 2))
    pair[~both] = np.nan
    return pair


def marker_obliquity(
    keypoints: pd.DataFrame, frame: np.ndarray, time_s: np.ndarray, *, direction: str,
    camera_roll_deg: float = 0.0, max_gap_s: float = 0.1, cutoff_hz: float = 6.0,
) -> MarkerPelvis | None:
    """Pelvic obliquity per frame from the two pelvis markers.

    Parameters
    ----------
    keypoints : DataFrame
        Keypoint table holding the marker rows.
    frame, time_s : ndarray, shape (n,)
        Frames and their true timestamps (strictly increasing).
    direction : {"toward", "away"}, keyword-only
    camera_roll_deg, max_gap_s, cutoff_hz : float, keyword-only
        As in :func:`lean_video.gait.analyse_keypoints`.

    Returns
    -------
    MarkerPelvis or None
        None when the table has no marker rows.
    """
    pair = marker_track(keypoints, frame)
    if pair is None:
        return None
    seen = float(np.mean(np.isfinite(pair).all(axis=(1, 2))))
    smooth = [lowpass_irregular(fill_short_gaps(pair[:, k], time_s, max_gap_s=max_gap_s), time_s,
                                cutoff_hz=cutoff_hz) for k in (0, 1)]
    image_left, image_right = smooth
    left, right = (image_right, image_left) if direction == "toward" else (image_left, image_right)
    return MarkerPelvis(line_obliquity_deg(left, right, camera_roll_deg=camera_roll_deg), seen)


def line_obliquity_deg(left: np.ndarray, right: np.ndarray, *, camera_roll_deg: float = 0.0) -> np.ndarray:
    """Tilt of the line from the client's right point to the left one, degrees.

    Parameters
    ----------
    left, right : ndarray, shape (n, 2)
        The client's left and right point (image pixels, x right, y down).
    camera_roll_deg : float, keyword-only

    Returns
    -------
    ndarray, shape (n,)
        Against true horizontal, positive when the left point is lower.
    """
    r = math.radians(camera_roll_deg)
    up = np.array([math.sin(r), -math.cos(r)])
    horiz = np.array([math.cos(r), math.sin(r)])
    drop_left = (right - left) @ up
    width = np.abs((left - right) @ horiz)
    return np.degrees(np.arctan2(drop_left, width))
