"""Fit a campaign: every model variant, each with prefit, nested sampling and
the evidence cross-checks, in parallel processes where there are workers.

`fit_variant` does one variant and returns a `VariantFit` (plain, picklable
data); `fit_campaign` runs the requested variants in parallel processes, one
per variant, confined to `workers` CPUs when there are more variants than
workers (where the system cannot confine them, `workers` processes take the
variants in turn); with one variant the workers share dynesty's queue.  Each variant's seed is
derived from the campaign's seed and the variant's name, so results do not
depend on the order or the parallelism.
"""

import math
import os
import pickle
import time
import zlib
from concurrent.futures import ProcessPoolExecutor
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
from scipy.stats import chi2

from .evidence import importance_evidence
from .likelihood import JointModel
from .nested import posterior_samples, run_sampler
from .prefit import run_prefit
from .proposal import refit_from_posterior

# Evidence cross-check thresholds (nats).
LAPLACE_TOLERANCE = 3.0      # "a few nats": Laplace is only approximate
SHORTFALL_TOLERANCE = 3.0    # best sampled ln L below the prefit's, beyond the expected
TAIL_FRACTION = 0.01         # posterior weight allowed in the proposal's far tails
TAIL_QUANTILE = 0.005        # ... beyond these cube quantiles
PILOT_MIN_LIVE = 60          # live points of the proposal-shaping first pass
PILOT_DLOGZ = 0.5
CALIBRATED_WIDEN = 1.5       # proposal widening once shaped by the first pass
RETRY_TAIL_FRACTION = 0.05   # posterior weight in the far tails that triggers a rerun
MAX_RETRIES = 1


@dataclass
class VariantFit:
    variant: str
    engine: str
    seed: int
    log_z: float
    log_z_err: float
    information: float
    likelihood_calls: int
    iterations: int
    live_points: int
    efficiency: float
    wall_seconds: float          # nested sampling, every pass of this invocation
    prefit_seconds: float
    resumed: bool
    sampler_settings: dict
    theta: np.ndarray            # equal-weight posterior samples (free parameters)
    log_like: np.ndarray         # their ln L
    log_prior: np.ndarray        # their ln prior
    ess: float
    prefit: object               # inference.prefit.Prefit
    importance: dict
    raw: dict                    # dynesty's arrays, for re-analysis
    warnings: list = field(default_factory=list)
    summary: dict = None         # `finish(fit)` where the fit ran, if asked for


def variant_seed(seed, variant):
    return (int(seed) * 1000003 + zlib.crc32(variant.encode())) % (2**31 - 1)


def _tail_fraction(run, space):
    """Posterior weight with any proposal coordinate in the far tails."""
    res = run.results
    w = np.exp(res.logwt - res.logz[-1])
    w /= w.sum()
    cols = []
    for b in range(space.n_blocks):
        if space.n_modes[b] == 0:
            continue
        start = space.u_start[b] + (1 if space.n_modes[b] == 2 else 0)
        cols.extend(range(start, space.u_start[b + 1]))
    if not cols:
        return 0.0
    u = res.samples_u[:, cols]
    far = np.any((u < TAIL_QUANTILE) | (u > 1.0 - TAIL_QUANTILE), axis=1)
    return float(np.sum(w[far]))


PILOT_SHIFT_SIGMA = 3.0       # posterior centre this far from the prefit's mode: say so


def _pilot_shift_note(prefit, moved, names):
    """A note when the first pass found the posterior far from the prefit's
    mode (in Laplace standard deviations): the Laplace picture is poor there."""
    shift = np.abs(moved.centres - prefit.centres) / prefit.sigma
    k = int(np.argmax(shift))
    if shift[k] <= PILOT_SHIFT_SIGMA:
        return []
    return [f"the posterior's centre lies {shift[k]:.1f} Laplace sigma from the prefit's mode "
            f"({names[k]}; {int(np.sum(shift > PILOT_SHIFT_SIGMA))} parameter(s) beyond "
            f"{PILOT_SHIFT_SIGMA:g} sigma): the Gaussian approximation is poor there; the "
            "sampler's proposal follows the first pass instead"]


