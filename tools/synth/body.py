"""Vendored CC0 MakeHuman body: rest mesh, joints, skin weights and linear blend skinning.

Model frame (metres): X toward the body's left, Y backward (the body faces -Y), Z up,
sole of the feet at z = 0. Segment order and names are in ``SEGMENTS`` of
``build_assets.py``. Arrays: vertices (V, 3), faces (F, 3), joints (18, 3),
rotations (18, 3, 3) are *global* (model -> world) segment rotations.
"""
from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

import numpy as np

ASSET = Path(__file__).parent / "assets" / "body.npz"

# Clothing colours (linear-ish RGB 0..1), chosen for contrast with the room.
COLOURS = {
    "shirt": (0.16, 0.33, 0.62),
    "trousers": (0.22, 0.27, 0.40),
    "shoes": (0.10, 0.10, 0.11),
    "skin": (0.80, 0.60, 0.48),
    "hair": (0.18, 0.12, 0.08),
}


@dataclass(frozen=True)
class Body:
    vertices: np.ndarray  # (V, 3) rest pose, model frame, scaled
    faces: np.ndarray  # (F, 3)
    weight_index: np.ndarray  # (V, 4)
    weight_value: np.ndarray  # (V, 4)
    names: tuple
    parents: np.ndarray  # (18,)
    joints: np.ndarray  # (18, 3) rest joint centres
    colours: np.ndarray  # (V, 4) uint8 RGBA
    foot_points: dict  # side -> {"heel","ball","toe"} rest positions (3,)

    def index(self, name: str) -> int:
        return self.names.index(name)


@lru_cache(maxsize=1)
def _raw():
    d = np.load(ASSET)
    return {k: d[k] for k in d.files}


def load_body(height_m: float = 1.70, width_scale: float = 1.0, shirt_rgb=None,
              trousers_rgb=None, pelvis_marker_rgb=None) -> Body:
    """Scaled rest body. ``width_scale`` scales X and Y (heavier > 1 > lighter).

    ``pelvis_marker_rgb`` adds four round skin markers of that colour, rigid on
    the pelvis segment: over both anterior superior iliac spines (seen walking
    toward the camera) and both posterior superior iliac spines (seen walking
    away), see :func:`_pelvis_markers`.
    """
    d = _raw()
    v = d["vertices"].astype(np.float64)
    j = d["joints"].astype(np.float64)
    ex = d["extra_joints"].astype(np.float64)
    names = tuple(str(n) for n in d["segment_names"])
    wi, wv = d["weight_index"].astype(np.int64), d["weight_value"].astype(np.float64)
    z0 = v[:, 2].min()
    h0 = v[:, 2].max() - z0
    s = height_m / h0
    scale = np.array([s * width_scale, s * width_scale, s])
    shift = np.array([0.0, 0.0, -z0])
    v = (v + shift) * scale
    j = (j + shift) * scale
    ex = (ex + shift) * scale
    dom = wi[:, 0]
    # Clothing regions follow the dominant skin-weight segment of each vertex, so
    # sleeves and trouser legs move with their bones.
    seg = np.array(names)[dom]
    colours = np.empty((len(v), 4), np.uint8)
    pal = dict(COLOURS)
    if shirt_rgb is not None:
        pal["shirt"] = tuple(shirt_rgb)
    if trousers_rgb is not None:
        pal["trousers"] = tuple(trousers_rgb)
    region = np.full(len(v), "shirt", dtype=object)
    waist_z = j[names.index("lumbar"), 2] + 0.02 * s
    region[(seg == "pelvis") | np.char.startswith(seg.astype(str), "thigh")
           | np.char.startswith(seg.astype(str), "shank")] = "trousers"
    region[np.isin(seg, ["lumbar"]) & (v[:, 2] < waist_z)] = "trousers"
    region[np.char.startswith(seg.astype(str), "foot")
           | np.char.startswith(seg.astype(str), "toes")] = "shoes"
    region[np.char.startswith(seg.astype(str), "hand")] = "skin"
    head = seg == "head"
    region[head] = "skin"
    neck_z = j[names.index("head"), 2]
    region[head & (v[:, 2] < neck_z + 0.03 * s)] = "shirt"  # collar
    ear_z = neck_z + 0.12 * s
    crown = head & ((v[:, 2] > ear_z + 0.06 * s) | ((v[:, 1] > 0.0 * s) & (v[:, 2] > ear_z - 0.02 * s)))
    region[crown] = "hair"
    for k, c in pal.items():
        colours[region == k, :3] = np.round(np.asarray(c) * 255).astype(np.uint8)
    colours[:, 3] = 255
    # Foot contact geometry: sole plane z = 0 after the shift; heel at the back of the
    # foot under the ankle, ball between the first and fifth metatarsal heads.
    en = [str(n) for n in d["extra_names"]]
    foot_points = {}
    for side, sfx in (("left", "L"), ("right", "R")):
        fi = names.index(f"foot.{sfx}")
        fv = v[(dom == fi) | (dom == names.index(f"toes.{sfx}"))]
        ank = j[fi]
        ball = 0.5 * (ex[en.index(f"toe_mtp.{sfx}")] + ex[en.index(f"toe5_mtp.{sfx}")])
        foot_points[side] = {
            "heel": np.array([ank[0], fv[:, 1].max() - 0.01 * s, 0.0]),
            "ball": np.array([ball[0], ball[1], 0.0]),
            "toe": np.array([ex[en.index(f"toe_mtp.{sfx}")][0], fv[:, 1].min(), 0.0]),
        }
    faces = d["faces"].astype(np.int64)
    if pelvis_marker_rgb is not None:
        mv, mf = _pelvis_markers(v, j, names, width_scale)
        mf = mf + len(v)
        pel = names.index("pelvis")
        mwi = np.zeros((len(mv), wi.shape[1]), wi.dtype)
        mwi[:, 0] = pel
        mwv = np.zeros((len(mv), wv.shape[1]), wv.dtype)
        mwv[:, 0] = 1.0
        mcol = np.empty((len(mv), 4), np.uint8)
        mcol[:, :3] = np.round(np.asarray(pelvis_marker_rgb) * 255).astype(np.uint8)
        mcol[:, 3] = 255
        v, faces = np.vstack([v, mv]), np.vstack([faces, mf])
        wi, wv, colours = np.vstack([wi, mwi]), np.vstack([wv, mwv]), np.vstack([colours, mcol])
    return Body(v, faces, wi, wv, names, d["segment_parents"], j, colours, foot_points)


