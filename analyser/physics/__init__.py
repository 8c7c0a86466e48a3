"""Forward physics: constants, Kepler's equation, elements, 1PN dynamics, light.

The public entry point is `predict_observables`; see observables.py for the
compiled many-star kernels used by the fits.  Physics never imports inference.
"""

from .constants import C_AU_YR, C_KM_S, GM_SUN, KM_S_PER_AU_YR
from .elements import (ELEMENT_KEYS, elements_from_state, elements_from_thiele_innes,
                       kepler_state, mirror, periapsis_state, period_from_axis_yr,
                       semi_major_axis_au, thiele_innes)
from .kepler import solve_kepler
from .observables import (DYNAMICS, GLOBAL_KEYS, Observables, emission_epochs,
                          periapsis_passage, predict_observables, semi_major_axis_mas,
                          with_radial_period)
from .orbits import periapsis_advance_rad

__all__ = ["C_AU_YR", "C_KM_S", "GM_SUN", "KM_S_PER_AU_YR", "ELEMENT_KEYS",
           "elements_from_state", "elements_from_thiele_innes", "kepler_state", "mirror",
           "periapsis_state", "period_from_axis_yr", "semi_major_axis_au", "thiele_innes",
           "solve_kepler", "DYNAMICS", "GLOBAL_KEYS", "Observables", "emission_epochs",
           "periapsis_passage", "predict_observables", "semi_major_axis_mas",
           "with_radial_period", "periapsis_advance_rad"]
