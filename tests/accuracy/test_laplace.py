"""Laplace coefficients against numerical integration (scipy.integrate.quad), elliptic-integral
identities and Murray & Dermott's tabulated disturbing-function coefficients."""

import numpy as np
import pytest
from scipy.integrate import quad
from scipy.special import ellipe, ellipk

from occplan.dynamics import (
    laplace_coefficient,
    laplace_coefficient_derivative,
    separation_coefficient,
)

CASES = [(0.5, 0, 0.3), (0.5, 1, 0.63), (0.5, 2, 0.63), (0.5, 5, 0.8), (0.5, 30, 0.97),
         (1.5, 1, 0.5), (1.5, 7, 0.9), (1.5, 150, 0.99),
         # beyond where scipy's hyp2f1 fails (j > ~150, alpha > 0.95): the recurrence path
         (0.5, 200, 0.995), (0.5, 180, 0.96), (1.5, 199, 0.997)]


def _quad(f, j):
    # QAWO (weight='cos') handles the cos(j t) oscillation; split at t = 0.2 where the
    # integrand's peak of width ~ (1 - alpha) ends
    total = 0.0
    for lo, hi in ((0.0, 0.02), (0.02, 0.2), (0.2, np.pi)):
        total += quad(f, lo, hi, weight="cos", wvar=j, limit=2000, epsabs=0, epsrel=1e-12)[0]
    return total * 2 / np.pi


def _quad_b(s, j, a):
    return _quad(lambda t: (1 - 2 * a * np.cos(t) + a * a) ** (-s), j)


def _quad_db(s, j, a):
    # d/dalpha under the integral sign, integrated independently
    return _quad(lambda t: -s * (2 * a - 2 * np.cos(t)) * (1 - 2 * a * np.cos(t) + a * a) ** (-s - 1), j)


@pytest.mark.parametrize("s,j,a", CASES)
def test_laplace_against_quadrature(s, j, a):
    # scipy.integrate.quad of the defining integral (Murray & Dermott 1999, eq. 6.67);
    # 1e-8 relative leaves room for the forward recurrence's amplification (<~1e4)
    assert laplace_coefficient(s, j, a) == pytest.approx(_quad_b(s, j, a), rel=1e-8)
    assert laplace_coefficient_derivative(s, j, a) == pytest.approx(_quad_db(s, j, a), rel=1e-7)


def test_elliptic_identities():
    # b_1/2^(0) = (4/pi) K(alpha), b_1/2^(1) = (4/(pi alpha)) (K - E), modulus alpha (handbook
    # identities, common practice); scipy's ellipk takes the parameter m = alpha^2
    a = np.array([0.1, 0.4, 0.63, 0.9, 0.99])
    k, e = ellipk(a**2), ellipe(a**2)
    np.testing.assert_allclose(laplace_coefficient(0.5, 0, a), 4 / np.pi * k, rtol=1e-13)
    np.testing.assert_allclose(laplace_coefficient(0.5, 1, a), 4 / (np.pi * a) * (k - e), rtol=1e-12)


def test_murray_dermott_table_8_5():
    # Murray & Dermott 1999, table 8.5 (from memory, 4-5 digits): for the 2:1 resonance at
    # alpha = 0.629961, f_d(27) = -1.19049 and f_d(31) = +0.42839 (direct + indirect -2 alpha);
    # for 3:2 at alpha = 0.763143, f_27 = -2.02522 and f_31 = +2.48401.  Tolerance 2e-4:
    # the remembered last digit.
    def f27(j, a):
        b, db = laplace_coefficient(0.5, j, a), laplace_coefficient_derivative(0.5, j, a)
        return 0.5 * (-2 * j * b - a * db)

    def f31(j, a):
        b = laplace_coefficient(0.5, j - 1, a)
        db = laplace_coefficient_derivative(0.5, j - 1, a)
        return 0.5 * ((2 * j - 1) * b + a * db)

    a21 = 0.5 ** (2 / 3)
    a32 = (2 / 3) ** (2 / 3)
    assert f27(2, a21) == pytest.approx(-1.19049, abs=2e-4)
    assert f31(2, a21) - 2 * a21 == pytest.approx(0.42839, abs=2e-4)
    assert f27(3, a32) == pytest.approx(-2.02522, abs=2e-4)
    assert f31(3, a32) == pytest.approx(2.48401, abs=2e-4)


def test_outer_separation_coefficient():
    # for r > a the coefficient of (a/Delta)^(2s) is ratio^(-2s) b_s(1/ratio): check against
    # a direct quadrature of (a^2 / Delta^2)^s with a = 1 and r = ratio
    s, j, q = 0.5, 4, 1.3
    f = lambda t: np.cos(j * t) / (q * q + 1 - 2 * q * np.cos(t)) ** s
    direct = quad(f, 0, np.pi, epsrel=1e-13, limit=500)[0] * 2 / np.pi
    c, qdc = separation_coefficient(s, j, q)
    assert c == pytest.approx(direct, rel=1e-11)
    h = 1e-5
    num = (separation_coefficient(s, j, q + h)[0] - separation_coefficient(s, j, q - h)[0]) / (2 * h)
    assert qdc == pytest.approx(q * num, rel=1e-7)
