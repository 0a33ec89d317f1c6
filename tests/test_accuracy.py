"""Accuracy of the whole analysis on the rendered truth clips (exact ground truth).

Video -> pose -> gait -> mechanics, compared with the renderer's truth. Targets
are the gait-signal issue's: per-side mean lean within 1.0 deg, each phase's
mean lean within 2.0 deg, events with a median error of one frame (33 ms at
30 fps) and none beyond three, every steady single-support phase found, pelvic
drop within 1.5 deg. Where the pipeline does not meet a target yet, the test
of the target is marked ``xfail(strict=True)`` beside a test of what is
measured today, so an improvement turns the suite red until the bound is
tightened. Measured numbers are in the comments (``tools/eval_accuracy.py``
prints them all).
"""

from __future__ import annotations

import numpy as np
import pytest

from tests.conftest import demo_manifest
from tools.eval_accuracy import evaluate

pytestmark = pytest.mark.slow
CLIPS = [c["name"] for c in demo_manifest()["clips"]]
_ROWS: dict[str, dict] = {}

# Held-out clips rendered last and measured once as they were; where they miss
# a target the case is a strict xfail, so a fix turns the suite red until the
# mark is removed.
SIDE_LIGHT = ("truth_strong_lean_24fps", "light from the side: per-frame lean biased +1.36 deg toward the "
              "client's right (the mirror-image pass cannot cancel a bias that mirrors with the scene); "
              "left lean 1.28 deg under (1.58 before late strikes were bounded)")
# The same walker in two more lights, added the next session after a sweep of
# five light directions. Lit from the camera side it read 1.13 deg low until
# late foot strikes were bounded by a minimum double support; now within 1.0.
OTHER_LIGHT = ("truth_strong_lean_other_light", "large lean read 1.32 deg low (one phase 2.72) in light from the "
               "other side (per-frame bias -0.66 deg); 2.24 before late strikes were bounded")

# Rendered after the double-support bound, measured once as rendered.
AWAY_BIAS = ("truth_away_strong_lean_left", "filmed from behind in light from 45 deg: per-frame lean biased "
             "-0.85 deg (the left, larger, lean read 1.05 deg high and the right 0.81 low until version 0.2.4; "
             "0.60 and 0.96 with 0.2.4, 0.93 and 0.91 since 0.2.5)")
# Rendered with pelvis markers when the marker method was built, measured once as rendered.
MARKER_SIDE_LIGHT = ("truth_markers_contralateral", "lit from 60 deg to the side: per-frame lean biased +0.80 deg, "
                     "so the right lean reads 1.07 deg high and the left 0.76 low")
# Rendered after the marker search was settled, measured once as rendered.
# (Three more clients, truth_heldout_*, were rendered on 2026-12-03 after every
# method here was settled and measured once: they meet every target tested here
# except pelvic drop without markers, so they carry no mark.)
AWAY_HEAVY = ("truth_markers_away_heavy", "walking away, heavier client in dark trousers: 8 of 10 phases found (the "
              "pose model's left foot was seen in contact for 0.32 of a 0.79 s stance, and one strike was "
              "lost), left/right single-support symmetry index off by 27.9 % (35.6 before version 0.2.4); "
              "from exact keypoints every phase is found")
# Four more clients (truth_heldout2_*) rendered on 2026-12-04 and measured once as rendered,
# after every method here was settled: camera roll within 0.06 deg, 34 of 34 phases, none
# spurious, pelvic drop from markers within 0.42 deg; two miss a target tested here.
# (The petite walker filmed from behind in a dim room, truth_heldout2_petite_away_dim, read its
# left lean 1.09 deg high with no per-frame bias over the clip (-0.08 deg), about 0.6 deg because
# the phases found lay inside the true ones (the lean peaks mid-phase) and 0.5 from the pose model
# reading the lean over the left leg larger; 0.76 once foot offs walking away were taken on the
# rise of the heel's upward speed, version 0.2.4, which starts each phase earlier; 0.84 since
# they are searched after the other foot's landing, 0.2.5.)
# (The 60 fps walker held out with them read a symmetry index 23.2 % off on equal sides until foot
# offs walking toward were searched past the other foot's strike; 12.9 % since.)
# Four more (truth_heldout3_*) rendered on the afternoon of 2026-12-04 and measured once as
# rendered: camera roll within 0.05 deg, 34 of 34 phases, none spurious, per-side lean within
# 0.54 deg, pelvic drop from markers within 0.38 deg (a phase 1.82); one misses a target here.
HELDOUT3_SLOW = ("truth_heldout3_slow_flexed_dark", "slow walker with a 65 % stance (held out): foot offs 38 ms early "
                 "(median), 25 ms early from exact keypoints: the second slow walk where the toe's peak upward image "
                 "speed comes before the foot leaves the floor")
