"""Deterministic prefit: locate the posterior mode(s) and their covariance.

1. Per star, multi-start.  Starts fill (log P, e, phase) with a scrambled
   Sobol sequence; for each, the Keplerian sky orbit is linear in the
   Thiele-Innes constants, which are solved for exactly (variable projection),
   so only three parameters are searched.  The constants give (a, i, Omega,
   omega) up to the mirror pair; the velocities, linear in the distance for
   a given orbit, pick the member with a positive distance.  The best distinct
   solutions are polished with the full model (1PN, Roemer delay, redshift),
   the star's own mass and distance free.  Solutions that remain within
   MODE_DCHI2 of the best but differ are kept as separate modes; stars
   without velocities always carry the mirror mode.
2. Joint: the mass and distance start from the stars' own values; one
   least-squares fit of all free parameters with the errors as quoted.
3. Newton's method on the full log posterior (error scales, jitters and
   outlier fractions included) in the unconstrained fit coordinates phi of
   priors.py, with a finite-difference Hessian assembled block by block
   (given the globals the stars are independent, so the Hessian is an
   arrowhead of small blocks), after each star's block has been optimised
   alone.  The Hessian at the mode gives the Laplace covariance and the
   Laplace evidence
       ln Z ~ ln L + ln prior(phi) + d/2 ln 2 pi - 1/2 ln det H.
"""

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import optimize
from scipy.stats import qmc

from ..physics import constants as const
from ..physics.elements import elements_from_thiele_innes
from ..physics.kepler import solve_kepler
from .likelihood import JointModel, star_loglike, star_residuals

MODE_DCHI2 = 9.0            # solutions closer than this to the best are rival modes
POLISHED_STARTS = 6        # distinct candidate orbits per star polished with the full model
_ROBUST_SCALE = 3.0         # soft-L1 loss scale (sigma) for the least-squares stages


@dataclass
class StarMode:
    values: np.ndarray      # (period_yr, e, cos_i, Omega_deg, omega_deg, phase)
    mass_msun: float
    distance_pc: float
    chi2: float


@dataclass
class Prefit:
    theta: np.ndarray               # posterior mode, free-parameter vector
    phi: np.ndarray                 # the same in fit coordinates
    centres: np.ndarray             # proposal centres (the mode, or a pilot chain's mean)
    log_like: float
    log_prior: float                # ln prior density in fit coordinates at the mode
    hessian: np.ndarray             # of -ln posterior in fit coordinates at the mode
    covariance: np.ndarray          # its inverse: the Laplace covariance of phi
    laplace_log_z: float
    star_modes: list                # list (per star) of lists of StarMode
    multimodal: list                # indices of stars with more than one mode
    chi2: dict                      # instrument -> dict(chi2, n, reduced)
    blocks: list = field(default_factory=list)   # proposal blocks, see proposal_blocks
    warnings: list = field(default_factory=list)

    @property
    def sigma(self):
        """Laplace standard deviations of the fit coordinates."""
        return np.sqrt(np.diag(self.covariance))


# ---------------------------------------------------------------- priors on the free vector

def log_prior(model: JointModel, theta):
    """ln prior density of a free vector (parameter values)."""
    return model.layout.free_prior_arrays().log_prior(theta)


def _bounds(model):
    lo, hi = [], []
    for prior in model.layout.free_priors:
        if prior.period > 0 or prior.kind == "gaussian":
            lo.append(-np.inf)
            hi.append(np.inf)
        else:
            lo.append(prior.a)
            hi.append(prior.b)
    return np.array(lo), np.array(hi)


# ---------------------------------------------------------------- stage 1: one star

def _star_data(model, s):
    d = model.data
    a = slice(d.astro_first[s], d.astro_first[s + 1])
    v = slice(d.vel_first[s], d.vel_first[s + 1])
    t_astro = d.obs_first[s] + (a.stop - a.start)     # velocity epochs follow the astrometry
    t_vel = t_astro + (v.stop - v.start)
    return (d.obs_t[d.obs_first[s]:t_astro], d.ax[a], d.ay[a], d.asx[a], d.asy[a],
            d.obs_t[t_astro:t_vel], d.vv[v], d.vs[v])


def _projected_fit(log_p, e, phase, data, t_ref):
    """Residuals and Thiele-Innes solution of the Keplerian sky orbit with the
    constants (and a position offset) solved linearly."""
    t, x, y, sx, sy = data[:5]
    period = math.exp(log_p)
    mean = 2.0 * math.pi * ((t - t_ref) / period + phase)
    big_e = solve_kepler(mean, min(max(e, 0.0), 0.99))
    X = np.cos(big_e) - e
    Y = math.sqrt(max(1.0 - e * e, 1e-12)) * np.sin(big_e)
    design = np.column_stack([X, Y, np.ones_like(X)])
    cx, *_ = np.linalg.lstsq(design / sx[:, None], x / sx, rcond=None)
    cy, *_ = np.linalg.lstsq(design / sy[:, None], y / sy, rcond=None)
    res = np.concatenate([(x - design @ cx) / sx, (y - design @ cy) / sy])
    # East = B X + G Y, North = A X + F Y
    return res, (cy[0], cx[0], cy[1], cx[1])


