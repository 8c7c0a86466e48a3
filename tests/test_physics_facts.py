"""Facts the physics must reproduce, each with its source."""

import math

import numpy as np
import pytest
from astropy import constants as aconst
from astropy import units as u

from analyser.physics import emission_epochs, kepler_state, predict_observables, semi_major_axis_au
from analyser.physics import constants as const
from analyser.physics.light import relativistic_excess
from analyser.physics.observables import build_orbits, element_row
from analyser.physics.orbits import MEAN_MOTION, ONE_PLUS_K

from .conftest import S2_LIKE_ELEMENTS, S2_LIKE_GLOBALS, dense_epochs


def _apsidal(period_yr, e, mass_msun):
    """Periapsis advance per radial period (rad) and the radial period (yr)
    of the analytic 1PN orbit with these osculating elements."""
    el = dict(period_yr=period_yr, e=e, i_deg=30.0, Omega_deg=0.0, omega_deg=0.0, t_p_yr=2000.0)
    orbit = build_orbits(element_row(el)[None, :], const.GM_SUN * mass_msun,
                         1.0 / const.C_AU_YR**2)[0]
    return 2 * math.pi * (orbit[ONE_PLUS_K] - 1.0), 2 * math.pi / orbit[MEAN_MOTION]


def test_mercury_perihelion_advance():
    """42.98 arcsec per century (classic textbook value, e.g. Weinberg 1972).
    Mercury: P = 0.2408467 yr, e = 0.205630 (from memory)."""
    advance, period = _apsidal(0.2408467, 0.205630, 1.0)
    per_century = advance * (100.0 / period) * u.rad
    assert per_century.to_value(u.arcsec) == pytest.approx(42.98, abs=0.02)


def test_solar_surface_gravitational_redshift():
    """G M_sun / (R_sun c) = 0.636 km/s (textbook; IAU nominal R_sun from astropy)."""
    r_sun = (aconst.R_sun).to_value(u.au)
    z_c = relativistic_excess(0.0, 0.0, 0.0, r_sun, const.GM_SUN, const.C_AU_YR)
    assert z_c * const.KM_S_PER_AU_YR == pytest.approx(0.636, abs=0.001)


def test_s2_like_periapsis_advance_is_about_12_arcmin():
    """~12 arcmin per orbit for the best-measured Galactic-Centre star
    (GRAVITY Collaboration 2020, A&A 636, L5; from memory)."""
    advance, _ = _apsidal(S2_LIKE_ELEMENTS["period_yr"], S2_LIKE_ELEMENTS["e"],
                          S2_LIKE_GLOBALS["mass_msun"])
    assert math.degrees(advance) * 60 == pytest.approx(12.1, abs=0.3)


def test_s2_periapsis_speed_2018_solution():
    """Periapsis speed ~7650 km/s, ~2.55% of c, for the 2018 solution of the
    best-measured Galactic-Centre star: M = 4.100e6 M_sun, R0 = 8122 pc,
    a = 125.5 mas, e = 0.88466 (GRAVITY Collaboration 2018, A&A 615, L15;
    from memory)."""
    a_au = 125.5e-3 * 8122.0
    mu = const.GM_SUN * 4.100e6
    e = 0.88466
    speed = math.sqrt(mu / a_au * (1 + e) / (1 - e)) * const.KM_S_PER_AU_YR
    assert speed == pytest.approx(7650, rel=0.01)


def test_s2_like_periapsis_distance_and_redshift():
    """Periapsis ~120 AU (~17 light-hours: within a light-day, fact of the
    trade) and a combined transverse-Doppler plus gravitational redshift of
    ~200 km/s at periapsis (GRAVITY Collaboration 2018, A&A 615, L15; from
    memory)."""
    el, g = S2_LIKE_ELEMENTS, S2_LIKE_GLOBALS
    pos, _ = kepler_state(el, g["mass_msun"], el["t_p_yr"])
    light_hours = (np.linalg.norm(pos) * u.au / aconst.c).to_value(u.hour)
    assert 15 < light_hours < 24
    t = np.linspace(el["t_p_yr"] - 0.05, el["t_p_yr"] + 0.05, 41)
    gr = predict_observables(g, el, t)
    newton_z = predict_observables(dict(g, f_z=0.0), el, t)
    excess = gr.v_km_s - newton_z.v_km_s
    assert excess.max() == pytest.approx(200.0, rel=0.05)


def test_s2_like_roemer_delay_is_several_days():
    """The Roemer delay across the orbit spans several days (about 8 d peak
    to peak for this star; published studies quote a few days, from memory)."""
    t = np.linspace(2002.0, 2018.0, 400)
    delay_days = (t - emission_epochs(S2_LIKE_GLOBALS, S2_LIKE_ELEMENTS, t)) * 365.25
    span = delay_days.max() - delay_days.min()
    assert 4.0 < span < 12.0


def test_sixteen_year_orbit_around_four_million_suns():
    """A ~16-yr orbit around ~4e6 M_sun has a ~ 1000 AU and, at e ~ 0.88,
    periapsis within about a light-day (fact of the trade)."""
    a = semi_major_axis_au(16.0, 4.0e6)
    assert 950 < a < 1050
    r_p = a * (1 - 0.88)
    assert (r_p * u.au / aconst.c).to_value(u.day) < 1.0
