"""Scores of candidate events by resonance coverage (the API behind `occplan rank`).

An event's score is a sum over the resonance zones its chord crosses, ingress and egress
counted separately (they are two radial profiles):

    score = sum_z  w_side x strength_z x resolvable_z x snr_z x usable_z

- strength_z = floor + (1 - floor) x (log10 T_z - log10 T_min) / (log10 T_max - log10 T_min):
  T_z the resonance torque, torque per unit surface density times the region's surface
  density (Goldreich & Tremaine 1979; the strength measure of :mod:`occplan.resonances`),
  normalised in log over the zones the body is checked against
  (:func:`occplan.events.select_resonances`), so that 1 is the strongest.
- resolvable_z: 1 when the zone is resolved at the site's cadence, Fresnel scale and stellar
  diameter (:mod:`occplan.coverage`); when not, ``unresolved`` plus (1 - ``unresolved``)
  times the resolved fraction of the wave train (the part near the resonance whose
  wavelength is still above twice the resolution); ``hidden`` behind the planet's disk.
- snr_z = min(1, SNR_half / reference), SNR_half the signal to noise per element of half the
  zone's shortest wavelength: the reported SNR per element scaled by sqrt(element size)
  (SNR_element = SNR_sample sqrt(N), :func:`occplan.photometry.snr_per_resolution_element`),
  so the factor measures the same scale whatever the cadence.  ``unknown`` without magnitudes.
- usable_z: observability over the zone crossing at the site (altitude, Sun), 1 or
  ``unusable``; ``unknown`` where not evaluated (geocentre).

The weights live in ``occplan/data/ranking_weights.toml`` (each with its reason).  The score
is monotonic by construction where the physics is: a faster cadence only lowers the
achievable resolution, so it can only turn zones resolvable (and, where read noise is small
against the star's photon noise, leaves SNR_half unchanged: a faster readout can be binned to
a slower one); a crossing hidden by daylight only loses its usable factor.
"""

from __future__ import annotations

import math
import sys
import tomllib
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path

import numpy as np

from .errors import DataFileError, GeometryError, InputError

WEIGHT_KEYS = {
    "strength": {"floor"},
    "resolvable": {"resolvable", "unresolved", "hidden"},
    "snr": {"reference", "unknown"},
    "usable": {"usable", "unusable", "unknown"},
    "sides": {"ingress", "egress"},
}
EVAL_PAD_S = 600.0  # the evaluation window reaches 10 min beyond the first and last ring crossing


@dataclass(frozen=True)
class Weights:
    """Ranking weights (see ``occplan/data/ranking_weights.toml``)."""

    values: dict
    sources: dict = field(default_factory=dict, compare=False, hash=False)
    path: str = ""

    def __getitem__(self, key: str) -> float:
        table, name = key.split(".")
        return float(self.values[table][name])

    def describe(self) -> dict:
        return {"path": self.path, **{t: dict(v) for t, v in self.values.items()}}


def default_weights_path() -> str:
    return str(resources.files("occplan") / "data" / "ranking_weights.toml")


def _parse_weights(text: str, where: str) -> dict:
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise DataFileError(f"weights file {where} is not valid TOML: {exc}") from None


def load_weights(path: str | Path | None = None) -> Weights:
    """The default weights, with any subset replaced by a user TOML file of the same layout."""
    base = _parse_weights((resources.files("occplan") / "data" / "ranking_weights.toml")
                          .read_text(encoding="utf-8"), "occplan/data/ranking_weights.toml")
    sources = dict(base.pop("source", {}))
    values = {t: dict(base[t]) for t in WEIGHT_KEYS}
    where = ""
    if path is not None:
        p = Path(path)
        where = str(p)
        if not p.is_file():
            raise DataFileError(f"weights file {where!r} not found")
        user = _parse_weights(p.read_text(encoding="utf-8"), repr(where))
        user.pop("source", None)
        for table, entries in user.items():
            if table not in WEIGHT_KEYS or not isinstance(entries, dict):
                raise DataFileError(f"weights file {where!r}: unknown table [{table}]; tables are "
                                    + ", ".join(f"[{t}]" for t in WEIGHT_KEYS))
            for key, value in entries.items():
                if key not in WEIGHT_KEYS[table]:
                    raise DataFileError(f"weights file {where!r}: unknown key {table}.{key}; "
                                        f"allowed: {', '.join(sorted(WEIGHT_KEYS[table]))}")
                values[table][key] = value
    for table, entries in values.items():
        for key, value in entries.items():
            if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) or value < 0:
                raise DataFileError(f"weight {table}.{key} = {value!r} must be a number >= 0")
    if not 0 <= values["strength"]["floor"] <= 1:
        raise DataFileError("weight strength.floor must be in [0, 1]")
    if values["snr"]["reference"] <= 0:
        raise DataFileError("weight snr.reference must be > 0")
    return Weights(values=values, sources=sources, path=where or default_weights_path())


