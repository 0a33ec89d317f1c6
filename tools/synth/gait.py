"""Parametric walking kinematics for the truth-clip renderer.

World frame (metres): origin on the floor directly below the camera, X to the camera's
right (horizontal), Y horizontal away from the camera along the walkway, Z up.
The figure walks along the Y axis (toward the camera when start > end distance).

Angles in the public parameters are degrees; internal maths in radians.
Sign conventions follow DEVELOPERS.md: trunk lean positive toward the client's RIGHT,
pelvic obliquity positive when the client's LEFT hip is lower. "Pelvic drop" of a
stance side is the drop of the opposite (swing) side, positive when it is lower.

Kinematic model (why it is built this way):
* Foot strike / foot off times come first (stride time with seeded jitter), then
  footprints. The stance foot pivots rigidly about its heel (loading), lies flat, then
  pivots about the metatarsal heads (terminal stance) while the toes stay flat, so
  the foot never slides on the floor.
* Pelvis height is solved each frame so that the controlling stance leg (the one
  that struck most recently) has the published knee-flexion value for its phase;
  hip and knee then follow from two-bone inverse kinematics to the footprint.
  In swing the ankle follows the forward kinematics of the published hip and knee
  curves, blended (minimum-jerk) onto the foot-off and next foot-strike poses.
* Curves: periodic cubic splines through key values of normal sagittal hip, knee and
  ankle angles versus % gait cycle, approximating (from memory) the normal curves in
  Perry & Burnfield 2010, "Gait Analysis: Normal and Pathological Function", 2nd ed.,
  ch. 4-6, and Winter 2009, "Biomechanics and Motor Control of Human Movement", 4th
  ed., ch. 1 and appendix gait data. Shapes only; no claim of exact published values.
* Lateral trunk lean toward the stance side and contralateral pelvic drop are raised
  cosine ramps inside each single-support window, set exactly per side; the pelvis
  rotates in the frontal plane about the stance hip joint centre.
"""
from __future__ import annotations

from dataclasses import asdict, dataclass, field

import numpy as np
from scipy.interpolate import CubicSpline

from .body import Body
from .kin import frame_map, min_rot, rot, rot_z, two_bone_ik

# % gait cycle -> degrees (from memory, shapes after Perry & Burnfield 2010 / Winter 2009).
HIP_FLEX = [(0, 28), (10, 25), (30, 6), (50, -9), (60, -2), (73, 20), (87, 30), (100, 28)]
KNEE_FLEX = [(0, 4), (12, 17), (22, 15), (40, 4), (50, 9), (60, 37), (72, 58), (85, 32),
             (95, 6), (100, 4)]
ANKLE_DORSI = [(0, 0), (8, -6), (25, 5), (45, 10), (62, -17), (75, -5), (85, 1), (100, 0)]

F_M = np.array([0.0, -1.0, 0.0])  # model forward
R_M = np.array([-1.0, 0.0, 0.0])  # model right
Z = np.array([0.0, 0.0, 1.0])


def _curve(points):
    x = np.array([p[0] for p in points], float) / 100.0
    y = np.radians([p[1] for p in points])
    return CubicSpline(x, y, bc_type="periodic")


HIP, KNEE, ANKLE = _curve(HIP_FLEX), _curve(KNEE_FLEX), _curve(ANKLE_DORSI)


