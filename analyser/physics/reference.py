"""Plain-numpy implementation of the closed-form forward model.

The same model as the compiled kernels (orbits.py, light.py, observables.py),
written array-at-a-time over all observations of all stars.  It exists to
cross-check the kernels and as the baseline of benchmarks/forward_model.py;
the fits never use it.
"""

import numpy as np

from .constants import C_AU_YR, KM_S_PER_AU_YR

_PERIOD_NODES = 32
_ANGLE_NODES = 16


def _radial_speed2(s, s_p, c2, mu, lam):
    g = (-c2 * (s * s * np.exp(-2 * lam * s) - s_p * s_p * np.exp(-2 * lam * s_p))
         - 4.0 / 3.0 * mu * (s * np.exp(6 * lam * s) - s_p * np.exp(6 * lam * s_p))
         + 5.0 * mu / (9.0 * lam) * np.exp(6 * lam * s_p) * np.expm1(6 * lam * (s - s_p)))
    return g * np.exp(-6 * lam * s)


def orbit_constants(el, mu, eps):
    """Dict of per-star arrays (same quantities as orbits.orbit_constants)."""
    period, e, inc, big_omega, omega, t_p = el.T
    a = np.cbrt(mu * period**2 / (4 * np.pi**2))
    r = a * (1 - e)
    v2 = mu / a * (1 + e) / (1 - e)
    mu_r = mu / r
    energy = (0.5 * v2 - mu_r + eps * (0.375 * v2**2 + 1.5 * mu_r * v2 + 0.5 * mu_r**2)
              + eps**2 * (5 * mu_r**3 - 1.5 * mu_r**2 * v2 + 4.5 * mu_r * v2**2))
    j_mom = r * np.sqrt(v2) * (1 + eps * (0.5 * v2 + 3 * mu_r)
                               + eps**2 * (3 * mu_r**2 + 5 * mu_r * v2))
    m2e = -2 * energy
    x = m2e * eps
    jj = m2e * j_mom**2 / mu**2
    a_r = mu / m2e * (1 - 1.75 * x)
    e_t = np.sqrt(1 - jj + 0.25 * x * (-8 + 17 * jj))
    e_r = np.sqrt(1 - jj + 0.25 * x * (24 - 15 * jj))
    lam = eps * mu
    s_p = 1 / r
    c = r * np.sqrt(v2) * np.exp(4 * lam * s_p)
    c2 = c * c
    s = 1 / (a_r * (1 + e_r))
    for _ in range(30):
        g = _radial_speed2(s, s_p, c2, mu, lam) * np.exp(6 * lam * s)
        dg = -2 * (c2 * np.exp(-2 * lam * s) * (s - lam * s * s)
                   + mu * np.exp(6 * lam * s) * (4 * lam * s - 1))
        step = g / dg
        s = s - step
        if np.all(np.abs(step) < 1e-15 * s):
            break
    r_a = 1 / s
    a_x = 0.5 * (r_a + r)
    e_x = (r_a - r) / (r_a + r)
    u = (np.arange(_PERIOD_NODES) + 0.5) * 2 * np.pi / _PERIOD_NODES
    rr = a_x[:, None] * (1 - e_x[:, None] * np.cos(u))
    w = _radial_speed2(1 / rr, s_p[:, None], c2[:, None], mu, lam)
    period_r = (a_x[:, None] * e_x[:, None] * np.abs(np.sin(u)) / np.sqrt(w)).sum(1) \
        * 2 * np.pi / _PERIOD_NODES
    v = (np.arange(_ANGLE_NODES) + 0.5) * 2 * np.pi / _ANGLE_NODES
    semi = (a_x * (1 - e_x**2))[:, None]
    den = 1 + e_x[:, None] * np.cos(v)
    rr = semi / den
    drdv = semi * e_x[:, None] * np.abs(np.sin(v)) / den**2
    w = _radial_speed2(1 / rr, s_p[:, None], c2[:, None], mu, lam)
    angle = (c[:, None] * np.exp(-4 * lam / rr) / rr**2 * drdv / np.sqrt(w)).sum(1) \
        * 2 * np.pi / _ANGLE_NODES
    si, ci = np.sin(inc), np.cos(inc)
    so_, co_ = np.sin(big_omega), np.cos(big_omega)
    sw, cw = np.sin(omega), np.cos(omega)
    p = np.stack([so_ * cw + co_ * sw * ci, co_ * cw - so_ * sw * ci, sw * si], 1)
    q = np.stack([-so_ * sw + co_ * cw * ci, -co_ * sw - so_ * cw * ci, cw * si], 1)
    root = np.sqrt(1 - e_x**2)
    return dict(t_p=t_p, n=2 * np.pi / period_r, e_t=e_t * e_x / e_r, a_r=a_x, e_r=e_x,
                one_k=angle / (2 * np.pi), beta=e_x / (1 + root), root=root, p=p, q=q)


