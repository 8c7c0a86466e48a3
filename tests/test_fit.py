"""The joint fit on small synthetic campaigns: evidence against a closed form,
injection and recovery, model comparison, mirror modes, resume, a deliberately
offset proposal, and agreement of the block engine with stock dynesty."""

import json
import math
import os
import signal
import subprocess
import sys
import time

import numpy as np
import pytest
from scipy import stats

from analyser.campaign import SamplerSettings, load_campaign
from analyser.inference.evidence import importance_evidence
from analyser.inference.likelihood import JointModel
from analyser.inference.nested import posterior_samples, run_sampler
from analyser.inference.prefit import run_prefit
from analyser.inference.run import fit_campaign, run_warnings
from analyser.physics import predict_observables
from analyser.results.bundle import summariser, variant_results, write_bundle

from .fitting import make_campaign, scenario

FRAME = ("x0_mas", "y0_mas", "vx0_mas_yr", "vy0_mas_yr", "vz0_km_s")


def _fix_all_but_frame(sc, truth_stars):
    """Scenario whose only free parameters are the frame terms (linear, Gaussian
    priors): mass, distance and every element fixed at the truth."""
    pri = sc["campaign"]["priors"]
    pri["mass_msun"] = {"fixed": sc["truth"]["mass_msun"]}
    pri["distance_pc"] = {"fixed": sc["truth"]["distance_pc"]}
    star_priors = {}
    for star, el in truth_stars.items():
        star_priors[star] = {k: {"fixed": el[k]} for k in
                             ("period_yr", "e", "cos_i", "Omega_deg", "omega_deg", "phase")}
    sc["campaign"]["star_priors"] = star_priors
    return sc


def _closed_form_log_z(campaign, truth):
    """ln Z of the linear-Gaussian model: data = orbit + A beta + noise with
    beta ~ N(0, S), so Z = N(d - orbit; 0, C + A S A^T) (textbook linear
    Gaussian marginal likelihood, e.g. Bishop 2006, eq. 2.115)."""
    glob = dict(truth["globals"], x0_mas=0.0, y0_mas=0.0, vx0_mas_yr=0.0, vy0_mas_yr=0.0,
                vz0_km_s=0.0, t_ref_yr=campaign.reference_epoch_yr)
    pri = campaign.global_priors
    total = 0.0
    a, v = campaign.astrometry, campaign.velocities
    for coord, pos_key, drift_key in ((0, "x0_mas", "vx0_mas_yr"), (1, "y0_mas", "vy0_mas_yr")):
        resid, design, sig = [], [], []
        for star in campaign.stars:
            m = a.star == star
            el = _elements(truth, star)
            obs = predict_observables(glob, el, a.epoch_yr[m])
            model = obs.x_mas if coord == 0 else obs.y_mas
            data = a.x_mas[m] if coord == 0 else a.y_mas[m]
            resid.append(data - model)
            design.append(np.column_stack([np.ones(m.sum()),
                                           a.epoch_yr[m] - campaign.reference_epoch_yr]))
            sig.append(a.x_err_mas[m] if coord == 0 else a.y_err_mas[m])
        r, A, s = np.concatenate(resid), np.vstack(design), np.concatenate(sig)
        prior_cov = np.diag([pri[pos_key].b ** 2, pri[drift_key].b ** 2])
        total += stats.multivariate_normal(np.zeros(r.size), np.diag(s**2) + A @ prior_cov @ A.T
                                           ).logpdf(r)
    resid, sig = [], []
    for star in campaign.stars:
        m = v.star == star
        if m.any():
            obs = predict_observables(glob, _elements(truth, star), v.epoch_yr[m])
            resid.append(v.v_km_s[m] - obs.v_km_s)
            sig.append(v.v_err_km_s[m])
    r, s = np.concatenate(resid), np.concatenate(sig)
    cov = np.diag(s**2) + pri["vz0_km_s"].b ** 2 * np.ones((r.size, r.size))
    total += stats.multivariate_normal(np.zeros(r.size), cov).logpdf(r)
    return total


def _elements(truth, star):
    return {k: truth["stars"][star][k] for k in
            ("period_yr", "e", "i_deg", "Omega_deg", "omega_deg", "t_p_yr")}


