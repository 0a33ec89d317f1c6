"""Frontal-view correction of foot events: the event a camera in front hides.

Walking toward the camera, the swing toe's lift (image up) and its approach
(image down) cancel for a few frames after foot off, so the departure from the
footprint is found late (about +60 ms on the rendered clips); walking away,
the landing heel's descent and recession cancel before foot strike (about
-90 ms). These two events are re-timed from turning points of the foot's image
motion (:func:`foot_centre_events`): foot off at the peak upward speed of the
toe (foot-velocity algorithm, O'Connor et al. 2007, Gait & Posture
25:469-474), foot strike where the heel is halfway down from its highest image
point (after Zeni et al. 2008, Gait & Posture 27:710-714); both bounded by the
other foot's events (double support; Perry & Burnfield 2010). Fully seen
contacts much shorter than the foot's typical stance (a swing foot pausing in
the image) are dropped first (:func:`drop_short_contacts`). Walking toward the
camera the pose model's foot strike is late whatever the point; it is kept at
least a minimum double support before the other foot's foot off
(:func:`bound_by_double_support`; walking away, the early foot off likewise).

Conventions as in :mod:`lean_video.gait_events`.
"""

from __future__ import annotations

import numpy as np
from scipy.signal import find_peaks

from lean_video.errors import LeanVideoError
from lean_video.gait_clean import PAIRS


def _peak_time(t, s, i):
    """Sub-frame time of the local maximum of s at sample i (parabola through i-1, i, i+1)."""
    if i <= 0 or i >= len(s) - 1 or not np.all(np.isfinite(s[i - 1:i + 2])):
        return float(t[i])
    den = s[i - 1] - 2 * s[i] + s[i + 1]
    f = 0.0 if den >= 0 else float(np.clip(0.5 * (s[i - 1] - s[i + 1]) / den, -0.5, 0.5))
    return float(t[i] + f * (t[i + 1] - t[i] if f > 0 else t[i] - t[i - 1]))


def _velocity_peak(time_s, velocity, lo, hi, *, local=False):
    """Sub-frame time of the largest positive ``velocity`` strictly inside ``[lo, hi]``, or None.

    With ``local``, the largest positive local maximum inside the window
    (:func:`scipy.signal.find_peaks`), even where the window's edge is higher.
    """
    sel = np.flatnonzero((time_s >= lo) & (time_s <= hi))
    sel = sel[np.isfinite(velocity[sel])]
    if len(sel) < 3:
        return None
    if local:
        v = velocity[sel]
        peaks, _ = find_peaks(v)
        peaks = peaks[v[peaks] > 0]
        if not len(peaks):
            return None
        return _peak_time(time_s, velocity, sel[peaks[np.argmax(v[peaks])]])
    j = sel[np.argmax(velocity[sel])]
    if sel[0] < j < sel[-1] and velocity[j] > 0:
        return _peak_time(time_s, velocity, j)
    return None


def _rising_crossing(time_s, velocity, t_peak, fraction):
    """Sub-frame time ``velocity`` last rose through ``fraction`` of its value at ``t_peak``.

    Walks back from the sample nearest ``t_peak`` while the velocity stays
    above that level and interpolates linearly between the two samples around
    the crossing; ``t_peak`` itself when no sample before it lies below.
    """
    j = int(np.argmin(np.abs(time_s - t_peak)))
    level = fraction * velocity[j]
    m = j
    while m > 0 and np.isfinite(velocity[m - 1]) and velocity[m - 1] > level:
        m -= 1
    if m == 0 or not np.isfinite(velocity[m - 1]):
        return t_peak
    f = (velocity[m] - level) / (velocity[m] - velocity[m - 1])
    return min(t_peak, float(time_s[m] - f * (time_s[m] - time_s[m - 1])))


def _heel_settled(time_s, heel_up, j, settle_s=0.1, rest_s=0.3):
    """Time the heel is halfway down from its highest image point (sample j) to its footprint.

    The footprint height is the median over ``(t_j + settle_s, t_j + rest_s)``;
    the crossing is searched within ``settle_s`` after ``t_j`` and linearly
    interpolated. Without a clear descent the turning point itself is returned.
    """
    t_turn = _peak_time(time_s, heel_up, j)
    rest = (time_s > t_turn + settle_s) & (time_s < t_turn + rest_s) & np.isfinite(heel_up)
    if rest.sum() < 3:
        return t_turn
    level = (heel_up[j] + np.median(heel_up[rest])) / 2
    m = j
    while m + 1 < len(time_s) and heel_up[m + 1] > level and time_s[m + 1] < t_turn + settle_s:
        m += 1
    if m + 1 < len(time_s) and heel_up[m + 1] <= level < heel_up[m]:
        f = (heel_up[m] - level) / (heel_up[m] - heel_up[m + 1])
        return max(t_turn, float(time_s[m] + f * (time_s[m + 1] - time_s[m])))
    return t_turn


