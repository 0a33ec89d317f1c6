"""Command-line interface: parse, call the stages, print one-line results.

Every :class:`~lean_video.errors.LeanVideoError` becomes one line on stderr and
its exit code; anything unexpected becomes one line too, with the traceback only
under ``--debug``. Ctrl-C exits with 130.
"""

from __future__ import annotations

import argparse
import logging
import os
import sys
from pathlib import Path

from lean_video import __version__
from lean_video.errors import LeanVideoError
from lean_video.pose_markers import MARKER_HUES_DEG

log = logging.getLogger("lean_video")

EXIT_INTERRUPTED = 130
EXIT_UNEXPECTED = 70


def _out_dir(path: str) -> Path:
    out = Path(path)
    if out.exists() and not out.is_dir():
        raise LeanVideoError(f"--out '{out}' is a file, not a folder; give a folder path for the results.")
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise LeanVideoError(f"Could not create the output folder '{out}' ({exc.strerror}); "
                             "choose a folder you can write to.") from None
    probe = out / ".lean_video_write_test"
    try:
        probe.write_bytes(b"")
        probe.unlink()
    except OSError:
        raise LeanVideoError(f"The output folder '{out}' is not writable; choose a folder you can write to.") from None
    return out


def _show_progress(args: argparse.Namespace) -> bool:
    return not args.quiet and sys.stderr.isatty()


def cmd_pose(args: argparse.Namespace) -> int:
    from lean_video import pose

    out = _out_dir(args.out)
    settings = pose.PoseSettings(max_side_px=args.max_side_px, recover_far=not args.no_recover,
                                 mirror_average=not args.no_mirror)
    run = pose.run_pose(args.clip, settings=settings, cache_dir=args.cache_dir,
                        use_cache=not args.no_cache, progress=_show_progress(args))
    markers = None
    if args.pelvis_markers is not None:
        from lean_video import pose_markers

        markers = pose_markers.track_pelvis_markers(args.clip, run.keypoints,
                                                    search=pose_markers.MarkerSearch(colour=args.pelvis_markers))
    kp_path, clip_path = pose.write_handover(run, out, markers=markers, marker_colour=args.pelvis_markers)
    share = 100.0 * run.n_detected / max(run.n_frames, 1)
    print(f"{run.n_frames} frames, person found in {run.n_detected} ({share:.1f}%, "
          f"{run.n_recovered} via enlarged crops); wrote {kp_path} and {clip_path}")
    return 0


def cmd_hip_model(args: argparse.Namespace) -> int:
    import json

    import pandas as pd

    from lean_video import mechanics

    overrides = {name: getattr(args, name) for name in mechanics.OVERRIDE_NAMES if getattr(args, name) is not None}
    rows = mechanics.hip_model_table(
        args.lean_deg, mass_kg=args.mass_kg, height_m=args.height_m, pelvic_drop_deg=args.pelvic_drop_deg,
        cane_pct_bw=args.cane_pct_bw, cane_distance_cm=args.cane_distance_cm, overrides=overrides,
    )
    params = mechanics.HipModelParams.from_body(height_m=args.height_m, **overrides)
    band = mechanics.monte_carlo(args.lean_deg, params=params, pelvic_drop_deg=args.pelvic_drop_deg,
                                 cane_pct_bw=args.cane_pct_bw, cane_distance_cm=args.cane_distance_cm,
                                 mass_kg=args.mass_kg)
    for i, row in enumerate(rows):
        for name in ("hip_force_bw", "hip_force_change_pct"):
            row[f"{name}_p05"], row[f"{name}_p95"] = float(band.p05[name][i]), float(band.p95[name][i])
    if args.json:
        print(json.dumps(rows, indent=2))
    else:
        table = pd.DataFrame(rows).set_index("lean_deg")
        print(table.to_string(float_format=lambda v: f"{v:.2f}"))
        print()
        print("_p05/_p95: 5-95 % band over published ranges of body proportions and muscle geometry "
              f"(Monte Carlo, {band.n_draws} draws, seed {band.seed}).")
        if not all(row["abductors_active"] for row in rows):
            print("abductors_active False: the body weight lies over or past the stance hip (or the cane carries "
                  "its moment); the pelvis is then held by adductors and passive structures, which the model "
                  "leaves out, so its forces there understate the load.")
        print(mechanics.CAUTION)
    return 0


