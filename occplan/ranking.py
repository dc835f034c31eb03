"""Scores of candidate events by the ring features they resolve (the API behind `occplan rank`).

An event's score is a sum over the features its chord records (:mod:`occplan.features`),
each counted once however many resonance terms it merges:

    score = sum_f  [ v_f,1 + d_12 v_f,2 ],     v = side x weight x resolved x q_snr x usable

where v_f,1 >= v_f,2 are the values of the feature's crossings on the two sides of the chord
(ingress and egress, two radial profiles at two ring longitudes) and

- weight = min(1, A) x kind: A the feature's observable amplitude (peak fractional
  surface-density amplitude of a wave, 1 for an edge or a narrow ring; a nonlinear wave
  saturates at 1), ``kind`` a per-kind factor (corotation zones 0: linear theory predicts no
  profile);
- resolved = the resolved fraction of the feature (0 behind the planet): the part of a wave
  train whose wavelength stays above twice the achievable resolution and N samples, or 1/0
  for an edge, a narrow ring or an overlap region (:mod:`occplan.coverage`); for an edge or
  a narrow ring crossed whole but not resolved, the larger of that and the location credit
  ``location.credit / (1 + (sigma_r / location.reference_km)^2)``, sigma_r = element / SNR
  the precision of its radius (:func:`location_factor`).  No other credit floor: an
  unresolved wave earns nothing;
- q_snr = SNR^2 / (SNR^2 + reference^2), SNR the feature's own signal per resolution
  element through the ring's slant transmission (:func:`occplan.photometry.feature_snr`):
  grows with every photon and saturates at 1, so a brighter star or a larger telescope
  always helps until the feature is measured; ``snr.unknown`` where it cannot be evaluated
  (no magnitude in the band, or no reflectance for the background);
- usable = 1 when observable over the crossing at the site, 0 when not (daylight, low
  altitude).  Crossings whose observability was not evaluated (geocentre, spacecraft) are
  left out of ``score`` and summed in ``potential_score`` instead: the rank orders known
  observable events by ``score`` first, then the unknown ones by their potential;
- d_12 = diversity x (1 - cos(lambda_1 - lambda_2)) / 2: the second crossing of the same
  feature adds in proportion to how far apart in ring longitude it samples it (1 at
  opposite ansae, 0 at the same longitude), so both ansae are rewarded and repeated
  crossings saturate.

The weights live in ``occplan/data/ranking_weights.toml`` (each with its reason).
Monotonic by construction: a faster cadence only lowers the achievable resolution (more of
each feature resolved); a brighter star or a larger aperture only raises every SNR
(q_snr strictly increases while SNR is finite); a crossing hidden by daylight only loses its
usable factor; duplicating a resonance term changes no feature.

Worked example (the numbers of tests/test_ranking.py): an edge (weight 1) crossed on both
sides, resolved, SNR 10 and 5 with reference 5, 150 deg apart in longitude:
v1 = 100/125 = 0.8, v2 = 25/50 = 0.5, d = (1 - cos 150 deg)/2 = 0.933: 0.8 + 0.467 = 1.267.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path

import numpy as np

from .errors import DataFileError, GeometryError, InputError

WEIGHT_KEYS = {
    "kinds": {"density_wave", "bending_wave", "edge", "narrow_ring", "overlap_region"},
    "snr": {"reference", "unknown"},
    "usable": {"usable", "unusable"},
    "sides": {"ingress", "egress"},
    "diversity": {"second_crossing"},
    "location": {"credit", "reference_km"},
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

    def kind(self, feature: str) -> float:
        key = feature.replace(" ", "_")
        return float(self.values["kinds"].get(key, 0.0))

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
        from .schema import input_text

        user = _parse_weights(input_text(p, "weights"), repr(where))
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
    if values["snr"]["reference"] <= 0:
        raise DataFileError("weight snr.reference must be > 0")
    if values["snr"]["unknown"] > 1 or values["diversity"]["second_crossing"] > 1 \
            or values["location"]["credit"] > 1:
        raise DataFileError("weights snr.unknown, diversity.second_crossing and location.credit "
                            "must be <= 1")
    return Weights(values=values, sources=sources, path=where or default_weights_path())


# --------------------------------------------------------------------------- crossing records


def zone_record(z) -> dict:
    """What the score needs of one :class:`occplan.coverage.ZoneCrossing` (JSON-ready)."""
    f = z.feature
    return {
        "name": f.name, "feature": f.feature, "label": f.label, "satellite": f.satellite,
        "kind": f.kind, "side": z.side, "resonance_radius_km": float(f.resonance_radius_km),
        "weight": float(f.weight), "amplitude": float(f.amplitude),
        "torque_dyn_cm": float(f.torque_dyn_cm), "resolvable": bool(z.resolvable),
        "behind_planet": bool(z.behind_planet),
        "snr_per_element": float(z.snr_per_element),
        "transmission": float(z.transmission),
        "feature_scale_km": float(z.feature_scale_km),
        "achievable_resolution_km": float(z.achievable_resolution_km),
        "resolved_fraction": float(z.resolved_fraction),
        "location_sigma_km": float(z.location_sigma_km),
        "partial": bool(z.partial),
        "ring_longitude_deg": float(z.ring_longitude_deg),
        "usable": z.usable,
    }


def _number(rec: dict, key: str, where: str = "zone record") -> float:
    v = rec.get(key)
    if v is None:
        return float("nan")
    if isinstance(v, bool) or not isinstance(v, (int, float)):
        raise DataFileError(f"{where}: field {key!r} = {v!r} must be a number")
    return float(v)


def zone_factors(rec: dict, weights: Weights) -> dict:
    """Every factor of one feature crossing and its value v (module docstring)."""
    weight = _number(rec, "weight")
    weight = 0.0 if not np.isfinite(weight) else min(max(weight, 0.0), 1.0)
    kind = weights.kind(str(rec.get("feature", "")))
    located = 0.0
    if rec.get("behind_planet"):
        resolved = 0.0
    else:
        frac = _number(rec, "resolved_fraction")
        resolved = min(max(frac, 0.0), 1.0) if np.isfinite(frac) else 0.0
        located = location_factor(rec, weights)
        resolved = max(resolved, located)
    snr = _number(rec, "snr_per_element")
    ref = weights["snr.reference"]
    if np.isfinite(snr) and snr >= 0:
        q_snr = snr * snr / (snr * snr + ref * ref)
    elif snr == float("inf"):
        q_snr = 1.0
    else:
        q_snr = weights["snr.unknown"]
    usable = rec.get("usable")
    usable_factor = (float("nan") if usable is None else
                     weights["usable.usable"] if usable else weights["usable.unusable"])
    side = weights["sides.ingress"] if rec.get("side") == "ingress" else weights["sides.egress"]
    value_if_usable = side * weight * kind * resolved * q_snr
    return {"weight": weight, "kind_factor": kind, "resolved_factor": resolved,
            "location_factor": located,
            "snr_factor": q_snr, "usable_factor": usable_factor, "side_weight": side,
            "value_if_observable": value_if_usable,
            "value": 0.0 if usable is None else value_if_usable * usable_factor}


LOCATED_FEATURES = ("edge", "narrow ring")


def location_factor(rec: dict, weights: Weights) -> float:
    """Credit of an edge or a narrow ring whose profile is not resolved but whose radius the
    chord locates: credit / (1 + (sigma_r / reference)^2), sigma_r = element / SNR
    (``location_sigma_km``; one resolution element when the SNR is unknown).  0 for other
    features, for a crossing that covers only part of the feature, or behind the planet."""
    if rec.get("feature") not in LOCATED_FEATURES or rec.get("partial") or rec.get("behind_planet"):
        return 0.0
    sigma = _number(rec, "location_sigma_km")
    if not (np.isfinite(sigma) and sigma >= 0):
        sigma = _number(rec, "achievable_resolution_km")
    if not (np.isfinite(sigma) and sigma >= 0):
        return 0.0
    ref = weights["location.reference_km"]
    return weights["location.credit"] / (1.0 + (sigma / ref) ** 2) if ref > 0 else 0.0


def _feature_value(crossings: list[tuple[float, float]], diversity: float) -> float:
    """v1 + sum_i d_i v_i over the crossings (value, longitude) sorted by value; d_i is the
    smallest longitude diversity (1 - cos dlon)/2 to any better crossing."""
    ordered = sorted(crossings, key=lambda c: -c[0])
    total = 0.0
    for i, (v, lon) in enumerate(ordered):
        if i == 0:
            total += v
            continue
        d = min((1.0 - math.cos(math.radians(lon - ordered[j][1]))) / 2.0 for j in range(i))
        total += diversity * d * v
    return total


def score_zones(records: list[dict], weights: Weights) -> dict:
    """An event's score, its factors, the features that decide it and the reasons in words."""
    per_feature: dict = {}
    factors = []
    out = {"score": 0.0, "potential_score": 0.0, "score_ingress": 0.0, "score_egress": 0.0,
           "features_crossed": 0, "feature_crossings": len(records), "features_resolvable": 0,
           "features_both_sides": 0, "crossings_hidden": 0, "crossings_unusable": 0,
           "observability": "unknown", "best_feature": "", "deciding_features": "",
           "zone_factors": factors}
    for rec in records:
        if not isinstance(rec, dict):
            raise DataFileError(f"zone record {rec!r} is not an object")
        f = zone_factors(rec, weights)
        lon = _number(rec, "ring_longitude_deg")
        lon = 0.0 if not np.isfinite(lon) else lon
        factors.append({"name": rec.get("name", ""), "feature": rec.get("feature", ""),
                        "side": rec.get("side", ""), **f})
        entry = per_feature.setdefault(str(rec.get("name", "")), {"known": [], "potential": [],
                                                                   "sides": set(), "resolvable": False})
        usable = rec.get("usable")
        if usable is not False:
            entry["potential"].append((f["value_if_observable"], lon))
        if usable is True:
            entry["known"].append((f["value"], lon))
            key = "score_ingress" if rec.get("side") == "ingress" else "score_egress"
            out[key] += f["value"]
        if f["value_if_observable"] > 0 and usable is not False:
            entry["sides"].add(rec.get("side"))
        entry["resolvable"] |= bool(rec.get("resolvable"))
        out["crossings_hidden"] += bool(rec.get("behind_planet"))
        out["crossings_unusable"] += usable is False
    diversity = weights["diversity.second_crossing"]
    values = {}
    for name, e in per_feature.items():
        values[name] = (_feature_value(e["known"], diversity), _feature_value(e["potential"], diversity))
        out["score"] += values[name][0]
        out["potential_score"] += values[name][1]
        out["features_resolvable"] += e["resolvable"]
        out["features_both_sides"] += len(e["sides"]) == 2
    out["features_crossed"] = len(per_feature)
    usables = [r.get("usable") for r in records]
    if any(u is True for u in usables):
        out["observability"] = "observable" if all(u is not None for u in usables) else "partly evaluated"
    elif usables and all(u is False for u in usables):
        out["observability"] = "not observable"
    elif any(u is False for u in usables):
        out["observability"] = "not observable" if not any(u is None for u in usables) else "unknown"
    col = 1 if out["observability"] == "unknown" else 0
    top = sorted(values.items(), key=lambda kv: -kv[1][col])
    top = [(n, v[col]) for n, v in top if v[col] > 0]
    if top:
        out["best_feature"] = top[0][0]
        out["deciding_features"] = "; ".join(
            f"{n} ({v:.2f}{', both sides' if len(per_feature[n]['sides']) == 2 else ''})"
            for n, v in top[:3])
    out["reasons"] = _reasons(out, records)
    return out


