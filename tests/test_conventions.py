"""Sign and orientation conventions (DESIGN.md section 3)."""

import math

import numpy as np
import pytest

from analyser.physics import emission_epochs, kepler_state, mirror, predict_observables
from analyser.physics import constants as const

from .conftest import S2_LIKE_ELEMENTS, S2_LIKE_GLOBALS

NEWTON = dict(S2_LIKE_GLOBALS, f_sp=0.0, f_z=0.0)


def test_positive_velocity_means_receding():
    """A receding star has a growing light-travel delay (z away from us)."""
    t = np.linspace(2000.0, 2016.0, 801)
    delay = t - emission_epochs(NEWTON, S2_LIKE_ELEMENTS, t, "kepler")
    v = predict_observables(NEWTON, S2_LIKE_ELEMENTS, t, "kepler").v_km_s
    d_delay = np.gradient(delay, t)
    mask = np.abs(v) > 50
    assert np.all(np.sign(v[mask]) == np.sign(d_delay[mask]))


@pytest.mark.parametrize("i_deg, sense", [(30.0, +1), (150.0, -1)])
def test_inclination_below_90_moves_with_increasing_position_angle(i_deg, sense):
    el = dict(S2_LIKE_ELEMENTS, i_deg=i_deg)
    t = np.linspace(2010.0, 2011.0, 50)
    obs = predict_observables(NEWTON, el, t, "kepler")
    pa = np.unwrap(np.arctan2(obs.x_mas, obs.y_mas))   # from North through East
    assert np.all(sense * np.diff(pa) > 0)


def test_ascending_node_is_where_the_star_recedes():
    el = S2_LIKE_ELEMENTS
    t = np.linspace(el["t_p_yr"] - el["period_yr"], el["t_p_yr"], 20001)
    pos, vel = kepler_state(el, NEWTON["mass_msun"], t)
    crossing = np.nonzero(np.diff(np.sign(pos[:, 2])) > 0)[0][0]  # z: - to +
    x, y = pos[crossing, 0], pos[crossing, 1]
    pa_node = math.degrees(math.atan2(x, y)) % 360
    assert pa_node == pytest.approx(el["Omega_deg"], abs=0.05)
    assert vel[crossing, 2] > 0


def test_mirror_solution_same_sky_track_negated_velocity_without_roemer_delay():
    el, twin = S2_LIKE_ELEMENTS, mirror(S2_LIKE_ELEMENTS)
    t = np.linspace(2000.0, 2030.0, 300)
    a = predict_observables(NEWTON, el, t, "kepler", light_travel=False)
    b = predict_observables(NEWTON, twin, t, "kepler", light_travel=False)
    assert np.allclose(a.x_mas, b.x_mas, atol=1e-9) and np.allclose(a.y_mas, b.y_mas, atol=1e-9)
    assert np.allclose(a.v_km_s, -b.v_km_s, atol=1e-9)
    # the Roemer delay breaks the symmetry by a measurable amount
    a = predict_observables(NEWTON, el, t, "kepler")
    b = predict_observables(NEWTON, twin, t, "kepler")
    assert np.max(np.hypot(a.x_mas - b.x_mas, a.y_mas - b.y_mas)) > 0.05


def test_relativity_switched_off_is_exactly_kepler_plus_roemer():
    t = np.linspace(1990.0, 2030.0, 500)
    a = predict_observables(NEWTON, S2_LIKE_ELEMENTS, t, "analytic-1pn")
    k = predict_observables(NEWTON, S2_LIKE_ELEMENTS, t, "kepler")
    for p, q in zip(a, k):
        assert np.array_equal(p, q)


def test_frame_offset_drift_and_systemic_velocity():
    t = np.array([2000.0, 2010.0, 2020.0])
    base = predict_observables(NEWTON, S2_LIKE_ELEMENTS, t)
    moved = predict_observables(dict(NEWTON, x0_mas=1.0, y0_mas=-2.0, vx0_mas_yr=0.1,
                                     vy0_mas_yr=0.2, vz0_km_s=5.0), S2_LIKE_ELEMENTS, t)
    dt = t - NEWTON["t_ref_yr"]
    assert np.allclose(moved.x_mas - base.x_mas, 1.0 + 0.1 * dt)
    assert np.allclose(moved.y_mas - base.y_mas, -2.0 + 0.2 * dt)
    assert np.allclose(moved.v_km_s - base.v_km_s, 5.0)


def test_one_au_at_one_kiloparsec_is_one_mas():
    """Small-angle definition of the parsec: 1 AU at 1 pc subtends 1 arcsec."""
    el = dict(S2_LIKE_ELEMENTS)
    g1 = dict(NEWTON, distance_pc=1000.0)
    g2 = dict(NEWTON, distance_pc=2000.0)
    t = np.array([2005.0])
    a = predict_observables(g1, el, t, light_travel=False)
    b = predict_observables(g2, el, t, light_travel=False)
    pos, _ = kepler_state(el, NEWTON["mass_msun"], t)
    assert a.x_mas[0] == pytest.approx(pos[0, 0], rel=1e-12)
    assert b.x_mas[0] == pytest.approx(pos[0, 0] / 2, rel=1e-12)


def test_bad_inputs_raise_clear_errors():
    with pytest.raises(ValueError, match="dynamics"):
        predict_observables(NEWTON, S2_LIKE_ELEMENTS, [2000.0], "newton")
    with pytest.raises(ValueError, match="eccentricity"):
        predict_observables(NEWTON, dict(S2_LIKE_ELEMENTS, e=1.0), [2000.0])
    with pytest.raises(KeyError, match="distance_pc"):
        g = dict(NEWTON)
        del g["distance_pc"]
        predict_observables(g, S2_LIKE_ELEMENTS, [2000.0])
