"""Elementary functions written so that loops over them compile to SIMD code.

libm's sin, cos, atan2 and pow are opaque calls, so a loop that uses them runs
one element at a time.  The functions here are straight-line arithmetic with
selects in place of branches and are inlined into their callers, so LLVM
turns a loop over a star's epochs into vector instructions (8 doubles at a
time with AVX-512).  Each is accurate to a few units in the last place over
the range stated; with precise=False (a constant at the call site, so the
compiler keeps one branch) the series are shorter, for the Roemer delay's
first pass, where 1e-7 is plenty.  Callers compile with error_model="numpy":
Python's division checks would stop the vectorisation.  tests/test_vectormath.py
checks them against numpy and 40-digit values.

  sincos(x)          |x| < 1e5 rad: Cody-Waite reduction by pi/2 with a
                     three-part constant, Taylor polynomials on |r| <= pi/4
  atan2_right(y, x)  x > 0: three half-angle reductions, then a series
  cbrt(x)            x >= 0: exponent third from the bit pattern, then Halley
  expm1(x)           |x| < 700: Taylor series for |x| < ln2/2, else exp(x) - 1
                     with exp reduced by ln 2 and scaled through the exponent bits
  exp(x)             the same reduction; below -708 it gives ~1e-308, not 0
  log(x)             x > 0 normal: exponent from the bits, atanh series on the
                     mantissa in [sqrt(1/2), sqrt(2))
"""

import math
from fractions import Fraction

from llvmlite import ir
from numba import njit, types
from numba.extending import intrinsic

_PI = Fraction("3.14159265358979323846264338327950288419716939937510582097494459")


def _split(value, bits):
    """`value` rounded to a float with only `bits` significant bits."""
    m, e = math.frexp(float(value))
    return math.ldexp(round(m * 2**bits), e - bits)


# pi/2 = P1 + P2 + P3; P1 and P2 hold 33 bits, so j * P1 and j * P2 are exact for
# |j| < 2^20 and x - j P1 - j P2 - j P3 keeps full precision.
_HALF_PI = _PI / 2
_P1 = _split(_HALF_PI, 33)
_P2 = _split(_HALF_PI - Fraction(_P1), 33)
_P3 = float(_HALF_PI - Fraction(_P1) - Fraction(_P2))
_TWO_OVER_PI = float(1 / _HALF_PI)

# 1 / (k (k + 1)) factors of the nested Taylor series of sin and cos
# (innermost first, for Horner's scheme), to x^19 and x^20
_S_REVERSED = tuple(1.0 / (k * (k + 1)) for k in range(18, 1, -2))
_C_REVERSED = tuple(1.0 / (k * (k + 1)) for k in range(19, 0, -2))
# odd reciprocals of the atan series z - z^3/3 + ... to z^25, innermost first
_A_REVERSED = tuple(1.0 / k for k in range(25, 2, -2))
# the shorter series of the coarse variants (precise=False)
_S_COARSE, _C_COARSE, _A_COARSE = _S_REVERSED[-5:], _C_REVERSED[-6:], _A_REVERSED[-8:]

_THIRD_OF_EXPONENT_BIAS = 682 << 52
_LN2 = Fraction("0.693147180559945309417232121458176568075500134360255254120680009")
_LN2_HI = _split(_LN2, 33)
_LN2_LO = float(_LN2 - Fraction(_LN2_HI))
_INV_LN2 = float(1 / _LN2)
_HALF_LN2 = float(_LN2 / 2)
# 1 / k of the nested series e^r - 1 = r (1 + r/2 (1 + r/3 (...))), to r^15
_E_REVERSED = tuple(1.0 / k for k in range(15, 1, -1))
# 1 / (2k + 1) of log m = 2 atanh(t) = 2 (t + t^3/3 + ...), t = (m-1)/(m+1), to t^23
_L_REVERSED = tuple(1.0 / k for k in range(23, 2, -2))
_MANTISSA = (1 << 52) - 1
_SQRT_TWO = math.sqrt(2.0)   # (1023 - 1023 / 3) in the exponent field


@intrinsic
def _float_bits(typingctx, x):
    sig = types.int64(types.float64)

    def codegen(context, builder, signature, args):
        return builder.bitcast(args[0], ir.IntType(64))
    return sig, codegen


@intrinsic
def _bits_float(typingctx, n):
    sig = types.float64(types.int64)

    def codegen(context, builder, signature, args):
        return builder.bitcast(args[0], ir.DoubleType())
    return sig, codegen


