"""Evaluate one candidate occultation of an (invented) star by Saturn's rings from a site.

    python examples/evaluate_event.py

Prints the one-screen summary of `occplan event`, then a few numbers read from the report.
"""

from occplan.bodies import get_body
from occplan.ephemeris import Observer, StarSpec
from occplan.events import evaluate_event, summary_text
from occplan.telescope import load_telescope

saturn = get_body("saturn")
star = StarSpec(ra_deg=23.9962, dec_deg=7.4700, vmag=10.2, kmag=6.9, name="invented example star")
site = Observer.site("invented example site", lat_deg=-22.0, lon_deg=50.0, height_m=1200.0)
telescope = load_telescope(aperture_m=1.5, band="K", cadence_s=0.05)

report = evaluate_event(saturn, star, site, ("2027-06-14T23:50Z", "2027-06-15T01:20Z"),
                        telescope=telescope)
print(summary_text(report))

resolvable = [z for z in report.zones if z.resolvable]
print(f"{len(resolvable)} of {len(report.zones)} feature crossings resolvable with a "
      f"{telescope.cadence_s} s cadence in {telescope.band}")
fastest = max(report.zones, key=lambda z: z.max_radial_speed_km_s)
print(f"fastest radial sweep: {fastest.max_radial_speed_km_s:.1f} km/s "
      f"({fastest.feature.name}, {fastest.side})")
