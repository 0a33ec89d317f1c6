"""Accuracy of the whole analysis on the rendered truth clips (development tool).

For every clip in ``demo_clips/manifest.json``: run :func:`lean_video.pipeline.analyse`
and compare with the clip's truth JSON. Prints one row per clip; ``--json`` writes
the rows too. The same comparison functions are used by ``tests/test_accuracy.py``.

Usage: ``.venv/bin/python -m tools.eval_accuracy [--json out.json] [--no-mirror] [NAME ...]``
"""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

import numpy as np
import pandas as pd

REPO = Path(__file__).resolve().parents[1]
DEMO = REPO / "demo_clips"
SIDES = ("left", "right")


def truth_sides(truth: dict) -> dict:
    """Per side, the truth means over complete single-support windows."""
    out = {}
    for side in SIDES:
        win = [w for w in truth["single_support"] if w["stance_side"] == side and w["complete"]]
        out[side] = {
            "n": len(win),
            "lean": float(np.mean([w["mean_lean_toward_stance_deg"] for w in win])) if win else None,
            "drop": float(np.mean([w["mean_pelvic_drop_deg"] for w in win])) if win else None,
        }
    return out


def steady_start_s(truth: dict) -> float:
    """Clip time from which the walk is steady: 0, or one stride after a standing start.

    A client who stands before walking reaches a steady gait only after the
    first stride or two (gait initiation; Brenière & Do 1986, J Biomech
    19:1035-1040, from memory); the renderer even starts it abruptly, in one
    frame. So phases and events of that first stride are not counted.
    """
    if "standing" not in truth:
        return 0.0
    return float(truth["standing"]["end_s"]) + 120.0 / float(truth["walk"]["cadence_steps_min"])


def event_errors_ms(events: pd.DataFrame, truth: dict, *, max_ms: float = 200.0) -> dict:
    """Signed timing error (found minus true, ms) of each true event matched to the nearest found one.

    Events of the first stride after a standing start (gait initiation) are not counted.
    """
    out = {}
    begin = steady_start_s(truth)
    for kind, key in (("foot_strike", "foot_strike_s"), ("foot_off", "foot_off_s")):
        errs = []
        for side in SIDES:
            found = events[(events["side"] == side) & (events["event"] == kind)]["time_s"].to_numpy()
            for t in truth["events"][key][side]:
                if len(found) and t >= begin:
                    d = found[np.argmin(np.abs(found - t))] - t
                    if abs(d) * 1000 <= max_ms:
                        errs.append(d * 1000)
        out[kind] = errs
    return out


def phase_match(strides: pd.DataFrame, truth: dict) -> dict:
    """Found vs true single-support phases (complete, away from the clip ends), matched by overlap."""
    duration = truth["duration_s"]
    begin = max(steady_start_s(truth), 0.4)
    true_w = [w for w in truth["single_support"] if w["complete"] and w["start_s"] > begin
              and w["end_s"] < duration - 0.4]
    matched, lean_err, drop_err, coverage = 0, [], [], []
    for w in true_w:
        same = strides[strides["stance_side"] == w["stance_side"]]
        overlap = (np.minimum(same["end_s"], w["end_s"]) - np.maximum(same["start_s"], w["start_s"])).clip(lower=0)
        if len(same) and overlap.max() > 0.5 * (w["end_s"] - w["start_s"]):
            matched += 1
            coverage.append(float(overlap.max() / (w["end_s"] - w["start_s"])))
            best = same.iloc[int(np.argmax(overlap.to_numpy()))]
            lean_err.append(float(best["lean_mean_deg"] - w["mean_lean_toward_stance_deg"]))
            if np.isfinite(best["pelvic_drop_mean_deg"]):
                drop_err.append(float(best["pelvic_drop_mean_deg"] - w["mean_pelvic_drop_deg"]))
    # A found phase is spurious only if it matches no true window at all: phases
    # the clip edges exclude from the count above are real, not spurious.
    all_w = [w for w in truth["single_support"] if w["end_s"] > 0 and w["start_s"] < duration]
    spurious = 0
    for _, ph in strides.iterrows():
        hit = [w for w in all_w if w["stance_side"] == ph["stance_side"]
               and min(ph["end_s"], w["end_s"]) - max(ph["start_s"], w["start_s"]) > 0.5 * (ph["end_s"] - ph["start_s"])]
        spurious += not hit
    return {"true": len(true_w), "matched": matched, "found": int(len(strides)), "spurious": spurious,
            "phase_lean_err": lean_err, "phase_drop_err": drop_err, "coverage": coverage}


def marker_colour(truth: dict) -> str | None:
    """``green`` for clips rendered with pelvis markers (their colour), else None."""
    return "green" if truth["walk"].get("pelvis_marker_rgb") is not None else None


