"""Validation of what goes into the client store, before any work is done.

Every check raises :class:`lean_video.errors.LeanVideoError` with one
sentence: which value, what is allowed, what was given, what to do.
"""

from __future__ import annotations

import datetime as _dt
import json
import math
import re
from typing import Any, Mapping

import pandas as pd

from lean_video.errors import LeanVideoError

#: Per-phase columns stored from the ``strides`` table; the first five are required.
PHASE_COLUMNS = (
    "stance_side", "start_s", "end_s", "duration_s", "lean_mean_deg",
    "lean_peak_deg", "pelvic_drop_mean_deg", "pelvic_drop_peak_deg",
    "lever_arm_cm", "lever_arm_shortening_cm", "lever_arm_shortening_pct",
    "abductor_force_bw", "hip_force_bw", "hip_force_change_pct",
)
REQUIRED_PHASE_COLUMNS = PHASE_COLUMNS[:5]

_CLIENT_ID_RE = re.compile(r"^[A-Za-z0-9_\-][A-Za-z0-9_.\-]{0,63}$")
_DATE_RE = re.compile(r"^\d{4}-\d{2}-\d{2}$")
_SHA256_RE = re.compile(r"^[0-9a-f]{64}$")
MASS_RANGE_KG = (20.0, 300.0)     # common practice, no source: plausible adult/adolescent range
HEIGHT_RANGE_M = (1.0, 2.3)       # common practice, no source; as the hip model's (mechanics_params)
MAX_TEXT_CHARS = 10_000
BIRTH_YEAR_MIN = 1900


def validate_client_id(client_id: Any) -> str:
    """Return ``client_id`` if it is a safe pseudonym, else raise.

    Allowed: 1-64 characters from letters, digits, ``-``, ``_``, ``.``, not
    starting with ``.`` (so it is also a safe file-name stem).
    """
    if not isinstance(client_id, str) or not _CLIENT_ID_RE.match(client_id):
        raise LeanVideoError(
            f"client id must be 1-64 letters, digits, '-', '_' or '.' not starting with '.', "
            f"got {client_id!r}; choose a pseudonym such as HP-014."
        )
    return client_id


def validate_date(date: Any, name: str = "date") -> str:
    """Return an ISO ``YYYY-MM-DD`` date string if valid and not in the future, else raise.

    A day of slack allows for time zones (the clinic's today may be UTC's tomorrow).
    """
    if isinstance(date, _dt.date):
        date = date.isoformat()[:10]
    if isinstance(date, str) and _DATE_RE.match(date):
        try:
            day = _dt.date.fromisoformat(date)
        except ValueError:
            day = None
        if day is not None:
            latest = _dt.date.today() + _dt.timedelta(days=1)
            if day > latest:
                raise LeanVideoError(f"{name} must not lie in the future, got {date!r} (today is {_dt.date.today()}); "
                           "give the day the clip was filmed.")
            return date
    raise LeanVideoError(f"{name} must be a calendar date written YYYY-MM-DD, got {date!r}; fix the date.")


def check_client_text(*, display_name: Any = None, notes: Any = None) -> None:
    """Validate a client's free-text fields (either may be None) before any work is done."""
    for name, text in (("display_name", display_name), ("notes", notes)):
        if text is None:
            continue
        if not isinstance(text, str):
            raise LeanVideoError(f"{name} must be text, got {type(text).__name__}; pass a string or leave it out.")
        if len(text) > MAX_TEXT_CHARS:
            raise LeanVideoError(f"{name} must be at most {MAX_TEXT_CHARS} characters, got {len(text)}; shorten it.")


def check_range(value: Any, name: str, lo: float, hi: float, unit: str) -> float | None:
    """``value`` as a float within ``[lo, hi]`` (None passes through)."""
    if value is None:
        return None
    try:
        v = float(value)
    except (TypeError, ValueError):
        v = math.nan
    if not (lo <= v <= hi):
        raise LeanVideoError(f"{name} must be between {lo:g} and {hi:g} {unit}, got {value!r}; check the value and its unit.")
    return v


