"""Self-contained HTML reports: one analysed session, and a client's history.

The report stage receives plain data (pandas tables, dicts, numpy frames; see
DEVELOPERS.md) and returns HTML text. It imports no other pipeline stage.

Self-contained means: plotly.js is inlined once, pictures are PNG ``data:``
URIs, the lever-arm drawing is inline SVG, and a Content-Security-Policy
meta tag (``default-src 'none'``) makes the browser refuse any network load
the page might attempt. No absolute path and no clip file name appear unless
the caller passes ``clip_name``.

Jinja2 autoescaping is on for every template, so client names and notes are
shown as text, never run as markup.

Minimal detectable change (history report)
------------------------------------------
For each side and metric (per-phase lean, per-phase hip-force change):

1. the client's stride-to-stride SD is pooled over all their sessions with at
   least two phases on that side,
   ``SD_p = sqrt(sum((n_i - 1) * SD_i**2) / sum(n_i - 1))``;
2. the standard error of a session mean is ``SEM = SD_p / sqrt(n)``; for a
   change between two sessions with n_a and n_b phases, ``n`` is their
   harmonic mean ``2 / (1/n_a + 1/n_b)``;
3. ``MDC95 = 1.96 * sqrt(2) * SEM`` (Weir 2005, J Strength Cond Res
   19:231-240; Haley & Fragala-Pinkham 2006, Phys Ther 86:735-743), which
   equals ``1.96 * SD_p * sqrt(1/n_a + 1/n_b)``.

A change is flagged "beyond MDC" when ``|change| > MDC95``, with two
additions for what step-to-step variability cannot show:

* lean: ``|change| > MDC95 + allowance``, where the allowance is the largest
  error of a per-side change measured between two rendered sessions filmed
  the same way (``stated_accuracy.LEAN_CHANGE_METHOD``): the pose model's
  lean offset depends on light and build, is the same in every step of a
  clip, and so never shows in the step-to-step SD;
* hip-force change: beyond its own MDC95 *and* the lean change of the same
  comparison flagged, since the estimate is computed from the lean.

Pelvic drop (pelvis markers only) keeps the plain rule.
"""

from __future__ import annotations

import logging
import math
import os
import re
from datetime import datetime, timezone
from pathlib import Path
from typing import Any, Mapping, Sequence

import numpy as np
import pandas as pd
import plotly.offline
from jinja2 import Environment, FileSystemLoader, StrictUndefined
from markupsafe import Markup
from scipy import stats

from lean_video import figures
from lean_video.errors import LeanVideoError
from lean_video.files import atomic_write_text
from lean_video.report_pictures import annotate_peak_frame, lever_arm_svg
from lean_video.stated_accuracy import LEAN_CHANGE_METHOD

logger = logging.getLogger(__name__)

SIDES = ("left", "right")
Z95 = 1.96
TEMPLATE_DIR = Path(__file__).with_name("templates")
CSP = ("default-src 'none'; script-src 'unsafe-inline'; style-src 'unsafe-inline'; "
       "img-src data:; font-src data:; connect-src 'none'; form-action 'none'; base-uri 'none'")
_PLOT_CONFIG = {"displaylogo": False, "responsive": False, "displayModeBar": False}


# --------------------------------------------------------------------------- statistics
def pooled_sd(sds: Sequence[float], ns: Sequence[int]) -> float:
    """Pooled standard deviation ``sqrt(sum((n-1) s^2) / sum(n-1))`` over groups with n >= 2.

    Returns NaN only when no group has two or more values (the caller shows "n/a").
    """
    num = den = 0.0
    for s, n in zip(sds, ns):
        if n is not None and n >= 2 and s is not None and math.isfinite(s):
            num += (n - 1) * s * s
            den += n - 1
    return math.sqrt(num / den) if den > 0 else math.nan


