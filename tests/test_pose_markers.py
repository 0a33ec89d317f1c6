"""Pelvis skin markers found by colour (lean_video.pose_markers)."""

from __future__ import annotations

import colorsys

import cv2
import numpy as np
import pandas as pd
import pytest

from lean_video.errors import LeanVideoError
from lean_video.pose_markers import MARKER_HUES_DEG, MARKER_NAMES, MarkerSearch, find_markers, marker_mask, \
    track_pelvis_markers

GREEN = (90, 235, 40)   # RGB of a lit lime-green sticker
PINK = (235, 60, 160)
HIPS = np.array([[160.0, 150.0], [240.0, 150.0]])
TRUNK_PX = 110.0


def _picture(centres, colour=GREEN, radius=6, size=(320, 400)):
    """Grey-blue clothing with filled discs (RGB uint8), discs drawn at 8x sub-pixel precision."""
    img = np.zeros((size[0], size[1], 3), np.uint8)
    img[:] = (70, 80, 110)
    for cx, cy in centres:
        cv2.circle(img, (int(round(cx * 8)), int(round(cy * 8))), radius * 8, colour, -1, cv2.LINE_AA, shift=3)
    return img


def test_two_markers_found_at_their_centres():
    centres = [(172.25, 131.5), (228.75, 136.0)]
    got = find_markers(_picture(centres), HIPS, TRUNK_PX)
    # Known answer: the disc centres (anti-aliased discs: centroid within 0.15 px).
    np.testing.assert_allclose(got, np.array(centres), atol=0.15)
    # Their tilt, as the gait stage will read it: atan(4.5 / 56.5) = 4.55 deg.
    tilt = np.degrees(np.arctan2(got[1, 1] - got[0, 1], got[1, 0] - got[0, 0]))
    assert tilt == pytest.approx(np.degrees(np.arctan2(4.5, 56.5)), abs=0.2)


def test_order_is_by_image_x_not_by_input_order():
    got = find_markers(_picture([(228.0, 131.0), (172.0, 131.0)]), HIPS[::-1], TRUNK_PX)
    assert got[0, 0] < got[1, 0]


def test_green_things_away_from_the_hips_are_ignored():
    # a green book on a shelf, far above and to the side of the hips
    img = _picture([(172.0, 131.0), (228.0, 131.0), (20.0, 20.0), (380.0, 40.0)], radius=6)
    got = find_markers(img, HIPS, TRUNK_PX)
    np.testing.assert_allclose(got, [[172.0, 131.0], [228.0, 131.0]], atol=0.15)


@pytest.mark.parametrize("centres", [
    [(172.0, 131.0)],                      # one marker hidden by a hand
    [(172.0, 131.0), (190.0, 170.0)],      # second blob far too steep for a pelvis
    [],                                    # no markers at all
])
def test_no_plausible_pair_gives_nan(centres):
    assert np.isnan(find_markers(_picture(centres), HIPS, TRUNK_PX)).all()


def test_missing_hips_give_nan_not_a_guess():
    hips = HIPS.copy()
    hips[0] = np.nan
    assert np.isnan(find_markers(_picture([(172.0, 131.0), (228.0, 131.0)]), hips, TRUNK_PX)).all()


def test_colour_is_respected():
    img = _picture([(172.0, 131.0), (228.0, 131.0)], colour=PINK)
    assert np.isnan(find_markers(img, HIPS, TRUNK_PX, search=MarkerSearch(colour="green"))).all()
    assert np.isfinite(find_markers(img, HIPS, TRUNK_PX, search=MarkerSearch(colour="pink"))).all()


@pytest.mark.parametrize("name", sorted(MARKER_HUES_DEG))
def test_hue_band_agrees_with_the_standard_library(name):
    # Reference: Python's colorsys.rgb_to_hsv (standard library) for hue. A
    # saturated pixel of the named hue is a marker pixel, one 60 deg away is not.
    for offset_deg, expected in ((0.0, True), (15.0, True), (60.0, False), (180.0, False)):
        hue = ((MARKER_HUES_DEG[name] + offset_deg) % 360.0) / 360.0
        rgb = np.round(np.array(colorsys.hsv_to_rgb(hue, 0.8, 0.8)) * 255).astype(np.uint8)
        h_ref, _, _ = colorsys.rgb_to_hsv(*(rgb / 255.0))
        assert abs(((h_ref * 360 - (MARKER_HUES_DEG[name] + offset_deg)) + 180) % 360 - 180) < 1.5
        got = marker_mask(np.full((2, 2, 3), rgb, np.uint8), search=MarkerSearch(colour=name))
        assert bool(got.all()) is expected, (name, offset_deg)


