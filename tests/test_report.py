"""Tests for lean_video.report, lean_video.figures and lean_video.report_pictures.

Fixture data are invented (fictional "Harbourside Physio Lab", client HP-014).
"""

from __future__ import annotations

import base64
import html as html_lib
import json
import math
import os
import re
import shutil
import subprocess
from html.parser import HTMLParser
from pathlib import Path

import cv2
import numpy as np
import pandas as pd
import plotly.offline
import pytest

from lean_video.errors import LeanVideoError
from lean_video.report import (
    clean_text, filming_differences, history_rows, mdc95, mean_ci95, pooled_sd, render_history_report,
    render_session_report, write_report_atomic,
)
from lean_video.report_pictures import annotate_peak_frame, blur_face, body_crop, head_box, lever_arm_svg
from lean_video.stated_accuracy import LEAN_CHANGE_METHOD, STANDING_METHOD

ARTIFACTS = Path(__file__).parent / "artifacts"
HOSTILE_NAME = "<script>alert(1)</script>"
HOSTILE_NOTES = "he said \"ouch\" & 'ow' \x07\x00<img src=x onerror=alert(2)>"


# --------------------------------------------------------------------------- fixtures
def make_strides(n: int = 12, left_lean: float = 6.0, right_lean: float = 2.0, seed: int = 3) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    rows = []
    for i in range(n):
        side = "left" if i % 2 == 0 else "right"
        lean = (left_lean if side == "left" else right_lean) + rng.normal(0, 1.0)
        start = 0.3 + 0.55 * i
        lever = 10.0 - 0.2 * lean
        rows.append({"stance_side": side, "start_s": start, "end_s": start + 0.4, "duration_s": 0.4,
                     "lean_mean_deg": lean, "lean_peak_deg": lean + 1.5, "pelvic_drop_mean_deg": -1.0 + 0.1 * i,
                     "pelvic_drop_peak_deg": 2.5, "lever_arm_cm": lever, "lever_arm_shortening_cm": 10.0 - lever,
                     "lever_arm_shortening_pct": (10.0 - lever) * 10, "abductor_force_bw": 1.9 - 0.05 * lean,
                     "hip_force_bw": 2.8 - 0.06 * lean, "hip_force_change_pct": -0.06 * lean / 2.8 * 100})
    return pd.DataFrame(rows)


def make_frames(strides: pd.DataFrame | None = None, duration_s: float = 7.0, fps: float = 30.0) -> pd.DataFrame:
    """Lean as smooth bumps over each phase: toward the stance side (client's right = +)."""
    strides = make_strides() if strides is None else strides
    t = np.arange(0, duration_s, 1 / fps)
    lean = np.zeros_like(t)
    for r in strides.itertuples(index=False):
        sign = 1.0 if r.stance_side == "right" else -1.0
        mid, half = (r.start_s + r.end_s) / 2, (r.end_s - r.start_s) / 2
        lean += sign * r.lean_mean_deg * np.exp(-0.5 * ((t - mid) / (0.6 * half)) ** 2)
    valid = np.ones_like(t, bool)
    valid[40:46] = False
    return pd.DataFrame({"frame": np.arange(len(t)), "time_s": t, "trunk_lean_deg": lean,
                         "pelvic_obliquity_deg": -0.4 * lean, "left_contact": lean < 0, "right_contact": lean > 0,
                         "valid": valid})


def make_summary(strides: pd.DataFrame) -> dict:
    sides = {}
    for side in ("left", "right"):
        sub = strides[strides["stance_side"] == side]
        m, sd, lo, hi, n = mean_ci95(sub["lean_mean_deg"].tolist())
        sides[side] = {"n_phases": n, "lean_mean_deg": m, "lean_sd_deg": sd, "lean_ci95_deg": [lo, hi],
                       "pelvic_drop_mean_deg": float(sub["pelvic_drop_mean_deg"].mean()),
                       "single_support_mean_s": 0.4,
                       "hip_force_change_pct_mean": float(sub["hip_force_change_pct"].mean()),
                       "lever_arm_shortening_cm_mean": float(sub["lever_arm_shortening_cm"].mean()),
                       "lever_arm_cm_mean": float(sub["lever_arm_cm"].mean())}
    return {
        "direction": "toward", "camera_roll_deg": 1.2, "cadence_steps_per_min": 109.1, "sides": sides,
        "quality": {"checks": [
            {"name": "landmarks visible", "status": "pass", "detail": "97% of frames", "suggestion": ""},
            {"name": "steps per side", "status": "warn", "detail": "6 per side", "suggestion": "film a longer walk"},
            {"name": "camera roll", "status": "fail", "detail": "1.2 deg", "suggestion": "level the phone"}],
            "warnings": ["walking speed varied"], "n_valid_frames": 203,
            "dropped_phases": [{"stance_side": "left", "reason": "partial phase"}]},
        "settings": {"filter_cutoff_hz": 6.0, "min_visibility": 0.5, "event_method": "velocity"},
        "version": "0.1.0",
        "clip": {"sha256": "c" * 64, "width": 1080, "height": 1920, "fps": 30.0, "duration_s": 7.0},
        "mechanics": {"mass_kg": 72.5, "abductor_lever_cm": 5.0, "defaults_used": {"abductor_lever_cm": True}},
    }


def make_events(strides: pd.DataFrame) -> pd.DataFrame:
    rows = []
    for r in strides.itertuples(index=False):
        other = "right" if r.stance_side == "left" else "left"
        rows += [{"time_s": r.start_s, "frame": int(r.start_s * 30), "side": other, "event": "foot_off"},
                 {"time_s": r.end_s, "frame": int(r.end_s * 30), "side": other, "event": "foot_strike"}]
    return pd.DataFrame(rows)


def make_curve() -> list[dict]:
    return [{"lean_deg": float(x), "hip_force_bw": 2.8 - 0.06 * x, "hip_force_change_pct": -0.06 * x / 2.8 * 100,
             "lever_arm_cm": 10.0 - 0.2 * x} for x in np.arange(-5, 15.5, 0.5)]


def make_picture(lean_deg: float = 6.0) -> dict:
    h, w = 720, 405
    img = np.full((h, w, 3), 180, np.uint8)
    rng = np.random.default_rng(0)
    img[60:160, 150:250] = rng.integers(0, 256, (100, 100, 3), dtype=np.uint8)   # "face" texture
    kp = {"nose": (200, 110), "left_eye": (212, 100), "right_eye": (188, 100), "left_ear": (228, 108),
          "right_ear": (172, 108), "left_shoulder": (250, 200), "right_shoulder": (150, 200),
          "left_hip": (235, 380), "right_hip": (175, 380), "left_knee": (240, 520), "right_knee": (170, 520),
          "left_ankle": (240, 660), "right_ankle": (170, 660), "left_elbow": (265, 290), "right_elbow": (135, 290),
          "left_wrist": (268, 370), "right_wrist": (132, 370)}
    return {"rgb": img, "keypoints": kp, "lean_deg": lean_deg, "time_s": 1.23}


