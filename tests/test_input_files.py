"""Input files that are wrong in every way a file can be: each is one line on stderr naming
the file and the key, exit code 2, nothing written (occplan.schema).

Body files are built from the shipped saturn.toml with one line changed, so every other key
stays legitimate; the shipped bodies themselves must pass the same schema.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

from occplan.bodies import builtin_names, get_body, load_body_file
from occplan.errors import DataFileError

SATURN = Path(__file__).parent.parent / "occplan" / "data" / "bodies" / "saturn.toml"
STAR = "23.99933 7.46989"
WINDOW = ["--start", "2027-06-15T00:00Z", "--end", "2027-06-15T02:00Z"]


def _body_with(tmp_path, pattern, replacement):
    text = SATURN.read_text(encoding="utf-8")
    new, n = re.subn(pattern, replacement, text, count=1, flags=re.M)
    assert n == 1, pattern
    if replacement.startswith("pole = 5"):  # the [pole] table becomes a number
        new = re.sub(r"^\[pole\]\n(.+\n)+", "", new.replace("pole = 5\n", ""), count=1, flags=re.M)
        new = "pole = 5\n" + new
    p = tmp_path / "body.toml"
    p.write_text(new, encoding="utf-8")
    return p


BODY_CASES = [
    # a misspelt key used to be ignored silently (the default viscosity used instead)
    (r"^viscosity_cm2_s = 100\.0", "viscosity_cm2s = 100.0", "did you mean 'viscosity_cm2_s'"),
    (r"^\[pole\]\n", "pole = 5\n[pole]\n", "pole = 5: expected a table"),
    (r"^ra_deg = 40\.589", 'ra_deg = "forty"', "pole.ra_deg"),
    (r"^polar_radius_km = 54364\.0", "polar_radius_km = 0.0", "shape.polar_radius_km"),
    (r"^equatorial_radius_km = 60268\.0", "equatorial_radius_km = -1.0", "shape.equatorial_radius_km"),
    (r"^reference_radius_km = 60330\.0", "reference_radius_km = 0", "gravity.reference_radius_km"),
    (r"^gm_km3_s2 = 37931206\.234", "gm_km3_s2 = nan", "gravity.gm_km3_s2"),
    (r"^inner_km = 66900\.0", "inner_km = inf", "rings[1] (D ring).inner_km"),
    (r"^surface_density_g_cm2 = 70\.0", "surface_density_g_cm2 = 0.0", "surface_density_g_cm2"),
    (r"^zonal_j = \[", 'zonal_j = ["a", ', "gravity.zonal_j[1]"),
    (r"^naif_id = 699 ", 'naif_id = "699" ', "naif_id"),
    (r"^planet_geometric_albedo = \{ V = 0\.50", "planet_geometric_albedo = { Q = 0.50",
     "photometry.planet_geometric_albedo"),
    (r"^inner_km = 66900\.0", "inner_km = 50000.0", "inside the planet"),
]


@pytest.mark.parametrize("pattern,replacement,needle", BODY_CASES,
                         ids=[c[1][:30] for c in BODY_CASES])
def test_bad_body_file_names_the_key(tmp_path, cli, pattern, replacement, needle):
    p = _body_with(tmp_path, pattern, replacement)
    with pytest.raises(DataFileError, match=re.escape(needle)):
        load_body_file(p)
    res = cli("zones", "--body", p)
    assert res.exit_code == 2 and res.stdout == ""
    err = res.stderr.splitlines()
    assert len(err) == 1 and str(p) in err[0] and needle in err[0], res.stderr


def test_shipped_bodies_pass_the_schema():
    for name in builtin_names():
        body = get_body(name)
        assert body.rings and body.equatorial_radius_km > 0


def test_a_byte_order_mark_does_not_hide_the_first_key(tmp_path):
    p = tmp_path / "bom.toml"
    p.write_bytes(b"\xef\xbb\xbf" + SATURN.read_bytes())
    assert load_body_file(p).name == "Saturn"


def _sites(tmp_path, text):
    p = tmp_path / "sites.toml"
    p.write_bytes(text if isinstance(text, bytes) else text.encode("utf-8"))
    return p


CLI_FILE_CASES = [
    # (file name, content, option, needle)
    ("sites.toml", "sites = [1, 2]\n", "--sites", "sites[1] = 1: expected a table"),
    ("sites.toml", '[[sites]]\nname = "a"\nlat_deg = "x"\nlon_deg = 1\n', "--sites",
     "sites[1] (a).lat_deg"),
    ("sites.toml", '[[sites]]\nname = "a"\nlat_deg = 1\nlon_deg = 1\nheigth_m = 3\n', "--sites",
     "did you mean 'height_m'"),
    ("sites.toml", b'[[sites]]\nname = "\xe9"\nlat_deg = 1\nlon_deg = 1\n', "--sites",
     "not UTF-8"),
    ("tel.toml", b"aperture_m = 1.0 # \xff\n", "--telescope", "not UTF-8"),
    ("weights.toml", b"[snr]\nreference = 1 # \xff\n", "--weights", "not UTF-8"),
]


@pytest.mark.parametrize("name,content,option,needle", CLI_FILE_CASES,
                         ids=[f"{c[2]}-{c[3][:20]}" for c in CLI_FILE_CASES])
def test_bad_setting_files_are_one_line(tmp_path, cli, name, content, option, needle):
    p = tmp_path / name
    p.write_bytes(content if isinstance(content, bytes) else content.encode("utf-8"))
    if option == "--sites":
        args = ["chord", "--star", STAR, "--site", "a", "--sites", p, *WINDOW]
    elif option == "--telescope":
        args = ["event", "--star", STAR, "--geocentre", "--telescope", p, *WINDOW]
    else:
        rows = tmp_path / "r.json"
        rows.write_text(json.dumps({"meta": {"body": "Saturn"}, "rows": []}))
        args = ["rank", "--from", rows, "--weights", p]
    res = cli(*args)
    assert res.exit_code == 2 and res.stdout == ""
    err = res.stderr.splitlines()
    assert len(err) == 1 and needle in err[0] and str(p) in err[0], res.stderr


@pytest.mark.parametrize("rows,needle", [
    ([1, 2], "rows[1] = 1: expected an object"),
    ([{"star_id": "1", "zones": [3]}], "rows[1].zones"),
    ([{"star_id": 1.5}], "rows[1].star_id"),
    ([{"star_id": "1", "score": "high"}], "rows[1].score"),
    ("many", "rows = 'many'"),
])
def test_rank_from_json_with_wrong_row_types(tmp_path, cli, rows, needle):
    p = tmp_path / "found.json"
    p.write_text(json.dumps({"meta": {"body": "Saturn"}, "rows": rows}))
    res = cli("rank", "--from", p)
    assert res.exit_code == 2 and res.stdout == ""
    err = res.stderr.splitlines()
    assert len(err) == 1 and needle in err[0], res.stderr


@pytest.mark.parametrize("option", ["--sites", "--catalog", "--telescope", "--body"])
@pytest.mark.parametrize("target,needle", [(".", "is a folder"), ("/dev/null", "not a regular file")])
def test_a_folder_or_device_is_called_what_it_is(tmp_path, cli, monkeypatch, option, target, needle):
    monkeypatch.chdir(tmp_path)
    if target == "." and option == "--body":
        target = str(tmp_path) + "/"
    extra = {"--sites": ["--site", "a"], "--catalog": ["--star-id", "1"]}.get(option, [])
    star = [] if option == "--catalog" else ["--star", STAR]
    observer = [] if option == "--sites" else ["--geocentre"]
    res = cli("event", *star, *observer, option, target, *extra, *WINDOW)
    assert res.exit_code == 2 and res.stdout == ""
    err = res.stderr.splitlines()
    assert len(err) == 1 and needle in err[0] and "not found" not in err[0], res.stderr


def test_catalog_with_a_bom_keeps_source_id(tmp_path):
    from occplan.catalogs import read_catalog_table

    p = tmp_path / "bom.csv"
    p.write_bytes(b"\xef\xbb\xbfsource_id,ra,dec,pmra,pmdec,parallax\n42,10,5,1,1,1\n")
    assert list(read_catalog_table(p).source_id) == ["42"]


def test_absurdly_wide_catalog_is_refused_before_parsing(tmp_path):
    """A million columns took 2.2 GB and 55 s in the CSV parser; now refused from the header."""
    import time

    from occplan.catalogs import read_catalog_table
    from occplan.schema import MAX_CATALOG_COLUMNS

    p = tmp_path / "wide.csv"
    p.write_text(",".join(f"c{i}" for i in range(10 * MAX_CATALOG_COLUMNS)) + "\n1" + ",1" * (10 * MAX_CATALOG_COLUMNS - 1) + "\n")
    started = time.perf_counter()
    with pytest.raises(DataFileError, match="columns, over occplan's limit"):
        read_catalog_table(p)
    assert time.perf_counter() - started < 1.0
    p.write_text(",".join(f"c{i}" for i in range(1_000_000)) + "\n")
    with pytest.raises(DataFileError, match="header line is longer"):
        read_catalog_table(p)
