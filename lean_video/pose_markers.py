"""Skin markers over the pelvis: two coloured stickers found in each frame.

The pose model's hip points do not follow the pelvis (their line tilts with the
trunk, see :data:`lean_video.stated_accuracy.PELVIS_METHOD`), so pelvic obliquity is
measured only when the clinician has put two round stickers of one bright
colour on the client's skin or tight clothing over both anterior superior
iliac spines (client walking toward the camera) or both posterior superior
iliac spines (walking away). Two markers placed symmetrically on the pelvis lie
on a line parallel to the one through the hip joint centres, so the tilt of
their line in a frontal view is the pelvic obliquity; this is the usual
two-dimensional frontal-plane video method with pelvic skin markers (for
example Maykut et al. 2015, Int J Sports Phys Ther 10(2): 136-146, from
memory).

Per frame, inside a window around the pose model's hips (sized by the trunk
length, so the search follows the client at any distance), pixels of the
marker colour (a hue band, with enough saturation and brightness) are grouped
into connected blobs of sticker size and shape (clothing of the same colour
makes larger or longer blobs and is passed over); the two largest blobs lying
on either side of the hip midpoint, of like size, roughly level and a plausible
distance apart, are the markers, and their centroids (sub-pixel) are kept. Frames where no such pair is seen get
NaN positions; they are never guessed.

Output rows extend the keypoint table of :mod:`lean_video.pose` with two more
landmarks, :data:`MARKER_NAMES`, labelled with the side of the model's nearer
hip point; the gait stage orders them by image position, not by label.
Coordinates are upright full-size pixels (x right, y down) like every keypoint.
"""

from __future__ import annotations

import logging
import os
from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np

from lean_video.errors import LeanVideoError

if TYPE_CHECKING:  # pandas is imported where the table is built, not at import time
    import pandas as pd

log = logging.getLogger(__name__)

#: Landmark names of the two pelvis markers in the keypoint table.
MARKER_NAMES = ("left_pelvis_marker", "right_pelvis_marker")

#: Sticker colours the search knows, as hue in degrees (0-360, HSV). Bright
#: stickers of these colours are sold for skin marking; pick one that differs
#: from the client's clothing and the room (common practice, no source). No
#: orange or red: skin lies at hues of about 10-30 degrees, and hands near the
#: hips made false pairs on the rendered clips.
MARKER_HUES_DEG = {"green": 110.0, "yellow": 55.0, "pink": 325.0, "blue": 210.0}


#: Widest marker spacing, in multiples of the pose model's hip-point spacing:
#: 1.4 for the anterior spines (Harrington et al. 2007) plus about 30 % for the
#: model's hip points lying off the joint centres (Needham et al. 2021 measured
#: 3-5 cm). Measured on the rendered marker clips: 1.25-1.44 (anterior), 0.48-0.54
#: (posterior); scraps of sleeves and hands of a marker-like colour: 1.54 and up.
MAX_SPACING_PER_HIP_SPACING = 1.8


#: Smallest share of frames (with the client found) showing both markers for
#: the markers to be used: a pair seen in only a few frames is more likely
#: clothing of that colour than two stickers (common practice, no source).
MIN_FRAME_SHARE = 0.2