def _kepler_velocity_shape(period, e, phase, i, big_omega, omega, a_mas, t, t_ref):
    """Keplerian v_z (km/s) per unit distance (pc) at epochs t."""
    n = 2.0 * math.pi / period
    big_e = solve_kepler(n * (t - t_ref) + 2.0 * math.pi * phase, e)
    edot = n / (1.0 - e * np.cos(big_e))
    xdot = -np.sin(big_e) * edot
    ydot = math.sqrt(1.0 - e * e) * np.cos(big_e) * edot
    cz, hz = math.sin(omega) * math.sin(i), math.cos(omega) * math.sin(i)
    return a_mas / 1000.0 * (cz * xdot + hz * ydot) * const.KM_S_PER_AU_YR


def _grid_chi2(log_p, e, phase, data, t_ref):
    """chi^2 of the projected sky-orbit fit at many (log P, e, phase) at once."""
    t, x, y, sx, sy = data[:5]
    period = np.exp(log_p)[:, None]
    mean = 2.0 * math.pi * ((t[None, :] - t_ref) / period + phase[:, None])
    ecc = e[:, None]
    big_e = solve_kepler(mean, np.broadcast_to(ecc, mean.shape))
    basis = np.stack([np.cos(big_e) - ecc, np.sqrt(1.0 - ecc**2) * np.sin(big_e),
                      np.ones_like(big_e)], axis=-1)          # (K, n, 3)
    chi2 = np.zeros(len(log_p))
    for obs, sig in ((x, sx), (y, sy)):
        w = basis / sig[None, :, None]
        b = obs / sig
        normal = np.einsum("kni,knj->kij", w, w) + 1e-12 * np.eye(3)
        rhs = np.einsum("kni,n->ki", w, b)
        coef = np.linalg.solve(normal, rhs[..., None])[..., 0]
        chi2 += np.sum((b[None, :] - np.einsum("kni,ki->kn", w, coef)) ** 2, axis=1)
    return chi2


_GRID_POINTS = 4096


def _star_starts(model, s, n_starts, rng_seed, r0_guess):
    """Candidate Keplerian solutions of star s: the best distinct points of a
    Sobol grid over (log P, e, phase), each refined by least squares."""
    o = model.layout.star_offset(s)
    if np.all(np.isfinite(model.layout.fixed_full[o:o + 6])):
        return []
    data = _star_data(model, s)
    t_ref = model.data.t_ref
    prior_p = model.campaign.star_priors[model.campaign.stars[s]]["period_yr"]
    span = max(np.ptp(np.r_[data[0], data[5]]), 1.0)
    if prior_p.kind == "fixed":
        lo = hi = math.log(prior_p.a)
    else:
        lo = math.log(max(prior_p.a, 0.03 * span))
        hi = min(math.log(prior_p.b), math.log(max(50.0 * span, math.exp(lo) * 1.01)))
    grid = qmc.Sobol(3, scramble=True, seed=rng_seed).random_base2(
        int(math.log2(_GRID_POINTS)))
    g_lp, g_e, g_ph = lo + grid[:, 0] * (hi - lo), 0.95 * grid[:, 1], grid[:, 2]
    chi2 = np.concatenate([_grid_chi2(g_lp[k:k + 512], g_e[k:k + 512], g_ph[k:k + 512],
                                      data, t_ref) for k in range(0, _GRID_POINTS, 512)])
    seeds = []
    for k in np.argsort(chi2):
        point = np.array([g_lp[k], g_e[k], g_ph[k]])
        if all(abs(point[0] - q[0]) > 0.1 or abs(point[1] - q[1]) > 0.1
               or abs((point[2] - q[2] + 0.5) % 1.0 - 0.5) > 0.05 for q in seeds):
            seeds.append(point)
        if len(seeds) == n_starts:
            break
    out = []
    for x0 in seeds:
        try:
            fit = optimize.least_squares(
                lambda p: _projected_fit(p[0], p[1], p[2], data, t_ref)[0], x0,
                bounds=([lo - 0.5, 0.0, -np.inf], [hi + 0.5, 0.97, np.inf]),
                loss="soft_l1", f_scale=_ROBUST_SCALE, max_nfev=100)
        except (ValueError, ArithmeticError):
            continue
        log_p, e, phase = fit.x
        _, (A, B, F, G) = _projected_fit(log_p, e, phase, data, t_ref)
        a_mas, i_deg, big_omega, omega = elements_from_thiele_innes(A, B, F, G)
        period = math.exp(log_p)
        for mirror in (0.0, 180.0):
            om_big, om = (big_omega + mirror) % 360.0, (omega + mirror) % 360.0
            r0 = r0_guess
            if data[5].size >= 2:
                g = _kepler_velocity_shape(period, e, phase % 1.0, math.radians(i_deg),
                                           math.radians(om_big), math.radians(om), a_mas,
                                           data[5], t_ref)
                design = np.column_stack([g, np.ones_like(g)]) / data[7][:, None]
                coef, *_ = np.linalg.lstsq(design, data[6] / data[7], rcond=None)
                if coef[0] <= 0:
                    continue          # this mirror needs a negative distance
                r0 = float(coef[0])
            mass = (a_mas * r0 / 1000.0) ** 3 / period**2 * 4.0 * math.pi**2 / const.GM_SUN
            out.append(StarMode(np.array([period, e, math.cos(math.radians(i_deg)), om_big, om,
                                          phase % 1.0]), mass, r0, 2.0 * fit.cost))
    return out


