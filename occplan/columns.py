"""The unit of every physical column occplan writes, and which columns are times.

One explicit table (no guessing from name suffixes): ECSV, VOTable-ready astropy tables and
the ``.to_table()`` results carry these units, and the time columns (UTC ISO 8601 strings in
the rows) become :class:`astropy.time.Time` columns that round-trip through ``QTable.read``.
A column that is not listed has no unit; dimensionless numbers (scores, fractions,
amplitudes, optical depths, m, k, p) are listed with an empty unit.
"""

from __future__ import annotations

COLUMN_UNITS = {
    # lengths
    **{c: "km" for c in (
        "ring_radius_km", "sky_f_km", "sky_g_km", "resonance_radius_km", "crossing_radius_km",
        "zone_inner_km",
        "zone_outer_km", "first_wavelength_km", "damping_length_km", "shortest_wavelength_km",
        "scale_km", "feature_scale_km", "achievable_resolution_km", "resolved_extent_km",
        "min_ring_radius_km", "geocentric_min_ring_radius_km", "sky_distance_km",
        "boundary_km", "radius_km", "best_resolution_km", "planet_sky_km", "location_sigma_km",
        "edge_radius_km")},
    "distance_au": "AU",
    # angles
    **{c: "deg" for c in (
        "ring_longitude_deg", "opening_angle_deg", "star_elevation_deg",
        "pole_position_angle_deg", "sun_opening_angle_deg", "planet_ra_deg", "planet_dec_deg",
        "star_ra_deg", "star_dec_deg", "ra_deg", "dec_deg", "lat_deg", "lon_deg",
        "planet_altitude_min_deg", "sun_altitude_max_deg", "ingress_longitude_deg",
        "egress_longitude_deg")},
    **{c: "arcsec" for c in ("planet_radius_arcsec", "outer_ring_radius_arcsec")},
    "star_parallax_mas": "mas",
    # rates
    **{c: "km / s" for c in ("radial_velocity_km_s", "star_rv_km_s")},
    **{c: "mas / yr" for c in ("star_pm_ra_mas_yr", "star_pm_dec_mas_yr")},
    "pattern_speed_deg_day": "deg / d",
    "longitude_rate_deg_s": "deg / s",
    # times as durations
    **{c: "s" for c in ("required_interval_s", "time_sigma_s", "start_sigma_s", "end_sigma_s")},
    "star_epoch_jd_tt": "d",
    # physics
    "torque_dyn_cm": "dyn cm",
    "torque_per_sigma": "cm4 / s2",
    "surface_density_g_cm2": "g / cm2",
    **{c: "mag" for c in ("vmag", "kmag")},
    # dimensionless
    **{c: "" for c in (
        "amplitude", "weight", "optical_depth", "transmission", "contrast", "snr_per_element",
        "resolved_fraction", "score", "potential_score", "score_ingress", "score_egress",
        "marginal_gain", "combined_score", "m", "k", "p", "order")},
}

# UTC time columns (ISO 8601 strings with Z in the rows; Time columns in astropy tables)
TIME_COLUMNS = frozenset((
    "time_utc", "start_utc", "end_utc", "closest_approach_utc", "crossing_start_utc",
    "crossing_end_utc", "geocentric_closest_approach_utc", "window_start_utc",
    "window_end_utc"))


def unit_of(column: str) -> str | None:
    """The column's unit ('' dimensionless, None not a physical column)."""
    return COLUMN_UNITS.get(column)