def evaluate(name: str, *, mirror: bool = True, video: Path | None = None, pictures: bool = False,
             true_roll: bool = False) -> dict:
    """Compare the analysis of clip ``name`` (or of ``video``, a re-encoding of it) with its truth.

    With ``pictures``, the row also names the sides whose peak-lean picture was found.
    With ``true_roll``, the camera roll the clip was rendered with is given to the
    analysis (as ``--camera-roll-deg``) instead of being estimated from the scene.
    """
    from lean_video import pipeline

    truth = json.loads((DEMO / f"{name}.truth.json").read_text())
    analysis = pipeline.analyse(video if video is not None else DEMO / f"{name}.mp4",
                                options=pipeline.AnalysisOptions(
                                    pose_mirror_average=mirror, pelvis_markers=marker_colour(truth),
                                    camera_roll_deg=float(truth["camera"]["roll_deg"]) if true_roll else None))
    s = analysis.summary
    ts = truth_sides(truth)
    ev = event_errors_ms(analysis.events, truth)
    ph = phase_match(analysis.strides, truth)
    row = {"clip": name, "direction_true": truth["direction"], "direction": s["direction"],
           "roll_true": truth["camera"]["roll_deg"], "roll": s["camera_roll_deg"], "roll_source": s["camera_roll_source"],
           "phases_true": ph["true"], "phases_matched": ph["matched"], "phases_found": ph["found"], "phases_spurious": ph["spurious"],
           "phase_coverage_min": min(ph["coverage"], default=None),
           "phase_lean_err_max": max(np.abs(ph["phase_lean_err"]), default=None),
           "pelvis_source": s.get("pelvic_obliquity_source"),
           "marker_frame_share": s["quality"].get("n_pelvis_marker_frames", 0) / max(s["quality"]["n_frames"], 1),
           "phase_drop_err_max": max(np.abs(ph["phase_drop_err"]), default=None)}
    for side in SIDES:
        got = s["sides"][side]
        row[f"{side}_lean_err"] = None if got.get("lean_mean_deg") is None or ts[side]["lean"] is None else \
            got["lean_mean_deg"] - ts[side]["lean"]
        row[f"{side}_drop_err"] = None if got.get("pelvic_drop_mean_deg") is None or ts[side]["drop"] is None else \
            got["pelvic_drop_mean_deg"] - ts[side]["drop"]
        row[f"{side}_lean_true"] = ts[side]["lean"]
        row[f"{side}_drop_true"] = ts[side]["drop"]
    ss_true = {}
    for side in SIDES:
        w = [x["end_s"] - x["start_s"] for x in truth["single_support"] if x["stance_side"] == side and x["complete"]]
        ss_true[side] = float(np.mean(w)) if w else None
        got = s["sides"][side].get("single_support_mean_s")
        row[f"{side}_ss_err_s"] = None if got is None or ss_true[side] is None else got - ss_true[side]
    si = s.get("asymmetry", {}).get("single_support_symmetry_index_pct")
    si_true = None if None in ss_true.values() else \
        100.0 * (ss_true["left"] - ss_true["right"]) / (0.5 * (ss_true["left"] + ss_true["right"]))
    row["ss_symmetry_index_err_pct"] = None if si is None or si_true is None else si - si_true
    lean_true = np.asarray(truth["per_frame"]["lean_2d_deg"], float)
    n = min(len(lean_true), len(analysis.frames))
    diff = analysis.frames["trunk_lean_deg"].to_numpy()[:n] - lean_true[:n]
    row["lean_frame_bias_deg"] = float(np.nanmean(diff)) if np.isfinite(diff).any() else None
    for kind, errs in ev.items():
        row[f"{kind}_median_ms"] = float(np.median(np.abs(errs))) if errs else None
        row[f"{kind}_max_ms"] = float(np.max(np.abs(errs))) if errs else None
        row[f"{kind}_bias_ms"] = float(np.median(errs)) if errs else None
    row["n_frames"] = len(analysis.frames)
    st = s.get("standing")
    row["standing_found"] = st is not None
    row["standing_s"] = st["duration_s"] if st else None
    row["standing_lean_err"] = row["standing_true_deg"] = None
    if "standing" in truth:
        # standing lean against the truth's image-plane lean (as lean_frame_bias_deg);
        # per side, the walking lean relative to standing against the same from the
        # truth's 3-D lean (as the per-side truth)
        true_2d, true_3d = truth["standing"]["lean_2d_deg"], truth["standing"]["lean_3d_deg"]
        row["standing_true_deg"] = true_2d
        if st:
            row["standing_lean_err"] = st["lean_deg"] - true_2d
            for side, sg in (("left", -1.0), ("right", 1.0)):
                if row[f"{side}_lean_err"] is not None:
                    row[f"{side}_rel_standing_err"] = row[f"{side}_lean_err"] - sg * (st["lean_deg"] - true_3d)
    if pictures:
        row["pictures"] = sorted(pipeline.peak_pictures(analysis))
    return row


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("names", nargs="*")
    parser.add_argument("--json", default=None)
    parser.add_argument("--no-mirror", action="store_true", help="pose model without its mirror-image pass")
    parser.add_argument("--true-roll", action="store_true",
                        help="give the analysis the rendered camera roll instead of estimating it")
    parser.add_argument("--clips-dir", type=Path, default=None,
                        help="folder of rendered clips, their truth and manifest.json (default demo_clips/)")
    args = parser.parse_args(argv)
    if args.clips_dir is not None:
        global DEMO
        DEMO = args.clips_dir
    manifest = json.loads((DEMO / "manifest.json").read_text())
    names = args.names or [c["name"] for c in manifest["clips"]]
    rows = [evaluate(n, mirror=not args.no_mirror, true_roll=args.true_roll) for n in names]
    table = pd.DataFrame(rows).set_index("clip")
    with pd.option_context("display.width", 250, "display.max_columns", 40, "display.float_format", "{:.2f}".format):
        print(table.T.to_string())
    if args.json:
        Path(args.json).write_text(json.dumps(rows, indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main())