# --------------------------------------------------------------------------- zone records


def torque_range_log10(resonances) -> tuple[float, float]:
    """(log10 T_min, log10 T_max) over the zones an event is checked against (dyn cm)."""
    t = np.array([r.torque_dyn_cm for r in resonances], dtype=float)
    t = t[t > 0]
    if t.size == 0:
        return (0.0, 0.0)
    return float(np.log10(t.min())), float(np.log10(t.max()))


def zone_record(z) -> dict:
    """What the score needs of one :class:`occplan.coverage.ZoneCrossing` (JSON-ready)."""
    r = z.resonance
    return {
        "label": r.label, "satellite": r.satellite, "kind": "edge" if r.edge else r.kind,
        "side": z.side, "resonance_radius_km": float(r.resonance_radius_km),
        "torque_dyn_cm": r.torque_dyn_cm, "resolvable": bool(z.resolvable),
        "behind_planet": bool(z.behind_planet),
        "snr_per_element": float(z.snr_per_element),
        "shortest_wavelength_km": float(z.feature_scale_km),
        "achievable_resolution_km": float(z.achievable_resolution_km),
        "resolved_fraction": float(z.resolved_fraction),
        "usable": z.usable,
    }


def zone_factors(rec: dict, weights: Weights, torque_log10: tuple[float, float]) -> dict:
    """Every factor of one zone crossing and its contribution (module docstring)."""
    lo, hi = torque_log10
    t = rec["torque_dyn_cm"]
    norm = 1.0 if hi <= lo else (math.log10(t) - lo) / (hi - lo) if t and t > 0 else 0.0
    floor = weights["strength.floor"]
    strength = floor + (1.0 - floor) * min(max(norm, 0.0), 1.0)
    if rec["behind_planet"]:
        resolvable = weights["resolvable.hidden"]
    elif rec["resolvable"]:
        resolvable = weights["resolvable.resolvable"]
    else:
        # partial credit for the part of the wave train that is resolved (near the
        # resonance, where the wavelength is longest: occplan.coverage.resolved_extent)
        lo_w, hi_w = weights["resolvable.unresolved"], weights["resolvable.resolvable"]
        frac = min(max(float(rec.get("resolved_fraction", 0.0) or 0.0), 0.0), 1.0)
        resolvable = lo_w + (hi_w - lo_w) * frac
    snr = rec.get("snr_per_element")
    lam = rec["shortest_wavelength_km"]
    res = rec["achievable_resolution_km"]
    if snr is None or not np.isfinite(snr):
        snr_half = float("nan")
        snr_factor = weights["snr.unknown"]
    else:
        element = max(res, lam / 2.0)
        snr_half = float(snr) * math.sqrt((lam / 2.0) / element) if element > 0 else float(snr)
        snr_factor = min(1.0, snr_half / weights["snr.reference"])
    usable = rec.get("usable")
    usable_factor = (weights["usable.unknown"] if usable is None else
                     weights["usable.usable"] if usable else weights["usable.unusable"])
    side = weights["sides.ingress"] if rec["side"] == "ingress" else weights["sides.egress"]
    return {"strength": strength, "resolvable_factor": resolvable, "snr_half_wavelength": snr_half,
            "snr_factor": snr_factor, "usable_factor": usable_factor, "side_weight": side,
            "contribution": side * strength * resolvable * snr_factor * usable_factor}


