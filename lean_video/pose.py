"""Pose keypoints from a clip with MediaPipe BlazePose (full model, offline).

The model itself on single frames (settings, landmark names, mirror averaging,
the search for small far figures, and the method sources) is
:mod:`lean_video.pose_model`; this module runs it over a whole clip and
re-exports the public names of that module, so ``pose.PoseSettings``,
``pose.LANDMARK_NAMES``, ``pose.merge_mirrored`` and the like keep working.

The keypoint table
------------------
One tidy ``pandas.DataFrame``, one row per frame and landmark::

    frame:int  time_s:float  landmark:str  x_px  y_px  z  visibility  presence

* ``landmark`` is one of the 33 BlazePose names (:data:`LANDMARK_NAMES`); left
  and right are the person's own, as the model labels them.
* ``x_px`` grows to the right and ``y_px`` downward, in pixels of the upright
  picture at the clip's full resolution. ``z`` is the model's relative depth
  (same scale as x, smaller is nearer the camera).
* A frame where nobody was found keeps its 33 rows with NaN values: frames are
  never dropped, so gaps stay visible to the later stages.

Running over a clip: frames are decoded in a thread ahead of the model
(:class:`_Prefetch`) and tracked in order; with two or more workers, clips
of ``PoseSettings.min_split_duration_s`` or more are split into overlapping
parts tracked by separate processes (started with "spawn"), each keeping only
its own frames. Frames where the tracker lost the person are revisited as
described in :mod:`lean_video.pose_model`.

Cache and hand-over: keypoint arrays (never pictures) are cached per user,
keyed by the clip's SHA-256 and :meth:`PoseSettings.key`; the documented
hand-over to later stages is a folder with ``keypoints.csv`` (the table
above) and ``clip.json`` (:mod:`lean_video.pose_handover`, whose
:func:`write_handover` and :func:`read_handover` are re-exported here).
"""

from __future__ import annotations

import json
import logging
import os
from dataclasses import dataclass, field
from pathlib import Path

import cv2
import numpy as np
import pandas as pd

from lean_video.errors import LeanVideoError
from lean_video.files import atomic_write_text
from lean_video.pose_handover import COLUMNS, read_handover, write_handover
from lean_video.pose_model import (
    LANDMARK_NAMES,
    MIRROR_INDEX,
    N_LANDMARKS,
    PoseSettings,
    _landmarks_array,
    _mirror_pass,
    _new_model,
    _person_box,
    _run_crop,
    _tile_search,
    detect_still,
    merge_mirrored,
    second_person,
)
from lean_video.video import ClipInfo, iter_bgr, probe_clip, to_rgb

#: Public names, including those re-exported from :mod:`lean_video.pose_model`.
__all__ = [
    "COLUMNS", "LANDMARK_NAMES", "MIN_FOUND_FRACTION", "MIRROR_INDEX", "N_LANDMARKS", "PoseRun",
    "PoseSettings", "default_cache_dir", "detect_still", "estimate_pose", "merge_mirrored",
    "read_handover", "run_pose", "second_person", "write_handover",
]

log = logging.getLogger(__name__)
#: Below this share of frames with a person, the finds are taken as stray
#: detections in the background and the clip as empty (engineering choice:
#: a client who leaves half-way still gives 50 %).
MIN_FOUND_FRACTION = 0.1
#: Share of the declared frames that may fail to decode before the file counts as truncated
#: (common practice, no source: a phone clip decodes completely; 2 % already warns).
MAX_LOST_FRACTION = 0.1
#: Share of the declared frames lost that is worth a warning (common practice, no source:
#: a container's declared count can be off by a frame or two, hence also "more than 2").
WARN_LOST_FRACTION = 0.02


