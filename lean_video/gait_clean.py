"""Keypoint cleaning for the gait stage: gate, swap repair, gap fill, low-pass.

Conventions (shared with :mod:`lean_video.gait`)
------------------------------------------------
Image coordinates are upright-image pixels, x to the right, y down. A *track*
is a dict ``{landmark_name: ndarray (n_frames, 2)}`` of ``(x_px, y_px)`` with
NaN where the landmark is not usable, together with a ``time_s`` array of
shape ``(n_frames,)`` holding the true (possibly irregular) timestamps.

Steps, in the order :func:`clean_track` applies them:

1. visibility gate: samples with ``visibility < min_visibility`` become NaN;
2. left/right swap repair by continuity (:func:`repair_swaps`);
3. short gaps (``<= max_gap_s`` of missing time) are bridged linearly, longer
   gaps stay NaN (:func:`fill_short_gaps`);
4. zero-lag Butterworth low-pass per contiguous valid segment, on a uniform
   resampling grid (:func:`lowpass_irregular`).
"""

from __future__ import annotations

import logging

import numpy as np
import pandas as pd
from scipy import interpolate, signal

from lean_video.errors import LeanVideoError

log = logging.getLogger(__name__)

#: Landmarks the gait stage uses, as (left, right) name pairs.
PAIRS = {
    "shoulder": ("left_shoulder", "right_shoulder"),
    "hip": ("left_hip", "right_hip"),
    "knee": ("left_knee", "right_knee"),
    "ankle": ("left_ankle", "right_ankle"),
    "heel": ("left_heel", "right_heel"),
    "foot_index": ("left_foot_index", "right_foot_index"),
}
#: Pairs repaired together: the model flips a whole torso or a whole leg pair.
SWAP_GROUPS = {
    "torso": ("shoulder", "hip"),
    "legs": ("knee", "ankle", "heel", "foot_index"),
}
LANDMARKS = tuple(name for pair in PAIRS.values() for name in pair)
REQUIRED_COLUMNS = ("frame", "time_s", "landmark", "x_px", "y_px", "visibility")


def keypoints_to_track(
    keypoints: pd.DataFrame, *, min_visibility: float = 0.5
) -> tuple[np.ndarray, np.ndarray, dict[str, np.ndarray]]:
    """Turn the long keypoint table into per-landmark arrays, gated by visibility.

    Parameters
    ----------
    keypoints : pandas.DataFrame
        Long table with columns ``frame, time_s, landmark, x_px, y_px,
        visibility`` (``z`` and ``presence`` are ignored).
    min_visibility : float, keyword-only
        Samples whose visibility is below this (or NaN) become NaN.

    Returns
    -------
    frame : ndarray of int, shape (n,)
    time_s : ndarray of float, shape (n,), strictly increasing
    track : dict of ndarray (n, 2)
        ``(x_px, y_px)`` per landmark in :data:`LANDMARKS`.
    """
    if not isinstance(keypoints, pd.DataFrame):
        raise LeanVideoError(f"keypoints must be a pandas DataFrame (the long keypoint table), got "
                             f"{type(keypoints).__name__}; read keypoints.csv with pandas.read_csv.")
    missing = [c for c in REQUIRED_COLUMNS if c not in keypoints.columns]
    if missing:
        raise LeanVideoError(
            f"keypoints is missing columns {missing}; pass the table written by the "
            "pose stage (frame, time_s, landmark, x_px, y_px, z, visibility, presence)."
        )
    if not 0.0 <= min_visibility <= 1.0:
        raise LeanVideoError(
            f"min_visibility must lie in [0, 1], got {min_visibility}; use e.g. 0.5."
        )
    fr = pd.to_numeric(keypoints["frame"], errors="coerce")
    if not (np.isfinite(fr).all() and (fr == np.round(fr)).all()):
        raise LeanVideoError("keypoints frame must hold whole frame numbers in every row (some are missing or not "
                             "numbers); re-run the pose stage on the clip.")
    frames = keypoints[["frame", "time_s"]].drop_duplicates("frame").sort_values("frame")
    frame = frames["frame"].to_numpy(dtype=int)
    time_s = frames["time_s"].to_numpy(dtype=float)
    if frame.size < 2 or not np.all(np.isfinite(time_s)) or np.any(np.diff(time_s) <= 0):
        raise LeanVideoError(
            "keypoints time_s must be finite and strictly increasing over at least two "
            "frames; re-run the pose stage on the clip."
        )
    sub = keypoints[keypoints["landmark"].isin(LANDMARKS)]
    index = pd.Index(frame)
    track = {}
    for name in LANDMARKS:
        rows = sub[sub["landmark"] == name].drop_duplicates("frame").set_index("frame")
        rows = rows.reindex(index)
        xy = rows[["x_px", "y_px"]].to_numpy(dtype=float, copy=True)
        vis = rows["visibility"].to_numpy(dtype=float)
        bad = ~(vis >= min_visibility) | ~np.all(np.isfinite(xy), axis=1)
        xy[bad] = np.nan
        track[name] = xy
    return frame, time_s, track


