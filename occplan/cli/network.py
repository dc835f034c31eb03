"""`occplan network`: one event seen from every station of a sites file, and which to ask for."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import typer

from ..errors import InputError
from . import options as o

common = o.lazy("occplan.cli.common")
_tables = o.lazy("occplan.tables")

Chart = Annotated[Optional[Path], typer.Option("--chart", help="Also draw the ring-plane coverage (rings seen pole-on, each station's crossings) into this .png/.pdf.")]
Choose = Annotated[int, typer.Option("--choose", help="How many stations to pick greedily by the combined score (each with its marginal gain).")]
FromFile = Annotated[Optional[Path], typer.Option("--from", help="A find result (JSON or ECSV, with crossing records): choose stations for the whole season of its events instead of one event.")]
ClearSky = Annotated[float, typer.Option("--clear-sky", help="Chance that a station is clear, each independently (a planning assumption): stations are valued by their expected score, which credits a second station on the same chord. 1 = no weather.")]

SEASON_COLUMNS = ["choice", "station", "events", "events_scoring", "season_score_alone",
                  "marginal_gain", "combined_score"]

STATION_COLUMNS = ["choice", "station", "telescope", "score", "marginal_gain", "combined_score",
                   "features_crossed", "features_resolvable", "features_both_sides", "observability"]


def register(app: typer.Typer) -> None:
    @app.command("network")
    @o.user_errors
    def network(
        body: o.Body = "saturn",
        star: o.Star = None, pm_ra: o.PmRa = 0.0, pm_dec: o.PmDec = 0.0,
        parallax: o.Parallax = 0.0, rv: o.Rv = 0.0, star_epoch: o.StarEpoch = "2016.0",
        vmag: o.Vmag = None, kmag: o.Kmag = None,
        catalog: o.Catalog = None, star_id: o.StarId = None,
        sites: o.Sites = None, start: o.Start = None, end: o.End = None,
        kernel: o.Kernel = None, choose: Choose = 3, chart: Chart = None,
        season: FromFile = None, clear_sky: ClearSky = 1.0, jobs: o.Jobs = 1,
        fmt: o.Format = "table", out: o.Out = None, overwrite: o.Overwrite = False,
    ):
        """Evaluate one event from every station of a sites file; pick the stations to ask for.

        Example: occplan network --body saturn --star "36.00676 11.44189" --vmag 9.8 --kmag 6.1
        --sites ephem_demo/stations.toml --start 2028-10-30T02:00Z --end 2028-10-30T04:00Z
        """
        from ..catalogs import load_sites
        from ..network import choose_stations, evaluate_network, ring_plane_coverage
        from ..plotting import save_axes_figure

        fmt = _tables.check_format(fmt)
        _tables.check_out(out, overwrite)
        if chart is not None:
            if chart.suffix.lower() not in (".png", ".pdf"):
                raise InputError(f"--chart {chart} must end in .png or .pdf")
            _tables.check_out(chart, overwrite)
        if choose < 1:
            raise InputError(f"--choose {choose} must be at least 1")
        if not 0.0 < clear_sky <= 1.0:
            raise InputError(f"--clear-sky {clear_sky} must be a probability in (0, 1]")
        if season is not None:
            if chart is not None or star is not None or catalog is not None:
                raise InputError("--from chooses over a season of events: leave out --star, "
                                 "--catalog and --chart")
            _season(season, choose, clear_sky, fmt, out, overwrite)
            return
        if sites is None:
            raise InputError("give the stations with --sites FILE")
        b = common.body(body)
        s = common.star(star, pm_ra, pm_dec, parallax, rv, star_epoch, vmag, kmag, catalog, star_id)
        window = common.window(start, end)
        stations = load_sites(sites)
        res = evaluate_network(b, s, stations, window, kernels=kernel, jobs=jobs)
        picked = choose_stations(res, choose, clear_sky)
        order = {name: (i + 1, gain, total) for i, (name, gain, total) in enumerate(picked)}
        rows = []
        for st in res.stations:
            c = order.get(st.name)
            rows.append({"choice": c[0] if c else None, "station": st.name, "telescope": st.telescope,
                         "score": st.score.get("score", 0.0),
                         "marginal_gain": c[1] if c else None,
                         "combined_score": c[2] if c else None,
                         "features_crossed": st.score.get("features_crossed", 0),
                         "features_resolvable": st.score.get("features_resolvable", 0),
                         "features_both_sides": st.score.get("features_both_sides", 0),
                         "observability": st.score.get("observability", "") or st.error})
        rows.sort(key=lambda r: (r["choice"] is None, r["choice"] or 0, -(r["score"] or 0)))
        meta = {"body": b.name, "star": s.describe(), "start_utc": start, "end_utc": end,
                "sites_file": str(sites), "choose": choose, "clear_sky": clear_sky,
                "rule": "features counted once over all chosen stations' crossings; each further "
                        "crossing adds (1 - cos dlon)/2 of its value (occplan.network)",
                "features": res.feature_rows()}
        header = (f"# {b.name}: one event from {len(stations)} stations; the {len(picked)} chosen "
                  f"greedily by the combined score (each feature once; another station adds by how "
                  f"far apart in ring longitude it samples a feature)\n")
        _tables.emit(_tables.render(rows, meta, fmt, STATION_COLUMNS if fmt == "table" else None,
                    header if fmt == "table" else None), out, overwrite)
        if chart is not None:
            ax = ring_plane_coverage(res, b)
            save_axes_figure(ax, chart, overwrite)


def _season(path, choose, clear_sky, fmt, out, overwrite):
    """Stations for a whole season of events (a find result)."""
    from ..network import season_stations
    from ..ranking import load_weights, read_find_result
    from ..schema import check_find_result

    if str(path).lower().endswith(".json"):
        check_find_result(path)
    rows, meta = read_find_result(path)
    weights = load_weights()
    picked, summary = season_stations(rows, choose, weights, clear_sky)
    order = {name: (i + 1, gain, total) for i, (name, gain, total) in enumerate(picked)}
    table = []
    for site, info in summary.items():
        c = order.get(site)
        table.append({"choice": c[0] if c else None, "station": site, **info,
                      "marginal_gain": c[1] if c else None, "combined_score": c[2] if c else None})
    table.sort(key=lambda r: (r["choice"] is None, r["choice"] or 0, -r["season_score_alone"]))
    out_meta = {"body": meta.get("body"), "find_result": str(path), "events": len({r["star_id"] for r in rows}),
                "choose": choose, "clear_sky": clear_sky,
                "rule": "season total of each event's combined score over the chosen stations (each "
                        "feature once per event, longitude diversity), expected over independent "
                        "clear skies; greedy with marginal gains (occplan.network.season_stations)"}
    header = (f"# {meta.get('body')}: stations for a season of {out_meta['events']} events, the "
              f"{len(picked)} chosen greedily by the season total"
              + (f" expected at clear-sky probability {clear_sky:g}" if clear_sky < 1 else "") + "\n")
    _tables.emit(_tables.render(table, out_meta, fmt, SEASON_COLUMNS if fmt == "table" else None,
                header if fmt == "table" else None), out, overwrite)