def mdc95(sd_pooled: float, n_a: int, n_b: int) -> float:
    """Minimal detectable change (95 %) between two session means.

    ``MDC95 = 1.96 * sqrt(2) * SEM`` with ``SEM = sd_pooled / sqrt(n_h)`` and
    ``n_h = 2 / (1/n_a + 1/n_b)`` (Weir 2005, J Strength Cond Res 19:231-240;
    Haley & Fragala-Pinkham 2006, Phys Ther 86:735-743).

    Parameters
    ----------
    sd_pooled : float
        Client's pooled stride-to-stride SD, same unit as the result.
    n_a, n_b : int
        Phases (on that side) in the two sessions; both >= 1.
    """
    if not (n_a >= 1 and n_b >= 1):
        raise LeanVideoError(f"mdc95 needs at least one phase per session, got n_a={n_a}, n_b={n_b}; "
                             "compare sessions that have phases on that side.")
    n_h = 2.0 / (1.0 / n_a + 1.0 / n_b)
    sem = sd_pooled / math.sqrt(n_h)
    return Z95 * math.sqrt(2.0) * sem


def mean_ci95(values: Sequence[float]) -> tuple[float, float, float, float, int]:
    """(mean, sd, lo, hi, n) with a Student-t 95 % CI; sd/lo/hi NaN if n < 2."""
    v = np.asarray([x for x in values if x is not None and math.isfinite(x)], float)
    n = len(v)
    if n == 0:
        return (math.nan,) * 4 + (0,)
    m = float(v.mean())
    if n < 2:
        return m, math.nan, math.nan, math.nan, 1
    sd = float(v.std(ddof=1))
    half = float(stats.t.ppf(0.975, n - 1)) * sd / math.sqrt(n)
    return m, sd, m - half, m + half, n


# --------------------------------------------------------------------------- formatting
def fmt(value: Any, digits: int = 1, unit: str = "") -> str:
    """Number to text with fixed decimals; missing values as 'n/a' (never 'nan')."""
    if value is None or isinstance(value, str):
        return "n/a" if value is None else value
    try:
        v = float(value)
    except (TypeError, ValueError):
        return str(value)
    if not math.isfinite(v):
        return "n/a"
    text = f"{v:.{digits}f}"
    if text.startswith("-") and float(text) == 0.0:
        text = text[1:]          # -0.04 shows as 0.0, not -0.0
    return text + unit


def signed(value: Any, digits: int = 1, unit: str = "") -> str:
    """Like :func:`fmt` with a '+' before positive values (by the printed digits: never '+0.0')."""
    text = fmt(value, digits)
    try:
        positive = float(text) > 0
    except ValueError:
        return text                  # missing (or text passed through): no unit, no sign
    return ("+" if positive else "") + text + unit


def _flatten(d: Mapping, prefix: str = "") -> list[tuple[str, str]]:
    rows: list[tuple[str, str]] = []
    for k in sorted(d, key=str):
        v = d[k]
        key = f"{prefix}{k}"
        if isinstance(v, Mapping):
            rows += _flatten(v, key + ".")
        elif v is None or (isinstance(v, (list, tuple)) and not v):
            rows.append((key, "not set" if v is None else "none"))     # never Python's "None" or a blank
        elif isinstance(v, float):
            rows.append((key, f"{v:g}" if math.isfinite(v) else "n/a"))
        elif isinstance(v, (list, tuple)) and v and all(isinstance(x, Mapping) for x in v):
            for i, x in enumerate(v):
                rows += _flatten(x, f"{key}[{i}].")
        elif isinstance(v, (list, tuple)):
            rows.append((key, ", ".join(f"{x:g}" if isinstance(x, float) else str(x) for x in v)))
        else:
            rows.append((key, str(v)))
    return rows


def _env() -> Environment:
    env = Environment(loader=FileSystemLoader(str(TEMPLATE_DIR)), autoescape=True,
                      undefined=StrictUndefined, trim_blocks=True, lstrip_blocks=True)
    env.filters["fmt"] = fmt
    env.filters["signed"] = signed
    return env


def _plot_div(fig, div_id: str) -> Markup:
    # Markup: our own figure JSON; no client text goes into figures.
    return Markup(fig.to_html(full_html=False, include_plotlyjs=False, div_id=div_id, config=_PLOT_CONFIG))


def _now() -> str:
    return datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC")


_CONTROL_RE = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\x7f-\x9f]")


def clean_text(value: Any) -> str | None:
    """Drop control characters (not valid in HTML text) from user-typed text; escaping is Jinja's job."""
    return None if value is None else _CONTROL_RE.sub("", str(value))


