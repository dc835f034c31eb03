"""Photometry and telescope profiles: analytic cases, invariants and input checks.

Published reference values are in tests/accuracy/test_photometry_refs.py.
"""

from __future__ import annotations

import math
from types import SimpleNamespace

import numpy as np
import pytest

from occplan import photometry as ph
from occplan.errors import DataFileError, InputError, UnknownNameError
from occplan.telescope import ALLOWED_KEYS, load_telescope, with_overrides

AU_KM = 149597870.7


# --------------------------------------------------------------------------- bands


def test_band_lookup_case_and_alias():
    assert ph.band("v").name == "V"
    assert ph.band("Ks") is ph.band("K")  # 2MASS Ks is the K band here
    assert ph.band_names() == ["V", "R", "I", "J", "H", "K"]  # sorted blue to red


def test_unknown_band_lists_known_ones():
    with pytest.raises(UnknownNameError) as err:
        ph.band("Z")
    for name in ph.band_names():
        assert name in str(err.value)


def test_every_band_number_has_a_source():
    # STYLE.md: every number in a data file carries a source.
    for name in ph.band_names():
        src = ph.band(name).sources
        for key in ("wavelength_source", "bandwidth_source", "zero_point_source", "sun_mag_source"):
            assert src.get(key), (name, key)


# --------------------------------------------------------------------------- resolution


def test_fresnel_scale_hand_values():
    # sqrt(lambda D / 2): lambda = 1 um = 1e-9 km, D = 2e9 km -> exactly 1 km (hand computation).
    assert ph.fresnel_scale_km(1.0, 2.0e9) == pytest.approx(1.0, rel=1e-12)
    # Scales as sqrt(lambda) and sqrt(D): 4x the wavelength doubles F.
    f = ph.fresnel_scale_km(np.array([0.5, 2.0]), 1.0e9)
    assert f[1] / f[0] == pytest.approx(2.0, rel=1e-12)


def test_projected_diameter_hand_value():
    # 1 mas = 4.8481368e-9 rad; at 1e9 km that is 4.8481 km (hand computation, small angle).
    assert ph.projected_stellar_diameter_km(1.0, 1.0e9) == pytest.approx(4.8481368, rel=1e-7)


def test_auto_class_rule_and_note():
    red = ph.stellar_angular_diameter_mas(10.0, 5.5, "auto")  # V-K = 4.5 > 3.7
    blue = ph.stellar_angular_diameter_mas(10.0, 8.5, "auto")  # V-K = 1.5
    assert red.luminosity_class == "giant" and "cannot tell" in red.note
    assert blue.luminosity_class == "dwarf" and "cannot tell" in blue.note
    assert ph.stellar_angular_diameter_mas(10.0, 8.5, "giant").note == ""


def test_dwarf_and_giant_relations_agree_for_k_stars():
    # The docstring's justification for defaulting to 'dwarf': for 2.3 <= V-K <= 3.7 the
    # Kervella (2004) and van Belle (1999) relations agree within 10 %.
    for vk in np.linspace(2.3, 3.7, 15):
        d = ph.stellar_angular_diameter_mas(8.0, 8.0 - vk, "dwarf").theta_mas
        g = ph.stellar_angular_diameter_mas(8.0, 8.0 - vk, "giant").theta_mas
        assert abs(g / d - 1.0) < 0.10, vk


def test_diameter_extrapolation_is_flagged():
    assert "extrapolated" in ph.stellar_angular_diameter_mas(12.0, 7.0, "dwarf").note
    with pytest.raises(InputError):
        ph.stellar_angular_diameter_mas(8.0, 7.0, "supergiant")


# --------------------------------------------------------------------------- photon rates


def test_pogson_scaling_and_area():
    # Pogson's ratio: 5 magnitudes are a factor 100 in flux (common practice).
    r10 = ph.star_photon_rate(10.0, "V", 1.0, 0.5)
    r15 = ph.star_photon_rate(15.0, "V", 1.0, 0.5)
    assert r10 / r15 == pytest.approx(100.0, rel=1e-12)
    # Area scales as D^2 (1 - eps^2).
    r2 = ph.star_photon_rate(10.0, "V", 2.0, 0.5, central_obstruction=0.5)
    assert r2 / r10 == pytest.approx(4.0 * 0.75, rel=1e-12)


