"""Gaia DR3 photometry to V, R, I, J, H, Ks, and dwarf or giant from the parallax.

- :func:`gaia_magnitude`: a band's magnitude from G and BP-RP by the published polynomial,
  with its scatter as the uncertainty, only inside the polynomial's colour range.
- :func:`best_magnitude`: a measured magnitude where the catalog has one, else the Gaia one,
  and which was used.
- :func:`luminosity_class_from_parallax`: 'dwarf' or 'giant' from the absolute K magnitude
  when the parallax is significant.

The coefficients, ranges, scatters and the dwarf sequence live in
``occplan/data/gaia_photometry.toml`` with their sources.  Arrays in, arrays out (numpy,
magnitudes and mas); no extinction correction (see the Notes of :func:`gaia_magnitude`).
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources

import numpy as np

from .errors import DataFileError

GAIA_SOURCE = "Gaia DR3 G and BP-RP (Riello et al. 2021, A&A 649, A3, table C.2)"
BANDS = ("V", "R", "I", "J", "H", "K")


@dataclass(frozen=True)
class Relation:
    """G - X = sum_i coefficients[i] (BP-RP)^i, valid for colour_range, rms scatter sigma_mag."""

    band: str
    system: str
    coefficients: tuple
    colour_range: tuple
    sigma_mag: float
    source: str


@lru_cache(maxsize=1)
def _data() -> dict:
    text = resources.files("occplan.data").joinpath("gaia_photometry.toml").read_text("utf-8")
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:  # a packaging error, not a user's
        raise DataFileError(f"occplan/data/gaia_photometry.toml is not valid TOML: {exc}") from None


@lru_cache(maxsize=1)
def relations() -> dict:
    """The band -> :class:`Relation` table of ``data/gaia_photometry.toml``."""
    out = {}
    for band, r in _data()["relations"].items():
        out[band] = Relation(band, r["system"], tuple(float(c) for c in r["coefficients"]),
                             (float(r["colour_range"][0]), float(r["colour_range"][1])),
                             float(r["sigma_mag"]), r["source"])
    return out


def gaia_magnitude(band: str, g_mag, bp_rp_mag):
    """A band's magnitude from Gaia G and BP-RP.

    Parameters
    ----------
    band : {'V', 'R', 'I', 'J', 'H', 'K'}
        Johnson V, Cousins R and I, 2MASS J, H and Ks.
    g_mag, bp_rp_mag : float or array
        Gaia DR3 ``phot_g_mean_mag`` and ``bp_rp`` (mag).

    Returns
    -------
    (mag, sigma_mag, valid) : arrays
        ``mag`` is nan where G or the colour is missing or the colour lies outside the
        relation's range (``valid`` False there); ``sigma_mag`` is the relation's scatter.

    Notes
    -----
    X = G - sum_i c_i (BP-RP)^i (Riello et al. 2021, A&A 649, A3, tables C.1 and C.2; the Gaia
    DR3 documentation section 5.5.1 gives the same relations).  The fits are to observed,
    reddened colours of mostly unreddened nearby stars; a reddened star's derived magnitude
    keeps its reddening (right for photon rates) but is not dereddened.
    """
    rel = relations()[band]
    g = np.asarray(g_mag, dtype=float)
    x = np.asarray(bp_rp_mag, dtype=float)
    valid = np.isfinite(g) & np.isfinite(x) & (x >= rel.colour_range[0]) & (x <= rel.colour_range[1])
    poly = np.polynomial.polynomial.polyval(np.where(valid, x, 0.0), rel.coefficients)
    mag = np.where(valid, g - poly, np.nan)
    sigma = np.where(valid, rel.sigma_mag, np.nan)
    return mag, sigma, valid


def best_magnitude(band: str, measured, measured_label: str, g_mag, bp_rp_mag):
    """A measured magnitude where there is one, else the Gaia-derived one.

    Returns
    -------
    (mag, sigma_mag, source, counts)
        Arrays (``source`` of str: ``measured_label``, the Gaia relation, or ''); a measured
        magnitude has sigma nan (its catalog error is not read).  ``counts`` holds the
        number of stars with a measured value, a derived value, and a colour outside the
        relation's range.
    """
    m = np.asarray(measured, dtype=float)
    gaia, sig, valid = gaia_magnitude(band, g_mag, bp_rp_mag)
    use_measured = np.isfinite(m)
    use_gaia = ~use_measured & valid
    mag = np.where(use_measured, m, gaia)
    sigma = np.where(use_gaia, sig, np.nan)
    source = np.full(m.shape, "", dtype=object)
    source[use_measured] = measured_label
    rel = relations()[band]
    source[use_gaia] = (f"{GAIA_SOURCE}: {band} = G - poly(BP-RP), sigma {rel.sigma_mag:.3f} mag, "
                        f"valid for BP-RP {rel.colour_range[0]}..{rel.colour_range[1]}")
    x = np.asarray(bp_rp_mag, dtype=float)
    outside = ~use_measured & np.isfinite(np.asarray(g_mag, dtype=float)) & np.isfinite(x) & ~valid
    counts = {"measured": int(use_measured.sum()), "derived": int(use_gaia.sum()),
              "outside_range": int(outside.sum())}
    return mag, sigma, source, counts


def absolute_magnitude(apparent_mag, parallax_mas):
    """M = m + 5 log10(parallax / 100 mas) (no extinction); nan for parallax <= 0."""
    plx = np.asarray(parallax_mas, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(plx > 0, np.asarray(apparent_mag, dtype=float) + 5.0 * np.log10(plx / 100.0),
                        np.nan)


def luminosity_class_from_parallax(vmag, kmag, parallax_mas, parallax_error_mas):
    """'dwarf' or 'giant' from the absolute K magnitude, or None when the parallax cannot say.

    Parameters
    ----------
    vmag, kmag : float
        V and K magnitudes (mag).
    parallax_mas, parallax_error_mas : float or None
        Parallax and its standard error (mas).

    Returns
    -------
    (str or None, str)
        The class (None: decide from colour) and a note that says why.

    Notes
    -----
    Used only when parallax / error >= ``min_parallax_over_error`` (5).  M_K = K + 5
    log10(parallax / 100 mas); a star more than ``giant_offset_mag`` (2 mag) brighter than
    the mean dwarf sequence M_K(V-K) of Pecaut & Mamajek 2013 (ApJS 208, 9) at its colour is
    a giant (values and reasons in ``data/gaia_photometry.toml``).  Extinction is ignored:
    it makes a star fainter (a giant may be taken for a dwarf only if A_K > ~2 mag).
    """
    cfg = _data()["luminosity_class"]
    if vmag is None or kmag is None or parallax_mas is None:
        return None, "no parallax"
    assumed = ""
    if parallax_error_mas is None or not np.isfinite(parallax_error_mas) or parallax_error_mas <= 0:
        # no error column: a Gaia-class parallax error is assumed (the catalogue's own would
        # be better); a parallax that is significant even then still says dwarf or giant
        parallax_error_mas = float(cfg["assumed_parallax_error_mas"])
        assumed = f" (error not given: {parallax_error_mas:g} mas assumed)"
        if not float(parallax_mas) / parallax_error_mas >= float(cfg["min_parallax_over_error"]):
            return None, (f"parallax {float(parallax_mas):.3f} mas without an error{assumed}: too "
                          "uncertain for the luminosity class")
    ratio = float(parallax_mas) / float(parallax_error_mas)
    need = float(cfg["min_parallax_over_error"])
    if ratio < need:
        return None, (f"parallax/error = {ratio:.1f} < {need:g}: too uncertain for the "
                      "luminosity class")
    vk = float(vmag) - float(kmag)
    xs, ys = cfg["dwarf_v_minus_k"], cfg["dwarf_abs_k"]
    if not xs[0] <= vk <= xs[-1]:
        return None, (f"V-K = {vk:.2f} outside the dwarf sequence {xs[0]}..{xs[-1]}: the parallax "
                      "is not used for the luminosity class")
    abs_k = float(absolute_magnitude(kmag, parallax_mas))
    dwarf_k = float(np.interp(vk, xs, ys))
    offset = float(cfg["giant_offset_mag"])
    cls = "giant" if abs_k < dwarf_k - offset else "dwarf"
    return cls, (f"luminosity class {cls} from the parallax: M_K = {abs_k:.2f} "
                 f"(parallax {float(parallax_mas):.3f} +- {float(parallax_error_mas):.3f} mas{assumed}), "
                 f"dwarf sequence M_K = {dwarf_k:.2f} at V-K = {vk:.2f}; giant if more than "
                 f"{offset:g} mag brighter (Pecaut & Mamajek 2013 sequence; no extinction)")
