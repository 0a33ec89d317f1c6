"""Gait stage: from the keypoint table to events, single-support phases and angles.

Conventions (stated once, tested in ``tests/test_gait.py``)
----------------------------------------------------------
* Image: upright-image pixels, x to the right, y down. Tracks are arrays of
  shape ``(n_frames, 2)``; ``time_s`` has shape ``(n_frames,)`` and holds the
  true (possibly irregular) timestamps.
* ``camera_roll_deg``: positive when world-vertical lines appear turned
  clockwise in the upright image. True "up" in image coordinates is then
  ``u = (sin r, -cos r)`` and true "image-right horizontal" is
  ``h = (cos r, sin r)``.
* ``trunk_lean_deg``: angle between true vertical and the line hip midpoint ->
  shoulder midpoint, positive when the shoulders lie toward the client's RIGHT.
* ``pelvic_obliquity_deg``: angle of the line through both hips (or, when the
  keypoints hold them, both pelvis markers: :mod:`lean_video.gait_pelvis`)
  against true horizontal, positive when the client's LEFT hip is lower.
* Sides are the client's own. Facing the camera (walking toward it) the
  client's right appears on the image left; from behind (walking away) on the
  image right. Which way the client walks is decided from the growth or
  shrinking of apparent body size, and the sides from image geometry, not from
  the pose model's labels (see :mod:`lean_video.gait_events`).
* Per single-support phase, lean is reported *toward the stance side* and
  pelvic drop *of the swing side* (positive = swing-side hip lower, the
  Trendelenburg direction).
"""

from __future__ import annotations

import dataclasses
import logging
import math

import numpy as np
import pandas as pd

from lean_video.errors import LeanVideoError
from lean_video.gait_clean import clean_track, keypoints_to_track, lowpass_track, pad_time_gaps
from lean_video.gait_events import (
    assign_client_sides, body_height_px, detect_contacts, foot_speeds,
    refine_event_times, rest_noise, smooth_body_height, walking_direction,
)
from lean_video.gait_frontal import (
    bound_by_double_support, drop_short_contacts, foot_centre_events, order_events, untime_cut_strikes,
)
from lean_video.gait_options import check_frame_rate, check_gait_options
from lean_video.gait_pelvis import line_obliquity_deg, marker_obliquity
from lean_video.gait_phases import SIDES, phases_from_contacts, summarise_sides

log = logging.getLogger(__name__)


@dataclasses.dataclass(frozen=True)
class GaitResult:
    """Result of :func:`analyse_keypoints`.

    Attributes
    ----------
    frames : DataFrame
        ``frame, time_s, trunk_lean_deg, pelvic_obliquity_deg, left_contact,
        right_contact, valid`` (one row per input frame).
    events : DataFrame
        ``time_s, frame, side, event`` with event ``foot_strike`` or ``foot_off``.
    strides : DataFrame
        One row per kept single-support phase: ``stance_side, start_s, end_s,
        duration_s, lean_mean_deg, lean_peak_deg, pelvic_drop_mean_deg,
        pelvic_drop_peak_deg``.
    summary : dict
        JSON-able; see :func:`analyse_keypoints`.
    """

    frames: pd.DataFrame
    events: pd.DataFrame
    strides: pd.DataFrame
    summary: dict


def frame_angles(
    track: dict[str, np.ndarray], *, direction: str, camera_roll_deg: float = 0.0
) -> tuple[np.ndarray, np.ndarray]:
    """Trunk lean and pelvic obliquity per frame, in degrees (conventions above).

    Parameters
    ----------
    track : dict of ndarray (n, 2)
        Client-side labelled positions (``left_shoulder``, ``right_hip``, ...).
    direction : {"toward", "away"}
        Toward the camera the client's right is image-left; away, image-right.
    camera_roll_deg : float, keyword-only

    Returns
    -------
    trunk_lean_deg, pelvic_obliquity_deg : ndarray, shape (n,)
    """
    r = math.radians(camera_roll_deg)
    up = np.array([math.sin(r), -math.cos(r)])
    horiz = np.array([math.cos(r), math.sin(r)])
    right_sign = -1.0 if direction == "toward" else 1.0
    hip_l, hip_r = track["left_hip"], track["right_hip"]
    trunk = (track["left_shoulder"] + track["right_shoulder"]) / 2 - (hip_l + hip_r) / 2
    lean = np.degrees(np.arctan2(trunk @ horiz * right_sign, trunk @ up))
    return lean, line_obliquity_deg(hip_l, hip_r, camera_roll_deg=camera_roll_deg)


