"""Render truth clips (MP4 + truth JSON) from a manifest, deterministically.

Usage (from the repository root)::

    PYOPENGL_PLATFORM=osmesa python -m tools.synth.render_all \
        --manifest demo_clips/manifest.json --out demo_clips [--only NAME ...]
    python -m tools.synth.render_all --write-default-manifest demo_clips/manifest.json

Development tooling only; the runtime package never imports this.
"""
from __future__ import annotations

import argparse
import hashlib
import json
import logging
import os
import shutil
import subprocess
import time
from pathlib import Path

os.environ.setdefault("PYOPENGL_PLATFORM", "osmesa")

import numpy as np  # noqa: E402

from .body import load_body, skin  # noqa: E402
from .gait import WalkParams, Walker  # noqa: E402
from .scene import CameraParams, Renderer, RoomParams, camera_matrices  # noqa: E402
from .truth import LANDMARKS, frame_truth, phase_summary  # noqa: E402

log = logging.getLogger(__name__)


def ffmpeg_exe() -> str:
    """The ffmpeg bundled with imageio-ffmpeg (pinned in the ``synth`` extra).

    Preferred over a system ffmpeg because it is the same build everywhere and
    supports ``-display_rotation`` (ffmpeg >= 6.1); Debian 12's ffmpeg 5.1 silently
    drops the older ``rotate`` metadata tag. Falls back to ffmpeg on PATH.
    """
    try:
        import imageio_ffmpeg

        return imageio_ffmpeg.get_ffmpeg_exe()
    except (ImportError, RuntimeError):
        exe = shutil.which("ffmpeg")
        if exe is None:
            raise RuntimeError("no ffmpeg: install the synth extra (imageio-ffmpeg)") from None
        return exe


def _supports_display_rotation(exe: str) -> bool:
    out = subprocess.run([exe, "-hide_banner", "-h", "full"], capture_output=True, text=True).stdout
    return "display_rotation" in out


