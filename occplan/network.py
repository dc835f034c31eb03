"""One event seen from a network of stations: combined coverage and the stations to ask for.

Each station's chord crosses the rings at its own ring longitudes and radial speeds.  For a
set of stations the features are scored once each, over all the stations' crossings
together, with the same rule as one chord's two sides (:mod:`occplan.ranking`): the best
crossing counts in full and every further crossing adds in proportion to how far apart in
ring longitude it samples the feature, (1 - cos dlon)/2, relative to the crossings already
counted.  So a second station on the same ansa at the same longitude adds little; one that
samples the feature at another longitude adds much; repeated crossings saturate.

:func:`choose_stations` picks k stations greedily by that combined score, reporting each
one's marginal gain (what it adds to the stations already chosen), so a team can justify
each request.  Greedy selection of a monotone submodular objective is within a factor
1 - 1/e of the best set (Nemhauser, Wolsey & Fisher 1978); the diversity rule makes the
feature value submodular in the crossings (each extra crossing's discount only grows as the
set grows).

Weather: with each station clear independently with probability p (``--clear-sky``, a
planning assumption), :func:`expected_score` values a set of stations by its expected
combined score, which credits redundancy: a second station on the same chord is worth the
events it saves from cloud.  :func:`season_stations` chooses stations for a whole season of
events (a find result) by the same rules.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .ranking import RankSettings, Weights, _feature_value, evaluate_and_score, load_weights


@dataclass
class StationResult:
    """One station's evaluation of the event."""

    name: str
    records: list  # crossing records (occplan.ranking.zone_record)
    score: dict  # its own score (occplan.ranking.score_zones)
    telescope: str
    error: str = ""


@dataclass
class NetworkResult:
    stations: list  # StationResult
    weights: Weights
    selection: list = field(default_factory=list)  # [(station, marginal gain, total)]

    def combined_score(self, names) -> float:
        return combined_score([s for s in self.stations if s.name in set(names)], self.weights)

    def feature_rows(self) -> list[dict]:
        """Per feature: which stations cross it, at which longitudes, how well."""
        rows: dict = {}
        for st in self.stations:
            for rec in st.records:
                row = rows.setdefault(rec["name"], {
                    "feature": rec["name"], "kind": rec.get("feature", ""),
                    "radius_km": rec["resonance_radius_km"], "stations": [],
                    "crossings": 0, "resolvable_crossings": 0, "longitudes_deg": [],
                    "best_resolution_km": math.inf})
                row["crossings"] += 1
                row["resolvable_crossings"] += bool(rec.get("resolvable"))
                if st.name not in row["stations"]:
                    row["stations"].append(st.name)
                row["longitudes_deg"].append(round(float(rec.get("ring_longitude_deg", 0.0)), 1))
                row["best_resolution_km"] = min(row["best_resolution_km"],
                                                float(rec.get("achievable_resolution_km", math.inf)))
        out = sorted(rows.values(), key=lambda r: r["radius_km"])
        for r in out:
            lon = np.radians(r["longitudes_deg"])
            # the spread of sampled longitudes: 1 - |mean resultant vector| (0: one longitude)
            r["longitude_spread"] = float(1.0 - np.hypot(np.mean(np.cos(lon)), np.mean(np.sin(lon))))
            r["stations"] = ", ".join(r["stations"])
            r["longitudes_deg"] = ", ".join(f"{x:.1f}" for x in r["longitudes_deg"])
        return out


def combined_score(stations, weights: Weights) -> float:
    """Score of a set of stations: each feature once, over all their observable crossings
    (module docstring)."""
    per_feature: dict = {}
    from .ranking import zone_factors

    for st in stations:
        for rec in st.records:
            if rec.get("usable") is False:
                continue
            f = zone_factors(rec, weights)
            lon = float(rec.get("ring_longitude_deg") or 0.0)
            per_feature.setdefault(rec["name"], []).append((f["value_if_observable"], lon))
    div = weights["diversity.second_crossing"]
    return float(sum(_feature_value(c, div) for c in per_feature.values()))


