"""Parameters, constants and input checks of the one-leg-stance hip model.

Split out of :mod:`lean_video.mechanics` (which re-exports everything here);
sign conventions and the model itself are documented there. Every constant
names its published source; values recalled without the source at hand are
marked "from memory".
"""

from __future__ import annotations

from dataclasses import dataclass, fields, replace
from typing import Any

import numpy as np

from lean_video.errors import LeanVideoError

CAUTION = (
    "These hip-load figures are estimates from a simplified static model of "
    "one-leg stance with textbook body proportions; they are meant to explain "
    "and track the effect of trunk lean, not to diagnose or to measure joint load."
)

#: Standard gravity (m/s^2), to turn kg into newtons.
G_M_S2 = 9.80665
#: Stature used when the client's height is not known (common practice,
#: no source: a round adult value). Without a mass the newton outputs are omitted.
DEFAULT_HEIGHT_M = 1.70

# Winter DA (2009) Biomechanics and Motor Control of Human Movement, 4th ed.,
# Table 4.1 (after Dempster 1955) and Fig. 4.1 (after Drillis & Contini 1966).
WINTER_HAT_MASS_FRACTION = 0.678
WINTER_LIMB_MASS_FRACTION = 0.161  # thigh 0.100 + leg 0.0465 + foot 0.0145
WINTER_HAT_COM_FROM_TROCHANTER = 0.626  # of greater trochanter -> glenohumeral
WINTER_TROCHANTER_HEIGHT = 0.530  # of stature
WINTER_SHOULDER_HEIGHT = 0.818  # of stature
#: HAT COM above the hip level as a fraction of stature: 0.626 * (0.818 - 0.530).
HAT_COM_HEIGHT_PER_STATURE = WINTER_HAT_COM_FROM_TROCHANTER * (
    WINTER_SHOULDER_HEIGHT - WINTER_TROCHANTER_HEIGHT
)

# Harrington ME et al. (2007) J Biomech 40:595-602: HJC lies 0.33*PW + 7.3 mm
# lateral of the pelvis midline (PW = inter-ASIS width); from memory.
HARRINGTON_ML_PER_PW = 0.33
HARRINGTON_ML_OFFSET_CM = 0.73
#: Inter-ASIS width per stature when it is not measured. Assumption, no
#: published regression used: gives ~24 cm at 1.70 m, the order of the adult
#: inter-ASIS widths in the HJC regression samples (from memory).
PELVIS_WIDTH_PER_STATURE = 0.14

#: Inman VT (1947) J Bone Joint Surg 29:607-619 (pages from memory): abductor
#: line of action about 70 deg to the horizontal.
INMAN_ABDUCTOR_ANGLE_DEG = 70.0
#: Abductor moment arm 5-7 cm in kinesiology texts (Neumann 2010, ch. 12, from
#: memory); midpoint 6 cm taken at the reference stature below and scaled
#: linearly with stature (geometric similarity, common practice, no source).
ABDUCTOR_MOMENT_ARM_REF_CM = 6.0
REFERENCE_HEIGHT_M = 1.70

#: Default horizontal distance of a cane tip (opposite hand) from the stance
#: HJC. Assumption, no source; the Williams & Lissner cane example back-solves
#: to ~38 cm (see tests).
DEFAULT_CANE_DISTANCE_CM = 40.0

# Input limits: well beyond lean and drop seen in walking (common practice, no
# source); larger values point to a sign or unit error upstream.
LEAN_LIMIT_DEG = 30.0
DROP_LIMIT_DEG = 20.0
CANE_LIMIT_PCT_BW = 50.0

#: Parameters the CLI exposes as ``--set NAME=VALUE`` style overrides.
OVERRIDE_NAMES: tuple[str, ...] = (
    "hip_spacing_cm",
    "gravity_moment_arm_cm",
    "abductor_moment_arm_cm",
    "abductor_angle_deg",
    "stance_limb_fraction",
    "hat_mass_fraction",
    "hat_com_height_cm",
)
OVERRIDE_HELP: dict[str, str] = {
    "hip_spacing_cm": "distance between the two hip joint centres (cm)",
    "gravity_moment_arm_cm": (
        "zero-lean horizontal distance from the stance hip centre to the centre "
        "of mass of the supported weight (body minus stance limb) (cm)"
    ),
    "abductor_moment_arm_cm": (
        "perpendicular distance from the hip centre to the abductor line of action (cm)"
    ),
    "abductor_angle_deg": "abductor line of action, degrees from the horizontal",
    "stance_limb_fraction": "mass of one lower limb as a fraction of body mass",
    "hat_mass_fraction": "mass of head, arms and trunk as a fraction of body mass",
    "hat_com_height_cm": (
        "height of the head-arms-trunk centre of mass above the hip-joint level, "
        "i.e. the radius about which trunk lean swings it (cm)"
    ),
}