@njit(cache=True, inline="always", error_model="numpy")
def _sin_cos_series(r, sin_factors, cos_factors):
    """sin r and cos r by their nested series (factors innermost first)."""
    r2 = r * r
    s = 1.0
    for f in sin_factors:
        s = 1.0 - r2 * f * s
    c = 1.0
    for f in cos_factors:
        c = 1.0 - r2 * f * c
    return r * s, c


@njit(cache=True, inline="always", error_model="numpy")
def sincos(x, precise=True):
    """(sin x, cos x) for |x| < 1e5; precise=False stops the series at x^11
    and x^12 (error below 1e-11)."""
    j = math.floor(x * _TWO_OVER_PI + 0.5)
    r = ((x - j * _P1) - j * _P2) - j * _P3
    if precise:
        s, c = _sin_cos_series(r, _S_REVERSED, _C_REVERSED)
    else:
        s, c = _sin_cos_series(r, _S_COARSE, _C_COARSE)
    q = int(j) & 3
    odd = (q & 1) == 1
    sin_x = c if odd else s
    cos_x = s if odd else c
    sin_x = -sin_x if (q & 2) == 2 else sin_x
    cos_x = -cos_x if ((q + 1) & 2) == 2 else cos_x
    return sin_x, cos_x


@njit(cache=True, inline="always", error_model="numpy")
def _atan_series(z, coefficients):
    """atan z by its series z - z^3/3 + ... (coefficients innermost first)."""
    z2 = z * z
    p = 0.0
    for a in coefficients:
        p = a - z2 * p
    return z * (1.0 - z2 * p)


@njit(cache=True, inline="always", error_model="numpy")
def atan2_right(y, x, precise=True):
    """atan2(y, x) for x > 0 (the right half-plane, |result| < pi/2);
    precise=False halves the angle twice only (error below 2e-8)."""
    # tan(a/2) = tan a / (1 + sec a), three times: |angle| < pi/16, |tan| < 0.2
    t = y / (x + math.sqrt(x * x + y * y))
    t = t / (1.0 + math.sqrt(1.0 + t * t))
    if not precise:
        return 4.0 * _atan_series(t, _A_COARSE)
    t = t / (1.0 + math.sqrt(1.0 + t * t))
    return 8.0 * _atan_series(t, _A_REVERSED)


@njit(cache=True, inline="always", error_model="numpy")
def cbrt(x, precise=True):
    """Cube root of x >= 0; precise=False takes one Halley step fewer
    (relative error below 1e-8)."""
    # dividing the bit pattern by three divides the exponent by three: a first
    # guess within ~10%, which three cubically convergent Halley steps refine
    w = _bits_float(int(_float_bits(x) * (1.0 / 3.0)) + _THIRD_OF_EXPONENT_BIAS)
    for _ in range(3 if precise else 2):
        w3 = w * w * w
        w *= (w3 + 2.0 * x) / (2.0 * w3 + x)
    return w if x > 0.0 else 0.0


@njit(cache=True, inline="always", error_model="numpy")
def _expm1_small(r):
    """e^r - 1 by its series, to rounding for |r| <= ln2 / 2."""
    p = 1.0
    for f in _E_REVERSED:
        p = 1.0 + r * f * p
    return r * p


@njit(cache=True, inline="always", error_model="numpy")
def expm1(x):
    """e^x - 1 for |x| < 700, to a few units in the last place."""
    n = math.floor(x * _INV_LN2 + 0.5)
    r = (x - n * _LN2_HI) - n * _LN2_LO
    scale = _bits_float((int(n) + 1023) << 52)
    large = scale * (1.0 + _expm1_small(r)) - 1.0
    return _expm1_small(x) if abs(x) < _HALF_LN2 else large


@njit(cache=True, inline="always", error_model="numpy")
def exp(x):
    """e^x for x < 709 (x below -708 gives e^-708, not 0 or a subnormal)."""
    x = x if x > -708.0 else -708.0
    n = math.floor(x * _INV_LN2 + 0.5)
    r = (x - n * _LN2_HI) - n * _LN2_LO
    return _bits_float((int(n) + 1023) << 52) * (1.0 + _expm1_small(r))


@njit(cache=True, inline="always", error_model="numpy")
def log(x):
    """Natural logarithm of a positive normal x (log 1 is exactly 0)."""
    bits = _float_bits(x)
    k = (bits >> 52) - 1023
    m = _bits_float((bits & _MANTISSA) | (1023 << 52))      # in [1, 2)
    big = m > _SQRT_TWO
    m = 0.5 * m if big else m
    k = k + 1 if big else k
    t = (m - 1.0) / (m + 1.0)
    t2 = t * t
    p = 0.0
    for f in _L_REVERSED:
        p = f + t2 * p
    log_m = 2.0 * t * (1.0 + t2 * p)
    return (k * _LN2_HI + log_m) + k * _LN2_LO
