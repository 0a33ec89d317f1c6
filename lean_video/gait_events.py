"""Walking direction, client sides, foot contacts, gait events, single support.

Conventions as in :mod:`lean_video.gait_clean` (image pixels, x right, y down;
tracks are dicts of ``(n, 2)`` arrays, NaN where missing; ``time_s`` shape
``(n,)``). Sides here are always the *client's own* sides after
:func:`assign_client_sides`.

Foot contact and events
-----------------------
With a still camera a foot in contact with the floor does not move in the
image. Three stages:

1. *Detection* (velocity-threshold method; Ghoussayni et al. 2004, Gait &
   Posture 20:266-272, heel/toe velocity thresholds; O'Connor et al. 2007,
   Gait & Posture 25:469-474, foot-velocity event detection; both from
   memory): the image speed of the foot (by default the mean of heel, ankle
   and foot-index, less noisy than any one point) is compared with fractions
   of its local swing speed (running maximum over about one stride), with
   hysteresis and minimum durations. Speeds are made comparable over the walk
   by the body height in pixels ``B``: movement along the line of sight scales
   with ``1/distance**2`` in the image while ``B`` scales with ``1/distance``,
   so the speed is divided by ``B**2 / B_ref`` (``B_ref`` the clip's median
   ``B``); the local, per-step threshold absorbs what remains.
2. *Timing* (:func:`refine_event_times`): positions, not speeds. Each foot
   point's footprint is where it rests during the detected contact; foot
   strike is the earliest arrival of any point at its footprint (the heel, as
   a rule), foot off the latest departure (the toe), interpolated between
   frames.

3. *Frontal-view correction* (:mod:`lean_video.gait_frontal`): walking toward
   the camera the swing toe's lift (image up) and approach (image down)
   cancel for a few frames after foot off, so the footprint departure is
   late (about +60 ms on the rendered clips); walking away the landing
   heel's descent and recession cancel before foot strike (about -90 ms).
   These two events are re-timed from turning points of the foot's image
   motion. Fully seen contacts much shorter than the foot's typical stance
   (a swing foot pausing in the image) are dropped first
   (``drop_short_contacts``). Remaining (measured): on pose-model
   keypoints walking toward the camera foot strike is found late (median
   +34..+109 ms per clip on the rendered clips walking toward it): the
   model's heel, hidden behind the foot in a front view, settles only when
   the toes land; ``bound_by_double_support`` then limits it.
"""

from __future__ import annotations

import logging

import numpy as np
from scipy import ndimage, stats

from lean_video.errors import LeanVideoError
from lean_video.gait_clean import PAIRS, SWAP_GROUPS, finite_segments, lowpass_irregular

log = logging.getLogger(__name__)

FOOT_POINTS = ("heel", "ankle", "foot_index")


def _mid(track, part):
    left, right = PAIRS[part]
    return (track[left] + track[right]) / 2.0


def body_height_px(track: dict[str, np.ndarray]) -> np.ndarray:
    """Pixel distance from the shoulder midpoint to the midpoint of both feet, shape (n,)."""
    heel, ankle = _mid(track, "heel"), _mid(track, "ankle")
    feet = np.where(np.isfinite(heel), heel, ankle)
    feet = np.where(np.isfinite(heel) & np.isfinite(ankle), (heel + ankle) / 2, feet)
    return np.linalg.norm(_mid(track, "shoulder") - feet, axis=1)


def smooth_body_height(height_px: np.ndarray, time_s: np.ndarray) -> np.ndarray:
    """Body height with the step-by-step bounce removed (0.5 Hz low-pass, common practice, no source)."""
    return lowpass_irregular(height_px, time_s, cutoff_hz=0.5)


