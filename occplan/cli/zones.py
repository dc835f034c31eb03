"""`occplan zones`: predicted resonance zones of a body over a radius range (thin layer)."""

from __future__ import annotations

from typing import Annotated

import typer

from .. import __version__
from ..constants import DEFAULT_MAX_M
from ..errors import InputError
from . import options as o

_bodies = o.lazy("occplan.bodies")
_features = o.lazy("occplan.features")
_resonances = o.lazy("occplan.resonances")
_tables = o.lazy("occplan.tables")

COLUMNS = ["strong", "label", "satellite", "kind", "wave", "m", "order", "resonance_radius_km",
           "torque_per_sigma", "region", "propagation", "zone_inner_km", "zone_outer_km",
           "shortest_wavelength_km"]
FEATURE_COLUMNS = ["name", "feature", "resonance_radius_km", "zone_inner_km", "zone_outer_km",
                   "region", "amplitude", "torque_dyn_cm", "scale_km", "note"]


def register(app: typer.Typer) -> None:
    @app.command("zones")
    @o.user_errors
    def zones(
        body: o.Body = "saturn",
        rmin: Annotated[float | None, typer.Option("--rmin", help="Inner radius, km (default: the innermost ring region).")] = None,
        rmax: Annotated[float | None, typer.Option("--rmax", help="Outer radius, km (default: the outermost ring region).")] = None,
        max_order: Annotated[int, typer.Option("--max-order", help="Highest resonance order, 1 to 3.")] = 3,
        max_m: Annotated[int, typer.Option("--max-m", help="Highest azimuthal wavenumber m.")] = DEFAULT_MAX_M,
        satellite: Annotated[list[str] | None, typer.Option("--satellite", help="Only this satellite (repeatable).")] = None,
        sigma: Annotated[float | None, typer.Option("--sigma", help="Ring surface density, g/cm^2, for every region (default: each region's typical value).")] = None,
        viscosity: Annotated[float | None, typer.Option("--viscosity", help="Ring kinematic viscosity, cm^2/s, for wave damping (default: each region's value).")] = None,
        terms: Annotated[bool, typer.Option("--terms", help="List the raw resonance terms instead of the features (every term of order <= --max-order, with its torque).")] = False,
        min_torque: Annotated[float | None, typer.Option("--min-torque", help="With --terms: drop terms whose torque per unit surface density is below this, cm^4 s^-2.")] = None,
        strongest: Annotated[int, typer.Option("--strongest", help="With --terms: mark this many of the strongest terms (column 'strong').")] = 20,
        outside_rings: Annotated[bool, typer.Option("--outside-rings", help="With --terms: also list terms that fall in no ring region (or in a gap).")] = False,
        fmt: o.Format = "table", out: o.Out = None, overwrite: o.Overwrite = False,
    ):
        """List the ring features satellite resonances make: waves, edges, narrow rings, by radius.

        Example: occplan zones --body saturn --rmin 120000 --rmax 137000
        """
        fmt = _tables.check_format(fmt)
        _tables.check_out(out, overwrite)
        b = _bodies.get_body(body)
        meta = {
            "occplan_version": __version__, "body": b.name, "body_file": b.path,
            "gravity_source": b.sources.get("gravity", ""),
            "rmin_km": rmin if rmin is not None else b.inner_ring_km,
            "rmax_km": rmax if rmax is not None else b.outer_ring_km,
            "max_order": max_order, "max_m": max_m,
            "satellites": list(satellite) if satellite else [s.name for s in b.satellites],
            "sigma_override_g_cm2": sigma, "viscosity_override_cm2_s": viscosity,
        }
        if not terms:
            if min_torque is not None or outside_rings:
                raise InputError("--min-torque and --outside-rings apply to --terms listings; "
                                 "the feature list has its own documented thresholds")
            feats = _features.body_features(b, max_order=max_order, sigma_g_cm2=sigma,
                                  viscosity_cm2_s=viscosity, max_m=max_m, rmin_km=rmin,
                                  rmax_km=rmax, satellites=tuple(satellite or ()))
            rows = [f.to_row() for f in feats]
            meta.update({"listing": "features", "feature_settings": _features.load_settings().describe(),
                         "units": {"torque_dyn_cm": "dyn cm", "amplitude": "peak fractional "
                                   "surface-density amplitude (bending waves: slope); 1 for edges "
                                   "and narrow rings"}})
            header = (f"# {b.name}: {len(rows)} features from resonances of order <= {max_order}, "
                      f"m <= {max_m} (occplan.features; --terms lists the raw terms)\n")
            if fmt == "table":
                for row in rows:
                    row["torque_dyn_cm"] = f"{row['torque_dyn_cm']:.2e}"
                    row["amplitude"] = f"{row['amplitude']:.3g}"
                    row["note"] = row["note"][:70]
            _tables.emit(_tables.render(rows, meta, fmt, FEATURE_COLUMNS if fmt == "table" else None,
                        header if fmt == "table" else None), out, overwrite)
            return
        res = _resonances.find_resonances(b, rmin_km=rmin, rmax_km=rmax, max_order=max_order,
                              satellites=satellite, min_torque=min_torque, sigma_g_cm2=sigma,
                              viscosity_cm2_s=viscosity, max_m=max_m)
        if not outside_rings:
            res = [x for x in res if x.region]
        rows = [x.to_row() for x in res]
        # strongest by the torque itself (per-sigma torque x region sigma; 0 outside the rings)
        ranked = sorted(range(len(rows)), key=lambda i: -res[i].torque_dyn_cm)
        top = set(ranked[:max(strongest, 0)])
        for i, row in enumerate(rows):
            row["strong"] = i in top
        meta.update({
            "listing": "terms", "min_torque": min_torque,
            "units": {"torque_per_sigma": "cm4 / s2 (torque in dyn cm per g cm^-2)"},
            "strongest_marked": strongest,
            "outside_rings_listed": outside_rings,
        })
        header = (f"# {b.name}: {len(rows)} resonance terms, order <= {max_order}, m <= {max_m}; "
                  f"torque_per_sigma in cm^4 s^-2; strong = the {strongest} strongest by torque "
                  "(x region sigma)\n")
        if fmt == "table":
            for row in rows:
                row["strong"] = "*" if row["strong"] else ""
                row["torque_per_sigma"] = f"{row['torque_per_sigma']:.2e}"
        _tables.emit(_tables.render(rows, meta, fmt, COLUMNS if fmt == "table" else None,
                    header if fmt == "table" else None), out, overwrite)
