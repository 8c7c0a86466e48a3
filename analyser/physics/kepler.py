"""Kepler's equation  M = E - e sin E  for elliptic orbits, 0 <= e <= 0.999.

The solver is Markley's non-iterative method (F. L. Markley 1995, Celestial
Mechanics and Dynamical Astronomy 63, 101): a cubic-root starter accurate to
~4e-4 rad followed by one fifth-order correction, which leaves ~2e-15 rad
over 0 <= e <= 0.999 (tests/test_kepler.py checks it against 40-digit
solutions).  It needs one sine and cosine and one cube root, taken from
vectormath.py so that loops over epochs vectorise, and returns sin E and
cos E as well, rotated through the small correction by a Taylor series, so
callers need no further trigonometry.  The mean anomaly is reduced to [-pi, pi) and
the revolution count restored, so E is continuous in M across revolutions.

`kepler_unchecked` is the branch-free kernel for compiled loops whose
caller has checked e; `kepler_sincos` checks and raises; `solve_kepler` is
the validated, vectorised entry point for Python.  Outside 0 <= e <= 0.999
the checked ones raise instead of returning a wrong answer.
"""

import math

import numpy as np
from numba import njit

from .vectormath import COS_TINY, SIN_TINY, cbrt, sincos, sincos_small

E_MAX = 0.999
_TWO_PI = 2.0 * math.pi
_PI2 = math.pi * math.pi
_INV_PI2_6 = 1.0 / (_PI2 - 6.0)
_SIXTH = 1.0 / 6.0
_TWENTYFOURTH = 1.0 / 24.0


@njit(cache=True, inline="always", error_model="numpy")
def kepler_unchecked(mean_anomaly, e):
    """(E, sin E, cos E) for 0 <= e <= 0.999, not checked: branch-free, so that
    loops over epochs vectorise (the caller checks e once per orbit).

    Divisions are few (four): in SIMD code they cost several times a
    multiplication, and they dominated this solver."""
    turns = np.floor((mean_anomaly + math.pi) / _TWO_PI)   # a float: math.floor is an int in numba
    m_signed = mean_anomaly - turns * _TWO_PI
    m = abs(m_signed)
    sign = math.copysign(1.0, m_signed)
    # Markley's starter on [0, pi]; the cube root to ~1e-6 is ample for a
    # starter that is itself good to ~4e-4
    alpha = (3.0 * _PI2 + (math.pi - m) * (1.6 * math.pi / (1.0 + e))) * _INV_PI2_6
    d = 3.0 * (1.0 - e) + alpha * e
    q = 2.0 * alpha * d * (1.0 - e) - m * m
    r = 3.0 * alpha * d * (d - 1.0 + e) * m + m * m * m
    w = cbrt(abs(r) + math.sqrt(q * q * q + r * r), False)
    w *= w
    den = w * w + w * q + q * q
    e1 = (2.0 * r * w + m * den) / (den * d)
    # one fifth-order correction (Markley's eqs. 21-25)
    s1, c1 = sincos(e1)
    f0 = e1 - e * s1 - m
    f1 = 1.0 - e * c1
    f2 = e * s1
    f3 = e * c1
    d3 = -f0 * f1 / (f1 * f1 - 0.5 * f0 * f2)
    d4 = -f0 / (f1 + 0.5 * d3 * f2 + d3 * d3 * f3 * _SIXTH)
    d5 = -f0 / (f1 + 0.5 * d4 * f2 + d4 * d4 * f3 * _SIXTH - d4 * d4 * d4 * f2 * _TWENTYFOURTH)
    # |d5| is below the starter's error (at most 4.4e-4 on a 4001 x 1000 grid of
    # M in [0, pi] and 0 <= e <= 0.999), where the shortest series is exact
    sd, cd = sincos_small(d5, SIN_TINY, COS_TINY)
    big_e = e1 + d5
    sin_e = s1 * cd + c1 * sd
    cos_e = c1 * cd - s1 * sd
    return sign * big_e + turns * _TWO_PI, sign * sin_e, cos_e


@njit(cache=True)
def kepler_sincos(mean_anomaly, e):
    """(E, sin E, cos E) for mean anomaly M (any revolution), 0 <= e <= 0.999."""
    if not (0.0 <= e <= E_MAX):
        raise ValueError("eccentricity outside 0 <= e <= 0.999")
    return kepler_unchecked(mean_anomaly, e)


@njit(cache=True)
def eccentric_anomaly(mean_anomaly, e):
    """E (rad) for mean anomaly M (rad, any revolution) and 0 <= e <= 0.999."""
    return kepler_sincos(mean_anomaly, e)[0]


@njit(cache=True, error_model="numpy")
def _solve_many(mean_anomaly, e):
    out = np.empty(mean_anomaly.size)
    for k in range(mean_anomaly.size):
        out[k] = kepler_unchecked(mean_anomaly[k], e[k])[0]
    return out


def solve_kepler(mean_anomaly, e):
    """Eccentric anomaly (rad) for mean anomalies (rad) and eccentricities.

    Accepts scalars or arrays that broadcast together; returns a float or an
    array of their broadcast shape.  Raises ValueError for e outside
    [0, 0.999] or non-finite input.
    """
    m, ecc = np.broadcast_arrays(np.asarray(mean_anomaly, dtype=float),
                                 np.asarray(e, dtype=float))
    if not np.all(np.isfinite(m)):
        raise ValueError("mean anomaly must be finite")
    if np.any(~np.isfinite(ecc)) or np.any(ecc < 0.0) or np.any(ecc > E_MAX):
        bad = ecc[~((ecc >= 0.0) & (ecc <= E_MAX))]
        raise ValueError(f"eccentricity must lie in [0, {E_MAX}]; got {bad.ravel()[0]!r}")
    out = _solve_many(np.ascontiguousarray(m).ravel(), np.ascontiguousarray(ecc).ravel())
    out = out.reshape(m.shape)
    return float(out) if out.ndim == 0 else out


def true_anomaly(big_e, e):
    """True anomaly (rad), continuous with E across revolutions."""
    beta = e / (1.0 + np.sqrt(1.0 - e * e))
    return big_e + 2.0 * np.arctan2(beta * np.sin(big_e), 1.0 - beta * np.cos(big_e))
