"""Room, camera and offscreen rendering (pyrender + OSMesa) for truth clips.

World frame as in ``gait.py``: origin on the floor below the camera, X to the camera's
right, Y away from the camera, Z up (metres). Camera convention for the truth JSON is
OpenCV's: x right, y down, z forward; pixel coordinates are continuous with (0, 0) at
the top-left *corner* of the top-left pixel (so the centre of pixel (i, j) is at
(i + 0.5, j + 0.5)), the same convention as MediaPipe normalised coordinates times the
image size.
"""
from __future__ import annotations

import os

os.environ.setdefault("PYOPENGL_PLATFORM", "osmesa")

from dataclasses import asdict, dataclass  # noqa: E402

import numpy as np  # noqa: E402
import pyrender  # noqa: E402
import trimesh  # noqa: E402

from .kin import rot, unit  # noqa: E402


@dataclass(frozen=True)
class CameraParams:
    width_px: int = 720
    height_px: int = 1280
    vfov_deg: float = 67.0
    height_m: float = 1.20
    pitch_deg: float = -6.0  # negative = looking down
    roll_deg: float = 0.0  # + when world verticals appear turned clockwise in the image
    yaw_deg: float = 0.0  # + turns the view toward world +X
    x_m: float = 0.0

    def to_dict(self) -> dict:
        return asdict(self)


@dataclass(frozen=True)
class RoomParams:
    half_width_m: float = 1.9
    length_m: float = 11.0
    height_m: float = 2.7
    light_azimuth_deg: float = 35.0  # direction the light comes FROM, 0 = from camera side
    light_elevation_deg: float = 55.0
    light_intensity: float = 3.0
    ambient: float = 0.35
    wall_rgb: tuple = (0.86, 0.84, 0.78)
    floor_rgb: tuple = (0.55, 0.47, 0.38)

    def to_dict(self) -> dict:
        d = asdict(self)
        d["wall_rgb"], d["floor_rgb"] = list(self.wall_rgb), list(self.floor_rgb)
        return d


def camera_matrices(cam: CameraParams):
    """Intrinsics K (3x3) and world->camera (OpenCV axes) rotation R (3x3), centre C (3,)."""
    fy = 0.5 * cam.height_px / np.tan(np.radians(cam.vfov_deg) / 2)
    k = np.array([[fy, 0, cam.width_px / 2], [0, fy, cam.height_px / 2], [0, 0, 1.0]])
    fwd = rot([0, 0, 1], -np.radians(cam.yaw_deg)) @ np.array([0.0, 1.0, 0.0])
    right = unit(np.cross(fwd, [0, 0, 1]))
    fwd = rot(right, np.radians(cam.pitch_deg)) @ fwd
    up = np.cross(right, fwd)
    # A camera turned counter-clockwise (as seen by the holder) makes the scene appear
    # turned clockwise: positive roll_deg rotates the camera by -roll about its axis.
    rr = rot(fwd, -np.radians(cam.roll_deg))
    right, up = rr @ right, rr @ up
    r = np.stack([right, -up, fwd])  # rows: OpenCV x, y, z axes in world coordinates
    c = np.array([cam.x_m, 0.0, cam.height_m])
    return k, r, c


def project(points: np.ndarray, k: np.ndarray, r: np.ndarray, c: np.ndarray) -> np.ndarray:
    """World points (..., 3) -> pixel coordinates (..., 2)."""
    pc = (np.asarray(points) - c) @ r.T
    uv = pc[..., :2] / pc[..., 2:3]
    return uv * np.array([k[0, 0], k[1, 1]]) + k[:2, 2]


def _box(lo, hi, rgb):
    lo, hi = np.asarray(lo, float), np.asarray(hi, float)
    m = trimesh.creation.box(extents=hi - lo)
    m.apply_translation((lo + hi) / 2)
    m.visual.face_colors = np.tile(np.r_[np.round(np.asarray(rgb) * 255), 255].astype(np.uint8),
                                   (len(m.faces), 1))
    return m


