"""Nested sampling of one model variant with dynesty: set-up, checkpoints,
resume, progress.

Two engines share the same compiled likelihood:
  "blocked"  the package's engine: repartitioned proposal prior built from
             the prefit (proposal.py) and the compiled block-slice internal
             sampler (engine.py), single-ellipsoid bound for slice shapes;
  "stock"    dynesty's own rslice sampler on the original prior with its
             default multi-ellipsoid bound, kept for comparisons.

The run checkpoints to a file every `checkpoint_seconds`; `resume=True`
continues from it.  dynesty's generator state is inside the checkpoint, so a
resumed run continues exactly where the checkpoint was written.
"""

import math
import os
import sys
import time
import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np

import dynesty
from dynesty import NestedSampler

from .engine import BlockSliceSampler, log_target
from .likelihood import JointModel
from .proposal import build_space, cube_to_theta

# Walk settings of the block engine (per new point): one sweep with three
# slices per star block and, on the global block, a quarter of its coordinates
# (at least six).  Fewer star slices biased ln Z upward by ~0.5 nat on a 2-star
# campaign (25 parameters) against importance sampling; these did not.  With
# three global slices the runs' mass and distance means scattered ~2.6x more
# than their Kish sizes predict (7 runs of a 4-star campaign); with six they
# scattered as predicted, for ~40% more likelihood calls.
DEFAULT_SWEEPS = 1
DEFAULT_STAR_SLICES = 3
MIN_GLOBAL_SLICES = 6
# Independent draws tried per block step from an ellipsoid around the live points
# (engine.py); six cut ln Z's bias on a 4-star campaign from +0.23 to -0.06 nat.
DEFAULT_JUMPS = 6


class PriorTransform:
    """Picklable u -> v for dynesty (v: the fit coordinates of the free
    parameters, zero-padded to the cube's dimension)."""

    def __init__(self, space):
        self.space = space

    def __call__(self, u):
        theta = np.empty(self.space.n_theta)
        cube_to_theta(self.space, np.asarray(u, float), theta)
        v = np.zeros(len(u))
        v[:theta.size] = theta
        return v


class LogTarget:
    """Picklable ln L' (likelihood times prior over proposal) of a v vector."""

    def __init__(self, space, data, fixed_full, free_index):
        self.args = (space, data, fixed_full, free_index)

    def __call__(self, v):
        space = self.args[0]
        return float(log_target(np.asarray(v[:space.n_theta], float), *self.args))


@dataclass
class SamplerRun:
    """What a finished run hands on: dynesty's results and how it got them."""
    variant: str
    engine: str
    results: object             # dynesty Results
    space: object
    n_theta: int
    wall_seconds: float
    likelihood_calls: int
    resumed: bool
    settings: dict


class ProgressLine:
    """dynesty print function: a redrawn line on a terminal, or one line every
    `every` seconds in logs (CI)."""

    def __init__(self, label, stream=None, every=30.0):
        self.stream = stream or sys.stderr
        self.tty = hasattr(self.stream, "isatty") and self.stream.isatty()
        self.every = every
        self.label = label
        self.start = time.time()
        self.last = -math.inf

    def __call__(self, results, niter, ncall, add_live_it=None, dlogz=None, logl_max=None):
        now = time.time()
        if not self.tty and now - self.last < self.every:
            return
        self.last = now
        delta = results.delta_logz
        shown = f"{delta:9.3f}" if delta < 1e6 else "    >1e+6"
        text = (f"{self.label}: iter {niter:6d}  dlogz {shown} > {dlogz:.3f}  "
                f"ln Z {results.logz:11.3f}  calls {ncall:9d}  "
                f"{now - self.start:7.0f} s")
        if self.tty:
            self.stream.write("\r" + text)
        else:
            self.stream.write(text + "\n")
        self.stream.flush()

    def close(self):
        if self.tty:
            self.stream.write("\n")
            self.stream.flush()