def _require_landmarks(raw: dict[str, np.ndarray]) -> None:
    """Refuse a table in which a landmark the analysis needs is never seen (named, not "no phase found")."""
    need = ("left_shoulder", "right_shoulder", "left_hip", "right_hip", "left_ankle", "right_ankle")
    never = [name for name in need if not np.isfinite(raw[name]).all(axis=1).any()]
    if never:
        raise LeanVideoError(f"the keypoints never hold a usable {', '.join(never)} (missing, or visibility below "
                             "min_visibility in every frame); film again with the whole body in view, or lower "
                             "min_visibility only if the pose source reports visibility differently.")


def _pad_gaps(frame, time_s, raw, *, max_gap_s):
    """Stand missing samples in for jumps in time (:func:`lean_video.gait_clean.pad_time_gaps`)."""
    padded, real = pad_time_gaps(time_s, max_gap_s=max_gap_s)
    if real.all():
        return frame, time_s, raw, real, []
    out_frame = np.full(len(padded), -1, dtype=int)
    out_frame[real] = frame
    out_raw = {}
    for name, xy in raw.items():
        full = np.full((len(padded), 2), np.nan)
        full[real] = xy
        out_raw[name] = full
    jumps = np.flatnonzero(np.diff(np.flatnonzero(real)) > 1)
    at = ", ".join(f"{time_s[j]:.2f}-{time_s[j + 1]:.2f} s" for j in jumps)
    warning = (f"the keypoints skip time ({at}): no phase is measured across a jump; "
               "re-run the pose stage on the whole clip, or film again without interruptions")
    return out_frame, padded, out_raw, real, [warning]