def lost_frames_note(frames_lost: int, frame_count: int) -> str | None:
    """The warning for frames a clip declares but that did not decode, or None when too few to matter.

    Used by the pose stage (a log line) and by the analysis (a warning in the
    summary, which the report shows), so a clip missing part of its walk says so
    wherever it is read. More than :data:`MAX_LOST_FRACTION` is refused
    outright by :func:`run_pose`.
    """
    if frames_lost > max(2, WARN_LOST_FRACTION * frame_count):
        return (f"only {frame_count - frames_lost} of the {frame_count} frames the clip declares could be decoded "
                f"({frames_lost} lost): the file may be truncated, and the walk in the missing part is not measured; "
                "copy or export the clip from the phone again")
    return None


@dataclass(frozen=True)
class PoseRun:
    """Result of pose estimation on one clip.

    Attributes
    ----------
    keypoints : pandas.DataFrame
        The keypoint table (see module docstring).
    clip : ClipInfo
        The clip description.
    settings : PoseSettings
    n_frames : int
        Frames decoded.
    n_detected : int
        Frames with a person after all passes.
    n_recovered : int
        Of those, frames found only by the enlarged-crop pass.
    from_cache : bool
    stats : dict
        Frame counts of the run (decoded, detected, recovered, lost).
    samples : tuple of (frame, time_s, rgb)
        Frames spread over the clip, scaled to ``settings.max_side_px``, kept
        from the tracking pass for the scene checks (empty when read from the
        cache: the cache stores no pictures).
    """

    keypoints: pd.DataFrame
    clip: ClipInfo
    settings: PoseSettings
    n_frames: int
    n_detected: int
    n_recovered: int
    from_cache: bool = False
    stats: dict = field(default_factory=dict)
    samples: tuple = ()


def default_cache_dir() -> Path:
    """Per-user cache folder (``$LEAN_VIDEO_CACHE_DIR`` or the XDG cache home)."""
    env = os.environ.get("LEAN_VIDEO_CACHE_DIR")
    if env:
        return Path(env)
    base = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
    return Path(base) / "lean_video"


class _Prefetch:
    """Decode the next frames in a thread while the model works on this one.

    OpenCV's decoder and MediaPipe's graph both release the GIL, so the two
    overlap on separate cores.
    """

    _END = object()

    def __init__(self, iterator, depth: int = 4) -> None:
        import queue
        import threading

        self._queue: queue.Queue = queue.Queue(maxsize=depth)
        self._iterator = iterator
        self._error: BaseException | None = None
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._run, daemon=True)
        self._thread.start()

    def _run(self) -> None:
        try:
            for item in self._iterator:
                if self._stop.is_set():
                    break
                self._queue.put(item)
        except BaseException as exc:  # noqa: BLE001 - handed to the consumer
            self._error = exc
        finally:
            self._queue.put(self._END)

    def __iter__(self):
        while True:
            item = self._queue.get()
            if item is self._END:
                if self._error is not None:
                    raise self._error
                return
            yield item

    def close(self) -> None:
        import queue

        self._stop.set()
        while self._thread.is_alive():
            try:
                self._queue.get(timeout=0.1)  # unblock a producer waiting on a full queue
            except queue.Empty:
                pass


_COUNTER = None


def _init_worker(counter) -> None:
    """Set up a tracking process: one thread each for decoding and OpenCV.

    Two processes already fill both cores; letting each also start a thread
    per core for decoding and resizing only makes them compete (measured by
    the benchmark: 19.9 s -> 16.8 s for a 30 s 1080p clip).
    """
    global _COUNTER
    _COUNTER = counter
    os.environ.setdefault("OPENCV_FFMPEG_CAPTURE_OPTIONS", "threads;1")
    cv2.setNumThreads(1)


