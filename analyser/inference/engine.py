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

from dynesty.internal_samplers import InternalSampler, SamplerReturn

from .likelihood import star_loglike
from .priors import from_fit
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
    n_all = d.obs_first[d.obs_first.size - 1]
    cost = (d.obs_first[s + 1] - d.obs_first[s]) / max(n_all, 1)
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
def evolve_point(u, loglstar, axes, scale, sweeps, star_slices, global_slices, seed,
                 sp, d, fixed_full, free_index):
    """A new point with ln L' > loglstar, by block slice sampling from u.

    `theta` is in fit coordinates (priors.py).
    Returns (u, theta, ln L', cost, n_expand, n_contract, n_accept)."""
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
    n_expand = 0
    n_contract = 0
    n_accept = 0
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
            for _s in range(n_slices):
                z = np.random.standard_normal(nb)
                z /= math.sqrt(np.sum(z * z))
                direction = factors[b] @ z * scale
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
                        u[:] = u_try
                        theta[:] = theta_t
                        full[:] = full_t
                        terms[:] = terms_t
                        total = value
                        n_accept += 1
                        break
                    n_contract += 1
                    if t < 0.0:
                        left = t
                    else:
                        right = t
    return u, theta, total, cost, n_expand, n_contract, n_accept


class BlockSliceSampler(InternalSampler):
    """dynesty internal sampler running `evolve_point`.

    Constructed with model=(space, data, fixed_full, free_index) and the
    walk's settings; dynesty re-creates it from that template.
    """

    def __init__(self, **kwargs):
        super().__init__(**kwargs)
        self.scale = float(kwargs.get("initial_scale", 1.0))
        for key in ("model", "sweeps", "star_slices", "global_slices"):
            self.sampler_kwargs[key] = kwargs[key]
        self._expand = 0
        self._contract = 0

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
        u, theta, logl, cost, n_exp, n_con, n_acc = evolve_point(
            np.asarray(args.u, float), float(args.loglstar), np.asarray(args.axes, float),
            float(args.scale), int(kw["sweeps"]), int(kw["star_slices"]),
            int(kw["global_slices"]), seed, sp, d, fixed_full, free_index)
        v = np.zeros(u.size)
        v[:theta.size] = theta
        return SamplerReturn(u=u, v=v, logl=logl, ncalls=max(1, int(round(cost))),
                             evaluation_history=[],
                             tuning_info={"n_expand": n_exp, "n_contract": n_con},
                             proposal_stats={"n_expand": n_exp, "n_contract": n_con,
                                             "n_accept": n_acc, "cost": cost})

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