@pytest.fixture(scope="module")
def session_html() -> tuple[str, dict]:
    strides = make_strides()
    summary = make_summary(strides)
    # pelvic drop measured by the validated method, so every part of the report is drawn
    summary["pelvic_obliquity_method"] = {"validated": True, "note": "From two stickers over the pelvis."}
    html = render_session_report(
        summary, make_frames(strides), strides, events=make_events(strides), hip_curve=make_curve(),
        pictures={"left": make_picture(6.0), "right": make_picture(-2.0)},
        client={"id": "HP-014", "display_name": HOSTILE_NAME, "notes": HOSTILE_NOTES, "mass_kg": 72.5,
                "height_m": 1.7}, date_filmed="2026-11-03", clinic_name="Harbourside Physio Lab")
    return html, summary


def make_sessions() -> list[dict]:
    out = []
    for k, (date, ll) in enumerate((("2026-09-01", 9.0), ("2026-10-01", 8.6), ("2026-11-03", 4.0))):
        st = make_strides(12, left_lean=ll, right_lean=2.0, seed=k)
        out.append({"date": date, "phases": st, "summary": make_summary(st), "version": "0.1.0",
                    "clip_sha256": f"{k}" * 64, "settings": {"filter_cutoff_hz": 6.0}})
    return out


# --------------------------------------------------------------------------- HTML helpers
class _Collect(HTMLParser):
    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.tags: list[tuple[str, dict]] = []
        self.outside_script_text: list[str] = []
        self.style_text: list[str] = []
        self._in: list[str] = []
        self.tables: dict[str, list[list[str]]] = {}
        self._table: str | None = None
        self._cell: list[str] | None = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.append((tag, a))
        if tag in ("script", "style"):
            self._in.append(tag)
        if tag == "table" and a.get("id"):
            self._table = a["id"]
            self.tables[self._table] = []
        if self._table and tag == "tr":
            self.tables[self._table].append([])
        if self._table and tag in ("td", "th"):
            self._cell = []

    def handle_endtag(self, tag):
        if tag in ("script", "style") and self._in:
            self._in.pop()
        if tag in ("td", "th") and self._cell is not None and self._table:
            self.tables[self._table][-1].append("".join(self._cell).strip())
            self._cell = None
        if tag == "table":
            self._table = None

    def handle_data(self, data):
        if self._in and self._in[-1] == "style":
            self.style_text.append(data)
        if not self._in:
            self.outside_script_text.append(data)
        if self._cell is not None:
            self._cell.append(data)


def parse(html: str) -> _Collect:
    p = _Collect()
    p.feed(html)
    p.close()
    return p


URL_ATTRS = {"src", "href", "action", "formaction", "data", "poster", "srcset", "background", "xlink:href",
             "cite", "longdesc", "manifest", "ping"}


def assert_no_external_reference(html: str) -> None:
    """No tag attribute, CSS or text outside scripts refers to a network location.

    plotly.js (inlined in one <script>) contains URL strings in its code (e.g.
    for map tiles we never use); they are not resource references. The CSP
    meta tag (default-src 'none') additionally makes the browser refuse them.
    """
    p = parse(html)
    for tag, attrs in p.tags:
        assert tag not in ("link", "iframe", "object", "embed", "base", "frame", "audio", "video", "source"), tag
        for k, v in attrs.items():
            if k in URL_ATTRS and v is not None:
                assert v.startswith("data:") or v.startswith("#"), (tag, k, v[:80])
            if v and k not in ("content",):   # the CSP's own text is checked below
                assert "//" not in v or v.startswith("data:"), (tag, k, v[:80])
        if tag == "script":
            assert "src" not in attrs
        if tag == "meta" and attrs.get("http-equiv") == "Content-Security-Policy":
            assert "default-src 'none'" in attrs["content"] and "http" not in attrs["content"]
    css = "".join(p.style_text)
    assert "@import" not in css and not re.search(r"url\((?!\s*['\"]?data:)", css)
    text = "".join(p.outside_script_text)
    assert "//" not in text, re.findall(r".{20}//.{20}", text)[:3]
    assert any(t == "meta" and a.get("http-equiv") == "Content-Security-Policy" for t, a in p.tags)


# --------------------------------------------------------------------------- statistics
def test_pooled_sd_and_mdc_hand_computed():
    # Hand computation (Weir 2005, J Strength Cond Res 19:231-240, MDC95 = 1.96*sqrt(2)*SEM):
    # SDs 2 and 3 with n = 10 each: pooled var = (9*4 + 9*9)/18 = 6.5;
    # SEM = sqrt(6.5)/sqrt(10) = 0.806226; MDC95 = 1.96*1.414214*0.806226 = 2.23474.
    sdp = pooled_sd([2.0, 3.0], [10, 10])
    assert sdp == pytest.approx(math.sqrt(6.5), rel=1e-12)
    assert mdc95(sdp, 10, 10) == pytest.approx(2.23474, abs=5e-5)
    # Unequal n: n_a=5, n_b=20 -> harmonic mean 8; SD 2: MDC = 1.96*sqrt(2)*2/sqrt(8) = 1.96.
    # (sqrt(2)/sqrt(n_h) = sqrt(1/n_a + 1/n_b): the standard error of a difference of two
    # independent means, textbook statistics, from memory; Weir 2005 gives the equal-n form.)
    assert mdc95(2.0, 5, 20) == pytest.approx(1.96, rel=1e-12)


def test_pooled_sd_ignores_single_phase_sessions_and_mdc_validates():
    assert pooled_sd([2.0, float("nan")], [10, 1]) == pytest.approx(2.0)
    assert math.isnan(pooled_sd([float("nan")], [1]))
    with pytest.raises(LeanVideoError, match="mdc95 needs at least one phase"):
        mdc95(1.0, 0, 3)


def test_mean_ci95_student_t():
    # t(0.975, 2) = 4.302653 (standard t table, e.g. Altman 1991, Practical Statistics for Medical Research, App. B).
    m, sd, lo, hi, n = mean_ci95([4.0, 6.0, 8.0])
    assert (m, sd, n) == (6.0, 2.0, 3)
    half = 4.302653 * 2.0 / math.sqrt(3)
    assert hi - m == pytest.approx(half, abs=1e-5) and m - lo == pytest.approx(half, abs=1e-5)


