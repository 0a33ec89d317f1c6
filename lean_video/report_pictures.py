"""Pictures for the client section of the session report.

* :func:`annotate_peak_frame` draws the skeleton, the trunk line (mid-hip to
  mid-shoulder) and the true-vertical reference on the frame at peak lean,
  blurs the face by default and returns a PNG ``data:`` URI.
* :func:`lever_arm_svg` draws the two lever arms (upright vs this client's
  lean) to one scale as an inline SVG string.

Images are RGB uint8 arrays of shape (H, W, 3); keypoints are a mapping from
MediaPipe landmark name to ``(x_px, y_px)`` in the same upright image
(x right, y down). ``camera_roll_deg`` follows DEVELOPERS.md: positive when
world-vertical lines appear turned clockwise in the image.
"""

from __future__ import annotations

import base64
import logging
import math
from typing import Mapping

import cv2
import numpy as np

from lean_video.errors import LeanVideoError

logger = logging.getLogger(__name__)

_FACE_POINTS = ("nose", "left_eye", "right_eye", "left_ear", "right_ear", "left_eye_inner",
                "right_eye_inner", "left_eye_outer", "right_eye_outer", "mouth_left", "mouth_right")
_BONES = (("left_shoulder", "right_shoulder"), ("left_hip", "right_hip"),
          ("left_shoulder", "left_hip"), ("right_shoulder", "right_hip"),
          ("left_hip", "left_knee"), ("left_knee", "left_ankle"),
          ("right_hip", "right_knee"), ("right_knee", "right_ankle"),
          ("left_shoulder", "left_elbow"), ("left_elbow", "left_wrist"),
          ("right_shoulder", "right_elbow"), ("right_elbow", "right_wrist"))
_RGB = {"left": (26, 127, 120), "right": (194, 124, 14), "trunk": (200, 40, 60), "vertical": (255, 255, 255),
        "pelvis": (40, 40, 200)}
#: The two skin markers over the pelvis (lean_video.pose_markers), when they were searched for.
_MARKERS = ("left_pelvis_marker", "right_pelvis_marker")
MAX_PICTURE_WIDTH_PX = 480   # the report shows two pictures side by side
MAX_PICTURE_HEIGHT_PX = 560


