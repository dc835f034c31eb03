"""`occplan zones`: predicted resonance zones of a body over a radius range (thin layer)."""

from __future__ import annotations

from typing import Annotated

import typer

from .. import __version__
from ..bodies import get_body
from ..resonances import DEFAULT_MAX_M, find_resonances
from ..tables import check_format, check_out, emit, render
from . import options as o

COLUMNS = ["strong", "label", "satellite", "kind", "wave", "edge", "m", "order", "resonance_radius_km",
           "torque_per_sigma", "region", "propagation", "zone_inner_km", "zone_outer_km",
           "shortest_wavelength_km"]


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
        min_torque: Annotated[float | None, typer.Option("--min-torque", help="Drop resonances whose torque per unit surface density is below this, cm^4 s^-2.")] = None,
        sigma: Annotated[float | None, typer.Option("--sigma", help="Ring surface density, g/cm^2, for every region (default: each region's typical value).")] = None,
        viscosity: Annotated[float | None, typer.Option("--viscosity", help="Ring kinematic viscosity, cm^2/s, for wave damping (default: each region's value).")] = None,
        strongest: Annotated[int, typer.Option("--strongest", help="Mark this many of the strongest resonances (column 'strong').")] = 20,
        outside_rings: Annotated[bool, typer.Option("--outside-rings", help="Also list resonances that fall in no ring region (or in a gap).")] = False,
        fmt: o.Format = "table", out: o.Out = None, overwrite: o.Overwrite = False,
    ):
        """List satellite resonances in the rings: radius, strength and wave zone, by radius.

        Example: occplan zones --body saturn --rmin 120000 --rmax 137000 --max-order 2
        """
        fmt = check_format(fmt)
        check_out(out, overwrite)
        b = get_body(body)
        res = find_resonances(b, rmin_km=rmin, rmax_km=rmax, max_order=max_order,
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
        meta = {
            "occplan_version": __version__, "body": b.name, "body_file": b.path,
            "gravity_source": b.sources.get("gravity", ""),
            "rmin_km": rmin if rmin is not None else b.inner_ring_km,
            "rmax_km": rmax if rmax is not None else b.outer_ring_km,
            "max_order": max_order, "max_m": max_m,
            "satellites": list(satellite) if satellite else [s.name for s in b.satellites],
            "min_torque": min_torque, "sigma_override_g_cm2": sigma,
            "viscosity_override_cm2_s": viscosity,
            "units": {"torque_per_sigma": "cm4 / s2 (torque in dyn cm per g cm^-2)"},
            "strongest_marked": strongest,
            "outside_rings_listed": outside_rings,
        }
        header = (f"# {b.name}: {len(rows)} resonances, order <= {max_order}, m <= {max_m}; "
                  f"torque_per_sigma in cm^4 s^-2; strong = the {strongest} strongest by torque "
                  "(x region sigma)\n")
        if fmt == "table":
            for row in rows:
                row["strong"] = "*" if row["strong"] else ""
                row["edge"] = "edge" if row["edge"] else ""
                row["torque_per_sigma"] = f"{row['torque_per_sigma']:.2e}"
        emit(render(rows, meta, fmt, COLUMNS if fmt == "table" else None,
                    header if fmt == "table" else None), out, overwrite)
