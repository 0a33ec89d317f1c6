"""Build tests/data/gait_lab_treadmill.npz from the gaitalytics 0.2.2 sdist (MIT).

Run once by hand (needs network for pip and the test-only ``c3d`` package)::

    .venv/bin/pip download --no-deps --no-binary :all: gaitalytics==0.2.2 -d /tmp/gaitalytics
    tar xzf /tmp/gaitalytics/gaitalytics-0.2.2.tar.gz -C /tmp/gaitalytics \
        gaitalytics-0.2.2/tests/treadmill_events.c3d
    .venv/bin/python tests/data/make_gait_lab_fixture.py \
        /tmp/gaitalytics/gaitalytics-0.2.2/tests/treadmill_events.c3d

Keeps only the markers the lab check needs (mm, lab frame of the file: x to the
subject's left, y backward, z up) and the annotated events. Times follow the
C3D convention ``time_s = (frame_number - 1) / rate`` with the file's first
frame number, so they match the EVENT:TIMES values.
"""

import sys
from pathlib import Path

import c3d
import numpy as np

MARKERS = ["LASIS", "RASIS", "LPSIS", "RPSIS", "C7", "T10", "XIPH", "JN",
           "LHEE", "LLM", "LMM", "LMT2", "LMT5", "RHEE", "RLM", "RMM", "RMT2", "RMT5"]


def main(path):
    with open(path, "rb") as f:
        r = c3d.Reader(f)
        labels = [s.strip() for s in r.point_labels]
        idx = [labels.index(m) for m in MARKERS]
        pts = np.array([p[idx, :3] for _, p, _ in r.read_frames()], dtype=np.float32)
        first, rate = r.first_frame, r.point_rate
        ev = r.get("EVENT")
        times = np.asarray(ev.get("TIMES").float_array, float).reshape(-1, 2)[:, 1]
        sides = np.array([s.strip().lower() for s in ev.get("CONTEXTS").string_array])
        kinds = np.array([s.strip().lower().replace(" ", "_") for s in ev.get("LABELS").string_array])
    time_s = (first - 1 + np.arange(len(pts))) / rate
    out = Path(__file__).with_name("gait_lab_treadmill.npz")
    np.savez_compressed(out, markers=pts, marker_names=np.array(MARKERS), time_s=time_s,
                        event_time_s=times, event_side=sides, event_kind=kinds)
    print(out, pts.shape, len(times))


if __name__ == "__main__":
    main(sys.argv[1])