def _state_starts(model, s, mass, distance):
    """Candidate orbits of star s from its local state vector at the middle of
    its data: position, velocity and sky acceleration from a quadratic fit of
    the astrometry, the line-of-sight velocity from a linear fit of the
    velocities, and the depth z from the acceleration's size (a = G M / r^2),
    or a few trial depths when the acceleration is not measured.  These find
    long-period stars seen over a short arc, where the sky-orbit fit alone is
    degenerate."""
    from ..physics.elements import elements_from_state
    t, x, y, sx, sy, tv, v, sv = _star_data(model, s)
    if t.size < 4:
        return []
    t_mid = 0.5 * (t.min() + t.max())
    design = np.column_stack([np.ones_like(t), t - t_mid, 0.5 * (t - t_mid) ** 2])
    px, *_ = np.linalg.lstsq(design / sx[:, None], x / sx, rcond=None)
    py, *_ = np.linalg.lstsq(design / sy[:, None], y / sy, rcond=None)
    au = distance / 1000.0                        # AU per mas
    pos = np.array([px[0], py[0]]) * au
    vel = np.array([px[1], py[1]]) * au
    acc = np.array([px[2], py[2]]) * au
    vz = 0.0
    if tv.size >= 2:
        dv = np.column_stack([np.ones_like(tv), tv - t_mid]) / sv[:, None]
        pv, *_ = np.linalg.lstsq(dv, v / sv, rcond=None)
        vz = pv[0] / const.KM_S_PER_AU_YR
    rho = float(np.hypot(*pos))
    mu = const.GM_SUN * mass
    depths = [0.0, 0.5 * rho, rho, 2.0 * rho]
    a_sky = float(np.hypot(*acc))
    if a_sky > 0:
        r = (mu * rho / a_sky) ** (1.0 / 3.0)
        if r > rho:
            depths.append(math.sqrt(r * r - rho * rho))
    out = []
    for depth in depths:
        for sign in ((1.0, -1.0) if depth > 0 else (1.0,)):
            try:
                el = elements_from_state(np.r_[pos, sign * depth], np.r_[vel, vz], mass, t_mid)
            except ValueError:
                continue
            if not (el["e"] < 0.97 and el["period_yr"] > 0):
                continue
            phase = ((model.data.t_ref - el["t_p_yr"]) / el["period_yr"]) % 1.0
            out.append(StarMode(np.array([el["period_yr"], el["e"],
                                          math.cos(math.radians(el["i_deg"])), el["Omega_deg"],
                                          el["omega_deg"], phase]), mass, distance, math.inf))
    return out


