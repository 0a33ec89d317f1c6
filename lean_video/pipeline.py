"""One analysis, end to end: keypoints -> gait -> mechanics -> files.

This module only composes the stages (it holds no science of its own) so that
the CLI, the demo and the benchmark run exactly the same steps. Output files
are written to a temporary name and moved into place, so an interrupted run
never leaves a truncated file behind.
"""

from __future__ import annotations

import json
import logging
import math
import os
from dataclasses import asdict, dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from lean_video import __version__
from lean_video.errors import LeanVideoError
from lean_video.files import atomic_write_text
from lean_video.stated_accuracy import (EVENTS_METHOD, LEAN_METHOD, PELVIS_MARKER_METHOD, PELVIS_METHOD,
                                        STANDING_METHOD)

log = logging.getLogger(__name__)

#: Version of the scene cache's content; bump when the scene checks change.
SCENE_CACHE_FORMAT = 1

#: Files written by :func:`write_outputs`, in the order they are written.
OUTPUT_FILES = ("frames.csv", "events.csv", "strides.csv", "summary.json")


@dataclass(frozen=True)
class AnalysisOptions:
    """Every option of one analysis (all of it is stored as provenance).

    Attributes
    ----------
    camera_roll_deg : float or None
        Camera roll given by the user; None estimates it from the scene (video
        input only) and falls back to 0 when the scene gives no reliable answer.
    cutoff_hz : float
        Low-pass cut-off for the angles (Winter 2009: 6 Hz for walking).
    mass_kg, height_m : float or None
        Body mass and height for the hip model; None uses the model defaults,
        flagged in the output.
    pose_max_side_px, pose_workers, pose_mirror_average
        Pose-stage settings, see :class:`lean_video.pose.PoseSettings`.
    pelvis_markers : str or None
        Colour of two skin markers over the pelvis (see
        :mod:`lean_video.pose_markers`); pelvic obliquity is then measured from
        them. None: no markers, pelvic obliquity from the hip points (not
        validated, withheld from the report).
    """

    camera_roll_deg: float | None = None
    cutoff_hz: float = 6.0
    mass_kg: float | None = None
    height_m: float | None = None
    pose_max_side_px: int = 960
    pose_workers: int = 0
    pose_mirror_average: bool = True
    pelvis_markers: str | None = None


@dataclass(frozen=True)
class Analysis:
    """Everything one analysis produced, ready to be written, stored or reported."""

    frames: pd.DataFrame
    events: pd.DataFrame
    strides: pd.DataFrame
    summary: dict
    keypoints: pd.DataFrame
    video_path: Path | None
    hip_curve: Any = None
    extras: dict = field(default_factory=dict)


def _load_keypoints(input_path: Path, options: AnalysisOptions, *, cache_dir, progress: bool):
    """Keypoints and clip description from a video, or from a hand-over folder."""
    from lean_video import pose

    if input_path.is_dir():
        table, clip = pose.read_handover(input_path)
        # the settings that made these keypoints, as the pose command recorded them
        # (absent for keypoints from another source), not this run's pose options
        made = clip.get("pose") if isinstance(clip.get("pose"), dict) else None
        info = {"source": "keypoints folder",
                **{k: v for k, v in (made or {}).items() if k != "settings"},  # frame counts, frames_lost
                "settings": (made or {}).get("settings", "not recorded (keypoints from another source)")}
        return table, clip, None, info, ()
    from lean_video.capture import SCENE_SAMPLES

    settings = pose.PoseSettings(max_side_px=options.pose_max_side_px, workers=options.pose_workers,
                                 mirror_average=options.pose_mirror_average)
    run = pose.run_pose(input_path, settings=settings, cache_dir=cache_dir, progress=progress,
                        n_samples=SCENE_SAMPLES)
    clip = {k: v for k, v in run.clip.to_dict().items() if k != "path"}
    info = {"source": "video", "model": "BlazePose full (mediapipe 0.10.21)", "settings": asdict(settings),
            "settings_key": settings.key(), "from_cache": run.from_cache, **run.stats}
    return run.keypoints, clip, input_path, info, run.samples


