"""The likelihood of a campaign's data, star by star, compiled.

    ln L = sum over stars s of ln L_s(globals, nuisances, star s)

Each astrometric epoch is a bivariate Gaussian in (x, y) with its error
correlation; each velocity a Gaussian; the normalisation terms are kept so
that error scales and jitters are inferable.  An instrument with an outlier
mixture replaces each point's density p by (1 - q) p + q p_W, p_W the same
density with errors W times larger.  Instrument terms: astrometric offsets
and velocity zero points are added to the model, error scales multiply the
quoted errors, jitters add in quadrature.

The data live in a tuple of arrays (`DataArrays`) so that compiled code can
hold them; parameters are read from the full vector of layout.py.
`star_loglike` is the per-star term the block sampler updates one star at a
time with; `JointModel` is the Python face used by the prefit and results.
"""

import math
from typing import NamedTuple

import numpy as np
from numba import njit

from ..physics.constants import C_AU_YR, GM_SUN
from ..physics.dynamics import KIND_BY_NAME, NUMERICAL_1PN
from ..physics.integrator import STEPS_PER_ORBIT
from ..physics.observables import (integrate_star, observe_integrated, observe_orbit,
                                   padded_size)
from ..physics.orbits import MEAN_MOTION, ORBIT_SIZE, T_P, orbit_constants, orbit_is_bound
from ..physics.vectormath import exp, log
from .layout import N_GLOBAL, N_STAR, build_layout

_LOG_2PI = math.log(2.0 * math.pi)


class DataArrays(NamedTuple):
    dynamics: int
    t_ref: float
    star_offset: np.ndarray      # full-vector index of each star's first parameter
    obs_first: np.ndarray        # per star: slice of obs_t: astrometry, velocities, then
                                 # repeats of the last epoch up to a multiple of LANES
    astro_first: np.ndarray      # per star: slice of the astrometry rows
    vel_first: np.ndarray        # per star: slice of the velocity rows
    obs_t: np.ndarray
    obs_need_v: np.ndarray
    ax: np.ndarray
    ay: np.ndarray
    asx: np.ndarray
    asy: np.ndarray
    arho: np.ndarray
    ainst: np.ndarray
    vv: np.ndarray
    vs: np.ndarray
    vinst: np.ndarray
    inst_offx: np.ndarray        # full-vector index of each instrument's term, -1 if none
    inst_offy: np.ndarray
    inst_zp: np.ndarray
    inst_scale: np.ndarray
    inst_jitter: np.ndarray
    inst_outlier: np.ndarray
    inst_width: np.ndarray


# ---------------------------------------------------------------- compiled core

@njit(cache=True)
def star_orbit(s, full, d, orbit):
    """Packed closed-form orbit of star s (orbits.py).  The periapsis epoch is
    t_p = t_ref - (phase mod 1) * P_r with P_r the radial period, so that the
    phase is exactly periodic: each phase names one periapsis passage."""
    o = d.star_offset[s]
    period, e, cos_i = full[o], full[o + 1], full[o + 2]
    inc = math.acos(max(-1.0, min(1.0, cos_i)))
    eps = 0.0 if d.dynamics == 0 else full[7] / (C_AU_YR * C_AU_YR)
    orbit_constants(period, e, inc, math.radians(full[o + 3]), math.radians(full[o + 4]),
                    0.0, GM_SUN * full[0], eps, orbit)
    phase = full[o + 5] - math.floor(full[o + 5])
    orbit[T_P] = d.t_ref - phase * 2.0 * math.pi / orbit[MEAN_MOTION]