def _star_polish(model, s, start, mass, distance, free_mass, free_distance):
    """Full-model least squares of one star; its own mass and distance free or
    held at the given values.  Returns (StarMode, sigma of ln M, sigma of ln R0)."""
    lay = model.layout
    o = lay.star_offset(s)
    base = lay.full_vector(model_theta_centre(model))
    fixed = np.isfinite(lay.fixed_full[o:o + 6])
    base[o:o + 6] = np.where(fixed, lay.fixed_full[o:o + 6], start.values)
    vary = [o + j for j in range(6) if not fixed[j]]
    lo = np.array([max(0.01, start.values[0] / 3.0), 0.0, -1.0, -np.inf, -np.inf, -np.inf])
    hi = np.array([start.values[0] * 3.0, 0.97, 1.0, np.inf, np.inf, np.inf])
    lo, hi, x0 = list(lo[~fixed]), list(hi[~fixed]), [base[k] for k in vary]
    extra = []
    for flag, value in ((free_mass, mass), (free_distance, distance)):
        if flag:
            extra.append(len(x0))
            lo.append(math.log(value) - 3.0)
            hi.append(math.log(value) + 3.0)
            x0.append(math.log(value))
    lo, hi = np.array(lo), np.array(hi)
    x0 = np.clip(x0, np.where(np.isfinite(lo), lo + 1e-9, lo), np.where(np.isfinite(hi), hi - 1e-9, hi))
    n_pts = model.n_points(s)

    def unpack(p):
        full = base.copy()
        full[vary] = p[:len(vary)]
        full[0] = math.exp(p[extra[0]]) if free_mass else mass
        full[1] = math.exp(p[extra[-1]]) if free_distance else distance
        return full

    def residuals(p):
        out = np.empty(n_pts)
        star_residuals(s, unpack(p), model.data, out)
        return out

    try:
        fit = optimize.least_squares(residuals, x0, bounds=(lo, hi), loss="soft_l1",
                                     f_scale=_ROBUST_SCALE, max_nfev=400)
    except (ValueError, ArithmeticError):
        return None, math.inf, math.inf
    full = unpack(fit.x)
    values = full[o:o + 6].copy()
    values[3] %= 360.0
    values[4] %= 360.0
    values[5] %= 1.0
    sig = [math.inf, math.inf]
    try:
        cov = np.linalg.inv(fit.jac.T @ fit.jac)
        for j, k in enumerate(extra):
            sig[j if free_mass else 1] = math.sqrt(max(cov[k, k], 0.0))
    except np.linalg.LinAlgError:
        pass
    mode = StarMode(values, full[0], full[1], float(np.sum(residuals(fit.x) ** 2)))
    return mode, sig[0], sig[1]


def _distinct(a: StarMode, b: StarMode):
    """Whether two solutions of one star are different orbits."""
    if abs(math.log(a.values[0] / b.values[0])) > 0.05 or abs(a.values[1] - b.values[1]) > 0.05:
        return True
    for k in (3, 4):
        if abs((a.values[k] - b.values[k] + 180.0) % 360.0 - 180.0) > 20.0:
            return True
    return abs(a.values[2] - b.values[2]) > 0.1


def _pick_distinct(modes, limit):
    out = []
    for m in modes:
        if all(_distinct(m, p) for p in out):
            out.append(m)
        if len(out) == limit:
            break
    return out


def _rescaled(mode, mass, distance):
    """The same sky orbit (angular size, t_p) around another mass and distance:
    the period follows from Kepler's third law."""
    a_au = (const.GM_SUN * mode.mass_msun * mode.values[0] ** 2 / (4 * math.pi**2)) ** (1 / 3)
    a_au *= distance / mode.distance_pc
    period = 2.0 * math.pi * math.sqrt(a_au**3 / (const.GM_SUN * mass))
    values = mode.values.copy()
    values[0] = period
    values[5] = (mode.values[5] * mode.values[0] / period) % 1.0
    return StarMode(values, mass, distance, mode.chi2)


def star_modes(model, s, candidates, mass, distance, free_mass, free_distance):
    """Polished distinct solutions of star s within MODE_DCHI2 of the best, best
    first, with the sigma of ln M and ln R0 of the best one."""
    has_v = model.data.vel_first[s + 1] > model.data.vel_first[s]
    lay = model.layout
    o = lay.star_offset(s)
    if np.all(np.isfinite(lay.fixed_full[o:o + 6])):     # nothing of this star is free
        return [StarMode(lay.fixed_full[o:o + 6].copy(), mass, distance, math.nan)], \
            math.inf, math.inf
    polished = []
    picked = _pick_distinct(sorted(candidates, key=lambda m: m.chi2), POLISHED_STARTS)
    if not free_mass:
        picked = [_rescaled(c, mass, distance) for c in picked]
        picked += _state_starts(model, s, mass, distance)
    for cand in picked:
        mode, s_m, s_r = _star_polish(model, s, cand, cand.mass_msun if free_mass else mass,
                                      cand.distance_pc if free_distance else distance,
                                      free_mass, free_distance and has_v)
        if mode is not None:
            polished.append((mode, s_m, s_r))
    polished.sort(key=lambda p: p[0].chi2)
    if not polished:
        return [], math.inf, math.inf
    best = polished[0][0].chi2
    modes = _pick_distinct([p[0] for p in polished if p[0].chi2 - best <= MODE_DCHI2], 4)
    if not has_v:
        twin = StarMode(modes[0].values.copy(), modes[0].mass_msun, modes[0].distance_pc,
                        modes[0].chi2)
        twin.values[3] = (twin.values[3] + 180.0) % 360.0
        twin.values[4] = (twin.values[4] + 180.0) % 360.0
        if all(_distinct(twin, q) for q in modes):
            modes.insert(1, twin)
    return modes, polished[0][1], polished[0][2]


