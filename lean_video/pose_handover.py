"""The keypoint hand-over folder: ``keypoints.csv`` and ``clip.json``.

The documented hand-over between the pose stage and the later ones
(:func:`write_handover`, :func:`read_handover`); keypoints from any source
written in this format are analysed the same way. The table's columns and
conventions are described in :mod:`lean_video.pose`.
"""

from __future__ import annotations

import json
import math
import os
from dataclasses import asdict
from pathlib import Path
from typing import TYPE_CHECKING

import pandas as pd

from lean_video.errors import LeanVideoError
from lean_video.files import atomic_write_text
from lean_video.pose_markers import MARKER_NAMES
from lean_video.pose_model import LANDMARK_NAMES

if TYPE_CHECKING:
    from lean_video.pose import PoseRun

COLUMNS = ("frame", "time_s", "landmark", "x_px", "y_px", "z", "visibility", "presence")


def write_handover(run: PoseRun, out_dir: str | os.PathLike, *,
                   markers: pd.DataFrame | None = None, marker_colour: str | None = None) -> tuple[Path, Path]:
    """Write ``keypoints.csv`` and ``clip.json``, the documented hand-over pair.

    ``markers`` (rows from :func:`lean_video.pose_markers.track_pelvis_markers`)
    are appended to the keypoints when given.
    """
    out = Path(out_dir)
    clip = {k: v for k, v in run.clip.to_dict().items() if k != "path"}
    clip["pose"] = {"settings": asdict(run.settings), **run.stats}
    # which markers (if any) the table holds, so an analysis cannot claim another colour
    clip["pelvis_markers"] = None if markers is None else marker_colour
    kp_path, clip_path = out / "keypoints.csv", out / "clip.json"
    table = run.keypoints if markers is None else pd.concat([run.keypoints, markers], ignore_index=True)
    atomic_write_text(kp_path, table.to_csv(index=False, float_format="%.4f"))
    atomic_write_text(clip_path, json.dumps(clip, indent=2))
    return kp_path, clip_path


def read_handover(folder: str | os.PathLike) -> tuple[pd.DataFrame, dict]:
    """Read a ``keypoints.csv`` + ``clip.json`` pair and check its columns.

    Raises
    ------
    LeanVideoError
        Missing files, missing columns, unknown landmark names or bad sizes.
    """
    folder = Path(folder)
    kp_path, clip_path = folder / "keypoints.csv", folder / "clip.json"
    for p in (kp_path, clip_path):
        if not p.is_file():
            raise LeanVideoError(f"'{folder.name}' has no {p.name}; a keypoint folder needs keypoints.csv and clip.json "
                                 "as written by 'lean-video pose'.")
    try:
        clip = json.loads(clip_path.read_text())
        table = pd.read_csv(kp_path)
    except (ValueError, OSError) as exc:
        raise LeanVideoError(f"Could not read the keypoint folder '{folder.name}': {exc}; write it again with "
                             "'lean-video pose'.") from None
    if not isinstance(clip, dict):
        raise LeanVideoError(f"clip.json must hold one JSON object (width, height, sha256, ...), got a "
                             f"{type(clip).__name__}; write it again with 'lean-video pose'.")
    missing = [c for c in COLUMNS if c not in table.columns]
    if missing:
        raise LeanVideoError(f"keypoints.csv lacks the column(s) {', '.join(missing)}; the columns must be "
                             f"{', '.join(COLUMNS)}.")
    if table["landmark"].isna().any():
        raise LeanVideoError("keypoints.csv has rows without a landmark name; every row needs one of the 33 "
                             "BlazePose names.")
    for col in ("frame", "time_s", "x_px", "y_px", "z", "visibility", "presence"):
        values = pd.to_numeric(table[col], errors="coerce")
        if (values.isna() & table[col].notna()).any():
            raise LeanVideoError(f"keypoints.csv column {col} holds text where numbers belong; write the folder "
                                 "again with 'lean-video pose'.")
        table[col] = values
    if table.duplicated(["frame", "landmark"]).any():
        raise LeanVideoError("keypoints.csv repeats a landmark within a frame; each (frame, landmark) pair must "
                             "appear once.")
    unknown = sorted(set(table["landmark"].astype(str)) - set(LANDMARK_NAMES) - set(MARKER_NAMES))
    if unknown:
        raise LeanVideoError(f"keypoints.csv has unknown landmark name(s) {', '.join(unknown[:3])}; use the 33 "
                             "BlazePose names (nose, left_shoulder, ...) and, for pelvis markers, "
                             f"{' and '.join(MARKER_NAMES)}.")
    for key in ("width", "height"):
        v = clip.get(key)
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or v <= 0:
            raise LeanVideoError(f"clip.json needs a positive '{key}' in pixels; {v!r} was given.")
    return table, clip
