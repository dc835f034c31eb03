"""Adapters from astropy objects to occplan's plain values (the boundary of the public API).

- :func:`tdb_seconds`: an astropy ``Time`` (or an ISO string, or TDB seconds) as TDB seconds
  past J2000, kept to sub-microsecond precision through the two-part Julian date.
- :func:`window_seconds`: a (start, end) pair of those.
- :func:`star_spec`: a ``SkyCoord`` (with proper motion, distance, radial velocity and
  ``obstime``) as an :class:`occplan.ephemeris.StarSpec`; a StarSpec passes through.
- :func:`observer`: an ``EarthLocation`` as an :class:`occplan.ephemeris.Observer`; an
  Observer passes through.

astropy is imported only when a function is called.
"""

from __future__ import annotations

import numpy as np

from .errors import InputError

J2000_JD = 2451545.0
DAY_S = 86400.0


def tdb_seconds(value):
    """TDB seconds past J2000 (float or array) of a ``Time``, a UTC ISO string or seconds.

    A ``Time`` is converted to the TDB scale by astropy; a string is parsed as UTC ISO 8601 by
    :func:`occplan.ephemeris.parse_utc`; a number is taken as TDB seconds already.
    """
    from astropy.time import Time

    if isinstance(value, Time):
        t = value.tdb
        return ((t.jd1 - J2000_JD) + t.jd2) * DAY_S
    if isinstance(value, str):
        from .ephemeris import parse_utc, tdb_s_of

        return float(tdb_s_of(parse_utc(value)))
    try:
        return np.asarray(value, dtype=float) if np.ndim(value) else float(value)
    except (TypeError, ValueError):
        raise InputError(f"time {value!r} is not an astropy Time, a UTC ISO string or TDB seconds "
                         "past J2000") from None


def window_seconds(window) -> tuple[float, float]:
    """(start, end) TDB seconds from a pair of Times/strings/seconds, or a 2-element Time."""
    from astropy.time import Time

    if isinstance(window, Time):
        if window.shape != (2,):
            raise InputError(f"a Time window must hold 2 instants, not shape {window.shape}")
        window = (window[0], window[1])
    a, b = window
    a, b = float(tdb_seconds(a)), float(tdb_seconds(b))
    if not b > a:
        raise InputError("the window end is not after its start")
    return a, b


def star_spec(star, name: str = ""):
    """A :class:`occplan.ephemeris.StarSpec` from a ``SkyCoord`` (or a StarSpec unchanged).

    The SkyCoord is taken in ICRS; proper motion (``pm_ra_cosdec``, ``pm_dec``), distance
    (as parallax = 1 AU / distance) and ``radial_velocity`` are used when present (zero
    otherwise), ``obstime`` is the catalogue epoch (default J2016.0, Gaia DR3's).
    """
    import astropy.units as u
    from astropy.coordinates import SkyCoord

    from .ephemeris import StarSpec

    if isinstance(star, StarSpec):
        return star
    if not isinstance(star, SkyCoord):
        raise InputError(f"star {star!r} is neither a StarSpec nor an astropy SkyCoord")
    if not star.isscalar:
        raise InputError("give one star (a scalar SkyCoord); for many stars use a catalog")
    c = star.icrs

    def get(attr, unit, **kw):
        try:
            return float(getattr(c, attr).to_value(unit, **kw))
        except (AttributeError, TypeError, ValueError):  # not given (UnitsError is a ValueError): zero
            return 0.0

    pm_ra, pm_dec = get("pm_ra_cosdec", u.mas / u.yr), get("pm_dec", u.mas / u.yr)
    rv = get("radial_velocity", u.km / u.s)
    parallax = get("distance", u.mas, equivalencies=u.parallax())
    epoch_jd_tt = 2457389.0
    if star.obstime is not None:
        epoch_jd_tt = float(star.obstime.tt.jd)
    return StarSpec(ra_deg=float(c.ra.deg) % 360.0, dec_deg=float(c.dec.deg), pm_ra_mas_yr=pm_ra,
                    pm_dec_mas_yr=pm_dec, parallax_mas=parallax, rv_km_s=rv,
                    epoch_jd_tt=epoch_jd_tt, name=name)


def observer(location, name: str = "site"):
    """An :class:`occplan.ephemeris.Observer` from an ``EarthLocation`` (or an Observer)."""
    from astropy.coordinates import EarthLocation

    from .ephemeris import Observer

    if isinstance(location, Observer):
        return location
    if not isinstance(location, EarthLocation):
        raise InputError(f"observer {location!r} is neither an Observer nor an EarthLocation")
    geo = location.to_geodetic("WGS84")
    return Observer.site(name, float(geo.lat.deg), float(geo.lon.deg), float(geo.height.to_value("m")))
