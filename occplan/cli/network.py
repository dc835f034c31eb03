"""`occplan network`: one event seen from every station of a sites file, and which to ask for."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import typer

from ..errors import InputError
from ..tables import check_format, check_out, emit, render
from . import common
from . import options as o

Chart = Annotated[Optional[Path], typer.Option("--chart", help="Also draw the ring-plane coverage (rings seen pole-on, each station's crossings) into this .png/.pdf.")]
Choose = Annotated[int, typer.Option("--choose", help="How many stations to pick greedily by the combined score (each with its marginal gain).")]

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
        fmt: o.Format = "table", out: o.Out = None, overwrite: o.Overwrite = False,
    ):
        """Evaluate one event from every station of a sites file; pick the stations to ask for.

        Example: occplan network --body saturn --star "36.00676 11.44189" --vmag 9.8 --kmag 6.1
        --sites ephem_demo/stations.toml --start 2028-10-30T02:00Z --end 2028-10-30T04:00Z
        """
        from ..catalogs import load_sites
        from ..network import choose_stations, evaluate_network, ring_plane_coverage
        from ..plotting import save_axes_figure

        fmt = check_format(fmt)
        check_out(out, overwrite)
        if chart is not None:
            if chart.suffix.lower() not in (".png", ".pdf"):
                raise InputError(f"--chart {chart} must end in .png or .pdf")
            check_out(chart, overwrite)
        if sites is None:
            raise InputError("give the stations with --sites FILE")
        if choose < 1:
            raise InputError(f"--choose {choose} must be at least 1")
        b = common.body(body)
        s = common.star(star, pm_ra, pm_dec, parallax, rv, star_epoch, vmag, kmag, catalog, star_id)
        window = common.window(start, end)
        stations = load_sites(sites)
        res = evaluate_network(b, s, stations, window, kernels=kernel)
        picked = choose_stations(res, choose)
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
                "sites_file": str(sites), "choose": choose,
                "rule": "features counted once over all chosen stations' crossings; each further "
                        "crossing adds (1 - cos dlon)/2 of its value (occplan.network)",
                "features": res.feature_rows()}
        header = (f"# {b.name}: one event from {len(stations)} stations; the {len(picked)} chosen "
                  f"greedily by the combined score (each feature once; another station adds by how "
                  f"far apart in ring longitude it samples a feature)\n")
        emit(render(rows, meta, fmt, STATION_COLUMNS if fmt == "table" else None,
                    header if fmt == "table" else None), out, overwrite)
        if chart is not None:
            ax = ring_plane_coverage(res, b)
            save_axes_figure(ax, chart, overwrite)