def _combine(values, sigmas):
    """Inverse-variance weighted median of per-star estimates (robust to a few
    stars whose own estimate is off)."""
    values, sigmas = np.asarray(values, float), np.asarray(sigmas, float)
    ok = np.isfinite(values) & np.isfinite(sigmas) & (sigmas > 0)
    if not np.any(ok):
        return math.nan
    v, w = values[ok], 1.0 / sigmas[ok] ** 2
    order = np.argsort(v)
    cum = np.cumsum(w[order])
    return float(v[order][np.searchsorted(cum, 0.5 * cum[-1])])


# ---------------------------------------------------------------- stages 2 and 3: joint

def model_theta_centre(model):
    """Free vector at the priors' centres."""
    return np.array([p.centre for p in model.layout.free_priors])


def _joint_start(model, modes, mass, distance):
    lay = model.layout
    full = lay.full_vector(model_theta_centre(model))
    for s, m in enumerate(modes):
        if m:
            o = lay.star_offset(s)
            full[o:o + 6] = m[0].values
    if "mass_msun" in lay.free_names:
        full[0] = mass
    if "distance_pc" in lay.free_names:
        full[1] = distance
    theta = full[lay.free]
    lo, hi = _bounds(model)
    span = np.where(np.isfinite(hi - lo), hi - lo, 0.0)
    return np.clip(theta, lo + 1e-9 * span, hi - 1e-9 * span)


def _joint_least_squares(model, theta0):
    """All free parameters by least squares with the quoted errors (error-model
    nuisances held at their start values)."""
    lay = model.layout
    names = lay.free_names
    error_terms = [k for k, n in enumerate(names)
                   if n.endswith((".error_scale", ".jitter_mas", ".jitter_km_s", ".outlier_fraction"))]
    vary = np.array([k for k in range(len(names)) if k not in error_terms], dtype=int)
    lo, hi = _bounds(model)
    n_pts = [model.n_points(s) for s in range(model.n_star)]

    def residuals(p):
        theta = theta0.copy()
        theta[vary] = p
        full = lay.full_vector(theta)
        out = []
        for s in range(model.n_star):
            r = np.empty(n_pts[s])
            star_residuals(s, full, model.data, r)
            out.append(r)
        return np.concatenate(out)

    # sparsity: star s's residuals depend on the global block and its own block
    n_glob = lay.block_start[1]
    rows = sum(n_pts)
    sparsity = np.zeros((rows, vary.size), dtype=bool)
    pos = {k: j for j, k in enumerate(vary)}
    r0 = 0
    for s in range(model.n_star):
        cols = [pos[k] for k in list(range(n_glob)) + list(range(lay.block_start[1 + s],
                                                                   lay.block_start[2 + s]))
                if k in pos]
        sparsity[r0:r0 + n_pts[s], cols] = True
        r0 += n_pts[s]
    fit = optimize.least_squares(residuals, theta0[vary], bounds=(lo[vary], hi[vary]),
                                 jac_sparsity=sparsity, loss="soft_l1", f_scale=_ROBUST_SCALE,
                                 x_scale="jac", max_nfev=300)
    theta = theta0.copy()
    theta[vary] = fit.x
    return theta


class FitPosterior:
    """-ln posterior in fit coordinates, split into the global block's prior
    term and one term per star (its likelihood and its block's prior)."""

    def __init__(self, model):
        self.model = model
        self.lay = model.layout
        self.fp = self.lay.free_prior_arrays()
        self.theta_buf = np.empty(self.lay.n_free)

    def full(self, phi):
        from ..inference.priors import from_fit_vector
        from_fit_vector(self.fp.kind, self.fp.a, self.fp.b, self.fp.period, phi, self.theta_buf)
        return self.lay.full_vector(self.theta_buf)

    def global_term(self, phi):
        return -self.fp.log_prior_fit(phi, 0, int(self.lay.block_start[1]))

    def star_term(self, phi, s):
        lo, hi = int(self.lay.block_start[1 + s]), int(self.lay.block_start[2 + s])
        prior = self.fp.log_prior_fit(phi, lo, hi)
        if not np.isfinite(prior):
            return np.inf
        return -star_loglike(s, self.full(phi), self.model.data) - prior

    def __call__(self, phi):
        value = self.global_term(phi)
        if not np.isfinite(value):
            return np.inf
        for s in range(self.model.n_star):
            value += self.star_term(phi, s)
        return value


def block_hessian(post, phi, steps):
    """Gradient and finite-difference Hessian of -ln posterior at phi,
    assembled from per-star blocks (each star touches the globals and itself)."""
    lay = post.lay
    d = phi.size
    grad = np.zeros(d)
    hess = np.zeros((d, d))
    n_glob = int(lay.block_start[1])
    groups = [(list(range(n_glob)), post.global_term)]
    for s in range(post.model.n_star):
        idx = list(range(n_glob)) + list(range(lay.block_start[1 + s], lay.block_start[2 + s]))
        groups.append((idx, lambda p, s=s: post.star_term(p, s)))
    for idx, f in groups:
        g, h = _fd_hessian(f, phi, idx, steps)
        grad[idx] += g
        hess[np.ix_(idx, idx)] += h
    return grad, hess


