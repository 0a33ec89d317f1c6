"""Capture check: is this clip fit to measure, and what should be filmed again?

Each check gives ``{"name", "status", "value", "detail", "suggestion"}`` with
``status`` one of ``pass``, ``warn``, ``fail``. The limits are engineering
choices or common practice in clinical video gait assessment, stated beside
each constant; none comes from a published standard.

Inputs are the keypoint table (see :mod:`lean_video.pose`), the clip
description and, when available, the gait summary.
"""

from __future__ import annotations

import logging
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from lean_video.errors import LeanVideoError

log = logging.getLogger(__name__)

#: Key landmarks whose visibility the measurement depends on.
KEY_POINTS = ("left_shoulder", "right_shoulder", "left_hip", "right_hip",
              "left_ankle", "right_ankle", "left_heel", "right_heel", "left_foot_index", "right_foot_index")
#: Share of frames with the person found: pass / warn limits (engineering choice).
DETECTION_LIMITS = (0.90, 0.70)
#: Median visibility of the key landmarks: pass / warn limits (engineering choice).
VISIBILITY_LIMITS = (0.70, 0.50)
#: Frame rate: 30 fps resolves events to 33 ms, the usual video gait standard
#: (common practice, no source); 24 fps is still usable with coarser events.
FPS_LIMITS = (29.0, 23.0)
#: Shorter side of the picture in pixels (common practice: 720p or better).
RESOLUTION_LIMITS = (720, 480)
#: Median height of the person as a share of the picture height (engineering choice).
SIZE_LIMITS = (0.25, 0.15)
#: Single-support phases per side (issue requirement: at least three).
PHASE_LIMITS = (3, 1)
#: |camera roll| in degrees: up to 2 deg barely matters once corrected; above 5
#: the phone should be levelled (engineering choice; 1 deg of roll is 1 deg of lean).
ROLL_LIMITS = (2.0, 5.0)
#: Confidence below which a scene roll estimate is not used (engineering choice).
MIN_ROLL_CONFIDENCE = 0.5
#: Mean picture brightness (0-255) below which the clip is too dark (engineering choice).
DARK_LIMITS = (70.0, 40.0)


@dataclass(frozen=True)
class RollChoice:
    """The camera roll used for an analysis and where it came from."""

    roll_deg: float
    source: str  # "user" | "scene" | "none"
    confidence: float | None = None


def camera_roll(video: Path | None, keypoints: pd.DataFrame, *, user_roll_deg: float | None) -> RollChoice:
    """Choose the camera roll: the user's value, else the scene's, else 0.

    Parameters
    ----------
    video : Path or None
        The clip (None for keypoint input: no scene to look at).
    keypoints : DataFrame
        Keypoint table, used to keep the person out of the line search.
    user_roll_deg : float or None, keyword-only
        Value given with ``--camera-roll-deg``.
    """
    if user_roll_deg is not None:
        if not math.isfinite(user_roll_deg) or abs(user_roll_deg) > 45:
            raise LeanVideoError(f"--camera-roll-deg must lie within -45..45 degrees; {user_roll_deg} was given.")
        return RollChoice(float(user_roll_deg), "user", None)
    if video is None:
        return RollChoice(0.0, "none", None)
    from lean_video import scene

    estimate = scene.estimate_roll_from_clip(video, person_boxes_by_frame=person_boxes(keypoints))
    if estimate.source == "scene" and estimate.confidence >= MIN_ROLL_CONFIDENCE:
        log.info("camera roll from the scene: %.2f deg (confidence %.2f)", estimate.roll_deg, estimate.confidence)
        return RollChoice(float(estimate.roll_deg), "scene", float(estimate.confidence))
    log.info("camera roll: the scene gave no reliable estimate; assuming a level camera")
    return RollChoice(0.0, "none", float(estimate.confidence))


def _wide(keypoints: pd.DataFrame, column: str) -> pd.DataFrame:
    return keypoints.pivot(index="frame", columns="landmark", values=column)


def person_boxes(keypoints: pd.DataFrame) -> dict[int, tuple[float, float, float, float] | None]:
    """Per frame, the bounding box (x0, y0, x1, y1) of all landmarks, or None."""
    x, y = _wide(keypoints, "x_px"), _wide(keypoints, "y_px")
    x0, x1, y0, y1 = x.min(axis=1), x.max(axis=1), y.min(axis=1), y.max(axis=1)
    out = {}
    for frame in x.index:
        box = (x0[frame], y0[frame], x1[frame], y1[frame])
        out[int(frame)] = None if any(np.isnan(box)) else tuple(float(v) for v in box)
    return out


def _grade(value: float, limits: tuple[float, float], *, higher_is_better: bool = True) -> str:
    good, poor = limits
    if higher_is_better:
        return "pass" if value >= good else ("warn" if value >= poor else "fail")
    return "pass" if value <= good else ("warn" if value <= poor else "fail")


def _check(name: str, status: str, value, detail: str, suggestion: str) -> dict:
    return {"name": name, "status": status, "value": value, "detail": detail,
            "suggestion": suggestion if status != "pass" else ""}


