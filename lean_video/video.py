"""Video ingest: describe a clip and stream its frames upright, with true times.

Conventions
-----------
* Frames are yielded as ``(index, time_s, rgb)`` where ``rgb`` is a C-contiguous
  ``uint8`` array of shape ``(height, width, 3)`` in RGB order, already turned
  upright according to the clip's rotation metadata.
* ``time_s`` is the frame's presentation timestamp in seconds, as the container
  stores it. Phone clips often have a variable frame rate, so time is never
  derived from ``index / fps``.
* ``rotation_deg`` is the rotation the container's display matrix asks for
  (0, 90, 180 or 270; counter-clockwise, the value ffprobe prints as
  ``rotation``). Frames are turned exactly as ffmpeg's own autorotation does.

The input file is only ever opened for reading.
"""

from __future__ import annotations

import hashlib
import logging
import os
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Iterator

import cv2
import numpy as np

from lean_video.errors import LeanVideoError

log = logging.getLogger(__name__)

#: Shortest clip worth analysing: one gait cycle of slow walking lasts about
#: 1.2-1.4 s (Perry & Burnfield 2010, Gait Analysis, ch. 1), and three steps per
#: side need several seconds, so anything under 2 s cannot hold a measurement.
MIN_DURATION_S = 2.0

#: Frame rates a phone records (24 to 240 fps) with a margin either side.
FPS_RANGE = (20.0, 250.0)

#: Longest picture side accepted: DCI 4K (4096 px). An 8K frame holds 100 MB
#: and the pose model gains nothing from it.
MAX_SIDE_PX = 4096

_CHUNK = 1 << 20


@dataclass(frozen=True)
class ClipInfo:
    """What a clip is, as needed by later stages and stored as provenance.

    Attributes
    ----------
    path : str
        Path as given (never written into reports).
    width, height : int
        Size of the upright picture in pixels (after rotation).
    rotation_deg : int
        Display-matrix rotation applied to show the picture upright
        (counter-clockwise degrees, as ffprobe reports it).
    fps : float
        Nominal frame rate from the container (may differ from the true,
        variable rate: use each frame's ``time_s``).
    frame_count : int
        Number of frames the container declares.
    duration_s : float
        ``frame_count / fps``, the declared duration.
    codec : str
        Four-character codec tag, e.g. ``h264`` or ``hevc``.
    sha256 : str
        Hex SHA-256 of the file's bytes: the clip's identity in caches, the
        database and every report.
    """

    path: str
    width: int
    height: int
    rotation_deg: int
    fps: float
    frame_count: int
    duration_s: float
    codec: str
    sha256: str

    def to_dict(self) -> dict:
        """Return the description as a JSON-ready dict (``clip.json``)."""
        return asdict(self)


def file_sha256(path: str | os.PathLike) -> str:
    """Hex SHA-256 of a file's contents, read in 1 MiB chunks."""
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(_CHUNK), b""):
            digest.update(block)
    return digest.hexdigest()


def _fourcc_text(value: float) -> str:
    code = int(value)
    text = "".join(chr((code >> (8 * i)) & 0xFF) for i in range(4))
    return text.strip("\x00 ").lower() or "unknown"


def _open_capture(path: Path) -> cv2.VideoCapture:
    cap = cv2.VideoCapture(str(path), cv2.CAP_FFMPEG)
    if not cap.isOpened():
        cap.release()
        raise LeanVideoError(
            f"Could not read '{path.name}' as a video: the file is damaged or not a video; "
            "export the clip again from the phone as MP4 or MOV."
        )
    # OpenCV reports the rotation but only turns frames upright when asked.
    cap.set(cv2.CAP_PROP_ORIENTATION_AUTO, 1)
    return cap


def _check_path(path: str | os.PathLike) -> Path:
    p = Path(path)
    if not p.exists():
        raise LeanVideoError(f"Clip not found: '{p}'; check the path and try again.")
    if p.is_dir():
        raise LeanVideoError(f"'{p}' is a folder, not a video file; give the path of the clip itself.")
    if p.stat().st_size == 0:
        raise LeanVideoError(f"'{p.name}' is empty (0 bytes); copy the clip from the phone again.")
    return p


