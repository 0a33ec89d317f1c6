"""Speed benchmark: decoding, pose, the whole analysis, re-analysis from cache, memory.

Usage (from the repository root): ``make bench`` or ``.venv/bin/python benchmarks/run.py``.

The test clips are made on first use under ``benchmarks/clips/`` (not committed):
the rendered 1080p walker of ``demo_clips`` played back and forth until it lasts
30 s, scaled to 4K for the 4K runs, and doubled to 60 s for the memory run.
Every measurement runs in a fresh child process, so timings include model
start-up and peak resident memory is that process's own. Results go to the
console as one table and to ``benchmarks/out/results.json``.
"""

from __future__ import annotations

import json
import os
import platform
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

REPO = Path(__file__).resolve().parents[1]
CLIPS = REPO / "benchmarks" / "clips"
OUT = REPO / "benchmarks" / "out"
SOURCE = REPO / "demo_clips" / "truth_1080p_heavy.mp4"


def _ffmpeg() -> str:
    exe = shutil.which("ffmpeg")
    if exe:
        return exe
    import imageio_ffmpeg

    return imageio_ffmpeg.get_ffmpeg_exe()


def make_clips() -> dict[str, Path]:
    """30 s 1080p, 30 s 4K and 60 s 4K clips of the rendered walker (made once)."""
    CLIPS.mkdir(parents=True, exist_ok=True)
    clips = {"1080p_30s": CLIPS / "walker_1080p_30s.mp4", "4k_30s": CLIPS / "walker_4k_30s.mp4",
             "4k_60s": CLIPS / "walker_4k_60s.mp4"}
    ff = [_ffmpeg(), "-hide_banner", "-loglevel", "error", "-y"]
    if not clips["1080p_30s"].exists():
        # Forward then reversed: a walk toward the camera and back, repeated to 30 s.
        subprocess.run([*ff, "-i", str(SOURCE), "-filter_complex",
                        "[0:v]split[a][b];[b]reverse[r];[a][r]concat=n=2:v=1[ab];[ab]loop=loop=3:size=1000,trim=duration=30",
                        "-r", "30", "-c:v", "libx264", "-crf", "23", "-pix_fmt", "yuv420p", str(clips["1080p_30s"])],
                       check=True)
    if not clips["4k_30s"].exists():
        subprocess.run([*ff, "-i", str(clips["1080p_30s"]), "-vf", "scale=2160:3840:flags=bicubic",
                        "-c:v", "libx264", "-preset", "veryfast", "-crf", "23", "-pix_fmt", "yuv420p",
                        str(clips["4k_30s"])], check=True)
    if not clips["4k_60s"].exists():
        subprocess.run([*ff, "-stream_loop", "1", "-i", str(clips["4k_30s"]), "-c", "copy", str(clips["4k_60s"])],
                       check=True)
    return clips


# Each job runs in a child process: python benchmarks/run.py --job NAME CLIP
def _job(name: str, clip: str) -> dict:
    import resource

    import numpy as np

    t0 = time.perf_counter()
    frames = 0
    if name == "decode":
        from lean_video.video import iter_bgr

        for _ in iter_bgr(clip):
            frames += 1
    elif name == "plain_loop":
        # The naive baseline: decode a frame, run the full model on it at full size, repeat.
        import cv2
        import mediapipe as mp

        from lean_video.video import iter_bgr

        with mp.solutions.pose.Pose(model_complexity=1) as model:
            for _, _, bgr in iter_bgr(clip):
                model.process(np.ascontiguousarray(cv2.cvtColor(bgr, cv2.COLOR_BGR2RGB)))
                frames += 1
    elif name == "check":
        # The quick capture check a clinician runs before the client leaves.
        from lean_video import capture

        capture.quick_check(clip)
        frames = capture.QUICK_SAMPLES  # the frames it reads, not the clip's
    elif name == "decode_pose":
        from lean_video.pose import run_pose

        frames = run_pose(clip, use_cache=False).n_frames
    elif name in ("analyse", "reanalyse", "analyse_no_mirror"):
        from lean_video import pipeline, report

        cache = os.environ["BENCH_CACHE"]
        options = pipeline.AnalysisOptions(pose_mirror_average=name != "analyse_no_mirror")
        analysis = pipeline.analyse(clip, cache_dir=cache, options=options)
        with tempfile.TemporaryDirectory() as out:
            pipeline.write_outputs(analysis, out)
            html = report.render_session_report(analysis.summary, analysis.frames, analysis.strides,
                                                events=analysis.events, hip_curve=analysis.hip_curve,
                                                pictures=pipeline.peak_pictures(analysis))
            report.write_report_atomic(html, Path(out) / "report.html")
        frames = len(analysis.frames)
    else:
        raise SystemExit(f"unknown job {name}")
    wall = time.perf_counter() - t0
    peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0
    return {"wall_s": wall, "frames": frames, "peak_rss_mb": peak_mb}


