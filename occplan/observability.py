"""Observability of an event from a ground site: altitudes, airmass, twilight, Moon, cautions.

Directions come from skyfield through :class:`occplan.ephemeris.Ephemeris`:
``observer.at(t).observe(target).apparent().altaz()`` (apparent places: light time,
aberration, deflection; refraction off unless asked for).

The planet is pointed at through its system barycentre (DE440 holds only that).  The planet
centre is within about 300 km of it (Titan's pull on Saturn), under 1e-6 rad seen from Earth:
negligible for altitude, airmass and separations.

Sites only: for a geocentric or spacecraft observer there is no horizon, so altitude, twilight
and the Moon are "not applicable"; the Sun-target separation (the Sun caution) is still
computed because it matters to any camera.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np

from .errors import InputError

# Sun-altitude thresholds of the twilight categories (deg): upper limb on the horizon with
# standard refraction, civil, nautical, astronomical (common practice; the almanac definitions).
SUNRISE_ALT_DEG = -0.833
CIVIL_DEG, NAUTICAL_DEG, ASTRONOMICAL_DEG = -6.0, -12.0, -18.0
SUN_CAUTION_SEPARATION_DEG = 15.0  # docs/design.md sec. 7
DEFAULT_MIN_ALTITUDE_DEG = 20.0  # airmass ~2.9: scintillation and extinction grow fast below it
DEFAULT_SUN_LIMIT_DEG = -12.0  # nautical twilight: sky dark enough for bright occultation stars
DEFAULT_MOON_SEPARATION_DEG = 30.0  # a bright Moon closer than this brightens the sky
DEFAULT_MOON_ILLUMINATION = 0.5

SAFETY_TAIL = ("pointing optics near the Sun can blind an observer and destroy a camera; "
               "site rules and the observatory's safety practice come first.")


def airmass_kasten_young(altitude_deg):
    """Relative air mass of Kasten & Young (1989).

    X = 1 / (sin h + 0.50572 (h + 6.07995 deg)^-1.6364), h the altitude in degrees.

    Kasten & Young 1989, Applied Optics 28, 4735 (fit to a model atmosphere; about 38 at the
    horizon, sec z above 30 deg altitude).  NaN below the horizon (h < 0), where it is not
    defined for a source.
    """
    h = np.asarray(altitude_deg, dtype=float)
    with np.errstate(invalid="ignore"):
        x = 1.0 / (np.sin(np.radians(h)) + 0.50572 * (h + 6.07995) ** -1.6364)
    return np.where(h >= 0.0, x, np.nan)


def airmass_pickering(altitude_deg):
    """Relative air mass of Pickering (2002): X = 1 / sin(h + 244 / (165 + 47 h^1.1)), h in deg.

    Pickering 2002, DIO 12, 1 ("The southern limits of the ancient star catalogs").  Used as
    an independent check of :func:`airmass_kasten_young`; NaN below the horizon.
    """
    h = np.asarray(altitude_deg, dtype=float)
    hp = np.clip(h, 0.0, None)
    x = 1.0 / np.sin(np.radians(hp + 244.0 / (165.0 + 47.0 * hp ** 1.1)))
    return np.where(h >= 0.0, x, np.nan)


def sun_category(sun_altitude_deg):
    """'day', 'civil twilight', 'nautical twilight', 'astronomical twilight' or 'night'."""
    a = np.asarray(sun_altitude_deg, dtype=float)
    out = np.select(
        [a > SUNRISE_ALT_DEG, a > CIVIL_DEG, a > NAUTICAL_DEG, a > ASTRONOMICAL_DEG],
        ["day", "civil twilight", "nautical twilight", "astronomical twilight"],
        default="night",
    ).astype(object)
    out[~np.isfinite(a)] = ""
    return out if a.ndim else str(out[()])


@dataclass(frozen=True)
class ObservingConditions:
    """Per-time observing conditions at a site (arrays of shape (N,), degrees)."""

    applicable: bool
    observer: dict
    tdb_jd: np.ndarray
    planet_altitude_deg: np.ndarray
    planet_azimuth_deg: np.ndarray
    airmass: np.ndarray
    sun_altitude_deg: np.ndarray
    sun_category: np.ndarray
    sun_separation_deg: np.ndarray
    moon_altitude_deg: np.ndarray
    moon_separation_deg: np.ndarray
    moon_illumination: np.ndarray
    usable: np.ndarray
    min_altitude_deg: float
    sun_limit_deg: float
    refraction: bool
    body: str = ""
    reason: str = ""  # why not applicable
    notes: tuple = field(default=())

    def summary(self) -> dict:
        """A JSON-ready digest of the window."""
        def fmin(a):
            a = np.asarray(a, dtype=float)
            return float(np.nanmin(a)) if np.any(np.isfinite(a)) else None

        def fmax(a):
            a = np.asarray(a, dtype=float)
            return float(np.nanmax(a)) if np.any(np.isfinite(a)) else None

        out = {"applicable": self.applicable, "observer": self.observer,
               "min_sun_separation_deg": fmin(self.sun_separation_deg)}
        if not self.applicable:
            out["reason"] = self.reason
            return out
        worst_sun = fmax(self.sun_altitude_deg)
        out.update(
            min_altitude_deg=fmin(self.planet_altitude_deg),
            max_altitude_deg=fmax(self.planet_altitude_deg),
            min_airmass=fmin(self.airmass),
            max_airmass=fmax(self.airmass),
            worst_sun_altitude_deg=worst_sun,
            worst_sun_category=sun_category(worst_sun) if worst_sun is not None else "",
            min_moon_separation_deg=fmin(self.moon_separation_deg),
            max_moon_illumination=fmax(self.moon_illumination),
            usable_fraction=float(np.mean(self.usable)) if self.usable.size else 0.0,
            min_altitude_limit_deg=self.min_altitude_deg,
            sun_limit_deg=self.sun_limit_deg,
            refraction=self.refraction,
        )
        return out

    def rows(self, utc=None) -> list[dict]:
        """Per-time rows for a table (``utc``: optional list of UTC strings)."""
        out = []
        for i in range(self.tdb_jd.size):
            r = {"time_utc": utc[i]} if utc is not None else {"tdb_jd": float(self.tdb_jd[i])}
            r.update(
                planet_altitude_deg=float(self.planet_altitude_deg[i]),
                airmass=float(self.airmass[i]),
                sun_altitude_deg=float(self.sun_altitude_deg[i]),
                sun_category=str(self.sun_category[i]),
                sun_separation_deg=float(self.sun_separation_deg[i]),
                moon_separation_deg=float(self.moon_separation_deg[i]),
                moon_illumination=float(self.moon_illumination[i]),
                usable=bool(self.usable[i]),
            )
            out.append(r)
        return out


def _apparent(origin_at, target, refraction: bool):
    """(altitude deg, azimuth deg, apparent position) of target from a topocentric origin."""
    app = origin_at.observe(target).apparent()
    if refraction:
        alt, az, _ = app.altaz(temperature_C=10.0, pressure_mbar="standard")
    else:
        alt, az, _ = app.altaz()
    return alt.degrees, az.degrees, app


def _separation_deg(a, b):
    """Angle (deg) between the directions of two skyfield positions at the same times."""
    u = a.position.au
    v = b.position.au
    cosang = np.sum(u * v, axis=0) / (np.linalg.norm(u, axis=0) * np.linalg.norm(v, axis=0))
    return np.degrees(np.arccos(np.clip(cosang, -1.0, 1.0)))


def _fraction_illuminated(moon_app, sun_app):
    """Illuminated fraction k = (1 + cos i) / 2 of the Moon, i the Sun-Moon-observer angle.

    Vectors from the observer: m to the Moon, s to the Sun; the phase angle i is the angle
    between -m (Moon to observer) and s - m (Moon to Sun) (Meeus 1998, Astronomical
    Algorithms, ch. 48, common practice).
    """
    m = moon_app.position.au
    s = sun_app.position.au
    a, b = -m, s - m
    cos_i = np.sum(a * b, axis=0) / (np.linalg.norm(a, axis=0) * np.linalg.norm(b, axis=0))
    return 0.5 * (1.0 + np.clip(cos_i, -1.0, 1.0))


def _exact(eph, body, observer, jd, refraction):
    """Per-time quantities evaluated with skyfield at every time of ``jd`` (a site)."""
    t = eph.ts.tdb_jd(jd)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # skyfield's finals-file expiry notice (see ephemeris.py)
        at = eph.observer_skyfield(observer).at(t)
        p_alt, p_az, p_app = _apparent(at, eph._vector(body.barycentre_naif_id), refraction)
        s_alt, _, s_app = _apparent(at, eph._vector(10), refraction)
        m_alt, _, m_app = _apparent(at, eph._vector(301), refraction)
    return {
        "planet_altitude_deg": p_alt, "planet_azimuth_deg": p_az, "sun_altitude_deg": s_alt,
        "sun_separation_deg": _separation_deg(p_app, s_app), "moon_altitude_deg": m_alt,
        "moon_separation_deg": _separation_deg(p_app, m_app),
        "moon_illumination": _fraction_illuminated(m_app, s_app),
    }


def _on_nodes(eph, body, observer, jd, refraction, node_step_s):
    """The quantities of :func:`_exact` on nodes every ``node_step_s``, cubic-spline
    interpolated to ``jd`` (azimuth unwrapped first).  Every quantity is smooth on hour scales;
    the interpolation error on 300 s nodes is measured in tests/test_observability.py.
    Refraction (not smooth: skyfield's model stops at -1 deg) is applied after interpolating
    the geometric altitudes, with the same skyfield model as the exact path."""
    from scipy.interpolate import CubicSpline
    from skyfield.api import wgs84

    step = node_step_s / 86400.0
    n = int(np.ceil((jd.max() - jd.min()) / step)) + 1
    nodes = jd.min() + step * np.arange(n + 1)
    vals = _exact(eph, body, observer, nodes, False)
    out = {}
    for key, v in vals.items():
        if key == "planet_azimuth_deg":
            v = np.degrees(np.unwrap(np.radians(v)))
        y = CubicSpline(nodes, v)(jd)
        if key == "planet_azimuth_deg":
            y = np.mod(y, 360.0)
        elif key == "moon_illumination":
            y = np.clip(y, 0.0, 1.0)
        elif key.endswith("separation_deg"):
            y = np.clip(y, 0.0, 180.0)
        out[key] = y
    if refraction:
        place = wgs84.latlon(observer.lat_deg, observer.lon_deg, elevation_m=observer.height_m)
        for key in ("planet_altitude_deg", "sun_altitude_deg", "moon_altitude_deg"):
            out[key] = place.refract(out[key], 10.0, "standard").degrees
    return out


def observing_conditions(eph, body, observer, tdb_jd, *, min_altitude_deg=DEFAULT_MIN_ALTITUDE_DEG,
                         sun_limit_deg=DEFAULT_SUN_LIMIT_DEG, refraction=False,
                         node_step_s=300.0):
    """Planet, Sun and Moon as seen from a site over a time array.

    Parameters
    ----------
    eph : occplan.ephemeris.Ephemeris
    body : occplan.bodies.Body
        The planet (pointed at through ``body.barycentre_naif_id``, see the module notes).
    observer : occplan.ephemeris.Observer
    tdb_jd : float or array
        TDB Julian dates.
    min_altitude_deg : float
        Lowest usable planet altitude (default 20 deg, airmass about 2.9).
    sun_limit_deg : float
        Highest usable Sun altitude (default -12 deg, the end of nautical twilight).
    refraction : bool
        Apply skyfield's standard refraction (10 C, standard pressure) to the altitudes.
        Off by default: geometric apparent altitudes, as astropy gives with pressure 0.
    node_step_s : float or None
        When the times are denser than this (more than four per node), the quantities are
        computed exactly on nodes this far apart and cubic-spline interpolated (error under
        1e-5 deg on 300 s nodes, measured in a test); None computes every time exactly.

    Returns
    -------
    ObservingConditions
        ``usable`` = planet altitude >= min_altitude_deg and Sun altitude <= sun_limit_deg.
        For a geocentric or spacecraft observer ``applicable`` is False, the site quantities
        are NaN and only the Sun-target separation is filled.
    """
    if not -90.0 <= float(min_altitude_deg) <= 90.0:
        raise InputError(f"minimum altitude {min_altitude_deg} deg is outside -90..90")
    if not -90.0 <= float(sun_limit_deg) <= 90.0:
        raise InputError(f"Sun altitude limit {sun_limit_deg} deg is outside -90..90")
    jd = np.atleast_1d(np.asarray(tdb_jd, dtype=float))
    if jd.ndim != 1 or not np.all(np.isfinite(jd)):
        raise InputError("times must be a finite 1-d array of TDB Julian dates")
    eph.check_observer_coverage(observer, jd)
    eph.check_coverage(body.barycentre_naif_id, jd, f"{body.name} barycentre")
    nan = np.full(jd.shape, np.nan)
    if observer.kind != "site":
        t = eph.ts.tdb_jd(jd)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # skyfield's finals-file expiry notice
            at = eph.observer_skyfield(observer).at(t)
            p_app = at.observe(eph._vector(body.barycentre_naif_id)).apparent()
            s_app = at.observe(eph._vector(10)).apparent()
        reason = (f"observability (altitude, twilight, Moon) is not applicable to a "
                  f"{observer.kind} observer; only the Sun-target separation is given")
        return ObservingConditions(
            False, observer.describe(), jd, nan, nan.copy(), nan.copy(), nan.copy(),
            np.full(jd.shape, "", dtype=object), _separation_deg(p_app, s_app), nan.copy(),
            nan.copy(), nan.copy(), np.zeros(jd.shape, dtype=bool), float(min_altitude_deg),
            float(sun_limit_deg), bool(refraction), body.name, reason)
    span_s = (jd.max() - jd.min()) * 86400.0
    dense = node_step_s is not None and jd.size > 4 * (span_s / float(node_step_s) + 2)
    if node_step_s is not None and not float(node_step_s) > 0:
        raise InputError(f"node step {node_step_s} s must be > 0 (or None for exact evaluation)")
    if dense:
        v = _on_nodes(eph, body, observer, jd, refraction, float(node_step_s))
    else:
        v = _exact(eph, body, observer, jd, refraction)
    p_alt, s_alt = v["planet_altitude_deg"], v["sun_altitude_deg"]
    usable = (p_alt >= float(min_altitude_deg)) & (s_alt <= float(sun_limit_deg))
    notes = ("planet direction from its system barycentre (< 1e-6 rad from the centre)",
             "refraction applied (standard atmosphere)" if refraction else
             "altitudes without refraction (geometric, apparent place)")
    if dense:
        notes += (f"computed on {node_step_s:g} s nodes and spline-interpolated",)
    return ObservingConditions(
        True, observer.describe(), jd, p_alt, v["planet_azimuth_deg"], airmass_kasten_young(p_alt),
        s_alt, np.asarray(sun_category(s_alt), dtype=object).reshape(jd.shape),
        v["sun_separation_deg"], v["moon_altitude_deg"], v["moon_separation_deg"],
        v["moon_illumination"], usable, float(min_altitude_deg), float(sun_limit_deg),
        bool(refraction), body.name, "", notes)


def cautions(conditions: ObservingConditions, *, moon_separation_deg=DEFAULT_MOON_SEPARATION_DEG,
             moon_illumination=DEFAULT_MOON_ILLUMINATION) -> list[str]:
    """Plain-language cautions for the window (empty when nothing stands out).

    - Sun above the horizon, or within 15 deg of the target, anywhere in the window: a safety
      caution (docs/design.md sec. 7).
    - Planet below the horizon or below the minimum altitude for part of the window.
    - Twilight (Sun between -18 and -0.833 deg).
    - A Moon more than ``moon_illumination`` lit closer than ``moon_separation_deg`` and above
      the horizon.
    """
    c = conditions
    out = []
    sep_min = float(np.nanmin(c.sun_separation_deg)) if np.any(np.isfinite(c.sun_separation_deg)) else None
    sun_up = c.applicable and bool(np.any(c.sun_altitude_deg > SUNRISE_ALT_DEG))
    sun_near = sep_min is not None and sep_min < SUN_CAUTION_SEPARATION_DEG
    if sun_up or sun_near:
        what = []
        if sun_up:
            what.append(f"the Sun is above the horizon during the window (up to "
                        f"{float(np.nanmax(c.sun_altitude_deg)):.1f} deg)")
        if sun_near:
            what.append(f"the target is {sep_min:.1f} deg from the Sun (closer than "
                        f"{SUN_CAUTION_SEPARATION_DEG:g} deg)")
        out.append("CAUTION: " + " and ".join(what) + "; " + SAFETY_TAIL)
    if not c.applicable:
        out.append(f"NOTE: {c.reason}.")
        return out
    alt = c.planet_altitude_deg
    if np.any(alt < 0):
        out.append(f"CAUTION: {c.body or 'the planet'} is below the horizon for "
                   f"{100 * np.mean(alt < 0):.0f}% of the window; those times cannot be observed.")
    low = (alt >= 0) & (alt < c.min_altitude_deg)
    if np.any(low):
        out.append(f"CAUTION: {c.body or 'the planet'} is low (below {c.min_altitude_deg:g} deg, "
                   f"airmass above {float(airmass_kasten_young(c.min_altitude_deg)):.1f}) for "
                   f"{100 * np.mean(low):.0f}% of the window; expect strong scintillation and "
                   "extinction.")
    s = c.sun_altitude_deg
    twi = (s > ASTRONOMICAL_DEG) & (s <= SUNRISE_ALT_DEG)
    if np.any(twi):
        worst = sun_category(float(np.max(s[twi])))
        out.append(f"CAUTION: twilight during {100 * np.mean(twi):.0f}% of the window (at worst "
                   f"{worst}, Sun at {float(np.max(s[twi])):.1f} deg); the sky background is raised.")
    bright = ((c.moon_illumination > moon_illumination) & (c.moon_separation_deg < moon_separation_deg)
              & (c.moon_altitude_deg > 0))
    if np.any(bright):
        out.append(f"CAUTION: a {100 * float(np.max(c.moon_illumination[bright])):.0f}%-lit Moon is "
                   f"{float(np.min(c.moon_separation_deg[bright])):.1f} deg from the target; "
                   "expect a bright sky background.")
    return out
