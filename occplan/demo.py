"""The demo: the whole job on the invented scenario in ``ephem_demo/`` (the API of `occplan demo`).

find -> rank -> evaluate the best events -> chord tables, figures -> campaign report, all in
one output folder, offline.  The scenario is installed with the package as
``occplan.ephem_demo`` (its README says how it was made).
"""

from __future__ import annotations

import json
import os
import shutil
import tempfile
import time
import tomllib
from dataclasses import dataclass, field
from importlib import resources
from pathlib import Path

from . import __version__
from .errors import OutputExistsError

DEMO_PACKAGE = "occplan.ephem_demo"
RANKED_COLUMNS = ["rank", "star_id", "body", "site", "closest_approach_utc", "min_ring_radius_km",
                  "score", "potential_score", "observability", "score_ingress", "score_egress",
                  "features_crossed", "feature_crossings", "features_resolvable",
                  "features_both_sides", "crossings_hidden", "crossings_unusable",
                  "best_feature", "deciding_features", "opening_angle_deg", "vmag", "kmag",
                  "telescope", "reasons"]
FACTOR_COLUMNS = [("features_crossed", "features"), ("features_resolvable", "resolvable"),
                  ("features_both_sides", "both sides"), ("score_ingress", "ingress"),
                  ("score_egress", "egress"), ("deciding_features", "deciding features")]


@dataclass
class DemoResult:
    out_dir: Path
    files: list = field(default_factory=list)
    summary: list = field(default_factory=list)  # lines for the terminal


def scenario_dir() -> Path:
    """The installed scenario folder (a real folder for regular and editable installs)."""
    return Path(str(resources.files(DEMO_PACKAGE)))


BUILDING = ".building-"  # the temporary folder a run builds in: .<name>.building-<random>


def _pid_alive(pid: int) -> bool:
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:  # exists, owned by someone else
        return True
    return True


def _clear_stale(parent: Path, name: str, log) -> None:
    """Remove the temporary folders of killed runs (their process is gone)."""
    for stale in parent.glob(f".{name}{BUILDING}*"):
        try:
            pid = int((stale / ".pid").read_text().strip())
        except (OSError, ValueError):
            pid = None
        if pid is None or not _pid_alive(pid):
            shutil.rmtree(stale, ignore_errors=True)
            log(f"removed {stale}, left by an interrupted demo run")


def _prepare(out: Path, overwrite: bool, log=lambda msg: None) -> Path:
    """Refuse a non-empty ``out`` without ``overwrite``; clear what killed runs left; return
    the temporary folder, next to ``out``, that this run builds in."""
    if out.exists() and any(out.iterdir()) and not overwrite:
        raise OutputExistsError(f"{out} exists and is not empty; pass --overwrite to replace "
                                "its demo files, or --out another folder")
    parent = out.resolve().parent
    _clear_stale(parent, out.name, log)
    try:
        staging = Path(tempfile.mkdtemp(dir=parent, prefix=f".{out.name}{BUILDING}"))
    except OSError:  # the parent is not writable, the folder itself is (check_out_folder)
        out.mkdir(exist_ok=True)
        _clear_stale(out, out.name, log)
        staging = Path(tempfile.mkdtemp(dir=out, prefix=f".{out.name}{BUILDING}"))
    (staging / ".pid").write_text(str(os.getpid()))
    (staging / "events").mkdir()
    (staging / "figures").mkdir()
    return staging


def _move_into_place(staging: Path, out: Path, overwrite: bool) -> None:
    """The finished folder becomes ``out``: renamed whole if ``out`` is absent or empty;
    with ``overwrite``, its files replace their namesakes in ``out`` (other files stay)."""
    (staging / ".pid").unlink()
    if out.is_dir() and not any(out.iterdir()):
        out.rmdir()
    if not out.exists():
        try:
            os.rename(staging, out)
            return
        except OSError:
            if not overwrite:
                raise OutputExistsError(f"{out} appeared while the demo ran; pass --overwrite "
                                        "or --out another folder") from None
    if not overwrite and any(out.iterdir()):
        raise OutputExistsError(f"{out} appeared while the demo ran; pass --overwrite or "
                                "--out another folder")
    for child in sorted(staging.iterdir()):
        target = out / child.name
        if target.is_dir() and not target.is_symlink():
            shutil.rmtree(target)
        os.replace(child, target)
    staging.rmdir()


