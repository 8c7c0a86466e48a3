"""Elementary functions written so that loops over them compile to SIMD code.

libm's sin, cos, atan2 and pow are opaque calls, so a loop that uses them runs
one element at a time.  The functions here are straight-line arithmetic with
selects in place of branches and are inlined into their callers, so LLVM
turns a loop over a star's epochs into vector instructions (4 doubles per
vector, two vectors per iteration: see analyser/_compiled_cache.py).  Each is
accurate to a few units in the last place over the range stated (cbrt with
precise=False: 1e-6, plenty for Kepler's starter; precise is a constant at
the call site, so the compiler keeps one branch).  Series are evaluated by
Horner's scheme, one fused multiply-add per term, and divisions are few:
vector operations, and their latency, are what the loops spend.  Floats and
integers are converted by adding 1.5 * 2^52 and reading the bits (`_integer`,
`_as_float`), never by the conversion instructions: AVX2 has none for packed
64-bit integers, so LLVM would convert one element at a time.  For the same
reason floors are np.floor, a float: numba's math.floor returns an integer.
Callers compile with error_model="numpy": Python's division checks would stop
the vectorisation.  tests/test_vectormath.py checks them against numpy and
40-digit values.

  sincos(x)          |x| < 1e5 rad: Cody-Waite reduction by pi/2 with a
                     three-part constant, Taylor polynomials on |r| <= pi/4
  sincos_small(x)    |x| <= 0.3: the series alone, no reduction
  atan2_right(y, x)  x > 0: folded by octant to |t| <= tan(pi/8), then a series
  atan_small(z)      |z| <= 0.2: the series alone
  cbrt(x)            x >= 0: inverse cube root from the bit pattern, then Newton
  expm1(x)           |x| < 700: reduced by ln 2, 2^n (e^r - 1) + (2^n - 1), one
                     Taylor series; 2^n through the exponent bits
  exp(x)             the same reduction; below -708 it gives ~1e-308, not 0
  log(x)             x > 0 normal: exponent from the bits, atanh series on the
                     mantissa in [sqrt(1/2), sqrt(2))
"""

import math
from fractions import Fraction

import numpy as np
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

# Taylor coefficients, highest order first, for Horner's scheme (one fused
# multiply-add per term): sin r / r = sum (-1)^k r^2k / (2k+1)! to r^18,
# cos r = sum (-1)^k r^2k / (2k)! to r^20
_SIN = tuple((-1) ** k / math.factorial(2 * k + 1) for k in range(9, -1, -1))
_COS = tuple((-1) ** k / math.factorial(2 * k) for k in range(10, -1, -1))
# atan z / z = sum (-1)^k z^2k / (2k+1), highest order first: to z^24 for
# |z| <= 0.2, to z^42 for |z| <= tan(pi/8) (the next terms below 2e-18)
_ATAN = tuple((-1) ** k / (2 * k + 1) for k in range(12, -1, -1))
_ATAN_OCTANT = tuple((-1) ** k / (2 * k + 1) for k in range(21, -1, -1))
_TAN_PI_8 = math.sqrt(2.0) - 1.0
_TAN_3PI_8 = math.sqrt(2.0) + 1.0
_QUARTER_PI_F = float(_PI / 4)
_HALF_PI_F = float(_PI / 2)
# to x^13 and x^14, the next terms below 1e-20 for |x| <= 0.3
_SIN_SMALL, _COS_SMALL = _SIN[-7:], _COS[-8:]
# to x^3 and x^4, for sincos_small with |x| <= 1e-3 (the next terms below 1e-17)
SIN_TINY, COS_TINY = _SIN[-2:], _COS[-3:]

_INVERSE_CBRT_HIGH = 1364 << 20     # 4/3 of the exponent bias, in the high 32 bits
_LN2 = Fraction("0.693147180559945309417232121458176568075500134360255254120680009")
_LN2_HI = _split(_LN2, 33)
_LN2_LO = float(_LN2 - Fraction(_LN2_HI))
_INV_LN2 = float(1 / _LN2)
# (e^r - 1) / r = sum r^k / (k+1)! to r^14, highest order first
_EXPM1 = tuple(1.0 / math.factorial(k + 1) for k in range(14, -1, -1))
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


# 1.5 * 2^52: adding it to a float of magnitude below 2^51 rounds the sum to
# an integer held in the low bits of the mantissa, in two's complement
_ROUNDING = 6755399441055744.0
_ROUNDING_BITS = 0x4338000000000000


@njit(cache=True, inline="always", error_model="numpy")
def _integer(x):
    """x rounded to the nearest integer, as int64, for |x| < 2^51."""
    return _float_bits(x + _ROUNDING) - _ROUNDING_BITS


@njit(cache=True, inline="always", error_model="numpy")
def _as_float(n):
    """The int64 n as a float, for |n| < 2^51."""
    return _bits_float(n + _ROUNDING_BITS) - _ROUNDING


@njit(cache=True, inline="always", error_model="numpy")
def _horner(z, coefficients):
    """The polynomial with `coefficients` (highest order first) at z."""
    p = coefficients[0]
    for a in coefficients[1:]:
        p = p * z + a
    return p


