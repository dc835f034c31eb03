"""Make the demo's synthetic star catalog (seeded, reproducible).

    python ephem_demo/make_catalog.py            # writes ephem_demo/demo_catalog.ecsv

Every star is invented.  For each body of the campaign, stars are placed along the planet's
predicted geocentric path over the season (at random times, with random offsets across the
path up to 1.4x the outer ring radius, so that some stars miss the rings), plus a random
background of stars in a 2-degree band around the path.  Magnitudes and colours follow
simple distributions for the red giants and dwarfs that dominate occultation candidates at
V = 7..14; proper motions, parallaxes and radial velocities are those of distant disk stars.
Positions are ICRS at the Gaia-like reference epoch J2016.0 (each star is moved back from the
time it sits on the path by its proper motion).  Column names follow the Gaia archive
(source_id, ra, dec, pmra, pmdec, parallax, radial_velocity, ref_epoch) plus V and K
magnitudes in `vmag` and `kmag`.
"""

from __future__ import annotations

import sys
import tomllib
import warnings
from pathlib import Path

import numpy as np

SEED = 20281101
PATH_STARS_PER_BODY = 70
BACKGROUND_STARS_PER_BODY = 3000
HERE = Path(__file__).resolve().parent


def planet_path(body_name: str, start_utc: str, end_utc: str, n: int = 400):
    """Geocentric astrometric RA, Dec (deg), distance (km) and TDB s of a planet's centre."""
    from occplan.bodies import get_body
    from occplan.ephemeris import Observer, get_ephemeris, parse_utc, tdb_s_of, time_from_tdb_s

    eph, body = get_ephemeris(), get_body(body_name)
    t = np.linspace(tdb_s_of(parse_utc(start_utc)), tdb_s_of(parse_utc(end_utc)), n)
    earth = eph.observer_km(Observer.geocentre(), time_from_tdb_s(t))
    p = eph.planet_km(body, time_from_tdb_s(t))
    for _ in range(3):
        lt = np.linalg.norm(p - earth, axis=0) / 299792.458
        p = eph.planet_km(body, time_from_tdb_s(t - lt))
    v = p - earth
    d = np.linalg.norm(v, axis=0)
    return (np.degrees(np.arctan2(v[1], v[0])) % 360.0, np.degrees(np.arcsin(v[2] / d)), d, t,
            body)


def magnitudes(rng, n):
    giant = rng.random(n) < 0.6
    vmag = np.where(giant, rng.uniform(7.0, 12.5, n), rng.uniform(9.0, 13.5, n))
    vk = np.where(giant, rng.uniform(2.4, 5.2, n), rng.uniform(0.9, 3.2, n))
    return np.round(vmag, 3), np.round(vmag - vk, 3)


def motions(rng, n):
    return (np.round(rng.normal(0.0, 6.0, n), 4), np.round(rng.normal(-2.0, 6.0, n), 4),
            np.round(rng.uniform(0.05, 3.0, n), 4), np.round(rng.normal(0.0, 30.0, n), 2))


def make(campaign_path: Path = HERE / "campaign.toml", out: Path = HERE / "demo_catalog.ecsv"):
    from astropy.table import Table

    warnings.simplefilter("ignore")
    camp = tomllib.loads(campaign_path.read_text())
    rng = np.random.default_rng(SEED)
    rows = {k: [] for k in ("source_id", "ra", "dec", "pmra", "pmdec", "parallax",
                            "radial_velocity", "ref_epoch", "vmag", "kmag", "placed_near")}
    next_id = 900000000000000000
    years_from_2016 = None
    for name in camp["bodies"]:
        ra_p, dec_p, dist, t, body = planet_path(name, camp["start_utc"], camp["end_utc"])
        years_from_2016 = (t - 504921600.0) / (365.25 * 86400.0)  # J2016.0 = 504921600 s TDB
        # stars on the path: random instant, random cross-track offset
        k = PATH_STARS_PER_BODY
        idx = rng.integers(5, t.size - 5, k)
        limit_rad = 1.4 * body.outer_ring_km / dist[idx]
        cross = rng.uniform(-1.0, 1.0, k) * limit_rad
        # direction of motion of the path at idx
        dra = (ra_p[idx + 1] - ra_p[idx - 1]) * np.cos(np.radians(dec_p[idx]))
        ddec = dec_p[idx + 1] - dec_p[idx - 1]
        norm = np.hypot(dra, ddec)
        nx, ny = -ddec / norm, dra / norm  # unit normal to the path (east, north)
        east = np.degrees(cross) * nx
        north = np.degrees(cross) * ny
        dec_on = dec_p[idx] + north
        ra_on = ra_p[idx] + east / np.cos(np.radians(dec_on))
        pmra, pmdec, plx, rv = motions(rng, k)
        yrs = years_from_2016[idx]
        dec0 = dec_on - pmdec * yrs / 3.6e6
        ra0 = ra_on - pmra * yrs / 3.6e6 / np.cos(np.radians(dec0))
        v, kk = magnitudes(rng, k)
        for i in range(k):
            rows["source_id"].append(next_id)
            next_id += 1
            rows["ra"].append(round(float(ra0[i] % 360.0), 9))
            rows["dec"].append(round(float(dec0[i]), 9))
            rows["pmra"].append(pmra[i]), rows["pmdec"].append(pmdec[i])
            rows["parallax"].append(plx[i]), rows["radial_velocity"].append(rv[i])
            rows["ref_epoch"].append(2016.0)
            rows["vmag"].append(v[i]), rows["kmag"].append(kk[i])
            rows["placed_near"].append(name)
        # background: anywhere within 1 degree of the path
        n = BACKGROUND_STARS_PER_BODY
        j = rng.integers(0, t.size, n)
        dec_b = np.clip(dec_p[j] + rng.uniform(-1.0, 1.0, n), -89.9, 89.9)
        ra_b = (ra_p[j] + rng.uniform(-1.0, 1.0, n) / np.cos(np.radians(dec_b))) % 360.0
        pmra, pmdec, plx, rv = motions(rng, n)
        v, kk = magnitudes(rng, n)
        for i in range(n):
            rows["source_id"].append(next_id)
            next_id += 1
            rows["ra"].append(round(float(ra_b[i]), 9))
            rows["dec"].append(round(float(dec_b[i]), 9))
            rows["pmra"].append(pmra[i]), rows["pmdec"].append(pmdec[i])
            rows["parallax"].append(plx[i]), rows["radial_velocity"].append(rv[i])
            rows["ref_epoch"].append(2016.0)
            rows["vmag"].append(v[i]), rows["kmag"].append(kk[i])
            rows["placed_near"].append("background")
    table = Table(rows)
    for col, unit in (("ra", "deg"), ("dec", "deg"), ("pmra", "mas / yr"), ("pmdec", "mas / yr"),
                      ("parallax", "mas"), ("radial_velocity", "km / s"), ("ref_epoch", "yr"),
                      ("vmag", "mag"), ("kmag", "mag")):
        table[col].unit = unit
    table.meta["comments"] = [
        "Synthetic star catalog for the occplan demo: every star is invented.",
        f"Made by ephem_demo/make_catalog.py with seed {SEED} from {campaign_path.name}.",
    ]
    table.write(out, format="ascii.ecsv", overwrite=True)
    return out


if __name__ == "__main__":
    print(make(*[Path(a) for a in sys.argv[1:]]))
