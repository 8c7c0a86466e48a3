"""The joint fit's speed and exactness, side by side in one run.

On one simulated campaign and the same compiled likelihood:
  * stock dynesty: its rslice sampler on the original prior, default bound;
  * the package's engine: the full fit of a variant (prefit, first pass,
    repartitioned block-slice run);
against two references: importance sampling from the prefit's Laplace
approximation (heavy-tailed; ESS and bootstrap error printed) and the
Laplace value itself.  Printed: wall seconds, likelihood-equivalent
evaluations, ln Z +- err, each run's offset from the importance-sampling
reference, and per global parameter the shift of the posterior mean and the
ratio of widths against the reference and a weighted two-sample KS p-value
(each run's weighted samples against the weighted importance draws).

    python benchmarks/joint_fit.py --stars 4            # the 4-star comparison
    python benchmarks/joint_fit.py --stars 30 --no-stock  # the 30-star engine run
    python benchmarks/joint_fit.py --stars 30 --no-stock --workers 2   # ... on two cores
    python benchmarks/joint_fit.py --stars 4 --no-stock --repeats 10  # calibrated KS

The KS p-value needs each sample's effective size.  Importance draws are
independent, so their Kish size is right; nested-sampling draws are not: a
new point is a short walk from a live point, so neighbours in a run share
ancestry and the run's posterior scatters more than its Kish size says.
`--repeats K` fits the campaign K more times with other seeds and measures
that scatter directly: per global parameter, the spread of the runs'
posterior means against the posterior width gives the runs' effective size
(var(mean) = sigma^2 / n_eff), its ratio to the Kish size (the inflation),
the mean shift over all runs with its standard error (a bias test that the
scatter cannot fake) and every run's KS p-value at the calibrated size.
"""

import argparse
import dataclasses
import math
import multiprocessing
import sys
import time
from pathlib import Path

import numpy as np
from scipy import stats

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from analyser.campaign import load_campaign, SamplerSettings          # noqa: E402
from analyser.inference.evidence import importance_evidence           # noqa: E402
from analyser.inference.likelihood import JointModel                  # noqa: E402
from analyser.inference.nested import run_sampler                     # noqa: E402
from analyser.inference.prefit import run_prefit                      # noqa: E402
from analyser.inference.run import fit_variant, pool_queue_size, variant_seed  # noqa: E402
from analyser.simulate import simulate, write_campaign                # noqa: E402


def scenario(n_stars, seed):
    """An invented cluster of n stars, periods 6-200 yr, 25 years of data."""
    rng = np.random.default_rng(seed)
    stars = {}
    for k in range(n_stars):
        period = float(np.exp(rng.uniform(np.log(6.0), np.log(200.0))))
        stars[f"BM-{k + 1:02d}"] = {
            "period_yr": period, "e": float(rng.uniform(0.2, 0.9)),
            "i_deg": float(np.degrees(np.arccos(rng.uniform(-0.95, 0.95)))),
            "Omega_deg": float(rng.uniform(0, 360)), "omega_deg": float(rng.uniform(0, 360)),
            "t_p_yr": float(2012.0 + rng.uniform(-0.5, 0.5) * period)}
    return {
        "scenario": {"name": f"benchmark cluster, {n_stars} stars", "seed": seed,
                     "reference_epoch": 2012.0, "dynamics": "analytic-1pn"},
        "truth": {"mass_msun": 3.8e6, "distance_pc": 7600.0, "x0_mas": 0.1, "y0_mas": -0.2,
                  "vx0_mas_yr": 0.02, "vy0_mas_yr": 0.01, "vz0_km_s": 3.0, "f_sp": 1.0,
                  "f_z": 1.0},
        "stars": stars,
        "observing": {
            "OSPREY": {"kind": "astrometry", "first_year": 2000, "last_year": 2025,
                       "nights_per_season": 3, "error_mas": 0.4},
            "GANNET": {"kind": "velocity", "first_year": 2003, "last_year": 2025,
                       "nights_per_season": 2, "error_km_s": 15.0,
                       "stars_per_night": min(n_stars, 6)}},
        "campaign": {
            "instruments": {"OSPREY": {"kind": "astrometry", "reference": True},
                            "GANNET": {"kind": "velocity", "reference": True}},
            "priors": {"mass_msun": {"log-uniform": [1e6, 1e7]},
                       "distance_pc": {"uniform": [4000, 12000]},
                       "x0_mas": {"gaussian": [0, 1]}, "y0_mas": {"gaussian": [0, 1]},
                       "vx0_mas_yr": {"gaussian": [0, 0.1]},
                       "vy0_mas_yr": {"gaussian": [0, 0.1]}, "vz0_km_s": {"gaussian": [0, 20]}},
            "star_priors": {"default": {"period_yr": {"log-uniform": [2, 2000]}}},
            "variants": {"reference": "gr", "gr": {"f_sp": {"fixed": 1}, "f_z": {"fixed": 1}}},
            "sampler": {"live_points": 300, "dlogz": 0.1}},
    }