def probe_clip(path: str | os.PathLike, *, min_duration_s: float = MIN_DURATION_S) -> ClipInfo:
    """Open a clip, check that it is a usable video and describe it.

    Parameters
    ----------
    path : path-like
        The video file (H.264 or HEVC in MP4/MOV, 24 to 240 fps).
    min_duration_s : float, keyword-only
        Refuse clips shorter than this (default :data:`MIN_DURATION_S`).

    Returns
    -------
    ClipInfo

    Raises
    ------
    LeanVideoError
        Missing, empty, unreadable, frameless, too short or with an implausible
        frame rate.
    """
    p = _check_path(path)
    cap = _open_capture(p)
    try:
        stored_w = int(cap.get(cv2.CAP_PROP_FRAME_WIDTH))
        stored_h = int(cap.get(cv2.CAP_PROP_FRAME_HEIGHT))
        fps = float(cap.get(cv2.CAP_PROP_FPS))
        frame_count = int(cap.get(cv2.CAP_PROP_FRAME_COUNT))
        codec = _fourcc_text(cap.get(cv2.CAP_PROP_FOURCC))
        # OpenCV's sign is opposite to ffprobe's display-matrix rotation.
        meta = int(round(cap.get(cv2.CAP_PROP_ORIENTATION_META))) % 360
        ok, first = cap.read()
    finally:
        cap.release()
    if not ok or first is None or stored_w <= 0 or stored_h <= 0:
        raise LeanVideoError(
            f"'{p.name}' holds no decodable video frames (not a video, audio only, or damaged); "
            "export the clip again from the phone as MP4 or MOV."
        )
    if not (FPS_RANGE[0] <= fps <= FPS_RANGE[1]):
        raise LeanVideoError(
            f"'{p.name}' reports {fps:.1f} frames per second; {FPS_RANGE[0]:.0f} to {FPS_RANGE[1]:.0f} fps "
            "are supported, so record again at 30 or 60 fps."
        )
    height, width = first.shape[:2]
    if max(width, height) > MAX_SIDE_PX:
        raise LeanVideoError(
            f"'{p.name}' is {width}x{height} pixels; clips up to 4K ({MAX_SIDE_PX} px) are supported, "
            "so record at 4K, 1080p or 720p."
        )
    rotation = (360 - meta) % 360
    duration_s = frame_count / fps if frame_count > 0 else 0.0
    if duration_s < min_duration_s:
        raise LeanVideoError(
            f"'{p.name}' lasts {duration_s:.1f} s; at least {min_duration_s:.0f} s of walking is needed, "
            "so film the client walking the whole corridor (10 s or more)."
        )
    info = ClipInfo(
        path=str(p),
        width=int(width),
        height=int(height),
        rotation_deg=int(rotation),
        fps=fps,
        frame_count=frame_count,
        duration_s=float(duration_s),
        codec=codec,
        sha256=file_sha256(p),
    )
    log.info(
        "clip %s: %dx%d upright, rotation %d, %.2f fps, %d frames, %s",
        p.name, info.width, info.height, info.rotation_deg, fps, frame_count, codec,
    )
    return info


def iter_frames(
    path: str | os.PathLike,
    *,
    max_side_px: int | None = None,
    seek_s: float | None = None,
) -> Iterator[tuple[int, float, np.ndarray]]:
    """Stream a clip's frames upright, with their presentation times.

    Parameters
    ----------
    path : path-like
        The video file.
    max_side_px : int, optional, keyword-only
        If given, frames whose longer side exceeds this are scaled down
        (area interpolation) so the longer side equals it.
    seek_s : float, optional, keyword-only
        Start near this time: the decoder jumps to the key frame before it and
        decodes on from there, so the first frame may come somewhat earlier.
        Indices then count from that first frame, not from the clip's start.

    Yields
    ------
    index : int
        0-based decode order (from the seek point when ``seek_s`` is given).
    time_s : float
        Presentation time in seconds.
    rgb : numpy.ndarray
        ``(height, width, 3)`` uint8, C-contiguous, RGB, upright.
    """
    if max_side_px is not None and max_side_px < 64:
        raise LeanVideoError(f"max_side_px must be at least 64 pixels; {max_side_px} was given.")
    for index, time_s, bgr in iter_bgr(path, seek_s=seek_s):
        yield index, time_s, to_rgb(bgr, max_side_px=max_side_px)


def iter_bgr(path: str | os.PathLike, *, seek_s: float | None = None) -> Iterator[tuple[int, float, np.ndarray]]:
    """Like :func:`iter_frames` but yields OpenCV's full-size BGR frames (upright).

    For stages that crop before converting, which saves converting whole frames.
    """
    p = _check_path(path)
    cap = _open_capture(p)
    try:
        if seek_s:
            cap.set(cv2.CAP_PROP_POS_MSEC, float(seek_s) * 1000.0)
        index = 0
        while True:
            ok, bgr = cap.read()
            if not ok or bgr is None:
                break
            yield index, float(cap.get(cv2.CAP_PROP_POS_MSEC)) / 1000.0, bgr
            index += 1
    finally:
        cap.release()


