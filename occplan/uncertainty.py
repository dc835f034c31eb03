"""Uncertainties of predicted crossing times and radii, and recording plans.

Every error source moves the star relative to the planet in the sky plane (f east, g north,
km at the planet) or tilts the ring plane:

- the star's catalogue position and proper motion, propagated to the event epoch with their
  correlations: x(t) = x0 + mu (t - t0) for RA* and Dec, covariance J C J^T with
  J = [[1, 0, dt, 0], [0, 1, 0, dt]] (linear propagation: common practice), plus the
  parallax error as an isotropic term (its factor is at most 1 for an observer within 1 AU
  of the Sun's barycentre); an angle a (rad) is a D a km offset at distance D;
- the planet's ephemeris position (per body, ``data/ephemeris_uncertainty.toml``);
- the observer's position from Earth orientation (UT1 and polar motion; the site error maps
  one to one onto the sky plane) from :func:`occplan.ephemeris.earth_orientation`;
- the ring-plane pole: a pole error eps (rad) moves a ring radius r by about
  r eps / tan|B*| (the sensitivity every output already states).

Linear propagation (first order in the offsets): with r = sqrt(u^2 + (w / sin B*)^2), u and
w the sky offsets along the rings' long axis and the projected pole (u = f cos P - g sin P,
w = f sin P + g cos P),

    dr/df = (u cos P + w sin P / sin^2 B*) / r,   dr/dg = (-u sin P + w cos P / sin^2 B*) / r,

sigma_r^2 = grad r^T C grad r + sigma_r,pole^2 and a crossing of radius R shifts by
dt = -dr / (dr/dt), so sigma_t = sigma_r / |dr/dt|.  The closest-approach time shift comes
from moving the whole chord by +-1 sigma along each principal axis of C and finding the new
minimum of r on the interpolated track.  ``tests/test_uncertainty.py`` checks the linear
sigmas against a Monte Carlo of the catalogue errors through the full geometry.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, field
from importlib import resources

import numpy as np

from .errors import DataFileError, InputError

MAS_RAD = math.pi / (180.0 * 3600.0 * 1000.0)
JULIAN_YEAR_S = 365.25 * 86400.0
RECORDING_SIGMAS = 3.0  # recording starts 3 sigma before the first crossing
RECORDING_MARGIN_S = 60.0  # and a minute more for the unocculted star's baseline


def _uncertainty_table() -> dict:
    text = (resources.files("occplan") / "data" / "ephemeris_uncertainty.toml").read_text(encoding="utf-8")
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:  # a packaging error, not a user error
        raise DataFileError(f"occplan/data/ephemeris_uncertainty.toml: {exc}") from None


def default_planet_errors(body) -> dict:
    """{'planet_sky_km', 'pole_deg', 'source'} for a built-in body (empty for others)."""
    return dict(_uncertainty_table().get(body.name.lower(), {}))


@dataclass
class ErrorBudget:
    """The sky-plane covariance of the star relative to the planet, and the pole error."""

    cov_fg_km2: np.ndarray  # (2, 2), f east and g north
    pole_sigma_deg: float
    terms: dict = field(default_factory=dict)  # name -> 1-sigma size (km) and where from
    notes: list = field(default_factory=list)

    @property
    def sky_sigma_km(self) -> float:
        """The larger principal 1-sigma of the sky-plane offset."""
        return float(math.sqrt(max(np.linalg.eigvalsh(self.cov_fg_km2).max(), 0.0)))

    def describe(self) -> dict:
        return {"sky_covariance_km2": self.cov_fg_km2.tolist(), "sky_sigma_km": self.sky_sigma_km,
                "pole_sigma_deg": self.pole_sigma_deg, "terms": self.terms, "notes": list(self.notes)}


def star_covariance_mas2(star, when_tdb_s: float) -> np.ndarray | None:
    """(RA*, Dec) covariance in mas^2 at the event epoch, or None without catalogue errors.

    Reads ``star.errors`` (mas, mas/yr; Gaia names ``ra_error``, ``dec_error``,
    ``pmra_error``, ``pmdec_error`` and the correlations ``ra_dec_corr``, ``ra_pmra_corr``,
    ``ra_pmdec_corr``, ``dec_pmra_corr``, ``dec_pmdec_corr``, ``pmra_pmdec_corr``).
    """
    err = getattr(star, "errors", None) or {}
    if not err or err.get("ra_error") is None or err.get("dec_error") is None:
        return None
    names = ("ra", "dec", "pmra", "pmdec")
    sig = np.array([float(err.get(f"{n}_error") or 0.0) for n in names])
    if not np.all(np.isfinite(sig)) or np.any(sig < 0):
        raise InputError(f"star {star.name!r}: catalogue errors must be finite and >= 0 ({err})")
    corr = np.eye(4)
    for i in range(4):
        for j in range(i + 1, 4):
            c = err.get(f"{names[i]}_{names[j]}_corr")
            if c is not None and np.isfinite(c):
                if not -1.0 <= float(c) <= 1.0:
                    raise InputError(f"star {star.name!r}: correlation {names[i]}_{names[j]}_corr "
                                     f"= {c} is outside -1..1")
                corr[i, j] = corr[j, i] = float(c)
    c4 = corr * np.outer(sig, sig)
    from .ephemeris import J2000_TDB_JD

    dt_yr = (when_tdb_s - (star.epoch_jd_tt - J2000_TDB_JD) * 86400.0) / JULIAN_YEAR_S
    jac = np.array([[1.0, 0.0, dt_yr, 0.0], [0.0, 1.0, 0.0, dt_yr]])
    cov = jac @ c4 @ jac.T
    plx = float(err.get("parallax_error") or 0.0)
    return cov + np.eye(2) * plx**2


def error_budget(track, star, *, planet_sky_km: float | None = None,
                 pole_deg: float | None = None, star_error_mas: float | None = None) -> ErrorBudget:
    """The error budget of one chord (module docstring).

    Parameters
    ----------
    track : occplan.geometry.Track
    star : occplan.ephemeris.StarSpec
    planet_sky_km, pole_deg : float, optional
        Override the body's planet-position and pole 1-sigma.
    star_error_mas : float, optional
        An isotropic 1-sigma of the star's position at the event epoch (mas), replacing the
        catalogue errors.
    """
    body = track.body
    defaults = default_planet_errors(body)
    notes, terms = [], {}
    distance = float(track.meta["distance_km"])
    km_per_mas = distance * MAS_RAD
    t_mid = float(track.closest_approach_s) if np.isfinite(track.closest_approach_radius_km) \
        else float(np.mean(track.tdb_s))
    cov = np.zeros((2, 2))
    if star_error_mas is not None:
        if not (math.isfinite(star_error_mas) and star_error_mas >= 0):
            raise InputError(f"--star-error-mas {star_error_mas} must be a finite number >= 0")
        cov += np.eye(2) * (star_error_mas * km_per_mas) ** 2
        terms["star"] = {"sigma_km": star_error_mas * km_per_mas, "from": "--star-error-mas"}
    else:
        c = star_covariance_mas2(star, t_mid)
        if c is None:
            notes.append("the star's position error is unknown (no catalogue errors): not "
                         "included; pass --star-error-mas or a catalogue with Gaia errors")
        else:
            cov += c * km_per_mas**2
            terms["star"] = {"sigma_km": float(math.sqrt(np.linalg.eigvalsh(c).max())) * km_per_mas,
                             "from": "catalogue errors propagated to the event epoch"}
    planet = planet_sky_km if planet_sky_km is not None else defaults.get("planet_sky_km")
    if planet is None:
        notes.append(f"no planet-position uncertainty for {body.name}: not included "
                     "(pass --planet-error-km)")
    else:
        if not (math.isfinite(planet) and planet >= 0):
            raise InputError(f"--planet-error-km {planet} must be a finite number >= 0")
        cov += np.eye(2) * planet**2
        terms["planet"] = {"sigma_km": float(planet),
                           "from": "--planet-error-km" if planet_sky_km is not None
                           else defaults.get("source", "")}
    eo = track.meta.get("earth_orientation")
    if eo and eo.get("site_sigma_m") is not None:
        site = float(eo["site_sigma_m"]) / 1000.0
        cov += np.eye(2) * site**2
        terms["site"] = {"sigma_km": site, "from": f"Earth orientation: {eo.get('status')}"}
    pole = pole_deg if pole_deg is not None else defaults.get("pole_deg")
    if pole is None:
        notes.append(f"no pole uncertainty for {body.name}: not included (pass --pole-error-deg)")
        pole = 0.0
    elif not (math.isfinite(pole) and pole >= 0):
        raise InputError(f"--pole-error-deg {pole} must be a finite number >= 0")
    terms["pole"] = {"sigma_deg": float(pole), "from": "--pole-error-deg" if pole_deg is not None
                     else defaults.get("source", "")}
    return ErrorBudget(cov, float(pole), terms, notes)


def radius_gradient(track, when_s) -> np.ndarray:
    """(2, N) gradient of the ring radius with respect to the sky offsets (f, g), km/km."""
    v = track.interp(np.atleast_1d(np.asarray(when_s, dtype=float)))
    f, g = v["sky_f"], v["sky_g"]
    p = np.arctan2(v["pole_sin"], v["pole_cos"])
    s2 = np.sin(v["star_elevation"]) ** 2
    u = f * np.cos(p) - g * np.sin(p)
    w = f * np.sin(p) + g * np.cos(p)
    r = np.hypot(u, w / np.sqrt(s2))
    return np.array([(u * np.cos(p) + w * np.sin(p) / s2) / r,
                     (-u * np.sin(p) + w * np.cos(p) / s2) / r])


def radius_sigma_km(track, budget: ErrorBudget, when_s) -> np.ndarray:
    """1-sigma of the ring radius seen at the given times (linear propagation)."""
    when = np.atleast_1d(np.asarray(when_s, dtype=float))
    grad = radius_gradient(track, when)
    sky = np.einsum("in,ij,jn->n", grad, budget.cov_fg_km2, grad)
    r = track.interp.radius(when)
    b_star = np.abs(np.sin(track.interp(when)["star_elevation"]))
    pole = r * math.radians(budget.pole_sigma_deg) * np.sqrt(1.0 - b_star**2) / np.maximum(b_star, 1e-9)
    return np.sqrt(np.maximum(sky, 0.0) + pole**2)


def crossing_time_sigma_s(track, budget: ErrorBudget, when_s) -> np.ndarray:
    """1-sigma of the time the chord crosses the radius it has at ``when_s``."""
    when = np.atleast_1d(np.asarray(when_s, dtype=float))
    speed = np.abs(track.interp.radial_velocity(when))
    with np.errstate(divide="ignore"):
        return np.where(speed > 0, radius_sigma_km(track, budget, when) / np.where(speed > 0, speed, 1.0),
                        np.inf)


def ring_model_time_sigma_s(track, region: str, side: str, when_s: float, which: str) -> float:
    """1-sigma (s) that a narrow or eccentric ring's own model adds to a crossing time.

    A ring with an orbit model (:mod:`occplan.ring_orbits`): the edge's radial uncertainty
    at the crossing's longitude (fit rms, periapse and node phase errors), over |dr/dt|;
    ``which`` is 'start' or 'end' of the pass (the outer edge starts an ingress pass), 'mid'
    (both edges in quadrature over 2) or the edge itself ('inner', 'outer').  A narrow ring
    crossed within a circular radial envelope wider than itself (no orbit model): the ring
    lies anywhere in the envelope, a uniform spread of (envelope - width) / sqrt(12) in radius.  0 for other regions."""
    reg = next((r for r in track.body.rings if r.name == region), None)
    if reg is None or not np.isfinite(when_s):
        return 0.0
    speed = abs(float(track.interp.radial_velocity(np.array([when_s]))[0]))
    if not speed > 0:
        return 0.0
    orbit = getattr(reg, "orbit", None)
    if orbit is None:
        lo, hi = getattr(reg, "edge_a_km", (reg.inner_km, reg.outer_km))
        spread = (reg.outer_km - reg.inner_km) - (hi - lo)
        return float(max(spread, 0.0) / math.sqrt(12.0) / speed)
    from .ring_orbits import edge_radius_sigma_km, star_in_ring_frame

    u = track.interp.in_plane(np.array([when_s]))[0][:, 0]
    lon = math.atan2(u[1], u[0])
    s = star_in_ring_frame(track)
    cot_b = math.hypot(s[0], s[1]) / max(abs(s[2]), 1e-9)
    if which in ("inner", "outer"):
        edges = (which,)
    elif which == "mid":
        edges = ("inner", "outer")
    else:
        outer_first = side == "ingress"
        edges = (("outer" if outer_first else "inner") if which == "start"
                 else ("inner" if outer_first else "outer"),)
    sig = [edge_radius_sigma_km(orbit, track.body, e, lon, when_s, cot_b) for e in edges]
    return float(math.sqrt(sum(x * x for x in sig) / len(sig)) / speed)


def closest_approach_sigmas(track, budget: ErrorBudget) -> dict:
    """1-sigma of the closest-approach time (s) and radius (km).

    The radius by the gradient at closest approach; the time by moving the chord +-1 sigma
    along each principal axis of the sky covariance and finding the new minimum of the ring
    radius on a dense time grid around it (central differences, added in quadrature).
    """
    t_ca = float(track.closest_approach_s)
    if not np.isfinite(track.closest_approach_radius_km) or track.closest_approach_at_edge:
        return {"time_s": float("nan"), "radius_km": float("nan")}
    r_sigma = float(radius_sigma_km(track, budget, t_ca)[0])
    vals, vecs = np.linalg.eigh(budget.cov_fg_km2)
    half = min(1800.0, 0.5 * (track.tdb_s[-1] - track.tdb_s[0]))
    t = np.clip(t_ca + np.linspace(-half, half, 4001), track.tdb_s[0], track.tdb_s[-1])
    v = track.interp(t)
    p = np.arctan2(v["pole_sin"], v["pole_cos"])
    s = np.sin(v["star_elevation"])

    def t_min(df, dg):
        f, g = v["sky_f"] + df, v["sky_g"] + dg
        u = f * np.cos(p) - g * np.sin(p)
        w = f * np.sin(p) + g * np.cos(p)
        r = np.hypot(u, w / s)
        i = int(np.argmin(r))
        if 0 < i < t.size - 1:  # parabola through the three lowest samples
            y0, y1, y2 = r[i - 1], r[i], r[i + 1]
            den = y0 - 2 * y1 + y2
            frac = 0.5 * (y0 - y2) / den if den > 0 else 0.0
            return t[i] + frac * (t[1] - t[0])
        return t[i]

    var = 0.0
    for lam, vec in zip(vals, vecs.T):
        if lam <= 0:
            continue
        d = math.sqrt(lam) * vec
        var += (0.5 * (t_min(*d) - t_min(*(-d)))) ** 2
    return {"time_s": float(math.sqrt(var)), "radius_km": r_sigma}


def reach_probability(r_ca_km: float, sigma_km: float, boundary_km: float) -> float:
    """Probability that the chord reaches inside ``boundary_km`` (Gaussian closest-approach
    radius: Phi((boundary - r_ca) / sigma))."""
    if not (np.isfinite(sigma_km) and sigma_km > 0):
        return float(r_ca_km < boundary_km)
    return float(0.5 * math.erfc(-(boundary_km - r_ca_km) / (sigma_km * math.sqrt(2.0))))


def time_precision(sigma_s: float) -> int:
    """Decimals of seconds a time with this 1-sigma supports (0 to 3): one digit finer than
    the uncertainty's leading digit, never milliseconds on a 30 s uncertainty."""
    if not np.isfinite(sigma_s) or sigma_s <= 0:
        return 3
    return int(min(3, max(0, -math.floor(math.log10(sigma_s)) + 1)))


