"""Posterior summaries: quantiles, moments and the best sample of each parameter.

Angles are summarised on the circle: the samples are unwrapped around their
circular mean before quantiles are taken, and reported back in [0, 360) (or
[0, 1) for phases), so a posterior straddling 0 deg is not torn in two.
A star with the mirror ambiguity is summarised per mode instead (see
`mirror_modes`): averaging across the two modes would describe neither.
"""

import math

import numpy as np

PERIODS = {"Omega_deg": 360.0, "omega_deg": 360.0, "phase": 1.0}


def _unwrap(values, period):
    angles = 2 * math.pi * np.asarray(values) / period
    centre = math.atan2(np.mean(np.sin(angles)), np.mean(np.cos(angles))) * period / (2 * math.pi)
    return centre + (np.asarray(values) - centre + 0.5 * period) % period - 0.5 * period


def summarise(values, best_index=None, period=0.0):
    """Summary dict of equal-weight samples: median, 68% and 95% central
    intervals, mean, std and the value of the maximum-posterior sample."""
    x = np.asarray(values, dtype=float)
    if period:
        x = _unwrap(x, period)
    q = np.percentile(x, [2.5, 16.0, 50.0, 84.0, 97.5])
    out = {"median": q[2], "lo68": q[1], "hi68": q[3], "lo95": q[0], "hi95": q[4],
           "mean": float(np.mean(x)), "std": float(np.std(x, ddof=1)) if x.size > 1 else 0.0,
           "map": float(x[best_index]) if best_index is not None else math.nan}
    if period:
        # keep the interval's shape, put the centre into the canonical range
        shift = math.floor(out["median"] / period) * period
        for key in ("median", "lo68", "hi68", "lo95", "hi95", "mean", "map"):
            out[key] -= shift
    return {k: float(v) for k, v in out.items()}


def mirror_modes(omega_big, reference_deg):
    """Boolean mask of samples in the mode around Omega = reference (the
    other mode lies 180 deg away)."""
    diff = (np.asarray(omega_big) - reference_deg + 180.0) % 360.0 - 180.0
    return np.abs(diff) < 90.0


def kass_raftery(ln_b):
    """Verbal strength of evidence for a ln Bayes factor (Kass & Raftery 1995,
    JASA 90, 773, their table on 2 ln B: 0-2, 2-6, 6-10, > 10)."""
    two = 2.0 * abs(ln_b)
    if two < 2.0:
        words = "not worth more than a bare mention"
    elif two < 6.0:
        words = "positive"
    elif two < 10.0:
        words = "strong"
    else:
        words = "very strong"
    return words
