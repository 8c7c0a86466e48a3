"""Independent evidence estimates to check the sampler against.

Laplace: ln Z ~ ln L + ln prior + d/2 ln 2 pi - 1/2 ln det H at the prefit's
mode, in fit coordinates (computed by the prefit).

Importance sampling: draws from a heavy-tailed approximation q of the
posterior built from the prefit, with weights w = L prior / q, give
Z = mean(w), unbiased whatever q is as long as it covers the posterior.
q has the model's block structure: the global block is a multivariate
Student-t around the mode with the prefit's calibrated covariance (the
Laplace one, stretched where the posterior reaches farther); each star block,
given the globals, is a Student-t around its conditional mean, or an equal
mixture over the star's modes (mirror pair or rival orbits found by the
prefit).  The effective sample size and a bootstrap error are reported;
a small ESS means q is a poor match and the estimate is not to be trusted.
"""

import math
from dataclasses import dataclass

import numpy as np
from scipy.special import gammaln, logsumexp

from .proposal import _centre_windows


@dataclass
class ImportanceResult:
    log_z: float
    log_z_err: float          # bootstrap standard error
    ess: float
    n: int
    phi: np.ndarray           # draws (fit coordinates)
    log_weight: np.ndarray    # ln w of each draw (-inf outside the prior)

    def weights(self):
        w = np.exp(self.log_weight - np.max(self.log_weight))
        return w / w.sum()


def _t_logpdf(r_white, dof, log_det):
    n = r_white.shape[-1]
    q = np.sum(r_white**2, axis=-1)
    return (gammaln(0.5 * (dof + n)) - gammaln(0.5 * dof) - 0.5 * n * math.log(dof * math.pi)
            - log_det - 0.5 * (dof + n) * np.log1p(q / dof))


def importance_evidence(model, prefit, n=2000, dof=5.0, widen=1.2, seed=0, n_boot=200):
    """ln Z by importance sampling from the prefit (see module docstring)."""
    lay = model.layout
    fp = lay.free_prior_arrays()
    rng = np.random.default_rng(seed)
    mu = prefit.centres
    offset = prefit.centres - prefit.phi
    ng = int(lay.block_start[1])
    g = slice(0, ng)
    blocks = []          # (slice, mode means (m, n_b), chol, slope)
    mode_lists = []
    for b in range(len(lay.block_start) - 1):
        sl = slice(int(lay.block_start[b]), int(lay.block_start[b + 1]))
        modes = [mu[sl].copy()]
        if b > 0:
            s = b - 1
            free_cols = lay.free[sl] - lay.star_offset(s)
            for extra in prefit.star_modes[s][1:]:
                modes.append(fp.to_fit(extra.values[free_cols], sl.start) + offset[sl])
        mode_lists.append(modes)
    centres = _centre_windows(lay, mode_lists)
    for b, modes in enumerate(mode_lists):
        sl = slice(int(lay.block_start[b]), int(lay.block_start[b + 1]))
        slope = prefit.blocks[b]["slope"] if b > 0 else np.zeros((sl.stop - sl.start, ng))
        block_cov = prefit.blocks[b]["cov"] * widen**2
        chol = np.linalg.cholesky(0.5 * (block_cov + block_cov.T)) if sl.stop > sl.start \
            else np.zeros((0, 0))
        blocks.append((sl, np.array(modes), chol, slope))
    d = mu.size
    phi = np.empty((n, d))
    log_q = np.zeros(n)
    for b, (sl, means, chol, slope) in enumerate(blocks):
        nb = sl.stop - sl.start
        if nb == 0:
            continue
        log_det = float(np.sum(np.log(np.diag(chol))))
        z = rng.standard_normal((n, nb)) / np.sqrt(rng.chisquare(dof, n) / dof)[:, None]
        pick = rng.integers(0, len(means), n)
        shift = (phi[:, g] - mu[g]) @ slope.T if b > 0 else 0.0
        phi[:, sl] = means[pick] + shift + z @ chol.T
        # density: equal mixture over the block's modes
        comps = []
        for m in means:
            r = np.linalg.solve(chol, (phi[:, sl] - m - shift).T).T
            comps.append(_t_logpdf(r, dof, log_det))
        log_q += logsumexp(np.array(comps), axis=0) - math.log(len(means))
    log_w = np.full(n, -np.inf)
    for i in range(n):
        x = phi[i]
        if any(not (centres[k] - 0.5 * fp.period[k] <= x[k] < centres[k] + 0.5 * fp.period[k])
               for k in centres):
            continue
        lp = fp.log_prior_fit(x)
        if not np.isfinite(lp):
            continue
        log_w[i] = model.loglike(fp.from_fit(x)) + lp - log_q[i]
    log_z = float(logsumexp(log_w) - math.log(n))
    w = np.exp(log_w - np.max(log_w))
    ess = float(w.sum() ** 2 / np.sum(w**2))
    boots = [logsumexp(log_w[rng.integers(0, n, n)]) - math.log(n) for _ in range(n_boot)]
    return ImportanceResult(log_z=log_z, log_z_err=float(np.std(boots)), ess=ess, n=n,
                            phi=phi, log_weight=log_w)