def _heel_arrival(time_s, heel_up, lo, hi, rest_s=0.2, min_tol_px=0.5):
    """When the heel comes to rest at its footprint within ``(lo, hi)``, or None.

    The footprint height is the median over ``(hi, hi + rest_s)``, when the
    foot is surely down; the arrival is the crossing after the last sample in
    the window further from it than three robust SDs of the rest (at least
    ``min_tol_px``), linearly interpolated. For a heel that comes down the
    image to land, with no turning point to time it (common practice, no
    source).
    """
    rest = (time_s > hi) & (time_s <= hi + rest_s) & np.isfinite(heel_up)
    sel = np.flatnonzero((time_s >= lo) & (time_s <= hi) & np.isfinite(heel_up))
    if rest.sum() < 3 or len(sel) < 2:
        return None
    level = float(np.median(heel_up[rest]))
    tol = max(min_tol_px, 3.0 * 1.4826 * float(np.median(np.abs(heel_up[rest] - level))))
    away = np.abs(heel_up[sel] - level) > tol
    if not away.any() or away[-1]:
        return None
    k = sel[np.flatnonzero(away)[-1]]
    d0, d1 = abs(heel_up[k] - level) - tol, abs(heel_up[k + 1] - level) - tol
    f = d0 / (d0 - d1) if d0 != d1 else 1.0
    return float(time_s[k] + f * (time_s[k + 1] - time_s[k]))


def _heel_rise(time_s, heel_up, scale, t_s, t_o):
    """How far the heel has risen above its footprint at foot off, in body heights.

    The footprint is the heel's median image height over the first half of the
    contact, while the heel is down (heel rise begins in terminal stance, after
    mid-stance; Perry & Burnfield 2010, ch. 1, from memory). NaN counts as no rise.
    """
    rest = (time_s >= t_s) & (time_s <= t_s + 0.5 * (t_o - t_s)) & np.isfinite(heel_up)
    j = int(np.argmin(np.abs(time_s - t_o)))
    if rest.sum() < 2 or not np.isfinite(heel_up[j]) or not np.isfinite(scale[j]) or scale[j] <= 0:
        return 0.0
    return float((heel_up[j] - np.median(heel_up[rest])) / scale[j])


def _median_stride_s(*interval_lists) -> float | None:
    """Median time between a foot's successive seen foot offs, pooled over the lists, or None."""
    gaps = []
    for ivs in interval_lists:
        offs = [iv[1] for iv in ivs if iv[5]]
        gaps += list(np.diff(offs))
    return float(np.median(gaps)) if gaps else None


