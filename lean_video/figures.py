"""Plotly figures for the session and history reports.

Inputs are the plain tables of the gait/mechanics contract (see DEVELOPERS.md):
``frames`` (frame, time_s, trunk_lean_deg, pelvic_obliquity_deg, valid, ...),
``strides`` (one row per single-support phase; ``lean_mean_deg`` positive
toward the stance side) and a hip-force sweep (list of dicts with lean_deg,
hip_force_bw, hip_force_change_pct, lever_arm_cm). Every function returns a
:class:`plotly.graph_objects.Figure`; the report turns it into a ``<div>``
without plotly.js (the report inlines plotly.js once).

Palette (our own, colour-blind safe pair): the client's left side teal,
right side amber, neutral greys elsewhere.
"""

from __future__ import annotations

from typing import Mapping, Sequence

import numpy as np
import pandas as pd
import plotly.graph_objects as go

from lean_video.errors import LeanVideoError

SIDE_COLOURS = {"left": "#1a7f78", "right": "#c27c0e"}
SIDE_FILL = {"left": "rgba(26,127,120,0.13)", "right": "rgba(194,124,14,0.15)"}
INK = "#2b2f33"
GRID = "#e3e6e8"
SIDES = ("left", "right")
FIG_WIDTH_PX = 690   # fits the 700 px report column, i.e. A4 portrait with 12 mm margins


def _layout(fig: go.Figure, title: str, x_title: str, y_title: str, height: int = 300) -> go.Figure:
    fig.update_layout(
        template="none", width=FIG_WIDTH_PX, height=height,
        title={"text": title, "x": 0.0, "xanchor": "left", "font": {"size": 14, "color": INK}},
        font={"family": "Helvetica, Arial, sans-serif", "size": 11, "color": INK},
        margin={"l": 60, "r": 16, "t": 40, "b": 84},
        paper_bgcolor="white", plot_bgcolor="white",
        legend={"orientation": "h", "yref": "container", "y": 0.0, "yanchor": "bottom", "x": 0.0,
                "font": {"size": 10}},
    )
    fig.update_xaxes(title_text=x_title, gridcolor=GRID, zerolinecolor="#b9bec2", linecolor="#b9bec2",
                     showline=True, ticks="outside")
    fig.update_yaxes(title_text=y_title, gridcolor=GRID, zerolinecolor="#9aa0a5", linecolor="#b9bec2",
                     showline=True, ticks="outside")
    return fig


def _shade_phases(fig: go.Figure, strides: pd.DataFrame) -> None:
    # All bands in one layout update: plotly's add_vrect re-validates every
    # existing shape on each call, which grew to seconds for a 30 s walk.
    shapes = [{"type": "rect", "xref": "x", "yref": "paper", "x0": float(row.start_s), "x1": float(row.end_s),
               "y0": 0, "y1": 1, "fillcolor": SIDE_FILL[row.stance_side], "line": {"width": 0}, "layer": "below"}
              for row in strides.itertuples(index=False) if row.stance_side in SIDES]
    fig.update_layout(shapes=list(fig.layout.shapes) + shapes)
    for side in SIDES:
        # Legend entry for the shading (vrects have none of their own).
        fig.add_trace(go.Scatter(x=[None], y=[None], mode="markers", name=f"{side} single support",
                                 marker={"symbol": "square", "size": 11, "color": SIDE_FILL[side],
                                         "line": {"color": SIDE_COLOURS[side], "width": 1}}))


def _valid_series(frames: pd.DataFrame, column: str) -> tuple[np.ndarray, np.ndarray]:
    t = frames["time_s"].to_numpy(float)
    y = frames[column].to_numpy(float).copy()
    if "valid" in frames:
        y[~frames["valid"].to_numpy(bool)] = np.nan   # gaps, not interpolated lines
    return t, y