def test_history_rows_mdc_hand_computed():
    # Left lean per phase: session A [4, 6] (SD sqrt 2), session B [8, 10, 12] (SD 2).
    # Pooled var = (1*2 + 2*4)/3 = 10/3; MDC95 = 1.96*sqrt(10/3*(1/2+1/3)) = 1.96*5/3 = 3.26667
    # (Weir 2005 MDC95 = 1.96*sqrt(2)*SEM, with the unequal-n standard error of a difference
    # of two means, sd*sqrt(1/n_a + 1/n_b): textbook statistics, from memory).
    def ph(vals):
        return pd.DataFrame({"stance_side": ["left"] * len(vals), "lean_mean_deg": vals,
                             "hip_force_change_pct": [-1.0 * v for v in vals]})
    rows = history_rows([{"date": "2026-01-01", "phases": ph([4.0, 6.0])},
                         {"date": "2026-02-01", "phases": ph([8.0, 10.0, 12.0])}])["left"]
    assert rows[1]["lean_change_prev"] == pytest.approx(5.0)
    assert rows[1]["lean_mdc_prev"] == pytest.approx(1.96 * 5 / 3, abs=1e-9)
    assert rows[1]["lean_beyond_prev"] is True
    assert rows[0]["lean_beyond_prev"] is None and math.isnan(rows[0]["lean_change_prev"])
    assert rows[1]["force_change_first"] == pytest.approx(-5.0)



def test_history_rows_lean_change_needs_mdc_plus_filming_allowance():
    # Left lean per phase [4, 5, 6] then [6, 7, 8]: SD 1 in both, pooled SD 1, MDC95 =
    # 1.96 * sqrt(1/3 + 1/3) = 1.6003 (same hand computation as above). The change of 2.0 deg
    # is beyond MDC95 but not beyond MDC95 + the 1.16 deg a change carried between rendered
    # sessions filmed the same way (stated_accuracy.LEAN_CHANGE_METHOD, measured 2026-12-04;
    # 1.08 until foot offs walking toward were searched past the other foot's strike).
    def ph(vals):
        return pd.DataFrame({"stance_side": ["left"] * len(vals), "lean_mean_deg": vals,
                             "hip_force_change_pct": [-3.0 * v for v in vals]})
    sessions = [{"date": "2026-01-01", "phases": ph([4.0, 5.0, 6.0])},
                {"date": "2026-02-01", "phases": ph([6.0, 7.0, 8.0])}]
    rows = history_rows(sessions)["left"]
    mdc = 1.96 * math.sqrt(2 / 3)
    assert rows[1]["lean_mdc_prev"] == pytest.approx(mdc, abs=1e-9)
    assert rows[1]["lean_threshold_prev"] == pytest.approx(mdc + LEAN_CHANGE_METHOD["same_setup_error_max_deg"])
    assert rows[1]["lean_beyond_prev"] is False
    # force: -6 %, beyond its own MDC95 (3 * 1.6 = 4.8) but computed from a lean change that is not
    assert abs(rows[1]["force_change_prev"]) > rows[1]["force_mdc_prev"]
    assert rows[1]["force_beyond_prev"] is False
    # without the allowance, the plain MDC95 rule of Weir 2005 flags both
    plain = history_rows(sessions, lean_allowance_deg=0.0)["left"]
    assert plain[1]["lean_beyond_prev"] is True and plain[1]["force_beyond_prev"] is True
    # a larger change clears MDC95 + allowance: 2.8 > 1.60 + 1.16
    sessions[1]["phases"] = ph([6.8, 7.8, 8.8])
    rows = history_rows(sessions)["left"]
    assert rows[1]["lean_beyond_prev"] is True and rows[1]["force_beyond_prev"] is True
    for bad in (-0.5, float("nan"), "1"):
        with pytest.raises(LeanVideoError, match="lean_allowance_deg must be a finite number of degrees >= 0"):
            history_rows(sessions, lean_allowance_deg=bad)


def test_history_report_states_the_filming_allowance():
    html = render_history_report({"id": "HP-014"}, make_sessions())
    para = re.search(r'<p id="filming-allowance">(.*?)</p>', html, re.S)
    assert para is not None
    text = " ".join(re.sub(r"<[^>]+>", "", para.group(1)).split())
    m = LEAN_CHANGE_METHOD
    for number in (f"{m['same_setup_error_max_deg']:.2f}°", f"{m['other_setup_error_max_deg']:.1f}°",
                   "film every visit in the same place, light and camera position"):
        assert number in text
    assert parse(html).tables["history-left"][1][4] == "MDC95 + filming"


def test_filming_differences_between_visits():
    sessions = make_sessions()
    assert filming_differences(sessions) == []  # all three filmed alike
    html = render_history_report({"id": "HP-014"}, sessions)
    assert 'id="filming-differences"' not in html
    s1 = dict(sessions[1]["summary"])
    s1.update(direction="away", camera_roll_source="scene", camera_roll_deg=-0.6,
              clip={**s1["clip"], "width": 720, "height": 1280, "fps": 60.0})
    s0 = dict(sessions[0]["summary"], camera_roll_source="scene", camera_roll_deg=1.2)
    sessions[0]["summary"], sessions[1]["summary"] = s0, s1
    diffs = filming_differences(sessions)
    # visit 2 differs from visit 1 in all four; visit 3 (as visit 1) differs from visit 2 again,
    # but for the roll, which visit 3 did not measure from the scene
    assert [d["index"] for d in diffs] == [1, 2]
    assert diffs[0]["what"] == ["walking toward the camera, then away", "picture 1080x1920, then 720x1280",
                                "30 frames per second, then 60", "camera tilted +1.2°, then -0.6° (placed differently)"]
    assert len(diffs[1]["what"]) == 3
    # a roll within SAME_ROLL_DEG is the same camera place
    sessions[1]["summary"] = dict(s0, camera_roll_deg=1.2 - 0.9)
    assert filming_differences(sessions[:2]) == []
    sessions[1]["summary"] = s1
    html = render_history_report({"id": "HP-014"}, sessions)
    box = re.search(r'<div class="caution" id="filming-differences">(.*?)</div>', html, re.S)
    assert box is not None
    text = " ".join(re.sub(r"<[^>]+>", " ", box.group(1)).split())
    assert "2026-10-01 against 2026-09-01: walking toward the camera, then away" in text
    assert f"up to {LEAN_CHANGE_METHOD['other_setup_error_max_deg']:.1f}°" in text

# --------------------------------------------------------------------------- session report
def test_session_report_has_no_external_reference(session_html):
    html, _ = session_html
    assert_no_external_reference(html)


def test_plotly_inlined_once_and_every_plot_present(session_html):
    html, _ = session_html
    head = plotly.offline.get_plotlyjs()[:300]
    assert html.count(head) == 1
    for pid in ("plot-lean", "plot-obliquity", "plot-phases", "plot-hipforce"):
        assert re.search(rf'<div id="{pid}" class="plotly-graph-div"', html), pid
    assert html.count("Plotly.newPlot(") == 4
    assert '"name":"left foot strike"' in html and '"name":"right foot strike"' in html


