"""Orbital elements and their equivalents: state vectors, Thiele-Innes constants.

Conventions (DESIGN.md section 3).  Sky frame: x toward East, y toward North,
z along the line of sight AWAY from the observer; (x, y, z) is right-handed.
Elements follow the visual-binary convention: Omega is the position angle of
the ascending node (the node where the star recedes), from North through East;
omega is the argument of periapsis from that node in the direction of motion;
i in [0, 180] deg with i < 90 deg prograde on the sky.  With u = omega + nu:

    x = r (sin Omega cos u + cos Omega sin u cos i)
    y = r (cos Omega cos u - sin Omega sin u cos i)
    z = r sin u sin i

The element set (P, e, i, Omega, omega, t_p) are the osculating Keplerian
elements at the periapsis epoch t_p; with the central mass they fix the state
vector at t_p, and a follows from Newton's form of Kepler's third law.
"""

import math

import numpy as np
from numba import njit

from .constants import GM_SUN
from .kepler import solve_kepler, true_anomaly

ELEMENT_KEYS = ("period_yr", "e", "i_deg", "Omega_deg", "omega_deg", "t_p_yr")


def semi_major_axis_au(period_yr, mass_msun):
    """Semi-major axis (AU) from period (yr) and central mass (M_sun)."""
    return np.cbrt(GM_SUN * mass_msun * np.square(period_yr) / (4.0 * math.pi**2))


def period_from_axis_yr(a_au, mass_msun):
    """Period (yr) from semi-major axis (AU) and central mass (M_sun)."""
    return 2.0 * math.pi * np.sqrt(np.power(a_au, 3) / (GM_SUN * mass_msun))


@njit(cache=True)
def orientation(i, big_omega, omega):
    """Unit vectors (P, Q) of the orbital plane in the sky frame, angles in rad.

    P points to periapsis, Q is P turned by 90 deg in the direction of motion.
    """
    si, ci = math.sin(i), math.cos(i)
    sO, cO = math.sin(big_omega), math.cos(big_omega)
    so, co = math.sin(omega), math.cos(omega)
    p = np.array((sO * co + cO * so * ci, cO * co - sO * so * ci, so * si))
    q = np.array((-sO * so + cO * co * ci, -cO * so - sO * co * ci, co * si))
    return p, q


def thiele_innes(a, i_deg, Omega_deg, omega_deg):
    """Thiele-Innes constants (A, B, F, G, C, H) in the unit of `a`.

    With X = cos E - e and Y = sqrt(1 - e^2) sin E the sky offsets are
    North = A X + F Y, East = B X + G Y, and the line-of-sight offset is
    z = C X + H Y.  (A, F) are the North and (B, G) the East components of
    a P and a Q.
    """
    p, q = orientation(math.radians(i_deg), math.radians(Omega_deg), math.radians(omega_deg))
    return (a * p[1], a * p[0], a * q[1], a * q[0], a * p[2], a * q[2])


def elements_from_thiele_innes(A, B, F, G):
    """(a, i_deg, Omega_deg, omega_deg) from the four sky Thiele-Innes constants.

    The sky constants cannot tell the star's side of the sky plane: the result
    has Omega in [0, 180) deg; the other member of the pair is `mirror`.
    """
    # A + G = a(1 + cos i) cos(omega + Omega),  B - F = a(1 + cos i) sin(omega + Omega)
    # A - G = a(1 - cos i) cos(Omega - omega),  B + F = a(1 - cos i) sin(Omega - omega)
    s_plus = math.atan2(B - F, A + G)
    s_minus = math.atan2(B + F, A - G)
    k = math.hypot(A + G, B - F)
    m = math.hypot(A - G, B + F)
    big_omega = 0.5 * (s_plus + s_minus)
    omega = 0.5 * (s_plus - s_minus)
    # Put Omega into [0, pi); shifting both angles by pi keeps the sky orbit.
    if big_omega < 0.0:
        big_omega += math.pi
        omega += math.pi
    a = 0.5 * (k + m)
    cos_i = (k - m) / (k + m)
    return (a, math.degrees(math.acos(max(-1.0, min(1.0, cos_i)))),
            math.degrees(big_omega), math.degrees(omega) % 360.0)


