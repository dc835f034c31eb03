"""The chord, aspect, bodies and info commands, including bad input (exit 2, one line)."""

from __future__ import annotations

import json

import pytest

STAR = "23.99933 7.46989"  # about 12 arcsec from Saturn on 2027-06-15 (geocentric)
WINDOW = ["--start", "2027-06-15T00:00Z", "--end", "2027-06-15T03:00Z"]


def test_chord_table_and_json(cli, tmp_path):
    res = cli("chord", "--body", "saturn", "--star", STAR, "--lat", "-30.2", "--lon", "-70.7",
              "--height", "2200", *WINDOW, "--step", "300")
    assert res.exit_code == 0, res.output
    assert "ingress" in res.output and "ring_radius_km" in res.output
    res = cli("chord", "--star", STAR, "--geocentre", *WINDOW, "--step", "300", "--format", "json")
    data = json.loads(res.output)
    assert set(data) == {"meta", "rows"}
    row = data["rows"][0]
    for key in ("time_utc", "ring_radius_km", "ring_longitude_deg", "radial_velocity_km_s",
                "sky_f_km", "sky_g_km", "opening_angle_deg", "behind_planet", "region"):
        assert key in row
    meta = data["meta"]
    for key in ("body", "observer", "kernels", "corrections", "opening_angle_deg",
                "star_elevation_deg", "pole_position_angle_deg"):
        assert key in meta
    assert meta["corrections"]["planet_deflection"] is True
    # Earth-based radial speeds are tens of km/s
    speeds = [abs(r["radial_velocity_km_s"]) for r in data["rows"]]
    assert 5 < max(speeds) < 80


def test_chord_ecsv_reads_back_with_units(cli, tmp_path):
    from astropy.table import Table

    out = tmp_path / "chord.ecsv"
    res = cli("chord", "--star", STAR, "--geocentre", *WINDOW, "--step", "600",
              "--format", "ecsv", "--out", out, "--no-deflection", "--barycentre")
    assert res.exit_code == 0, res.output
    table = Table.read(out, format="ascii.ecsv")
    assert str(table["ring_radius_km"].unit) == "km"
    assert table.meta["corrections"]["planet_deflection"] is False
    res = cli("chord", "--star", STAR, "--geocentre", *WINDOW, "--out", out)
    assert res.exit_code == 2 and "--overwrite" in res.output


def test_no_crossing_is_a_normal_result(cli):
    res = cli("chord", "--star", "25.0 8.0", "--geocentre", *WINDOW, "--step", "900")
    assert res.exit_code == 0
    assert "no ring crossing" in res.output


@pytest.mark.parametrize("args,needle", [
    (["--body", "pluto", "--star", STAR, "--geocentre", *WINDOW], "unknown body"),
    (["--star", "12 ab", "--geocentre", *WINDOW], "cannot read star position"),
    (["--star", STAR, "--lat", "95", "--lon", "0", *WINDOW], "latitude"),
    (["--star", STAR, "--geocentre", "--start", "2027-06-15T03:00Z", "--end", "2027-06-15T00:00Z"], "not after"),
    (["--star", STAR, "--geocentre", "--start", "2651-01-01", "--end", "2651-01-02"], "coverage"),  # DE440 ends 2650
    (["--star", STAR, "--geocentre", *WINDOW, "--kernel", "/nonexistent.bsp"], "not found"),
    (["--star", STAR, "--observer-id", "-82", *WINDOW], "NAIF id -82"),
    (["--star", STAR, *WINDOW], "exactly one observer"),
    (["--star", STAR, "--geocentre", *WINDOW, "--format", "xml"], "is not one of"),
    (["--star", STAR, "--geocentre", "--start", "2025-03-23T17:00Z", "--end", "2025-03-23T18:00Z"], "edge-on"),
])
def test_bad_input_one_line_exit_2(cli, args, needle):
    res = cli("chord", *args)
    assert res.exit_code == 2
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and needle in lines[0], res.output
    assert "Traceback" not in res.output


def test_bad_input_leaves_no_file(cli, tmp_path):
    out = tmp_path / "x.csv"
    res = cli("chord", "--star", STAR, "--geocentre", "--start", "2651-01-01", "--end",
              "2651-01-02", "--out", out, "--format", "csv")
    assert res.exit_code == 2 and not out.exists()
    assert list(tmp_path.iterdir()) == []


def test_aspect_bodies_info_version(cli):
    res = cli("aspect", "--body", "saturn", "--geocentre", "--start", "2025-03-01",
              "--end", "2025-04-15", "--step", "864000", "--format", "json")
    rows = json.loads(res.output)["rows"]
    b = [r["opening_angle_deg"] for r in rows]
    assert b[0] * b[-1] < 0  # the 2025-03-23 ring-plane crossing lies inside
    for key in ("sun_opening_angle_deg", "pole_position_angle_deg", "distance_au",
                "planet_radius_arcsec", "outer_ring_radius_arcsec"):
        assert key in rows[0]
    # Saturn 8.0-10.9 AU away: equatorial radius 7.6-10.4 arcsec (60268 km, IAU)
    assert 7.5 < rows[0]["planet_radius_arcsec"] < 10.5
    res = cli("bodies")
    assert res.exit_code == 0 and "Saturn" in res.output and "Uranus" in res.output
    res = cli("bodies", "--body", "saturn")
    assert "B ring" in res.output and "Mimas" in res.output
    res = cli("info")
    assert res.exit_code == 0 and "de440.bsp" in res.output and "Earth orientation" in res.output
    res = cli("--version")
    assert res.exit_code == 0 and "occplan" in res.output
