"""The feature catalogue: waves inside their rings, resonance-held edges, narrow rings, the
strongest features of Saturn, and the linear wave amplitude against a handbook route."""

from __future__ import annotations

import math

import numpy as np
import pytest

from occplan.bodies import get_body
from occplan.features import body_features, load_settings, segments, wave_amplitude

G_CGS = 6.67430e-8


@pytest.fixture(scope="module")
def saturn_features():
    return body_features("saturn")


@pytest.fixture(scope="module")
def uranus_features():
    return body_features("uranus")


def _named(feats, name):
    hits = [f for f in feats if f.name == name]
    assert len(hits) == 1, (name, [f.name for f in feats if name.split()[0] in f.name][:10])
    return hits[0]


def test_a_few_hundred_features_not_thousands(saturn_features):
    """Saturn's resonance catalogue (~15,000 terms of order <= 3, m <= 200) becomes a few
    hundred features, with unique names."""
    assert 100 < len(saturn_features) < 600
    names = [f.name for f in saturn_features]
    assert len(set(names)) == len(names)


def test_every_wave_lies_inside_its_ring_segment():
    """Wave zones are clipped at region and gap edges (Epimetheus 7:6 ran 128 km beyond the
    A ring; Mimas 4:2 ran into the Cassini Division)."""
    for name in ("saturn", "uranus", "neptune"):
        body = get_body(name)
        segs = segments(body, load_settings())
        for f in body_features(body):
            if f.feature not in ("density wave", "bending wave", "overlap region"):
                continue
            inside = [s for s in segs if s.region == f.region
                      and s.inner_km - 1e-6 <= f.zone_inner_km and f.zone_outer_km <= s.outer_km + 1e-6]
            assert inside, (name, f.name, f.zone_inner_km, f.zone_outer_km)
    a_ring = get_body("saturn").ring("A ring")
    for f in body_features("saturn"):
        if f.region == "A ring" and "wave" in f.feature:
            assert f.zone_outer_km <= a_ring.outer_km + 1e-6, f.name


def test_no_wave_where_the_ring_cannot_carry_it():
    """Launch criterion: the wave completes its first wavelength before viscous damping,
    x_D >= x_1 (linear theory, Goldreich & Tremaine 1978; Shu 1984).  Dusty rings (Neptune's
    Galle, Lassell and Le Verrier rings, sigma <= 0.01 g/cm^2) and narrow rings thinner than
    the wave hold none."""
    for name in ("saturn", "uranus", "neptune"):
        for f in body_features(name):
            if f.feature in ("density wave", "bending wave"):
                assert f.damping_length_km >= f.first_wavelength_km, f.name
                assert f.width_km >= f.first_wavelength_km - 1e-6, f.name
                assert f.surface_density_g_cm2 > 0.1, f.name
    neptune = body_features("neptune")
    assert not [f for f in neptune if f.feature in ("density wave", "bending wave")]
    # the gamma ring (3.6 km) carries no Ophelia 6:5 wave: the resonance holds its edge
    uranus = body_features("uranus")
    assert not [f for f in uranus if f.region == "gamma ring" and "wave" in f.feature]


def test_strongest_features_do_not_depend_on_the_m_bound():
    """Doubling the m bound (200 -> 400) adds Pan and Atlas terms near their orbits, which
    join the overlap regions; the 30 strongest features stay the same."""
    def top(feats):
        return [f.name for f in sorted(feats, key=lambda f: (-f.weight, -f.torque_dyn_cm))[:30]]

    assert top(body_features("saturn", max_m=200)) == top(body_features("saturn", max_m=400))


def test_strongest_saturn_features_are_the_textbook_ones(saturn_features):
    """The features a ring scientist expects at the top (from memory: Cassini and Voyager
    occultation profiles; Tiscareno et al. 2007, Icarus 189, 14; Colwell et al. 2009)."""
    strongest = sorted(saturn_features, key=lambda f: -f.torque_dyn_cm)[:12]
    names = {f.name for f in strongest}
    for expected in ("Mimas 2:1 edge", "Janus/Epimetheus 7:6 edge",
                     "Janus/Epimetheus 6:5 density wave", "Janus/Epimetheus 4:3 density wave",
                     "Mimas 5:3 density wave", "Janus/Epimetheus 5:4 density wave"):
        assert expected in names, (expected, sorted(names))
    # nonlinear where the literature finds them nonlinear (Mimas 5:3, Janus 6:5: from memory)
    for name in ("Mimas 5:3 density wave", "Janus/Epimetheus 6:5 density wave"):
        assert _named(saturn_features, name).amplitude > 1
    # the Mimas 5:3 bending wave is listed (Shu, Cuzzi & Lissauer 1983)
    bend = _named(saturn_features, "Mimas 5:3 bending wave")
    assert bend.propagation == "inward" and bend.zone_outer_km == pytest.approx(bend.resonance_radius_km)


