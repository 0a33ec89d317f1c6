"""Static frontal-plane model of single-limb stance: trunk lean -> hip load.

The model is Pauwels' lever for one-leg stance as presented in the standard
biomechanics textbooks (Nordin & Frankel, *Basic Biomechanics of the
Musculoskeletal System*; Williams & Lissner, *Biomechanics of Human Motion*,
1962, p. 110; Neumann, *Kinesiology of the Musculoskeletal System*, 2nd ed.
2010, ch. 12). About the stance hip joint centre (HJC) the moment of the
supported weight (body weight minus the stance limb) is balanced by the hip
abductors; the hip joint reaction force (JRF) is the vector sum of the
supported weight, the abductor pull and (optionally) a cane.

Frame and sign conventions (stated once, tested in tests/test_mechanics.py)
------------------------------------------------------------------------
* Frontal plane, origin at the stance HJC, x horizontal and positive *lateral*
  (away from the body midline, toward the stance side), y vertical up.
* ``lean_deg``: trunk (HAT: head-arms-trunk) lean from the vertical, positive
  toward the stance side. The HAT rotates about the pelvis at the level of the
  hip-joint midpoint. Lean is absolute (from the vertical), as the gait stage
  measures it.
* ``pelvic_drop_deg``: positive when the swing side is lower. The pelvis (with
  the hanging swing limb's hip) rotates about the stance HJC.
* ``lever_arm_cm``: horizontal distance from the stance HJC to the supported
  weight's centre of mass, positive when the COM is medial (the usual case).
* ``hip_force_angle_deg``: inclination from the vertical of the force that the
  femoral head exerts on the acetabulum, positive when it points medially as it
  rises (Pauwels' resultant is about 16 deg, from memory).
* Forces are in multiples of body weight (``_bw``) and, when the body mass is
  given, in newtons (``_n``). Every "against zero lean" reference keeps the
  same pelvic drop and cane, so it isolates the effect of lean.
* Arrays: ``lean_deg`` of any shape; ``pelvic_drop_deg`` a scalar or an array
  that broadcasts with it; every output has the broadcast shape.

Results are estimates from a simplified static model (see :data:`CAUTION`).
Parameters, constants and input checks live in
:mod:`lean_video.mechanics_params`, the Monte Carlo band in
:mod:`lean_video.mechanics_mc`, the per-stride helpers for the analyse stage
in :mod:`lean_video.mechanics_strides`; all are importable from here.
"""

from __future__ import annotations

import logging
from dataclasses import dataclass
from typing import Any, Mapping, Sequence

import numpy as np

from lean_video.errors import LeanVideoError
from lean_video.mechanics_params import (  # noqa: F401  (re-exported)
    ABDUCTOR_MOMENT_ARM_REF_CM,
    CANE_LIMIT_PCT_BW,
    CAUTION,
    DEFAULT_CANE_DISTANCE_CM,
    DEFAULT_HEIGHT_M,
    DROP_LIMIT_DEG,
    G_M_S2,
    HAT_COM_HEIGHT_PER_STATURE,
    INMAN_ABDUCTOR_ANGLE_DEG,
    LEAN_LIMIT_DEG,
    NEWTON_NAMES,
    OUTPUT_NAMES,
    OVERRIDE_HELP,
    OVERRIDE_NAMES,
    REFERENCE_HEIGHT_M,
    HipModelParams,
    _check_range,
    check_angles,
    check_cane,
    check_mass_kg,
)
#: Shortest zero-lean lever arm of body weight about the stance hip the model
#: accepts: the lower bound of ``gravity_moment_arm_cm`` (mechanics_params).
MIN_LEVER_ARM_CM = 1.0


log = logging.getLogger(__name__)

__all__ = [
    "CAUTION", "DEFAULT_CANE_DISTANCE_CM", "DEFAULT_HEIGHT_M", "G_M_S2", "NEWTON_NAMES",
    "OUTPUT_NAMES", "OVERRIDE_HELP", "OVERRIDE_NAMES", "HipModelParams", "HipModelResult",
    "McResult", "add_mechanics_columns", "hip_model", "hip_model_table", "lean_sweep",
    "mass_what_if", "monte_carlo", "summarise_mechanics",
]


