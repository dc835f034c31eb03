"""Resonance enumeration, forcing potentials, torques, wave zones and edges."""

import dataclasses

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.optimize import brentq

from occplan.bodies import get_body
from occplan.dynamics import frequencies, separation_coefficient
from occplan.errors import InputError, UnknownNameError
from occplan.resonances import (
    Resonance,
    find_resonances,
    forcing_potentials,
    resonance_terms,
    wave_zones,
)

SATURN = get_body("saturn")
G = 6.67430e-20


def _kepler_body():
    """Saturn without zonal harmonics, Mimas on the Keplerian mean motion of its a."""
    body = dataclasses.replace(SATURN, zonal_j=())
    mimas = SATURN.satellite("Mimas")
    n_deg_day = np.degrees(np.sqrt(SATURN.gm_km3_s2 / mimas.a_km**3)) * 86400.0
    mimas = dataclasses.replace(mimas, mean_motion_deg_day=n_deg_day)
    return dataclasses.replace(body, satellites=(mimas,))


def test_keplerian_two_to_one_radius():
    # analytic: with J = 0 the 2:1 ILR sits at exactly 2^(-2/3) a (common practice)
    body = _kepler_body()
    a = body.satellites[0].a_km
    res = find_resonances(body, rmin_km=80000, rmax_km=180000, max_order=1)
    two_one = [x for x in res if x.label == "2:1" and x.kind == "ILR"]
    assert len(two_one) == 1
    assert two_one[0].resonance_radius_km == pytest.approx(a * 2 ** (-2 / 3), abs=1e-6)
    three_two = [x for x in res if x.label == "3:2" and x.kind == "ILR"][0]
    assert three_two.resonance_radius_km == pytest.approx(a * (2 / 3) ** (2 / 3), abs=1e-6)
    # outer 1:2 (label 2:1 OLR, m = 1, indirect term) at 2^(2/3) a is outside this range
    outer = find_resonances(body, rmin_km=250000, rmax_km=320000, max_order=1)
    olr = [x for x in outer if x.kind == "OLR" and x.m == 1][0]
    assert olr.resonance_radius_km == pytest.approx(a * 2 ** (2 / 3), abs=1e-6)


def test_keplerian_lindblad_ell():
    # Keplerian |r dD/dr| = 3 (m - 1) Omega^2 at an ILR (Goldreich & Tremaine 1979), so
    # ell^2 = 2 pi G sigma r / (3 (m - 1) Omega^2); first wavelength 2 sqrt(pi) ell
    body = _kepler_body()
    res = find_resonances(body, rmin_km=80000, rmax_km=180000, max_order=1, sigma_g_cm2=40.0)
    x = [x for x in res if x.label == "3:2" and x.kind == "ILR"][0]
    r = x.resonance_radius_km
    omega2 = SATURN.gm_km3_s2 / r**3
    ell = np.sqrt(2 * np.pi * G * 40.0 * 1e7 * r / (3 * 2 * omega2))
    assert x.first_wavelength_km == pytest.approx(2 * np.sqrt(np.pi) * ell, rel=1e-9)


def test_terms_and_labels():
    terms = resonance_terms(3)
    assert ("ILR", 0, 0) in terms and ("OLR", 0, 0) in terms
    assert ("IVR", 0, 1) in terms and ("OVR", 0, -1) in terms and ("IVR", 1, 1) in terms
    assert ("CR", 1, 0) in terms and ("CR", 0, 2) in terms and ("CR", -3, 0) in terms
    assert all(p % 2 == 1 for kind, k, p in terms if kind in ("IVR", "OVR"))
    assert all(p % 2 == 0 for kind, k, p in terms if kind in ("ILR", "OLR", "CR"))
    assert len(resonance_terms(1)) == 4  # ILR, OLR, CR k=+-1
    res = find_resonances(SATURN, rmin_km=131000, rmax_km=133000, satellites=["Mimas"], max_m=10)
    labels = {(x.label, x.kind, x.m, x.k, x.p, x.order) for x in res}
    assert ("5:3", "ILR", 4, 1, 0, 2) in labels  # Mimas 5:3 density wave
    assert ("5:3", "IVR", 4, 0, 1, 2) in labels  # Mimas 5:3 bending wave