OUTPUT_NAMES: tuple[str, ...] = (
    "lever_arm_cm",
    "lever_arm_shortening_cm",
    "lever_arm_shortening_pct",
    "abductor_force_bw",
    "hip_force_bw",
    "hip_force_change_pct",
)
NEWTON_NAMES: tuple[str, ...] = ("abductor_force_n", "hip_force_n")

_RANGES: dict[str, tuple[float, float]] = {
    "height_m": (1.0, 2.3),
    "hip_spacing_cm": (5.0, 40.0),
    "gravity_moment_arm_cm": (1.0, 30.0),
    "abductor_moment_arm_cm": (1.0, 15.0),
    "abductor_angle_deg": (30.0, 90.0),
    "stance_limb_fraction": (0.05, 0.30),
    "hat_mass_fraction": (0.30, 0.90),
    "hat_com_height_cm": (5.0, 80.0),
}


def _check_range(name: str, value: Any, lo: float, hi: float, hint: str) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise LeanVideoError(
            f"{name} must be a number between {lo:g} and {hi:g}; got {value!r}; {hint}."
        ) from None
    if not np.isfinite(v) or not lo <= v <= hi:
        raise LeanVideoError(
            f"{name} must be between {lo:g} and {hi:g}; got {value!r}; {hint}."
        )
    return v


def check_mass_kg(mass_kg: Any) -> float:
    """Validate a body mass in kg (20-300) and return it as float."""
    return _check_range("mass_kg", mass_kg, 20.0, 300.0, "give the client's body mass in kilograms")


def check_angles(values: Any, name: str, limit: float) -> np.ndarray:
    """Validate an array of angles (deg): finite and within +-limit."""
    try:
        arr = np.asarray(values, dtype=float)
    except (TypeError, ValueError):
        raise LeanVideoError(
            f"{name} must be numbers in degrees; got {values!r}; pass e.g. 0 5 10."
        ) from None
    if not np.all(np.isfinite(arr)):
        raise LeanVideoError(
            f"{name} must contain only finite numbers; got NaN or infinity; "
            "drop the missing values before calling the hip model."
        )
    if np.any(np.abs(arr) > limit):
        worst = float(arr.flat[int(np.argmax(np.abs(arr)))])
        raise LeanVideoError(
            f"{name} must lie between -{limit:g} and {limit:g} degrees; got {worst:g}; "
            "check the sign convention and units (degrees)."
        )
    return arr


