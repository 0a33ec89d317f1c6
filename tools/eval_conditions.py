"""Accuracy under filming conditions a phone produces, made from the rendered truth clips (development tool).

Each condition turns a truth clip into a new video: re-encoded with ffmpeg (a lower
frame rate, 480p with heavy compression, sensor noise, a darker and noisier picture,
brightness flicker, a blur over two frames) or turned and shifted a little on every
frame like a hand-held phone (a sway, :func:`sway`). The new video is analysed and
compared with the clip's truth by :func:`tools.eval_accuracy.evaluate`.

Usage: ``.venv/bin/python -m tools.eval_conditions [--clips A,B] [--conditions X,Y]
[--seeds 4,5] [--json out.json]``. Videos are kept under ``--work`` (default
``/tmp/lean_video_conditions``) and reused.
"""

from __future__ import annotations

import argparse
import json
import shutil
import subprocess
import sys
from pathlib import Path

import cv2
import numpy as np

from tools.eval_accuracy import DEMO

#: ffmpeg video filters and quality per re-encoding condition (libx264, yuv420p).
REENCODED = {
    "fps20": ("fps=20", 20),
    "res480_crf35": ("scale=480:-2", 35),
    "noise15": ("noise=alls=15:allf=t+u", 23),
    "dark_noise": ("eq=brightness=-0.2:contrast=0.7,noise=alls=10:allf=t+u", 23),
    "flicker": ("eq=brightness='0.08*sin(2*PI*t*7)':eval=frame", 23),
    # the mean of two frames: a crude stand-in for the blur of a 1/30 s exposure
    "blur2": ("tmix=frames=2", 23),
}
#: Hand-held sways: (largest turn in degrees, largest shift in pixels).
SWAYS = {"sway1.5": (1.5, 10.0), "sway3": (3.0, 25.0), "sway4.5": (4.5, 40.0)}
DEFAULT_CLIPS = ("HP-014_2026-09-01", "truth_strong_lean_front_light", "truth_walk_away", "truth_markers_drop_lean")


def sway_phases(seed: int = 4) -> np.ndarray:
    """Phases (rad) of the turn and the two shifts of :func:`sway`."""
    return np.random.default_rng(seed).uniform(0, 2 * np.pi, 3)


def sway(src: Path, dst: Path, *, amp_deg: float, amp_px: float, seed: int = 4) -> None:
    """Turn and shift every frame by a known slow sway (a hand-held phone), written with OpenCV.

    Turn ``amp_deg * sin(2 pi 0.7 t + phi0)`` about the picture centre (OpenCV's
    positive angle turns the picture counter-clockwise), shifts ``amp_px * sin(2 pi
    1.1 t + phi1)`` and ``amp_px * sin(2 pi 1.3 t + phi2)``: 0.7-1.3 Hz, the sway of a
    phone held by a standing person (common practice, no source).
    """
    from lean_video.video import iter_frames, probe_clip

    info = probe_clip(src)
    writer = cv2.VideoWriter(str(dst), cv2.VideoWriter_fourcc(*"mp4v"), info.fps, (info.width, info.height))
    phase = sway_phases(seed)
    try:
        for _, t, rgb in iter_frames(src):
            ang = amp_deg * np.sin(2 * np.pi * 0.7 * t + phase[0])
            dx = amp_px * np.sin(2 * np.pi * 1.1 * t + phase[1])
            dy = amp_px * np.sin(2 * np.pi * 1.3 * t + phase[2])
            m = cv2.getRotationMatrix2D((info.width / 2, info.height / 2), ang, 1.0)
            m[:, 2] += (dx, dy)
            frame = cv2.warpAffine(cv2.cvtColor(rgb, cv2.COLOR_RGB2BGR), m, (info.width, info.height),
                                   borderMode=cv2.BORDER_REPLICATE)
            writer.write(frame)
    finally:
        writer.release()


def reencode(src: Path, dst: Path, condition: str) -> None:
    """Write ``src`` again under one of :data:`REENCODED` (needs ffmpeg on the PATH)."""
    exe = shutil.which("ffmpeg")
    if exe is None:
        raise SystemExit("ffmpeg is needed (Debian package 'ffmpeg')")
    vf, crf = REENCODED[condition]
    subprocess.run([exe, "-hide_banner", "-loglevel", "error", "-y", "-i", str(src), "-vf", vf, "-c:v", "libx264",
                    "-crf", str(crf), "-pix_fmt", "yuv420p", str(dst)], check=True)


def make(name: str, condition: str, work: Path, *, seed: int = 4) -> Path:
    """The truth clip ``name`` under ``condition`` (made once under ``work``)."""
    src = DEMO / f"{name}.mp4"
    if condition == "none":
        return src
    dst = work / (f"{name}_{condition}" + (f"_s{seed}" if condition in SWAYS else "") + ".mp4")
    if not dst.exists():
        if condition in SWAYS:
            amp_deg, amp_px = SWAYS[condition]
            sway(src, dst, amp_deg=amp_deg, amp_px=amp_px, seed=seed)
        else:
            reencode(src, dst, condition)
    return dst


def main(argv: list[str] | None = None) -> int:
    from lean_video.errors import LeanVideoError
    from tools.eval_accuracy import evaluate

    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--clips", default=",".join(DEFAULT_CLIPS))
    parser.add_argument("--conditions", default=",".join(REENCODED))
    parser.add_argument("--seeds", default="4", help="sway timings (seeds), for the sway conditions")
    parser.add_argument("--work", default="/tmp/lean_video_conditions")
    parser.add_argument("--json", default=None)
    args = parser.parse_args(argv)
    work = Path(args.work)
    work.mkdir(parents=True, exist_ok=True)
    unknown = set(args.conditions.split(",")) - set(REENCODED) - set(SWAYS) - {"none"}
    if unknown:
        parser.error(f"unknown conditions {sorted(unknown)}; choose from none, {', '.join([*REENCODED, *SWAYS])}")
    rows = []
    for name in args.clips.split(","):
        for condition in args.conditions.split(","):
            for seed in ([int(s) for s in args.seeds.split(",")] if condition in SWAYS else [4]):
                try:
                    row = evaluate(name, video=make(name, condition, work, seed=seed))
                except LeanVideoError as exc:
                    row = {"clip": name, "refused": str(exc)}
                row.update(condition=condition, seed=seed)
                rows.append(row)
                print(_line(row), flush=True)
    if args.json:
        Path(args.json).write_text(json.dumps(rows, indent=1, default=str))
    return 0


def _line(r: dict) -> str:
    head = f"{r['clip']:32s} {r['condition']:13s} s{r['seed']}"
    if r.get("refused"):
        return f"{head} refused: {r['refused']}"

    def f(v, spec=".2f"):
        return "n/a" if v is None else format(v, spec)

    return (f"{head} phases {r['phases_matched']}/{r['phases_true']} (found {r['phases_found']}, spurious "
            f"{r['phases_spurious']}) lean {f(r['left_lean_err'])} {f(r['right_lean_err'])} deg, strike "
            f"{f(r['foot_strike_median_ms'], '.0f')}/{f(r['foot_strike_max_ms'], '.0f')} ms, off "
            f"{f(r['foot_off_median_ms'], '.0f')}/{f(r['foot_off_max_ms'], '.0f')} ms (median/max)")


if __name__ == "__main__":
    sys.exit(main())