def _why_first(rows: list[dict]) -> str:
    """The report's "why it ranks first", from the features that decided the score."""
    if not rows or not rows[0].get("score"):
        return "no event scored above zero in this season."
    a = rows[0]
    text = (f"star {a['star_id']} from {a['site']} scores {a['score']:.2f}: its chord records "
            f"{a.get('features_crossed') or 0} ring features, {a.get('features_resolvable') or 0} "
            f"of them resolved with that station's camera and "
            f"{a.get('features_both_sides') or 0} on both sides of the planet (ingress "
            f"{(a.get('score_ingress') or 0):.2f}, egress {(a.get('score_egress') or 0):.2f}). "
            f"The features that decide it: {a.get('deciding_features') or '-'}. Each feature "
            "counts once, by its observable amplitude times the part of it resolved and its "
            "signal to noise through the ring's opacity; a second crossing at another ring "
            "longitude adds by how far apart it samples the feature.")
    if len(rows) > 1:
        b = rows[1]
        text += (f" The next event (star {b['star_id']} from {b['site']}) scores "
                 f"{(b.get('score') or 0):.2f}: {b.get('features_resolvable') or 0} features "
                 f"resolved against {a.get('features_resolvable') or 0}, "
                 f"{b.get('features_both_sides') or 0} on both sides against "
                 f"{a.get('features_both_sides') or 0}; its deciding features: "
                 f"{b.get('deciding_features') or '-'}.")
    if a.get("reasons"):
        text += f" Scorer's note on the winner: {a['reasons']}"
    return text


def _network_page(out, name, body, rows, star_of, sites, settings, weights):
    """The best event of the season seen from every station: combined coverage, the stations
    chosen greedily with their marginal gains, and the ring-plane figure."""
    from .ephemeris import parse_utc, tdb_s_of
    from .network import choose_stations, evaluate_network, ring_plane_coverage
    from .plotting import save_axes_figure

    best = next((r for r in rows if r.get("score") and r.get("crossing_start_utc")), None)
    if best is None:
        return None
    star = star_of[(best["star_id"], best["site"])]
    window = (tdb_s_of(parse_utc(best["crossing_start_utc"])) - 900.0,
              tdb_s_of(parse_utc(best["crossing_end_utc"])) + 900.0)
    res = evaluate_network(body, star, sites, window, settings=settings, weights=weights, jobs=0)
    picked = choose_stations(res, len(sites))
    rel = f"figures/network_{name}.png"
    save_axes_figure(ring_plane_coverage(res, body), out / rel, overwrite=True)
    from .telescope import load_telescope
    from .world import score_places, world_grid, world_map

    where_rel = f"figures/where_{name}.png"
    grid = world_grid(body, star, window, resolution_deg=5.0, step_s=60.0)
    # what a station with the default telescope would score at a few observable places
    score_places(grid, telescope=load_telescope(), spacing_deg=30.0, max_places=10, jobs=0)
    save_axes_figure(world_map(grid), out / where_rel, overwrite=True)
    by_name = {st.name: st for st in res.stations}
    table = []
    for i, (station, gain, total) in enumerate(picked, start=1):
        sc = by_name[station].score
        table.append({"choice": i, "station": station, "marginal_gain": gain, "combined_score": total,
                      "own_score": sc.get("score", 0.0),
                      "features_resolvable": sc.get("features_resolvable", 0),
                      "deciding_features": sc.get("deciding_features", "")})
    others = [st.name for st in res.stations if st.name not in {p[0] for p in picked}]
    text = (f"The season's best {body.name} event (star {best['star_id']}, "
            f"{best['closest_approach_utc'][:16]} UTC) evaluated from every station. Features "
            "count once over the network; a further station adds by how far apart in ring "
            "longitude it samples them. Stations in the order a team would ask for them, each "
            "with what it adds to those before it"
            + (f"; {', '.join(others)} would add nothing (no observable feature)." if others else "."))
    text += (f" The world map shows where on Earth the event is observable "
             f"({int(grid.observable.sum())} of {grid.lat_deg.size} grid points) and how deep "
             "into the rings each place's chord reaches.")
    return {"figure": rel, "where_figure": where_rel, "table": table, "text": text}


