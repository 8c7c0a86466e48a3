"""The compiled per-star likelihood against the textbook densities from scipy.

Each astrometric epoch is a bivariate normal with covariance
[[sx^2, rho sx sy], [rho sx sy, sy^2]], each velocity a normal, errors scaled
and jitters added in quadrature, and an instrument with outliers mixes in the
same density with errors W times larger: (1 - q) N(s) + q N(W s)
(the likelihood described in docs/methods.md; scipy.stats gives the
densities).  The model values come from the package's own forward model,
which is checked elsewhere; this checks the point densities."""

import json
from pathlib import Path

import numpy as np
from scipy.stats import multivariate_normal, norm

from analyser.data.loader import load
from analyser.inference.likelihood import JointModel, star_loglike, star_predict

DEMO = Path(__file__).resolve().parents[1] / "demo_inputs"


def _truth_full(model):
    """The full parameter vector of the demo's simulation truth."""
    truth = json.loads((DEMO / "truth.json").read_text())
    values = {**truth["globals"], **truth["nuisances"]}
    for star, elements in truth["stars"].items():
        values.update({f"{star}.{k}": v for k, v in elements.items()})
    return np.array([values[name] for name in model.layout.names], dtype=float)


def _reference_loglike(model, d, full, s):
    campaign = model.campaign
    names = list(campaign.instruments)
    lay = model.layout

    def term(inst, suffix, neutral):
        key = f"{inst}.{suffix}"
        return full[lay.index(key)] if key in lay.names else neutral

    na = d.astro_first[s + 1] - d.astro_first[s]
    nv = d.vel_first[s + 1] - d.vel_first[s]
    mx, my, mv = np.empty(na), np.empty(na), np.empty(nv)
    assert star_predict(s, full, d, mx, my, mv)
    total = 0.0
    for k in range(na):
        r = d.astro_first[s] + k
        inst = names[d.ainst[r]]
        scale = term(inst, "error_scale", 1.0)
        jitter = term(inst, "jitter_mas", 0.0)
        sx = np.hypot(d.asx[r] * scale, jitter)
        sy = np.hypot(d.asy[r] * scale, jitter)
        cov = np.array([[sx * sx, d.arho[r] * sx * sy], [d.arho[r] * sx * sy, sy * sy]])
        obs = (d.ax[r], d.ay[r])
        core = multivariate_normal((mx[k], my[k]), cov).logpdf(obs)
        q = term(inst, "outlier_fraction", 0.0)
        if q > 0:
            w = campaign.instruments[inst].outlier_width
            broad = multivariate_normal((mx[k], my[k]), cov * w * w).logpdf(obs)
            core = np.logaddexp(np.log1p(-q) + core, np.log(q) + broad)
        total += core
    for k in range(nv):
        r = d.vel_first[s] + k
        inst = names[d.vinst[r]]
        sv = np.hypot(d.vs[r] * term(inst, "error_scale", 1.0), term(inst, "jitter_km_s", 0.0))
        total += norm(mv[k], sv).logpdf(d.vv[r])
    return total


def test_star_loglike_equals_the_scipy_densities():
    model = JointModel(load(DEMO / "campaign.toml"), "gr")
    rng = np.random.default_rng(3)
    # correlated astrometric errors (the demo's are uncorrelated), and a larger
    # outlier fraction so that the mixture matters at more points
    d = model.data._replace(arho=rng.uniform(-0.7, 0.7, model.data.arho.size))
    full = _truth_full(model)
    full[model.layout.index("NIGHTJAR.outlier_fraction")] = 0.2
    for s in range(model.n_star):
        got = star_loglike(s, full, d)
        want = _reference_loglike(model, d, full, s)
        assert abs(got - want) < 1e-9 * abs(want), (s, got, want)
    # far from the data the broad component carries the outlier instrument's points
    full[model.layout.index("x0_mas")] += 5.0
    got, want = star_loglike(0, full, d), _reference_loglike(model, d, full, 0)
    assert abs(got - want) < 1e-9 * abs(want), (got, want)
