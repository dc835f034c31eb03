"""`occplan chord`: ring radius and longitude versus time for one star, observer and window."""

from __future__ import annotations

import typer

from . import options as o

chords = o.lazy("occplan.chords")
common = o.lazy("occplan.cli.common")
_tables = o.lazy("occplan.tables")


def register(app: typer.Typer) -> None:
    @app.command("chord")
    @o.user_errors
    def chord(
        body: o.Body = "saturn",
        star: o.Star = None, pm_ra: o.PmRa = 0.0, pm_dec: o.PmDec = 0.0,
        parallax: o.Parallax = 0.0, rv: o.Rv = 0.0, star_epoch: o.StarEpoch = "2016.0",
        catalog: o.Catalog = None, star_id: o.StarId = None,
        site: o.Site = None, sites: o.Sites = None, lat: o.Lat = None, lon: o.Lon = None,
        height: o.Height = 0.0, geocentre: o.Geocentre = False, observer_id: o.ObserverId = None,
        start: o.Start = None, end: o.End = None, step: o.Step = 60.0,
        kernel: o.Kernel = None, no_deflection: o.NoDeflection = False,
        barycentre: o.Barycentre = False,
        fmt: o.Format = "table", out: o.Out = None, overwrite: o.Overwrite = False,
    ):
        """Ring radius, longitude and radial speed versus time along a star's chord.

        Example: occplan chord --body saturn --star "23.99933 7.46995" --lat -30.2 --lon -70.7
        --height 2200 --start 2027-06-15T00:00Z --end 2027-06-15T04:00Z --step 10
        """
        fmt = _tables.check_format(fmt)
        _tables.check_out(out, overwrite)
        result = chords.chord(
            body=common.body(body),
            star=common.star(star, pm_ra, pm_dec, parallax, rv, star_epoch, None, None, catalog, star_id),
            observer=common.observer(site, sites, lat, lon, height, geocentre, observer_id),
            window=common.window(start, end), step_s=step, kernels=kernel,
            deflection=not no_deflection, barycentre_only=barycentre,
        )
        header = chords.summary_text(result) if fmt == "table" else None
        text = _tables.render_columns(result.columns(), result.meta, fmt, header=header)
        _tables.emit(text, out, overwrite)
