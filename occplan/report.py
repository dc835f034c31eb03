"""The campaign report: Markdown and a self-contained HTML page with the figures.

The report is built from plain data (dicts and lists) that :mod:`occplan.demo` (or a user's
own script) assembles: the campaign, and per body the ranked events with their score factors,
and the fully evaluated top events with their figures and chord tables.  Figures are embedded
in the HTML as data URIs (one file to mail around) and also linked to the PNG files beside it.
"""

from __future__ import annotations

import base64
import html
import math
from pathlib import Path

SAFETY = ("Pointing optics near the Sun can blind an observer and destroy a camera. occplan "
          "flags events with the Sun above the horizon or within 15 degrees of the target; the "
          "site's rules and the observatory's safety practice always come first.")


def _fmt(v, nd=2):
    if v is None:
        return "-"
    if isinstance(v, bool):
        return "yes" if v else "no"
    if isinstance(v, float):
        if not math.isfinite(v):
            return "-"
        if abs(v) >= 1000:
            return f"{v:,.0f}"
        return f"{v:.{nd}f}"
    return str(v)


def _md_table(rows: list[dict], columns: list[tuple[str, str]]) -> str:
    head = "| " + " | ".join(title for _, title in columns) + " |"
    sep = "|" + "|".join("---" for _ in columns) + "|"
    body = ["| " + " | ".join(_fmt(r.get(key)) for key, _ in columns) + " |" for r in rows]
    return "\n".join([head, sep, *body])


