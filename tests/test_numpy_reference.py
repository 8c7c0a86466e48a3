"""The compiled kernels against the plain-numpy implementation of the same
closed-form model (analyser.physics.reference), which the speed benchmark
uses as its baseline: an internal consistency check of two independent
codings, the outside checks being in test_dynamics_reference.py."""

import numpy as np
import pytest

from analyser.physics import constants as const
from analyser.physics import reference
from analyser.physics.light import newton_passes
from analyser.physics.observables import observe_stars


# the heavier mass needs two Newton passes (light.newton_passes); its most
# eccentric short orbits would plunge, so e stops lower there
@pytest.mark.parametrize("mass_msun, e_max, passes", [(4.0e6, 0.99, 1), (5.0e7, 0.95, 2)])
def test_compiled_kernel_equals_the_numpy_reference(mass_msun, e_max, passes):
    mu = const.GM_SUN * mass_msun
    assert newton_passes(mu, const.C_AU_YR) == passes
    rng = np.random.default_rng(3)
    n_stars = 12
    n_obs = rng.integers(30, 50, n_stars)      # most not a multiple of the padding
    el = np.column_stack([
        rng.uniform(5, 100, n_stars), rng.uniform(0.05, e_max, n_stars),
        np.radians(rng.uniform(5, 175, n_stars)), np.radians(rng.uniform(0, 360, n_stars)),
        np.radians(rng.uniform(0, 360, n_stars)), rng.uniform(1990, 2020, n_stars)])
    t = np.concatenate([np.sort(rng.uniform(1995, 2025, n)) for n in n_obs])
    need_v = np.ones(t.size, bool)
    first = np.r_[0, np.cumsum(n_obs)]
    eps = 1.0 / const.C_AU_YR**2
    frame = np.array([0.1, -0.2, 0.01, 0.02, 3.0, 2010.0])
    out = np.empty((4, t.size))
    observe_stars(el, first, t, need_v, mu, eps, const.C_AU_YR, 1.0, 0.125, frame, out)
    x, y, v = reference.observe(el, np.repeat(np.arange(n_stars), n_obs), t, mu, eps, 1.0,
                                0.125, frame)
    # the reference iterates the Roemer delay to 1e-10 yr; the kernel takes a
    # fixed number of Newton passes and a first-order last step below 1e-6 yr,
    # whose error is ~ jerk * dt^2, far below these bounds
    assert np.max(np.abs(out[0] - x)) < 1e-6 and np.max(np.abs(out[1] - y)) < 1e-6
    assert np.max(np.abs(out[2] - v)) < 1e-3
