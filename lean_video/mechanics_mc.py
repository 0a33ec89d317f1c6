"""Monte Carlo uncertainty of the one-leg-stance hip model.

Draws the anthropometric and muscle parameters of
:class:`lean_video.mechanics.HipModelParams` from the ranges below (uniform,
independent unless stated), runs the vectorised model once over a
``(n_draws, n_leans)`` grid and reports the 5th and 95th percentiles of every
output. The generator is ``numpy.random.default_rng(seed)``, so a seed gives
the same band every time.

Ranges (all relative to the nominal parameters, so they follow any override):

* hip spacing x U(0.90, 1.10): HJC regressions from pelvis width carry errors
  of the order of a centimetre (Harrington et al. 2007 J Biomech 40:595-602,
  from memory) and the stature-based pelvis width is an assumption; +-10% is
  common practice, no source.
* lower-limb mass fraction + U(0, 0.048), HAT fraction - twice that: spans
  Winter 2009 Table 4.1 / Dempster (limb 0.161, HAT 0.678) to de Leva 1996
  J Biomech 29:1223-1230 female values (limb ~0.209, HAT ~0.582), from memory.
* HAT COM height x U(0.90, 1.10): differences between segment tables (Winter
  2009 vs de Leva 1996), common practice, no source.
* abductor moment arm x U(5/6, 7/6): the 5-7 cm textbook range around 6 cm
  (Neumann 2010, ch. 12, from memory).
* abductor angle + U(-10, +10) deg around Inman's 70 deg (Inman 1947), capped
  at 90 deg; the +-10 deg spread is common practice, no source.
* an overridden zero-lean lever arm is scaled with the hip-spacing draw.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from lean_video.errors import LeanVideoError
from lean_video.mechanics import (
    DEFAULT_CANE_DISTANCE_CM,
    DEFAULT_HEIGHT_M,
    DROP_LIMIT_DEG,
    G_M_S2,
    LEAN_LIMIT_DEG,
    MIN_LEVER_ARM_CM,
    NEWTON_NAMES,
    OUTPUT_NAMES,
    HipModelParams,
    HipModelResult,
    _solve,
    check_angles,
    check_cane,
    check_mass_kg,
    hip_model,
)

MC_RANGES: dict[str, str] = {
    "hip_spacing_cm": "nominal x U(0.90, 1.10)",
    "stance_limb_fraction": "nominal + U(0, 0.048); hat_mass_fraction minus twice that",
    "hat_com_height_cm": "nominal x U(0.90, 1.10)",
    "abductor_moment_arm_cm": "nominal x U(5/6, 7/6)",
    "abductor_angle_deg": "nominal + U(-10, 10), at most 90",
    "gravity_moment_arm_cm": "override (if any) x the hip-spacing factor",
}


@dataclass(frozen=True)
class McResult:
    """Monte Carlo band of the hip model.

    Attributes
    ----------
    lean_deg : np.ndarray
        The leans, shape (m,).
    nominal : HipModelResult
        The model at the nominal parameters.
    p05, p95 : dict[str, np.ndarray]
        5th / 95th percentile of each output name, arrays of shape (m,).
    n_draws, seed : int
        Draw count and generator seed.
    n_dropped : int
        Draws left out because their zero-lean lever arm was shorter than
        :data:`lean_video.mechanics.MIN_LEVER_ARM_CM` (the body weight over or
        beside the hip already upright: no lever the model describes).

    Notes
    -----
    The band need not contain the nominal value: the lower-limb mass draw is
    one-sided (from Winter's proportions toward de Leva's), so with a cane, for
    example, the nominal hip force can lie at or just past the band's edge.
    ranges : dict[str, str]
        The sampling ranges (:data:`MC_RANGES`).
    """

    lean_deg: np.ndarray
    nominal: HipModelResult
    p05: dict[str, np.ndarray]
    p95: dict[str, np.ndarray]
    n_draws: int
    seed: int
    ranges: dict[str, str]
    n_dropped: int = 0


def draw_params(
    params: HipModelParams, *, n_draws: int, rng: np.random.Generator
) -> dict[str, np.ndarray]:
    """Draw ``n_draws`` parameter sets (arrays of shape (n_draws, 1)) for :func:`_solve`."""
    col = (n_draws, 1)
    s_factor = rng.uniform(0.90, 1.10, col)
    d_limb = rng.uniform(0.0, 0.048, col)
    limb = params.stance_limb_fraction + d_limb
    hat = np.clip(params.hat_mass_fraction - 2.0 * d_limb, 0.05, None)
    g = params.gravity_moment_arm_cm
    return dict(
        hip_spacing_cm=params.hip_spacing_cm * s_factor,
        gravity_moment_arm_cm=np.full(col, np.nan) if g is None else g * s_factor,
        abductor_moment_arm_cm=params.abductor_moment_arm_cm
        * rng.uniform(5.0 / 6.0, 7.0 / 6.0, col),
        abductor_angle_deg=np.minimum(
            params.abductor_angle_deg + rng.uniform(-10.0, 10.0, col), 90.0
        ),
        stance_limb_fraction=limb,
        hat_mass_fraction=hat,
        hat_com_height_cm=params.hat_com_height_cm * rng.uniform(0.90, 1.10, col),
    )


def monte_carlo(
    lean_deg: Any,
    *,
    params: HipModelParams | None = None,
    n_draws: int = 2000,
    seed: int = 0,
    pelvic_drop_deg: Any = 0.0,
    cane_pct_bw: float = 0.0,
    cane_distance_cm: float = DEFAULT_CANE_DISTANCE_CM,
    mass_kg: float | None = None,
) -> McResult:
    """5-95% band of every hip-model output over the parameter ranges.

    Parameters
    ----------
    lean_deg : array_like
        1-D leans, deg, positive toward the stance side.
    params : HipModelParams, optional
        Nominal parameters (default ``HipModelParams.from_body(1.70)``).
    n_draws : int
        Number of parameter draws (100-200000).
    seed : int
        Seed for ``numpy.random.default_rng``.
    pelvic_drop_deg, cane_pct_bw, cane_distance_cm, mass_kg
        As in :func:`lean_video.mechanics.hip_model`.

    Returns
    -------
    McResult
    """
    p = params if params is not None else HipModelParams.from_body(DEFAULT_HEIGHT_M)
    whole = isinstance(n_draws, (int, np.integer)) and not isinstance(n_draws, bool)
    if not whole or not 100 <= n_draws <= 200_000:
        raise LeanVideoError(
            f"n_draws must be a whole number between 100 and 200000; got {n_draws!r}; "
            "use e.g. 2000."
        )
    if isinstance(seed, bool) or not isinstance(seed, (int, np.integer)) or seed < 0:
        raise LeanVideoError(f"seed must be a non-negative whole number; got {seed!r}; use e.g. 0.")
    leans = np.atleast_1d(check_angles(lean_deg, "lean_deg", LEAN_LIMIT_DEG))
    if leans.ndim != 1:
        raise LeanVideoError(
            f"lean_deg must be one-dimensional for the Monte Carlo band; got shape {leans.shape}; "
            "flatten it first."
        )
    drop = check_angles(pelvic_drop_deg, "pelvic_drop_deg", DROP_LIMIT_DEG)
    nominal = hip_model(
        leans, params=p, pelvic_drop_deg=drop, cane_pct_bw=cane_pct_bw,
        cane_distance_cm=cane_distance_cm, mass_kg=mass_kg,
    )
    cane_bw, cane_cm = check_cane(cane_pct_bw, cane_distance_cm, p)
    rng = np.random.default_rng(int(seed))
    draws = draw_params(p, n_draws=int(n_draws), rng=rng)
    out = _solve(leans[None, :], drop, cane_bw=cane_bw, cane_distance_cm=cane_cm, **draws)
    keep = np.all(np.broadcast_to(out["zero_lean_lever_arm_cm"], (int(n_draws), leans.size)) >= MIN_LEVER_ARM_CM,
                  axis=1)
    if keep.sum() < 0.5 * n_draws:
        raise LeanVideoError(
            f"in {int(n_draws - keep.sum())} of {n_draws} parameter draws the body weight lies over or beside the "
            "stance hip at zero lean, so the band would mean nothing; check gravity_moment_arm_cm, hip_spacing_cm "
            "and pelvic_drop_deg.")
    names = list(OUTPUT_NAMES)
    if mass_kg is not None:
        weight_n = check_mass_kg(mass_kg) * G_M_S2
        out["abductor_force_n"] = out["abductor_force_bw"] * weight_n
        out["hip_force_n"] = out["hip_force_bw"] * weight_n
        names += list(NEWTON_NAMES)
    p05: dict[str, np.ndarray] = {}
    p95: dict[str, np.ndarray] = {}
    for name in names:
        grid = np.broadcast_to(out[name], (int(n_draws), leans.size))[keep]
        lo, hi = np.percentile(grid, [5.0, 95.0], axis=0)
        p05[name], p95[name] = lo, hi
    return McResult(
        lean_deg=leans, nominal=nominal, p05=p05, p95=p95, n_draws=int(n_draws),
        seed=int(seed), ranges=dict(MC_RANGES), n_dropped=int(n_draws - keep.sum()),
    )