def walking_direction(
    track: dict[str, np.ndarray], time_s: np.ndarray
) -> tuple[str, float, list[str]]:
    """Decide ``"toward"`` or ``"away"`` from the trend of apparent body size.

    Apparent height grows as the client approaches a pinhole camera. The
    Theil-Sen slope (robust to outlier frames) of ``log(B)`` over time gives
    the sign. If the size changes by less than 5 % over the clip the trend is
    not trusted and the model's labels decide (left shoulder/hip on the image
    right means the front is seen, i.e. walking toward); a warning says so.

    Returns
    -------
    direction : str
    log_size_slope_per_s : float
    warnings : list of str
    """
    b = body_height_px(track)
    ok = np.isfinite(b) & (b > 0)
    warnings: list[str] = []
    if ok.sum() < 3:
        return "toward", float("nan"), ["too few frames with shoulders and feet to judge the walking direction; assumed toward the camera"]
    slope, _, _, _ = stats.theilslopes(np.log(b[ok]), time_s[ok])
    change = abs(slope) * (time_s[ok][-1] - time_s[ok][0])
    if change >= 0.05:
        return ("toward" if slope > 0 else "away"), float(slope), warnings
    orient = _orientation(track, "torso", np.ones(len(time_s), bool))
    direction = "toward" if orient >= 0 else "away"
    warnings.append(
        f"apparent body size changed by only {100 * change:.1f} % over the clip, so the walking "
        f"direction ({direction}) was taken from the pose model's side labels; film a walk toward the camera over 5 m or more"
    )
    return direction, float(slope), warnings


def _orientation(track, group, mask) -> float:
    """Median sign of x(left label) - x(right label) over a group's points."""
    signs = []
    for part in SWAP_GROUPS[group]:
        left, right = PAIRS[part]
        dx = track[left][mask, 0] - track[right][mask, 0]
        signs.append(np.sign(dx[np.isfinite(dx)]))
    s = np.concatenate(signs) if signs else np.array([])
    return float(np.median(s)) if s.size else 0.0


def assign_client_sides(
    tracks: list[dict[str, np.ndarray]], direction: str
) -> tuple[list[dict[str, np.ndarray]], int]:
    """Relabel left/right so they are the client's own sides, from geometry.

    Facing the camera (walking toward it) the client's right side appears on
    the image left; seen from behind (walking away) it appears on the image
    right. The pose model's labels are not trusted for this (they are known
    to flip for back views): per contiguous stretch of tracked hips, each swap
    group (torso, legs) whose median left-minus-right image x has the wrong
    sign for the direction is relabelled.

    Parameters
    ----------
    tracks : list of dict
        Tracks with identical frames (e.g. filtered and unfiltered); all are
        relabelled the same way, decided on the first.

    Returns
    -------
    tracks : list of dict
    n_relabelled : int
        Number of (stretch, group) relabellings.
    """
    want = 1.0 if direction == "toward" else -1.0
    ref = tracks[0]
    out = [{k: v.copy() for k, v in t.items()} for t in tracks]
    hips_ok = np.all(np.isfinite(ref["left_hip"]) & np.isfinite(ref["right_hip"]), axis=1)
    n_relabelled = 0
    for a, b in finite_segments(hips_ok):
        mask = np.zeros(len(hips_ok), bool)
        mask[a:b] = True
        for group, parts in SWAP_GROUPS.items():
            if _orientation(ref, group, mask) * want < 0:
                n_relabelled += 1
                for t in out:
                    for part in parts:
                        left, right = PAIRS[part]
                        t[left][a:b], t[right][a:b] = t[right][a:b].copy(), t[left][a:b].copy()
    if n_relabelled:
        log.info("relabelled %d stretches to the client's own sides", n_relabelled)
    return out, n_relabelled


def foot_speeds(
    track: dict[str, np.ndarray], time_s: np.ndarray, side: str, scale_px: np.ndarray
) -> dict[str, np.ndarray]:
    """Distance-normalised image speed of each foot point, each of shape (n,).

    ``|d(x, y)/dt| * B_ref / B**2`` in reference body heights per second (see
    module docstring) for heel, ankle, foot_index, and of their mean velocity over the points
    seen in each frame ("centroid", less noisy); NaN where untracked.
    """
    # no frame with both shoulders and feet: no speeds (and no numpy warning)
    b_ref = float(np.nanmedian(scale_px)) if np.isfinite(scale_px).any() else np.nan
    out = {}
    vel = []
    for part in FOOT_POINTS:
        p = track[PAIRS[part][0 if side == "left" else 1]]
        v = np.stack([np.gradient(p[:, k], time_s) for k in range(2)], axis=1)
        vel.append(v)
        out[part] = np.linalg.norm(v, axis=1) * b_ref / scale_px**2
    # mean velocity of the points seen in each frame: a point dropping out
    # (the heel is often hidden facing the camera) causes no jump
    vel = np.stack(vel)
    seen = np.isfinite(vel[..., 0])
    mean_v = np.full(vel.shape[1:], np.nan)
    any_seen = seen.any(axis=0)
    mean_v[any_seen] = (np.where(seen[..., None], vel, 0.0).sum(axis=0)[any_seen]
                        / seen.sum(axis=0)[any_seen][:, None])
    out["centroid"] = np.linalg.norm(mean_v, axis=1) * b_ref / scale_px**2
    return out


