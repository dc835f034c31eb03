"""occplan: plan stellar occultations by planetary rings.

Importing the package loads nothing: kernels and time scales are opened on first use
by :mod:`occplan.ephemeris`, and the public API below is imported on first access
(module-level ``__getattr__``).
"""

__version__ = "0.1.0"

# name -> module that defines it (imported lazily)
_API = {
    "chord": "occplan.chords", "aspect": "occplan.chords",
    "evaluate_event": "occplan.events",
    "body_features": "occplan.features", "features_table": "occplan.features",
    "evaluate_network": "occplan.network", "choose_stations": "occplan.network",
    "find_events": "occplan.search",
    "score_events": "occplan.ranking", "rank_rows": "occplan.ranking",
    "read_catalog": "occplan.catalogs", "read_catalog_table": "occplan.catalogs",
    "catalog_star": "occplan.catalogs", "load_sites": "occplan.catalogs",
    "StarSpec": "occplan.ephemeris", "Observer": "occplan.ephemeris",
    "get_body": "occplan.bodies",
    "tdb_seconds": "occplan.astro", "star_spec": "occplan.astro", "observer": "occplan.astro",
}

__all__ = ["__version__", *_API]


def __getattr__(name):
    module = _API.get(name)
    if module is None:
        raise AttributeError(f"module 'occplan' has no attribute {name!r}")
    import importlib

    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__():
    return sorted(__all__)