def cmd_analyse(args: argparse.Namespace) -> int:
    import datetime as dt

    from lean_video import pipeline, report, store

    client_id = date = None
    db = None
    if args.client is not None:
        client_id = store.validate_client_id(args.client)
        date = store.validate_date(args.date or dt.date.today().isoformat(), "--date")
        store.check_client_text(display_name=args.name, notes=args.notes)
        if (Path(args.input).is_dir() and (Path(args.input) / "clip.json").is_file()
                and pipeline.input_sha256(args.input) is None):
            raise LeanVideoError(f"{args.input} has no content hash for the client history (its clip.json holds no "
                                 "sha256); analyse the video itself, or add the video's sha256 to clip.json.")
        db = store.open_store(args.data_dir)
    elif args.name is not None or args.notes is not None:
        raise LeanVideoError("--name and --notes belong to a client; add --client ID, or leave them out.")
    elif args.date is not None:
        store.validate_date(args.date, "--date")
    try:
        mass, height = args.mass_kg, args.height_m
        if db is not None:
            try:
                known = db.get_client(client_id)
                mass = mass if mass is not None else known.mass_kg
                height = height if height is not None else known.height_m
            except LeanVideoError:
                pass
        store.check_body(mass_kg=mass, height_m=height)
        out = _out_dir(args.out)
        pipeline.check_out_dir(out, args.input, force=args.force)
        options = pipeline.AnalysisOptions(camera_roll_deg=args.camera_roll_deg, cutoff_hz=args.cutoff_hz,
                                           mass_kg=mass, height_m=height,
                                           pose_mirror_average=not args.no_mirror,
                                           pelvis_markers=args.pelvis_markers)
        analysis = pipeline.analyse(args.input, options=options, cache_dir=args.cache_dir,
                                    progress=_show_progress(args))
        written = pipeline.write_outputs(analysis, out)
        client = None
        session_id = None
        if db is not None:
            db.upsert_client(client_id, mass_kg=args.mass_kg, height_m=args.height_m, notes=args.notes,
                             display_name=args.name)
            session_id, earlier = db.save_session(
                client_id, date, analysis.summary["clip"].get("sha256", ""), analysis.summary["settings"],
                analysis.summary["version"], analysis.summary, analysis.strides)
            args.stored_session = session_id
            if earlier:
                log.info("this clip was analysed before for %s; the earlier session is kept and the history "
                         "report uses this analysis", client_id)
            client = db.get_client(client_id).as_dict()
        html = report.render_session_report(
            analysis.summary, analysis.frames, analysis.strides, events=analysis.events,
            hip_curve=analysis.hip_curve, pictures=pipeline.peak_pictures(analysis), client=client,
            date_filmed=date, blur_faces=not args.no_blur)
        report_path = report.write_report_atomic(html, out / "report.html")
        if db is not None:
            db.record_report(client_id, report_path, session_id)
    finally:
        if db is not None:
            db.close()
    sides = analysis.summary["sides"]
    for side in ("left", "right"):
        st = sides.get(side, {})
        lean = st.get("lean_mean_deg")
        change = st.get("hip_force_change_pct")
        print(f"{side:>5} stance: {st.get('n_phases', 0)} phases, lean toward stance "
              f"{'n/a' if lean is None else f'{lean:.1f} deg'}, estimated hip-force change "
              f"{'n/a' if change is None else f'{change:+.0f}%'}")
    print(f"wrote {', '.join(p.name for p in written)} and {report_path.name} in {out}")
    return 0


