"""Compiled one-dimensional priors and the unconstrained fit coordinates.

Kinds are coded as integers so compiled code can branch on them: UNIFORM
(a = min, b = max), LOG_UNIFORM (a = min, b = max), GAUSSIAN (a = mean,
b = sigma, truncated to [lo, hi] where the parameter has physical limits,
e.g. a mass > 0).  Fixed parameters never reach these functions.

Fit coordinates.  The prefit's Newton steps, the Laplace approximation and
the proposal prior work on unconstrained coordinates phi: for a bounded
prior phi = logit of the prior's CDF (uniform: of (x - a)/(b - a);
log-uniform: of ln(x/a)/ln(b/a)), identity for Gaussian and periodic ones.
In phi every bounded prior becomes the standard logistic density
sigma(phi)(1 - sigma(phi)), smooth and unbounded, so a mode near a prior
edge (a jitter near zero) is an ordinary interior point.

Also here: the standard normal quantile (Acklam's rational approximation
polished by one Halley step, full double precision) and the Student-t
distribution with 2 or 3 degrees of freedom used by the proposal priors
(closed-form quantile for 2, safeguarded Newton on the closed-form CDF for 3).
"""

import math

import numpy as np
from numba import njit

UNIFORM, LOG_UNIFORM, GAUSSIAN = 0, 1, 2
KIND_CODE = {"uniform": UNIFORM, "log-uniform": LOG_UNIFORM, "gaussian": GAUSSIAN}

_A = (-3.969683028665376e+01, 2.209460984245205e+02, -2.759285104469687e+02,
      1.383577518672690e+02, -3.066479806614716e+01, 2.506628277459239e+00)
_B = (-5.447609879822406e+01, 1.615858368580409e+02, -1.556989798598866e+02,
      6.680131188771972e+01, -1.328068155288572e+01)
_C = (-7.784894002430293e-03, -3.223964580411365e-01, -2.400758277161838e+00,
      -2.549732539343734e+00, 4.374664141464968e+00, 2.938163982698783e+00)
_D = (7.784695709041462e-03, 3.224671290700398e-01, 2.445134137142996e+00,
      3.754408661907416e+00)
_SQRT2PI = math.sqrt(2.0 * math.pi)
_LOG_SQRT2PI = 0.5 * math.log(2.0 * math.pi)
_SQRT2 = math.sqrt(2.0)


@njit(cache=True)
def normal_quantile(p):
    """Inverse of the standard normal CDF for 0 < p < 1."""
    p = min(max(p, 1e-300), 1.0 - 1e-16)
    if p < 0.02425:
        q = math.sqrt(-2.0 * math.log(p))
        x = ((((((_C[0] * q + _C[1]) * q + _C[2]) * q + _C[3]) * q + _C[4]) * q + _C[5])
             / ((((_D[0] * q + _D[1]) * q + _D[2]) * q + _D[3]) * q + 1.0))
    elif p <= 1.0 - 0.02425:
        q = p - 0.5
        r = q * q
        x = ((((((_A[0] * r + _A[1]) * r + _A[2]) * r + _A[3]) * r + _A[4]) * r + _A[5]) * q
             / (((((_B[0] * r + _B[1]) * r + _B[2]) * r + _B[3]) * r + _B[4]) * r + 1.0))
    else:
        q = math.sqrt(-2.0 * math.log(1.0 - p))
        x = -((((((_C[0] * q + _C[1]) * q + _C[2]) * q + _C[3]) * q + _C[4]) * q + _C[5])
              / ((((_D[0] * q + _D[1]) * q + _D[2]) * q + _D[3]) * q + 1.0))
    # one Halley step on the exact CDF
    e = 0.5 * math.erfc(-x / _SQRT2) - p
    u = e * _SQRT2PI * math.exp(0.5 * x * x)
    return x - u / (1.0 + 0.5 * x * u)


@njit(cache=True)
def normal_cdf(z):
    return 0.5 * math.erfc(-z / _SQRT2)


