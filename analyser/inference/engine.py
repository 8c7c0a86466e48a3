"""The block-slice engine: dynesty's live-point bookkeeping with a compiled
internal sampler that moves one parameter block at a time.

To replace a live point dynesty copies one and asks the internal sampler
for a new point inside the likelihood contour.  Here that whole walk runs in
one compiled call (`evolve_point`): the cube-to-parameter map, the
likelihood and the slice steps, with no Python per likelihood evaluation.
The walk is a Gibbs sweep over blocks: every star block gets `star_slices`
slice steps in which only that star's likelihood term is recomputed (the
others are cached), then the global block (globals and nuisances, which
touch every star) gets `global_slices` steps with everything recomputed.
Slice directions are random within a block, shaped by the live points'
covariance (dynesty's bounding ellipsoid), and the step width adapts
(`scale`) so that stepping-out and shrinking stay balanced.

Cost is counted in likelihood-equivalent evaluations: a star-block step
costs that star's share of the data, a global step a full evaluation.
"""

import math
import warnings

import numpy as np
from numba import njit

from dynesty.bounding import Ellipsoid
from dynesty.internal_samplers import InternalSampler, SamplerReturn

from .likelihood import star_loglike, star_share
from .priors import from_fit, student_cdf, student_log_density, student_quantile
from .proposal import block_log_ratio, block_theta, cube_to_theta

_MAX_EXPAND = 60
_MAX_SHRINK = 100


@njit(cache=True)
def fill_full(sp, theta, free_index, full, first, last):
    """Write the parameter values of fit coordinates theta[first:last] into
    the full vector."""
    for k in range(first, last):
        full[free_index[k]] = from_fit(sp.kind[k], sp.pa[k], sp.pb[k], sp.period[k], theta[k])


@njit(cache=True)
def _block_terms(sp, d, full, theta, terms):
    """terms[0] = repartition weight of the global block; terms[b] = star
    b-1's log-likelihood plus its block's weight.  Returns the sum."""
    total = 0.0
    for b in range(sp.n_blocks):
        w = block_log_ratio(sp, b, theta)
        if b > 0 and w > -np.inf:
            w += star_loglike(b - 1, full, d)
        terms[b] = w
        total += w
    return total


@njit(cache=True)
def log_target(theta, sp, d, fixed_full, free_index):
    """ln L' = ln L + ln pi - ln pi~ at fit coordinates theta."""
    full = fixed_full.copy()
    fill_full(sp, theta, free_index, full, 0, theta.size)
    terms = np.empty(sp.n_blocks)
    return _block_terms(sp, d, full, theta, terms)


@njit(cache=True)
def _inside_cube(sp, u, lo, hi):
    for k in range(lo, hi):
        if not sp.periodic_u[k] and (u[k] < 0.0 or u[k] > 1.0):
            return False
    return True


@njit(cache=True)
def _wrap(sp, u, lo, hi):
    for k in range(lo, hi):
        if sp.periodic_u[k]:
            u[k] -= math.floor(u[k])


@njit(cache=True)
def _try(b, u_try, sp, d, fixed_full, free_index, theta, full, terms, theta_t, full_t, terms_t):
    """Total ln L' at u_try differing from the current point in block b only;
    fills the *_t arrays.  Returns (total, cost in full evaluations)."""
    u0, u1 = sp.u_start[b], sp.u_start[b + 1]
    if not _inside_cube(sp, u_try, u0, u1):
        return -np.inf, 0.0
    theta_t[:] = theta
    if b == 0:
        cube_to_theta(sp, u_try, theta_t)
        full_t[:] = fixed_full
        fill_full(sp, theta_t, free_index, full_t, 0, theta_t.size)
        return _block_terms(sp, d, full_t, theta_t, terms_t), 1.0
    block_theta(sp, b, u_try, theta_t)
    full_t[:] = full
    fill_full(sp, theta_t, free_index, full_t, sp.theta_start[b], sp.theta_start[b + 1])
    terms_t[:] = terms
    w = block_log_ratio(sp, b, theta_t)
    s = b - 1
    cost = star_share(s, d)
    if w > -np.inf:
        w += star_loglike(s, full_t, d)
    else:
        cost = 0.0
    terms_t[b] = w
    total = 0.0
    for k in range(sp.n_blocks):
        total += terms_t[k]
    return total, cost


@njit(cache=True)
def _block_factor(axes, lo, hi):
    """Cholesky factor of the bound's covariance (axes axes^T) in the diagonal
    block [lo:hi, lo:hi], regularised; only these blocks are ever needed."""
    n = hi - lo
    rows = np.ascontiguousarray(axes[lo:hi])
    sub = rows @ rows.T
    scale = 0.0
    for i in range(n):
        scale = max(scale, sub[i, i])
    for i in range(n):
        sub[i, i] += 1e-12 * scale + 1e-300
    return np.linalg.cholesky(sub)


