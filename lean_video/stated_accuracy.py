"""What each measure is made from and how far it was checked: stated in every summary and report.

The numbers are measurements of the whole analysis on the rendered truth clips
(``tools/eval_accuracy.py``); ``tests/test_accuracy.py`` fails when a clip
measures worse than stated here, so these statements cannot drift from the
evidence. Accuracy on real clients is not measured.
"""

from __future__ import annotations

#: How pelvic obliquity is measured, and how far to trust it (stated in every summary and report).
PELVIS_METHOD = {
    "source": "pose-model hip landmarks (line through left_hip and right_hip)",
    "validated": False,
    "note": ("Measured from the pose model's two hip points. On rendered test walkers with a known pelvic drop "
             "of up to 6 degrees these points moved the wrong way (correlation -0.7 to -0.95 with the true "
             "obliquity; per-side drop off by up to 8 degrees, mostly in the wrong direction): their line "
             "follows the trunk rather than the pelvis. Two body-outline methods tried instead were "
             "not reliable either (per-side errors up to 6.6 and 2.6 degrees, the better one largely following "
             "the trunk lean rather than the pelvis). Do not use these pelvic-drop numbers for clinical decisions; judge "
             "pelvic drop (Trendelenburg sign) by eye, or put two stickers on the pelvis and analyse with "
             "--pelvis-markers, which was validated. Trunk lean is not affected."),
}

#: Pelvic obliquity from two skin markers over the pelvis (``--pelvis-markers``).
PELVIS_MARKER_METHOD = {
    "source": ("two coloured skin markers over the anterior (walking toward) or posterior (walking away) "
               "superior iliac spines, found by colour around the pose model's hips (lean_video.pose_markers)"),
    "validated": True,
    "validated_on": ("11 rendered walking clips with pelvic drop of 2-8 degrees and markers 4 cm across "
                     "(nine walking toward, two away; tools/eval_accuracy.py, 2026-12-04)"),
    "per_side_error_max_deg": 1.32,
    "per_phase_error_max_deg": 1.82,
    "note": ("Measured from two coloured stickers over the pelvis. On 11 rendered test walks with a known pelvic "
             "drop of 2 to 8 degrees, with and without trunk lean, the per-side mean drop was within 0.57 "
             "degrees of the truth walking toward the camera and within 1.32 walking away (each phase within "
             "1.9), the right way wherever the true drop was 1.3 degrees or more. Seen from behind, the "
             "posterior spines are close together, so frames where the markers lie less than 20 pixels apart "
             "(the far part of a walk away) are not used: film walking toward the camera for pelvic drop. "
             "It is only as good as the markers' placement: both must sit on the same bony points on the two "
             "sides (anterior superior iliac spines when walking toward the camera, posterior ones when "
             "walking away), on skin or tight clothing that does not slide. Far from the camera, or when a hand "
             "covers a marker, the drop of that phase is left out and the report says so. Accuracy on real "
             "clients is not yet measured."),
}

#: How trunk lean is measured and how far it was checked (stated in every summary and report).
LEAN_METHOD = {
    "source": ("pose-model shoulder and hip landmarks, each the average of the model's answers on the frame and on "
               "its mirror image (mid-hip to mid-shoulder line against the roll-corrected vertical)"),
    "validated_on": ("52 rendered walking clips with exact truth, 11 of them held out until the methods were "
                     "settled, 5 later sessions of earlier clients and 6 standing starts in earlier set-ups "
                     "(tools/eval_accuracy.py, 2026-12-04)"),
    "per_side_error_median_deg": 0.27,
    "per_side_error_max_deg": 1.38,
    "note": ("On 52 rendered test walks with a known lean, the per-side mean lean was within 1.0 degree of "
             "the truth on 46 (median 0.27; without the mirror-image pass, option --no-mirror, larger). Of "
             "the six others, five were filmed in light from one side: a walker with a large lean "
             "(12 degrees at its peak) lit from one side or the other, 1.3 degrees off, and 1.38 in a "
             "later walk in the same light, and one lit from 60 degrees to the side, 1.07 degrees off "
             "(1.04 in a later walk); the sixth, a slow walker filmed from behind, read 1.07 degrees low "
             "on one side. Light from one side "
             "shifted the lean of every frame by up to 1.4 degrees, toward or away from the light. These "
             "errors do not shrink with more steps, so the 95% interval shown covers step-to-step variation "
             "only. Treat a left/right difference below about 1.5 degrees with caution, and film in even "
             "light rather than with a window or lamp to one side. The shift stays the same between visits "
             "filmed in the same place and light, so a change between such visits was read more closely "
             "(within 1.16 degrees, median 0.22; see the history report). Accuracy on real clients is not "
             "yet measured."),
}

