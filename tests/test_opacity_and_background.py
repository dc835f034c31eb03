"""The ring's opacity and the planet's light in the signal to noise of ring features.

Checks: the exp(-tau/mu) law and the feature contrast (common practice), the CCD noise
budget of a feature, the seeing-blurred planet light against the planet's magnitude from its
geometric albedo (common practice), and the two event-level claims: B-ring features through
opaque ring get far lower SNR than A-ring features for the same star, and Uranus's light
lowers the SNR at its rings in V far more than in K (methane bands).
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from occplan import photometry as ph
from occplan.bodies import get_body
from occplan.ephemeris import Observer, StarSpec, parse_utc, tdb_s_of
from occplan.events import evaluate_event
from occplan.skylight import ApertureBackground
from occplan.telescope import load_telescope

from .test_geometry import saturn_radec


def test_slant_transmission_law():
    """exp(-tau/|sin B*|) (common practice): exp(-tau) seen face-on, the same from either
    face, and the outer B ring (tau ~2) at B* = 18 deg passes ~0.2 % of the light."""
    assert ph.slant_transmission(0.6, 90.0) == pytest.approx(math.exp(-0.6), rel=1e-12)
    assert ph.slant_transmission(0.6, -30.0) == pytest.approx(math.exp(-1.2), rel=1e-12)
    assert ph.slant_transmission(2.0, 18.0) == pytest.approx(math.exp(-2 / math.sin(math.radians(18))), rel=1e-12)
    assert ph.slant_transmission(2.0, 18.0) < 0.002


def test_feature_contrast_limits():
    """Small-amplitude wave: T a tau/mu; edge and narrow ring: 1 - T; bending wave: the
    slope times cot|B*| (Shu, Cuzzi & Lissauer 1983, from memory)."""
    tau, b = 0.5, 20.0
    mu = math.sin(math.radians(b))
    t = math.exp(-tau / mu)
    tr, c = ph.feature_contrast("density wave", 1e-4, tau, b)
    assert tr == pytest.approx(t) and c == pytest.approx(t * 1e-4 * tau / mu, rel=1e-6)
    assert ph.feature_contrast("edge", 1.0, tau, b)[1] == pytest.approx(1 - t)
    assert ph.feature_contrast("narrow ring", 1.0, tau, b)[1] == pytest.approx(1 - t)
    bend = ph.feature_contrast("bending wave", 1e-5, tau, b)[1]
    assert bend == pytest.approx(t * 1e-5 / math.tan(math.radians(b)) * tau / mu, rel=1e-6)
    assert math.isnan(ph.feature_contrast("corotation", 1.0, tau, b)[1])
    # a nonlinear wave: the optical depth swings by at most half its mean either way
    big = ph.feature_contrast("density wave", 5.0, 3.0, b)[1]
    assert big == pytest.approx((math.exp(-1.5 / mu) - math.exp(-4.5 / mu)) / 2, rel=1e-9)


def test_feature_snr_is_the_ccd_budget():
    """SNR = c S sqrt(N) / sqrt(T S + B t + n RN^2 + n D t + (sigma T S)^2), by hand."""
    rate, trans, contrast, bg, t = 2.0e5, 0.2, 0.05, 3.0e4, 0.1
    rn, npix, sig, dark = 2.0, 50.0, 0.01, 0.5
    element, v, dt = 4.0, 10.0, 0.1
    s = rate * t
    noise = math.sqrt(trans * s + bg * t + npix * rn**2 + npix * dark * t + (sig * trans * s) ** 2)
    n = element / (v * dt)
    expected = contrast * s * math.sqrt(n) / noise
    got = ph.feature_snr(rate, trans, contrast, bg, t, read_noise_e=rn, n_pixels=npix,
                         scintillation_sigma=sig, dark_e_s=dark, element_km=element,
                         radial_velocity_km_s=v, sampling_interval_s=dt)
    assert got == pytest.approx(expected, rel=1e-12)


def test_planet_light_in_a_large_aperture_is_the_planet_magnitude():
    """With the aperture around the whole disk, the collected planet light equals the
    planet's flux from its geometric albedo p: m = m_sun - 2.5 log10(p A_disk / (pi r^2
    Delta^2)), A_disk = pi a b the projected ellipse, r and Delta in AU (common practice).
    Tolerance 2 %: the integration grid's sampling of the limb."""
    uranus = get_body("uranus")
    tel = load_telescope(None, aperture_radius_arcsec=6.0, seeing_fwhm_arcsec=0.3, band="V",
                         aperture_m=1.0, central_obstruction=0.0, throughput=1.0)
    delta_km, r_au, b_deg = 19.0 * 1.495978707e8, 19.5, 40.0
    sky = ApertureBackground(uranus, "V", tel, delta_km, r_au, b_deg, b_deg, 0.0)
    planet, _ = sky.rates_many(np.array([0.0]), np.array([0.0]))
    a = uranus.equatorial_radius_km
    b = math.sqrt((a * math.sin(math.radians(b_deg))) ** 2
                  + (uranus.polar_radius_km * math.cos(math.radians(b_deg))) ** 2)
    p_v = uranus.photometry["planet_geometric_albedo"]["V"]
    au = 1.495978707e8
    mag = ph.band("V").sun_mag - 2.5 * math.log10(p_v * a * b / au**2 / (r_au**2 * (delta_km / au) ** 2))
    expected = ph.star_photon_rate(mag, "V", 1.0, 1.0, 0.0)
    assert planet[0] == pytest.approx(expected, rel=0.02)


