"""Times, star positions and kernels as users type them: read right, or refused in one line.

References: the Gregorian calendar and ISO 8601 (2028 is a leap year, 2027 is not; day 060
of 2028 is 29 February: common practice), astropy's Time and Angle parsers for the values
(computed here, not pasted), and the SPK file layout (a truncated copy of the default
kernel must be refused when opened, not fail later inside a computation).
"""

from __future__ import annotations

import os
import shutil

import numpy as np
import pytest

from occplan.errors import DataFileError, InputError
from occplan.ephemeris import (default_kernel_path, get_ephemeris, parse_star_position,
                               parse_utc, tdb_s_of, utc_iso)


# --------------------------------------------------------------------------- times

@pytest.mark.parametrize("text,iso", [
    ("2028-03-01T04:05:06Z", "2028-03-01T04:05:06.000Z"),
    ("2028-03-01T04:05:06.25+00:00", "2028-03-01T04:05:06.250Z"),
    ("2028-03-01 04:05:06", "2028-03-01T04:05:06.000Z"),
    ("2028-03-01T04:05Z", "2028-03-01T04:05:00.000Z"),
    ("2028-03-01", "2028-03-01T00:00:00.000Z"),
    ("2028-03-01T04:05:06 UTC", "2028-03-01T04:05:06.000Z"),
    ("2028-060T12:00Z", "2028-02-29T12:00:00.000Z"),  # day 60 of a leap year
    ("2027-060T12:00Z", "2027-03-01T12:00:00.000Z"),
    ("2028-366", "2028-12-31T00:00:00.000Z"),
    ("2028-03-01T04:05:06-05:00", "2028-03-01T09:05:06.000Z"),  # ISO offset: UTC = local - offset
    ("2028-03-01T01:00+0230", "2028-02-29T22:30:00.000Z"),
    ("2016-12-31T23:59:60.5Z", "2016-12-31T23:59:60.500Z"),  # the leap second (IERS Bulletin C 52)
])
def test_iso_forms_users_paste(text, iso):
    assert utc_iso(parse_utc(text)) == iso


@pytest.mark.parametrize("text,iso", [
    ("2028-03-01T04:05:06Z", "2028-03-01T04:05:06"),
    ("2031-11-02 10:00:00", "2031-11-02T10:00:00"),
])
def test_same_instant_as_astropy(text, iso):
    import warnings

    from astropy.time import Time

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")  # ERFA's "dubious year" past the leap-second table
        ref = Time(iso, scale="utc").tdb
    ours = tdb_s_of(parse_utc(text))
    ref_s = ((ref.jd1 - 2451545.0) + ref.jd2) * 86400.0
    assert abs(ours - ref_s) < 1e-5  # 10 us: TDB-TT formulas differ by microseconds


@pytest.mark.parametrize("text", [
    "2028-02-30T00:00Z", "2027-02-29", "2028-13-01", "2028-04-31T00:00Z", "2028-03-01T24:00Z",
    "2028-03-01T04:60Z", "2027-366", "2028-000", "2028-03-01T04:05:06+25:00", "tomorrow",
    "2028/03/01", "", "2028-03-01T04:05:06ZZ", "2028031",  # YYYYDDD: too easily a mistyped date
])
def test_invalid_times_are_refused(text):
    with pytest.raises(InputError) as info:
        parse_utc(text)
    assert "\n" not in str(info.value)


def test_invalid_date_on_the_command_line_is_one_line(cli):
    res = cli("chord", "--body", "saturn", "--star", "23.99933 7.46989", "--geocentre",
              "--start", "2028-02-30T00:00Z", "--end", "2028-03-02T00:00Z")
    assert res.exit_code == 2
    assert "2028-02-30" in res.stderr and len(res.stderr.strip().splitlines()) == 1


# --------------------------------------------------------------------------- star positions

def _astropy_deg(ra_text, dec_text, ra_unit="hourangle"):
    from astropy.coordinates import Angle

    return Angle(ra_text, unit=ra_unit).deg, Angle(dec_text, unit="deg").deg