def run_warnings(run, prefit, log_like, imp):
    """Plain-words warnings from the evidence cross-checks and the sampler's
    health: disagreement with importance sampling or the Laplace estimate, a
    best sample clearly short of the prefit's peak, posterior in the
    proposal's far tails."""
    res = run.results
    log_z, log_z_err = float(res.logz[-1]), float(res.logzerr[-1])
    out = []
    combined = math.hypot(log_z_err, imp.log_z_err)
    if imp.ess >= 50 and abs(log_z - imp.log_z) > max(3.0 * combined, 0.5):
        out.append(f"ln Z {log_z:.2f} +- {log_z_err:.2f} disagrees with importance "
                   f"sampling from the prefit ({imp.log_z:.2f} +- {imp.log_z_err:.2f}, "
                   f"ESS {imp.ess:.0f})")
    if abs(log_z - prefit.laplace_log_z) > LAPLACE_TOLERANCE:
        out.append(f"ln Z {log_z:.2f} differs from the Laplace estimate "
                   f"{prefit.laplace_log_z:.2f} by more than {LAPLACE_TOLERANCE:g} nats; "
                   "expected only if the posterior is far from Gaussian")
    # the best of n posterior draws in d dimensions is expected to lie about
    # chi2_d(1/n)/2 below the peak; flag a clearly larger shortfall
    shortfall = prefit.log_like - float(np.max(log_like))
    expected = 0.5 * chi2.ppf(1.0 / max(len(log_like), 2), prefit.phi.size)
    if shortfall > expected + SHORTFALL_TOLERANCE:
        out.append(f"the best sampled ln L is {shortfall:.1f} below the prefit's mode "
                   f"(about {expected:.1f} expected): the sampler may have missed the peak")
    tails = _tail_fraction(run, run.space)
    if tails > TAIL_FRACTION:
        out.append(f"{100 * tails:.1f}% of the posterior lies in the far tails of the "
                   "proposal prior; it may be too narrow (results stay exact, but sampling "
                   "is inefficient and less reliable)")
    return out


def fit_variant(campaign, variant, work_dir, resume=False, pool=None, queue_size=None,
                progress=True, engine=None, importance_draws=2000):
    settings = campaign.sampler
    work = Path(work_dir)
    (work / "checkpoints").mkdir(parents=True, exist_ok=True)
    model = JointModel(campaign, variant)
    seed = variant_seed(campaign.seed, variant)
    prefit_file = work / "checkpoints" / f"{variant}.prefit.pkl"
    t0 = time.time()
    if resume and prefit_file.exists():
        prefit = pickle.loads(prefit_file.read_bytes())
    else:
        prefit = run_prefit(model, seed=seed, n_starts=settings.prefit_starts)
        tmp = prefit_file.with_suffix(".tmp")
        tmp.write_bytes(pickle.dumps(prefit))
        os.replace(tmp, prefit_file)
    prefit_seconds = time.time() - t0
    engine = engine or settings.engine
    pilot_calls, pilot_notes, sampling_seconds = 0, [], 0.0
    if engine == "blocked":
        # a quick first pass with few live points finds where the posterior
        # really is; its mean and covariance shape the final run's proposal
        pilot_settings = replace(settings,
                                 live_points=max(PILOT_MIN_LIVE, int(1.5 * prefit.phi.size)),
                                 dlogz=PILOT_DLOGZ)
        pilot_file = work / "checkpoints" / f"{variant}.pilot.pkl"
        if resume and pilot_file.exists():
            prefit, pilot_calls, pilot_notes = pickle.loads(pilot_file.read_bytes())
            settings = replace(settings, proposal_widen=min(settings.proposal_widen,
                                                            CALIBRATED_WIDEN))
        else:
            pilot = run_sampler(model, prefit, pilot_settings,
                                checkpoint=work / "checkpoints" / f"{variant}.pilot.dynesty",
                                resume=resume, pool=pool, queue_size=queue_size, seed=seed + 7,
                                progress=progress, engine=engine, label="pilot")
            moved = refit_from_posterior(prefit, pilot.space, pilot.results, model.layout)
            pilot_notes = _pilot_shift_note(prefit, moved, model.layout.free_names)
            prefit = moved
            # the final proposal now follows the posterior itself, so it needs
            # less margin than one built from the Laplace approximation
            settings = replace(settings, proposal_widen=min(settings.proposal_widen,
                                                            CALIBRATED_WIDEN))
            pilot_calls = pilot.likelihood_calls
            sampling_seconds += pilot.wall_seconds
            tmp = pilot_file.with_suffix(".tmp")
            tmp.write_bytes(pickle.dumps((prefit, pilot_calls, pilot_notes)))
            os.replace(tmp, pilot_file)
    # the final run; if its posterior sits in the proposal's far tails, the
    # proposal is rebuilt from that posterior and the run repeated (once)
    retried = False
    for attempt in range(1 + MAX_RETRIES):
        name = f"{variant}.dynesty" if attempt == 0 else f"{variant}.retry{attempt}.dynesty"
        run = run_sampler(model, prefit, settings, checkpoint=work / "checkpoints" / name,
                          resume=resume, pool=pool, queue_size=queue_size, seed=seed + attempt,
                          progress=progress, engine=engine,
                          label="" if attempt == 0 else f"retry {attempt}")
        sampling_seconds += run.wall_seconds
        tails = _tail_fraction(run, run.space)
        if engine != "blocked" or tails <= RETRY_TAIL_FRACTION or attempt == MAX_RETRIES:
            break
        pilot_calls += run.likelihood_calls
        prefit = refit_from_posterior(prefit, run.space, run.results, model.layout)
        retried = True
    fp = model.layout.free_prior_arrays()
    theta, _, ess = posterior_samples(run, fp, seed=seed)
    log_like = np.array([model.loglike(t) for t in theta])
    log_prior = np.array([fp.log_prior(t) for t in theta])
    imp = importance_evidence(model, prefit, n=importance_draws, seed=seed + 1)
    res = run.results
    log_z, log_z_err = float(res.logz[-1]), float(res.logzerr[-1])
    tails = _tail_fraction(run, run.space)
    warnings = list(prefit.warnings) + pilot_notes + run_warnings(run, prefit, log_like, imp)
    if retried:
        warnings.append("the first run's posterior lay in the proposal's far tails; the "
                        "proposal was rebuilt from it and the run repeated")
    raw = {k: np.asarray(getattr(res, k)) for k in
           ("samples", "samples_u", "logwt", "logl", "logvol", "logz", "logzerr",
            "information", "ncall")}
    return VariantFit(
        variant=variant, engine=run.engine, seed=seed, log_z=log_z, log_z_err=log_z_err,
        information=float(res.information[-1]),
        likelihood_calls=run.likelihood_calls + pilot_calls,
        iterations=int(res.niter), live_points=int(res.nlive), efficiency=float(res.eff),
        wall_seconds=sampling_seconds, prefit_seconds=prefit_seconds, resumed=run.resumed,
        sampler_settings=run.settings, theta=theta, log_like=log_like, log_prior=log_prior,
        ess=float(ess), prefit=prefit,
        importance={"log_z": imp.log_z, "log_z_err": imp.log_z_err, "ess": imp.ess,
                    "n": imp.n, "tail_fraction": tails},
        raw=raw, warnings=warnings)