def normalised(log_w):
    w = np.exp(np.asarray(log_w) - np.max(log_w))
    return w / w.sum()


def weighted_ks(x_a, w_a, x_b, w_b):
    """Two-sample KS test of weighted samples: the statistic from the two
    weighted empirical CDFs, the p-value from the KS distribution at the
    samples' Kish effective sizes (common practice for weighted draws).
    Nested-sampling draws are also correlated through their live-point
    ancestry, which this does not capture: p is still optimistic about the
    sample sizes, i.e. conservative about agreement."""
    grid = np.sort(np.concatenate([x_a, x_b]))
    cdf = [np.cumsum(w[np.argsort(x)])[np.searchsorted(np.sort(x), grid, side="right") - 1]
           * (grid >= np.min(x)) for x, w in ((x_a, w_a), (x_b, w_b))]
    d = float(np.max(np.abs(cdf[0] - cdf[1])))
    return d, ks_p(d, kish_size(w_a), kish_size(w_b))


def moments(x, w):
    mean = w @ x
    return mean, np.sqrt(w @ (x - mean) ** 2)


def kish_size(w):
    """Kish effective sample size of normalised weights."""
    return 1.0 / np.sum(w ** 2)


def ks_p(d, n_a, n_b):
    """KS p-value of statistic d for two samples of (effective) sizes n_a, n_b."""
    n_e = n_a * n_b / (n_a + n_b)
    return float(stats.kstwo.sf(d, max(1, int(round(n_e)))))


def engine_fit(job):
    """One engine fit of the campaign with another seed (a pool task)."""
    campaign_file, work, seed = job
    campaign = dataclasses.replace(load_campaign(campaign_file), seed=seed)
    t0 = time.time()
    fit = fit_variant(campaign, "gr", work, progress=False)
    return (time.time() - t0, fit.likelihood_calls, fit.log_z, fit.log_z_err,
            fit.raw["samples"], normalised(fit.raw["logwt"]))


