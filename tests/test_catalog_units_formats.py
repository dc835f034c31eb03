"""Catalogs as they come: units read and converted, every file format, a byte-order mark,
measured magnitudes preferred to Gaia-derived ones, and a Gaia-only star through `occplan
event` and the ranking (invented stars; the Saturn geometry of tests/test_event.py)."""

from __future__ import annotations

import dataclasses
import gzip
import json

import astropy.units as u
import numpy as np
import pytest
from astropy.table import QTable, Table

from occplan.catalogs import read_catalog, read_catalog_table
from occplan.errors import DataFileError

ASTROMETRY = ("ra_deg", "dec_deg", "pm_ra_mas_yr", "pm_dec_mas_yr", "parallax_mas", "rv_km_s",
              "epoch_jd_tt", "vmag", "kmag")


def gaia_table(n=5):
    """A Gaia-archive-like table in Gaia's units (deg, mas/yr, mas, km/s, yr, mag)."""
    rng = np.random.default_rng(11)
    t = QTable()
    t["source_id"] = np.arange(1, n + 1, dtype=np.int64) * 4295806720
    t["ra"] = rng.uniform(0, 360, n) * u.deg
    t["dec"] = rng.uniform(-60, 60, n) * u.deg
    t["pmra"] = rng.normal(0, 20, n) * u.mas / u.yr
    t["pmdec"] = rng.normal(0, 20, n) * u.mas / u.yr
    t["parallax"] = rng.uniform(0.2, 3, n) * u.mas
    t["parallax_error"] = np.full(n, 0.02) * u.mas
    t["radial_velocity"] = rng.normal(0, 30, n) * u.km / u.s
    t["ref_epoch"] = np.full(n, 2016.0) * u.yr
    t["phot_g_mean_mag"] = rng.uniform(8, 13, n) * u.mag
    t["bp_rp"] = rng.uniform(0.3, 2.0, n) * u.mag
    t["phot_bp_mean_mag"] = t["phot_g_mean_mag"] + 0.4 * t["bp_rp"]
    t["phot_rp_mean_mag"] = t["phot_bp_mean_mag"] - t["bp_rp"]
    return t


def same_stars(a, b, rel=1e-12):
    assert list(a.source_id) == list(b.source_id)
    for f in ASTROMETRY:
        x, y = getattr(a, f), getattr(b, f)
        assert np.allclose(x, y, rtol=rel, atol=0, equal_nan=True), f


def test_other_units_give_identical_stars(tmp_path):
    """Parallax in arcsec (read as mas it would be 1000x wrong), proper motions in rad/s and
    deg/yr, positions in rad, radial velocity in m/s, epoch in days: astropy converts each to
    occplan's unit, and the stars are the ones of the same catalog in Gaia's units (to 1e-12,
    rounding of the unit conversions)."""
    t = gaia_table()
    ref_path = tmp_path / "mas.ecsv"
    t.write(ref_path)
    other = t.copy()
    other["ra"] = other["ra"].to(u.rad)
    other["parallax"] = other["parallax"].to(u.arcsec)
    other["parallax_error"] = other["parallax_error"].to(u.arcsec)
    other["pmra"] = other["pmra"].to(u.rad / u.s)
    other["pmdec"] = other["pmdec"].to(u.deg / u.yr)
    other["radial_velocity"] = other["radial_velocity"].to(u.m / u.s)
    other["ref_epoch"] = other["ref_epoch"].to(u.day)
    for name, fmt in (("other.ecsv", "ascii.ecsv"), ("other.vot", "votable"), ("other.fits", "fits")):
        other.write(tmp_path / name, format=fmt)
        got = read_catalog_table(tmp_path / name)
        same_stars(read_catalog_table(ref_path), got, rel=1e-9 if fmt == "votable" else 1e-12)
        assert np.allclose(got.parallax_error_mas, 0.02)
        assert not any("no unit" in n for n in got.report.notes)
    assert read_catalog_table(tmp_path / "other.ecsv").parallax_mas.max() < 3.0  # not 1000x