def _crossing_time(t, s, i, thr):
    """Interpolated time where s crosses thr between samples i-1 and i."""
    s0, s1 = s[i - 1], s[i]
    if s1 == s0 or not np.isfinite(thr):
        return float(t[i])
    f = np.clip((thr - s0) / (s1 - s0), 0.0, 1.0)
    return float(t[i - 1] + f * (t[i] - t[i - 1]))


def _hysteresis(s, thr_on, thr_off):
    state = s[0] < (thr_on[0] + thr_off[0]) / 2
    st = np.zeros(len(s), bool)
    for i in range(len(s)):
        if state and s[i] > thr_off[i]:
            state = False
        elif not state and s[i] < thr_on[i]:
            state = True
        st[i] = state
    return st


def _drop_short(st, time_s, value, min_s):
    """Flip interior runs of ``value`` shorter than ``min_s`` (in place)."""
    dt = float(np.median(np.diff(time_s))) if len(time_s) > 1 else 0.0
    for c0, c1 in finite_segments(st == value):
        # A run must last longer than min_s to stay. The tolerance keeps a run of
        # exactly min_s (three frames of 0.1 s at 30 fps) from being kept or not
        # depending on where the clock started (float rounding).
        if 0 < c0 and c1 < len(st) and time_s[c1 - 1] - time_s[c0] + dt < min_s + 1e-6:
            st[c0:c1] = not value