# Later sessions of five clients above (truth_followup_*: same room, light, camera place and
# clothes, another walk and lean), rendered on the evening of 2026-12-04 to measure a change
# between sessions and measured once as rendered. Where they miss a target of their own:
FOLLOWUP_SIDE_LIGHT = ("truth_followup_side_light", "later session of the side-light walker: the per-frame "
                       "lean bias is +1.36 deg again (as in its first session), so the left lean reads "
                       "1.22 deg under and the right 1.38 over; the change between the sessions is "
                       "within 0.83 deg (test_lean_change_between_sessions_filmed_the_same_way)")
FOLLOWUP_SIDE_LIGHT_BIAS = (FOLLOWUP_SIDE_LIGHT[0], "per-frame lean bias +1.36 deg in light from the side, "
                            "the same as in this client's first session")
# (Its left lean read 1.09 deg high until version 0.2.4, 0.91 since.)
FOLLOWUP_AWAY_BIAS = ("truth_followup_away_lean_left", "per-frame lean bias -0.87 deg (-0.85 in this client's first "
                      "session)")
FOLLOWUP_MARKERS_BIAS = ("truth_followup_markers_contralateral", "per-frame lean bias +0.833 deg in light from "
                         "60 deg (+0.80 in this client's first session), just over the 0.83 bound")
# Six walkers who first stand still for 1.5 s (truth_stand_*: the set-ups of the five
# above and of truth_no_lean, another walk and a habitual lean), rendered the same evening
# to check the standing posture on video and measured once as rendered. In the set-ups lit
# from the side they miss what those set-ups miss:
# (Until foot offs walking toward were searched past the other foot's strike, gait_frontal.
# foot_centre_events, the later session off the camera axis found 6 of 8 phases, two foot offs
# 169 and 305 ms early where the far feet drift; the standing start lit from the other side 5
# of 7 with a left lean 1.12 deg high, the one in side light a left lean 1.02 deg under; now
# every phase and within 1.0 deg on all three.)
STAND_SIDE_LIGHT = "truth_stand_side_light"
STAND_OTHER_LIGHT = "truth_stand_other_light"
STAND_MARKERS = ("truth_stand_markers_contralateral", "light from 60 deg (per-frame bias +0.88 deg): left lean "
                 "1.04 deg under (1.20 before foot offs were searched past the other foot's strike)")
STAND_SIDE_LIGHT_BIAS = (STAND_SIDE_LIGHT, "per-frame lean bias +1.18 deg in light from the side")
STAND_MARKERS_BIAS = (STAND_MARKERS[0], "per-frame lean bias +0.88 deg in light from 60 deg")
STAND_OFF = {STAND_SIDE_LIGHT: "foot offs 34 ms off (median, 26 ms early; 25 ms from exact keypoints)",
             STAND_OTHER_LIGHT: "foot offs 34 ms off (median, 12 ms early; 22 ms from exact keypoints; 59 ms "
                                "before foot offs were searched past the other foot's strike)"}
MARKED = [c["name"] for c in demo_manifest()["clips"] if c["walk"].get("pelvis_marker_rgb") is not None]
STANDING = [c["name"] for c in demo_manifest()["clips"] if c["walk"].get("stand_s")]
# Since version 0.2.4 (foot offs walking away taken where the heel's upward speed reaches 80 % of
# its peak, gait_frontal.foot_centre_events) one clip walking away that met the lean target misses
# it, and three that missed it meet it (above):
AWAY_SLOW = ("truth_away_slow_60fps", "slow walk away at 60 fps: right lean 1.04 deg low (0.94 before version "
             "0.2.4, 1.07 with it): per-frame bias -0.60 deg, and the right phases run 58 ms long (its foot "
             "strikes are 39 ms off, median), into double support where the lean is smaller")
LONG_DS = ("truth_slow_long_double_support", "slow walk with a 17 % double support: foot offs found 40 ms early "
           "(median; 49 before foot offs were searched past the other foot's strike), as early from exact "
           "keypoints (test_gait_truth_clips): the foot-off method, not the pose model")


