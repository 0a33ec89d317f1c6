"""Tests of the truth-clip renderer (tools/synth), the source of known answers.

Tolerances: 5 mm foot slip and 0.2 deg projection agreement are the project's own
acceptance limits (common practice, no source). Gait event timing conventions
(single support = between contralateral foot off and contralateral foot strike)
follow Perry & Burnfield 2010, "Gait Analysis: Normal and Pathological Function",
2nd ed., ch. 2 (phases of gait).
"""
from __future__ import annotations

import json
import sys
from dataclasses import replace
from pathlib import Path

import cv2
import numpy as np
import pytest

ROOT = Path(__file__).resolve().parents[1]
if str(ROOT) not in sys.path:  # tools/ is dev tooling, not installed with the package
    sys.path.insert(0, str(ROOT))

from tools.synth.gait import WalkParams  # noqa: E402
from tools.synth.render_all import encode, simulate  # noqa: E402
from tools.synth.scene import CameraParams, RoomParams, camera_matrices, project  # noqa: E402

TINY_CAM = CameraParams(width_px=160, height_px=284)
SHORT_WALK = WalkParams(seed=3, start_distance_m=4.2, end_distance_m=2.6, speed_m_s=1.0,
                        lean_right_stance_deg=8.0, lean_left_stance_deg=3.0,
                        pelvic_drop_right_stance_deg=5.0, pelvic_drop_left_stance_deg=2.0)
FPS = 30.0


@pytest.fixture(scope="module")
def tiny():
    return simulate(SHORT_WALK, TINY_CAM, RoomParams(), FPS)


@pytest.fixture(scope="module")
def truth_only():
    """Longer walk, truth only (no rendering), to cover several strides."""
    walk = replace(SHORT_WALK, start_distance_m=7.5, end_distance_m=2.0, speed_m_s=0.8)
    return simulate(walk, CameraParams(), RoomParams(), FPS, render=False)[1]


def test_rendering_is_deterministic_for_a_seed(tiny):
    frames2, truth2 = simulate(SHORT_WALK, TINY_CAM, RoomParams(), FPS)
    frames1, truth1 = tiny
    assert len(frames1) == len(frames2) == truth1["frame_count"]
    assert all(np.array_equal(a, b) for a, b in zip(frames1, frames2))
    assert json.dumps(truth1) == json.dumps(truth2)
    # A different seed changes the stride variability, so the check can fail.
    _, other = simulate(replace(SHORT_WALK, seed=4), TINY_CAM, RoomParams(), FPS, render=False)
    assert other["events"] != truth1["events"]


def _runs(mask):
    idx = np.flatnonzero(mask)
    return [r for r in np.split(idx, np.flatnonzero(np.diff(idx) > 1) + 1) if len(r)]


@pytest.mark.parametrize("side", ["left", "right"])
def test_stance_foot_does_not_slide(truth_only, side):
    pf = truth_only["per_frame"]
    contact = np.array(pf[f"contact_{side}"])
    heel = np.array(pf["world_m"][f"{side}_heel"])
    toe = np.array(pf["world_m"][f"{side}_foot_index"])
    runs = _runs(contact)
    assert len(runs) >= 4
    for run in runs:
        # Some point of the foot touches the floor in every contact frame.
        assert np.all(np.minimum(heel[run, 2], toe[run, 2]) < 1e-3)
        for pts in (heel[run], toe[run]):
            on = pts[:, 2] < 1e-3
            if on.sum() > 1:
                assert np.ptp(pts[on, :2], axis=0).max() < 0.005
    # Swing: the foot is off the floor.
    swing = ~contact
    assert np.all(np.minimum(heel[swing, 2], toe[swing, 2]) > 0.0)


def test_single_support_windows_agree_with_foot_contacts(truth_only):
    pf = truth_only["per_frame"]
    cl, cr = np.array(pf["contact_left"]), np.array(pf["contact_right"])
    ss = np.array([s or "" for s in pf["single_support"]])
    assert np.array_equal(ss == "right", cr & ~cl)
    assert np.array_equal(ss == "left", cl & ~cr)
    assert np.all(cl | cr)  # walking: never a flight phase
    ev = truth_only["events"]
    for w in truth_only["single_support"]:
        if not w["complete"]:
            continue
        other = "left" if w["stance_side"] == "right" else "right"
        assert min(abs(np.array(ev["foot_off_s"][other]) - w["start_s"])) < 1e-9
        assert min(abs(np.array(ev["foot_strike_s"][other]) - w["end_s"])) < 1e-9