def lean_timeseries(frames: pd.DataFrame, strides: pd.DataFrame, events: pd.DataFrame | None = None) -> go.Figure:
    """Trunk lean against time, single-support phases shaded by stance side.

    Sign as in the frames table: positive = shoulders toward the client's right.
    Foot strikes from ``events`` (time_s, side, event), if given, are marked
    with triangles along the bottom of the plot.
    """
    t, y = _valid_series(frames, "trunk_lean_deg")
    fig = go.Figure()
    _shade_phases(fig, strides)
    fig.add_trace(go.Scatter(x=t, y=y, mode="lines", name="trunk lean", line={"color": INK, "width": 1.6},
                             connectgaps=False, hovertemplate="%{x:.2f} s: %{y:.1f}°<extra></extra>"))
    if events is not None and len(events):
        finite = y[np.isfinite(y)]
        y_mark = float(finite.min()) - 0.5 if len(finite) else 0.0
        for side in SIDES:
            ev = events[(events["side"] == side) & (events["event"] == "foot_strike")]
            if len(ev):
                fig.add_trace(go.Scatter(x=ev["time_s"], y=[y_mark] * len(ev), mode="markers",
                                         name=f"{side} foot strike",
                                         marker={"symbol": "triangle-up", "size": 8, "color": SIDE_COLOURS[side]},
                                         hovertemplate="foot strike %{x:.2f} s<extra></extra>"))
    return _layout(fig, "Trunk lean over time (+ = shoulders toward the client's right)", "time (s)", "lean (°)")


def obliquity_timeseries(frames: pd.DataFrame, strides: pd.DataFrame, *, validated: bool = False) -> go.Figure:
    """Pelvic obliquity against time (positive = client's left hip lower).

    ``validated`` False adds "not validated, see caution" to the title.
    """
    t, y = _valid_series(frames, "pelvic_obliquity_deg")
    fig = go.Figure()
    _shade_phases(fig, strides)
    fig.add_trace(go.Scatter(x=t, y=y, mode="lines", name="pelvic obliquity", line={"color": "#55606a", "width": 1.6},
                             connectgaps=False, hovertemplate="%{x:.2f} s: %{y:.1f}°<extra></extra>"))
    note = "" if validated else "; not validated, see caution"
    return _layout(fig, f"Pelvic obliquity over time (+ = client's left hip lower{note})", "time (s)", "obliquity (°)")


def phase_lean(strides: pd.DataFrame, side_stats: Mapping[str, Mapping]) -> go.Figure:
    """Mean lean of every single-support phase by stance side, with mean and 95 % CI.

    ``side_stats[side]`` must hold ``lean_mean_deg`` and ``lean_ci95_deg`` ([lo, hi]).
    """
    fig = go.Figure()
    rng = np.random.default_rng(0)   # fixed jitter so the figure is reproducible
    for i, side in enumerate(SIDES):
        vals = strides.loc[strides["stance_side"] == side, "lean_mean_deg"].to_numpy(float)
        if len(vals):
            x = i + rng.uniform(-0.12, 0.12, len(vals)) - 0.12
            fig.add_trace(go.Scatter(x=x, y=vals, mode="markers", name=f"{side}: each phase",
                                     marker={"color": SIDE_COLOURS[side], "size": 7, "opacity": 0.75},
                                     hovertemplate="%{y:.1f}°<extra></extra>"))
        st = side_stats.get(side) or {}
        if st.get("lean_mean_deg") is not None and st.get("lean_ci95_deg"):
            m = float(st["lean_mean_deg"])
            lo, hi = (float(v) for v in st["lean_ci95_deg"])
            fig.add_trace(go.Scatter(
                x=[i + 0.22], y=[m], mode="markers", name=f"{side}: mean, 95% CI",
                marker={"color": "white", "size": 11, "symbol": "diamond",
                        "line": {"color": SIDE_COLOURS[side], "width": 2.5}},
                error_y={"type": "data", "symmetric": False, "array": [hi - m], "arrayminus": [m - lo],
                         "color": SIDE_COLOURS[side], "thickness": 2, "width": 8},
                hovertemplate=f"mean {m:.1f}° (95% CI {lo:.1f} to {hi:.1f})<extra></extra>"))
    fig = _layout(fig, "Lean toward the standing leg, each single-support phase",
                  "stance side", "lean (°, + = toward stance leg)", height=320)
    fig.update_xaxes(tickvals=[0, 1], ticktext=["left leg", "right leg"], range=[-0.6, 1.6], showgrid=False)
    return fig


