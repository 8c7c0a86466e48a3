"""Kepler's equation: handbook examples, high-precision round trips, loud failure."""

import math

import mpmath
import numpy as np
import pytest

from analyser.physics.kepler import solve_kepler, true_anomaly


@pytest.mark.parametrize("e, mean_deg, expected_deg", [
    (0.100, 5.0, 5.554589),    # Meeus, Astronomical Algorithms (2nd ed.), ch. 30, Example 30.a (from memory)
    (0.990, 2.0, 32.361007),   # Meeus, ch. 30, the e = 0.99, M = 2 deg example (from memory)
])
def test_meeus_worked_examples(e, mean_deg, expected_deg):
    big_e = math.degrees(solve_kepler(math.radians(mean_deg), e))
    assert big_e == pytest.approx(expected_deg, abs=5e-7)



def test_against_40_digit_solutions_up_to_e_0999():
    """1e-12 rad accuracy against mpmath (arbitrary-precision reference)."""
    mpmath.mp.dps = 40
    rng = np.random.default_rng(1)
    for e in (0.0, 0.3, 0.88, 0.95, 0.99, 0.999):
        for m in np.r_[rng.uniform(-math.pi, math.pi, 15), 1e-6, -1e-6, 1e-3]:
            mp_e, mp_m = mpmath.mpf(float(e)), mpmath.mpf(float(m))
            exact = mpmath.findroot(lambda x: x - mp_e * mpmath.sin(x) - mp_m,
                                    mpmath.mpf(float(solve_kepler(m, e))), tol=1e-35)
            assert abs(solve_kepler(m, e) - float(exact)) < 1e-12


def test_round_trip_mean_eccentric_mean_on_grid():
    e = np.repeat([0.0, 0.1, 0.5, 0.8, 0.9, 0.97, 0.99, 0.995, 0.999], 2001)
    m = np.tile(np.linspace(-20.0, 20.0, 2001), 9)   # several revolutions each way
    big_e = solve_kepler(m, e)
    assert np.max(np.abs(big_e - e * np.sin(big_e) - m)) < 1e-12
    # continuity across revolutions: E increases with M
    for block in big_e.reshape(9, -1):
        assert np.all(np.diff(block) > 0)


@pytest.mark.parametrize("bad", [1.0, 0.9991, -0.01, float("nan"), float("inf")])
def test_fails_loudly_outside_range(bad):
    with pytest.raises(ValueError):
        solve_kepler(0.5, bad)


def test_compiled_kernel_fails_loudly_too():
    from analyser.physics.kepler import eccentric_anomaly
    with pytest.raises(ValueError):
        eccentric_anomaly(0.5, 1.2)


def test_true_anomaly_matches_half_angle_formula():
    """tan(nu/2) = sqrt((1+e)/(1-e)) tan(E/2) (textbook identity)."""
    e = 0.7
    big_e = np.linspace(-3.0, 3.0, 101)
    nu = true_anomaly(big_e, e)
    assert np.allclose(np.tan(nu / 2), math.sqrt((1 + e) / (1 - e)) * np.tan(big_e / 2))


def test_shifted_anomalies_equal_a_fresh_solution():
    """orbits.earlier_anomalies (the Roemer delay's shift of a solved epoch)
    must agree with a fresh Kepler solve at the earlier time, for delays up
    to r / c and e up to 0.99 (more eccentric orbits of these periods are
    unbound at 1PN around this mass).  Epochs lie
    near t_p = 0, where a year has ulp ~1e-15, so that the fresh solve's own
    rounding of t (near 2000 yr it shifts phi by ~5e-12 at periapsis) does not
    mask the comparison."""
    import numba
    import numpy as np

    from analyser.physics import constants as const
    from analyser.physics.observables import build_orbits
    from analyser.physics.orbits import (anomaly_state, earlier_anomalies, orbit_anomalies,
                                         orbit_is_bound)

    @numba.njit(error_model="numpy")
    def worst(orbit, t, frac):
        out = 0.0
        for k in range(t.size):
            s0, c0, sp0, cp0 = orbit_anomalies(orbit, t[k])
            x, y, z, _, _, _ = anomaly_state(orbit, s0, c0, sp0, cp0)
            delay = frac[k] * math.sqrt(x * x + y * y + z * z) / const.C_AU_YR
            a = earlier_anomalies(orbit, s0, c0, sp0, cp0, delay)
            b = orbit_anomalies(orbit, t[k] - delay)
            for j in range(4):
                out = max(out, abs(a[j] - b[j]))
        return out

    rng = np.random.default_rng(8)
    mu = const.GM_SUN * 4.0e6
    for period, e in ((16.0, 0.88), (11.0, 0.93), (300.0, 0.99), (2.0, 0.3),
                      (200.0, 0.0)):
        orbit = build_orbits(np.array([[period, e, 1.0, 2.0, 3.0, 0.0]]), mu,
                             1.0 / const.C_AU_YR**2)[0]
        assert orbit_is_bound(orbit)
        t = np.r_[np.linspace(-1e-3, 1e-3, 201), rng.uniform(-30.0, 30.0, 2000)]
        frac = rng.uniform(-1.0, 1.0, t.size)
        assert worst(orbit, t, frac) < 2e-13, (period, e)
