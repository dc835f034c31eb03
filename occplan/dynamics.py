"""Orbital frequencies in an oblate planet's field, and Laplace coefficients.

Numeric kernels in km, s, rad.  Every frequency function takes one radius or an array.

Frequencies of nearly circular, nearly equatorial orbits at ring radius r, with
x = (R/r)^2 and the zonal harmonics J_2 .. J_2K that the body file gives
(Murray & Dermott 1999, *Solar System Dynamics*, sec. 6.11; Nicholson & Porco 1988,
JGR 93, 10209)::

    n^2     = GM/r^3 sum_k (2k+1)        c_k x^k
    kappa^2 = GM/r^3 sum_k (2k+1)(1-2k)  c_k x^k
    nu^2    = 2 n^2 - kappa^2
    c_0 = 1,   c_k = -J_2k P_2k(0)

These are the exact sums (no truncated square-root series).  nu^2 = 2 n^2 - kappa^2 holds
because the potential satisfies Laplace's equation outside the planet.  The apsidal rate is
n - kappa, the nodal rate n - nu (negative: nodes regress).
"""

from __future__ import annotations

import numpy as np

from .bodies import Body, Satellite
from .constants import SECONDS_PER_DAY

__all__ = [
    "apsidal_rate_rad_s",
    "epicyclic_rad_s",
    "frequencies",
    "frequency_radial_derivatives",
    "laplace_coefficient",
    "laplace_coefficient_derivative",
    "mean_motion_rad_s",
    "nodal_rate_rad_s",
    "satellite_rates_rad_s",
    "vertical_rad_s",
]


def _series(body: Body, r_km):
    """GM/r^3, x = (R/r)^2 and the coefficients c_k (c_0 = 1) of the zonal sums."""
    from scipy.special import eval_legendre

    r = np.asarray(r_km, dtype=float)
    gm_r3 = body.gm_km3_s2 / r**3
    x = (body.reference_radius_km / r) ** 2
    c = [1.0] + [-j * eval_legendre(2 * (i + 1), 0.0) for i, j in enumerate(body.zonal_j)]
    return gm_r3, x, c


def frequencies(body: Body, r_km):
    """Mean motion n, epicyclic kappa and vertical nu (rad/s) at ring radius r (km).

    Parameters
    ----------
    body : Body
        Planet with ``gm_km3_s2``, ``reference_radius_km`` and ``zonal_j`` (J2, J4, ...).
    r_km : float or array
        Ring radius, km.

    Returns
    -------
    n, kappa, nu : arrays, rad/s

    Notes
    -----
    Exact zonal sums of the module docstring (Murray & Dermott 1999, sec. 6.11).
    Valid for r above the planet's surface, where the multipole series converges.
    """
    gm_r3, x, c = _series(body, r_km)
    n2 = np.zeros_like(gm_r3)
    k2 = np.zeros_like(gm_r3)
    xk = np.ones_like(gm_r3)
    for k, ck in enumerate(c):
        n2 = n2 + (2 * k + 1) * ck * xk
        k2 = k2 + (2 * k + 1) * (1 - 2 * k) * ck * xk
        xk = xk * x
    n2 = gm_r3 * n2
    k2 = gm_r3 * k2
    return np.sqrt(n2), np.sqrt(k2), np.sqrt(2.0 * n2 - k2)


def frequency_radial_derivatives(body: Body, r_km):
    """r d(n^2)/dr and r d(kappa^2)/dr (rad^2/s^2), analytic from the zonal sums.

    Notes
    -----
    Each term GM c_k R^2k r^(-3-2k) has r d/dr = -(3+2k) times itself, so
    r d(n^2)/dr = -GM/r^3 sum (2k+1)(3+2k) c_k x^k and likewise for kappa^2.
    r d(nu^2)/dr = 2 r d(n^2)/dr - r d(kappa^2)/dr.
    """
    gm_r3, x, c = _series(body, r_km)
    dn2 = np.zeros_like(gm_r3)
    dk2 = np.zeros_like(gm_r3)
    xk = np.ones_like(gm_r3)
    for k, ck in enumerate(c):
        dn2 = dn2 - (3 + 2 * k) * (2 * k + 1) * ck * xk
        dk2 = dk2 - (3 + 2 * k) * (2 * k + 1) * (1 - 2 * k) * ck * xk
        xk = xk * x
    return gm_r3 * dn2, gm_r3 * dk2