def repair_swaps(
    track: dict[str, np.ndarray], time_s: np.ndarray, *, max_gap_s: float = 0.1,
    ratio: float = 0.5, swap_cost: float = 0.1,
) -> tuple[dict[str, np.ndarray], int, int]:
    """Undo transient left/right label swaps by continuity; blank frames whose labels are unclear.

    Per swap group (torso, legs) and per run of frames without a gap longer
    than ``max_gap_s``, each frame's labels are kept or swapped so that the
    points move least from frame to frame: the labelling of the whole run
    with the smallest sum of frame-to-frame moves (mean over the group's
    points) plus ``swap_cost`` times the frame's mean left-right distance for
    every swapped frame, found exactly by dynamic programming (the Viterbi
    algorithm; Viterbi 1967, IEEE Trans. Inf. Theory 13:260; Forney 1973,
    Proc. IEEE 61:268). The cost of a swap keeps the model's own labels
    unless moving less outweighs it: undoing a flip saves about one left-right
    distance at each of its edges and costs ``swap_cost`` of it per frame, so
    with the default a flip inside a run is undone up to about twenty frames,
    one at a run's start or end (one edge) up to about ten, and fewer where
    the sides are close at its edge (measured on the synthetic walker: every
    flip of up to 14 frames inside a run, of 16-20 some; at a run's end every
    flip of up to 5 frames at 30 fps, of 8 at 60 fps). A flip over a whole
    pass is left, since which side is the client's left is decided later
    from geometry, not from labels. Where a labelling leaves a point nothing
    to be compared with in the neighbouring frame (one side out of sight),
    that step costs the run's median left-right distance, so the side still
    seen keeps its label; a run in which no frame shows both sides keeps the
    model's labels.

    A frame is then blanked for the group when its labelling is not clearly
    better than the other one: its points are not within ``ratio`` times the
    other labelling's distance of where its neighbours put them, judged again
    against the frames left standing until none is unclear (so that several
    merged frames in a row all go). There the model has merged the two sides
    (both legs drawn between the real ones, as on a frame whose fast limb is
    blurred into two). Such a frame
    used to set the predicted velocity of the sequential repair used before,
    so that the following, correct frames were swapped for 20-30 frames
    (measured on a rendered clip with two-frame motion blur: 1 of 9 phases
    found, one side's lean 5.7 deg off).

    Choices of ``swap_cost`` and ``ratio``: common practice, no source.

    Returns
    -------
    track : dict
        Repaired copy.
    n_swapped : int
        Number of (frame, group) label swaps undone.
    n_blanked : int
        Number of (frame, group) samples blanked because neither labelling fitted.
    """
    out = {k: v.copy() for k, v in track.items()}
    n_swapped = n_blanked = 0
    dt = _median_dt(time_s)
    for group in SWAP_GROUPS.values():
        L = np.stack([out[PAIRS[p][0]] for p in group], axis=1)  # (n, k, 2)
        R = np.stack([out[PAIRS[p][1]] for p in group], axis=1)
        both = np.concatenate([L, R], axis=1)  # (n, 2k, 2)
        usable = np.flatnonzero(np.isfinite(both).all(axis=2).sum(axis=1) >= 2)
        for run in _runs(usable, time_s, max_gap_s + 1e-9 + dt):
            labels = _best_labels(L[run], R[run], swap_cost=swap_cost)
            swap = run[labels == 1]
            L[swap], R[swap] = R[swap].copy(), L[swap].copy()
            n_swapped += len(swap)
            # Judged again against the frames left standing until none is unclear: the
            # middle one of several merged frames in a row has merged neighbours, which
            # make it look like them.
            # Only the neighbours of frames just blanked need judging again, which keeps this linear.
            kept, judge = run, np.arange(len(run))
            while len(judge):
                bad = _unclear(L[kept], R[kept], time_s[kept], ratio=ratio, only=judge)
                if not bad.any():
                    break
                L[kept[bad]], R[kept[bad]] = np.nan, np.nan
                n_blanked += int(bad.sum())
                near = np.zeros(len(kept), bool)
                near[np.clip(np.flatnonzero(bad)[:, None] + (-1, 1), 0, len(kept) - 1)] = True
                kept, judge = kept[~bad], np.flatnonzero(near[~bad])
        for j, part in enumerate(group):
            out[PAIRS[part][0]], out[PAIRS[part][1]] = L[:, j], R[:, j]
    if n_swapped:
        log.info("repaired %d left/right label swaps by continuity", n_swapped)
    if n_blanked:
        log.info("left out %d frame(s) of a limb group whose left and right the model merged", n_blanked)
    return out, n_swapped, n_blanked