def cmd_history(args: argparse.Namespace) -> int:
    from lean_video import report, store

    client_id = store.validate_client_id(args.client)
    out = _out_dir(args.out)
    with store.open_store(args.data_dir) as db:
        client = db.get_client(client_id).as_dict()
        html = report.render_history_report(client, db.history(client_id))
        path = report.write_report_atomic(html, out / "history.html")
        db.record_report(client_id, path)
    print(f"wrote {path}")
    return 0


def cmd_clients(args: argparse.Namespace) -> int:
    from lean_video import store

    with store.open_store(args.data_dir) as db:
        clients = db.list_clients()
    if not clients:
        print("no clients stored yet")
        return 0
    print(f"{'client':<20} {'sessions':>8}  last filmed")
    for c in clients:
        print(f"{c.id:<20} {c.n_sessions:>8}  {c.last_date or '-'}")
    return 0


def cmd_export(args: argparse.Namespace) -> int:
    from lean_video import store

    client_id = store.validate_client_id(args.client)
    out = _out_dir(args.out)
    with store.open_store(args.data_dir) as db:
        paths = db.export_client(client_id, out)
    print(f"wrote {len(paths)} files to {out}")
    return 0


def cmd_forget(args: argparse.Namespace) -> int:
    from lean_video import store

    client_id = store.validate_client_id(args.client)
    with store.open_store(args.data_dir) as db:
        db.get_client(client_id)
        if not args.yes:
            if not sys.stdin.isatty():
                raise LeanVideoError("forget needs confirmation; run it in a terminal, or add --yes to confirm.")
            # the prompt goes to stdout: stderr may be diverted (divert_native_stderr)
            print(f"Delete client {client_id} and everything stored for them? Type the id to confirm: ",
                  end="", flush=True)
            try:
                answer = input()
            except EOFError:
                answer = ""
            if answer.strip() != client_id:
                print("nothing deleted")
                return 1
        counts = db.forget_client(client_id)
    print(f"deleted client {client_id}: " + ", ".join(f"{v} {k}" for k, v in counts.items()))
    return 0


def cmd_check(args: argparse.Namespace) -> int:
    import json

    from lean_video import capture

    result = capture.quick_check(args.clip, pelvis_markers=args.pelvis_markers)
    if args.json:
        print(json.dumps(result, indent=2))
    else:
        for c in result["checks"]:
            line = f"{c['status'].upper():<5} {c['name']:<16} {c['detail']}"
            print(line + (f"\n      -> {c['suggestion']}" if c["suggestion"] else ""))
        print("Steps per side are checked by 'lean-video analyse'.")
    failed = [c["name"] for c in result["checks"] if c["status"] == "fail"]
    return 3 if failed else 0


def _add_store_args(p: argparse.ArgumentParser) -> None:
    p.add_argument("--data-dir", default=None,
                   help="folder of the client database (default: $LEAN_VIDEO_DATA_DIR or the per-user data folder)")