def curve_table(curve: object) -> pd.DataFrame:
    """Lean sweep as a table sorted by lean.

    Accepts a list of dicts, a dict of arrays, or a result object with a
    ``lean_deg`` attribute and an ``as_dict()`` method (duck-typed; the
    mechanics stage is not imported).
    """
    if hasattr(curve, "as_dict") and hasattr(curve, "lean_deg"):
        data: object = {**curve.as_dict(), "lean_deg": curve.lean_deg}
    elif isinstance(curve, Mapping):
        data = dict(curve)
    else:
        data = list(curve)
    c = pd.DataFrame(data)
    missing = [k for k in ("lean_deg", "hip_force_bw") if k not in c]
    if missing:
        raise LeanVideoError(f"hip-force curve lacks {missing}; pass the lean sweep with lean_deg and hip_force_bw.")
    return c.sort_values("lean_deg")


def hip_force_curve(curve: Sequence[Mapping] | Mapping[str, Sequence[float]], strides: pd.DataFrame) -> go.Figure:
    """Model hip force against lean (the sweep), with this client's phases on it.

    The client's phases are placed at (lean_mean_deg, hip_force_bw) as the
    mechanics stage computed them, so they lie on the curve when the same
    model parameters were used.
    """
    c = curve_table(curve)
    fig = go.Figure()
    fig.add_trace(go.Scatter(x=c["lean_deg"], y=c["hip_force_bw"], mode="lines", name="model",
                             line={"color": "#7d868d", "width": 2},
                             hovertemplate="lean %{x:.1f}°: %{y:.2f} × body weight<extra></extra>"))
    if "hip_force_bw" in strides:
        for side in SIDES:
            sub = strides[(strides["stance_side"] == side) & strides["hip_force_bw"].notna()]
            if len(sub):
                fig.add_trace(go.Scatter(x=sub["lean_mean_deg"], y=sub["hip_force_bw"], mode="markers",
                                         name=f"{side} phases", marker={"color": SIDE_COLOURS[side], "size": 8,
                                                                        "line": {"color": "white", "width": 1}},
                                         hovertemplate="lean %{x:.1f}°: %{y:.2f} × BW<extra></extra>"))
    return _layout(fig, "Estimated hip joint force against trunk lean (simplified model)",
                   "lean toward stance side (°)", "hip force (× body weight)", height=320)


def session_labels(rows: pd.DataFrame) -> list[str]:
    """Axis label of each history row: its date, numbered where one side has several sessions that day.

    Two clips filmed on one day would otherwise share one point of a category axis.
    """
    labels = []
    seen: dict[tuple[str, str], int] = {}
    totals = rows.groupby(["side", "date"]).size().to_dict()
    for side, date in zip(rows["side"], rows["date"]):
        seen[(side, date)] = seen.get((side, date), 0) + 1
        labels.append(str(date) if totals[(side, date)] == 1 else f"{date} ({seen[(side, date)]})")
    return labels


def history_metric(rows: Sequence[Mapping], metric: str, y_title: str, title: str) -> go.Figure:
    """One metric across sessions, per side, with 95 % CI bars.

    ``rows``: dicts with ``date`` (YYYY-MM-DD), ``side``, ``{metric}_mean``,
    ``{metric}_lo``, ``{metric}_hi`` (CI bounds may be None).
    """
    df = pd.DataFrame(list(rows))
    if len(df):
        df["x"] = session_labels(df)
    fig = go.Figure()
    for k, side in enumerate(SIDES):
        sub = df[(df["side"] == side) & df[f"{metric}_mean"].notna()] if len(df) else df
        if not len(sub):
            continue
        m = sub[f"{metric}_mean"].to_numpy(float)
        hi = sub[f"{metric}_hi"].to_numpy(float) - m
        lo = m - sub[f"{metric}_lo"].to_numpy(float)
        fig.add_trace(go.Scatter(
            x=sub["x"], y=m, mode="lines+markers", name=f"{side} leg",
            line={"color": SIDE_COLOURS[side], "width": 2}, marker={"size": 8},
            error_y={"type": "data", "symmetric": False, "array": np.nan_to_num(hi), "arrayminus": np.nan_to_num(lo),
                     "color": SIDE_COLOURS[side], "thickness": 1.5, "width": 6},
            hovertemplate="%{x}: %{y:.1f}<extra></extra>"))
    fig = _layout(fig, title, "date filmed", y_title, height=300)
    fig.update_xaxes(type="category")
    return fig
