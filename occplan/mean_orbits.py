"""Satellite mean orbits and the planet-centre correction.

DE440 holds only the system barycentres of the giant planets.  When no user kernel gives the
planet centre, occplan moves the barycentre to the planet centre with the mean orbits of the
largest satellites (``[satellites.mean_elements]`` in the body file).  This module is pure
numpy: it opens no kernel and knows no time scale (times are TDB Julian dates).

Exact relation
--------------
With planetocentric satellite positions r_i, the system barycentre B and the planet centre P
satisfy  GM_sys * B = GM_p * P + sum_i GM_i (P + r_i),  GM_sys = GM_p + sum_i GM_i, so

    P - B = - sum_i (GM_i / GM_sys) r_i                                            (1)

exactly in Newtonian mechanics (the barycentre of a DE ephemeris is defined this way; the
post-Newtonian mass-energy terms change it by far less than a metre for a planetary system).
Equation (1) needs GM_sys over *all* satellites; occplan takes GM_sys = GM_planet (the
``[gravity]`` value, the planet alone) plus every satellite GM listed in the body file.

Element convention (JPL SSD "Planetary Satellite Mean Elements")
--------------------------------------------------------------
Elements are referred to the satellite's local Laplace plane, whose pole has right ascension
and declination ``laplace_ra_deg``, ``laplace_dec_deg`` in ICRF.  The frame is X = node of
the Laplace plane on the ICRF equator (z x p / |z x p|), Z = p, Y = Z x X; the ascending
node Omega is measured in the Laplace plane from X, the inclination i from the Laplace plane
(i > 90 deg is a retrograde orbit, e.g. Triton), the argument of periapsis omega from the
node.  The table's "n" with "P = sidereal period" is the rate of the mean longitude
lambda = Omega + omega + M (for Io the table's P = 360/n = 1.769 d is the sidereal period,
while Io's forced apse regresses at 2 n_Europa - n_Io, so n cannot be dM/dt).  The
satellite's angular speed about its orbit normal is dM/dt + omegadot + Omegadot cos i
(the orbit frame turns at Omegadot about the Laplace pole, whose component along the orbit
normal is Omegadot cos i), hence M(t) = M0 + (n - omegadot - Omegadot cos i)(t - t0); for a
retrograde orbit (Triton, i ~ 157 deg) cos i < 0 and the node's advance adds to dM/dt.
Newer JPL tables (e.g. JUP365) list the anomalistic period instead; the body files state
which table each row comes from and hold the sidereal rate.  The table gives the
precession of omega and Omega as periods in years; the body files hold them converted to
signed rates in deg/day (node regressing for prograde moons).
"""

from __future__ import annotations

from functools import lru_cache

import numpy as np

from .bodies import Body, MeanElements, Satellite, get_body
from .errors import DataFileError

__all__ = [
    "ELEMENT_RELATIVE_ERROR",
    "barycentre_offset_km",
    "correction_residual_km",
    "elements_position_km",
    "satellite_positions_km",
    "solve_kepler",
    "system_gm_km3_s2",
]

# Position error of a mean (precessing-ellipse) orbit, as a fraction of the semimajor axis.
# Jacobson's equinoctial fit of Titan (SAT077; A&AS 128, 7, 1998, section 4) left RMS
# residuals of 72 km radial, 264 km along track and 210 km out of plane over 1966-2013,
# i.e. |dr| ~ 345 km = 2.8e-4 a.  The JPL mean-element tables round angles to 0.001 deg
# (1.7e-5 rad) and omit the short-period terms that such a fit also lacks; decades from
# the epoch the mean longitude drifts further.  We adopt 1e-3 a (0.06 deg), about three
# times the Titan fit, as a stated, conservative value (common practice for such fits,
# not a measured bound for every moon).
ELEMENT_RELATIVE_ERROR = 1.0e-3

_DEG = np.pi / 180.0