def _client_view(client: Mapping | None) -> dict[str, Any]:
    c = dict(client or {})
    return {"id": clean_text(c.get("id")) or "unnamed client", "display_name": clean_text(c.get("display_name")),
            "notes": clean_text(c.get("notes")), "mass_kg": c.get("mass_kg"), "height_m": c.get("height_m"),
            "birth_year": c.get("birth_year"), "side_of_interest": c.get("side_of_interest")}


def _pose_params(summary: Mapping) -> dict[str, Any]:   # the pose model and its settings, not its frame counts
    return {k: v for k, v in (summary.get("pose") or {}).items() if k in ("model", "settings")}


def _require(summary: Mapping, keys: Sequence[str]) -> None:
    missing = [k for k in keys if k not in summary]
    if missing:
        raise LeanVideoError(f"summary lacks {missing}; pass the summary dict from the gait/mechanics stages.")


# --------------------------------------------------------------------------- session report
_PHASE_LABELS = (
    ("stance_side", "Stance side"), ("start_s", "Start (s)"), ("end_s", "End (s)"), ("duration_s", "Duration (s)"),
    ("lean_mean_deg", "Lean mean (°)"), ("lean_peak_deg", "Lean peak (°)"),
    ("pelvic_drop_mean_deg", "Pelvic drop mean (°)"), ("pelvic_drop_peak_deg", "Pelvic drop peak (°)"),
    ("lever_arm_cm", "Lever arm (cm)"), ("lever_arm_shortening_cm", "Shortening (cm)"),
    ("abductor_force_bw", "Abductor force (BW)"), ("hip_force_bw", "Hip force (BW)"),
    ("hip_force_change_pct", "Hip force change (%)"),
)


def _num(v: Any) -> float | None:
    """Finite float or None (the templates print None as 'n/a'; never a silent NaN in text)."""
    try:
        f = float(v)
    except (TypeError, ValueError):
        return None
    return f if math.isfinite(f) else None


def _side_view(side: str, st: Mapping, strides: pd.DataFrame) -> dict[str, Any]:
    sub = strides[strides["stance_side"] == side]

    used: set[str] = set()

    def pick(col: str) -> float | None:
        # The summary's number wins (so report text equals the summary): "<col>_mean",
        # else "<col>" (the mechanics stage's per-side median); else the mean over phases.
        for key, stat in ((f"{col}_mean", "mean"), (col, "median")):
            if _num(st.get(key)) is not None:
                used.add(stat)
                return _num(st.get(key))
        if col in sub and sub[col].notna().any():
            used.add("mean")
            return _num(sub[col].mean())
        return None

    lever = pick("lever_arm_cm")
    shortening = pick("lever_arm_shortening_cm")
    force = pick("hip_force_change_pct")
    upright = lever + shortening if lever is not None and shortening is not None else None
    lean = _num(st.get("lean_mean_deg"))
    svg = Markup(lever_arm_svg(upright, lever, lean, side)) if None not in (lever, upright, lean) else None
    ci = st.get("lean_ci95_deg") or [None, None]
    return {"side": side, "n": st.get("n_phases", len(sub)), "lean": lean, "lean_sd": _num(st.get("lean_sd_deg")),
            "ci": [_num(ci[0]), _num(ci[1])], "drop": _num(st.get("pelvic_drop_mean_deg")),
            "single_support_s": _num(st.get("single_support_mean_s")),
            "force_change": force, "lever": lever, "upright": upright, "shortening": shortening, "svg": svg,
            "mech_stat": " and ".join(sorted(used)) or None}


def _summary_drop_validated(summary: Mapping) -> bool:
    """Does the summary say its pelvic drop came from a validated method? Absent means no."""
    return ((summary.get("pelvic_obliquity_method") or {}).get("validated")) is True