def _reasons(s: dict, records: list[dict]) -> str:
    if not records:
        return "no ring feature on the chord"
    parts = [f"{s['features_crossed']} features crossed ({s['feature_crossings']} crossings), "
             f"{s['features_resolvable']} resolvable, {s['features_both_sides']} on both sides"]
    if s["crossings_hidden"]:
        parts.append(f"{s['crossings_hidden']} crossings behind the planet")
    if s["crossings_unusable"]:
        parts.append(f"{s['crossings_unusable']} not observable (daylight or low altitude)")
    if s["observability"] == "unknown":
        parts.append(f"observability not evaluated (no site): score 0, potential "
                     f"{s['potential_score']:.2f} if observable")
    if all(r.get("snr_per_element") is None or not np.isfinite(r["snr_per_element"]) for r in records):
        parts.append("SNR not evaluated (magnitude or background unknown, or the planet below "
                     "the horizon): counted at the 'unknown' SNR factor")
    if s["deciding_features"]:
        parts.append(f"deciding: {s['deciding_features']}")
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
    """Features on one event's chord (:func:`occplan.events.evaluate_event`) and its score.

    Returns (crossing records, score dict, telescope name).
    """
    from .events import evaluate_event
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
    # corotation zones (weight 0) are listed in the event report but never score
    records = [zone_record(z) for z in rep.zones if z.feature.weight > 0]
    return records, score_zones(records, weights), tel.name