def mirror(elements):
    """The mirror solution (Omega + 180, omega + 180): same sky track, z -> -z."""
    out = dict(elements)
    out["Omega_deg"] = (elements["Omega_deg"] + 180.0) % 360.0
    out["omega_deg"] = (elements["omega_deg"] + 180.0) % 360.0
    return out


def kepler_state(elements, mass_msun, t_yr):
    """Keplerian state (position AU, velocity AU/yr; arrays of shape (..., 3)).

    `elements` is a dict with the keys of ELEMENT_KEYS; t_yr scalar or array.
    """
    t = np.asarray(t_yr, dtype=float)
    e = elements["e"]
    a = semi_major_axis_au(elements["period_yr"], mass_msun)
    n = 2.0 * math.pi / elements["period_yr"]
    big_e = np.asarray(solve_kepler(n * (t - elements["t_p_yr"]), e))
    p, q = orientation(math.radians(elements["i_deg"]), math.radians(elements["Omega_deg"]),
                       math.radians(elements["omega_deg"]))
    root = math.sqrt(1.0 - e * e)
    cos_e, sin_e = np.cos(big_e), np.sin(big_e)
    xp, yq = a * (cos_e - e), a * root * sin_e
    edot = n / (1.0 - e * cos_e)
    vxp, vyq = -a * sin_e * edot, a * root * cos_e * edot
    pos = xp[..., None] * p + yq[..., None] * q
    vel = vxp[..., None] * p + vyq[..., None] * q
    return pos, vel


def periapsis_state(elements, mass_msun):
    """Osculating state at t_p: the initial condition of every dynamics."""
    pos, vel = kepler_state(elements, mass_msun, elements["t_p_yr"])
    return np.asarray(pos, dtype=float), np.asarray(vel, dtype=float)


def elements_from_state(position_au, velocity_au_yr, mass_msun, t_yr):
    """Osculating elements from one state vector at epoch t_yr.

    Returns the dict of ELEMENT_KEYS; t_p_yr is the periapsis nearest t_yr.
    Raises ValueError for unbound or degenerate (radial, face-on ambiguous
    node) states.
    """
    r = np.asarray(position_au, dtype=float)
    v = np.asarray(velocity_au_yr, dtype=float)
    mu = GM_SUN * mass_msun
    rn = np.linalg.norm(r)
    h = np.cross(r, v)
    hn = np.linalg.norm(h)
    energy = 0.5 * v @ v - mu / rn
    if energy >= 0.0:
        raise ValueError("state is not bound (energy >= 0)")
    if hn == 0.0:
        raise ValueError("radial orbit: angular momentum is zero")
    a = -mu / (2.0 * energy)
    e_vec = np.cross(v, h) / mu - r / rn
    e = float(np.linalg.norm(e_vec))
    hh = h / hn
    # h-hat = (sin i cos Omega, -sin i sin Omega, -cos i) in the sky frame.
    i = math.acos(max(-1.0, min(1.0, -hh[2])))
    sin_i = math.sin(i)
    if sin_i < 1e-12:
        raise ValueError("face-on orbit: the node is undefined")
    big_omega = math.atan2(-hh[1], hh[0]) % (2.0 * math.pi)
    node = np.array((math.sin(big_omega), math.cos(big_omega), 0.0))
    node_q = np.cross(hh, node)  # 90 deg ahead of the node, in the plane
    ref = e_vec / e if e > 1e-12 else node
    omega = math.atan2(ref @ node_q, ref @ node) % (2.0 * math.pi)
    ref_q = np.cross(hh, ref)
    nu = math.atan2(r @ ref_q, r @ ref)
    big_e = 2.0 * math.atan2(math.sqrt(1.0 - e) * math.sin(nu / 2.0),
                             math.sqrt(1.0 + e) * math.cos(nu / 2.0))
    mean = big_e - e * math.sin(big_e)
    period = 2.0 * math.pi * math.sqrt(a**3 / mu)
    t_p = t_yr - mean / (2.0 * math.pi) * period
    return {"period_yr": period, "e": e, "i_deg": math.degrees(i),
            "Omega_deg": math.degrees(big_omega), "omega_deg": math.degrees(omega),
            "t_p_yr": float(t_p)}


__all__ = ["ELEMENT_KEYS", "semi_major_axis_au", "period_from_axis_yr", "orientation",
           "thiele_innes", "elements_from_thiele_innes", "mirror", "kepler_state",
           "periapsis_state", "elements_from_state", "true_anomaly"]