def mean_motion_rad_s(body: Body, r_km):
    """Mean motion (angular velocity of a circular orbit) n(r), rad/s; see :func:`frequencies`."""
    return frequencies(body, r_km)[0]


def epicyclic_rad_s(body: Body, r_km):
    """Epicyclic (radial) frequency kappa(r), rad/s; see :func:`frequencies`."""
    return frequencies(body, r_km)[1]


def vertical_rad_s(body: Body, r_km):
    """Vertical frequency nu(r), rad/s, from nu^2 = 2 n^2 - kappa^2; see :func:`frequencies`."""
    return frequencies(body, r_km)[2]


def apsidal_rate_rad_s(body: Body, r_km):
    """Apsidal precession rate d(pomega)/dt = n - kappa of a ring orbit, rad/s (positive)."""
    n, kappa, _ = frequencies(body, r_km)
    return n - kappa


def nodal_rate_rad_s(body: Body, r_km):
    """Nodal precession rate d(Omega)/dt = n - nu of a ring orbit, rad/s (negative: regression)."""
    n, _, nu = frequencies(body, r_km)
    return n - nu


def satellite_rates_rad_s(body: Body, satellite: Satellite):
    """Mean motion, apsidal and nodal rates of a satellite (rad/s) for its pattern speeds.

    The mean motion is the satellite's observed value from the body file.  The apsidal and
    nodal rates are the observed ones when the body file gives them, otherwise the rates
    the planet's zonal field alone gives at the satellite's semi-major axis
    (n - kappa and n - nu).  Perturbations by other satellites are then left out; they
    matter for the pattern speed only through k * pomegadot / m and p * Omegadot / m.
    """
    to_rad_s = np.pi / 180.0 / SECONDS_PER_DAY
    n_s = satellite.mean_motion_deg_day * to_rad_s
    n, kappa, nu = frequencies(body, satellite.a_km)
    apse = (satellite.apsidal_rate_deg_day * to_rad_s
            if satellite.apsidal_rate_deg_day is not None else float(n - kappa))
    node = (satellite.nodal_rate_deg_day * to_rad_s
            if satellite.nodal_rate_deg_day is not None else float(n - nu))
    return float(n_s), float(apse), float(node)


# --- Laplace coefficients -------------------------------------------------------------------

_RECURRENCE_START = 120  # below this j scipy's hyp2f1 is reliable for every alpha < 1


def _hyp_pair(s, j, alpha):
    """b_s^(j)(alpha) and d/dalpha of it from the hypergeometric form (two hyp2f1 calls)."""
    from scipy.special import gammaln, hyp2f1

    z = alpha * alpha
    lead = np.exp(gammaln(s + j) - gammaln(s) - gammaln(j + 1.0))
    f = hyp2f1(s, s + j, j + 1.0, z)
    fz = s * (s + j) / (j + 1.0) * hyp2f1(s + 1.0, s + j + 1.0, j + 2.0, z)
    with np.errstate(divide="ignore", invalid="ignore"):
        low = np.where(j > 0, j * alpha ** np.maximum(j - 1.0, 0.0), 0.0)
    aj = alpha**j
    return 2.0 * lead * aj * f, 2.0 * lead * (low * f + aj * 2.0 * alpha * fz)


def _hyp_form(s, j, alpha, deriv):
    """b_s^(j)(alpha) (deriv=0) or d/dalpha of it (deriv=1) from the hypergeometric form."""
    return _hyp_pair(s, j, alpha)[deriv]