def calibrated_repeats(runs, names, ref_phi, ref_w, ref_ess, ref_log_z):
    """Print the run-to-run study of `runs` (wall, calls, ln Z, err, samples, w)."""
    k = len(names)
    m_ref, s_ref = moments(ref_phi[:, :k], ref_w)
    shifts, kish, d_stat = [], [], []
    for *_, phi, w in runs:
        shifts.append((moments(phi[:, :k], w)[0] - m_ref) / s_ref)
        kish.append(kish_size(w))
        d_stat.append([weighted_ks(phi[:, j], w, ref_phi[:, j], ref_w)[0] for j in range(k)])
    shifts, kish, d_stat = np.array(shifts), np.array(kish), np.array(d_stat)
    n = len(runs)
    scatter = shifts.std(axis=0, ddof=1)          # sd of a run's mean, in posterior sigma
    n_eff = 1.0 / scatter ** 2
    inflation = np.mean(kish) / n_eff
    # KS p-values (run, parameter) at the Kish and at the calibrated sizes
    p_kish = np.array([[ks_p(d_stat[r, j], kish[r], ref_ess) for j in range(k)]
                       for r in range(n)])
    p_cal = np.array([[ks_p(d_stat[r, j], kish[r] / inflation[j], ref_ess) for j in range(k)]
                      for r in range(n)])
    print(f"\nRun-to-run study: {n} engine fits, seeds differing (run 0 is the one above; "
          "the others ran one per worker process)")
    print(f"{'run':>4s} {'wall s':>7s} {'calls':>9s} {'ln Z':>11s} {'+-':>6s} {'- IS ref':>9s} "
          f"{'Kish n':>7s} {'min KS p (Kish)':>16s} {'min KS p (calibrated)':>22s}")
    for r, (wall, calls, log_z, err, _, _) in enumerate(runs):
        print(f"{r:4d} {wall:7.1f} {calls:9d} {log_z:11.3f} {err:6.3f} {log_z - ref_log_z:+9.3f} "
              f"{kish[r]:7.0f} {p_kish[r].min():16.3g} {p_cal[r].min():22.3g}")
    log_z = np.array([r[2] for r in runs])
    print(f"ln Z over the runs: mean - IS ref {log_z.mean() - ref_log_z:+.3f} +- "
          f"{log_z.std(ddof=1) / math.sqrt(n):.3f}; run-to-run sd {log_z.std(ddof=1):.3f}, "
          f"mean quoted error {np.mean([r[3] for r in runs]):.3f}")
    print("Per global parameter: mean shift over the runs +- its standard error (sigma),")
    print("sd of one run's mean: measured and as the Kish size predicts, the inflation")
    print("(Kish size / effective size) and the runs' KS p-values at the calibrated size:")
    for j, name in enumerate(names):
        print(f"  {name:14s} {shifts[:, j].mean():+6.3f} +- {scatter[j] / math.sqrt(n):.3f}   "
              f"sd {scatter[j]:.3f} vs {np.sqrt(np.mean(1.0 / kish)):.3f}   "
              f"x{inflation[j]:5.1f}   min p {p_cal[:, j].min():.3f}")


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--stars", type=int, default=4)
    ap.add_argument("--seed", type=int, default=5)
    ap.add_argument("--no-stock", action="store_true", help="skip stock dynesty")
    ap.add_argument("--stock-max-calls", type=int, default=5_000_000,
                    help="stop stock dynesty after this many calls (then reported as such)")
    ap.add_argument("--importance-draws", type=int, default=100000)
    ap.add_argument("--workers", type=int, default=1,
                    help="processes for the engine's proposals (dynesty's pool and queue)")
    ap.add_argument("--repeats", type=int, default=0,
                    help="engine fits with other seeds beside the first, to calibrate the "
                         "KS test's sample size by their scatter (see above)")
    ap.add_argument("--work", default="runs/benchmark")
    args = ap.parse_args()

    work = Path(args.work) / f"{args.stars}-stars"
    doc, astro, vel, truth = simulate(scenario(args.stars, args.seed))
    write_campaign(work / "campaign", doc, astro, vel, truth)
    campaign = load_campaign(work / "campaign" / "campaign.toml")
    model = JointModel(campaign, "gr")
    fp = model.layout.free_prior_arrays()
    print(f"campaign: {args.stars} stars, {len(campaign.astrometry)} astrometric and "
          f"{len(campaign.velocities)} velocity epochs, {model.layout.n_free} free parameters")

    t0 = time.time()
    prefit = run_prefit(model, seed=variant_seed(campaign.seed, "gr"))
    prefit_s = time.time() - t0
    imp = importance_evidence(model, prefit, n=args.importance_draws, seed=1)
    ref_w = normalised(imp.log_weight)
    print(f"prefit {prefit_s:.1f} s; Laplace ln Z {prefit.laplace_log_z:.3f}; importance "
          f"sampling ln Z {imp.log_z:.3f} +- {imp.log_z_err:.3f} (ESS {imp.ess:.0f} of {imp.n})")

    rows = []
    t0 = time.time()
    pool = multiprocessing.get_context("spawn").Pool(args.workers) if args.workers > 1 else None
    fit = fit_variant(campaign, "gr", work / "engine", progress=False, pool=pool,
                      queue_size=pool_queue_size(args.workers) if pool else None)
    if pool:
        pool.close()
    engine_s = time.time() - t0
    n_theta = model.layout.n_free
    rows.append(("engine", engine_s, fit.likelihood_calls, fit.log_z, fit.log_z_err,
                 fit.raw["samples"][:, :n_theta], normalised(fit.raw["logwt"])))
    if not args.no_stock:
        settings = SamplerSettings(live_points=campaign.sampler.live_points,
                                   dlogz=campaign.sampler.dlogz, max_calls=args.stock_max_calls)
        t0 = time.time()
        stock = run_sampler(model, prefit, settings, seed=3, progress=False, engine="stock")
        stock_s = time.time() - t0
        rows.append(("stock", stock_s, stock.likelihood_calls, float(stock.results.logz[-1]),
                     float(stock.results.logzerr[-1]), stock.results.samples[:, :n_theta],
                     normalised(stock.results.logwt)))
        if stock.likelihood_calls >= args.stock_max_calls:
            print(f"note: stock dynesty stopped at the cap of {args.stock_max_calls} calls "
                  "before its stopping criterion")

    names = model.layout.free_names[:int(model.layout.block_start[1])]
    m_ref, s_ref = moments(imp.phi[:, :len(names)], ref_w)
    print()
    print("Against the importance-sampling reference (globals, fit coordinates): ln Z offset,")
    print("the largest shift of a posterior mean in reference sigma, the range of width")
    print("ratios, and the smallest weighted KS p-value.")
    print(f"{'run':8s} {'wall s':>9s} {'calls':>11s} {'ln Z':>11s} {'+-':>6s} "
          f"{'- IS ref':>9s} {'(sigma)':>8s} {'max shift':>10s} {'widths':>12s} {'min KS p':>9s}")
    table = {}
    for name, wall, calls, log_z, err, phi, w in rows:
        diff = log_z - imp.log_z
        sig = diff / math.hypot(err, imp.log_z_err)
        m, sd = moments(phi[:, :len(names)], w)
        shift = np.abs(m - m_ref) / s_ref
        ratio = sd / s_ref
        ks = [weighted_ks(phi[:, k], w, imp.phi[:, k], ref_w) for k in range(len(names))]
        table[name] = (shift, ratio, ks)
        print(f"{name:8s} {wall:9.1f} {calls:11d} {log_z:11.3f} {err:6.3f} {diff:+9.3f} "
              f"{sig:+8.2f} {shift.max():10.2f} {ratio.min():5.2f}-{ratio.max():5.2f} "
              f"{min(p for _, p in ks):9.3g}")
    print()
    print("Per global parameter: mean shift (sigma), width ratio, weighted KS p:")
    for k, n in enumerate(names):
        print(f"  {n:14s} " + "   ".join(
            f"{name} {table[name][0][k]:5.2f} {table[name][1][k]:5.2f} {table[name][2][k][1]:7.3f}"
            for name in table))
    if rows[-1][0] == "stock":
        print(f"\nwall-time ratio stock / engine: {rows[-1][1] / rows[0][1]:.1f}; "
              f"call ratio: {rows[-1][2] / rows[0][2]:.1f}")
    if args.repeats:
        jobs = [(work / "campaign" / "campaign.toml", work / f"engine-repeat-{r}",
                 campaign.seed + 1 + r) for r in range(args.repeats)]
        with multiprocessing.get_context("spawn").Pool(args.workers) as pool:
            repeats = pool.map(engine_fit, jobs)
        calibrated_repeats([rows[0][1:]] + repeats, names, imp.phi, ref_w, imp.ess, imp.log_z)


if __name__ == "__main__":
    main()
