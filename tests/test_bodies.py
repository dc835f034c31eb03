"""The built-in body catalog: every file loads, is sourced, ordered and self-consistent."""

import itertools
import math
from importlib import resources

import numpy as np
import pytest

from occplan.bodies import builtin_names, get_body, load_body_file
from occplan.errors import DataFileError, UnknownNameError

SECONDS_PER_DAY = 86400.0
BODIES = ("jupiter", "saturn", "uranus", "neptune")


def test_all_giant_planets_are_built_in():
    assert set(BODIES) <= set(builtin_names())


@pytest.mark.parametrize("name", BODIES)
def test_body_loads_with_naif_ids(name):
    body = get_body(name)
    # NAIF convention (NAIF ids required reading): planet = 100 * barycentre + 99.
    assert body.naif_id == 100 * body.barycentre_naif_id + 99
    assert body.gm_km3_s2 > 0 and body.reference_radius_km > 0
    assert body.polar_radius_km < body.equatorial_radius_km
    assert len(body.zonal_j) >= 2
    assert body.zonal_j[0] > 0  # oblate planets: J2 > 0 (common practice)


@pytest.mark.parametrize("name", BODIES)
def test_every_table_has_a_source(name):
    body = get_body(name)
    for key in ("gravity", "shape", "pole"):
        assert body.sources[key].strip(), f"{name} [{key}] has no source"
    for ring in body.rings:
        assert ring.source.strip(), f"{name} ring {ring.name} has no source"
    for sat in body.satellites:
        assert sat.source.strip(), f"{name} satellite {sat.name} has no source"
        if sat.mean_elements is not None:
            assert sat.mean_elements.source.strip(), f"{sat.name} mean elements have no source"
    if body.photometry:
        assert str(body.photometry.get("source", "")).strip()


@pytest.mark.parametrize("name", BODIES)
def test_ring_regions_ordered_and_disjoint(name):
    body = get_body(name)
    # Ringlets lie inside a gap of a broader region; the broad regions are disjoint.
    ringlets = set(body.ringlets_in_gaps)
    broad = [r for r in body.rings if r not in ringlets]
    for inner, outer in itertools.pairwise(broad):
        # Adjacent regions may touch (shared boundary) but must not overlap.
        assert inner.outer_km <= outer.inner_km, f"{inner.name} overlaps {outer.name}"
    gaps = sorted(body.gaps, key=lambda g: g.inner_km)
    for a, b in itertools.pairwise(gaps):
        assert a.outer_km <= b.inner_km, f"{a.name} overlaps {b.name}"
    for ring in ringlets:
        assert ring.edge_a_km[0] < ring.edge_a_km[1]
    rings = body.rings
    for ring in rings:
        assert ring.surface_density_g_cm2 > 0 and ring.viscosity_cm2_s > 0
        assert ring.optical_depth > 0


@pytest.mark.parametrize("name", BODIES)
def test_rings_outside_planet_and_inside_roche_zone_of_satellites(name):
    body = get_body(name)
    assert body.inner_ring_km > body.equatorial_radius_km
    # Every ring region lies inside the orbit of the outermost listed satellite.
    assert body.outer_ring_km < max(s.a_km for s in body.satellites)


@pytest.mark.parametrize("name", BODIES)
def test_satellites_positive_and_sorted(name):
    sats = get_body(name).satellites
    assert [s.a_km for s in sats] == sorted(s.a_km for s in sats)
    for s in sats:
        assert s.gm_km3_s2 > 0 and s.a_km > 0 and 0 <= s.e < 1
        assert s.mean_motion_deg_day > 0


@pytest.mark.parametrize("name", BODIES)
def test_kepler_third_law(name):
    """n^2 a^3 = GM (Kepler's third law, common practice).

    Tolerance 3 %: the planet's J2 raises n by ~(3/4) J2 (R/a)^2 (< 1.5 % at the inner
    moons of Jupiter and Saturn) and the satellite's own mass adds GM_s / GM_p (< 0.03 %
    except Triton, 0.02 %).  The mean elements' own n is checked the same way.
    """
    body = get_body(name)
    for s in body.satellites:
        kepler = math.degrees(math.sqrt((body.gm_km3_s2 + s.gm_km3_s2) / s.a_km**3))
        kepler *= SECONDS_PER_DAY
        assert s.mean_motion_deg_day == pytest.approx(kepler, rel=0.03), s.name
        if s.mean_elements is not None:
            me = s.mean_elements
            kepler_me = SECONDS_PER_DAY * math.degrees(
                math.sqrt((body.gm_km3_s2 + s.gm_km3_s2) / me.a_km**3)
            )
            assert me.mean_motion_deg_day == pytest.approx(kepler_me, rel=0.03), s.name
            # Same orbit in the two tables (rounded values): a within 0.5 %.
            assert me.a_km == pytest.approx(s.a_km, rel=5e-3), s.name