def evaluation_window(ev) -> tuple[float, float]:
    """Ring crossings of an event +-10 min, inside the observer's track window."""
    a = max(ev.crossing_start_s - EVAL_PAD_S, ev.window_s[0])
    b = min(ev.crossing_end_s + EVAL_PAD_S, ev.window_s[1])
    return float(a), float(b)


def score_events(result, *, kernels=None, corrections=None, settings: RankSettings = RankSettings(),
                 weights: Weights | None = None, progress=None, jobs: int = 1) -> None:
    """Evaluate and score every event of a :class:`occplan.search.SearchResult` in place.

    Each event gets ``zones`` (crossing records) and ``score`` (factors, sums, reasons); the
    result's meta gets the weights.  ``jobs`` processes share the events
    (:func:`occplan.parallel.map_indexed`; 0: one per core); the results do not depend on it.
    """
    from .parallel import map_indexed

    weights = weights or load_weights()
    events = result.events

    def one(i):
        ev = events[i]
        if not ev.crosses_rings:
            score = score_zones([], weights)
            score["telescope"] = ""
            return [], score
        try:
            records, score, tel = evaluate_and_score(
                result.body, ev.candidate.star, ev.observer, evaluation_window(ev),
                site=ev.site, kernels=kernels, corrections=corrections,
                settings=settings, weights=weights)
        except GeometryError as exc:
            records, score, tel = [], score_zones([], weights), ""
            score["reasons"] = str(exc)
        score["telescope"] = tel
        return records, score

    done = map_indexed(one, len(events), jobs, progress, "evaluating events")
    for ev, (records, score) in zip(events, done):
        ev.zones, ev.score = records, score
    result.meta["ranking"] = ranking_meta(weights, settings)