def _kepler(mean, e):
    turns = np.floor((mean + np.pi) / (2 * np.pi))
    m = mean - 2 * np.pi * turns
    big_e = m + 0.85 * e * np.sign(np.sin(m))
    for _ in range(40):
        s, c = np.sin(big_e), np.cos(big_e)
        f = big_e - e * s - m
        step = f / (1 - e * c)
        step = f / (1 - e * c - 0.5 * step * e * s)
        big_e = big_e - step
        if np.all(np.abs(step) < 1e-13):
            break
    return big_e + 2 * np.pi * turns


def _state(k, t):
    u = _kepler(k["n"] * (t - k["t_p"]), k["e_t"])
    su, cu = np.sin(u), np.cos(u)
    r = k["a_r"] * (1 - k["e_r"] * cu)
    phi = k["one_k"] * (u + 2 * np.arctan2(k["beta"] * su, 1 - k["beta"] * cu))
    udot = k["n"] / (1 - k["e_t"] * cu)
    rdot = k["a_r"] * k["e_r"] * su * udot
    phidot = k["one_k"] * k["root"] / (1 - k["e_r"] * cu) * udot
    sp, cp = np.sin(phi), np.cos(phi)
    xp, yq = r * cp, r * sp
    vxp, vyq = rdot * cp - r * phidot * sp, rdot * sp + r * phidot * cp
    pos = xp[:, None] * k["p"] + yq[:, None] * k["q"]
    vel = vxp[:, None] * k["p"] + vyq[:, None] * k["q"]
    return pos, vel


# Iterate the Roemer delay to well below the compiled kernel's tolerance, so
# that comparisons show that kernel's own error.
REFERENCE_TOL_YR = 1e-10


def observe(el, star, t_obs, mu, eps, f_z, mas_per_au, frame):
    """x, y (mas) and v (km/s) for observations of stars `star` at `t_obs`."""
    k = {name: value[star] for name, value in orbit_constants(el, mu, eps).items()}
    t_em = t_obs.copy()
    for _ in range(12):
        pos, vel = _state(k, t_em)
        step = (t_em + pos[:, 2] / C_AU_YR - t_obs) / (1 + vel[:, 2] / C_AU_YR)
        if np.all(np.abs(step) < REFERENCE_TOL_YR):
            break
        t_em = t_em - step
    dt = t_obs - frame[5]
    x = pos[:, 0] * mas_per_au + frame[0] + frame[2] * dt
    y = pos[:, 1] * mas_per_au + frame[1] + frame[3] * dt
    r = np.linalg.norm(pos, axis=1)
    beta_z = vel[:, 2] / C_AU_YR
    beta2 = (vel**2).sum(1) / C_AU_YR**2
    log_factor = -0.5 * np.log1p(-beta2) - 0.5 * np.log1p(-2 * mu / (r * C_AU_YR**2))
    excess = C_AU_YR * (1 + beta_z) * np.expm1(log_factor)
    v = (vel[:, 2] + f_z * excess) * KM_S_PER_AU_YR + frame[4]
    return x, y, v