def test_uranus_pole_is_the_angular_momentum_pole():
    """Uranus' ring-plane normal used by occplan is the antipode of the IAU pole.

    IAU pole RA 257.311, Dec -15.175 (Archinal et al. 2018); the rings orbit retrograde about
    it, so the angular-momentum pole is (77.311, +15.175), as French et al. 2024 fit it.
    """
    n = get_body("uranus").pole.unit_vector(2451545.0)
    ra, dec = np.radians(257.311), np.radians(-15.175)
    iau = np.array([np.cos(dec) * np.cos(ra), np.cos(dec) * np.sin(ra), np.sin(dec)])
    assert np.degrees(np.arccos(-np.dot(n, iau))) < 0.05  # 0.05 deg: rounding of both


def test_neptune_pole_periodic_term():
    """At N = 90 deg the IAU Neptune pole is RA 299.36 + 0.70, Dec 43.46 (Archinal et al. 2018)."""
    pole = get_body("neptune").pole
    t_cy = (90.0 - 357.85) / 52.316
    ra, dec = pole.radec_rad(2451545.0 + 36525.0 * t_cy)
    assert np.degrees(ra) == pytest.approx(300.06, abs=1e-6)
    assert np.degrees(dec) == pytest.approx(43.46, abs=1e-6)


def test_jupiter_pole_near_iau_constant_term():
    """The periodic terms of Jupiter's IAU pole stay below 0.006 deg (sum of amplitudes)."""
    pole = get_body("jupiter").pole
    ra, dec = pole.radec_rad(np.linspace(2415020.0, 2488070.0, 2000))
    t_cy = (np.linspace(2415020.0, 2488070.0, 2000) - 2451545.0) / 36525.0
    assert np.max(np.abs(np.degrees(ra) - (268.056595 - 0.006499 * t_cy))) < 0.0047
    assert np.max(np.abs(np.degrees(dec) - (64.495303 + 0.002413 * t_cy))) < 0.0021


def test_retrograde_triton():
    triton = get_body("neptune").satellite("Triton")
    assert 150 < triton.i_deg < 160 and 150 < triton.mean_elements.inclination_deg < 160


def test_unknown_body_name():
    with pytest.raises(UnknownNameError, match="built-in bodies"):
        get_body("Pluto")


def test_bad_body_files(tmp_path):
    missing = tmp_path / "nope.toml"
    with pytest.raises(DataFileError, match="not found"):
        load_body_file(missing)
    bad_toml = tmp_path / "bad.toml"
    bad_toml.write_text("name = \n", encoding="utf-8")
    with pytest.raises(DataFileError, match="not valid TOML"):
        get_body(str(bad_toml))
    no_gravity = tmp_path / "nogravity.toml"
    no_gravity.write_text('name = "X"\nnaif_id = 999\nbarycentre_naif_id = 9\n', encoding="utf-8")
    with pytest.raises(DataFileError, match="gravity"):
        get_body(str(no_gravity))
    # A ring with inner > outer and a mean-elements table with an unknown key.
    text = (resources.files("occplan") / "data" / "bodies" / "saturn.toml").read_text()
    flipped = tmp_path / "flipped.toml"
    flipped.write_text(text.replace("inner_km = 66900.0", "inner_km = 80000.0"), encoding="utf-8")
    with pytest.raises(DataFileError, match="inner_km < outer_km"):
        get_body(str(flipped))
    extra = tmp_path / "extra.toml"
    bad_key = text.replace("epoch_jd_tdb = 2451545.0", "epoch_jd_tdb = 2451545.0\nfoo = 1", 1)
    extra.write_text(bad_key, encoding="utf-8")
    with pytest.raises(DataFileError):
        get_body(str(extra))