def foot_centre_events(
    track: dict[str, np.ndarray], time_s: np.ndarray, side: str, intervals: list, *,
    direction: str, other_intervals: list = (), camera_roll_deg: float = 0.0,
    window_before_s: float = 0.25, window_after_s: float = 0.07, strike_window_s: float = 0.17,
    off_window_after_s: float = 0.15, away_strike_margin_s: float = 0.1,
    off_point: str = "toe", strike_margin_s: float = 0.1, off_after_strike_s: float = 0.25,
    away_off: bool = True,
    away_off_max_rise: float = 0.06, scale_px: np.ndarray | None = None,
    min_swing_fraction: float = 0.25, away_off_fraction: float = 0.8,
    other_strikes_s: list | None = None, away_off_after_strike_s: float = 0.3,
) -> list:
    """Re-time the event the frontal view hides, from turning points of the foot's image motion.

    Seen along the walking line a point's image row mixes its height and its
    distance: lifting moves it up, approaching the camera moves it down (for
    a camera above the floor, Hartley & Zisserman 2004, Multiple View
    Geometry, 2nd ed., ground-plane projection, from memory). Walking toward
    the camera the swing toe's lift and approach cancel for a few frames
    after foot off, so its departure from the footprint is seen late; walking
    away the landing heel's descent and recession cancel before foot strike,
    so its arrival is seen early. The other event of each pair is well seen
    and is left alone. Instead of the footprint, two turning points time the
    hidden event:

    * toward, foot off: the peak upward image velocity of the toe (the
      pose model's foot index; ``off_point="centre"`` uses the midpoint of
      heel and toe instead), after the foot-velocity algorithm of O'Connor et
      al. 2007, Gait & Posture 25:469-474, from memory. Right after foot off
      the toe lifts faster than its approach moves it down in the image.
      Measured on the ten rendered clips walking toward the camera, median
      absolute error 9-40 ms with the toe against 11-85 ms with the foot
      centre. Searched within ``[t_off - window_before_s, t_off +
      off_window_after_s]`` of the position-based foot off, but not before the
      other foot's last foot strike less ``strike_margin_s``: a foot leaves
      the floor only after the other one has landed (double support, about
      10 % of the cycle each; Perry & Burnfield 2010, Gait Analysis, 2nd ed.,
      ch. 1, from memory), and the margin allows for that strike being found
      late (+45..+100 ms toward the camera on the rendered clips). The
      position-based foot off can itself be early: the pose model draws the
      foot flatter than it is, so its toe rises with the heel in terminal
      stance and leaves the footprint before the real toe off (130 ms early
      on one rendered clip, where the toe's real peak lay 0.10 s after it).
      Hence the search reaches ``off_window_after_s`` = 0.15 s past it; the
      toe moves down in the image soon after foot off (its approach
      dominates), so no later upward peak competes. Measured on the 13
      rendered clips: any value from 0.12 to 0.2 s gave the same phases, and
      0.07 s (the window used before) left that clip's left lean 1.19 deg
      under the truth (0.95 with 0.15). The search is tied to the other
      foot's strike that came during this contact, the one that began the
      double support this foot off ends: from that strike less
      ``strike_margin_s`` to at least ``off_after_strike_s`` after it (a
      double support of up to about 0.2 s in slow walking, Perry & Burnfield
      2010, ch. 1, from memory, and the strike found up to about 0.1 s late;
      0.2 and 0.25 s gave the same events on the 52 rendered clips). A
      position-based foot off found before that strike (the pose model's toe
      leaving with the heel, or a far foot's drift) otherwise ended the
      window before the toe's peak. Inside such a window the largest local
      maximum of the toe's upward speed is taken even where the window's
      first or last sample is higher: at the start that is the toe's motion
      in terminal stance, before the other foot landed, not its lift off the
      floor. Where no such strike is seen, the window begins no earlier than
      the other foot's last strike before the position-based foot off less
      the margin, and only a maximum of the whole window counts. Measured on
      the 41 rendered clips walking toward the camera through the pose model
      (against the window bounded by the last strike before the
      position-based foot off and the whole window's maximum): foot offs
      more than 100 ms off 23 -> 12 of 395, foot strikes (bounded by the
      other foot's offs, :func:`bound_by_double_support`) 13 -> 7; clips
      with a median over 33 ms 5 -> 4 (offs) and 11 -> 4 (strikes); phases
      found 417 -> 421 of 423 on all 52; from exact keypoints one strike
      moved by under 1 ms.
    * away, foot strike: the heel's highest image point. While the heel
      recedes it rises in the image; once it is on the floor it stops, so
      the turning point is the end of its recession (the heel's extreme
      position, cf. the coordinate method of Zeni et al. 2008, Gait &
      Posture 27:710-714, from memory). The last ~1 cm of descent comes
      after it (the turning point alone was about one frame early on the
      rendered clips), so the strike is taken where the heel is halfway down
      from the turning point to its footprint (midpoint rule, common
      practice, no source). Searched within ``[t_strike - window_after_s, t_strike +
      strike_window_s]`` and not later than ``away_strike_margin_s`` after the
      other foot's next position-based foot off (double support, as above):
      that foot off is itself found early walking away (about -130 ms before
      its own re-timing below), and bounding by it exactly cut off the heel's
      turning point on one foot of the rendered walking-away clip (strikes
      -115..-187 ms). With the 0.1 s margin (the same allowance as
      ``strike_margin_s`` toward the camera; 0.05-0.15 s gave the same
      phases) the clip's foot-strike median error went from -84 to 25 ms.
      Far from the camera the receding swing heel moves nearly along its
      own line of sight to the coming footprint, so in mid-swing it can
      pause in the image where it will land and be taken as landed (issue
      of the velocity method walking away, measured beyond about 5 m). A
      strike found less than ``min_swing_fraction`` of the median stride
      time after the same foot's foot off is such a pause: swing lasts
      about 40 % of the stride in walking (Perry & Burnfield 2010, ch. 1,
      from memory), and 25 % lies well below that (common practice, no
      source); there the heel's highest image point is searched from that
      time on, up to the other foot's next foot off plus
      ``away_strike_margin_s`` (the landing comes before the other foot
      leaves). Otherwise the usual window is moved on (keeping its length)
      so that it begins no earlier than that time either: the heel, high
      in initial swing, can still be coming down the image at the window's
      start, higher there than at its landing. Measured on the three
      walking-away clips rendered after the methods were settled (measured
      once before these rules, so not held out for them): 7 of 10 phases
      found on the one walking to 7.8 m, 10 of 10 with the rule; worst
      strike there 191 -> 54 ms with the moved window, and from exact
      keypoints 199 -> 14 ms (146 -> 22 ms on the fast walk out to 9 m);
      on the older walking-away clip the worst strike went from 187 to
      60 ms; no clip walking toward changed. A rule of 30 % (searching
      from 20 %) was also measured and made two clips' strikes worse (max
      44 -> 90 ms). Where such a pause is found but the heel comes down the
      image to land (a low camera and a far walker, whose heel lift
      outweighs its recession), the window holds no turning point; the
      strike is then where the heel comes to rest at its footprint
      (:func:`_heel_arrival`), no longer the pause. Measured from exact
      keypoints on the walker that showed it (rendered after the rules
      above, held out until then): worst strike 419 -> 20 ms, one more
      phase; no other clip changed.

    Turning points are interpolated to sub-frame time by a parabola through
    three samples. Where there is no interior turning point in the window, or
    the points are not tracked, the position-based time is kept. Window sizes
    are common practice, no source (chosen on the synthetic walker and
    rendered clips, checked on the lab data).

    Parameters
    ----------
    track : dict of ndarray (n, 2)
        Client-side labelled positions, low-passed (a cut-off near 10 Hz keeps
        the turning points sharp).
    time_s : ndarray (n,)
    side : {"left", "right"}
    intervals, other_intervals : list
        Contact intervals of this foot and of the other foot, layout of
        :func:`detect_contacts`.
    direction : {"toward", "away"}, keyword-only
    camera_roll_deg : float, keyword-only
        Image "up" follows the rolled world vertical (see :mod:`lean_video.gait`).
    off_point : {"toe", "centre"}, keyword-only
        Foot point whose upward velocity times foot off toward the camera.
    strike_margin_s : float, keyword-only
        How far before the other foot's detected strike the foot-off search may start.
    off_after_strike_s : float, keyword-only
        Walking toward, how far past the other foot's strike within this
        contact the toe's peak is searched at least; see above.
    away_strike_margin_s : float, keyword-only
        How far past the other foot's position-based foot off the heel's
        turning point is searched (walking away); see above.
    off_window_after_s : float, keyword-only
        How far after the position-based foot off the toe's peak is searched
        (toward the camera); see above.
    away_off : bool, keyword-only
        Walking away, also re-time foot off, at the heel's peak upward image
        velocity within ``[t_off - window_after_s, t_off + window_before_s]``:
        the toe is hidden behind the heel and the pose model's toe leaves with
        the heel, so the position-based foot off is early. Only where the
        heel is then less than ``away_off_max_rise`` body heights above its
        footprint: heel rise precedes toe off (terminal stance; Perry &
        Burnfield 2010, ch. 1, from memory), so a toe seen leaving with the
        heel barely up is the model's guess, while a foot off found with the
        heel well up (true toe points) is kept. Measured rise at the
        position-based foot off: 0.10-0.17 on the lab trial (marker toes),
        0.07-0.10 on the synthetic walker (exact toes), 0.01-0.07 on the
        rendered walking-away clip through the pose model; the 0.06 between
        them was chosen on these three (common practice, no source). With it,
        on the rendered walking-away clip: foot-off median error -130 ms ->
        +32 ms, every phase still found, per-side lean error -0.57/-0.64 ->
        -0.41/+0.51 deg; lab and synthetic walker unchanged. The foot off is
        then taken where the heel's upward speed last rose through
        ``away_off_fraction`` of that peak, linearly interpolated (the peak
        itself stays the start of swing for ``min_swing_fraction``).
    away_off_max_rise : float, keyword-only
        See ``away_off``.
    other_strikes_s : sequence of float, optional, keyword-only
        Walking away, the other foot's foot strikes as re-timed here (a first
        pass over both feet, :func:`lean_video.gait.analyse_keypoints`). A
        foot leaves the floor only after the other has landed (double
        support; Perry & Burnfield 2010, ch. 1, from memory), so where one of
        them falls within this contact the heel's peak is searched up to at
        least ``away_off_after_strike_s`` past the last such strike. In a slow
        walk seen from behind the position-based foot off came 0.2-0.32 s
        before the true one while the heel's peak speed came about 0.03 s
        after it, beyond the usual window (``window_before_s`` past the
        position-based foot off), and the foot off was left early (median
        63 ms early on a slow walker rendered for a held-out check of
        ``away_off_fraction``, up to 143 ms after the double-support bound).
        With the anchor: 4 ms there; on the 11 walking-away clips of the
        demo set foot-off medians 7-28 -> 4-18 ms per clip, single foot offs
        over 66 ms 16 -> 6 of 139 (with the three held-out clips), phases,
        strikes (bar one matched in addition) and exact keypoints unchanged;
        0.25 and 0.4 s gave 11 and 6 foot offs over 66 ms and medians up to
        17 and 21 ms.
    away_off_after_strike_s : float, keyword-only
        See ``other_strikes_s``: a double support of up to about 0.2 s in slow
        walking (Perry & Burnfield 2010, ch. 1, from memory), the heel's peak
        about 0.03 s after foot off and the strike found up to about 0.05 s
        early (engineering choice, no source).
    away_off_fraction : float, keyword-only
        Share of the heel's peak upward speed at which a re-timed foot off is
        taken walking away (1 takes the peak). Seen from behind, the pose
        model's heel moves like the ankle: through the pose model its upward
        image speed peaked 29-38 ms after the true foot off on three rendered
        walking-away clips, against 12-24 ms for the exact heel and 26-36 ms
        for the exact ankle (the ankle rises last as the foot swings
        through). At the peak, foot offs came out late: median per clip 25-47
        ms on the 11 rendered walking-away clips. On the rising flank they
        came out, per clip, 13-40 ms off with 0.6, 10-33 ms with 0.7 and
        7-28 ms with 0.8 (signed median over all 112 foot offs +25, -24,
        -16 and -7 ms with 1, 0.6, 0.7 and 0.8); foot strikes, phases and
        exact keypoints (heel well up, not re-timed) did not change. 0.8 was
        chosen on these 11 clips (three of them held out from the earlier
        method choices, none left unseen for this one; engineering choice,
        no source). On three more walkers filmed from behind, rendered
        afterwards for a held-out check (``tools/synth/heldout_away_checks.json``),
        foot offs came out 5 and 7 ms off (36 and 38 ms at the peak) and, on
        the slow one, 63 ms early either way (see ``other_strikes_s``). On the
        lab trial the one foot off re-timed (a marker heel, whose speed
        peaked before the toe left) moved from 23 to 67 ms early.
    scale_px : ndarray (n,), optional, keyword-only
        Body height in pixels per frame (:func:`lean_video.gait_events.body_height_px`,
        smoothed); without it the heel-rise check is skipped and every
        walking-away foot off is re-timed.
    min_swing_fraction : float, keyword-only
        Walking away, a strike found sooner than this fraction of the median
        stride time (between successive foot offs) after the same foot's foot
        off is taken for a mid-swing pause; see above (0 switches it off).

    Returns
    -------
    intervals : list
        Same layout as :func:`detect_contacts`.
    """
    if off_point not in ("toe", "centre"):
        raise LeanVideoError(f"off_point must be 'toe' or 'centre', got {off_point!r}; use 'toe'.")
    if not 0.0 < away_off_fraction <= 1.0:
        raise LeanVideoError(f"away_off_fraction must lie in (0, 1], got {away_off_fraction!r}; use 0.8.")
    if not 0.0 <= min_swing_fraction < 1.0:
        raise LeanVideoError(f"min_swing_fraction must lie in [0, 1), got {min_swing_fraction!r}; use 0.25.")
    k = 0 if side == "left" else 1
    heel, toe = track[PAIRS["heel"][k]], track[PAIRS["foot_index"][k]]
    r = np.radians(camera_roll_deg)
    up = np.array([np.sin(r), -np.cos(r)])
    centre = ((heel + toe) / 2 if off_point == "centre" else toe) @ up
    v_up = np.gradient(centre, time_s)
    heel_up = heel @ up
    v_heel = np.gradient(heel_up, time_s)
    stride_s = _median_stride_s(intervals, other_intervals)
    out = []
    swing_from = None  # start of the previous swing: its foot off, or the heel's peak it was timed from
    for t_s, t_o, i0, i1, s_seen, o_seen in intervals:
        anchor = None
        if s_seen and direction == "away":
            lo, hi = t_s - window_after_s, t_s + strike_window_s
            earliest = None
            if out and out[-1][5] and stride_s is not None:
                earliest = swing_from + min_swing_fraction * stride_s
            if earliest is not None and t_s < earliest:
                # landed too soon after leaving: a mid-swing pause (see min_swing_fraction)
                lo, hi = earliest, t_o
                later = [iv[1] for iv in other_intervals if iv[5] and iv[1] > earliest]
                if later:
                    hi = min(hi, min(later) + away_strike_margin_s)
            else:
                if earliest is not None and earliest > lo:
                    lo, hi = earliest, hi + (earliest - lo)
                later = [iv[1] for iv in other_intervals if iv[5] and t_s < iv[1] < t_s + 2 * strike_window_s]
                if later:
                    hi = min(hi, min(later) + away_strike_margin_s)
            pause = earliest is not None and t_s < earliest
            sel = np.flatnonzero((time_s >= lo) & (time_s <= hi))
            sel = sel[np.isfinite(heel_up[sel])]
            turned = False
            if len(sel) >= 3:
                j = sel[np.argmax(heel_up[sel])]
                if sel[0] < j < sel[-1]:
                    t_s = min(_heel_settled(time_s, heel_up, j), t_o)
                    turned = True
            if pause and not turned:
                arrival = _heel_arrival(time_s, heel_up, lo, hi)
                if arrival is not None:
                    t_s = min(arrival, t_o)
        if o_seen and direction == "toward":
            lo, hi = t_o - window_before_s, t_o + off_window_after_s
            # the other foot's strike that began the double support this foot off ends
            landed = [iv[0] for iv in other_intervals if iv[4] and t_s < iv[0] < hi + off_after_strike_s]
            if landed:
                lo = max(lo, max(landed) - strike_margin_s)
                hi = max(hi, max(landed) + off_after_strike_s)
            else:
                prior = [iv[0] for iv in other_intervals if iv[4] and t_o - 2 * window_before_s < iv[0] < t_o]
                if prior:
                    lo = max(lo, max(prior) - strike_margin_s)
            peak = _velocity_peak(time_s, v_up, lo, hi, local=bool(landed))
            if peak is not None:
                t_o = max(peak, t_s)
        if o_seen and direction == "away" and away_off and (
                scale_px is None or _heel_rise(time_s, heel_up, scale_px, t_s, t_o) < away_off_max_rise):
            lo, hi = t_o - window_after_s, t_o + window_before_s
            landed = [] if other_strikes_s is None else [
                s for s in other_strikes_s if t_s < s < hi + away_off_after_strike_s]
            if landed:
                hi = max(hi, max(landed) + away_off_after_strike_s)
            peak = _velocity_peak(time_s, v_heel, lo, hi)
            if peak is not None:
                t_o = max(peak, t_s)
                anchor = t_o
                if away_off_fraction < 1.0:
                    t_o = max(_rising_crossing(time_s, v_heel, peak, away_off_fraction), t_s)
        swing_from = anchor if anchor is not None else t_o
        out.append((t_s, t_o, i0, i1, s_seen, o_seen))
    return out