@njit(cache=True)
def jump_blocks(sp):
    """Per block: whether it can jump (a proposal block without mirror modes or
    periodic coordinates: its cube coordinates are Student-t quantiles)."""
    out = np.zeros(sp.n_blocks, dtype=np.bool_)
    for b in range(sp.n_blocks):
        u0, u1 = sp.u_start[b], sp.u_start[b + 1]
        ok = sp.n_modes[b] == 1 and u1 > u0
        for k in range(u0, u1):
            ok = ok and not sp.periodic_u[k]
        out[b] = ok
    return out


@njit(cache=True)
def jump_coordinates(sp, can, u, z, lo, hi):
    """z[lo:hi] from the cube point u: the Student-t quantile in jumping
    blocks (can = jump_blocks(sp)), where the likelihood contour is close to
    an ellipsoid (the cube squeezes it towards a box), u itself elsewhere."""
    for b in range(sp.n_blocks):
        for k in range(max(lo, sp.u_start[b]), min(hi, sp.u_start[b + 1])):
            z[k] = student_quantile(sp.dof, u[k]) if can[b] else u[k]


@njit(cache=True)
def jump_coordinates_many(sp, points):
    can = jump_blocks(sp)
    out = np.empty_like(points)
    for i in range(points.shape[0]):
        jump_coordinates(sp, can, points[i], out[i], 0, points.shape[1])
    return out


@njit(cache=True)
def _jump_factors(sp, can, precision):
    """Per block: Cholesky factor of the ellipsoid's precision in its diagonal
    block, or an empty array where the block cannot jump."""
    out = []
    for b in range(sp.n_blocks):
        u0, u1 = sp.u_start[b], sp.u_start[b + 1]
        if precision.shape[0] == 0 or not can[b]:
            out.append(np.empty((0, 0)))
        else:
            out.append(np.linalg.cholesky(np.ascontiguousarray(precision[u0:u1, u0:u1])))
    return out


@njit(cache=True)
def _add_precision_times(precision, delta, u0, p_diff):
    """p_diff += P[:, u0:u0+n] delta (P symmetric: read its rows)."""
    for j in range(delta.size):
        row = precision[u0 + j]
        for i in range(p_diff.size):
            p_diff[i] += row[i] * delta[j]


@njit(cache=True)
def _jump_proposal(z, center, p_diff, chol, u0, u1, out):
    """A point drawn uniformly from the slice of the ellipsoid
    (z - c)^T P (z - c) <= 1 through z along block [u0:u1], written into
    out[u0:u1]; p_diff = P (z - c), chol the Cholesky factor of P's block.
    Returns False if z is outside the ellipsoid (then no move is possible)."""
    q = 0.0
    for i in range(z.size):
        q += (z[i] - center[i]) * p_diff[i]
    if not q <= 1.0:
        return False
    n = u1 - u0
    # delta = P_bb^{-1} g with g = p_diff[u0:u1]: the slice centre is z_b - delta
    g = p_diff[u0:u1]
    y = np.linalg.solve(chol, g)
    delta = np.linalg.solve(chol.T, y)
    rho = math.sqrt(max(0.0, 1.0 - q + np.sum(g * delta)))
    w = np.random.standard_normal(n)
    w *= rho * np.random.uniform(0.0, 1.0) ** (1.0 / n) / math.sqrt(np.sum(w * w))
    step = np.linalg.solve(chol.T, w)       # (x - m)^T P_bb (x - m) = rho^2 |w|^2
    for k in range(n):
        out[u0 + k] = z[u0 + k] - delta[k] + step[k]
    return True


@njit(cache=True)
def _jump(b, sp, z, center, p_diff, chol, z_try, u_try):
    """Propose block b's jump: fills z_try and u_try (both must hold the
    current point) and returns False if the move is rejected before any
    likelihood is needed.  The target in z is the Student-t density (the
    cube is uniform) inside the contour, the proposal uniform on the
    ellipsoid's slice, so the Metropolis-Hastings ratio is the ratio of the
    Student-t densities."""
    u0, u1 = sp.u_start[b], sp.u_start[b + 1]
    if not _jump_proposal(z, center, p_diff, chol, u0, u1, z_try):
        return False
    log_ratio = 0.0
    for k in range(u0, u1):
        log_ratio += student_log_density(sp.dof, z_try[k]) - student_log_density(sp.dof, z[k])
    if log_ratio < 0.0 and np.random.uniform(0.0, 1.0) >= math.exp(log_ratio):
        return False
    for k in range(u0, u1):
        u_try[k] = student_cdf(sp.dof, z_try[k])
        if not 0.0 < u_try[k] < 1.0:
            return False
    return True


