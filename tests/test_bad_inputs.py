"""Bad input on the command line, table-driven: each case exits 2 with exactly one line on
stderr (the error, with advice), nothing on stdout, no traceback, and no file written.

Also the stars that used to be reported as crossing the rings or refused as edge-on: a clean
"no crossing" result with exit 0.
"""

from __future__ import annotations

import pytest

STAR = "23.99933 7.46989"  # about 12 arcsec from Saturn on 2027-06-15 (geocentric)
WINDOW = ["--start", "2027-06-15T00:00Z", "--end", "2027-06-15T02:00Z"]  # 7200 s
CHORD = ["chord", "--body", "saturn", "--star", STAR, "--geocentre", *WINDOW]
EVENT = ["event", "--body", "saturn", "--star", STAR, "--geocentre", *WINDOW]
ASPECT = ["aspect", "--body", "saturn", "--geocentre", *WINDOW]
PLOT = ["plot", "--body", "saturn", "--star", STAR, "--geocentre", *WINDOW]
LONG_NAME = "a" * 300 + ".csv"

CASES = [
    # non-finite numbers, named
    (CHORD + ["--pm-ra", "nan"], "--pm-ra"),
    (CHORD + ["--pm-dec", "inf"], "--pm-dec"),
    (CHORD + ["--parallax", "nan"], "--parallax"),
    (CHORD + ["--rv", "-inf"], "--rv"),
    (CHORD + ["--step", "nan"], "--step"),
    (CHORD + ["--step", "inf"], "--step"),
    (["chord", "--star", STAR, "--lat", "nan", "--lon", "0", *WINDOW], "--lat"),
    (["chord", "--star", STAR, "--lat", "10", "--lon", "inf", *WINDOW], "--lon"),
    (["chord", "--star", STAR, "--lat", "10", "--lon", "0", "--height", "nan", *WINDOW], "--height"),
    (EVENT + ["--vmag", "nan"], "--vmag"),
    (EVENT + ["--kmag", "inf"], "--kmag"),
    (EVENT + ["--aperture", "nan"], "--aperture"),
    (EVENT + ["--cadence", "inf"], "--cadence"),
    (EVENT + ["--sigma", "nan"], "--sigma"),
    (EVENT + ["--min-snr", "nan"], "--min-snr"),
    (EVENT + ["--samples-per-wavelength", "inf"], "--samples-per-wavelength"),
    (["zones", "--body", "saturn", "--rmin", "nan"], "--rmin"),
    (["zones", "--body", "saturn", "--rmax", "inf"], "--rmax"),
    (["zones", "--body", "saturn", "--viscosity", "nan"], "--viscosity"),
    (["zones", "--body", "saturn", "--rmax", "1e300"], "--rmax"),
    (["zones", "--body", "saturn", "--max-m", "100000"], "over the budget"),
    (["zones", "--body", "uranus", "--max-m", "1000000000", "--terms"], "over the budget"),
    (["info", "--format", "foo"], "--format"),
    (["chord", "--star", STAR, *WINDOW, "--sites", "/dev/null", "--site", "x"],
     "not a regular file"),
    (ASPECT + ["--step", "nan"], "--step"),
    # physical ranges
    (CHORD + ["--parallax", "1e11"], "--parallax"),
    (CHORD + ["--parallax", "-1"], "--parallax"),
    (CHORD + ["--pm-ra", "1e300"], "--pm-ra"),
    (CHORD + ["--rv", "1e9"], "--rv"),
    (EVENT + ["--aperture", "1e308"], "aperture"),
    (EVENT + ["--aperture", "-1"], "aperture"),
    (EVENT + ["--vmag", "99"], "magnitude"),
    # a step longer than the window, a window over the memory budget
    (CHORD + ["--step", "7201"], "longer than the window"),
    (CHORD + ["--step", "1e12"], "longer than the window"),
    (EVENT + ["--step", "7201"], "longer than the window"),
    (["chord", "--star", STAR, "--geocentre", "--start", "1900-01-01T00:00Z", "--end",
      "2050-01-01T00:00Z", "--step", "1e7"], "budget"),
    # usage errors: one line with the hint to --help
    (CHORD + ["--bogus", "1"], "--help"),
    (["chord", "--star", STAR, "--lat", "north", "--lon", "0", *WINDOW], "--help"),
    (EVENT + ["--max-order", "1.5"], "--help"),
    (CHORD + ["--format"], "--help"),
    (["chrod"], "--help"),
    (["--bogus"], "--help"),
    # outputs that cannot be written, refused before any work
    (CHORD + ["--out", "/proc/x.csv"], "cannot write"),
    (CHORD + ["--out", "."], "folder"),
    (CHORD + ["--out", ""], "folder"),
    (CHORD + ["--out", "missing/x.csv"], "does not exist"),
    (CHORD + ["--out", LONG_NAME], "longer than"),
    (EVENT + ["--out", "missing/x.json", "--format", "json"], "does not exist"),
    (ASPECT + ["--out", "/proc/x.csv"], "cannot write"),
    (["zones", "--body", "saturn", "--out", "missing/z.csv"], "does not exist"),
    (PLOT + ["--out", "missing/x.png"], "does not exist"),
    (["find", "--body", "saturn", "--geocentre", *WINDOW, "--catalog", "stars.csv",
      "--chart", "missing/c.png"], "does not exist"),
    (["demo", "--out", "a_file"], "is a file"),
    (["demo", "--out", "missing/demo"], "does not exist"),
    (["demo", "--top", "0"], "--top"),
    (["demo", "--top", "-1"], "--top"),
    (["find", "--body", "saturn", "--geocentre", *WINDOW, "--catalog", "stars.csv",
      "--jobs", "-1"], "--jobs"),
    (["where", "--body", "saturn", "--star", STAR, *WINDOW, "--jobs", "-2"], "--jobs"),
    (["network", "--body", "saturn", "--star", STAR, *WINDOW, "--sites", "s.toml",
      "--jobs", "-1"], "--jobs"),
]


