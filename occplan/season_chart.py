"""Season chart: candidate events along the window, their scores, and the rings' opening angle.

``season_chart(rows, ax=None, aspect=None)`` takes find/rank rows (dicts with
``closest_approach_utc``, ``score``, ``site``) and, optionally, the opening angle over the
window (``(times_utc, opening_angle_deg)``, e.g. from :func:`occplan.chords.aspect`); it
returns the Axes and never calls ``plt.show()``.
"""

from __future__ import annotations

from datetime import datetime

import numpy as np


def _date(text: str) -> datetime:
    return datetime.fromisoformat(str(text).replace("Z", "+00:00"))


def season_chart(rows: list[dict], ax=None, aspect=None, title: str | None = None,
                 label_top: int = 5):
    """Scores of events against time (one marker colour per site) and B on a second axis.

    Parameters
    ----------
    rows : list of dict
        find or rank rows.
    aspect : (list of str, array) or None
        UTC times and opening angle B (deg) over the window.
    label_top : int
        Annotate the star ids of this many best-scoring events.

    Returns
    -------
    matplotlib.axes.Axes
    """

    if ax is None:
        ax = _figure().add_subplot()
    sites = sorted({r["site"] for r in rows})
    # colour-blind-safe colours (matplotlib's tableau-colorblind10) and a marker shape per site
    palette = ("#006BA4", "#FF800E", "#595959", "#5F9ED1", "#C85200", "#898989", "#A2C8EC",
               "#FFBC79", "#ABABAB", "#CFCFCF")
    shapes = ("o", "^", "D", "v", "P", "X", "<", ">", "h", "*")

    def cmap(i):  # the site's colour
        return palette[i % len(palette)]

    for i, site in enumerate(sites):
        shape = shapes[i % len(shapes)]
        sel = [r for r in rows if r["site"] == site]
        x = [_date(r["closest_approach_utc"]) for r in sel]
        unknown = np.array([r.get("observability") == "unknown" for r in sel], dtype=bool)
        y = [(r.get("potential_score") if r.get("observability") == "unknown" else r.get("score"))
             or 0.0 for r in sel]
        size = np.array([20 + 6 * (r.get("features_resolvable") or 0) for r in sel])
        x, y = np.array(x, dtype=object), np.array(y, dtype=float)
        zero = (y == 0) & ~unknown
        known = ~zero & ~unknown
        ax.scatter(x[known], y[known], s=size[known], color=cmap(i), marker=shape, label=site,
                   alpha=0.85, edgecolor="k", linewidth=0.4, zorder=3)
        # score 0: nothing usable (daylight, planet too low or hidden): hollow markers
        ax.scatter(x[zero], y[zero], s=size[zero], marker=shape, facecolor="none",
                   edgecolor=cmap(i), linewidth=1.0, zorder=3)
        # observability not evaluated (geocentre, spacecraft): the potential score, squares
        ax.scatter(x[unknown], y[unknown], s=size[unknown], marker=shape, facecolor="none",
                   edgecolor=cmap(i), linewidth=1.0, linestyle="--", zorder=3,
                   label=site if not np.any(known) else None)
    best = sorted(rows, key=lambda r: -(r.get("score") or 0.0))[:max(label_top, 0)]
    placed = []  # label boxes in display pixels: a label that would overlap one is moved up
    ax.figure.canvas.draw()
    for k, r in enumerate(best):
        sid = str(r["star_id"])
        short = sid if len(sid) <= 8 else "\u2026" + sid[-6:]
        xy = (_date(r["closest_approach_utc"]), r.get("score") or 0.0)
        dy = 3
        for _ in range(12):
            text = ax.annotate(f"#{k + 1} {short}", xy, textcoords="offset points",
                               xytext=(5, dy), fontsize=7,
                               arrowprops={"arrowstyle": "-", "lw": 0.4, "color": "0.5"} if dy > 3 else None)
            box = text.get_window_extent(renderer=ax.figure.canvas.get_renderer())
            if not any(box.overlaps(b) for b in placed):
                break
            text.remove()
            dy += 9
        placed.append(box)
    ax.set_xlabel("closest approach (UTC)")
    ax.set_ylabel("score (resolved-feature equivalents)")
    top = max([r.get("score") or 0.0 for r in rows] + [r.get("potential_score") or 0.0 for r in rows]
              + [1.0])
    ax.set_ylim(0, 1.15 * top)
    ax.grid(alpha=0.3)
    if any(not (r.get("score") or 0.0) and r.get("observability") != "unknown" for r in rows):
        ax.scatter([], [], s=40, facecolor="none", edgecolor="0.3", label="score 0 (not observable)")
    if any(r.get("observability") == "unknown" for r in rows):
        ax.scatter([], [], s=40, facecolor="none", edgecolor="0.3", linestyle="--",
                   label="observability unknown: potential score (dashed)")
    handles, labels = ax.get_legend_handles_labels()
    if aspect is not None:
        times, b_deg = aspect
        ax2 = ax.twinx()
        ax2.plot([_date(t) for t in times], np.asarray(b_deg, dtype=float), color="0.4", lw=1.2,
                 ls="--", label="opening angle B")
        ax2.axhline(0.0, color="0.6", lw=0.6)
        ax2.set_ylabel("opening angle B (deg)")
        h2, l2 = ax2.get_legend_handles_labels()
        handles, labels = handles + h2, labels + l2
    if handles:
        ax.legend(handles, labels, loc="upper center", bbox_to_anchor=(0.5, -0.32),
                  ncol=len(labels), fontsize=8, frameon=False,
                  title="site (marker size: features resolved); labels: rank and star id", title_fontsize=8)
    ax.set_title(title or "Candidate ring occultations over the season")
    ax.figure.autofmt_xdate()
    return ax


def _figure():
    """A figure on an Agg canvas of its own (no pyplot, no global state)."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=(10, 4.5))
    FigureCanvasAgg(fig)
    return fig


def season_aspect(body, window, kernels=None, points: int = 200):
    """(times_utc, B_deg) over the window from the geocentre, for :func:`season_chart`."""
    from .chords import aspect
    from .ephemeris import window_tdb_s
    from .ephemeris import Observer

    t0, t1 = window_tdb_s(window)
    rows, _ = aspect(body, Observer.geocentre(), (t0, t1), step_s=max((t1 - t0) / points, 60.0),
                     kernels=kernels)
    return [r["time_utc"] for r in rows], [r["opening_angle_deg"] for r in rows]


CHART_SUFFIXES = (".png", ".pdf", ".svg")


def check_chart_path(path, overwrite=False) -> None:
    """Refuse a chart file name before any work: an image type matplotlib writes, and a
    path :func:`occplan.tables.check_out` accepts."""
    from pathlib import Path

    from .errors import InputError
    from .tables import check_out

    if Path(path).suffix.lower() not in CHART_SUFFIXES:
        raise InputError(f"--chart {path}: give a .png, .pdf or .svg file name")
    check_out(path, overwrite)


def write_season_chart(path, rows: list[dict], body, window, kernels=None, overwrite=False,
                       title: str | None = None) -> None:
    """Draw the season chart into an image file (atomic write; refuses to overwrite)."""
    from pathlib import Path

    p = Path(path)
    check_chart_path(p, overwrite)
    fig = _figure()
    season_chart(rows, ax=fig.add_subplot(), aspect=season_aspect(body, window, kernels), title=title)
    from .tables import atomic_write

    atomic_write(p, lambda fh: fig.savefig(fh, format=p.suffix[1:].lower(), dpi=120,
                                           bbox_inches="tight"), overwrite)