def clips(*known: tuple[str, str], names: list[str] | None = None) -> list:
    """``names`` (default CLIPS), with a strict xfail on the clips known to miss this test's target.

    Every known miss must be among ``names``: a known miss left out would not run at all.
    """
    names = CLIPS if names is None else names
    reasons = dict(known)
    if not set(reasons) <= set(names):
        raise ValueError(f"known misses {sorted(set(reasons) - set(names))} are not among the clips tested")
    return [pytest.param(n, marks=pytest.mark.xfail(strict=True, reason=reasons[n])) if n in reasons else n
            for n in names]


def per_side_lean_errors() -> list[float]:
    """|per-side mean lean - truth| over every clip and side that has a true lean."""
    return [abs(row(n)[f"{s}_lean_err"]) for n in CLIPS for s in ("left", "right")
            if row(n)[f"{s}_lean_err"] is not None and row(n)[f"{s}_lean_true"] is not None]


def row(name: str) -> dict:
    if name not in _ROWS:
        _ROWS[name] = evaluate(name)
    return _ROWS[name]


@pytest.mark.parametrize("name", clips(SIDE_LIGHT, OTHER_LIGHT, MARKER_SIDE_LIGHT, FOLLOWUP_SIDE_LIGHT, STAND_MARKERS,
                                       AWAY_SLOW))
def test_direction_roll_and_lean(name):
    r = row(name)
    assert r["direction"] == r["direction_true"]
    # Camera roll from the room's verticals, within 0.5 deg (issue target; measured <= 0.24).
    assert r["roll"] == pytest.approx(r["roll_true"], abs=0.5)
    for side in ("left", "right"):
        err = r[f"{side}_lean_err"]
        if r[f"{side}_lean_true"] is None or err is None:
            continue
        # Issue target: within 1.0 deg. Measured today: <= 0.97 deg on 46 of 52 clips, median
        # 0.27 (44 and 0.31 before foot offs walking away were taken on the rise of the heel's
        # upward speed, version 0.2.4: the two walkers filmed from behind, 1.05 and 1.09, and a
        # later session of the first, 1.09, now meet it, the slow walk away at 60 fps, 0.94, now
        # misses it, by 0.07 with 0.2.4 and 0.04 with 0.2.5) (<= 0.94 deg on 36 of the first 41, median 0.26 (0.67 at most on the three held out on 2026-12-03; 0.74 on three of the four held
        # out on 2026-12-04, 1.09 on the fourth; 0.54 on the four held out that afternoon); 1.28 and 1.32 on the strong-lean walker lit from either side, 1.05 on the
        # walker filmed from behind with a 9 deg lean, 1.07 on a marker client lit from 60 deg
        # (xfails above).
        # Before late strikes were bounded by a minimum double support (gait_frontal.
        # bound_by_double_support): 0.99 on 16 clips, 1.13-2.24 on that walker, median 0.34; without
        # the mirror-image pass of the pose model (first 11 clips) 1.28 and 0.48.
        assert abs(err) <= 1.0, (side, err)
    if r["phase_lean_err_max"] is not None:
        # Each matched phase's mean lean within 2.0 deg (issue target; measured <= 1.83 on 51
        # of 52 clips, 2.72 on the strong-lean walker lit from the other side; walking away
        # <= 1.83 since version 0.2.5 (on the walker filmed from behind with a 9 deg lean),
        # 1.55 with 0.2.4, 1.77 before).
        assert r["phase_lean_err_max"] <= 2.0


@pytest.mark.parametrize("name", clips(AWAY_HEAVY))
def test_phases_found(name):
    r = row(name)
    # Issue target, met: every steady single-support phase found, none
    # spurious: 421 of 423 on 52 clips (417 before foot offs walking toward were searched past
    # the other foot's strike, gait_frontal.foot_centre_events), 336 of 338 on 41 clips (34 of 34 on the four held out on the afternoon of
    # 2026-12-04, 34 of 34 on the four held out that morning, 23 of 23 on
    # the three held out on 2026-12-03; 228 of 228 on the first 28, 191 of 191 on the first 24 (188 before a walking-away strike found
    # within a quarter stride of the foot's own foot off was taken for a
    # mid-swing pause, gait_frontal.foot_centre_events); 78 of 88 on the first 11 before double
    # support was enforced and the pose model's mirror-image pass added; 132 of
    # 134 while a strike found 0.202 s past the other foot's foot off on the
    # far, dim clip was beyond a fixed 0.2 s bound, now the other foot's swing).
    # A found phase is spurious when it overlaps no true window by half its length.
    assert r["phases_matched"] == r["phases_true"]
    assert r["phases_spurious"] == 0