@njit(cache=True)
def transform(kind, a, b, lo, hi, u):
    """Parameter value at unit-cube coordinate u under the prior."""
    if kind == UNIFORM:
        return a + u * (b - a)
    if kind == LOG_UNIFORM:
        return a * math.exp(u * math.log(b / a))
    c_lo = normal_cdf((lo - a) / b)
    c_hi = normal_cdf((hi - a) / b)
    return a + b * normal_quantile(c_lo + u * (c_hi - c_lo))


@njit(cache=True)
def log_density(kind, a, b, lo, hi, x):
    """ln prior density at x; -inf outside the support."""
    if kind == UNIFORM:
        if a <= x <= b:
            return -math.log(b - a)
        return -np.inf
    if kind == LOG_UNIFORM:
        if a <= x <= b:
            return -math.log(x) - math.log(math.log(b / a))
        return -np.inf
    if x < lo or x > hi:
        return -np.inf
    z = (x - a) / b
    mass = normal_cdf((hi - a) / b) - normal_cdf((lo - a) / b)
    return -0.5 * z * z - math.log(b) - _LOG_SQRT2PI - math.log(mass)


# ---------------------------------------------------------------- fit coordinates

@njit(cache=True)
def _logit(p):
    return math.log(p) - math.log1p(-p)


@njit(cache=True)
def _logistic(x):
    if x >= 0.0:
        return 1.0 / (1.0 + math.exp(-x))
    e = math.exp(x)
    return e / (1.0 + e)


@njit(cache=True)
def _log_logistic_density(x):
    """ln[sigma(x) (1 - sigma(x))], computed without overflow."""
    ax = abs(x)
    return -ax - 2.0 * math.log1p(math.exp(-ax))


@njit(cache=True)
def to_fit(kind, a, b, period, x):
    """Fit coordinate phi of parameter value x."""
    if period > 0.0 or kind == GAUSSIAN:
        return x
    if kind == UNIFORM:
        return _logit((x - a) / (b - a))
    return _logit(math.log(x / a) / math.log(b / a))


@njit(cache=True)
def from_fit(kind, a, b, period, phi):
    """Parameter value at fit coordinate phi (inverse of `to_fit`)."""
    if period > 0.0 or kind == GAUSSIAN:
        return phi
    s = _logistic(phi)
    if kind == UNIFORM:
        return a + (b - a) * s
    return a * math.exp(math.log(b / a) * s)


@njit(cache=True)
def log_prior_fit(kind, a, b, lo, hi, period, phi):
    """ln of the prior density expressed in the fit coordinate.

    Bounded priors become logistic; Gaussian ones keep their density; a
    periodic uniform prior is 1/period (the caller restricts phi to one period).
    """
    if period > 0.0:
        return -math.log(period)
    if kind == GAUSSIAN:
        return log_density(kind, a, b, lo, hi, phi)
    return _log_logistic_density(phi)


@njit(cache=True)
def from_fit_vector(kind, a, b, period, phi, out):
    for k in range(phi.size):
        out[k] = from_fit(kind[k], a[k], b[k], period[k], phi[k])


@njit(cache=True)
def log_prior_fit_sum(kind, a, b, lo, hi, period, phi, first, last):
    total = 0.0
    for k in range(first, last):
        total += log_prior_fit(kind[k], a[k], b[k], lo[k], hi[k], period[k], phi[k])
    return total


# ---------------------------------------------------------------- Student t

# 1 / (k (k + 1)) for k = 4, 6, ..., 28, innermost first: the nested series
# x - sin x = x^3/6 (1 - x^2/20 (1 - x^2/42 (...))), to rounding for |x| <= pi
_XMS_REVERSED = tuple(1.0 / (k * (k + 1)) for k in range(28, 3, -2))
_SQRT3 = math.sqrt(3.0)


@njit(cache=True)
def _x_minus_sin(x):
    """x - sin x without cancellation for small x."""
    x2 = x * x
    p = 1.0
    for f in _XMS_REVERSED:
        p = 1.0 - x2 * f * p
    return x * x2 / 6.0 * p


