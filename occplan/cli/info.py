"""`occplan info`: versions, kernels and their coverage (each kernel checked), time-scale data."""

from __future__ import annotations

import json
import platform

import typer

from .. import __version__
from . import options as o

_ephemeris = o.lazy("occplan.ephemeris")


def register(app: typer.Typer) -> None:
    @app.command("info")
    @o.user_errors
    def info(kernel: o.Kernel = None, fmt: o.Format = "table"):
        """Versions, loaded kernels with their coverage, and the time-scale data in use.

        Example: occplan info --kernel sat441.bsp
        """
        import astropy
        import astropy_iers_data
        import numpy
        import scipy
        import shapely
        import skyfield

        if fmt not in ("table", "json"):
            from ..errors import InputError

            raise InputError(f"--format {fmt!r}: occplan info writes table or json")
        eph = _ephemeris.get_ephemeris(tuple(str(k) for k in (kernel or [])))
        data = {
            "occplan": __version__, "python": platform.python_version(),
            "packages": {"skyfield": skyfield.__version__, "numpy": numpy.__version__,
                         "scipy": scipy.__version__, "astropy": astropy.__version__,
                         "astropy-iers-data": astropy_iers_data.__version__,
                         "shapely": shapely.__version__},
            "kernels": eph.kernels(),
            **_ephemeris.time_scale_info(),
        }
        if fmt == "json":
            typer.echo(json.dumps(data, indent=1))
            return
        typer.echo(f"occplan {data['occplan']} (Python {data['python']})")
        typer.echo("packages: " + ", ".join(f"{k} {v}" for k, v in data["packages"].items()))
        for k in data["kernels"]:
            typer.echo(f"kernel {k['file']} ({k['source']}): covers {k['start_tdb']} .. "
                       f"{k['end_tdb']} TDB, NAIF ids {', '.join(map(str, k['targets']))}  "
                       f"({k['path']})")
        typer.echo(f"time scale: {data['time_scale']}; TAI-UTC {data['tai_minus_utc_s']:.0f} s "
                   f"since {data['last_leap_second_utc']}")
        typer.echo(f"Earth orientation: {data['earth_orientation']}")
        typer.echo(f"Earth orientation today: {data['earth_orientation_now']}")
