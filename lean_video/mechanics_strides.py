"""Per-stride hip-model columns and per-side summaries for the analyse stage.

Input: the gait stage's per-stride table (pandas), one row per single-support
phase, with ``stance_side`` ('left'/'right'), ``lean_mean_deg`` (trunk lean,
positive toward the *stance* side) and ``pelvic_drop_mean_deg`` (positive when
the swing side is lower). The conversion from the image conventions
(``trunk_lean_deg`` positive toward the client's right, ``pelvic_obliquity_deg``
positive when the left hip is lower) to these stance-relative signs belongs to
the gait stage.

Defaults when the client's data are unknown: height 1.70 m
(:data:`lean_video.mechanics.DEFAULT_HEIGHT_M`); without a mass the newton
columns are left out. With default proportions every length scales with
stature except Harrington's constant 7.3 mm hip-centre offset, so the
body-weight outputs change by under 2% between 1.55 and 1.90 m; the height
default matters more once a pelvis width or override is given. What was
defaulted is recorded in ``frame.attrs["mechanics"]`` and in the summary.
"""

from __future__ import annotations

import logging
from dataclasses import asdict
from typing import Any

import numpy as np
import pandas as pd

from lean_video.errors import LeanVideoError
from lean_video.mechanics import (
    CAUTION,
    DEFAULT_HEIGHT_M,
    NEWTON_NAMES,
    OUTPUT_NAMES,
    HipModelParams,
    check_mass_kg,
    hip_model,
)

log = logging.getLogger(__name__)

#: Outputs that are forces (left empty where the model does not apply).
FORCE_NAMES = ("abductor_force_bw", "hip_force_bw", "hip_force_change_pct", *NEWTON_NAMES)

REQUIRED_COLUMNS = ("lean_mean_deg", "pelvic_drop_mean_deg")
SIDES = ("left", "right")


def add_mechanics_columns(
    strides: pd.DataFrame,
    *,
    mass_kg: float | None = None,
    height_m: float | None = None,
    params: HipModelParams | None = None,
) -> pd.DataFrame:
    """Return a copy of ``strides`` with the hip-model output columns added.

    Parameters
    ----------
    strides : pandas.DataFrame
        Needs ``lean_mean_deg`` and ``pelvic_drop_mean_deg`` (deg, stance-relative
        signs, see module docstring). Rows where either is NaN get NaN outputs
        (logged as a warning); other values must be finite and within the model
        limits.
    mass_kg : float, optional
        Body mass; adds ``abductor_force_n`` and ``hip_force_n``.
    height_m : float, optional
        Stature for the scaled defaults (default 1.70 m, flagged).
    params : HipModelParams, optional
        Full parameter set; overrides ``height_m``.

    Returns
    -------
    pandas.DataFrame
        Copy with :data:`lean_video.mechanics.OUTPUT_NAMES` (and newton)
        columns; ``attrs["mechanics"]`` holds ``defaults_used`` (list of
        names), ``height_m``, ``mass_kg``, ``params`` (every model parameter
        used, :class:`HipModelParams` as a dict), ``caution`` and ``warnings``.

    Notes
    -----
    Model: :func:`lean_video.mechanics.hip_model` (Pauwels' one-leg-stance
    lever, Williams & Lissner 1962 p. 110; Winter 2009 Table 4.1 proportions).
    """
    if not isinstance(strides, pd.DataFrame):
        raise LeanVideoError(
            f"strides must be a pandas DataFrame; got {type(strides).__name__}; "
            "pass the per-stride table from the gait stage."
        )
    missing = [c for c in REQUIRED_COLUMNS if c not in strides.columns]
    if missing:
        raise LeanVideoError(
            f"strides is missing column(s) {', '.join(missing)}; the hip model needs "
            f"{', '.join(REQUIRED_COLUMNS)}; run the gait stage first."
        )
    defaults_used: list[str] = []
    if params is None:
        if height_m is None:
            defaults_used.append("height_m")
            log.info("hip model: height unknown, using default %.2f m", DEFAULT_HEIGHT_M)
        params = HipModelParams.from_body(DEFAULT_HEIGHT_M if height_m is None else height_m)
    if mass_kg is None:
        defaults_used.append("mass_kg")
    else:
        check_mass_kg(mass_kg)   # checked even when no stride has a lean

    out = strides.copy()
    lean = pd.to_numeric(out["lean_mean_deg"], errors="coerce").to_numpy(dtype=float)
    drop = pd.to_numeric(out["pelvic_drop_mean_deg"], errors="coerce").to_numpy(dtype=float)
    for name, values in (("lean_mean_deg", lean), ("pelvic_drop_mean_deg", drop)):
        if np.isinf(values).any():
            raise LeanVideoError(f"strides column {name} holds an infinite value; values must be finite or "
                                 "missing (NaN); fix the gait table.")
    ok = ~np.isnan(lean) & ~np.isnan(drop)
    warnings: list[str] = []
    if not np.all(ok):
        warnings.append(f"hip model: {int((~ok).sum())} of {ok.size} phases lack a lean or pelvic drop; their "
                        "hip-model columns are empty")
    names = list(OUTPUT_NAMES) + (list(NEWTON_NAMES) if mass_kg is not None else [])
    cols = {name: np.full(ok.size, np.nan) for name in names}
    if ok.any():
        res = hip_model(lean[ok], params=params, pelvic_drop_deg=drop[ok], mass_kg=mass_kg)
        for name, values in res.as_dict().items():
            cols[name][ok] = values
        # With the body weight over or past the stance hip the abductors are not
        # needed and the pelvis is held by adductors and passive structures, which
        # the model leaves out: its forces would understate the load, so none are given.
        idle = np.flatnonzero(ok)[~np.asarray(res.abductors_active, bool)]
        if idle.size:
            for name in names:
                if name in FORCE_NAMES:
                    cols[name][idle] = np.nan
            warnings.append(
                f"hip model: in {idle.size} of {ok.size} phases the lean put the body weight over or past the "
                "stance hip, where the model (abductors holding the pelvis) does not apply; no hip or abductor "
                "force is given for them")
    for name in names:
        out[name] = cols[name]
    for w in warnings:
        log.warning(w)
    out.attrs["mechanics"] = {
        "defaults_used": defaults_used,
        "height_m": params.height_m,
        "mass_kg": None if mass_kg is None else float(mass_kg),
        "params": asdict(params),
        "caution": CAUTION,
        "warnings": warnings,
    }
    return out