def _fd_hessian(f, x, idx, steps):
    """Central-difference gradient and Hessian of f over coordinates idx."""
    m = len(idx)
    f0 = f(x)
    g = np.zeros(m)
    h = np.zeros((m, m))
    cache = {}

    def at(offsets):
        key = tuple(sorted(offsets.items()))
        if key not in cache:
            y = x.copy()
            for k, v in offsets.items():
                y[idx[k]] += v * steps[idx[k]]
            cache[key] = f(y)
        return cache[key]

    for a in range(m):
        fp, fm = at({a: 1}), at({a: -1})
        g[a] = (fp - fm) / (2.0 * steps[idx[a]])
        h[a, a] = (fp - 2.0 * f0 + fm) / steps[idx[a]] ** 2
        for b in range(a):
            v = at({a: 1, b: 1}) - at({a: 1, b: -1}) - at({a: -1, b: 1}) + at({a: -1, b: -1})
            h[a, b] = h[b, a] = v / (4.0 * steps[idx[a]] * steps[idx[b]])
    return g, h


def _conditional_scale(hess, fallback):
    """Per-coordinate scale 1/sqrt(H_ii): the width with the others held fixed."""
    diag = np.diag(hess)
    return np.where(diag > 0, 1.0 / np.sqrt(np.maximum(diag, 1e-300)), fallback)


# Newton stops once a step gains less than this (nats): the mode then sits
# well inside the sampler's own ln Z error.
NEWTON_GAIN_NATS = 0.02


def _newton(post, phi, steps, iterations=15):
    """Newton's method on -ln posterior with a backtracking line search, in
    coordinates scaled by the conditional widths; the finite-difference steps
    follow those widths (a fifth of each).  Returns (mode, Hessian)."""
    value = post(phi)
    grad, hess = block_hessian(post, phi, steps)
    for _ in range(iterations):
        scale = _conditional_scale(hess, 5.0 * steps)
        w, v = np.linalg.eigh(hess * np.outer(scale, scale))
        # |w| keeps every direction downhill (saddle-free Newton); the floor
        # is tiny so that strongly correlated pairs (mass and distance) still
        # get their full step along the degenerate direction
        w = np.maximum(np.abs(w), 1e-10 * np.max(np.abs(w)))
        step = -scale * (v @ ((v.T @ (grad * scale)) / w))
        predicted = -0.5 * float(grad @ step)
        t = 1.0
        while t > 1e-4:
            trial = phi + t * step
            new = post(trial)
            if new < value:
                break
            t *= 0.5
        else:
            break
        phi, improvement, value = trial, value - new, new
        steps = 0.2 * scale
        grad, hess = block_hessian(post, phi, steps)
        if improvement < NEWTON_GAIN_NATS or (improvement < 1e-4 and predicted < 1e-3):
            break
    steps = 0.2 * _conditional_scale(hess, steps / 0.2)
    grad, hess = block_hessian(post, phi, steps)
    return phi, hess


def laplace_at_mode(post, phi, steps):
    """Newton from phi to the nearby mode of the posterior in fit coordinates;
    returns (mode, Hessian, covariance, Laplace ln Z, warnings).  The Laplace
    estimate is ln L + ln prior + d/2 ln 2 pi - 1/2 ln det H at the mode."""
    warnings = []
    phi, hess = _newton(post, phi, steps)
    try:
        cov = np.linalg.inv(hess)
        sign, logdet = np.linalg.slogdet(hess)
        if sign <= 0 or np.any(np.diag(cov) <= 0):
            raise np.linalg.LinAlgError
    except np.linalg.LinAlgError:
        # regularise in correlation form: raw eigenvalues span many decades
        sc = _conditional_scale(hess, np.ones(phi.size))
        w, v = np.linalg.eigh(hess * np.outer(sc, sc))
        warnings.append("the Hessian at the mode is not positive definite "
                        f"(smallest scaled eigenvalue {w.min():.3g}); the Laplace "
                        "covariance was regularised")
        w = np.maximum(w, 1e-6)
        hess = (v * w) @ v.T / np.outer(sc, sc)
        cov = ((v / w) @ v.T) * np.outer(sc, sc)
        logdet = float(np.sum(np.log(w)) - 2.0 * np.sum(np.log(sc)))
    log_z = -post(phi) + 0.5 * phi.size * math.log(2.0 * math.pi) - 0.5 * logdet
    return phi, hess, cov, log_z, warnings


