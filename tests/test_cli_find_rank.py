"""`occplan find` and `occplan rank`: outputs, rank from a find result, the season chart, the
first ranked event through `occplan event`, and bad input (one line, exit 2, no file)."""

from __future__ import annotations

import json

import numpy as np
import pytest

START, END = "2027-06-14T00:00Z", "2027-06-17T00:00Z"


@pytest.fixture(scope="module")
def files(tmp_path_factory):
    """Invented stars on Saturn's geocentric path, and two invented sites."""
    from occplan.bodies import get_body
    from occplan.ephemeris import get_ephemeris, parse_utc, tdb_s_of
    from occplan.search import planet_path

    d = tmp_path_factory.mktemp("season")
    body = get_body("saturn")
    t0, t1 = tdb_s_of(parse_utc(START)), tdb_s_of(parse_utc(END))
    path = planet_path(get_ephemeris(), body, t0, t1, 600.0, body.outer_ring_km)
    lines = ["source_id,ra,dec,pmra,pmdec,parallax,radial_velocity,ref_epoch,vmag,kmag"]
    for i, frac in enumerate((0.2, 0.5, 0.8)):
        k = int(frac * (len(path.tdb_s) - 1))
        u = path.unit[k] + np.array([0.0, 0.0, 2e-6 * (i - 1)])
        u /= np.linalg.norm(u)
        ra, dec = np.degrees(np.arctan2(u[1], u[0])) % 360, np.degrees(np.arcsin(u[2]))
        lines.append(f"{900 + i},{ra:.9f},{dec:.9f},0,0,0,,2027.45,{9 + i},{7 + i}")
    cat = d / "stars.csv"
    cat.write_text("\n".join(lines) + "\n")
    sites = d / "sites.toml"
    sites.write_text('[[sites]]\nname = "Dawnside"\nlat_deg = -25.0\nlon_deg = 45.0\nheight_m = 100\n'
                     '[[sites]]\nname = "Noonside"\nlat_deg = 30.0\nlon_deg = -150.0\nheight_m = 50\n')
    return d, cat, sites


@pytest.fixture(scope="module")
def found(files):
    from typer.testing import CliRunner

    from occplan.cli.main import build_app

    d, cat, sites = files
    out = d / "season.json"
    res = CliRunner().invoke(build_app(), ["find", "--catalog", str(cat), "--start", START,
                                           "--end", END, "--sites", str(sites), "--format", "json",
                                           "--out", str(out), "--chart", str(d / "season.png")],
                             catch_exceptions=False)
    assert res.exit_code == 0, res.output
    return out, json.loads(out.read_text())


def test_find_json_fields_and_chart(found, files):
    out, data = found
    rows = data["rows"]
    assert {r["star_id"] for r in rows} == {"900", "901", "902"}
    for r in rows:
        for key in ("star_id", "body", "site", "closest_approach_utc", "min_ring_radius_km",
                    "features_crossed", "feature_crossings", "features_resolvable", "score",
                    "potential_score", "observability", "deciding_features", "reasons", "zones"):
            assert key in r
        assert r["feature_crossings"] == len(r["zones"]) > 0
        assert r["features_crossed"] == len({z["name"] for z in r["zones"]})
        # the score is at most the sum of the crossing values (second crossings are
        # discounted by their longitude diversity) and at least their largest per feature
        values = [z["value"] for z in r["zone_factors"]]
        assert max(values) - 1e-9 <= r["score"] <= sum(values) + 1e-9
    meta = data["meta"]
    assert meta["search"]["candidates"] == 3 and "threshold" in meta["search"]
    assert meta["corrections"]["planet_deflection"] is True
    png = files[0] / "season.png"
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_rank_from_json_and_ecsv(cli, found, files):
    out, data = found
    res = cli("rank", "--from", out, "--format", "json")
    assert res.exit_code == 0, res.output
    ranked = json.loads(res.output)["rows"]
    scores = [r["score"] for r in ranked]
    assert scores == sorted(scores, reverse=True) and ranked[0]["rank"] == 1
    # the same events, re-scored with the same weights: the same scores
    by_key = {(r["star_id"], r["site"]): r["score"] for r in data["rows"]}
    for r in ranked:
        assert r["score"] == pytest.approx(by_key[(r["star_id"], r["site"])], abs=1e-9)
    ecsv = files[0] / "season.ecsv"
    res = cli("find", "--catalog", files[1], "--start", START, "--end", END, "--sites", files[2],
              "--site", "Dawnside", "--format", "ecsv", "--out", ecsv)
    assert res.exit_code == 0, res.output
    res = cli("rank", "--from", ecsv, "--top", "2")
    assert res.exit_code == 0, res.output
    assert "features_resolvable" in res.output and "deciding_features" in res.output
    assert res.output.count("Dawnside") == 2


