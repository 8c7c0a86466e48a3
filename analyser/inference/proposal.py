"""The sampling space: the unit cube mapped onto the parameters by a proposal
prior built from the prefit (posterior repartitioning).

Nested sampling compresses from the prior to the posterior; the cost grows
with the information H between them.  Posterior repartitioning (Chen, Feroz &
Hobson 2019, arXiv:1908.04655; Petrosyan & Handley 2022, arXiv:2212.01760)
samples instead from a proposal prior pi~ close to the posterior and
multiplies the likelihood by pi / pi~, which leaves the integrand L pi, so
the evidence and the posterior, exactly unchanged while H shrinks.

The proposal follows the model's block structure.  The global block g (the
globals and nuisances) is g = mu_g + L_g z_g; each star block is drawn given
the globals, s = mu_s + B_s (g - mu_g) + L_s z_s, with B_s and L_s from the
conditional of the prefit's Laplace covariance, each principal direction
stretched to the posterior's measured extent (prefit.proposal_blocks) and
all widened by `widen`, so that
the cube coordinates are nearly independent in the posterior and a star can
be updated alone.  Every z is Student-t (2 or 3 degrees of freedom) per
coordinate: heavy tails keep the proposal wider than the posterior far out.
A star with the mirror ambiguity has one extra cube coordinate that selects
one of its two mirror modes; the proposal density is then the two-component
mixture, and moving that coordinate carries a point to the same place in the
other mode.  A star whose prefit found genuinely different orbits keeps its
original prior block (the proposal would not cover them safely).

All of this lives in the fit coordinates phi of priors.py (logit of a
bounded prior's CDF, identity otherwise), where the proposal never leaves
the prior's support; the cube point maps to phi, and phi to the parameters.
Periodic parameters are unwrapped reals; their original prior is uniform over
one period centred on the mode (or between the two mirror modes).
"""

import math
from typing import NamedTuple

import numpy as np
from numba import njit

from .priors import (check_dof, log_prior_fit, student_log_density, student_quantile, to_fit,
                     transform)


class Space(NamedTuple):
    """Arrays describing the map from the unit cube to the free parameters."""
    n_theta: int
    n_blocks: int
    theta_start: np.ndarray   # block offsets in the free vector (n_blocks + 1)
    u_start: np.ndarray       # block offsets in the cube vector (n_blocks + 1)
    n_modes: np.ndarray       # per block: 0 = original prior, 1 = proposal, 2 = mirror mixture
    kind: np.ndarray          # original priors over the free vector
    pa: np.ndarray
    pb: np.ndarray
    plo: np.ndarray           # truncation of Gaussian priors
    phi: np.ndarray
    period: np.ndarray
    win_lo: np.ndarray        # one-period window of periodic parameters
    win_hi: np.ndarray
    mean: np.ndarray          # per block and mode: mode means, flat
    mean_start: np.ndarray    # per block: offset into `mean`
    chol: np.ndarray          # per block: lower Cholesky factor, flat d_b x d_b
    chol_start: np.ndarray
    slope: np.ndarray         # per star block: B_s, flat d_b x d_g
    slope_start: np.ndarray
    log_det: np.ndarray       # per block: log det L_b
    dof: int
    periodic_u: np.ndarray    # per cube coordinate: whether it wraps


# ---------------------------------------------------------------- compiled map

@njit(cache=True)
def _chol_solve(sp, b, r, out):
    """out = L_b^{-1} r (forward substitution)."""
    n = r.size
    c0 = sp.chol_start[b]
    for i in range(n):
        acc = r[i]
        for j in range(i):
            acc -= sp.chol[c0 + i * n + j] * out[j]
        out[i] = acc / sp.chol[c0 + i * n + i]