SCORE_FORMULA = ("score = sum over features of v1 + d v2 (the feature's two crossings, d = "
                 "(1 - cos dlon)/2), v = side x min(1, amplitude) x kind x resolved_fraction x "
                 "SNR^2/(SNR^2 + ref^2) x usable; crossings of unknown observability go to "
                 "potential_score (occplan.ranking)")


def ranking_meta(weights: Weights, settings: RankSettings) -> dict:
    from .features import load_settings

    return {"weights": weights.describe(), "features": load_settings().describe(),
            "max_order": settings.max_order, "min_snr": settings.min_snr,
            "formula": SCORE_FORMULA}


SCORE_FIELDS = ("score", "potential_score", "observability", "score_ingress", "score_egress",
                "features_crossed", "feature_crossings", "features_resolvable",
                "features_both_sides", "crossings_hidden", "crossings_unusable", "best_feature",
                "deciding_features", "reasons", "telescope")


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
    """Rescore find rows (which carry their crossing records) with other weights."""
    out = []
    for row in rows:
        zones = row.get("zones")
        if zones is not None and not isinstance(zones, list):
            raise DataFileError(f"find result row {row.get('star_id')!r}: 'zones' must be a list")
        if zones is None:
            raise InputError("the find result has no zone records (it was written with "
                             "--no-zones); run occplan rank with the search options instead")
        s = score_zones(zones, weights)
        new = dict(row)
        for key in SCORE_FIELDS:
            if key in s:
                new[key] = s[key]
        new["zone_factors"] = s["zone_factors"]
        out.append(new)
    return out


def rank_rows(rows: list[dict]) -> list[dict]:
    """Rows sorted by score (highest first), then by potential score (events whose
    observability is unknown: geocentre, spacecraft), then by time; with a 1-based ``rank``."""
    ordered = sorted(rows, key=lambda r: (-(r.get("score") or 0.0), -(r.get("potential_score") or 0.0),
                                          r.get("closest_approach_utc") or ""))
    for i, r in enumerate(ordered):
        r["rank"] = i + 1
    return ordered


