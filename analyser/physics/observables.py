"""The forward model: what the instruments see of a star at given arrival epochs.

    x (East, mas) = X(t_em) * 1000 / R0 + x0 + vx0 (t_obs - t_ref)
    y (North, mas) = Y(t_em) * 1000 / R0 + y0 + vy0 (t_obs - t_ref)
    v (km/s, c z)  = v_z(t_em) + f_z (c z_tot - v_z) + vz0

(X, Y, Z) is the star's position relative to the central mass in AU,
t_em its emission time from the Roemer delay (light.py).  Three dynamics are
available by name (DYNAMICS): "kepler", "analytic-1pn" (orbits.py, default)
and "numerical-1pn" (integrator.py).

Two levels of interface:
  * `predict_observables(globals, elements, epochs, dynamics)` for one star,
    with the parameter names used throughout the package and its results;
  * `observe_stars`, the compiled kernel for many stars and many epochs in
    one call (elements in, observables out); the likelihood uses its per-star
    part `observe_orbit` on orbits from `orbits.orbit_constants`.
"""

import math
from typing import NamedTuple

import numpy as np
from numba import njit

from .constants import C_AU_YR, GM_SUN, KM_S_PER_AU_YR
from .elements import ELEMENT_KEYS, semi_major_axis_au
from .integrator import STEPS_PER_ORBIT, integrate_nodes, nodes_state
from .kepler import E_MAX
from .light import first_order_shift, line_of_sight_velocity, newton_passes, roemer_step
from .orbits import (MEAN_MOTION, ONE_PLUS_K, ORBIT_SIZE, anomaly_state_inv_r,
                     earlier_anomalies, orbit_anomalies, orbit_constants, orbit_is_bound,
                     orbit_state, orbit_tuple)

DYNAMICS = ("kepler", "analytic-1pn", "numerical-1pn")
GLOBAL_KEYS = ("mass_msun", "distance_pc", "x0_mas", "y0_mas", "vx0_mas_yr",
               "vy0_mas_yr", "vz0_km_s", "f_sp", "f_z", "t_ref_yr")

# Columns of the per-star element array handed to the kernels.
EL_PERIOD, EL_E, EL_I, EL_BIG_OMEGA, EL_OMEGA, EL_TP = range(6)
# Entries of the frame array: x0, y0 (mas), vx0, vy0 (mas/yr), vz0 (km/s), t_ref (yr)
FRAME_SIZE = 6


class Observables(NamedTuple):
    """Model observables at the requested epochs."""
    x_mas: np.ndarray
    y_mas: np.ndarray
    v_km_s: np.ndarray


# ---------------------------------------------------------------- compiled kernels

@njit(cache=True)
def build_orbits(elements, mu, eps):
    """Packed closed-form orbits (n_star, ORBIT_SIZE) from element rows.

    `elements` rows are (P yr, e, i rad, Omega rad, omega rad, t_p yr);
    eps = f_SP / c^2, zero for the Newtonian orbit.
    """
    out = np.empty((elements.shape[0], ORBIT_SIZE))
    for s in range(elements.shape[0]):
        row = elements[s]
        orbit_constants(row[0], row[1], row[2], row[3], row[4], row[5], mu, eps, out[s])
    return out


@njit(cache=True, inline="always", error_model="numpy")
def _final_step(k, state, light_travel, t_obs, need_v, mu, c, f_z, mas_per_au, frame,
                out_x, out_y, out_v, out_t_em):
    """Epoch k's last Roemer step (first order) and its observables, from
    the state (x, y, z, vx, vy, vz, 1/r) at the last trial emission epoch."""
    x, y, z, vx, vy, vz, inv_r = state
    step = roemer_step(out_t_em[k], t_obs[k], z, vz, c) if light_travel else 0.0
    x, y, z, vx, vy, vz, inv_r = first_order_shift(x, y, z, vx, vy, vz, inv_r, step, mu)
    out_t_em[k] -= step
    dt = t_obs[k] - frame[5]
    out_x[k] = x * mas_per_au + frame[0] + frame[2] * dt
    out_y[k] = y * mas_per_au + frame[1] + frame[3] * dt
    v = line_of_sight_velocity(vx, vy, vz, inv_r, mu, c, f_z) * KM_S_PER_AU_YR + frame[4]
    out_v[k] = v if need_v[k] else np.nan


