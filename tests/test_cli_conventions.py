"""Command-line conventions (common practice for command-line tools): choices listed in the
help and refused in one line, readable placeholders, switches without a value placeholder,
--quiet silencing notes but not results, shell completion offered."""

from __future__ import annotations

import pytest
from typer.testing import CliRunner

from occplan.cli.main import build_app


@pytest.fixture(scope="module")
def cli():
    app = build_app()
    runner = CliRunner()

    def run(*args):
        return runner.invoke(app, list(args), catch_exceptions=False)

    return run


def test_choices_and_placeholders_in_the_help(cli):
    text = " ".join(cli("event", "--help").output.split())
    for shown in ("<table|csv|ecsv|json>", "<V|R|I|J|H|K>", "<auto|dwarf|giant>", '"RA DEC"',
                  "UTC", "DEG"):
        assert shown in text, shown
    assert "<str>" not in text and "<float>" not in text and "<bool>" not in text
    assert "--install-completion" in cli("--help").output


def test_a_choice_outside_the_list_is_one_line(cli):
    res = cli("zones", "--format", "xml")
    lines = [ln for ln in res.output.splitlines() if ln.strip()]
    assert res.exit_code == 2 and len(lines) == 1 and "'table', 'csv', 'ecsv', 'json'" in lines[0]


def test_quiet_keeps_results_and_drops_notes(cli, tmp_path):
    cat = tmp_path / "c.csv"
    cat.write_text("source_id,ra,dec,pmra,pmdec,parallax\n1,10.0,10.0,0,0,0\n")
    args = ("find", "--catalog", str(cat), "--body", "saturn", "--geocentre", "--start",
            "2027-01-01T00:00Z", "--end", "2027-01-02T00:00Z")
    loud, quiet = cli(*args), cli("--quiet", *args)
    assert loud.exit_code == quiet.exit_code == 0
    assert "catalog" in loud.output and "catalog" not in quiet.output  # the note on stderr
    assert "star_id" in quiet.output  # the table itself
