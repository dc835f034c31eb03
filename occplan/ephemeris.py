"""Ephemeris layer: the only module that opens kernels and time scales.

Default kernel: DE421 from the ``skyfield-data`` package (offline).  Extra SPK kernels (user
``--kernel`` files) are searched first for the planet centre and for spacecraft observers.
Time scale: skyfield's built-in one (``load.timescale(builtin=True)``), so nothing is
downloaded.  All positions are barycentric ICRF in km.  Methods take a skyfield Time or TDB
Julian dates; the geometry passes Times built from TDB seconds past J2000
(:func:`time_from_tdb_s`), because a float Julian date resolves only 40 us (1.2 m of Earth
motion).

Notes
-----
DE421 holds only the system barycentres of the giant planets.  When no extra kernel holds the
planet centre, the barycentre is corrected with the satellites' mean orbits
(:mod:`occplan.mean_orbits`) and the residual error of that correction is reported.
"""

from __future__ import annotations

import atexit
import os
import re
import warnings
from dataclasses import dataclass, field
from functools import lru_cache
from pathlib import Path

import numpy as np

from .errors import CoverageError, DataFileError, InputError, UnknownNameError

DE421_NAME = "de421.bsp"


@lru_cache(maxsize=1)
def timescale():
    """skyfield's built-in time scale (leap seconds and Earth orientation shipped with skyfield)."""
    from skyfield.api import load

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return load.timescale(builtin=True)


def de421_path() -> str:
    import skyfield_data

    return os.path.join(os.path.dirname(skyfield_data.__file__), "data", DE421_NAME)


@lru_cache(maxsize=16)
def _open_kernel(path: str):
    """Open an SPK kernel once per process (closed at exit)."""
    from skyfield.jpllib import SpiceKernel

    if not os.path.isfile(path):
        raise DataFileError(f"kernel file {path!r} not found")
    try:
        kernel = SpiceKernel(path)
    except Exception as exc:  # jplephem raises a variety of errors for a non-SPK file
        raise DataFileError(f"{path!r} is not a readable SPK kernel ({exc})") from None
    atexit.register(kernel.close)
    return kernel


# --------------------------------------------------------------------------- time parsing

_ISO = re.compile(r"^\s*(\d{4})-(\d{2})-(\d{2})"
                  r"(?:[T ](\d{1,2})(?::(\d{2})(?::(\d{2}(?:\.\d*)?))?)?)?\s*(Z|UTC|utc)?\s*$")


def parse_utc(text: str):
    """A skyfield Time from a UTC ISO 8601 string ('2027-03-01T04:05:06.5Z'; 'Z' optional)."""
    m = _ISO.match(str(text))
    if not m:
        raise InputError(f"cannot read time {text!r}; use UTC ISO 8601 like 2027-03-01T04:05:06Z")
    y, mo, d = int(m[1]), int(m[2]), int(m[3])
    h = int(m[4] or 0)
    mi = int(m[5] or 0)
    s = float(m[6] or 0.0)
    if not (1 <= mo <= 12 and 1 <= d <= 31 and h <= 23 and mi <= 59 and s < 61):
        raise InputError(f"time {text!r} has a field out of range")
    return timescale().utc(y, mo, d, h, mi, s)


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
    return timescale().tdb_jd(np.asarray(when, dtype=float))


def time_from_tdb_s(tdb_s):
    """A skyfield Time from TDB seconds past J2000, keeping sub-microsecond precision.

    Internal times of the geometry are TDB seconds past J2000 (float64: 0.1 us resolution);
    a float Julian date resolves only 40 us, which moves the Earth by 1.2 m.
    """
    return timescale().tdb_jd(J2000_TDB_JD, np.asarray(tdb_s, dtype=float) / 86400.0)


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


_SEX = re.compile(r"[:hmsd°'\"]")


def parse_star_position(text: str) -> tuple[float, float]:
    """RA, Dec in degrees from "RA DEC": sexagesimal (RA in hours) or two decimal degrees."""
    s = str(text).strip()
    parts = _SEX.sub(" ", s).replace(",", " ").split()
    try:
        nums = [float(p) for p in parts]
    except ValueError:
        raise InputError(f'cannot read star position {text!r}; use "RA DEC" in degrees '
                         'or sexagesimal "hh mm ss.s +dd mm ss"') from None
    if len(nums) == 2:
        ra, dec = nums
    elif len(nums) == 6:
        sign = -1.0 if parts[3].startswith("-") else 1.0
        ra = 15.0 * (nums[0] + nums[1] / 60.0 + nums[2] / 3600.0)
        dec = sign * (abs(nums[3]) + nums[4] / 60.0 + nums[5] / 3600.0)
        if not (0 <= nums[1] < 60 and 0 <= nums[2] < 60 and 0 <= nums[4] < 60 and 0 <= nums[5] < 60):
            raise InputError(f"star position {text!r}: minutes and seconds must be in 0..60")
    else:
        raise InputError(f'cannot read star position {text!r}; give two numbers (degrees) '
                         'or six (hh mm ss dd mm ss)')
    if not 0.0 <= ra < 360.0:
        raise InputError(f"star RA {ra} deg is out of range 0..360")
    if not -90.0 <= dec <= 90.0:
        raise InputError(f"star Dec {dec} deg is out of range -90..90")
    return ra, dec


# --------------------------------------------------------------------------- the ephemeris


class Ephemeris:
    """DE421 plus optional user kernels; positions barycentric ICRF in km at TDB dates.

    Parameters
    ----------
    kernels : list of paths, optional
        Extra SPK files.  They are searched before DE421 for the planet centre and for
        spacecraft observers.
    """

    def __init__(self, kernels=None):
        self.main_path = de421_path()
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
                "start_utc": utc_iso(min(starts), 0) if starts else None,
                "end_utc": utc_iso(max(ends), 0) if ends else None,
                "targets": sorted({int(s.target) for s in k.segments}),
            })
        return out

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
        """A skyfield vector function SSB -> target, chaining extra kernels onto DE421."""
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
    for k in reversed(kernels):  # extra kernels override DE421
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


def time_scale_info() -> dict:
    """Which leap-second and Earth-orientation data the built-in time scale uses."""
    import skyfield

    ts = timescale()
    info = {"time_scale": f"skyfield {skyfield.__version__} built-in (load.timescale(builtin=True))"}
    info["last_leap_second_utc"] = utc_iso(float(ts.leap_dates[-1]) + 0.0008, 0)[:10]
    info["tai_minus_utc_s"] = float(ts.leap_offsets[-1])
    table_end = float(ts.delta_t_table[0][-1])
    info["earth_orientation"] = (
        "delta T / UT1 from the IERS table built into skyfield, tabulated to "
        f"{utc_iso(table_end, 0)[:10]} and extrapolated after it (skyfield-data's finals file "
        "is not used; its expiry warning is suppressed). Polar motion is not applied: "
        "under 15 m on the ground, under 1 mm at the rings.")
    return info