def test_unvalidated_pelvic_drop_is_withheld_from_the_report():
    # A method that failed validation (stated_accuracy.PELVIS_METHOD: wrong sign on the
    # rendered walkers) must not put numbers in front of client or clinician.
    strides = make_strides()
    summary = make_summary(strides)
    summary["pelvic_obliquity_method"] = {"validated": False, "note": "Moved the wrong way on test walkers."}
    html = render_session_report(summary, make_frames(strides), strides, events=make_events(strides))
    tables = parse(html).tables
    assert "Your pelvis:" not in html
    assert "Pelvic drop (°)" not in tables["side-table"][0]
    assert not any("Pelvic" in h for h in tables["phase-table"][0])
    assert 'id="plot-obliquity"' not in html
    assert "not shown, because its method failed validation" in html
    assert "Moved the wrong way on test walkers." in html
    # ... and shown, with its note, when the method is validated
    summary["pelvic_obliquity_method"] = {"validated": True, "note": "Checked on test walkers."}
    html = render_session_report(summary, make_frames(strides), strides, events=make_events(strides))
    tables = parse(html).tables
    assert "Pelvic drop (°)" in tables["side-table"][0] and 'id="plot-obliquity"' in html
    assert "failed validation" not in html


def test_pelvic_drop_of_unstated_method_is_withheld():
    # A summary that does not say how pelvic drop was measured (written before the
    # method was recorded) is not trusted: withheld, like a failed method, with its reason.
    strides = make_strides()
    summary = make_summary(strides)
    assert "pelvic_obliquity_method" not in summary
    html = render_session_report(summary, make_frames(strides), strides, events=make_events(strides))
    tables = parse(html).tables
    assert "Your pelvis:" not in html
    assert "Pelvic drop (°)" not in tables["side-table"][0]
    assert 'id="plot-obliquity"' not in html
    assert "does not say how it was measured" in html and "failed validation" not in html


def test_session_numbers_match_summary(session_html):
    html, summary = session_html
    tables = parse(html).tables
    side_rows = {r[0]: r for r in tables["side-table"][1:]}
    for side in ("left", "right"):
        s = summary["sides"][side]
        row = side_rows[side]
        assert row[1] == str(s["n_phases"])
        assert row[2] == f"{s['lean_mean_deg']:.1f}"
        assert row[4] == f"{s['lean_ci95_deg'][0]:.1f} to {s['lean_ci95_deg'][1]:.1f}"
        assert float(row[9]) == pytest.approx(s["hip_force_change_pct_mean"], abs=0.051)
    assert len(tables["phase-table"]) == 1 + 12
    assert [r[0] for r in tables["checks"][1:]] == ["landmarks visible", "steps per side", "camera roll"]
    assert [tuple(r) for r in tables["quality-details"][1:]] == [
        ("dropped_phases[0].reason", "partial phase"), ("dropped_phases[0].stance_side", "left"),
        ("n_valid_frames", "203")]
    params = dict(tuple(r) for r in tables["settings"][1:])
    assert params == {"event_method": "velocity", "filter_cutoff_hz": "6", "min_visibility": "0.5"}
    assert dict(tuple(r) for r in tables["mechanics"][1:])["defaults_used.abductor_lever_cm"] == "True"
    assert summary["clip"]["sha256"] in html and "lean_video 0.1.0" in html
    # client text uses the same numbers
    left = summary["sides"]["left"]
    assert f'<div class="big">{abs(left["lean_mean_deg"]):.1f}°</div>' in html
    assert f"{abs(left['hip_force_change_pct_mean']):.0f}% lower" in html


def test_session_report_escapes_hostile_client_text(session_html):
    html, _ = session_html
    assert HOSTILE_NAME not in html and "<img src=x" not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    assert "&#34;ouch&#34; &amp; &#39;ow&#39;" in html
    assert "\x07" not in html and "\x00" not in html
    assert clean_text("a\x00b\x1bc\td\ne") == "abc\td\ne"


def test_session_report_privacy_and_cautions(session_html):
    html, _ = session_html
    assert "/work/" not in html and "/tmp/" not in html and ".mp4" not in html
    assert "not a diagnosis" in html and "local regulations" in html and "only on this computer" in html
    assert html.count('<img src="data:image/png;base64,') == 2
    assert html.count('<svg class="lever"') == 2


def test_clip_name_only_when_passed():
    strides = make_strides()
    html = render_session_report(make_summary(strides), make_frames(), strides, clip_name="walk_03.mp4")
    assert "walk_03.mp4" in html
    assert 'id="plot-hipforce"' not in html           # no curve given, no empty plot


def test_session_report_without_mechanics_says_so():
    strides = make_strides()[["stance_side", "start_s", "end_s", "duration_s", "lean_mean_deg"]]
    summary = make_summary(make_strides())
    for side in summary["sides"].values():
        for k in ("hip_force_change_pct_mean", "lever_arm_cm_mean", "lever_arm_shortening_cm_mean"):
            side.pop(k)
    summary["sides"]["right"]["lean_sd_deg"] = float("nan")
    html = render_session_report(summary, make_frames(), strides)
    assert html.count("No hip-load estimate") == 2 and '<svg class="lever"' not in html
    assert "nan" not in parse(html).tables["side-table"][2]     # NaN shown as n/a
    assert "n/a" in parse(html).tables["side-table"][2]


def test_mechanics_medians_and_dict_curve_accepted():
    # The mechanics stage names its per-side medians without "_mean" and its sweep is a dict of arrays.
    strides = make_strides()
    summary = make_summary(strides)
    for side in ("left", "right"):
        st = summary["sides"][side]
        for col in ("hip_force_change_pct", "lever_arm_cm", "lever_arm_shortening_cm"):
            st.pop(f"{col}_mean")
            st[col] = float(strides.loc[strides["stance_side"] == side, col].median())
    curve = {k: np.array([d[k] for d in make_curve()]) for k in make_curve()[0]}
    html = render_session_report(summary, make_frames(strides), strides, hip_curve=curve)
    table = parse(html).tables["side-table"]
    row = {r[0]: r for r in table[1:]}["left"]
    assert row[table[0].index("Lever arm (cm)")] == f"{summary['sides']['left']['lever_arm_cm']:.1f}"
    assert "per-side median over phases" in html and 'id="plot-hipforce"' in html


def test_bad_pictures_refused():
    strides = make_strides()
    with pytest.raises(LeanVideoError, match="pictures must map"):
        render_session_report(make_summary(strides), make_frames(), strides, pictures={"left": {"rgb": None}})


def test_session_report_requires_summary_keys():
    with pytest.raises(LeanVideoError, match=r"summary lacks \['clip'\]"):
        render_session_report({"sides": {}, "settings": {}, "version": "x"}, make_frames(), make_strides())