@njit(cache=True)
def _take(u, theta, full, terms, u_t, theta_t, full_t, terms_t):
    """Move the walk to the tried point (the *_t arrays)."""
    u[:] = u_t
    theta[:] = theta_t
    full[:] = full_t
    terms[:] = terms_t


@njit(cache=True)
def evolve_point(u, loglstar, axes, center, precision, scale, sweeps, star_slices,
                 global_slices, jumps, seed, sp, d, fixed_full, free_index):
    """A new point with ln L' > loglstar from u, by block moves.

    Each block step first tries up to `jumps` independent draws of the block
    from an ellipsoid around the live points in jump coordinates (center,
    precision; empty arrays for none), sliced through the current point
    along the block: an independence Metropolis-Hastings move (`_jump`),
    exact for any ellipsoid, which decorrelates the block at once where the
    contour is close to it.  Then come the slice steps, which need no shape.

    `theta` is in fit coordinates (priors.py).  Returns (u, theta, ln L', cost,
    n_expand, n_contract, n_accept, n_jump_tries, n_jump_accept)."""
    np.random.seed(seed)
    u = u.copy()
    _wrap(sp, u, 0, u.size)
    theta = np.empty(sp.n_theta)
    full = fixed_full.copy()
    cube_to_theta(sp, u, theta)
    fill_full(sp, theta, free_index, full, 0, theta.size)
    terms = np.empty(sp.n_blocks)
    total = _block_terms(sp, d, full, theta, terms)
    cost = 1.0
    theta_t = np.empty_like(theta)
    full_t = np.empty_like(full)
    terms_t = np.empty_like(terms)
    u_try = u.copy()
    factors = [_block_factor(axes, sp.u_start[b], sp.u_start[b + 1]) for b in range(sp.n_blocks)]
    can_jump = jump_blocks(sp)
    jump_factors = _jump_factors(sp, can_jump, precision)
    jumping = precision.shape[0] > 0
    z = np.empty(u.size)            # jump coordinates, kept only while jumping
    p_diff = np.zeros(u.size)
    if jumping:
        jump_coordinates(sp, can_jump, u, z, 0, u.size)
        _add_precision_times(precision, z - center, 0, p_diff)
    z_try = z.copy()
    n_expand = 0
    n_contract = 0
    n_accept = 0
    n_jump_tries = 0
    n_jump_accept = 0
    order = np.arange(1, sp.n_blocks)
    for _ in range(sweeps):
        np.random.shuffle(order)
        for step in range(order.size + 1):
            b = order[step] if step < order.size else 0
            n_slices = star_slices if b > 0 else global_slices
            u0, u1 = sp.u_start[b], sp.u_start[b + 1]
            nb = u1 - u0
            if nb == 0:
                continue
            z_block = z[u0:u1].copy()
            for _j in range(jumps if jump_factors[b].shape[0] > 0 else 0):
                u_try[:] = u
                z_try[:] = z
                n_jump_tries += 1
                if not _jump(b, sp, z, center, p_diff, jump_factors[b], z_try, u_try):
                    continue
                value, c = _try(b, u_try, sp, d, fixed_full, free_index, theta, full, terms,
                                theta_t, full_t, terms_t)
                cost += c
                if value > loglstar:
                    _take(u, theta, full, terms, u_try, theta_t, full_t, terms_t)
                    total = value
                    n_jump_accept += 1
                    break
            for _s in range(n_slices):
                w = np.random.standard_normal(nb)
                w /= math.sqrt(np.sum(w * w))
                direction = factors[b] @ w * scale
                r = np.random.uniform(0.0, 1.0)
                left, right = -r, 1.0 - r
                for side in (-1.0, 1.0):
                    for _e in range(_MAX_EXPAND):
                        edge = left if side < 0 else right
                        u_try[:] = u
                        u_try[u0:u1] = u[u0:u1] + edge * direction
                        _wrap(sp, u_try, u0, u1)
                        value, c = _try(b, u_try, sp, d, fixed_full, free_index, theta, full,
                                        terms, theta_t, full_t, terms_t)
                        cost += c
                        if value <= loglstar:
                            break
                        n_expand += 1
                        if side < 0:
                            left -= 1.0
                        else:
                            right += 1.0
                for _c in range(_MAX_SHRINK):
                    t = left + np.random.uniform(0.0, 1.0) * (right - left)
                    u_try[:] = u
                    u_try[u0:u1] = u[u0:u1] + t * direction
                    _wrap(sp, u_try, u0, u1)
                    value, c = _try(b, u_try, sp, d, fixed_full, free_index, theta, full, terms,
                                    theta_t, full_t, terms_t)
                    cost += c
                    if value > loglstar:
                        _take(u, theta, full, terms, u_try, theta_t, full_t, terms_t)
                        total = value
                        n_accept += 1
                        break
                    n_contract += 1
                    if t < 0.0:
                        left = t
                    else:
                        right = t
            if jumping:
                jump_coordinates(sp, can_jump, u, z, u0, u1)
                _add_precision_times(precision, z[u0:u1] - z_block, u0, p_diff)
    return u, theta, total, cost, n_expand, n_contract, n_accept, n_jump_tries, n_jump_accept