def _track_range(path: str, settings: PoseSettings, seek_s: float | None, stop_s: float | None,
                 width: int, height: int, sample_times: tuple = ()) -> tuple:
    """Track the person from ``seek_s`` up to (not including) ``stop_s``.

    Returns times (n,), landmarks (n, 33, 5) with NaN where nobody was found,
    a flag (n,) for frames found only by the enlarged-crop search, and the
    scaled-down RGB frames first reached at or after each of ``sample_times``
    (as ``(time_s, rgb)``), kept so later stages need not decode again.
    """
    tracker = _new_model(settings, static=False)
    mirror = _new_model(settings, static=False) if settings.mirror_average else None
    still = None
    times, data, recovered, samples = [], [], [], []
    pending = sorted(sample_times)
    last_box, last_t, last_search_t = None, -np.inf, -np.inf
    frames = _Prefetch(iter_bgr(path, seek_s=seek_s))
    try:
        for _, time_s, bgr in frames:
            if stop_s is not None and time_s >= stop_s:
                break
            small = to_rgb(bgr, max_side_px=settings.max_side_px)
            if pending and time_s >= pending[0]:
                samples.append((time_s, small))
                while pending and time_s >= pending[0]:
                    pending.pop(0)
            lm = _landmarks_array(tracker.process(small), x0=0.0, y0=0.0, sx=width, sy=height)
            if lm is not None and mirror is not None:
                lm = merge_mirrored(lm, _mirror_pass(mirror, small, width, height),
                                    tolerance_px=settings.mirror_tolerance * max(_person_box(lm)[2], 1.0))
            found_by_crop = False
            if lm is None and settings.recover_far:
                still = still or _new_model(settings, static=True)
                if last_box is not None and time_s - last_t <= settings.recover_window_s:
                    lm = _run_crop(still, bgr, last_box, settings)
                elif time_s - last_search_t >= settings.search_interval_s:
                    last_search_t = time_s
                    lm = _tile_search(still, bgr, settings)
                found_by_crop = lm is not None
            if lm is not None:
                last_box, last_t = _person_box(lm), time_s
            times.append(time_s)
            data.append(lm if lm is not None else np.full((N_LANDMARKS, 5), np.nan))
            recovered.append(found_by_crop)
            if _COUNTER is not None:
                with _COUNTER.get_lock():
                    _COUNTER.value += 1
    finally:
        frames.close()
        tracker.close()
        if mirror is not None:
            mirror.close()
        if still is not None:
            still.close()
    if not times:
        return np.empty(0), np.empty((0, N_LANDMARKS, 5)), np.empty(0, dtype=bool), []
    return np.asarray(times), np.stack(data), np.asarray(recovered, dtype=bool), samples


def _progress(total: int, enabled: bool, desc: str):
    from tqdm import tqdm

    return tqdm(total=total, desc=desc, unit="frame", disable=not enabled, leave=False)


def _split_points(info: ClipInfo, workers: int, overlap_s: float, min_duration_s: float) -> list[float]:
    """Start times of the worker ranges after the first (empty list: one range)."""
    if workers < 2 or info.duration_s < max(min_duration_s, 4.0 * overlap_s):
        return []
    return [info.duration_s * k / workers for k in range(1, workers)]