def test_surface_brightness_inverse_square():
    # Twice as far from the Sun: 4x fainter, i.e. +5 log10(2) = 1.505 mag/arcsec^2.
    mu1 = ph.surface_brightness_mag_arcsec2("V", 0.4, 5.0)
    mu2 = ph.surface_brightness_mag_arcsec2("V", 0.4, 10.0)
    assert mu2 - mu1 == pytest.approx(5.0 * math.log10(2.0), abs=1e-12)


def test_background_not_evaluated_without_reflectance():
    bg = ph.background_rate("V", 1.0, 0.5, 3.0, 9.5)
    assert not bg.evaluated and bg.rate_photons_s == 0.0
    assert "not evaluated" in bg.note and "ring_reflectivity_if" in bg.note


def test_background_reads_body_photometry_first():
    body = SimpleNamespace(name="Test", photometry={
        "ring_reflectivity_if": {"V": 0.2, "K": 0.1, "source": "test"},
        "planet_geometric_albedo": 0.5,
    })
    from_body = ph.background_rate("V", 1.0, 0.5, 3.0, 9.5, body=body, ring_reflectivity_if=0.4)
    assert from_body.ring_reflectivity_if == 0.2
    assert "body file" in from_body.origin["ring_reflectivity_if"]
    caller = ph.background_rate("V", 1.0, 0.5, 3.0, 9.5, ring_reflectivity_if=0.4)
    # Rate is linear in I/F: half the reflectance, half the rate.
    assert from_body.rate_photons_s / caller.rate_photons_s == pytest.approx(0.5, rel=1e-12)
    # Band missing from the body's table -> the caller's value.
    r = ph.background_rate("I", 1.0, 0.5, 3.0, 9.5, body=body, ring_reflectivity_if=0.3)
    assert r.ring_reflectivity_if == 0.3 and r.origin["ring_reflectivity_if"] == "caller"
    # Ring and planet components add.
    both = ph.background_rate("V", 1.0, 0.5, 3.0, 9.5, body=body, ring_fill_fraction=0.5,
                              planet_fill_fraction=0.5)
    assert both.rate_photons_s == pytest.approx(both.ring_rate_photons_s + both.planet_rate_photons_s)
    assert both.planet_rate_photons_s > both.ring_rate_photons_s  # albedo 0.5 > I/F 0.2


# --------------------------------------------------------------------------- noise and SNR


def test_scintillation_scalings():
    # Young's formula: D^(-2/3), X^1.75, t^(-1/2), exp(-h/8000).
    s0 = ph.scintillation_sigma(1.0, 1.0, 0.0, 1.0)
    assert ph.scintillation_sigma(8.0, 1.0, 0.0, 1.0) / s0 == pytest.approx(0.25, rel=1e-12)
    assert ph.scintillation_sigma(1.0, 2.0, 0.0, 1.0) / s0 == pytest.approx(2 ** 1.75, rel=1e-12)
    assert ph.scintillation_sigma(1.0, 1.0, 0.0, 4.0) / s0 == pytest.approx(0.5, rel=1e-12)
    assert ph.scintillation_sigma(1.0, 1.0, 8000.0, 1.0) / s0 == pytest.approx(math.exp(-1), rel=1e-12)


def test_snr_pure_shot_noise():
    # Poisson statistics: 10,000 electrons and no other noise -> SNR 100 (common practice).
    s = ph.snr_per_sample(1.0e5, 0.0, 0.1, read_noise_e=0.0, n_pixels=10, scintillation_sigma=0.0)
    assert s.star_e == pytest.approx(1.0e4) and s.snr == pytest.approx(100.0, rel=1e-12)
    assert s.dominant_term() == "star shot"


def test_snr_terms_add_in_quadrature():
    s = ph.snr_per_sample(1.0e4, 2.0e4, 1.0, read_noise_e=3.0, n_pixels=100,
                          scintillation_sigma=0.01, dark_e_s=0.5)
    expected = math.sqrt(1e4 + 2e4 + 100 * 9 + 100 * 0.5 + (0.01 * 3e4) ** 2)
    assert s.total_noise_e == pytest.approx(expected, rel=1e-12)
    only_star = ph.snr_per_sample(1.0e4, 2.0e4, 1.0, read_noise_e=3.0, n_pixels=100,
                                  scintillation_sigma=0.01, dark_e_s=0.5,
                                  scintillate_background=False)
    assert only_star.scintillation_noise_e == pytest.approx(100.0)
    assert only_star.snr > s.snr