@pytest.mark.parametrize("name", clips(SIDE_LIGHT, AWAY_BIAS, FOLLOWUP_SIDE_LIGHT_BIAS, FOLLOWUP_AWAY_BIAS,
                                       FOLLOWUP_MARKERS_BIAS, STAND_SIDE_LIGHT_BIAS, STAND_MARKERS_BIAS))
def test_per_frame_lean_bias(name):
    # Mean per-frame trunk lean minus truth over the whole clip (the truth's
    # image-plane lean, so camera roll and walking direction are included).
    # Measured: -0.66 to +0.56 deg on 28 clips, +1.36 in side light, -0.85 on a walker
    # filmed from behind in light from 45 deg, +0.80 on a marker client lit from 60 deg
    # (first 11: -0.43 to +0.69 without the mirror-image pass of the pose model); a plain
    # pipeline was biased by up to +1.3. Bound 0.8 until that last clip, rendered after it
    # was set and measured at 0.7999: now 0.83, so a change in the fourth decimal does not
    # flip it, still short of the walker filmed from behind (0.85, xfail above).
    assert abs(row(name)["lean_frame_bias_deg"]) <= 0.83


@pytest.mark.parametrize("name", CLIPS)
def test_found_phases_cover_the_true_ones(name):
    r = row(name)
    # Each matched phase overlaps at least this share of its true window.
    # Measured: 0.80-1.00 walking toward, 0.57-0.91 walking away (a plain
    # speed-threshold detector covered only 55-65 % walking toward).
    floor = 0.5 if r["direction_true"] == "away" else 0.7
    assert r["phase_coverage_min"] is not None and r["phase_coverage_min"] >= floor


AWAY = [c["name"] for c in demo_manifest()["clips"] if c["walk"]["start_distance_m"] < c["walk"]["end_distance_m"]]
TOWARD = [n for n in CLIPS if n not in AWAY]


@pytest.mark.parametrize("name", AWAY)
def test_walking_away_assigns_sides(name):
    r = row(name)
    assert r["direction"] == "away"
    # Each walker has one side with the larger lean in truth; it must be found there
    # (a swap would put errors of twice the left/right difference, 3-6 deg, here).
    assert abs(r["right_lean_err"]) <= 1.5 and abs(r["left_lean_err"]) <= 1.5


@pytest.mark.parametrize("name", AWAY)
def test_event_timing_away(name):
    r = row(name)
    # Walking away, foot off: measured median 4-18 ms per clip (target 33 ms, met; 7-28 ms
    # with version 0.2.4, before the search was anchored on the other foot's landing; 25-47 ms
    # while the re-timed foot off was the heel's peak upward speed, before 0.2.4: seen from
    # behind the pose model's heel rises like the ankle, late; 130 ms early on the first
    # walking-away clip before the heel re-timing). Bound: the target.
    assert r["foot_off_median_ms"] <= 33
    # Foot strike: measured median 22-39 ms (84 ms early on the first clip while the
    # heel's turning point was searched only up to the other foot's early foot off).
    assert r["foot_strike_median_ms"] <= 47


# (Until 2026-12-04 the xfail-marked clips were filtered out here by mistake, so these two
# strict xfails never ran.)
@pytest.mark.parametrize("name", clips(LONG_DS, HELDOUT3_SLOW, *STAND_OFF.items(), names=TOWARD))
def test_foot_off_timing_toward(name):
    r = row(name)
    # Foot off, walking toward: measured median 6-31 ms on 37 of 41 clips (target 33 ms
    # met), 40 and 38 ms on the two slow walks with a long double support and 34 ms on two
    # standing starts lit from the side (xfails above); single outliers up to 150 ms remain
    # (target: none beyond 100 ms). Before foot offs were searched past the other foot's strike
    # (gait_frontal.foot_centre_events): over 33 ms on 5 clips, up to 59 ms; 23 single foot offs
    # beyond 100 ms against 12 now.
    assert r["foot_off_median_ms"] <= 33


