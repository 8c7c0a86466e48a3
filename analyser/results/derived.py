"""Posterior sample tables and the quantities derived from each sample.

`posterior_table` turns equal-weight samples of a variant's free parameters
into one astropy Table with units: every global (fixed ones as constant
columns), every nuisance, each star's element set in the physics core's names
(period_yr, e, i_deg, Omega_deg, omega_deg, t_p_yr, plus cos_i, phase and
a_mas) and, per star, the derived quantities:

  a_au                     semi-major axis of the osculating orbit
  radial_period_yr         periapsis-to-periapsis period of the 1PN orbit
  periapsis_au, periapsis_light_hours, periapsis_rs (Schwarzschild radii)
  periapsis_speed_km_s, periapsis_beta (v/c)
  gr_advance_arcmin        GR periapsis advance per orbit, 6 pi G M / (c^2 a (1 - e^2))
  redshift_signal_km_s     transverse-Doppler plus gravitational redshift at
                           periapsis, c [gamma (1 - 2GM/(r c^2))^(-1/2) - 1]
  next_periapsis_yr        first periapsis passage after `after_epoch`
  coverage                 fraction of the radial period spanned by the data
"""

import math

import numpy as np
from astropy import units as u
from astropy.table import Table

from ..campaign import GLOBAL_PARAMETERS
from ..data.parameters import internal_unit
from ..physics import constants as const
from ..physics.light import relativistic_excess
from ..physics.orbits import MEAN_MOTION, ORBIT_SIZE, T_P

DERIVED_UNITS = {"a_au": u.au, "radial_period_yr": u.yr, "periapsis_au": u.au,
                 "periapsis_light_hours": u.hour, "periapsis_rs": u.dimensionless_unscaled,
                 "periapsis_speed_km_s": u.km / u.s, "periapsis_beta": u.dimensionless_unscaled,
                 "gr_advance_arcmin": u.arcmin, "redshift_signal_km_s": u.km / u.s,
                 "next_periapsis_yr": u.yr, "coverage": u.dimensionless_unscaled}
ELEMENT_COLUMNS = ("period_yr", "e", "i_deg", "Omega_deg", "omega_deg", "t_p_yr", "cos_i",
                   "phase", "a_mas")


def _unit(name):
    unit = internal_unit(name)
    return None if unit == u.dimensionless_unscaled else unit


def posterior_table(model, theta_samples, after_epoch, data_span):
    """Table of samples (see module docstring).  data_span: per star (first, last)."""
    from ..inference.likelihood import star_orbit
    lay = model.layout
    n = len(theta_samples)
    fulls = np.array([lay.full_vector(t) for t in theta_samples]) if n else \
        np.empty((0, len(lay.names)))
    cols = {}
    for k, name in enumerate(lay.names[:len(GLOBAL_PARAMETERS) + len(lay.nuisance_names)]):
        cols[name] = fulls[:, k]
    mass, dist = fulls[:, 0], fulls[:, 1]
    mu = const.GM_SUN * mass
    orbit = np.empty(ORBIT_SIZE)
    for s, star in enumerate(model.campaign.stars):
        o = lay.star_offset(s)
        period, e, cos_i = fulls[:, o], fulls[:, o + 1], fulls[:, o + 2]
        t_p = np.empty(n)
        radial = np.empty(n)
        for j in range(n):
            star_orbit(s, fulls[j], model.data, orbit)
            t_p[j] = orbit[T_P]
            radial[j] = 2.0 * math.pi / orbit[MEAN_MOTION]
        a_au = np.cbrt(mu * period**2 / (4.0 * math.pi**2))
        r_p = a_au * (1.0 - e)
        v_p = np.sqrt(mu / a_au * (1.0 + e) / (1.0 - e))
        first, last = data_span[s]
        k_next = np.ceil((after_epoch - t_p) / radial)
        excess = np.array([relativistic_excess(v, 0.0, 0.0, r, m, const.C_AU_YR)
                           for v, r, m in zip(v_p, r_p, mu)])
        values = {
            "period_yr": period, "e": e, "i_deg": np.degrees(np.arccos(np.clip(cos_i, -1, 1))),
            "Omega_deg": fulls[:, o + 3] % 360.0, "omega_deg": fulls[:, o + 4] % 360.0,
            "t_p_yr": t_p, "cos_i": cos_i, "phase": fulls[:, o + 5] % 1.0,
            "a_mas": a_au * 1000.0 / dist, "a_au": a_au, "radial_period_yr": radial,
            "periapsis_au": r_p,
            "periapsis_light_hours": r_p / const.C_AU_YR * 365.25 * 24.0,
            "periapsis_rs": r_p / (2.0 * mu / const.C_AU_YR**2),
            "periapsis_speed_km_s": v_p * const.KM_S_PER_AU_YR,
            "periapsis_beta": v_p / const.C_AU_YR,
            "gr_advance_arcmin": np.degrees(6.0 * math.pi * mu / (const.C_AU_YR**2 * a_au
                                                                  * (1.0 - e**2))) * 60.0,
            "redshift_signal_km_s": excess * const.KM_S_PER_AU_YR,
            "next_periapsis_yr": t_p + k_next * radial,
            "coverage": np.minimum((last - first) / radial, 1.0),
        }
        for key, col in values.items():
            cols[f"{star}.{key}"] = col
    table = Table(cols)
    for name in table.colnames:
        base = name.rsplit(".", 1)[-1]
        unit = DERIVED_UNITS.get(base) if base in DERIVED_UNITS else _unit(base)
        if unit is not None and unit != u.dimensionless_unscaled:
            table[name].unit = unit
    return table