def _add_marker_arg(p: argparse.ArgumentParser, help_text: str) -> None:
    colours = sorted(MARKER_HUES_DEG)
    p.add_argument("--pelvis-markers", default=None, choices=colours, metavar="COLOUR",
                   help=f"{help_text} ({', '.join(colours)})")


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="lean-video",
        description="Trunk lean, pelvic drop and hip load from a video of a client walking toward the camera. "
                    "Estimates from a simplified model, not a diagnosis.",
    )
    parser.add_argument("--version", action="version", version=f"lean-video {__version__}")
    parser.add_argument("--debug", action="store_true", help="show full tracebacks and debug logging")
    parser.add_argument("-q", "--quiet", action="store_true", help="no progress bars or info messages")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    p = sub.add_parser("pose", help="extract pose keypoints from a clip (keypoints.csv + clip.json)")
    p.add_argument("clip", help="video file (MP4/MOV, H.264 or HEVC)")
    p.add_argument("--out", required=True, help="output folder")
    p.add_argument("--cache-dir", default=None, help="keypoint cache folder (default: per-user cache)")
    p.add_argument("--no-cache", action="store_true", help="neither read nor write the keypoint cache")
    # as analyse uses, so a keypoint folder gives the same results as the video itself
    p.add_argument("--max-side-px", type=int, default=960, help="scale frames down to this longer side (default 960)")
    p.add_argument("--no-recover", action="store_true", help="skip the enlarged-crop pass for small, far figures")
    _add_marker_arg(p, "also find two stickers of this colour over the pelvis and write them as two more landmarks")
    p.add_argument("--no-mirror", action="store_true",
                   help="skip the mirror-image pass (about twice as fast, trunk lean less accurate)")
    p.set_defaults(func=cmd_pose)

    p = sub.add_parser("analyse", help="measure trunk lean, pelvic drop and hip load; write tables and a report")
    p.add_argument("input", help="video file, or a folder with keypoints.csv and clip.json")
    p.add_argument("--out", required=True, help="output folder")
    p.add_argument("--client", default=None, help="pseudonymous client id: store the session in the client history")
    p.add_argument("--name", default=None, help="display name of the client (stored only on this machine)")
    p.add_argument("--mass-kg", type=float, default=None, help="body mass (kg) for the hip model")
    p.add_argument("--height-m", type=float, default=None, help="body height (m) for the hip model")
    p.add_argument("--date", default=None, help="date filmed, YYYY-MM-DD (default: today)")
    p.add_argument("--notes", default=None, help="clinician's notes on the client")
    p.add_argument("--camera-roll-deg", type=float, default=None,
                   help="camera roll (deg, + when vertical lines look turned clockwise); default: measured from the room")
    p.add_argument("--cutoff-hz", type=float, default=6.0, help="low-pass cut-off for the angles (default 6 Hz)")
    _add_marker_arg(p, "colour of two round stickers on the skin over the front (walking toward) or back "
                       "(walking away) of the pelvis; pelvic drop is then measured from them")
    p.add_argument("--cache-dir", default=None, help="keypoint cache folder (default: per-user cache)")
    p.add_argument("--no-mirror", action="store_true",
                   help="skip the mirror-image pass of the pose model (about twice as fast, trunk lean less accurate)")
    p.add_argument("--no-blur", action="store_true", help="do not blur faces in the report pictures")
    p.add_argument("--force", action="store_true", help="replace results of a different clip in --out")
    _add_store_args(p)
    p.set_defaults(func=cmd_analyse)

    p = sub.add_parser("check", help="quick capture check of a clip (a few seconds), before the client leaves")
    p.add_argument("clip", help="video file")
    p.add_argument("--json", action="store_true", help="print the checks as JSON")
    _add_marker_arg(p, "also check that two stickers of this colour over the pelvis are seen")
    p.set_defaults(func=cmd_check)

    p = sub.add_parser("history", help="trend report of one client across sessions (history.html)")
    p.add_argument("client", help="client id")
    p.add_argument("--out", required=True, help="output folder")
    _add_store_args(p)
    p.set_defaults(func=cmd_history)

    p = sub.add_parser("clients", help="list stored clients")
    _add_store_args(p)
    p.set_defaults(func=cmd_clients)

    p = sub.add_parser("export", help="write all of a client's data as CSV and JSON")
    p.add_argument("client", help="client id")
    p.add_argument("--out", required=True, help="output folder")
    _add_store_args(p)
    p.set_defaults(func=cmd_export)

    p = sub.add_parser("forget", help="delete a client and everything stored for them")
    p.add_argument("client", help="client id")
    p.add_argument("--yes", action="store_true", help="do not ask for confirmation")
    _add_store_args(p)
    p.set_defaults(func=cmd_forget)

    from lean_video.mechanics import OVERRIDE_HELP, OVERRIDE_NAMES

    p = sub.add_parser("hip-model", help="what-if table of the static one-leg-stance hip model")
    p.add_argument("--mass-kg", type=float, default=None, help="body mass (kg); without it no newtons are given")
    p.add_argument("--height-m", type=float, default=1.70, help="body height (m), default 1.70")
    p.add_argument("--lean-deg", type=float, nargs="+", default=[0.0, 4.0, 8.0, 12.0],
                   help="trunk lean toward the stance side (deg), one or more values")
    p.add_argument("--pelvic-drop-deg", type=float, default=0.0, help="drop of the swing side of the pelvis (deg)")
    p.add_argument("--cane-pct-bw", type=float, default=0.0, help="cane force in the opposite hand, %% of body weight")
    p.add_argument("--cane-distance-cm", type=float, default=40.0, help="cane distance from the stance hip (cm)")
    for name in OVERRIDE_NAMES:
        p.add_argument("--" + name.replace("_", "-"), dest=name, type=float, default=None,
                       help=f"override: {OVERRIDE_HELP[name]}")
    p.add_argument("--json", action="store_true", help="print a JSON list instead of a table")
    p.set_defaults(func=cmd_hip_model)
    return parser