def score_zones(records: list[dict], weights: Weights, torque_log10: tuple[float, float]) -> dict:
    """An event's score, the sums of its factors, and the reasons in words."""
    out = {"score": 0.0, "score_ingress": 0.0, "score_egress": 0.0, "zones_crossed": len(records),
           "zones_resolvable": 0, "zones_hidden": 0, "zones_unusable": 0,
           "strength_sum": 0.0, "resolvable_factor_sum": 0.0, "snr_factor_sum": 0.0,
           "usable_factor_sum": 0.0, "best_zone": "", "zone_factors": []}
    best = -1.0
    for rec in records:
        f = zone_factors(rec, weights, torque_log10)
        out["zone_factors"].append({"label": rec["label"], "satellite": rec["satellite"],
                                    "kind": rec["kind"], "side": rec["side"], **f})
        out["score"] += f["contribution"]
        out["score_" + ("ingress" if rec["side"] == "ingress" else "egress")] += f["contribution"]
        out["zones_resolvable"] += bool(rec["resolvable"])
        out["zones_hidden"] += bool(rec["behind_planet"])
        out["zones_unusable"] += rec.get("usable") is False
        out["strength_sum"] += f["strength"]
        out["resolvable_factor_sum"] += f["resolvable_factor"]
        out["snr_factor_sum"] += f["snr_factor"]
        out["usable_factor_sum"] += f["usable_factor"]
        if f["contribution"] > best:
            best = f["contribution"]
            out["best_zone"] = f"{rec['satellite']} {rec['label']} {rec['kind']} ({rec['side']})"
    out["reasons"] = _reasons(out, records)
    return out


def _reasons(s: dict, records: list[dict]) -> str:
    if not records:
        return "no resonance zone on the chord"
    parts = [f"{s['zones_crossed']} zone crossings, {s['zones_resolvable']} resolvable"]
    if s["zones_hidden"]:
        parts.append(f"{s['zones_hidden']} behind the planet")
    if s["zones_unusable"]:
        parts.append(f"{s['zones_unusable']} not observable (daylight or low altitude)")
    if all(r.get("usable") is None for r in records):
        parts.append("observability not evaluated")
    if all(r.get("snr_per_element") is None or not np.isfinite(r["snr_per_element"]) for r in records):
        parts.append("SNR not evaluated (magnitude unknown, or the planet below the horizon)")
    if s["best_zone"]:
        parts.append(f"best: {s['best_zone']}")
    return "; ".join(parts)


# --------------------------------------------------------------------------- evaluation


@dataclass
class RankSettings:
    """How events are evaluated for the ranking (passed to :func:`occplan.events.evaluate_event`)."""

    telescope: object = None  # TelescopeProfile for every site (None: each site's own, or default)
    telescope_overrides: dict = field(default_factory=dict)
    max_order: int = 3
    sigma_g_cm2: float | None = None
    min_snr: float = 3.0
    luminosity_class: str = "auto"
    step_s: float = 10.0


def _telescope_for(site, settings: RankSettings):
    from .telescope import load_telescope, with_overrides

    if settings.telescope is not None:
        return with_overrides(settings.telescope, **settings.telescope_overrides)
    path = getattr(site, "telescope", None) if site is not None else None
    return load_telescope(path, **settings.telescope_overrides)


def evaluate_and_score(body, star, observer, window_s, *, site=None, kernels=None,
                       corrections=None, settings: RankSettings = RankSettings(),
                       weights: Weights | None = None):
    """Zones on one event's chord (:func:`occplan.events.evaluate_event`) and its score.

    Returns (zone records, score dict, telescope name).
    """
    from .events import evaluate_event, select_resonances
    from .geometry import Corrections

    corrections = corrections or Corrections()
    weights = weights or load_weights()
    tel = _telescope_for(site, settings)
    rep = evaluate_event(body, star, observer, window_s, telescope=tel, kernels=kernels,
                         deflection=corrections.deflection,
                         barycentre_only=corrections.barycentre_only, step_s=settings.step_s,
                         max_order=settings.max_order, sigma_g_cm2=settings.sigma_g_cm2,
                         min_snr=settings.min_snr, luminosity_class=settings.luminosity_class,
                         min_altitude_deg=getattr(site, "min_altitude_deg", None))
    records = [zone_record(z) for z in rep.zones]
    trange = torque_range_log10(select_resonances(body, settings.max_order,
                                                  sigma_g_cm2=settings.sigma_g_cm2))
    return records, score_zones(records, weights, trange), tel.name


def evaluation_window(ev) -> tuple[float, float]:
    """Ring crossings of an event +-10 min, inside the observer's track window."""
    a = max(ev.crossing_start_s - EVAL_PAD_S, ev.window_s[0])
    b = min(ev.crossing_end_s + EVAL_PAD_S, ev.window_s[1])
    return float(a), float(b)


