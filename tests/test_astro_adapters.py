"""astropy objects in: Time, SkyCoord and EarthLocation adapters (occplan.astro)."""

from __future__ import annotations

import astropy.units as u
import numpy as np
import pytest
from astropy.coordinates import EarthLocation, SkyCoord
from astropy.time import Time

from occplan.astro import observer, star_spec, tdb_seconds, window_seconds
from occplan.ephemeris import Observer, StarSpec, parse_utc, tdb_s_of
from occplan.errors import InputError


def test_time_to_tdb_seconds_agrees_with_skyfield():
    """astropy's and skyfield's UTC -> TDB (leap seconds, TDB - TT) agree: tolerance 20 us,
    the size of the periodic TDB - TT terms that the two libraries model differently
    (common practice: the main term is 1.66 ms)."""
    iso = "2027-06-15T00:20:00"
    ours = tdb_seconds(Time(iso, scale="utc"))
    assert ours == pytest.approx(float(tdb_s_of(parse_utc(iso + "Z"))), abs=20e-6)
    # J2000.0 TDB is zero by definition
    assert tdb_seconds(Time(2451545.0, format="jd", scale="tdb")) == 0.0
    arr = tdb_seconds(Time([iso, "2027-06-15T00:21:00"], scale="utc"))
    assert np.diff(arr)[0] == pytest.approx(60.0, abs=1e-6)
    assert tdb_seconds(12.5) == 12.5
    a, b = window_seconds(Time(["2027-06-15T00:20:00", "2027-06-15T01:30:00"], scale="utc"))
    # UTC seconds are not TDB seconds: the rate of TDB - TT (~3e-10) gives ~1 us over 70 min
    assert b - a == pytest.approx(4200.0, abs=5e-6)
    with pytest.raises(InputError):
        window_seconds(("2027-06-15T01:30Z", "2027-06-15T00:20Z"))


def test_skycoord_with_space_motion_to_starspec():
    c = SkyCoord(ra=23.9962 * u.deg, dec=7.4705 * u.deg, pm_ra_cosdec=3.0 * u.mas / u.yr,
                 pm_dec=-4.0 * u.mas / u.yr, distance=(2.0 * u.mas).to(u.pc, u.parallax()),
                 radial_velocity=12.0 * u.km / u.s, obstime=Time(2016.0, format="jyear", scale="tcb"))
    s = star_spec(c, name="x")
    assert (s.ra_deg, s.dec_deg) == pytest.approx((23.9962, 7.4705), abs=1e-12)
    assert (s.pm_ra_mas_yr, s.pm_dec_mas_yr) == pytest.approx((3.0, -4.0), abs=1e-9)
    assert s.parallax_mas == pytest.approx(2.0, rel=1e-12)
    assert s.rv_km_s == pytest.approx(12.0, abs=1e-9)
    # J2016.0 (TCB) = JD 2457389.0 TCB; TT differs from TCB by ~20 s in 2016 (common practice)
    assert s.epoch_jd_tt == pytest.approx(2457389.0, abs=30 / 86400)
    bare = star_spec(SkyCoord(10 * u.deg, -5 * u.deg))
    assert (bare.pm_ra_mas_yr, bare.parallax_mas, bare.rv_km_s) == (0.0, 0.0, 0.0)
    assert star_spec(s) is s
    with pytest.raises(InputError):
        star_spec("10 20")


def test_earthlocation_to_observer():
    loc = EarthLocation.from_geodetic(lon=160.0 * u.deg, lat=-25.0 * u.deg, height=1000 * u.m)
    o = observer(loc, "test")
    assert (o.lat_deg, o.lon_deg, o.height_m) == pytest.approx((-25.0, 160.0, 1000.0), abs=1e-6)
    geo = Observer.geocentre()
    assert observer(geo) is geo
    with pytest.raises(InputError):
        observer((1, 2))
    assert isinstance(star_spec(StarSpec(1.0, 2.0)), StarSpec)


def test_public_api_is_lazy():
    """Importing occplan imports neither astropy, skyfield nor numpy-heavy modules; the
    re-exported names resolve to the library's functions on first access."""
    import subprocess
    import sys

    code = ("import sys, occplan; heavy = [m for m in ('astropy', 'skyfield', 'scipy', 'matplotlib', "
            "'occplan.ephemeris', 'occplan.search') if m in sys.modules]; print(heavy)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert out.stdout.strip() == "[]"
    import occplan
    from occplan.events import evaluate_event

    assert occplan.evaluate_event is evaluate_event
    for name in occplan.__all__:
        assert getattr(occplan, name) is not None
    with pytest.raises(AttributeError):
        occplan.no_such_function  # noqa: B018