def test_missing_units_get_gaia_units_and_a_note(tmp_path):
    t = gaia_table()
    path = tmp_path / "plain.csv"
    Table(t).write(path, format="ascii.csv")  # CSV carries no units
    table = read_catalog_table(path)
    same_stars(read_catalog_table(_ecsv(tmp_path, t)), table, rel=1e-12)
    note = [n for n in table.report.notes if "no unit" in n]
    assert note and "parallax (mas)" in note[0] and "pmra (mas / yr)" in note[0]


def _ecsv(tmp_path, t):
    path = tmp_path / "ref.ecsv"
    t.write(path, overwrite=True)
    return path


@pytest.mark.parametrize("column,unit,needle", [
    ("parallax", u.km, "cannot be converted to mas"),
    ("pmra", u.mas, "cannot be converted to mas / yr"),
    ("phot_g_mean_mag", u.Jy, "not a magnitude"),
])
def test_incompatible_unit_is_one_line_error(tmp_path, cli, column, unit, needle):
    t = gaia_table()
    t[column] = t[column].value * unit
    path = tmp_path / "bad.ecsv"
    t.write(path)
    with pytest.raises(DataFileError, match=needle) as err:
        read_catalog_table(path)
    assert "\n" not in str(err.value)
    res = cli("event", "--catalog", path, "--star-id", t["source_id"][0], "--geocentre",
              "--start", "2027-06-15T00:20Z", "--end", "2027-06-15T01:30Z")
    assert res.exit_code == 2
    assert needle in res.output and res.output.strip().count("\n") == 0


def test_unparsable_unit_is_an_error(tmp_path):
    path = tmp_path / "bad.ecsv"
    text = _ecsv(tmp_path, gaia_table()).read_text().replace("unit: mas, datatype: float64}",
                                                             "unit: furlongs, datatype: float64}", 1)
    path.write_text(text)
    with pytest.raises(DataFileError, match="cannot read"):
        read_catalog_table(path)


@pytest.mark.parametrize("name,fmt", [("c.csv", "ascii.csv"), ("c.ecsv", "ascii.ecsv"),
                                      ("c.vot", "votable"), ("c.xml", "votable"),
                                      ("c.fits", "fits"), ("c.parquet", "parquet")])
def test_every_format_reads_the_same_stars(tmp_path, name, fmt):
    t = gaia_table()
    ref = read_catalog_table(_ecsv(tmp_path, t))
    path = tmp_path / name
    (Table(t) if fmt == "ascii.csv" else t).write(path, format=fmt)
    got = read_catalog_table(path)
    # VOTable writes float64 as text with 17 digits; the others are binary or exact
    same_stars(ref, got, rel=1e-12)
    # units travel in every format but CSV
    assert any("no unit" in n for n in got.report.notes) == (fmt == "ascii.csv")
    for band in ("V", "K", "I"):
        assert np.allclose(ref.magnitudes[band]["mag"], got.magnitudes[band]["mag"], atol=1e-12)


def test_gzip_csv_and_ecsv(tmp_path):
    t = gaia_table()
    ref = read_catalog_table(_ecsv(tmp_path, t))
    plain = tmp_path / "c.csv"
    Table(t).write(plain, format="ascii.csv")
    for src, name in ((plain, "c.csv.gz"), (tmp_path / "ref.ecsv", "c.ecsv.gz")):
        gz = tmp_path / name
        gz.write_bytes(gzip.compress(src.read_bytes()))
        same_stars(ref, read_catalog_table(gz), rel=1e-12)


def test_bom_csv_keeps_source_id(tmp_path):
    """A spreadsheet export starts with a UTF-8 byte-order mark; source_id must survive it."""
    t = gaia_table()
    plain = tmp_path / "c.csv"
    Table(t).write(plain, format="ascii.csv")
    bom = tmp_path / "bom.csv"
    bom.write_bytes(b"\xef\xbb\xbf" + plain.read_bytes())
    stars, report = read_catalog(bom)
    assert [s.name for s in stars] == [str(i) for i in t["source_id"]]
    assert report.stars == len(t)


