"""The block engine's ellipsoid jump: its draws must be uniform on the slice of
the bound's ellipsoid through the current point along one block, which is what
makes the independence move exact.  Checked against Gaussian conditioning (the
slice's centre, common practice) and the radial law of a uniform ball."""

import numpy as np
from scipy import stats

from analyser.inference.engine import _add_precision_times, _jump_proposal


def _ellipsoid(n, rng):
    a = rng.normal(size=(n, n))
    cov = a @ a.T / n + 0.1 * np.eye(n)
    return rng.uniform(0.3, 0.7, n), np.linalg.inv(cov) * 4.0


def test_jump_draws_are_uniform_on_the_ellipsoid_slice():
    rng = np.random.default_rng(11)
    n, u0, u1 = 9, 3, 7
    center, precision = _ellipsoid(n, rng)
    z = rng.normal(size=n)
    u = center + 0.6 * np.linalg.cholesky(np.linalg.inv(precision)) @ (z / np.linalg.norm(z))
    diff = u - center
    assert diff @ precision @ diff < 1.0
    p_diff = np.zeros(n)
    _add_precision_times(precision, diff, 0, p_diff)
    assert np.allclose(p_diff, precision @ diff, rtol=1e-13, atol=1e-13)
    chol = np.linalg.cholesky(precision[u0:u1, u0:u1])
    draws = np.empty((20000, n))
    for k in range(draws.shape[0]):
        draws[k] = u
        assert _jump_proposal(u, center, p_diff, chol, u0, u1, draws[k])
    block = np.arange(u0, u1)
    rest = np.setdiff1d(np.arange(n), block)
    assert np.all(draws[:, rest] == u[rest])
    q = np.einsum("ij,jk,ik->i", draws - center, precision, draws - center)
    assert q.max() <= 1.0 + 1e-12
    # Gaussian conditioning of the quadratic form: centre and squared radius
    p_bb, p_br = precision[np.ix_(block, block)], precision[np.ix_(block, rest)]
    m = center[block] - np.linalg.solve(p_bb, p_br @ (u[rest] - center[rest]))
    r = draws[:, block] - m
    rho2 = 1.0 - (q - np.einsum("ij,jk,ik->i", r, p_bb, r))
    assert np.allclose(rho2, rho2[0], rtol=1e-9)       # one slice for all draws
    # the slice's half-widths are rho sqrt(diag P_bb^-1); the mean of 20000
    # draws is within ~0.003 of them of the centre (1 sd)
    half_width = np.sqrt(rho2[0] * np.diag(np.linalg.inv(p_bb)))
    assert np.all(np.abs(r.mean(axis=0)) < 0.015 * half_width)
    # uniform in a 4-ball: (radius / rho)^4 is uniform on [0, 1]
    radial = (np.einsum("ij,jk,ik->i", r, p_bb, r) / rho2[0]) ** ((u1 - u0) / 2)
    assert stats.kstest(radial, "uniform").pvalue > 0.01


def test_jump_is_refused_outside_the_ellipsoid():
    rng = np.random.default_rng(2)
    n = 5
    center, precision = _ellipsoid(n, rng)
    u = center + 10.0
    p_diff = np.zeros(n)
    _add_precision_times(precision, u - center, 0, p_diff)
    chol = np.linalg.cholesky(precision[1:3, 1:3])
    assert not _jump_proposal(u, center, p_diff, chol, 1, 3, u.copy())
