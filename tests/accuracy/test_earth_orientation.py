"""Earth orientation (UT1-UTC, polar motion, leap seconds) against astropy's reading of the IERS data.

Reference library: astropy (its IERS_Auto table with downloads off: IERS-B where it has
values, then the Bulletin A file of astropy-iers-data; its own leap-second table), an
independent reader of the same IERS products occplan's time scale parses.  Sites are checked
against astropy's EarthLocation -> GCRS (ERFA, with polar motion).

Tolerances (physical, with the reason):
- UT1-UTC 0.5 ms where both read observed values (IERS-B and Bulletin A final values differ
  by tens of microseconds; 0.5 ms is 0.2 m at the equator), 1 microsecond on predictions
  (the same Bulletin A numbers).
- polar motion 1 mas observed (B vs A), 1 microarcsec on predictions.
- a site's geocentric position 0.5 m: the precession-nutation models differ by about a
  milliarcsecond (3 cm at the Earth's radius); ignoring polar motion would be off by up to
  15 m, a UT1 error of 0.1 s by 46 m.
"""

from __future__ import annotations

import datetime as dt
import warnings

import numpy as np
import pytest

from occplan.ephemeris import (Observer, earth_orientation, get_ephemeris, parse_utc,
                               read_finals, tdb_s_of, timescale)


@pytest.fixture(scope="module")
def iers_offline():
    from astropy.utils import iers

    with (iers.conf.set_temp("auto_download", False), iers.conf.set_temp("auto_max_age", None),
          warnings.catch_warnings()):
        warnings.simplefilter("ignore")
        yield iers.earth_orientation_table.get()


OBSERVED = ["1995-05-01T00:00:00", "2012-06-30T12:00:00", "2020-03-15T00:00:00",
            "2024-11-20T06:00:00"]


def _predicted_dates():
    fin = read_finals()
    pred = fin["utc_mjd"][fin["ut1_flag"] == "P"]
    from astropy.time import Time

    return [Time(m, format="mjd", scale="utc").isot for m in (pred[5], pred[len(pred) // 2],
                                                               pred[-3])]


@pytest.mark.parametrize("iso", OBSERVED)
def test_observed_ut1_and_polar_motion_match_astropy(iers_offline, iso):
    from astropy.time import Time

    t = Time(iso, scale="utc")
    dut1_ref = t.get_delta_ut1_utc(iers_table=iers_offline).to_value("s")
    x_ref, y_ref = (q.to_value("arcsec") for q in iers_offline.pm_xy(t))
    ts_t = parse_utc(iso + "Z")
    _, x, y = ts_t.polar_motion_angles()
    assert abs(float(ts_t.dut1) - dut1_ref) < 5e-4
    assert abs(float(x) - x_ref) < 1e-3 and abs(float(y) - y_ref) < 1e-3


def test_predicted_ut1_and_polar_motion_match_astropy(iers_offline):
    from astropy.time import Time

    for iso in _predicted_dates():
        t = Time(iso, scale="utc")
        dut1_ref, status = t.get_delta_ut1_utc(iers_table=iers_offline, return_status=True)
        x_ref, y_ref = (q.to_value("arcsec") for q in iers_offline.pm_xy(t))
        ts_t = parse_utc(iso + "Z")
        _, x, y = ts_t.polar_motion_angles()
        assert abs(float(ts_t.dut1) - dut1_ref.to_value("s")) < 1e-6
        assert abs(float(x) - x_ref) < 1e-6 and abs(float(y) - y_ref) < 1e-6


def test_leap_seconds_match_astropy():
    from astropy.utils.iers import LeapSeconds

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        table = LeapSeconds.auto_open()
    from astropy.time import Time

    # Leap seconds take effect at 0h UTC on the first of a month; the table's form varies
    # with its source (IERS file or ERFA's built-in list) but always has year and month.
    ref = {}
    for y, m, v in zip(table["year"], table["month"], table["tai_utc"]):
        if (int(y), int(m)) >= (1972, 7):  # where the integer-second UTC steps start
            ref[float(Time(f"{int(y)}-{int(m):02d}-01", scale="utc").utc.jd)] = float(v)
    ts = timescale()
    ours = dict(zip(map(float, ts.leap_dates), map(float, ts.leap_offsets)))
    assert ours == {k: v for k, v in ref.items()}


def test_status_follows_the_table_dates():
    """The table's own dates classify a time: observed before `observed_until`, an IERS
    prediction up to `predicted_until`, extrapolated after (with a larger uncertainty).
    Dates are taken from the installed table, so the test does not age with the clock."""
    probe = earth_orientation(tdb_s_of(parse_utc("2020-01-01T00:00Z")), lat_deg=0.0)
    obs_end = dt.date.fromisoformat(probe["observed_until"][:10])
    pred_end = dt.date.fromisoformat(probe["predicted_until"][:10])
    status, sigma = [], []
    for day in (obs_end - dt.timedelta(days=30), obs_end + (pred_end - obs_end) / 2,
                pred_end + dt.timedelta(days=200)):
        eo = earth_orientation(tdb_s_of(parse_utc(f"{day.isoformat()}T00:00Z")), lat_deg=0.0)
        status.append(eo["status"])
        sigma.append(eo["site_sigma_m"])
    assert status == ["observed", "IERS prediction", "past the IERS predictions"]
    assert sigma[0] < sigma[1] < sigma[2]


@pytest.mark.parametrize("iso,lat,lon,h", [
    ("2020-03-15T03:00:00", -30.24, -70.74, 2200.0),
    ("2024-11-20T06:00:00", 52.0, 10.0, 300.0),
])
def test_site_position_matches_astropy_with_polar_motion(iers_offline, iso, lat, lon, h):
    import astropy.units as u
    from astropy.coordinates import EarthLocation
    from astropy.time import Time

    t = Time(iso, scale="utc")
    loc = EarthLocation.from_geodetic(lon * u.deg, lat * u.deg, h * u.m)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        ref_km = loc.get_gcrs_posvel(t)[0].xyz.to_value(u.km)
    eph = get_ephemeris()
    when = parse_utc(iso + "Z")
    ours = (eph.observer_km(Observer.site("s", lat, lon, h), when)
            - eph.observer_km(Observer.geocentre(), when))
    assert np.linalg.norm(ours - ref_km) * 1000.0 < 0.5


def test_uncertainty_grows_past_the_predictions():
    fin = read_finals()
    end = float(fin["utc_mjd"][-1])
    tdb = lambda mjd: (mjd - 51544.5) * 86400.0 + 69.184  # noqa: E731
    inside = earth_orientation(tdb(end - 30.0), lat_deg=0.0)
    past1 = earth_orientation(tdb(end + 365.0), lat_deg=0.0)
    past2 = earth_orientation(tdb(end + 730.0), lat_deg=60.0)
    assert inside["status"] == "IERS prediction" and past1["status"] == "past the IERS predictions"
    assert inside["ut1_sigma_s"] < past1["ut1_sigma_s"] < past2["ut1_sigma_s"]
    # 1 s of UT1 moves an equatorial site 465 m (omega R, WGS84); the site sigma holds both
    # terms in quadrature, so it lies between the UT1 part alone and their sum.
    ut1_part = 465.1 * past1["ut1_sigma_s"]
    pm_part = 30.92 * past1["polar_motion_sigma_arcsec"]  # R_E per arcsec
    assert max(ut1_part, pm_part) <= past1["site_sigma_m"] <= ut1_part + pm_part + 0.01
    assert earth_orientation(tdb(end), lat_deg=None)["site_sigma_m"] is None