def simulate(walk: WalkParams, cam: CameraParams, room: RoomParams, fps: float,
             render: bool = True, sink=None):
    """Frames and the truth dict.

    Frames are upright RGB uint8 arrays (height, width, 3); they are passed to
    ``sink(frame)`` when given (and not kept), else returned as a list (empty when
    ``render`` is False).
    """
    body = load_body(walk.height_m, walk.width_scale, walk.shirt_rgb, walk.trousers_rgb,
                     walk.pelvis_marker_rgb)
    walker = Walker(walk, body)
    # With a standing start the client holds the pose of the walk's first double
    # support for stand_s seconds, then walks on from it: clip time = walk time + shift.
    t_hold = walker.first_double_support_mid() if walk.stand_s > 0 else 0.0
    shift = walk.stand_s - t_hold
    n = int(round((walk.duration_s + walk.stand_s) * fps))
    times = np.arange(n) / fps
    rend = Renderer(cam, room, body.faces, body.colours) if render else None
    k, r, c = camera_matrices(cam)
    frames, rows = [], []
    for t in times:
        tw = max(float(t) - shift, t_hold)
        rots, jw, info = walker.pose(tw)
        ft = frame_truth(walker, rots, jw, k, r, c)
        ft["contact"] = info["contact"]
        ft["lean_target_deg"] = info["lean_target_deg"]
        ft["obliquity_target_deg"] = info["obliquity_target_deg"]
        ss = walker.single_support(tw)
        ft["single_support"] = ss[0] if ss else None
        rows.append(ft)
        if rend:
            img = rend.render(skin(body, rots, jw))
            if sink is None:
                frames.append(img)
            else:
                sink(img)
    if rend:
        rend.close()
    dur = n / fps
    ev = walker.ev
    start = walk.stand_s  # no event while standing: the walk's own events before t_hold are dropped
    events = {
        "foot_strike_s": {s: [float(x + shift) for x in ev.strike[s] if start <= x + shift < dur]
                          for s in ("left", "right")},
        "foot_off_s": {s: [float(x + shift) for x in ev.off[s] if start <= x + shift < dur]
                       for s in ("left", "right")},
    }
    windows = []
    for side, other in (("right", "left"), ("left", "right")):
        for i, a in enumerate(ev.off[other]):
            nxt = ev.strike[other][ev.strike[other] > a]
            if not len(nxt):
                continue
            a, bnd = float(a + shift), float(nxt[0] + shift)
            if bnd <= start or a >= dur:
                continue
            k_st = int(np.searchsorted(ev.strike[side], a - shift, side="right") - 1)
            sg = 1.0 if side == "right" else -1.0
            windows.append((side, a, bnd, bool(a >= start and bnd <= dur),
                            float(ev.lean[side][k_st] + sg * walk.lean_offset_deg),
                            float(ev.drop[side][k_st])))
    windows.sort(key=lambda w: w[1])
    lean = [rw["lean_3d_deg"] for rw in rows]
    obl = [rw["pelvic_obliquity_deg"] for rw in rows]
    per_frame = {
        "frame": list(range(n)),
        "time_s": [float(t) for t in times],
        "lean_3d_deg": lean,
        "lean_2d_deg": [rw["lean_2d_deg"] for rw in rows],
        "lean_2d_image_axis_deg": [rw["lean_2d_image_axis_deg"] for rw in rows],
        "pelvic_obliquity_deg": obl,
        "pelvic_obliquity_2d_deg": [rw["pelvic_obliquity_2d_deg"] for rw in rows],
        "lean_target_deg": [rw["lean_target_deg"] for rw in rows],
        "contact_left": [bool(rw["contact"]["left"]) for rw in rows],
        "contact_right": [bool(rw["contact"]["right"]) for rw in rows],
        "single_support": [rw["single_support"] for rw in rows],
        "world_m": {nm: np.round([rw["world"][nm] for rw in rows], 6).tolist() for nm in LANDMARKS},
        "image_px": {nm: np.round([rw["px"][nm] for rw in rows], 3).tolist() for nm in LANDMARKS},
    }
    truth = {
        "schema_version": 1,
        "world_frame": ("metres; origin on the floor below the camera; X to the camera's right "
                        "(horizontal), Y horizontal away from the camera along the walkway, Z up"),
        "pixel_convention": ("upright image; x right, y down; (0,0) is the top-left corner of "
                             "the top-left pixel (MediaPipe normalised coords x size)"),
        "camera": {"K": k.tolist(), "R_world_to_cam": r.tolist(), "centre_m": c.tolist(),
                   "cam_axes": "OpenCV (x right, y down, z forward)",
                   "extrinsic_t": (-r @ c).tolist(), **cam.to_dict()},
        "walk": walk.to_dict(),
        "room": room.to_dict(),
        "fps": fps, "frame_count": n, "duration_s": dur,
        "direction": "toward" if walk.toward else "away",
        "events": events,
        "single_support": phase_summary(times, lean, obl, windows),
        "per_frame": per_frame,
    }
    if walk.stand_s > 0:
        still = times < walk.stand_s
        truth["standing"] = {"start_s": 0.0, "end_s": float(walk.stand_s),
                             "lean_3d_deg": float(np.mean(np.asarray(lean)[still])),
                             "lean_2d_deg": float(np.mean(np.asarray(per_frame["lean_2d_deg"])[still])),
                             "pelvic_obliquity_2d_deg": float(np.mean(
                                 np.asarray(per_frame["pelvic_obliquity_2d_deg"])[still]))}
    return frames, truth


class VideoWriter:
    """Streams upright RGB frames into ffmpeg (H.264 or HEVC MP4)."""

    def __init__(self, path: Path, width_px: int, height_px: int, fps: float,
                 codec: str = "h264", crf: int = 28, stored_landscape: bool = False):
        exe = ffmpeg_exe()
        self.landscape = stored_landscape
        w, h = (height_px, width_px) if stored_landscape else (width_px, height_px)
        in_args = []
        if stored_landscape:
            # Stored frames are the upright image turned 90 deg counter-clockwise; the
            # display matrix asks players to turn them 90 deg clockwise back upright.
            if not _supports_display_rotation(exe):
                raise RuntimeError(f"{exe} lacks -display_rotation (needs ffmpeg >= 6.1)")
            # -noautorotate: keep the stored frames landscape and pass the display
            # matrix through instead of rotating the pixels back (ffmpeg >= 6.1).
            in_args = ["-display_rotation", "-90", "-noautorotate"]
        lib = {"h264": "libx264", "hevc": "libx265"}[codec]
        cmd = [exe, "-y", "-loglevel", "error", "-f", "rawvideo", "-pix_fmt", "rgb24",
               "-s", f"{w}x{h}", "-r", str(fps), *in_args, "-i", "-", "-c:v", lib,
               # One encoder thread: x264/x265 output depends on the thread count, so
               # this keeps the MP4 bytes identical across machines.
               "-threads", "1", "-preset", "medium", "-crf", str(crf), "-pix_fmt", "yuv420p",
               "-fflags", "+bitexact", "-flags:v", "+bitexact", "-map_metadata", "-1",
               "-movflags", "+faststart"]
        if codec == "hevc":
            cmd += ["-tag:v", "hvc1", "-x265-params", "log-level=error:pools=1:frame-threads=1"]
        cmd += [str(path)]
        self.path = path
        self.proc = subprocess.Popen(cmd, stdin=subprocess.PIPE)
        self.info = {"codec": codec, "crf": crf, "stored_width_px": w, "stored_height_px": h,
                     "display_rotation_deg_clockwise": 90 if stored_landscape else 0,
                     "encoder": Path(exe).name}

    def write(self, rgb: np.ndarray) -> None:
        if self.landscape:
            rgb = np.rot90(rgb, 1)
        self.proc.stdin.write(np.ascontiguousarray(rgb).tobytes())

    def close(self) -> dict:
        self.proc.stdin.close()
        if self.proc.wait() != 0:
            raise RuntimeError(f"ffmpeg failed for {self.path}")
        return self.info