@njit(cache=True)
def student_quantile(dof, p):
    """Quantile of the Student-t distribution with dof = 2 or 3 (0 < p < 1)."""
    p = min(max(p, 1e-300), 1.0 - 1e-16)
    if dof == 2:
        return (2.0 * p - 1.0) / math.sqrt(2.0 * p * (1.0 - p))   # exact
    # dof = 3: with t = sqrt(3) cot(d/2) the CDF's upper tail 1 - p = q gives
    # d - sin d = 2 pi q (a Kepler equation at e = 1), 0 < d <= pi; from
    # d = (12 pi q)^(1/3), below the root, Halley's method converges in a few steps
    q = p if p < 0.5 else 1.0 - p
    y = 2.0 * math.pi * q
    d = (6.0 * y) ** (1.0 / 3.0)
    for _ in range(20):
        g = _x_minus_sin(d) - y
        half = math.sin(0.5 * d)
        g1 = 2.0 * half * half                 # 1 - cos d
        step = g / (g1 - 0.5 * g * math.sin(d) / g1)
        d -= step
        if abs(step) <= 1e-6 * d:        # Halley is cubic: what is left is ~1e-18
            break
    t = _SQRT3 * math.cos(0.5 * d) / math.sin(0.5 * d)
    return t if p >= 0.5 else -t


@njit(cache=True)
def student_cdf(dof, t):
    """CDF of the Student-t distribution with dof = 2 or 3 (closed forms)."""
    if dof == 2:
        return 0.5 + 0.5 * t / math.sqrt(2.0 + t * t)
    x = t / _SQRT3
    return 0.5 + (math.atan(x) + x / (1.0 + x * x)) / math.pi


@njit(cache=True)
def student_log_density(dof, t):
    if dof == 2:
        return -1.5 * math.log(2.0 + t * t)        # 1 / (2 + t^2)^(3/2)
    return math.log(6.0 * math.sqrt(3.0) / math.pi) - 2.0 * math.log(3.0 + t * t)


def check_dof(dof):
    if dof not in (2, 3):
        raise ValueError(f"proposal_dof must be 2 or 3, got {dof}")
    return int(dof)


# ---------------------------------------------------------------- the free vector

class FreePriors:
    """The free parameters' priors as arrays, with numpy versions of the maps
    between parameter values and fit coordinates."""

    def __init__(self, kind, a, b, lo, hi, period):
        self.kind, self.a, self.b, self.lo, self.hi, self.period = kind, a, b, lo, hi, period

    def arrays(self):
        return self.kind, self.a, self.b, self.lo, self.hi, self.period

    def to_fit(self, theta, first=0):
        """Fit coordinates of values of the free entries first:first+len(theta)."""
        sl = slice(first, first + len(theta))
        return np.array([to_fit(k, a, b, p, x) for k, a, b, p, x in
                         zip(self.kind[sl], self.a[sl], self.b[sl], self.period[sl], theta)])

    def from_fit_block(self, phi, first):
        sl = slice(first, first + len(phi))
        return np.array([from_fit(k, a, b, p, x) for k, a, b, p, x in
                         zip(self.kind[sl], self.a[sl], self.b[sl], self.period[sl], phi)])

    def from_fit(self, phi):
        out = np.empty(len(phi))
        from_fit_vector(self.kind, self.a, self.b, self.period, np.asarray(phi, float), out)
        return out

    def log_prior_fit(self, phi, first=0, last=None):
        """Sum of ln prior (fit coordinates) over entries first:last."""
        last = len(phi) if last is None else last
        return log_prior_fit_sum(*self.arrays(), np.asarray(phi, float), first, last)

    def log_prior(self, theta):
        total = 0.0
        for k, a, b, lo, hi, p, x in zip(self.kind, self.a, self.b, self.lo, self.hi,
                                          self.period, theta):
            if p > 0:
                x = a + (x - a) % p
            total += log_density(k, a, b, lo, hi, x)
        return total