def refine_star(post, phi, s, starts, scale):
    """Minimise star s's term of -ln posterior over its own block, the globals
    held at phi, from each start (star-block vectors in fit coordinates);
    returns the best block vector and its value."""
    blk = post.lay.block_of_star(s)
    sc = scale[blk]
    base = phi.copy()

    def f(z):
        y = base.copy()
        y[blk] = z * sc
        value = post.star_term(y, s)
        return value if np.isfinite(value) else 1e300

    best, best_value = None, np.inf
    for start in starts:
        res = optimize.minimize(f, np.asarray(start) / sc, method="Powell",
                                options={"xtol": 1e-4, "ftol": 1e-10, "maxfev": 4000})
        res = optimize.minimize(f, res.x, method="BFGS", options={"gtol": 1e-6, "maxiter": 200})
        if res.fun < best_value:
            best, best_value = res.x * sc, res.fun
    return best, best_value


# Width calibration: along each principal direction of a block the posterior
# should rise by 2 in -ln p at 2 sigma; where it takes farther (long-period
# stars seen over a short arc have long, curved valleys) that direction of
# the proposal is widened accordingly, up to MAX_WIDENING.
MAX_WIDENING = 20.0


def _width_ratio(f, phi, direction, f0):
    """Distance (in units of `direction`) at which f rises by 2 above f0,
    divided by 2: one for a Gaussian, more for a heavier-tailed valley."""
    t, last = 2.0, 0.0
    while t < 2.0 * MAX_WIDENING:
        rise = f(phi + t * direction) - f0
        if not np.isfinite(rise) or rise >= 2.0:
            break
        last, t = t, t * 1.6
    else:
        return MAX_WIDENING
    lo, hi = last, t
    for _ in range(6):
        mid = 0.5 * (lo + hi)
        rise = f(phi + mid * direction) - f0
        if np.isfinite(rise) and rise < 2.0:
            lo = mid
        else:
            hi = mid
    return max(1.0, 0.25 * (lo + hi))


def proposal_blocks(post, phi, cov):
    """Per block: the slope on the globals and the (conditional) covariance
    the proposal prior uses, the Laplace ones with every principal direction
    widened to the posterior's measured extent.  Block 0 (the globals) is
    calibrated with the stars held fixed.  Returns (blocks, widened count)."""
    lay = post.lay
    ng = int(lay.block_start[1])
    g = slice(0, ng)
    blocks, widened = [], 0
    for b in range(len(lay.block_start) - 1):
        sl = slice(int(lay.block_start[b]), int(lay.block_start[b + 1]))
        n = sl.stop - sl.start
        if b == 0:
            slope, block_cov = np.zeros((n, 0)), cov[g, g]
            f = post
        else:
            slope = np.linalg.solve(cov[g, g], cov[sl, g].T).T if ng else np.zeros((n, 0))
            block_cov = cov[sl, sl] - slope @ cov[sl, g].T if ng else cov[sl, sl]
            f = (lambda y, s=b - 1: post.star_term(y, s))
        if n == 0:
            blocks.append({"slope": slope, "cov": block_cov, "widening": []})
            continue
        w, v = np.linalg.eigh(0.5 * (block_cov + block_cov.T))
        w = np.maximum(w, 1e-300)
        f0 = f(phi)
        ratios = []
        for i in range(n):
            direction = np.zeros(phi.size)
            direction[sl] = v[:, i] * math.sqrt(w[i])
            ratios.append(max(_width_ratio(f, phi, direction, f0),
                              _width_ratio(f, phi, -direction, f0)))
        ratios = np.array(ratios)
        widened += int(np.sum(ratios > 1.2))
        blocks.append({"slope": slope, "cov": (v * (w * ratios**2)) @ v.T,
                       "widening": ratios.tolist()})
    return blocks, widened


def _mode_in_fit(post, s, values):
    """A star mode (six element values) as its free block in fit coordinates."""
    lay = post.lay
    blk = lay.block_of_star(s)
    free = lay.free[blk] - lay.star_offset(s)
    return post.fp.to_fit(values[free], blk.start)


def _initial_steps(fp, phi):
    """Finite-difference steps before any width is known: small in every
    fit coordinate (logit units are O(1); Gaussian ones use their sigma)."""
    steps = np.full(phi.size, 1e-3)
    gauss = (fp.kind == 2) & (fp.period <= 0)
    steps[gauss] = 1e-3 * fp.b[gauss]
    periodic = fp.period > 0
    steps[periodic] = 1e-5 * fp.period[periodic]
    return steps


def mode_evidences(model, prefit, s):
    """Laplace ln Z of each of star s's prefit modes, every parameter free:
    Newton from the joint mode with the star's block set to that mode.
    Their differences predict the posterior mass in each mode (the check
    of the sampler's split between the mirror modes).  The first mode is
    the joint mode itself, whose Laplace evidence the prefit already holds."""
    post = FitPosterior(model)
    steps = 0.2 * prefit.sigma
    blk = model.layout.block_of_star(s)
    out = [float(prefit.laplace_log_z)]
    for mode in prefit.star_modes[s][1:]:
        phi = prefit.phi.copy()
        phi[blk] = _mode_in_fit(post, s, mode.values)
        out.append(float(laplace_at_mode(post, phi, steps)[3]))
    return out