@njit(cache=True, inline="always", error_model="numpy")
def _emission_state(orbit, t, c, passes):
    """State and inverse radius at the emission time of light arriving at t,
    and that time, after `passes` Newton steps on the Roemer delay.  One
    Kepler solve at t; the states at the trial emission times are shifted
    from it (light.py)."""
    su0, cu0, sp0, cp0 = orbit_anomalies(orbit, t)
    state = anomaly_state_inv_r(orbit, su0, cu0, sp0, cp0)
    delay = 0.0
    for _ in range(passes):
        delay += roemer_step(t - delay, t, state[2], state[5], c)
        su, cu, sp, cp = earlier_anomalies(orbit, su0, cu0, sp0, cp0, delay)
        state = anomaly_state_inv_r(orbit, su, cu, sp, cp)
    return state, t - delay


@njit(cache=True, inline="always", error_model="numpy")
def _observe_loop(orbit, t_obs, need_v, mu, c, f_z, mas_per_au, frame, passes,
                  out_x, out_y, out_v, out_t_em):
    for k in range(t_obs.size):
        state, out_t_em[k] = _emission_state(orbit, t_obs[k], c, passes)
        _final_step(k, state, passes > 0, t_obs, need_v, mu, c, f_z, mas_per_au, frame,
                    out_x, out_y, out_v, out_t_em)


@njit(cache=True, error_model="numpy", fastmath={"contract"})
def _observe_orbit_loops(orbit, t_obs, need_v, mu, c, f_z, mas_per_au, frame, light_travel,
                         out_x, out_y, out_v, out_t_em):
    orbit = orbit_tuple(orbit)   # constants in registers: outputs cannot alias them
    passes = newton_passes(mu, c) if light_travel else 0
    # the pass count is a literal in each loop, so that each unrolls and vectorises
    if passes == 1:
        _observe_loop(orbit, t_obs, need_v, mu, c, f_z, mas_per_au, frame, 1,
                      out_x, out_y, out_v, out_t_em)
    elif passes == 2:
        _observe_loop(orbit, t_obs, need_v, mu, c, f_z, mas_per_au, frame, 2,
                      out_x, out_y, out_v, out_t_em)
    else:
        _observe_loop(orbit, t_obs, need_v, mu, c, f_z, mas_per_au, frame, 0,
                      out_x, out_y, out_v, out_t_em)


# Loops run over a multiple of this many epochs, the vectorised loop's step:
# two interleaved vectors of 4 doubles (LLVM keeps to 256-bit vectors on AVX2
# and AVX-512 cores alike; seen in the code compiled for znver1, znver4,
# znver5, skylake-avx512 and sapphirerapids).  The compiler's scalar
# remainder loop costs several times more.
LANES = 8


