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
from lean_video.pose_markers import MIN_FRAME_SHARE, MarkerSearch, find_markers_near_body

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
#: Median height of the person as a share of the picture height. A client 7-8 m away fills
#: about a fifth of a portrait picture (the filming guide in README), so 20 % passes
#: (engineering choice).
SIZE_LIMITS = (0.20, 0.12)
#: Single-support phases per side (issue requirement: at least three).
PHASE_LIMITS = (3, 1)
#: |camera roll| in degrees: up to 2 deg barely matters once corrected; above 5
#: the phone should be levelled (engineering choice; 1 deg of roll is 1 deg of lean).
ROLL_LIMITS = (2.0, 5.0)
#: Confidence below which a scene roll estimate is not used (engineering choice).
MIN_ROLL_CONFIDENCE = 0.5
#: Mean picture brightness (0-255) below which the clip is too dark (engineering choice).
DARK_LIMITS = (70.0, 40.0)
#: Share of single-support phases given a pelvic drop by the pelvis markers (common practice, no source).
MARKER_PHASE_LIMITS = (0.8, 0.5)
#: Share of sampled frames showing the client in which both pelvis markers are seen: the
#: rendered clips gave 47-100 % of all frames; below the share the analysis needs, fail.
MARKER_SAMPLE_LIMITS = (0.4, MIN_FRAME_SHARE)
#: What to do when the pelvis markers are not seen well enough.
MARKER_SUGGESTION = ("keep both stickers in view (hands and clothing clear of them), film closer, and use stickers "
                     "at least 3 cm across in a colour unlike the client's clothes")


@dataclass(frozen=True)
class RollChoice:
    """The camera roll used for an analysis and where it came from."""

    roll_deg: float
    source: str  # "user" | "scene" | "none"
    confidence: float | None = None


def check_user_roll(user_roll_deg: float | None) -> None:
    """Refuse a user-given camera roll outside -45..45 degrees (or not a number)."""
    if user_roll_deg is not None and (not math.isfinite(user_roll_deg) or abs(user_roll_deg) > 45):
        raise LeanVideoError(f"--camera-roll-deg must lie within -45..45 degrees; {user_roll_deg} was given; "
                             "give the phone's tilt in degrees, or leave it out to measure it from the room.")


@dataclass(frozen=True)
class CameraSetup:
    """What the scene says about the camera: its roll, and whether it moved."""

    roll: RollChoice
    motion_class: str  # "still" | "moderate" | "too_large" | "unknown"
    motion: object | None = None  # scene_motion.CameraMotion when measured frame by frame
    checks: tuple = ()
    scene_roll: RollChoice | None = None  # the scene's own answer, even when the user's roll is used

    def to_cache(self) -> dict | None:
        """JSON form for re-analysis without decoding; None when the camera moved (not cached)."""
        if self.motion is not None or self.scene_roll is None:
            return None
        return {"scene_roll": [self.scene_roll.roll_deg, self.scene_roll.source, self.scene_roll.confidence],
                "motion_class": self.motion_class,
                "checks": [c for c in self.checks if c["name"] != "camera_roll"]}

    @classmethod
    def from_cache(cls, data: dict, *, user_roll_deg: float | None) -> "CameraSetup":
        """Rebuild from :meth:`to_cache`, applying a user's roll if one is given now."""
        scene_roll = RollChoice(float(data["scene_roll"][0]), str(data["scene_roll"][1]), data["scene_roll"][2])
        roll = RollChoice(float(user_roll_deg), "user") if user_roll_deg is not None else scene_roll
        return cls(roll, str(data["motion_class"]), None, (roll_check(roll), *data["checks"]), scene_roll)


#: Frames sampled over a clip for the scene checks (roll, camera motion,
#: lighting, other people). Engineering choice: 12 frames give the roll fit
#: ample segments and keep a 30 s clip's extra decoding to a few seconds.
SCENE_SAMPLES = 12
#: Longest side of the sampled frames: line segments and the other-people
#: search need no more, and LSD's time grows with the pixel count.
SCENE_SIDE_PX = 960