def test_evidence_matches_the_closed_form_of_a_linear_gaussian_campaign(tmp_path):
    sc = scenario(stars=("TC-1", "TC-2"))
    _, truth = make_campaign(tmp_path / "probe", sc)   # the fit's parametrisation of the truth
    sc = _fix_all_but_frame(sc, truth["stars"])
    campaign, truth = make_campaign(tmp_path / "c", sc)
    exact = _closed_form_log_z(campaign, truth)
    fits = fit_campaign(campaign, tmp_path / "out", variants=["gr"])
    fit = fits["gr"]
    assert fit.theta.shape[1] == 5
    assert abs(fit.log_z - exact) < 3.0 * fit.log_z_err + 0.05
    # the posterior is exactly Gaussian: Laplace and importance sampling agree too
    assert fit.prefit.laplace_log_z == pytest.approx(exact, abs=0.05)
    assert abs(fit.importance["log_z"] - exact) < 3.0 * fit.importance["log_z_err"] + 0.05


@pytest.fixture(scope="module")
def relativistic_fit(tmp_path_factory):
    """Three stars with strong relativistic signals, GR and Newtonian variants."""
    folder = tmp_path_factory.mktemp("gr")
    campaign, truth = make_campaign(folder, scenario(stars=("TC-1", "TC-2", "TC-3")))
    fits = fit_campaign(campaign, folder / "out", variants=["newtonian", "gr"], workers=2,
                        finish=summariser(campaign, folder / "out"))
    doc = write_bundle(folder / "out", campaign, fits, "test", time.time())
    return campaign, truth, fits, doc


def test_summaries_made_in_the_workers_equal_those_made_afterwards(relativistic_fit,
                                                                    tmp_path):
    campaign, _, fits, _ = relativistic_fit
    for name, fit in fits.items():
        assert fit.summary is not None, name
        again = variant_results(campaign, fit, tmp_path)
        assert json.dumps(again, default=str, sort_keys=True) == \
            json.dumps(fit.summary, default=str, sort_keys=True), name


def test_injection_recovery_three_stars(relativistic_fit):
    """Every true global inside its 99.7% posterior interval (GR variant)."""
    campaign, truth, fits, doc = relativistic_fit
    fit = fits["gr"]
    names = JointModel(campaign, "gr").layout.free_names
    for k, name in enumerate(names):
        if name in truth["globals"]:
            lo, hi = np.percentile(fit.theta[:, k], [0.15, 99.85])
            assert lo <= truth["globals"][name] <= hi, name
    # and the elements of the best-measured star
    for key in ("period_yr", "e", "cos_i"):
        k = names.index(f"TC-1.{key}")
        lo, hi = np.percentile(fit.theta[:, k], [0.15, 99.85])
        assert lo <= truth["stars"]["TC-1"][key] <= hi, key


def test_relativity_is_preferred_decisively_when_simulated(relativistic_fit):
    _, _, _, doc = relativistic_fit
    row = doc["model_comparison"]["against_reference"]["newtonian"]
    assert doc["model_comparison"]["preferred"] == "gr"
    assert row["ln_bayes_factor"] < -5.0          # Kass & Raftery: very strong (2 ln B > 10)
    assert row["strength"] == "very strong"


def test_bundle_reports_each_variant_with_its_checks(relativistic_fit):
    _, _, fits, doc = relativistic_fit
    for name, v in doc["variants"].items():
        assert v["log_z"] == pytest.approx(fits[name].log_z)
        assert set(v["evidence_checks"]) >= {"laplace_log_z", "importance_log_z"}
        g = v["globals"]["mass_msun"]
        assert g["lo95"] < g["lo68"] < g["median"] < g["hi68"] < g["hi95"]
        assert v["derived"]["TC-1"]["periapsis_speed_km_s"]["median"] > 1000.0


def test_newtonian_not_rejected_when_simulated_newtonian(tmp_path):
    sc = scenario(stars=("TC-1", "TC-2"), **{"truth.f_sp": 0.0, "truth.f_z": 0.0,
                                            "scenario.dynamics": "kepler"})
    campaign, _ = make_campaign(tmp_path, sc)
    fits = fit_campaign(campaign, tmp_path / "out", variants=["newtonian", "gr"], workers=2)
    ln_b = fits["newtonian"].log_z - fits["gr"].log_z
    assert ln_b > -1.0