def _html_table(rows: list[dict], columns: list[tuple[str, str]]) -> str:
    head = "".join(f"<th>{html.escape(t)}</th>" for _, t in columns)
    body = "".join("<tr>" + "".join(f"<td>{html.escape(_fmt(r.get(k)))}</td>" for k, _ in columns)
                   + "</tr>" for r in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


RANK_COLUMNS = [("rank", "#"), ("star_id", "star"), ("site", "site"),
                ("closest_approach_utc", "closest approach (UTC)"),
                ("min_ring_radius_km", "min radius km"), ("score", "score")]


def write_report(out_dir: str | Path, campaign: dict, bodies: list[dict]) -> tuple[Path, Path]:
    """Write ``report.md`` and ``report.html`` into ``out_dir``.

    Parameters
    ----------
    campaign : dict
        ``name``, ``start_utc``, ``end_utc``, ``sites`` (list of dicts with name, lat_deg,
        lon_deg, height_m, telescope), ``catalog`` (path), ``stars`` (count), ``notes``.
    bodies : list of dict
        Per body: ``body``, ``candidates`` (count), ``ranked`` (rows with rank, star_id, site,
        closest_approach_utc, min_ring_radius_km, score, and the factors),
        ``factor_columns`` (list of (key, title)), ``why_first`` (text), ``season_chart``
        (path relative to out_dir), ``events`` (list of dicts: ``title``, ``summary`` text,
        ``figure`` path, ``chord_table`` path, ``json`` path).
    """
    out = Path(out_dir)
    md = [f"# {campaign['name']}", "",
          f"Season {campaign['start_utc']} to {campaign['end_utc']}; catalog "
          f"`{campaign['catalog']}` ({campaign['stars']} stars); made by occplan "
          f"{campaign.get('version', '')}, offline, from the JPL ephemeris named in each table's "
          "metadata.", "",
          "## What occplan did", "",
          "1. **find**: a spatial index on the catalog's unit vectors picked the stars near each "
          "planet's apparent path; each was refined to its closest approach (the minimum "
          "ring-plane radius seen from the geocentre) by root finding, and kept when that "
          "radius lies inside the outer ring plus the Earth's radius projected.",
          "2. **per station**: the topocentric chord of each kept star, its ring-region "
          "crossings and the ring features on the ingress and egress profiles: density and "
          "bending waves that fit in their ring, resonance-held edges, narrow rings and "
          "regions of overlapping resonances, derived from the satellites' resonances.",
          "3. **rank**: each feature counts once, by its observable amplitude, how much of it "
          "the station's cadence, Fresnel scale and the star's diameter resolve, the signal "
          "to noise of its own signal through the ring's opacity (with the planet's and the "
          "rings' light in the aperture), and whether the planet is observable then "
          "(altitude, Sun); a second crossing at another ring longitude adds by how far apart "
          "it samples the feature. Events whose observability is unknown rank after the "
          "observable ones, by their potential score.",
          "4. **evaluate** the top events in full: chord tables, figures, cautions.", "",
          "## Stations", ""]
    md.append(_md_table(campaign["sites"], [("name", "station"), ("lat_deg", "lat"),
                                            ("lon_deg", "lon"), ("height_m", "height m"),
                                            ("telescope", "telescope")]))
    html_parts = [f"<h1>{html.escape(campaign['name'])}</h1>",
                  f"<p>Season {html.escape(campaign['start_utc'])} to "
                  f"{html.escape(campaign['end_utc'])}; {campaign['stars']} catalog stars.</p>",
                  "<h2>Stations</h2>",
                  _html_table(campaign["sites"], [("name", "station"), ("lat_deg", "lat"),
                                                  ("lon_deg", "lon"), ("height_m", "height m"),
                                                  ("telescope", "telescope")])]
    for b in bodies:
        cols = RANK_COLUMNS + list(b.get("factor_columns", []))
        md += ["", f"## {b['body']}", "",
               f"{b['candidates']} candidate events from the stations; the best "
               f"{len(b['ranked'])}:", "", _md_table(b["ranked"], cols), ""]
        html_parts += [f"<h2>{html.escape(b['body'])}</h2>",
                       f"<p>{b['candidates']} candidate events; the best {len(b['ranked'])}:</p>",
                       _html_table(b["ranked"], cols)]
        if b.get("why_first"):
            md += ["**Why the top event ranks first.** " + b["why_first"], ""]
            html_parts.append(f"<p><b>Why the top event ranks first.</b> {html.escape(b['why_first'])}</p>")
        net = b.get("network")
        if net:
            cols_net = [("choice", "#"), ("station", "station"), ("marginal_gain", "adds"),
                        ("combined_score", "network score"), ("own_score", "own score"),
                        ("features_resolvable", "features resolved"),
                        ("deciding_features", "its deciding features")]
            md += [f"### {b['body']}: the network for the best event", "", net["text"], "",
                   _md_table(net["table"], cols_net), "", f"![network coverage]({net['figure']})", ""]
            if net.get("where_figure"):
                md += [f"![where on Earth]({net['where_figure']})", ""]
                html_parts.append(_img(out, net["where_figure"], "where on Earth"))
            html_parts += [f"<h3>{html.escape(b['body'])}: the network for the best event</h3>",
                           f"<p>{html.escape(net['text'])}</p>", _html_table(net["table"], cols_net),
                           _img(out, net["figure"], "network coverage")]
        if b.get("season_chart"):
            md += [f"![season chart]({b['season_chart']})", ""]
            html_parts.append(_img(out, b["season_chart"], "season chart"))
        for ev in b.get("events", []):
            md += [f"### {ev['title']}", "", "```", ev["summary"].rstrip(), "```", ""]
            html_parts += [f"<h3>{html.escape(ev['title'])}</h3>",
                           f"<pre>{html.escape(ev['summary'])}</pre>"]
            if ev.get("figure"):
                md += [f"![{ev['title']}]({ev['figure']})", ""]
                html_parts.append(_img(out, ev["figure"], ev["title"]))
            links = [(k, ev[k]) for k in ("chord_table", "json") if ev.get(k)]
            if links:
                md.append("Files: " + ", ".join(f"[{k}]({p})" for k, p in links))
                html_parts.append("<p>Files: " + ", ".join(
                    f'<a href="{html.escape(p)}">{html.escape(k)}</a>' for k, p in links) + "</p>")
    for note in campaign.get("notes", []):
        md += ["", f"> {note}"]
        html_parts.append(f"<p><i>{html.escape(note)}</i></p>")
    md += ["", "## Safety", "", SAFETY, ""]
    html_parts += ["<h2>Safety</h2>", f"<p>{html.escape(SAFETY)}</p>"]
    md_path, html_path = out / "report.md", out / "report.html"
    md_path.write_text("\n".join(md) + "\n", encoding="utf-8")
    style = ("body{font-family:sans-serif;max-width:1100px;margin:2em auto;padding:0 1em}"
             "table{border-collapse:collapse;font-size:90%}td,th{border:1px solid #bbb;"
             "padding:2px 6px;text-align:right}pre{background:#f6f6f6;padding:8px;"
             "overflow-x:auto;font-size:80%}img{max-width:100%;height:auto}"
             ".scroll{overflow-x:auto;-webkit-overflow-scrolling:touch}"
             "@media (max-width:600px){body{margin:0.5em auto}table{font-size:80%}}")
    html_path.write_text(
        "<!DOCTYPE html><html><head><meta charset='utf-8'>"
        "<meta name='viewport' content='width=device-width, initial-scale=1'><title>"
        f"{html.escape(campaign['name'])}</title><style>{style}</style></head><body>"
        # wide tables scroll sideways in their own box on a phone
        + "\n".join(html_parts).replace("<table", "<div class='scroll'><table")
        .replace("</table>", "</table></div>") + "</body></html>\n", encoding="utf-8")
    return md_path, html_path


EMBED_MAX_WIDTH_PX = 1000  # enough for a laptop screen; the link opens the full figure
EMBED_COLOURS = 256


def embedded_png(path: Path) -> bytes:
    """A figure made small enough to embed: at most EMBED_MAX_WIDTH_PX wide and reduced to an
    adaptive 256-colour palette (line plots need no more), as PNG.  The full-resolution file
    stays next to the report."""
    import io

    from PIL import Image

    with Image.open(path) as im:
        im = im.convert("RGB")
        if im.width > EMBED_MAX_WIDTH_PX:
            height = round(im.height * EMBED_MAX_WIDTH_PX / im.width)
            im = im.resize((EMBED_MAX_WIDTH_PX, height), Image.Resampling.LANCZOS)
        buf = io.BytesIO()
        # the fast octree palette: line plots and flat colour fills quantize well with it
        im.quantize(colors=EMBED_COLOURS, method=Image.Quantize.FASTOCTREE).save(buf, format="PNG")
        return buf.getvalue()


def _img(out: Path, rel: str, alt: str) -> str:
    data = base64.b64encode(embedded_png(out / rel)).decode("ascii")
    return (f'<p><a href="{html.escape(rel)}"><img alt="{html.escape(alt)}" '
            f'src="data:image/png;base64,{data}"></a></p>')