def _recurrence(s, j, alpha):
    """b and db/dalpha by the forward recurrence in j from j0 = _RECURRENCE_START.

    b^(j+1) = [j (alpha + 1/alpha) b^(j) - (j + s - 1) b^(j-1)] / (j - s + 1)
    (Murray & Dermott 1999, eq. 6.70), and its alpha derivative.  Forward recurrence
    amplifies rounding errors by about alpha^(-2 (j - j0)); it is used only where the
    hypergeometric series fails (alpha > ~0.94, j > ~150), where that factor stays below
    ~10^4 for j <= 250.
    """
    j0 = float(_RECURRENCE_START)
    b_prev, d_prev = _hyp_pair(s, j0 - 1.0, alpha)
    b_cur, d_cur = _hyp_pair(s, j0, alpha)
    b_out = np.where(j == j0, b_cur, np.nan)
    d_out = np.where(j == j0, d_cur, np.nan)
    jj = j0
    s_sum = alpha + 1.0 / alpha
    ds_sum = 1.0 - 1.0 / alpha**2
    while jj < np.max(j):
        b_next = (jj * s_sum * b_cur - (jj + s - 1.0) * b_prev) / (jj - s + 1.0)
        d_next = (jj * ds_sum * b_cur + jj * s_sum * d_cur - (jj + s - 1.0) * d_prev) / (
            jj - s + 1.0)
        jj += 1.0
        b_prev, b_cur, d_prev, d_cur = b_cur, b_next, d_cur, d_next
        hit = j == jj
        b_out = np.where(hit, b_cur, b_out)
        d_out = np.where(hit, d_cur, d_out)
    return b_out, d_out


def _b_and_db(s, j, alpha):
    s = float(s)
    j = np.abs(np.asarray(j, dtype=float))
    alpha = np.asarray(alpha, dtype=float)
    j, alpha = np.broadcast_arrays(j, alpha)
    b, db = _hyp_pair(s, j, alpha)
    bad = ~(np.isfinite(b) & np.isfinite(db)) & (j >= _RECURRENCE_START)
    if np.any(bad):
        rb, rd = _recurrence(s, j[bad], alpha[bad])
        b = np.array(b, dtype=float)
        db = np.array(db, dtype=float)
        b[bad] = rb
        db[bad] = rd
    return b, db


def laplace_coefficient(s, j, alpha):
    """Laplace coefficient b_s^(j)(alpha) for 0 <= alpha < 1.

    Parameters
    ----------
    s : float
        Half-integer index (1/2, 3/2, ...).
    j : int or array
        Order; b^(-j) = b^(j).
    alpha : float or array
        Ratio of the smaller to the larger orbital radius, 0 <= alpha < 1.

    Returns
    -------
    array
        b_s^(j)(alpha) = (1/pi) int_0^2pi cos(j psi) (1 - 2 alpha cos psi + alpha^2)^(-s) dpsi

    Notes
    -----
    Closed form (Murray & Dermott 1999, eq. 6.68)::

        b_s^(j) = 2 (s)_j / j! alpha^j 2F1(s, s+j; j+1; alpha^2)

    with scipy's ``hyp2f1``.  Where that fails (j >~ 150 with alpha >~ 0.95) the forward
    recurrence in j (M&D eq. 6.70) from j = 120 takes over.
    """
    return _b_and_db(s, j, alpha)[0]


def laplace_coefficient_derivative(s, j, alpha):
    """d b_s^(j) / d alpha for 0 <= alpha < 1.

    Notes
    -----
    From d/dz 2F1(a, b; c; z) = (a b / c) 2F1(a+1, b+1; c+1; z) applied to the closed form
    of :func:`laplace_coefficient` (same fallback).
    """
    return _b_and_db(s, j, alpha)[1]


def laplace_pair(s, j, alpha):
    """b_s^(j)(alpha) and alpha d b_s^(j)/d alpha together (one evaluation)."""
    b, db = _b_and_db(s, j, alpha)
    return b, np.asarray(alpha, dtype=float) * db


def separation_coefficient(s, j, ratio):
    """Fourier coefficient C_s^(j) of (a / |r - r_s|)^(2s) for any radius ratio r / a != 1.

    (a^2 / Delta^2)^s = (1/2) sum_j C_s^(j)(ratio) cos(j psi), Delta^2 = r^2 + a^2 - 2 r a cos psi.
    For ratio < 1 this is b_s^(j)(ratio); for ratio > 1 it is ratio^(-2s) b_s^(j)(1/ratio).

    Returns
    -------
    C, ratio dC/dratio : arrays
    """
    q = np.asarray(ratio, dtype=float)
    inner = q < 1.0
    beta = np.where(inner, q, 1.0 / q)
    b, bd = laplace_pair(s, j, beta)  # bd = beta db/dbeta
    fac = np.where(inner, 1.0, q ** (-2.0 * s))
    c = fac * b
    # outer: C = q^-2s b(1/q) -> q dC/dq = -2s C - q^-2s beta b'(beta)
    qdc = np.where(inner, bd, -2.0 * s * c - fac * bd)
    return c, qdc