def test_radii_satisfy_condition_and_match_brentq():
    res = find_resonances(SATURN, rmin_km=100000, rmax_km=137000, max_m=30,
                          satellites=["Janus", "Mimas", "Prometheus"])
    assert len(res) > 50
    deg = np.pi / 180 / 86400
    for x in res[::7]:
        omega_p = x.pattern_speed_deg_day * deg

        def cond(r):
            n, kappa, nu = frequencies(SATURN, r)
            side = {"ILR": 1, "OLR": -1, "IVR": 1, "OVR": -1, "CR": 0}[x.kind]
            return float(x.m * (n - omega_p) - side * (nu if x.kind in ("IVR", "OVR") else kappa))

        r0 = x.resonance_radius_km
        # scipy.optimize.brentq on a 20 km bracket as the reference root finder; 1e-6 km
        assert brentq(cond, r0 - 10, r0 + 10, xtol=1e-10) == pytest.approx(r0, abs=1e-6)


def _direct_fourier(r, a, gm, e, m, k, n_psi=2048, n_m=256):
    """Amplitude of cos(m psi - k M) in -GM/|r - r_s| + indirect term, by brute force.

    Independent of the Laplace coefficients: a 2-D trapezoid over psi = theta - lambda and
    the mean anomaly M with the exact Kepler orbit (scipy.optimize.brentq for E).
    """
    mean = 2 * np.pi * np.arange(n_m) / n_m
    big_e = np.array([brentq(lambda x: x - e * np.sin(x) - mm, mm - 1, mm + 1) for mm in mean])
    true = 2 * np.arctan2(np.sqrt(1 + e) * np.sin(big_e / 2), np.sqrt(1 - e) * np.cos(big_e / 2))
    r_s = a * (1 - e * np.cos(big_e))
    psi = 2 * np.pi * np.arange(n_psi) / n_psi
    gamma = psi[:, None] - (true - mean)[None, :]  # theta - theta_s
    dist = np.sqrt(r**2 + r_s**2 - 2 * r * r_s * np.cos(gamma))
    pot = -gm / dist + gm * r * np.cos(gamma) / r_s**2
    return 2 * np.mean(pot * np.cos(m * psi[:, None] - k * mean[None, :]))


@pytest.mark.parametrize("m,k,e,ratio", [(2, 1, 0.02, 0.55), (3, 2, 0.02, 0.6), (5, -1, 0.01, 1.25),
                                         (1, 1, 0.03, 0.5), (2, 0, 0.0, 0.63)])
def test_eccentric_potential_against_brute_force(m, k, e, ratio):
    # brute-force 2-D Fourier integral of the satellite potential (exact orbit); agreement to
    # 1e-7 relative (the trapezoid on 2048 x 256 points is converged far beyond that)
    a, gm = 185539.0, 2.5
    r = ratio * a
    phi, _, _ = forcing_potentials([r], [a], [gm], [e], [0.0], [m], [k], [0])
    assert phi[0] == pytest.approx(_direct_fourier(r, a, gm, e, m, k), rel=1e-7)


def test_first_order_in_e_closed_form():
    # to first order in e: Phi_{m,+-1} = -(GM/a)(e/2)(1 +- 2m + alpha d/dalpha) C^(m)
    # (Murray & Dermott's f_31 family); e = 1e-5 so O(e^2) terms are ~1e-5 relative
    a, gm, e = 151460.0, 0.1266, 1e-5
    for m, k, ratio in ((6, 1, 0.88), (6, -1, 0.88), (4, -1, 1.2)):
        c, qdc = separation_coefficient(0.5, m, ratio)
        closed = -(gm / a) * (e / 2) * (1 + 2 * k * m) * c - (gm / a) * (e / 2) * qdc
        phi, _, _ = forcing_potentials([ratio * a], [a], [gm], [e], [0.0], [m], [k], [0])
        assert phi[0] == pytest.approx(closed, rel=1e-4)


