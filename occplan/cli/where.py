"""`occplan where`: where on Earth one event can be observed, and what each place's chord crosses."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Annotated, Optional

import typer

from ..errors import InputError
from . import options as o

common = o.lazy("occplan.cli.common")
_tables = o.lazy("occplan.tables")

Map = Annotated[Optional[Path], typer.Option("--map", help="Also draw the world map (.png or .pdf).")]
GeoJson = Annotated[Optional[Path], typer.Option("--geojson", help="Also write the grid as GeoJSON points (for GIS).")]
Resolution = Annotated[float, typer.Option("--resolution", help="Grid spacing in latitude and longitude, deg.")]
MinAltitude = Annotated[float, typer.Option("--min-altitude", help="Lowest planet altitude for an observable place, deg.")]
ScoreEvery = Annotated[float, typer.Option("--score-every", help="Also score the event for a station with the reference telescope (--telescope) at one observable place per this many degrees (0: no scores; each is a full evaluation, about a second).")]
SunLimit = Annotated[float, typer.Option("--sun-limit", help="Highest Sun altitude for an observable place, deg (-12: nautical twilight's end).")]

COLUMNS = ["lat_deg", "lon_deg", "crosses_rings", "observable", "min_ring_radius_km",
           "innermost_region", "planet_altitude_min_deg", "sun_altitude_max_deg",
           "ingress_longitude_deg", "egress_longitude_deg", "start_utc", "end_utc", "score"]


def register(app: typer.Typer) -> None:
    @app.command("where")
    @o.user_errors
    def where(
        body: o.Body = "saturn",
        star: o.Star = None, pm_ra: o.PmRa = 0.0, pm_dec: o.PmDec = 0.0,
        parallax: o.Parallax = 0.0, rv: o.Rv = 0.0, star_epoch: o.StarEpoch = "2016.0",
        catalog: o.Catalog = None, star_id: o.StarId = None,
        start: o.Start = None, end: o.End = None, step: o.Step = 60.0,
        resolution: Resolution = 5.0, min_altitude: MinAltitude = 20.0, sun_limit: SunLimit = -12.0,
        kernel: o.Kernel = None, map_out: Map = None, geojson: GeoJson = None,
        vmag: o.Vmag = None, kmag: o.Kmag = None, telescope: o.Telescope = None,
        score_every: ScoreEvery = 0.0, jobs: o.Jobs = 1,
        fmt: o.Format = "table", out: o.Out = None, overwrite: o.Overwrite = False,
    ):
        """Where on Earth one event is observable and which rings each place's chord reaches.

        Example: occplan where --body saturn --star "36.00676 11.44189" --start 2028-10-30T01:30Z
        --end 2028-10-30T04:30Z --map where.png --geojson where.geojson
        """
        from ..plotting import save_axes_figure
        from ..world import world_grid, world_map

        fmt = _tables.check_format(fmt)
        _tables.check_out(out, overwrite)
        if map_out is not None:
            if map_out.suffix.lower() not in (".png", ".pdf"):
                raise InputError(f"--map {map_out} must end in .png or .pdf")
            _tables.check_out(map_out, overwrite)
        if geojson is not None:
            _tables.check_out(geojson, overwrite)
        grid = world_grid(common.body(body),
                          common.star(star, pm_ra, pm_dec, parallax, rv, star_epoch, vmag, kmag,
                                      catalog, star_id),
                          common.window(start, end), resolution_deg=resolution, step_s=step,
                          min_altitude_deg=min_altitude, sun_limit_deg=sun_limit, kernels=kernel)
        if score_every < 0:
            raise InputError(f"--score-every {score_every} must be >= 0")
        if score_every > 0:
            from ..telescope import load_telescope
            from ..world import score_places

            score_places(grid, telescope=load_telescope(telescope), spacing_deg=score_every,
                         kernels=kernel, jobs=jobs)
        rows = grid.rows()
        shown = rows if fmt != "table" else [r for r in rows if r["observable"]]
        header = (f"# {grid.body.name}: {int(grid.crosses_rings.sum())} of {len(rows)} grid points "
                  f"({resolution:g} deg) see the chord cross the rings, "
                  f"{int(grid.observable.sum())} can observe it; the observable ones:\n")
        with _tables.all_or_none():
            _tables.emit(_tables.render(shown, grid.meta, fmt, COLUMNS if fmt == "table" else None,
                        header if fmt == "table" else None), out, overwrite)
            if geojson is not None:
                _tables.emit(json.dumps(grid.geojson()) + "\n", geojson, overwrite)
            if map_out is not None:
                save_axes_figure(world_map(grid), map_out, overwrite)