def analyse_keypoints(
    keypoints: pd.DataFrame, *, width: int, height: int, camera_roll_deg: float = 0.0,
    cutoff_hz: float = 6.0, min_visibility: float = 0.5, max_gap_s: float = 0.1,
    event_cutoff_hz: float = 6.0, contact_on_fraction: float = 0.2,
    contact_off_fraction: float = 0.3, min_phase_s: float = 0.15, max_phase_s: float = 1.0,
    max_missing_fraction: float = 0.2, footprint_tolerance: float = 0.01,
    contact_points: str = "centroid", foot_centre_timing: bool = True,
    foot_centre_cutoff_hz: float = 10.0, event_order: bool = True, shared_noise: bool = True,
    max_jitter_ratio: float = 3.0, min_double_support_fraction: float = 0.08, summarise: bool = True,
) -> GaitResult:
    """Find foot events, single-support phases, trunk lean and pelvic obliquity.

    Parameters
    ----------
    keypoints : DataFrame
        Long keypoint table from the pose stage (see DEVELOPERS.md).
    width, height : int, keyword-only
        Upright image size in pixels.
    camera_roll_deg : float, keyword-only
        See module docstring.
    cutoff_hz : float, keyword-only
        Low-pass cut-off for the angles (Winter 2009, ch. 3: 6 Hz for walking).
    min_visibility, max_gap_s : float, keyword-only
        Visibility gate and longest gap (missing time, s) that is interpolated.
    event_cutoff_hz : float, keyword-only
        Low-pass cut-off for the foot points used for contacts.
    contact_on_fraction, contact_off_fraction : float, keyword-only
        Hysteresis thresholds, fractions of the local swing speed.
    min_phase_s, max_phase_s, max_missing_fraction : float, keyword-only
        Quality gates for single-support phases.
    footprint_tolerance : float, keyword-only
        Smallest distance from its footprint, in body heights, at which a foot
        point counts as arrived/departed when timing events (0 switches the
        position-based timing off and keeps the speed-threshold crossings).
    contact_points : {"centroid", "each"}, keyword-only
        Detect contact on the mean of heel, ankle and foot index (less noisy),
        or on each point with a foot-flat rule.
    foot_centre_timing : bool, keyword-only
        Re-time the event the frontal view hides (toward: foot off, away: foot
        strike) from turning points of the foot's image motion, see
        :func:`lean_video.gait_frontal.foot_centre_events` (walking away in two
        passes: the foot offs are searched again after the other foot's
        re-timed strikes).
    foot_centre_cutoff_hz : float, keyword-only
        Low-pass cut-off of the foot points used for that re-timing (higher
        than ``event_cutoff_hz`` so the turning points stay sharp; common
        practice, no source).
    event_order : bool, keyword-only
        Resolve a foot strike found after the other foot's foot off by moving
        the event the view hides, see :func:`lean_video.gait_frontal.order_events`.
    shared_noise : bool, keyword-only
        Walking toward the camera, time both feet's footprint arrivals and
        departures with one at-rest noise level (the mean of the two feet's
        estimates, :func:`lean_video.gait_events.rest_noise`) rather
        than each foot's own. Both feet are seen by the same camera and model,
        but a foot whose image drifts slowly while it rolls over reads a
        larger "noise", hence a wider footprint tolerance, and its strikes are
        declared early; walking toward, that arrival is the foot strike, so
        the two sides' single-support times came out unequal. Measured on the
        first 14 rendered clips walking toward the camera (walks with equal sides):
        false left/right symmetry index up to 21 % with each foot's own level,
        11 % with the shared one; per-side lean max 1.03 -> 0.99 deg; every
        phase still found. Walking away, the strike is re-timed from the
        heel's turning point and the footprint only places that search; a
        shared level there moved the receding foot's search too early and lost
        2 of 8 phases on the rendered walking-away clip, so each foot keeps
        its own (common practice, no source).
    max_jitter_ratio : float, keyword-only
        The shared level is used only while the two feet's jitter (at-rest
        spread about a straight line in time, so without the roll-over drift)
        differs by at most this factor. A truly noisier foot (say, partly
        hidden) needs its own wider tolerance: on the synthetic walker with
        one foot's points jittered by about 4 px, a shared level made a false
        symmetry index of up to 50 %. Measured ratios: 1.1-2.3 on the 17
        rendered clips, 4.4-7.5 on that walker; 3 lies between (common
        practice, no source).
    min_double_support_fraction : float, keyword-only
        Shortest double support, as a fraction of the stride time, kept
        between the event the view hides and the other foot's (toward: a
        strike before the other's foot off; away: a foot off after the
        other's strike; 0: off), see
        :func:`lean_video.gait_frontal.bound_by_double_support`.
    summarise : bool, keyword-only
        False leaves out ``sides``, ``cadence_steps_per_min`` and
        ``asymmetry`` (and their warnings) and logs nothing: used to analyse
        the passes of a clip one by one and summarise them together
        (:mod:`lean_video.gait_passes`).

    Returns
    -------
    GaitResult
        ``summary`` holds ``direction``, ``camera_roll_deg``,
        ``pelvic_obliquity_source`` (``"pelvis markers"`` when the keypoints
        hold the two marker landmarks of :mod:`lean_video.pose_markers`, which
        then give the obliquity; else ``"hip landmarks"``),
        ``cadence_steps_per_min``, ``sides`` (``left``/``right``: ``n_phases``,
        ``n_pelvic_drop_phases``,
        ``lean_mean_deg``, ``lean_sd_deg``, ``lean_ci95_deg``,
        ``pelvic_drop_mean_deg``, ``single_support_mean_s`` ...),
        ``asymmetry`` (left minus right), ``quality`` (``dropped_phases``,
        ``n_label_swaps_repaired``, ``warnings``) and ``settings``. Missing
        values are ``None`` and always come with a warning.

    Raises
    ------
    LeanVideoError
        On bad parameters, or if no single-support phase is found.
    """
    for name, value in (("width", width), ("height", height)):
        if not isinstance(value, (int, np.integer)) or value <= 0:
            raise LeanVideoError(f"{name} must be a positive integer number of pixels, got {value!r}; pass the upright image size from clip.json.")
    check_gait_options(dict(
        camera_roll_deg=camera_roll_deg, cutoff_hz=cutoff_hz, min_visibility=min_visibility, max_gap_s=max_gap_s,
        event_cutoff_hz=event_cutoff_hz, min_phase_s=min_phase_s, max_phase_s=max_phase_s,
        max_missing_fraction=max_missing_fraction, footprint_tolerance=footprint_tolerance,
        foot_centre_cutoff_hz=foot_centre_cutoff_hz, max_jitter_ratio=max_jitter_ratio,
        min_double_support_fraction=min_double_support_fraction), function=analyse_keypoints)
    if contact_points not in ("centroid", "each"):
        raise LeanVideoError(f"contact_points must be 'centroid' or 'each', got {contact_points!r}; use 'centroid'.")
    if not 0 < contact_on_fraction <= contact_off_fraction < 1:
        raise LeanVideoError(f"contact fractions must satisfy 0 < on <= off < 1, got {contact_on_fraction} and {contact_off_fraction}; use 0.2 and 0.3.")
    settings = dict(
        width=int(width), height=int(height), camera_roll_deg=float(camera_roll_deg),
        cutoff_hz=float(cutoff_hz), min_visibility=float(min_visibility),
        max_gap_s=float(max_gap_s), event_cutoff_hz=float(event_cutoff_hz),
        contact_on_fraction=float(contact_on_fraction),
        contact_off_fraction=float(contact_off_fraction), min_phase_s=float(min_phase_s),
        max_phase_s=float(max_phase_s), max_missing_fraction=float(max_missing_fraction),
        footprint_tolerance=float(footprint_tolerance), contact_points=contact_points,
        foot_centre_timing=bool(foot_centre_timing),
        foot_centre_cutoff_hz=float(foot_centre_cutoff_hz), event_order=bool(event_order),
        shared_noise=bool(shared_noise), max_jitter_ratio=float(max_jitter_ratio),
        min_double_support_fraction=float(min_double_support_fraction),
        filter="Butterworth order 2 per pass, sosfiltfilt (zero lag), per valid segment on a uniform grid",
    )
    frame, time_s, raw = keypoints_to_track(keypoints, min_visibility=min_visibility)
    check_frame_rate(float(np.median(np.diff(time_s))), cutoff_hz=cutoff_hz, event_cutoff_hz=event_cutoff_hz)
    _require_landmarks(raw)
    frame, time_s, raw, real, gap_warning = _pad_gaps(frame, time_s, raw, max_gap_s=max_gap_s)
    filtered, filled, n_swaps, n_blanked = clean_track(raw, time_s, max_gap_s=max_gap_s, cutoff_hz=cutoff_hz)
    # the other cut-offs filter the same repaired, gap-filled track (the repair runs once)
    ev_track = filtered if event_cutoff_hz == cutoff_hz else lowpass_track(filled, time_s, cutoff_hz=event_cutoff_hz)
    # keep the re-timing filter below Nyquist on low frame rates (0.4 fs, common practice, no source)
    fc_cutoff_hz = min(foot_centre_cutoff_hz, 0.4 / float(np.median(np.diff(time_s))))
    fc_track = ev_track if fc_cutoff_hz == event_cutoff_hz else lowpass_track(filled, time_s, cutoff_hz=fc_cutoff_hz)
    direction, slope, warnings = walking_direction(filled, time_s)
    warnings += gap_warning
    (filtered, ev_track, fc_track), n_relabel = assign_client_sides(
        [filtered, ev_track, fc_track], direction)

    lean, obliq = frame_angles(filtered, direction=direction, camera_roll_deg=camera_roll_deg)
    markers = marker_obliquity(keypoints, frame, time_s, direction=direction, camera_roll_deg=camera_roll_deg,
                               max_gap_s=max_gap_s, cutoff_hz=cutoff_hz)
    if markers is not None:
        obliq = markers.obliquity_deg  # the hip points do not follow the pelvis (stated_accuracy.PELVIS_METHOD)
    scale = smooth_body_height(body_height_px(filtered), time_s)
    contact, intervals = {}, {}
    for side in SIDES:
        speeds = foot_speeds(ev_track, time_s, side, scale)
        if contact_points == "centroid":
            speeds = {"centroid": speeds["centroid"]}
        else:
            speeds.pop("centroid")
        _, intervals[side] = detect_contacts(
            speeds, time_s, on_fraction=contact_on_fraction, off_fraction=contact_off_fraction)
    if footprint_tolerance > 0:
        sigma = None  # each foot its own at-rest noise level
        if shared_noise and direction == "toward":
            # Walking toward the camera the footprint arrival is the foot
            # strike itself (nothing re-times it), so one noise level for both
            # feet keeps the two sides' strikes comparable, unless one foot is
            # truly noisier (see shared_noise).
            spread, jitter = zip(*(rest_noise(ev_track, time_s, side, scale, intervals[side]) for side in SIDES))
            if max(jitter) <= max_jitter_ratio * max(min(jitter), 1e-9):
                sigma = float(np.mean(spread))
        for side in SIDES:
            intervals[side], _ = refine_event_times(
                ev_track, time_s, side, scale, intervals[side], floor_fraction=footprint_tolerance,
                sigma_rel=sigma)
    n_short = n_cut = 0
    for side in SIDES:
        intervals[side], n = drop_short_contacts(intervals[side])
        n_short += n
        intervals[side], n = untime_cut_strikes(intervals[side])
        n_cut += n
    if foot_centre_timing:
        def retimed(strikes=None):
            return {side: foot_centre_events(
                fc_track, time_s, side, intervals[side], direction=direction,
                other_intervals=intervals[other], camera_roll_deg=camera_roll_deg, scale_px=scale,
                other_strikes_s=None if strikes is None else strikes[other])
                for side, other in (("left", "right"), ("right", "left"))}

        first = retimed()
        if direction == "away":
            # A foot off comes after the other foot's landing, and seen from behind the
            # landings are the events re-timed well: a second pass anchors each foot
            # off's search on them (other_strikes_s in foot_centre_events).
            first = retimed({side: [iv[0] for iv in first[side] if iv[4]] for side in SIDES})
        intervals = first
    n_reordered = 0
    if event_order:
        intervals["left"], intervals["right"], n_reordered = order_events(
            intervals["left"], intervals["right"], direction=direction)
    intervals["left"], intervals["right"], n_bounded = bound_by_double_support(
        intervals["left"], intervals["right"], direction=direction,
        min_double_support_fraction=min_double_support_fraction)
    for side in SIDES:
        # per-frame contact between the (refined) foot strike and foot off
        contact[side] = np.zeros(len(time_s), bool)
        for t_strike, t_off, *_ in intervals[side]:
            contact[side] |= (time_s >= t_strike - 1e-9) & (time_s <= t_off + 1e-9)

    frame_s = float(np.median(np.diff(time_s)))
    strides, drops = phases_from_contacts(intervals, time_s, lean, obliq, min_phase_s=min_phase_s,
                             max_phase_s=max_phase_s, max_missing_fraction=max_missing_fraction,
                             frame_s=frame_s)
    if strides.empty:
        raise LeanVideoError(
            "no single-support phase was found (nobody walking, or the person's feet or hips "
            "out of frame); film again with the whole body in view, walking toward the camera "
            "for at least six steps.")

    ev_rows = []
    for side in SIDES:
        for t_strike, t_off, i0, i1, s_seen, o_seen in intervals[side]:
            if s_seen:
                ev_rows.append((t_strike, side, "foot_strike"))
            if o_seen:
                ev_rows.append((t_off, side, "foot_off"))
    events = pd.DataFrame(ev_rows, columns=["time_s", "side", "event"]).sort_values("time_s")
    nearest = [int(frame[real][np.argmin(np.abs(time_s[real] - t))]) for t in events["time_s"]]
    events.insert(1, "frame", np.array(nearest, dtype=int))
    events = events.reset_index(drop=True)

    frames = pd.DataFrame({
        "frame": frame, "time_s": time_s, "trunk_lean_deg": lean,
        "pelvic_obliquity_deg": obliq, "left_contact": contact["left"],
        "right_contact": contact["right"],
        "valid": np.isfinite(lean),
    })[real].reset_index(drop=True)  # the samples standing for a jump in time are not frames

    summary = {
        "direction": direction,
        "camera_roll_deg": float(camera_roll_deg),
        "pelvic_obliquity_source": "hip landmarks" if markers is None else "pelvis markers",
        **(summarise_sides(strides, events, warnings, dropped=drops) if summarise else {}),
        "quality": {
            "n_frames": int(len(frames)),
            "n_valid_frames": int(frames["valid"].sum()),
            "n_label_swaps_repaired": int(n_swaps),
            "n_merged_sides_left_out": int(n_blanked),
            "n_side_relabellings": int(n_relabel),
            "n_short_contacts_dropped": int(n_short),
            "n_strikes_cut_by_clip_end": int(n_cut),
            "n_events_reordered": int(n_reordered),
            "n_events_bounded_by_double_support": int(n_bounded),
            "n_pelvis_marker_frames": 0 if markers is None else int(round(markers.seen_fraction * len(frame))),
            "time_gaps_s": [round(float(g), 3) for g in np.diff(time_s[real])[np.diff(np.flatnonzero(real)) > 1]],
            "log_size_slope_per_s": None if not np.isfinite(slope) else float(slope),
            "dropped_phases": drops,
            "n_dropped_phases": len(drops),
            "warnings": warnings,
        },
        "settings": settings,
    }
    if summarise:
        for w in warnings:
            log.warning(w)
    return GaitResult(frames=frames, events=events, strides=strides, summary=summary)