def _json_object(row: dict, key: str) -> dict:
    """A find row's object field (JSON rows hold it as an object, CSV as JSON text)."""
    import json

    v = row.get(key)
    if v is None or v == "":
        return {}
    if isinstance(v, str):
        try:
            v = json.loads(v)
        except json.JSONDecodeError:
            raise DataFileError(f"find result row {row.get('star_id')!r}: {key!r} is not valid "
                                "JSON") from None
    if not isinstance(v, dict):
        raise DataFileError(f"find result row {row.get('star_id')!r}: {key!r} must be an object")
    return v


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
        import csv

        from astropy.table import Table
        from astropy.time import Time

        # the crossing records of an event are one JSON cell, often longer than the csv
        # module's default field limit of 128 kB
        csv.field_size_limit(2**31 - 1)
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
                if isinstance(table[c], Time):  # UTC Time columns back to ISO 8601 with Z
                    v = None if np.ma.is_masked(v) or getattr(v, "mask", False) else v.isot + "Z"
                elif isinstance(v, (np.floating, float)):
                    v = None if not np.isfinite(v) else float(v)
                elif isinstance(v, np.integer):
                    v = int(v)
                elif isinstance(v, np.bool_):
                    v = bool(v)
                elif isinstance(v, (str, np.str_)):
                    v = str(v)
                    if c in ("zones", "zone_factors", "star_extra", "star_errors"):
                        try:
                            v = json.loads(v)
                        except json.JSONDecodeError:
                            raise DataFileError(f"find result {str(p)!r}: column {c!r} is not "
                                                "valid JSON (was the file edited?)") from None
                row[c] = v
            rows.append(row)
    else:
        raise DataFileError(f"find result {str(p)!r}: give the .json or .ecsv written by occplan find")
    if meta.get("body") is None or any("star_id" not in r for r in rows):
        raise DataFileError(f"{str(p)!r} is not an occplan find result (no body or star_id)")
    return rows, meta


def print_note(text: str) -> None:
    """A note on stderr through occplan's logger (never on stdout, which carries the table)."""
    from .log import note

    note(text)


def reevaluate_rows(rows: list[dict], meta: dict, *, settings: RankSettings = RankSettings(),
                    weights: Weights | None = None, kernels=None, progress=None,
                    jobs: int = 1) -> list[dict]:
    """Evaluate the events of find rows again (another telescope, cadence or band); ``jobs``
    processes share them (:func:`occplan.parallel.map_indexed`)."""
    from .bodies import get_body
    from .catalogs import Site
    from .ephemeris import Observer, StarSpec, parse_utc, tdb_s_of
    from .geometry import Corrections
    from .parallel import map_indexed

    weights = weights or load_weights()
    body_file = str(meta.get("body_file") or "")
    # built-in bodies are named by their package path; a user body file by its own path
    body = get_body(meta["body"] if not body_file or body_file.startswith("occplan/") else body_file)
    corr = meta.get("corrections", {})
    corrections = Corrections(deflection=bool(corr.get("planet_deflection", True)),
                              barycentre_only=bool(corr.get("barycentre_only", False)))
    observers = {o["name"]: o for o in meta.get("observers", [])}
    for row in rows:  # every site known before any work
        if row["site"] not in observers:
            raise DataFileError(f"find result: site {row['site']!r} is not in its meta observers")

    def one(i):
        row = rows[i]
        o = observers[row["site"]]
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
                        vmag=row.get("vmag"), kmag=row.get("kmag"),
                        extra=_json_object(row, "star_extra"),
                        errors=_json_object(row, "star_errors"))
        new = dict(row)
        if row.get("crossing_start_utc"):
            a = tdb_s_of(parse_utc(row["crossing_start_utc"])) - EVAL_PAD_S
            b = tdb_s_of(parse_utc(row["crossing_end_utc"])) + EVAL_PAD_S
            records, score, tel = evaluate_and_score(body, star, observer, (a, b), site=site,
                                                     kernels=kernels, corrections=corrections,
                                                     settings=settings, weights=weights)
        else:
            records, score, tel = [], score_zones([], weights), ""
        for key in SCORE_FIELDS:
            if key in score:
                new[key] = score[key]
        new["telescope"] = tel
        new["zone_factors"], new["zones"] = score["zone_factors"], records
        return new

    out = map_indexed(one, len(rows), jobs, progress, "evaluating events")
    meta["ranking"] = ranking_meta(weights, settings)
    return out