def _contact_floor_s(intervals: list, min_fraction: float) -> float | None:
    """``min_fraction`` times the foot's median fully seen contact, or None with fewer than three."""
    full = [iv[1] - iv[0] for iv in intervals if iv[4] and iv[5]]
    return min_fraction * float(np.median(full)) if len(full) >= 3 else None


def drop_short_contacts(intervals: list, *, min_fraction: float = 0.5) -> tuple[list, int]:
    """Remove contacts much shorter than the foot's typical stance (a swing foot pausing in the image).

    Seen along the line of sight a swinging foot can nearly stop in the image
    (far from the camera its motion shrinks with the square of the distance),
    and a short "contact" appears in mid-swing. Stance lasts about 60 % of the
    gait cycle (Perry & Burnfield 2010, ch. 1, from memory), so a fully seen
    contact shorter than ``min_fraction`` times the median fully seen contact
    of the same foot (at least three) is taken as swing (common practice, no
    source). Contacts cut by the edges of the tracked stretch are kept.

    Returns
    -------
    intervals : list
        Layout of :func:`detect_contacts`.
    n_dropped : int
    """
    floor = _contact_floor_s(intervals, min_fraction)
    if floor is None:
        return list(intervals), 0
    kept = [iv for iv in intervals if not (iv[4] and iv[5] and iv[1] - iv[0] < floor)]
    return kept, len(intervals) - len(kept)


