"""Uranus's ring-plane pole: French et al. 2024 (arXiv:2401.04634) reproduced exactly.

Source: French et al. 2024 fit RA 77.311327 deg, Dec +15.172795 deg for the pole of the
ring plane, in the angular-momentum sense, with no precession detected over 1977-2006.
The IAU pole (Archinal et al. 2018) is RA 257.311, Dec -15.175 in the IAU "north" sense;
its antipode lies 0.0022 deg from the fitted pole (computed here).
"""

from __future__ import annotations

import numpy as np

from occplan.bodies import get_body

RA_DEG, DEC_DEG = 77.311327, 15.172795  # French et al. 2024


def _unit(ra_deg, dec_deg):
    ra, dec = np.radians(ra_deg), np.radians(dec_deg)
    return np.array([np.cos(dec) * np.cos(ra), np.cos(dec) * np.sin(ra), np.sin(dec)])


def test_body_file_holds_the_published_pole():
    pole = get_body("uranus").pole
    assert pole.ra_deg == RA_DEG and pole.dec_deg == DEC_DEG
    assert pole.ra_rate_deg_century == 0.0 and pole.dec_rate_deg_century == 0.0
    assert "French et al. 2024" in pole.source


def test_pole_direction_at_several_epochs():
    pole = get_body("uranus").pole
    jd = np.array([2443509.5, 2451545.0, 2462000.5, 2470000.5])  # 1977 .. 2049
    n = pole.unit_vector(jd)
    assert np.max(np.abs(n - _unit(RA_DEG, DEC_DEG)[:, None])) < 1e-15


def test_close_to_the_antipode_of_the_iau_pole():
    sep = np.degrees(np.arccos(np.clip(_unit(RA_DEG, DEC_DEG) @ -_unit(257.311, -15.175), -1, 1)))
    assert 0.001 < sep < 0.005  # 0.0022 deg: the IAU values are rounded to 0.001 deg
