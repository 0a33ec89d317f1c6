"""Small rotation helpers (right-handed, column vectors, angles in radians)."""
from __future__ import annotations

import numpy as np


def rot(axis, angle: float) -> np.ndarray:
    """Rotation by ``angle`` about unit ``axis`` (Rodrigues)."""
    a = np.asarray(axis, float)
    a = a / np.linalg.norm(a)
    k = np.array([[0, -a[2], a[1]], [a[2], 0, -a[0]], [-a[1], a[0], 0]])
    return np.eye(3) + np.sin(angle) * k + (1 - np.cos(angle)) * (k @ k)


def rot_z(angle: float) -> np.ndarray:
    return rot([0, 0, 1], angle)


def unit(v) -> np.ndarray:
    v = np.asarray(v, float)
    return v / np.linalg.norm(v)


def frame_map(e1_rest, e2_rest, e1_pose, e2_pose) -> np.ndarray:
    """Rotation taking the rest frame (e1, e2 orthogonalised) onto the posed frame."""
    def frame(e1, e2):
        e1 = unit(e1)
        e2 = unit(np.asarray(e2, float) - np.dot(e2, e1) * e1)
        return np.stack([e1, e2, np.cross(e1, e2)], axis=1)
    return frame(e1_pose, e2_pose) @ frame(e1_rest, e2_rest).T


def min_rot(a, b) -> np.ndarray:
    """Smallest rotation taking direction ``a`` onto direction ``b``."""
    a, b = unit(a), unit(b)
    c = np.cross(a, b)
    s = np.linalg.norm(c)
    if s < 1e-12:
        return np.eye(3)
    return rot(c / s, np.arctan2(s, np.dot(a, b)))


def two_bone_ik(hip, target, l1: float, l2: float, pole):
    """Knee position for a hip->knee->ankle chain reaching ``target``.

    The knee bends toward ``pole``. Returns (knee, ankle, reached); when the target
    is out of reach the ankle is placed on the line to it at full reach.
    """
    d = target - hip
    dist = np.linalg.norm(d)
    u = d / dist
    dmax = l1 + l2 - 1e-9
    dmin = abs(l1 - l2) + 1e-9
    reached = dmin <= dist <= dmax
    dc = float(np.clip(dist, dmin, dmax))
    a = (l1 * l1 - l2 * l2 + dc * dc) / (2 * dc)
    b = np.sqrt(max(l1 * l1 - a * a, 0.0))
    p = pole - np.dot(pole, u) * u
    p = p / np.linalg.norm(p)
    knee = hip + a * u + b * p
    ankle = hip + dc * u
    return knee, ankle, reached