def untime_cut_strikes(intervals: list, *, min_fraction: float = 0.2) -> tuple[list, int]:
    """Leave untimed the foot strike of a contact cut short by the end of the tracked stretch.

    A contact that runs into the end of the tracked stretch (clip end, or the
    person leaving the picture) shows its foot strike, but too little of the
    stance after it to find where the foot comes to rest: the forefoot is
    still coming down after the heel lands (loading response, about the first
    10 % of the cycle; Perry & Burnfield 2010, ch. 1, from memory). From exact
    keypoints, a strike 0.2 s before the end of a rendered slow walk was
    timed 110 ms late, the toe landing in the last frames. Where such a cut
    contact is shorter than ``min_fraction`` times the foot's median fully
    seen contact (at least three), its strike is marked unseen. The default,
    a fifth of the stance, lies just past the loading response (a tenth of
    the cycle is a sixth of a 60 % stance), when the foot is flat (common
    practice, no source). The contact is kept; the single-support phase that
    the strike would close is then partial and left out. A contact cut by the
    *start* of the stretch is left alone: its foot off is timed from the toe,
    which rests until it leaves (on the same walk such a foot off 0.37 s into
    the clip was 11 ms off).
    Measured: from exact keypoints on the 41 rendered clips the rule left
    4 strikes untimed (110, 226, 70 and 67 ms off before) and changed no
    other event; through the pose model it left 2 untimed (a clip's worst
    strike went from 111 to 71 and from 68 to 46 ms) and every phase was
    still found. With 0.5 instead, 9 complete phases were lost.

    Parameters
    ----------
    intervals : list
        One foot's contacts, layout of :func:`lean_video.gait_events.detect_contacts`.
    min_fraction : float, keyword-only
        Shortest cut contact, as a fraction of the median full contact, whose
        strike is still timed.

    Returns
    -------
    intervals : list
        Layout of :func:`lean_video.gait_events.detect_contacts`.
    n_untimed : int
        How many strikes were marked unseen.
    """
    floor = _contact_floor_s(intervals, min_fraction)
    if floor is None:
        return list(intervals), 0
    out, n = [], 0
    for t_s, t_o, i0, i1, s_seen, o_seen in intervals:
        if s_seen and not o_seen and t_o - t_s < floor:
            s_seen = False
            n += 1
        out.append((t_s, t_o, i0, i1, s_seen, o_seen))
    return out, n