#: How the standing posture at the start of a clip was checked (stated in every summary and report).
STANDING_METHOD = {
    "validated_on": ("6 rendered clips whose walker first stands still for 1.5 s with a habitual lean of -1.5 "
                     "to +2 degrees (truth_stand_*; tools/eval_accuracy.py, 2026-12-04)"),
    "lean_error_max_deg": 1.12,
    "relative_lean_error_max_deg": 0.79,
    "note": ("Found on all 6 rendered test clips that open with the client standing still (1.2-1.5 s of the "
             "1.5 s), and on none of the 46 that open with walking. The standing lean was within 1.12 "
             "degrees of the truth: it carries the same light-dependent offset of the pose model as the "
             "walking lean. Subtracting it from the walking lean did not remove that offset reliably "
             "(per side within 0.40 degrees in three set-ups, up to 0.79 in the other three), so the "
             "walking lean is reported as measured and the standing lean beside it."),
}

#: How far a change in per-side lean between two sessions was checked (history report).
LEAN_CHANGE_METHOD = {
    "validated_on": ("11 pairs of rendered walks of one client each, filmed in the same room, light, camera "
                     "place and clothes with a different walk and lean (truth_followup_* and truth_stand_* "
                     "against the clip of the same set-up; tools/eval_accuracy.py, 2026-12-04)"),
    "same_setup_error_median_deg": 0.22,
    "same_setup_error_max_deg": 1.16,
    "other_setup_error_p95_deg": 1.35,
    "other_setup_error_max_deg": 2.39,
    "note": ("The pose model's light- and build-dependent lean offset stayed put between two walks filmed "
             "the same way (its per-frame value differed by at most 0.18 degrees within the 11 pairs, "
             "while it ranged from -0.87 to +1.36 between set-ups), so it largely cancels in a change: the "
             "per-side change in lean was within 0.22 degrees of the truth in the median and 1.16 at most "
             "(a large lean of 12 degrees read low in the first session, so its fall to 6-8 degrees read "
             "19-40 % smaller than it was), where the same clips' own per-side errors reached 1.38. "
             "Between sessions filmed in different places or light, the offsets differ: over all pairs "
             "of 41 other test walks the per-side errors differed by 1.35 degrees or less in 95 of 100 "
             "pairs and by up to 2.39. A change in the history report is marked only when it exceeds the "
             "step-to-step minimal detectable change plus the 1.16 degrees of the same filming set-up: "
             "film every visit in the same place, light and camera position."),
}

#: How foot events were checked (stated in every summary and report).
EVENTS_METHOD = {
    "validated_on": ("52 rendered walking clips with exact truth, 11 of them held out until the methods were "
                     "settled (tools/eval_accuracy.py, 2026-12-04)"),
    "foot_off_median_error_ms": {"toward": [6, 40], "away": [4, 18]},
    "foot_strike_median_error_ms": {"toward": [12, 52], "away": [20, 39]},
    "single_support_error_s": {"toward": [-0.05, 0.10], "away": [-0.09, 0.06]},
    "single_support_symmetry_index_error_pct": {"toward": 18, "away": 28},
    "note": ("Walking toward the camera: foot offs were found within about 30 ms (median per clip) on rendered "
             "test walks, 38 and 40 ms early on two slow walks with a long double support and 34 ms on two walkers lit from the side. The heel lands hidden behind "
             "the forefoot and the pose model finds the strike late, so "
             "each strike is kept at least 8 % of the stride before the other foot's foot off (a "
             "double support shorter than that is rare in walking), which left strikes 24 ms early to 44 ms late (median "
             "per clip; 34-109 ms without it) and single-support times up to 0.10 s long. Where the client's "
             "double support is long, as in slow or painful walking, strikes can stay later. Walking away "
             "strikes were 20-39 ms off and foot offs 4-18 ms (median per clip; seen from behind, the pose "
             "model's heel rises like the ankle, late, so foot off is taken as its upward speed "
             "approaches its peak, searched after the other foot has landed). On test walks with "
             "equal sides, the left/right difference in single-support time read up to 18 % (28 % walking away): do not read "
             "a difference below about 25 % (40 % walking away) as a real asymmetry; compare single-support "
             "times between sessions filmed the same way."),
}