def test_uranus_light_swamps_a_v12_star_in_v_not_in_k():
    """At the epsilon ring (~3.6 arcsec from the centre) a 0.6-m telescope with 1.5 arcsec
    seeing and a 2 arcsec aperture collects far more of Uranus's light than of a V = 12
    star in V; in K (methane absorption, albedo ~0.005) far less."""
    uranus = get_body("uranus")
    delta_km = 19.0 * 1.495978707e8
    f_km = 51149.0  # along the rings' long axis (P = 0)
    rates = {}
    for band_name in ("V", "K"):
        tel = load_telescope(None, aperture_m=0.6, band=band_name, aperture_radius_arcsec=2.0,
                             seeing_fwhm_arcsec=1.5)
        sky = ApertureBackground(uranus, band_name, tel, delta_km, 19.5, 60.0, 60.0, 0.0)
        planet, ring = sky.rates_many(np.array([f_km]), np.array([0.0]))
        star = ph.star_photon_rate(12.0 if band_name == "V" else 10.0, band_name, 0.6,
                                   tel.throughput, tel.central_obstruction)
        rates[band_name] = planet[0] / star
    assert rates["V"] > 10.0
    assert rates["K"] < rates["V"] / 20.0


@pytest.fixture(scope="module")
def saturn_2028():
    """An invented star on Saturn's geocentric path on 2028-10-30 (B* ~ +18 deg): the chord
    crosses the C, B and A rings on both sides of the planet."""
    from occplan.ephemeris import get_ephemeris

    eph = get_ephemeris()
    saturn = get_body("saturn")
    t = tdb_s_of(parse_utc("2028-10-30T02:40:00Z"))
    ra, dec = saturn_radec(eph, saturn, t)
    star = StarSpec(ra_deg=ra, dec_deg=dec + 8.0 / 3600.0, vmag=9.0, kmag=6.0, name="invented")
    return evaluate_event(saturn, star, Observer.geocentre(), ("2028-10-30T00:00Z", "2028-10-30T05:20Z"),
                          telescope=load_telescope(None, band="K"))


def test_b_ring_features_are_seen_through_opaque_ring(saturn_2028):
    """Same star, same chord: B-ring features (tau = 2 in the body file, exp(-tau/mu)
    transmission ~0.2 % at |B*| ~ 18 deg) get SNRs far below the A ring's (tau = 0.6)."""
    rep = saturn_2028
    assert abs(rep.track.meta["star_elevation_deg"]) == pytest.approx(18.0, abs=2.0)
    def snrs(region, lo, hi):
        return np.array([z.snr_per_element for z in rep.zones if z.feature.region == region
                         and "wave" in z.feature.feature and lo <= z.feature.amplitude < hi
                         and np.isfinite(z.snr_per_element)])
    # like with like: nonlinear waves, and weak waves (amplitude 1-10 %)
    for lo, hi in ((1.0, np.inf), (0.01, 0.1)):
        a, b = snrs("A ring", lo, hi), snrs("B ring", lo, hi)
        assert a.size and b.size, (lo, hi)
        assert np.median(b) < np.median(a) / 3.0, (lo, np.median(a), np.median(b))
    for z in rep.zones:
        if z.feature.region == "B ring" and np.isfinite(z.transmission):
            assert z.transmission < 0.003


def test_event_snr_includes_the_planet_light():
    """A Uranus chord in V: the epsilon ring's SNR drops when the body file's planet albedo
    is used instead of a dark planet (same star, site, telescope)."""
    from occplan.ephemeris import get_ephemeris

    eph = get_ephemeris()
    uranus = get_body("uranus")
    t = tdb_s_of(parse_utc("2028-11-16T04:00:00Z"))
    ra, dec = saturn_radec(eph, uranus, t)
    star = StarSpec(ra_deg=ra, dec_deg=dec + 1.0 / 3600.0, vmag=12.0, kmag=11.0, name="invented")
    tel = load_telescope(None, aperture_m=0.6, band="V", aperture_radius_arcsec=2.0)
    window = ("2028-11-16T02:00Z", "2028-11-16T06:00Z")
    phot = dict(uranus.photometry)
    dark = dataclasses.replace(uranus, photometry={
        **phot, "planet_geometric_albedo": {k: 1e-9 for k in "VRIJHK"}})
    snr = {}
    for name, body in (("real", uranus), ("dark", dark)):
        rep = evaluate_event(body, star, Observer.geocentre(), window, telescope=tel)
        eps = [z.snr_per_element for z in rep.zones if z.feature.name == "epsilon ring"]
        assert eps
        snr[name] = max(eps)
    assert snr["real"] < snr["dark"] / 2.0