def evaluate_network(body, star, sites, window_s, *, kernels=None, corrections=None,
                     settings: RankSettings = RankSettings(), weights: Weights | None = None,
                     progress=None, jobs: int = 1) -> NetworkResult:
    """Evaluate one event (star, window) from every site of a sites list (``jobs`` processes
    share the sites: :func:`occplan.parallel.map_indexed`)."""
    from .errors import GeometryError
    from .parallel import map_indexed

    weights = weights or load_weights()
    sites = list(sites)

    def one(i):
        site = sites[i]
        try:
            records, score, tel = evaluate_and_score(body, star, site.observer(), window_s,
                                                     site=site, kernels=kernels,
                                                     corrections=corrections, settings=settings,
                                                     weights=weights)
            return StationResult(site.name, records, score, tel)
        except GeometryError as exc:
            return StationResult(site.name, [], {"score": 0.0}, "", error=str(exc))

    out = map_indexed(one, len(sites), jobs, min_items_per_job=2)
    if progress:
        for st in out:
            progress(st.name)
    return NetworkResult(out, weights)


def choose_stations(result: NetworkResult, k: int,
                    clear_sky: float = 1.0) -> list[tuple[str, float, float]]:
    """Greedy choice of k stations by the (expected, :func:`expected_score`) combined score:
    [(name, marginal gain, total)]."""
    by_name = {s.name: s for s in result.stations if s.records}
    chosen = greedy_choice(list(by_name), k, lambda names: expected_score(
        [by_name[n] for n in names], result.weights, clear_sky))
    result.selection = chosen
    return chosen


def expected_score(stations, weights: Weights, clear_sky: float = 1.0) -> float:
    """The combined score a set of stations can expect when each is clear independently with
    probability ``clear_sky`` (a planning assumption, not a forecast):

        E[F] = sum over subsets T of S of  p^|T| (1 - p)^(|S| - |T|) F(T)

    with F the combined score (:func:`combined_score`).  At p = 1 it is F(S).  A second
    station on nearly the same chord, which F alone values at almost nothing, is now worth
    about p (1 - p) F(one station): the chance that it saves an event the first loses to
    cloud.  Exact enumeration (at most 2^12 subsets)."""
    stations = list(stations)
    p = float(clear_sky)
    if not 0.0 < p <= 1.0:
        from .errors import InputError

        raise InputError(f"clear-sky probability {clear_sky} must be in (0, 1]")
    if p == 1.0:
        return combined_score(stations, weights)
    if len(stations) > 12:
        from .errors import InputError

        raise InputError(f"{len(stations)} stations: the expected score enumerates every "
                         "subset, give at most 12")
    from itertools import combinations

    n = len(stations)
    total = 0.0
    for size in range(1, n + 1):
        w = p ** size * (1.0 - p) ** (n - size)
        if w == 0.0:
            continue
        for sub in combinations(stations, size):
            total += w * combined_score(sub, weights)
    return total


def greedy_choice(candidates: list, k: int, objective) -> list[tuple[str, float, float]]:
    """Greedy choice of up to k candidate names by ``objective(names) -> float``, each with
    its marginal gain: [(name, gain, total)].  Stops when nothing adds."""
    chosen: list = []
    total = 0.0
    left = list(candidates)
    for _ in range(max(0, int(k))):
        best, best_total = None, total
        for name in left:
            t = objective([c for c, _, _ in chosen] + [name])
            if best is None or t > best_total + 1e-12:
                best, best_total = name, t
        if best is None or best_total <= total + 1e-12:
            break
        chosen.append((best, best_total - total, best_total))
        total = best_total
        left.remove(best)
    return chosen


