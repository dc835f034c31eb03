"""Satellite resonances in planetary rings: location, strength and wave zone.

Pattern speeds, labels and orders (docs/design.md sec. 5)
---------------------------------------------------------
A satellite with observed mean motion n_s, apsidal rate pomegadot_s and nodal rate
Omegadot_s forces potential terms rotating at

    m Omega_p = (m + k + p) n_s - k pomegadot_s - p Omegadot_s,

p even for planar (Lindblad, corotation) terms, p odd for vertical ones.  The resonance
conditions, with Omega, kappa, nu the ring frequencies of :mod:`occplan.dynamics`, are

    ILR  m (Omega - Omega_p) = +kappa      OLR  m (Omega - Omega_p) = -kappa   (density waves)
    IVR  m (Omega - Omega_p) = +nu         OVR  m (Omega - Omega_p) = -nu      (bending waves)
    CR   Omega = Omega_p                                                  (no wave)

Inner resonances (ring inside the satellite's orbit) use k, p >= 0, outer ones k, p <= 0
(the mixed-sign terms are of higher order than 3 for the Lindblad and corotation kinds and
are left out).  Labels are faster:slower: inner Lindblad/vertical "(m+k+p):(m-1)", outer
"(m+1):(m+k+p)", order |k| + |p| + 1 (e.g. Mimas 2:1 ILR is m=2, k=p=0; Mimas 5:3 is
m=4 with k=1 (density) or p=1 (bending)).  A corotation resonance sits where the ring
moves with the pattern, so its label is "(m+k+p):m" inside and "m:(m+k+p)" outside, and
its order is the label difference |k| + |p| (the corotation eccentricity resonance next to
a first-order Lindblad resonance is first order, as usual).

Radii are roots of the resonance condition found by Chandrupatla's bracketing method
(``scipy.optimize.elementwise.find_root``, vectorised over all candidates; a per-resonance
``scipy.optimize.brentq`` when that scipy module is missing) on a bracket of +-6 % around
the Keplerian estimate (or the whole search range for the m = 1 inner terms, where the
Keplerian estimate degenerates).

Satellites are taken one by one.  Saturn's co-orbitals Janus and Epimetheus swap orbits
every four years, moving their resonances by ~20 km (Janus) and ~80 km (Epimetheus); the
body file gives one epoch's orbits, and each moon is treated separately.

Strengths: see :func:`forcing_potentials` and :func:`torque_per_sigma`; wave zones: see
:func:`wave_zones`.  Which of these terms are observable features (waves that fit in
their ring, resonance-held edges, narrow rings, overlap regions) is decided in
:mod:`occplan.features`.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass

import numpy as np

from .bodies import get_body
from .constants import DEFAULT_MAX_M, GRAVITATIONAL_CONSTANT_KM3_KG_S2, SECONDS_PER_DAY
from .dynamics import (
    frequencies,
    frequency_radial_derivatives,
    satellite_rates_rad_s,
    separation_coefficient,
)
from .errors import InputError

__all__ = [
    "DEFAULT_MAX_M",
    "MAX_ORDER",
    "Resonance",
    "find_resonances",
    "forcing_potentials",
    "resonance_terms",
    "torque_per_sigma",
    "wave_zones",
]

MAX_ORDER = 3
KINDS = ("ILR", "OLR", "IVR", "OVR", "CR")
_SIDE = {"ILR": 1, "OLR": -1, "IVR": 1, "OVR": -1}
KM4_S2_TO_CM4_S2 = 1e20
G_CM2_TO_KG_KM2 = 1e7  # 1 g/cm^2 = 1e-3 kg / 1e-10 km^2
CM2_S_TO_KM2_S = 1e-10
EDGE_DISTANCE_KM = 30.0
EDGE_PAD_KM = 5.0
EDGE_VISCOUS_FRACTION = 0.05
KEPLER_NODES = 16
ZONE_DAMPING_FACTOR = 3.0 ** (1.0 / 3.0)  # x_end = 3^(1/3) x_D: amplitude down to e^-3 (5 %)


@dataclass(frozen=True)
class Resonance:
    """One satellite resonance in the rings.

    Attributes
    ----------
    label : str
        faster:slower ratio, e.g. "2:1" (module docstring).
    satellite, kind, wave : str
        kind ILR/OLR/IVR/OVR/CR; wave 'density', 'bending' or 'none' (corotation
        resonances and resonance-held edges launch no wave).
    m, k, p, order : int
    resonance_radius_km, pattern_speed_deg_day : float
    torque_per_sigma : float
        Torque per unit ring surface density in cm^4 s^-2 (torque in dyn cm per g cm^-2;
        cgs as in the ring literature).  Multiply by sigma in g/cm^2 for dyn cm.
    propagation : str
        'outward', 'inward' or 'none'.
    zone_inner_km, zone_outer_km : float
        Radial interval of the linear wave train, or the libration zone of a corotation
        resonance (not yet clipped at ring edges: see :mod:`occplan.features`).
    first_wavelength_km, damping_length_km, shortest_wavelength_km : float
        nan where there is no wave.  shortest_wavelength_km is the shortest wavelength
        inside the zone, the one an observer must resolve.
    surface_density_g_cm2 : float
        Surface density used (region value or override; nan outside every region).
    region : str
        Ring region at the resonance ('' if none).
    strength_method : str
        'closed form', 'kepler quadrature' or 'factorised' (:func:`forcing_potentials`).
    """

    label: str
    satellite: str
    kind: str
    wave: str
    m: int
    k: int
    p: int
    order: int
    resonance_radius_km: float
    pattern_speed_deg_day: float
    torque_per_sigma: float
    propagation: str
    zone_inner_km: float
    zone_outer_km: float
    first_wavelength_km: float
    damping_length_km: float
    shortest_wavelength_km: float
    surface_density_g_cm2: float
    region: str
    strength_method: str = "closed form"

    @property
    def torque_dyn_cm(self) -> float:
        """The torque itself: torque_per_sigma x the region's surface density (0 outside
        every ring region, where there is no ring material to launch a wave in)."""
        sig = self.surface_density_g_cm2
        return self.torque_per_sigma * sig if self.region and np.isfinite(sig) and sig > 0 else 0.0

    def to_row(self) -> dict:
        """A dict with the zones field names of docs/output_schema.md first, then the extra fields."""
        return dataclasses.asdict(self)


# --- enumeration ----------------------------------------------------------------------------

def resonance_terms(max_order: int = MAX_ORDER):
    """The (kind, k, p) combinations up to ``max_order``, with k, p >= 0 inside, <= 0 outside.

    Returns
    -------
    list of (kind, k, p)
    """
    terms = []
    for q in range(1, max_order + 1):
        for p in range(q + 1):
            k = q - 1 - p  # Lindblad / vertical: q = k + p + 1
            if k >= 0:
                kind_in, kind_out = ("ILR", "OLR") if p % 2 == 0 else ("IVR", "OVR")
                terms += [(kind_in, k, p), (kind_out, -k, -p)]
            k = q - p  # corotation: q = k + p, p even
            if p % 2 == 0 and k >= 0:
                terms += [("CR", k, p), ("CR", -k, -p)]
    return terms


def _label(kind, m, k, p):
    j = m + k + p
    if kind == "CR":
        return f"{j}:{m}" if k + p > 0 else f"{m}:{j}"
    return f"{j}:{m - 1}" if _SIDE[kind] > 0 else f"{m + 1}:{j}"


def _order(kind, k, p):
    return abs(k) + abs(p) + (0 if kind == "CR" else 1)


# --- root finding ---------------------------------------------------------------------------

def _condition(r_km, body, m, pattern, side, vertical):
    n, kappa, nu = frequencies(body, r_km)
    return m * (n - pattern) - side * np.where(vertical, nu, kappa)


def _solve(body, m, pattern, side, vertical, lo, hi):
    """Roots of the resonance condition on brackets [lo, hi] (nan where none)."""
    f_lo = _condition(lo, body, m, pattern, side, vertical)
    f_hi = _condition(hi, body, m, pattern, side, vertical)
    ok = np.isfinite(f_lo) & np.isfinite(f_hi) & (np.sign(f_lo) * np.sign(f_hi) < 0)
    r = np.full(m.shape, np.nan)
    if not np.any(ok):
        return r
    args = (m[ok], pattern[ok], side[ok], vertical[ok])
    try:
        from scipy.optimize.elementwise import find_root
    except ImportError:  # scipy < 1.15
        from scipy.optimize import brentq

        r[ok] = [brentq(lambda x, *a: float(_condition(x, body, *a)), a0, b0, args=a1,
                        xtol=1e-9) for a0, b0, a1 in zip(lo[ok], hi[ok], zip(*args))]
        return r
    res = find_root(lambda x, *a: _condition(x, body, *a), (lo[ok], hi[ok]), args=args,
                    tolerances={"xatol": 1e-9, "xrtol": 1e-15})
    r[ok] = np.where(res.success, res.x, np.nan)
    return r


# --- strengths ------------------------------------------------------------------------------

def _kepler(mean_anomaly, e):
    """Radius ratio r_s/a and phi = f - M on mean-anomaly nodes (Newton on Kepler's equation)."""
    ecc = e[:, None]
    big_e = mean_anomaly + ecc * np.sin(mean_anomaly)
    for _ in range(8):
        big_e = big_e - (big_e - ecc * np.sin(big_e) - mean_anomaly) / (1 - ecc * np.cos(big_e))
    half = big_e / 2.0
    true = 2.0 * np.arctan2(np.sqrt(1 + ecc) * np.sin(half), np.sqrt(1 - ecc) * np.cos(half))
    phi = np.angle(np.exp(1j * (true - mean_anomaly)))
    return 1.0 - ecc * np.cos(big_e), phi


def _planar_eccentric(r, a, gm, e, m, k, nodes=KEPLER_NODES):
    """Phi_{m,k}(r) and r dPhi/dr of a satellite on an eccentric, equatorial orbit (km^2/s^2).

    Phi_{m,k} = 2 <F_m(r, r_s(M)) cos(m phi(M) - k M)>_M, F_m = -(GM / 2 r_s) C^(m)(r/r_s)
    (+ GM r / 2 r_s^2 for m = 1, the indirect term), phi = f - M; the mean over the mean
    anomaly M by the trapezoidal rule on ``nodes`` points (exponentially convergent for a
    periodic integrand: the harmonics fall off like (m e)^j, so the aliasing error is about
    (m e)^(nodes - 2|k|); :func:`forcing_potentials` picks 8, 16 or 32 nodes by m e and the
    tests compare with 64).
    """
    mean_anomaly = 2.0 * np.pi * np.arange(nodes) / nodes
    rho, phi = _kepler(mean_anomaly, e)
    # r_s(M) = r_s(2 pi - M): the separation coefficients, which depend on r / r_s only, are
    # evaluated on the nodes 0..pi and mirrored (half the Laplace-coefficient work)
    mirror = np.minimum(np.arange(nodes), (nodes - np.arange(nodes)) % nodes)
    first = np.arange(int(mirror.max()) + 1)
    rho = rho[:, first][:, mirror]
    r_s = a[:, None] * rho
    c_half, qdc_half = separation_coefficient(0.5, m[:, None], r[:, None] / r_s[:, first])
    c, qdc = c_half[:, mirror], qdc_half[:, mirror]
    direct = -gm[:, None] / (2.0 * r_s)
    indirect = np.where(m[:, None] == 1, gm[:, None] * r[:, None] / (2.0 * r_s**2), 0.0)
    weight = np.cos(m[:, None] * phi - k[:, None] * mean_anomaly)
    phi_mk = 2.0 * np.mean((direct * c + indirect) * weight, axis=1)
    r_dphi = 2.0 * np.mean((direct * qdc + indirect) * weight, axis=1)
    return phi_mk, r_dphi


def forcing_potentials(r, a, gm, e, inc_rad, m, k, p):
    """Forcing amplitude of each term at ring radius r.

    Parameters
    ----------
    r, a : arrays, km
        Ring radius and satellite semi-major axis.
    gm, e, inc_rad : arrays
        Satellite GM (km^3/s^2), eccentricity, inclination (rad) to the ring plane.
    m, k, p : int arrays

    Returns
    -------
    phi : array, km^2/s^2
        Potential amplitude Phi of the planar terms (p even); for vertical terms (p odd)
        r times the amplitude of dPhi/dz at z = 0.
    r_dphi : array, km^2/s^2
        r dPhi/dr for planar terms (nan for vertical).
    method : array of str
        'closed form', 'kepler quadrature' or 'factorised'.

    Notes
    -----
    alpha = r/a; C_s^(m) is the Fourier coefficient of (a/|r - r_s|)^(2s), equal to the
    Laplace coefficient b_s^(m)(alpha) inside and alpha^(-2s) b_s^(m)(1/alpha) outside
    (:func:`occplan.dynamics.separation_coefficient`).

    - k = p = 0 (first order): Phi = -(GM/a) C_1/2^(m) (+ GM alpha / a for m = 1, the
      indirect term); closed form from the Laplace coefficient and its derivative
      (Goldreich & Tremaine 1979; Murray & Dermott 1999 appendix B).
    - p = 0, k != 0: exact in e by the mean-anomaly quadrature of ``_planar_eccentric``;
      to first order in e it reduces to Phi = -(GM/a)(e/2)(1 + 2km + alpha d/dalpha) C^(m)
      (M&D's f_27 / f_31 families; checked in the tests).
    - p = +-2, k = 0: with s = sin(i/2) the satellite's distance obeys
      Delta^2 = r^2 + a^2 - 2 r a [cos^2(i/2) cos psi + s^2 cos(theta + lambda - 2 Omega)],
      so to O(s^2) Phi = -(GM/a)(alpha/2) s^2 C_3/2^(m+-1) (M&D's f_57 family).
    - p = +-1, k = 0: dPhi/dz at z = 0 is -GM z_s / Delta^3 with z_s = a sin i sin(lambda -
      Omega), giving amplitude (GM/a^2)(sin i / 2) C_3/2^(m); phi returns r times it.
    - Mixed terms (k != 0 and p != 0): factorised, Phi_{k,p} ~ Phi_{0,p} Phi_{k,0}/Phi_{0,0}.
      This keeps the e^|k| sin(i)^|p| scaling and the Laplace-coefficient shape but not
      the exact mixed coefficient (method 'factorised').
    """
    r, a, gm, e, inc_rad = (np.asarray(v, dtype=float) for v in (r, a, gm, e, inc_rad))
    m, k, p = (np.asarray(v, dtype=int) for v in (m, k, p))
    alpha = r / a
    scale = gm / a
    c, qdc = separation_coefficient(0.5, m, alpha)
    ind = np.where(m == 1, scale * alpha, 0.0)
    phi0 = -scale * c + ind
    rd0 = -scale * qdc + ind
    phi = phi0.copy()
    rd = rd0.copy()
    method = np.full(m.shape, "closed form", dtype=object)

    ecc = k != 0
    # nodes by the harmonic content m e of the integrand (aliasing error ~ (m e)^(N - 2|k|))
    m_e = m * e
    for nodes, group in ((8, m_e < 0.02), (16, (m_e >= 0.02) & (m_e < 0.5)), (32, m_e >= 0.5)):
        sel = ecc & group
        if np.any(sel):
            ph, rdk = _planar_eccentric(r[sel], a[sel], gm[sel], e[sel], m[sel], k[sel], nodes)
            phi[sel], rd[sel] = ph, rdk
    method[ecc] = "kepler quadrature"
    ratio_k = np.where(ecc, phi / np.where(phi0 != 0, phi0, np.nan), 1.0)

    inc2 = np.abs(p) == 2
    if np.any(inc2):
        j = m[inc2] + np.sign(p[inc2])
        c3, qdc3 = separation_coefficient(1.5, j, alpha[inc2])
        s2 = np.sin(inc_rad[inc2] / 2.0) ** 2
        base = -scale[inc2] * alpha[inc2] / 2.0 * s2
        phi[inc2] = base * c3 * ratio_k[inc2]
        rd[inc2] = base * (c3 + qdc3) * ratio_k[inc2]
    vert = np.abs(p) % 2 == 1
    if np.any(vert):
        c3, _ = separation_coefficient(1.5, m[vert], alpha[vert])
        phi[vert] = scale[vert] * alpha[vert] * np.sin(inc_rad[vert]) / 2.0 * c3 * ratio_k[vert]
        rd[vert] = np.nan
    method[(p != 0) & ecc] = "factorised"
    return phi, rd, method


def torque_per_sigma(kind, m, pattern, n, kappa, nu, r_dn2, r_dk2, phi, r_dphi):
    """Torque per unit surface density, km^4 s^-2 (x 1e20 for cm^4 s^-2), and |r dD/dr|.

    Notes
    -----
    Lindblad (Goldreich & Tremaine 1979, eq. 13; Shu 1984)::

        T/sigma = m pi^2 Psi^2 / |r dD/dr|,  Psi = r dPhi/dr + 2 Omega/(Omega - Omega_p) Phi,
        D = kappa^2 - m^2 (Omega - Omega_p)^2

    Vertical (Shu, Cuzzi & Lissauer 1983, same form, from memory): Psi = r dPhi/dz with
    D = nu^2 - m^2 (Omega - Omega_p)^2.  Corotation (Goldreich & Tremaine 1979) for a
    uniform surface density::

        T/sigma = (m pi^2 / 2) Phi^2 |d(1/B)/dr / (dOmega/dr)|,  B = kappa^2 / (4 Omega)

    (Oort's B); the sign depends on the vortensity gradient, so the magnitude is given.
    All derivatives are analytic from the zonal sums (:mod:`occplan.dynamics`).
    """
    r_dn = r_dn2 / (2.0 * n)
    w = n - pattern
    r_dnu2 = 2.0 * r_dn2 - r_dk2
    r_dd = np.where(np.isin(kind, ("IVR", "OVR")), r_dnu2, r_dk2) - 2.0 * m**2 * w * r_dn
    with np.errstate(divide="ignore", invalid="ignore"):
        psi_l = r_dphi + 2.0 * n / w * phi
        lindblad = m * np.pi**2 * psi_l**2 / np.abs(r_dd)
        vertical = m * np.pi**2 * phi**2 / np.abs(r_dd)
        oort_b = kappa**2 / (4.0 * n)
        r_db = r_dk2 / (4.0 * n) - kappa**2 * r_dn / (4.0 * n**2)
        corot = m * np.pi**2 / 2.0 * phi**2 * np.abs(r_db / oort_b**2 / r_dn)
    out = np.where(kind == "CR", corot, np.where(np.isin(kind, ("IVR", "OVR")), vertical, lindblad))
    return out, np.abs(r_dd)


# --- wave zones -----------------------------------------------------------------------------

def wave_zones(r, r_dd, sigma_g_cm2, viscosity_cm2_s, freq, propagation_sign):
    """Linear density/bending-wave train of each resonance.

    Parameters
    ----------
    r, r_dd : arrays
        Resonance radius (km) and |r dD/dr| (s^-2).
    sigma_g_cm2, viscosity_cm2_s : arrays
        Surface density and kinematic viscosity of the ring at the resonance.
    freq : array, rad/s
        kappa (density waves) or nu (bending waves) at resonance.
    propagation_sign : array
        +1 outward, -1 inward.

    Returns
    -------
    dict of arrays: ell_km, first_wavelength_km, damping_length_km, zone_inner_km,
    zone_outer_km, shortest_wavelength_km.

    Notes
    -----
    WKB dispersion of a cold, self-gravitating ring near resonance (Goldreich & Tremaine
    1978, 1979; Shu 1984): |D| = 2 pi G sigma |k| with D ~ (dD/dr) x, so the wavenumber at
    distance x from resonance is k = |x| / ell^2, ell = (2 pi G sigma r / |r dD/dr|)^(1/2),
    and the wavelength is 2 pi ell^2 / |x|.  The phase x^2 / (2 ell^2) first reaches 2 pi
    at x_1 = 2 sqrt(pi) ell: ``first_wavelength_km``.

    Damping: with viscosity the local dispersion relation becomes
    kappa^2 - w^2 - 2 pi G sigma |k| + i w (7/3) nu_v k^2 = 0 (w = m (Omega - Omega_p) ~
    kappa; 7/3 = 4/3 radial + 1 azimuthal, Shu 1984; Goldreich & Tremaine 1978).  At fixed
    real frequency the wavenumber gains k_I = (7/3) nu_v kappa k^2 / (2 pi G sigma) (the
    amplitude decays at (7/6) nu_v k^2 in time, carried at c_g = pi G sigma / kappa), so
    A ~ exp(-int k_I dx) = exp(-(x/x_D)^3) with x_D^3 = 18 pi G sigma ell^4 / (7 nu_v kappa),
    i.e. nu_v = (9/7) 2 pi G sigma ell^4 / (kappa x_D^3), the form used to read viscosities
    from wave damping (Tiscareno et al. 2007, Icarus 189, 14; from memory)
    (``damping_length_km``).  Bending waves use the same form with nu in place of kappa.

    The zone runs from the resonance to x_end = max(3^(1/3) x_D, x_1) on the propagation
    side (amplitude down to e^-3 ~ 5 %); the shortest wavelength inside it is
    2 pi ell^2 / x_end.  Nonlinear waves (strong resonances in dense rings) are longer
    than this; the linear zone is a planning estimate.
    """
    g_sigma = GRAVITATIONAL_CONSTANT_KM3_KG_S2 * sigma_g_cm2 * G_CM2_TO_KG_KM2  # km/s^2
    nu_v = viscosity_cm2_s * CM2_S_TO_KM2_S
    with np.errstate(divide="ignore", invalid="ignore"):
        ell2 = 2.0 * np.pi * g_sigma * r / r_dd
        ell = np.sqrt(ell2)
        x1 = 2.0 * np.sqrt(np.pi) * ell
        x_d = np.cbrt(18.0 * np.pi * g_sigma * ell2**2 / (7.0 * nu_v * freq))
        x_end = np.maximum(ZONE_DAMPING_FACTOR * x_d, x1)
        shortest = 2.0 * np.pi * ell2 / x_end
    has = np.isfinite(x_end) & (x_end > 0)
    reach = np.where(has, x_end, 0.0)
    inner = np.where(propagation_sign > 0, r, r - reach)
    outer = np.where(propagation_sign > 0, r + reach, r)
    return {"ell_km": ell, "first_wavelength_km": x1, "damping_length_km": x_d,
            "zone_inner_km": inner, "zone_outer_km": outer, "shortest_wavelength_km": shortest}


def corotation_half_width_km(phi, r, n, r_dn2, kappa):
    """Libration half-width of a corotation resonance, km.

    Notes
    -----
    Pendulum model: with x = r - r_c and phi = m (theta - Omega_p t), dphi/dt = m Omega' x and
    dL/dt = m Phi sin(phi) with dL/dr = r kappa^2 / (2 Omega), so the separatrix half-width is
    x_max = 2 (|Phi| / (|Omega'| dL/dr))^(1/2)  (Keplerian: 4 (|Phi|/3)^(1/2) / Omega;
    Goldreich & Tremaine 1979 use the same pendulum).
    """
    d_omega = np.abs(r_dn2 / (2.0 * n) / r)
    dl_dr = r * kappa**2 / (2.0 * n)
    return 2.0 * np.sqrt(np.abs(phi) / (d_omega * dl_dr))


# --- the public entry point -----------------------------------------------------------------

def _check(body, rmin_km, rmax_km, max_order, max_m, sigma_g_cm2, viscosity_cm2_s, min_torque):
    rmin = body.inner_ring_km if rmin_km is None else float(rmin_km)
    rmax = body.outer_ring_km if rmax_km is None else float(rmax_km)
    if not (np.isfinite(rmin) and np.isfinite(rmax)) or rmin >= rmax:
        raise InputError(f"--rmin ({rmin:g} km) must be below --rmax ({rmax:g} km)")
    reach_km = max([10.0 * body.outer_ring_km] + [sat.a_km for sat in body.satellites])
    if rmax > reach_km:
        raise InputError(f"--rmax {rmax:g} km is beyond {reach_km:g} km (ten times {body.name}'s "
                         "outer ring radius or its outermost satellite's orbit, whichever is "
                         "larger); resonances there are no ring features, give a smaller --rmax")
    if rmin <= body.equatorial_radius_km:
        raise InputError(f"--rmin {rmin:g} km is inside {body.name} (equatorial radius "
                         f"{body.equatorial_radius_km:g} km); give a ring radius above it")
    if int(max_order) != max_order or not 1 <= max_order <= MAX_ORDER:
        raise InputError(f"--max-order {max_order} is out of range; give 1, 2 or {MAX_ORDER}")
    if int(max_m) != max_m or max_m < 1:
        raise InputError(f"--max-m {max_m} must be a positive integer")
    # Work budget: every satellite x term x m is a candidate row, and the solved ones cost
    # Laplace coefficients of order m; 400,000 rows (Saturn's 14 satellites, order <= 3, m up
    # to about 1,300) take about a minute and under 1 GB (m <= 1000: 34 s, 0.3 GB measured).
    # Counted over all the body's satellites: --satellite only lowers the real cost.
    MAX_RESONANCE_CANDIDATES = 400_000
    n_rows = len(body.satellites) * len(resonance_terms(int(max_order))) * int(max_m)
    if n_rows > MAX_RESONANCE_CANDIDATES:
        per_m = len(body.satellites) * len(resonance_terms(int(max_order)))
        raise InputError(f"--max-m {max_m:,} makes {n_rows:,} candidate resonances ({per_m} "
                         f"per m for {body.name}), over the budget of "
                         f"{MAX_RESONANCE_CANDIDATES:,}; give --max-m "
                         f"{MAX_RESONANCE_CANDIDATES // per_m:,} or less (or a lower --max-order)")
    if sigma_g_cm2 is not None and not sigma_g_cm2 > 0:
        raise InputError(f"--sigma {sigma_g_cm2} g/cm^2 must be a positive surface density")
    if viscosity_cm2_s is not None and not viscosity_cm2_s > 0:
        raise InputError(f"--viscosity {viscosity_cm2_s} cm^2/s must be positive")
    if min_torque is not None and not min_torque >= 0:
        raise InputError(f"--min-torque {min_torque} must be zero or positive (cm^4 s^-2)")
    return rmin, rmax


def find_resonances(body, rmin_km=None, rmax_km=None, max_order=3, satellites=None,
                    min_torque=None, sigma_g_cm2=None, viscosity_cm2_s=None,
                    max_m=DEFAULT_MAX_M, near_rings_km=None):
    """All satellite resonances of a body in a radius range, sorted by radius.

    Parameters
    ----------
    body : Body or str
        Body or its name / TOML path.
    rmin_km, rmax_km : float, optional
        Radius range, km (default: the body's ring span).
    max_order : int
        Highest order, 1..3.
    satellites : list of str, optional
        Satellite names (default: all in the body file).
    min_torque : float, optional
        Drop resonances with torque_per_sigma below this (cm^4 s^-2).
    sigma_g_cm2, viscosity_cm2_s : float, optional
        Override the ring regions' surface density and viscosity everywhere.
    max_m : int
        Highest azimuthal wavenumber m.
    near_rings_km : float, optional
        Keep only terms inside a ring region or within this distance of a region or gap
        edge (what :mod:`occplan.features` can use); default: every term in the range.

    Returns
    -------
    list of Resonance
    """
    body = get_body(body)
    rmin, rmax = _check(body, rmin_km, rmax_km, max_order, max_m, sigma_g_cm2,
                        viscosity_cm2_s, min_torque)
    sats = body.satellites if not satellites else tuple(body.satellite(s) for s in satellites)
    terms = resonance_terms(int(max_order))
    ms = np.arange(1, int(max_m) + 1)

    # candidate table: satellites x terms x m
    cols = {key: [] for key in ("sat", "kind", "m", "k", "p", "pattern")}
    for isat, sat in enumerate(sats):
        n_s, apse, node = satellite_rates_rad_s(body, sat)
        for kind, k, p in terms:
            cols["sat"].append(np.full(ms.size, isat))
            cols["kind"].append(np.full(ms.size, kind, dtype=object))
            cols["m"].append(ms)
            cols["k"].append(np.full(ms.size, k))
            cols["p"].append(np.full(ms.size, p))
            cols["pattern"].append(((ms + k + p) * n_s - k * apse - p * node) / ms)
    c = {key: np.concatenate(v) for key, v in cols.items()}
    kind = c["kind"].astype(str)
    side = np.array([_SIDE.get(x, 0) for x in kind])
    vertical = np.isin(kind, ("IVR", "OVR"))
    m = c["m"].astype(float)

    # brackets around the Keplerian estimate n = Omega_p m / (m - side)
    with np.errstate(divide="ignore", invalid="ignore"):
        n_guess = c["pattern"] * m / (m - side)
        r0 = np.cbrt(body.gm_km3_s2 / n_guess**2)
    degenerate = (m - side) == 0
    lo = np.where(degenerate, 1.001 * body.equatorial_radius_km, 0.94 * r0)
    hi = np.where(degenerate, 1.5 * rmax, 1.06 * r0)
    keep = (c["pattern"] > 0) & (degenerate | ((r0 > 0.9 * rmin) & (r0 < 1.1 * rmax)))
    idx = np.nonzero(keep)[0]
    r = _solve(body, m[idx], c["pattern"][idx], side[idx], vertical[idx], lo[idx], hi[idx])
    inside = np.isfinite(r) & (r >= rmin) & (r <= rmax)
    if near_rings_km is not None:
        # only terms in a ring region or within near_rings_km of a region or gap edge: the
        # rest hold no feature, and their strengths are most of the cost
        edges = np.array([x for reg in body.rings for x in reg.edge_a_km]
                         + [x for g in body.gaps for x in (g.inner_km, g.outer_km)])
        rr = np.where(np.isfinite(r), r, 0.0)
        near = np.min(np.abs(rr[:, None] - edges[None, :]), axis=1) <= float(near_rings_km)
        inside &= (body.region_at_semimajor(rr) != "") | near
    idx, r = idx[inside], r[inside]

    sat_i = c["sat"][idx]
    a = np.array([sats[i].a_km for i in sat_i])
    gm = np.array([sats[i].gm_km3_s2 for i in sat_i])
    e = np.array([sats[i].e for i in sat_i])
    inc = np.radians([sats[i].i_deg for i in sat_i])
    kind_i, m_i, k_i, p_i = kind[idx], c["m"][idx], c["k"][idx], c["p"][idx]
    pattern = c["pattern"][idx]
    n, kappa, nu = frequencies(body, r)
    r_dn2, r_dk2 = frequency_radial_derivatives(body, r)
    phi, r_dphi, method = forcing_potentials(r, a, gm, e, inc, m_i, k_i, p_i)
    torque, r_dd = torque_per_sigma(kind_i, m_i, pattern, n, kappa, nu, r_dn2, r_dk2, phi, r_dphi)
    torque_cgs = torque * KM4_S2_TO_CM4_S2

    # resonance radii are semi-major axes: narrow eccentric rings count by their edges'
    # semi-major axes, not by their radial envelopes
    region = body.region_at_semimajor(r)
    reg_by_name = {reg.name: reg for reg in body.rings}
    sig = np.array([sigma_g_cm2 if sigma_g_cm2 is not None else
                    (reg_by_name[x].surface_density_g_cm2 if x else np.nan) for x in region])
    visc = np.array([viscosity_cm2_s if viscosity_cm2_s is not None else
                     (reg_by_name[x].viscosity_cm2_s if x else np.nan) for x in region])
    wave = np.where(kind_i == "CR", "none", np.where(np.isin(kind_i, ("IVR", "OVR")),
                                                    "bending", "density"))
    # density waves live where D > 0, bending waves where D < 0: sign(dD/dr) picks the side
    w = n - pattern
    r_dn = r_dn2 / (2.0 * n)
    d_signed = np.where(np.isin(kind_i, ("IVR", "OVR")), 2.0 * r_dn2 - r_dk2, r_dk2) \
        - 2.0 * m_i**2 * w * r_dn
    prop_sign = np.where(wave == "bending", -np.sign(d_signed), np.sign(d_signed))
    zones = wave_zones(r, r_dd, sig, visc, np.where(wave == "bending", nu, kappa), prop_sign)
    half = corotation_half_width_km(phi, r, n, r_dn2, kappa)

    to_deg_day = 180.0 / np.pi * SECONDS_PER_DAY
    out = []
    for i in range(r.size):
        fields = dict(
            label=_label(kind_i[i], int(m_i[i]), int(k_i[i]), int(p_i[i])),
            satellite=sats[sat_i[i]].name, kind=str(kind_i[i]), wave=str(wave[i]),
            m=int(m_i[i]), k=int(k_i[i]), p=int(p_i[i]),
            order=_order(kind_i[i], int(k_i[i]), int(p_i[i])),
            resonance_radius_km=float(r[i]),
            pattern_speed_deg_day=float(pattern[i] * to_deg_day),
            torque_per_sigma=float(torque_cgs[i]),
            surface_density_g_cm2=float(sig[i]), region=str(region[i]),
            strength_method=str(method[i]),
        )
        if wave[i] == "none":
            h = float(half[i])  # libration half-width (occplan.features keeps those >= 0.5 km)
            fields.update(propagation="none", zone_inner_km=float(r[i] - h),
                          zone_outer_km=float(r[i] + h), first_wavelength_km=np.nan,
                          damping_length_km=np.nan, shortest_wavelength_km=np.nan)
        else:
            fields.update(
                propagation="outward" if prop_sign[i] > 0 else "inward",
                zone_inner_km=float(zones["zone_inner_km"][i]),
                zone_outer_km=float(zones["zone_outer_km"][i]),
                first_wavelength_km=float(zones["first_wavelength_km"][i]),
                damping_length_km=float(zones["damping_length_km"][i]),
                shortest_wavelength_km=float(zones["shortest_wavelength_km"][i]))
        out.append(Resonance(**fields))
    if min_torque is not None:
        out = [x for x in out if x.torque_per_sigma >= min_torque]
    out.sort(key=lambda x: (x.resonance_radius_km, x.satellite, x.kind))
    return out