@dataclass(frozen=True)
class HipModelParams:
    """Geometry and mass distribution of the one-leg-stance model.

    Attributes
    ----------
    height_m : float
        Stature used for the scaled defaults (kept for the record).
    hip_spacing_cm : float
        Distance between the hip joint centres. Default from Harrington et al.
        (2007) J Biomech 40:595-602: 2 * (0.33 PW + 0.73 cm), PW = inter-ASIS
        width (from memory); PW = 0.14 * stature when not measured (assumption).
    abductor_moment_arm_cm : float
        Perpendicular distance from the HJC to the abductor line of action.
        Default 6.0 cm at 1.70 m, scaled with stature (5-7 cm in Neumann 2010,
        ch. 12, from memory).
    abductor_angle_deg : float
        Abductor line of action from the horizontal; 70 deg (Inman 1947 J Bone
        Joint Surg 29:607-619).
    stance_limb_fraction : float
        One lower limb's mass / body mass; 0.161 (Winter 2009, Table 4.1).
    hat_mass_fraction : float
        Head-arms-trunk mass / body mass; 0.678 (Winter 2009, Table 4.1). The
        rest of the supported weight (1 - stance limb - HAT) hangs below the
        swing hip.
    hat_com_height_cm : float
        Height of the HAT COM above the hip-joint level (lean pivot): 0.626 of
        the way from greater trochanter (0.530 H) to glenohumeral joint
        (0.818 H), i.e. 0.1803 H (Winter 2009, Table 4.1 and Fig. 4.1); the HJC
        is taken at trochanter level.
    gravity_moment_arm_cm : float or None
        Zero-lean, zero-drop lever arm of the supported weight. ``None`` means
        computed from the geometry above (0.596 * hip spacing with Winter's
        fractions); a value overrides the baseline while lean and drop still
        move it by the geometric amount.
    """

    height_m: float
    hip_spacing_cm: float
    abductor_moment_arm_cm: float
    hat_com_height_cm: float
    abductor_angle_deg: float = INMAN_ABDUCTOR_ANGLE_DEG
    stance_limb_fraction: float = WINTER_LIMB_MASS_FRACTION
    hat_mass_fraction: float = WINTER_HAT_MASS_FRACTION
    gravity_moment_arm_cm: float | None = None

    def __post_init__(self) -> None:
        for f in fields(self):
            value = getattr(self, f.name)
            if f.name == "gravity_moment_arm_cm" and value is None:
                continue
            lo, hi = _RANGES[f.name]
            object.__setattr__(
                self, f.name, _check_range(f.name, value, lo, hi, "correct the model parameter")
            )
        swing = 1.0 - self.stance_limb_fraction - self.hat_mass_fraction
        if swing < -1e-9:
            raise LeanVideoError(
                "stance_limb_fraction + hat_mass_fraction must not exceed 1; got "
                f"{self.stance_limb_fraction:g} + {self.hat_mass_fraction:g}; lower one of them."
            )

    @classmethod
    def from_body(
        cls,
        height_m: float = DEFAULT_HEIGHT_M,
        *,
        pelvis_width_cm: float | None = None,
        **overrides: float,
    ) -> "HipModelParams":
        """Scaled default parameters for a body of the given stature.

        Parameters
        ----------
        height_m : float
            Stature in metres (1.0-2.3).
        pelvis_width_cm : float, optional
            Measured inter-ASIS width; otherwise 0.14 * stature (assumption).
        **overrides
            Any of :data:`OVERRIDE_NAMES`; replaces the scaled default.
        """
        h_m = _check_range("height_m", height_m, 1.0, 2.3, "give the client's height in metres")
        unknown = sorted(set(overrides) - set(OVERRIDE_NAMES))
        if unknown:
            raise LeanVideoError(
                f"unknown hip-model override {', '.join(unknown)}; allowed are "
                f"{', '.join(OVERRIDE_NAMES)}."
            )
        if pelvis_width_cm is None:
            pw = PELVIS_WIDTH_PER_STATURE * h_m * 100.0
        else:
            pw = _check_range(
                "pelvis_width_cm", pelvis_width_cm, 15.0, 40.0, "give the inter-ASIS width in cm"
            )
        base = dict(
            height_m=h_m,
            hip_spacing_cm=2.0 * (HARRINGTON_ML_PER_PW * pw + HARRINGTON_ML_OFFSET_CM),
            abductor_moment_arm_cm=ABDUCTOR_MOMENT_ARM_REF_CM * h_m / REFERENCE_HEIGHT_M,
            hat_com_height_cm=HAT_COM_HEIGHT_PER_STATURE * h_m * 100.0,
        )
        base.update({k: v for k, v in overrides.items() if v is not None})
        return cls(**base)

    def with_overrides(self, **overrides: float) -> "HipModelParams":
        """Copy with some of :data:`OVERRIDE_NAMES` replaced."""
        unknown = sorted(set(overrides) - set(OVERRIDE_NAMES))
        if unknown:
            raise LeanVideoError(
                f"unknown hip-model override {', '.join(unknown)}; allowed are "
                f"{', '.join(OVERRIDE_NAMES)}."
            )
        return replace(self, **overrides)

    @property
    def zero_lean_lever_arm_cm(self) -> float:
        """Lever arm of the supported weight at zero lean and zero drop (cm)."""
        if self.gravity_moment_arm_cm is not None:
            return self.gravity_moment_arm_cm
        supported = 1.0 - self.stance_limb_fraction
        swing = supported - self.hat_mass_fraction
        # HAT over the hip midpoint (s/2), the rest below the swing hip (s).
        return self.hip_spacing_cm * (0.5 * self.hat_mass_fraction + swing) / supported

    def arrays(self) -> dict[str, Any]:
        """Keyword arguments for the vectorised model core (NaN marks 'no override')."""
        g = self.gravity_moment_arm_cm
        return dict(
            hip_spacing_cm=self.hip_spacing_cm,
            gravity_moment_arm_cm=np.nan if g is None else g,
            abductor_moment_arm_cm=self.abductor_moment_arm_cm,
            abductor_angle_deg=self.abductor_angle_deg,
            stance_limb_fraction=self.stance_limb_fraction,
            hat_mass_fraction=self.hat_mass_fraction,
            hat_com_height_cm=self.hat_com_height_cm,
        )


def check_cane(
    cane_pct_bw: Any, cane_distance_cm: Any, params: HipModelParams
) -> tuple[float, float]:
    """Validate cane load (% body weight) and distance (cm); return (fraction, cm)."""
    pct = _check_range(
        "cane_pct_bw", cane_pct_bw, 0.0, CANE_LIMIT_PCT_BW,
        "give the cane load in percent of body weight (0 for no cane)",
    )
    if pct / 100.0 >= 1.0 - params.stance_limb_fraction:
        raise LeanVideoError(
            f"cane_pct_bw must be below the supported weight "
            f"({100 * (1 - params.stance_limb_fraction):.0f}% of body weight); "
            f"got {pct:g}; lower it."
        )
    dist = _check_range(
        "cane_distance_cm", cane_distance_cm, 5.0, 100.0,
        "give the horizontal distance of the cane tip from the stance hip in cm",
    )
    return pct / 100.0, dist
