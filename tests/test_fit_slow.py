"""Slow validation: injection and recovery over several mock campaigns.

Run with `python -m pytest -m slow`."""

import numpy as np
import pytest

from analyser.inference.likelihood import JointModel
from analyser.inference.run import fit_campaign

from .fitting import make_campaign, scenario

SEEDS = (101, 202, 303, 404, 505, 606)


@pytest.mark.slow
def test_injection_recovery_over_mock_campaigns(tmp_path):
    """Every true global inside its 99.7% interval in every mock, and the
    truth inside the 68% interval in about 68% of the (mock, global) pairs."""
    inside68, total = 0, 0
    for seed in SEEDS:
        sc = scenario(stars=("TC-1", "TC-2", "TC-3"), **{"scenario.seed": seed})
        campaign, truth = make_campaign(tmp_path / str(seed), sc)
        fit = fit_campaign(campaign, tmp_path / f"out{seed}", variants=["gr"], workers=1)["gr"]
        names = JointModel(campaign, "gr").layout.free_names
        for k, name in enumerate(names):
            if name not in truth["globals"]:
                continue
            lo3, lo1, hi1, hi3 = np.percentile(fit.theta[:, k], [0.15, 16, 84, 99.85])
            value = truth["globals"][name]
            assert lo3 <= value <= hi3, (seed, name)
            inside68 += lo1 <= value <= hi1
            total += 1
    # binomial: 42 pairs at p = 0.68 give 28.6 +- 3.0; allow 3 sigma
    assert abs(inside68 - 0.68 * total) < 3.0 * np.sqrt(total * 0.68 * 0.32)
