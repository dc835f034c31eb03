"""Output tables keep their units and times: every physical column of the ECSV outputs read
back with astropy's QTable has the unit occplan.columns lists, and the UTC columns come back
as Time columns (astropy's ECSV round trip: common practice)."""

from __future__ import annotations

import astropy.units as u
import numpy as np
import pytest
from astropy.table import QTable
from astropy.time import Time

from occplan.columns import COLUMN_UNITS, TIME_COLUMNS

STAR = ["--star", "36.00676 11.44189", "--lat", "-23.41", "--lon", "-68.05", "--height", "2950",
        "--start", "2028-10-30T02:00Z", "--end", "2028-10-30T04:00Z"]


def _check(table):
    physical = [c for c in table.colnames if c in COLUMN_UNITS and COLUMN_UNITS[c]]
    assert physical
    for c in physical:
        assert table[c].unit == u.Unit(COLUMN_UNITS[c]), c
    times = [c for c in table.colnames if c in TIME_COLUMNS]
    for c in times:
        assert isinstance(table[c], Time), c
    return physical, times


@pytest.mark.parametrize("args", [
    ["chord", *STAR, "--step", "300"],
    ["event", *STAR, "--vmag", "9.8", "--kmag", "6.1", "--max-order", "1"],
    ["zones", "--body", "uranus"],
])
def test_ecsv_outputs_round_trip(cli, tmp_path, args):
    out = tmp_path / "t.ecsv"
    res = cli(*args, "--format", "ecsv", "--out", str(out))
    assert res.exit_code == 0, res.output
    physical, times = _check(QTable.read(out, format="ascii.ecsv"))
    if args[0] in ("chord", "event"):
        assert "time_utc" in times


def test_python_api_to_table():
    from occplan.chords import chord
    from occplan.ephemeris import Observer, StarSpec
    from occplan.features import body_features, features_table

    res = chord("saturn", StarSpec(36.00676, 11.44189), Observer.site("s", -23.41, -68.05, 2950.0),
                ("2028-10-30T02:00Z", "2028-10-30T04:00Z"), step_s=600.0)
    t = res.to_table()
    _check(t)
    assert t["ring_radius_km"].unit == u.km and np.isfinite(t["ring_radius_km"].value).any()
    ft = features_table(body_features("uranus"))
    assert ft["resonance_radius_km"].unit == u.km and ft["torque_dyn_cm"].unit == u.dyn * u.cm


def test_api_accepts_astropy_objects():
    """A SkyCoord with proper motion, an EarthLocation and astropy Times give the same chord
    as the plain values (astropy's own unit conversions: common practice)."""
    import astropy.units as u
    from astropy.coordinates import EarthLocation, SkyCoord

    from occplan.chords import chord
    from occplan.ephemeris import Observer, StarSpec

    plain = chord("saturn", StarSpec(36.00676, 11.44189, pm_ra_mas_yr=5.0, pm_dec_mas_yr=-3.0),
                  Observer.site("s", -23.41, -68.05, 2950.0),
                  ("2028-10-30T02:00Z", "2028-10-30T04:00Z"), step_s=600.0)
    sky = SkyCoord(ra=36.00676 * u.deg, dec=11.44189 * u.deg, pm_ra_cosdec=5.0 * u.mas / u.yr,
                   pm_dec=-3.0 * u.mas / u.yr, obstime=Time(2016.0, format="jyear", scale="tt"))
    loc = EarthLocation.from_geodetic(-68.05 * u.deg, -23.41 * u.deg, 2950.0 * u.m)
    astro = chord("saturn", sky, loc, Time(["2028-10-30T02:00", "2028-10-30T04:00"], scale="utc"),
                  step_s=600.0)
    a, b = plain.track.ring_radius_km, astro.track.ring_radius_km
    assert np.allclose(a, b, atol=1e-3, equal_nan=True)  # km


@pytest.mark.parametrize("fmt", ["ecsv", "csv", "json", "table"])
def test_chord_columns_written_as_astropy_writes_rows(fmt):
    """The column-by-column writer gives the very text of astropy's row-by-row ASCII writers
    (reference library) for a chord through the rings and behind the planet: times, nan,
    booleans, empty and quoted region names."""
    from occplan.chords import CHORD_COLUMNS, chord
    from occplan.ephemeris import Observer
    from occplan.tables import render, render_columns

    res = chord("saturn", _star(36.00676, 11.44189), Observer.site("s", -23.41, -68.05, 2950.0),
                ("2028-10-30T02:00Z", "2028-10-30T04:00Z"), step_s=7.0)
    cols = res.columns()
    assert np.any(cols["behind_planet"]) and np.any(~cols["behind_planet"])
    assert "" in set(cols["region"]) and any(" " in r for r in cols["region"])
    want = render(res.rows, res.meta, fmt, columns=CHORD_COLUMNS, header="# h\n")
    got = render_columns(cols, res.meta, fmt, header="# h\n")
    assert got == want


def _star(ra, dec):
    from occplan.ephemeris import StarSpec

    return StarSpec(ra_deg=ra, dec_deg=dec)


@pytest.mark.parametrize("fmt", ["ecsv", "csv"])
def test_columns_writer_matches_astropy_on_awkward_values(fmt):
    """nan, infinities, -0, tiny and huge floats, quotes and commas in text: the same text as
    astropy's writers (reference library)."""
    from occplan.tables import render, render_columns

    cols = {
        "time_utc": np.array(["2028-10-30T02:00:00.000Z", "2028-10-30T02:00:01.250Z",
                              "2028-10-30T02:00:02.000Z", "2028-10-30T02:00:03.000Z"], dtype=object),
        "ring_radius_km": np.array([np.nan, np.inf, -0.0, 1.0e-300]),
        "sky_f_km": np.array([1.0e21, -123456789.123456789, 0.1, 2.5e-7]),
        "behind_planet": np.array([True, False, False, True]),
        "region": np.array(['say "hi"', "a,b", "", "B ring"], dtype=object),
    }
    rows = [dict(zip(cols, v)) for v in zip(*(c.tolist() for c in cols.values()))]
    assert render_columns(cols, {"k": 1}, fmt) == render(rows, {"k": 1}, fmt)