def run_sampler(model: JointModel, prefit, settings, checkpoint=None, resume=False,
                pool=None, queue_size=None, seed=0, progress=True, engine=None, label=""):
    """Nested-sample one variant; returns a SamplerRun."""
    engine = engine or settings.engine
    lay = model.layout
    data = model.data
    fixed = np.where(np.isfinite(lay.fixed_full), lay.fixed_full, 0.0)
    space = build_space(lay, prefit, settings.proposal_widen, settings.proposal_dof,
                        repartition=(engine == "blocked"))
    ndim = int(space.u_start[-1])
    ptform = PriorTransform(space)
    loglike = LogTarget(space, data, fixed, lay.free)
    periodic = np.nonzero(space.periodic_u)[0]
    global_slices = settings.slices or max(MIN_GLOBAL_SLICES,
                                           int(space.u_start[1] - space.u_start[0]) // 4)
    if engine == "blocked":
        walk = {"sweeps": DEFAULT_SWEEPS, "star_slices": DEFAULT_STAR_SLICES,
                "global_slices": global_slices, "jumps": DEFAULT_JUMPS}
        sample = BlockSliceSampler(model=(space, data, fixed, lay.free), **walk)
        bound = settings.bound
    elif engine == "stock":
        sample, bound, walk = "rslice", "multi", {"slices": settings.slices or None}
    else:
        raise ValueError(f"unknown sampler engine {engine!r}")
    label = f"{lay.variant} [{engine}{' ' + label if label else ''}]"
    printer = ProgressLine(label) if progress else None
    t0 = time.time()
    resumed = False
    if resume and checkpoint and os.path.exists(checkpoint):
        sampler = NestedSampler.restore(str(checkpoint), pool=pool)
        resumed = True
    else:
        kwargs = {}
        if engine == "stock" and settings.slices:
            kwargs["slices"] = settings.slices
        with warnings.catch_warnings():
            # dynesty warns about few live points per dimension because its own
            # samplers need them; the block engine draws its moves itself
            if engine == "blocked":
                warnings.filterwarnings("ignore", message="Beware! Having `nlive")
            sampler = NestedSampler(loglike, ptform, ndim, nlive=settings.live_points,
                                    bound=bound, sample=sample,
                                    periodic=periodic if periodic.size else None,
                                    rstate=np.random.default_rng(seed), pool=pool,
                                    queue_size=queue_size, **kwargs)
    if checkpoint:
        Path(checkpoint).parent.mkdir(parents=True, exist_ok=True)
    run_kw = dict(dlogz=settings.dlogz, print_progress=progress,
                  print_func=printer if progress else None,
                  checkpoint_file=str(checkpoint) if checkpoint else None,
                  checkpoint_every=settings.checkpoint_seconds, resume=resumed)
    if settings.max_calls:
        run_kw["maxcall"] = settings.max_calls
    if not (resumed and sampler.added_live):      # a finished run has nothing to continue
        sampler.run_nested(**run_kw)
    if printer:
        printer.close()
    res = sampler.results
    return SamplerRun(variant=lay.variant, engine=engine, results=res, space=space,
                      n_theta=space.n_theta, wall_seconds=time.time() - t0,
                      likelihood_calls=int(np.sum(res.ncall)), resumed=resumed,
                      settings={"live_points": settings.live_points, "dlogz": settings.dlogz,
                                "bound": bound, "engine": engine,
                                "proposal_widen": settings.proposal_widen,
                                "proposal_dof": settings.proposal_dof, **walk,
                                "dynesty": dynesty.__version__})


def posterior_samples(run: SamplerRun, free_priors, n=None, seed=0):
    """Equal-weight posterior samples of the free parameters' values (n: default
    the effective sample size); also their cube points and the ESS."""
    res = run.results
    w = np.exp(res.logwt - res.logz[-1])
    w /= w.sum()
    ess = 1.0 / np.sum(w**2)
    n = int(n or max(100, round(ess)))
    rng = np.random.default_rng(seed)
    # systematic resampling keeps the weights' information with little noise
    positions = (rng.random() + np.arange(n)) / n
    idx = np.minimum(np.searchsorted(np.cumsum(w), positions), w.size - 1)
    phi = res.samples[idx, :run.n_theta]
    theta = np.array([free_priors.from_fit(p) for p in phi])
    return theta, res.samples_u[idx], ess