def _runs(frames: np.ndarray, time_s: np.ndarray, max_step_s: float) -> list[np.ndarray]:
    """Split frame indices where consecutive ones lie more than ``max_step_s`` apart."""
    if len(frames) == 0:
        return []
    cut = np.flatnonzero(np.diff(time_s[frames]) > max_step_s) + 1
    return np.split(frames, cut)


def _move(a: np.ndarray, b: np.ndarray, *, none: float = 0.0) -> float:
    """Mean distance between corresponding points seen in both (k, 2) sets, ``none`` if there are none."""
    d = np.linalg.norm(a - b, axis=1)
    d = d[np.isfinite(d)]
    return float(d.mean()) if len(d) else none


def _best_labels(L: np.ndarray, R: np.ndarray, *, swap_cost: float) -> np.ndarray:
    """Keep (0) or swap (1) per frame of one run: least total move plus swap costs (Viterbi)."""
    n = len(L)
    views = (np.concatenate([L, R], axis=1), np.concatenate([R, L], axis=1))  # (n, 2k, 2) each
    sep = np.array([_move(L[i], R[i], none=np.nan) for i in range(n)])
    if not np.isfinite(sep).any():
        # no frame shows both sides, so nothing tells a swap from a movement: keep the model's labels
        return np.zeros(n, int)
    # Where only one side is seen, a labelling can put a point where the other frame has
    # nothing to compare with; that must not count as no movement (the labels would then
    # alternate from frame to frame for free), so it costs the run's typical left-right distance.
    typical = float(np.nanmedian(sep))
    sep = np.where(np.isfinite(sep), sep, typical)
    unary = np.c_[np.zeros(n), swap_cost * sep]
    total = unary[0].copy()
    back = np.zeros((n, 2), int)
    for i in range(1, n):
        step = np.array([[_move(views[a][i - 1], views[b][i], none=np.nan) for b in (0, 1)]
                         for a in (0, 1)])  # [prev, cur]
        # frames with no point in common under either labelling say nothing about the labels
        step = np.where(np.isfinite(step), step, typical if np.isfinite(step).any() else 0.0)
        cand = total[:, None] + step
        back[i] = np.argmin(cand, axis=0)
        total = cand[back[i], (0, 1)] + unary[i]
    labels = np.zeros(n, int)
    labels[-1] = int(np.argmin(total))
    for i in range(n - 1, 0, -1):
        labels[i - 1] = back[i, labels[i]]
    return labels


def _unclear(L: np.ndarray, R: np.ndarray, t: np.ndarray, *, ratio: float,
             only: np.ndarray | None = None) -> np.ndarray:
    """Frames of one (labelled) run whose labels are not clearly better than the swapped ones.

    The reference is where the neighbouring frames put the points
    (interpolated in time; the one neighbour at the ends of the run). With
    ``only``, just those frame indices are judged (the others come out False).
    """
    n = len(L)
    pts = np.concatenate([L, R], axis=1)
    flip = np.concatenate([R, L], axis=1)
    bad = np.zeros(n, bool)
    for i in (range(n) if only is None else only):
        if 0 < i < n - 1:
            w = (t[i] - t[i - 1]) / (t[i + 1] - t[i - 1])
            ref = (1 - w) * pts[i - 1] + w * pts[i + 1]
            ref = np.where(np.isfinite(ref), ref, np.where(np.isfinite(pts[i - 1]), pts[i - 1], pts[i + 1]))
        elif n > 1:
            ref = pts[1] if i == 0 else pts[n - 2]
        else:
            continue
        keep, other = _move(pts[i], ref), _move(flip[i], ref)
        bad[i] = other > 0 and keep >= ratio * other
    return bad