def detect_contacts(
    speeds: dict[str, np.ndarray], time_s: np.ndarray, *, on_fraction: float = 0.2,
    off_fraction: float = 0.3, window_s: float = 1.2, min_contact_s: float = 0.15,
    min_swing_s: float = 0.15, min_point_contact_s: float = 0.1, min_flat_s: float = 0.1,
    min_peak_fraction: float = 0.25,
) -> tuple[np.ndarray, list[tuple[float, float, int, int, bool, bool]]]:
    """Foot contact intervals from normalised foot speeds, with hysteresis.

    ``speeds`` holds one or more foot points (see :func:`foot_speeds`); with
    one (the default "centroid") the rules below reduce to plain hysteresis.
    Each point is in contact while still: it
    enters when its speed falls below ``on_fraction`` of the foot's local swing
    speed (running maximum over ``window_s`` of the fastest point) and leaves
    when it rises above ``off_fraction`` of it. Point contacts shorter than
    ``min_point_contact_s`` are discarded: in a frontal view a swinging point
    can pause in the image for a frame or two when its lift (image up) and its
    approach (image down) cancel. A contact must also hold at least
    ``min_flat_s`` with every point still (foot flat), which a single point
    pausing in mid-swing does not. The foot is in contact while any point is;
    contacts shorter than ``min_contact_s`` and swings shorter than
    ``min_swing_s`` are merged away (common practice, no source). Foot strike
    is the earliest point's interpolated crossing, foot off the latest.

    The local swing speed is kept at least ``min_peak_fraction`` of the
    clip's typical one (the upper quartile of the running maximum): with no
    swing within ``window_s`` (a client standing still before setting off)
    the thresholds would otherwise fall to the noise of a still foot, and a
    foot at rest would be read as moving. On a rendered walker standing
    1.5 s before walking, the pose model's feet moved at up to 0.06 of the
    typical swing speed (95th percentile) while standing, and the local
    swing speed of a far foot walking away fell to 0.22-0.36 of it; 0.25
    lies between (engineering choice, no source).

    Returns
    -------
    contact : ndarray of bool, shape (n,)
    intervals : list of (strike_s, off_s, i_start, i_stop, strike_seen, off_seen)
        ``*_seen`` is False where the interval touches the edge of the tracked
        stretch, i.e. the event itself was not observed.
    """
    n = len(time_s)
    dt = float(np.median(np.diff(time_s)))
    win = max(3, int(round(window_s / dt)) | 1)
    stack = np.stack(list(speeds.values()))
    tracked = np.all(np.isfinite(stack), axis=0)
    peak = np.stack([ndimage.maximum_filter1d(np.where(tracked, s, 0.0), size=win, mode="nearest")
                     for s in stack])
    if min_peak_fraction > 0 and tracked.any():
        # While the client stands still no swing sets the local scale, and the
        # thresholds would sink to the footprint's own noise (a still foot read
        # as moving); so the scale is kept at least a fraction of the clip's
        # typical swing speed (its upper quartile of the running maximum).
        typical = np.percentile(peak[:, tracked], 75, axis=1)
        peak = np.maximum(peak, min_peak_fraction * typical[:, None])
    thr_on, thr_off = on_fraction * peak, off_fraction * peak
    contact = np.zeros(n, bool)
    intervals = []
    for a, b in finite_segments(tracked):
        tt = time_s[a:b]
        point_runs = []  # (start_s, end_s, i0, i1) per point contact, segment-relative
        union = np.zeros(b - a, bool)
        flat = np.ones(b - a, bool)
        for s, on, off in zip(stack[:, a:b], thr_on[:, a:b], thr_off[:, a:b]):
            st = _hysteresis(s, on, off)
            _drop_short(st, tt, True, min_point_contact_s)
            union |= st
            flat &= st
            for c0, c1 in finite_segments(st):
                t0 = _crossing_time(tt, s, c0, on[c0 - 1]) if c0 > 0 else float(tt[0])
                t1 = _crossing_time(tt, s, c1, off[c1 - 1]) if c1 < len(st) else float(tt[-1])
                point_runs.append((t0, t1, c0, c1))
        # a stance holds a stretch where every foot point is still (foot flat);
        # a lone point pausing in mid-swing does not
        anchored = np.zeros(b - a, bool)
        for f0, f1 in finite_segments(flat):
            if tt[f1 - 1] - tt[f0] + dt >= min_flat_s - 1e-6:  # at least min_flat_s (tolerance as in _drop_short)
                for u0, u1 in finite_segments(union):
                    if u0 <= f0 < u1:
                        anchored[u0:u1] = True
        union = anchored
        _drop_short(union, tt, False, min_swing_s)
        _drop_short(union, tt, True, min_contact_s)
        contact[a:b] = union
        for c0, c1 in finite_segments(union):
            inside = [r for r in point_runs if r[2] < c1 and r[3] > c0]
            strike_seen, off_seen = c0 > 0, c1 < len(union)
            t_strike = min((r[0] for r in inside), default=float(tt[c0]))
            t_off = max((r[1] for r in inside), default=float(tt[c1 - 1]))
            intervals.append((t_strike, t_off, a + c0, a + c1, strike_seen, off_seen))
    return contact, intervals


def _extrapolate_edge(time_s, d, i, step, t_cross, level):
    """Extend the edge of d (in tolerance units) from sample i onward back to ``level``."""
    if level is None:
        return float(t_cross)
    idx = [i]
    j = i + step
    while 0 <= j < len(d) and len(idx) < 4 and np.isfinite(d[j]) and d[j] <= 4.0:
        idx.append(j)
        j += step
    if len(idx) < 2:
        return float(t_cross)
    slope, icpt = np.polyfit(time_s[idx], d[idx], 1)
    if slope * step <= 0:
        return float(t_cross)
    t_level = (level - icpt) / slope
    dt = abs(time_s[i] - time_s[i - step]) if 0 <= i - step < len(d) else 0.0
    # never move by more than one frame interval, and only toward the still side
    return float(np.clip(t_level, t_cross - dt, t_cross) if step > 0 else np.clip(t_level, t_cross, t_cross + dt))