# --------------------------------------------------------------------------- history report
def test_history_report():
    sessions = make_sessions()
    html = render_history_report({"id": "HP-014", "display_name": HOSTILE_NAME}, sessions,
                                 clinic_name="Harbourside Physio Lab")
    assert_no_external_reference(html)
    assert HOSTILE_NAME not in html and "&lt;script&gt;" in html
    for pid in ("plot-hist-lean", "plot-hist-force"):
        assert f'<div id="{pid}" class="plotly-graph-div"' in html
    tables = parse(html).tables
    rows = history_rows(sessions)
    left = tables["history-left"][2:]
    assert [r[0] for r in left] == ["2026-09-01", "2026-10-01", "2026-11-03"]
    for r_html, r in zip(left, rows["left"]):
        assert r_html[2].startswith(f"{r['lean_mean']:.1f} [")
    # Left lean dropped about 4.6 deg at the last visit with SD ~1 and 6 phases: beyond MDC;
    # 9.0 -> 8.6 between the first two is not.
    assert rows["left"][2]["lean_beyond_prev"] is True and left[2][3].endswith("▲")
    assert rows["left"][1]["lean_beyond_prev"] is False and "▲" not in left[1][3]
    prov = tables["prov-sessions"][1:]
    assert [(r[0], r[2]) for r in prov] == [(s["date"], s["clip_sha256"]) for s in sessions]
    assert dict(tuple(r) for r in tables["prov-params"][1:])["settings.filter_cutoff_hz"] == "6"
    assert "Weir 2005" in html


def test_history_report_trends_pelvic_drop_only_where_validated():
    sessions = make_sessions()
    # make_summary has no pelvic_obliquity_method: not validated, so no drop column or plot
    html = render_history_report({"id": "HP-014"}, sessions)
    assert "plot-hist-drop" not in html and "Pelvic drop (°)" not in html
    assert all(r["drop_n"] == 0 and np.isnan(r["drop_mean"]) for r in history_rows(sessions)["left"])
    # the last two sessions filmed with pelvis markers (validated): only they are trended
    for s in sessions[1:]:
        s["summary"] = {**s["summary"], "pelvic_obliquity_method": {"validated": True}}
    rows = history_rows(sessions)
    left = rows["left"]
    assert left[0]["drop_n"] == 0 and left[1]["drop_n"] == left[2]["drop_n"] > 0
    # known answer: the mean of that session's left phases' pelvic drop
    st = sessions[2]["phases"]
    assert left[2]["drop_mean"] == pytest.approx(st.loc[st["stance_side"] == "left", "pelvic_drop_mean_deg"].mean())
    assert np.isnan(left[2]["drop_change_first"])  # the first session has no drop to compare with
    html = render_history_report({"id": "HP-014"}, sessions)
    assert '<div id="plot-hist-drop" class="plotly-graph-div"' in html
    table = parse(html).tables["history-left"]
    assert "Pelvic drop (°)" in table[0]
    assert table[2][10] == "0" and table[2][11].startswith("n/a")
    assert "only for sessions filmed with pelvis markers" in html


def test_history_report_lists_parameters_per_session_when_they_differ():
    sessions = make_sessions()
    sessions[1]["settings"] = {"filter_cutoff_hz": 4.0}
    tables = parse(render_history_report({"id": "HP-014"}, sessions)).tables
    assert "prov-params" not in tables
    html = render_history_report({"id": "HP-014"}, sessions)
    assert html.count('<table class="prov-session">') == 3 and "<td>4</td>" in html


def test_history_report_from_store(tmp_path):
    # Integration: Store.history() gives exactly what render_history_report takes.
    from lean_video.store import open_store
    with open_store(tmp_path) as st:
        st.upsert_client("HP-014", display_name=HOSTILE_NAME, mass_kg=72.5)
        for s in make_sessions():
            st.save_session("HP-014", s["date"], s["clip_sha256"], s["settings"], s["version"], s["summary"],
                            s["phases"])
        html = render_history_report(st.get_client("HP-014").as_dict(), st.history("HP-014"))
    ref = history_rows(make_sessions())
    left = parse(html).tables["history-left"][2:]
    assert [r[2] for r in left] == [f"{r['lean_mean']:.1f} [{r['lean_lo']:.1f}, {r['lean_hi']:.1f}]" for r in ref["left"]]
    assert "&lt;script&gt;" in html


def test_history_report_needs_sessions():
    with pytest.raises(LeanVideoError, match="at least one stored session"):
        render_history_report({"id": "HP-014"}, [])


# --------------------------------------------------------------------------- pictures
def _laplacian_var(img: np.ndarray) -> float:
    return float(cv2.Laplacian(cv2.cvtColor(img, cv2.COLOR_RGB2GRAY), cv2.CV_64F).var())


def test_face_blur_removes_detail_only_around_head():
    pic = make_picture()
    box = head_box(pic["keypoints"], pic["rgb"].shape[:2])
    x0, y0, x1, y1 = box
    assert x0 <= 172 and x1 >= 228 and y0 <= 100 and y1 >= 110        # covers eyes, ears, nose
    assert (x1 - x0) >= 0.6 * 100 * 2 - 2                              # sized from 100 px shoulder width
    out = blur_face(pic["rgb"], pic["keypoints"])
    before, after = _laplacian_var(pic["rgb"][y0:y1, x0:x1]), _laplacian_var(out[y0:y1, x0:x1])
    assert after < 0.02 * before
    np.testing.assert_array_equal(out[y1 + 5:], pic["rgb"][y1 + 5:])   # rest untouched


def test_face_blur_without_landmarks_pixelates_everything():
    pic = make_picture()
    out = blur_face(pic["rgb"], {})
    assert _laplacian_var(out[60:160, 150:250]) < 0.02 * _laplacian_var(pic["rgb"][60:160, 150:250])


def _decode(uri: str) -> np.ndarray:
    assert uri.startswith("data:image/png;base64,")
    buf = np.frombuffer(base64.b64decode(uri.split(",", 1)[1]), np.uint8)
    return cv2.cvtColor(cv2.imdecode(buf, cv2.IMREAD_COLOR), cv2.COLOR_BGR2RGB)


def test_annotated_picture_draws_trunk_line_and_honours_blur_option():
    pic = make_picture()
    blurred = _decode(annotate_peak_frame(pic["rgb"], pic["keypoints"], stance_side="left", lean_deg=6.0))
    clear = _decode(annotate_peak_frame(pic["rgb"], pic["keypoints"], stance_side="left", lean_deg=6.0,
                                        blur_faces=False))
    assert blurred.shape == clear.shape
    x0, y0, x1, y1 = body_crop(pic["keypoints"], (720, 405))
    k = clear.shape[1] / (x1 - x0)
    assert clear.shape[0] <= 560 and clear.shape[0] == pytest.approx((y1 - y0) * k, abs=1)

    def at(x, y):   # original-frame pixel -> annotated-picture pixel
        return int(round((y - y0) * k)), int(round((x - x0) * k))
    # Trunk line midway between mid-hip (205, 380) and mid-shoulder (200, 200) is the trunk colour.
    r, g, b = clear[at(202.5, 290)].astype(int)
    assert r > 150 and g < 90 and b < 110
    # Face region: textured without blur, smooth with it (away from drawn lines).
    (ra, ca), (rb, cb) = at(155, 65), at(245, 95)
    assert _laplacian_var(blurred[ra:rb, ca:cb]) < 0.05 * _laplacian_var(clear[ra:rb, ca:cb])
    with pytest.raises(LeanVideoError, match="uint8"):
        annotate_peak_frame(pic["rgb"].astype(float), pic["keypoints"], stance_side="left")