def recording_plan(first_s: float, last_s: float, sigma_first_s: float, sigma_last_s: float,
                   telescope) -> dict:
    """When to start and stop recording, frames and data volume.

    start = first region crossing - (3 sigma + 60 s), stop = last + (3 sigma + 60 s): three
    sigma of the predicted time plus a minute of unocculted baseline on each side (common
    practice).  Frames = duration / cadence; volume = frames x frame_width_px x
    frame_height_px x bits_per_pixel / 8 (the telescope profile).
    """
    sig_a = sigma_first_s if np.isfinite(sigma_first_s) else 0.0
    sig_b = sigma_last_s if np.isfinite(sigma_last_s) else 0.0
    start = first_s - RECORDING_SIGMAS * sig_a - RECORDING_MARGIN_S
    stop = last_s + RECORDING_SIGMAS * sig_b + RECORDING_MARGIN_S
    frames = int(math.ceil((stop - start) / telescope.cadence_s))
    frame_bytes = telescope.frame_width_px * telescope.frame_height_px * telescope.bits_per_pixel / 8.0
    return {"start_s": start, "stop_s": stop, "duration_s": stop - start, "frames": frames,
            "frame_bytes": frame_bytes, "data_volume_gb": frames * frame_bytes / 1e9,
            "rule": (f"first and last region crossing -+ ({RECORDING_SIGMAS:g} sigma + "
                     f"{RECORDING_MARGIN_S:g} s of baseline); frames at the camera's cadence; "
                     "volume = frames x frame size")}