def test_kepler_quadrature_converged():
    # the adaptive 8/16/32-node quadrature against 64 nodes, worst case m e ~ 0.9
    from occplan.resonances import _planar_eccentric

    r, a, gm = np.array([138500.0]), np.array([141720.0]), np.array([0.009271])
    e, m, k = np.array([0.0042]), np.array([200]), np.array([2])
    ref = _planar_eccentric(r, a, gm, e, m, k, 64)[0]
    phi, _, _ = forcing_potentials(r, a, gm, e, [0.0], m, k, [0])
    assert phi[0] == pytest.approx(ref[0], rel=1e-9)


def _inclined(r, a, gm, inc, m, what):
    """Brute-force Fourier amplitude for a satellite on an inclined circular orbit."""
    n = 1024
    u = 2 * np.pi * np.arange(n) / n  # satellite argument of latitude, node at 0
    psi = 2 * np.pi * np.arange(n) / n  # theta - lambda, lambda = u
    theta = psi[:, None] + u[None, :]
    xs, ys, zs = a * np.cos(u), a * np.sin(u) * np.cos(inc), a * np.sin(u) * np.sin(inc)
    dx, dy = r * np.cos(theta) - xs[None, :], r * np.sin(theta) - ys[None, :]
    dist = np.sqrt(dx**2 + dy**2 + zs[None, :] ** 2)
    if what == "planar":  # cos(m theta - (m+2) lambda + 2 Omega) = cos(m psi - 2 u)
        return 2 * np.mean(-gm / dist * np.cos(m * psi[:, None] - 2 * u[None, :]))
    dphidz = -gm * zs[None, :] / dist**3  # at z = 0: d/dz (-GM/|x - x_s|) = GM (z - z_s)/d^3
    return 2 * np.mean(dphidz * np.sin(m * psi[:, None] - u[None, :]))


def test_inclination_terms_against_brute_force():
    # O(sin^2(i/2)) planar term and O(sin i) vertical term; i = 0.5 deg so the neglected
    # higher powers are ~1e-4 relative; trapezoid on 1024^2 points converged
    a, gm, inc, r, m = 185539.0, 2.5, np.radians(0.5), 120000.0, 3
    phi, _, _ = forcing_potentials([r], [a], [gm], [0.0], [inc], [m], [0], [2])
    assert phi[0] == pytest.approx(_inclined(r, a, gm, inc, m, "planar"), rel=1e-3)
    fz, _, _ = forcing_potentials([r], [a], [gm], [0.0], [inc], [m], [0], [1])
    assert abs(fz[0] / r) == pytest.approx(abs(_inclined(r, a, gm, inc, m, "vertical")), rel=1e-3)


def test_strength_order_and_mass_scaling():
    res = find_resonances(SATURN, rmin_km=116000, rmax_km=118000, satellites=["Mimas"])
    first = [x for x in res if x.label == "2:1" and x.kind == "ILR"][0]
    third = [x for x in res if x.order == 3 and x.kind == "ILR"]
    assert third and all(first.torque_per_sigma > 100 * x.torque_per_sigma for x in third)
    # torque ~ GM_s^2: double Mimas's mass (its orbit unchanged)
    heavy = dataclasses.replace(SATURN, satellites=tuple(
        dataclasses.replace(s, gm_km3_s2=2 * s.gm_km3_s2) if s.name == "Mimas" else s
        for s in SATURN.satellites))
    res2 = find_resonances(heavy, rmin_km=116000, rmax_km=118000, satellites=["Mimas"])
    assert len(res2) == len(res)
    for x, y in zip(res, res2):
        assert y.torque_per_sigma == pytest.approx(4 * x.torque_per_sigma, rel=1e-9)


def test_wave_directions_and_zones():
    res = find_resonances(SATURN, rmin_km=125000, rmax_km=133000, satellites=["Janus", "Mimas"],
                          max_m=10)
    for x in res:
        assert x.zone_inner_km <= x.resonance_radius_km <= x.zone_outer_km
        if x.wave == "density":  # satellite outside: density waves outward (docs/design.md sec. 5)
            assert x.propagation == "outward" and x.zone_inner_km == x.resonance_radius_km
            assert x.shortest_wavelength_km < x.first_wavelength_km
        elif x.wave == "bending":
            assert x.propagation == "inward" and x.zone_outer_km == x.resonance_radius_km
        else:
            assert x.kind == "CR" and x.zone_outer_km - x.zone_inner_km < 20
    # a satellite inside the rings (Pan): outside its orbit the density waves of its OLRs
    # travel toward it, i.e. inward (docs/design.md sec. 5)
    pan = find_resonances(SATURN, rmin_km=133700, rmax_km=136000, satellites=["Pan"], max_m=60)
    olr = [x for x in pan if x.kind == "OLR"]
    assert olr and all(x.propagation == "inward" for x in olr)