@pytest.mark.parametrize("text,ra_ref,dec_ref,ra_unit", [
    ("1.6127h 7.09d", "1.6127h", "7.09d", "hourangle"),
    ("1h 7", "1h", "7", "hourangle"),
    ("2h24m01.62s +11d26m30.8s", "2h24m01.62s", "11d26m30.8s", "hourangle"),
    ("02 24 01.62 +11 26 30.8", "2h24m01.62s", "11d26m30.8s", "hourangle"),
    ("02:24:01.62 -00:26:30.8", "2h24m01.62s", "-0d26m30.8s", "hourangle"),
    ("36.00676d 11.44189d", "36.00676d", "11.44189d", "deg"),
    ("36.00676\u00b0 -11\u00b026\u203230\u2033", "36.00676d", "-11d26m30s", "deg"),
    ("36d00m24s -11d26'30\"", "36d00m24s", "-11d26m30s", "deg"),
    ("36.00676 11.44189", "36.00676", "11.44189", "deg"),  # plain numbers are degrees
])
def test_star_positions_read_like_astropy(text, ra_ref, dec_ref, ra_unit):
    ra, dec = parse_star_position(text)
    ra_a, dec_a = _astropy_deg(ra_ref, dec_ref, ra_unit)
    assert abs(ra - ra_a) < 1e-9 and abs(dec - dec_a) < 1e-9


@pytest.mark.parametrize("text", [
    "24.19 7.09d",   # RA without a unit next to a marked Dec: hours or degrees?
    "1h 7m",         # the RA only
    "1h7m 7h",       # a Dec in hours
    "1.5h30m 7",     # a fraction before minutes
    "2h 61m 7",      # minutes out of range
    "7d 1h",         # a Dec in hours
    "nan 3", "1 2 3", "10:20 5", "1h 2d 3d", "25h 7", "-1h 7", "10 95",
])
def test_ambiguous_or_wrong_star_positions_are_refused(text):
    with pytest.raises(InputError) as info:
        parse_star_position(text)
    assert "\n" not in str(info.value)


# --------------------------------------------------------------------------- kernels

def _truncated_copy(tmp_path, fraction):
    src = default_kernel_path()
    dst = tmp_path / "truncated.bsp"
    with open(src, "rb") as f, open(dst, "wb") as g:
        g.write(f.read(int(os.path.getsize(src) * fraction)))
    return dst


@pytest.mark.parametrize("fraction", [0.5, 0.001])
def test_truncated_kernel_is_refused_when_opened(tmp_path, fraction):
    path = _truncated_copy(tmp_path, fraction)
    with pytest.raises(DataFileError, match="truncated|damaged|not a readable"):
        get_ephemeris((str(path),))


def test_corrupt_segment_is_refused(tmp_path):
    """A full-size file whose coefficients are overwritten by NaNs (IEEE 754 0x7ff8...)."""
    dst = tmp_path / "corrupt.bsp"
    shutil.copyfile(default_kernel_path(), dst)
    from jplephem.spk import SPK

    kernel = SPK.open(str(dst))
    seg = [s for s in kernel.segments if s.target == 6][0]
    start, end = seg.start_i, seg.end_i
    kernel.close()
    with open(dst, "r+b") as f:
        f.seek((start - 1) * 8)
        f.write(np.full(end - start + 1, np.nan).tobytes())
    with pytest.raises(DataFileError, match="damaged"):
        get_ephemeris((str(dst),))


def _write(path, data):
    path.write_bytes(data)
    return path


@pytest.mark.parametrize("make,expect", [
    (lambda p: p, "folder"),
    (lambda p: "/dev/null", "not a regular file"),
    (lambda p: _write(p / "empty.bsp", b""), "empty"),
    (lambda p: _write(p / "text.bsp", b"hello\n" * 200), "not a readable"),
    (lambda p: p / "missing.bsp", "not found"),
])
def test_kernel_paths_get_the_right_message(tmp_path, make, expect):
    with pytest.raises(DataFileError, match=expect):
        get_ephemeris((str(make(tmp_path)),))


def test_info_reports_a_damaged_kernel_in_one_line(cli, tmp_path):
    path = _truncated_copy(tmp_path, 0.5)
    res = cli("info", "--kernel", str(path))
    assert res.exit_code == 2 and "truncated" in res.stderr
    assert len(res.stderr.strip().splitlines()) == 1
    res = cli("info", "--kernel", str(tmp_path))
    assert res.exit_code == 2 and "folder" in res.stderr