def check_body(*, mass_kg: Any = None, height_m: Any = None) -> tuple[float | None, float | None]:
    """Validate body mass and height (either may be None) before any work is done."""
    return (check_range(mass_kg, "mass_kg", *MASS_RANGE_KG, "kg"),
            check_range(height_m, "height_m", *HEIGHT_RANGE_M, "m"))


def check_provenance(*, clip_sha256: Any, settings: Any, version: Any) -> None:
    """Refuse a session without its provenance: the clip's content hash, the settings used, the version."""
    if not isinstance(clip_sha256, str) or not _SHA256_RE.match(clip_sha256):
        raise LeanVideoError(f"the clip's SHA-256 must be 64 lower-case hex digits, got {clip_sha256!r}; analyse the video "
                   "itself, or a keypoint folder whose clip.json holds the video's sha256.")
    if not isinstance(settings, Mapping) or not settings:
        raise LeanVideoError(f"settings must be the non-empty mapping of every parameter used, got {settings!r}; "
                   "pass the analysis summary's settings.")
    if not isinstance(version, str) or not version.strip():
        raise LeanVideoError(f"version must be the software version that made the analysis, got {version!r}; "
                   "pass lean_video.__version__.")


def to_json(obj: Any, name: str) -> str:
    """``obj`` as sorted JSON; NaN, infinity and unknown types refused (numpy scalars and arrays accepted)."""
    try:
        return json.dumps(obj, sort_keys=True, allow_nan=False, default=_json_default)
    except (TypeError, ValueError) as exc:
        raise LeanVideoError(f"{name} must be JSON-serialisable without NaN/inf ({exc}); replace missing numbers by null.") from None


def _json_default(o: Any) -> Any:
    if hasattr(o, "item"):          # numpy scalar
        v = o.item()
        if isinstance(v, float) and not math.isfinite(v):
            raise ValueError("non-finite number")
        return v
    if hasattr(o, "tolist"):        # numpy array
        return o.tolist()
    raise TypeError(f"cannot encode {type(o).__name__}")


def phase_rows(df: pd.DataFrame) -> list[tuple]:
    """Rows of :data:`PHASE_COLUMNS` from a strides table, every number finite or None."""
    if not isinstance(df, pd.DataFrame):
        raise LeanVideoError(f"strides_df must be a pandas DataFrame, got {type(df).__name__}; pass the gait strides table.")
    missing = [c for c in REQUIRED_PHASE_COLUMNS if c not in df.columns]
    if missing:
        raise LeanVideoError(f"strides_df lacks columns {missing}; pass the strides table from the gait stage.")
    bad_side = set(df["stance_side"]) - {"left", "right"}
    if bad_side:
        raise LeanVideoError(f"stance_side must be 'left' or 'right', got {sorted(map(str, bad_side))}; fix the strides table.")
    rows = []
    for rec in df.reindex(columns=list(PHASE_COLUMNS)).itertuples(index=False):
        vals = [rec[0]]
        for name, v in zip(PHASE_COLUMNS[1:], rec[1:]):
            try:
                v = None if v is None or pd.isna(v) else float(v)
            except (TypeError, ValueError):
                raise LeanVideoError(f"strides_df column {name} holds {v!r}, not a number; pass the gait strides table.") from None
            if v is None and name in REQUIRED_PHASE_COLUMNS:
                raise LeanVideoError(f"strides_df column {name} has a missing value; drop incomplete phases before saving.")
            if v is not None and not math.isfinite(v):
                raise LeanVideoError(f"strides_df column {name} holds {v}, not a finite number; fix the analysis before saving.")
            vals.append(v)
        rows.append(tuple(vals))
    return rows


def neutralise_cell(value: Any) -> Any:
    """Prefix text cells that a spreadsheet would run as a formula with ``'``.

    Only ``str`` values are changed; numbers (including negatives) are kept.
    """
    if isinstance(value, str) and value[:1] in ("=", "+", "-", "@", "\t", "\r"):
        return "'" + value
    return value
