"""Checks of the gait stage's options, made once before any work.

Every numeric option of :func:`lean_video.gait.analyse_keypoints` has an
allowed range here; a value outside it (NaN and text included) is refused
with the option's name, the range, the value given and a usable value, so a
bad setting never turns into a silent NaN or a misleading "no phase found".
The ranges are engineering limits (common practice, no source): wide enough
for any walk the tool is meant for, narrow enough that the methods still make
sense.
"""

from __future__ import annotations

import inspect
import math
from collections.abc import Callable, Mapping
from numbers import Real

from lean_video.errors import LeanVideoError

#: name: (lowest, highest, lowest allowed itself?, highest allowed itself?, suggested value)
NUMERIC_RULES: dict[str, tuple[float, float, bool, bool, str]] = {
    "camera_roll_deg": (-45.0, 45.0, True, True, "0 (or measure the phone's roll)"),
    "cutoff_hz": (0.0, math.inf, False, False, "6"),
    "event_cutoff_hz": (0.0, math.inf, False, False, "6"),
    "foot_centre_cutoff_hz": (0.0, math.inf, False, False, "10"),
    "min_visibility": (0.0, 1.0, True, True, "0.5"),
    "max_gap_s": (0.0, 1.0, True, True, "0.1"),
    "min_phase_s": (0.0, 2.0, False, True, "0.15"),
    "max_phase_s": (0.0, 5.0, False, True, "1.0"),
    "max_missing_fraction": (0.0, 1.0, True, False, "0.2"),
    "footprint_tolerance": (0.0, 0.2, True, True, "0.01"),
    "max_jitter_ratio": (1.0, math.inf, True, False, "3"),
    "min_double_support_fraction": (0.0, 0.25, True, False, "0.08"),
}


def _bound_text(lo: float, hi: float, lo_in: bool, hi_in: bool) -> str:
    """``be positive``, ``be >= 1`` or ``lie in [0, 1)``."""
    if math.isinf(hi):
        return "be positive" if (lo == 0 and not lo_in) else f"be {'>=' if lo_in else '>'} {lo:g}"
    return f"lie in {'[' if lo_in else '('}{lo:g}, {hi:g}{']' if hi_in else ')'}"


def check_gait_options(values: Mapping, *, function: Callable) -> None:
    """Refuse unknown option names and out-of-range values for ``function``.

    Parameters
    ----------
    values : mapping
        Options as given (keyword arguments of ``function``); the ones not
        given take ``function``'s defaults for the cross-checks.
    function : callable, keyword-only
        The analysis function whose keyword-only options these are.

    Raises
    ------
    LeanVideoError
        Naming the option, what is allowed, what was given and what to use.
    """
    params = inspect.signature(function).parameters
    allowed = sorted(k for k, p in params.items() if p.kind is inspect.Parameter.KEYWORD_ONLY)
    unknown = sorted(set(values) - set(allowed))
    if unknown:
        raise LeanVideoError(f"unknown gait option(s) {unknown}; allowed: {', '.join(allowed)}.")
    merged = {k: params[k].default for k in allowed if params[k].default is not inspect.Parameter.empty}
    merged.update(values)
    for name, (lo, hi, lo_in, hi_in, use) in NUMERIC_RULES.items():
        if name not in merged:
            continue
        v = merged[name]
        ok = isinstance(v, Real) and not isinstance(v, bool) and math.isfinite(v) and \
            (lo <= v if lo_in else lo < v) and (v <= hi if hi_in else v < hi)
        if not ok:
            raise LeanVideoError(f"{name} must {_bound_text(lo, hi, lo_in, hi_in)} (a finite number), got {v!r}; "
                                 f"use {use}.")
    if merged.get("min_phase_s", 0) >= merged.get("max_phase_s", math.inf):
        raise LeanVideoError(f"min_phase_s must be below max_phase_s, got {merged['min_phase_s']!r} and "
                             f"{merged['max_phase_s']!r}; use 0.15 and 1.0.")


def check_frame_rate(time_s_median_step: float, *, cutoff_hz: float, event_cutoff_hz: float) -> None:
    """Refuse a low-pass cut-off that the clip's frame rate cannot carry.

    A digital filter cannot pass frequencies at or above half the sampling
    rate (Nyquist; Winter 2009, ch. 3, from memory), so such a cut-off would
    leave the data unfiltered while the settings said otherwise.
    """
    if time_s_median_step > 1.0:
        raise LeanVideoError(f"time_s must be in seconds, but frames lie a median {time_s_median_step:g} apart "
                             "(less than one frame per second); convert the timestamps to seconds (milliseconds / 1000).")
    fs = 1.0 / time_s_median_step
    for name, value in (("cutoff_hz", cutoff_hz), ("event_cutoff_hz", event_cutoff_hz)):
        if value >= fs / 2:
            raise LeanVideoError(
                f"{name} must lie below half the clip's frame rate ({fs / 2:.1f} Hz at {fs:.1f} fps), got {value:g}; "
                f"film at 25 fps or more (a phone's usual 30 fps), or pass a cut-off below {fs / 2:.1f} Hz.")
