"""Gaia DR3 colour transformations and the luminosity class from the parallax, against
published relations and well-known stars.

The polynomials are typed below from Riello et al. 2021 (A&A 649, A3), table C.2, as
remembered (the 2MASS ones agree with two third-party implementations that cite the Gaia DR3
documentation, table 5.9); the colour ranges from its table C.1.  They are re-evaluated here
independently of occplan's data file, so a mistyped coefficient there fails.
"""

from __future__ import annotations

import numpy as np
import pytest

from occplan.catalogs import read_catalog_table
from occplan.gaia_photometry import gaia_magnitude, luminosity_class_from_parallax

# band: (G - X coefficients c0, c1, ... in BP-RP, (min, max) BP-RP, sigma mag)
PUBLISHED = {
    "V": ((-0.02704, 0.01424, -0.2156, 0.01426), (-0.5, 5.0), 0.03017),
    "R": ((-0.02275, 0.3961, -0.1243, -0.01396, 0.003775), (0.0, 4.0), 0.03167),
    "I": ((0.01753, 0.76, -0.0991), (-0.5, 4.5), 0.03765),
    "J": ((-0.01798, 1.389, -0.09338), (-0.5, 2.5), None),
    "H": ((-0.1048, 2.011, -0.1758), (-0.5, 2.5), None),
    "K": ((-0.0981, 2.089, -0.1579), (-0.5, 2.5), None),
}


def published(band, g, x):
    coef = PUBLISHED[band][0]
    return g - sum(c * x ** i for i, c in enumerate(coef))


def gaia_only_catalog(tmp_path, g, bp_rp):
    """A Gaia-archive-like CSV: astrometry and G, BP, RP only (no V, no 2MASS)."""
    n = len(g)
    bp = np.asarray(g) + 0.4 * np.asarray(bp_rp)  # any split of the colour; BP-RP is what counts
    rp = bp - np.asarray(bp_rp)
    lines = ["source_id,ra,dec,pmra,pmdec,parallax,parallax_error,phot_g_mean_mag,"
             "phot_bp_mean_mag,phot_rp_mean_mag"]
    for i in range(n):
        lines.append(f"{1000 + i},{10 + i * 0.01},5.0,1.0,-2.0,0.5,0.02,{float(g[i])!r},{float(bp[i])!r},{float(rp[i])!r}")
    path = tmp_path / "gaia.csv"
    path.write_text("\n".join(lines) + "\n")
    return path


@pytest.mark.parametrize("band", list(PUBLISHED))
def test_gaia_only_catalog_gives_the_published_polynomial(tmp_path, band):
    """Stars across each relation's colour range: the derived magnitude is the published
    polynomial (to 1e-9 mag: the same arithmetic), and its uncertainty is the published scatter
    (V, R, I; the 2MASS scatters are from memory and only checked to be carried)."""
    coef, (lo, hi), sigma = PUBLISHED[band]
    x = np.linspace(lo + 1e-6, hi - 1e-6, 9)
    g = np.full(x.size, 11.0)
    table = read_catalog_table(gaia_only_catalog(tmp_path, g, x))
    got = table.magnitudes[band]
    # the colour as the reader forms it (BP - RP from the magnitudes, float rounding)
    assert np.allclose(got["mag"], published(band, g, x), atol=1e-9, rtol=0)
    if sigma is not None:
        assert np.allclose(got["sigma"], sigma, atol=1e-12)
    assert np.all(np.isfinite(got["sigma"]) & (got["sigma"] > 0))
    assert all("Riello" in s for s in got["source"])
    # outside the range: no magnitude, and the report says how many
    out = read_catalog_table(gaia_only_catalog(tmp_path, [11.0, 11.0], [lo - 0.3, hi + 0.3]))
    assert np.all(np.isnan(out.magnitudes[band]["mag"]))
    assert any(f"no {band} from Gaia" in n for n in out.report.notes)


def test_sun_colours_within_the_scatter():
    """The Sun: BP-RP = 0.82 and M_G = 4.67 (Casagrande & VandenBerg 2018, MNRAS 479, L102),
    M_V = 4.81 (Willmer 2018, ApJS 236, 47), V - Ks = 1.56 (Casagrande et al. 2012, ApJ 761,
    16); all from memory.  G - V must agree within the relation's scatter (0.030 mag); V - K
    within twice the combined scatter of the two relations (one star, and the K relation is a
    fit to a population of dwarfs and giants)."""
    g = 4.67
    v, sv, _ = gaia_magnitude("V", g, 0.82)
    k, sk, _ = gaia_magnitude("K", g, 0.82)
    assert abs(float(v) - 4.81) < float(sv)
    assert abs(float(v - k) - 1.56) < 2 * np.hypot(sv, sk)


@pytest.mark.parametrize("name,vmag,kmag,parallax_mas,expected", [
    # Arcturus, K1.5 III: V = -0.05, K = -2.91, parallax 88.83 mas (Hipparcos; from memory)
    ("Arcturus", -0.05, -2.91, 88.83, "giant"),
    # Aldebaran, K5 III: V = 0.86, K = -3.04, parallax 48.94 mas (from memory)
    ("Aldebaran", 0.86, -3.04, 48.94, "giant"),
    # 61 Cyg A, K5 V: V = 5.21, K = 2.68, parallax 286 mas (from memory)
    ("61 Cyg A", 5.21, 2.68, 286.0, "dwarf"),
    # the Sun seen from 10 pc: M_V = 4.81, M_K = 3.27 (Willmer 2018; from memory)
    ("Sun at 10 pc", 4.81, 3.27, 100.0, "dwarf"),
    # a red-clump giant (M_K = -1.6, Alves 2000, ApJ 539, 732; from memory) at 1.13 kpc
    ("red clump at 0.887 mas", 10.8, 8.66, 0.887, "giant"),
])
def test_luminosity_class_of_known_stars(name, vmag, kmag, parallax_mas, expected):
    """Known classes from the literature: the parallax rule (absolute K against the dwarf
    sequence) must give them; parallax errors of 1 % make the parallax significant."""
    cls, note = luminosity_class_from_parallax(vmag, kmag, parallax_mas, parallax_mas / 100)
    assert cls == expected, note
    assert "from the parallax" in note


def test_insignificant_or_missing_parallax_leaves_the_colour_rule():
    cls, note = luminosity_class_from_parallax(10.8, 8.66, 0.3, 0.1)  # 3 sigma
    assert cls is None and "too uncertain" in note
    # no error column: 0.2 mas is assumed, and 0.887 mas is then under 5 sigma
    cls, note = luminosity_class_from_parallax(10.8, 8.66, 0.887, None)
    assert cls is None and "without an error" in note
