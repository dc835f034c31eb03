"""Resonance radii and precession rates against published values (each with its source)."""

import numpy as np
import pytest

from occplan.bodies import get_body
from occplan.dynamics import apsidal_rate_rad_s
from occplan.resonances import find_resonances

DEG_DAY = np.pi / 180.0 / 86400.0

# (satellite, label, kind, published radius km, tolerance km, source and why)
SATURN_RADII = [
    ("Mimas", "2:1", "ILR", 117553.0, 10.0,
     "B ring outer edge (from memory); 10 km for gravity-field and n choices"),
    ("Janus", "6:5", "ILR", 134265.0, 25.0,
     "published wave radius (from memory); the Janus/Epimetheus swap moves it ~20 km"),
    ("Janus", "4:3", "ILR", 125270.0, 25.0,
     "Tiscareno et al. 2007, Icarus 189, 14, wave list (from memory); swap ~20 km"),
    ("Janus", "5:4", "ILR", 130700.0, 25.0,
     "Tiscareno et al. 2007, Icarus 189, 14 (from memory); swap ~20 km"),
    ("Janus", "7:6", "ILR", 136770.0, 25.0,
     "A ring outer edge held by Janus 7:6, French et al. 2016, Icarus 279, 62 (from memory); swap"),
    ("Janus", "2:1", "ILR", 96240.0, 30.0,
     "Janus 2:1 density wave in the B ring, Lissauer & Cuzzi 1982, AJ 87, 1051 (from memory)"),
    ("Mimas", "5:3", "ILR", 132300.0, 10.0,
     "Mimas 5:3 density wave, Esposito et al. 1983 / Tiscareno et al. 2007 (from memory)"),
    ("Mimas", "5:3", "IVR", 131900.0, 10.0,
     "Mimas 5:3 bending wave, Shu, Cuzzi & Lissauer 1983, Icarus 53, 185 (from memory)"),
    ("Titan", "1:0", "ILR", 77871.0, 25.0,
     "Titan ringlet (apsidally locked to Titan) at a = 77,871 km, Nicholson et al. 2014, "
     "Icarus 227, 152 (from memory); the ringlet sits within ~20 km of the resonance"),
]


@pytest.fixture(scope="module")
def saturn_resonances():
    return find_resonances("saturn", max_m=12, satellites=["Mimas", "Janus", "Titan"])


@pytest.mark.parametrize("sat,label,kind,radius,tol,source", SATURN_RADII)
def test_saturn_resonance_radii(saturn_resonances, sat, label, kind, radius, tol, source):
    hits = [x for x in saturn_resonances
            if x.satellite == sat and x.label == label and x.kind == kind and (x.k, x.p) in
            ((0, 0), (1, 0), (0, 1))]
    assert len(hits) == 1, source
    assert hits[0].resonance_radius_km == pytest.approx(radius, abs=tol), source


def test_saturn_apsidal_rate_at_b_ring_edge():
    # Nicholson et al. 2014, Icarus 227, 152: pomegadot ~ 5.059 deg/day near 117,570 km.
    # 0.003 deg/day covers the difference between their gravity field and the body file's.
    rate = apsidal_rate_rad_s(get_body("saturn"), 117570.0) / DEG_DAY
    assert rate == pytest.approx(5.059, abs=0.003)


# Uranus: edges of narrow rings held by Cordelia and Ophelia (Porco & Goldreich 1987, AJ 93,
# 724; French et al. 2024, arXiv:2401.04634).  Ring semi-major axes and mean widths from
# French et al. 1988, Icarus 73, 349 (from memory): epsilon a = 51149.3, W = 58.0 km; delta
# a = 48300.1, W = 4.5 km; gamma a = 47626.9 km.  Tolerance 5 km: the published resonances
# lie within a few km of the edges and the satellites' mean motions are known to ~1e-4 deg/day.
URANUS_RADII = [
    ("Cordelia", "25:24", "OLR", 51149.3 - 58.0 / 2, "epsilon ring inner edge"),
    ("Ophelia", "14:13", "ILR", 51149.3 + 58.0 / 2, "epsilon ring outer edge"),
    ("Cordelia", "23:22", "ILR", 48300.1 + 4.5 / 2, "delta ring outer edge"),
    ("Ophelia", "6:5", "ILR", 47626.9, "gamma ring"),
]


@pytest.mark.parametrize("sat,label,kind,radius,what", URANUS_RADII)
def test_uranus_ring_edges(sat, label, kind, radius, what):
    res = find_resonances("uranus", rmin_km=47000, rmax_km=52000, max_order=1, max_m=30,
                          satellites=[sat])
    hits = [x for x in res if x.label == label and x.kind == kind]
    assert len(hits) == 1, what
    assert hits[0].resonance_radius_km == pytest.approx(radius, abs=5.0), what