@njit(cache=True)
def star_predict(s, full, d, out_x, out_y, out_v):
    """Model x, y (mas) at star s's astrometric rows and v (km/s) at its
    velocity rows, instrument offsets included.  Returns False (outputs NaN)
    when the parameters give no bound orbit."""
    orbit = np.empty(ORBIT_SIZE)
    star_orbit(s, full, d, orbit)
    if not orbit_is_bound(orbit) or not (full[0] > 0.0 and full[1] > 0.0):
        out_x[:] = np.nan
        out_y[:] = np.nan
        out_v[:] = np.nan
        return False
    mu = GM_SUN * full[0]
    mas_per_au = 1000.0 / full[1]
    frame = np.array((full[2], full[3], full[4], full[5], full[6], d.t_ref))
    lo, hi = d.obs_first[s], d.obs_first[s + 1]
    work = np.empty((4, hi - lo))
    px, py, pv, pt = work[0], work[1], work[2], work[3]
    if d.dynamics == NUMERICAL_1PN:
        o = d.star_offset[s]
        row = np.array((full[o], full[o + 1], math.acos(max(-1.0, min(1.0, full[o + 2]))),
                        math.radians(full[o + 3]), math.radians(full[o + 4]), orbit[T_P]))
        nodes, par = integrate_star(row, mu, full[7] / (C_AU_YR * C_AU_YR), C_AU_YR,
                                    d.obs_t[lo:hi].min(), d.obs_t[lo:hi].max(), STEPS_PER_ORBIT)
        observe_integrated(nodes, par, d.obs_t[lo:hi], d.obs_need_v[lo:hi], mu, C_AU_YR,
                           full[8], mas_per_au, frame, px, py, pv, pt)
    else:
        observe_orbit(orbit, d.obs_t[lo:hi], d.obs_need_v[lo:hi], mu, C_AU_YR, full[8],
                      mas_per_au, frame, True, px, py, pv, pt)
    a0 = d.astro_first[s]
    na = d.astro_first[s + 1] - a0
    for k in range(na):
        inst = d.ainst[a0 + k]
        ix, iy = d.inst_offx[inst], d.inst_offy[inst]
        out_x[k] = px[k] + (full[ix] if ix >= 0 else 0.0)
        out_y[k] = py[k] + (full[iy] if iy >= 0 else 0.0)
    v0 = d.vel_first[s]
    for k in range(d.vel_first[s + 1] - v0):
        iz = d.inst_zp[d.vinst[v0 + k]]
        out_v[k] = pv[na + k] + (full[iz] if iz >= 0 else 0.0)
    return True


# rows of the instrument-term array
_SCALE, _JITTER2, _LOG_KEEP, _LOG_Q, _INV_WIDTH2, _LOG_WIDTH = range(6)


@njit(cache=True)
def _instrument_terms(full, d):
    """(6, n_instruments): error scale, jitter^2, ln(1 - q), ln q, 1 / W^2
    and ln W for the outlier width W, neutral where the instrument has no
    such term (q = 0: ln q = -inf), so that the loops over points need no
    branches."""
    n = d.inst_scale.size
    t = np.zeros((6, n))
    t[_SCALE] = 1.0
    t[_LOG_Q] = -np.inf
    t[_INV_WIDTH2] = 1.0
    for i in range(n):
        if d.inst_scale[i] >= 0:
            t[_SCALE, i] = full[d.inst_scale[i]]
        if d.inst_jitter[i] >= 0:
            t[_JITTER2, i] = full[d.inst_jitter[i]] ** 2
        if d.inst_outlier[i] >= 0:
            q = full[d.inst_outlier[i]]
            t[_LOG_KEEP, i] = math.log1p(-q) if q < 1.0 else -np.inf
            t[_LOG_Q, i] = math.log(q) if q > 0.0 else -np.inf
            t[_INV_WIDTH2, i] = 1.0 / d.inst_width[i] ** 2
            t[_LOG_WIDTH, i] = math.log(d.inst_width[i])
    return t


@njit(cache=True)
def _terms_per_row(terms, inst):
    """The instrument terms copied out to every row (6, n_rows), so that the
    loops over points read contiguous rows instead of gathering."""
    out = np.empty((6, inst.size))
    for f in range(6):
        for j in range(inst.size):
            out[f, j] = terms[f, inst[j]]
    return out


@njit(cache=True, inline="always", error_model="numpy")
def _variance(sigma, t, j):
    """Effective variance: (quoted error times the scale)^2 plus jitter^2."""
    return (sigma * t[_SCALE, j]) ** 2 + t[_JITTER2, j]