def test_picture_leaves_out_the_hip_line_while_pelvic_obliquity_is_not_validated():
    # The line through the model's hip points tilted opposite to the pelvis on
    # the rendered walkers (README); drawn, it would mislead a judgement by eye.
    pic = make_picture()
    with_line = _decode(annotate_peak_frame(pic["rgb"], pic["keypoints"], stance_side="left", blur_faces=False))
    without = _decode(annotate_peak_frame(pic["rgb"], pic["keypoints"], stance_side="left", blur_faces=False,
                                          hip_line=False))
    x0, y0, x1, y1 = body_crop(pic["keypoints"], (720, 405))
    k = with_line.shape[1] / (x1 - x0)
    # a point on the hip line, (225, 380), away from the trunk line and the legs
    r, c = int(round((380 - y0) * k)), int(round((225 - x0) * k))
    assert with_line[r, c].min() > 220          # the light-grey hip line
    assert np.abs(without[r, c].astype(int) - 180).max() <= 6   # the plain background
    strides = make_strides()
    summary = make_summary(strides)
    summary["pelvic_obliquity_method"] = {"validated": False, "note": "Moved the wrong way on test walkers."}
    html = render_session_report(summary, make_frames(strides), strides, events=make_events(strides),
                                 pictures={"left": make_picture(6.0)})
    assert "No line is drawn between the hips" in html
    summary["pelvic_obliquity_method"] = {"validated": True, "note": "Checked on test walkers."}
    html = render_session_report(summary, make_frames(strides), strides, events=make_events(strides),
                                 pictures={"left": make_picture(6.0)})
    assert "No line is drawn between the hips" not in html


def test_pelvis_markers_in_report_and_picture():
    # With pelvic obliquity from two pelvis markers (validated), the pictures join the
    # markers, not the model's hip points; a phase without a drop reads n/a, never nan.
    pic = make_picture()
    pic["keypoints"] = {**pic["keypoints"], "left_pelvis_marker": (228, 350), "right_pelvis_marker": (182, 350)}
    img = _decode(annotate_peak_frame(pic["rgb"], pic["keypoints"], stance_side="left", blur_faces=False,
                                      hip_line=False))
    x0, y0, x1, y1 = body_crop(pic["keypoints"], (720, 405))
    k = img.shape[1] / (x1 - x0)
    r, c = int(round((350 - y0) * k)), int(round((215 - x0) * k))   # on the marker line, off the trunk line
    red, green, blue = (int(v) for v in img[r, c])
    assert blue > 150 and red < 90 and green < 90
    strides = make_strides()
    strides.loc[1, ["pelvic_drop_mean_deg", "pelvic_drop_peak_deg"]] = np.nan
    summary = make_summary(strides)
    summary["pelvic_obliquity_method"] = {"validated": True, "note": "From two stickers over the pelvis."}
    summary["pelvic_obliquity_source"] = "pelvis markers"
    html = render_session_report(summary, make_frames(strides), strides, events=make_events(strides),
                                 pictures={"left": pic})
    assert "Blue: line between the pelvis markers." in html
    assert "No line is drawn between the hips" in html
    # the client's part says how far the pelvis dropped, per stance side, from the summary
    card = html[html.index('id="client-left"'):html.index('id="client-right"')]
    drop = summary["sides"]["left"]["pelvic_drop_mean_deg"]
    word = f"dropped by about <b>{drop:.1f}°</b>" if drop >= 0 else f"stayed about <b>{abs(drop):.1f}°</b> higher"
    assert word in card and "measured from the two markers on your pelvis" in card
    assert "the two skin markers over the pelvis" in html
    assert 'id="plot-obliquity"' in html and "not validated, see caution" not in html
    phase = parse(html).tables["phase-table"]
    col = phase[0].index("Pelvic drop mean (°)")
    assert phase[2][col] == "n/a"
    assert not any("nan" in cell.lower() for row_ in phase for cell in row_)


def test_standing_pelvic_obliquity_only_from_a_validated_method():
    strides = make_strides()
    summary = make_summary(strides)
    summary["standing"] = {"duration_s": 1.8, "lean_deg": 1.2, "pelvic_obliquity_deg": -2.4}
    for validated in (False, True):
        summary["pelvic_obliquity_method"] = {"validated": validated, "note": "note"}
        html = render_session_report(summary, make_frames(strides), strides, events=make_events(strides))
        standing = re.search(r'<p id="standing">(.*?)</p>', html, re.S).group(1)
        assert "+1.2°" in standing
        assert ("pelvic obliquity -2.4°" in standing) is validated
    # how far the standing lean was checked is said beside it when the summary carries it
    assert "Checked on" not in standing
    summary["standing_method"] = STANDING_METHOD
    html = render_session_report(summary, make_frames(strides), strides, events=make_events(strides))
    standing = " ".join(re.search(r'<p id="standing">(.*?)</p>', html, re.S).group(1).split())
    assert f"within {STANDING_METHOD['lean_error_max_deg']:.2f}° of the truth" in standing
    assert "6 rendered clips" in standing


def test_body_crop_keeps_every_keypoint():
    kp = {"nose": (500, 300), "left_ankle": (560, 1500), "right_ankle": (440, 1500)}
    x0, y0, x1, y1 = body_crop(kp, (1920, 1080))
    assert x0 < 440 and x1 > 560 and y0 < 300 and y1 > 1500 and (x1 - x0) >= 0.6 * (y1 - y0) - 1
    assert body_crop({}, (100, 50)) == (0, 0, 50, 100)


def test_lever_arm_svg_is_to_scale():
    svg = lever_arm_svg(10.2, 8.1, 6.3, "left")
    assert "10.2 cm" in svg and "8.1 cm" in svg and "6.3°" in svg
    bars = [(float(a), float(b)) for a, b in re.findall(r'<line x1="([\d.]+)" y1="\d+" x2="([\d.]+)" y2="\d+" '
                                                          r'stroke="[^"]+" stroke-width="6"', svg)]
    assert len(bars) == 2
    (a0, a1), (b0, b1) = bars
    assert (b1 - b0) / (a1 - a0) == pytest.approx(8.1 / 10.2, rel=0.01)
    with pytest.raises(LeanVideoError, match="finite lean_cm"):
        lever_arm_svg(10.0, float("nan"), 3.0, "left")


