"""`occplan event`: evaluate one candidate occultation."""

from __future__ import annotations

import json

import typer

from . import options as o

events = o.lazy("occplan.events")
common = o.lazy("occplan.cli.common")
_tables = o.lazy("occplan.tables")

ZONE_COLUMNS = ["side", "time_utc", "name", "feature", "satellite", "label", "kind", "wave", "m",
                "order", "resonance_radius_km", "radial_velocity_km_s", "feature_scale_km",
                "required_interval_s", "achievable_resolution_km", "transmission",
                "snr_per_element", "resolvable", "behind_planet", "usable"]


def register(app: typer.Typer) -> None:
    @app.command("event")
    @o.user_errors
    def event(
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
        fmt: o.Format = "table", out: o.Out = None, overwrite: o.Overwrite = False,
    ):
        """Evaluate one candidate: crossings, features on the chord, cadence, resolution, SNR, safety.

        Example: occplan event --body saturn --star "23.9962 7.4700" --vmag 9.5 --kmag 6.0
        --lat -22 --lon 50 --height 1200 --start 2027-06-14T23:50Z --end 2027-06-15T01:20Z
        """
        fmt = _tables.check_format(fmt)
        _tables.check_out(out, overwrite)
        report = common.event_report(locals())
        if fmt == "json":
            text = json.dumps(_tables._plain(report.to_json()), indent=1) + "\n"
        elif fmt == "table":
            text = events.summary_text(report)
        else:
            data = report.to_json()
            meta = {k: v for k, v in data.items() if k != "zones"}
            text = _tables.render(report.zone_rows(), meta, fmt, columns=None)
        _tables.emit(text, out, overwrite)