@dataclass(frozen=True)
class MarkerSearch:
    """Settings of the marker search (all stored as provenance).

    The defaults are engineering choices checked on the rendered marker clips
    (common practice, no source), except where measured numbers are given.

    Attributes
    ----------
    colour : str
        One of :data:`MARKER_HUES_DEG`.
    hue_tolerance_deg : float
        Half-width of the accepted hue band.
    min_saturation, min_value : float
        Smallest HSV saturation and value (0-1) of a marker pixel: lit stickers
        are far more saturated than skin, clothing and walls.
    min_area_px : int
        Smallest blob, in pixels (a 4 cm sticker at 8 m from a 720 p phone
        camera covers about 20).
    max_ring_fraction : float
        Largest share of marker-like pixels in a ring around a blob (a
        sticker stands out from what surrounds it; a scrap of clothing of the
        same colour does not).
    min_spacing_px : float
        Closest horizontal spacing of the two markers in the picture. The
        tilt's error grows as the spacing shrinks: on the rendered clips
        walking away (posterior spines about 9 cm apart) the per-frame error's
        SD was 2.5-2.9 degrees below 16 px, 1.2-1.9 at 16-20 px and 1.0-1.2 at
        20-24 px; walking toward, the anterior spines never came closer than
        30 px.
    """

    colour: str = "green"
    hue_tolerance_deg: float = 25.0
    min_saturation: float = 0.25
    min_value: float = 0.2
    min_area_px: int = 3
    max_ring_fraction: float = 0.25
    min_spacing_px: float = 20.0

    def __post_init__(self):
        if self.colour not in MARKER_HUES_DEG:
            raise LeanVideoError(
                f"pelvis marker colour must be one of {', '.join(MARKER_HUES_DEG)}, got {self.colour!r}; "
                "give the colour of the stickers on the client's pelvis.")
        if not 5.0 <= self.hue_tolerance_deg <= 60.0:
            raise LeanVideoError(
                f"hue_tolerance_deg must lie within 5-60 degrees, got {self.hue_tolerance_deg}; use 25.")


def marker_mask(rgb: np.ndarray, *, search: MarkerSearch, loose: bool = False) -> np.ndarray:
    """Boolean mask of marker-coloured pixels of an RGB uint8 picture (h, w, 3).

    ``loose`` halves the saturation and brightness floors: pixels of roughly
    the marker's colour, used to see whether a blob stands out from its
    surroundings.
    """
    import cv2  # imported here so the command line starts without OpenCV

    hsv = cv2.cvtColor(np.ascontiguousarray(rgb), cv2.COLOR_RGB2HSV_FULL)  # hue 0-255 for 0-360 deg
    hue = hsv[..., 0].astype(np.float32) * (360.0 / 256.0)
    d = np.abs((hue - MARKER_HUES_DEG[search.colour] + 180.0) % 360.0 - 180.0)
    k = 0.5 if loose else 1.0
    return ((d <= search.hue_tolerance_deg) & (hsv[..., 1] >= k * search.min_saturation * 255)
            & (hsv[..., 2] >= k * search.min_value * 255))