def _solve(
    lean_deg: Any,
    drop_deg: Any,
    *,
    hip_spacing_cm: Any,
    gravity_moment_arm_cm: Any,
    abductor_moment_arm_cm: Any,
    abductor_angle_deg: Any,
    stance_limb_fraction: Any,
    hat_mass_fraction: Any,
    hat_com_height_cm: Any,
    cane_bw: Any = 0.0,
    cane_distance_cm: Any = DEFAULT_CANE_DISTANCE_CM,
) -> dict[str, np.ndarray]:
    """Vectorised core (all inputs broadcast; no validation, callers validate)."""
    s = np.asarray(hip_spacing_cm, dtype=float)
    limb = np.asarray(stance_limb_fraction, dtype=float)
    hat = np.asarray(hat_mass_fraction, dtype=float)
    h = np.asarray(hat_com_height_cm, dtype=float)
    supported = 1.0 - limb
    swing = supported - hat  # swing limb (and any rest) hangs below its own hip

    def com_medial_cm(lean: Any, drop: Any) -> np.ndarray:
        lean_r = np.radians(lean)
        drop_r = np.radians(drop)
        # Pelvis rotates about the stance HJC: swing hip to -s*cos(drop);
        # the HAT pivots at the hip midpoint and swings by h*sin(lean).
        x_hat = -0.5 * s * np.cos(drop_r) + h * np.sin(lean_r)
        x_swing = -s * np.cos(drop_r)
        return -(hat * x_hat + swing * x_swing) / supported

    geom0 = com_medial_cm(0.0, 0.0)
    g_over = np.asarray(gravity_moment_arm_cm, dtype=float)
    base = np.where(np.isnan(g_over), geom0, g_over)
    d = base + com_medial_cm(lean_deg, drop_deg) - geom0
    d_ref = base + com_medial_cm(0.0, drop_deg) - geom0

    a = np.asarray(abductor_moment_arm_cm, dtype=float)
    alpha = np.radians(abductor_angle_deg)
    cane = np.asarray(cane_bw, dtype=float)
    cane_moment = cane * np.asarray(cane_distance_cm, dtype=float)

    def forces(lever: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
        net = supported * lever - cane_moment
        # A negative net moment would need the adductors, which this model
        # does not represent; the abductor demand is then zero.
        f_abd = np.maximum(net, 0.0) / a
        rx = f_abd * np.cos(alpha)
        ry = supported - cane + f_abd * np.sin(alpha)
        return f_abd, np.hypot(rx, ry), np.degrees(np.arctan2(rx, ry)), net > 0

    f, r, ang, active = forces(d)
    _, r_ref, _, _ = forces(d_ref)
    shortening = d_ref - d
    return {
        "lever_arm_cm": d,
        "lever_arm_shortening_cm": shortening,
        "lever_arm_shortening_pct": 100.0 * shortening / d_ref,
        "abductor_force_bw": f,
        "hip_force_bw": r,
        "hip_force_change_pct": 100.0 * (r / r_ref - 1.0),
        "hip_force_angle_deg": ang,
        "abductors_active": active,
        "zero_lean_lever_arm_cm": d_ref,
    }


@dataclass(frozen=True)
class HipModelResult:
    """Outputs of :func:`hip_model`; arrays share the broadcast input shape.

    ``abductor_force_n`` / ``hip_force_n`` are None unless a mass was given.
    ``abductors_active`` is False where the supported weight's moment (less the
    cane's) is not medial, so the abductor demand was set to zero.
    """

    lean_deg: np.ndarray
    pelvic_drop_deg: np.ndarray
    lever_arm_cm: np.ndarray
    lever_arm_shortening_cm: np.ndarray
    lever_arm_shortening_pct: np.ndarray
    abductor_force_bw: np.ndarray
    hip_force_bw: np.ndarray
    hip_force_change_pct: np.ndarray
    hip_force_angle_deg: np.ndarray
    abductors_active: np.ndarray
    mass_kg: float | None = None
    abductor_force_n: np.ndarray | None = None
    hip_force_n: np.ndarray | None = None

    def as_dict(self) -> dict[str, np.ndarray]:
        """Output arrays by name (the six outputs, plus newtons when present)."""
        out = {name: getattr(self, name) for name in OUTPUT_NAMES}
        if self.mass_kg is not None:
            out.update({name: getattr(self, name) for name in NEWTON_NAMES})
        return out


def hip_model(
    lean_deg: Any,
    *,
    params: HipModelParams | None = None,
    pelvic_drop_deg: Any = 0.0,
    cane_pct_bw: float = 0.0,
    cane_distance_cm: float = DEFAULT_CANE_DISTANCE_CM,
    mass_kg: float | None = None,
) -> HipModelResult:
    """Hip abductor force and joint reaction force in one-leg stance.

    Parameters
    ----------
    lean_deg : array_like
        Trunk lean from vertical, deg, positive toward the stance side (|.| <= 30).
    params : HipModelParams, optional
        Defaults to ``HipModelParams.from_body(1.70)``.
    pelvic_drop_deg : array_like
        Pelvic drop, deg, positive when the swing side is lower (|.| <= 20).
    cane_pct_bw : float
        Upward cane force in the opposite hand, percent of body weight.
    cane_distance_cm : float
        Horizontal distance of the cane tip from the stance HJC (medial).
    mass_kg : float, optional
        Body mass; adds newton outputs.

    Returns
    -------
    HipModelResult

    Notes
    -----
    Moment balance about the stance HJC (Williams & Lissner 1962 p. 110;
    Nordin & Frankel, hip chapter)::

        F_abd * a = W_s * d - C * c
        R = | (F_abd cos(alpha), W_s - C + F_abd sin(alpha)) |

    with W_s = (1 - stance limb) W, d the lever arm, a the abductor moment arm,
    alpha its angle from horizontal, C the cane force at distance c.
    """
    p = params if params is not None else HipModelParams.from_body(DEFAULT_HEIGHT_M)
    lean = check_angles(lean_deg, "lean_deg", LEAN_LIMIT_DEG)
    drop = check_angles(pelvic_drop_deg, "pelvic_drop_deg", DROP_LIMIT_DEG)
    cane_bw, cane_cm = check_cane(cane_pct_bw, cane_distance_cm, p)
    mass = None if mass_kg is None else check_mass_kg(mass_kg)
    try:
        lean_b, drop_b = np.broadcast_arrays(lean, drop)
    except ValueError:
        raise LeanVideoError(
            f"pelvic_drop_deg must be a scalar or match lean_deg's shape {lean.shape}; "
            f"got shape {drop.shape}; pass one value per lean value."
        ) from None
    out = _solve(lean_b, drop_b, cane_bw=cane_bw, cane_distance_cm=cane_cm, **p.arrays())
    shortest = float(np.min(out["zero_lean_lever_arm_cm"]))
    if shortest < MIN_LEVER_ARM_CM:
        # the shortening is a share of this arm: below the parameter's own lower
        # bound it is no longer a lever arm the model describes
        raise LeanVideoError(
            f"the body weight's lever arm about the stance hip at zero lean must be at least "
            f"{MIN_LEVER_ARM_CM:g} cm, got {shortest:.2f} cm (from gravity_moment_arm_cm, hip_spacing_cm and "
            "pelvic_drop_deg); raise gravity_moment_arm_cm, or check the hip spacing and the pelvic drop given."
        )
    if not np.all(out["abductors_active"]):
        log.info(
            "hip model: %d of %d cases put the supported weight lateral to the hip; "
            "abductor force set to zero there",
            int(np.size(out["abductors_active"]) - np.count_nonzero(out["abductors_active"])),
            int(np.size(out["abductors_active"])),
        )
    kw = {k: np.array(out[k]) for k in (*OUTPUT_NAMES, "hip_force_angle_deg", "abductors_active")}
    if mass is not None:
        weight_n = mass * G_M_S2
        kw["abductor_force_n"] = kw["abductor_force_bw"] * weight_n
        kw["hip_force_n"] = kw["hip_force_bw"] * weight_n
    return HipModelResult(
        lean_deg=np.array(lean_b), pelvic_drop_deg=np.array(drop_b), mass_kg=mass, **kw
    )


def lean_sweep(
    *,
    params: HipModelParams | None = None,
    max_lean_deg: float = 15.0,
    step_deg: float = 1.0,
    **kwargs: Any,
) -> HipModelResult:
    """What-if: the model over leans 0..max_lean_deg (default 0-15 deg, 1 deg steps).

    Extra keyword arguments go to :func:`hip_model`.
    """
    top = _check_range(
        "max_lean_deg", max_lean_deg, 0.0, LEAN_LIMIT_DEG, "pick a maximum lean in degrees"
    )
    step = _check_range("step_deg", step_deg, 0.01, 30.0, "pick a positive step in degrees")
    leans = np.arange(0.0, top + 1e-9, step)
    return hip_model(leans, params=params, **kwargs)


def mass_what_if(
    lean_deg: Any,
    *,
    mass_kg: float,
    new_mass_kg: float,
    params: HipModelParams | None = None,
    **kwargs: Any,
) -> dict[str, np.ndarray]:
    """What-if: hip force in newtons before and after a change of body mass.

    Mass is assumed to change in proportion over all segments (Winter's
    fractions kept), so forces in body weights do not change and newtons scale
    linearly (static model; Neumann 1989 Arthritis Care Res 2:146-155, from
    memory, discusses weight loss as joint protection).
    """
    res = hip_model(lean_deg, params=params, **kwargs)
    before = res.hip_force_bw * check_mass_kg(mass_kg) * G_M_S2
    after = res.hip_force_bw * check_mass_kg(new_mass_kg) * G_M_S2
    return {
        "hip_force_n_before": before,
        "hip_force_n_after": after,
        "hip_force_change_n": after - before,
    }


def hip_model_table(
    lean_deg: Sequence[float],
    *,
    mass_kg: float | None,
    height_m: float | None,
    pelvic_drop_deg: float = 0.0,
    cane_pct_bw: float = 0.0,
    cane_distance_cm: float = DEFAULT_CANE_DISTANCE_CM,
    overrides: Mapping[str, float] | None = None,
) -> list[dict[str, float]]:
    """Rows for the CLI: one dict per lean with ``lean_deg`` and the outputs.

    ``height_m=None`` uses :data:`DEFAULT_HEIGHT_M` (logged); ``mass_kg=None``
    leaves out the newton columns. ``overrides`` keys: :data:`OVERRIDE_NAMES`.
    """
    if height_m is None:
        log.info("hip model: height unknown, using default %.2f m", DEFAULT_HEIGHT_M)
    params = HipModelParams.from_body(
        DEFAULT_HEIGHT_M if height_m is None else height_m, **dict(overrides or {})
    )
    leans = np.atleast_1d(check_angles(lean_deg, "lean_deg", LEAN_LIMIT_DEG))
    if leans.ndim != 1 or leans.size == 0:
        raise LeanVideoError(
            f"lean_deg must be a non-empty list of angles; got shape {leans.shape}; "
            "pass e.g. 0 5 10."
        )
    res = hip_model(
        leans, params=params, pelvic_drop_deg=pelvic_drop_deg, cane_pct_bw=cane_pct_bw,
        cane_distance_cm=cane_distance_cm, mass_kg=mass_kg,
    )
    cols = res.as_dict()
    return [
        {"lean_deg": float(leans[i]), **{k: float(v[i]) for k, v in cols.items()},
         "abductors_active": bool(res.abductors_active[i])}
        for i in range(leans.size)
    ]


_LAZY = {
    "add_mechanics_columns": "lean_video.mechanics_strides",
    "summarise_mechanics": "lean_video.mechanics_strides",
    "monte_carlo": "lean_video.mechanics_mc",
    "McResult": "lean_video.mechanics_mc",
}


def __getattr__(name: str) -> Any:
    # Re-export the split-out helpers lazily so `from lean_video.mechanics
    # import add_mechanics_columns` works without a circular import.
    if name in _LAZY:
        import importlib

        return getattr(importlib.import_module(_LAZY[name]), name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