def _rest_points(track, time_s, side, intervals):
    """Per contact interval and foot point: (interval index, name, seen, p, step, still).

    ``seen`` are the frames with the point tracked, ``p`` its positions there,
    ``step`` its image speed between consecutive tracked frames (moves divided
    by their time, so a frame dropped by the phone or lost by the tracker
    does not make a move look twice as large) and ``still`` the third of the
    samples with the smallest speeds (the point at rest).
    """
    names = [PAIRS[p][0 if side == "left" else 1] for p in FOOT_POINTS]
    for k_iv, (t_s, t_o, i0, i1, s_seen, o_seen) in enumerate(intervals):
        for name in names:
            seen = i0 + np.flatnonzero(np.all(np.isfinite(track[name][i0:i1]), axis=1))
            if len(seen) < 4:
                continue
            p = track[name][seen]
            step = np.linalg.norm(np.diff(p, axis=0), axis=1) / np.diff(time_s[seen])
            still = np.sort(np.argsort(step)[: max(2, len(step) // 3)])
            yield k_iv, name, seen, p, step, still


def _robust_sd(residuals: list) -> float:
    """1.4826 x median of the pooled distances (MAD-scaled; Hampel 1974, from memory), 0 if none."""
    return float(1.4826 * np.median(np.concatenate(residuals))) if residuals else 0.0


def rest_noise(
    track: dict[str, np.ndarray], time_s: np.ndarray, side: str, scale_px: np.ndarray, intervals: list,
) -> tuple[float, float]:
    """At-rest spread of one foot's points, in body heights: about their median, and about a line in time.

    The first is the noise level :func:`refine_event_times` sets its
    footprint tolerance from; it includes the slow drift of a point while the
    foot rolls over. The second is taken about a straight line fitted in time
    to the same at-rest samples, so the drift is removed and only the
    frame-to-frame jitter is left: comparing it between the feet tells a truly
    noisier foot from one that drifts (see :mod:`lean_video.gait`).

    Returns
    -------
    spread, jitter : float
    """
    about_median, about_line = [], []
    for _, _, seen, p, _, still in _rest_points(track, time_s, side, intervals):
        scale = scale_px[seen[still]]
        about_median.append(np.linalg.norm(p[still] - np.median(p[still], axis=0), axis=1) / scale)
        if len(still) >= 4:
            ts = time_s[seen[still]]
            design = np.c_[np.ones_like(ts), ts - ts.mean()]
            coef, *_ = np.linalg.lstsq(design, p[still], rcond=None)
            about_line.append(np.linalg.norm(p[still] - design @ coef, axis=1) / scale)
        else:
            about_line.append(about_median[-1])
    return _robust_sd(about_median), _robust_sd(about_line)


def refine_event_times(
    track: dict[str, np.ndarray], time_s: np.ndarray, side: str, scale_px: np.ndarray,
    intervals: list, *, noise_k: float = 3.0, floor_fraction: float = 0.01,
    extrapolate_to: float | None = 0.0, sigma_rel: float | None = None,
) -> tuple[list, float]:
    """Time foot strike and foot off by when foot points reach and leave their footprint.

    Speed thresholds find *that* a foot is in contact; the moment is taken
    from positions, which need no differentiation: per contact interval and
    foot point, the footprint is the point's median image position over the
    frames where it is closest to rest, and the point is "at the footprint"
    while its distance from it is below a tolerance ``tau = max(noise_k *
    sigma, floor_fraction) * B`` (``sigma`` the robust spread of the at-rest
    distances over the whole walk, in units of body height ``B``). Foot strike
    is the earliest interpolated arrival of any point (usually the heel), foot
    off the latest departure (usually the toe), in the spirit of marker
    position/velocity event methods (Ghoussayni et al. 2004; Zeni et al. 2008,
    Gait & Posture 27:710-714; from memory). Common practice for the
    tolerance, no source. The tolerance delays departures (and advances
    arrivals) while the point starts to move slowly, so the time is taken by
    extending the straight line through the first frames outside the
    tolerance (up to 4 tolerances) back to ``extrapolate_to`` tolerances
    (``None``: plain crossing), at most one frame interval (common practice,
    no source).

    ``sigma_rel`` (body heights), when given, replaces the estimated at-rest
    noise, e.g. one level shared by both feet (see :mod:`lean_video.gait`
    and :func:`rest_noise`).

    Returns
    -------
    intervals : list
        Same layout as :func:`detect_contacts`, with refined times where seen.
    sigma_rel : float
        Estimated at-rest noise of this foot, in body heights (the estimate,
        not an override).
    """
    rel_res = []
    prints = [{} for _ in intervals]
    for k_iv, name, seen, p, step, still in _rest_points(track, time_s, side, intervals):
        # separate footprints for arrival and departure: marker-like points
        # drift slowly while the foot rolls over, which is not a foot off
        half = len(step) // 2
        k = max(2, len(step) // 6)
        early = np.sort(np.argsort(step[:half])[:k]) if half >= 2 else still[:1]
        late = half + np.sort(np.argsort(step[half:])[:k]) if len(step) - half >= 2 else still[-1:]
        feet = (np.median(p[early], axis=0), np.median(p[late], axis=0))
        prints[k_iv][name] = (feet, int(seen[early[-1]]), int(seen[late[0]]))
        rel_res.append(np.linalg.norm(p[still] - np.median(p[still], axis=0), axis=1)
                       / scale_px[seen[still]])
    sigma = _robust_sd(rel_res)
    if sigma_rel is not None and not (np.isfinite(sigma_rel) and sigma_rel >= 0):
        raise LeanVideoError(f"sigma_rel must be a non-negative number of body heights, got {sigma_rel!r}; "
                             "pass the at-rest noise this function returns, or None.")
    tol_rel = max(noise_k * (sigma if sigma_rel is None else float(sigma_rel)), floor_fraction)
    out = []
    n = len(time_s)
    for (t_s, t_o, i0, i1, s_seen, o_seen), per_point in zip(intervals, prints):
        arrivals, departures = [], []
        for name, ((foot_a, foot_d), core_a, core_d) in per_point.items():
            d = np.linalg.norm(track[name] - foot_a, axis=1) / (tol_rel * scale_px)
            a = core_a
            if d[a] <= 1:
                while a > 0 and d[a - 1] <= 1:
                    a -= 1
                if a > 0 and not np.isfinite(d[a - 1]):
                    pass  # point lost before it arrived: it cannot time the strike
                elif a > 0:
                    f = (d[a - 1] - 1) / (d[a - 1] - d[a]) if d[a - 1] != d[a] else 1.0
                    t_cross = time_s[a - 1] + np.clip(f, 0, 1) * (time_s[a] - time_s[a - 1])
                    arrivals.append((_extrapolate_edge(time_s, d, a - 1, -1, t_cross, extrapolate_to), name))
                else:  # this point was already resting when tracking began
                    s_seen = False
            d = np.linalg.norm(track[name] - foot_d, axis=1) / (tol_rel * scale_px)
            b = core_d
            if d[b] <= 1:
                while b < n - 1 and d[b + 1] <= 1:
                    b += 1
                if b < n - 1 and not np.isfinite(d[b + 1]):
                    pass  # point lost after it left: it cannot time the foot off
                elif b < n - 1:
                    f = (1 - d[b]) / (d[b + 1] - d[b]) if d[b + 1] != d[b] else 0.0
                    t_cross = time_s[b] + np.clip(f, 0, 1) * (time_s[b + 1] - time_s[b])
                    departures.append((_extrapolate_edge(time_s, d, b + 1, 1, t_cross, extrapolate_to), name))
                else:  # still resting when tracking ended: the foot off is not seen
                    o_seen = False
        if s_seen and arrivals:
            t_s = min(arrivals)[0]
        if o_seen and departures:
            t_o = max(departures)[0]
        out.append((float(t_s), float(t_o), i0, i1, s_seen, o_seen))
    return merge_overlapping(out), sigma


def merge_overlapping(intervals: list) -> list:
    """Join a foot's successive contacts where one begins before the previous one ends.

    A foot cannot land again before it has left: when the position-based
    timing puts a contact's strike at or before the previous contact's foot
    off, the two are one contact that a brief speed spike split (seen on a
    far foot walking away), so they become one, from the first strike to the
    last foot off. Intervals in the layout of :func:`detect_contacts`, in
    time order.
    """
    out = []
    for iv in intervals:
        if out and iv[0] <= out[-1][1]:
            prev = out[-1]
            out[-1] = (prev[0], max(prev[1], iv[1]), prev[2], iv[3], prev[4],
                       iv[5] if iv[1] >= prev[1] else prev[5])
        else:
            out.append(iv)
    return out