def _configure_logging(args: argparse.Namespace) -> None:
    level = logging.DEBUG if args.debug else (logging.WARNING if args.quiet else logging.INFO)
    handler = logging.StreamHandler(sys.stderr)
    handler.setFormatter(logging.Formatter("%(levelname)s: %(message)s" if args.debug else "%(message)s"))
    log.handlers[:] = [handler]
    log.setLevel(level)
    log.propagate = False


def divert_native_stderr() -> None:
    """Keep the pose model's C++ start-up chatter off the clinician's terminal.

    Python's ``sys.stderr`` moves to a duplicate of the terminal descriptor and
    descriptor 2, where native libraries write, goes to the null device.
    Worker processes inherit the diverted descriptor.
    """
    try:
        sys.stderr.flush()
        keep = os.dup(2)
        sys.stderr = open(keep, "w", buffering=1, encoding=sys.stderr.encoding or "utf-8",
                          errors="backslashreplace")
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, 2)
        os.close(devnull)
    except (OSError, ValueError, AttributeError):
        pass  # no real descriptor 2 (embedded use): leave stderr alone


def _caused_by_interrupt(exc: BaseException) -> bool:
    """Was ``exc`` raised while a Ctrl-C was being handled?

    Ctrl-C reaches the pose worker processes too; while the main process
    shuts them down, a pipe to a dead worker can break, and that error
    replaces the KeyboardInterrupt (it keeps it as its context).
    """
    seen = set()
    while exc is not None and id(exc) not in seen:
        if isinstance(exc, KeyboardInterrupt):
            return True
        seen.add(id(exc))
        exc = exc.__cause__ or exc.__context__
    return False


def _interrupted(args: argparse.Namespace | None = None) -> int:
    stored = getattr(args, "stored_session", None)
    if stored is None:
        print("lean-video: interrupted; nothing was stored for this run.", file=sys.stderr)
    else:
        print(f"lean-video: interrupted; the analysis was stored (session {stored}) but its report may not have "
              "been written: run the history or analyse command again for it.", file=sys.stderr)
    return EXIT_INTERRUPTED


def main(argv: list[str] | None = None) -> int:
    """Entry point of the ``lean-video`` console script."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return 2
    if not args.debug and argv is None:
        divert_native_stderr()
    _configure_logging(args)
    try:
        return int(args.func(args) or 0)
    except KeyboardInterrupt:
        return _interrupted(args)
    except LeanVideoError as exc:
        if _caused_by_interrupt(exc):
            return _interrupted(args)
        if args.debug:
            raise
        print(f"lean-video: error: {exc}", file=sys.stderr)
        return exc.exit_code
    except BrokenPipeError as exc:
        if _caused_by_interrupt(exc):
            return _interrupted(args)
        # The reader went away (e.g. piped into 'head'): not an error of ours.
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0
    except Exception as exc:  # noqa: BLE001 - the last line of defence for a clinician
        if _caused_by_interrupt(exc):
            return _interrupted(args)
        if args.debug:
            raise
        print(f"lean-video: unexpected error ({type(exc).__name__}: {exc}); run again with --debug "
              "and report the output.", file=sys.stderr)
        return EXIT_UNEXPECTED


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