@njit(cache=True, inline="always")
def padded_size(n):
    """n rounded up to a multiple of LANES."""
    return -(-n // LANES) * LANES


@njit(cache=True)
def _observe_padded(orbit, t_obs, need_v, mu, c, f_z, mas_per_au, frame, light_travel,
                    work, flags, out_x, out_y, out_v, out_t_em):
    """observe_orbit through scratch rows work[0:5, :n_pad] and flags[:n_pad]
    (n_pad = padded_size(n)): epochs padded by repeating the last one."""
    n = t_obs.size
    n_pad = padded_size(n)
    work[0, :n] = t_obs
    work[0, n:n_pad] = t_obs[n - 1]
    flags[:n] = need_v
    flags[n:n_pad] = False
    _observe_orbit_loops(orbit, work[0, :n_pad], flags[:n_pad], mu, c, f_z, mas_per_au, frame,
                         light_travel, work[1, :n_pad], work[2, :n_pad], work[3, :n_pad],
                         work[4, :n_pad])
    out_x[:] = work[1, :n]
    out_y[:] = work[2, :n]
    out_v[:] = work[3, :n]
    out_t_em[:] = work[4, :n]


@njit(cache=True)
def observe_orbit(orbit, t_obs, need_v, mu, c, f_z, mas_per_au, frame, light_travel,
                  out_x, out_y, out_v, out_t_em):
    """Observables of one star on a packed closed-form orbit at arrival epochs
    t_obs; velocities only where need_v (NaN elsewhere).  The orbit must pass
    orbits.orbit_is_bound.

    Every loop over epochs is branch-free and vectorises.  Epochs are padded
    to a multiple of LANES by repeating the last one, in scratch space unless
    t_obs already has such a size."""
    n = t_obs.size
    if n == padded_size(n):
        _observe_orbit_loops(orbit, t_obs, need_v, mu, c, f_z, mas_per_au, frame,
                             light_travel, out_x, out_y, out_v, out_t_em)
        return
    _observe_padded(orbit, t_obs, need_v, mu, c, f_z, mas_per_au, frame, light_travel,
                    np.empty((5, padded_size(n))), np.empty(padded_size(n), dtype=np.bool_),
                    out_x, out_y, out_v, out_t_em)


@njit(cache=True)
def observe_stars(elements, first, t_obs, need_v, mu, eps, c, f_z, mas_per_au, frame, out,
                  light_travel=True):
    """Closed-form observables for many stars in one call, from their element
    rows (as for `build_orbits`; eps = f_SP / c^2, 0 for Kepler).

    Observations of star s occupy columns first[s]:first[s+1] of t_obs
    (arrival epochs, yr), need_v (whether a velocity is wanted) and `out`,
    whose rows receive x (mas), y (mas), v (km/s) and the emission epoch (yr).
    One scratch space serves all stars.
    """
    orbit = np.empty(ORBIT_SIZE)
    n_max = 0
    for s in range(elements.shape[0]):
        n_max = max(n_max, first[s + 1] - first[s])
    work = np.empty((5, padded_size(n_max)))
    flags = np.empty(padded_size(n_max), dtype=np.bool_)
    for s in range(elements.shape[0]):
        row = elements[s]
        orbit_constants(row[0], row[1], row[2], row[3], row[4], row[5], mu, eps, orbit)
        if not orbit_is_bound(orbit):
            raise ValueError("the elements do not give a bound orbit")
        lo, hi = first[s], first[s + 1]
        if hi > lo:
            _observe_padded(orbit, t_obs[lo:hi], need_v[lo:hi], mu, c, f_z, mas_per_au, frame,
                            light_travel, work, flags, out[0, lo:hi], out[1, lo:hi],
                            out[2, lo:hi], out[3, lo:hi])


@njit(cache=True)
def observe_integrated(nodes, par, t_obs, need_v, mu, c, f_z, mas_per_au, frame,
                       out_x, out_y, out_v, out_t_em, light_travel=True):
    """Observables of one star from integration nodes (par = (ds, mu, eps)),
    with the same Roemer passes as `observe_orbit`."""
    n = t_obs.size
    for k in range(n):
        out_t_em[k] = t_obs[k]
    for _ in range(newton_passes(mu, c) if light_travel else 0):
        for k in range(n):
            x, y, z, vx, vy, vz = nodes_state(nodes, par[0], par[1], par[2], out_t_em[k])
            out_t_em[k] -= roemer_step(out_t_em[k], t_obs[k], z, vz, c)
    for k in range(n):
        x, y, z, vx, vy, vz = nodes_state(nodes, par[0], par[1], par[2], out_t_em[k])
        inv_r = 1.0 / math.sqrt(x * x + y * y + z * z)
        _final_step(k, (x, y, z, vx, vy, vz, inv_r), light_travel, t_obs, need_v, mu, c, f_z,
                    mas_per_au, frame, out_x, out_y, out_v, out_t_em)


@njit(cache=True)
def integrate_star(row, mu, eps, c, t_lo, t_hi, steps_per_orbit):
    """Integration nodes of one star covering arrival epochs [t_lo, t_hi]."""
    period, e, i, big_omega, omega, t_p = row[0], row[1], row[2], row[3], row[4], row[5]
    a = (mu * period * period / (4.0 * math.pi * math.pi)) ** (1.0 / 3.0)
    kep = np.empty(ORBIT_SIZE)
    orbit_constants(period, e, i, big_omega, omega, t_p, mu, 0.0, kep)
    x, y, z, vx, vy, vz = orbit_state(kep, t_p)
    pos = np.array((x, y, z))
    vel = np.array((vx, vy, vz))
    margin = a * (1.0 + e) / c * 1.5 + 1e-6
    ds = period / a / steps_per_orbit
    nodes = integrate_nodes(pos, vel, t_p, mu, eps, min(t_lo, t_p) - margin,
                            max(t_hi, t_p) + margin, ds)
    par = np.array((ds, mu, eps))
    return nodes, par


# ---------------------------------------------------------------- public interface

def _check_inputs(glob, elements, dynamics):
    if dynamics not in DYNAMICS:
        raise ValueError(f"unknown dynamics {dynamics!r}; choose one of {', '.join(DYNAMICS)}")
    missing = [k for k in GLOBAL_KEYS if k not in glob]
    if missing:
        raise KeyError(f"globals lack {', '.join(missing)}")
    missing = [k for k in ELEMENT_KEYS if k not in elements]
    if missing:
        raise KeyError(f"elements lack {', '.join(missing)}")
    if not 0.0 <= elements["e"] <= E_MAX:
        raise ValueError(f"eccentricity {elements['e']} outside [0, {E_MAX}]")
    for key in ("mass_msun", "distance_pc"):
        if not glob[key] > 0:
            raise ValueError(f"{key} must be positive, got {glob[key]}")
    if not elements["period_yr"] > 0:
        raise ValueError(f"period_yr must be positive, got {elements['period_yr']}")


def _epochs_yr(epochs):
    """Decimal Julian years from floats or an astropy Time."""
    try:
        from astropy.time import Time
    except ImportError:  # pragma: no cover - astropy is a dependency
        Time = ()
    if isinstance(epochs, Time):
        return np.atleast_1d(epochs.tt.jyear).astype(float)
    return np.atleast_1d(np.asarray(epochs, dtype=float))


def element_row(elements):
    """Kernel element row (P, e, i, Omega, omega in rad, t_p) from a dict."""
    return np.array([elements["period_yr"], elements["e"], math.radians(elements["i_deg"]),
                     math.radians(elements["Omega_deg"]), math.radians(elements["omega_deg"]),
                     elements["t_p_yr"]], dtype=float)


def frame_row(glob):
    """Kernel frame array (x0, y0, vx0, vy0, vz0, t_ref) from a globals dict."""
    return np.array([glob["x0_mas"], glob["y0_mas"], glob["vx0_mas_yr"], glob["vy0_mas_yr"],
                     glob["vz0_km_s"], glob["t_ref_yr"]], dtype=float)


def _evaluate(glob, elements, epochs, dynamics, light_travel=True,
              steps_per_orbit=STEPS_PER_ORBIT):
    _check_inputs(glob, elements, dynamics)
    t = _epochs_yr(epochs)
    mu = GM_SUN * glob["mass_msun"]
    eps = 0.0 if dynamics == "kepler" else glob["f_sp"] / C_AU_YR**2
    mas_per_au = 1000.0 / glob["distance_pc"]
    row = element_row(elements)
    frame = frame_row(glob)
    need_v = np.ones(t.size, dtype=np.bool_)
    out = np.empty((4, t.size))
    if dynamics == "numerical-1pn":
        nodes, par = integrate_star(row, mu, eps, C_AU_YR, t.min(), t.max(), steps_per_orbit)
        observe_integrated(nodes, par, t, need_v, mu, C_AU_YR, glob["f_z"], mas_per_au,
                           frame, *out, light_travel)
    else:
        observe_stars(row[None, :], np.array([0, t.size]), t, need_v, mu, eps, C_AU_YR,
                      glob["f_z"], mas_per_au, frame, out, light_travel)
    return list(out)


def predict_observables(globals, elements, epochs, dynamics="analytic-1pn", light_travel=True):
    """Sky offsets and line-of-sight velocity of one star at arrival epochs.

    Parameters
    ----------
    globals : dict
        mass_msun (M_sun), distance_pc (pc), x0_mas, y0_mas (mas),
        vx0_mas_yr, vy0_mas_yr (mas/yr), vz0_km_s (km/s), f_sp, f_z
        (dimensionless; 0 Newtonian, 1 general relativity) and t_ref_yr
        (reference epoch of the frame terms, decimal Julian year).
    elements : dict
        period_yr, e, i_deg, Omega_deg, omega_deg, t_p_yr: the osculating
        Keplerian elements at the periapsis epoch t_p (coordinate time).
    epochs : array_like or astropy.time.Time
        Arrival epochs in decimal Julian years (t = 2000 + (JD - 2451545)/365.25).
    dynamics : {"kepler", "analytic-1pn", "numerical-1pn"}
    light_travel : bool
        Solve the Roemer delay (default).  False evaluates the orbit at the
        arrival epochs themselves, for studying the size of the effect.

    Returns
    -------
    Observables
        (x_mas, y_mas, v_km_s): x toward East, y toward North, v = c z
        positive when receding, each an array over epochs.
    """
    x, y, v, _ = _evaluate(globals, elements, epochs, dynamics, light_travel)
    return Observables(x, y, v)


def emission_epochs(globals, elements, epochs, dynamics="analytic-1pn"):
    """Coordinate times (yr) at which the light arriving at `epochs` left the star."""
    return _evaluate(globals, elements, epochs, dynamics)[3]


def semi_major_axis_mas(elements, globals):
    """Angular semi-major axis (mas) of the osculating orbit."""
    return semi_major_axis_au(elements["period_yr"], globals["mass_msun"]) * 1000.0 / globals["distance_pc"]


def periapsis_passage(globals, elements, n, dynamics="analytic-1pn"):
    """Elements referred to the n-th periapsis passage after t_p (n may be < 0).

    In the closed-form 1PN orbit every passage has the same periapsis
    distance and speed, so P and e are unchanged; t_p moves by n radial
    periods and omega by n periapsis advances.  Kepler: t_p moves by n P.
    Also returns the radial period (yr).
    """
    _check_inputs(globals, elements, dynamics)
    eps = 0.0 if dynamics == "kepler" else globals["f_sp"] / C_AU_YR**2
    orbit = build_orbits(element_row(elements)[None, :], GM_SUN * globals["mass_msun"], eps)[0]
    radial_period = 2.0 * math.pi / orbit[MEAN_MOTION]
    advance_deg = 360.0 * (orbit[ONE_PLUS_K] - 1.0)
    out = dict(elements)
    out["t_p_yr"] = elements["t_p_yr"] + n * radial_period
    out["omega_deg"] = (elements["omega_deg"] + n * advance_deg) % 360.0
    return out, radial_period


def with_radial_period(globals, elements, dynamics="analytic-1pn"):
    """Elements whose radial (periapsis-to-periapsis) period is elements' period_yr.

    Published orbits quote the period the star is seen to repeat with; the
    elements here are osculating at t_p, whose period differs from that by a
    few per cent for the most relativistic orbits.  This finds the osculating
    period that reproduces the published one.
    """
    from scipy.optimize import brentq
    target = elements["period_yr"]

    def excess(p):
        return periapsis_passage(globals, dict(elements, period_yr=p), 0, dynamics)[1] - target

    period = brentq(excess, 0.5 * target, 1.5 * target, xtol=1e-12 * target)
    return dict(elements, period_yr=period)