def render_session_report(
    summary: Mapping[str, Any], frames: pd.DataFrame, strides: pd.DataFrame, *,
    events: pd.DataFrame | None = None, hip_curve: object | None = None,
    pictures: Mapping[str, Mapping] | None = None, client: Mapping | None = None, date_filmed: str | None = None, clip_name: str | None = None,
    clinic_name: str | None = None, blur_faces: bool = True, generated_utc: str | None = None,
) -> str:
    """Render the session report (client part, then clinician part) as one HTML string.

    Parameters
    ----------
    summary : dict
        Summary of the gait and mechanics stages (keys ``sides``, ``quality``,
        ``settings``, ``version``, ``clip``, optional ``mechanics``,
        ``direction``, ``camera_roll_deg``, ``cadence_steps_per_min``).
        Per side, the mechanics numbers are read from ``<col>_mean`` or
        ``<col>`` (median, as the mechanics stage's per-side summary names
        them) for col in lever_arm_cm, lever_arm_shortening_cm,
        hip_force_change_pct; if absent, the mean over ``strides`` is used.
        The report states which statistic it shows.
    frames, strides : DataFrame
        Per-frame table and per-phase table (contract in DEVELOPERS.md).
    events : DataFrame, optional
        Gait events (time_s, frame, side, event); foot strikes are marked on the lean plot.
    hip_curve : list of dict, dict of arrays, or sweep result, optional
        Lean sweep from the mechanics stage (lean_deg, hip_force_bw, ...), e.g.
        the object ``mechanics.lean_sweep(...)`` returns (see
        :func:`lean_video.figures.curve_table`).
    pictures : dict side -> {"rgb": (H, W, 3) uint8, "keypoints": {name: (x, y)}, "lean_deg": float}
        Frame at peak lean for each side, optional.
    client : dict, optional
        Stored client fields (id, display_name, notes, mass_kg, ...); all escaped.
    date_filmed, clip_name, clinic_name : str, optional
        Shown only when given (the clip name is omitted by default for privacy).
    blur_faces : bool
        Pixelate the head in the pictures (default True).
    generated_utc : str, optional
        Timestamp to print; default now.
    """
    _require(summary, ("sides", "settings", "version", "clip"))
    for name, df in (("frames", frames), ("strides", strides)):
        if not isinstance(df, pd.DataFrame):
            raise LeanVideoError(f"{name} must be a pandas DataFrame, got {type(df).__name__}; pass the gait table.")
    if "stance_side" not in strides and len(strides):
        raise LeanVideoError("strides lacks the stance_side column; pass the gait stage's per-phase table.")
    if "stance_side" not in strides:     # no phases at all
        strides = pd.DataFrame(columns=["stance_side", "start_s", "end_s", "lean_mean_deg"])
    sides = {s: _side_view(s, (summary["sides"].get(s) or {}), strides) for s in SIDES}
    roll = float(summary.get("camera_roll_deg") or 0.0)
    # Numbers from a method that failed validation (wrong sign on the test
    # walkers) are not shown to client or clinician; the CSV and JSON keep them.
    # A summary that does not say how pelvic drop was measured (written before
    # the method was stated) is treated the same way: shown only when validated.
    pelvis_shown = _summary_drop_validated(summary)
    # With pelvis markers the pictures show the markers' line; the model's hip
    # points (which tilt with the trunk) are then not joined.
    hip_line = pelvis_shown and summary.get("pelvic_obliquity_source") != "pelvis markers"
    pics = {}
    for side, p in (pictures or {}).items():
        if side not in SIDES or not isinstance(p, Mapping) or "rgb" not in p or "keypoints" not in p:
            raise LeanVideoError(f"pictures must map 'left'/'right' to {{'rgb', 'keypoints', ...}}, got key {side!r}; "
                                 "pass the peak-lean frame and its keypoints.")
        lean = p.get("lean_deg")
        pics[side] = {"uri": annotate_peak_frame(p["rgb"], p["keypoints"], stance_side=side, lean_deg=lean,
                                                 camera_roll_deg=roll, blur_faces=blur_faces,
                                                 hip_line=hip_line),
                      "lean": lean, "time_s": p.get("time_s")}
    plots = [("plot-lean", figures.lean_timeseries(frames, strides, events))]
    if pelvis_shown:
        plots.append(("plot-obliquity", figures.obliquity_timeseries(frames, strides, validated=True)))
    plots.append(("plot-phases", figures.phase_lean(strides, summary["sides"])))
    if hip_curve:
        plots.append(("plot-hipforce", figures.hip_force_curve(hip_curve, strides)))
    phase_cols = [(c, lbl) for c, lbl in _PHASE_LABELS
                  if c in strides and (pelvis_shown or not c.startswith("pelvic_"))]
    quality = summary.get("quality") or {}
    ctx = {
        "title": "Walking assessment: trunk lean and hip load",
        "csp": CSP, "plotly_js": Markup(plotly.offline.get_plotlyjs()),
        "client": _client_view(client), "date_filmed": date_filmed, "clip_name": clip_name,
        "clinic_name": clinic_name, "generated": generated_utc or _now(), "summary": summary,
        "sides": sides, "pictures": pics, "blur_faces": blur_faces, "pelvis_shown": pelvis_shown, "hip_line": hip_line,
        "plots": [(pid, _plot_div(fig, pid)) for pid, fig in plots],
        "checks": quality.get("checks", []), "warnings": quality.get("warnings", []),
        "quality_rows": [(k, v) for k, v in _flatten({k: v for k, v in quality.items()
                                                      if k not in ("checks", "warnings")})],
        "phase_cols": phase_cols, "phase_rows": strides[[c for c, _ in phase_cols]].to_dict("records"),
        "settings_rows": _flatten(summary["settings"]),
        "mechanics_rows": _flatten(summary.get("mechanics") or {}), "pose_rows": _flatten(_pose_params(summary)),
        "clip": summary["clip"], "version": summary["version"],
    }
    return _env().get_template("session.html.j2").render(**ctx)


