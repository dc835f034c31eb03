"""Observability: airmass formulas, twilight categories, the usable mask and the cautions.

Sun/Moon/planet positions against astropy are in tests/accuracy/test_observability_astropy.py.
"""

from __future__ import annotations

import numpy as np
import pytest

from occplan import observability as ob
from occplan.ephemeris import Observer, parse_utc
from occplan.errors import CoverageError, InputError

SITE = Observer.site("test site", -30.0, -70.0, 2000.0)


def _jd(iso):
    return float(parse_utc(iso).tdb)


# --------------------------------------------------------------------------- airmass


def test_kasten_young_reference_points():
    # Kasten & Young 1989 (Applied Optics 28, 4735): ~1 at the zenith (the fit gives
    # 0.99971), about 38 at the horizon (from memory; 0.5 covers the fit vs their table).
    x = ob.airmass_kasten_young([90.0, 0.0])
    assert x[0] == pytest.approx(1.0, abs=5e-4)
    assert x[1] == pytest.approx(38.0, abs=0.5)
    # docs/design.md sec. 7: a 20 deg altitude limit is airmass about 2.9 (Kasten & Young 1989).
    assert float(ob.airmass_kasten_young(20.0)) == pytest.approx(2.9, abs=0.01)
    assert np.isnan(ob.airmass_kasten_young(-1.0))


def test_airmass_against_secant_and_pickering():
    # Plane-parallel sec z (common practice) is good to 0.5 % above 45 deg altitude.
    h = np.linspace(45.0, 90.0, 10)
    sec = 1.0 / np.sin(np.radians(h))
    assert np.allclose(ob.airmass_kasten_young(h), sec, rtol=5e-3)
    # Pickering 2002 is an independent fit: within 1 % of Kasten & Young above 10 deg.
    h = np.linspace(10.0, 90.0, 50)
    assert np.allclose(ob.airmass_kasten_young(h), ob.airmass_pickering(h), rtol=1e-2)


def test_sun_categories():
    # Common practice thresholds -0.833 / -6 / -12 / -18 deg.
    cats = ob.sun_category(np.array([10.0, -0.5, -3.0, -8.0, -15.0, -30.0]))
    assert list(cats) == ["day", "day", "civil twilight", "nautical twilight",
                          "astronomical twilight", "night"]
    assert ob.sun_category(-6.0) == "nautical twilight"  # the boundary belongs to the darker side
    assert ob.sun_category(-18.0) == "night"


# --------------------------------------------------------------------------- conditions


def test_conditions_over_a_night(eph, saturn):
    # Saturn's opposition of 2024-09-08 (almanac date, from memory): the Sun is opposite the
    # planet, so the Sun-target separation is near 180 deg (> 175: opposition is not exactly
    # at 180 deg of elongation because of Saturn's ecliptic latitude, about 2 deg).
    jd = _jd("2024-09-08T00:00:00Z") + np.arange(0.0, 1.0, 1.0 / 96.0)
    c = ob.observing_conditions(eph, saturn, SITE, jd)
    assert c.applicable and c.planet_altitude_deg.shape == jd.shape
    assert np.all(c.sun_separation_deg > 175.0)
    expected = (c.planet_altitude_deg >= 20.0) & (c.sun_altitude_deg <= -12.0)
    assert np.array_equal(c.usable, expected) and 0 < c.usable.sum() < jd.size
    cats = ob.sun_category(c.sun_altitude_deg)
    assert np.array_equal(c.sun_category, cats)
    s = c.summary()
    for key in ("min_altitude_deg", "max_altitude_deg", "worst_sun_altitude_deg",
                "worst_sun_category", "min_moon_separation_deg", "max_moon_illumination",
                "usable_fraction", "min_sun_separation_deg"):
        assert key in s
    assert s["usable_fraction"] == pytest.approx(c.usable.mean())
    assert s["worst_sun_category"] == "day"  # a 24 h window contains the day
    assert 0.0 <= s["max_moon_illumination"] <= 1.0
    assert len(c.rows()) == jd.size