def score_events(result, *, kernels=None, corrections=None, settings: RankSettings = RankSettings(),
                 weights: Weights | None = None, progress=None) -> None:
    """Evaluate and score every event of a :class:`occplan.search.SearchResult` in place.

    Each event gets ``zones`` (records) and ``score`` (factors, sums, reasons); the result's
    meta gets the weights and the torque normalisation.
    """
    from .events import select_resonances
    from .search import _progress

    weights = weights or load_weights()
    bar = _progress(len(result.events), "evaluating events", progress)
    try:
        for ev in result.events:
            if not ev.crosses_rings:
                ev.zones, ev.score = [], score_zones([], weights, (0.0, 0.0))
                ev.score["telescope"] = ""
            else:
                try:
                    records, score, tel = evaluate_and_score(
                        result.body, ev.candidate.star, ev.observer, evaluation_window(ev),
                        site=ev.site, kernels=kernels, corrections=corrections,
                        settings=settings, weights=weights)
                except GeometryError as exc:
                    records, score, tel = [], score_zones([], weights, (0.0, 0.0)), ""
                    score["reasons"] = str(exc)
                ev.zones, ev.score = records, score
                ev.score["telescope"] = tel
            if bar is not None:
                bar.advance(bar.task)
    finally:
        if bar is not None:
            bar.stop()
    trange = torque_range_log10(select_resonances(result.body, settings.max_order,
                                                  sigma_g_cm2=settings.sigma_g_cm2))
    result.meta["ranking"] = ranking_meta(weights, trange, settings)


def ranking_meta(weights: Weights, trange, settings: RankSettings) -> dict:
    return {"weights": weights.describe(), "torque_range_log10_dyn_cm": list(trange),
            "max_order": settings.max_order, "min_snr": settings.min_snr,
            "formula": "score = sum over zone crossings of side_weight x strength x "
                       "resolvable_factor x snr_factor x usable_factor (occplan.ranking)"}


SCORE_FIELDS = ("score", "score_ingress", "score_egress", "zones_crossed", "zones_resolvable",
                "zones_hidden", "zones_unusable", "strength_sum", "resolvable_factor_sum",
                "snr_factor_sum", "usable_factor_sum", "best_zone", "reasons", "telescope")


def event_rows(result) -> list[dict]:
    """find/rank rows: the event fields, the score and its factors, the zone records."""
    rows = result.rows()
    for row, ev in zip(rows, result.events):
        if ev.score is not None:
            for key in SCORE_FIELDS:
                row[key] = ev.score.get(key)
            row["zone_factors"] = ev.score.get("zone_factors", [])
            row["zones"] = ev.zones
    return rows


def rescore_rows(rows: list[dict], meta: dict, weights: Weights) -> list[dict]:
    """Rescore find rows (which carry their zone records) with other weights."""
    trange = tuple(meta.get("ranking", {}).get("torque_range_log10_dyn_cm", (0.0, 0.0)))
    out = []
    for row in rows:
        zones = row.get("zones")
        if zones is None:
            raise InputError("the find result has no zone records (it was written with "
                             "--no-zones); run occplan rank with the search options instead")
        s = score_zones(zones, weights, trange)
        new = dict(row)
        for key in SCORE_FIELDS:
            if key in s:
                new[key] = s[key]
        new["zone_factors"] = s["zone_factors"]
        out.append(new)
    return out


def rank_rows(rows: list[dict]) -> list[dict]:
    """Rows sorted by score (highest first; ties by time), with a 1-based ``rank``."""
    ordered = sorted(rows, key=lambda r: (-(r.get("score") or 0.0), r.get("closest_approach_utc") or ""))
    for i, r in enumerate(ordered):
        r["rank"] = i + 1
    return ordered


