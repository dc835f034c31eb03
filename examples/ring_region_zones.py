"""List the ring features of one ring region (Saturn's A ring by default), strongest first.

    python examples/ring_region_zones.py [body] [region]

Uses occplan.features.body_features (the satellites' resonances turned into the features a
chord can record: density and bending waves that fit in the ring, resonance-held edges,
narrow rings, regions of overlapping resonances) and prints the 15 with the largest torque.
"""

import sys

from occplan.bodies import get_body
from occplan.features import body_features

body = get_body(sys.argv[1] if len(sys.argv) > 1 else "saturn")
region = body.ring(sys.argv[2] if len(sys.argv) > 2 else "A ring" if body.name == "Saturn"
                   else body.rings[-1].name)
feats = [f for f in body_features(body) if f.region == region.name and f.weight > 0]
feats.sort(key=lambda f: -f.torque_dyn_cm)
print(f"{body.name} {region.name} ({region.inner_km:,.0f}-{region.outer_km:,.0f} km, "
      f"sigma {region.surface_density_g_cm2} g/cm^2, tau {region.optical_depth}): "
      f"{len(feats)} features, strongest 15 by torque:")
print(f"{'feature':>42s} {'r km':>10s} {'zone km':>19s} {'amplitude':>9s} {'scale km':>8s} "
      f"{'torque dyn cm':>13s}")
for f in sorted(feats[:15], key=lambda f: f.resonance_radius_km):
    print(f"{f.name:>42s} {f.resonance_radius_km:10.1f} {f.zone_inner_km:9.1f}-{f.zone_outer_km:9.1f} "
          f"{f.amplitude:9.3g} {f.scale_km:8.2f} {f.torque_dyn_cm:13.3g}")