def test_lean_and_pelvic_drop_reach_their_targets(truth_only):
    windows = [w for w in truth_only["single_support"] if w["complete"]]
    assert len(windows) >= 6
    for w in windows:
        assert w["peak_lean_toward_stance_deg"] == pytest.approx(
            w["target_peak_lean_toward_stance_deg"], abs=0.02)
        # Pelvic yaw (transverse rotation) stretches the frontal angle by 1/cos(yaw).
        assert w["peak_pelvic_drop_deg"] == pytest.approx(w["target_peak_pelvic_drop_deg"], abs=0.05)
        assert w["mean_lean_toward_stance_deg"] < w["peak_lean_toward_stance_deg"]


def test_projected_lean_equals_3d_lean_for_a_level_camera():
    walk = replace(SHORT_WALK, start_distance_m=5.0, end_distance_m=3.0)
    cam = CameraParams(height_m=1.25, pitch_deg=0.0, roll_deg=0.0)
    truth = simulate(walk, cam, RoomParams(), FPS, render=False)[1]
    l3 = np.array(truth["per_frame"]["lean_3d_deg"])
    l2 = np.array(truth["per_frame"]["lean_2d_image_axis_deg"])
    assert np.abs(l3).max() > 5.0  # the walk really leans
    assert np.abs(l2 - l3).max() < 0.2


def test_camera_roll_turns_verticals_clockwise():
    """DEVELOPERS.md: camera_roll_deg > 0 when world verticals appear turned clockwise."""
    k, r, c = camera_matrices(CameraParams(roll_deg=3.0, pitch_deg=0.0))
    a, b = project(np.array([[0.0, 4.0, 0.5], [0.0, 4.0, 1.5]]), k, r, c)
    up = b - a  # image vector of world "up"; clockwise turn moves its top to the right
    angle = np.degrees(np.arctan2(up[0], -up[1]))
    assert angle == pytest.approx(3.0, abs=1e-6)


def test_truth_pixels_land_on_the_rendered_figure(tiny):
    frames, truth = tiny
    empty = simulate(replace(SHORT_WALK, start_distance_m=60.0, end_distance_m=58.4),
                     TINY_CAM, RoomParams(), FPS)[0][0]
    i = len(frames) - 1
    mask = np.abs(frames[i].astype(int) - empty.astype(int)).sum(axis=2) > 30
    ys, xs = np.nonzero(mask)
    px = truth["per_frame"]["image_px"]
    for name in ("left_hip", "right_hip", "left_shoulder", "right_shoulder"):
        u, v = px[name][i]
        assert mask[int(v), int(u)], name
    assert px["left_hip"][i][0] > px["right_hip"][i][0]  # facing the camera
    assert xs.min() - 1 <= px["right_shoulder"][i][0] and px["left_shoulder"][i][0] <= xs.max() + 1


def test_portrait_stored_landscape_decodes_upright(tiny, tmp_path):
    frames = tiny[0][:8]
    path = tmp_path / "rot.mp4"
    info = encode(frames, path, FPS, crf=18, stored_landscape=True)
    assert (info["stored_width_px"], info["stored_height_px"]) == (284, 160)
    raw = cv2.VideoCapture(str(path))
    raw.set(cv2.CAP_PROP_ORIENTATION_AUTO, 0)
    ok, stored = raw.read()
    assert ok and stored.shape[:2] == (160, 284)  # really stored landscape
    # DEVELOPERS.md: OpenCV's orientation sign is opposite to ffprobe's (-90 here).
    assert raw.get(cv2.CAP_PROP_ORIENTATION_META) == 90
    cap = cv2.VideoCapture(str(path))
    cap.set(cv2.CAP_PROP_ORIENTATION_AUTO, 1)
    ok, bgr = cap.read()
    assert ok and bgr.shape[:2] == (284, 160)
    diff = np.abs(bgr[:, :, ::-1].astype(int) - frames[0].astype(int)).mean()
    assert diff < 6.0


@pytest.mark.slow
@pytest.mark.parametrize("name", ["HP-014_2026-09-01", "HP-014_2026-09-15",
                                  "HP-014_2026-09-29", "HP-014_2026-10-13"])
def test_pose_stage_finds_the_figure_in_demo_clips(name):
    from lean_video.pose import estimate_pose

    df = estimate_pose(ROOT / "demo_clips" / f"{name}.mp4")
    key = df[df["landmark"].isin(["left_shoulder", "right_shoulder", "left_hip", "right_hip"])]
    ok = key.assign(v=(key["visibility"] >= 0.5) & key["x_px"].notna()).groupby("frame")["v"].all()
    truth = json.loads((ROOT / "demo_clips" / f"{name}.truth.json").read_text())
    assert len(ok) == truth["frame_count"]
    assert ok.mean() >= 0.95
