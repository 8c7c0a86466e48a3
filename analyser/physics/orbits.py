"""Closed-form dynamics: Newtonian two-body and the 1PN quasi-Keplerian orbit.

The 1PN solution is that of Damour & Deruelle (1985) in the test-mass limit,
harmonic coordinates, with every 1/c^2 term multiplied by the Schwarzschild
precession factor f_SP (eps = f_SP / c^2).  Its constants come from the
osculating periapsis state (DESIGN.md section 4):

    E = v^2/2 - mu/r + eps (3/8 v^4 + 3/2 mu v^2/r + mu^2/(2 r^2))
        + eps^2 (5 mu^3/r^3 - 3/2 mu^2 v^2/r^2 + 9/2 mu v^4/r)
    J = r v [1 + eps (v^2/2 + 3 mu/r) + eps^2 (3 mu^2/r^2 + 5 mu v^2/r)]

The eps^2 terms are not 2PN physics: they make E and J the constants of the
truncated 1PN equation itself to O(eps^3), which keeps this orbit on the
integrated one (without them an e = 0.88 orbit drifts by ~0.2 mas in 30 yr).
With x = -2 E eps and j = -2 E J^2 / mu^2:

    n = (-2E)^(3/2) / mu (1 - 15/8 x),     a_r = mu / (-2E) (1 - 7/4 x)
    e_t^2 = 1 - j + x/4 (-8 + 17 j),       e_r^2 = e_phi^2 = 1 - j + x/4 (24 - 15 j)
    k = 3 mu^2 eps / J^2
    n (t - t_p) = u - e_t sin u,  r = a_r (1 - e_r cos u),  phi = (1 + k) V(u; e_phi)

V is the true anomaly of eccentric anomaly u at eccentricity e_phi, taken on
the continuous branch.  phi is measured in the orbital plane from the
periapsis direction at t_p.  With eps = 0 every line reduces to Kepler's
orbit, so the Newtonian dynamics is this code with eps = 0.

Exact secular terms.  The DD mean motion and apsidal constant k are right to
O(eps); at O(eps^2) they differ from those of the truncated equation, and on
an e = 0.93, P = 11 yr orbit that drifts the periapsis by ~11 minutes per
orbit (12 micro-arcseconds and 10 km/s after two orbits).  The truncated
equation has exact integrals, so these are computed exactly instead
(`_secular_terms`): with lam = eps mu and s = 1/r, the tangential equation
gives h exp(4 lam s) = const (h = r^2 dphi/dt), and the radial one
r'' = F(r) + 3 lam s^2 r'^2 has the first integral

    r'^2 exp(6 lam s) = -C^2 s^2 exp(-2 lam s) - 4/3 mu s exp(6 lam s)
                        + 5 mu / (9 lam) exp(6 lam s) + const,    C = h exp(4 lam s).

The apoapsis is its second root; the radial period and the apsidal angle
are then periodic integrals done by the midpoint rule, which converges
exponentially for them (32 and 16 nodes reach 1e-13).  The turning points
also fix a_r and e_r = e_phi exactly; e_t keeps the DD expression.  Only
periodic O(eps^2) shape terms remain (~0.02 micro-arcsecond, ~0.03 km/s on
that orbit), far inside the physics the 1PN equation omits.

An orbit is packed in a flat float array (ORBIT_SIZE values) so that compiled
kernels can hold many of them; see `orbit_constants`.
"""

import math

import numpy as np
from numba import njit

from .constants import C_AU_YR, GM_SUN
from .elements import orientation
from .kepler import kepler_unchecked
from .vectormath import atan2_right, atan_small, expm1, sincos, sincos_small

# Layout of the packed orbit array.
T_P, MEAN_MOTION, E_T, A_R, E_R, ONE_PLUS_K, BETA_PHI, ROOT_PHI = range(8)
P_VEC = slice(8, 11)
Q_VEC = slice(11, 14)
ORBIT_SIZE = 14


@njit(cache=True)
def orbit_is_bound(orbit):
    """Whether packed constants describe a bound orbit the solvers can follow
    (a strong f_SP near a very eccentric periapsis can unbind or plunge it)."""
    for k in range(ORBIT_SIZE):
        if not math.isfinite(orbit[k]):
            return False
    return (orbit[MEAN_MOTION] > 0.0 and 0.0 <= orbit[E_T] <= 0.999
            and 0.0 <= orbit[E_R] < 1.0 and orbit[A_R] > 0.0)