def room_meshes(room: RoomParams) -> list:
    """Floor with tiles, two side walls, end wall, ceiling, door frames and shelves."""
    w, ln, h = room.half_width_m, room.length_m, room.height_m
    parts = []
    tile = 0.6
    fl = np.asarray(room.floor_rgb)
    for i, x in enumerate(np.arange(-w, w, tile)):
        for j, y in enumerate(np.arange(-1.0, ln, tile)):
            shade = 1.0 if (i + j) % 2 == 0 else 0.88
            parts.append(_box([x, y, -0.02], [min(x + tile, w), y + tile, 0.0], fl * shade))
    wall = np.asarray(room.wall_rgb)
    parts.append(_box([-w - 0.1, -1.0, 0], [-w, ln, h], wall * 0.97))
    parts.append(_box([w, -1.0, 0], [w + 0.1, ln, h], wall))
    parts.append(_box([-w, ln, 0], [w, ln + 0.1, h], wall * 0.93))
    parts.append(_box([-w, -1.0, h], [w, ln, h + 0.1], (0.95, 0.95, 0.95)))
    skirt = (0.30, 0.28, 0.26)
    parts.append(_box([-w, -1.0, 0], [-w + 0.02, ln, 0.10], skirt))
    parts.append(_box([w - 0.02, -1.0, 0], [w, ln, 0.10], skirt))
    parts.append(_box([-w, ln - 0.02, 0], [w, ln, 0.10], skirt))
    wood = (0.42, 0.27, 0.15)
    # Door in the end wall (frame + dark panel) with straight vertical edges.
    dx = 0.35
    parts.append(_box([dx, ln - 0.06, 0], [dx + 0.08, ln, 2.1], wood))
    parts.append(_box([dx + 0.98, ln - 0.06, 0], [dx + 1.06, ln, 2.1], wood))
    parts.append(_box([dx, ln - 0.06, 2.1], [dx + 1.06, ln, 2.18], wood))
    parts.append(_box([dx + 0.08, ln - 0.03, 0], [dx + 0.98, ln, 2.1], (0.55, 0.58, 0.62)))
    # Door in the right wall.
    parts.append(_box([w - 0.06, 6.0, 0], [w, 6.08, 2.1], wood))
    parts.append(_box([w - 0.06, 6.98, 0], [w, 7.06, 2.1], wood))
    parts.append(_box([w - 0.06, 6.0, 2.1], [w, 7.06, 2.18], wood))
    parts.append(_box([w - 0.03, 6.08, 0], [w, 6.98, 2.1], (0.70, 0.52, 0.35)))
    # Shelves on the left wall: uprights, boards and some coloured boxes.
    for y0 in (3.0, 5.2):
        for yy in (y0, y0 + 1.2):
            parts.append(_box([-w, yy, 0], [-w + 0.35, yy + 0.03, 1.9], (0.80, 0.80, 0.80)))
        for zz in (0.05, 0.5, 0.95, 1.4, 1.85):
            parts.append(_box([-w, y0, zz], [-w + 0.35, y0 + 1.23, zz + 0.03], (0.80, 0.80, 0.80)))
        rng = np.random.default_rng(int(y0 * 10))
        for zz in (0.08, 0.53, 0.98, 1.43):
            yy = y0 + 0.05
            while yy < y0 + 1.1:
                dy = rng.uniform(0.05, 0.2)
                hh = rng.uniform(0.2, 0.38)
                parts.append(_box([-w + 0.05, yy, zz], [-w + 0.3, min(yy + dy, y0 + 1.18), zz + hh],
                                  rng.uniform(0.15, 0.85, 3)))
                yy += dy + 0.02
    # A framed picture and a radiator on the right wall, a plinth near the end wall.
    parts.append(_box([w - 0.03, 3.2, 1.2], [w, 4.2, 1.9], (0.20, 0.20, 0.22)))
    parts.append(_box([w - 0.035, 3.25, 1.25], [w, 4.15, 1.85], (0.55, 0.70, 0.78)))
    parts.append(_box([w - 0.12, 8.0, 0.15], [w - 0.02, 9.2, 0.75], (0.92, 0.92, 0.92)))
    parts.append(_box([-w, 9.3, 0], [-w + 0.6, 10.3, 0.75], (0.35, 0.45, 0.55)))
    return parts


class Renderer:
    """Offscreen renderer holding the static room; call ``render(vertices)`` per frame."""

    def __init__(self, cam: CameraParams, room: RoomParams, faces: np.ndarray,
                 colours: np.ndarray):
        self.cam, self.room = cam, room
        self.k, self.r, self.c = camera_matrices(cam)
        a = room.ambient
        self.scene = pyrender.Scene(ambient_light=[a, a, a], bg_color=[0.5, 0.5, 0.5, 1.0])
        room_mesh = trimesh.util.concatenate(room_meshes(room))
        self.scene.add(pyrender.Mesh.from_trimesh(room_mesh, smooth=False))
        pose = np.eye(4)
        pose[:3, 0] = self.r[0]
        pose[:3, 1] = -self.r[1]
        pose[:3, 2] = -self.r[2]
        pose[:3, 3] = self.c
        camera = pyrender.IntrinsicsCamera(self.k[0, 0], self.k[1, 1], self.k[0, 2], self.k[1, 2],
                                           znear=0.05, zfar=40.0)
        self.scene.add(camera, pose=pose)
        az, el = np.radians(room.light_azimuth_deg), np.radians(room.light_elevation_deg)
        # Light travels from (direction "from") toward the scene; pyrender lights shine
        # along their local -Z.
        src = np.array([np.sin(az) * np.cos(el), -np.cos(az) * np.cos(el), np.sin(el)])
        lz = unit(src)
        lx = unit(np.cross([0, 0, 1], lz)) if abs(lz[2]) < 0.999 else np.array([1.0, 0, 0])
        lpose = np.eye(4)
        lpose[:3, :3] = np.stack([lx, np.cross(lz, lx), lz], axis=1)
        self.scene.add(pyrender.DirectionalLight(intensity=room.light_intensity), pose=lpose)
        # Weak fill light from the opposite side so shadowed sides are not black.
        fz = unit(np.array([-src[0], -src[1], 0.6]))
        fx = unit(np.cross([0, 0, 1], fz))
        fill = np.eye(4)
        fill[:3, :3] = np.stack([fx, np.cross(fz, fx), fz], axis=1)
        self.scene.add(pyrender.DirectionalLight(intensity=0.3 * room.light_intensity), pose=fill)
        self.faces, self.colours = faces, colours
        self.body_node = None
        self.r_off = pyrender.OffscreenRenderer(cam.width_px, cam.height_px)

    def render(self, vertices: np.ndarray) -> np.ndarray:
        if self.body_node is not None:
            self.scene.remove_node(self.body_node)
        tm = trimesh.Trimesh(vertices, self.faces, vertex_colors=self.colours, process=False)
        self.body_node = self.scene.add(pyrender.Mesh.from_trimesh(tm, smooth=True))
        rgb, _ = self.r_off.render(self.scene)
        return np.ascontiguousarray(rgb[:, :, :3])

    def close(self):
        self.r_off.delete()
