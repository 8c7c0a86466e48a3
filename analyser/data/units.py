"""Units at the boundary: strict parsing of unit strings and conversion to internal units.

Any astropy unit of the right physical kind is accepted (arcsec, uas, m/s,
kpc, d ...); an unknown unit or one of the wrong kind is refused with a
message saying what was expected, never guessed.
"""

from __future__ import annotations

import astropy.units as u
import numpy as np

ANGLE = u.mas
ANGULAR_SPEED = u.mas / u.yr
SPEED = u.km / u.s
DIMENSIONLESS = u.dimensionless_unscaled


def describe(target: u.UnitBase) -> str:
    if target == DIMENSIONLESS:
        return "dimensionless (no unit, or e.g. '%')"
    return f"{target.physical_type}, e.g. '{target.to_string()}'"


def parse_unit(text, target: u.UnitBase) -> tuple[u.UnitBase | None, str]:
    """(unit, "") if `text` names a unit convertible to `target`, else (None, why not)."""
    if not isinstance(text, str):
        return None, f"a unit must be a string such as '{target.to_string()}', not {text!r}"
    try:
        unit = u.Unit(text, parse_strict="raise")
    except Exception:  # astropy raises several types for unparseable strings
        return None, f"unknown unit '{text}'"
    if not unit.is_equivalent(target):
        return None, f"unit '{text}' is of the wrong kind: expected {describe(target)}"
    return unit, ""


def convert(values, unit: u.UnitBase, target: u.UnitBase):
    """`values` (a number or an array) in `unit`, expressed in `target`."""
    converted = unit.to(target, np.asarray(values, dtype=float))
    return float(converted) if np.ndim(converted) == 0 else converted
