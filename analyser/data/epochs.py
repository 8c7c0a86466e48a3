"""Epochs: from a table's format and time scale to decimal Julian years.

Every epoch becomes t = 2000 + (JD - 2451545) / 365.25 in the stated time scale
(astropy's Time.jyear); formats are jyear, jd, mjd and iso (ISO 8601 date
with an optional time, separated by a space or 'T').  Epochs outside
1900-2200 are refused: they are almost always a wrong format (an MJD read as
a JD, a year read as an MJD).
"""

from __future__ import annotations

import math
import warnings

import numpy as np
from astropy.time import Time

EPOCH_FORMATS = ("jyear", "jd", "mjd", "iso")
TIME_SCALES = tuple(s for s in Time.SCALES if s != "local")
EARLIEST_YR, LATEST_YR = 1900.0, 2200.0


def _check_range(t: float, text: str) -> str:
    if not EARLIEST_YR <= t <= LATEST_YR:
        year = f" (year {t:.2f})" if abs(t) < 1e6 else ""
        return (f"epoch '{text}'{year} lies outside {EARLIEST_YR:.0f}-{LATEST_YR:.0f};"
                " is the epoch format right?")
    return ""


def _iso_to_jyear(text: str, scale: str) -> float | None:
    for astropy_format in ("iso", "isot"):
        try:
            return float(Time(text, format=astropy_format, scale=scale).jyear)
        except ValueError:
            continue
    return None


def to_jyear(texts, epoch_format: str, scale: str = "tt") -> tuple[np.ndarray, list[str]]:
    """Decimal Julian years for the epoch strings `texts`, and for each a reason it
    is unusable ("" when it is fine; the year is then finite)."""
    years = np.full(len(texts), math.nan)
    reasons = [""] * len(texts)
    with warnings.catch_warnings():
        # ERFA warns about "dubious years" for UTC far from the leap-second table;
        # at the precision needed here that does not matter.
        warnings.simplefilter("ignore")
        if epoch_format == "iso":
            for k, text in enumerate(texts):
                t = _iso_to_jyear(text.strip(), scale)
                if t is None:
                    reasons[k] = (f"epoch '{text}' is not an ISO date such as 2016-04-01 "
                                  "or 2016-04-01T12:00:00")
                else:
                    years[k] = t
        else:
            numbers = np.full(len(texts), math.nan)
            for k, text in enumerate(texts):
                try:
                    numbers[k] = float(text)
                except ValueError:
                    reasons[k] = f"epoch '{text}' is not a number ({epoch_format})"
                    continue
                if not math.isfinite(numbers[k]):
                    reasons[k] = f"epoch '{text}' is not finite"
            good = np.isfinite(numbers)
            if good.any():
                years[good] = Time(numbers[good], format=epoch_format, scale=scale).jyear
    for k, t in enumerate(years):
        if not reasons[k]:
            reasons[k] = _check_range(t, texts[k])
            if reasons[k]:
                years[k] = math.nan
    return years, reasons


def epoch_to_jyear(value) -> tuple[float, str]:
    """A single epoch written in the campaign file: a decimal Julian year, an ISO
    date string or a TOML date; (year, "") or (nan, why not)."""
    if hasattr(value, "isoformat"):          # a TOML date or date-time
        value = value.isoformat()
    if isinstance(value, bool) or not isinstance(value, (int, float, str)):
        return math.nan, "must be a decimal Julian year or an ISO date"
    if isinstance(value, str):
        years, reasons = to_jyear([value], "iso")
    else:
        years, reasons = to_jyear([repr(float(value))], "jyear")
    return float(years[0]), reasons[0]