def order_events(left: list, right: list, *, direction: str, max_gap_s: float = 0.2) -> tuple[list, list, int]:
    """Make each foot strike come before the other foot's foot off (double support exists).

    In walking a foot leaves the floor only after the other foot has landed:
    every step has a double-support interval, about 10 % of the gait cycle
    (Perry & Burnfield 2010, Gait Analysis, 2nd ed., ch. 1, from memory).
    When the detected foot strike of one foot comes after the detected foot
    off of the other, but before that other foot lands again, the two events
    contradict each other (both feet would be off the floor), and one of them
    is moved onto the other. The other foot's next strike bounds the search,
    not a fixed time: on a far, dim rendered clip the pose model's foot paused
    above its footprint and a strike was found 0.20 s after the other foot's
    foot off, and a fixed 0.2 s bound lost two phases. Only where the other
    foot's next contact is not seen does ``max_gap_s`` bound it. Which one
    follows from what the frontal view hides, measured on the rendered clips: walking toward the camera the heel is
    hidden behind the forefoot at foot strike and the pose model's heel
    settles late (strikes +45..+100 ms, offs about unbiased), so the strike is
    moved back to the foot off; walking away the toe is hidden behind the
    heel at foot off and offs are found early (about -130 ms), so the foot off
    is moved forward to the strike. The phase between them then has zero
    length rather than a negative one; the single-support phases on either
    side no longer overlap.

    Parameters
    ----------
    left, right : list
        Contact intervals of each foot, layout of
        :func:`lean_video.gait_events.detect_contacts`.
    direction : {"toward", "away"}, keyword-only
    max_gap_s : float, keyword-only
        Largest contradiction that is resolved when the other foot's next
        contact is not seen (common practice, no source: about twice the
        timing error of the pose-model events).

    Returns
    -------
    left, right : list
        Same layout.
    n_moved : int
        Number of events moved.
    """
    if direction not in ("toward", "away"):
        raise LeanVideoError(f"direction must be 'toward' or 'away', got {direction!r}; use walking_direction().")
    feet = {"left": [list(iv) for iv in left], "right": [list(iv) for iv in right]}
    n_moved = 0
    for a, b in (("left", "right"), ("right", "left")):
        for iv in feet[a]:
            if not iv[4]:
                continue
            strike = iv[0]
            # the other foot's contact that was under way when this foot landed
            before = [jv for jv in feet[b] if jv[0] < strike and jv[5]]
            if not before:
                continue
            jv = max(before, key=lambda c: c[0])
            # If this foot left while the other stood (the step's sequence),
            # it must be down again before the other foot lands: both feet
            # cannot be off the floor, so a strike found anywhere in the other
            # foot's swing belongs to this step. Otherwise a fixed bound.
            prev_offs = [kv[1] for kv in feet[a] if kv[0] < strike and kv[5]]
            later = [kv[0] for kv in feet[b] if kv[0] > jv[1]]
            in_step = bool(prev_offs) and jv[0] < max(prev_offs) < jv[1]
            limit = min(later) if (in_step and later) else jv[1] + max_gap_s
            if jv[1] < strike < limit:
                if direction == "toward":
                    iv[0] = jv[1]
                else:
                    jv[1] = strike
                n_moved += 1
    as_tuples = {side: [tuple(iv) for iv in ivs] for side, ivs in feet.items()}
    return as_tuples["left"], as_tuples["right"], n_moved