def encode(frames, path: Path, fps: float, codec: str = "h264", crf: int = 28,
           stored_landscape: bool = False) -> dict:
    """Encode a list of upright RGB frames. Returns the video block for the truth JSON."""
    h, w = frames[0].shape[:2]
    vw = VideoWriter(path, w, h, fps, codec, crf, stored_landscape)
    for f in frames:
        vw.write(f)
    return vw.close()


def render_clip(entry: dict, out_dir: Path, truth_only: bool = False) -> dict:
    """Render one manifest entry to ``<name>.mp4`` + ``<name>.truth.json``.

    With ``truth_only`` the existing MP4 is kept and only the truth JSON is rewritten.
    """
    walk = WalkParams(**{k: (tuple(v) if isinstance(v, list) else v) for k, v in entry["walk"].items()})
    cam = CameraParams(**entry.get("camera", {}))
    room = RoomParams(**{k: (tuple(v) if isinstance(v, list) else v) for k, v in entry.get("room", {}).items()})
    video = entry.get("video", {})
    fps = float(video.get("fps", 30))
    codec, crf = video.get("codec", "h264"), int(video.get("crf", 28))
    landscape = bool(video.get("stored_landscape", False))
    t0 = time.time()
    mp4 = out_dir / f"{entry['name']}.mp4"
    if truth_only:
        _, truth = simulate(walk, cam, room, fps, render=False)
        w, h = (cam.height_px, cam.width_px) if landscape else (cam.width_px, cam.height_px)
        vinfo = {"codec": codec, "crf": crf, "stored_width_px": w, "stored_height_px": h,
                 "display_rotation_deg_clockwise": 90 if landscape else 0,
                 "encoder": Path(ffmpeg_exe()).name}
    else:
        vw = VideoWriter(mp4, cam.width_px, cam.height_px, fps, codec, crf, landscape)
        _, truth = simulate(walk, cam, room, fps, sink=vw.write)
        vinfo = vw.close()
    truth["video"] = {"file": mp4.name, "upright_width_px": cam.width_px,
                      "upright_height_px": cam.height_px, "fps": fps, **vinfo,
                      "sha256": hashlib.sha256(mp4.read_bytes()).hexdigest()}
    truth["clip"] = {k: entry[k] for k in entry if k not in ("walk", "camera", "room", "video")}
    (out_dir / f"{entry['name']}.truth.json").write_text(json.dumps(truth, separators=(",", ":")))
    log.info("rendered %s in %.1f s", entry["name"], time.time() - t0)
    return truth


def main(argv=None) -> None:
    from .manifest import default_manifest

    ap = argparse.ArgumentParser(description="Render truth clips from a manifest.")
    ap.add_argument("--manifest", type=Path)
    ap.add_argument("--out", type=Path)
    ap.add_argument("--only", nargs="*", default=None, help="clip names to render")
    ap.add_argument("--write-default-manifest", type=Path, default=None)
    ap.add_argument("--truth-only", action="store_true",
                    help="keep existing MP4s, rewrite only the truth JSON")
    a = ap.parse_args(argv)
    logging.basicConfig(level=logging.INFO, format="%(message)s")
    if a.write_default_manifest:
        a.write_default_manifest.write_text(json.dumps(default_manifest(), indent=1))
        return
    man = json.loads(a.manifest.read_text())
    a.out.mkdir(parents=True, exist_ok=True)
    for entry in man["clips"]:
        if a.only and entry["name"] not in a.only:
            continue
        t0 = time.time()
        render_clip(entry, a.out, truth_only=a.truth_only)
        print(f"{entry['name']}: {time.time() - t0:.1f} s")


if __name__ == "__main__":
    main()