def run_demo(out_dir: str | Path = "occplan-demo-output", overwrite: bool = False,
             top_events: int | None = None, progress: bool | None = None,
             log=None) -> DemoResult:
    """Run the demo campaign into ``out_dir`` and return what was written.

    The files are built in a temporary folder next to ``out_dir`` and moved into place at
    the end, so an interrupted run leaves ``out_dir`` as it was; the temporary folder of a run
    killed outright is removed by the next run.
    """
    from .tables import _terminate_cleanly

    if log is None:
        from .log import note as log
    started = time.perf_counter()
    here = scenario_dir()
    camp = tomllib.loads((here / "campaign.toml").read_text(encoding="utf-8"))
    final = Path(out_dir)
    out = _prepare(final, overwrite, log)  # built here, moved to `final` at the end
    with _terminate_cleanly():  # SIGTERM, like SIGINT, removes the temporary folder
        try:
            result = _build(out, camp, here, top_events, progress, log)
            _move_into_place(out, final, overwrite)
        except BaseException:
            shutil.rmtree(out, ignore_errors=True)
            raise
    result.files = [final / Path(f).relative_to(out) for f in result.files]
    result.out_dir = final
    result.summary.append(f"done in {time.perf_counter() - started:.0f} s")
    return result


def _build(out: Path, camp: dict, here: Path, top_events, progress, log) -> DemoResult:
    """The demo's files, written into ``out`` (the temporary folder)."""
    from .catalogs import load_sites, read_catalog_table
    from .chords import chord
    from .events import evaluate_event, summary_text
    from .parallel import map_indexed
    from .plotting import save_event_figures
    from .ranking import RankSettings, event_rows, load_weights, rank_rows, score_events
    from .report import write_report
    from .search import find_events
    from .season_chart import write_season_chart
    from .tables import _plain, render, render_columns
    from .telescope import load_telescope
    from .bodies import get_body
    from .ephemeris import parse_utc, tdb_s_of

    result = DemoResult(out_dir=out)
    sites = load_sites(here / camp["sites"])
    table = read_catalog_table(here / camp["catalog"])
    window = (camp["start_utc"], camp["end_utc"])
    n_top = int(top_events or camp.get("top_events", 3))
    settings = RankSettings(max_order=int(camp.get("max_order", 3)))
    weights = load_weights(here / camp["weights"]) if camp.get("weights") else load_weights()
    campaign_info = {
        "name": camp["name"], "start_utc": camp["start_utc"], "end_utc": camp["end_utc"],
        "catalog": camp["catalog"], "stars": len(table), "version": __version__,
        "sites": [{"name": s.name, "lat_deg": s.lat_deg, "lon_deg": s.lon_deg,
                   "height_m": s.height_m, "telescope": load_telescope(s.telescope).name}
                  for s in sites],
        "notes": ["Everything in this scenario is invented: stations, telescopes, catalog "
                  "stars and campaign. The planets, rings and moons are real, with the "
                  "published constants cited in occplan's body files."],
    }
    bodies_out = []
    for name in camp["bodies"]:
        body = get_body(name)
        log(f"[{name}] searching {len(table)} catalog stars, {window[0]} .. {window[1]}")
        found = find_events(body, table, window, sites, progress=progress, jobs=0)
        log(f"[{name}] {len(found.candidates)} geocentric candidates, {len(found.events)} "
            "station events crossing the rings; evaluating their features")
        score_events(found, settings=settings, weights=weights, progress=progress, jobs=0)
        rows = rank_rows(event_rows(found))
        for r in rows:
            r.pop("zones", None)
            r.pop("zone_factors", None)
        meta = dict(found.meta)
        meta["campaign"] = camp["name"]
        cand = out / f"candidates_{name}.ecsv"
        cand.write_text(render(rows, meta, "ecsv"), encoding="utf-8")
        ranked_json = out / f"ranked_{name}.json"
        ranked_json.write_text(json.dumps({"meta": _plain(meta), "rows": _plain(rows)}, indent=1)
                               + "\n", encoding="utf-8")
        ranked_ecsv = out / f"ranked_{name}.ecsv"
        ranked_ecsv.write_text(render(rows, meta, "ecsv",
                                      columns=[c for c in RANKED_COLUMNS if rows and c in rows[0]]),
                               encoding="utf-8")
        result.files += [cand, ranked_json, ranked_ecsv]
        chart_rel = f"figures/season_{name}.png"
        write_season_chart(out / chart_rel, rows, body, window, overwrite=True,
                           title=f"{body.name}: candidate events of the season")
        result.files.append(out / chart_rel)
        site_by_name = {s.name: s for s in sites}
        star_of = {(ev.star_id, ev.site_name): ev.candidate.star for ev in found.events}
        top_rows = [r for r in rows if r.get("score")][:n_top]

        def event_page(k, name=name, body=body, top_rows=top_rows, star_of=star_of,
                       site_by_name=site_by_name):
            """One top event's figure, JSON, chord table and summary (a forked worker may
            write them: each event has its own files)."""
            i, row = k + 1, top_rows[k]
            site = site_by_name[row["site"]]
            star = star_of[(row["star_id"], row["site"])]
            tel = load_telescope(site.telescope)
            t_ca = tdb_s_of(parse_utc(row["closest_approach_utc"]))
            if row.get("crossing_start_utc") and row.get("crossing_end_utc"):
                a = tdb_s_of(parse_utc(row["crossing_start_utc"])) - 900.0
                b = tdb_s_of(parse_utc(row["crossing_end_utc"])) + 900.0
            else:
                a, b = t_ca - 3600.0, t_ca + 3600.0
            rep = evaluate_event(body, star, site.observer(), (a, b), telescope=tel,
                                 max_order=settings.max_order,
                                 min_altitude_deg=site.min_altitude_deg)
            stem = f"{name}_{i}"
            fig_rel = f"figures/{stem}.png"
            save_event_figures(rep, out / fig_rel, overwrite=True, dpi=150)
            ev_json = out / "events" / f"{stem}.json"
            ev_json.write_text(json.dumps(_plain(rep.to_json()), indent=1) + "\n", encoding="utf-8")
            chord_res = chord(body, star, site.observer(), (a, b), step_s=1.0)
            chord_path = out / "events" / f"{stem}_chord.ecsv"
            chord_path.write_text(render_columns(chord_res.columns(), chord_res.meta, "ecsv"),
                                  encoding="utf-8")
            summary = summary_text(rep)
            (out / "events" / f"{stem}.txt").write_text(summary, encoding="utf-8")
            page = {
                "title": f"{body.name} #{i}: star {row['star_id']} from {row['site']}, "
                         f"{row['closest_approach_utc'][:16]} UTC (score {row['score']:.2f})",
                "summary": summary, "figure": fig_rel,
                "chord_table": f"events/{stem}_chord.ecsv", "json": f"events/{stem}.json",
            }
            return page, [out / fig_rel, ev_json, chord_path, out / "events" / f"{stem}.txt"]

        def page_or_network(k, event_page=event_page, name=name, body=body, rows=rows,
                            star_of=star_of):
            """Item 0 the network page (the longest), then the event pages."""
            if k == 0:
                return _network_page(out, name, body, rows, star_of, sites, settings, weights)
            return event_page(k - 1)

        done = map_indexed(page_or_network, len(top_rows) + 1, jobs=0, min_items_per_job=1,
                           first_here=False)
        network, pages = done[0], done[1:]
        events_out = []
        for k, (page, files) in enumerate(pages):
            row = top_rows[k]
            result.files += files
            events_out.append(page)
            log(f"[{name}] #{k + 1} star {row['star_id']} from {row['site']}: score "
                f"{row['score']:.2f}, {row['features_resolvable']} of {row['features_crossed']} "
                "features resolved")
        if network:
            result.files += [out / network["figure"], out / network["where_figure"]]
        bodies_out.append({"body": body.name, "candidates": len(rows), "network": network,
                           "ranked": [r for r in rows[:12]], "factor_columns": FACTOR_COLUMNS,
                           "why_first": _why_first(rows), "season_chart": chart_rel,
                           "events": events_out})
        top = rows[0] if rows else None
        result.summary.append(
            f"{body.name}: {len(found.candidates)} candidate stars, {len(rows)} station events; "
            + (f"best: star {top['star_id']} from {top['site']} at {top['closest_approach_utc'][:16]} "
               f"UTC, score {top['score']:.2f}" if top else "no event"))
    md, html_path = write_report(out, campaign_info, bodies_out)
    result.files += [md, html_path]
    return result
