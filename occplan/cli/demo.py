"""`occplan demo`: the whole job on the invented demo scenario, offline."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import typer

from . import options as o


def register(app: typer.Typer) -> None:
    @app.command("demo")
    @o.user_errors
    def demo(
        out: Annotated[Path, typer.Option("--out", help="Output folder for tables, figures and the report.")] = Path("occplan-demo-output"),
        overwrite: o.Overwrite = False,
        top: Annotated[Optional[int], typer.Option("--top", help="Events per planet to evaluate in full (default: the campaign's).")] = None,
    ):
        """Run find -> rank -> event -> plots -> report on the demo scenario (ephem_demo/).

        Example: occplan demo --out occplan-demo-output
        """
        from ..demo import run_demo
        from ..errors import InputError
        from ..tables import check_out_folder

        if top is not None and top < 1:
            raise InputError(f"--top {top}: give at least 1 event per planet (or leave it out "
                             "for the campaign's number)")
        check_out_folder(out)

        res = run_demo(out, overwrite=overwrite, top_events=top)
        typer.echo(f"occplan demo: wrote {len(res.files)} files into {res.out_dir}/")
        typer.echo(f"  report: {res.out_dir / 'report.html'} (and report.md)")
        for line in res.summary:
            typer.echo(f"  {line}")
        typer.echo("  Site rules and the observatory's safety practice come first: never point "
                   "optics near the Sun.")
