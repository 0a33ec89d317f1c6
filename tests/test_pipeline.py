"""Pipeline helpers that need no video: client sides of a picture's landmarks."""

from __future__ import annotations

import pytest

from lean_video.errors import LeanVideoError
from lean_video.pipeline import _direction_at, client_side_labels

# Facing the camera, the client's left hip and shoulder are on the image right.
FACING = {"left_hip": (420.0, 800.0), "right_hip": (300.0, 800.0), "left_shoulder": (440.0, 500.0),
          "right_shoulder": (280.0, 500.0), "left_knee": (410.0, 1000.0), "right_knee": (310.0, 1000.0),
          "nose": (360.0, 380.0)}


def test_labels_kept_when_they_match_the_walking_direction():
    assert client_side_labels(FACING, direction="toward") == FACING


def test_labels_exchanged_when_the_model_flipped_them():
    # Seen from behind, the client's left is on the image left; the model kept the facing labels.
    out = client_side_labels(FACING, direction="away")
    assert out["left_hip"] == FACING["right_hip"] and out["right_knee"] == FACING["left_knee"]
    assert out["nose"] == FACING["nose"]
    assert client_side_labels(out, direction="away") == out


def test_labels_without_hips_or_shoulders_are_kept_and_bad_direction_refused():
    only_knees = {"left_knee": (1.0, 2.0), "right_knee": (3.0, 2.0)}
    assert client_side_labels(only_knees, direction="away") == only_knees
    with pytest.raises(LeanVideoError, match="direction must be 'toward' or 'away'"):
        client_side_labels(FACING, direction="sideways")


def test_direction_of_the_pass_holding_a_time():
    summary = {"direction": "toward", "passes": [{"start_s": 0.0, "end_s": 4.5, "direction": "away"},
                                                 {"start_s": 7.5, "end_s": 12.2, "direction": "toward"}]}
    assert _direction_at(summary, 3.4) == "away"
    assert _direction_at(summary, 9.0) == "toward"
    assert _direction_at(summary, 6.0) == "toward"  # in the turn: the clip's direction


def test_pelvis_markers_need_a_video_or_a_folder_holding_them():
    import pandas as pd

    from lean_video.pipeline import _with_pelvis_markers

    kp = pd.DataFrame([(0, 0.0, "left_hip", 1.0, 2.0, 0.0, 1.0, 1.0)],
                      columns=["frame", "time_s", "landmark", "x_px", "y_px", "z", "visibility", "presence"])
    with pytest.raises(LeanVideoError, match="pelvis markers can only be searched for in a video"):
        _with_pelvis_markers(kp, None, "green")
    held = pd.concat([kp, kp.assign(landmark="left_pelvis_marker")], ignore_index=True)
    assert _with_pelvis_markers(held, None, "green") is held


@pytest.mark.parametrize("recorded", [True, False])
def test_keypoint_folder_provenance_names_what_made_the_keypoints(tmp_path, recorded):
    # This run's pose options do not act on a keypoints folder: the summary must not
    # claim them; it carries the settings the pose command recorded, if any.
    import json

    from lean_video import pipeline
    try:
        from tests.gait_walker import make_walk
    except ImportError:  # tests/ not a package
        from gait_walker import make_walk

    w = make_walk(direction="toward", noise_px=0.5, seed=1)
    folder = tmp_path / "kp"
    folder.mkdir()
    w.keypoints.to_csv(folder / "keypoints.csv", index=False)
    clip = {"width": w.width, "height": w.height, "sha256": "c" * 64}
    if recorded:
        clip["pose"] = {"settings": {"max_side_px": 1280, "mirror_average": False}}
    (folder / "clip.json").write_text(json.dumps(clip))
    a = pipeline.analyse(folder, options=pipeline.AnalysisOptions(camera_roll_deg=0.0))
    assert a.summary["settings"]["analysis"]["pose_mirror_average"] == "not used (keypoints folder input)"
    made = a.summary["pose"]["settings"]
    assert made == ({"max_side_px": 1280, "mirror_average": False} if recorded
                    else "not recorded (keypoints from another source)")