def _track_clip(path, info: ClipInfo, settings: PoseSettings, progress: bool, sample_times: tuple = ()):
    """Run :func:`_track_range` over the clip, split across processes when worthwhile."""
    import concurrent.futures as cf
    import multiprocessing as mproc
    import time

    workers = settings.workers or min(2, os.cpu_count() or 1)
    splits = _split_points(info, workers, settings.overlap_s, settings.min_split_duration_s)
    if not splits:
        with _progress(info.frame_count, progress, "pose") as bar:
            result = _track_range(str(path), settings, None, None, info.width, info.height, sample_times)
            bar.update(len(result[0]))
        return result
    ctx = mproc.get_context("spawn")
    counter = ctx.Value("i", 0)
    bounds = [None, *splits]
    stops = [*splits, None]
    total = info.frame_count + round(len(splits) * settings.overlap_s * info.fps)
    with cf.ProcessPoolExecutor(max_workers=len(bounds), mp_context=ctx, initializer=_init_worker,
                                initargs=(counter,)) as pool, _progress(total, progress, "pose") as bar:
        futures = [pool.submit(_track_range, str(path), settings,
                               None if b is None else max(b - settings.overlap_s, 0.0), s, info.width, info.height,
                               tuple(t for t in sample_times if (b is None or t >= b) and (s is None or t < s)))
                   for b, s in zip(bounds, stops)]
        while not all(f.done() for f in futures):
            time.sleep(0.2)
            bar.n = min(counter.value, total)
            bar.refresh()
        parts = [f.result() for f in futures]
    times, data, rec, samples = parts[0]
    for start, (t, d, r, smp) in zip(splits, parts[1:]):
        if len(t) == 0 or t[0] > start or (len(times) and times[-1] >= start):
            # The seek overshot: this range cannot be joined exactly, so redo it in order.
            log.debug("seek near %.2f s landed at %s; tracking that range sequentially", start, t[:1])
            return _track_range(str(path), settings, None, None, info.width, info.height, sample_times)
        keep = t >= start
        times, data, rec = np.concatenate([times, t[keep]]), np.concatenate([data, d[keep]]), np.concatenate([rec, r[keep]])
        samples = samples + [(ts, rgb) for ts, rgb in smp if ts >= start]
    return times, data, rec, samples


def _to_table(times: np.ndarray, data: np.ndarray) -> pd.DataFrame:
    """Long keypoint table from times (n,) and landmarks (n, 33, 5)."""
    n = len(times)
    flat = data.reshape(n * N_LANDMARKS, 5)
    return pd.DataFrame({
        "frame": np.repeat(np.arange(n, dtype=np.int64), N_LANDMARKS),
        "time_s": np.repeat(times, N_LANDMARKS),
        "landmark": np.tile(np.array(LANDMARK_NAMES, dtype=object), n),
        "x_px": flat[:, 0], "y_px": flat[:, 1], "z": flat[:, 2],
        "visibility": flat[:, 3], "presence": flat[:, 4],
    })


def _n_parts(info: ClipInfo, settings: PoseSettings) -> int:
    """How many ranges the clip is tracked in: the split changes the keypoints near the joins, so it keys the cache."""
    workers = settings.workers or min(2, os.cpu_count() or 1)
    return len(_split_points(info, workers, settings.overlap_s, settings.min_split_duration_s)) + 1


def _cache_key(info: ClipInfo, settings: PoseSettings) -> str:
    return f"{settings.key()}-p{_n_parts(info, settings)}"


def _cache_paths(cache_dir: Path, sha: str, key: str) -> tuple[Path, Path]:
    stem = cache_dir / f"{sha[:24]}-{key}"
    return stem.with_suffix(".npz"), stem.with_suffix(".json")


def _load_cache(cache_dir: Path, info: ClipInfo, settings: PoseSettings) -> PoseRun | None:
    npz, meta = _cache_paths(cache_dir, info.sha256, _cache_key(info, settings))
    if not (npz.exists() and meta.exists()):
        return None
    try:
        with np.load(npz) as f:
            times, data = np.asarray(f["time_s"], float), np.asarray(f["data"], float)
        stats = json.loads(meta.read_text())
        if times.ndim != 1 or data.shape != (len(times), N_LANDMARKS, 5) or len(times) == 0:
            raise ValueError(f"arrays of shapes {times.shape} and {data.shape}")
        counts = [int(stats[k]) for k in ("n_frames", "n_detected", "n_recovered")]
        table = _to_table(times, data)
    except Exception as exc:  # noqa: BLE001 - any damage to an optimisation: recompute
        log.warning("ignoring unreadable keypoint cache %s: %s", npz.name, exc)
        return None
    return PoseRun(table, info, settings, *counts, True, stats)