# --------------------------------------------------------------------------- history report
_HIST_METRICS = (("lean_mean_deg", "lean", "°"), ("hip_force_change_pct", "force", "%"),
                 ("pelvic_drop_mean_deg", "drop", "°"))


def _drop_validated(session: Mapping) -> bool:
    """Was this session's pelvic drop measured by a validated method (pelvis markers)?"""
    return _summary_drop_validated(session.get("summary") or {})


def history_rows(
    sessions: Sequence[Mapping], *,
    lean_allowance_deg: float = LEAN_CHANGE_METHOD["same_setup_error_max_deg"],
) -> dict[str, list[dict[str, Any]]]:
    """Per side, one row per session with mean, 95 % CI, change and MDC95 for lean, hip-force change and
    pelvic drop (the last only from sessions whose pelvic drop was validated, i.e. filmed with pelvis markers).

    Parameters
    ----------
    sessions : list of dict
        Dicts with ``date`` and ``phases`` (per-phase DataFrame), oldest first.
        Means/CIs are computed from the phases (Student t).
    lean_allowance_deg : float, keyword-only
        Systematic error a per-side lean change can carry between two
        sessions filmed the same way; a lean change is flagged only beyond
        MDC95 plus this (default: the largest such error measured on rendered
        session pairs, ``stated_accuracy.LEAN_CHANGE_METHOD``). 0 gives the
        plain MDC95 rule. See the module docstring.

    Returns
    -------
    dict
        ``{"left": rows, "right": rows}``; each row holds ``{m}_mean``,
        ``{m}_sd``, ``{m}_lo``, ``{m}_hi``, ``{m}_n``, ``{m}_sd_pooled`` and,
        for ``tag`` in ``prev``/``first``, ``{m}_change_{tag}``,
        ``{m}_mdc_{tag}``, ``{m}_threshold_{tag}`` (what the change must
        exceed) and ``{m}_beyond_{tag}`` (None where there is nothing to
        compare), for ``m`` in ``lean``, ``force``, ``drop``.
    """
    if not (isinstance(lean_allowance_deg, (int, float)) and math.isfinite(lean_allowance_deg)
            and lean_allowance_deg >= 0):
        raise LeanVideoError(f"lean_allowance_deg must be a finite number of degrees >= 0, got "
                             f"{lean_allowance_deg!r}; leave it out to use the measured "
                             f"{LEAN_CHANGE_METHOD['same_setup_error_max_deg']} deg.")
    allowance = {"lean": float(lean_allowance_deg), "force": 0.0, "drop": 0.0}
    out: dict[str, list[dict[str, Any]]] = {}
    for side in SIDES:
        rows = []
        for s in sessions:
            ph = s["phases"]
            sub = ph[ph["stance_side"] == side] if len(ph) else ph
            row: dict[str, Any] = {"date": s["date"], "side": side}
            for col, key, _ in _HIST_METRICS:
                vals = sub[col].tolist() if col in sub else []
                if key == "drop" and not _drop_validated(s):
                    vals = []  # never trend numbers from a method that failed validation
                m, sd, lo, hi, n = mean_ci95([float(v) for v in vals if v is not None])
                row.update({f"{key}_mean": m, f"{key}_sd": sd, f"{key}_lo": lo, f"{key}_hi": hi, f"{key}_n": n})
            rows.append(row)
        for _, key, _ in _HIST_METRICS:
            sdp = pooled_sd([r[f"{key}_sd"] for r in rows], [r[f"{key}_n"] for r in rows])
            for i, r in enumerate(rows):
                r[f"{key}_sd_pooled"] = sdp
                for tag, j in (("prev", i - 1), ("first", 0)):
                    ref = rows[j] if (i > 0 and j >= 0) else None
                    ok = (ref is not None and r[f"{key}_n"] >= 1 and ref[f"{key}_n"] >= 1 and math.isfinite(sdp))
                    change = r[f"{key}_mean"] - ref[f"{key}_mean"] if ok else math.nan
                    mdc = mdc95(sdp, ref[f"{key}_n"], r[f"{key}_n"]) if ok else math.nan
                    r[f"{key}_change_{tag}"] = change
                    r[f"{key}_mdc_{tag}"] = mdc
                    r[f"{key}_threshold_{tag}"] = mdc + allowance[key]
                    beyond = (abs(change) > mdc + allowance[key]) if ok else None
                    if key == "force" and beyond:
                        # the force estimate follows the lean: no more certain than the lean change
                        beyond = r.get(f"lean_beyond_{tag}") is True
                    r[f"{key}_beyond_{tag}"] = beyond
        out[side] = rows
    return out