def test_mirror_modes_are_kept_and_weighed(tmp_path):
    """A star without velocities has two mirror modes; the light-travel time
    breaks their symmetry (z changes sign), weakly at milliarcsecond errors
    (at the 0.05 mas of interferometry it often decides).  Each mode's
    posterior mass must match its weight from the Laplace evidence of that
    mode with every parameter free (an independent estimate: Newton's method
    and a Hessian, no sampling).  The peak likelihoods at the first mode's
    globals are no such check: the globals shift with the mode, and here the
    mode with the lower peak at fixed globals carries ~63% of the mass."""
    sc = scenario(stars=("TC-1", "TC-2"), **{"observing.KITE.error_mas": 1.0,
                                            "campaign.sampler.live_points": 250})
    sc["stars"]["TC-2"].update(velocities=False, i_deg=60.0)
    campaign, _ = make_campaign(tmp_path, sc)
    fits = fit_campaign(campaign, tmp_path / "out", variants=["gr"])
    doc = write_bundle(tmp_path / "out", campaign, fits, "test", time.time())
    mirror = doc["variants"]["gr"]["mirror_ambiguity"]["TC-2"]
    fractions = [m["fraction"] for m in mirror["modes"]]
    assert sum(fractions) == pytest.approx(1.0)
    expected = mirror["laplace_fractions"]
    assert sum(expected) == pytest.approx(1.0)
    assert 0.1 < expected[1] < 0.9               # the set-up keeps both modes in play
    # measured over four seeds: 0.62-0.69 against a Laplace 0.63; nested
    # sampling's split between modes scatters by ~0.1 at 250 live points
    assert fractions[1] == pytest.approx(expected[1], abs=0.15)
    big = [m["parameters"]["Omega_deg"]["median"] for m in mirror["modes"]]
    assert abs((big[0] - big[1]) % 360.0 - 180.0) < 10.0


def test_offset_proposal_is_detected_and_the_fit_recovers(tmp_path, monkeypatch):
    """Repartitioning stays exact whatever the proposal, but a proposal centred
    6 sigma off in the mass makes a single pass inefficient and unreliable.
    The pass detects it (posterior in the proposal's far tails), and the full
    fit, whose first pass re-centres the proposal, returns the evidence of
    importance sampling and says the prefit's mode was off."""
    import analyser.inference.run as run_module
    campaign, _ = make_campaign(tmp_path, scenario(stars=("TC-1",)))
    model = JointModel(campaign, "gr")
    prefit = run_prefit(model, seed=3)
    imp = importance_evidence(model, prefit, n=4000, seed=4)
    shifted = prefit.__class__(**{**prefit.__dict__})
    shifted.centres = prefit.centres.copy()
    shifted.centres[0] += 6.0 * prefit.sigma[0]
    run = run_sampler(model, shifted, SamplerSettings(live_points=150, dlogz=0.1), seed=5,
                      progress=False)
    theta, _, _ = posterior_samples(run, model.layout.free_prior_arrays())
    log_like = np.array([model.loglike(t) for t in theta])
    assert any("far tails" in w for w in run_warnings(run, prefit, log_like, imp))

    monkeypatch.setattr(run_module, "run_prefit", lambda *a, **k: shifted)
    fit = run_module.fit_variant(campaign, "gr", tmp_path / "out", progress=False)
    assert abs(fit.log_z - imp.log_z) < 3.0 * math.hypot(fit.log_z_err, imp.log_z_err) + 0.1
    assert any("Laplace sigma from the prefit's mode" in w for w in fit.warnings)


def _weighted_moments(x, w=None):
    w = np.full(x.shape[0], 1.0 / x.shape[0]) if w is None else w / np.sum(w)
    mean = w @ x
    return mean, np.sqrt(w @ (x - mean) ** 2)