# --------------------------------------------------------------------------- atomic write
def test_write_report_atomic_leaves_no_temp_files(tmp_path, monkeypatch):
    target = tmp_path / "HP-014_2026-11-03.html"
    write_report_atomic("<p>one</p>", target)
    write_report_atomic("<p>two</p>", target)
    assert os.listdir(tmp_path) == [target.name]
    assert target.read_text(encoding="utf-8") == "<p>two</p>"

    def boom(*a, **k):
        raise OSError("disk full")
    monkeypatch.setattr(os, "replace", boom)
    with pytest.raises(OSError, match="disk full"):   # the writer's own error, passed on unchanged
        write_report_atomic("<p>three</p>", target)
    assert os.listdir(tmp_path) == [target.name]
    assert target.read_text(encoding="utf-8") == "<p>two</p>"


def test_write_report_atomic_missing_folder(tmp_path):
    with pytest.raises(LeanVideoError, match="does not exist"):
        write_report_atomic("x", tmp_path / "nope" / "r.html")


# --------------------------------------------------------------------------- browser
CHROMIUM = "/usr/bin/chromium"
PROBE_HEAD = ("<script>window.__errors=[];window.addEventListener('error',function(e){window.__errors.push("
              "String(e.message))});document.addEventListener('securitypolicyviolation',function(e){"
              "window.__errors.push('CSP:'+e.violatedDirective+':'+e.blockedURI)});</script>")
PROBE_TAIL = ("<script>window.addEventListener('load',function(){setTimeout(function(){var r={};"
              "document.querySelectorAll('.plotly-graph-div').forEach(function(g){r[g.id]=[g.querySelectorAll("
              "'.main-svg').length,g.querySelectorAll('.scatterlayer .trace').length]});var d=document.createElement"
              "('pre');d.id='probe';d.textContent=JSON.stringify({plots:r,errors:window.__errors});"
              "document.body.appendChild(d);},500);});</script>")


def _chromium(args: list[str], profile: Path) -> subprocess.CompletedProcess:
    cmd = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--disable-background-networking",
           "--disable-component-update", "--disable-sync", "--no-first-run", "--disable-dev-shm-usage",
           f"--user-data-dir={profile}", *args]
    return subprocess.run(cmd, capture_output=True, text=True, timeout=120)


@pytest.mark.slow
@pytest.mark.skipif(not Path(CHROMIUM).exists(), reason="chromium not installed")
@pytest.mark.parametrize("kind", ["session", "history"])
def test_report_renders_in_headless_browser(kind, session_html, tmp_path):
    if kind == "session":
        html = session_html[0]
        plot_ids = ["plot-lean", "plot-obliquity", "plot-phases", "plot-hipforce"]
    else:
        html = render_history_report({"id": "HP-014"}, make_sessions(), clinic_name="Harbourside Physio Lab")
        plot_ids = ["plot-hist-lean", "plot-hist-force"]
    page = tmp_path / f"{kind}.html"
    write_report_atomic(html, page)
    probed = tmp_path / f"{kind}_probe.html"
    probed.write_text(html.replace("<head>", "<head>" + PROBE_HEAD, 1).replace("</body>", PROBE_TAIL + "</body>", 1),
                      encoding="utf-8")
    res = _chromium(["--virtual-time-budget=8000", "--dump-dom", probed.as_uri()], tmp_path / "profile")
    m = re.search(r'<pre id="probe">(.*?)</pre>', res.stdout)
    assert m, res.stderr[-2000:]
    probe = json.loads(html_lib.unescape(m.group(1)))
    assert sorted(probe["plots"]) == sorted(plot_ids)
    for pid, (n_svg, n_traces) in probe["plots"].items():
        assert n_svg >= 1 and n_traces >= 1, (pid, n_svg, n_traces)   # plotly drew axes and data
    assert probe["errors"] == []                # no JS error, no CSP violation (no network attempt)
    ARTIFACTS.mkdir(exist_ok=True)
    (ARTIFACTS / ".gitignore").write_text("*\n", encoding="utf-8")     # artifacts are never committed
    shot = tmp_path / f"{kind}.png"
    res = _chromium([f"--screenshot={shot}", "--window-size=1200,3000", "--virtual-time-budget=8000",
                     "--hide-scrollbars", page.as_uri()], tmp_path / "profile2")
    assert shot.exists() and shot.stat().st_size > 50_000, res.stderr[-2000:]
    shutil.copy(shot, ARTIFACTS / f"{kind}_report.png")
    pdf = tmp_path / f"{kind}.pdf"
    res = _chromium([f"--print-to-pdf={pdf}", "--no-pdf-header-footer", "--virtual-time-budget=8000",
                     page.as_uri()], tmp_path / "profile3")
    assert pdf.exists() and pdf.read_bytes()[:5] == b"%PDF-", res.stderr[-2000:]
    shutil.copy(pdf, ARTIFACTS / f"{kind}_report.pdf")
    shutil.copy(page, ARTIFACTS / f"{kind}_report.html")


def test_history_says_when_earlier_analyses_of_a_clip_are_left_out():
    sessions = make_sessions()
    html = render_history_report({"id": "HP-014"}, sessions)
    assert 'id="earlier-analyses"' not in html
    sessions[1]["n_earlier_analyses"] = 2
    html = render_history_report({"id": "HP-014"}, sessions)
    assert "2 earlier\nanalysis/analyses of the same clips stay stored unchanged" in html


# --------------------------------------------------------------------------- missing and withheld values, signs
def _text(html: str) -> str:
    """Visible text outside scripts and styles, whitespace collapsed."""
    return " ".join("".join(parse(html).outside_script_text).split())


def test_hostile_clip_and_clinic_names_are_escaped():
    strides = make_strides()
    html = render_session_report(make_summary(strides), make_frames(strides), strides,
                                 clip_name=HOSTILE_NAME + ".mp4", clinic_name="<b onclick=x>Lab</b>")
    assert HOSTILE_NAME not in html and "<b onclick" not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt;.mp4" in html and "&lt;b onclick=x&gt;Lab&lt;/b&gt;" in html


def test_missing_numbers_read_n_a_without_a_unit_and_never_minus_zero():
    strides = make_strides()
    summary = make_summary(strides)
    summary.update(camera_roll_deg=None, cadence_steps_per_min=None,
                   standing={"duration_s": 1.5, "lean_deg": -0.04, "pelvic_obliquity_deg": None})
    text = _text(render_session_report(summary, make_frames(strides), strides))
    assert "n/a°" not in text and "n/a steps" not in text and "n/a s" not in text
    assert "camera roll corrected: n/a" in text and "Cadence n/a;" in text
    assert "trunk lean 0.0° (positive" in text and "-0.0" not in text and "+0.0" not in text
    summary["camera_roll_deg"] = -0.03
    assert "camera roll corrected: 0.0°" in _text(render_session_report(summary, make_frames(strides), strides))


