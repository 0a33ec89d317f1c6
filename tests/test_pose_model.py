"""The BlazePose model on single frames: landmark names, mirror averaging, window search."""

from __future__ import annotations

import numpy as np
import pytest

from lean_video import pose_model
from lean_video.errors import LeanVideoError


def test_landmark_names_are_mediapipes_own():
    # Reference: the landmark enumeration of the installed MediaPipe itself.
    import mediapipe as mp

    assert pose_model.LANDMARK_NAMES == tuple(lm.name.lower() for lm in mp.solutions.pose.PoseLandmark)


@pytest.mark.parametrize("width, height", [(720, 1280), (1280, 720), (1080, 1920)])
def test_tile_windows_cover_the_frame(width, height):
    # Each scale on its own must cover every pixel, the middle as well as the edges,
    # and stay inside the frame; checked on a 4-px grid with each window's own side.
    boxes = np.array(pose_model._tile_boxes(width, height))
    sides = sorted(set(boxes[:, 2]), reverse=True)
    assert sides == [min(width, height), min(width, height) / 2]
    gx, gy = np.meshgrid(np.arange(0, width, 4) + 0.5, np.arange(0, height, 4) + 0.5)
    for side in sides:
        b = boxes[boxes[:, 2] == side]
        assert (b[:, 0] - side / 2 >= 0).all() and (b[:, 0] + side / 2 <= width).all()
        assert (b[:, 1] - side / 2 >= 0).all() and (b[:, 1] + side / 2 <= height).all()
        inside = (np.abs(gx[..., None] - b[:, 0]) <= side / 2) & (np.abs(gy[..., None] - b[:, 1]) <= side / 2)
        assert inside.any(axis=-1).all(), f"pixels outside every {side:g}-px window"


# --- mirror averaging ---------------------------------------------------------

def test_mirror_index_pairs_left_and_right():
    from lean_video.pose_model import LANDMARK_NAMES, MIRROR_INDEX

    names = list(LANDMARK_NAMES)
    assert names[MIRROR_INDEX[names.index("left_hip")]] == "right_hip"
    assert names[MIRROR_INDEX[names.index("right_foot_index")]] == "left_foot_index"
    assert names[MIRROR_INDEX[names.index("mouth_left")]] == "mouth_right"
    assert names[MIRROR_INDEX[names.index("nose")]] == "nose"
    assert (MIRROR_INDEX[MIRROR_INDEX] == np.arange(len(names))).all()  # exchanging twice is no change


def test_merge_mirrored_averages_only_where_the_answers_agree():
    from lean_video.pose_model import merge_mirrored

    plain = np.zeros((33, 5))
    plain[:, 0] = np.arange(33) * 10.0
    plain[:, 3:] = 1.0
    mirrored = plain.copy()
    # A constant 2 px shift of the model's answer in the picture: the mirrored
    # answer carries it with the opposite sign, the average removes it.
    plain[:, 0] += 2.0
    mirrored[:, 0] -= 2.0
    mirrored[5, :2] += 40.0           # one landmark mixed up in the mirror pass
    mirrored[7, 3] = 0.5              # lower visibility there: averaged too
    out = merge_mirrored(plain, mirrored, tolerance_px=10.0)
    ok = np.ones(33, bool)
    ok[5] = False
    assert out[ok, 0] == pytest.approx(np.arange(33)[ok] * 10.0)
    assert out[5] == pytest.approx(plain[5])  # disagreement: the plain answer is kept
    assert out[7, 3] == pytest.approx(0.75)
    assert merge_mirrored(plain, None, tolerance_px=10.0) is plain
    with pytest.raises(LeanVideoError, match="tolerance_px must be positive"):
        merge_mirrored(plain, mirrored, tolerance_px=0.0)


def test_mirror_average_is_part_of_the_cache_key():
    from lean_video.pose_model import PoseSettings

    assert PoseSettings().mirror_average is True
    assert PoseSettings().key() != PoseSettings(mirror_average=False).key()


def test_software_version_is_part_of_the_cache_key(monkeypatch):
    """Keypoints cached by another lean_video version are not reused (its pose code may differ)."""
    import lean_video
    from lean_video.pose_model import PoseSettings

    before = PoseSettings().key()
    monkeypatch.setattr(lean_video, "__version__", lean_video.__version__ + ".post1")
    assert PoseSettings().key() != before