def test_limits_are_configurable(eph, saturn):
    jd = _jd("2024-09-08T00:00:00Z") + np.arange(0.0, 1.0, 1.0 / 48.0)
    strict = ob.observing_conditions(eph, saturn, SITE, jd, min_altitude_deg=50.0, sun_limit_deg=-18.0)
    loose = ob.observing_conditions(eph, saturn, SITE, jd, min_altitude_deg=5.0, sun_limit_deg=-6.0)
    assert strict.usable.sum() < loose.usable.sum()
    assert np.all(loose.usable[strict.usable])


def test_refraction_matches_saemundsson(eph, saturn):
    # Refraction for a true altitude h: R = 1.02' / tan(h + 10.3 / (h + 5.11)) at 1010 mbar,
    # 10 C, scaled by P / 1010 (Saemundsson 1986, as Meeus 1998 eq. 16.4 gives it), with the
    # site pressure from the standard atmosphere, P = 1013.25 (1 - 2.25577e-5 z)^5.25588 mbar
    # (common practice).  An independent formula from skyfield's (Bennett's, for the apparent
    # altitude): 10 % covers the two fits and the two standard-pressure models.  The window has
    # Saturn rising from the horizon to 67 deg.
    jd = _jd("2024-09-08T00:00:00Z") + np.arange(0.0, 1.0, 1.0 / 288.0)
    geo = ob.observing_conditions(eph, saturn, SITE, jd)
    ref = ob.observing_conditions(eph, saturn, SITE, jd, refraction=True)
    h = geo.planet_altitude_deg
    up = h > 0.0
    assert up.sum() > 50 and ref.refraction and not geo.refraction
    d = ref.planet_altitude_deg[up] - h[up]
    pressure = 1013.25 * (1.0 - 2.25577e-5 * SITE.height_m) ** 5.25588
    saem = 1.02 / 60.0 / np.tan(np.radians(h[up] + 10.3 / (h[up] + 5.11))) * pressure / 1010.0
    assert np.all(d > 0)
    assert np.allclose(d, saem, rtol=0.10)


def test_node_interpolation_error(eph, saturn):
    # Dense windows are computed on 300 s nodes and spline-interpolated; against the exact
    # evaluation at every time (12 h at 10 s, refraction on to include its post-step) the
    # error must stay under 1e-4 deg (0.4 arcsec, far below any use of these numbers;
    # measured about 2e-5 deg, set by skyfield's refraction iteration) and 1e-6 in the phase.
    jd = _jd("2024-09-08T00:00:00Z") + np.arange(0.0, 43200.0, 10.0) / 86400.0
    fast = ob.observing_conditions(eph, saturn, SITE, jd, refraction=True)
    exact = ob.observing_conditions(eph, saturn, SITE, jd, refraction=True, node_step_s=None)
    assert any("nodes" in n for n in fast.notes) and not any("nodes" in n for n in exact.notes)
    for key in ("planet_altitude_deg", "sun_altitude_deg", "moon_altitude_deg",
                "sun_separation_deg", "moon_separation_deg"):
        assert np.max(np.abs(getattr(fast, key) - getattr(exact, key))) < 1e-4, key
    daz = (fast.planet_azimuth_deg - exact.planet_azimuth_deg + 180.0) % 360.0 - 180.0
    assert np.max(np.abs(daz)) < 1e-4
    assert np.max(np.abs(fast.moon_illumination - exact.moon_illumination)) < 1e-6
    assert np.array_equal(fast.usable, exact.usable)


def test_geocentre_not_applicable(eph, saturn):
    jd = _jd("2024-02-28T00:00:00Z") + np.array([0.0, 0.5])
    c = ob.observing_conditions(eph, saturn, Observer.geocentre(), jd)
    assert not c.applicable and "not applicable" in c.reason
    assert np.all(np.isnan(c.planet_altitude_deg)) and not c.usable.any()
    s = c.summary()
    assert s["applicable"] is False and "reason" in s
    # Saturn's solar conjunction of 2024-02-28 (almanac date, from memory): within 3 deg of
    # the Sun (Saturn's ecliptic latitude, about -1.5 deg, keeps it off the Sun's centre).
    assert s["min_sun_separation_deg"] < 3.0
    msgs = ob.cautions(c)
    assert any(m.startswith("CAUTION") and "destroy a camera" in m for m in msgs)
    assert any("not applicable" in m for m in msgs)


