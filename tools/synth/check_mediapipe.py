"""Raw MediaPipe BlazePose detection rate on rendered clips (development check).

    python -m tools.synth.check_mediapipe demo_clips/*.mp4

A frame counts as detected when a pose is returned and both shoulders and both hips
have visibility >= 0.5 (common practice, no source). Frames are read with OpenCV
with the display rotation applied, as the pose stage does.
"""
from __future__ import annotations

import sys

import cv2
import mediapipe as mp
import numpy as np

KEY = (11, 12, 23, 24)  # shoulders and hips in the BlazePose landmark order


def detection_rate(path: str, min_visibility: float = 0.5) -> tuple[float, int]:
    cap = cv2.VideoCapture(path)
    cap.set(cv2.CAP_PROP_ORIENTATION_AUTO, 1)
    hits = n = 0
    with mp.solutions.pose.Pose(static_image_mode=False, model_complexity=1) as pose:
        while True:
            ok, bgr = cap.read()
            if not ok:
                break
            n += 1
            res = pose.process(np.ascontiguousarray(cv2.cvtColor(bgr, cv2.COLOR_BGR2RGB)))
            if res.pose_landmarks is None:
                continue
            lm = res.pose_landmarks.landmark
            if all(lm[i].visibility >= min_visibility for i in KEY):
                hits += 1
    return hits / max(n, 1), n


if __name__ == "__main__":
    for p in sys.argv[1:]:
        rate, n = detection_rate(p)
        print(f"{p}: {rate:.3f} of {n} frames")
