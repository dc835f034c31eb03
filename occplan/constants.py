"""Physical constants in fixed units (km, s, kg).

Sources: IAU 2012 resolution B2 (astronomical unit), CODATA 2018 (c by definition, G).
"""

SPEED_OF_LIGHT_KM_S = 299792.458  # exact, SI definition
AU_KM = 149597870.7  # exact, IAU 2012 resolution B2
GRAVITATIONAL_CONSTANT_KM3_KG_S2 = 6.67430e-20  # CODATA 2018, 6.67430e-11 m^3 kg^-1 s^-2
GRAVITATIONAL_CONSTANT_CGS = 6.67430e-8  # same value in cm^3 g^-1 s^-2
SECONDS_PER_DAY = 86400.0
DAYS_PER_JULIAN_CENTURY = 36525.0
J2000_JD_TDB = 2451545.0  # 2000-01-01T12:00:00 TDB
# DE440 value (Park et al. 2021, AJ 161, 105; from memory).  DE421's 1.32712440040944e11
# (Folkner et al. 2008) differs by 3e-12 relative: nothing measurable in a deflection.
GM_SUN_KM3_S2 = 1.32712440041279419e11

# Highest azimuthal wavenumber m searched for resonances by default (occplan.resonances).
DEFAULT_MAX_M = 200
