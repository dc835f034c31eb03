"""Frequencies in an oblate field: Keplerian limit and independent numerical checks."""

import dataclasses

import numpy as np
import pytest
from scipy.special import eval_legendre

from occplan.bodies import get_body
from occplan.dynamics import (
    apsidal_rate_rad_s,
    epicyclic_rad_s,
    frequencies,
    frequency_radial_derivatives,
    mean_motion_rad_s,
    nodal_rate_rad_s,
    satellite_rates_rad_s,
    vertical_rad_s,
)

SATURN = get_body("saturn")
RADII_KM = np.array([67000.0, 74490.0, 92000.0, 117570.0, 136770.0, 140220.0])


def potential(body, rho_km, z_km):
    """Zonal potential Phi = -(GM/d)[1 - sum J_2k (R/d)^2k P_2k(z/d)], written independently."""
    d = np.hypot(rho_km, z_km)
    mu = z_km / d
    total = 1.0
    for i, j in enumerate(body.zonal_j):
        total = total - j * (body.reference_radius_km / d) ** (2 * i + 2) * eval_legendre(2 * i + 2, mu)
    return -body.gm_km3_s2 / d * total


def test_keplerian_limit():
    # analytic: with every J = 0, n = kappa = nu = sqrt(GM/r^3) (common practice)
    kepler = dataclasses.replace(SATURN, zonal_j=())
    n, kappa, nu = frequencies(kepler, RADII_KM)
    expected = np.sqrt(SATURN.gm_km3_s2 / RADII_KM**3)
    np.testing.assert_allclose(n, expected, rtol=1e-14)
    np.testing.assert_allclose(kappa, expected, rtol=1e-14)
    np.testing.assert_allclose(nu, expected, rtol=1e-14)
    assert np.all(apsidal_rate_rad_s(kepler, RADII_KM) == pytest.approx(0.0, abs=1e-18))


def test_mean_motion_from_radial_force():
    # n^2 = (1/r) dPhi/dr at z = 0, numerically from the potential written independently;
    # central difference with h = 1 km has error ~ h^2 Phi''' ~ 1e-10 relative
    h = 1.0
    dphi = (potential(SATURN, RADII_KM + h, 0.0) - potential(SATURN, RADII_KM - h, 0.0)) / (2 * h)
    np.testing.assert_allclose(mean_motion_rad_s(SATURN, RADII_KM) ** 2, dphi / RADII_KM, rtol=1e-8)


def test_epicyclic_from_angular_momentum_derivative():
    # kappa^2 = r^-3 d(r^4 n^2)/dr by numerical differentiation of our n(r)
    h = 0.5
    r = RADII_KM

    def r4n2(x):
        return x**4 * mean_motion_rad_s(SATURN, x) ** 2

    numeric = (r4n2(r + h) - r4n2(r - h)) / (2 * h) / r**3
    np.testing.assert_allclose(epicyclic_rad_s(SATURN, r) ** 2, numeric, rtol=1e-8)


def test_vertical_from_second_z_derivative():
    # nu^2 = d^2 Phi / dz^2 at z = 0 from the Legendre-polynomial potential, independent of
    # the 2 n^2 - kappa^2 identity.  Step 20 km: truncation ~ (h/r)^2 ~ 1e-7 and rounding
    # ~ eps |Phi| / (h^2 nu^2) ~ 1e-7; the J terms change nu^2 by ~1e-2, so 2e-6 still tests them
    h = 20.0
    r = RADII_KM
    d2 = (potential(SATURN, r, h) - 2 * potential(SATURN, r, 0.0) + potential(SATURN, r, -h)) / h**2
    np.testing.assert_allclose(vertical_rad_s(SATURN, r) ** 2, d2, rtol=2e-6)


def test_radial_derivatives_match_numerical():
    h = 0.5
    r = RADII_KM
    dn2, dk2 = frequency_radial_derivatives(SATURN, r)
    n_p, k_p, _ = frequencies(SATURN, r + h)
    n_m, k_m, _ = frequencies(SATURN, r - h)
    np.testing.assert_allclose(dn2, r * (n_p**2 - n_m**2) / (2 * h), rtol=1e-7)
    np.testing.assert_allclose(dk2, r * (k_p**2 - k_m**2) / (2 * h), rtol=1e-7)


def test_precession_first_order_in_j2():
    # J2 alone: pomegadot = -Omegadot = (3/2) J2 (R/r)^2 n to first order (Murray & Dermott
    # 1999, eq. 6.245-6.246); the neglected terms are O(J2^2 (R/r)^4) ~ 2e-4 relative here
    j2 = dataclasses.replace(SATURN, zonal_j=SATURN.zonal_j[:1])
    r = RADII_KM
    n = mean_motion_rad_s(j2, r)
    first = 1.5 * SATURN.zonal_j[0] * (SATURN.reference_radius_km / r) ** 2 * n
    np.testing.assert_allclose(apsidal_rate_rad_s(j2, r), first, rtol=3e-2)
    np.testing.assert_allclose(-nodal_rate_rad_s(j2, r), first, rtol=3e-2)
    assert np.all(nodal_rate_rad_s(SATURN, r) < 0) and np.all(apsidal_rate_rad_s(SATURN, r) > 0)


def test_satellite_rates_use_observed_mean_motion():
    mimas = SATURN.satellite("Mimas")
    n_s, apse, node = satellite_rates_rad_s(SATURN, mimas)
    assert n_s == pytest.approx(np.radians(mimas.mean_motion_deg_day) / 86400.0, rel=1e-15)
    assert apse == pytest.approx(float(apsidal_rate_rad_s(SATURN, mimas.a_km)), rel=1e-12)
    given = dataclasses.replace(mimas, apsidal_rate_deg_day=1.0, nodal_rate_deg_day=-1.0)
    _, apse2, node2 = satellite_rates_rad_s(SATURN, given)
    assert apse2 == pytest.approx(np.radians(1.0) / 86400.0)
    assert node2 == pytest.approx(-np.radians(1.0) / 86400.0)
