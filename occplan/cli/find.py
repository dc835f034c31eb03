"""`occplan find`: candidate ring occultations from a star catalog over a date window, per site."""

from __future__ import annotations

from enum import StrEnum
from typing import Annotated, Optional

import typer

from ..errors import InputError
from . import options as o

ranking = o.lazy("occplan.ranking")
search = o.lazy("occplan.search")
common = o.lazy("occplan.cli.common")
_catalogs = o.lazy("occplan.catalogs")
_geometry = o.lazy("occplan.geometry")
_tables = o.lazy("occplan.tables")

# --site is repeatable here (one command searches for several sites at once)
SiteList = Annotated[Optional[list[str]], typer.Option("--site", help="Site name from --sites (repeatable; default: every site of the file).")]
Column = Annotated[Optional[list[str]], typer.Option("--column", help="Catalog column map NAME=COLUMN (repeatable), e.g. --column ra=RA_ICRS.")]
AllowNoMotion = Annotated[bool, typer.Option("--allow-no-motion", help="Use stars without proper motion or parallax (as zero; listed in the output metadata).")]
Margin = Annotated[Optional[float], typer.Option("--margin", help="Added to the Earth's radius in the search threshold, km (default: 3 sigma of the planet's ephemeris position and the catalog's worst star position when the catalog has Gaia position errors, else 1000 km).")]
IncludeMisses = Annotated[bool, typer.Option("--include-misses", help="Keep sites whose chord misses every ring region.")]
Weights = Annotated[Optional[str], typer.Option("--weights", help="Ranking weights TOML (any subset of occplan/data/ranking_weights.toml).")]
NoZones = Annotated[bool, typer.Option("--no-zones", help="Skip the zone evaluation and scores (faster; then rank needs the search options again, not --from).")]
Chart = Annotated[Optional[str], typer.Option("--chart", help="Also draw the season chart into this .png/.pdf/.svg file.")]
class EngineName(StrEnum):
    local = "local"
    dask = "dask"


Engine = Annotated[EngineName, typer.Option("--engine", help="Where the catalog search runs: local (this process) or dask (per catalog piece on a Dask cluster).")]
Scheduler = Annotated[Optional[str], typer.Option("--scheduler", help="Dask scheduler address for --engine dask, e.g. tcp://host:8786 (default: a local cluster of 2 workers).")]
Progress = Annotated[Optional[bool], typer.Option("--progress/--no-progress", help="Progress bars on stderr (default: when stderr is a terminal).")]
Jobs = o.Jobs

TABLE_COLUMNS = ["star_id", "site", "closest_approach_utc", "min_ring_radius_km", "regions",
                 "behind_planet", "vmag", "kmag", "features_crossed", "features_resolvable", "score"]
NESTED = ("zones", "zone_factors")


def column_map(items) -> dict:
    out = {}
    for item in items or []:
        if "=" not in item:
            raise InputError(f"--column {item!r}: write NAME=COLUMN, e.g. ra=RA_ICRS")
        k, v = item.split("=", 1)
        out[k.strip()] = v.strip()
    return out


def observers(sites, site_names, lat, lon, height, geocentre) -> list:
    """Sites (from --sites, optionally --site ...), one --lat/--lon site, and/or the geocentre."""
    out = []
    if site_names and sites is None:
        raise InputError("--site needs --sites FILE (a TOML file of [[sites]])")
    if sites is not None:
        out += [_catalogs.find_site(sites, n) for n in site_names] if site_names else _catalogs.load_sites(sites)
    if lat is not None or lon is not None:
        out.append(common.observer(lat=lat, lon=lon, height=height))
    if geocentre:
        out.append(common.observer(geocentre=True))
    if not out:
        raise InputError("give the observers: --sites FILE [--site NAME ...], --lat/--lon, "
                         "or --geocentre")
    return out


def rank_settings(telescope, cadence, band, aperture, samples_per_wavelength, max_order, sigma,
                  min_snr, luminosity_class) -> ranking.RankSettings:
    from ..telescope import load_telescope

    if sigma is not None and sigma < 0:
        raise InputError(f"--sigma {sigma} g/cm^2 is negative")
    if not 1 <= max_order <= 3:
        raise InputError(f"--max-order {max_order}: give 1, 2 or 3")
    overrides = {"cadence_s": cadence, "band": band.upper() if band else None,
                 "aperture_m": aperture, "samples_per_wavelength": samples_per_wavelength}
    overrides = {k: v for k, v in overrides.items() if v is not None}
    tel = load_telescope(telescope) if telescope is not None else None
    if tel is None:
        load_telescope(None, **overrides)  # validate the overrides before any work
    return ranking.RankSettings(telescope=tel, telescope_overrides=overrides,
                                max_order=max_order, sigma_g_cm2=sigma, min_snr=min_snr,
                                luminosity_class=luminosity_class)


def open_catalog(catalog, columns, allow_no_motion):
    """A Parquet file or folder as a partitioned catalog (read piece by piece), else a table."""
    from ..partitions import ParquetCatalog, is_partitioned

    if is_partitioned(catalog):
        return ParquetCatalog(catalog, column_map(columns), allow_no_motion)
    return _catalogs.read_catalog_table(catalog, column_map(columns), allow_no_motion)