def test_stated_accuracy_covers_what_is_measured():
    # The accuracy every summary and report states (stated_accuracy.LEAN_METHOD,
    # EVENTS_METHOD) must not be better than what these clips measure.
    from lean_video.stated_accuracy import EVENTS_METHOD, LEAN_METHOD

    lean = per_side_lean_errors()
    assert max(lean) <= LEAN_METHOD["per_side_error_max_deg"] + 0.005
    assert abs(np.median(lean) - LEAN_METHOD["per_side_error_median_deg"]) <= 0.05
    for direction in ("toward", "away"):
        rows = [row(n) for n in CLIPS if row(n)["direction_true"] == direction]
        for kind in ("foot_strike", "foot_off"):
            lo, hi = EVENTS_METHOD[f"{kind}_median_error_ms"][direction]
            assert max(r[f"{kind}_median_ms"] for r in rows) <= hi + 0.5, (direction, kind)
        lo, hi = EVENTS_METHOD["single_support_error_s"][direction]
        ss = [r[f"{s}_ss_err_s"] for r in rows for s in ("left", "right") if r[f"{s}_ss_err_s"] is not None]
        assert lo - 0.005 <= min(ss) and max(ss) <= hi + 0.005, (direction, min(ss), max(ss))
        si = [abs(r["ss_symmetry_index_err_pct"]) for r in rows if r["ss_symmetry_index_err_pct"] is not None]
        assert max(si) <= EVENTS_METHOD["single_support_symmetry_index_error_pct"][direction] + 0.5, direction


# Each later session or standing start and the clip of the same set-up: same room, light,
# camera place and clothes, another walk and lean.
FOLLOWUP_PAIRS = [("truth_strong_lean_24fps", "truth_followup_side_light"),
                  ("truth_strong_lean_other_light", "truth_followup_other_light"),
                  ("truth_markers_contralateral", "truth_followup_markers_contralateral"),
                  ("truth_away_strong_lean_left", "truth_followup_away_lean_left"),
                  ("truth_heldout3_offaxis_habitual", "truth_followup_offaxis"),
                  ("truth_strong_lean_24fps", "truth_stand_side_light"),
                  ("truth_strong_lean_other_light", "truth_stand_other_light"),
                  ("truth_markers_contralateral", "truth_stand_markers_contralateral"),
                  ("truth_away_strong_lean_left", "truth_stand_away_lean_left"),
                  ("truth_heldout3_offaxis_habitual", "truth_stand_offaxis"),
                  ("truth_no_lean", "truth_stand_even_light")]


def test_lean_change_between_sessions_filmed_the_same_way():
    # What the history report's filming allowance rests on (stated_accuracy.LEAN_CHANGE_METHOD).
    # The pose model's per-frame lean bias is a property of the filming set-up: measured
    # +1.36/+1.36, -0.66/-0.52, +0.80/+0.83, -0.85/-0.87, -0.18/-0.13 deg on the five later
    # sessions, +1.36/+1.18, -0.66/-0.51, +0.80/+0.88, -0.85/-0.68, -0.18/-0.30, -0.08/-0.06 on
    # the six standing starts. So a per-side change in lean between two walks filmed the same
    # way is read within 0.22 deg in the median and 1.16 at most (the 12 deg lean of the first
    # sessions read low, so its fall to 6 and 8 deg read 0.83 and 1.16 deg smaller than it
    # was), while the same clips' per-side errors reach 1.38 deg (median 0.74). (0.22 and
    # 1.08 until foot offs walking toward were searched past the other foot's strike: the
    # later walk's right lean came closer to the truth, the first walk's did not move; 0.21
    # and 1.16 before foot offs walking away were taken on the rise of the heel's speed, 0.23
    # and 1.16 with version 0.2.4.)
    from lean_video.stated_accuracy import LEAN_CHANGE_METHOD

    assert {n for pair in FOLLOWUP_PAIRS for n in pair} <= set(CLIPS)
    assert {n for n in CLIPS if n.startswith(("truth_followup_", "truth_stand_"))} == \
        {later for _, later in FOLLOWUP_PAIRS}
    errs = []
    for first, later in FOLLOWUP_PAIRS:
        a, b = row(first), row(later)
        assert abs(b["lean_frame_bias_deg"] - a["lean_frame_bias_deg"]) <= 0.25, later  # measured <= 0.18
        for side in ("left", "right"):
            errs.append(abs(b[f"{side}_lean_err"] - a[f"{side}_lean_err"]))
    assert max(errs) <= LEAN_CHANGE_METHOD["same_setup_error_max_deg"] + 0.005
    assert abs(np.median(errs) - LEAN_CHANGE_METHOD["same_setup_error_median_deg"]) <= 0.05