def joint_positions(body: Body, rotations: np.ndarray, root_pos: np.ndarray) -> np.ndarray:
    """World joint centres from global rotations (18,3,3) and pelvis joint position (3,)."""
    out = np.zeros_like(body.joints)
    for i, p in enumerate(body.parents):
        if p < 0:
            out[i] = root_pos
        else:
            out[i] = out[p] + rotations[p] @ (body.joints[i] - body.joints[p])
    return out


def skin(body: Body, rotations: np.ndarray, joints_world: np.ndarray) -> np.ndarray:
    """Linear blend skinning: v' = sum_b w_b (R_b (v - J_b) + J'_b)."""
    # Per-segment affine: x -> R x + t, with t = J' - R J.
    t = joints_world - np.einsum("bij,bj->bi", rotations, body.joints)
    out = np.zeros_like(body.vertices)
    for k in range(body.weight_index.shape[1]):
        b = body.weight_index[:, k]
        w = body.weight_value[:, k:k + 1]
        out += w * (np.einsum("nij,nj->ni", rotations[b], body.vertices) + t[b])
    return out


#: Marker sites relative to the hip joint centres of a 1.70 m body (metres):
#: lateral distance from the midline and height above the hip joint centres.
#: Anterior superior iliac spines about 24 cm apart, posterior ones about 9 cm
#: (adult pelvis widths from memory, no source; only their symmetry matters
#: here, since any two points placed symmetrically on the pelvis lie on a line
#: parallel to the one through the hip joint centres).
MARKER_SITES = {"asis": (0.12, 0.075, -1.0), "psis": (0.045, 0.095, 1.0)}
MARKER_RADIUS_M = 0.02
MARKER_STANDOFF_M = 0.004


def _pelvis_markers(v, j, names, width_scale, segments: int = 16):
    """Flat discs (vertices, faces) on the skin over the iliac spines, facing out."""
    k = v[:, 2].max() / 1.70  # body height relative to the sites' 1.70 m body
    hip_z = 0.5 * (j[names.index("thigh.L"), 2] + j[names.index("thigh.R"), 2])
    verts, faces = [], []
    for x_m, dz_m, facing in MARKER_SITES.values():
        for side in (1.0, -1.0):
            x, z = side * x_m * k * width_scale, hip_z + dz_m * k
            near = (np.abs(v[:, 0] - x) < 0.02) & (np.abs(v[:, 2] - z) < 0.02) & (np.sign(v[:, 1]) == facing)
            y = (v[near, 1].min() if facing < 0 else v[near, 1].max()) + facing * MARKER_STANDOFF_M
            centre = np.array([x, y, z])
            ang = np.linspace(0, 2 * np.pi, segments, endpoint=False)
            ring = centre + MARKER_RADIUS_M * np.c_[np.cos(ang), np.zeros(segments), np.sin(ang)]
            base = sum(len(a) for a in verts)
            verts.append(np.vstack([centre, ring]))
            for i in range(segments):
                a, b = base + 1 + i, base + 1 + (i + 1) % segments
                faces += [[base, a, b], [base, b, a]]  # both sides: no culling surprise
    return np.vstack(verts), np.asarray(faces, np.int64)