@pytest.mark.parametrize("edge_name, region_edge_km, source", [
    ("Mimas 2:1 edge", 117570.0, "B ring outer edge; Porco et al. 1984, Icarus 60, 1 (from memory)"),
    ("Janus/Epimetheus 7:6 edge", 136770.0,
     "A ring outer edge; El Moutamid et al. 2016 / French et al. 2016 (from memory)"),
    ("Prometheus 32:31 edge", 136484.9,
     "Keeler gap inner edge, 32-lobed; Tajeddine et al. 2017 (from memory)"),
])
def test_saturn_resonance_held_edges(saturn_features, edge_name, region_edge_km, source):
    f = _named(saturn_features, edge_name)
    assert f.feature == "edge" and f.weight == 1.0, source
    assert abs(f.resonance_radius_km - region_edge_km) < 30.0, source
    assert f.zone_inner_km <= region_edge_km <= f.zone_outer_km, source
    # the light curve shows the edge, not the resonance: the feature is timed at the edge
    assert f.edge_radius_km == pytest.approx(region_edge_km, abs=0.1), source
    assert f.timing_radius_km == f.edge_radius_km


def test_chance_alignments_are_not_holders(saturn_features):
    """Pan 31:30 lies 10 km from the Keeler gap's outer edge in a comb of Pan terms 98 km
    apart (chance 2 d / S = 0.20) and Pandora 18:17 28 km from its inner edge (0.19): neither
    is a published holder of those edges (Tajeddine et al. 2017 find the Keeler inner edge
    held by Prometheus 32:31, from memory), and neither is listed as an edge."""
    names = {f.name for f in saturn_features if f.feature == "edge"}
    assert "Pan 31:30 edge" not in names and "Pandora 18:17 edge" not in names
    assert "Prometheus 32:31 edge" in names


def test_galatea_holds_the_adams_ring():
    """The Adams ring's 42-lobed distortion is forced by Galatea's 42:43 outer Lindblad
    resonance (Porco 1991, Science 253, 995; 43:42 in occplan's faster:slower labels), a
    term in a comb 23 km apart that the ring's mean radius matches within 2 km."""
    adams = _named(body_features("neptune"), "Adams ring")
    assert any(t.startswith("Galatea 43:42 OLR") for t in adams.terms), adams.terms


@pytest.mark.parametrize("ring, held_by, source", [
    ("epsilon ring", ("Cordelia 25:24 OLR", "Ophelia 14:13 ILR"),
     "French et al. 2024, arXiv:2401.04634; Porco & Goldreich 1987, AJ 93, 724"),
    ("eta ring", ("Cressida 3:2 ILR",), "Chancia et al. 2017, AJ 154, 153 (from memory)"),
    ("delta ring", ("Cordelia 23:22 ILR",), "Porco & Goldreich 1987, AJ 93, 724 (from memory)"),
    ("gamma ring", ("Ophelia 6:5 ILR",), "Porco & Goldreich 1987, AJ 93, 724 (from memory)"),
])
def test_uranus_narrow_rings_and_their_edges(uranus_features, ring, held_by, source):
    """Each narrow ring is one feature holding the resonances at its edges (the epsilon
    ring's Cordelia 24:25 in the ring literature's inner-satellite order is the 25:24 OLR
    here, faster:slower)."""
    f = _named(uranus_features, ring)
    assert f.feature == "narrow ring" and f.weight == 1.0
    for term in held_by:
        assert any(t.startswith(term) for t in f.terms), (source, f.terms)


def test_uranus_rings_are_ten_features(uranus_features):
    rings = [f for f in uranus_features if f.feature == "narrow ring"]
    assert len(rings) == 10
    # the edge resonances are inside the ring features, not separate edges
    assert not [f for f in uranus_features if f.feature == "edge"]