@njit(cache=True, inline="always", error_model="numpy")
def _error(sigma, t, j):
    """Effective error: quoted error times the scale, jitter added in quadrature."""
    return math.sqrt(_variance(sigma, t, j))


@njit(cache=True, inline="always", error_model="numpy")
def _point_density(q_form, log_norm, ndim, t, j):
    """ln density of a point from its quadratic form and ln normalisation: the
    mixture (1 - q) p + q p_W of its instrument (terms t[:, j]), which is
    exactly p when q = 0 (then the smaller term is exp(-708) ~ 1e-308)."""
    core = -0.5 * q_form - log_norm
    broad = -0.5 * q_form * t[_INV_WIDTH2, j] - log_norm - ndim * t[_LOG_WIDTH, j]
    a = t[_LOG_KEEP, j] + core
    b = t[_LOG_Q, j] + broad
    top = a if a > b else b
    low = b if a > b else a
    return top + log(1.0 + exp(low - top))


# The loops over points are separate compiled functions, each vectorised on
# its own: written inline in star_loglike the points cost 1.25x more
# (measured on AMD Zen 1).

@njit(cache=True, error_model="numpy")
def _astrometric_forms(ax, ay, asx, asy, arho, mx, my, t, q_form, det):
    """Quadratic forms and covariance determinants of astrometric points.
    With the covariance [[vx, c], [c, vy]], c = rho sqrt(vx vy) and
    det = vx vy (1 - rho^2), the form is (dx^2 vy - 2 c dx dy + dy^2 vx) / det:
    one division and one root per point."""
    for j in range(q_form.size):
        vx = _variance(asx[j], t, j)
        vy = _variance(asy[j], t, j)
        rho = arho[j]
        dx = ax[j] - mx[j]
        dy = ay[j] - my[j]
        vxy = vx * vy
        det[j] = vxy * (1.0 - rho * rho)
        q_form[j] = (dx * dx * vy - 2.0 * rho * math.sqrt(vxy) * dx * dy
                     + dy * dy * vx) / det[j]


@njit(cache=True, error_model="numpy")
def _velocity_forms(vv, vs, mv, t, q_form, det):
    """Quadratic forms and variances of velocity points."""
    for j in range(q_form.size):
        var = _variance(vs[j], t, j)
        dv = vv[j] - mv[j]
        q_form[j] = dv * dv / var
        det[j] = var


@njit(cache=True, error_model="numpy")
def _point_densities(q_form, det, ndim, t, out):
    """ln densities of points in ndim dimensions from their quadratic forms
    and covariance determinants."""
    log_c = 0.5 * ndim * _LOG_2PI
    for j in range(out.size):
        out[j] = _point_density(q_form[j], log_c + 0.5 * log(det[j]), ndim, t, j)


@njit(cache=True)
def _star_model(s, full, d):
    """(bound, n astrometric rows, n velocity rows, model x, y, v) of star s."""
    na = d.astro_first[s + 1] - d.astro_first[s]
    nv = d.vel_first[s + 1] - d.vel_first[s]
    model = np.empty((3, max(na, nv)))
    mx, my, mv = model[0, :na], model[1, :na], model[2, :nv]
    bound = star_predict(s, full, d, mx, my, mv)
    return bound, na, nv, mx, my, mv


@njit(cache=True, error_model="numpy", fastmath={"contract"})
def star_loglike(s, full, d):
    """ln L_s: the log-likelihood of star s's data.  The point loops are
    branch-free and vectorise; their terms are summed afterwards in order."""
    bound, na, nv, mx, my, mv = _star_model(s, full, d)
    if not bound:
        return -np.inf
    terms = _instrument_terms(full, d)
    # slices indexed from 0: the compiler sees non-negative, affine indices
    a0 = d.astro_first[s]
    ax, ay = d.ax[a0:a0 + na], d.ay[a0:a0 + na]
    asx, asy, arho = d.asx[a0:a0 + na], d.asy[a0:a0 + na], d.arho[a0:a0 + na]
    t = _terms_per_row(terms, d.ainst[a0:a0 + na])
    scratch = np.empty((3, na + nv))
    q_form, det, point = scratch[0], scratch[1], scratch[2]
    _astrometric_forms(ax, ay, asx, asy, arho, mx, my, t, q_form[:na], det[:na])
    _point_densities(q_form[:na], det[:na], 2.0, t, point[:na])
    v0 = d.vel_first[s]
    t = _terms_per_row(terms, d.vinst[v0:v0 + nv])
    _velocity_forms(d.vv[v0:v0 + nv], d.vs[v0:v0 + nv], mv, t, q_form[na:], det[na:])
    _point_densities(q_form[na:], det[na:], 1.0, t, point[na:])
    total = 0.0
    for j in range(na + nv):
        total += point[j]
    return total


