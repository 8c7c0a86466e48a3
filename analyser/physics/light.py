"""What the observer receives: light-travel (Roemer) delay and redshift.

Roemer delay.  Light leaving the star at coordinate time t_em arrives at
t_obs = t_em + z(t_em) / c, relative to light from the central mass (z is
positive away from the observer).  Data epochs are arrival times, so t_em is
found by Newton's method on f(t) = t + z(t)/c - t_obs, f' = 1 + v_z/c,
started at t = t_obs.  The first step is the delay itself, delta = z/c; the
error it leaves is f'' delta^2 / (2 f') with f'' = a_z / c, and since
|a_z| <= G M / r^2 and |z| <= r this is at most G M / (2 c^3) whatever the
orbit (3e-7 yr, ten seconds, for 4e6 M_sun).  So a fixed number of full passes
(`newton_passes`: one below ~1.3e7 M_sun, two above) brings every epoch
within ROEMER_TOL_YR, and the final step is taken to first order from the
last evaluated state.  Kepler's equation is solved once, at the arrival
epoch; the states at the trial emission epochs are shifted from that
solution (orbits.earlier_anomalies), which is cheaper than a fresh solve and
exact to rounding, the eccentric anomaly moving by less than ~v/c.  A fixed
count keeps the model a smooth function of the parameters and lets the
loops over epochs vectorise.

Redshift.  1 + z_tot = gamma (1 + v_z/c) (1 - 2 G M / (r c^2))^(-1/2)
(special-relativistic Doppler times gravitational redshift).  The model
velocity is v_z + f_z (c z_tot - v_z): f_z = 0 Newtonian, f_z = 1 general
relativity.  The difference c z_tot - v_z is computed without cancellation
(see `relativistic_excess`), so the ~100 km/s relativistic part keeps full
precision.
"""

import math

from numba import njit

# The final Newton step, below this (about half a minute), is taken to first
# order (position + v dt, velocity + a dt).  What is left is half the
# acceleration (jerk) times dt^2: at the periapsis of an e = 0.93, P = 11 yr
# orbit around 4.3e6 M_sun (r_p = 56 AU) that is below 1e-9 mas and 1e-5 km/s.
ROEMER_TOL_YR = 1e-6


@njit(cache=True)
def newton_passes(mu, c):
    """Full state evaluations per epoch before the first-order final step.

    After one pass the remaining step is below mu / (2 c^3) (module
    docstring); a second pass squares its ratio to the delay again."""
    return 1 if mu / (2.0 * c ** 3) < ROEMER_TOL_YR else 2


@njit(cache=True, inline="always", error_model="numpy")
def roemer_step(t_em, t_obs, z, vz, c):
    """Newton's step on t + z(t)/c - t_obs at t = t_em (subtract it)."""
    inv_c = 1.0 / c      # hoisted out of loops over epochs: one division, not three
    return (t_em + z * inv_c - t_obs) / (1.0 + vz * inv_c)


@njit(cache=True, inline="always", error_model="numpy")
def first_order_shift(x, y, z, vx, vy, vz, inv_r, step, mu):
    """The state `step` earlier, to first order: position - v step, velocity
    - a step.  This also keeps the result a smooth function of the orbit.
    inv_r is the state's inverse radius; also returns the shifted state's,
    to the same order."""
    g = mu * step * inv_r * inv_r * inv_r
    inv_r_shifted = inv_r * (1.0 + (x * vx + y * vy + z * vz) * inv_r * inv_r * step)
    return (x - vx * step, y - vy * step, z - vz * step, vx + g * x, vy + g * y, vz + g * z,
            inv_r_shifted)


@njit(cache=True, inline="always", error_model="numpy")
def _excess(vx, vy, vz, h, c):
    """c z_tot - v_z for h = 2 G M / (r c^2)."""
    inv_c = 1.0 / c      # hoisted out of loops over epochs
    beta_z = vz * inv_c
    beta2 = (vx * vx + vy * vy + vz * vz) * (inv_c * inv_c)
    # gamma g = (1 - s)^(-1/2) with 1 - s = (1 - beta^2)(1 - h); then
    # gamma g - 1 = s / (q (1 + q)), q = sqrt(1 - s), free of cancellation
    s = beta2 + h - beta2 * h
    q = math.sqrt(1.0 - s)
    # c z_tot = c [(1 + beta_z) gamma g - 1] = v_z + c (1 + beta_z)(gamma g - 1)
    return c * (1.0 + beta_z) * s / (q * (1.0 + q))


@njit(cache=True, inline="always", error_model="numpy")
def relativistic_excess(vx, vy, vz, r, mu, c):
    """c z_tot - v_z (same unit as c): transverse Doppler plus gravitational part."""
    return _excess(vx, vy, vz, 2.0 * mu / (r * c * c), c)


@njit(cache=True, inline="always", error_model="numpy")
def line_of_sight_velocity(vx, vy, vz, inv_r, mu, c, f_z):
    """Model line-of-sight velocity v_z + f_z (c z_tot - v_z), unit of c, at
    inverse radius inv_r."""
    return vz + f_z * _excess(vx, vy, vz, 2.0 * mu * inv_r * (1.0 / (c * c)), c)