def test_first_ranked_event_evaluates_and_plots(cli, found, files):
    out, _ = found
    ranked = json.loads(cli("rank", "--from", out, "--format", "json").output)["rows"]
    best = ranked[0]
    site_args = (["--site", best["site"], "--sites", files[2]] if best["site"] != "geocentre"
                 else ["--geocentre"])
    res = cli("event", "--catalog", files[1], "--star-id", best["star_id"], *site_args,
              "--start", best["window_start_utc"], "--end", best["window_end_utc"],
              "--format", "json")
    assert res.exit_code == 0, res.output
    ev = json.loads(res.output)
    assert len([z for z in ev["zones"] if z["weight"] > 0]) == best["feature_crossings"]
    png = files[0] / "best.png"
    res = cli("plot", "--catalog", files[1], "--star-id", best["star_id"], *site_args,
              "--start", best["window_start_utc"], "--end", best["window_end_utc"], "--out", png,
              "--overwrite")
    assert res.exit_code == 0, res.output
    assert png.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_csv_and_table(cli, files):
    _, cat, sites = files
    res = cli("find", "--catalog", cat, "--start", START, "--end", END, "--geocentre",
              "--no-zones", "--format", "csv")
    assert res.exit_code == 0, res.output
    header = res.stdout.splitlines()[0].split(",")
    assert header[:5] == ["star_id", "body", "site", "closest_approach_utc", "min_ring_radius_km"]
    assert "zones" not in header
    res = cli("find", "--catalog", cat, "--start", START, "--end", END, "--geocentre", "--no-zones")
    assert res.exit_code == 0 and "threshold" in res.output


@pytest.mark.parametrize("text,args,needle", [
    ("source_id,ra,dec\n1,10,5\n", [], "lacks column"),
    ("source_id,ra,dec,pmra,pmdec,parallax\n1,10,x5,0,0,0\n", [], "not a number"),
    ("source_id,ra,dec,pmra,pmdec,parallax\n", [], "no rows"),
    (None, ["--start", "2651-01-01", "--end", "2651-02-01"], "coverage"),  # DE440 ends 2650
    (None, ["--site", "Nowhere"], "no site"),
    (None, ["--format", "xml"], "is not one of"),
])
def test_bad_input(cli, files, tmp_path, text, args, needle):
    _, cat, sites = files
    if text is not None:
        cat = tmp_path / "bad.csv"
        cat.write_text(text)
    out = tmp_path / "out.json"
    base = {"--start": START, "--end": END}
    for i in range(0, len(args), 2):
        base.pop(args[i], None)
    extra = [x for kv in base.items() for x in kv]
    res = cli("find", "--catalog", cat, "--sites", sites, *extra, *args, "--format", "json",
              "--out", out) if "--format" not in args else cli(
        "find", "--catalog", cat, "--sites", sites, *extra, *args, "--out", out)
    assert res.exit_code == 2
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and needle in lines[0]
    assert not out.exists()


def test_rank_bad_input(cli, tmp_path):
    p = tmp_path / "x.json"
    p.write_text('{"hello": 1}')
    res = cli("rank", "--from", p)
    assert res.exit_code == 2 and "not an occplan find JSON" in res.output
    res = cli("rank", "--from", tmp_path / "none.json")
    assert res.exit_code == 2 and "not found" in res.output