@njit(cache=True, inline="always", error_model="numpy")
def _horner_split(z, coefficients):
    """`_horner` for long series: Horner's scheme on the even and the odd
    powers separately, in z^2, then even(z^2) + z odd(z^2).  LLVM unrolls
    loops of a dozen terms, not of twenty (a loop left inside stops the
    vectorisation of the loop over epochs), and the two chains are half as
    long.  Tuple slices and len are resolved at compile time."""
    z2 = z * z
    p = 0.0
    for a in coefficients[0::2]:     # powers n-1, n-3, ...
        p = p * z2 + a
    q = 0.0
    for a in coefficients[1::2]:     # powers n-2, n-4, ...
        q = q * z2 + a
    if len(coefficients) % 2 == 1:   # p holds the even powers
        return p + z * q
    return z * p + q


@njit(cache=True, inline="always", error_model="numpy")
def sincos(x):
    """(sin x, cos x) for |x| < 1e5."""
    j = np.floor(x * _TWO_OVER_PI + 0.5)
    r = ((x - j * _P1) - j * _P2) - j * _P3
    s, c = sincos_small(r, _SIN, _COS)
    q = _integer(j) & 3
    odd = (q & 1) == 1
    sin_x = c if odd else s
    cos_x = s if odd else c
    sin_x = -sin_x if (q & 2) == 2 else sin_x
    cos_x = -cos_x if ((q + 1) & 2) == 2 else cos_x
    return sin_x, cos_x


@njit(cache=True, inline="always", error_model="numpy")
def sincos_small(x, sin_coefficients=_SIN_SMALL, cos_coefficients=_COS_SMALL):
    """(sin x, cos x) by their series, with no range reduction: to rounding
    for |x| <= 0.3 with the default (shorter) series, |x| <= pi/4 with the
    full ones."""
    x2 = x * x
    return x * _horner(x2, sin_coefficients), _horner(x2, cos_coefficients)


@njit(cache=True, inline="always", error_model="numpy")
def atan_small(z):
    """atan z to rounding for |z| <= 0.2 (relative error ~1e-15 at 0.3)."""
    return z * _horner(z * z, _ATAN)


@njit(cache=True, inline="always", error_model="numpy")
def atan2_right(y, x):
    """atan2(y, x) for x > 0 (the right half-plane, |result| < pi/2)."""
    # atan(|y|/x) = offset + atan t with, by the angle's octant, t = |y|/x
    # (offset 0), (|y| - x)/(|y| + x) (pi/4) or -x/|y| (pi/2), so that
    # |t| <= tan(pi/8): one division and no square root (three half-angle
    # reductions took three of each; the forward model is 5% faster)
    a = abs(y)
    low = a <= _TAN_PI_8 * x
    high = a > _TAN_3PI_8 * x
    num = a if low else (-x if high else a - x)
    den = x if low else (a if high else a + x)
    offset = 0.0 if low else (_HALF_PI_F if high else _QUARTER_PI_F)
    t = num / den
    return math.copysign(offset + t * _horner_split(t * t, _ATAN_OCTANT), y)


@njit(cache=True, inline="always", error_model="numpy")
def cbrt(x, precise=True):
    """Cube root of x >= 0, without division; precise=False takes two Newton
    steps fewer (relative error below 1e-6)."""
    # y -> x^(-1/3): negating a third of the bit pattern's exponent gives a
    # first guess within ~20%, which Newton's steps y += y (1 - x y^3) / 3
    # refine quadratically (2.8e-2, 7.9e-4, 6.2e-7, 3.8e-13, rounding)
    high = _as_float(_float_bits(x) >> 32)      # exponent and 20 mantissa bits
    y = _bits_float((_INVERSE_CBRT_HIGH - _integer(high * (1.0 / 3.0))) << 32)
    for _ in range(5 if precise else 3):
        y += y * (1.0 - x * y * y * y) * (1.0 / 3.0)
    return x * y * y


@njit(cache=True, inline="always", error_model="numpy")
def _two_to(n):
    """2^n for an integral float n, |n| <= 1022, through the exponent bits."""
    return _bits_float((_integer(n) + 1023) << 52)


@njit(cache=True, inline="always", error_model="numpy")
def _reduce_ln2(x):
    """(2^n, r) with x = n ln2 + r, |r| <= ln2 / 2, for |x| < 709."""
    n = np.floor(x * _INV_LN2 + 0.5)
    return _two_to(n), (x - n * _LN2_HI) - n * _LN2_LO


@njit(cache=True, inline="always", error_model="numpy")
def _expm1_small(r):
    """e^r - 1 by its series, to rounding for |r| <= ln2 / 2."""
    return r * _horner(r, _EXPM1)


@njit(cache=True, inline="always", error_model="numpy")
def expm1(x):
    """e^x - 1 for |x| < 700, to a few units in the last place.

    With x = n ln2 + r: e^x - 1 = 2^n (e^r - 1) + (2^n - 1), one series for
    every x; for |x| < ln2/2, n = 0 and it is the series of x alone, free of
    cancellation (2^n - 1 is exact wherever it matters)."""
    scale, r = _reduce_ln2(x)
    return scale * _expm1_small(r) + (scale - 1.0)


@njit(cache=True, inline="always", error_model="numpy")
def exp(x):
    """e^x for x < 709 (x below -708 gives e^-708, not 0 or a subnormal)."""
    scale, r = _reduce_ln2(x if x > -708.0 else -708.0)
    return scale * (1.0 + _expm1_small(r))


@njit(cache=True, inline="always", error_model="numpy")
def log(x):
    """Natural logarithm of a positive normal x (log 1 is exactly 0)."""
    bits = _float_bits(x)
    k = _as_float((bits >> 52) - 1023)
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