def bound_by_double_support(left: list, right: list, *, direction: str,
                            min_double_support_fraction: float = 0.08) -> tuple[list, list, int]:
    """Keep the event the frontal view hides at least a minimum double support from the other foot's.

    Double support lasts about a tenth of the gait cycle at each end of single
    support in normal walking, longer in slow walking, shorter in fast walking
    (Perry & Burnfield 2010, Gait Analysis, 2nd ed., ch. 1, from memory).
    Walking toward the camera the heel lands hidden behind the forefoot and the
    pose model's foot points settle only with the foot flat: on the rendered
    clips foot strikes came out 34-109 ms late (median per clip) while foot
    offs were within about 30 ms. Each single-support phase then ran on into
    double support, and its mean lean read low (over the found phases lean
    followed the truth with a slope of 0.82-1.04 against 0.97-1.14 over the
    true windows). So, walking toward, a foot strike is moved to no later
    than the other foot's foot off less ``min_double_support_fraction`` of
    the median stride time. Walking away the toe leaves hidden behind the heel
    and foot offs are the early events (up to 173 ms on the rendered clip), so
    a foot off is moved to no earlier than the other foot's strike plus that
    margin. 0.08 sits below the textbook tenth so that a fast walker, whose
    double support is shorter, is cut short by little (engineering choice, no
    source). Where the client's double support is longer, as in slow or
    painful walking, the bound is looser and the event keeps up to the
    difference of its error. An event is never moved past the same foot's
    neighbouring event.

    Parameters
    ----------
    left, right : list
        Contact intervals of each foot after :func:`order_events`, layout of
        :func:`lean_video.gait_events.detect_contacts`.
    direction : {"toward", "away"}, keyword-only
    min_double_support_fraction : float, keyword-only
        Shortest double support assumed, as a fraction of the stride time
        (0 leaves the strikes alone).

    Returns
    -------
    left, right : list
        Same layout.
    n_moved : int
        Number of events moved (toward: strikes earlier; away: offs later).
    """
    if direction not in ("toward", "away"):
        raise LeanVideoError(f"direction must be 'toward' or 'away', got {direction!r}; use walking_direction().")
    if not 0.0 <= min_double_support_fraction < 0.25:
        raise LeanVideoError(f"min_double_support_fraction must lie in 0..0.25 of the stride, got "
                             f"{min_double_support_fraction!r}; use 0.08.")
    if min_double_support_fraction == 0:
        return list(left), list(right), 0
    feet = {"left": [list(iv) for iv in left], "right": [list(iv) for iv in right]}
    strides = [np.diff(sorted(iv[0] for iv in ivs if iv[4])) for ivs in feet.values()]
    strides = np.concatenate([d for d in strides if d.size] or [np.empty(0)])
    # same-foot strike intervals of continuous walking (common practice, no source)
    strides = strides[(strides > 0.6) & (strides < 2.5)]
    if not strides.size:
        return list(left), list(right), 0
    margin_s = min_double_support_fraction * float(np.median(strides))
    n_moved = 0
    for a, b in (("left", "right"), ("right", "left")):
        for iv in feet[a]:
            n_moved += (_off_after_other_strike(iv, feet[a], feet[b], margin_s) if direction == "away"
                        else _strike_before_other_off(iv, feet[a], feet[b], margin_s))
    return ([tuple(iv) for iv in feet["left"]], [tuple(iv) for iv in feet["right"]], n_moved)


def _strike_before_other_off(iv: list, own: list, other: list, margin_s: float) -> bool:
    """Move ``iv``'s strike to ``margin_s`` before the foot off of the other foot's contact under way then."""
    if not iv[4]:
        return False
    under = [jv for jv in other if jv[0] < iv[0] <= jv[1] and jv[5]]
    if not under:
        return False
    bound = under[-1][1] - margin_s
    own_prev_off = max((kv[1] for kv in own if kv[1] < iv[0]), default=-np.inf)
    if own_prev_off < bound < iv[0]:
        iv[0] = bound
        return True
    return False


def _off_after_other_strike(iv: list, own: list, other: list, margin_s: float) -> bool:
    """Move ``iv``'s foot off to ``margin_s`` after the other foot's strike that began its double support."""
    if not iv[5]:
        return False
    landed = [jv for jv in other if iv[0] < jv[0] <= iv[1] and jv[4]]
    if not landed:
        return False
    bound = landed[-1][0] + margin_s
    own_next = min((kv[0] for kv in own if kv[0] > iv[1]), default=np.inf)
    if iv[1] < bound < own_next:
        iv[1] = bound
        return True
    return False