def chi2_by_instrument(model, theta):
    """chi^2, number of points and reduced chi^2 per instrument at theta."""
    d = model.data
    names = list(model.campaign.instruments)
    chi = {n: [0.0, 0] for n in names}
    for s in range(model.n_star):
        r = model.residuals(theta, s)
        na = d.astro_first[s + 1] - d.astro_first[s]
        ainst = d.ainst[d.astro_first[s]:d.astro_first[s + 1]]
        vinst = d.vinst[d.vel_first[s]:d.vel_first[s + 1]]
        for k, inst in enumerate(ainst):
            chi[names[inst]][0] += r[2 * k] ** 2 + r[2 * k + 1] ** 2
            chi[names[inst]][1] += 2
        for k, inst in enumerate(vinst):
            chi[names[inst]][0] += r[2 * na + k] ** 2
            chi[names[inst]][1] += 1
    return {n: {"chi2": c, "n": k, "reduced": c / k if k else math.nan}
            for n, (c, k) in chi.items()}


def run_prefit(model: JointModel, seed=0, n_starts=12):
    """The full prefit of one variant."""
    warnings = []
    lay = model.layout
    free = lay.free_names
    pri = model.campaign.global_priors
    mass0 = lay.fixed_full[0] if "mass_msun" not in free else pri["mass_msun"].centre
    r0 = lay.fixed_full[1] if "distance_pc" not in free else pri["distance_pc"].centre
    cands = [_star_starts(model, s, n_starts, seed + 7919 * s, r0) for s in range(model.n_star)]
    # pass 1: each star with its own mass (and distance, if it has velocities)
    if "mass_msun" in free or "distance_pc" in free:
        first = [star_modes(model, s, cands[s], mass0, r0, "mass_msun" in free,
                            "distance_pc" in free) for s in range(model.n_star)]
        if "distance_pc" in free:
            est = _combine([math.log(m[0][0].distance_pc) for m in first if m[0]],
                           [m[2] for m in first if m[0]])
            r0 = math.exp(est) if math.isfinite(est) else r0
        if "mass_msun" in free:
            est = _combine([math.log(m[0][0].mass_msun * (r0 / m[0][0].distance_pc) ** 3)
                            for m in first if m[0]], [m[1] for m in first if m[0]])
            mass0 = math.exp(est) if math.isfinite(est) else mass0
    # pass 2: every star at the common mass and distance
    modes = [star_modes(model, s, cands[s], mass0, r0, False, False)[0]
             for s in range(model.n_star)]
    for s, m in enumerate(modes):
        if not m:
            warnings.append(f"star {model.campaign.stars[s]}: no starting orbit converged")
    theta = _joint_start(model, modes, mass0, r0)
    theta = _joint_least_squares(model, theta)
    post = FitPosterior(model)
    fp = post.fp
    phi = fp.to_fit(theta)
    steps = _initial_steps(fp, phi)
    _, hess = block_hessian(post, phi, steps)
    scale = _conditional_scale(hess, 5.0 * steps)
    for s, m in enumerate(modes):
        blk = lay.block_of_star(s)
        if blk.stop > blk.start:
            starts = [phi[blk]] + [_mode_in_fit(post, s, x.values) for x in m[1:]]
            phi[blk], _ = refine_star(post, phi, s, starts, scale)
    phi, hess, cov, laplace, notes = laplace_at_mode(post, phi, 0.2 * scale)
    warnings += notes
    blocks, widened = proposal_blocks(post, phi, cov)
    centres = phi.copy()
    theta = fp.from_fit(phi)
    ll = model.loglike(theta)
    lp = fp.log_prior_fit(phi)
    full = lay.full_vector(theta)
    for s, m in enumerate(modes):
        if not m:
            continue
        o = lay.star_offset(s)
        m[0] = StarMode(full[o:o + 6].copy(), full[0], full[1], m[0].chi2)
        blk = lay.block_of_star(s)
        free = lay.free[blk] - o
        for k in range(1, len(m)):       # the other modes, refined at the joint globals
            best, _ = refine_star(post, phi, s, [_mode_in_fit(post, s, m[k].values)], scale)
            values = m[k].values.copy()
            values[free] = fp.from_fit_block(best, blk.start)
            m[k] = StarMode(values, full[0], full[1], m[k].chi2)
    return Prefit(theta=theta, phi=phi, centres=centres, log_like=ll, log_prior=lp, hessian=hess, covariance=cov,
                  laplace_log_z=laplace, star_modes=modes,
                  multimodal=[s for s, m in enumerate(modes) if len(m) > 1],
                  chi2=chi2_by_instrument(model, theta), blocks=blocks, warnings=warnings)