def test_damping_length_against_integrated_damping_rate():
    # amplitude A = exp(-int_0^x k_I dx) with k_I = (7/3) nu kappa k^2 / (2 pi G sigma),
    # k = x/ell^2: the imaginary part of k from the viscous dispersion relation
    # kappa^2 - w^2 - 2 pi G sigma |k| + i w (7/3) nu k^2 = 0 (Shu 1984; equivalently
    # nu = (9/7) 2 pi G sigma ell^4 / (kappa x_D^3), Tiscareno et al. 2007, from memory):
    # at x = x_D the integral must be 1 (scipy quad)
    r, r_dd, sigma, visc, kappa = 130000.0, 1.5e-7, 40.0, 100.0, 1.2e-4
    z = wave_zones(np.array([r]), np.array([r_dd]), np.array([sigma]), np.array([visc]),
                   np.array([kappa]), np.array([1.0]))
    g_sigma = G * sigma * 1e7
    ell2 = z["ell_km"][0] ** 2
    k_i = lambda x: 7 / 3 * visc * 1e-10 * kappa * (x / ell2) ** 2 / (2 * np.pi * g_sigma)
    assert quad(k_i, 0, z["damping_length_km"][0])[0] == pytest.approx(1.0, rel=1e-10)
    x_end = z["zone_outer_km"][0] - r
    assert z["shortest_wavelength_km"][0] == pytest.approx(2 * np.pi * ell2 / x_end, rel=1e-12)


def test_sigma_override_and_region():
    base = find_resonances(SATURN, rmin_km=134000, rmax_km=134500, satellites=["Janus"], max_m=10)
    heavy = find_resonances(SATURN, rmin_km=134000, rmax_km=134500, satellites=["Janus"],
                            max_m=10, sigma_g_cm2=160.0)
    j65 = [x for x in base if x.label == "6:5" and x.kind == "ILR"][0]
    j65h = [x for x in heavy if x.label == "6:5" and x.kind == "ILR"][0]
    assert j65.region == "A ring" and j65.surface_density_g_cm2 == 40.0
    # ell ~ sigma^(1/2): first wavelength doubles when sigma is 4x
    assert j65h.first_wavelength_km == pytest.approx(2 * j65.first_wavelength_km, rel=1e-12)
    assert j65h.torque_per_sigma == j65.torque_per_sigma


def test_min_torque_and_sorting():
    res = find_resonances(SATURN, rmin_km=120000, rmax_km=137000, min_torque=1e17)
    assert res and all(x.torque_per_sigma >= 1e17 for x in res)
    radii = [x.resonance_radius_km for x in res]
    assert radii == sorted(radii)
    row = res[0].to_row()
    for name in ("label", "satellite", "kind", "wave", "m", "k", "p", "order",
                 "resonance_radius_km", "pattern_speed_deg_day", "torque_per_sigma",
                 "propagation", "zone_inner_km", "zone_outer_km"):
        assert name in row
    assert isinstance(res[0], Resonance)


@pytest.mark.parametrize("kwargs,error", [
    ({"satellites": ["Nonesuch"]}, UnknownNameError),
    ({"rmin_km": 130000, "rmax_km": 120000}, InputError),
    ({"max_order": 4}, InputError),
    ({"max_order": 0}, InputError),
    ({"sigma_g_cm2": -1.0}, InputError),
    ({"viscosity_cm2_s": 0.0}, InputError),
    ({"rmin_km": 50000}, InputError),
])
def test_bad_input(kwargs, error):
    with pytest.raises(error):
        find_resonances(SATURN, **kwargs)
