"""`occplan aspect`: how the ring system looks from an observer over a window."""

from __future__ import annotations

import typer

from . import options as o

chords = o.lazy("occplan.chords")
common = o.lazy("occplan.cli.common")
_tables = o.lazy("occplan.tables")


def register(app: typer.Typer) -> None:
    @app.command("aspect")
    @o.user_errors
    def aspect(
        body: o.Body = "saturn",
        site: o.Site = None, sites: o.Sites = None, lat: o.Lat = None, lon: o.Lon = None,
        height: o.Height = 0.0, geocentre: o.Geocentre = False, observer_id: o.ObserverId = None,
        start: o.Start = None, end: o.End = None, step: o.Step = 86400.0,
        kernel: o.Kernel = None, barycentre: o.Barycentre = False,
        fmt: o.Format = "table", out: o.Out = None, overwrite: o.Overwrite = False,
    ):
        """Opening angle B, the Sun's B, pole angle P, distance and apparent radii over a window.

        Example: occplan aspect --body saturn --geocentre --start 2025-01-01 --end 2025-06-01
        --step 604800
        """
        fmt = _tables.check_format(fmt)
        _tables.check_out(out, overwrite)
        rows, meta = chords.aspect(
            common.body(body), common.observer(site, sites, lat, lon, height, geocentre, observer_id),
            common.window(start, end), step_s=step, kernels=kernel, barycentre_only=barycentre)
        header = f"# {meta['body']} seen from {meta['observer']['name']}; {meta['note']}\n"
        _tables.emit(_tables.render(rows, meta, fmt, chords.ASPECT_COLUMNS, header if fmt == "table" else None),
             out, overwrite)