def finished(fit, finish):
    """The fit with its summary made by `finish` (None: as it is)."""
    if finish is not None:
        fit.summary = finish(fit)
    return fit


def _fit_in_subprocess(args):
    campaign, variant, work_dir, resume, engine, finish = args
    return finished(fit_variant(campaign, variant, work_dir, resume=resume, progress=True,
                                engine=engine), finish)


def _confine(cpus):
    if cpus is not None:
        os.sched_setaffinity(0, cpus)


# proposals in flight per worker process: the pool's batches are synchronous,
# so with one each a worker idles while the slower finishes; the points then
# start from a contour a few iterations old, which costs ~queue / nlive
QUEUE_PER_WORKER = 4


def pool_queue_size(workers):
    """dynesty's queue size for a pool of `workers` processes."""
    return QUEUE_PER_WORKER * workers


def fit_campaign(campaign, work_dir, variants=None, workers=1, resume=False, engine=None,
                 scheduler=None, finish=None):
    """Fit the variants (default: all of the campaign's); returns {name: VariantFit}.

    `finish` (picklable, fit -> dict) runs on each fit where it was made, as
    soon as it is done, so that summarising one variant overlaps the others'
    sampling; its result is the fit's `summary`."""
    names = list(variants or [v.name for v in campaign.variants])
    for name in names:
        campaign.variant(name)           # fails early on an unknown name
    if scheduler:
        from .distributed import fit_on_cluster
        return fit_on_cluster(campaign, work_dir, names, scheduler, resume=resume, engine=engine,
                              finish=finish)
    out = {}
    if workers > 1 and len(names) > 1:
        processes, cpus = min(workers, len(names)), None
        if workers < len(names) and hasattr(os, "sched_getaffinity"):
            # more variants than workers: run them all at once, confined to
            # `workers` CPUs, rather than leave CPUs idle while the last
            # variants run alone
            processes = len(names)
            available = sorted(os.sched_getaffinity(0))
            cpus = available[:workers] if len(available) > workers else None
        with ProcessPoolExecutor(max_workers=processes, initializer=_confine,
                                 initargs=(cpus,)) as ex:
            jobs = {n: ex.submit(_fit_in_subprocess,
                                 (campaign, n, work_dir, resume, engine, finish))
                    for n in names}
            for n in names:
                out[n] = jobs[n].result()
        return out
    pool = None
    if workers > 1:
        import multiprocessing
        pool = multiprocessing.get_context("spawn").Pool(workers)
    try:
        for n in names:
            out[n] = finished(fit_variant(campaign, n, work_dir, resume=resume, pool=pool,
                                          queue_size=pool_queue_size(workers) if pool else None,
                                          engine=engine), finish)
    finally:
        if pool is not None:
            pool.close()
            pool.join()
    return out
