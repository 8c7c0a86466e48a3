"""What the observer receives: light-travel (Roemer) delay and redshift.

Roemer delay.  Light leaving the star at coordinate time t_em arrives at
t_obs = t_em + z(t_em) / c, relative to light from the central mass (z is
positive away from the observer).  Data epochs are arrival times, so t_em is
found by Newton's method on f(t) = t + z(t)/c - t_obs with f' = 1 + v_z/c;
it converges quadratically and its last, tiny step is taken to first order
(see ROEMER_TOL_YR).  Consecutive epochs of a star start from the previous
epoch's delay and phase, so each needs only short, trigonometry-free phase
shifts.

Redshift.  1 + z_tot = gamma (1 + v_z/c) (1 - 2 G M / (r c^2))^(-1/2)
(special-relativistic Doppler times gravitational redshift).  The model
velocity is v_z + f_z (c z_tot - v_z): f_z = 0 Newtonian, f_z = 1 general
relativity.  The difference c z_tot - v_z is computed with log1p/expm1 so that
the ~100 km/s relativistic part keeps full precision.
"""

import math

import numpy as np
from numba import njit

from .dynamics import advance_phase, phase_to_state, start_phase

# The iteration stops once Newton's next step is below this (about half a
# minute) and takes that step to first order (position + v dt, velocity
# + a dt).  What is left is half the acceleration (jerk) times dt^2: at the
# periapsis of an e = 0.93, P = 11 yr orbit around 4.3e6 M_sun (r_p = 56 AU)
# that is below 1e-9 mas and 1e-5 km/s, far below any measurement.  From the
# previous epoch's delay most epochs then need two state evaluations.
ROEMER_TOL_YR = 1e-6
_MAX_ITER = 12


@njit(cache=True)
def emission_from(kind, orbit, nodes, par, t_obs, c, mu, phase, t_em):
    """Solve the Roemer delay for arrival time t_obs, starting from the star's
    `phase` at coordinate time t_em (a guess of the emission time).

    The orbit is described as for `dynamics.start_phase`; mu = G M.  Returns
    the state at emission (x, y, z, vx, vy, vz in AU, AU/yr), t_em, and the
    last phase evaluated with its time (to start the next epoch from).
    """
    for _ in range(_MAX_ITER):
        x, y, z, vx, vy, vz = phase_to_state(kind, orbit, phase)
        step = (t_em + z / c - t_obs) / (1.0 + vz / c)
        if abs(step) < ROEMER_TOL_YR:
            # the last step to first order: this also keeps the result a smooth
            # function of the orbit (finite-difference derivatives need that)
            r3 = (x * x + y * y + z * z) ** 1.5
            g = mu * step / r3
            return (x - vx * step, y - vy * step, z - vz * step, vx + g * x, vy + g * y,
                    vz + g * z, t_em - step, phase, t_em)
        t_em -= step
        phase = advance_phase(kind, orbit, nodes, par, phase, -step, t_em)
    raise ArithmeticError("Roemer delay iteration did not converge")


@njit(cache=True)
def emission_state(kind, orbit, nodes, par, t_obs, c, mu):
    """State at emission and t_em for arrival time t_obs, from scratch."""
    x, y, z, vx, vy, vz, t_em, _, _ = emission_from(
        kind, orbit, nodes, par, t_obs, c, mu, start_phase(kind, orbit, nodes, par, t_obs), t_obs)
    return x, y, z, vx, vy, vz, t_em


@njit(cache=True)
def relativistic_excess(vx, vy, vz, r, mu, c):
    """c z_tot - v_z (same unit as c): transverse Doppler plus gravitational part."""
    beta_z = vz / c
    beta2 = (vx * vx + vy * vy + vz * vz) / (c * c)
    log_factor = -0.5 * math.log1p(-beta2) - 0.5 * math.log1p(-2.0 * mu / (r * c * c))
    # c z_tot = c [(1 + beta_z) gamma g - 1] = v_z + c (1 + beta_z)(gamma g - 1)
    return c * (1.0 + beta_z) * math.expm1(log_factor)


@njit(cache=True)
def line_of_sight_velocity(vx, vy, vz, r, mu, c, f_z):
    """Model line-of-sight velocity v_z + f_z (c z_tot - v_z), unit of c."""
    if f_z == 0.0:
        return vz
    return vz + f_z * relativistic_excess(vx, vy, vz, r, mu, c)
