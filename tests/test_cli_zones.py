"""`occplan zones` through typer's CliRunner."""

import json

import pytest
from astropy.table import Table
from typer.testing import CliRunner

from occplan.cli.main import build_app

ZONES_FIELDS = ["label", "satellite", "kind", "wave", "m", "k", "p", "order",
                "resonance_radius_km", "pattern_speed_deg_day", "torque_per_sigma",
                "propagation", "zone_inner_km", "zone_outer_km"]
FEATURE_FIELDS = ["name", "feature", "label", "satellite", "kind", "wave", "m", "k", "p", "order",
                  "resonance_radius_km", "zone_inner_km", "zone_outer_km", "propagation",
                  "amplitude", "torque_dyn_cm", "scale_km", "region", "optical_depth", "terms"]
QUICK = ["zones", "--body", "saturn", "--rmin", "117000", "--rmax", "135000", "--max-m", "12",
         "--satellite", "Mimas", "--satellite", "Janus"]
TERMS = QUICK + ["--terms"]


@pytest.fixture(scope="module")
def runner():
    return CliRunner()


def test_features_by_default(runner):
    result = runner.invoke(build_app(), QUICK + ["--format", "json"])
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    rows = data["rows"]
    assert rows and all(name in rows[0] for name in FEATURE_FIELDS)
    names = {r["name"] for r in rows}
    assert "Mimas 2:1 edge" in names and "Mimas 5:3 bending wave" in names
    assert data["meta"]["listing"] == "features"
    bad = runner.invoke(build_app(), QUICK + ["--min-torque", "1e15"])
    assert bad.exit_code == 2 and "--terms" in bad.stderr


def test_json_rows_and_strongest(runner):
    result = runner.invoke(build_app(), TERMS + ["--format", "json", "--strongest", "3"])
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    rows = data["rows"]
    assert rows and all(name in rows[0] for name in ZONES_FIELDS)
    radii = [r["resonance_radius_km"] for r in rows]
    assert radii == sorted(radii)
    strong = [r for r in rows if r["strong"]]
    assert len(strong) == 3
    assert {(r["satellite"], r["label"]) for r in strong} >= {("Mimas", "2:1"), ("Janus", "6:5")}
    assert data["meta"]["body"] == "Saturn" and "torque_per_sigma" in data["meta"]["units"]


def test_table_csv_ecsv(runner, tmp_path):
    app = build_app()
    table = runner.invoke(app, TERMS)
    assert table.exit_code == 0 and "2:1" in table.stdout and "*" in table.stdout
    csv = runner.invoke(app, TERMS + ["--format", "csv"])
    parsed = Table.read(csv.stdout, format="ascii.csv")
    assert all(name in parsed.colnames for name in ZONES_FIELDS)
    out = tmp_path / "z.ecsv"
    ecsv = runner.invoke(app, TERMS + ["--format", "ecsv", "--out", str(out)])
    assert ecsv.exit_code == 0
    t = Table.read(out, format="ascii.ecsv")
    assert str(t["resonance_radius_km"].unit) == "km" and len(t) == len(parsed)
    again = runner.invoke(app, TERMS + ["--format", "ecsv", "--out", str(out)])
    assert again.exit_code == 2 and "--overwrite" in again.stderr


@pytest.mark.parametrize("extra,needle", [
    (["--satellite", "Nonesuch"], "no satellite"),
    (["--rmin", "130000", "--rmax", "120000"], "must be below"),
    (["--max-order", "4"], "--max-order"),
    (["--max-order", "0"], "--max-order"),
    (["--sigma", "-5"], "--sigma"),
])
def test_bad_input_one_line_exit_2(runner, extra, needle):
    result = runner.invoke(build_app(), ["zones", "--body", "saturn"] + extra)
    assert result.exit_code == 2
    lines = result.stderr.strip().splitlines()
    assert len(lines) == 1 and needle in lines[0] and "Traceback" not in result.output