def test_block_engine_agrees_with_stock_dynesty(tmp_path):
    """Same posterior as the stock run on the original prior with dynesty's
    own rslice sampler, and the same posterior and evidence as importance
    sampling from the Laplace approximation (ESS ~8600 here, the sharpest
    reference).

    The stock run's evidence is no reference: with these default settings
    it comes out high.  Measured on this campaign, importance sampling
    -224.95 +- 0.01; stock, seeds 8, 9, 10: -222.16, -223.61, -222.74
    (quoted errors ~0.72); this engine, seeds 7, 11, 12: -225.10, -224.74,
    -225.07 (errors ~0.23).

    Posteriors are compared by each global's mean (within 0.3 posterior
    sigma) and width (within 20%).  A two-sample KS test is no fair judge of
    resampled nested-sampling output: its draws repeat and their live-point
    ancestries are correlated, so two runs of the same engine that differ by
    0.1 sigma in a mean already give KS p ~ 1e-5 (measured)."""
    campaign, _ = make_campaign(tmp_path, scenario(stars=("TC-1",)))
    model = JointModel(campaign, "gr")
    prefit = run_prefit(model, seed=3)
    settings = SamplerSettings(live_points=150, dlogz=0.1)
    fast = run_sampler(model, prefit, settings, seed=7, progress=False, engine="blocked")
    stock = run_sampler(model, prefit, settings, seed=8, progress=False, engine="stock")
    imp = importance_evidence(model, prefit, n=20000, seed=4)
    assert imp.ess > 1000
    fp = model.layout.free_prior_arrays()
    n_glob = int(model.layout.block_start[1])
    a, _, _ = posterior_samples(fast, fp)
    b, _, _ = posterior_samples(stock, fp)
    ref = np.array([fp.from_fit(p) for p in imp.phi])
    m_ref, s_ref = _weighted_moments(ref[:, :n_glob], imp.weights())
    for other in (b, ref):
        m_a, s_a = _weighted_moments(a[:, :n_glob])
        m_o, s_o = (m_ref, s_ref) if other is ref else _weighted_moments(other[:, :n_glob])
        for k in range(n_glob):
            name = model.layout.free_names[k]
            assert abs(m_a[k] - m_o[k]) < 0.3 * s_ref[k], name
            assert 0.8 < s_a[k] / s_o[k] < 1.25, name
    assert abs(fast.results.logz[-1] - imp.log_z) < 3.0 * math.hypot(
        fast.results.logzerr[-1], imp.log_z_err) + 0.1


RESUME_SCRIPT = """
import sys
from analyser.campaign import load_campaign
from analyser.inference.run import fit_campaign
fit_campaign(load_campaign(sys.argv[1]), sys.argv[2], variants=["gr"], resume=True)
"""


def test_resume_after_a_kill_gives_the_same_posterior(tmp_path):
    sc = scenario(stars=("TC-1",), **{"campaign.sampler": {"live_points": 1200, "dlogz": 0.05,
                                                            "checkpoint_seconds": 1}})
    campaign, _ = make_campaign(tmp_path, sc)
    out = tmp_path / "killed"
    proc = subprocess.Popen([sys.executable, "-c", RESUME_SCRIPT, str(tmp_path / "campaign.toml"),
                             str(out)], stderr=subprocess.DEVNULL)
    checkpoint = out / "checkpoints" / "gr.dynesty"
    deadline = time.time() + 600
    while not checkpoint.exists() and time.time() < deadline and proc.poll() is None:
        time.sleep(0.5)
    time.sleep(2.0)
    assert proc.poll() is None, "the run ended before it could be interrupted"
    os.kill(proc.pid, signal.SIGKILL)
    proc.wait()
    assert checkpoint.exists()
    resumed = fit_campaign(campaign, out, variants=["gr"], resume=True)["gr"]
    assert resumed.resumed
    straight = fit_campaign(campaign, tmp_path / "straight", variants=["gr"])["gr"]
    assert abs(resumed.log_z - straight.log_z) < 3.0 * math.hypot(resumed.log_z_err,
                                                                 straight.log_z_err)
    # same posterior within sampling noise (see the stock comparison for why
    # moments rather than a KS test)
    m_r, s_r = _weighted_moments(resumed.theta)
    m_s, s_s = _weighted_moments(straight.theta)
    assert np.all(np.abs(m_r - m_s) < 0.3 * s_s)
    assert np.all((0.8 < s_r / s_s) & (s_r / s_s < 1.25))


def test_a_fit_is_deterministic_for_its_seed(tmp_path):
    campaign, _ = make_campaign(tmp_path, scenario(stars=("TC-1",)))
    a = fit_campaign(campaign, tmp_path / "a", variants=["gr"])["gr"]
    b = fit_campaign(campaign, tmp_path / "b", variants=["gr"])["gr"]
    assert a.log_z == b.log_z
    assert np.array_equal(a.theta, b.theta)
