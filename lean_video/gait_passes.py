"""Clips with several passes: walking toward the camera, turning, walking back.

In a corridor the natural way to film more steps is to let the client walk
toward the phone, turn and walk away again (and back). The client's sides
appear mirrored between the two directions, and the events the frontal view
hides differ too, so each pass is analysed with its own walking direction and
the phases of all passes are summarised together.

Passes are found from the apparent body size ``B`` (shoulder midpoint to
feet midpoint, pixels; :func:`lean_video.gait_events.body_height_px`): it
grows while the client approaches and shrinks while they recede, so a turn is
an extremum of ``log B`` low-passed at 0.5 Hz. A clip is split only where both
neighbours are real passes (long enough, with a clear size change in opposite
directions); otherwise it is analysed as one pass, exactly as before, so a
client standing still, pausing or leaving the frame never splits a clip. The
frames around a turn (``turn_margin_s`` each side of the extremum) belong to
no pass: the client is seen from the side there and steps are irregular.

Conventions as in :mod:`lean_video.gait`. Pass boundaries are ``(start_s,
end_s)`` in clip time, inclusive.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import signal, stats

from lean_video.errors import LeanVideoError
from lean_video.gait import GaitResult, analyse_keypoints
from lean_video.gait_clean import keypoints_to_track
from lean_video.gait_events import body_height_px, smooth_body_height
from lean_video.gait_options import check_frame_rate, check_gait_options
from lean_video.gait_phases import summarise_sides

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class Pass:
    """One stretch of walking in one direction."""

    start_s: float
    end_s: float
    direction: str
    log_size_change: float


def find_passes(
    height_px: np.ndarray, time_s: np.ndarray, *, min_change: float = 0.15,
    min_pass_s: float = 2.0, turn_margin_s: float = 1.5,
) -> list[Pass]:
    """Split a walk into passes at the turns (extrema of apparent body size).

    Parameters
    ----------
    height_px : ndarray, shape (n,)
        Apparent body height per frame in pixels (NaN where not seen).
    time_s : ndarray, shape (n,)
        Frame timestamps.
    min_change : float, keyword-only
        Smallest change of ``log B`` that makes a pass (0.15: about 16 %, one
        metre of walking at 6 m; common practice, no source), also the
        prominence a turn must have.
    min_pass_s : float, keyword-only
        Shortest pass (about two strides; common practice, no source).
    turn_margin_s : float, keyword-only
        Time left out on each side of a turn. Turning on the spot takes
        about 2-3 s in older adults (timed up-and-go turn phase, from memory).

    Returns
    -------
    list of Pass
        In time order. A single pass spanning the tracked clip when there is
        no turn with real passes on both sides; empty when the body is seen
        in fewer than three frames.
    """
    height_px = np.asarray(height_px, dtype=float)
    time_s = np.asarray(time_s, dtype=float)
    if height_px.shape != time_s.shape or height_px.ndim != 1:
        raise LeanVideoError(f"height_px and time_s must be 1-D arrays of the same length, got shapes "
                             f"{height_px.shape} and {time_s.shape}; pass one value per frame.")
    if not min_change > 0 or not min_pass_s > 0 or not turn_margin_s >= 0:
        raise LeanVideoError(f"min_change and min_pass_s must be positive and turn_margin_s not negative, got "
                             f"{min_change}, {min_pass_s}, {turn_margin_s}; use 0.15, 2.0 and 1.5.")
    ok = np.isfinite(height_px) & (height_px > 0)
    if ok.sum() < 3:
        return []
    # Sparse samples (the quick capture check reads about one frame a second)
    # carry no step-by-step bounce to remove, and the 0.5 Hz filter would not fit below their Nyquist.
    sparse = float(np.median(np.diff(time_s[ok]))) > 0.5
    smooth = height_px if sparse else smooth_body_height(height_px, time_s)
    t, size = time_s[ok], np.log(smooth[ok])
    good = np.isfinite(size)
    t, size = t[good], size[good]
    if len(t) < 3:
        return []
    turns = sorted(set(signal.find_peaks(size, prominence=min_change)[0])
                   | set(signal.find_peaks(-size, prominence=min_change)[0]))
    bounds = [float(t[0])] + [float(t[i]) for i in turns] + [float(t[-1])]
    passes = []
    for k in range(len(bounds) - 1):
        a = bounds[k] + (turn_margin_s if k > 0 else 0.0)
        b = bounds[k + 1] - (turn_margin_s if k + 1 < len(bounds) - 1 else 0.0)
        sel = (t >= a) & (t <= b)
        if b - a < min_pass_s or sel.sum() < 3:
            passes.append(None)
            continue
        slope = stats.theilslopes(size[sel], t[sel])[0]
        change = float(size[sel][-1] - size[sel][0])
        passes.append(Pass(a, b, "toward" if slope > 0 else "away", change)
                      if abs(change) >= min_change else None)
    real = [p for p in passes if p is not None]
    directions = {p.direction for p in real}
    if len(real) < 2 or len(directions) < 2:
        # No turn between two real passes: one pass over the tracked clip.
        change = float(size[-1] - size[0])
        return [Pass(float(t[0]), float(t[-1]), "toward" if change >= 0 else "away", change)]
    return real


def describe_passes(passes: list[dict]) -> str:
    """One line listing passes, e.g. ``away 0.0-4.5 s, toward 7.5-12.2 s``."""
    return ", ".join(f"{p['direction']} {p['start_s']:.1f}-{p['end_s']:.1f} s" for p in passes)


def _merge_quality(results: list[GaitResult], n_frames: int, warnings: list[str]) -> dict:
    q = {"n_frames": int(n_frames),
         "n_valid_frames": int(sum(r.summary["quality"]["n_valid_frames"] for r in results))}
    # every per-pass count of corrections adds up over the passes
    counts = [k for k in results[0].summary["quality"]
              if k.startswith("n_") and k not in ("n_frames", "n_valid_frames", "n_dropped_phases")]
    for key in counts:
        q[key] = int(sum(r.summary["quality"][key] for r in results))
    q["log_size_slope_per_s"] = None  # one per pass, see "passes"
    q["dropped_phases"] = [d for r in results for d in r.summary["quality"]["dropped_phases"]]
    q["n_dropped_phases"] = len(q["dropped_phases"])
    q["warnings"] = warnings
    return q


def analyse_walk(keypoints: pd.DataFrame, *, width: int, height: int, **options) -> GaitResult:
    """Analyse a clip pass by pass and summarise the phases of all passes together.

    A clip with one pass gives exactly :func:`lean_video.gait.analyse_keypoints`
    (plus ``summary["passes"]``). With several, each pass is analysed with its
    own direction; ``frames`` keeps every input frame (angles NaN and
    ``valid`` False in the turns), ``events`` and ``strides`` are the passes'
    in time order, and ``summary["direction"]`` is the direction of the pass
    with the most phases (ties: toward), with every pass listed under
    ``summary["passes"]`` (``start_s, end_s, direction, n_phases``).

    Parameters
    ----------
    keypoints : DataFrame
        Long keypoint table (see :mod:`lean_video.pose`).
    width, height : int, keyword-only
        Upright image size in pixels.
    **options
        Keyword options of :func:`lean_video.gait.analyse_keypoints`.

    Raises
    ------
    LeanVideoError
        If no pass has a single-support phase.
    """
    # Options first: a bad one must not read as "no phase found" in every pass.
    check_gait_options({"width": width, "height": height, **options}, function=analyse_keypoints)
    frame, time_s, raw = keypoints_to_track(keypoints, min_visibility=options.get("min_visibility", 0.5))
    check_frame_rate(float(np.median(np.diff(time_s))), cutoff_hz=options.get("cutoff_hz", 6.0),
                     event_cutoff_hz=options.get("event_cutoff_hz", 6.0))
    passes = find_passes(body_height_px(raw), time_s)
    if len(passes) <= 1:
        result = analyse_keypoints(keypoints, width=width, height=height, **options)
        summary = dict(result.summary)
        summary["passes"] = [{"start_s": float(time_s[0]), "end_s": float(time_s[-1]),
                              "direction": summary["direction"], "n_phases": int(len(result.strides))}]
        return GaitResult(result.frames, result.events, result.strides, summary)

    results, listed, warnings = [], [], []
    for p in passes:
        part = keypoints[(keypoints["time_s"] >= p.start_s - 1e-9) & (keypoints["time_s"] <= p.end_s + 1e-9)]
        entry = {"start_s": p.start_s, "end_s": p.end_s, "direction": p.direction, "n_phases": 0}
        try:
            r = analyse_keypoints(part, width=width, height=height, summarise=False, **options)
        except LeanVideoError as err:
            warnings.append(f"pass {p.start_s:.1f}-{p.end_s:.1f} s ({p.direction}): {err}")
            listed.append(entry)
            continue
        entry["direction"] = r.summary["direction"]
        entry["n_phases"] = int(len(r.strides))
        listed.append(entry)
        results.append(r)
        warnings.extend(f"pass {p.start_s:.1f}-{p.end_s:.1f} s: {w}" for w in r.summary["quality"]["warnings"])
    if not results:
        raise LeanVideoError(
            "no single-support phase was found in any pass of the walk; film again with the whole body "
            "in view, walking straight toward the camera for at least six steps.")
    warnings.insert(0, f"the clip holds {len(passes)} passes ({describe_passes(listed)}); each was analysed "
                    "with its own walking direction and the turns between them were left out")

    all_frames = pd.DataFrame({"frame": frame, "time_s": time_s})
    parts = pd.concat([r.frames for r in results], ignore_index=True).drop_duplicates("frame", keep="first")
    frames = all_frames.merge(parts.drop(columns="time_s"), on="frame", how="left")
    for col in ("left_contact", "right_contact", "valid"):
        frames[col] = frames[col].astype("boolean").fillna(False).astype(bool)
    events = pd.concat([r.events for r in results], ignore_index=True).sort_values("time_s").reset_index(drop=True)
    strides = pd.concat([r.strides for r in results], ignore_index=True).sort_values("start_s").reset_index(drop=True)

    by_dir = {d: sum(e["n_phases"] for e in listed if e["direction"] == d) for d in ("toward", "away")}
    first = results[0].summary
    summary = {
        "direction": "toward" if by_dir["toward"] >= by_dir["away"] else "away",
        "camera_roll_deg": first["camera_roll_deg"],
        "pelvic_obliquity_source": first["pelvic_obliquity_source"],
        **summarise_sides(strides, events, warnings,
                          dropped=[d for r in results for d in r.summary["quality"]["dropped_phases"]]),
    }
    summary["quality"] = _merge_quality(results, len(frame), warnings)
    summary["settings"] = {**first["settings"], "passes": "split at turns (lean_video.gait_passes.find_passes defaults)"}
    summary["passes"] = listed
    for w in warnings:
        log.warning(w)
    return GaitResult(frames=frames, events=events, strides=strides, summary=summary)