@njit(cache=True)
def star_share(s, d):
    """Star s's fraction of all data rows (its term's cost in full evaluations)."""
    n_all = d.astro_first[d.astro_first.size - 1] + d.vel_first[d.vel_first.size - 1]
    n_s = (d.astro_first[s + 1] - d.astro_first[s]) + (d.vel_first[s + 1] - d.vel_first[s])
    return n_s / max(n_all, 1)


@njit(cache=True)
def all_star_loglikes(full, d, out):
    for s in range(out.size):
        out[s] = star_loglike(s, full, d)


@njit(cache=True)
def star_residuals(s, full, d, out):
    """Whitened residuals of star s (2 per astrometric epoch, 1 per velocity)
    with the current error model, outlier mixture ignored: their sum of
    squares is the chi^2 of the star."""
    bound, na, nv, mx, my, mv = _star_model(s, full, d)
    if not bound:
        out[:] = 1e6          # no bound orbit: a large, finite misfit for least squares
        return
    terms = _instrument_terms(full, d)
    a0 = d.astro_first[s]
    t = _terms_per_row(terms, d.ainst[a0:a0 + na])
    for k in range(na):
        r = a0 + k
        zx = (d.ax[r] - mx[k]) / _error(d.asx[r], t, k)
        zy = (d.ay[r] - my[k]) / _error(d.asy[r], t, k)
        rho = d.arho[r]
        out[2 * k] = zx
        out[2 * k + 1] = (zy - rho * zx) / math.sqrt(1.0 - rho * rho)
    v0 = d.vel_first[s]
    t = _terms_per_row(terms, d.vinst[v0:v0 + nv])
    for k in range(nv):
        r = v0 + k
        out[2 * na + k] = (d.vv[r] - mv[k]) / _error(d.vs[r], t, k)


# ---------------------------------------------------------------- Python face