#: Largest difference in camera roll between two visits still taken for the same camera place
#: (engineering choice, no source: the roll is measured within about 0.25 deg on test clips).
SAME_ROLL_DEG = 1.0
#: Largest relative difference in frame rate still taken for the same recording setting (engineering
#: choice, no source: phones record at 24, 25, 30 or 60 fps, and a variable rate wanders a few percent).
SAME_FPS_FRACTION = 0.1


def filming_differences(sessions: Sequence[Mapping]) -> list[dict[str, Any]]:
    """How each session's filming differs from the previous one's, as far as the summaries tell.

    The history report's filming allowance for lean assumes visits filmed the
    same way; light and clothes cannot be compared from the summaries, but a
    change of walking direction, frame size, frame rate or camera tilt shows a
    different set-up.

    Parameters
    ----------
    sessions : list of dict
        As :func:`render_history_report` takes them, oldest first, each with ``summary``.

    Returns
    -------
    list of dict
        ``{"index": i, "what": [text, ...]}`` for each session ``i`` >= 1 whose
        filming differs from session ``i - 1``; empty when none does.
    """
    def sig(s: Mapping) -> dict:
        summ = s.get("summary") or {}
        clip = summ.get("clip") or {}
        roll = summ.get("camera_roll_deg") if summ.get("camera_roll_source") == "scene" else None
        return {"direction": summ.get("direction"), "size": (clip.get("width"), clip.get("height")),
                "fps": clip.get("fps"), "roll": roll}

    out = []
    for i in range(1, len(sessions)):
        a, b = sig(sessions[i - 1]), sig(sessions[i])
        what = []
        if a["direction"] and b["direction"] and a["direction"] != b["direction"]:
            what.append(f"walking {a['direction']} the camera, then {b['direction']}")
        if None not in a["size"] + b["size"] and a["size"] != b["size"]:
            what.append(f"picture {a['size'][0]}x{a['size'][1]}, then {b['size'][0]}x{b['size'][1]}")
        if a["fps"] and b["fps"] and abs(a["fps"] - b["fps"]) > SAME_FPS_FRACTION * max(a["fps"], b["fps"]):
            what.append(f"{a['fps']:.0f} frames per second, then {b['fps']:.0f}")
        if a["roll"] is not None and b["roll"] is not None and abs(a["roll"] - b["roll"]) > SAME_ROLL_DEG:
            what.append(f"camera tilted {a['roll']:+.1f}°, then {b['roll']:+.1f}° (placed differently)")
        if what:
            out.append({"index": i, "what": what})
    return out