def keypoint_checks(keypoints: pd.DataFrame, clip: dict) -> list[dict]:
    """Checks that need only the keypoints and the clip description."""
    vis = _wide(keypoints, "visibility")
    y = _wide(keypoints, "y_px")
    found = vis[["left_shoulder", "right_shoulder", "left_hip", "right_hip"]].min(axis=1) > 0.5
    rate = float(found.mean()) if len(found) else 0.0
    checks = [_check("detection_rate", _grade(rate, DETECTION_LIMITS), round(rate, 3),
                     f"person found with shoulders and hips in {rate:.0%} of frames",
                     "keep the client's whole body in view for the whole walk, and only the client")]
    key = [c for c in KEY_POINTS if c in vis]
    med_vis = float(np.nanmedian(vis.loc[found, key].to_numpy())) if found.any() else 0.0
    checks.append(_check("visibility", _grade(med_vis, VISIBILITY_LIMITS), round(med_vis, 3),
                         f"median visibility of shoulders, hips and feet {med_vis:.2f}",
                         "film in even light with the feet in view; avoid loose clothing over the hips"))
    fps = float(clip.get("fps") or 0.0)
    checks.append(_check("frame_rate", _grade(fps, FPS_LIMITS), round(fps, 2), f"{fps:.1f} frames per second",
                         "record at 30 fps or more (60 fps is better)"))
    short = int(min(clip.get("width", 0), clip.get("height", 0)))
    checks.append(_check("resolution", _grade(short, RESOLUTION_LIMITS), short,
                         f"{clip.get('width')}x{clip.get('height')} pixels", "record at 720p or more"))
    if found.any():
        tops = y.loc[found].min(axis=1)
        bottoms = y.loc[found].max(axis=1)
        size = float(np.nanmedian((bottoms - tops) / float(clip.get("height") or 1)))
    else:
        size = 0.0
    checks.append(_check("person_size", _grade(size, SIZE_LIMITS), round(size, 3),
                         f"the client fills a median {size:.0%} of the picture height",
                         "start the walk closer to the camera (7-8 m at most), or record at a higher resolution"))
    return checks


def capture_checks(keypoints: pd.DataFrame, clip: dict, summary: dict, *, roll: RollChoice) -> list[dict]:
    """All checks of a full analysis: keypoints, gait phases and camera roll."""
    checks = keypoint_checks(keypoints, clip)
    sides = summary.get("sides", {})
    n_min = min(int((sides.get(s) or {}).get("n_phases") or 0) for s in ("left", "right"))
    checks.append(_check("phases_per_side", _grade(n_min, PHASE_LIMITS), n_min,
                         f"fewest single-support phases on one side: {n_min}",
                         "film a longer walk, or two or three passes, to get at least three steps on each side"))
    checks.append(direction_check(keypoints, summary.get("direction")))
    checks.append(roll_check(roll))
    return checks


def direction_check(keypoints: pd.DataFrame, direction: str | None) -> dict:
    """Is the apparent body size changing the same way through the clip?"""
    y = _wide(keypoints, "y_px")
    t = keypoints.groupby("frame")["time_s"].first()
    size = (y.max(axis=1) - y.min(axis=1)).to_numpy()
    ok = np.isfinite(size)
    if ok.sum() < 10:
        return _check("direction", "fail", None, "too few frames with the client to tell the walking direction",
                      "film the client walking straight toward the camera")
    # Compare size trends over successive one-second windows with the overall trend.
    tt, ss = t.to_numpy()[ok], np.log(size[ok])
    overall = np.sign(np.polyfit(tt, ss, 1)[0])
    edges = np.arange(tt[0], tt[-1], 1.0)
    slopes = [np.polyfit(tt[m], ss[m], 1)[0] for a in edges
              if (m := (tt >= a) & (tt < a + 1.0)).sum() >= 5]
    agree = float(np.mean([np.sign(s) == overall for s in slopes])) if slopes else 0.0
    status = "pass" if agree >= 0.8 else ("warn" if agree >= 0.6 else "fail")
    return _check("direction", status, round(agree, 2),
                  f"walking {direction or 'unknown'} the camera; the size trend agrees in {agree:.0%} of seconds",
                  "film one straight pass toward the camera, without turning in view")


def roll_check(roll: RollChoice) -> dict:
    """How level was the camera, and was it corrected?"""
    if roll.source == "none":
        return _check("camera_roll", "warn", None,
                      "the camera's level could not be checked (too few vertical edges in view)",
                      "level the phone (a spirit-level app helps) and film where door frames or shelves are visible")
    status = _grade(abs(roll.roll_deg), ROLL_LIMITS, higher_is_better=False)
    how = "given by the user" if roll.source == "user" else "measured from the room's vertical edges"
    return _check("camera_roll", status, round(roll.roll_deg, 2),
                  f"camera tilted {roll.roll_deg:+.1f} deg ({how}); lean and obliquity are corrected for it",
                  "level the phone before filming: each degree of tilt is a degree of error if uncorrected")


def brightness_check(frames: list[np.ndarray]) -> dict:
    """Mean brightness of sampled RGB frames (too dark pictures lose keypoints)."""
    mean = float(np.mean([f.mean() for f in frames])) if frames else 0.0
    return _check("lighting", _grade(mean, DARK_LIMITS), round(mean, 1), f"mean brightness {mean:.0f} of 255",
                  "film in brighter, even light; avoid a window behind the client")