def build_data(campaign, layout):
    """DataArrays for a campaign under a layout."""
    inst_names = list(campaign.instruments)
    inst_of = {name: k for k, name in enumerate(inst_names)}
    star_of = {name: k for k, name in enumerate(campaign.stars)}
    ast, vel = campaign.astrometry, campaign.velocities
    a_star = np.array([star_of[s] for s in ast.star], dtype=np.int64)
    v_star = np.array([star_of[s] for s in vel.star], dtype=np.int64)
    if np.any(np.diff(a_star) < 0) or np.any(np.diff(v_star) < 0):
        raise ValueError("data rows must be sorted by star in campaign order")
    n_star = len(campaign.stars)
    astro_first = np.searchsorted(a_star, np.arange(n_star + 1)).astype(np.int64)
    vel_first = np.searchsorted(v_star, np.arange(n_star + 1)).astype(np.int64)
    obs_t, need_v, obs_first = [], [], [0]
    for s in range(n_star):
        ta = ast.epoch_yr[astro_first[s]:astro_first[s + 1]]
        tv = vel.epoch_yr[vel_first[s]:vel_first[s + 1]]
        n = ta.size + tv.size
        pad = np.full(padded_size(n) - n, tv[-1] if tv.size else ta[-1]) if n else np.empty(0)
        obs_t += [ta, tv, pad]
        need_v += [np.zeros(ta.size, bool), np.ones(tv.size, bool), np.zeros(pad.size, bool)]
        obs_first.append(obs_first[-1] + n + pad.size)

    def index_of(suffix):
        out = np.full(len(inst_names), -1, dtype=np.int64)
        for k, name in enumerate(inst_names):
            key = f"{name}.{suffix}"
            if key in layout.names:
                out[k] = layout.index(key)
        return out

    jitter = np.maximum(index_of("jitter_mas"), index_of("jitter_km_s"))
    return DataArrays(
        dynamics=KIND_BY_NAME[campaign.dynamics], t_ref=float(campaign.reference_epoch_yr),
        star_offset=np.array([layout.star_offset(s) for s in range(n_star)], dtype=np.int64),
        obs_first=np.array(obs_first, dtype=np.int64), astro_first=astro_first,
        vel_first=vel_first, obs_t=np.concatenate(obs_t) if obs_t else np.empty(0),
        obs_need_v=np.concatenate(need_v) if need_v else np.empty(0, bool),
        ax=np.asarray(ast.x_mas, float), ay=np.asarray(ast.y_mas, float),
        asx=np.asarray(ast.x_err_mas, float), asy=np.asarray(ast.y_err_mas, float),
        arho=np.asarray(ast.rho, float),
        ainst=np.array([inst_of[i] for i in ast.instrument], dtype=np.int64),
        vv=np.asarray(vel.v_km_s, float), vs=np.asarray(vel.v_err_km_s, float),
        vinst=np.array([inst_of[i] for i in vel.instrument], dtype=np.int64),
        inst_offx=index_of("offset_x_mas"), inst_offy=index_of("offset_y_mas"),
        inst_zp=index_of("zero_point_km_s"), inst_scale=index_of("error_scale"),
        inst_jitter=jitter, inst_outlier=index_of("outlier_fraction"),
        inst_width=np.array([campaign.instruments[n].outlier_width for n in inst_names]))


class JointModel:
    """The joint model of one variant: layout, data and the compiled likelihood."""

    def __init__(self, campaign, variant_name):
        self.campaign = campaign
        self.layout = build_layout(campaign, variant_name)
        self.data = build_data(campaign, self.layout)
        self.n_star = len(campaign.stars)

    def full(self, theta):
        return self.layout.full_vector(np.asarray(theta, dtype=float))

    def star_loglikes(self, theta):
        out = np.empty(self.n_star)
        all_star_loglikes(self.full(theta), self.data, out)
        return out

    def loglike(self, theta):
        return float(self.star_loglikes(theta).sum())

    def n_points(self, s):
        """Number of data points (2 per astrometric epoch, 1 per velocity) of star s."""
        d = self.data
        return 2 * (d.astro_first[s + 1] - d.astro_first[s]) + (d.vel_first[s + 1] - d.vel_first[s])

    def residuals(self, theta, s):
        out = np.empty(self.n_points(s))
        star_residuals(s, self.full(theta), self.data, out)
        return out

    def star_elements(self, theta, s):
        """Physics element dict of star s (t_p from the phase and radial period)."""
        full = self.full(theta)
        orbit = np.empty(ORBIT_SIZE)
        star_orbit(s, full, self.data, orbit)
        o = self.layout.star_offset(s)
        return {"period_yr": float(full[o]), "e": float(full[o + 1]),
                "i_deg": float(np.degrees(np.arccos(np.clip(full[o + 2], -1, 1)))),
                "Omega_deg": float(full[o + 3] % 360.0), "omega_deg": float(full[o + 4] % 360.0),
                "t_p_yr": float(orbit[T_P])}

    def predictions(self, theta, s):
        """(x, y, v) model values at star s's rows."""
        d = self.data
        na = d.astro_first[s + 1] - d.astro_first[s]
        nv = d.vel_first[s + 1] - d.vel_first[s]
        out = np.empty(na), np.empty(na), np.empty(nv)
        star_predict(s, self.full(theta), d, *out)
        return out


__all__ = ["DataArrays", "JointModel", "build_data", "star_loglike", "star_predict",
           "star_residuals", "all_star_loglikes", "N_GLOBAL", "N_STAR"]