@njit(cache=True)
def orbit_constants(period, e, i, big_omega, omega, t_p, mu, eps, out):
    """Fill `out` (ORBIT_SIZE floats) with the quasi-Keplerian constants.

    period (yr), angles (rad), t_p (yr), mu = G M (AU^3/yr^2), eps = f_SP / c^2
    in (yr/AU)^2.  eps = 0 gives the Keplerian orbit exactly.
    """
    a = (mu * period * period / (4.0 * math.pi * math.pi)) ** (1.0 / 3.0)
    r = a * (1.0 - e)
    v2 = mu / a * (1.0 + e) / (1.0 - e)
    mu_r = mu / r
    if eps == 0.0:
        mean_motion = 2.0 * math.pi / period
        e_t = e
        a_r = a
        e_r = e
        k = 0.0
    else:
        energy = (0.5 * v2 - mu_r
                  + eps * (0.375 * v2 * v2 + 1.5 * mu_r * v2 + 0.5 * mu_r * mu_r)
                  + eps * eps * (5.0 * mu_r ** 3 - 1.5 * mu_r * mu_r * v2
                                 + 4.5 * mu_r * v2 * v2))
        j_mom = r * math.sqrt(v2) * (1.0 + eps * (0.5 * v2 + 3.0 * mu_r)
                                     + eps * eps * (3.0 * mu_r * mu_r + 5.0 * mu_r * v2))
        minus_2e = -2.0 * energy
        x = minus_2e * eps
        jj = minus_2e * j_mom * j_mom / (mu * mu)
        a_r = mu / minus_2e * (1.0 - 1.75 * x)
        e_t = math.sqrt(max(0.0, 1.0 - jj + 0.25 * x * (-8.0 + 17.0 * jj)))
        e_r = math.sqrt(max(0.0, 1.0 - jj + 0.25 * x * (24.0 - 15.0 * jj)))
        period_r, k, a_exact, e_exact = _secular_terms(r, math.sqrt(v2), mu, eps,
                                                       a_r * (1.0 + e_r))
        e_t *= e_exact / e_r
        mean_motion = 2.0 * math.pi / period_r
        a_r = a_exact
        e_r = e_exact
    root = math.sqrt(1.0 - e_r * e_r)
    p, q = orientation(i, big_omega, omega)
    out[T_P] = t_p
    out[MEAN_MOTION] = mean_motion
    out[E_T] = e_t
    out[A_R] = a_r
    out[E_R] = e_r
    out[ONE_PLUS_K] = 1.0 + k
    out[BETA_PHI] = e_r / (1.0 + root)
    out[ROOT_PHI] = root
    out[8:11] = p
    out[11:14] = q