def test_measured_magnitudes_preferred_and_named(tmp_path):
    """2MASS ks_m and a V column win over the Gaia-derived values; which was used is kept."""
    t = gaia_table(3)
    t["ks_m"] = [7.0, np.nan, 7.5] * u.mag
    t["vmag"] = [9.0, 9.5, np.nan] * u.mag
    table = read_catalog_table(_ecsv(tmp_path, t))
    k = table.magnitudes["K"]
    assert k["mag"][0] == 7.0 and "ks_m" in k["source"][0] and np.isnan(k["sigma"][0])
    assert "Riello" in k["source"][1] and k["sigma"][1] > 0
    v = table.magnitudes["V"]
    assert v["mag"][1] == 9.5 and "vmag" in v["source"][1]
    assert "Riello" in v["source"][2]
    star = table.star(1)
    assert star.kmag == pytest.approx(k["mag"][1]) and star.extra["photometry"]["K"]["sigma"] > 0
    assert star.extra["parallax_error_mas"] == pytest.approx(0.02)
    # the subset used by the search keeps the provenance
    sub = table.subset([2])
    assert sub.magnitudes["V"]["source"][0] == v["source"][2]


# ------------------------------------------------------------------ a Gaia-only star end to end

STAR_RA, STAR_DEC = 23.9962, 7.4705  # crosses Saturn's rings on 2027-06-15 (tests/test_event.py)
WINDOW = ("--start", "2027-06-15T00:20Z", "--end", "2027-06-15T01:30Z")


def gaia_only_star_file(tmp_path, g_mags, parallax_mas=0.887, ra=STAR_RA, dec=STAR_DEC):
    lines = ["source_id,ra,dec,pmra,pmdec,parallax,parallax_error,phot_g_mean_mag,bp_rp"]
    for i, g in enumerate(g_mags):
        lines.append(f"{77 + i},{ra},{dec},0,0,{parallax_mas},0.02,{g},1.6")
    path = tmp_path / "gaia_only.csv"
    path.write_text("\n".join(lines) + "\n")
    return path


def test_gaia_only_star_gets_snr_and_diameter_in_event(tmp_path, cli):
    path = gaia_only_star_file(tmp_path, [8.9])
    res = cli("event", "--catalog", path, "--star-id", "77", "--lat", "-25", "--lon", "160",
              "--height", "1000", *WINDOW, "--max-order", "1", "--format", "json")
    assert res.exit_code == 0, res.output
    data = json.loads(res.output)
    resol = data["resolution"]
    assert resol["stellar_diameter_km"] > 0
    notes = " ".join(resol["notes"])
    # parallax 0.887 mas at K ~ 5.8: M_K ~ -4.5, a giant, and the output says why
    assert "luminosity class giant from the parallax" in notes
    assert "Riello" in notes and "extinction" in notes
    # uncertainty: the giant relation's 12 % and the magnitudes' scatter, in quadrature
    assert 0.12 < resol["stellar_diameter_relative_uncertainty"] < 0.2
    phot = data["photometry"]
    assert phot["star_mag"] is not None and "Riello" in phot["star_mag_method"]
    assert any(z["snr_per_element"] is not None and z["snr_per_element"] > 0 for z in data["zones"])


def test_ranking_responds_to_gaia_brightness(tmp_path, eph, saturn):
    """Two stars identical but for G (8 and 13): the brighter one scores higher (its feature
    SNR is larger), with V and K taken from G and BP-RP alone."""
    from occplan.catalogs import Site
    from occplan.ephemeris import parse_utc, tdb_s_of
    from occplan.ranking import evaluate_and_score

    # the star, window and site of tests/test_ranking.py (Saturn up before dawn at the site)
    path = gaia_only_star_file(tmp_path, [9.0, 13.0], ra=23.99933, dec=7.46989)
    table = read_catalog_table(path)
    site = Site("east", -25.0, 45.0, 100.0)
    window = (tdb_s_of(parse_utc("2027-06-15T00:00Z")), tdb_s_of(parse_utc("2027-06-15T02:30Z")))
    scores = []
    for i in range(2):
        star = table.star(i)
        assert star.vmag is not None and star.kmag is not None
        # what the ranking rebuilds from find rows: V and K only
        bare = dataclasses.replace(star, extra={})
        _, score, _ = evaluate_and_score(saturn, bare, site.observer(), window, site=site)
        scores.append(score["score"])
    assert scores[0] > scores[1] > 0, scores
