"""Rank a month of candidate Saturn ring occultations for one station of the demo scenario.

    python examples/rank_season.py

Reads the demo's synthetic catalog and invented stations, searches October 2028, scores
every event by the ring features it resolves and prints the five best with their factors.
"""

from occplan.bodies import get_body
from occplan.catalogs import load_sites, read_catalog_table
from occplan.demo import scenario_dir
from occplan.ranking import event_rows, rank_rows, score_events
from occplan.search import find_events

here = scenario_dir()
saturn = get_body("saturn")
catalog = read_catalog_table(here / "demo_catalog.ecsv")
station = [s for s in load_sites(here / "stations.toml") if s.name == "Altair Ridge"]

found = find_events(saturn, catalog, ("2028-10-01T00:00Z", "2028-11-01T00:00Z"), station,
                    progress=False)
score_events(found, progress=False)
ranked = rank_rows(event_rows(found))
print(f"{len(found.candidates)} candidate stars, {len(ranked)} events at {station[0].name}")
print(f"{'#':>2} {'star':>18} {'closest approach':>24} {'r_min km':>9} {'feat.':>5} "
      f"{'resolv.':>7} {'both':>4} {'score':>6}  deciding features")
for row in ranked[:5]:
    print(f"{row['rank']:2d} {row['star_id']:>18} {row['closest_approach_utc']:>24} "
          f"{row['min_ring_radius_km']:9.0f} {row['features_crossed']:5d} "
          f"{row['features_resolvable']:7d} {row['features_both_sides']:4d} {row['score']:6.2f}  "
          f"{row['deciding_features']}")
