"""The demo runs end to end on a clean folder and its outputs parse; every example runs."""

from __future__ import annotations

import json
import re
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]


@pytest.fixture(scope="module")
def demo_out(tmp_path_factory):
    from occplan.demo import run_demo

    out = tmp_path_factory.mktemp("demo") / "out"
    res = run_demo(out, progress=False, log=lambda msg: None)
    return out, res


def test_demo_outputs_parse(demo_out):
    from astropy.table import Table

    out, res = demo_out
    assert all(Path(p).exists() for p in res.files)
    for body in ("saturn", "uranus"):
        ranked = json.loads((out / f"ranked_{body}.json").read_text())
        rows = ranked["rows"]
        assert rows, f"the demo finds {body} events"
        for key in ("star_id", "body", "site", "closest_approach_utc", "min_ring_radius_km",
                    "features_crossed", "features_resolvable", "deciding_features", "score"):
            assert key in rows[0]
        scores = [r["score"] for r in rows]
        assert scores == sorted(scores, reverse=True)
        table = Table.read(out / f"ranked_{body}.ecsv", format="ascii.ecsv")
        assert len(table) == len(rows)
        Table.read(out / f"candidates_{body}.ecsv", format="ascii.ecsv")
    for chord in sorted((out / "events").glob("*_chord.ecsv")):
        t = Table.read(chord, format="ascii.ecsv")
        assert str(t["ring_radius_km"].unit) == "km" and len(t) > 100
    for ev in sorted((out / "events").glob("*.json")):
        data = json.loads(ev.read_text())
        assert data["crossings"] and "zones" in data and "cautions" in data


def test_demo_report_references_existing_figures(demo_out):
    out, _ = demo_out
    html = (out / "report.html").read_text()
    refs = re.findall(r'href="([^"]+)"', html)
    assert any(r.endswith(".png") for r in refs)
    for ref in refs:
        assert (out / ref).exists(), ref
    assert html.count("data:image/png;base64,") >= 3  # figures embedded: one self-contained page
    # readable on a phone and light enough to send (common practice for a mailed report)
    assert "name='viewport'" in html and "class='scroll'" in html
    assert (out / "report.html").stat().st_size < 2_000_000
    md = (out / "report.md").read_text()
    for ref in re.findall(r"\]\(([^)]+)\)", md):
        assert (out / ref).exists(), ref
    assert "Why the top event ranks first" in md and "safety" in md.lower()


def test_demo_refuses_a_used_folder(demo_out, cli):
    out, _ = demo_out
    res = cli("demo", "--out", out)
    assert res.exit_code == 2 and "--overwrite" in res.output


@pytest.mark.parametrize("script", sorted(p.name for p in (ROOT / "examples").glob("*.py")))
def test_example_runs(script):
    proc = subprocess.run([sys.executable, str(ROOT / "examples" / script)], capture_output=True,
                          text=True, timeout=600, cwd=ROOT)
    assert proc.returncode == 0, proc.stderr[-2000:]
    assert proc.stdout.strip()