def to_rgb(bgr: np.ndarray, *, max_side_px: int | None = None) -> np.ndarray:
    """Convert an OpenCV BGR frame to contiguous RGB, scaled down if larger than ``max_side_px``."""
    if max_side_px is not None:
        h, w = bgr.shape[:2]
        scale = max_side_px / max(h, w)
        if scale < 1.0:
            bgr = cv2.resize(bgr, (round(w * scale), round(h * scale)), interpolation=cv2.INTER_AREA)
    return cv2.cvtColor(bgr, cv2.COLOR_BGR2RGB)


def sample_indices(frame_count: int, *, n: int) -> list[int]:
    """The frame indices :func:`sample_frames` asks for: about ``n``, evenly spread, first and last included."""
    total = max(int(frame_count), 1)
    return sorted(set(np.linspace(0, total - 1, num=min(n, total)).round().astype(int).tolist()))


def sample_frames(path: str | os.PathLike, *, n: int,
                  max_side_px: int | None = None) -> list[tuple[int, float, np.ndarray]]:
    """About ``n`` frames spread evenly over a clip, as ``(index, time_s, rgb)``.

    Frames in between are decoded but not converted (``grab`` without
    ``retrieve``), which keeps a quick look at a long clip to a few seconds.
    """
    if n < 1:
        raise LeanVideoError(f"n must be at least 1 frame; {n} was given.")
    info = probe_clip(path, min_duration_s=0.0)
    wanted = set(sample_indices(info.frame_count, n=n))
    cap = _open_capture(Path(path))
    out = []
    try:
        index = 0
        while index <= max(wanted):
            if not cap.grab():
                break
            if index in wanted:
                ok, bgr = cap.retrieve()
                if ok and bgr is not None:
                    out.append((index, float(cap.get(cv2.CAP_PROP_POS_MSEC)) / 1000.0,
                                to_rgb(bgr, max_side_px=max_side_px)))
            index += 1
    finally:
        cap.release()
    return out


def frames_at(path: str | os.PathLike, times_s: dict[int, float]) -> dict[int, np.ndarray]:
    """The upright RGB frames shown at given presentation times.

    Each frame is found by seeking a little before its time and decoding
    forward. OpenCV's seek can land after the wanted time on a variable
    frame rate clip (it converts the time to a frame number with the average
    rate); the frames it overshot are then found in one sequential pass.

    Parameters
    ----------
    path : path-like
    times_s : dict
        Key (e.g. frame index) -> presentation time in seconds, as the frame
        iterators report it.

    Returns
    -------
    dict
        Key -> RGB frame, for every time that was found (within 1 ms).
    """
    out: dict[int, np.ndarray] = {}
    overshot: dict[int, float] = {}
    cap = _open_capture(Path(path))
    try:
        for key, t in sorted(times_s.items(), key=lambda kv: kv[1]):
            # Seek a little before: the decoder lands on an earlier key frame and
            # decodes forward, so the wanted frame is reached exactly by its time.
            cap.set(cv2.CAP_PROP_POS_MSEC, max(t - 0.5, 0.0) * 1000.0)
            while True:
                ok, bgr = cap.read()
                if not ok or bgr is None:
                    break
                now = float(cap.get(cv2.CAP_PROP_POS_MSEC)) / 1000.0
                if now >= t - 1e-4:
                    if abs(now - t) <= 1e-3:
                        out[key] = to_rgb(bgr)
                    break
            if key not in out:
                overshot[key] = t
    finally:
        cap.release()
    if overshot:
        log.debug("seeking missed %d of %d frames; reading them in order", len(overshot), len(times_s))
        out.update(_frames_in_order(Path(path), overshot))
    return out


def _frames_in_order(path: Path, times_s: dict[int, float]) -> dict[int, np.ndarray]:
    """Frames at given times by decoding from the start (``grab`` skips conversion)."""
    pending = sorted(times_s.items(), key=lambda kv: kv[1])
    out = {}
    cap = _open_capture(path)
    try:
        while pending and cap.grab():
            now = float(cap.get(cv2.CAP_PROP_POS_MSEC)) / 1000.0
            while pending and pending[0][1] < now - 1e-3:
                pending.pop(0)      # no frame at that time
            if pending and abs(now - pending[0][1]) <= 1e-3:
                ok, bgr = cap.retrieve()
                if ok and bgr is not None:
                    out[pending[0][0]] = to_rgb(bgr)
                pending.pop(0)
    finally:
        cap.release()
    return out
