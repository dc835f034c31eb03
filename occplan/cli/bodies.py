"""`occplan bodies`: the built-in ringed bodies and their ring regions."""

from __future__ import annotations

import typer

from . import options as o

_bodies = o.lazy("occplan.bodies")
_tables = o.lazy("occplan.tables")


def register(app: typer.Typer) -> None:
    @app.command("bodies")
    @o.user_errors
    def bodies(
        body: o.Body = "",
        fmt: o.Format = "table", out: o.Out = None, overwrite: o.Overwrite = False,
    ):
        """List the built-in bodies, or one body's ring regions and satellites with --body.

        Example: occplan bodies --body uranus
        """
        fmt = _tables.check_format(fmt)
        _tables.check_out(out, overwrite)
        if not body:
            rows = []
            for name in _bodies.builtin_names():
                b = _bodies.get_body(name)
                rows.append({"body": b.name, "gm_km3_s2": b.gm_km3_s2,
                             "equatorial_radius_km": b.equatorial_radius_km,
                             "rings": len(b.rings), "inner_ring_km": b.inner_ring_km,
                             "outer_ring_km": b.outer_ring_km, "satellites": len(b.satellites),
                             "zonal_harmonics": len(b.zonal_j)})
            _tables.emit(_tables.render(rows, {"bodies": _bodies.builtin_names()}, fmt), out, overwrite)
            return
        b = _bodies.get_body(body)
        rows = [{"kind": "ring", "name": r.name, "inner_km": r.inner_km, "outer_km": r.outer_km,
                 "surface_density_g_cm2": r.surface_density_g_cm2, "source": r.source}
                for r in b.rings]
        rows += [{"kind": "satellite", "name": s.name, "a_km": s.a_km, "gm_km3_s2": s.gm_km3_s2,
                  "mean_motion_deg_day": s.mean_motion_deg_day, "source": s.source}
                 for s in b.satellites]
        meta = {"body": b.name, "file": b.path, "sources": b.sources,
                "gm_km3_s2": b.gm_km3_s2, "reference_radius_km": b.reference_radius_km,
                "zonal_j": list(b.zonal_j)}
        header = (f"# {b.name}: GM {b.gm_km3_s2} km^3/s^2, R_eq {b.equatorial_radius_km} km, "
                  f"J2..J{2 * len(b.zonal_j)} at {b.reference_radius_km} km ({b.sources['gravity']})\n"
                  f"# pole: {b.sources['pole']}\n")
        cols = ["kind", "name", "inner_km", "outer_km", "a_km", "gm_km3_s2", "surface_density_g_cm2"]
        _tables.emit(_tables.render(rows, meta, fmt, cols if fmt == "table" else None,
                    header if fmt == "table" else None), out, overwrite)