@njit(cache=True)
def block_theta(sp, b, u, theta):
    """Fill block b of the fit-coordinate vector `theta` from the cube point u
    (the global block must be filled first).  Returns the mode used."""
    t0, t1 = sp.theta_start[b], sp.theta_start[b + 1]
    n = t1 - t0
    u0 = sp.u_start[b]
    modes = sp.n_modes[b]
    if modes == 0:
        for i in range(n):
            k = t0 + i
            x = transform(sp.kind[k], sp.pa[k], sp.pb[k], sp.plo[k], sp.phi[k], u[u0 + i])
            theta[k] = to_fit(sp.kind[k], sp.pa[k], sp.pb[k], sp.period[k], x)
        return 0
    mode = 0
    if modes == 2:
        mode = 1 if u[u0] >= 0.5 else 0
        u0 += 1
    z = np.empty(n)
    for i in range(n):
        z[i] = student_quantile(sp.dof, u[u0 + i])
    mu = sp.mean[sp.mean_start[b] + mode * n:sp.mean_start[b] + (mode + 1) * n]
    c0 = sp.chol_start[b]
    for i in range(n):
        acc = mu[i]
        for j in range(i + 1):
            acc += sp.chol[c0 + i * n + j] * z[j]
        theta[t0 + i] = acc
    if b > 0:
        ng = sp.theta_start[1]
        g_mean = sp.mean[0:ng]
        s0 = sp.slope_start[b]
        for i in range(n):
            acc = 0.0
            for j in range(ng):
                acc += sp.slope[s0 + i * ng + j] * (theta[j] - g_mean[j])
            theta[t0 + i] += acc
    return mode


@njit(cache=True)
def _whitened(sp, b, theta, m, z):
    """z = L_b^{-1} (theta_b - mean of mode m - B_b (g - mu_g)): block b's
    point in the proposal's standard coordinates."""
    t0 = sp.theta_start[b]
    n = sp.theta_start[b + 1] - t0
    r = np.empty(n)
    m0 = sp.mean_start[b] + m * n
    ng = sp.theta_start[1]
    s0 = sp.slope_start[b]
    for i in range(n):
        acc = theta[t0 + i] - sp.mean[m0 + i]
        if b > 0:
            for j in range(ng):
                acc -= sp.slope[s0 + i * ng + j] * (theta[j] - sp.mean[j])
        r[i] = acc
    _chol_solve(sp, b, r, z)


@njit(cache=True)
def block_log_ratio(sp, b, theta):
    """ln pi_b - ln pi~_b (given g) of block b at fit coordinates theta: the
    repartitioning weight (zero for a block on its original prior; -inf
    outside a periodic window or a Gaussian prior's truncation)."""
    t0, t1 = sp.theta_start[b], sp.theta_start[b + 1]
    n = t1 - t0
    modes = sp.n_modes[b]
    if modes == 0:
        return 0.0
    log_pi = 0.0
    for i in range(n):
        k = t0 + i
        x = theta[k]
        if sp.period[k] > 0 and (x < sp.win_lo[k] or x >= sp.win_hi[k]):
            return -np.inf
        log_pi += log_prior_fit(sp.kind[k], sp.pa[k], sp.pb[k], sp.plo[k], sp.phi[k],
                                sp.period[k], x)
    if log_pi == -np.inf:
        return -np.inf
    z = np.empty(n)
    log_q = -np.inf
    for m in range(modes):
        _whitened(sp, b, theta, m, z)
        lq = -sp.log_det[b] - math.log(modes)
        for i in range(n):
            lq += student_log_density(sp.dof, z[i])
        top = max(log_q, lq)
        log_q = top + math.log(math.exp(log_q - top) + math.exp(lq - top))
    return log_pi - log_q


@njit(cache=True)
def cube_to_theta(sp, u, theta):
    for b in range(sp.n_blocks):
        block_theta(sp, b, u, theta)


# ---------------------------------------------------------------- construction

def _circular(x, period):
    """x wrapped into [-period/2, period/2)."""
    return (x + 0.5 * period) % period - 0.5 * period


def _centre_windows(layout, block_modes):
    """Centre the one-period window of every periodic free parameter on its
    first mode (or midway between two modes) and express every mode inside
    it.  Returns {free index: centre}; block_modes is updated in place."""
    centres = {}
    pri = layout.free_priors
    for b, modes in enumerate(block_modes):
        t0, t1 = layout.block_start[b], layout.block_start[b + 1]
        for i in range(t1 - t0):
            per = pri[t0 + i].period
            if per <= 0:
                continue
            first = modes[0][i]
            centre = first
            if len(modes) > 1:
                centre = first + 0.5 * _circular(modes[1][i] - first, per)
            for m in modes:
                m[i] = centre + _circular(m[i] - centre, per)
            centres[t0 + i] = centre
    return centres


