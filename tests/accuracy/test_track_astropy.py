"""The star-minus-planet sky-plane offset against astropy on the same DE440 kernel.

Reference library: astropy, offline, with the DE440 file occplan uses and IERS downloads off
(common practice for a reference run).  The star is put on the rings' long axis, so its ring-plane intercept lies at
the planet's distance and occplan's light time (to the intercept) equals the light time to the
centre; occplan runs with the deflection off and the barycentre uncorrected (astropy's
'saturn' in DE440 is the barycentre).  Offsets are taken in the star-centred frame, like
occplan's f (east) and g (north) at the star's direction.

1. Astrometric: astropy's own ephemeris reading (get_body_barycentric, light time iterated
   here) and time scales.  Same geometry, so the tolerance is 0.01 km (seen: 0.1 m).
2. Apparent (get_body and SkyCoord ICRS -> GCRS): both places carry the Earth's annual
   aberration (~20"), which cancels but for its differential part (v/c) theta (v <= 30.29 km/s,
   theta the star-planet separation; 9 km for 90,000 km), and the Sun's light deflection of
   the star, 4.07 mas cot(elongation/2) (tens of km at Saturn's distance), which astropy's
   GCRS transformation applies to the star and its get_body may treat differently.  The
   tolerance is their sum; the differences seen are 3-12 km.
"""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest

from occplan.ephemeris import Observer, StarSpec, default_kernel_path, parse_utc, tdb_s_of
from occplan.geometry import Corrections, exact_geometry

from ..test_geometry import saturn_radec

V_EARTH_MAX_KM_S = 30.29  # perihelion orbital speed of the Earth (common practice)
C_KM_S = 299792.458
SUN_DEFLECTION_1AU_RAD = 4.07e-3 / 206264.806  # 2 GM_sun / (c^2 AU) (textbook value)
CASES = [("2027-06-15T02:00:00", 90000.0), ("2031-11-02T10:00:00", -60000.0),
         ("2036-03-20T18:00:00", 120000.0)]


@pytest.fixture(scope="module")
def astropy_de440():
    from astropy.coordinates import solar_system_ephemeris
    from astropy.utils import iers

    iers.conf.auto_download = False
    iers.conf.auto_max_age = None
    with solar_system_ephemeris.set(default_kernel_path()):
        yield


def _long_axis_star(eph, saturn, t_s, offset_km):
    ra0, dec0 = saturn_radec(eph, saturn, t_s)
    centre = exact_geometry(eph, saturn, Observer.geocentre(), StarSpec(ra0, dec0),
                            np.array([t_s]), Corrections(False, True))
    p_ang, dist = centre["pole_angle"][0], centre["distance"][0]
    east, north = offset_km * math.cos(p_ang), -offset_km * math.sin(p_ang)
    star = StarSpec((ra0 + math.degrees(east / dist) / math.cos(math.radians(dec0))) % 360.0,
                    dec0 + math.degrees(north / dist))
    g = exact_geometry(eph, saturn, Observer.geocentre(), star, np.array([t_s]),
                       Corrections(False, True))
    return star, g, dist


def _offset_km(star_coord, planet_coord, dist):
    import astropy.units as u

    dlon, dlat = star_coord.spherical_offsets_to(planet_coord)
    return -dlon.to_value(u.rad) * dist, -dlat.to_value(u.rad) * dist


@pytest.mark.parametrize("utc,offset_km", CASES)
def test_astrometric_offset_matches_astropy(eph, saturn, astropy_de440, utc, offset_km):
    import astropy.units as u
    from astropy.coordinates import SkyCoord, get_body_barycentric
    from astropy.time import Time

    t_s = tdb_s_of(parse_utc(utc + "Z"))
    star, g, dist = _long_axis_star(eph, saturn, t_s, offset_km)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # ERFA's notes on future leap seconds
        t = Time(utc, scale="utc")
        earth = get_body_barycentric("earth", t).xyz.to_value(u.km)
        lt = 0.0
        for _ in range(4):
            q = get_body_barycentric("saturn", t - lt * u.s).xyz.to_value(u.km) - earth
            lt = np.linalg.norm(q) / C_KM_S
    planet = SkyCoord(math.atan2(q[1], q[0]) * u.rad, math.asin(q[2] / np.linalg.norm(q)) * u.rad)
    f_ref, g_ref = _offset_km(SkyCoord(star.ra_deg * u.deg, star.dec_deg * u.deg), planet, dist)
    assert math.hypot(g["sky_f"][0] - f_ref, g["sky_g"][0] - g_ref) < 0.01


@pytest.mark.parametrize("utc,offset_km", CASES)
def test_apparent_offset_within_the_aberration_difference(eph, saturn, astropy_de440, utc,
                                                          offset_km):
    import astropy.units as u
    from astropy.coordinates import GCRS, SkyCoord, get_body, get_sun
    from astropy.time import Time

    t_s = tdb_s_of(parse_utc(utc + "Z"))
    star, g, dist = _long_axis_star(eph, saturn, t_s, offset_km)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        t = Time(utc, scale="utc")
        planet = get_body("saturn", t)
        s = SkyCoord(star.ra_deg * u.deg, star.dec_deg * u.deg, distance=1e9 * u.pc,
                     frame="icrs").transform_to(GCRS(obstime=t))
        elongation = get_sun(t).separation(planet).rad
        f_ref, g_ref = _offset_km(s, planet, dist)
    aberration = V_EARTH_MAX_KM_S / C_KM_S * math.hypot(f_ref, g_ref)
    deflection = SUN_DEFLECTION_1AU_RAD / math.tan(elongation / 2.0) * dist
    assert math.hypot(g["sky_f"][0] - f_ref, g["sky_g"][0] - g_ref) < aberration + deflection + 0.5