def test_keypoint_folder_says_frames_were_lost(tmp_path, caplog):
    # 'lean-video pose' records in clip.json how many declared frames did not decode;
    # analysing that folder must warn as analysing the clip does (it said nothing before).
    import json

    from lean_video import pipeline
    try:
        from tests.gait_walker import make_walk
    except ImportError:  # tests/ not a package
        from gait_walker import make_walk

    w = make_walk(direction="toward", noise_px=0.5, seed=1)
    n = int(w.keypoints["frame"].nunique())
    folder = tmp_path / "kp"
    folder.mkdir()
    w.keypoints.to_csv(folder / "keypoints.csv", index=False)
    clip = {"width": w.width, "height": w.height, "sha256": "c" * 64, "frame_count": n + 7,
            "pose": {"settings": {"max_side_px": 1280}, "n_frames": n, "frames_lost": 7}}
    (folder / "clip.json").write_text(json.dumps(clip))
    with caplog.at_level("WARNING", logger="lean_video"):
        a = pipeline.analyse(folder, options=pipeline.AnalysisOptions(camera_roll_deg=0.0))
    assert a.summary["pose"]["frames_lost"] == 7
    notes = [m for m in a.summary["quality"]["warnings"] if "may be truncated" in m]
    assert notes == [f"only {n} of the {n + 7} frames the clip declares could be decoded (7 lost): the file may be "
                     "truncated, and the walk in the missing part is not measured; copy or export the clip from "
                     "the phone again"]
    assert sum("may be truncated" in r.getMessage() for r in caplog.records) == 1
    # keypoints from another source record no count: nothing to say
    clip.pop("pose")
    (folder / "clip.json").write_text(json.dumps(clip))
    a = pipeline.analyse(folder, options=pipeline.AnalysisOptions(camera_roll_deg=0.0))
    assert not [m for m in a.summary["quality"]["warnings"] if "may be truncated" in m]


def test_keypoint_folder_markers_keep_their_recorded_colour():
    import pandas as pd

    from lean_video.pipeline import AnalysisOptions, _folder_marker_colour

    kp = pd.DataFrame({"landmark": ["left_hip", "left_pelvis_marker"]})
    assert _folder_marker_colour(kp, {"pelvis_markers": "green"}, AnalysisOptions()).pelvis_markers == "green"
    with pytest.raises(LeanVideoError, match="holds green pelvis markers, but --pelvis-markers blue was given"):
        _folder_marker_colour(kp, {"pelvis_markers": "green"}, AnalysisOptions(pelvis_markers="blue"))
    unstated = _folder_marker_colour(kp, {}, AnalysisOptions())
    assert unstated.pelvis_markers == "recorded in keypoints (colour not stated)"
    plain = pd.DataFrame({"landmark": ["left_hip"]})
    assert _folder_marker_colour(plain, {"pelvis_markers": None}, AnalysisOptions()).pelvis_markers is None


def test_scene_cache_is_kept_apart_per_pose_settings(tmp_path, monkeypatch):
    # The scene's answers leave out the person's region, which moves with the pose settings
    # (mirror averaging on or off): one cached answer must not serve the other (review of 2026-12-03).
    from lean_video import capture, pipeline

    measured = []

    class Setup:
        def __init__(self, key):
            self.key = key

        def to_cache(self):
            return {"key": self.key}

    def fake_setup(video, keypoints, **kwargs):
        measured.append(video)
        return Setup(len(measured))

    monkeypatch.setattr(capture, "camera_setup", fake_setup)
    monkeypatch.setattr(capture.CameraSetup, "from_cache", classmethod(lambda cls, data, **kw: Setup(data["key"])))
    clip = {"sha256": "ab" * 32, "width": 720}
    options = pipeline.AnalysisOptions()
    first = pipeline._camera_setup("clip.mp4", None, options, (), clip, tmp_path, "mirror-on")
    other = pipeline._camera_setup("clip.mp4", None, options, (), clip, tmp_path, "mirror-off")
    again = pipeline._camera_setup("clip.mp4", None, options, (), clip, tmp_path, "mirror-on")
    assert (first.key, other.key, again.key) == (1, 2, 1)
    assert len(measured) == 2 and len(list(tmp_path.glob("scene-*.json"))) == 2