# Volume of the jumps' ellipsoid over the smallest one enclosing the live points.
JUMP_ENLARGE = 1.25


def jump_ellipsoid(sp, live_u):
    """Centre and precision of the ellipsoid around the live points in jump
    coordinates: their covariance, scaled to enclose them all, its volume
    enlarged by JUMP_ENLARGE."""
    z = jump_coordinates_many(sp, np.ascontiguousarray(live_u, dtype=float))
    center = z.mean(axis=0)
    cov = np.cov(z, rowvar=False)
    cov += np.eye(cov.shape[0]) * (1e-12 * np.max(np.diag(cov)) + 1e-300)
    precision = np.linalg.inv(cov)
    precision = 0.5 * (precision + precision.T)
    dist2 = np.einsum("ij,jk,ik->i", z - center, precision, z - center)
    precision /= dist2.max() * JUMP_ENLARGE ** (2.0 / z.shape[1])
    return {"center": center, "precision": np.ascontiguousarray(precision)}


class BlockSliceSampler(InternalSampler):
    """dynesty internal sampler running `evolve_point`.

    Constructed with model=(space, data, fixed_full, free_index) and the
    walk's settings; dynesty re-creates it from that template.
    """

    def __init__(self, **kwargs):
        super().__init__(**kwargs)
        self.scale = float(kwargs.get("initial_scale", 1.0))
        for key in ("model", "sweeps", "star_slices", "global_slices", "jumps"):
            self.sampler_kwargs[key] = kwargs[key]
        self._expand = 0
        self._contract = 0

    def prepare_sampler(self, nested_sampler=None, **kwargs):
        # the jumps' ellipsoid: refit to the live points whenever dynesty
        # refits its bound (none while it still samples the whole cube)
        args = super().prepare_sampler(nested_sampler=nested_sampler, **kwargs)
        bound = getattr(nested_sampler, "bound", None)
        if not isinstance(bound, Ellipsoid):
            self._ellipsoid = (None, {"center": np.empty(0), "precision": np.empty((0, 0))})
        elif getattr(self, "_ellipsoid", (None,))[0] != nested_sampler.nbound:
            self._ellipsoid = (nested_sampler.nbound,
                               jump_ellipsoid(self.sampler_kwargs["model"][0],
                                              nested_sampler.live_u))
        return [a._replace(kwargs={**a.kwargs, **self._ellipsoid[1]}) for a in args]

    @property
    def update_bound_interval_ratio(self):
        # the bound only shapes the slice directions: refit it every few
        # hundred new points (measured in likelihood-equivalent calls)
        return 20.0

    @staticmethod
    def sample(args):
        kw = args.kwargs
        sp, d, fixed_full, free_index = kw["model"]
        seed = int(np.random.default_rng(args.rseed).integers(0, 2**31 - 1))
        u, theta, logl, cost, n_exp, n_con, n_acc, n_jump, n_jump_acc = evolve_point(
            np.asarray(args.u, float), float(args.loglstar), np.asarray(args.axes, float),
            kw.get("center", np.empty(0)), kw.get("precision", np.empty((0, 0))),
            float(args.scale), int(kw["sweeps"]), int(kw["star_slices"]),
            int(kw["global_slices"]), int(kw["jumps"]), seed, sp, d, fixed_full, free_index)
        v = np.zeros(u.size)
        v[:theta.size] = theta
        return SamplerReturn(u=u, v=v, logl=logl, ncalls=max(1, int(round(cost))),
                             evaluation_history=[],
                             tuning_info={"n_expand": n_exp, "n_contract": n_con},
                             proposal_stats={"n_expand": n_exp, "n_contract": n_con,
                                             "n_accept": n_acc, "n_jump": n_jump,
                                             "n_jump_accept": n_jump_acc, "cost": cost})

    def tune(self, tuning_info, update=True):
        self._expand += tuning_info["n_expand"]
        self._contract += tuning_info["n_contract"]
        if update and self._expand + self._contract > 0:
            # balance stepping-out against shrinking (Neal 2003): widen when
            # most work goes into stepping out, narrow when into shrinking
            frac = self._expand / (self._expand + self._contract)
            self.scale *= math.exp(frac - 0.5)
            self.scale = min(max(self.scale, 1e-4), 1e2)
            self._expand = self._contract = 0

    @property
    def citations(self):
        return [("Neal (2003)", "projecteuclid.org/euclid.aos/1056562461")]
