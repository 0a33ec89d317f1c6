"""Single-support phases from foot contacts, and their per-side statistics.

Conventions as in :mod:`lean_video.gait` (sides are the client's own; lean
toward the stance side and drop of the swing side positive). ``intervals`` are
each foot's contacts as :func:`lean_video.gait_events.detect_contacts` gives
them after re-timing: tuples ``(strike_s, off_s, first_frame, last_frame,
strike_seen, off_seen)``.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
from scipy import stats

SIDES = ("left", "right")

#: Reason prefix of phases lost at the edges of the tracked stretch (not to poor tracking).
PARTIAL_PHASE = "partial phase"


def ci95(x: np.ndarray):
    """Mean, SD and two-sided 95 % t-interval (Student's t, scipy.stats.t)."""
    n = len(x)
    if n == 0:
        return None, None, None
    mean = float(np.mean(x))
    if n < 2:
        return mean, None, None
    sd = float(np.std(x, ddof=1))
    half = float(stats.t.ppf(0.975, n - 1) * sd / math.sqrt(n))
    return mean, sd, [mean - half, mean + half]


def phases_from_contacts(intervals, time_s, lean, obliq, *, min_phase_s, max_phase_s,
                         max_missing_fraction, frame_s):
    """Single-support phases from events: other foot's foot off -> its next foot strike.

    The stance foot must be in contact over the whole phase, within a slack
    of three frame intervals or 0.1 s, whichever is longer (pose-model event
    timing errs by up to about 0.1 s whatever the frame rate, as measured on
    the rendered clips); phases cut by the clip/tracking edges, too short or
    too long, or with too few frames with hips and shoulders are dropped with
    a reason.
    """
    rows, drops = [], []
    slack_s = max(3 * frame_s, 0.1)
    for stance, swing in (("left", "right"), ("right", "left")):
        sw = sorted(intervals[swing], key=lambda iv: iv[0])
        st = intervals[stance]
        for k, (s_strike, s_off, i0, i1, s_seen, o_seen) in enumerate(sw):
            nxt = sw[k + 1] if k + 1 < len(sw) else None
            if not o_seen:
                continue  # the swing foot never leaves the floor within tracking
            if nxt is None or not nxt[4] or nxt[2] > i1 + 1 + int(round(max_phase_s / frame_s)):
                drops.append({"stance_side": stance, "start_s": float(s_off),
                              "reason": f"{PARTIAL_PHASE}: the swing foot's next foot strike is not seen (end of clip or lost tracking)"})
                continue
            start, end = s_off, nxt[0]
            holder = [iv for iv in st if iv[0] <= start + slack_s and iv[1] >= end - slack_s]
            if not holder:
                drops.append({"stance_side": stance, "start_s": float(start),
                              "reason": "stance foot not seen in contact for the whole phase"})
                continue
            dur = end - start
            if not min_phase_s <= dur <= max_phase_s:
                drops.append({"stance_side": stance, "start_s": float(start),
                              "reason": f"duration {dur:.2f} s outside {min_phase_s}-{max_phase_s} s"})
                continue
            sel = (time_s >= start) & (time_s <= end)
            if not sel.any():
                sel = np.abs(time_s - (start + end) / 2) == np.min(np.abs(time_s - (start + end) / 2))
            toward = lean[sel] * (1.0 if stance == "right" else -1.0)
            drop = obliq[sel] * (1.0 if swing == "left" else -1.0)
            missing = np.mean(~np.isfinite(toward))
            if missing > max_missing_fraction:
                drops.append({"stance_side": stance, "start_s": float(start),
                              "reason": f"{100 * missing:.0f} % of frames without shoulders/hips"})
                continue
            # Pelvic markers can be hidden while the trunk is seen: the phase
            # stays, only its pelvic drop is left out (counted in the summary).
            drop_ok = np.mean(np.isfinite(drop)) >= 1.0 - max_missing_fraction
            rows.append({
                "stance_side": stance, "start_s": float(start), "end_s": float(end),
                "duration_s": float(dur),
                "lean_mean_deg": float(np.nanmean(toward)), "lean_peak_deg": float(np.nanmax(toward)),
                "pelvic_drop_mean_deg": float(np.nanmean(drop)) if drop_ok else np.nan,
                "pelvic_drop_peak_deg": float(np.nanmax(drop)) if drop_ok else np.nan,
            })
    cols = ["stance_side", "start_s", "end_s", "duration_s", "lean_mean_deg",
            "lean_peak_deg", "pelvic_drop_mean_deg", "pelvic_drop_peak_deg"]
    strides = pd.DataFrame(rows, columns=cols).sort_values("start_s").reset_index(drop=True)
    return strides, drops


def side_summary(strides: pd.DataFrame, side: str) -> dict:
    """Count, mean, SD and 95 % interval of each per-phase measure of one stance side."""
    s = strides[strides["stance_side"] == side]
    out = {"n_phases": int(len(s)), "n_pelvic_drop_phases": int(s["pelvic_drop_mean_deg"].notna().sum())}
    for key, col in (("lean", "lean_mean_deg"), ("lean_peak", "lean_peak_deg"),
                     ("pelvic_drop", "pelvic_drop_mean_deg"),
                     ("pelvic_drop_peak", "pelvic_drop_peak_deg"),
                     ("single_support", "duration_s")):
        unit = "s" if key == "single_support" else "deg"
        values = s[col].to_numpy(float)
        mean, sd, ci = ci95(values[np.isfinite(values)])
        out[f"{key}_mean_{unit}"] = mean
        out[f"{key}_sd_{unit}"] = sd
        out[f"{key}_ci95_{unit}"] = ci
    return out


def cadence_steps_per_min(events: pd.DataFrame) -> float | None:
    """Steps per minute from the median interval between consecutive foot strikes."""
    t = np.sort(events.loc[events["event"] == "foot_strike", "time_s"].to_numpy(float))
    d = np.diff(t)
    d = d[(d > 0.2) & (d < 2.0)]  # consecutive strikes of a continuous walk (common practice, no source)
    return float(60.0 / np.median(d)) if d.size else None


def count_unclear_drops(dropped: list[dict] | None, side: str | None = None) -> int:
    """How many dropped phases (of ``side``, or of both) failed a quality gate rather than the clip's edges."""
    return sum(1 for d in dropped or () if (side is None or d.get("stance_side") == side)
               and not str(d.get("reason", "")).startswith(PARTIAL_PHASE))


def summarise_sides(strides: pd.DataFrame, events: pd.DataFrame, warnings: list[str], *,
                     dropped: list[dict] | None = None) -> dict:
    """Per-side statistics, cadence and left/right asymmetry of a set of phases.

    Appends to ``warnings`` what is missing (fewer than three phases on a
    side, no cadence, no asymmetry). Where a side is short of phases, the
    advice follows from ``dropped`` (the quality gates' list, each with
    ``stance_side`` and ``reason``): phases left out for unclear tracking
    call for a clearer picture, not a longer walk.

    Returns
    -------
    dict
        ``cadence_steps_per_min``, ``sides`` and ``asymmetry`` (see
        :func:`analyse_keypoints`).
    """
    sides = {side: side_summary(strides, side) for side in SIDES}
    for side in SIDES:
        n = sides[side]["n_phases"]
        if n < 3:
            unclear = count_unclear_drops(dropped, side)
            advice = (f"{unclear} more left out because the feet or body were not tracked clearly, see the dropped "
                      "phases; film closer, in even light, at 720p or more" if unclear else "film a longer walk")
            warnings.append(f"only {n} usable {side} single-support phase(s); means are unreliable and SD/CI need "
                            f"at least 2 ({advice})")
    for side in SIDES:
        n, n_drop = sides[side]["n_phases"], sides[side]["n_pelvic_drop_phases"]
        if n_drop < n:
            warnings.append(f"pelvic drop is missing in {n - n_drop} of {n} {side} single-support phase(s): the "
                            "pelvis markers were hidden or too small there (film closer, with the hands clear "
                            "of the markers)")
    cadence = cadence_steps_per_min(events)
    if cadence is None:
        warnings.append("cadence could not be computed: fewer than two consecutive foot strikes")
    asym = {}
    for key in ("lean_mean_deg", "pelvic_drop_mean_deg", "single_support_mean_s"):
        lv, rv = sides["left"][key], sides["right"][key]
        asym[f"{key}_left_minus_right"] = None if lv is None or rv is None else lv - rv
    ssl, ssr = sides["left"]["single_support_mean_s"], sides["right"]["single_support_mean_s"]
    # Symmetry index, Robinson et al. 1987, J Manipulative Physiol Ther 10:172-176 (from memory).
    asym["single_support_symmetry_index_pct"] = (
        None if ssl is None or ssr is None else 100.0 * (ssl - ssr) / (0.5 * (ssl + ssr)))
    if any(v is None for v in asym.values()):
        warnings.append("left/right asymmetry is missing where a side has no usable phase")
    return {"cadence_steps_per_min": cadence, "sides": sides, "asymmetry": asym}
