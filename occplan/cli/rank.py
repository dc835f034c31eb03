"""`occplan rank`: rank candidate events by resonance coverage, with every score factor shown."""

from __future__ import annotations

from typing import Annotated, Optional

import typer

from ..errors import InputError
from . import find as f
from . import options as o

ranking = o.lazy("occplan.ranking")
_bodies = o.lazy("occplan.bodies")
_tables = o.lazy("occplan.tables")

From = Annotated[Optional[str], typer.Option("--from", help="A find result (.json or .ecsv written by occplan find); without it, rank runs the search.")]
Top = Annotated[Optional[int], typer.Option("--top", help="Keep only the N best events.")]

RANK_COLUMNS = ["rank", "star_id", "site", "closest_approach_utc", "min_ring_radius_km",
                "features_crossed", "features_resolvable", "features_both_sides",
                "crossings_hidden", "crossings_unusable", "observability", "score_ingress",
                "score_egress", "score", "potential_score", "deciding_features"]


def register(app: typer.Typer) -> None:
    @app.command("rank")
    @o.user_errors
    def rank(
        source: From = None,
        body: o.Body = "saturn",
        catalog: o.Catalog = None, column: f.Column = None, allow_no_motion: f.AllowNoMotion = False,
        start: o.Start = None, end: o.End = None,
        sites: o.Sites = None, site: f.SiteList = None, lat: o.Lat = None, lon: o.Lon = None,
        height: o.Height = 0.0, geocentre: o.Geocentre = False,
        kernel: o.Kernel = None, no_deflection: o.NoDeflection = False,
        barycentre: o.Barycentre = False,
        margin: f.Margin = None,
        telescope: o.Telescope = None, cadence: o.Cadence = None, band: o.Band = None,
        aperture: o.Aperture = None, samples_per_wavelength: o.SamplesPerWavelength = None,
        max_order: o.MaxOrder = 3, sigma: o.Sigma = None,
        luminosity_class: o.LuminosityClass = "auto", min_snr: o.MinSnr = 3.0,
        weights: f.Weights = None, top: Top = None, chart: f.Chart = None,
        progress: f.Progress = None, jobs: f.Jobs = 1,
        fmt: o.Format = "table", out: o.Out = None, overwrite: o.Overwrite = False,
    ):
        """Rank events by resonance coverage: score = sum over zone crossings of its factors.

        Example: occplan rank --from season.json --weights my_weights.toml --top 20
        (or the occplan find options to search and rank in one go)
        """
        fmt = _tables.check_format(fmt)
        _tables.check_out(out, overwrite)
        if chart is not None:
            from ..season_chart import check_chart_path

            check_chart_path(chart, overwrite)
        if top is not None and top < 1:
            raise InputError(f"--top {top}: give a positive number of events")
        settings = f.rank_settings(telescope, cadence, band, aperture, samples_per_wavelength,
                                   max_order, sigma, min_snr, luminosity_class)
        w = ranking.load_weights(weights)
        if source is not None:
            if catalog is not None:
                raise InputError("give either --from FILE or --catalog (to search), not both")
            from ..schema import check_find_result

            check_find_result(source)
            rows, meta = ranking.read_find_result(source)
            evaluation_changed = (telescope is not None or settings.telescope_overrides
                                  or sigma is not None or max_order != 3)
            if evaluation_changed:
                rows = ranking.reevaluate_rows(rows, meta, settings=settings, weights=w,
                                               kernels=kernel, progress=progress, jobs=jobs)
            else:
                rows = ranking.rescore_rows(rows, meta, w)
                meta.setdefault("ranking", {})["weights"] = w.describe()
            b = _bodies.get_body(meta["body"] if str(meta.get("body_file", "")).startswith("occplan/")
                         or not meta.get("body_file") else meta["body_file"])
            window = (meta["start_utc"], meta["end_utc"])
            kernels = kernel
        else:
            rows, meta, result = f.run_find(body, catalog, column, allow_no_motion, start, end,
                                            sites, site, lat, lon, height, geocentre, kernel,
                                            no_deflection, barycentre, margin, False, settings,
                                            weights, True, progress, jobs=jobs)
            b = result.body
            window = (meta["start_utc"], meta["end_utc"])
            kernels = kernel
        ranked = ranking.rank_rows(rows)
        if top is not None:
            ranked = ranked[:top]
        header = (f"# {meta['body']}: {len(ranked)} events ranked by the ring features they resolve; "
                  f"{ranking.SCORE_FORMULA} (weights: "
                  + str(meta.get("ranking", {}).get("weights", {}).get("path", "")) + ")\n")
        with _tables.all_or_none():  # the table and the chart appear together or not at all
            if chart is not None:
                from ..season_chart import write_season_chart

                write_season_chart(chart, ranked, b, window, kernels, overwrite,
                                   title=f"{meta['body']}: ranked candidate events")
            f.output(ranked, meta, fmt, out, overwrite, RANK_COLUMNS, header)
