"""Standing posture at the start of a clip, reported apart from walking.

If the client stands still for a second or more before setting off, their
habitual trunk lean and pelvic obliquity are measured there, so a postural
lean is not mistaken for a walking compensation.

Inputs are the gait stage's per-frame table (``time_s``, ``trunk_lean_deg``,
``pelvic_obliquity_deg``, ``left_contact``, ``right_contact``, ``valid``) and
the keypoint table (for how much the body moves). Signs as in
:mod:`lean_video.gait`: lean positive toward the client's right, obliquity
positive when the client's left hip is lower.

Method: "still" means both feet in contact and the hip midpoint moving less
than :data:`STILL_SPEED_PER_S` body heights per second (engineering choice:
walking moves the pelvis forward at about 0.8 body heights per second, quiet
standing sway is two orders of magnitude less; Winter 1995, Gait & Posture
3:193, on standing sway, from memory).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from lean_video.errors import LeanVideoError

#: Largest hip-midpoint image speed, in body heights per second, counted as still.
STILL_SPEED_PER_S = 0.05
#: Shortest still stretch reported (the issue's "a second or more").
MIN_STILL_S = 1.0
#: Time span of the central difference that gives the hip's speed (engineering choice, no source).
SPEED_SPAN_S = 0.3
#: Latest start of the still stretch that "opens" the clip (engineering choice, no source).
MAX_START_S = 0.5


def standing_posture(frames: pd.DataFrame, keypoints: pd.DataFrame, *,
                     min_still_s: float = MIN_STILL_S, still_speed_per_s: float = STILL_SPEED_PER_S) -> dict | None:
    """Mean lean and obliquity over the still stretch that opens the clip, or None.

    The stretch must begin within :data:`MAX_START_S` of the first frame.

    Parameters
    ----------
    frames : DataFrame
        Gait per-frame table.
    keypoints : DataFrame
        Keypoint table of the same clip (long format).
    min_still_s, still_speed_per_s : float, keyword-only
        Shortest stretch, and the speed limit that counts as still.

    Returns
    -------
    dict or None
        ``start_s, end_s, duration_s, lean_deg, pelvic_obliquity_deg`` (and
        their SDs), or None when the clip does not open with the client still.
    """
    if min_still_s <= 0 or still_speed_per_s <= 0:
        raise LeanVideoError(f"min_still_s and still_speed_per_s must be positive; got {min_still_s} and "
                             f"{still_speed_per_s}.")
    x = keypoints.pivot(index="frame", columns="landmark", values="x_px").reindex(frames["frame"])
    y = keypoints.pivot(index="frame", columns="landmark", values="y_px").reindex(frames["frame"])
    t = frames["time_s"].to_numpy(dtype=float)
    hip = np.c_[(x["left_hip"] + x["right_hip"]) / 2, (y["left_hip"] + y["right_hip"]) / 2]
    body = (y[["left_heel", "right_heel"]].mean(axis=1) - y[["left_shoulder", "right_shoulder"]].mean(axis=1)).to_numpy()
    if len(t) < 3:
        return None
    # Central difference over SPEED_SPAN_S rather than frame to frame: the pose
    # model's hip points jitter by about a pixel from frame to frame, which alone
    # reads as 0.05 body heights per second on a client 7 m away.
    lo = np.searchsorted(t, t - SPEED_SPAN_S / 2, side="left")
    hi = np.clip(np.searchsorted(t, t + SPEED_SPAN_S / 2, side="right") - 1, 0, len(t) - 1)
    span = t[hi] - t[lo]
    speed = np.linalg.norm(hip[hi] - hip[lo], axis=1) / np.where(span > 0, span, np.nan)
    rel = speed / (body / 0.818)  # shoulder-to-heel is 0.818 of stature (Winter 2009, Fig 4.1)
    still = ((rel < still_speed_per_s) & frames["left_contact"].to_numpy(dtype=bool)
             & frames["right_contact"].to_numpy(dtype=bool) & frames["valid"].to_numpy(dtype=bool))
    if not still.any():
        return None
    first = int(np.argmax(still))
    # The first frames may miss: a contact seen from the first frame has no
    # strike to start it, and the image speed there is a one-sided difference.
    if t[first] - t[0] > MAX_START_S:
        return None
    rest = still[first:]
    end = first + (int(np.argmin(rest)) if not rest.all() else len(rest))
    if t[end - 1] - t[first] < min_still_s:
        return None
    part = frames.iloc[first:end]
    return {
        "start_s": float(t[first]), "end_s": float(t[end - 1]), "duration_s": float(t[end - 1] - t[first]),
        "lean_deg": float(part["trunk_lean_deg"].mean()), "lean_sd_deg": float(part["trunk_lean_deg"].std()),
        "pelvic_obliquity_deg": float(part["pelvic_obliquity_deg"].mean()),
        "pelvic_obliquity_sd_deg": float(part["pelvic_obliquity_deg"].std()),
    }
