"""The model's parameters: internal units, allowed ranges, default priors and variants.

A parameter's name carries its unit (mass_msun, x0_mas, vx0_mas_yr, period_yr,
Omega_deg ...; see analyser.campaign for the list).  Star parameters are named
"<star>.<parameter>" and instrument nuisances "<instrument>.<parameter>".
The defaults are deliberately broad: they should never be what constrains a
well-observed orbit, only keep the sampler inside the physically sensible.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import astropy.units as u

from ..campaign import PERIODIC_STAR_PARAMETERS, Prior
from .units import DIMENSIONLESS

E_MAX = 0.999   # the Kepler solver's limit

_UNIT_SUFFIXES = (("_mas_yr", u.mas / u.yr), ("_km_s", u.km / u.s), ("_msun", u.solMass),
                  ("_pc", u.pc), ("_mas", u.mas), ("_deg", u.deg), ("_yr", u.yr))

NUISANCE_PARAMETERS = ("offset_x_mas", "offset_y_mas", "zero_point_km_s", "error_scale",
                       "jitter_mas", "jitter_km_s", "outlier_fraction")


def base_name(name: str) -> str:
    """"CY-01.period_yr" -> "period_yr"; a global name is its own base."""
    return name.rsplit(".", 1)[-1]


def internal_unit(name: str) -> u.UnitBase:
    """The unit a parameter is kept in, read from the end of its name."""
    base = base_name(name)
    for suffix, unit in _UNIT_SUFFIXES:
        if base.endswith(suffix):
            return unit
    return DIMENSIONLESS


def unit_label(name: str) -> str:
    unit = internal_unit(name)
    return "" if unit == DIMENSIONLESS else " " + unit.to_string()


@dataclass(frozen=True)
class Range:
    """The values a parameter can physically take."""
    low: float = -math.inf
    high: float = math.inf
    low_open: bool = False
    high_open: bool = False

    def contains(self, value: float) -> bool:
        above = value > self.low if self.low_open else value >= self.low
        below = value < self.high if self.high_open else value <= self.high
        return above and below

    def contains_interval(self, a: float, b: float) -> bool:
        """Whether [a, b] lies in the range; a prior's bounds may touch an open end,
        which carries no probability."""
        return self.low <= a and b <= self.high

    def describe(self) -> str:
        if math.isinf(self.high):
            return f"{'>' if self.low_open else '>='} {self.low:g}"
        return (f"{'(' if self.low_open else '['}{self.low:g}, {self.high:g}"
                f"{')' if self.high_open else ']'}")


_POSITIVE = Range(0.0, math.inf, low_open=True)
_NON_NEGATIVE = Range(0.0, math.inf)
ALLOWED_RANGES = {
    "mass_msun": _POSITIVE,
    "distance_pc": _POSITIVE,
    "period_yr": _POSITIVE,
    "e": Range(0.0, E_MAX, high_open=True),
    "cos_i": Range(-1.0, 1.0),
    "error_scale": _POSITIVE,
    "jitter_mas": _NON_NEGATIVE,
    "jitter_km_s": _NON_NEGATIVE,
    "outlier_fraction": Range(0.0, 1.0, high_open=True),
}


def allowed_range(name: str) -> Range:
    return ALLOWED_RANGES.get(base_name(name), Range())


def period_of(name: str) -> float:
    """The period of a periodic parameter (Omega_deg, omega_deg, phase), else 0."""
    return PERIODIC_STAR_PARAMETERS.get(base_name(name), 0.0)


DEFAULT_GLOBAL_PRIORS = {
    "mass_msun": Prior("log-uniform", 1e5, 1e9),
    "distance_pc": Prior("uniform", 1000.0, 20000.0),
    "x0_mas": Prior("gaussian", 0.0, 5.0),
    "y0_mas": Prior("gaussian", 0.0, 5.0),
    "vx0_mas_yr": Prior("gaussian", 0.0, 1.0),
    "vy0_mas_yr": Prior("gaussian", 0.0, 1.0),
    "vz0_km_s": Prior("gaussian", 0.0, 50.0),
    "f_sp": Prior("fixed", 1.0),
    "f_z": Prior("fixed", 1.0),
}

DEFAULT_STAR_PRIORS = {
    "period_yr": Prior("log-uniform", 1.0, 3000.0),
    "e": Prior("uniform", 0.0, 0.98),
    "cos_i": Prior("uniform", -1.0, 1.0),
    "Omega_deg": Prior("uniform", 0.0, 360.0, period=360.0),
    "omega_deg": Prior("uniform", 0.0, 360.0, period=360.0),
    "phase": Prior("uniform", 0.0, 1.0, period=1.0),
}

DEFAULT_NUISANCE_PRIORS = {
    "offset_x_mas": Prior("gaussian", 0.0, 1.0),
    "offset_y_mas": Prior("gaussian", 0.0, 1.0),
    "zero_point_km_s": Prior("uniform", -100.0, 100.0),
    "error_scale": Prior("log-uniform", 0.3, 3.0),
    "jitter_mas": Prior("uniform", 0.0, 2.0),
    "jitter_km_s": Prior("uniform", 0.0, 50.0),
    "outlier_fraction": Prior("uniform", 0.0, 0.2),
}

# (name, description, prior overrides); used when the campaign defines no variants.
DEFAULT_VARIANTS = (
    ("newtonian", "Newtonian orbits, no relativistic redshift",
     {"f_sp": Prior("fixed", 0.0), "f_z": Prior("fixed", 0.0)}),
    ("gr", "General relativity",
     {"f_sp": Prior("fixed", 1.0), "f_z": Prior("fixed", 1.0)}),
    ("free", "Free Schwarzschild-precession and redshift factors",
     {"f_sp": Prior("uniform", -2.0, 4.0), "f_z": Prior("uniform", -2.0, 4.0)}),
)
DEFAULT_REFERENCE_VARIANT = "gr"