def test_grey_and_dark_pixels_are_not_markers():
    grey = np.full((2, 2, 3), (120, 125, 120), np.uint8)
    dark = np.full((2, 2, 3), (10, 30, 5), np.uint8)
    assert not marker_mask(grey, search=MarkerSearch()).any()
    assert not marker_mask(dark, search=MarkerSearch()).any()


def test_bad_colour_is_refused_with_the_choices():
    with pytest.raises(LeanVideoError, match="pelvis marker colour must be one of blue|green"):
        MarkerSearch(colour="purple")
    with pytest.raises(LeanVideoError, match="hue_tolerance_deg must lie within 5-60"):
        MarkerSearch(hue_tolerance_deg=90.0)


def _keypoint_rows(n_frames, fps=25.0):
    rows = []
    for f in range(n_frames):
        for name, (x, y) in {"left_hip": HIPS[1], "right_hip": HIPS[0], "left_shoulder": (250.0, 40.0),
                             "right_shoulder": (150.0, 40.0)}.items():
            rows.append((f, f / fps, name, x, y, 0.0, 0.99, 0.99))
    return pd.DataFrame(rows, columns=["frame", "time_s", "landmark", "x_px", "y_px", "z", "visibility", "presence"])


def test_track_over_a_clip(tmp_path):
    path = tmp_path / "markers.avi"
    # lossless (FFV1) so the known centres survive encoding
    writer = cv2.VideoWriter(str(path), cv2.VideoWriter_fourcc(*"FFV1"), 25.0, (400, 320))
    truth = []
    for f in range(6):
        centres = [(172.0, 131.0 + f), (228.0, 131.0 - f)]
        truth.append(centres)
        img = _picture(centres if f != 3 else centres[:1])  # frame 3: one marker hidden
        writer.write(cv2.cvtColor(img, cv2.COLOR_RGB2BGR))
    writer.release()
    table = track_pelvis_markers(path, _keypoint_rows(6))
    assert list(table.columns) == ["frame", "time_s", "landmark", "x_px", "y_px", "z", "visibility", "presence"]
    assert len(table) == 12 and set(table["landmark"]) == set(MARKER_NAMES)
    seen = table[table["visibility"] > 0]
    assert sorted(seen["frame"].unique()) == [0, 1, 2, 4, 5]
    assert table.loc[table["frame"] == 3, "x_px"].isna().all()
    # labels follow the model's nearer hip: the client's left hip is at image x 240 here
    for f in (0, 5):
        left = seen[(seen["frame"] == f) & (seen["landmark"] == "left_pelvis_marker")]
        np.testing.assert_allclose(left[["x_px", "y_px"]].to_numpy()[0], truth[f][1], atol=0.2)


def test_pairs_wider_than_a_pelvis_are_refused():
    # Hip points 80 px apart: anterior spines lie about 1.4 times as far apart (Harrington
    # et al. 2007); scraps of sleeve at the body's sides lie much wider (here 2.5 times).
    hips = np.array([[160.0, 150.0], [240.0, 150.0]])
    img = _picture([(100.0, 131.0), (300.0, 131.0)])
    assert np.isnan(find_markers(img, hips, 200.0)).all()
    assert np.isfinite(find_markers(_picture([(150.0, 131.0), (250.0, 131.0)]), hips, 200.0)).all()


def test_scraps_of_same_coloured_clothing_are_refused():
    # A sticker-sized spot inside a larger, duller patch of the same hue (a shirt) does not stand out.
    img = _picture([(172.0, 131.0), (228.0, 131.0)])
    dull = np.round(np.array(colorsys.hsv_to_rgb(110 / 360, 0.2, 0.6)) * 255).astype(np.uint8)
    img[110:155, 205:255] = dull
    cv2.circle(img, (228, 131), 6, GREEN, -1)
    assert np.isnan(find_markers(img, HIPS, TRUNK_PX)).all()
    # A patch of the full colour far larger than a sticker is not one either.
    big = _picture([(172.0, 131.0)])
    big[115:150, 210:250] = GREEN
    assert np.isnan(find_markers(big, HIPS, TRUNK_PX)).all()


def test_frames_unlike_the_usual_pair_are_dropped():
    from lean_video.pose_markers import _consistent

    found = {f: "pair" for f in range(12)}
    shape = {f: (0.5, 0.0, -0.15) for f in range(10)}
    shape[10] = (0.9, 0.0, -0.15)   # spacing 80 % off the usual
    shape[11] = (0.5, 0.3, -0.15)   # 0.3 trunk lengths off the usual place
    assert sorted(_consistent(found, shape)) == list(range(10))
    assert _consistent({}, {}) == {}