@dataclass(frozen=True)
class WalkParams:
    """Everything that defines one walk. All lean/drop values are exact targets."""

    seed: int = 0
    start_distance_m: float = 7.5  # pelvis distance from camera along Y at t = 0
    end_distance_m: float = 2.0
    lateral_offset_m: float = 0.0  # walkway line, world X
    speed_m_s: float = 0.9
    cadence_steps_min: float = 100.0
    step_width_m: float = 0.10
    stance_fraction: float = 0.60
    toe_out_deg: float = 6.0
    height_m: float = 1.70
    width_scale: float = 1.0
    lean_right_stance_deg: float = 0.0  # toward the stance side, right single support
    lean_left_stance_deg: float = 0.0
    lean_offset_deg: float = 0.0  # constant, positive toward client's right
    pelvic_drop_right_stance_deg: float = 0.0  # left side drops in right single support
    pelvic_drop_left_stance_deg: float = 0.0
    ramp_fraction: float = 0.3  # of each single-support window, for onset and offset
    stride_time_cv: float = 0.02
    step_length_sd_m: float = 0.015
    step_width_sd_m: float = 0.01
    lean_sd_deg: float = 0.3
    drop_sd_deg: float = 0.2
    com_lateral_amp_m: float = 0.02
    pelvic_rotation_deg: float = 4.0
    trunk_flexion_deg: float = 3.0
    arm_swing_deg: float = 14.0
    elbow_flex_deg: float = 18.0
    heel_strike_pitch_deg: float = 16.0  # foot-floor angle, toes up
    toe_off_pitch_deg: float = -40.0
    shirt_rgb: tuple = (0.16, 0.33, 0.62)
    trousers_rgb: tuple = (0.22, 0.27, 0.40)
    pelvis_marker_rgb: tuple | None = None  # skin markers over the iliac spines (None: none)
    stand_s: float = 0.0  # standing still (held in the first double support) before the walk

    @property
    def toward(self) -> bool:
        return self.start_distance_m > self.end_distance_m

    @property
    def duration_s(self) -> float:
        return abs(self.start_distance_m - self.end_distance_m) / self.speed_m_s

    def to_dict(self) -> dict:
        d = asdict(self)
        d["shirt_rgb"], d["trousers_rgb"] = list(self.shirt_rgb), list(self.trousers_rgb)
        if not self.stand_s:
            del d["stand_s"]  # older manifests and truth files stay as they were
        if self.pelvis_marker_rgb is None:
            del d["pelvis_marker_rgb"]  # older manifests and truth files stay as they were
        else:
            d["pelvis_marker_rgb"] = list(self.pelvis_marker_rgb)
        return d


def _minjerk(u):
    u = np.clip(u, 0.0, 1.0)
    return u ** 3 * (10 - 15 * u + 6 * u * u)


def _raised_cos(t, a, b, frac):
    """0 outside [a, b]; smooth rise over frac*(b-a), plateau 1, smooth fall."""
    r = frac * (b - a)
    if t <= a or t >= b:
        return 0.0
    if t < a + r:
        return 0.5 - 0.5 * np.cos(np.pi * (t - a) / r)
    if t > b - r:
        return 0.5 - 0.5 * np.cos(np.pi * (b - t) / r)
    return 1.0


@dataclass
class Events:
    strike: dict = field(default_factory=dict)  # side -> array of foot-strike times
    off: dict = field(default_factory=dict)  # side -> foot-off time after each strike
    heel: dict = field(default_factory=dict)  # side -> (n, 3) heel footprint (world)
    lean: dict = field(default_factory=dict)  # side -> per-strike lean target (deg)
    drop: dict = field(default_factory=dict)  # side -> per-strike drop target (deg)