def _json_ready(value: Any) -> Any:
    """Turn numpy scalars and non-finite numbers into plain JSON values (NaN -> None)."""
    if isinstance(value, dict):
        return {str(k): _json_ready(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_json_ready(v) for v in value]
    if isinstance(value, (np.integer,)):
        return int(value)
    if isinstance(value, (np.floating, float)):
        f = float(value)
        return f if math.isfinite(f) else None
    if isinstance(value, np.bool_):
        return bool(value)
    if isinstance(value, Path):
        return value.name
    return value


def analyse(
    input_path: str | os.PathLike,
    *,
    options: AnalysisOptions = AnalysisOptions(),
    cache_dir: str | os.PathLike | None = None,
    progress: bool = False,
) -> Analysis:
    """Run pose (or read keypoints), gait and mechanics on one clip.

    Parameters
    ----------
    input_path : path-like
        A video, or a folder with ``keypoints.csv`` and ``clip.json``.
    options : AnalysisOptions, keyword-only
    cache_dir : path-like, optional, keyword-only
        Keypoint cache folder.
    progress : bool, keyword-only
        Progress bar on stderr during pose estimation.

    Returns
    -------
    Analysis
    """
    from lean_video import capture, gait_passes, mechanics, posture

    capture.check_user_roll(options.camera_roll_deg)
    path = Path(input_path)
    if not path.exists():
        raise LeanVideoError(f"Input not found: '{path}'; give a video file or a folder written by 'lean-video pose'.")
    keypoints, clip, video, pose_info, samples = _load_keypoints(path, options, cache_dir=cache_dir,
                                                                  progress=progress)
    width, height = int(clip["width"]), int(clip["height"])
    capture.require_upright(keypoints)
    if video is None:
        options = _folder_marker_colour(keypoints, clip, options)
    if options.pelvis_markers is not None:
        keypoints = _with_pelvis_markers(keypoints, video, options.pelvis_markers)

    camera = _camera_setup(video, keypoints, options, samples, clip, cache_dir, pose_info.get("settings_key", ""))
    roll = camera.roll
    measured = keypoints
    if camera.motion is not None:
        measured = _stabilised(keypoints, camera.motion)
    result = gait_passes.analyse_walk(measured, width=width, height=height, camera_roll_deg=roll.roll_deg,
                                      cutoff_hz=options.cutoff_hz)
    # The hip model takes the pelvic drop only where it was measured by the
    # validated method (pelvis markers); otherwise a level pelvis, as for the
    # 5-95 % band below (the drop enters the model only through cosines, so this
    # changes the numbers by well under 1 %, but an unvalidated input must not
    # feed a stated estimate, and a phase without a drop keeps its lean's estimate).
    drop_used = result.summary.get("pelvic_obliquity_source") == "pelvis markers"
    model_input = result.strides.copy()
    model_input["pelvic_drop_mean_deg"] = (model_input["pelvic_drop_mean_deg"].fillna(0.0) if drop_used else 0.0)
    strides = mechanics.add_mechanics_columns(model_input, mass_kg=options.mass_kg, height_m=options.height_m)
    strides["pelvic_drop_mean_deg"] = result.strides["pelvic_drop_mean_deg"]
    mech_info = dict(strides.attrs.get("mechanics", {}))
    mech_info["pelvic_drop_in_model"] = ("pelvic drop measured from the pelvis markers (level where a phase has "
                                         "none)" if drop_used else "level pelvis (pelvic drop not validated)")
    strides.attrs = {}
    per_side = mechanics.summarise_mechanics(strides)
    summary = dict(result.summary)
    summary["sides"] = {side: {**summary["sides"].get(side, {}), **_mech_side(per_side.get(side, {}))}
                        for side in ("left", "right")}
    summary["standing"] = posture.standing_posture(result.frames, measured)
    summary["standing_method"] = STANDING_METHOD
    summary["pelvic_obliquity_method"] = (PELVIS_MARKER_METHOD if summary.get("pelvic_obliquity_source")
                                          == "pelvis markers" else PELVIS_METHOD)
    summary["trunk_lean_method"] = LEAN_METHOD
    summary["events_method"] = EVENTS_METHOD
    summary["camera_roll_deg"] = roll.roll_deg
    summary["camera_roll_source"] = roll.source
    summary["camera_roll_confidence"] = roll.confidence
    summary["clip"] = clip
    summary["pose"] = pose_info
    summary["version"] = __version__
    analysis_options = asdict(options)
    if video is None:
        # pose options do not act on a keypoints folder; summary["pose"] says what made them
        for name in ("pose_max_side_px", "pose_workers", "pose_mirror_average"):
            analysis_options[name] = "not used (keypoints folder input)"
    summary["settings"] = {**summary.get("settings", {}), "analysis": analysis_options}
    summary["mechanics"] = {**mech_info, "caution": mechanics.CAUTION}
    quality = dict(summary.get("quality") or {})
    quality["checks"] = capture.capture_checks(keypoints, clip, summary, extra=camera.checks)
    quality["camera_motion"] = camera.motion_class
    for check in quality["checks"]:
        if check["status"] == "fail":
            message = f"capture check '{check['name']}' failed: {check['detail']}; {check['suggestion']}"
            log.warning(message)
            quality.setdefault("warnings", []).append(message)
    quality.setdefault("warnings", []).extend(mech_info.get("warnings", []))
    n_lost, n_declared = pose_info.get("frames_lost"), clip.get("frame_count")
    if all(isinstance(v, int) and not isinstance(v, bool) for v in (n_lost, n_declared)):
        # also for a keypoints folder written by 'lean-video pose', which records the count
        from lean_video.pose import lost_frames_note

        lost = lost_frames_note(n_lost, n_declared)
        if lost:
            quality["warnings"].append(lost)
            if video is None or pose_info.get("from_cache"):  # the pose stage logged it only when it ran here
                log.warning(lost)
    summary["quality"] = quality
    params = mechanics.HipModelParams.from_body(height_m=options.height_m or mechanics.DEFAULT_HEIGHT_M)
    curve = mechanics.lean_sweep(params=params, mass_kg=options.mass_kg)
    for side in ("left", "right"):
        summary["sides"][side]["hip_model_band_5_95"] = _band(
            mechanics, summary["sides"][side], params, options.mass_kg,
            use_drop=bool(summary["pelvic_obliquity_method"].get("validated")))
    return Analysis(result.frames, result.events, strides, _json_ready(summary), keypoints, video, curve)


def _folder_marker_colour(keypoints: pd.DataFrame, clip: dict, options: AnalysisOptions) -> AnalysisOptions:
    """The marker colour of a keypoints folder as its clip.json records it, so the provenance is true.

    A folder whose table holds markers is analysed with them whatever the
    option says; a colour given that differs from the recorded one is refused.
    """
    from dataclasses import replace

    from lean_video import pose_markers

    held = bool(keypoints["landmark"].isin(pose_markers.MARKER_NAMES).any())
    recorded = clip.get("pelvis_markers")
    if not held:
        return options
    if options.pelvis_markers is not None and recorded is not None and options.pelvis_markers != recorded:
        raise LeanVideoError(f"this keypoints folder holds {recorded} pelvis markers, but --pelvis-markers "
                             f"{options.pelvis_markers} was given; give {recorded}, or run 'lean-video pose' again "
                             f"with --pelvis-markers {options.pelvis_markers}.")
    return replace(options, pelvis_markers=options.pelvis_markers or recorded or "recorded in keypoints (colour not stated)")


def _with_pelvis_markers(keypoints: pd.DataFrame, video: Path | None, colour: str) -> pd.DataFrame:
    """The keypoint table with the two pelvis markers found in the clip."""
    from lean_video import pose_markers

    if video is None:
        if keypoints["landmark"].isin(pose_markers.MARKER_NAMES).any():
            return keypoints  # a hand-over folder that already holds the markers
        raise LeanVideoError("pelvis markers can only be searched for in a video, and this keypoints folder "
                             "holds none; analyse the video itself, or leave out --pelvis-markers.")
    search = pose_markers.MarkerSearch(colour=colour)
    keypoints = keypoints[~keypoints["landmark"].isin(pose_markers.MARKER_NAMES)]
    rows = pose_markers.track_pelvis_markers(video, keypoints, search=search)
    seen = int((rows.loc[rows["landmark"] == pose_markers.MARKER_NAMES[0], "visibility"] > 0).sum())
    n_frames = int(keypoints["frame"].nunique())
    if seen < pose_markers.MIN_FRAME_SHARE * n_frames:
        raise LeanVideoError(f"{colour} pelvis markers were not found near the hips often enough (a pair in "
                             f"{seen} of {n_frames} frames, {pose_markers.MIN_FRAME_SHARE:.0%} needed); "
                             "check the colour given, that both markers are on the "
                             "front (walking toward) or back (walking away) of the pelvis and not covered by "
                             "clothing, or leave out --pelvis-markers.")
    return pd.concat([keypoints, rows], ignore_index=True)


def _camera_setup(video, keypoints, options: AnalysisOptions, samples, clip: dict, cache_dir,
                  pose_key: str) -> Any:
    """Camera roll and motion, from the scene cache when this clip was seen before.

    Only the scene's answers are cached (roll, still camera, lighting, other
    people), never pictures; a hand-held clip is measured again each time. The
    answers depend on where the person is (their region is left out of the
    background), so the cache is keyed by the pose settings and software
    version (``pose_key``) as well as the clip.
    """
    from lean_video import capture
    from lean_video.pose import default_cache_dir

    cache_file = None
    if video is not None and clip.get("sha256"):
        folder = Path(cache_dir) if cache_dir is not None else default_cache_dir()
        cache_file = folder / f"scene-{clip['sha256'][:24]}-{pose_key}-{SCENE_CACHE_FORMAT}.json"
        try:
            data = json.loads(cache_file.read_text())
            return capture.CameraSetup.from_cache(data, user_roll_deg=options.camera_roll_deg)
        except (OSError, ValueError, KeyError, TypeError, IndexError):
            pass
    camera = capture.camera_setup(video, keypoints, user_roll_deg=options.camera_roll_deg, samples=list(samples),
                                  clip_width=int(clip["width"]))
    data = camera.to_cache()
    if cache_file is not None and data is not None:
        try:
            cache_file.parent.mkdir(parents=True, exist_ok=True)
            atomic_write_text(cache_file, json.dumps(_json_ready(data)))
        except OSError as exc:
            log.warning("could not write the scene cache %s: %s", cache_file.name, exc)
    return camera


def _stabilised(keypoints: pd.DataFrame, motion) -> pd.DataFrame:
    """Keypoints mapped into the first frame's pixels, so a still foot stays still."""
    from lean_video.scene_motion import stabilise_points

    out = keypoints.copy()
    ok = out["x_px"].notna().to_numpy() & out["frame"].isin(motion.frame_indices).to_numpy()
    x, y = stabilise_points(out.loc[ok, "x_px"].to_numpy(), out.loc[ok, "y_px"].to_numpy(), motion,
                            out.loc[ok, "frame"].to_numpy())
    out.loc[ok, "x_px"], out.loc[ok, "y_px"] = x, y
    log.info("keypoints stabilised for camera motion (up to %.1f deg, %.1f%% of the picture)",
             motion.max_rotation_deg, 100 * motion.max_translation_frac)
    return out


def _band(mechanics, side: dict, params, mass_kg, *, use_drop: bool) -> dict | None:
    """Seeded Monte Carlo 5-95 % band of each hip-model output at this side's median lean and drop.

    The drop enters only when it was measured by a validated method
    (``use_drop``); otherwise the pelvis is taken as level.
    """
    lean = side.get("lean_mean_deg")
    drop = side.get("pelvic_drop_mean_deg") if use_drop else 0.0
    if lean is None or not np.isfinite(lean):
        return None
    mc = mechanics.monte_carlo([float(lean)], params=params, pelvic_drop_deg=float(drop or 0.0), mass_kg=mass_kg)
    return {name: [float(mc.p05[name][0]), float(mc.p95[name][0])] for name in mc.p05}


def _mech_side(side: dict) -> dict:
    """Per-side hip-model medians, under the output names (gait's own keys are kept)."""
    from lean_video.mechanics import NEWTON_NAMES, OUTPUT_NAMES

    out = {name: side.get(name) for name in (*OUTPUT_NAMES, *NEWTON_NAMES) if name in side}
    out["hip_model_statistic"] = "median over phases"
    return out


def input_sha256(input_path: str | os.PathLike) -> str | None:
    """Content hash of the analysed clip: the file's, or the one recorded in ``clip.json``."""
    from lean_video.video import file_sha256

    path = Path(input_path)
    if path.is_file():
        return file_sha256(path)
    try:
        return json.loads((path / "clip.json").read_text()).get("sha256")
    except (OSError, ValueError):
        return None


def check_out_dir(out_dir: Path, input_path: str | os.PathLike, *, force: bool) -> None:
    """Refuse to overwrite another clip's results in ``out_dir`` unless forced."""
    previous = out_dir / "summary.json"
    if force or not previous.exists():
        return
    clip_sha256 = input_sha256(input_path)
    try:
        old = json.loads(previous.read_text()).get("clip", {}).get("sha256")
    except (OSError, ValueError):
        old = None
    if old is None or old != clip_sha256:
        raise LeanVideoError(
            f"The folder '{out_dir}' already holds the results of a different clip; choose another --out "
            "folder, or add --force to replace them."
        )


def write_outputs(analysis: Analysis, out_dir: str | os.PathLike) -> list[Path]:
    """Write ``frames.csv``, ``events.csv``, ``strides.csv`` and ``summary.json``.

    Every file is written under a temporary name and moved into place.
    """
    out = Path(out_dir)
    paths = []
    tables = {"frames.csv": analysis.frames, "events.csv": analysis.events, "strides.csv": analysis.strides}
    for name, table in tables.items():
        atomic_write_text(out / name, table.to_csv(index=False, float_format="%.4f"))
        paths.append(out / name)
    atomic_write_text(out / "summary.json", json.dumps(analysis.summary, indent=2, allow_nan=False))
    paths.append(out / "summary.json")
    return paths


def peak_pictures(analysis: Analysis) -> dict:
    """For each side, the video frame at the largest lean toward that stance side.

    Returns ``{side: {"rgb", "keypoints", "lean_deg", "time_s"}}`` for the
    report; empty for keypoint-folder input (there is no picture).
    """
    if analysis.video_path is None or analysis.strides.empty:
        return {}
    frames = analysis.frames
    wanted = {}
    for side, sign in (("left", -1.0), ("right", 1.0)):
        phases = analysis.strides[analysis.strides["stance_side"] == side]
        if phases.empty or phases["lean_peak_deg"].isna().all():
            continue
        best = phases.loc[phases["lean_peak_deg"].idxmax()]
        inside = frames[(frames["time_s"] >= best["start_s"]) & (frames["time_s"] <= best["end_s"])]
        toward = sign * inside["trunk_lean_deg"]
        if toward.notna().any():
            row = inside.loc[toward.idxmax()]
            wanted[int(row["frame"])] = (side, float(sign * row["trunk_lean_deg"]), float(row["time_s"]))
    if not wanted:
        return {}
    from lean_video.video import frames_at

    kp = analysis.keypoints
    out = {}
    times = {index: t for index, (_, _, t) in wanted.items()}
    for index, rgb in frames_at(analysis.video_path, times).items():
        side, lean, t = wanted[index]
        rows = kp[kp["frame"] == index]
        points = {r.landmark: (float(r.x_px), float(r.y_px)) for r in rows.itertuples() if np.isfinite(r.x_px)}
        points = client_side_labels(points, direction=_direction_at(analysis.summary, t))
        out[side] = {"rgb": rgb, "keypoints": points, "lean_deg": lean, "time_s": t}
    return out


def _direction_at(summary: dict, time_s: float) -> str:
    """Walking direction of the pass holding ``time_s`` (the clip's direction outside every pass)."""
    for p in summary.get("passes") or []:
        if p["start_s"] - 1e-6 <= time_s <= p["end_s"] + 1e-6:
            return p["direction"]
    return summary.get("direction") or "toward"


def client_side_labels(points: dict, *, direction: str) -> dict:
    """Relabel one frame's landmarks so left and right are the client's own.

    The pose model's labels are not trusted for this (they flip in back
    views); as in the gait stage, geometry decides: facing the camera the
    client's left hip and shoulder appear on the image right, seen from behind
    on the image left. When the model's hips and shoulders (summed) say the
    opposite, every left/right name is exchanged, so the picture colours the
    legs of the stance side the table names.
    """
    from lean_video.pose_model import mirror_name

    if direction not in ("toward", "away"):
        raise LeanVideoError(f"direction must be 'toward' or 'away', got {direction!r}; use the summary's.")
    dx = [points[f"left_{part}"][0] - points[f"right_{part}"][0] for part in ("hip", "shoulder")
          if f"left_{part}" in points and f"right_{part}" in points]
    want = 1.0 if direction == "toward" else -1.0
    if not dx or np.sign(sum(dx)) * want >= 0:
        return dict(points)
    return {mirror_name(name): xy for name, xy in points.items()}