def _median_dt(time_s: np.ndarray) -> float:
    return float(np.median(np.diff(time_s)))


def fill_short_gaps(
    values: np.ndarray, time_s: np.ndarray, *, max_gap_s: float = 0.1
) -> np.ndarray:
    """Bridge short NaN runs by linear interpolation in time; keep long runs NaN.

    A run's missing time is ``t_after - t_before - median_dt`` (the time span
    the missing samples stand for, e.g. three lost frames at 30 fps = 0.1 s);
    runs with missing time ``<= max_gap_s`` are filled, runs touching either end
    are never extrapolated. Gap limits of about 0.1 s are common practice in
    motion capture, no source.

    Parameters
    ----------
    values : ndarray, shape (n,) or (n, d)
    time_s : ndarray, shape (n,)
    """
    if not (np.isfinite(max_gap_s) and max_gap_s >= 0):
        raise LeanVideoError(f"max_gap_s must be a number of seconds >= 0, got {max_gap_s}; use e.g. 0.1.")
    v = np.array(values, dtype=float, copy=True)
    flat = v.reshape(len(time_s), -1)
    dt = _median_dt(time_s)
    for c in range(flat.shape[1]):
        col = flat[:, c]
        good = np.isfinite(col)
        if good.sum() < 2:
            continue
        idx = np.flatnonzero(good)
        for a, b in zip(idx[:-1], idx[1:]):
            if b - a > 1 and time_s[b] - time_s[a] - dt <= max_gap_s + 1e-9:
                col[a + 1:b] = np.interp(time_s[a + 1:b], [time_s[a], time_s[b]], [col[a], col[b]])
    return flat.reshape(v.shape)


def pad_time_gaps(time_s: np.ndarray, *, max_gap_s: float = 0.1) -> tuple[np.ndarray, np.ndarray]:
    """Insert sample times where the table skips more than ``max_gap_s`` of time.

    Keypoints from another source may leave out frames without a person, and a
    phone can stall for a moment: the timestamps then jump. Everything
    downstream finds contiguous data by sample index, so the jump is made a
    run of missing samples, spaced by the median frame interval, which the
    gap rules (:func:`fill_short_gaps`) and the phase gates then treat like any
    stretch without a person.

    Parameters
    ----------
    time_s : ndarray, shape (n,)
        Strictly increasing timestamps.
    max_gap_s : float, keyword-only
        Missing time (beyond one frame interval) up to which a jump is left as it is.

    Returns
    -------
    time_s : ndarray, shape (m,)
        The timestamps with the inserted ones, m >= n.
    real : ndarray of bool, shape (m,)
        True at the original samples.
    """
    dt = _median_dt(time_s)
    missing = np.diff(time_s) - dt
    jumps = np.flatnonzero(missing > max_gap_s + 1e-9)
    if not jumps.size:
        return np.asarray(time_s, float), np.ones(len(time_s), bool)
    parts, real = [], []
    start = 0
    for j in jumps:
        parts.append(time_s[start:j + 1])
        real.append(np.ones(j + 1 - start, bool))
        k = int(round((time_s[j + 1] - time_s[j]) / dt)) - 1
        fill = np.linspace(time_s[j], time_s[j + 1], k + 2)[1:-1]
        parts.append(fill)
        real.append(np.zeros(len(fill), bool))
        start = j + 1
    parts.append(time_s[start:])
    real.append(np.ones(len(time_s) - start, bool))
    return np.concatenate(parts), np.concatenate(real)


def finite_segments(mask: np.ndarray) -> list[tuple[int, int]]:
    """Return ``[(start, stop), ...]`` index ranges of contiguous True runs."""
    m = np.concatenate([[False], np.asarray(mask, bool), [False]])
    d = np.diff(m.astype(int))
    return list(zip(np.flatnonzero(d == 1), np.flatnonzero(d == -1)))


