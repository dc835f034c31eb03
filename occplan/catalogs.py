"""Star catalogs and site files in.

Sites: a TOML file with ``[[sites]]`` tables (``name``, ``lat_deg``, ``lon_deg``,
``height_m``, optional ``telescope`` = path of a telescope TOML profile, optional
``min_altitude_deg``).
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass
from pathlib import Path

from .errors import DataFileError, InputError, UnknownNameError

SITE_KEYS = {"name", "lat_deg", "lon_deg", "height_m", "telescope", "min_altitude_deg", "note"}


@dataclass(frozen=True)
class Site:
    name: str
    lat_deg: float
    lon_deg: float
    height_m: float = 0.0
    telescope: str | None = None
    min_altitude_deg: float | None = None
    note: str = ""

    def observer(self):
        from .ephemeris import Observer

        return Observer.site(self.name, self.lat_deg, self.lon_deg, self.height_m)


def read_toml(path: str | Path, what: str) -> dict:
    p = Path(path)
    if not p.is_file():
        raise DataFileError(f"{what} file {str(p)!r} not found")
    try:
        return tomllib.loads(p.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as exc:
        raise DataFileError(f"{what} file {str(p)!r} is not valid TOML: {exc}") from None


def load_sites(path: str | Path) -> list[Site]:
    """All sites of a sites TOML file; telescope paths are resolved relative to the file."""
    data = read_toml(path, "sites")
    rows = data.get("sites")
    if not isinstance(rows, list) or not rows:
        raise DataFileError(f"sites file {str(path)!r} has no [[sites]] tables")
    out = []
    for i, row in enumerate(rows):
        unknown = set(row) - SITE_KEYS
        if unknown:
            raise DataFileError(f"sites file {str(path)!r}, site {i + 1}: unknown key(s) "
                                f"{', '.join(sorted(unknown))}; allowed: {', '.join(sorted(SITE_KEYS))}")
        for key in ("name", "lat_deg", "lon_deg"):
            if key not in row:
                raise DataFileError(f"sites file {str(path)!r}, site {i + 1}: missing {key!r}")
        tel = row.get("telescope")
        if tel is not None and not Path(tel).is_absolute():
            tel = str(Path(path).parent / tel)
        try:
            site = Site(str(row["name"]), float(row["lat_deg"]), float(row["lon_deg"]),
                        float(row.get("height_m", 0.0)), tel,
                        None if row.get("min_altitude_deg") is None else float(row["min_altitude_deg"]),
                        str(row.get("note", "")))
        except (TypeError, ValueError):
            raise DataFileError(f"sites file {str(path)!r}, site {i + 1}: a value is not a number") from None
        site.observer()  # range checks
        out.append(site)
    return out


def find_site(path: str | Path, name: str) -> Site:
    sites = load_sites(path)
    for s in sites:
        if s.name.lower() == str(name).lower():
            return s
    raise UnknownNameError(f"no site {name!r} in {path}; known: {', '.join(s.name for s in sites)}")


def check_magnitude(value, what: str):
    if value is None:
        return None
    v = float(value)
    if not -2.0 <= v <= 25.0:
        raise InputError(f"{what} magnitude {v} is outside -2..25")
    return v
