"""Star catalogs in: formats, column maps, skipped rows, bad input (invented stars only)."""

from __future__ import annotations

import numpy as np
import pytest
from astropy.table import MaskedColumn, Table

from occplan.catalogs import catalog_star, read_catalog, read_catalog_table
from occplan.errors import DataFileError, InputError, UnknownNameError


def make_table(n=4):
    rng = np.random.default_rng(7)
    t = Table()
    t["source_id"] = np.arange(1, n + 1, dtype=np.int64) * 1000003
    t["ra"] = rng.uniform(0, 360, n)
    t["dec"] = rng.uniform(-60, 60, n)
    t["pmra"] = rng.normal(0, 5, n)
    t["pmdec"] = rng.normal(0, 5, n)
    t["parallax"] = rng.uniform(0.1, 2, n)
    t["radial_velocity"] = rng.normal(0, 20, n)
    t["ref_epoch"] = np.full(n, 2016.0)
    t["vmag"] = rng.uniform(8, 14, n)
    t["kmag"] = t["vmag"] - 2.0
    return t


@pytest.mark.parametrize("suffix,fmt", [(".csv", "ascii.csv"), (".ecsv", "ascii.ecsv"),
                                        (".vot", "votable")])
def test_formats_round_trip(tmp_path, suffix, fmt):
    t = make_table()
    path = tmp_path / f"cat{suffix}"
    t.write(str(path), format=fmt)
    stars, report = read_catalog(path)
    assert report.stars == len(t) and not report.skipped
    for s, row in zip(stars, t):
        assert s.name == str(row["source_id"])
        # CSV keeps 16+ significant digits from astropy's writer: 1e-9 deg is 4 us of arc
        assert s.ra_deg == pytest.approx(row["ra"], abs=1e-9)
        assert s.pm_dec_mas_yr == pytest.approx(row["pmdec"], abs=1e-9)
        assert s.parallax_mas == pytest.approx(row["parallax"], abs=1e-9)
        assert s.vmag == pytest.approx(row["vmag"], abs=1e-9)
        # J2016.0 = JD 2457389.0 TT (Julian years of 365.25 d from J2000.0, common practice)
        assert s.epoch_jd_tt == pytest.approx(2457389.0, abs=1e-9)


def test_column_map_and_aliases(tmp_path):
    t = make_table()
    t.rename_column("ra", "RA_ICRS")
    t.rename_column("dec", "DE_ICRS")
    t.rename_column("kmag", "ks_m")  # the 2MASS spelling is recognised without a map
    path = tmp_path / "cat.csv"
    t.write(str(path), format="ascii.csv")
    with pytest.raises(DataFileError, match="lacks column"):
        read_catalog(path)
    stars, _ = read_catalog(path, {"ra": "RA_ICRS", "dec": "DE_ICRS"})
    assert stars[0].ra_deg == pytest.approx(t["RA_ICRS"][0], abs=1e-9)
    assert stars[0].kmag == pytest.approx(t["ks_m"][0], abs=1e-9)
    with pytest.raises(InputError, match="unknown occplan column"):
        read_catalog(path, {"right_ascension": "RA_ICRS"})
    with pytest.raises(DataFileError, match="mapped column"):
        read_catalog(path, {"ra": "nope", "dec": "DE_ICRS"})


def test_missing_astrometry_is_skipped_and_reported(tmp_path):
    t = make_table(6)
    t["pmra"] = MaskedColumn(t["pmra"], mask=[False, True, False, False, False, False])
    t["ra"] = MaskedColumn(t["ra"], mask=[False, False, True, False, False, False])
    t["source_id"][4] = t["source_id"][0]  # a star listed twice
    t["parallax"][3] = -0.4  # Gaia's noise allows negative parallaxes
    path = tmp_path / "cat.ecsv"
    t.write(str(path), format="ascii.ecsv")
    stars, report = read_catalog(path)
    ids = [s.name for s in stars]
    assert len(ids) == len(set(ids)) == 3
    reasons = {r for _, _, r in report.skipped}
    assert any("no proper motion" in r for r in reasons)
    assert any("no position" in r for r in reasons)
    assert any("repeated source_id" in r for r in reasons)
    assert [row for row, _, _ in report.skipped] == [2, 3, 5]
    neg = [s for s in stars if s.name == str(t["source_id"][3])][0]
    assert neg.parallax_mas == 0.0 and any("negative parallax" in n for n in report.notes)
    # with --allow-no-motion the two-parameter star is used with zero motion, and listed
    stars2, report2 = read_catalog(path, allow_no_motion=True)
    assert len(stars2) == 4
    assert any("without proper motion" in n for n in report2.notes)
    # catalog_star says why a star cannot be used
    with pytest.raises(DataFileError, match="not usable"):
        catalog_star(path, t["source_id"][1])
    with pytest.raises(UnknownNameError, match="no star"):
        catalog_star(path, 42)
    assert catalog_star(path, t["source_id"][0]).ra_deg == pytest.approx(t["ra"][0], abs=1e-9)


def test_no_ref_epoch_column_defaults_to_gaia_dr3(tmp_path):
    t = make_table()
    del t["ref_epoch"]
    path = tmp_path / "cat.csv"
    t.write(str(path), format="ascii.csv")
    table = read_catalog_table(path)
    assert np.allclose(table.epoch_jd_tt, 2457389.0)
    assert any("ref_epoch" in n for n in table.report.notes)


@pytest.mark.parametrize("text,needle", [
    ("source_id,ra,dec\n1,10,5\n", "lacks column(s) pmra, pmdec, parallax"),
    ("source_id,ra,dec,pmra,pmdec,parallax\n1,10,5,1,abc,1\n2,11,5,1,1,1\n", "'abc' is not a number"),
    ("source_id,ra,dec,pmra,pmdec,parallax\n", "no rows"),
    ("source_id,ra,dec,pmra,pmdec,parallax\n1,,5,1,1,1\n", "no usable star"),
])
def test_bad_catalogs(tmp_path, text, needle):
    path = tmp_path / "bad.csv"
    path.write_text(text)
    with pytest.raises(DataFileError) as err:
        read_catalog(path)
    assert needle in str(err.value)
    assert "\n" not in str(err.value)


def test_unknown_type_and_missing_file(tmp_path):
    p = tmp_path / "cat.txt"
    p.write_text("x")
    with pytest.raises(DataFileError, match="unknown file type"):
        read_catalog(p)
    with pytest.raises(DataFileError, match="not found"):
        read_catalog(tmp_path / "none.csv")
