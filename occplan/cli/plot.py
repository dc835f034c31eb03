"""`occplan plot`: figures of one candidate event (sky view, radius vs time, zone coverage)."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from ..errors import InputError
from . import options as o

common = o.lazy("occplan.cli.common")
_tables = o.lazy("occplan.tables")

FIGURE_SUFFIXES = (".png", ".pdf")
PANEL_CHOICES = ("all", "sky", "radius", "coverage")

FigureOut = Annotated[Path, typer.Option("--out", help="Figure file to write: .png or .pdf.")]
Panel = Annotated[str, typer.Option("--panel", help="What to draw: all (the three panels on one page), sky, radius or coverage.")]


def _check_figure_out(out: Path, overwrite: bool, panel: str) -> None:
    """Refuse a bad name, an unknown panel or an existing file before any work is done."""
    if out.suffix.lower() not in FIGURE_SUFFIXES:
        raise InputError(f"--out {out} must end in .png or .pdf")
    if panel not in PANEL_CHOICES:
        raise InputError(f"--panel {panel!r} is not one of {', '.join(PANEL_CHOICES)}")
    _tables.check_out(out, overwrite)  # a folder, a missing folder, no permission, an existing file


def register(app: typer.Typer) -> None:
    @app.command("plot")
    @o.user_errors
    def plot(
        out: FigureOut,
        body: o.Body = "saturn",
        star: o.Star = None, pm_ra: o.PmRa = 0.0, pm_dec: o.PmDec = 0.0,
        parallax: o.Parallax = 0.0, rv: o.Rv = 0.0, star_epoch: o.StarEpoch = "2016.0",
        vmag: o.Vmag = None, kmag: o.Kmag = None,
        catalog: o.Catalog = None, star_id: o.StarId = None,
        site: o.Site = None, sites: o.Sites = None, lat: o.Lat = None, lon: o.Lon = None,
        height: o.Height = 0.0, geocentre: o.Geocentre = False, observer_id: o.ObserverId = None,
        start: o.Start = None, end: o.End = None, step: o.Step = 10.0,
        kernel: o.Kernel = None, no_deflection: o.NoDeflection = False,
        barycentre: o.Barycentre = False,
        telescope: o.Telescope = None, cadence: o.Cadence = None, band: o.Band = None,
        aperture: o.Aperture = None, samples_per_wavelength: o.SamplesPerWavelength = None,
        max_order: o.MaxOrder = 3, sigma: o.Sigma = None,
        luminosity_class: o.LuminosityClass = "auto", min_snr: o.MinSnr = 3.0,
        star_error_mas: o.StarErrorMas = None, planet_error_km: o.PlanetErrorKm = None,
        pole_error_deg: o.PoleErrorDeg = None,
        overwrite: o.Overwrite = False, panel: Panel = "all",
    ):
        """Draw one candidate event: sky-plane view, ring radius vs time, zone coverage.

        Example: occplan plot --body saturn --star "23.9962 7.4700" --vmag 9.5 --kmag 6.0
        --lat -22 --lon 50 --height 1200 --start 2027-06-14T23:50Z --end 2027-06-15T01:20Z --out event.pdf
        """
        panel = panel.lower()
        _check_figure_out(out, overwrite, panel)
        from .. import plotting  # matplotlib only when a figure is asked for

        report = common.event_report(locals())
        for path in plotting.save_event_figures(report, out, overwrite=overwrite, panel=panel):
            from ..log import note

            note(f"wrote {path}")
