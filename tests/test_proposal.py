"""The proposal prior and the priors' compiled maps: the repartitioning
weights must be the exact density ratio of the cube map (else the evidence
would be off), checked by integration; quantiles against scipy."""

import math

import numpy as np
import pytest
from scipy import integrate, stats

from analyser.inference.likelihood import JointModel
from analyser.inference.prefit import run_prefit
from analyser.inference.priors import (GAUSSIAN, LOG_UNIFORM, UNIFORM, from_fit, log_density,
                                       log_prior_fit, normal_quantile, student_cdf,
                                       student_log_density, student_quantile, to_fit, transform)
from analyser.inference.proposal import block_log_ratio, build_space, cube_to_theta

from .fitting import make_campaign, scenario


def test_quantiles_match_scipy():
    for p in (1e-12, 1e-4, 0.02, 0.3, 0.4999, 0.5, 0.5001, 0.77, 0.99, 1 - 1e-9):
        assert normal_quantile(p) == pytest.approx(stats.norm.ppf(p), rel=1e-9)
        for dof in (2, 3):
            assert student_quantile(dof, p) == pytest.approx(stats.t.ppf(p, dof), rel=1e-11,
                                                             abs=1e-15)
            t = stats.t.ppf(p, dof)
            assert student_log_density(dof, t) == pytest.approx(stats.t.logpdf(t, dof), rel=1e-10)
            assert student_cdf(dof, t) == pytest.approx(p, rel=1e-9, abs=1e-15)


@pytest.mark.parametrize("kind, a, b", [(UNIFORM, -2.0, 4.0), (LOG_UNIFORM, 1e6, 1e7),
                                        (GAUSSIAN, 3.0, 0.5)])
def test_fit_coordinates_round_trip_and_carry_a_normalised_prior(kind, a, b):
    lo, hi = (0.0, math.inf) if kind == GAUSSIAN else (-math.inf, math.inf)
    for u in (0.01, 0.3, 0.5, 0.9):
        x = transform(kind, a, b, lo, hi, u)
        assert from_fit(kind, a, b, 0.0, to_fit(kind, a, b, 0.0, x)) == pytest.approx(x, rel=1e-12)
    total, _ = integrate.quad(lambda p: math.exp(log_prior_fit(kind, a, b, lo, hi, 0.0, p)),
                              -60, 60, limit=200)
    assert total == pytest.approx(1.0, abs=1e-6)


def test_truncated_gaussian_prior_is_normalised():
    total, _ = integrate.quad(lambda x: math.exp(log_density(GAUSSIAN, 0.2, 0.5, 0.0, 1.0, x)),
                              0.0, 1.0)
    assert total == pytest.approx(1.0, abs=1e-9)


@pytest.fixture(scope="module")
def space_and_model(tmp_path_factory):
    sc = scenario(stars=("TC-1", "TC-2"))
    sc["stars"]["TC-2"]["velocities"] = False          # a mirror-pair block
    campaign, _ = make_campaign(tmp_path_factory.mktemp("prop"), sc)
    model = JointModel(campaign, "gr")
    prefit = run_prefit(model, seed=2)
    return build_space(model.layout, prefit, widen=2.0, dof=3), model


def test_repartitioning_weights_are_the_exact_density_ratio(space_and_model):
    """The weights must be ln pi - ln pi~ with pi~ exactly the density the cube
    map pushes forward.  Then, over uniform cube points, the average of
    N(theta) / pi~(theta) is the integral of the normalised density N: one.
    N is a Gaussian inside each star block's proposal (its first mode, the
    globals at the centre); the mirror block's mixture is exercised."""
    sp, _ = space_and_model
    assert 2 in sp.n_modes
    rng = np.random.default_rng(0)
    n = 40_000
    theta = np.empty(sp.n_theta)
    for b in range(1, sp.n_blocks):
        t0, t1 = sp.theta_start[b], sp.theta_start[b + 1]
        m = t1 - t0
        chol = sp.chol[sp.chol_start[b]:sp.chol_start[b] + m * m].reshape(m, m)
        target = stats.multivariate_normal(sp.mean[sp.mean_start[b]:sp.mean_start[b] + m],
                                           0.25 * chol @ chol.T)
        log_w = np.empty(n)
        for i in range(n):
            u = np.full(sp.u_start[-1], 0.5)
            u[sp.u_start[b]:sp.u_start[b + 1]] = rng.random(sp.u_start[b + 1] - sp.u_start[b])
            cube_to_theta(sp, u, theta)
            log_pi = sum(log_prior_fit(sp.kind[k], sp.pa[k], sp.pb[k], sp.plo[k], sp.phi[k],
                                       sp.period[k], theta[k]) for k in range(t0, t1))
            log_w[i] = target.logpdf(theta[t0:t1]) - (log_pi - block_log_ratio(sp, b, theta))
        w = np.exp(log_w)
        assert w.mean() == pytest.approx(1.0, abs=4.0 * w.std() / math.sqrt(n)), b


def test_cube_centre_maps_to_the_proposal_centre(space_and_model):
    sp, model = space_and_model
    u = np.full(sp.u_start[-1], 0.5)
    theta = np.empty(sp.n_theta)
    cube_to_theta(sp, u, theta)
    assert np.allclose(theta[:sp.theta_start[1]], sp.mean[:sp.theta_start[1]])