def summarise_mechanics(strides: pd.DataFrame) -> dict[str, dict[str, Any]]:
    """Per-side medians of the hip-model columns.

    Parameters
    ----------
    strides : pandas.DataFrame
        Output of :func:`add_mechanics_columns` with a ``stance_side`` column
        holding 'left' / 'right'.

    Returns
    -------
    dict
        ``{'left': {...}, 'right': {...}}``; each side has ``n_strides`` (rows
        with model outputs), the medians ``lean_mean_deg``,
        ``pelvic_drop_mean_deg`` and every output column (None when the side
        has no strides), plus ``defaults_used`` and ``caution``.
    """
    if not isinstance(strides, pd.DataFrame) or "stance_side" not in strides.columns:
        raise LeanVideoError(
            "strides must be a DataFrame with a stance_side column; "
            "pass the per-stride table after add_mechanics_columns."
        )
    missing = [c for c in (*REQUIRED_COLUMNS, *OUTPUT_NAMES) if c not in strides.columns]
    if missing:
        raise LeanVideoError(
            f"strides is missing column(s) {', '.join(missing)}; call add_mechanics_columns first."
        )
    bad = sorted(set(strides["stance_side"].dropna().astype(str)) - set(SIDES))
    if bad or strides["stance_side"].isna().any():
        shown = ", ".join(bad) if bad else "a missing value"
        raise LeanVideoError(
            f"stance_side must be 'left' or 'right'; got {shown}; fix the gait table."
        )
    meta = strides.attrs.get("mechanics", {})
    names = [*REQUIRED_COLUMNS, *OUTPUT_NAMES, *(n for n in NEWTON_NAMES if n in strides.columns)]
    summary: dict[str, dict[str, Any]] = {}
    for side in SIDES:
        rows = strides[(strides["stance_side"] == side) & strides["hip_force_bw"].notna()]
        entry: dict[str, Any] = {"n_strides": int(len(rows))}
        for name in names:
            entry[name] = float(rows[name].median()) if len(rows) else None
        entry["defaults_used"] = list(meta.get("defaults_used", []))
        entry["caution"] = CAUTION
        summary[side] = entry
    return summary
