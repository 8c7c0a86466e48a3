"""Shared fixtures and reference orbits for the test suite."""

import numpy as np
import pytest

# Orbit of the best-measured star of the Milky Way's central cluster, rounded
# (GRAVITY Collaboration 2020, A&A 636, L5; from memory): P = 16.0455 yr,
# e = 0.8847, i = 134.57 deg, Omega = 228.17 deg, omega = 66.26 deg,
# t_p = 2018.379, M = 4.261e6 M_sun, R0 = 8246.7 pc.
S2_LIKE_ELEMENTS = dict(period_yr=16.0455, e=0.8847, i_deg=134.57, Omega_deg=228.17,
                        omega_deg=66.26, t_p_yr=2018.379)
S2_LIKE_GLOBALS = dict(mass_msun=4.261e6, distance_pc=8246.7, x0_mas=0.0, y0_mas=0.0,
                       vx0_mas_yr=0.0, vy0_mas_yr=0.0, vz0_km_s=0.0, f_sp=1.0, f_z=1.0,
                       t_ref_yr=2010.0)
# A harder orbit of our own: shorter and more eccentric, observed two orbits
# after its reference periapsis.
HARD_ELEMENTS = dict(period_yr=11.0, e=0.93, i_deg=60.0, Omega_deg=100.0, omega_deg=250.0,
                     t_p_yr=2000.0)


def dense_epochs(start, stop, periapsis, n=200, n_close=100, half_width=0.2):
    """Even epochs plus a dense cluster around a periapsis passage."""
    return np.sort(np.r_[np.linspace(start, stop, n),
                         np.linspace(periapsis - half_width, periapsis + half_width, n_close)])


@pytest.fixture
def s2_like():
    return dict(S2_LIKE_GLOBALS), dict(S2_LIKE_ELEMENTS)