_PERIOD_NODES = 32
_ANGLE_NODES = 16
# cosines and sines of the midpoint nodes of both quadratures, first half only:
# the integrands depend on cos and |sin|, so node j and node N-1-j agree
_U = (np.arange(_PERIOD_NODES // 2) + 0.5) * 2.0 * math.pi / _PERIOD_NODES
_V = (np.arange(_ANGLE_NODES // 2) + 0.5) * 2.0 * math.pi / _ANGLE_NODES
_COS_U, _SIN_U = np.cos(_U), np.sin(_U)
_COS_V, _SIN_V = np.cos(_V), np.sin(_V)


@njit(cache=True, inline="always", error_model="numpy")
def _radial_terms(s, s_p, c2, mu, lam, a_p, b_p):
    """(g, exp(6 lam s), exp(-2 lam s)) at inverse radius s, where
    g = (dr/dt)^2 exp(6 lam s) on the orbit with periapsis 1/s_p
    (a_p = exp(-2 lam s_p), b_p = exp(6 lam s_p)).  Written in s - s_p, with
    expm1, so that no term loses precision near the periapsis."""
    d = s - s_p
    m2 = expm1(-2.0 * lam * d)
    m6 = expm1(6.0 * lam * d)
    g = (-c2 * a_p * (d * (s + s_p) + s * s * m2) - 4.0 / 3.0 * mu * b_p * (d + s * m6)
         + 5.0 * mu / (9.0 * lam) * b_p * m6)
    return g, b_p * (1.0 + m6), a_p * (1.0 + m2)


@njit(cache=True, error_model="numpy", fastmath={"reassoc", "contract"})
def _secular_terms(r_p, v_p, mu, eps, r_a_guess):
    """Exact radial period, apsidal constant k and turning-point (a, e).

    For the truncated 1PN equation started at periapsis r_p with speed v_p;
    r_a_guess is a nearby apoapsis (the DD value).
    """
    lam = eps * mu
    s_p = 1.0 / r_p
    a_p = math.exp(-2.0 * lam * s_p)
    b_p = math.exp(6.0 * lam * s_p)
    c = r_p * v_p * math.exp(4.0 * lam * s_p)
    c2 = c * c
    # apoapsis: the other root of g, by Newton's method in s
    s = 1.0 / r_a_guess
    for _ in range(50):
        g, e6, e2 = _radial_terms(s, s_p, c2, mu, lam, a_p, b_p)
        dg = -2.0 * (c2 * e2 * (s - lam * s * s) + mu * e6 * (4.0 * lam * s - 1.0))
        step = g / dg
        s -= step
        if abs(step) < 1e-10 * s:      # quadratic: what is left is below 1e-16
            break
    r_a = 1.0 / s
    a = 0.5 * (r_a + r_p)
    e = (r_a - r_p) / (r_a + r_p)
    # radial period: integrate dt/du with r = a (1 - e cos u)
    period = 0.0
    for j in range(_PERIOD_NODES // 2):
        s = 1.0 / (a * (1.0 - e * _COS_U[j]))
        g, e6, _ = _radial_terms(s, s_p, c2, mu, lam, a_p, b_p)
        period += a * e * _SIN_U[j] * math.sqrt(e6 / g)
    period *= 4.0 * math.pi / _PERIOD_NODES
    # apsidal angle: integrate dphi/dV with r = a (1 - e^2) / (1 + e cos V)
    angle = 0.0
    semi_latus = a * (1.0 - e * e)
    h_p = c * math.exp(-4.0 * lam * s_p)
    for j in range(_ANGLE_NODES // 2):
        den = 1.0 + e * _COS_V[j]
        s = den / semi_latus
        dr_dv = semi_latus * e * _SIN_V[j] / (den * den)
        g, e6, _ = _radial_terms(s, s_p, c2, mu, lam, a_p, b_p)
        h = h_p * (1.0 + expm1(-4.0 * lam * (s - s_p)))
        angle += h * s * s * dr_dv * math.sqrt(e6 / g)
    angle *= 4.0 * math.pi / _ANGLE_NODES
    return period, angle / (2.0 * math.pi) - 1.0, a, e


@njit(cache=True, inline="always")
def orbit_tuple(orbit):
    """The packed orbit as a tuple, for loops that must keep it in registers."""
    return (orbit[0], orbit[1], orbit[2], orbit[3], orbit[4], orbit[5], orbit[6], orbit[7],
            orbit[8], orbit[9], orbit[10], orbit[11], orbit[12], orbit[13])


@njit(cache=True, inline="always", error_model="numpy")
def orbit_anomalies(orbit, t):
    """(sin u, cos u, sin phi, cos phi) at coordinate time t: the eccentric
    anomaly u and the orbital-plane angle phi from the periapsis direction.

    Branch-free, so that loops over epochs vectorise; the orbit (array or
    `orbit_tuple`) must have passed `orbit_is_bound`."""
    u, su, cu = kepler_unchecked(orbit[MEAN_MOTION] * (t - orbit[T_P]), orbit[E_T])
    beta = orbit[BETA_PHI]
    phi = orbit[ONE_PLUS_K] * (u + 2.0 * atan2_right(beta * su, 1.0 - beta * cu))
    sp, cp = sincos(phi)
    return su, cu, sp, cp


# Newton steps on Kepler's equation in `earlier_anomalies`, after a start
# exact to third order in du: one leaves the same < 1e-13 rad as two did after
# a second-order start (one such step left up to 1.3e-12 rad at e = 0.93)
_SHIFT_NEWTON_STEPS = 1


@njit(cache=True, inline="always", error_model="numpy")
def earlier_anomalies(orbit, su0, cu0, sp0, cp0, delay):
    """The anomalies of `orbit_anomalies` a time `delay` earlier, from those
    at the later time, with no further Kepler solve or range reduction.

    Meant for the Roemer delay, which moves u and phi by less than ~v/c
    (delay <= r/c, du/dt = n a/r): the small-argument series of vectormath
    are exact to rounding up to v/c ~ 0.2, far beyond the 1PN regime.
    du solves du - e (sin(u0 + du) - sin u0) = -n delay (h = n delay,
    D = 1 - e cos u0) by one Newton step from the series solution to third
    order in h; the true anomaly moves by du plus one atan of a small
    argument, and phi's sine and cosine are rotated."""
    e = orbit[E_T]
    h = orbit[MEAN_MOTION] * delay
    inv_d = 1.0 / (1.0 - e * cu0)
    # third-order reversion of D du + A du^2 + B du^3 = -h (A = e sin u0 / 2,
    # B = e cos u0 / 6): du = d1 (1 - w + 2 w^2 - B d1^2 / D), d1 = -h / D, w = A d1 / D
    d1 = -h * inv_d
    w = 0.5 * e * su0 * d1 * inv_d
    du = d1 * (1.0 - w + 2.0 * w * w - e * cu0 * d1 * d1 * inv_d * (1.0 / 6.0))
    for _ in range(_SHIFT_NEWTON_STEPS):
        sd, cd = sincos_small(du)
        su = su0 * cd + cu0 * sd
        cu = cu0 * cd - su0 * sd
        du -= (du - e * (su - su0) + h) / (1.0 - e * cu)
    sd, cd = sincos_small(du)
    su = su0 * cd + cu0 * sd
    cu = cu0 * cd - su0 * sd
    # V = u + 2 atan(beta sin u / (1 - beta cos u)); the atan difference as one atan
    beta = orbit[BETA_PHI]
    num = beta * ((su - su0) - beta * sd)
    den = (1.0 - beta * cu) * (1.0 - beta * cu0) + beta * beta * su * su0
    dphi = orbit[ONE_PLUS_K] * (du + 2.0 * atan_small(num / den))
    sf, cf = sincos_small(dphi)
    return su, cu, sp0 * cf + cp0 * sf, cp0 * cf - sp0 * sf


@njit(cache=True, inline="always", error_model="numpy")
def anomaly_state_inv_r(orbit, su, cu, sp, cp):
    """(x, y, z, vx, vy, vz, 1/r) in AU, AU/yr, 1/AU from `orbit_anomalies`."""
    e_r = orbit[E_R]
    a_r = orbit[A_R]
    den_r = 1.0 - e_r * cu
    r = a_r * den_r
    den_t = 1.0 - orbit[E_T] * cu
    # du/dt = n / (1 - e_t cos u), dphi/dt = (1 + k) sqrt(1 - e_phi^2) / den_r du/dt:
    # one division for both, and for 1/r (1 / (n a_r) is the same for all epochs)
    n_inv = orbit[MEAN_MOTION] / (den_t * den_r)
    udot = n_inv * den_r
    rdot = a_r * e_r * su * udot
    phidot = orbit[ONE_PLUS_K] * orbit[ROOT_PHI] * n_inv
    inv_r = n_inv * den_t * (1.0 / (orbit[MEAN_MOTION] * a_r))
    # in-plane components along P (periapsis) and Q
    xp = r * cp
    yq = r * sp
    vxp = rdot * cp - r * phidot * sp
    vyq = rdot * sp + r * phidot * cp
    return (xp * orbit[8] + yq * orbit[11], xp * orbit[9] + yq * orbit[12],
            xp * orbit[10] + yq * orbit[13], vxp * orbit[8] + vyq * orbit[11],
            vxp * orbit[9] + vyq * orbit[12], vxp * orbit[10] + vyq * orbit[13], inv_r)


@njit(cache=True, inline="always", error_model="numpy")
def anomaly_state(orbit, su, cu, sp, cp):
    """State (x, y, z, vx, vy, vz) in AU, AU/yr from `orbit_anomalies`."""
    x, y, z, vx, vy, vz, _ = anomaly_state_inv_r(orbit, su, cu, sp, cp)
    return x, y, z, vx, vy, vz


@njit(cache=True, inline="always", error_model="numpy")
def orbit_state(orbit, t):
    """State (x, y, z, vx, vy, vz) at coordinate time t; AU, AU/yr."""
    su, cu, sp, cp = orbit_anomalies(orbit, t)
    return anomaly_state(orbit, su, cu, sp, cp)


def periapsis_advance_rad(mass_msun, a_au, e, f_sp=1.0):
    """Periapsis advance per orbit, 6 pi G M f_SP / (c^2 a (1 - e^2)), in rad."""
    return f_sp * 6.0 * math.pi * GM_SUN * mass_msun / (C_AU_YR**2 * a_au * (1.0 - e * e))