def test_parameter_tables_show_no_python_values_and_list_the_pose_model():
    strides = make_strides()
    summary = make_summary(strides)
    summary["settings"] = {**summary["settings"], "analysis": {"height_m": None, "camera_roll_deg": None}}
    summary["mechanics"] = {**summary["mechanics"], "warnings": []}
    summary["pose"] = {"model": "BlazePose full (mediapipe 0.10.21)", "from_cache": False,
                       "settings": {"model_complexity": 1, "min_detection_confidence": 0.5}}
    tables = parse(render_session_report(summary, make_frames(strides), strides)).tables
    params = dict(tuple(r) for r in tables["settings"][1:] + tables["mechanics"][1:])
    assert params["analysis.height_m"] == "not set" and params["warnings"] == "none"
    assert not any(v in ("None", "nan", "") for v in params.values())
    pose = dict(tuple(r) for r in tables["pose"][1:])
    assert pose == {"model": "BlazePose full (mediapipe 0.10.21)", "settings.model_complexity": "1",
                    "settings.min_detection_confidence": "0.5"}
    sessions = make_sessions()
    for s in sessions:
        s["summary"]["pose"] = summary["pose"]
        s["settings"] = {"analysis": {"height_m": None}}
    prov = dict(tuple(r) for r in parse(render_history_report({"id": "HP-014"}, sessions)).tables["prov-params"][1:])
    assert prov["pose.model"] == "BlazePose full (mediapipe 0.10.21)" and prov["settings.analysis.height_m"] == "not set"


def test_sign_conventions_stated_where_numbers_are_shown():
    strides = make_strides(left_lean=0.5)           # left CI reaches below zero
    summary = make_summary(strides)
    html = render_session_report(summary, make_frames(strides), strides,
                                 pictures={"left": make_picture(-1.5), "right": make_picture(6.0)})
    text = _text(html)
    card = _text(html[html.index('id="client-left"'):html.index('id="client-right"')])
    assert summary["sides"]["left"]["lean_ci95_deg"][0] < 0 and "a minus sign means away from the leg" in card
    assert "lean -1.5° (away from the standing leg)" in text and "lean 6.0° (toward the standing leg)" in text
    side_note = text[text.index("Per-side results"):text.index("Standing posture")]
    assert "Lean positive toward the stance side" in side_note
    assert "hip force change negative when the estimated load is lower" in side_note
    phase_note = re.search(r'<p class="small" id="phase-signs">(.*?)</p>', html, re.S).group(1)
    assert "Lean positive toward the stance side" in phase_note and "hip force change negative" in phase_note
    hist = _text(render_history_report({"id": "HP-014"}, make_sessions()))
    assert "Lean is positive toward the standing leg" in hist and "hip force change is negative when" in hist


def test_withheld_pelvic_drop_is_explained_to_the_client_and_in_the_history():
    strides = make_strides()
    summary = make_summary(strides)             # method not stated: withheld
    html = render_session_report(summary, make_frames(strides), strides)
    client = _text(html[html.index('id="client-part"'):html.index('id="clinician-part"')])
    assert "Pelvic drop" in client and "is not reported from this video" in client
    # with markers, a leg whose drop was not measured says so rather than staying silent
    summary["pelvic_obliquity_method"] = {"validated": True, "note": "From two stickers over the pelvis."}
    summary["pelvic_obliquity_source"] = "pelvis markers"
    summary["sides"]["right"]["pelvic_drop_mean_deg"] = None
    html = render_session_report(summary, make_frames(strides), strides)
    right = _text(html[html.index('id="client-right"'):html.index('id="cautions"')])
    assert "Your pelvis: not measured on this leg" in right and "is not reported from this video" not in html
    assert "n/a" not in right and "None" not in right
    hist = _text(render_history_report({"id": "HP-014"}, make_sessions()))
    assert "Pelvic drop is not trended: none of these sessions was filmed with pelvis markers" in hist


def test_history_of_one_session_says_why_there_is_no_change_yet():
    html = render_history_report({"id": "HP-014"}, make_sessions()[:1])
    assert 'id="single-session"' in html and "Only one session is stored" in html
    assert 'id="single-session"' not in render_history_report({"id": "HP-014"}, make_sessions())
    sessions = make_sessions()
    for s in sessions[1:]:
        s["summary"] = {**s["summary"], "pelvic_obliquity_method": {"validated": True}}
    assert "previous session. Pelvic drop is given only" in _text(render_history_report({"id": "HP-014"}, sessions))


def test_reports_render_with_missing_sides_and_no_phases():
    strides = make_strides()
    left = strides[strides["stance_side"] == "left"].reset_index(drop=True)
    html = render_session_report(make_summary(left), make_frames(left), left, events=make_events(left),
                                 hip_curve=make_curve(), pictures={"left": make_picture()})
    assert "No steps on this leg could be measured." in html
    assert not re.search(r"\bnan\b|\bNone\b", _text(html))
    for none in (strides.iloc[:0], pd.DataFrame()):
        summary = make_summary(strides.iloc[:0])
        html = render_session_report(summary, make_frames(strides), none, hip_curve=make_curve())
        assert html.count("No steps on this leg could be measured.") == 2
    with pytest.raises(LeanVideoError, match="stance_side"):
        render_session_report(make_summary(strides), make_frames(strides), strides.drop(columns="stance_side"))
    sessions = make_sessions()
    sessions[1]["phases"] = pd.DataFrame()
    for s in sessions:
        s["phases"] = s["phases"][s["phases"]["stance_side"] == "left"] if len(s["phases"]) else s["phases"]
    hist = _text(render_history_report({"id": "HP-014"}, sessions))
    assert "Standing on the right leg" in hist and "lean n/a," in hist


def test_two_sessions_on_one_day_get_two_points_in_the_history_plot():
    # Two clips filmed at one visit shared one point of the category axis (report review, 2026-12-04).
    from lean_video.figures import history_metric

    rows = [{"date": d, "side": side, "lean_mean": m, "lean_lo": m - 1, "lean_hi": m + 1}
            for d, m in (("2026-09-01", 6.0), ("2026-09-15", 5.0), ("2026-09-15", 4.0))
            for side in ("left", "right")]
    fig = history_metric(rows, "lean", "lean (deg)", "Lean")
    # one trace per leg; without this the loop below would pass on a figure with no data
    assert [trace.name for trace in fig.data] == ["left leg", "right leg"]
    for trace in fig.data:
        assert list(trace.x) == ["2026-09-01", "2026-09-15 (1)", "2026-09-15 (2)"]
        assert list(trace.y) == [6.0, 5.0, 4.0]


def test_two_sessions_on_one_day_are_told_apart_in_the_history_tables():
    sessions = make_sessions()
    sessions[2]["date"] = sessions[1]["date"]   # a second walk filmed at the same visit
    tables = parse(render_history_report({"id": "HP-014"}, sessions)).tables
    day = sessions[1]["date"]
    assert [r[0] for r in tables["history-left"][2:]] == [sessions[0]["date"], f"{day} (1)", f"{day} (2)"]
    assert [r[0] for r in tables["prov-sessions"][1:]] == [sessions[0]["date"], f"{day} (1)", f"{day} (2)"]