def test_stated_lean_change_between_set_ups_covers_what_is_measured():
    # Two sessions filmed in different set-ups: the change carries the difference of the two
    # clips' per-side errors. Over every pair of the 41 clips that are neither later sessions
    # nor standing starts (which share their set-ups with earlier clips),
    # measured 1.35 deg at the 95th percentile and 2.39 at most (median 0.40; 1.36 and 0.42 before
    # version 0.2.4's foot offs walking away, 1.33 and 0.40 with 0.2.4; 1.40 and 0.43
    # before foot offs walking toward were searched past the other foot's strike).
    from lean_video.stated_accuracy import LEAN_CHANGE_METHOD

    names = [n for n in CLIPS if not n.startswith(("truth_followup_", "truth_stand_"))]
    assert len(names) == 41
    diffs = [abs(row(b)[f"{s}_lean_err"] - row(a)[f"{s}_lean_err"])
             for i, a in enumerate(names) for b in names[i + 1:] for s in ("left", "right")]
    assert max(diffs) <= LEAN_CHANGE_METHOD["other_setup_error_max_deg"] + 0.005
    assert abs(np.quantile(diffs, 0.95) - LEAN_CHANGE_METHOD["other_setup_error_p95_deg"]) <= 0.05
    # the reason to film every visit the same way: a set-up change costs more than the allowance
    assert np.quantile(diffs, 0.95) > LEAN_CHANGE_METHOD["same_setup_error_max_deg"]


def test_standing_posture_found_and_measured():
    # Standing posture (lean_video.posture) on video: before these clips it was checked on
    # hand-made tables only, and on the first rendered standing starts it was never found (a
    # still foot read as moving once no swing nearby set the contact thresholds; the hip's
    # frame-to-frame jitter read as 0.05 body heights per second). Measured 2026-12-04: found
    # on all six, 1.17-1.50 s of the 1.5 s, standing lean -0.82 to +1.12 deg off (the same
    # light-dependent offset as walking: +1.12 with the light from the side); never reported
    # on the 46 clips that open with walking.
    from lean_video.stated_accuracy import STANDING_METHOD

    assert len(STANDING) == 6
    errs = []
    for name in CLIPS:
        r = row(name)
        assert r["standing_found"] == (name in STANDING), name
        if name in STANDING:
            assert 1.0 <= r["standing_s"] <= 1.5 + 1e-6, name
            errs.append(abs(r["standing_lean_err"]))
    assert max(errs) <= STANDING_METHOD["lean_error_max_deg"] + 0.005


def test_stated_lean_relative_to_standing_covers_what_is_measured():
    # Whether the walking lean relative to the client's own standing lean cancels the pose
    # model's offset (measured 2026-12-04; not offered as a measure): per side it did in three
    # set-ups (side light -0.97/+0.73 -> +0.15/-0.40 deg; light from 60 deg -1.04/+0.97 ->
    # -0.17/+0.10; from behind +0.75/-0.58 -> -0.02/+0.19) and not in three (light from the
    # other side +0.46/-0.75 -> +0.42/-0.71; off axis +0.23/+0.03 -> -0.52/+0.79; even light
    # +0.15/-0.28 -> +0.59/-0.72): standing and walking offsets differ by up to 0.8 deg.
    # (Before foot offs walking toward were searched past the other foot's strike, the
    # walking lean read differently on four of the six and the largest relative error was 1.08.)
    from lean_video.stated_accuracy import STANDING_METHOD

    rel = [abs(row(n)[f"{s}_rel_standing_err"]) for n in STANDING for s in ("left", "right")]
    assert abs(max(rel) - STANDING_METHOD["relative_lean_error_max_deg"]) <= 0.05


@pytest.mark.parametrize("name", clips(AWAY_HEAVY))
def test_single_support_time_per_side(name):
    r = row(name)
    # Mean single-support time per side minus truth. Measured on 52 clips: -0.05..+0.10 s
    # walking toward the camera, symmetry index up to 17.3 % on equal sides (23.2 % and 22.8 %
    # on two clips before foot offs walking toward were searched past the other foot's strike).
    # On the first 41: -0.04..+0.10 s walking toward (+0.02..+0.14 before late strikes were bounded
    # by a minimum double support), -0.09..+0.06 s walking away on all 11 (-0.13..+0.08 before
    # foot offs walking away were taken on the rise of the heel's speed, version 0.2.4,
    # -0.09..+0.09 before they were searched after the other foot's landing, 0.2.5); the left/right
    # symmetry index read up to 15 % walking toward (11 % before that bound,
    # relative to the longer single-support times then; 21 %
    # before both feet shared one footprint tolerance, gait.shared_noise) and
    # 18 % walking away (24 % before version 0.2.4, 18 % with it; 18 % on the first walking-away clip, 27 % there before early foot offs were bounded the same way,
    # 51 % before the walking-away strike search reached past the other
    # foot's early foot off) on walks whose sides are equal; 27.9 % on the heavier
    # walker filmed from behind with pelvis markers (xfail above; 35.6 % before version 0.2.4,
    # 33.1 % with 0.2.4).
    # Bounds: measured plus about 0.02 s / 4 points.
    # No target of its own in the issue; it follows from the event-timing one.
    for side in ("left", "right"):
        assert -0.17 <= r[f"{side}_ss_err_s"] <= 0.17, side
    # (away 28 until version 0.2.5, when the others' largest fell from 24 to 18 %)
    bound = 22 if r["direction_true"] == "away" else 19
    assert abs(r["ss_symmetry_index_err_pct"]) <= bound