def read_find_result(path: str | Path) -> tuple[list[dict], dict]:
    """Rows and meta of a find result written as JSON or ECSV by `occplan find`."""
    import json

    p = Path(path)
    if not p.is_file():
        raise DataFileError(f"find result {str(p)!r} not found")
    if p.suffix.lower() == ".json":
        try:
            data = json.loads(p.read_text(encoding="utf-8"))
        except json.JSONDecodeError as exc:
            raise DataFileError(f"find result {str(p)!r} is not valid JSON: {exc}") from None
        if not isinstance(data, dict) or "rows" not in data or "meta" not in data:
            raise DataFileError(f"find result {str(p)!r} is not an occplan find JSON "
                                "(an object with 'meta' and 'rows')")
        rows, meta = data["rows"], data["meta"]
    elif p.suffix.lower() == ".ecsv":
        from astropy.table import Table

        try:
            table = Table.read(str(p), format="ascii.ecsv")
        except Exception as exc:
            raise DataFileError(f"find result {str(p)!r} cannot be read as ECSV ({exc})") from None
        meta = dict(table.meta)
        rows = []
        for rec in table:
            row = {}
            for c in table.colnames:
                v = rec[c]
                if isinstance(v, (np.floating, float)):
                    v = None if not np.isfinite(v) else float(v)
                elif isinstance(v, np.integer):
                    v = int(v)
                elif isinstance(v, np.bool_):
                    v = bool(v)
                elif isinstance(v, (str, np.str_)):
                    v = str(v)
                    if c in ("zones", "zone_factors"):
                        v = json.loads(v)
                row[c] = v
            rows.append(row)
    else:
        raise DataFileError(f"find result {str(p)!r}: give the .json or .ecsv written by occplan find")
    if meta.get("body") is None or any("star_id" not in r for r in rows):
        raise DataFileError(f"{str(p)!r} is not an occplan find result (no body or star_id)")
    return rows, meta


def print_note(text: str) -> None:
    """A log line on stderr (never on stdout, which carries the table)."""
    print(text, file=sys.stderr)


def reevaluate_rows(rows: list[dict], meta: dict, *, settings: RankSettings = RankSettings(),
                    weights: Weights | None = None, kernels=None, progress=None) -> list[dict]:
    """Evaluate the events of find rows again (another telescope, cadence or band)."""
    from .bodies import get_body
    from .catalogs import Site
    from .ephemeris import Observer, StarSpec, parse_utc, tdb_s_of
    from .geometry import Corrections
    from .search import _progress

    weights = weights or load_weights()
    body_file = str(meta.get("body_file") or "")
    # built-in bodies are named by their package path; a user body file by its own path
    body = get_body(meta["body"] if not body_file or body_file.startswith("occplan/") else body_file)
    corr = meta.get("corrections", {})
    corrections = Corrections(deflection=bool(corr.get("planet_deflection", True)),
                              barycentre_only=bool(corr.get("barycentre_only", False)))
    observers = {o["name"]: o for o in meta.get("observers", [])}
    out = []
    bar = _progress(len(rows), "evaluating events", progress)
    try:
        for row in rows:
            o = observers.get(row["site"])
            if o is None:
                raise DataFileError(f"find result: site {row['site']!r} is not in its meta observers")
            if o["kind"] == "site":
                site = Site(o["name"], o["lat_deg"], o["lon_deg"], o.get("height_m", 0.0),
                            o.get("telescope"), o.get("min_altitude_deg"))
                observer = site.observer()
            else:
                site, observer = None, Observer.geocentre()
            star = StarSpec(ra_deg=row["star_ra_deg"], dec_deg=row["star_dec_deg"],
                            pm_ra_mas_yr=row["star_pm_ra_mas_yr"], pm_dec_mas_yr=row["star_pm_dec_mas_yr"],
                            parallax_mas=row["star_parallax_mas"], rv_km_s=row["star_rv_km_s"],
                            epoch_jd_tt=row["star_epoch_jd_tt"], name=str(row["star_id"]),
                            vmag=row.get("vmag"), kmag=row.get("kmag"))
            new = dict(row)
            if row.get("crossing_start_utc"):
                a = tdb_s_of(parse_utc(row["crossing_start_utc"])) - EVAL_PAD_S
                b = tdb_s_of(parse_utc(row["crossing_end_utc"])) + EVAL_PAD_S
                records, score, tel = evaluate_and_score(body, star, observer, (a, b), site=site,
                                                         kernels=kernels, corrections=corrections,
                                                         settings=settings, weights=weights)
            else:
                records, score, tel = [], score_zones([], weights, (0.0, 0.0)), ""
            for key in SCORE_FIELDS:
                if key in score:
                    new[key] = score[key]
            new["telescope"] = tel
            new["zone_factors"], new["zones"] = score["zone_factors"], records
            out.append(new)
            if bar is not None:
                bar.advance(bar.task)
    finally:
        if bar is not None:
            bar.stop()
    from .events import select_resonances

    meta["ranking"] = ranking_meta(weights, torque_range_log10(select_resonances(
        body, settings.max_order, sigma_g_cm2=settings.sigma_g_cm2)), settings)
    return out