class Walker:
    """Pose generator: ``pose(t)`` gives segment rotations and joint centres."""

    def __init__(self, params: WalkParams, body: Body):
        self.p = params
        self.b = body
        rng = np.random.default_rng(params.seed)
        self.heading = np.eye(3) if params.toward else rot_z(np.pi)
        self.fwd = self.heading @ F_M
        self.right = self.heading @ R_M
        self.start = np.array([params.lateral_offset_m, params.start_distance_m, 0.0])
        j = body.joints
        ix = body.index
        self.l1 = {s: np.linalg.norm(j[ix(f"shank.{c}")] - j[ix(f"thigh.{c}")]) for s, c in SIDES}
        self.l2 = {s: np.linalg.norm(j[ix(f"foot.{c}")] - j[ix(f"shank.{c}")]) for s, c in SIDES}
        self.yaw = {s: self.heading @ rot_z(np.radians(params.toe_out_deg) * (1 if s == "left" else -1))
                    for s, _ in SIDES}
        # Events, seeded.
        stride = 120.0 / params.cadence_steps_min
        sf = params.stance_fraction
        t0 = -3.0 * stride - rng.uniform(0, stride)
        n = int((params.duration_s + 6.0 * stride) / stride) + 4
        durs = stride * (1 + params.stride_time_cv * rng.standard_normal(n))
        rs = t0 + np.concatenate([[0.0], np.cumsum(durs[:-1])])
        ls = rs + durs * (0.5 + 0.01 * rng.standard_normal(n))
        ev = Events()
        for side, hs in (("right", rs), ("left", ls)):
            nxt = np.append(hs[1:], hs[-1] + stride)
            ev.strike[side] = hs
            ev.off[side] = hs + sf * (nxt - hs)
        step = params.speed_m_s * stride / 2
        # At foot strike the legs straddle the pelvis about equally (a quarter stride
        # each way), so leading and trailing legs agree on the hip height.
        ank_ahead = 0.25 * params.speed_m_s * stride
        for side, _ in SIDES:
            sgn = 1.0 if side == "right" else -1.0
            hs = ev.strike[side]
            k = len(hs)
            along = params.speed_m_s * hs + ank_ahead \
                + params.step_length_sd_m * rng.standard_normal(k)
            lat = sgn * params.step_width_m / 2 + params.step_width_sd_m * rng.standard_normal(k)
            heel = np.zeros((k, 3))
            for i in range(k):
                ank = self.start + along[i] * self.fwd + lat[i] * self.right
                # Heel footprint from the ankle at the strike pitch (heel rocker pivot).
                fp = self.foot_points(side)
                rf = self._foot_rot(side, np.radians(params.heel_strike_pitch_deg))
                off = rf @ (fp["heel"] - fp["ankle"])
                heel[i] = ank + np.array([off[0], off[1], 0.0])
            ev.heel[side] = heel
            amp = params.lean_right_stance_deg if side == "right" else params.lean_left_stance_deg
            dr = params.pelvic_drop_right_stance_deg if side == "right" else params.pelvic_drop_left_stance_deg
            ev.lean[side] = amp + params.lean_sd_deg * rng.standard_normal(k) * (amp != 0)
            ev.drop[side] = dr + params.drop_sd_deg * rng.standard_normal(k) * (dr != 0)
        self.ev = ev
        self.step_m = step
        self._bump = {}

    # ----- geometry helpers -------------------------------------------------
    def foot_points(self, side):
        c = "L" if side == "left" else "R"
        d = dict(self.b.foot_points[side])
        d["ankle"] = self.b.joints[self.b.index(f"foot.{c}")]
        d["mtp"] = self.b.joints[self.b.index(f"toes.{c}")]
        return d

    def _foot_rot(self, side, pitch):
        return self.yaw[side] @ rot(R_M, pitch)  # toes up for pitch > 0

    def _leg_phase(self, side, t):
        """(stride index, phase in [0, 1)) of ``side`` at time t; 0 = foot strike."""
        hs, to = self.ev.strike[side], self.ev.off[side]
        k = int(np.searchsorted(hs, t, side="right") - 1)
        sf = self.p.stance_fraction
        if t < to[k]:
            return k, sf * (t - hs[k]) / (to[k] - hs[k])
        return k, sf + (1 - sf) * (t - to[k]) / (hs[k + 1] - to[k])

    def first_double_support_mid(self, step_s: float = 0.001) -> float:
        """Walk time in the middle of the first double support that begins after t = 0.

        A standing start holds the pose of this instant: both feet flat on the
        floor, the trunk at its habitual lean (``lean_offset_deg``), the pelvis level.
        """
        both = lambda u: self.in_contact("left", u) and self.in_contact("right", u)  # noqa: E731
        t = 0.0
        while both(t):  # one already under way at t = 0 is not a whole double support
            t += step_s
        while not both(t):
            t += step_s
        a = t
        while self.in_contact("left", t) and self.in_contact("right", t):
            t += step_s
        return 0.5 * (a + t)

    def single_support(self, t):
        """('right'|'left', start, end) if t is inside single support, else None."""
        for side, other in (("right", "left"), ("left", "right")):
            to_o, hs_o = self.ev.off[other], self.ev.strike[other]
            k = int(np.searchsorted(to_o, t, side="right") - 1)
            if k >= 0:
                nxt = hs_o[hs_o > to_o[k]]
                if len(nxt) and to_o[k] <= t < nxt[0]:
                    return side, to_o[k], nxt[0]
        return None

    def in_contact(self, side, t):
        k, ph = self._leg_phase(side, t)
        return ph < self.p.stance_fraction

    # ----- stance foot ------------------------------------------------------
    def _stance_foot(self, side, k, ph):
        """Foot rotation, ankle target, toes rotation in stance (phase ph < sf)."""
        p = self.p
        sf = p.stance_fraction
        ff, hr = 0.10 * sf / 0.6, 0.34 * sf / 0.6
        fp = self.foot_points(side)
        heel = self.ev.heel[side][k]
        ryaw = self.yaw[side]
        if ph < ff:
            pitch = np.radians(p.heel_strike_pitch_deg) * 0.5 * (1 + np.cos(np.pi * ph / ff))
            piv_w, piv_r = heel, fp["heel"]
        else:
            u = max(ph - hr, 0.0) / (sf - hr)
            # Heel rise starts slowly and speeds up in pre-swing (foot-floor angle
            # about -10 deg at contralateral strike), so the hip does not ride up.
            pitch = np.radians(p.toe_off_pitch_deg) * u ** 3
            piv_r = fp["mtp"]
            piv_w = heel + ryaw @ (piv_r - fp["heel"])  # keeps the joint height above floor
        rf = self._foot_rot(side, pitch)
        ankle = piv_w + rf @ (fp["ankle"] - piv_r)
        return rf, ankle, ryaw, pitch

    # ----- pelvis -----------------------------------------------------------
    def _pelvis_nominal(self, t):
        p = self.p
        _, ph_r = self._leg_phase("right", t)
        ground = self.start + p.speed_m_s * t * self.fwd \
            + p.com_lateral_amp_m * np.cos(2 * np.pi * (ph_r - 0.3)) * self.right
        yaw = np.radians(p.pelvic_rotation_deg) * np.cos(2 * np.pi * ph_r)
        return ground, yaw

    def _hip_rest(self, side):
        c = "L" if side == "left" else "R"
        return self.b.joints[self.b.index(f"thigh.{c}")] - self.b.joints[0]

    def _hip_height(self, side, k, ph, t, knee):
        """Pelvis-joint height at which ``side``'s stance leg has flexion ``knee``."""
        ground, yaw = self._pelvis_nominal(t)
        _, ank, _, _ = self._stance_foot(side, k, ph)
        hip_h = ground + self.heading @ rot_z(yaw) @ self._hip_rest(side)
        horiz = np.linalg.norm((ank - hip_h)[:2])
        l1, l2 = self.l1[side], self.l2[side]
        d = np.sqrt(l1 * l1 + l2 * l2 + 2 * l1 * l2 * np.cos(knee)) - 1e-6
        return ank[2] + np.sqrt(max(d * d - horiz * horiz, 0.0)) - self._hip_rest(side)[2]

    def _pelvis(self, t):
        """Pelvis rotation, pelvis joint position and frontal targets at time t."""
        p = self.p
        ground, yaw = self._pelvis_nominal(t)
        r0 = self.heading @ rot_z(yaw)
        ss = self.single_support(t)  # (stance side, start, end) or None
        # The leg that struck most recently controls the height through its published
        # knee curve. In the second half of single support the height moves (minimum
        # jerk) to the height the swing leg will need at its coming foot strike, so
        # control passes to it without a jump. Every stance leg must stay in reach.
        cap, last = {}, {}
        for side, _ in SIDES:
            k, ph = self._leg_phase(side, t)
            last[side] = self.ev.strike[side][k]
            if ph < p.stance_fraction:
                cap[side] = self._hip_height(side, k, ph, t, np.radians(1.0))
        ctrl = max(last, key=last.get)
        k, ph = self._leg_phase(ctrl, t)
        pz = self._hip_height(ctrl, k, ph, t, KNEE(ph))
        if ss is not None:
            _, a, b = ss
            u = (t - 0.5 * (a + b)) / (0.5 * (b - a))
            if u > 0:
                sw = "left" if ctrl == "right" else "right"
                ks = int(np.searchsorted(self.ev.strike[sw], b, side="right") - 1)
                land = self._hip_height(sw, ks, 0.0, b, KNEE(0.0))
                pz = (1 - _minjerk(u)) * pz + _minjerk(u) * land
        pz = min([pz] + list(cap.values()))
        pos0 = np.array([ground[0], ground[1], pz])
        obliq = 0.0
        lean = p.lean_offset_deg
        if ss is not None:
            side, a, b = ss
            k = int(np.searchsorted(self.ev.strike[side], a, side="right") - 1)
            ramp = _raised_cos(t, a, b, p.ramp_fraction)
            drop = self.ev.drop[side][k] * ramp
            obliq = drop if side == "right" else -drop
            lean += (self.ev.lean[side][k] if side == "right" else -self.ev.lean[side][k]) * ramp
            rp = self.heading @ rot(F_M, np.radians(-obliq)) @ rot_z(yaw)
            hr = self._hip_rest(side)
            pos = pos0 + r0 @ hr - rp @ hr  # stance hip stays put
        else:
            rp, pos = r0, pos0
        return rp, pos, yaw, obliq, lean

    # ----- swing foot -------------------------------------------------------
    def _fk(self, side, ph):
        th, kn = HIP(ph), KNEE(ph)
        l1, l2 = self.l1[side], self.l2[side]
        fw = l1 * np.sin(th) + l2 * np.sin(th - kn)
        up = -(l1 * np.cos(th) + l2 * np.cos(th - kn))
        return fw * self.fwd + up * Z

    def _hip_world(self, side, t):
        rp, pos, *_ = self._pelvis(t)
        return pos + rp @ self._hip_rest(side)

    def _swing_raw(self, side, k, ph):
        """Swing foot without clearance bump: (ankle, foot rotation, pitch, u)."""
        p = self.p
        sf = p.stance_fraction
        hs, to = self.ev.strike[side], self.ev.off[side]
        u = (ph - sf) / (1 - sf)
        t = to[k] + u * (hs[k + 1] - to[k])
        s = _minjerk(u)
        _, a0, _, _ = self._stance_foot(side, k, sf - 1e-9)
        _, a1, _, _ = self._stance_foot(side, k + 1, 0.0)
        c0 = a0 - (self._hip_world(side, to[k]) + self._fk(side, sf))
        c1 = a1 - (self._hip_world(side, hs[k + 1]) + self._fk(side, 1.0))
        ankle = self._hip_world(side, t) + self._fk(side, ph) + (1 - s) * c0 + s * c1
        pc = lambda x: HIP(x) - KNEE(x) + ANKLE(x)  # noqa: E731  foot-floor angle
        pitch = pc(ph) + (1 - s) * (np.radians(p.toe_off_pitch_deg) - pc(sf)) \
            + s * (np.radians(p.heel_strike_pitch_deg) - pc(1.0))
        return ankle, self._foot_rot(side, pitch), pitch, u

    def _toes_rel(self, u):
        # Toes return from dorsiflexed (flat on the floor) to neutral early in swing.
        return 1.0 - _minjerk(u / 0.3)

    def _clearance(self, side, k):
        key = (side, k)
        if key not in self._bump:
            sf = self.p.stance_fraction
            fp = self.foot_points(side)
            need = 0.0
            for u in np.linspace(0.1, 0.9, 17):
                ankle, rf, pitch, _ = self._swing_raw(side, k, sf + u * (1 - sf))
                rt = rf @ rot(R_M, -pitch * self._toes_rel(u))
                heel = ankle + rf @ (fp["heel"] - fp["ankle"])
                mtp = ankle + rf @ (fp["mtp"] - fp["ankle"])
                toe = mtp + rt @ (fp["toe"] - fp["mtp"])
                low = min(heel[2], toe[2], mtp[2])
                need = max(need, (0.012 - low) / np.sin(np.pi * u))
            self._bump[key] = need
        return self._bump[key]

    # ----- full pose ----------------------------------------------------------
    def pose(self, t):
        """Global segment rotations (18,3,3), pelvis joint position, and frame info."""
        from .body import joint_positions

        p, b = self.p, self.b
        ix = b.index
        rots = np.tile(np.eye(3), (len(b.names), 1, 1))
        rp, pos, yaw, obliq, lean = self._pelvis(t)
        rots[0] = rp
        info = {"obliquity_target_deg": obliq, "lean_target_deg": lean, "contact": {}}
        # Legs.
        for side, c in SIDES:
            k, ph = self._leg_phase(side, t)
            sf = p.stance_fraction
            if ph < sf:
                rf, target, ryaw, pitch = self._stance_foot(side, k, ph)
                # Toes stay flat on the floor once the foot is flat (metatarsal rocker).
                rt = ryaw if ph >= 0.10 * sf / 0.6 else rf
                info["contact"][side] = True
            else:
                target, rf, pitch, u = self._swing_raw(side, k, ph)
                target = target + self._clearance(side, k) * np.sin(np.pi * u) * Z
                rt = rf @ rot(R_M, -pitch * self._toes_rel(u))
                info["contact"][side] = False
            hip = pos + rp @ self._hip_rest(side)
            pole = self.yaw[side] @ F_M
            knee, ankle, ok = two_bone_ik(hip, target, self.l1[side], self.l2[side], pole)
            if not ok and ph < sf:
                raise RuntimeError(f"stance leg out of reach at t={t:.3f}s ({side})")
            jh, jk, ja = (b.joints[ix(f"{n}.{c}")] for n in ("thigh", "shank", "foot"))
            rots[ix(f"thigh.{c}")] = frame_map(jk - jh, F_M, knee - hip, pole)
            rots[ix(f"shank.{c}")] = frame_map(ja - jk, F_M, ankle - knee, pole)
            rots[ix(f"foot.{c}")] = rf
            rots[ix(f"toes.{c}")] = rt
        # Trunk: solve the roll so the hip-mid -> shoulder-mid lean equals the target.
        _, ph_r = self._leg_phase("right", t)
        _, ph_l = self._leg_phase("left", t)
        flex = np.radians(p.trunk_flexion_deg)
        tyaw = -0.5 * yaw
        alpha = np.radians(lean)

        def set_trunk(a):
            rots[ix("lumbar")] = self.heading @ rot(F_M, a / 2) @ rot(R_M, flex / 2) @ rot_z(tyaw / 2)
            rots[ix("thorax")] = self.heading @ rot(F_M, a) @ rot(R_M, flex) @ rot_z(tyaw)
            return np.radians(self.lean_of(joint_positions(b, rots, pos)))

        # Newton iterations with a numerical slope; lean is smooth and monotonic in alpha.
        for _ in range(8):
            f0 = set_trunk(alpha) - np.radians(lean)
            if abs(f0) < 1e-10:
                break
            slope = (set_trunk(alpha + 1e-4) - np.radians(lean) - f0) / 1e-4
            alpha -= f0 / slope
        set_trunk(alpha)
        rots[ix("head")] = self.heading @ rot(F_M, 0.3 * alpha) @ rot(R_M, -flex)
        # Arms hang from the thorax and swing opposite to the same-side leg.
        abd = np.radians(9.0 + 30.0 * max(p.width_scale - 1.0, 0.0))
        for side, c, ph in (("left", "L", ph_l), ("right", "R", ph_r)):
            sg = 1.0 if side == "left" else -1.0
            swing = np.radians(p.arm_swing_deg) * np.cos(2 * np.pi * (ph - 0.5)) - np.radians(3)
            elbow = np.radians(p.elbow_flex_deg) + np.radians(10) * 0.5 * (1 + np.cos(2 * np.pi * (ph - 0.5)))
            ju, jl, jw_ = (b.joints[ix(f"{n}.{c}")] for n in ("upperarm", "lowerarm", "hand"))
            up_dir = rot(R_M, swing) @ np.array([sg * np.sin(abd), 0, -np.cos(abd)])
            lo_dir = rot(R_M, swing + elbow) @ np.array([sg * np.sin(abd / 2), 0, -np.cos(abd / 2)])
            rth = rots[ix("thorax")]
            rots[ix(f"upperarm.{c}")] = rth @ min_rot(jl - ju, up_dir)
            rots[ix(f"lowerarm.{c}")] = rth @ min_rot(jw_ - jl, lo_dir)
            rots[ix(f"hand.{c}")] = rots[ix(f"lowerarm.{c}")]
        jw = joint_positions(b, rots, pos)
        return rots, jw, info

    def lean_of(self, jw):
        """Frontal-plane angle (deg) of hip-mid -> shoulder-mid, + toward client's right."""
        ix = self.b.index
        d = 0.5 * (jw[ix("upperarm.L")] + jw[ix("upperarm.R")]) \
            - 0.5 * (jw[ix("thigh.L")] + jw[ix("thigh.R")])
        return float(np.degrees(np.arctan2(d @ self.right, d[2])))

    def foot_world(self, rots, jw, side):
        """World heel, ball (metatarsal heads), toe tip and ankle of one foot."""
        c = "L" if side == "left" else "R"
        ix = self.b.index
        fp = self.foot_points(side)
        rf, rt = rots[ix(f"foot.{c}")], rots[ix(f"toes.{c}")]
        ank = jw[ix(f"foot.{c}")]
        mtp = jw[ix(f"toes.{c}")]
        return {
            "ankle": ank,
            "heel": ank + rf @ (fp["heel"] - fp["ankle"]),
            "ball": mtp,
            "toe": mtp + rt @ (fp["toe"] - fp["mtp"]),
        }


SIDES = (("left", "L"), ("right", "R"))
