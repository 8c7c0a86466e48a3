"""Parameter layout of one model variant, generated from the campaign.

Every parameter of the model has a place in the "full" vector: the nine
globals first (campaign.GLOBAL_PARAMETERS order), then the instrument
nuisances, then six entries per star (campaign.STAR_PARAMETERS order).  The
sampler sees only the free ones, ordered in blocks: block 0 holds the free
globals and nuisances (they touch every star), block 1 + s the free
parameters of star s.  Given block 0 the stars are independent, which the
sampler and the likelihood exploit.
"""

from dataclasses import dataclass

import numpy as np

from ..campaign import GLOBAL_PARAMETERS, STAR_PARAMETERS, Campaign, Prior
from ..data.parameters import allowed_range
from .priors import KIND_CODE, FreePriors

N_GLOBAL = len(GLOBAL_PARAMETERS)
N_STAR = len(STAR_PARAMETERS)


@dataclass(frozen=True)
class Layout:
    variant: str
    names: tuple            # all parameters, full-vector order
    priors: tuple           # Prior per full-vector entry
    stars: tuple
    nuisance_names: tuple
    free: np.ndarray        # full-vector index of each free parameter, in block order
    block_start: np.ndarray  # free-vector offsets of the blocks (n_blocks + 1)
    fixed_full: np.ndarray  # full vector with fixed values filled, free ones NaN

    @property
    def n_free(self):
        return self.free.size

    @property
    def free_names(self):
        return tuple(self.names[i] for i in self.free)

    @property
    def free_priors(self):
        return tuple(self.priors[i] for i in self.free)

    def star_offset(self, s):
        """Full-vector index of star s's first parameter."""
        return N_GLOBAL + len(self.nuisance_names) + N_STAR * s

    def index(self, name):
        return self.names.index(name)

    def block_of_star(self, s):
        return slice(self.block_start[1 + s], self.block_start[2 + s])

    def full_vector(self, theta):
        """Full vector from the free parameters."""
        full = self.fixed_full.copy()
        full[self.free] = theta
        return full

    def free_prior_arrays(self):
        """FreePriors over the free parameters; Gaussian priors are truncated to
        the parameter's physical range (e.g. mass > 0, 0 <= e < 0.999)."""
        pri = self.free_priors
        lo, hi = [], []
        for name, p in zip(self.free_names, pri):
            rng = allowed_range(name)
            lo.append(rng.low)
            hi.append(rng.high)
        return FreePriors(np.array([KIND_CODE[p.kind] for p in pri], dtype=np.int64),
                          np.array([p.a for p in pri]), np.array([p.b for p in pri]),
                          np.array(lo, dtype=float), np.array(hi, dtype=float),
                          np.array([p.period for p in pri]))

    def periodic_free(self):
        """Free-vector indices of the periodic parameters."""
        return np.array([k for k, p in enumerate(self.free_priors) if p.period > 0], dtype=int)


def build_layout(campaign: Campaign, variant_name: str) -> Layout:
    variant = campaign.variant(variant_name)
    names, priors = [], []
    for name in GLOBAL_PARAMETERS:
        names.append(name)
        priors.append(variant.priors.get(name, campaign.global_priors[name]))
    nuisance = []
    for inst in campaign.instruments.values():
        for name in inst.nuisance_names():
            nuisance.append(name)
            names.append(name)
            priors.append(variant.priors.get(name, campaign.nuisance_priors[name]))
    for star in campaign.stars:
        for name in STAR_PARAMETERS:
            key = f"{star}.{name}"
            names.append(key)
            priors.append(variant.priors.get(key, campaign.star_priors[star][name]))
    free_blocks = [[i for i in range(N_GLOBAL + len(nuisance)) if not priors[i].is_fixed]]
    for s in range(len(campaign.stars)):
        start = N_GLOBAL + len(nuisance) + N_STAR * s
        free_blocks.append([i for i in range(start, start + N_STAR) if not priors[i].is_fixed])
    free = np.array([i for block in free_blocks for i in block], dtype=np.int64)
    block_start = np.cumsum([0] + [len(b) for b in free_blocks]).astype(np.int64)
    fixed_full = np.array([p.a if p.is_fixed else np.nan for p in priors])
    return Layout(variant=variant_name, names=tuple(names), priors=tuple(priors),
                  stars=tuple(campaign.stars), nuisance_names=tuple(nuisance), free=free,
                  block_start=block_start, fixed_full=fixed_full)


def globals_dict(full, reference_epoch):
    """Physics globals dict from a full vector."""
    out = {name: float(full[k]) for k, name in enumerate(GLOBAL_PARAMETERS)}
    out["t_ref_yr"] = reference_epoch
    return out


__all__ = ["Layout", "build_layout", "globals_dict", "N_GLOBAL", "N_STAR",
           "Prior"]