def build_space(layout, prefit, widen=2.0, dof=3, repartition=True):
    """The sampling space of a variant from its prefit.

    With repartition=False every block keeps its original prior (the stock
    configuration, used for comparisons).
    """
    dof = check_dof(dof)
    pri = layout.free_priors
    d = layout.n_free
    nb = len(layout.block_start) - 1
    fp = layout.free_prior_arrays()
    theta0 = prefit.centres
    offset = prefit.centres - prefit.phi        # pilot re-centring, moved with every mode
    ng = layout.block_start[1]
    star_of_block = [None] + list(range(nb - 1))
    block_modes, n_modes = [], []
    for b in range(nb):
        sl = slice(layout.block_start[b], layout.block_start[b + 1])
        modes = [theta0[sl].copy()]
        kind = 1
        if b > 0:
            s = star_of_block[b]
            free_cols = layout.free[sl] - layout.star_offset(s)
            found = prefit.star_modes[s]
            if len(found) == 2 and _is_mirror_pair(found[0].values, found[1].values):
                modes.append(fp.to_fit(found[1].values[free_cols], sl.start) + offset[sl])
                kind = 2
            elif len(found) > 1:
                kind = 0
        if not repartition or sl.stop == sl.start:
            kind = 0
        block_modes.append(modes)
        n_modes.append(kind)
    centres = _centre_windows(layout, block_modes)
    win_lo, win_hi = np.full(d, -np.inf), np.full(d, np.inf)
    for k, c in centres.items():
        win_lo[k], win_hi[k] = c - 0.5 * pri[k].period, c + 0.5 * pri[k].period
    means, mean_start, chols, chol_start, slopes, slope_start, log_det = [], [], [], [], [], [], []
    m_off = c_off = s_off = 0
    u_start = [0]
    for b in range(nb):
        sl = slice(layout.block_start[b], layout.block_start[b + 1])
        n = sl.stop - sl.start
        mean_start.append(m_off)
        chol_start.append(c_off)
        slope_start.append(s_off)
        modes = block_modes[b] if n_modes[b] == 2 else block_modes[b][:1]
        for m in modes:
            means.append(np.asarray(m, float))
            m_off += n
        slope = prefit.blocks[b]["slope"] if b > 0 else np.zeros((n, ng))
        block_cov = prefit.blocks[b]["cov"] * widen**2
        if n:
            chol = np.linalg.cholesky(0.5 * (block_cov + block_cov.T))
        else:
            chol = np.zeros((0, 0))
        chols.append(chol.ravel())
        slopes.append(slope.ravel())
        c_off += n * n
        s_off += n * ng
        log_det.append(float(np.sum(np.log(np.diag(chol)))) if n else 0.0)
        u_start.append(u_start[-1] + n + (1 if n_modes[b] == 2 else 0))
    periodic_u = np.zeros(u_start[-1], dtype=np.bool_)
    for b in range(nb):
        if n_modes[b] == 0:
            for i in range(layout.block_start[b + 1] - layout.block_start[b]):
                if pri[layout.block_start[b] + i].period > 0:
                    periodic_u[u_start[b] + i] = True
        elif n_modes[b] == 2:
            periodic_u[u_start[b]] = True        # the mode selector wraps
    cat = lambda parts: np.concatenate(parts) if parts else np.empty(0)
    return Space(n_theta=d, n_blocks=nb, theta_start=layout.block_start.astype(np.int64),
                 u_start=np.array(u_start, dtype=np.int64),
                 n_modes=np.array(n_modes, dtype=np.int64), kind=fp.kind, pa=fp.a, pb=fp.b,
                 plo=fp.lo, phi=fp.hi, period=fp.period, win_lo=win_lo, win_hi=win_hi,
                 mean=cat(means),
                 mean_start=np.array(mean_start, dtype=np.int64), chol=cat(chols),
                 chol_start=np.array(chol_start, dtype=np.int64), slope=cat(slopes),
                 slope_start=np.array(slope_start, dtype=np.int64),
                 log_det=np.array(log_det), dof=dof, periodic_u=periodic_u)