def _tel_snr(**over):
    tel = load_telescope(**over)
    return ph.snr_for_telescope(tel, 12.0, airmass=1.3, altitude_m=2000.0,
                                background_rate_photons_s=5.0e4)


def test_snr_monotonic_in_telescope():
    base = _tel_snr()
    assert _tel_snr(aperture_m=2.0).snr > base.snr  # bigger aperture -> higher SNR
    assert _tel_snr(read_noise_e=10.0).snr < base.snr  # more read noise -> lower
    assert _tel_snr(throughput=0.9).snr > base.snr
    tel = load_telescope()
    brighter_bg = ph.snr_for_telescope(tel, 12.0, airmass=1.3, altitude_m=2000.0,
                                       background_rate_photons_s=5.0e6)
    assert brighter_bg.snr < base.snr  # more background -> lower
    worse_air = ph.snr_for_telescope(tel, 12.0, airmass=2.5, altitude_m=2000.0,
                                     background_rate_photons_s=5.0e4)
    assert worse_air.snr < base.snr  # more scintillation -> lower


def test_snr_per_resolution_element():
    s = ph.snr_per_sample(1.0e5, 1.0e4, 0.1, read_noise_e=2.0, n_pixels=50,
                          scintillation_sigma=0.005)
    # 1 km element at 2.5 km/s with 0.1 s sampling: N = 1 / 0.25 = 4 samples -> SNR x 2.
    e = ph.snr_per_resolution_element(s, 1.0, -2.5, 0.1)
    assert e.samples == pytest.approx(4.0) and e.snr == pytest.approx(2.0 * s.snr, rel=1e-12)
    assert e.star_e == pytest.approx(4.0 * s.star_e)
    # Vectorized over velocity; N < 1 is clipped with a note, v = 0 flagged.
    arr = ph.snr_per_resolution_element(s, 1.0, np.array([1.0, 20.0, 0.0]), 0.1)
    assert arr.samples[1] == pytest.approx(0.5)
    assert arr.snr[1] == pytest.approx(s.snr) and arr.snr[2] == pytest.approx(s.snr)
    assert any("cadence limits" in n for n in arr.notes)
    assert isinstance(arr.as_dict()["snr"], list)


@pytest.mark.parametrize("call", [
    lambda: ph.star_photon_rate(10.0, "V", 0.0, 0.5),  # aperture <= 0
    lambda: ph.star_photon_rate(10.0, "V", -1.0, 0.5),
    lambda: ph.star_photon_rate(10.0, "V", 1.0, 0.0),  # throughput outside (0, 1]
    lambda: ph.star_photon_rate(10.0, "V", 1.0, 1.2),
    lambda: ph.star_photon_rate(26.0, "V", 1.0, 0.5),  # magnitude outside -2..25
    lambda: ph.star_photon_rate(-3.0, "V", 1.0, 0.5),
    lambda: ph.star_photon_rate(float("nan"), "V", 1.0, 0.5),
    lambda: ph.snr_per_resolution_element(
        ph.snr_per_sample(1.0, 0.0, 1.0, read_noise_e=1, n_pixels=1, scintillation_sigma=0),
        1.0, 10.0, 0.0),  # cadence <= 0
    lambda: ph.snr_per_sample(1.0, 0.0, -1.0, read_noise_e=1, n_pixels=1, scintillation_sigma=0),
    lambda: ph.scintillation_sigma(1.0, 0.5, 0.0, 1.0),  # airmass < 1
    lambda: ph.fresnel_scale_km(-0.5, 1e9),
])
def test_bad_inputs_raise_input_error(call):
    with pytest.raises(InputError) as err:
        call()
    assert "\n" not in str(err.value)  # one line for the CLI


def test_unknown_band_in_rate():
    with pytest.raises(UnknownNameError):
        ph.star_photon_rate(10.0, "U", 1.0, 0.5)


# --------------------------------------------------------------------------- telescope


def test_default_telescope():
    tel = load_telescope()
    assert tel.exposure_s == pytest.approx(tel.cadence_s - tel.dead_time_s)
    assert tel.n_pixels == pytest.approx(math.pi * tel.aperture_radius_arcsec ** 2
                                         / tel.pixel_scale_arcsec ** 2)
    assert tel.samples_per_wavelength == 4
    # Every default value has a reason in the [source] table.
    for key in ALLOWED_KEYS:
        if key != "source":
            assert tel.sources.get(key), key