SEARCH_SIGMAS = 3.0  # find keeps stars within 3 sigma of the rings' reach


def search_margin_km(body, table, distance_km: float, when_tdb_s: float) -> tuple[float | None, str]:
    """The search margin from the error budget: 3 sigma of the planet's ephemeris position
    and of the worst star position in the catalog (its Gaia errors propagated to the epoch),
    at the planet's distance.  (None, reason) when the catalog carries no position errors:
    the caller keeps its fixed margin then."""
    errors = getattr(table, "errors", None) or {}
    if "ra_error" not in errors or "dec_error" not in errors:
        return None, "the catalog has no position errors (ra_error, dec_error)"
    from .ephemeris import J2000_TDB_JD

    dt_yr = (when_tdb_s - (np.asarray(table.epoch_jd_tt) - J2000_TDB_JD) * 86400.0) / JULIAN_YEAR_S
    var = np.nan_to_num(errors["ra_error"]) ** 2 + np.nan_to_num(errors["dec_error"]) ** 2
    for key in ("pmra_error", "pmdec_error"):
        if key in errors:
            var = var + (dt_yr * np.nan_to_num(errors[key])) ** 2
    star_km = float(np.sqrt(np.max(var))) * distance_km * MAS_RAD if var.size else 0.0
    planet_km = float(default_planet_errors(body).get("planet_sky_km") or 0.0)
    margin = SEARCH_SIGMAS * math.hypot(star_km, planet_km)
    return margin, (f"{SEARCH_SIGMAS:g} sigma of the planet's position ({planet_km:g} km) and the "
                    f"catalog's worst star position ({star_km:.3g} km at the planet)")