def _run_child(name: str, clip: Path, cache: Path) -> dict:
    env = {**os.environ, "BENCH_CACHE": str(cache), "PYTHONPATH": str(REPO)}
    proc = subprocess.run([sys.executable, __file__, "--job", name, str(clip)], capture_output=True, text=True,
                          env=env)
    if proc.returncode != 0:
        raise RuntimeError(f"{name} on {clip.name} failed:\n{proc.stderr[-2000:]}")
    return json.loads(proc.stdout.strip().splitlines()[-1])


def main() -> int:
    from lean_video.video import probe_clip

    clips = make_clips()
    rows = []
    with tempfile.TemporaryDirectory() as tmp:
        cache = Path(tmp) / "cache"
        plan = [("decode", "1080p_30s"), ("plain_loop", "1080p_30s"), ("decode_pose", "1080p_30s"),
                ("analyse", "1080p_30s"), ("reanalyse", "1080p_30s"), ("analyse_no_mirror", "1080p_30s"),
                ("check", "1080p_30s"),
                ("decode", "4k_30s"),
                ("analyse", "4k_30s"), ("analyse", "4k_60s"), ("check", "4k_30s")]
        for name, key in plan:
            clip = clips[key]
            duration = probe_clip(clip).duration_s
            result = _run_child(name, clip, cache)
            result.update(job=name, clip=key, duration_s=duration,
                          fps=result["frames"] / result["wall_s"], realtime_factor=duration / result["wall_s"])
            rows.append(result)
            print(f"  {name:<12} {key:<10} {result['wall_s']:7.1f} s", file=sys.stderr)
    by = {(r["job"], r["clip"]): r for r in rows}
    pose_1080 = by[("decode_pose", "1080p_30s")]["wall_s"]
    plain_1080 = by[("plain_loop", "1080p_30s")]["wall_s"]
    for r in rows:
        r["ratio_to_decode_pose"] = r["wall_s"] / pose_1080 if r["clip"] == "1080p_30s" else None
        r["ratio_to_plain_loop"] = r["wall_s"] / plain_1080 if r["clip"] == "1080p_30s" else None
    summary = {
        "analyse_1080p_realtime_factor": by[("analyse", "1080p_30s")]["realtime_factor"],
        "analyse_vs_plain_loop": by[("analyse", "1080p_30s")]["wall_s"] / plain_1080,
        "analyse_4k_vs_1080p": by[("analyse", "4k_30s")]["wall_s"] / by[("analyse", "1080p_30s")]["wall_s"],
        "reanalyse_from_cache_s": by[("reanalyse", "1080p_30s")]["wall_s"],
        "peak_rss_mb_4k_60s": by[("analyse", "4k_60s")]["peak_rss_mb"],
        "check_1080p_30s_s": by[("check", "1080p_30s")]["wall_s"],
        "check_4k_30s_s": by[("check", "4k_30s")]["wall_s"],
    }
    machine = {"date": time.strftime("%Y-%m-%d"), "cpus": os.cpu_count(), "machine": platform.machine(),
               "python": platform.python_version(), "processor": platform.processor() or "unknown"}
    header = f"{'job':<12} {'clip':<10} {'wall s':>7} {'fps':>6} {'x real':>6} {'/pose':>6} {'/plain':>6} {'peak MB':>8}"
    print(header)
    print("-" * len(header))
    for r in rows:
        ratio = f"{r['ratio_to_decode_pose']:.2f}" if r["ratio_to_decode_pose"] is not None else "-"
        plain = f"{r['ratio_to_plain_loop']:.2f}" if r["ratio_to_plain_loop"] is not None else "-"
        print(f"{r['job']:<12} {r['clip']:<10} {r['wall_s']:7.1f} {r['fps']:6.1f} {r['realtime_factor']:6.2f} "
              f"{ratio:>6} {plain:>6} {r['peak_rss_mb']:8.0f}")
    print()
    for key, value in summary.items():
        print(f"{key}: {value:.2f}")
    OUT.mkdir(parents=True, exist_ok=True)
    (OUT / "results.json").write_text(json.dumps({"machine": machine, "rows": rows, "summary": summary}, indent=2))
    print(f"\nwrote {OUT / 'results.json'}")
    return 0


if __name__ == "__main__":
    if len(sys.argv) == 4 and sys.argv[1] == "--job":
        print(json.dumps(_job(sys.argv[2], sys.argv[3])))
    else:
        sys.exit(main())