def _block_of(layout, k):
    return int(np.searchsorted(layout.block_start, k, side="right") - 1)


def _is_mirror_pair(a, b):
    """Two star modes that differ by (Omega + 180, omega + 180) only."""
    d_big = (b[3] - a[3]) % 360.0
    d_small = (b[4] - a[4]) % 360.0
    return abs(d_big - 180.0) < 20.0 and abs(d_small - 180.0) < 20.0


def blocks_to_joint(layout, blocks):
    """The joint covariance implied by proposal blocks (slopes and conditionals)."""
    ng = int(layout.block_start[1])
    g = slice(0, ng)
    d = int(layout.block_start[-1])
    cov = np.zeros((d, d))
    cov[g, g] = blocks[0]["cov"]
    for b in range(1, len(blocks)):
        sl = slice(int(layout.block_start[b]), int(layout.block_start[b + 1]))
        cross = blocks[b]["slope"] @ blocks[0]["cov"]
        cov[sl, g] = cross
        cov[g, sl] = cross.T
        cov[sl, sl] = blocks[b]["cov"] + cross @ blocks[b]["slope"].T
    return cov


def joint_to_blocks(layout, cov):
    """Proposal blocks (slope on the globals, conditional covariance) of a joint
    covariance."""
    ng = int(layout.block_start[1])
    g = slice(0, ng)
    blocks = []
    for b in range(len(layout.block_start) - 1):
        sl = slice(int(layout.block_start[b]), int(layout.block_start[b + 1]))
        n = sl.stop - sl.start
        if b == 0:
            blocks.append({"slope": np.zeros((n, 0)), "cov": cov[g, g]})
        else:
            slope = np.linalg.solve(cov[g, g], cov[sl, g].T).T if ng else np.zeros((n, 0))
            blocks.append({"slope": slope, "cov": cov[sl, sl] - slope @ cov[sl, g].T})
    return blocks


# Share of the previous proposal's covariance added when a posterior reshapes
# it (a floor for directions a short first pass saw too little of).  Zero: on
# the demo a share of 1 made the proposal ~1.6x wider than the posterior
# followed by `widen`, H ~30 instead of ~16 nats and ~1.5x the calls, with no
# gain in accuracy on a 4-star campaign; the far-tail check and rerun
# (run.py) cover a first pass that saw too little.
PREVIOUS_SHARE = 0.0


def refit_from_posterior(prefit, space, results, layout):
    """A copy of `prefit` whose proposal is centred on the weighted mean of a
    nested-sampling posterior (fit coordinates), with that posterior's
    covariance plus the previous proposal's (PREVIOUS_SHARE).

    For a mirror-pair block the samples are taken relative to the centre of
    the mode they sit in, so the pair keeps one shape; the second mode's
    centre moves with the first.
    """
    import copy
    w = np.exp(results.logwt - results.logz[-1])
    w = w / w.sum()
    phi = np.array(results.samples[:, :space.n_theta], dtype=float)
    u = np.asarray(results.samples_u)
    rel = phi.copy()
    for b in range(space.n_blocks):
        if space.n_modes[b] != 2:
            continue
        t0, t1 = space.theta_start[b], space.theta_start[b + 1]
        n = t1 - t0
        in_second = u[:, space.u_start[b]] >= 0.5
        m0 = space.mean[space.mean_start[b]:space.mean_start[b] + n]
        m1 = space.mean[space.mean_start[b] + n:space.mean_start[b] + 2 * n]
        rel[in_second, t0:t1] += m0 - m1        # carry the second mode onto the first
    mean = w @ rel
    dev = rel - mean
    cov = (dev * w[:, None]).T @ dev / (1.0 - np.sum(w**2))
    new = copy.copy(prefit)
    new.centres = mean
    new.phi = prefit.phi            # mirror offsets are taken from centres - phi
    joint = cov + PREVIOUS_SHARE * blocks_to_joint(layout, prefit.blocks)
    new.blocks = joint_to_blocks(layout, joint)
    for b, blk in enumerate(new.blocks):
        blk["widening"] = prefit.blocks[b].get("widening", [])
        blk["from_posterior"] = True
    return new