def test_info_names_the_kernel_its_coverage_and_earth_orientation(cli):
    res = cli("info")
    assert res.exit_code == 0
    # DE440 spans 1550-2650 (Park et al. 2021, AJ 161, 105)
    assert "de440.bsp" in res.output and "1549-12-31" in res.output and "2650-01-25" in res.output
    assert "finals2000A" in res.output and "polar motion" in res.output
    assert "under 1 mm" not in res.output


# --------------------------------------------------------------------------- round trips

from hypothesis import given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402


def _sexa(value, places):
    """(sign, whole, minutes, seconds) of a non-negative or signed value, seconds rounded."""
    sign = "-" if value < 0 else "+"
    total = round(abs(value) * 3600.0, places)
    whole, rest = divmod(total, 3600.0)
    minutes, seconds = divmod(rest, 60.0)
    return sign, int(whole), int(minutes), seconds


@settings(max_examples=300, deadline=None)
@given(ra=st.floats(0.0, 359.999), dec=st.floats(-89.999, 89.999),
       form=st.sampled_from(["units", "spaces", "colons", "degrees"]))
def test_star_position_round_trip(ra, dec, form):
    """Formatted as users write them, the position reads back within the printed precision
    and equals astropy's reading of the same fields (Angle)."""
    from astropy.coordinates import Angle

    _, h, m, s = _sexa(ra / 15.0, 4)
    sg, d, dm, ds = _sexa(dec, 3)
    if s >= 60.0 or ds >= 60.0 or h >= 24:
        return  # rounding carried into the next field; not a form a user types
    ra_fields, dec_fields = f"{h}h{m:02d}m{s:07.4f}s", f"{sg}{d}d{dm:02d}m{ds:06.3f}s"
    text = {"units": f"{ra_fields} {dec_fields}",
            "spaces": f"{h:02d} {m:02d} {s:07.4f} {sg}{d:02d} {dm:02d} {ds:06.3f}",
            "colons": f"{h:02d}:{m:02d}:{s:07.4f} {sg}{d:02d}:{dm:02d}:{ds:06.3f}",
            "degrees": f"{ra:.9f} {dec:.9f}"}[form]
    got_ra, got_dec = parse_star_position(text)
    tol = 1e-8 if form == "degrees" else 1e-6  # half the last printed digit, in degrees
    assert abs(got_ra - ra) < tol + 0.5e-4 * 15.0 / 3600.0 * (form != "degrees")
    assert abs(got_dec - dec) < tol + 0.5e-3 / 3600.0 * (form != "degrees")
    if form != "degrees":
        ref_ra, ref_dec = Angle(ra_fields, unit="hourangle").deg, Angle(dec_fields).deg
        assert abs(got_ra - ref_ra) < 1e-9 and abs(got_dec - ref_dec) < 1e-9


def test_tabulated_nutation_matches_the_full_iau2000a_series():
    """The hourly nutation table against the full IAU 2000A series (skyfield's
    ``iau2000a_radians``, reference library) at every one of 20,000 times over 9 days: within
    1 microarcsecond, and a site's ICRF position within 1 mm (1 uas at 6,400 km is 0.03 mm)."""
    from skyfield.nutationlib import iau2000a_radians

    from occplan.ephemeris import Observer, get_ephemeris, time_from_tdb_s, timescale
    from occplan.constants import J2000_JD_TDB

    rng = np.random.default_rng(7)
    tdb_s = np.sort(rng.uniform(8.6e8, 8.6e8 + 9 * 86400.0, 20_000))
    tab = time_from_tdb_s(tdb_s)
    assert isinstance(tab.__dict__.get("_nutation_angles_radians"), tuple)  # the table is used
    plain = timescale().tdb_jd(J2000_JD_TDB, tdb_s / 86400.0)
    full = iau2000a_radians(plain)
    uas = np.degrees(1.0) * 3.6e9
    for got, ref in zip(tab._nutation_angles_radians, full):
        assert np.max(np.abs(got - ref)) * uas < 1.0
    eph, site = get_ephemeris(), Observer.site("t", -30.0, 20.0, 1500.0)
    d_mm = np.linalg.norm(eph.observer_km(site, tab) - eph.observer_km(site, plain), axis=0) * 1e6
    assert d_mm.max() < 1.0
