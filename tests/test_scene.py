"""Camera roll and camera motion on synthetic pictures with known geometry.

Every expected value here comes from how the picture was drawn (a known
rotation, a pinhole projection, a known similarity per frame), not from the
code under test. Tolerances are engineering choices (common practice, no
source): 0.5 deg for roll, as asked by the project brief, and sub-pixel /
0.05 deg for tracking noise-free synthetic motion.
"""

from __future__ import annotations

import dataclasses
import math

import cv2
import numpy as np
import pytest

from lean_video.errors import LeanVideoError
from lean_video.scene import (
    RollEstimate,
    estimate_camera_roll,
    estimate_roll_from_clip,
    expand_box,
    nearest_box,
    person_box_from_points,
    person_boxes_by_frame,
)
from lean_video.scene_motion import (
    CameraMotion,
    classify,
    estimate_camera_motion,
    stabilise_points,
)

SIZE = (640, 480)  # (height, width), portrait like a phone


# --------------------------------------------------------------------------- pictures

def room_canvas(n: int = 1100) -> np.ndarray:
    """A wall with a door frame, shelf uprights and boards, wall corners, floor line."""
    c = np.full((n, n, 3), 150, np.uint8)
    c = np.clip(c + np.linspace(-20, 20, n)[None, :, None], 0, 255).astype(np.uint8)
    o = n // 2
    cv2.rectangle(c, (o - 200, o - 250), (o - 60, o + 330), (90, 60, 40), 12, cv2.LINE_AA)
    for x in (60, 140, 220):
        cv2.line(c, (o + x, o - 280), (o + x, o + 300), (60, 60, 70), 8, cv2.LINE_AA)
    for y in (-200, -90, 20, 130, 240):
        cv2.line(c, (o + 60, o + y), (o + 220, o + y), (200, 200, 210), 6, cv2.LINE_AA)
    for x, col in ((-320, (110, 110, 120)), (330, (180, 180, 190))):
        cv2.line(c, (o + x, o - 450), (o + x, o + 450), col, 4, cv2.LINE_AA)
    cv2.line(c, (o - 450, o + 300), (o + 450, o + 300), (80, 80, 80), 5, cv2.LINE_AA)
    return c


