"""List the strongest resonance zones in one ring region (Saturn's A ring by default).

    python examples/ring_region_zones.py [body] [region]

Uses occplan.resonances.find_resonances over the region's radial span and prints the
strongest density waves, bending waves and resonance-held edges with their wave zones.
"""

import sys

from occplan.bodies import get_body
from occplan.resonances import find_resonances

body = get_body(sys.argv[1] if len(sys.argv) > 1 else "saturn")
region = body.ring(sys.argv[2] if len(sys.argv) > 2 else body.rings[-2].name)
zones = [r for r in find_resonances(body, region.inner_km, region.outer_km, max_order=2)
         if r.wave != "none" or r.edge]
zones.sort(key=lambda r: -r.torque_per_sigma)
print(f"{body.name} {region.name} ({region.inner_km:,.0f}-{region.outer_km:,.0f} km, "
      f"sigma {region.surface_density_g_cm2} g/cm^2): {len(zones)} waves and edges, strongest 15:")
print(f"{'satellite':>11s} {'label':>7s} {'kind':>4s} {'wave':>8s} {'r_res km':>10s} "
      f"{'zone km':>19s} {'lambda_min km':>13s} {'torque/sigma':>12s}")
for r in sorted(zones[:15], key=lambda r: r.resonance_radius_km):
    print(f"{r.satellite:>11s} {r.label:>7s} {r.kind:>4s} {'edge' if r.edge else r.wave:>8s} "
          f"{r.resonance_radius_km:10.1f} {r.zone_inner_km:9.1f}-{r.zone_outer_km:9.1f} "
          f"{r.shortest_wavelength_km:13.2f} {r.torque_per_sigma:12.3g}")
