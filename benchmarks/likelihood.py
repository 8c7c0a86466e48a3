"""Speed of the compiled likelihood on a campaign: ms per call, ns per observation.

    python benchmarks/likelihood.py [CAMPAIGN.toml] [--variant gr]

Times the joint ln L at the prefit's mode and each star's term alone (as
the block sampler updates them).  An observation is an astrometric epoch
(x, y) or a velocity.  Default campaign: the bundled demo.
"""

import argparse
from pathlib import Path

import numpy as np

from analyser.data.loader import load
from analyser.inference.likelihood import JointModel, all_star_loglikes, star_loglike
from analyser.inference.prefit import run_prefit
from forward_model import best_time   # the sibling script (benchmarks/ is on sys.path)

ROOT = Path(__file__).resolve().parents[1]


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("campaign", nargs="?", default=str(ROOT / "demo_inputs" / "campaign.toml"))
    ap.add_argument("--variant", default="gr")
    args = ap.parse_args()
    model = JointModel(load(Path(args.campaign)), args.variant)
    prefit = run_prefit(model, seed=1, n_starts=1)
    full = model.full(prefit.theta)
    d = model.data
    n_stars = d.obs_first.size - 1
    n_obs = int(d.astro_first[-1] + d.vel_first[-1])   # an astrometric (x, y) pair or a velocity
    out = np.empty(n_stars)
    t_all = best_time(lambda: all_star_loglikes(full, d, out))
    assert np.all(np.isfinite(out)), "the prefit's mode should have a finite likelihood"
    per_star = [best_time(lambda s=s: star_loglike(s, full, d), 0.2) for s in range(n_stars)]
    print(f"{args.campaign}: {n_stars} stars, {n_obs} observations")
    print(f"joint ln L: {t_all * 1e3:.3f} ms per call, "
          f"{t_all / n_obs * 1e9:.0f} ns per observation")
    print(f"one star's term: {np.mean(per_star) * 1e6:.1f} us on average "
          f"({min(per_star) * 1e6:.1f} to {max(per_star) * 1e6:.1f})")


if __name__ == "__main__":
    main()