def test_bad_inputs(eph, saturn):
    jd = _jd("2024-09-08T00:00:00Z")
    with pytest.raises(InputError):
        ob.observing_conditions(eph, saturn, SITE, jd, min_altitude_deg=120.0)
    with pytest.raises(InputError):
        ob.observing_conditions(eph, saturn, SITE, [jd, np.nan])
    with pytest.raises(CoverageError):  # DE440 ends 2650-01-25 (Park et al. 2021)
        ob.observing_conditions(eph, saturn, SITE, _jd("2650-02-01T00:00:00Z"))


# --------------------------------------------------------------------------- cautions


def test_sun_caution_near_conjunction(eph, saturn):
    jd = _jd("2024-02-28T00:00:00Z") + np.arange(0.0, 1.0, 1.0 / 24.0)
    c = ob.observing_conditions(eph, saturn, SITE, jd)
    msgs = ob.cautions(c)
    sun = [m for m in msgs if "Sun" in m and "destroy a camera" in m]
    assert len(sun) == 1
    assert "site rules and the observatory's safety practice come first" in sun[0]
    assert "deg from the Sun" in sun[0] and "above the horizon" in sun[0]


def test_no_sun_caution_in_a_dark_window(eph, saturn):
    # Around local midnight at the opposition: Saturn high, the Sun far below the horizon.
    jd = _jd("2024-09-08T00:00:00Z") + np.arange(0.0, 1.0, 1.0 / 96.0)
    full = ob.observing_conditions(eph, saturn, SITE, jd)
    dark = jd[(full.sun_altitude_deg < -20.0) & (full.planet_altitude_deg > 30.0)]
    assert dark.size > 4
    c = ob.observing_conditions(eph, saturn, SITE, dark)
    msgs = ob.cautions(c)
    assert not any("destroy a camera" in m for m in msgs)
    assert not any("twilight" in m or "low" in m or "below the horizon" in m for m in msgs)


def _made_up(sun_alt, planet_alt, moon_sep, moon_illum, moon_alt=30.0):
    n = len(sun_alt)

    def f(v):
        return np.asarray(v, dtype=float) * np.ones(n)

    return ob.ObservingConditions(
        True, SITE.describe(), np.arange(n, dtype=float), f(planet_alt), f(0.0),
        ob.airmass_kasten_young(f(planet_alt)), f(sun_alt), ob.sun_category(f(sun_alt)),
        f(120.0), f(moon_alt), f(moon_sep), f(moon_illum),
        (f(planet_alt) >= 20) & (f(sun_alt) <= -12), 20.0, -12.0, False, "Saturn")


def test_cautions_for_twilight_low_altitude_and_moon():
    msgs = ob.cautions(_made_up([-8.0, -20.0], [15.0, 40.0], [10.0, 10.0], [0.9, 0.9]))
    text = " | ".join(msgs)
    assert "twilight" in text and "nautical twilight" in text
    assert "low (below 20 deg" in text
    assert "Moon" in text and "90%-lit" in text
    assert not any("destroy a camera" in m for m in msgs)  # Sun below the horizon, far away
    quiet = ob.cautions(_made_up([-25.0, -30.0], [50.0, 60.0], [90.0, 90.0], [0.9, 0.9]))
    assert quiet == []
    # A thin or set Moon near the target is no caution.
    assert ob.cautions(_made_up([-25.0], [50.0], [5.0], [0.2])) == []
    assert ob.cautions(_made_up([-25.0], [50.0], [5.0], [0.9], moon_alt=-5.0)) == []
    # The Sun above the horizon triggers the safety caution even when far from the target.
    day = ob.cautions(_made_up([5.0], [50.0], [90.0], [0.1]))
    assert len(day) == 1 and "above the horizon" in day[0] and "destroy a camera" in day[0]