def run_find(body, catalog, columns, allow_no_motion, start, end, sites, site, lat, lon, height,
             geocentre, kernel, no_deflection, barycentre, margin, include_misses, settings,
             weights, zones, progress, engine="local", scheduler=None, jobs=1):
    """Search, then (unless zones is False) evaluate and score: (rows, meta, result)."""
    if catalog is None:
        raise InputError("give the star catalog: --catalog FILE (CSV, ECSV, VOTable, Parquet "
                         "file or folder)")
    if engine not in ("local", "dask"):
        raise InputError(f"--engine {engine!r}: give local or dask")
    if scheduler is not None and engine != "dask":
        raise InputError("--scheduler needs --engine dask")
    b = common.body(body)
    window = common.window(start, end)
    obs = observers(sites, site, lat, lon, height, geocentre)
    w = ranking.load_weights(weights) if zones else None
    search.check_window(b, window, kernel)  # before reading a large catalog
    table = open_catalog(catalog, columns, allow_no_motion)
    corrections = _geometry.Corrections(deflection=not no_deflection, barycentre_only=barycentre)
    result = search.find_events(b, table, window, obs, kernels=kernel, corrections=corrections,
                                margin_km=margin, include_misses=include_misses,
                                progress=progress, engine=engine, scheduler=scheduler,
                                jobs=jobs)
    if getattr(table, "report", None) is not None:
        ranking.print_note(table.report.summary())
    if zones:
        ranking.score_events(result, kernels=kernel, corrections=corrections, settings=settings,
                             weights=w, progress=progress, jobs=jobs)
    return ranking.event_rows(result), result.meta, result


def output(rows, meta, fmt, out, overwrite, table_columns, header):
    if fmt == "table":
        text = _tables.render(rows, meta, fmt, columns=table_columns, header=header)
    elif fmt == "csv":
        flat = [{k: v for k, v in r.items() if k not in NESTED} for r in rows]
        text = _tables.render(flat, meta, fmt)
    else:
        text = _tables.render(rows, meta, fmt)
    _tables.emit(text, out, overwrite)


def register(app: typer.Typer) -> None:
    @app.command("find")
    @o.user_errors
    def find(
        body: o.Body = "saturn",
        catalog: o.Catalog = None, column: Column = None, allow_no_motion: AllowNoMotion = False,
        start: o.Start = None, end: o.End = None,
        sites: o.Sites = None, site: SiteList = None, lat: o.Lat = None, lon: o.Lon = None,
        height: o.Height = 0.0, geocentre: o.Geocentre = False,
        kernel: o.Kernel = None, no_deflection: o.NoDeflection = False,
        barycentre: o.Barycentre = False,
        margin: Margin = None, include_misses: IncludeMisses = False,
        telescope: o.Telescope = None, cadence: o.Cadence = None, band: o.Band = None,
        aperture: o.Aperture = None, samples_per_wavelength: o.SamplesPerWavelength = None,
        max_order: o.MaxOrder = 3, sigma: o.Sigma = None,
        luminosity_class: o.LuminosityClass = "auto", min_snr: o.MinSnr = 3.0,
        weights: Weights = None, no_zones: NoZones = False, chart: Chart = None,
        progress: Progress = None, engine: Engine = "local", scheduler: Scheduler = None,
        jobs: Jobs = 1, fmt: o.Format = "table", out: o.Out = None, overwrite: o.Overwrite = False,
    ):
        """Candidate events of a star catalog over a window, per site, with zones and scores.

        Example: occplan find --body saturn --catalog stars.csv --start 2027-01-01 --end
        2028-01-01 --sites sites.toml --format json --out season.json
        """
        fmt = _tables.check_format(fmt)
        _tables.check_out(out, overwrite)
        if chart is not None:
            from ..season_chart import check_chart_path

            check_chart_path(chart, overwrite)
        settings = rank_settings(telescope, cadence, band, aperture, samples_per_wavelength,
                                 max_order, sigma, min_snr, luminosity_class)
        rows, meta, result = run_find(body, catalog, column, allow_no_motion, start, end, sites,
                                      site, lat, lon, height, geocentre, kernel, no_deflection,
                                      barycentre, margin, include_misses, settings, weights,
                                      not no_zones, progress, engine, scheduler, jobs)
        info = meta["search"]
        header = (f"# {meta['body']}: {info['stars_searched']} stars searched, "
                  f"{info['candidates']} geocentric candidates, {len(rows)} events "
                  f"{meta['start_utc']} .. {meta['end_utc']}\n# threshold: {info['threshold']}\n")
        cols = [c for c in TABLE_COLUMNS if no_zones is False or c not in ("features_crossed", "features_resolvable", "score")]
        with _tables.all_or_none():  # the table and the chart appear together or not at all
            if chart is not None:
                from ..season_chart import write_season_chart

                write_season_chart(chart, rows, result.body, common.window(start, end), kernel,
                                   overwrite, title=f"{meta['body']}: candidate events")
            output(rows, meta, fmt, out, overwrite, cols, header)