def test_telescope_user_file_and_overrides(tmp_path):
    f = tmp_path / "tel.toml"
    f.write_text('name = "mine"\naperture_m = 2.5\nband = "K"\n', encoding="utf-8")
    tel = load_telescope(f, cadence_s=0.05, read_noise_e=None)
    assert (tel.name, tel.aperture_m, tel.band, tel.cadence_s) == ("mine", 2.5, "K", 0.05)
    assert tel.read_noise_e == load_telescope().read_noise_e  # missing keys keep defaults
    assert with_overrides(tel, aperture_m=4.0).aperture_m == 4.0


def test_telescope_unknown_key(tmp_path):
    f = tmp_path / "tel.toml"
    f.write_text("aperture_m = 1.0\nfocal_ratio = 8\n", encoding="utf-8")
    with pytest.raises(DataFileError) as err:
        load_telescope(f)
    msg = str(err.value)
    assert "focal_ratio" in msg and "aperture_m" in msg and "cadence_s" in msg


@pytest.mark.parametrize("over", [
    {"aperture_m": 0.0}, {"throughput": 1.5}, {"throughput": 0.0}, {"cadence_s": 0.0},
    {"cadence_s": -0.1}, {"dead_time_s": 0.2}, {"samples_per_wavelength": 1},
    {"central_obstruction": 1.0}, {"read_noise_e": -1}, {"aperture_m": "big"}, {"colour": "red"},
])
def test_telescope_bad_values(over):
    with pytest.raises(InputError):
        load_telescope(**over)


def test_telescope_bad_band_and_file(tmp_path):
    with pytest.raises(UnknownNameError):
        load_telescope(band="Q")
    with pytest.raises(DataFileError):
        load_telescope(tmp_path / "missing.toml")
    bad = tmp_path / "bad.toml"
    bad.write_text("aperture_m = = 1\n", encoding="utf-8")
    with pytest.raises(DataFileError):
        load_telescope(bad)


def test_a_camera_is_not_asked_for_a_band_it_cannot_see(tmp_path):
    """A silicon camera detects 0.35-1.0 um and an infrared array 1-2.5 um (common practice):
    the default profile asked for K becomes the default infrared profile, and a profile that
    lists its camera's bands refuses another band instead of keeping the wrong detector's
    read noise."""
    from occplan.errors import InputError
    from occplan.telescope import load_telescope

    cmos = load_telescope()
    ir = load_telescope(band="K")
    assert cmos.bands == ("V", "R", "I") and ir.bands == ("J", "H", "K")
    assert ir.read_noise_e > cmos.read_noise_e and ir.band == "K"
    k_file = tmp_path / "k.toml"
    k_file.write_text('name = "K camera"\nband = "K"\nbands = ["J", "H", "K"]\nread_noise_e = 12.0\n')
    with pytest.raises(InputError, match="not one the camera"):
        load_telescope(k_file, band="V", aperture_m=0.6)
    # a file that does not state its camera's bands takes any band, and says so
    bare = tmp_path / "bare.toml"
    bare.write_text('name = "unknown camera"\nband = "K"\n')
    t = load_telescope(bare, band="V")
    assert t.band == "V" and t.bands is None and "still the profile's" in t.sources["band"]


def test_parallax_without_its_error_and_the_colour_boundary_note():
    """A parallax with no error column is used only when it would be significant (5 sigma,
    common practice) at a conservative 0.2 mas error (Gaia DR3 errors are smaller for stars
    bright enough to occult; Lindegren et al. 2021, from memory); and the colour rule's note
    never prints a self-contradictory comparison."""
    from occplan.gaia_photometry import luminosity_class_from_parallax
    from occplan.photometry import stellar_angular_diameter_mas

    # K = 8.3 at 2 mas: M_K = 8.3 + 5 log10(0.02) = -0.19, 4+ mag above the K0V dwarf (M_K ~4)
    cls, why = luminosity_class_from_parallax(10.9, 8.3, 2.0, None)
    assert cls == "giant" and "0.2 mas assumed" in why
    cls, why = luminosity_class_from_parallax(10.9, 8.3, 0.887, None)
    assert cls is None and "without an error" in why
    note = stellar_angular_diameter_mas(10.0, 10.0 - 3.70004, "auto").note
    assert "3.7000 > 3.7" in note and "3.70 > 3.7" not in note