@pytest.mark.xfail(strict=True, reason="target not met on the strong-lean walker lit from either side: 1.28 and "
                                       "1.32 deg (1.38 in its later session), 1.07 on a marker client lit from "
                                       "60 deg (1.04 in a later walk), 1.07 on the slow walk away at 60 fps; 0.97 "
                                       "at most on the other 46 clips")
def test_target_per_side_lean_within_one_degree():
    # Met on the first 15 clips since both feet share one footprint tolerance walking toward.
    errs = per_side_lean_errors()
    assert max(errs) <= 1.0


@pytest.mark.xfail(strict=True, reason="target not met yet: foot strike medians over 33 ms on 4 of 41 clips "
                                       "walking toward (up to 52 ms) and 4 of 11 walking away (up to 39 ms), "
                                       "foot off on 4 of 41 walking toward (up to 40 ms), single events up to "
                                       "150 ms off")
def test_target_event_timing_one_frame():
    for n in CLIPS:
        r = row(n)
        for kind in ("foot_strike", "foot_off"):
            assert r[f"{kind}_median_ms"] <= 34 and r[f"{kind}_max_ms"] <= 100, (n, kind)


@pytest.mark.xfail(strict=True, reason="target not met without pelvis markers: the pose model's hip points give "
                                       "pelvic drop of the wrong sign (off by up to 8.7 deg)")
def test_target_pelvic_drop_within_one_and_a_half_degrees_without_markers():
    errs = [abs(row(n)[f"{s}_drop_err"]) for n in CLIPS if n not in MARKED for s in ("left", "right")
            if row(n)[f"{s}_drop_err"] is not None and np.isfinite(row(n)[f"{s}_drop_err"])]
    assert max(errs) <= 1.5


@pytest.mark.parametrize("name", MARKED)
def test_pelvic_drop_from_markers(name):
    r = row(name)
    assert r["pelvis_source"] == "pelvis markers"
    for side in ("left", "right"):
        # Issue target: per-side pelvic drop within 1.5 deg of truth. Measured on the 9
        # marker clips (true drop 0-5.7 deg per side): -0.57 to +0.56 deg walking toward,
        # -1.32 to +0.51 walking away (the heavier walker, held out, whose phases are found
        # worst; before frames with markers under 20 px apart were left out: -1.49 and a
        # phase 3.36 off).
        assert abs(r[f"{side}_drop_err"]) <= 1.5, side
        if r[f"{side}_drop_true"] >= 1.0:
            # the Trendelenburg direction is right wherever there is a drop to see
            assert r[f"{side}_drop_err"] + r[f"{side}_drop_true"] > 0, side
    # Each matched phase's mean drop: measured within 1.82 deg (1.56 before the short client at
    # 24 fps held out on the afternoon of 2026-12-04); bound 2.0 like each phase's lean.
    assert r["phase_drop_err_max"] <= 2.0


def test_stated_pelvis_accuracy_covers_what_is_measured():
    from lean_video.stated_accuracy import PELVIS_MARKER_METHOD

    errs = [abs(row(n)[f"{s}_drop_err"]) for n in MARKED for s in ("left", "right")]
    assert max(errs) <= PELVIS_MARKER_METHOD["per_side_error_max_deg"] + 0.005
    assert max(row(n)["phase_drop_err_max"] for n in MARKED) <= PELVIS_MARKER_METHOD["per_phase_error_max_deg"] + 0.005