def rolled(canvas: np.ndarray, roll_deg: float, *, seed: int = 0) -> np.ndarray:
    """Turn the canvas content CLOCKWISE by roll_deg about its centre, crop, add noise.

    cv2.getRotationMatrix2D turns content counter-clockwise for a positive
    angle (OpenCV documentation, getRotationMatrix2D), hence the minus sign;
    test_get_rotation_matrix_sign checks this on a drawn line.
    """
    n = canvas.shape[0]
    m = cv2.getRotationMatrix2D((n / 2, n / 2), -roll_deg, 1.0)
    r = cv2.warpAffine(canvas, m, (n, n), flags=cv2.INTER_LINEAR)
    h, w = SIZE
    out = r[(n - h) // 2:(n - h) // 2 + h, (n - w) // 2:(n - w) // 2 + w].astype(float)
    out += np.random.default_rng(seed).normal(0, 4, out.shape)
    return np.ascontiguousarray(np.clip(out, 0, 255).astype(np.uint8))


def camera_rotation(pitch_down_deg: float, roll_deg: float) -> np.ndarray:
    """World (X right, Y up, Z forward) -> camera (x right, y down, z along the axis).

    The roll turns camera x toward camera y, i.e. picture content clockwise.
    """
    t, g = math.radians(pitch_down_deg), math.radians(roll_deg)
    pitch = np.array([[1, 0, 0], [0, -math.cos(t), -math.sin(t)], [0, -math.sin(t), math.cos(t)]])
    roll = np.array([[math.cos(g), -math.sin(g), 0], [math.sin(g), math.cos(g), 0], [0, 0, 1]])
    return roll @ pitch


def project(points_w, rot, f, cx, cy) -> np.ndarray:
    pc = (rot @ np.asarray(points_w, float).T).T
    return np.column_stack([f * pc[:, 0] / pc[:, 2] + cx, f * pc[:, 1] / pc[:, 2] + cy])


def tilt_deg(p_bottom, p_top) -> float:
    """Tilt of an upward segment, positive when its top leans right (clockwise)."""
    return math.degrees(math.atan2(p_top[0] - p_bottom[0], p_bottom[1] - p_top[1]))


F_PX = 520.0
UPRIGHTS = [(-2.2, 5.0), (-1.3, 5.0), (-0.5, 6.5), (0.4, 6.5), (1.2, 6.5), (2.0, 5.5), (-2.8, 7.0), (2.7, 7.0)]


def keystone_picture(pitch_down_deg: float, roll_deg: float, uprights=UPRIGHTS):
    """Pinhole picture of world-vertical posts (floor to 3 m) and horizontal boards.

    Returns the picture, the true roll at the image centre (image of world up
    at the principal point) and the tilts of the drawn posts.
    """
    h, w = SIZE
    rot = camera_rotation(pitch_down_deg, roll_deg)
    img = np.full((h, w, 3), 140, np.uint8)
    tilts = []
    for i, (x, z) in enumerate(uprights):
        bottom, top = project([[x, -1.5, z], [x, 1.5, z]], rot, F_PX, w / 2, h / 2)
        tilts.append(tilt_deg(bottom, top))
        col = (60 + 20 * (i % 3), 50, 40 + 30 * (i % 2))
        cv2.line(img, tuple(np.round(bottom).astype(int)), tuple(np.round(top).astype(int)), col, 5, cv2.LINE_AA)
    for y in (-1.5, -0.5, 0.5):
        a, b = project([[-3, y, 6.0], [3, y, 6.0]], rot, F_PX, w / 2, h / 2)
        cv2.line(img, tuple(np.round(a).astype(int)), tuple(np.round(b).astype(int)), (210, 210, 210), 4, cv2.LINE_AA)
    out = img.astype(float) + np.random.default_rng(1).normal(0, 4, img.shape)
    axis = rot.T @ np.array([0.0, 0.0, 1.0])
    a, b = project([5 * axis, 5 * axis + [0, 1e-3, 0]], rot, F_PX, w / 2, h / 2)
    truth = tilt_deg(a, b)
    return np.ascontiguousarray(np.clip(out, 0, 255).astype(np.uint8)), truth, np.array(tilts)


def add_person(img: np.ndarray, box, stripe_tilt_deg: float, n_stripes: int = 10) -> np.ndarray:
    """A person-like blob: head, body with image-vertical sides and tilted stripes."""
    out = img.copy()
    x0, y0, x1, y1 = box
    cv2.ellipse(out, ((x0 + x1) // 2, y0 + 30), (25, 30), 0, 0, 360, (230, 190, 160), -1, cv2.LINE_AA)
    cv2.rectangle(out, (x0 + 10, y0 + 60), (x1 - 10, y1), (40, 90, 170), -1)
    half = math.tan(math.radians(stripe_tilt_deg)) * (y1 - y0 - 80) / 2
    for x in np.linspace(x0 + 20 + abs(half), x1 - 20 - abs(half), n_stripes):
        cv2.line(out, (int(x - half), y1 - 10), (int(x + half), y0 + 70), (250, 250, 250), 5, cv2.LINE_AA)
    return out


def write_clip(path, frames_rgb, fps: float = 30.0) -> None:
    h, w = frames_rgb[0].shape[:2]
    writer = cv2.VideoWriter(str(path), cv2.VideoWriter_fourcc(*"mp4v"), fps, (w, h))
    assert writer.isOpened(), "OpenCV could not open an mp4v writer"
    for f in frames_rgb:
        writer.write(cv2.cvtColor(f, cv2.COLOR_RGB2BGR))
    writer.release()


# --------------------------------------------------------------------------- roll

def test_get_rotation_matrix_sign():
    """A positive getRotationMatrix2D angle turns content counter-clockwise on screen."""
    m = cv2.getRotationMatrix2D((100.0, 100.0), -5.0, 1.0)  # what rolled() uses for roll +5
    top, bottom = m @ [100, 50, 1], m @ [100, 150, 1]
    assert top[0] > 100 > bottom[0]  # top went right: clockwise, positive roll
    assert tilt_deg(bottom, top) == pytest.approx(5.0)


@pytest.mark.parametrize("roll_deg", [2.0, 3.5, 5.0, -2.0, -4.0])
def test_roll_of_rotated_room(roll_deg):
    est = estimate_camera_roll([rolled(room_canvas(), roll_deg)])
    assert est.source == "scene"
    assert est.roll_deg == pytest.approx(roll_deg, abs=0.5)
    assert est.confidence > 0.5 and est.n_segments >= 6


def test_level_room_reads_zero_and_pools_frames():
    frames = [rolled(room_canvas(), 0.0, seed=s) for s in range(3)]
    est = estimate_camera_roll(frames)
    assert abs(est.roll_deg) < 0.5
    assert est.n_frames == 3 and est.n_segments >= 3 * 6


def test_keystone_pitched_and_rolled():
    img, truth, tilts = keystone_picture(10.0, 3.0)
    assert truth == pytest.approx(3.0, abs=1e-6)  # pure roll about the optical axis shows at the centre
    assert np.ptp(tilts) > 3.0  # the posts really converge (keystone)
    est = estimate_camera_roll([img])
    assert est.source == "scene"
    assert est.roll_deg == pytest.approx(truth, abs=0.5)


def test_keystone_with_posts_on_one_side_only():
    """Posts only right of centre: their mean tilt is biased, the vanishing point is not."""
    right = [(0.6, 5.0), (1.2, 5.5), (1.8, 6.0), (2.4, 6.5), (3.0, 7.0)]
    img, truth, tilts = keystone_picture(12.0, -2.5, right)
    assert abs(float(np.median(tilts)) - truth) > 1.0  # a plain median would fail here
    est = estimate_camera_roll([img])
    assert est.roll_deg == pytest.approx(truth, abs=0.5)


@pytest.mark.parametrize("stripe_tilt_deg", [8.0, -6.0])
def test_person_edges_are_ignored_inside_box(stripe_tilt_deg):
    box = (140, 60, 360, 630)  # a client close to the camera fills much of the picture
    img = add_person(rolled(room_canvas(), 3.0), box, stripe_tilt_deg)
    est = estimate_camera_roll([img], person_boxes=[box])
    assert est.roll_deg == pytest.approx(3.0, abs=0.5)
    naive = estimate_camera_roll([img])
    # The fixture must matter: without the box the blob spoils the estimate or its confidence.
    assert abs(naive.roll_deg - 3.0) > 0.5 or naive.confidence < est.confidence - 0.3


def test_single_upright_still_gives_its_tilt():
    """Segments at one x only cannot separate roll from keystone; with no pitch the tilt is the roll."""
    canvas = np.full((1100, 1100, 3), 150, np.uint8)
    for x in (740, 760):  # one post right of centre, both edges, cut into pieces by shelves
        for y0 in range(250, 850, 100):
            cv2.line(canvas, (x, y0), (x, y0 + 80), (40, 40, 40), 6, cv2.LINE_AA)
    est = estimate_camera_roll([rolled(canvas, 4.0)])
    assert est.source == "scene"
    assert est.roll_deg == pytest.approx(4.0, abs=0.5)


def test_blank_picture_is_not_trusted():
    est = estimate_camera_roll([np.full((*SIZE, 3), 128, np.uint8)])
    assert est == RollEstimate(0.0, 0.0, 0, 0.0, "none", 1)


def test_only_horizontal_lines_is_not_trusted():
    img = np.full((*SIZE, 3), 140, np.uint8)
    for y in range(60, 600, 60):
        cv2.line(img, (20, y), (460, y), (20, 20, 20), 4, cv2.LINE_AA)
    est = estimate_camera_roll([img])
    assert est.source == "none" and est.roll_deg == 0.0 and est.confidence == 0.0


def test_fan_of_lines_from_inside_the_picture_is_not_trusted():
    """Lines radiating from a point just below the centre are not world verticals."""
    img = np.full((*SIZE, 3), 140, np.uint8)
    vp = np.array([240.0, 420.0])
    for a in np.radians(np.linspace(-13, 13, 12)):
        up = np.array([math.sin(a), -math.cos(a)])
        p0, p1 = (vp + 30 * up).astype(int), (vp + 400 * up).astype(int)
        cv2.line(img, tuple(p0.tolist()), tuple(p1.tolist()), (30, 30, 30), 4, cv2.LINE_AA)
    est = estimate_camera_roll([img])
    assert est.source == "none" and est.roll_deg == 0.0


def test_roll_input_errors():
    img = rolled(room_canvas(), 0.0)
    with pytest.raises(LeanVideoError, match="frames is empty"):
        estimate_camera_roll([])
    with pytest.raises(LeanVideoError, match="one entry per frame"):
        estimate_camera_roll([img], person_boxes=[None, None])
    with pytest.raises(LeanVideoError, match=r"x1 > x0"):
        estimate_camera_roll([img], person_boxes=[(10, 10, 5, 50)])
    with pytest.raises(LeanVideoError, match=r"frames\[1\] must be a uint8 RGB"):
        estimate_camera_roll([img, img.astype(float)])
    with pytest.raises(LeanVideoError, match="max_tilt_deg"):
        estimate_camera_roll([img], max_tilt_deg=80)


def test_box_helpers():
    assert person_box_from_points([1, np.nan, 5], [2, 3, np.nan]) is None
    assert person_box_from_points([1, 4, 3], [2, 8, 5]) == (1.0, 2.0, 4.0, 8.0)
    assert expand_box((10, 20, 30, 60), margin_frac=(0.5, 0.25)) == (0.0, 10.0, 40.0, 70.0)
    boxes = {10: (0, 0, 1, 1), 30: (5, 5, 6, 6)}
    assert nearest_box(boxes, 18) == (0, 0, 1, 1)
    assert nearest_box(boxes, 50) is None
    assert nearest_box(None, 3) is None
    frame = np.array([4, 2, 4, 2, 7])
    boxes = person_boxes_by_frame(frame, [1.0, 10, 3, 12, 5], [2.0, 20, 6, 25, np.nan])
    assert boxes == {2: (10.0, 20.0, 12.0, 25.0), 4: (1.0, 2.0, 3.0, 6.0)}  # frame 7 has one point only
    with pytest.raises(LeanVideoError, match="one value per row"):
        person_boxes_by_frame([1, 2], [1.0], [1.0])


@pytest.mark.slow
def test_roll_from_clip_scales_person_boxes(tmp_path):
    """Full-size boxes must be scaled to the working size before exclusion."""
    box = (140, 60, 360, 630)
    frames = [add_person(rolled(room_canvas(), -3.0, seed=i), box, 6.0) for i in range(12)]
    clip = tmp_path / "room.mp4"
    write_clip(clip, frames)
    boxes = {i: box for i in range(0, 12, 2)}  # every other frame, as a detector may miss some
    est = estimate_roll_from_clip(clip, person_boxes_by_frame=boxes, n_samples=3, max_side_px=320)
    assert est.n_frames == 3 and est.source == "scene"
    assert est.roll_deg == pytest.approx(-3.0, abs=0.5)
    with pytest.raises(LeanVideoError, match="n_samples"):
        estimate_roll_from_clip(clip, n_samples=0)


def test_hand_held_frames_mapped_to_reference():
    """Frames turned further by known angles: mapped back, they give the reference roll."""
    extra = [0.0, 3.0, 6.0]
    centre = (SIZE[1] / 2, SIZE[0] / 2)
    frames = [rolled(room_canvas(), 3.0 + e, seed=i) for i, e in enumerate(extra)]
    to_ref = [np.linalg.inv(np.vstack([similarity(e, 0, 0, centre), [0, 0, 1]]))[:2] for e in extra]
    est = estimate_camera_roll(frames, to_reference=to_ref)
    assert est.roll_deg == pytest.approx(3.0, abs=0.5)
    pooled = estimate_camera_roll(frames)
    assert abs(pooled.roll_deg - 3.0) > 1.0  # without the maps the frames disagree
    with pytest.raises(LeanVideoError, match="to_reference must have one entry"):
        estimate_camera_roll(frames, to_reference=to_ref[:2])
    with pytest.raises(LeanVideoError, match=r"to_reference\[0\] must be a finite 2x3"):
        estimate_camera_roll(frames, to_reference=[np.eye(3), None, None])


@pytest.mark.slow
def test_roll_from_hand_held_clip_with_motion(tmp_path):
    canvas = room_canvas()
    rng = np.random.default_rng(5)
    for _ in range(400):  # texture for the tracker: small patches, too short to count as lines
        x, y = (int(v) for v in rng.integers(0, canvas.shape[0] - 12, 2))
        canvas[y:y + 8, x:x + 8] = rng.integers(0, 255, 3)
    extra = np.linspace(0.0, 3.0, 20)  # the hand slowly rolls the phone by 3 deg
    clip = tmp_path / "hand_held.mp4"
    write_clip(clip, [rolled(canvas, 2.0 + e, seed=i) for i, e in enumerate(extra)])
    motion = estimate_camera_motion(clip)
    assert np.abs(motion.rotation_deg - extra).max() < 0.2  # frame 0 is the reference, extra[0] = 0
    est = estimate_roll_from_clip(clip, motion=motion, n_samples=4)
    assert est.roll_deg == pytest.approx(2.0, abs=0.5)
    unmapped = estimate_roll_from_clip(clip, n_samples=4)
    assert abs(unmapped.roll_deg - 2.0) > 0.7  # the sampled frames' average roll, not frame 0's


# --------------------------------------------------------------------------- motion

def texture(n: int = 900, seed: int = 3) -> np.ndarray:
    rng = np.random.default_rng(seed)
    base = cv2.resize(rng.normal(0, 1, (n // 8, n // 8)), (n, n), interpolation=cv2.INTER_CUBIC)
    img = cv2.cvtColor(np.clip(128 + 40 * base, 0, 255).astype(np.uint8), cv2.COLOR_GRAY2RGB)
    for _ in range(150):
        x, y = (int(v) for v in rng.integers(0, n, 2))
        col = tuple(int(c) for c in rng.integers(0, 255, 3))
        cv2.rectangle(img, (x, y), (x + int(rng.integers(5, 40)), y + int(rng.integers(5, 40))), col, -1)
    return img


def similarity(theta_deg: float, tx: float, ty: float, centre) -> np.ndarray:
    """2x3 map: turn content clockwise on screen by theta about centre, then shift."""
    t = math.radians(theta_deg)
    r = np.array([[math.cos(t), -math.sin(t)], [math.sin(t), math.cos(t)]])
    c = np.asarray(centre, float)
    return np.column_stack([r, c - r @ c + [tx, ty]])


def shaky_frames(n_frames=24, size=(240, 320), *, amp_deg=1.5, amp_px=6.0, person=False):
    """Frames of a textured wall seen through a known similarity per frame.

    Returns (frames as (index, time_s, rgb)), the true reference->frame maps,
    and person boxes when a moving, textured person blob is drawn.
    """
    big, person_tex = texture(), texture(seed=9)
    h, w = size
    off = np.array([[1, 0, (big.shape[1] - w) / 2], [0, 1, (big.shape[0] - h) / 2], [0, 0, 1]])
    frames, truth, boxes = [], [], {}
    for k in range(n_frames):
        a = similarity(amp_deg * math.sin(2 * math.pi * k / 12), amp_px * math.sin(2 * math.pi * k / 9),
                       amp_px * (math.cos(2 * math.pi * k / 7) - 1), (w / 2, h / 2))
        src = off @ np.linalg.inv(np.vstack([a, [0, 0, 1]]))
        frame = cv2.warpAffine(big, src[:2], (w, h), flags=cv2.INTER_LINEAR | cv2.WARP_INVERSE_MAP)
        if person:  # a textured client, close and large, walking across the picture
            box = (40 + 3 * k, 10, 220 + 3 * k, 235)
            frame[box[1]:box[3], box[0]:box[2]] = person_tex[100:100 + box[3] - box[1], 100:100 + box[2] - box[0]]
            boxes[k] = box
        frames.append((k, k / 30.0, np.ascontiguousarray(frame)))
        truth.append(a)
    return frames, np.array(truth), boxes


def centre_shift(mats: np.ndarray, size) -> np.ndarray:
    c = np.array([size[1] / 2, size[0] / 2])
    return mats[:, :, :2] @ c + mats[:, :, 2] - c


def test_similarity_helper_turns_clockwise():
    a = similarity(2.0, 0, 0, (0, 0))
    top = a @ [0, -100, 1]
    assert top[0] > 0  # a point above the centre moves right: clockwise on screen


def test_motion_recovers_known_similarity():
    frames, truth, _ = shaky_frames()
    m = estimate_camera_motion(iter(frames))
    true_rot = np.degrees(np.arctan2(truth[:, 1, 0], truth[:, 0, 0]))
    assert m.tracked.all() and m.failed_fraction == 0.0
    assert np.abs(m.rotation_deg - true_rot).max() < 0.05
    assert np.abs(np.column_stack([m.tx_px, m.ty_px]) - centre_shift(truth, (240, 320))).max() < 0.5
    assert np.abs(m.scale - 1.0).max() < 0.002
    assert m.max_rotation_deg == pytest.approx(np.abs(true_rot).max(), abs=0.05)
    assert classify(m) == "moderate"


def test_motion_ignores_person_inside_box():
    frames, truth, boxes = shaky_frames(person=True)
    true_shift = centre_shift(truth, (240, 320))
    m = estimate_camera_motion(frames, person_boxes_by_frame=boxes, box_margin_frac=(0.05, 0.02))
    assert np.abs(np.column_stack([m.tx_px, m.ty_px]) - true_shift).max() < 0.5
    # The fixture must matter: the person covers most of the picture and drags an unmasked fit.
    naive = estimate_camera_motion(frames)
    assert np.abs(np.column_stack([naive.tx_px, naive.ty_px]) - true_shift).max() > 5.0


def test_stabilise_points_inverts_motion():
    frames, truth, _ = shaky_frames(n_frames=10)
    m = estimate_camera_motion(frames)
    rng = np.random.default_rng(7)
    ref = rng.uniform([20, 20], [300, 220], (10, 5, 2))  # 5 points per frame, reference coordinates
    seen = np.einsum("kij,kpj->kpi", truth[:, :, :2], ref) + truth[:, None, :, 2]
    fi = np.repeat(np.arange(10)[:, None], 5, axis=1)
    x, y = stabilise_points(seen[..., 0], seen[..., 1], m, fi)
    assert np.abs(x - ref[..., 0]).max() < 0.5 and np.abs(y - ref[..., 1]).max() < 0.5
    exact = dataclasses.replace(m, matrices=truth)
    x, y = stabilise_points(seen[..., 0], seen[..., 1], exact, fi)
    assert np.allclose(x, ref[..., 0]) and np.allclose(y, ref[..., 1])
    xn, _ = stabilise_points([np.nan], [1.0], m, [3])
    assert np.isnan(xn[0])
    with pytest.raises(LeanVideoError, match="not in the camera motion"):
        stabilise_points([1.0], [1.0], m, [99])


def test_classify_still_moderate_too_large():
    still, _, _ = shaky_frames(n_frames=8, amp_deg=0.0, amp_px=0.0)
    assert classify(estimate_camera_motion(still)) == "still"
    big, _, _ = shaky_frames(n_frames=13, amp_deg=7.0, amp_px=2.0)
    m = estimate_camera_motion(big)
    assert m.max_rotation_deg > 5.0 and classify(m) == "too_large"
    assert classify(m, too_large_rotation_deg=10.0) == "moderate"
    unmeasured = dataclasses.replace(m, max_rotation_deg=0.1, max_translation_frac=0.001, failed_fraction=0.5)
    assert classify(unmeasured) == "too_large"
    with pytest.raises(LeanVideoError, match="'still' limits"):
        classify(m, still_rotation_deg=6.0)


def translated_frames(shifts_px, size=(240, 320)):
    big = texture()
    h, w = size
    x0, y0 = (big.shape[1] - w) // 2, (big.shape[0] - h) // 2
    return [(k, k / 30.0, np.ascontiguousarray(big[y0:y0 + h, x0 - int(s):x0 - int(s) + w]))
            for k, s in enumerate(shifts_px)]


def test_jitter_separates_shake_from_steady_pan():
    """Whole-pixel shifts (no interpolation): a steady pan has no jitter, alternating +-3 px has 3 px."""
    pan = estimate_camera_motion(translated_frames(np.arange(30)))
    assert pan.tx_px[-1] == pytest.approx(29.0, abs=0.2)
    assert pan.max_translation_frac == pytest.approx(29.0 / 240, abs=0.002)
    assert pan.jitter_rms_frac < 0.05 / 240
    shake = estimate_camera_motion(translated_frames(3 * (np.arange(30) % 2)))
    # detrended, a 0/3 px square wave has RMS 1.5 px
    assert shake.jitter_rms_frac == pytest.approx(1.5 / 240, rel=0.1)
    assert shake.jitter_rms_deg < 0.01


def test_motion_input_errors():
    with pytest.raises(LeanVideoError, match="at least 2 frames"):
        estimate_camera_motion([(0, 0.0, np.zeros((50, 60, 3), np.uint8))])
    with pytest.raises(LeanVideoError, match="iterable of"):
        estimate_camera_motion([np.zeros((50, 60, 3), np.uint8)])
    with pytest.raises(LeanVideoError, match="share one size"):
        estimate_camera_motion([(0, 0.0, np.zeros((50, 60, 3), np.uint8)), (1, 0.1, np.zeros((60, 60, 3), np.uint8))])
    with pytest.raises(LeanVideoError, match="max_side_px"):
        estimate_camera_motion([], max_side_px=10)


@pytest.mark.slow
def test_motion_from_clip_in_input_pixels(tmp_path):
    """Tracking at half size must report translations in the clip's own pixels."""
    frames, truth, _ = shaky_frames(n_frames=15)
    clip = tmp_path / "shaky.mp4"
    write_clip(clip, [f for _, _, f in frames])
    m = estimate_camera_motion(clip, max_side_px=160)
    assert isinstance(m, CameraMotion) and (m.width_px, m.height_px) == (320, 240)
    assert m.frame_indices.tolist() == list(range(15))
    true_rot = np.degrees(np.arctan2(truth[:, 1, 0], truth[:, 0, 0]))
    assert np.abs(m.rotation_deg - true_rot).max() < 0.3
    assert np.abs(np.column_stack([m.tx_px, m.ty_px]) - centre_shift(truth, (240, 320))).max() < 1.5