def render_history_report(
    client: Mapping, sessions: Sequence[Mapping], *, clinic_name: str | None = None,
    generated_utc: str | None = None,
) -> str:
    """Render one client's history across sessions as an HTML string.

    Parameters
    ----------
    client : dict
        Stored client fields (``Store.get_client(id).as_dict()``).
    sessions : list of dict
        ``Store.history(id)``: each with ``date``, ``phases`` (DataFrame),
        ``summary``, ``settings``, ``version``, ``clip_sha256``; oldest first.
    """
    if not sessions:
        raise LeanVideoError("history report needs at least one stored session; analyse a clip for this client first.")
    sessions = sorted(sessions, key=lambda s: str(s["date"]))
    rows = history_rows(sessions)
    flat = rows["left"] + rows["right"]
    # tables and plots name two sessions of one day alike: "date (1)", "date (2)"
    for row, label in zip(flat, figures.session_labels(pd.DataFrame(flat))):
        row["label"] = label
    plots = [("plot-hist-lean", figures.history_metric(flat, "lean", "lean (°, + = toward stance side)",
                                                       "Lean toward the standing leg, per session (95% CI)")),
             ("plot-hist-force", figures.history_metric(flat, "force", "hip force change (%, − = less load)",
                                                        "Estimated hip-force change from lean, per session (95% CI)"))]
    show_drop = any(r["drop_n"] for r in flat)
    if show_drop:
        plots.append(("plot-hist-drop", figures.history_metric(
            flat, "drop", "pelvic drop (°, + = swing side lower)",
            "Pelvic drop of the swing side, per session filmed with pelvis markers (95% CI)")))
    prov_labels = figures.session_labels(pd.DataFrame({"side": "all", "date": [s["date"] for s in sessions]}))
    prov = [{"date": label, "version": s.get("version") or s["summary"].get("version"),
             "clip_sha256": s.get("clip_sha256") or (s["summary"].get("clip") or {}).get("sha256"),
             "params": _flatten({"settings": s.get("settings") or s["summary"].get("settings") or {},
                                 "mechanics": s["summary"].get("mechanics") or {},
                                 "pose": _pose_params(s["summary"])})} for s, label in zip(sessions, prov_labels)]
    shared = prov[0]["params"] if all(p["params"] == prov[0]["params"] for p in prov) else None
    ctx = {"title": "Walking assessment: history", "csp": CSP, "plotly_js": Markup(plotly.offline.get_plotlyjs()),
           "client": _client_view(client), "clinic_name": clinic_name, "generated": generated_utc or _now(),
           "rows": rows, "plots": [(pid, _plot_div(fig, pid)) for pid, fig in plots], "provenance": prov,
           "shared_params": shared, "show_drop": show_drop,
           "n_earlier": sum(int(s.get("n_earlier_analyses") or 0) for s in sessions),
           "n_sessions": len(sessions), "lean_change": LEAN_CHANGE_METHOD,
           "filming_diffs": [{"label": prov_labels[d["index"]], "prev": prov_labels[d["index"] - 1],
                              "what": d["what"]} for d in filming_differences(sessions)],
           "lean_allowance": LEAN_CHANGE_METHOD["same_setup_error_max_deg"]}
    return _env().get_template("history.html.j2").render(**ctx)


# --------------------------------------------------------------------------- writing
def write_report_atomic(html: str, path: str | os.PathLike) -> Path:
    """Write ``html`` to ``path`` atomically (temp file in the same folder, fsync, ``os.replace``).

    A reader sees either the old file or the complete new one, never a part.
    Returns the final path.
    """
    target = Path(path)
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.is_dir():
        raise LeanVideoError(f"report folder {folder.name or '.'} does not exist; create it or choose another --out.")
    return atomic_write_text(target, html, private=True)
