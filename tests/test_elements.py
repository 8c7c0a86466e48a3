"""Element conversions: state vectors, Thiele-Innes constants, Kepler's third law."""

import math

import numpy as np
import pytest
from astropy import constants as const
from astropy import units as u

from analyser.physics import (elements_from_state, elements_from_thiele_innes, kepler_state,
                              mirror, period_from_axis_yr, semi_major_axis_au, thiele_innes)
from analyser.physics.constants import C_AU_YR, GM_SUN
from analyser.physics.kepler import solve_kepler

from .conftest import S2_LIKE_ELEMENTS


def test_constants_are_the_iau_2015_nominal_values():
    """GM_sun = 1.3271244e20 m^3 s^-2 (IAU 2015 Resolution B3); c exact (SI)."""
    gm = (GM_SUN * u.au**3 / u.year**2).to(u.m**3 / u.s**2)
    assert gm.value == pytest.approx(1.3271244e20, rel=1e-12)
    assert (C_AU_YR * u.au / u.year).to_value(u.m / u.s) == pytest.approx(299792458.0, rel=1e-14)


def test_gaussian_year():
    """A 1 AU orbit around 1 M_sun takes 365.2568983 d, the Gaussian year
    (k = 0.01720209895; fact of the trade, from memory)."""
    assert period_from_axis_yr(1.0, 1.0) * 365.25 == pytest.approx(365.2568983, abs=2e-5)


def test_third_law_with_astropy_units():
    """a^3 = G M P^2 / (4 pi^2), evaluated independently with astropy Quantities."""
    p, m = 16.0455 * u.year, 4.261e6 * u.M_sun
    a_ref = np.cbrt(const.G * m * p**2 / (4 * np.pi**2)).to_value(u.au)
    assert semi_major_axis_au(16.0455, 4.261e6) == pytest.approx(a_ref, rel=1e-4)  # G vs GM_sun


def test_state_round_trip():
    rng = np.random.default_rng(3)
    for _ in range(50):
        el = dict(period_yr=rng.uniform(2, 200), e=rng.uniform(0, 0.98),
                  i_deg=rng.uniform(1, 179), Omega_deg=rng.uniform(0, 360),
                  omega_deg=rng.uniform(0, 360), t_p_yr=rng.uniform(1990, 2030))
        t = el["t_p_yr"] + rng.uniform(-0.5, 0.5) * el["period_yr"]
        pos, vel = kepler_state(el, 4e6, t)
        back = elements_from_state(pos, vel, 4e6, t)
        assert back["period_yr"] == pytest.approx(el["period_yr"], rel=1e-9)
        assert back["e"] == pytest.approx(el["e"], abs=1e-9)
        assert back["i_deg"] == pytest.approx(el["i_deg"], abs=1e-7)
        for key in ("Omega_deg", "omega_deg"):
            diff = (back[key] - el[key] + 180) % 360 - 180
            assert abs(diff) < 1e-6
        assert back["t_p_yr"] == pytest.approx(el["t_p_yr"], abs=1e-7 * el["period_yr"])


def test_thiele_innes_reproduce_sky_positions_and_invert():
    el = dict(S2_LIKE_ELEMENTS)
    a_mas = 125.0
    A, B, F, G, C, H = thiele_innes(a_mas, el["i_deg"], el["Omega_deg"], el["omega_deg"])
    t = np.linspace(2000, 2020, 40)
    pos, _ = kepler_state(el, 4.261e6, t)
    a_au = semi_major_axis_au(el["period_yr"], 4.261e6)
    big_e = solve_kepler(2 * math.pi / el["period_yr"] * (t - el["t_p_yr"]), el["e"])
    X, Y = np.cos(big_e) - el["e"], math.sqrt(1 - el["e"]**2) * np.sin(big_e)
    assert np.allclose(A * X + F * Y, pos[:, 1] / a_au * a_mas, atol=1e-9)   # North
    assert np.allclose(B * X + G * Y, pos[:, 0] / a_au * a_mas, atol=1e-9)   # East
    assert np.allclose(C * X + H * Y, pos[:, 2] / a_au * a_mas, atol=1e-9)   # line of sight
    a, i, big_omega, omega = elements_from_thiele_innes(A, B, F, G)
    assert a == pytest.approx(a_mas, rel=1e-12)
    assert i == pytest.approx(el["i_deg"], abs=1e-9)
    # The sky constants leave the (Omega, omega) + 180 deg pair open: we get
    # the member with Omega in [0, 180).
    mirrored = mirror(el)
    assert big_omega == pytest.approx(mirrored["Omega_deg"], abs=1e-9)
    assert omega == pytest.approx(mirrored["omega_deg"], abs=1e-9)


def test_mirror_is_an_involution():
    el = dict(S2_LIKE_ELEMENTS)
    twice = mirror(mirror(el))
    for key in el:
        assert twice[key] == pytest.approx(el[key], abs=1e-12)