@pytest.fixture()
def runner(tmp_path, monkeypatch):
    from typer.testing import CliRunner

    from occplan.cli.main import build_app

    monkeypatch.chdir(tmp_path)
    (tmp_path / "a_file").write_text("x")
    app = build_app()
    return lambda args: CliRunner().invoke(app, [str(a) for a in args], catch_exceptions=False)


@pytest.mark.parametrize("args,needle", CASES, ids=[" ".join(c[0])[-60:] for c in CASES])
def test_bad_input_is_one_line_exit_2_and_writes_nothing(runner, tmp_path, args, needle):
    before = sorted(p.name for p in tmp_path.iterdir())
    res = runner(args)
    assert res.exit_code == 2, res.output
    err = res.stderr.splitlines()
    assert len(err) == 1 and err[0].startswith("occplan: error: "), res.stderr
    assert needle in err[0], err[0]
    assert res.stdout == ""
    assert "Traceback" not in res.output
    assert sorted(p.name for p in tmp_path.iterdir()) == before


STAR_OPPOSITE = "216.00676 -11.44189"  # about 180 deg from Saturn on 2028-10-30
STAR_RING_PLANE = "220.58 6.46"  # B* = -0.004 deg while B = -17.9 deg
FAR_WINDOW = ["--geocentre", "--start", "2028-10-30T02:00Z", "--end", "2028-10-30T04:00Z"]


@pytest.mark.parametrize("star", [STAR_OPPOSITE, STAR_RING_PLANE])
def test_stars_far_from_the_planet_are_a_clean_no_crossing(runner, star):
    """The line of sight of these stars meets the ring plane only behind the observer; once
    read as a crossing of the A ring (the first) or refused as edge-on (the second)."""
    import json

    res = runner(["chord", "--body", "saturn", "--star", star, *FAR_WINDOW, "--step", "600",
                  "--format", "json"])
    assert res.exit_code == 0, res.output
    data = json.loads(res.stdout)
    assert data["meta"]["crossings"] == [] and data["meta"]["boundary_crossings"] == []
    assert "no ring crossing" in data["meta"]["note"]
    assert all(r["ring_radius_km"] is None and r["region"] == "" for r in data["rows"])
    res = runner(["event", "--body", "saturn", "--star", star, *FAR_WINDOW, "--format", "json"])
    assert res.exit_code == 0, res.output
    data = json.loads(res.stdout)
    assert data["crossings"] == [] and data["zones"] == [] and data["planet_hidden"] == []
    assert data["closest_approach"]["ring_radius_km"] is None