def _stands_out(blob: np.ndarray, loose: np.ndarray, stat: np.ndarray, max_fraction: float) -> bool:
    """Is the blob surrounded by other colours (a sticker) rather than by more of its own (clothing)?

    Looks at a ring from 2 px to 2 px plus the blob's size outside it (so the
    colour bleeding of video compression next to the blob is skipped) and
    accepts the blob when at most ``max_fraction`` of that ring is roughly of
    the marker colour (common practice, no source).
    """
    import cv2

    x, y, bw, bh = (int(v) for v in stat[:4])
    r_in, r_out = 2, 2 + max(2, (bw + bh) // 2)
    ya, yb = max(0, y - r_out), min(blob.shape[0], y + bh + r_out)
    xa, xb = max(0, x - r_out), min(blob.shape[1], x + bw + r_out)
    b = blob[ya:yb, xa:xb].astype(np.uint8)
    disc = lambda r: cv2.getStructuringElement(cv2.MORPH_ELLIPSE, (2 * r + 1, 2 * r + 1))  # noqa: E731
    ring = cv2.dilate(b, disc(r_out)).astype(bool) & ~cv2.dilate(b, disc(r_in)).astype(bool)
    if not ring.any():
        return False
    return float(loose[ya:yb, xa:xb][ring].mean()) <= max_fraction


def find_markers(rgb: np.ndarray, hips_px: np.ndarray, trunk_px: float, *,
                 search: MarkerSearch = MarkerSearch()) -> np.ndarray:
    """The two pelvis markers in one frame.

    Parameters
    ----------
    rgb : ndarray, shape (h, w, 3), uint8
        Upright picture.
    hips_px : ndarray, shape (2, 2)
        The pose model's two hip points (x, y), any order.
    trunk_px : float
        Hip-midpoint to shoulder-midpoint distance in pixels (sets the window).
    search : MarkerSearch, keyword-only

    Returns
    -------
    ndarray, shape (2, 2)
        Marker centroids (x, y), the one with the smaller x first; NaN when no
        plausible pair is seen.
    """
    import cv2

    out = np.full((2, 2), np.nan)
    if not (np.isfinite(hips_px).all() and np.isfinite(trunk_px) and trunk_px > 4):
        return out
    h, w = rgb.shape[:2]
    xm, ym = hips_px.mean(axis=0)
    # The iliac spines lie 0.1-0.2 trunk lengths above the hip joints and up to
    # 0.3 to each side; the window is wider for hip points that are off
    # (proportions from memory; common practice, no source).
    x0, x1 = int(max(0, xm - 0.75 * trunk_px)), int(min(w, xm + 0.75 * trunk_px + 1))
    y0, y1 = int(max(0, ym - 0.6 * trunk_px)), int(min(h, ym + 0.35 * trunk_px + 1))
    if x1 - x0 < 3 or y1 - y0 < 3:
        return out
    crop = rgb[y0:y1, x0:x1]
    mask = marker_mask(crop, search=search).astype(np.uint8)
    n, labels, stats, cents = cv2.connectedComponentsWithStats(mask, connectivity=8)
    loose = marker_mask(crop, search=search, loose=True)
    # A sticker 4 cm across is about 0.08 trunk lengths: blobs over twice that
    # size, or long and thin, are clothing or background of the same colour
    # (common practice, no source).
    max_area = max(4.0 * search.min_area_px, 0.02 * trunk_px ** 2)
    blobs = []
    for i in range(1, n):
        area, bw, bh = stats[i, cv2.CC_STAT_AREA], stats[i, cv2.CC_STAT_WIDTH], stats[i, cv2.CC_STAT_HEIGHT]
        if (search.min_area_px <= area <= max_area and max(bw, bh) <= 3 * min(bw, bh) + 1
                and _stands_out(labels == i, loose, stats[i], search.max_ring_fraction)):
            blobs.append((area, cents[i, 0] + x0, cents[i, 1] + y0))
    left = sorted([b for b in blobs if b[1] < xm], reverse=True)
    right = sorted([b for b in blobs if b[1] >= xm], reverse=True)
    if not left or not right:
        return out
    (area_a, xa, ya), (area_b, xb, yb) = left[0], right[0]
    if max(area_a, area_b) > 4 * min(area_a, area_b) + 4:
        return out  # two stickers of one size look alike; one of these is something else
    dx, dy = xb - xa, yb - ya
    # Two markers about 9 cm (posterior) to 24 cm (anterior) apart, never tilted
    # by more than about 25 degrees in walking (common practice, no source).
    if not (0.08 * trunk_px <= dx <= 1.2 * trunk_px and abs(dy) <= 0.47 * dx):
        return out
    # The anterior spines are about 1.4 times as far apart as the hip joint
    # centres (Harrington et al. 2007, J Biomech 40:595-602: joint centres
    # 0.33 pelvic widths + 7.3 mm from the midline); the pose model's hip points
    # sit a few centimetres off the joints, hence the allowance. Wider pairs are
    # sleeves, hands or clothing edges at the sides of the body.
    if dx > MAX_SPACING_PER_HIP_SPACING * abs(hips_px[1, 0] - hips_px[0, 0]):
        return out
    if dx < search.min_spacing_px:
        return out  # too close together in the picture to give a tilt worth having
    out[0], out[1] = (xa, ya), (xb, yb)
    return out


def find_markers_near_body(rgb: np.ndarray, points: dict, *, search: MarkerSearch = MarkerSearch()) -> np.ndarray:
    """:func:`find_markers` with its window set from the pose model's points.

    ``points`` maps ``left_hip``, ``right_hip``, ``left_shoulder`` and
    ``right_shoulder`` to image positions (x, y).
    """
    hips = np.stack([points["left_hip"], points["right_hip"]])
    trunk = float(np.linalg.norm((points["left_shoulder"] + points["right_shoulder"]) / 2 - hips.mean(axis=0)))
    return find_markers(rgb, hips, trunk, search=search)


def track_pelvis_markers(
    path: str | os.PathLike, keypoints: pd.DataFrame, *, search: MarkerSearch = MarkerSearch(),
) -> pd.DataFrame:
    """Find the pelvis markers in every frame of a clip that has keypoints.

    Parameters
    ----------
    path : path-like
        The clip the keypoints come from.
    keypoints : DataFrame
        Keypoint table of :mod:`lean_video.pose` for that clip (frames by
        decode index).
    search : MarkerSearch, keyword-only

    Returns
    -------
    DataFrame
        Rows in the keypoint-table format for :data:`MARKER_NAMES`, one per
        frame of ``keypoints``; ``visibility`` is 1 where the marker was seen
        and 0 (with NaN position) where not; ``z`` and ``presence`` are NaN.
    """
    import pandas as pd

    from lean_video.video import iter_frames

    pts = {}
    for name in ("left_hip", "right_hip", "left_shoulder", "right_shoulder"):
        rows = keypoints[keypoints["landmark"] == name].drop_duplicates("frame").set_index("frame")
        pts[name] = rows
    frames = keypoints[["frame", "time_s"]].drop_duplicates("frame").sort_values("frame")
    want = dict(zip(frames["frame"].to_numpy(int), frames["time_s"].to_numpy(float)))
    found, shape = {}, {}
    for index, _, rgb in iter_frames(path):
        if index not in want:
            continue
        try:
            xy = {k: v.loc[index, ["x_px", "y_px"]].to_numpy(float) for k, v in pts.items()}
        except KeyError:
            continue
        pair = find_markers_near_body(rgb, xy, search=search)
        if np.isfinite(pair).all():
            # label each marker by the model's nearer hip point (the gait stage re-orders by position)
            near_left = np.argmin(np.linalg.norm(pair - xy["left_hip"], axis=1))
            found[index] = (pair[near_left], pair[1 - near_left])
            hip_mid = (xy["left_hip"] + xy["right_hip"]) / 2
            trunk = float(np.linalg.norm((xy["left_shoulder"] + xy["right_shoulder"]) / 2 - hip_mid))
            shape[index] = (np.linalg.norm(pair[1] - pair[0]) / trunk, *((pair.mean(axis=0) - hip_mid) / trunk))
    found = _consistent(found, shape)
    rows = []
    for f, t in want.items():
        pair = found.get(f)
        for k, name in enumerate(MARKER_NAMES):
            x, y = pair[k] if pair is not None else (np.nan, np.nan)
            rows.append((f, t, name, x, y, np.nan, 1.0 if pair is not None else 0.0, np.nan))
    table = pd.DataFrame(rows, columns=["frame", "time_s", "landmark", "x_px", "y_px", "z", "visibility", "presence"])
    log.info("pelvis markers (%s) seen in %d of %d frames", search.colour, len(found), len(want))
    return table


def _consistent(found: dict, shape: dict, *, spacing_tolerance: float = 0.25,
                offset_tolerance: float = 0.15) -> dict:
    """Keep the frames whose marker pair looks like the clip's usual one.

    Stickers on the pelvis keep their spacing and their place relative to the
    model's hips, both in trunk lengths; pieces of clothing of the same colour
    do not. Frames whose spacing differs from the clip's median by more than
    ``spacing_tolerance`` of it, or whose pair midpoint lies more than
    ``offset_tolerance`` trunk lengths from the median place, are dropped
    (common practice, no source).
    """
    if not found:
        return found
    keys = list(found)
    arr = np.array([shape[k] for k in keys], float)
    med = np.median(arr, axis=0)
    ok = (np.abs(arr[:, 0] - med[0]) <= spacing_tolerance * med[0]) & \
        (np.linalg.norm(arr[:, 1:] - med[1:], axis=1) <= offset_tolerance)
    dropped = len(keys) - int(ok.sum())
    if dropped:
        log.info("pelvis markers: %d frame(s) left out whose pair did not match the usual spacing and place", dropped)
    return {k: found[k] for k, keep in zip(keys, ok) if keep}