def body_crop(keypoints: Mapping[str, object], shape: tuple[int, int], margin: float = 0.12) -> tuple[int, int, int, int]:
    """Box (x0, y0, x1, y1) around all finite keypoints plus ``margin`` of the body height.

    The whole frame if no keypoint is known. Keeps the person large in the
    report whatever the framing of the clip.
    """
    pts = [p for p in (_pt(keypoints, n) for n in keypoints) if p is not None]
    head = head_box(keypoints, shape)
    if head is not None:       # keep the (blurred) head in the picture even without face landmarks
        pts += [np.array(head[:2], float), np.array(head[2:], float)]
    h, w = shape
    if not pts:
        return 0, 0, w, h
    a = np.array(pts)
    lo, hi = a.min(axis=0), a.max(axis=0)
    pad = margin * max(hi[1] - lo[1], hi[0] - lo[0], 20.0)
    x0, y0 = int(max(0, lo[0] - pad)), int(max(0, lo[1] - (pad if head is not None else 2.5 * pad)))
    x1, y1 = int(min(w, hi[0] + pad)), int(min(h, hi[1] + pad))
    # Not narrower than 0.6 x the height, so the picture is not a thin strip.
    min_w = int(0.6 * (y1 - y0))
    if x1 - x0 < min_w:
        cx = (x0 + x1) // 2
        x0 = max(0, cx - min_w // 2)
        x1 = min(w, x0 + min_w)
    return (x0, y0, x1, y1) if x1 > x0 and y1 > y0 else (0, 0, w, h)


def _pt(kp: Mapping[str, object], name: str) -> np.ndarray | None:
    v = kp.get(name)
    if v is None:
        return None
    a = np.asarray(v, dtype=float)[:2]
    return a if np.all(np.isfinite(a)) else None


def _mid(kp: Mapping[str, object], a: str, b: str) -> np.ndarray | None:
    pa, pb = _pt(kp, a), _pt(kp, b)
    return None if pa is None or pb is None else (pa + pb) / 2.0


def head_box(keypoints: Mapping[str, object], shape: tuple[int, int]) -> tuple[int, int, int, int] | None:
    """Square box (x0, y0, x1, y1) around the head, sized from shoulder width.

    Centre: mean of the visible face landmarks; if none, half a shoulder
    width above mid-shoulder. Half-size: 0.6 x shoulder width, at least
    1.5 x the spread of the face landmarks (common practice, no source:
    generous so hair and chin are covered). Returns None if neither face
    nor shoulders are known.
    """
    face = [p for p in (_pt(keypoints, n) for n in _FACE_POINTS) if p is not None]
    ls, rs = _pt(keypoints, "left_shoulder"), _pt(keypoints, "right_shoulder")
    sw = float(np.linalg.norm(ls - rs)) if ls is not None and rs is not None else None
    if face:
        c = np.mean(face, axis=0)
        spread = float(np.max(np.ptp(np.array(face), axis=0))) if len(face) > 1 else 0.0
        half = max(0.6 * sw if sw else 0.0, 1.5 * spread, 0.04 * max(shape))
    elif sw:
        c = (ls + rs) / 2.0 - np.array([0.0, 0.6 * sw])
        half = 0.6 * sw
    else:
        return None
    h, w = shape
    x0, y0 = int(max(0, c[0] - half)), int(max(0, c[1] - half))
    x1, y1 = int(min(w, c[0] + half)), int(min(h, c[1] + half))
    return (x0, y0, x1, y1) if x1 > x0 and y1 > y0 else None


def _pixelate(region: np.ndarray, blocks: int = 6) -> np.ndarray:
    h, w = region.shape[:2]
    small = cv2.resize(region, (max(1, w // max(1, w // blocks)), max(1, h // max(1, h // blocks))),
                       interpolation=cv2.INTER_AREA)
    big = cv2.resize(small, (w, h), interpolation=cv2.INTER_NEAREST)
    k = max(3, (min(h, w) // 4) | 1)
    return cv2.GaussianBlur(big, (k, k), 0)


def blur_face(rgb: np.ndarray, keypoints: Mapping[str, object]) -> np.ndarray:
    """Return a copy with the head pixelated (about 6 blocks across) and blurred.

    If the head cannot be located the whole picture is pixelated, so a face
    is never shown by accident.
    """
    out = rgb.copy()
    box = head_box(keypoints, rgb.shape[:2])
    if box is None:
        logger.warning("head not located in the peak-lean frame; the whole picture is pixelated")
        return _pixelate(out, blocks=24)
    x0, y0, x1, y1 = box
    out[y0:y1, x0:x1] = _pixelate(out[y0:y1, x0:x1])
    return out


def annotate_peak_frame(
    rgb: np.ndarray, keypoints: Mapping[str, object], *, stance_side: str, lean_deg: float | None = None,
    camera_roll_deg: float = 0.0, blur_faces: bool = True, hip_line: bool = True,
) -> str:
    """Draw skeleton, trunk line and vertical on the peak-lean frame; return a PNG data URI.

    Parameters
    ----------
    rgb : ndarray, (H, W, 3) uint8
        Upright RGB frame.
    keypoints : mapping name -> (x_px, y_px)
        MediaPipe landmark names; missing or NaN points are skipped.
    stance_side : {'left', 'right'}
        Stance side of the phase (colours the stance leg).
    lean_deg : float, optional
        Lean to print on the picture.
    camera_roll_deg : float
        Camera roll; the dashed reference is the world vertical, i.e. the
        image vertical turned clockwise by this angle.
    blur_faces : bool
        Pixelate the head region (default True).
    hip_line : bool
        Draw the line through the model's two hip points. Leave it out while
        pelvic obliquity from those points is not validated: on the rendered
        test walkers that line tilted opposite to the pelvis, so drawn on the
        picture it would mislead a clinician judging pelvic drop by eye.
        The line between the two pelvis markers is drawn whenever both are
        among ``keypoints`` (blue, with a dot on each marker).
    """
    if not (isinstance(rgb, np.ndarray) and rgb.ndim == 3 and rgb.shape[2] == 3 and rgb.dtype == np.uint8):
        raise LeanVideoError("picture rgb must be an (H, W, 3) uint8 array; pass the decoded RGB frame.")
    img = blur_face(rgb, keypoints) if blur_faces else rgb.copy()
    x0, y0, x1, y1 = body_crop(keypoints, img.shape[:2])
    img = img[y0:y1, x0:x1]
    scale = min(1.0, MAX_PICTURE_WIDTH_PX / img.shape[1], MAX_PICTURE_HEIGHT_PX / img.shape[0])
    if scale < 1.0:
        img = cv2.resize(img, (int(round(img.shape[1] * scale)), int(round(img.shape[0] * scale))),
                         interpolation=cv2.INTER_AREA)
    kp = {k: ((np.asarray(v, float)[:2] - (x0, y0)) * scale) for k, v in keypoints.items() if v is not None}
    img = np.ascontiguousarray(img)
    th = max(2, int(round(img.shape[1] / 240)))
    for a, b in _BONES:
        if not hip_line and (a, b) == ("left_hip", "right_hip"):
            continue
        pa, pb = _pt(kp, a), _pt(kp, b)
        if pa is None or pb is None:
            continue
        side = "left" if a.startswith("left") and b.startswith("left") else (
            "right" if a.startswith("right") and b.startswith("right") else None)
        colour = _RGB[side] if side else (235, 235, 235)
        w = th + 1 if side == stance_side and "knee" in a + b else th
        cv2.line(img, tuple(np.round(pa).astype(int)), tuple(np.round(pb).astype(int)), colour, w, cv2.LINE_AA)
    ma, mb = _pt(kp, _MARKERS[0]), _pt(kp, _MARKERS[1])
    if ma is not None and mb is not None:
        cv2.line(img, tuple(np.round(ma).astype(int)), tuple(np.round(mb).astype(int)), _RGB["pelvis"], th,
                 cv2.LINE_AA)
        for m in (ma, mb):
            cv2.circle(img, tuple(np.round(m).astype(int)), th + 1, _RGB["pelvis"], -1, cv2.LINE_AA)
    hip, sho = _mid(kp, "left_hip", "right_hip"), _mid(kp, "left_shoulder", "right_shoulder")
    if hip is not None and sho is not None:
        length = float(np.linalg.norm(sho - hip)) * 1.25
        r = math.radians(camera_roll_deg)
        up = np.array([math.sin(r), -math.cos(r)])       # world vertical, upward, in image coords
        _dashed(img, hip, hip + up * length, (255, 255, 255), th)
        tip = hip + (sho - hip) * 1.25
        cv2.line(img, tuple(np.round(hip).astype(int)), tuple(np.round(tip).astype(int)), _RGB["trunk"], th + 1,
                 cv2.LINE_AA)
        cv2.circle(img, tuple(np.round(hip).astype(int)), th + 2, _RGB["trunk"], -1, cv2.LINE_AA)
    if lean_deg is not None:
        label = f"lean {lean_deg:.1f} deg"
        fs = max(0.5, max(img.shape[:2]) / 600)
        tt = max(1, int(round(fs * 1.6)))
        (tw, tht), base = cv2.getTextSize(label, cv2.FONT_HERSHEY_SIMPLEX, fs, tt)
        cv2.rectangle(img, (4, 4), (14 + tw, 14 + tht + base), (255, 255, 255), -1)
        cv2.putText(img, label, (9, 9 + tht), cv2.FONT_HERSHEY_SIMPLEX, fs, _RGB["trunk"], tt, cv2.LINE_AA)
    ok, buf = cv2.imencode(".png", cv2.cvtColor(img, cv2.COLOR_RGB2BGR))
    if not ok:
        raise LeanVideoError("the peak-lean picture could not be encoded as PNG; report this as a bug.")
    return "data:image/png;base64," + base64.b64encode(buf.tobytes()).decode("ascii")


def _dashed(img: np.ndarray, p0: np.ndarray, p1: np.ndarray, colour: tuple, th: int) -> None:
    n = 14
    for k in range(0, n, 2):
        a = p0 + (p1 - p0) * k / n
        b = p0 + (p1 - p0) * (k + 1) / n
        cv2.line(img, tuple(np.round(a).astype(int)), tuple(np.round(b).astype(int)), colour, th, cv2.LINE_AA)


def lever_arm_svg(upright_cm: float, lean_cm: float, lean_deg: float, side: str, *, px_per_cm: float = 18.0) -> str:
    """Inline SVG: the body-weight lever arm about the stance hip, upright vs with lean.

    Both bars use one scale (``px_per_cm``) and a 5 cm scale bar, so the
    drawing is to scale on screen and in print. Numbers are formatted to
    one decimal, as in the text.
    """
    for name, v in (("upright_cm", upright_cm), ("lean_cm", lean_cm), ("lean_deg", lean_deg)):
        if v is None or not math.isfinite(float(v)):
            raise LeanVideoError(f"lever arm drawing needs a finite {name}, got {v!r}; run the mechanics stage with a body mass.")
    upright_cm, lean_cm = float(upright_cm), float(lean_cm)
    longest = max(abs(upright_cm), abs(lean_cm), 5.0)
    px = min(px_per_cm, 250.0 / longest)
    colour = {"left": "#1a7f78", "right": "#c27c0e"}.get(side, "#55606a")
    x0, w, h = 150, 150 + longest * px + 70, 150
    rows = [("Upright (0°)", upright_cm, "#7d868d", 40), (f"Your lean ({lean_deg:.1f}°)", lean_cm, colour, 92)]
    parts = [f'<svg class="lever" width="{w:.0f}" height="{h}" '
             f'viewBox="0 0 {w:.0f} {h}" role="img" aria-label="lever arms to scale">']
    for label, cm, col, y in rows:
        x1 = x0 + cm * px
        parts.append(f'<text x="{x0 - 14}" y="{y + 5}" text-anchor="end" font-size="12" fill="#2b2f33">{label}</text>')
        parts.append(f'<circle cx="{x0}" cy="{y}" r="7" fill="white" stroke="#2b2f33" stroke-width="2"/>')
        parts.append(f'<line x1="{x0}" y1="{y}" x2="{x1:.1f}" y2="{y}" stroke="{col}" stroke-width="6" stroke-linecap="round"/>')
        parts.append(f'<line x1="{x1:.1f}" y1="{y - 4}" x2="{x1:.1f}" y2="{y + 26}" stroke="{col}" stroke-width="2"/>')
        parts.append(f'<polygon points="{x1 - 5:.1f},{y + 20} {x1 + 5:.1f},{y + 20} {x1:.1f},{y + 28}" fill="{col}"/>')
        parts.append(f'<text x="{max(x0, x1) + 10:.1f}" y="{y + 5}" font-size="13" font-weight="bold" fill="{col}">{cm:.1f} cm</text>')
    sb = 5 * px
    parts.append(f'<line x1="{x0}" y1="{h - 14}" x2="{x0 + sb:.1f}" y2="{h - 14}" stroke="#2b2f33" stroke-width="2"/>')
    parts.append(f'<line x1="{x0}" y1="{h - 19}" x2="{x0}" y2="{h - 9}" stroke="#2b2f33" stroke-width="2"/>')
    parts.append(f'<line x1="{x0 + sb:.1f}" y1="{h - 19}" x2="{x0 + sb:.1f}" y2="{h - 9}" stroke="#2b2f33" stroke-width="2"/>')
    parts.append(f'<text x="{x0 + sb + 8:.1f}" y="{h - 10}" font-size="11" fill="#55606a">5 cm</text>')
    parts.append(f'<text x="{x0 - 14}" y="{h - 10}" text-anchor="end" font-size="11" fill="#55606a">'
                 f'{side} hip ○ → body weight ↓</text>')
    parts.append("</svg>")
    return "".join(parts)