def season_stations(rows: list[dict], k: int, weights: Weights | None = None,
                    clear_sky: float = 1.0) -> tuple[list, dict]:
    """Choose k stations for a whole season of events (the rows of a find result, each with
    its crossing records ``zones``): the objective is the season's total of each event's
    (expected) combined score over the chosen stations, so a station earns by the events it
    adds, and by the feature longitudes it adds to events others also see.  Greedy with
    marginal gains ((1 - 1/e) of the best set: the sum of submodular functions is
    submodular).  Returns (selection, per-station summary)."""
    from .ranking import score_zones

    weights = weights or load_weights()
    events: dict = {}
    for r in rows:
        recs = r.get("zones")
        if recs is None:
            from .errors import DataFileError

            raise DataFileError("a season choice needs the crossing records of every event "
                                "(a find result written without --no-zones)")
        events.setdefault(str(r["star_id"]), {})[str(r.get("site"))] = StationResult(
            str(r.get("site")), list(recs), {}, str(r.get("telescope") or ""))
    sites = sorted({s for ev in events.values() for s in ev})

    def season(names) -> float:
        chosen = set(names)
        return float(sum(expected_score([st for n, st in ev.items() if n in chosen], weights,
                                        clear_sky)
                         for ev in events.values() if chosen & set(ev)))

    summary = {}
    for site in sites:
        scored = [score_zones(ev[site].records, weights)["score"] for ev in events.values() if site in ev]
        summary[site] = {"events": len(scored), "events_scoring": sum(x > 0 for x in scored),
                         "season_score_alone": season([site])}
    return greedy_choice(sites, k, season), summary


def ring_plane_coverage(result: NetworkResult, body, ax=None):
    """The rings seen pole-on with every station's crossings of the scored features.

    Each crossing is a marker at (r cos lambda, r sin lambda), lambda the ring longitude
    (occplan's inertial longitude from the ring plane's ascending node on the ICRF equator);
    ring regions as annuli; one colour per station.  Returns the Axes (never calls show).
    """
    import matplotlib
    from matplotlib.patches import Wedge

    if ax is None:
        from matplotlib.backends.backend_agg import FigureCanvasAgg
        from matplotlib.figure import Figure

        fig = Figure(figsize=(7.5, 7.0))
        FigureCanvasAgg(fig)
        ax = fig.add_subplot()
    for reg in body.rings:  # shade by optical depth, so tenuous rings stay faint
        ax.add_patch(Wedge((0, 0), reg.outer_km / 1e3, 0, 360, width=(reg.outer_km - reg.inner_km) / 1e3,
                           facecolor="#4a90c2", alpha=min(0.6, 0.08 + 0.25 * reg.optical_depth),
                           edgecolor="#4a90c2", lw=0.3))
    ax.add_patch(matplotlib.patches.Circle((0, 0), body.equatorial_radius_km / 1e3, color="#e8d5a9"))
    cmap = matplotlib.colormaps["tab10"]
    for i, st in enumerate(result.stations):
        recs = [r for r in st.records if r.get("weight", 0) > 0]
        if not recs:
            continue
        r = np.array([x["resonance_radius_km"] for x in recs]) / 1e3
        lon = np.radians([x.get("ring_longitude_deg", 0.0) for x in recs])
        ok = np.array([bool(x.get("resolvable")) for x in recs])
        colour = cmap(i % 10)
        ax.scatter(r[ok] * np.cos(lon[ok]), r[ok] * np.sin(lon[ok]), s=14, color=colour,
                   label=f"{st.name} (filled: resolvable)", zorder=3)
        ax.scatter(r[~ok] * np.cos(lon[~ok]), r[~ok] * np.sin(lon[~ok]), s=14, facecolor="none",
                   edgecolor=colour, lw=0.8, zorder=3)
    lim = 1.08 * body.outer_ring_km / 1e3
    ax.set_xlim(-lim, lim)
    ax.set_ylim(-lim, lim)
    ax.set_aspect("equal")
    ax.set_xlabel("x = r cos(longitude) (10$^3$ km; longitude from the ring plane's node on the ICRF equator)",
                  fontsize=8)
    ax.set_ylabel("y = r sin(longitude) (10$^3$ km)", fontsize=8)
    ax.set_title(f"{body.name}: ring features crossed by each station, rings seen pole-on", fontsize=10)
    ax.legend(fontsize=7, loc="upper right")
    return ax