def solve_kepler(mean_anomaly_rad, e, tol=1e-14, max_iter=50):
    """Eccentric anomaly E from Kepler's equation M = E - e sin E (vectorized Newton).

    Parameters
    ----------
    mean_anomaly_rad : float or array
        Mean anomaly M (rad), any range.
    e : float or array
        Eccentricity, 0 <= e < 1 (broadcast against M).

    Returns
    -------
    E : ndarray
        Eccentric anomaly (rad), in the same 2 pi branch as M reduced to [-pi, pi).

    Notes
    -----
    Newton iteration E <- E - (E - e sin E - M) / (1 - e cos E) from Danby's starting value
    E0 = M + 0.85 e sign(sin M), which converges for every e < 1 (Danby 1988, Fundamentals
    of Celestial Mechanics, sec. 6.6).  Iterates until every |dE| < tol.
    """
    m = np.asarray(mean_anomaly_rad, dtype=float)
    e = np.asarray(e, dtype=float)
    m_red = np.remainder(m + np.pi, 2.0 * np.pi) - np.pi
    ecc = np.broadcast_to(e, m_red.shape) if m_red.shape else e
    big_e = m_red + 0.85 * ecc * np.sign(np.sin(m_red))
    for _ in range(max_iter):
        f = big_e - ecc * np.sin(big_e) - m_red
        step = f / (1.0 - ecc * np.cos(big_e))
        big_e = big_e - step
        if np.all(np.abs(step) < tol):
            break
    return big_e + (m - m_red)


@lru_cache(maxsize=256)
def _laplace_frame(me: MeanElements):
    """Rows X, Y, Z of the Laplace-plane frame in ICRF (3x3)."""
    ra, dec = me.laplace_ra_deg * _DEG, me.laplace_dec_deg * _DEG
    z = np.array([np.cos(dec) * np.cos(ra), np.cos(dec) * np.sin(ra), np.sin(dec)])
    x = np.cross([0.0, 0.0, 1.0], z)
    norm = np.linalg.norm(x)
    if norm < 1e-12:  # Laplace pole at the celestial pole: take ICRF x as the node
        x = np.array([1.0, 0.0, 0.0])
    else:
        x = x / norm
    y = np.cross(z, x)
    return np.array([x, y, z])


def elements_position_km(me: MeanElements, tdb_jd):
    """Planetocentric ICRF position (km) of a precessing mean ellipse.

    Parameters
    ----------
    me : MeanElements
        Elements referred to the local Laplace plane (see the module notes).
    tdb_jd : float or array
        TDB Julian dates.

    Returns
    -------
    ndarray, shape (3,) or (3, N)

    Notes
    -----
    Omega = Omega0 + Omegadot dt, omega = omega0 + omegadot dt,
    M = M0 + (n - omegadot - Omegadot cos i) dt (n is the sidereal rate, the angular
    speed about the orbit normal, u-dot + Omegadot cos i with u = omega + M, so retrograde
    orbits are handled too); E from Kepler's equation; perifocal
    x = a (cos E - e), y = a sqrt(1 - e^2) sin E; rotated by R3(-Omega) R1(-i) R3(-omega)
    into the Laplace frame and then into ICRF (Murray & Dermott 1999, eq. 2.122).
    """
    t = np.asarray(tdb_jd, dtype=float)
    dt = t - me.epoch_jd_tdb
    node = (me.ascending_node_deg + me.node_rate_deg_day * dt) * _DEG
    argp = (me.argument_of_periapsis_deg + me.periapsis_rate_deg_day * dt) * _DEG
    inc = me.inclination_deg * _DEG
    m_rate = (me.mean_motion_deg_day - me.periapsis_rate_deg_day
              - me.node_rate_deg_day * np.cos(inc))
    mean_anom = (me.mean_anomaly_deg + m_rate * dt) * _DEG
    e = me.e
    big_e = solve_kepler(mean_anom, e)
    xp = me.a_km * (np.cos(big_e) - e)
    yp = me.a_km * np.sqrt(1.0 - e * e) * np.sin(big_e)
    cO, sO, cw, sw = np.cos(node), np.sin(node), np.cos(argp), np.sin(argp)
    ci, si = np.cos(inc), np.sin(inc)
    # Columns of the rotation perifocal -> Laplace frame (P and Q vectors).
    px, py, pz = cO * cw - sO * sw * ci, sO * cw + cO * sw * ci, sw * si
    qx, qy, qz = -cO * sw - sO * cw * ci, -sO * sw + cO * cw * ci, cw * si
    lap = np.array([px * xp + qx * yp, py * xp + qy * yp, pz * xp + qz * yp])
    frame = _laplace_frame(me)  # rows X, Y, Z in ICRF
    return np.tensordot(frame.T, lap, axes=1)


