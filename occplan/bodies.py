"""Ringed-body catalog: pole model, radii, gravity field, ring regions, satellites.

Bodies live in TOML files under ``occplan/data/bodies/`` (one per planet); a user can pass
a file of their own with the same layout (see DEVELOPERS.md, "Adding a body").  Every
table in a body file carries a ``source``.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field
from functools import lru_cache
from importlib import resources
from pathlib import Path

import numpy as np

from .constants import DAYS_PER_JULIAN_CENTURY, J2000_JD_TDB
from .errors import DataFileError, UnknownNameError


@dataclass(frozen=True)
class PoleTerm:
    """One periodic term of an IAU pole model.

    alpha0 += ra_sin_deg * sin(angle), delta0 += dec_cos_deg * cos(angle), with
    angle = angle0_deg + angle_rate_deg_century * T.
    """

    angle0_deg: float
    angle_rate_deg_century: float
    ra_sin_deg: float = 0.0
    dec_cos_deg: float = 0.0


@dataclass(frozen=True)
class PoleModel:
    """North (angular-momentum) pole of the ring plane in ICRF, IAU WGCCRE form."""

    ra_deg: float
    ra_rate_deg_century: float
    dec_deg: float
    dec_rate_deg_century: float
    terms: tuple[PoleTerm, ...] = ()
    source: str = ""

    def radec_rad(self, tdb_jd):
        """Pole right ascension and declination (rad) at TDB Julian dates (scalar or array)."""
        t_cy = (np.asarray(tdb_jd, dtype=float) - J2000_JD_TDB) / DAYS_PER_JULIAN_CENTURY
        ra = self.ra_deg + self.ra_rate_deg_century * t_cy
        dec = self.dec_deg + self.dec_rate_deg_century * t_cy
        for term in self.terms:
            ang = np.radians(term.angle0_deg + term.angle_rate_deg_century * t_cy)
            ra = ra + term.ra_sin_deg * np.sin(ang)
            dec = dec + term.dec_cos_deg * np.cos(ang)
        return np.radians(ra), np.radians(dec)

    def unit_vector(self, tdb_jd):
        """Pole unit vector(s) in ICRF, shape (3,) or (3, N)."""
        ra, dec = self.radec_rad(tdb_jd)
        return np.array([np.cos(dec) * np.cos(ra), np.cos(dec) * np.sin(ra), np.sin(dec)])


@dataclass(frozen=True)
class RingRegion:
    name: str
    inner_km: float
    outer_km: float
    surface_density_g_cm2: float
    viscosity_cm2_s: float
    optical_depth: float
    source: str
    # Semi-major axes of the edges of a narrow eccentric ring (whose inner_km/outer_km are its
    # radial envelope over all longitudes); used to match resonance-held edges.
    edge_inner_a_km: float | None = None
    edge_outer_a_km: float | None = None
    orbit: object = None  # occplan.ring_orbits.RingOrbit for an eccentric ring, else None

    @property
    def edge_a_km(self) -> tuple[float, float]:
        """(inner, outer) edge semi-major axes, or the region limits for a circular ring."""
        return (self.edge_inner_a_km or self.inner_km, self.edge_outer_a_km or self.outer_km)


@dataclass(frozen=True)
class Gap:
    """A clear gap inside a ring region (no ring material to launch waves in)."""

    name: str
    inner_km: float
    outer_km: float
    source: str = ""


@dataclass(frozen=True)
class MeanElements:
    """Mean orbital elements of a satellite about its planet, for the planet-centre correction.

    Angles in degrees at ``epoch_jd_tdb``; rates in deg/day.  The orbit is referred to the
    satellite's Laplace plane (pole ``laplace_ra_deg``, ``laplace_dec_deg`` in ICRF); the
    node is measured in that plane from its ascending node on the ICRF equator.
    """

    epoch_jd_tdb: float
    a_km: float
    e: float
    inclination_deg: float
    ascending_node_deg: float
    argument_of_periapsis_deg: float
    mean_anomaly_deg: float
    mean_motion_deg_day: float
    periapsis_rate_deg_day: float
    node_rate_deg_day: float
    laplace_ra_deg: float
    laplace_dec_deg: float
    source: str


@dataclass(frozen=True)
class Satellite:
    name: str
    naif_id: int
    gm_km3_s2: float
    a_km: float
    e: float
    i_deg: float
    mean_motion_deg_day: float
    source: str
    apsidal_rate_deg_day: float | None = None  # observed; None = from the planet's field
    nodal_rate_deg_day: float | None = None
    mean_elements: MeanElements | None = None
    # co-orbital configurations: ((start_jd_tdb, end_jd_tdb, a_km, mean_motion_deg_day), ...)
    configurations: tuple = ()
    configurations_source: str = ""

    def at_epoch(self, jd_tdb: float) -> "Satellite":
        """The satellite with the orbit of its co-orbital configuration at ``jd_tdb`` (itself
        when it has none or the date lies outside every listed configuration)."""
        from dataclasses import replace as _replace

        for start, end, a_km, n in self.configurations:
            if start <= jd_tdb < end:
                return _replace(self, a_km=a_km, mean_motion_deg_day=n)
        return self


@dataclass(frozen=True)
class Body:
    name: str
    naif_id: int
    barycentre_naif_id: int
    gm_km3_s2: float
    reference_radius_km: float
    zonal_j: tuple[float, ...]
    equatorial_radius_km: float
    polar_radius_km: float
    pole: PoleModel
    rings: tuple[RingRegion, ...]
    satellites: tuple[Satellite, ...]
    sources: dict = field(default_factory=dict)
    photometry: dict = field(default_factory=dict)
    path: str = ""
    gaps: tuple = ()

    @property
    def key(self) -> str:
        return self.name.lower()

    def at_epoch(self, jd_tdb: float | None) -> "Body":
        """The body with each co-orbital satellite in its configuration at ``jd_tdb``."""
        if jd_tdb is None or not any(s.configurations for s in self.satellites):
            return self
        from dataclasses import replace as _replace

        return _replace(self, satellites=tuple(sorted((s.at_epoch(jd_tdb) for s in self.satellites),
                                                      key=lambda s: s.a_km)))

    @property
    def inner_ring_km(self) -> float:
        return min(r.inner_km for r in self.rings)

    @property
    def outer_ring_km(self) -> float:
        return max(r.outer_km for r in self.rings)

    def ring(self, name: str) -> RingRegion:
        for r in self.rings:
            if r.name.lower() == name.lower():
                return r
        known = ", ".join(r.name for r in self.rings)
        raise UnknownNameError(f"{self.name} has no ring region {name!r}; known: {known}")

    def satellite(self, name: str) -> Satellite:
        for s in self.satellites:
            if s.name.lower() == name.lower():
                return s
        known = ", ".join(s.name for s in self.satellites)
        raise UnknownNameError(f"{self.name} has no satellite {name!r}; known: {known}")

    def region_at_semimajor(self, a_km):
        """Name of the ring region whose particles have semi-major axis ``a_km`` ('' if none):
        the edge semi-major axes where the body file gives them (narrow eccentric rings),
        the radial limits otherwise."""
        a = np.atleast_1d(np.asarray(a_km, dtype=float))
        out = np.full(a.shape, "", dtype=object)
        for reg in self.rings:
            lo, hi = reg.edge_a_km
            out[(a >= lo) & (a < hi)] = reg.name
        for gap in self.gaps:
            out[(a >= gap.inner_km) & (a < gap.outer_km)] = ""
        for reg in self.ringlets_in_gaps:
            lo, hi = reg.edge_a_km
            out[(a >= lo) & (a < hi)] = reg.name
        return out

    def region_at(self, ring_radius_km):
        """Name of the ring region at each radius ('' outside every region)."""
        r = np.atleast_1d(np.asarray(ring_radius_km, dtype=float))
        out = np.full(r.shape, "", dtype=object)
        for reg in self.rings:
            out[(r >= reg.inner_km) & (r < reg.outer_km)] = reg.name
        for gap in self.gaps:
            out[(r >= gap.inner_km) & (r < gap.outer_km)] = gap.name
        for reg in self.ringlets_in_gaps:
            out[(r >= reg.inner_km) & (r < reg.outer_km)] = reg.name
        return out

    @property
    def ringlets_in_gaps(self) -> tuple:
        """Ring regions that lie inside a gap (Saturn's Titan, Maxwell, Huygens ringlets)."""
        return tuple(reg for reg in self.rings
                     if any(g.inner_km <= reg.inner_km and reg.outer_km <= g.outer_km
                            for g in self.gaps))


def _orbit(table, where):
    from .ring_orbits import parse_orbit

    return parse_orbit(table, where)


def _need(table: dict, key: str, where: str):
    if key not in table:
        raise DataFileError(f"{where}: missing key {key!r}")
    return table[key]


def _parse(data: dict, path: str) -> Body:
    where = path
    from .schema import BODY_SCHEMA, validate

    validate(data, BODY_SCHEMA, f"body file {path!r}")
    try:
        grav = _need(data, "gravity", where)
        shape = _need(data, "shape", where)
        pole = _need(data, "pole", where)
        terms = tuple(
            PoleTerm(
                angle0_deg=float(_need(t, "angle0_deg", where + " [pole.terms]")),
                angle_rate_deg_century=float(_need(t, "angle_rate_deg_century", where)),
                ra_sin_deg=float(t.get("ra_sin_deg", 0.0)),
                dec_cos_deg=float(t.get("dec_cos_deg", 0.0)),
            )
            for t in pole.get("terms", [])
        )
        pole_model = PoleModel(
            ra_deg=float(_need(pole, "ra_deg", where + " [pole]")),
            ra_rate_deg_century=float(pole.get("ra_rate_deg_century", 0.0)),
            dec_deg=float(_need(pole, "dec_deg", where + " [pole]")),
            dec_rate_deg_century=float(pole.get("dec_rate_deg_century", 0.0)),
            terms=terms,
            source=str(pole.get("source", "")),
        )
        rings = tuple(
            RingRegion(
                name=str(_need(r, "name", where + " [[rings]]")),
                inner_km=float(_need(r, "inner_km", where + " [[rings]]")),
                outer_km=float(_need(r, "outer_km", where + " [[rings]]")),
                surface_density_g_cm2=float(_need(r, "surface_density_g_cm2", where)),
                viscosity_cm2_s=float(r.get("viscosity_cm2_s", 100.0)),
                optical_depth=float(r.get("optical_depth", 0.5)),
                source=str(r.get("source", "")),
                edge_inner_a_km=(float(r["edge_inner_a_km"]) if "edge_inner_a_km" in r else None),
                edge_outer_a_km=(float(r["edge_outer_a_km"]) if "edge_outer_a_km" in r else None),
                orbit=(_orbit(r["orbit"], f"{where} [[rings]] {r.get('name', '?')}")
                       if "orbit" in r else None),
            )
            for r in _need(data, "rings", where)
        )
        sats = []
        for s in data.get("satellites", []):
            me = s.get("mean_elements")
            mean = None
            if me is not None:
                mean = MeanElements(
                    **{k: float(v) for k, v in me.items() if k != "source"},
                    source=str(me.get("source", "")),
                )
            sats.append(
                Satellite(
                    name=str(_need(s, "name", where + " [[satellites]]")),
                    naif_id=int(s.get("naif_id", -1)),
                    gm_km3_s2=float(_need(s, "gm_km3_s2", where)),
                    a_km=float(_need(s, "a_km", where)),
                    e=float(s.get("e", 0.0)),
                    i_deg=float(s.get("i_deg", 0.0)),
                    mean_motion_deg_day=float(_need(s, "mean_motion_deg_day", where)),
                    source=str(s.get("source", "")),
                    apsidal_rate_deg_day=s.get("apsidal_rate_deg_day"),
                    nodal_rate_deg_day=s.get("nodal_rate_deg_day"),
                    mean_elements=mean,
                    configurations=tuple(
                        (float(c["start_jd_tdb"]), float(c["end_jd_tdb"]), float(c["a_km"]),
                         float(c["mean_motion_deg_day"])) for c in s.get("configurations", [])),
                    configurations_source=str(s.get("configurations_source", "")),
                )
            )
        body = Body(
            name=str(_need(data, "name", where)),
            naif_id=int(_need(data, "naif_id", where)),
            barycentre_naif_id=int(_need(data, "barycentre_naif_id", where)),
            gm_km3_s2=float(_need(grav, "gm_km3_s2", where + " [gravity]")),
            reference_radius_km=float(_need(grav, "reference_radius_km", where)),
            zonal_j=tuple(float(j) for j in _need(grav, "zonal_j", where)),
            equatorial_radius_km=float(_need(shape, "equatorial_radius_km", where)),
            polar_radius_km=float(_need(shape, "polar_radius_km", where)),
            pole=pole_model,
            rings=tuple(sorted(rings, key=lambda r: r.inner_km)),
            satellites=tuple(sorted(sats, key=lambda s: s.a_km)),
            sources={
                "gravity": grav.get("source", ""),
                "shape": shape.get("source", ""),
                "pole": pole.get("source", ""),
            },
            photometry=dict(data.get("photometry", {})),
            path=path,
            gaps=tuple(Gap(str(_need(g, "name", where + " [[gaps]]")),
                           float(_need(g, "inner_km", where + " [[gaps]]")),
                           float(_need(g, "outer_km", where + " [[gaps]]")),
                           str(g.get("source", "")))
                       for g in data.get("gaps", [])),
        )
    except (TypeError, ValueError) as exc:
        if isinstance(exc, DataFileError):
            raise
        raise DataFileError(f"{where}: malformed value ({exc})") from None
    if not body.rings:
        raise DataFileError(f"{where}: a body needs at least one [[rings]] region")
    for r in body.rings:
        if not 0 < r.inner_km < r.outer_km:
            raise DataFileError(f"{where}: ring {r.name!r} needs 0 < inner_km < outer_km")
        if r.inner_km <= body.equatorial_radius_km:
            raise DataFileError(f"{where}: ring {r.name!r} starts at {r.inner_km:g} km, inside "
                                f"the planet (equatorial radius {body.equatorial_radius_km:g} "
                                "km); give inner_km above it")
    for g in body.gaps:
        if not 0 < g.inner_km < g.outer_km:
            raise DataFileError(f"{where}: gap {g.name!r} needs 0 < inner_km < outer_km")
    return body


def builtin_names() -> list[str]:
    """Names (lower case) of the bodies shipped with occplan."""
    folder = resources.files("occplan") / "data" / "bodies"
    return sorted(p.name[:-5] for p in folder.iterdir() if p.name.endswith(".toml"))


def load_body_file(path: str | Path) -> Body:
    """Load a body from a TOML file of the built-in layout."""
    from .schema import read_toml

    return _parse(read_toml(path, "body"), str(path))


@lru_cache(maxsize=None)
def _builtin(name: str) -> Body:
    res = resources.files("occplan") / "data" / "bodies" / f"{name}.toml"
    return _parse(tomllib.loads(res.read_text(encoding="utf-8")), f"occplan/data/bodies/{name}.toml")


def get_body(name_or_path: str | Body) -> Body:
    """A built-in body by name (case-insensitive) or a body file by path."""
    if isinstance(name_or_path, Body):
        return name_or_path
    text = str(name_or_path)
    if text.endswith(".toml") or "/" in text:
        return load_body_file(text)
    key = text.strip().lower()
    if key not in builtin_names():
        raise UnknownNameError(
            f"unknown body {text!r}; built-in bodies are {', '.join(builtin_names())} "
            "(or pass the path of a body TOML file)"
        )
    return _builtin(key)