# Clips and colours where scraps of clothing, sleeves or hands looked most like a pair of
# stickers when searched for, measured on every clip and colour (2026-12-03): pairs in at most
# 17 of 200 frames (8.5 %); before stickers had to stand out from their surroundings and lie
# no wider than 1.8 hip-point spacings, up to 101 of 214 (47 %, yellow on brown trousers).
# On the four clips held out on 2026-12-04: 38 of 367 (10.4 %, pink on a red shirt), else
# at most 20 of 183 (yellow beside green markers).
FALSE_PAIR_CASES = [("HP-014_2026-09-15", "pink"), ("truth_markers_drop_no_lean", "yellow"),
                    ("truth_markers_contralateral", "yellow"), ("truth_drop_no_lean", "pink"),
                    ("truth_heldout2_both_lean_60fps", "pink")]


@pytest.mark.parametrize("name, colour", FALSE_PAIR_CASES)
def test_no_false_marker_pairs(name, colour):
    from lean_video import pose
    from lean_video.pose_markers import MIN_FRAME_SHARE, MarkerSearch, track_pelvis_markers
    from tests.conftest import DEMO

    keypoints = pose.run_pose(DEMO / f"{name}.mp4").keypoints
    rows = track_pelvis_markers(DEMO / f"{name}.mp4", keypoints, search=MarkerSearch(colour=colour))
    seen = int((rows.loc[rows["landmark"] == "left_pelvis_marker", "visibility"] > 0).sum())
    # the analysis refuses markers seen in fewer than 20 % of frames
    assert seen < MIN_FRAME_SHARE * keypoints["frame"].nunique()


@pytest.mark.parametrize("name", ["truth_no_lean", "truth_walk_away"])
def test_a_phone_that_drops_frames(name, tmp_path):
    """One frame in 14 dropped, the others keeping their timestamps (a phone under load).

    Times come from the container's timestamps, never from frame index / rate: read by
    index, the clip would be 7 % short and late events off by up to 0.4 s. Measured
    (2026-12-03): every phase found on both; lean within 0.3 deg; event medians 21-31 ms.
    With 22 % dropped (one in 7 and one in 11), not tested: walking toward every phase
    found on two clips (event medians up to 46 ms); walking away 7 of 8 and 7 of 7
    (medians up to 64 ms; 6 of 8 before footprint stillness was judged by speed).
    """
    from tests.conftest import ffmpeg
    from tools.eval_accuracy import DEMO

    dropped = tmp_path / f"{name}_dropped.mp4"
    ffmpeg("-i", str(DEMO / f"{name}.mp4"), "-vf", "select='not(eq(mod(n\\,14)\\,6))'",
           "-fps_mode", "passthrough", "-c:v", "libx264", "-crf", "20", "-pix_fmt", "yuv420p", str(dropped))
    r, full = evaluate(name, video=dropped, pictures=True), row(name)
    assert r["n_frames"] < 0.95 * full["n_frames"]        # frames really were dropped
    assert r["phases_matched"] == r["phases_true"] and r["phases_spurious"] == 0
    assert abs(r["left_lean_err"]) <= 1.0 and abs(r["right_lean_err"]) <= 1.0
    # Bound: one and a half frames at 30 fps (the full clips' own medians are 17-37 ms).
    assert r["foot_strike_median_ms"] <= 50 and r["foot_off_median_ms"] <= 50
    assert r["pictures"] == ["left", "right"]


def test_motion_blur_does_not_mix_up_the_feet(tmp_path):
    """Two consecutive frames averaged (a crude stand-in for the blur of a long exposure in a dim corridor).

    On some frames the pose model then draws both legs between the real ones, or the
    body facing the other way. Measured on the 12 deg lean walker (2026-12-04): before
    such frames were blanked and swaps chosen by the least-movement labelling
    (gait_clean.repair_swaps), one merged frame set off a run of wrong swaps: 1 of 9
    phases found, one spurious, the right side's lean 5.67 deg off. Now 7 of 9, none
    spurious, lean -0.83 / +0.06 deg. The same blur on three other clips (two walking
    toward, one away): every phase but one on the walk away, lean within 0.40 deg, foot
    strikes walking toward found later (median 47-49 ms against 20-25 ms unblurred).
    """
    from tools.eval_conditions import make

    name = "truth_strong_lean_front_light"
    r = evaluate(name, video=make(name, "blur2", tmp_path))
    assert r["phases_spurious"] == 0 and r["phases_matched"] >= r["phases_true"] - 2
    assert abs(r["left_lean_err"]) <= 1.0 and abs(r["right_lean_err"]) <= 1.0  # issue tolerance