def test_gaia_only_catalog_keeps_its_photometry_through_rank(files, tmp_path):
    """A Gaia-style catalog with only G and BP-RP (no V, no K): find derives the bands from
    Gaia (Riello et al. 2021 transformations) and scores with them; `rank --from` rebuilds the
    same star from the result (JSON and ECSV) and gets the same scores, and the brighter
    star scores higher."""
    from typer.testing import CliRunner

    from occplan.cli.main import build_app

    d, cat, sites = files
    rows = [line.split(",") for line in cat.read_text().splitlines()[1:]]
    gaia = tmp_path / "gaia.csv"
    lines = ["source_id,ra,dec,pmra,pmdec,parallax,ref_epoch,phot_g_mean_mag,bp_rp"]
    for (sid, ra, dec, *_rest), g in zip(rows, (9.0, 13.0, 11.0)):
        lines.append(f"{sid},{ra},{dec},0,0,0,2027.45,{g},1.1")
    # the first star's twin, four magnitudes fainter: the same chord, fewer photons
    sid, ra, dec, *_rest = rows[0]
    lines.append(f"{sid}0,{ra},{dec},0,0,0,2027.45,13.0,1.1")
    gaia.write_text("\n".join(lines) + "\n")
    app, runner = build_app(), CliRunner()
    scores = {}
    for fmt in ("json", "ecsv"):
        out = tmp_path / f"found.{fmt}"
        res = runner.invoke(app, ["find", "--catalog", str(gaia), "--start", START, "--end", END,
                                  "--sites", str(sites), "--format", fmt, "--out", str(out)],
                            catch_exceptions=False)
        assert res.exit_code == 0, res.output
        ranked = tmp_path / f"ranked_{fmt}.json"
        res = runner.invoke(app, ["rank", "--from", str(out), "--format", "json", "--out", str(ranked)],
                            catch_exceptions=False)
        assert res.exit_code == 0, res.output
        scores[fmt] = {(r["star_id"], r["site"]): r["score"] for r in json.loads(ranked.read_text())["rows"]}
    found_rows = json.loads((tmp_path / "found.json").read_text())["rows"]
    for r in found_rows:
        phot = r["star_extra"]["photometry"]
        assert {"V", "I", "K"} <= set(phot) and "Riello" in phot["I"]["source"]
        assert r["vmag"] == pytest.approx(phot["V"]["mag"])  # V derived from Gaia, said so
        assert scores["json"][(r["star_id"], r["site"])] == pytest.approx(r["score"], rel=1e-9)
    assert scores["json"] == pytest.approx(scores["ecsv"], rel=1e-9)
    pairs = [(r["score"], next(t["score"] for t in found_rows
                                if t["star_id"] == r["star_id"] + "0" and t["site"] == r["site"]))
             for r in found_rows if r["star_id"] == rows[0][0]]
    assert pairs and all(bright >= faint for bright, faint in pairs)
    assert any(bright > faint for bright, faint in pairs)


def test_rank_reevaluation_on_two_processes_gives_the_same_rows(found, monkeypatch):
    """`rank --from` with another cadence re-evaluates every event; on two forked processes
    the rows are the very same (nan-aware JSON text compared; common practice for a pool)."""
    from typer.testing import CliRunner

    import occplan.parallel
    from occplan.cli.main import build_app

    monkeypatch.setattr(occplan.parallel, "MIN_ITEMS_PER_JOB", 1)  # fork even for a few rows
    out, data = found
    assert occplan.parallel.effective_jobs(2, len(data["rows"])) == 2
    texts = []
    for jobs in ("1", "2"):
        res = CliRunner().invoke(build_app(), ["rank", "--from", str(out), "--cadence", "0.2",
                                               "--format", "json", "--jobs", jobs],
                                 catch_exceptions=False)
        assert res.exit_code == 0, res.output
        texts.append(json.dumps(json.loads(res.stdout)["rows"], sort_keys=True))
    assert texts[0] == texts[1] and '"zones"' in texts[0]
