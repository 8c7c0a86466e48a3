"""Physical constants in the internal unit system, taken once from astropy.

Inside the code lengths are astronomical units, times Julian years (365.25 d)
and masses solar masses.  G*M_sun and c are the IAU 2015 nominal / exact SI
values shipped with astropy, converted here and nowhere else.  Sky offsets are
milliarcseconds and distances parsec: an offset of d AU seen from R0 pc is
d * 1000 / R0 mas (the parsec is defined so that 1 AU subtends 1 arcsec).
"""

from astropy import constants as _const
from astropy import units as _u

_AU_M = (1 * _u.au).to_value(_u.m)
_YEAR_S = (1 * _u.year).to_value(_u.s)  # astropy's `year` is the Julian year

#: G * M_sun in AU^3 / yr^2 (IAU 2015 nominal solar mass parameter).
GM_SUN = _const.GM_sun.to_value(_u.m**3 / _u.s**2) * _YEAR_S**2 / _AU_M**3
#: Speed of light in AU / yr.
C_AU_YR = _const.c.to_value(_u.m / _u.s) * _YEAR_S / _AU_M
#: Speed of light in km / s.
C_KM_S = _const.c.to_value(_u.km / _u.s)
#: One AU / yr in km / s.
KM_S_PER_AU_YR = _AU_M / _YEAR_S / 1000.0
#: Days per Julian year.
DAYS_PER_YEAR = 365.25
#: Seconds per Julian year.
SECONDS_PER_YEAR = _YEAR_S
#: Astronomical units per parsec.
AU_PER_PC = (1 * _u.pc).to_value(_u.au)
#: Metres per astronomical unit.
AU_M = _AU_M
#: Milliarcseconds per radian.
MAS_PER_RAD = (1 * _u.rad).to_value(_u.mas)