def butter_sos(cutoff_hz: float, fs_hz: float, *, order: int = 2) -> np.ndarray:
    """Low-pass Butterworth second-order sections for one filter pass.

    Run forward and backward (:func:`scipy.signal.sosfiltfilt`) this gives zero
    phase lag, an effective order of ``2 * order`` and a gain of exactly
    ``|H(cutoff)|**2 = 0.5`` (-6.02 dB) at ``cutoff_hz``. Winter (2009),
    Biomechanics and Motor Control of Human Movement, 4th ed., ch. 3 (data
    smoothing, from memory): second-order Butterworth run twice, cut-off chosen
    by residual analysis, about 6 Hz for walking kinematics.
    """
    nyq = fs_hz / 2.0
    if not 0 < cutoff_hz < nyq:
        raise LeanVideoError(
            f"cutoff_hz must lie between 0 and half the frame rate ({nyq:.1f} Hz), got "
            f"{cutoff_hz}; use e.g. 6 Hz."
        )
    return signal.butter(order, cutoff_hz, btype="low", fs=fs_hz, output="sos")


def lowpass_irregular(
    values: np.ndarray, time_s: np.ndarray, *, cutoff_hz: float = 6.0, order: int = 2
) -> np.ndarray:
    """Zero-lag Butterworth low-pass of a possibly irregularly sampled signal.

    Each contiguous finite segment is filtered on its own: it is resampled by
    cubic-spline interpolation onto a uniform grid with the segment's median frame
    interval, filtered with :func:`scipy.signal.sosfiltfilt`, and interpolated
    back to the original timestamps. NaN samples stay NaN. Segments too short
    for the filter's padding (fewer than 6 samples) are left unfiltered. If
    the cut-off is not below the segment's Nyquist frequency the segment is
    left unfiltered too (logged).

    Parameters
    ----------
    values : ndarray, shape (n,) or (n, d)
    time_s : ndarray, shape (n,)
    cutoff_hz : float, keyword-only
        Design cut-off of each pass (see :func:`butter_sos`).
    """
    v = np.array(values, dtype=float, copy=True)
    flat = v.reshape(len(time_s), -1)
    for c in range(flat.shape[1]):
        col = flat[:, c]
        for a, b in finite_segments(np.isfinite(col)):
            if b - a < 6:
                continue
            t = time_s[a:b]
            dt = float(np.median(np.diff(t)))
            n_grid = int(round((t[-1] - t[0]) / dt)) + 1
            grid = t[0] + dt * np.arange(n_grid)
            grid[-1] = min(grid[-1], t[-1])
            fs = 1.0 / dt
            if cutoff_hz >= fs / 2:
                log.warning("cutoff %.1f Hz not below Nyquist %.1f Hz; segment left unfiltered", cutoff_hz, fs / 2)
                continue
            sos = butter_sos(cutoff_hz, fs, order=order)
            # cubic, not linear: linear interpolation attenuates the pass band
            # (e.g. about 10 % at 4 Hz across a dropped frame at 30 fps)
            g = interpolate.CubicSpline(t, col[a:b])(grid)
            padlen = min(3 * (2 * len(sos) + 1), n_grid - 1)
            gf = signal.sosfiltfilt(sos, g, padlen=padlen)
            col[a:b] = interpolate.CubicSpline(grid, gf)(t)
    return flat.reshape(v.shape)


def clean_track(
    track: dict[str, np.ndarray], time_s: np.ndarray, *, max_gap_s: float = 0.1,
    cutoff_hz: float = 6.0,
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray], int, int]:
    """Swap repair, short-gap fill, then low-pass every landmark.

    Returns
    -------
    filtered : dict of ndarray (n, 2)
        Low-passed positions (for angles and contacts).
    filled : dict of ndarray (n, 2)
        Swap-repaired, gap-filled but unfiltered positions.
    n_swapped, n_blanked : int
        See :func:`repair_swaps`.
    """
    repaired, n_swapped, n_blanked = repair_swaps(track, time_s, max_gap_s=max_gap_s)
    filled = {k: fill_short_gaps(v, time_s, max_gap_s=max_gap_s) for k, v in repaired.items()}
    return lowpass_track(filled, time_s, cutoff_hz=cutoff_hz), filled, n_swapped, n_blanked


def lowpass_track(filled: dict[str, np.ndarray], time_s: np.ndarray, *, cutoff_hz: float) -> dict[str, np.ndarray]:
    """Every landmark of a repaired, gap-filled track low-passed (:func:`lowpass_irregular`)."""
    return {k: lowpass_irregular(v, time_s, cutoff_hz=cutoff_hz) for k, v in filled.items()}