def camera_setup(video: Path | None, keypoints: pd.DataFrame, *, user_roll_deg: float | None,
                 samples: list | None = None, clip_width: int | None = None) -> CameraSetup:
    """Camera roll (user's, else the scene's, else 0) and camera motion of a clip.

    A still camera is recognised on sampled frames; only when the background
    moves between them is the motion measured frame by frame (hand-held
    clips), and the roll is then taken in the first frame, the frame the
    keypoints are stabilised into. The scene's roll is measured even when the
    user gives one, so that it can be cached and reported.

    Parameters
    ----------
    video : Path or None
        The clip (None for keypoint input).
    keypoints : DataFrame
        Keypoint table (full-size pixels), to keep the person out of the scene.
    user_roll_deg : float or None, keyword-only
        A roll given by the user overrides the scene's.
    samples : list of (frame, time_s, rgb), optional, keyword-only
        Frames spread over the clip, possibly scaled down (the pose stage keeps
        them); sampled from the clip when not given.
    clip_width : int, optional, keyword-only
        Full picture width, to scale keypoints to the samples (default: the
        samples' own width).

    Raises
    ------
    LeanVideoError
        For a user roll outside -45..45 degrees, or camera motion too large to
        correct.
    """
    check_user_roll(user_roll_deg)
    if video is None:
        roll = RollChoice(float(user_roll_deg), "user") if user_roll_deg is not None else RollChoice(0.0, "none")
        return CameraSetup(roll, "unknown", None, (roll_check(roll),))
    from lean_video import pose, scene, scene_motion
    from lean_video import video as vid

    if not samples:
        samples = vid.sample_frames(video, n=SCENE_SAMPLES, max_side_px=SCENE_SIDE_PX)
    full_boxes = person_boxes(keypoints)
    k = samples[0][2].shape[1] / float(clip_width or samples[0][2].shape[1])
    boxes = {i: None if b is None else tuple(v * k for v in b) for i, b in full_boxes.items()}
    quick = scene_motion.estimate_camera_motion(samples, person_boxes_by_frame=boxes)
    motion, motion_class = None, scene_motion.classify(quick)
    if motion_class != "still":
        motion = scene_motion.estimate_camera_motion(video, person_boxes_by_frame=full_boxes)
        motion_class = scene_motion.classify(motion)
    if motion_class == "too_large":
        raise LeanVideoError(
            "The camera moved too much to measure lean (more than 5 degrees of turn or a tenth of the picture); "
            "film again with the phone on a tripod or held against a wall or door frame."
        )
    to_ref = None
    if motion is not None:
        # Full-size similarity -> the samples' pixels: same rotation, translation scaled.
        inverse = {int(i): cv2_invert(m) * np.array([[1.0, 1.0, k], [1.0, 1.0, k]])
                   for i, m in zip(motion.frame_indices, motion.matrices)}
        to_ref = [inverse.get(index) for index, _, _ in samples]
    estimate = scene.estimate_camera_roll([rgb for _, _, rgb in samples],
                                          person_boxes=[_nearest(boxes, i) for i, _, _ in samples],
                                          to_reference=to_ref)
    if estimate.source == "scene" and estimate.confidence >= MIN_ROLL_CONFIDENCE:
        log.info("camera roll from the scene: %.2f deg (confidence %.2f)", estimate.roll_deg, estimate.confidence)
        scene_roll = RollChoice(float(estimate.roll_deg), "scene", float(estimate.confidence))
    else:
        log.info("camera roll: the scene gave no reliable estimate; assuming a level camera")
        scene_roll = RollChoice(0.0, "none", float(estimate.confidence))
    roll = RollChoice(float(user_roll_deg), "user") if user_roll_deg is not None else scene_roll
    found = [(i, rgb) for i, _, rgb in samples if boxes.get(i) is not None]
    probe = found[:: max(1, len(found) // 3)][:3]
    lms = [_landmarks_of(keypoints, i, pose.LANDMARK_NAMES) * np.array([k, k, k, 1.0, 1.0]) for i, _ in probe]
    checks = (roll_check(roll), motion_check(motion_class, quick if motion is None else motion),
              brightness_check([rgb for _, _, rgb in samples]),
              other_people_check(pose.second_person([rgb for _, rgb in probe], lms), len(probe)))
    return CameraSetup(roll, motion_class, motion, checks, scene_roll)


def cv2_invert(matrix: np.ndarray) -> np.ndarray:
    """Inverse of a 2x3 similarity (frame -> reference)."""
    import cv2

    return cv2.invertAffineTransform(np.asarray(matrix, dtype=float))


def _nearest(boxes: dict, index: int):
    from lean_video.scene import nearest_box

    return nearest_box(boxes, index)


def _landmarks_of(keypoints: pd.DataFrame, frame: int, names) -> np.ndarray:
    rows = keypoints[keypoints["frame"] == frame].set_index("landmark").reindex(list(names))
    return rows[["x_px", "y_px", "z", "visibility", "presence"]].to_numpy(dtype=float)


def motion_check(motion_class: str, motion) -> dict:
    """How still the camera was."""
    rot = float(getattr(motion, "max_rotation_deg", 0.0))
    shift = float(getattr(motion, "max_translation_frac", 0.0))
    status = {"still": "pass", "moderate": "warn"}.get(motion_class, "fail")
    detail = (f"camera {motion_class.replace('_', ' ')}: up to {rot:.1f} deg of turn and {shift:.1%} of the "
              "picture of shift" + ("; keypoints were stabilised" if motion_class == "moderate" else ""))
    return _check("camera_motion", status, motion_class, detail,
                  "put the phone on a tripod or hold it against a wall or door frame")


def require_upright(keypoints: pd.DataFrame) -> None:
    """Refuse a picture that is upside down (shoulders below hips in most frames).

    Raises
    ------
    LeanVideoError
        When the shoulders lie below the hips in more than half the frames
        where both are seen.
    """
    y = _wide(keypoints, "y_px")
    needed = ["left_shoulder", "right_shoulder", "left_hip", "right_hip"]
    if not set(needed) <= set(y.columns):
        return
    shoulders = (y["left_shoulder"] + y["right_shoulder"]) / 2
    hips = (y["left_hip"] + y["right_hip"]) / 2
    seen = shoulders.notna() & hips.notna()
    if seen.sum() >= 5 and float((shoulders[seen] > hips[seen]).mean()) > 0.5:
        raise LeanVideoError(
            "The picture is upside down (shoulders below hips); turn the clip upright in the phone's "
            "gallery or film again holding the phone upright."
        )


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


def other_people_check(n_other: int | None, n_frames: int) -> dict:
    """Result of looking for a second person in a few frames (None: not looked)."""
    if n_other is None:
        return _check("other_people", "warn", None, "not checked (no video)", "film with only the client in view")
    return _check("other_people", "fail" if n_other else "pass", n_other,
                  f"another person seen in {n_other} of {n_frames} sampled frames",
                  "film with only the client in view; others can wait behind the camera")


def capture_checks(keypoints: pd.DataFrame, clip: dict, summary: dict, *,
                   extra: list[dict] | tuple = ()) -> list[dict]:
    """All checks of a full analysis: keypoints, gait phases and the scene checks given in ``extra``."""
    checks = keypoint_checks(keypoints, clip)
    sides = summary.get("sides", {})
    n_min = min(int((sides.get(s) or {}).get("n_phases") or 0) for s in ("left", "right"))
    from lean_video.gait_phases import count_unclear_drops

    unclear = count_unclear_drops((summary.get("quality") or {}).get("dropped_phases"))
    detail = f"fewest single-support phases on one side: {n_min}"
    suggestion = "film a longer walk, or two or three passes, to get at least three steps on each side"
    if unclear:
        detail += f"; {unclear} phase(s) left out because the feet or body were not tracked clearly"
        suggestion = "film closer, in even light, at 720p or more; then " + suggestion
    checks.append(_check("phases_per_side", _grade(n_min, PHASE_LIMITS), n_min, detail, suggestion))
    checks.append(direction_check(keypoints, summary.get("direction"), summary.get("passes")))
    if summary.get("pelvic_obliquity_source") == "pelvis markers":
        checks.append(pelvis_marker_check(sides))
    checks.extend(extra)
    return checks


def pelvis_marker_check(sides: dict) -> dict:
    """Share of single-support phases whose pelvic drop the pelvis markers gave (:data:`MARKER_PHASE_LIMITS`)."""
    n = sum(int((sides.get(s) or {}).get("n_phases") or 0) for s in ("left", "right"))
    n_drop = sum(int((sides.get(s) or {}).get("n_pelvic_drop_phases") or 0) for s in ("left", "right"))
    share = n_drop / n if n else 0.0
    return _check("pelvis_markers", _grade(share, MARKER_PHASE_LIMITS), round(share, 3),
                  f"pelvic drop measured in {n_drop} of {n} single-support phases from the pelvis markers",
                  MARKER_SUGGESTION)


def direction_check(keypoints: pd.DataFrame, direction: str | None, passes: list | None = None) -> dict:
    """Does the apparent body size change the same way through the whole clip?

    Spearman's rank correlation (scipy.stats.spearmanr) of body height in the
    picture against time: near +1 for a straight walk toward the camera, near
    -1 walking away, near 0 when the client turns or wanders in view. A walk
    with turns between clear passes (``passes`` from the analysis, or found
    here with :func:`lean_video.gait_passes.find_passes`) passes the check:
    each pass is analysed with its own direction.
    """
    from scipy.stats import spearmanr

    from lean_video.gait_passes import describe_passes, find_passes

    y = _wide(keypoints, "y_px")
    t = keypoints.groupby("frame")["time_s"].first().reindex(y.index).to_numpy()
    size = (y.max(axis=1) - y.min(axis=1)).to_numpy()
    ok = np.isfinite(size) & np.isfinite(t)
    if ok.sum() < 5:
        return _check("direction", "fail", None, "too few frames with the client to tell the walking direction",
                      "film the client walking straight toward the camera")
    if passes is None:
        passes = [{"start_s": p.start_s, "end_s": p.end_s, "direction": p.direction}
                  for p in find_passes(size[ok], t[ok])]
    if len(passes) > 1:
        return _check("direction", "pass", len(passes),
                      f"{len(passes)} passes ({describe_passes(passes)}), each analysed with its own walking direction",
                      "")
    rho = float(spearmanr(t[ok], size[ok]).statistic)
    agree = abs(rho)
    status = "pass" if agree >= 0.8 else ("warn" if agree >= 0.6 else "fail")
    walking = {"toward": "toward", "away": "away from"}.get(direction or ("toward" if rho > 0 else "away"))
    return _check("direction", status, round(rho, 2),
                  f"walking {walking} the camera; size-time rank correlation {rho:+.2f}",
                  "film straight passes toward or away from the camera, turning only at the ends of the corridor")


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


#: Frames sampled by the quick check (engineering choice: enough for rates and
#: trends, few enough to answer within a few seconds).
QUICK_SAMPLES = SCENE_SAMPLES


def quick_check(path: str | Path, *, n_samples: int = QUICK_SAMPLES, pelvis_markers: str | None = None) -> dict:
    """Capture check on frames sampled over a clip, before the client leaves.

    Returns ``{"clip": {...}, "checks": [...], "not_checked": [...]}``. Steps
    per side and camera shake need every frame and are checked by a full
    analysis. ``pelvis_markers`` (a colour of
    :data:`lean_video.pose_markers.MARKER_HUES_DEG`) adds a check that the two
    pelvis markers are seen in the sampled frames.
    """
    from lean_video import pose, video

    info = video.probe_clip(path)
    samples = video.sample_frames(path, n=n_samples, max_side_px=SCENE_SIDE_PX)
    landmarks = pose.detect_still([rgb for _, _, rgb in samples])
    back = info.width / float(samples[0][2].shape[1]) if samples else 1.0  # sample pixels -> full size
    rows = []
    for (index, time_s, _), lm in zip(samples, landmarks):
        data = lm * np.array([back, back, back, 1.0, 1.0]) if lm is not None \
            else np.full((len(pose.LANDMARK_NAMES), 5), np.nan)
        for name, values in zip(pose.LANDMARK_NAMES, data):
            rows.append((index, time_s, name, *values))
    keypoints = pd.DataFrame(rows, columns=list(pose.COLUMNS))
    clip = {k: v for k, v in info.to_dict().items() if k != "path"}
    checks = [file_check(info.frame_count, [index for index, _, _ in samples], n_samples=n_samples)]
    checks.extend(keypoint_checks(keypoints, clip))
    checks.append(direction_check(keypoints, None))
    try:
        checks.extend(camera_setup(Path(path), keypoints, user_roll_deg=None, samples=samples,
                                   clip_width=info.width).checks)
    except LeanVideoError as exc:
        checks.append(_check("camera_motion", "fail", "too_large", str(exc), "film again on a tripod"))
    if pelvis_markers is not None:
        checks.append(sampled_marker_check(Path(path), keypoints, pelvis_markers))
    return {"clip": clip, "checks": checks, "not_checked": ["phases_per_side"]}


def file_check(frame_count: int, sampled: list[int], *, n_samples: int) -> dict:
    """Does the file decode to its end? A copy cut short would otherwise pass the quick check.

    ``sampled`` holds the indices that :func:`lean_video.video.sample_frames`
    returned. When decoding stopped early, the frames lost are at least those
    from the first sample that did not come back to the declared end; graded
    with the same limit as the full analysis
    (:data:`lean_video.pose.MAX_LOST_FRACTION`, which refuses the clip).
    """
    from lean_video.pose import MAX_LOST_FRACTION
    from lean_video.video import sample_indices

    wanted = sample_indices(frame_count, n=n_samples)
    got = set(sampled)
    missing = [i for i in wanted if i not in got]
    if not missing:
        return _check("file", "pass", 0, f"decodes to its last declared frame ({frame_count} frames)", "")
    # decoding that stopped early loses every sample from some point on; a lone bad frame loses one
    after_last_good = 1 + max((k for k, i in enumerate(wanted) if i in got), default=-1)
    lost_at_least = frame_count - wanted[after_last_good] if after_last_good < len(wanted) else len(missing)
    status = "fail" if lost_at_least > max(2, MAX_LOST_FRACTION * frame_count) else "warn"
    return _check("file", status, int(lost_at_least),
                  f"{len(missing)} of {len(wanted)} sampled frames could not be decoded; at least "
                  f"{lost_at_least} of the {frame_count} declared frames are missing (the file looks cut short "
                  "or damaged)", "copy or export the clip from the phone again")


def sampled_marker_check(path: Path, keypoints: pd.DataFrame, colour: str) -> dict:
    """Are both pelvis markers seen in the sampled frames that show the client?

    Searched on the full-size frames; graded by :data:`MARKER_SAMPLE_LIMITS`.
    """
    from lean_video import video

    search = MarkerSearch(colour=colour)
    times = keypoints.groupby("frame")["time_s"].first().to_dict()
    names = ("left_hip", "right_hip", "left_shoulder", "right_shoulder")
    n_person = n_seen = 0
    for index, rgb in video.frames_at(path, times).items():
        points = dict(zip(names, _landmarks_of(keypoints, index, names)[:, :2]))
        if not all(np.isfinite(p).all() for p in points.values()):
            continue
        n_person += 1
        n_seen += bool(np.isfinite(find_markers_near_body(rgb, points, search=search)).all())
    share = n_seen / n_person if n_person else 0.0
    return _check("pelvis_markers", _grade(share, MARKER_SAMPLE_LIMITS), round(share, 3),
                  f"both {colour} pelvis markers seen in {n_seen} of {n_person} sampled frames showing the client",
                  "check the colour given, " + MARKER_SUGGESTION)