def satellite_positions_km(satellite: Satellite, tdb_jd):
    """Planetocentric ICRF position (km) of a satellite from its mean elements.

    Parameters
    ----------
    satellite : Satellite
        A body-file satellite with a ``[satellites.mean_elements]`` table.
    tdb_jd : float or array
        TDB Julian dates.

    Returns
    -------
    ndarray, shape (3,) or (3, N)

    Raises
    ------
    DataFileError
        If the satellite has no mean elements.
    """
    if satellite.mean_elements is None:
        raise DataFileError(
            f"satellite {satellite.name} has no [satellites.mean_elements] table; add one to "
            "the body file (JPL SSD mean elements) or pass --kernel with the planet centre"
        )
    return elements_position_km(satellite.mean_elements, tdb_jd)


def system_gm_km3_s2(body: Body | str) -> float:
    """GM of the planet plus every satellite listed in the body file (km^3 s^-2)."""
    b = get_body(body)
    return b.gm_km3_s2 + sum(s.gm_km3_s2 for s in b.satellites)


def barycentre_offset_km(body: Body | str, tdb_jd):
    """Planet centre minus system barycentre (km, ICRF), from the satellites' mean orbits.

    Parameters
    ----------
    body : Body or str
        Body or built-in body name.
    tdb_jd : float or array
        TDB Julian dates.

    Returns
    -------
    ndarray, shape (3,) or (3, N)

    Notes
    -----
    P - B = - sum_i (GM_i / GM_sys) r_i over the satellites with mean elements, equation (1)
    of the module notes.  Satellites without mean elements are left out; their share is in
    :func:`correction_residual_km`.
    """
    b = get_body(body)
    gm_sys = system_gm_km3_s2(b)
    t = np.asarray(tdb_jd, dtype=float)
    out = np.zeros((3,) + t.shape)
    for sat in b.satellites:
        if sat.mean_elements is not None:
            out -= (sat.gm_km3_s2 / gm_sys) * elements_position_km(sat.mean_elements, t)
    return out


def correction_residual_km(body: Body | str) -> float:
    """Estimated error (km) left in the planet centre after :func:`barycentre_offset_km`.

    Returns
    -------
    float
        sum over satellites *without* mean elements of (GM_i / GM_sys) a_i (1 + e_i)
        (their largest possible displacement of the planet), plus, over satellites *with*
        mean elements, (GM_i / GM_sys) * ELEMENT_RELATIVE_ERROR * a_i (the position error of
        a mean orbit, see ``ELEMENT_RELATIVE_ERROR``), added linearly (a bound, not an RMS).

    Notes
    -----
    Moons absent from the body file are not counted: for Saturn, Phoebe would add at most
    ~0.2 km and Hyperion ~0.015 km (GM 0.56 and 0.37 km^3 s^-2, a 12.9e6 and 1.5e6 km;
    from memory).  Values from memory in the body file are a further, unquantified risk.
    """
    b = get_body(body)
    gm_sys = system_gm_km3_s2(b)
    total = 0.0
    for sat in b.satellites:
        ratio = sat.gm_km3_s2 / gm_sys
        if sat.mean_elements is None:
            total += ratio * sat.a_km * (1.0 + sat.e)
        else:
            total += ratio * ELEMENT_RELATIVE_ERROR * sat.mean_elements.a_km
    return float(total)
