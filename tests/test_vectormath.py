"""The vectorisable elementary functions against numpy's libm and 40-digit
values (mpmath), over the ranges the physics uses them on and beyond."""

import math

import mpmath
import numpy as np
import pytest
from numba import njit

from analyser.physics.vectormath import (atan2_right, atan_small, cbrt, exp, expm1, log, sincos,
                                         sincos_small)

mpmath.mp.dps = 40


@njit(error_model="numpy")
def _sincos_many(x, s, c):
    for k in range(x.size):
        s[k], c[k] = sincos(x[k])


@njit(error_model="numpy")
def _apply(fn_code, x, y, out):
    for k in range(x.size):
        if fn_code == 0:
            out[k] = atan2_right(y[k], x[k])
        elif fn_code == 1:
            out[k] = cbrt(x[k])
        else:
            out[k] = expm1(x[k])


def test_sincos_to_rounding_over_many_revolutions():
    x = np.random.default_rng(1).uniform(-1e4, 1e4, 200_000)
    s, c = np.empty_like(x), np.empty_like(x)
    _sincos_many(x, s, c)
    assert np.max(np.abs(s - np.sin(x))) < 3e-16
    assert np.max(np.abs(c - np.cos(x))) < 3e-16
    # 40-digit values at quadrant boundaries and large arguments
    for v in (0.0, math.pi / 4, math.pi / 2, 3 * math.pi / 4, math.pi, -2.5, 1234.5678, -9999.9):
        sv, cv = np.empty(1), np.empty(1)
        _sincos_many(np.array([v]), sv, cv)
        assert abs(sv[0] - float(mpmath.sin(v))) < 3e-16
        assert abs(cv[0] - float(mpmath.cos(v))) < 3e-16


def test_atan2_right_half_plane():
    rng = np.random.default_rng(2)
    x = rng.uniform(1e-8, 3.0, 200_000)
    y = rng.normal(0, 1, x.size) * 10.0 ** rng.uniform(-8, 3, x.size)
    out = np.empty_like(x)
    _apply(0, x, y, out)
    assert np.max(np.abs(out - np.arctan2(y, x))) < 2e-15
    for xv, yv in ((1.0, 0.0), (1.0, 1.0), (1e-9, 1.0), (1e-9, -1.0), (0.3, -7.0)):
        _apply(0, np.array([xv]), np.array([yv]), out[:1])
        assert abs(out[0] - float(mpmath.atan2(yv, xv))) < 2e-15


def test_cbrt_relative_rounding_over_the_float_range():
    x = 10.0 ** np.random.default_rng(3).uniform(-300, 300, 200_000)
    out = np.empty_like(x)
    _apply(1, x, x, out)
    assert np.max(np.abs(out / np.cbrt(x) - 1.0)) < 1e-15
    _apply(1, np.zeros(3), np.zeros(3), out[:3])
    assert np.all(out[:3] == 0.0)
    _apply(1, np.array([27.0]), np.zeros(1), out[:1])
    assert out[0] == pytest.approx(3.0, rel=1e-15)


def test_expm1_relative_accuracy_small_and_large():
    rng = np.random.default_rng(4)
    for lo, hi in ((-1e-12, 1e-12), (-0.5, 0.5), (-40.0, 40.0), (-700.0, 700.0)):
        x = rng.uniform(lo, hi, 100_000)
        out = np.empty_like(x)
        _apply(2, x, x, out)
        assert np.max(np.abs(out / np.expm1(x) - 1.0)) < 1e-15, (lo, hi)
    for v in (1e-20, -3e-9, 0.34, -0.35, 0.35, 1.0, -5.0, 300.0):
        _apply(2, np.array([v]), np.zeros(1), out[:1])
        assert abs(out[0] / float(mpmath.expm1(v)) - 1.0) < 1e-15


@njit(error_model="numpy")
def _exp_log(x, out_exp, out_log):
    for k in range(x.size):
        out_exp[k] = exp(x[k])
        out_log[k] = log(abs(x[k])) if x[k] != 0.0 else 0.0


def test_exp_and_log_relative_accuracy():
    rng = np.random.default_rng(5)
    x = rng.uniform(-700.0, 700.0, 200_000)
    e, l = np.empty_like(x), np.empty_like(x)
    _exp_log(x, e, l)
    assert np.max(np.abs(e / np.exp(x) - 1.0)) < 1e-15
    y = 10.0 ** rng.uniform(-300, 300, 200_000)
    _exp_log(y, e, l)
    assert np.max(np.abs(l - np.log(y)) / np.maximum(1.0, np.abs(np.log(y)))) < 3e-16
    z = rng.uniform(0.5, 2.0, 200_000)        # near 1, where log is small
    _exp_log(z, e, l)
    assert np.max(np.abs(l - np.log(z))) < 2e-16
    _exp_log(np.array([1.0, math.e, 0.0, -800.0]), e[:4], l[:4])
    assert l[0] == 0.0 and abs(l[1] - 1.0) < 2e-16 and e[2] == 1.0
    assert 0.0 < e[3] < 1e-307       # clamped, never zero: ln of a sum stays finite
    for v in (2.0, 10.0, 1e-5, 123456.789):
        _exp_log(np.array([v]), e[:1], l[:1])
        assert abs(l[0] - float(mpmath.log(v))) < 3e-16 * max(1.0, abs(l[0]))


@njit(error_model="numpy")
def _short(x, y, out):
    for k in range(x.size):
        s, c = sincos_small(x[k])
        out[0, k] = s - math.sin(x[k])
        out[1, k] = c - math.cos(x[k])
        out[2, k] = atan_small(y[k]) / math.atan(y[k]) - 1.0
        out[3, k] = cbrt(abs(x[k]) * 1e3, False) / (abs(x[k]) * 1e3) ** (1.0 / 3.0) - 1.0


def test_short_variants_meet_their_stated_errors():
    """The small-argument series of the Roemer delay's shift of the anomalies
    over their stated ranges, and the cube root for Kepler's starter."""
    rng = np.random.default_rng(6)
    x = rng.uniform(-0.3, 0.3, 200_000)
    y = rng.uniform(-0.2, 0.2, x.size)
    out = np.empty((4, x.size))
    _short(x, y, out)
    err = np.max(np.abs(out), axis=1)
    assert err[0] < 1.2e-16 and err[1] < 2.5e-16      # about one unit in the last place
    assert err[2] < 5e-16
    assert err[3] < 1e-6