def _save_cache(cache_dir: Path, info: ClipInfo, settings: PoseSettings, times, data, stats: dict) -> None:
    try:
        cache_dir.mkdir(parents=True, exist_ok=True)
        npz, meta = _cache_paths(cache_dir, info.sha256, _cache_key(info, settings))
        tmp = npz.with_name(npz.stem + f".{os.getpid()}.tmp.npz")
        np.savez_compressed(tmp, time_s=times, data=data)
        os.replace(tmp, npz)
        atomic_write_text(meta, json.dumps(stats))
    except OSError as exc:
        # A cache is an optimisation: failing to write one must not fail the run.
        log.warning("could not write keypoint cache in %s: %s", cache_dir, exc)


def run_pose(
    path: str | os.PathLike,
    *,
    settings: PoseSettings = PoseSettings(),
    cache_dir: str | os.PathLike | None = None,
    use_cache: bool = True,
    progress: bool = False,
    n_samples: int = 0,
) -> PoseRun:
    """Estimate pose keypoints on every frame of a clip.

    Parameters
    ----------
    path : path-like
        The video.
    settings : PoseSettings, keyword-only
    cache_dir : path-like, optional, keyword-only
        Where keypoint tables are cached (default :func:`default_cache_dir`).
    use_cache : bool, keyword-only
        Read and write the cache (default True).
    progress : bool, keyword-only
        Show a progress bar on stderr.
    n_samples : int, keyword-only
        Keep this many frames spread over the clip (``PoseRun.samples``).

    Returns
    -------
    PoseRun

    Notes
    -----
    Long clips are split across processes started with the "spawn" method,
    so a script calling this must guard its entry point with
    ``if __name__ == "__main__":``.

    Raises
    ------
    LeanVideoError
        If the clip is unusable or nobody is found in it.
    """
    info = probe_clip(path)
    cache = Path(cache_dir) if cache_dir is not None else default_cache_dir()
    if use_cache:
        cached = _load_cache(cache, info, settings)
        if cached is not None:
            log.info("keypoints read from cache (%d frames)", cached.n_frames)
            return cached
    sample_times = tuple(np.linspace(0.0, max(info.duration_s - 1.0 / info.fps, 0.0), n_samples)) if n_samples else ()
    times, data, recovered_flags, samples = _track_clip(path, info, settings, progress, sample_times)
    if len(times) == 0:
        raise LeanVideoError(f"No frame of '{Path(path).name}' could be decoded; export the clip again from the phone.")
    found = ~np.isnan(data[:, 0, 0])
    n_detected = int(found.sum())
    recovered = int(recovered_flags.sum())
    lost = max(info.frame_count - len(times), 0)
    if lost > max(2, MAX_LOST_FRACTION * info.frame_count):
        # a cut-off file would otherwise give results from part of the walk without saying so
        raise LeanVideoError(
            f"only {len(times)} of the {info.frame_count} frames '{Path(path).name}' declares could be decoded: "
            "the file is truncated or damaged; copy or export the clip from the phone again.")
    note = lost_frames_note(lost, info.frame_count)
    if note:
        log.warning(note)
    if n_detected < MIN_FOUND_FRACTION * len(times):
        raise LeanVideoError(
            f"Nobody was found in '{Path(path).name}' (a person in {n_detected} of {len(times)} frames); film the "
            "client's whole body, head to feet, walking toward the camera in good light."
        )
    stats = {"n_frames": int(len(times)), "n_detected": n_detected, "n_recovered": recovered, "frames_lost": int(lost),
             "n_parts": _n_parts(info, settings)}
    log.info("pose: %d frames, person in %d (%d found by enlarged crops)", len(times), n_detected, recovered)
    if use_cache:
        _save_cache(cache, info, settings, times, data, stats)
    index_of = {float(t): i for i, t in enumerate(times)}
    kept = tuple((index_of[float(t)], float(t), rgb) for t, rgb in samples if float(t) in index_of)
    return PoseRun(_to_table(times, data), info, settings, int(len(times)), n_detected, recovered, False, stats, kept)


def estimate_pose(path: str | os.PathLike, **kwargs) -> pd.DataFrame:
    """Keypoint table of a clip: ``run_pose(path, **kwargs).keypoints``."""
    return run_pose(path, **kwargs).keypoints
