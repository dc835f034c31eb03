"""Ranking: weights file, factor arithmetic, monotonicity (faster camera, daylight)."""

from __future__ import annotations

import math

import pytest

from occplan.bodies import get_body
from occplan.catalogs import Site
from occplan.ephemeris import StarSpec, parse_utc, tdb_s_of
from occplan.errors import DataFileError
from occplan.ranking import (RankSettings, evaluate_and_score, load_weights, rescore_rows,
                             score_zones, zone_factors)
from occplan.telescope import load_telescope

# An invented star on Saturn's geocentric path (about 12 arcsec from the planet centre on
# 2027-06-15, the same as tests/test_cli_track.py); bright, so the camera is photon limited.
STAR = StarSpec(23.99933, 7.46989, vmag=8.0, kmag=6.0, name="bright")
WINDOW = (tdb_s_of(parse_utc("2027-06-15T00:00Z")), tdb_s_of(parse_utc("2027-06-15T02:30Z")))
# an invented site where Saturn is up before dawn during the egress (local time about 04:00)
SITE = Site("east", -25.0, 45.0, 100.0)


def record(**kw):
    base = {"label": "2:1", "satellite": "Mimas", "kind": "ILR", "side": "ingress",
            "resonance_radius_km": 117550.0, "torque_dyn_cm": 1e19, "resolvable": True,
            "behind_planet": False, "snr_per_element": 20.0, "shortest_wavelength_km": 4.0,
            "achievable_resolution_km": 1.0, "usable": True}
    base.update(kw)
    return base


def test_default_weights_have_reasons():
    w = load_weights()
    for table, entries in w.values.items():
        for key in entries:
            assert any(k.startswith(key) or k == table for k in w.sources), (table, key)


def test_factor_arithmetic():
    """strength = floor + (1 - floor) x log-normalised torque (module formula)."""
    w = load_weights()
    lo, hi = 17.0, 21.0
    f = zone_factors(record(torque_dyn_cm=1e19), w, (lo, hi))
    floor = w["strength.floor"]
    assert f["strength"] == pytest.approx(floor + (1 - floor) * 0.5, abs=1e-12)
    # SNR 20 at element max(1, 4/2) = 2 km: already at half the wavelength -> 20 -> factor 1
    assert f["snr_factor"] == 1.0
    # unresolved at 8 km: SNR scaled to the 2 km element, sqrt(2/8) x 20 = 10
    g = zone_factors(record(resolvable=False, achievable_resolution_km=8.0), w, (lo, hi))
    assert g["snr_half_wavelength"] == pytest.approx(10.0, abs=1e-12)
    assert g["resolvable_factor"] == w["resolvable.unresolved"]
    assert zone_factors(record(behind_planet=True), w, (lo, hi))["contribution"] == 0.0
    assert zone_factors(record(usable=False), w, (lo, hi))["contribution"] == 0.0
    s = score_zones([record(), record(side="egress")], w, (lo, hi))
    assert s["score"] == pytest.approx(s["score_ingress"] + s["score_egress"], abs=1e-12)
    assert s["score_ingress"] == pytest.approx(s["score_egress"], abs=1e-12)
    assert s["zones_crossed"] == 2 and "best:" in s["reasons"]


def test_user_weights_and_bad_files(tmp_path):
    p = tmp_path / "w.toml"
    p.write_text("[resolvable]\nunresolved = 0.5\n")
    assert load_weights(p)["resolvable.unresolved"] == 0.5
    assert load_weights(p)["resolvable.resolvable"] == 1.0
    for text, needle in (("[resolvable]\nfoo = 1\n", "unknown key"),
                         ("[bogus]\nx = 1\n", "unknown table"),
                         ("[snr]\nreference = -1\n", ">= 0"),
                         ("[snr\n", "not valid TOML")):
        p.write_text(text)
        with pytest.raises(DataFileError, match=needle):
            load_weights(p)


def test_rescore_with_other_weights(tmp_path):
    w = load_weights()
    rows = [{"star_id": "1", "zones": [record(resolvable=False, achievable_resolution_km=8.0)]}]
    meta = {"ranking": {"torque_range_log10_dyn_cm": [17.0, 21.0]}}
    base = rescore_rows(rows, meta, w)[0]["score"]
    p = tmp_path / "w.toml"
    p.write_text("[resolvable]\nunresolved = 0.5\n")
    assert rescore_rows(rows, meta, load_weights(p))[0]["score"] == pytest.approx(5 * base, rel=1e-12)


@pytest.fixture(scope="module")
def saturn_body():
    return get_body("saturn")


def test_faster_camera_never_ranks_lower(saturn_body):
    """Photon-limited star: each faster cadence keeps or raises the score (module docstring)."""
    scores = []
    for cadence in (0.5, 0.2, 0.05):
        tel = load_telescope(None, cadence_s=cadence)
        _, s, _ = evaluate_and_score(saturn_body, STAR, SITE.observer(), WINDOW, site=SITE,
                                     settings=RankSettings(telescope=tel))
        scores.append((s["score"], s["zones_resolvable"]))
    assert scores[0][0] > 0
    for (a, na), (b, nb) in zip(scores[:-1], scores[1:]):
        assert b >= a - 1e-9 and nb >= na
    assert scores[-1][1] > scores[0][1]  # the sweep does change what is resolved


def test_daylight_never_raises_the_score(saturn_body):
    """Hiding crossings behind daylight (a Sun limit the site never meets) cannot help."""
    _, open_sky, _ = evaluate_and_score(saturn_body, STAR, SITE.observer(), WINDOW, site=SITE)
    strict = Site("east", -25.0, 45.0, 100.0, min_altitude_deg=89.0)  # Saturn never that high
    _, hidden, _ = evaluate_and_score(saturn_body, STAR, strict.observer(), WINDOW, site=strict)
    assert open_sky["zones_crossed"] == hidden["zones_crossed"] > 0
    assert hidden["score"] <= open_sky["score"]
    assert hidden["score"] == 0.0 and hidden["zones_unusable"] == hidden["zones_crossed"]
    assert math.isfinite(open_sky["score"])