def test_wave_amplitude_against_the_potential_route():
    """Handbook route (Binney & Tremaine 2008, sec. 6.2, from memory): a tightly wound wave
    with potential amplitude Phi_a = 2 pi G sigma_1 / |k| carries F = m r Phi_a^2 / (4 G);
    set F to the torque T and solve for sigma_1 at the peak x = x_D / 3^(1/3), with the
    damping factor exp(-1/3) applied to the amplitude.  Cgs units throughout."""
    t_per_sigma, m, r_km, sigma, x1, xd = 3.0e17, 5, 132000.0, 40.0, 40.0, 150.0
    ell = x1 / (2 * math.sqrt(math.pi)) * 1e5  # cm
    x = xd / 3 ** (1 / 3) * 1e5
    k = x / ell**2
    torque = t_per_sigma * sigma
    phi_a = math.sqrt(4 * G_CGS * torque / (m * r_km * 1e5))
    sigma1 = phi_a * k / (2 * math.pi * G_CGS) * math.exp(-1 / 3)
    got = wave_amplitude(t_per_sigma, m, r_km, sigma, x1, xd)
    assert got == pytest.approx(sigma1 / sigma, rel=1e-12)
    # the amplitude grows with the square root of the torque and is capped at an edge
    assert wave_amplitude(4 * t_per_sigma, m, r_km, sigma, x1, xd) == pytest.approx(2 * got)
    near = wave_amplitude(t_per_sigma, m, r_km, sigma, x1, xd, reach_km=20.0)
    assert near < got


def test_co_orbitals_and_harmonics_are_one_feature(saturn_features, uranus_features):
    """Janus and Epimetheus share one feature per commensurability; Ophelia 14:13 and its
    harmonics 28:26, 42:39 (within a few km) are one."""
    assert not [f for f in saturn_features if f.satellite in ("Janus", "Epimetheus")]
    j65 = _named(saturn_features, "Janus/Epimetheus 6:5 density wave")
    assert any(t.startswith("Janus 6:5") for t in j65.terms)
    assert any(t.startswith("Epimetheus 6:5") for t in j65.terms)
    eps = _named(uranus_features, "epsilon ring")
    assert not [f for f in uranus_features if f.satellite == "Ophelia" and f.label in ("28:26", "42:39")
                and f.feature == "density wave"]
    assert np.isfinite(eps.resonance_radius_km)


def test_catalogue_from_the_terms_near_the_rings_is_the_same():
    """body_features asks only for terms inside a region or within the edge tolerance of an
    edge (the rest are most of the cost); the features are the same as from every term."""
    from occplan.features import derive_features
    from occplan.resonances import find_resonances

    body = get_body("uranus")
    every = derive_features(body, find_resonances(body))
    near = body_features(body)
    assert [(f.name, f.torque_dyn_cm) for f in every] == [(f.name, f.torque_dyn_cm) for f in near]


def test_janus_epimetheus_configuration_follows_the_date():
    """Janus was on the inner orbit 2006-2010 and the outer 2010-2014 (El Moutamid et al.
    2016; swap on 2010-01-21): its 6:5 ILR lies farther in when Janus is outer (slower)
    and the co-orbital feature moves by tens of km; Epimetheus moves the other way."""
    from occplan.resonances import find_resonances

    saturn = get_body("saturn")
    radii = {}
    for label, jd in (("2008", 2454466.5), ("2012", 2455927.5)):
        res = find_resonances(saturn.at_epoch(jd), rmin_km=134000, rmax_km=134600,
                              satellites=["Janus", "Epimetheus"], max_order=1, max_m=10)
        radii[label] = {(r.satellite, r.kind): r.resonance_radius_km for r in res if r.label == "6:5"}
    d_janus = radii["2012"][("Janus", "ILR")] - radii["2008"][("Janus", "ILR")]
    d_epi = radii["2012"][("Epimetheus", "ILR")] - radii["2008"][("Epimetheus", "ILR")]
    # a moves by +21 km (Janus) and -75 km (Epimetheus); the resonance follows a
    assert 10 < d_janus < 30 and -90 < d_epi < -55
    f08 = [f for f in body_features(saturn, epoch_jd_tdb=2454466.5)
           if f.name == "Janus/Epimetheus 6:5 density wave"][0]
    f12 = [f for f in body_features(saturn, epoch_jd_tdb=2455927.5)
           if f.name == "Janus/Epimetheus 6:5 density wave"][0]
    assert f08.resonance_radius_km != f12.resonance_radius_km
