"""Figures of one candidate event: sky-plane view, ring radius versus time, feature coverage.

Each plot function takes an :class:`occplan.events.EventReport` and ``ax=None`` and returns
the Axes it drew on; without ``ax`` it makes its own :class:`matplotlib.figure.Figure`
(no pyplot: the library never opens a window, never calls ``plt.show()`` and never changes
the user's backend; files are rendered by the Agg and PDF canvases).

Conventions drawn (docs/design.md sec. 3): the sky plane at the planet has f east and g north in
km from the planet centre and is shown as on the sky, north up and **east to the left**.
The rings are the body file's regions as ellipses r x r |sin B*| (``occplan.coverage``); the
half of each ring behind the planet's sky plane is hidden where it lies on the disk and the
near half is drawn over the disk.  Times are labelled in UTC; inside they stay TDB seconds.

Feature colours (:func:`zone_status`): green when the cadence, the Fresnel scale, the star's
diameter and the feature's own signal to noise resolve it; orange when one of them does not;
grey when the planet hides the star there or the site cannot observe it then.
"""

from __future__ import annotations

import itertools
import math
import re
from datetime import datetime, timedelta
from pathlib import Path

import matplotlib.dates as mdates
import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch, Rectangle
from matplotlib.ticker import FuncFormatter
from shapely.geometry import MultiPolygon
from shapely.plotting import patch_from_polygon

from .coverage import SkyScene, far_side, sides
from .ephemeris import time_from_tdb_s, utc_iso
from .errors import InputError, OutputExistsError

# Okabe & Ito (2008) colour-blind-safe palette: blue, sky blue, orange, grey
STATUS_COLOURS = {"resolvable": "#0072b2", "located": "#56b4e9", "unresolved": "#e69f00",
                  "hidden": "#a3a3a3"}
# distinct colours for narrow rings (matplotlib's tableau-colorblind10)
NARROW_RING_COLOURS = ("#006BA4", "#FF800E", "#ABABAB", "#595959", "#5F9ED1", "#C85200",
                       "#898989", "#A2C8EC", "#FFBC79", "#CFCFCF")
STATUS_LABELS = {"resolvable": "resolvable",
                 "located": "located, profile not resolved",
                 "unresolved": "not resolvable (resolution or SNR)",
                 "hidden": "hidden by the planet or not observable"}
DISK_COLOUR, LIMB_COLOUR = "#ead9ae", "#7d6a3c"
HIDDEN_COLOUR = "#c9c9c9"
FORMATS = ("png", "pdf")
PANELS = ("all", "sky", "radius", "coverage")
TICK_MINUTES = (1, 2, 5, 10, 15, 20, 30, 60, 120)
DEFAULT_MAX_LABELS = 10
DEFAULT_MAX_ZONES = 24
Z_FAR, Z_DISK, Z_NEAR, Z_CHORD = 1.0, 2.0, 3.0, 4.0  # drawing order in the sky view
KM = FuncFormatter(lambda v, _pos: f"{v / 1e3:g}")  # axis ticks in 10^3 km


# --------------------------------------------------------------------------- helpers


def _utc(tdb_s) -> datetime:
    """UTC datetime of one time (TDB s past J2000), through the ephemeris module."""
    text = utc_iso(time_from_tdb_s(float(tdb_s)), places=3)
    return datetime.fromisoformat(text.replace("Z", "+00:00"))


def _to_dates(report, tdb_s):
    """Matplotlib date numbers (UTC) for TDB seconds.

    One UTC reference per event and a linear offset: TDB - UTC varies by under 2 ms over a
    day (periodic terms) and leap seconds are not scheduled, far below a plotted pixel.
    """
    t_ref = float(report.track.tdb_s[0])
    ref = mdates.date2num(_utc(t_ref))
    return ref + (np.asarray(tdb_s, dtype=float) - t_ref) / 86400.0


def _hhmm(tdb_s) -> str:
    return _utc(tdb_s).strftime("%H:%M")


def _new_figure(figsize) -> Figure:
    """A figure on an Agg canvas of its own (no pyplot, no global state)."""
    fig = Figure(figsize=figsize, layout="constrained")
    FigureCanvasAgg(fig)
    return fig


def _new_axes(figsize):
    return _new_figure(figsize).add_subplot()


def feature_rank_key(feat):
    """Edges and narrow rings first, then by weight (observable amplitude), then torque."""
    return (feat.feature not in ("edge", "narrow ring"), -feat.weight, -feat.torque_dyn_cm,
            feat.resonance_radius_km)


def zone_name(feat) -> str:
    """The feature's unique name ('Janus/Epimetheus 6:5 density wave', 'epsilon ring')."""
    return feat.name


def zone_status(zone) -> str:
    """'hidden' (planet hides the star or the site cannot observe), 'resolvable', 'located'
    (an edge or narrow ring whose radius the chord locates without resolving its profile:
    the ranking's location credit) or 'unresolved'."""
    if zone.behind_planet or zone.usable is False:
        return "hidden"
    if zone.resolvable:
        return "resolvable"
    if (zone.feature.feature in ("edge", "narrow ring") and not zone.partial
            and np.isfinite(getattr(zone, "location_sigma_km", float("nan")))):
        return "located"
    return "unresolved"


def _ranked_resonances(report, limit: int | None, per_satellite: float = 1.0):
    """Scored features crossed by the chord: edges and narrow rings first, then by weight.

    ``per_satellite`` caps the share of one satellite in the first ``limit`` (a close series
    such as Prometheus' outer-A-ring waves would otherwise crowd out every other satellite);
    the cap is lifted when too few others are crossed.
    """
    seen = {}
    for z in report.zones:
        if z.feature.weight > 0:
            seen.setdefault(id(z.feature), z.feature)
    ranked = sorted(seen.values(), key=feature_rank_key)
    if limit is None:
        return ranked
    limit = max(int(limit), 0)
    cap = max(1, math.ceil(per_satellite * limit))
    chosen, rest, count = [], [], {}
    for res in ranked:
        if count.get(res.satellite, 0) < cap:
            chosen.append(res)
            count[res.satellite] = count.get(res.satellite, 0) + 1
        else:
            rest.append(res)
    return (chosen + rest)[:limit]


def _zone_time(zone) -> float:
    return zone.time_s if np.isfinite(zone.time_s) else 0.5 * (zone.start_s + zone.end_s)


def _region_colours(body) -> dict:
    """A slate-blue shade per broad ring region, darker for larger typical optical depth; a
    distinct colour-blind-safe colour per narrow ring."""
    from matplotlib import colormaps

    cmap = colormaps["Blues"]
    out = {}
    narrow = 0
    for reg in body.rings:
        lo, hi = getattr(reg, "edge_a_km", (reg.inner_km, reg.outer_km))
        if hi - lo < 200.0:  # a narrow ring: its own colour, so neighbours stay apart
            out[reg.name] = NARROW_RING_COLOURS[narrow % len(NARROW_RING_COLOURS)]
            narrow += 1
            continue
        tau = reg.optical_depth if np.isfinite(reg.optical_depth) and reg.optical_depth > 0 else 1e-3
        level = float(np.clip((math.log10(tau) + 3.0) / 3.5, 0.0, 1.0))  # tau 1e-3 .. 3
        out[reg.name] = cmap(0.22 + 0.6 * level)
    return out


def _crossing_window(report):
    """The part of the window to show: where the chord is within 1.15 outer ring radii."""
    tr = report.track
    t = tr.tdb_s
    near = tr.ring_radius_km <= 1.15 * tr.body.outer_ring_km
    if not np.any(near):
        return float(t[0]), float(t[-1])
    a, b = float(t[near][0]), float(t[near][-1])
    pad = 0.06 * (b - a) + 60.0
    return max(float(t[0]), a - pad), min(float(t[-1]), b + pad)


def _hidden_mask(report, t):
    mask = np.zeros(np.shape(t), dtype=bool)
    for a, b in report.hidden:
        mask |= (t >= a) & (t <= b)
    return mask


def _segments(t, mask):
    """Index slices of runs of equal mask values, extended by one sample so runs touch."""
    if len(t) == 0:
        return []
    edges = np.flatnonzero(np.diff(mask.astype(int))) + 1
    bounds = np.r_[0, edges, len(t)]
    return [(int(i0), int(min(i1 + 1, len(t))), bool(mask[i0]))
            for i0, i1 in itertools.pairwise(bounds)]


def _add_polygon(ax, geom, gid, **style):
    """Draw a shapely (Multi)Polygon as one PathPatch; returns it (None when empty)."""
    if geom.is_empty:
        return None
    if geom.geom_type == "GeometryCollection":
        geom = MultiPolygon([g for g in geom.geoms if g.geom_type == "Polygon"])
    patch = patch_from_polygon(geom, **style)
    patch.set_gid(gid)
    ax.add_artist(patch)  # the view limits are set explicitly: no autoscale per vertex
    return patch


def _tick_step_minutes(span_s: float) -> int:
    """A round tick interval giving 4 to 10 ticks over the span."""
    for step in TICK_MINUTES:
        if span_s / (60.0 * step) <= 10:
            return step
    return TICK_MINUTES[-1]


def _round_ticks(t0: float, t1: float, step_min: int) -> np.ndarray:
    """TDB seconds of whole UTC multiples of step_min minutes in [t0, t1]."""
    start = _utc(t0)
    base = start.replace(second=0, microsecond=0, minute=0)
    first = base + timedelta(minutes=step_min * math.ceil(
        (start - base).total_seconds() / (60.0 * step_min)))
    offset = (first - start).total_seconds()
    return t0 + offset + 60.0 * step_min * np.arange(0, int((t1 - t0 - offset) // (60 * step_min)) + 1)


def _observer_label(observer) -> str:
    """'site 30.00° S, 45.00° E' for an unnamed site, else the observer's name."""
    if observer.kind == "site":
        auto = f"{observer.lat_deg:.4f},{observer.lon_deg:.4f}"
        place = (f"{abs(observer.lat_deg):.2f}° {'N' if observer.lat_deg >= 0 else 'S'}, "
                 f"{abs(observer.lon_deg):.2f}° {'E' if observer.lon_deg >= 0 else 'W'}")
        return f"site {place}" if observer.name in ("", auto) else f"{observer.name} ({place})"
    if observer.kind == "geocentre":
        return "the geocentre"
    return observer.name


def _star_label(star) -> str:
    """The star's name, or its ICRS position in sexagesimal when it has none (or the name is
    just the numbers typed on the command line)."""
    if star.name and re.search(r"[A-Za-z]", star.name):
        return star.name
    ra_h = (star.ra_deg / 15.0) % 24.0
    h, m = int(ra_h), int((ra_h * 60) % 60)
    sec = (ra_h * 3600) % 60
    d = abs(star.dec_deg)
    dd, dm = int(d), int((d * 60) % 60)
    ds = (d * 3600) % 60
    sign = "+" if star.dec_deg >= 0 else "-"
    return f"{h:02d}h{m:02d}m{sec:05.2f}s {sign}{dd:02d}°{dm:02d}'{ds:04.1f}\""


def _event_title(report) -> str:
    tr = report.track
    return (f"{tr.body.name} ring occultation of star {_star_label(tr.star)} from "
            f"{_observer_label(tr.observer)}, {_utc(tr.closest_approach_s):%Y-%m-%d}")


# --------------------------------------------------------------------------- sky view


def sky_view(report, ax=None, tick_minutes: int | None = None):
    """The sky plane seen by the observer: rings, planet, the star's path with UTC ticks.

    Parameters
    ----------
    report : occplan.events.EventReport
    ax : matplotlib Axes, optional
    tick_minutes : int, optional
        Interval of the time ticks on the chord (default: 4 to 10 ticks in view).

    Returns
    -------
    matplotlib.axes.Axes
        f (east, km) to the left, g (north, km) up, equal aspect.  Patches carry gids
        ``planet-disk``, ``ring-far:<region>`` (drawn below the disk, with the part on the
        disk removed) and ``ring-near:<region>`` (drawn over the disk).

    Notes
    -----
    A ring point at sky offset v along the projected pole lies at depth -v cot B* along the
    line of sight (``occplan.coverage.far_side``): the half with v sign(B*) < 0 is behind the
    planet's sky plane, hidden where it falls on the disk.
    """
    ax = ax or _new_axes((10, 5.2))
    tr = report.track
    meta = tr.meta
    body = tr.body
    scene = SkyScene.for_track(tr)
    bstar, pole = meta["star_elevation_deg"], meta["pole_position_angle_deg"]
    colours = _region_colours(body)
    ax.set_facecolor("white")
    for reg in body.rings:
        poly = scene.rings[reg.name]
        far = far_side(poly, bstar, pole, body.outer_ring_km)
        near = poly.difference(far)
        style = {"facecolor": colours[reg.name], "edgecolor": "none", "linewidth": 0}
        _add_polygon(ax, far.difference(scene.disk), f"ring-far:{reg.name}", zorder=Z_FAR, **style)
        _add_polygon(ax, near, f"ring-near:{reg.name}", zorder=Z_NEAR, label=reg.name, **style)
    _add_polygon(ax, scene.disk, "planet-disk", facecolor=DISK_COLOUR, edgecolor=LIMB_COLOUR,
                 linewidth=1.0, zorder=Z_DISK, label=f"{body.name} (1-bar limb)")

    # view: the ring system and planet with a margin
    f0, g0, f1, g1 = scene.disk.union(scene.rings[body.rings[-1].name]).bounds
    span_f, span_g = f1 - f0, g1 - g0
    xlim = (f1 + 0.08 * span_f, f0 - 0.08 * span_f)  # east (positive f) on the left
    ylim = (g0 - 0.3 * span_g - 0.05 * span_f, g1 + 0.3 * span_g + 0.05 * span_f)

    # chord, dashed where the planet hides the star
    t = tr.tdb_s
    hid = _hidden_mask(report, t)
    first = {True: True, False: True}
    for i0, i1, hidden in _segments(t, hid):
        label = None
        if first[hidden]:
            label = "star path, hidden by the planet" if hidden else "star path"
            first[hidden] = False
        ax.plot(tr.sky_f_km[i0:i1], tr.sky_g_km[i0:i1], color="black" if not hidden else "#444444",
                linestyle="--" if hidden else "-", linewidth=1.3, zorder=Z_CHORD, label=label,
                gid="chord-hidden" if hidden else "chord")
    in_view = ((tr.sky_f_km <= xlim[0]) & (tr.sky_f_km >= xlim[1])
               & (tr.sky_g_km >= ylim[0]) & (tr.sky_g_km <= ylim[1]))
    if np.any(in_view):
        _chord_ticks(ax, report, t[in_view][0], t[in_view][-1], tick_minutes,
                     width=abs(xlim[1] - xlim[0]))
    _contacts(ax, report)

    ax.set_xlim(*xlim)
    ax.set_ylim(*ylim)
    ax.set_aspect("equal", adjustable="box")
    ax.xaxis.set_major_formatter(KM)
    ax.yaxis.set_major_formatter(KM)
    ax.set_xlabel("f, offset east of the planet centre (10$^3$ km)   [east is to the left]")
    ax.set_ylabel("g, offset north (10$^3$ km)")
    ax.set_title(f"Sky plane from {_observer_label(tr.observer)}\nB = {meta['opening_angle_deg']:+.2f}°, "
                 f"B* = {meta['star_elevation_deg']:+.2f}°, P = {meta['pole_position_angle_deg']:.2f}°, "
                 f"distance {meta['distance_km'] / 149597870.7:.3f} AU", fontsize=10)
    _compass(ax)
    if abs(xlim[1] - xlim[0]) < 1.6 * abs(ylim[1] - ylim[0]):
        # a nearly round ring system (seen pole-on) leaves room beside the axes, not inside
        ax.legend(loc="upper left", bbox_to_anchor=(1.03, 1.0), fontsize=7, ncol=1,
                  framealpha=0.9, borderaxespad=0.0)
    else:
        ax.legend(loc=_legend_corner(tr, xlim, ylim), fontsize=7, ncol=3, framealpha=0.9)
    return ax


def _legend_corner(tr, xlim, ylim) -> str:
    """The lower corner (or upper left) the chord crosses least: the compass holds the upper
    right."""
    fx = (tr.sky_f_km - xlim[0]) / (xlim[1] - xlim[0])  # 0 at the left edge (x is inverted)
    fy = (tr.sky_g_km - ylim[0]) / (ylim[1] - ylim[0])
    inside = (fx >= 0) & (fx <= 1) & (fy >= 0) & (fy <= 1)
    fx, fy = fx[inside], fy[inside]
    boxes = {"lower left": (fx < 0.6) & (fy < 0.35), "lower right": (fx > 0.4) & (fy < 0.35),
             "upper left": (fx < 0.6) & (fy > 0.65)}
    return min(boxes, key=lambda k: int(np.count_nonzero(boxes[k])))


def _chord_ticks(ax, report, t0, t1, tick_minutes, width=None):
    tr = report.track
    step = tick_minutes or _tick_step_minutes(t1 - t0)
    width = width or abs(np.diff(ax.get_xlim())[0]) or 1.0
    while True:
        ticks = _round_ticks(t0, t1, step)
        if ticks.size == 0:
            return
        f = np.interp(ticks, tr.tdb_s, tr.sky_f_km)
        g = np.interp(ticks, tr.tdb_s, tr.sky_g_km)
        gaps = np.hypot(np.diff(f), np.diff(g))
        # labels need about 9 % of the panel width each; coarsen the ticks until they fit
        if tick_minutes or gaps.size == 0 or gaps.min() >= 0.09 * width or step >= 720:
            break
        step = next(x for x in (1, 2, 5, 10, 15, 20, 30, 60, 120, 180, 360, 720) if x > step)
    df = np.gradient(tr.sky_f_km, tr.tdb_s)
    dg = np.gradient(tr.sky_g_km, tr.tdb_s)
    vf, vg = np.interp(ticks, tr.tdb_s, df), np.interp(ticks, tr.tdb_s, dg)
    # on screen east is to the left: screen direction of motion is (-vf, vg)
    sx, sy = -vf, vg
    norm = np.hypot(sx, sy)
    nx, ny = -sy / norm, sx / norm  # screen normal
    flip = np.where(ny < 0, -1.0, 1.0)  # labels above the path
    nx, ny = nx * flip, ny * flip
    ax.plot(f, g, linestyle="none", marker="|", markersize=7, color="black", zorder=Z_CHORD,
            label=f"UTC every {step} min", gid="time-ticks")
    for ti, fi, gi, ox, oy in zip(ticks, f, g, nx, ny):
        ax.annotate(_hhmm(ti), (fi, gi), xytext=(9 * ox, 9 * oy), textcoords="offset points",
                    fontsize=7, ha="center", va="center", zorder=Z_CHORD + 1,
                    bbox={"boxstyle": "round,pad=0.12", "fc": "white", "ec": "none", "alpha": 0.75})
    # direction of motion at the last tick
    i = ticks.size - 1
    ax.annotate("", xy=(f[i] + 0.02 * (f[i] - f[0]), g[i] + 0.02 * (g[i] - g[0])) if i else (f[i], g[i]),
                xytext=(f[i], g[i]), arrowprops={"arrowstyle": "-|>", "color": "black", "lw": 1.2},
                zorder=Z_CHORD)


def _contacts(ax, report):
    """Ring ingress/egress (outer ring edge) and the planet's limb contacts."""
    tr = report.track
    if tr.passes:
        tt = np.array([min(p.start_s for p in tr.passes), max(p.end_s for p in tr.passes)])
        ax.plot(np.interp(tt, tr.tdb_s, tr.sky_f_km), np.interp(tt, tr.tdb_s, tr.sky_g_km),
                linestyle="none", marker="o", mfc="white", mec="#1f3f8f", mew=1.5, markersize=6,
                zorder=Z_CHORD + 0.5, gid="ring-contacts",
                label=f"ring ingress {_hhmm(tt[0])} / egress {_hhmm(tt[1])} UTC")
    if report.hidden:
        tt = np.array([x for ab in report.hidden for x in ab])
        names = " & ".join(f"{_hhmm(a)}-{_hhmm(b)}" for a, b in report.hidden)
        ax.plot(np.interp(tt, tr.tdb_s, tr.sky_f_km), np.interp(tt, tr.tdb_s, tr.sky_g_km),
                linestyle="none", marker="D", mfc=LIMB_COLOUR, mec="black", markersize=5,
                zorder=Z_CHORD + 0.5, gid="limb-contacts", label=f"behind the planet {names} UTC")


def _compass(ax):
    """N and E arrows (north up, east left) in the upper right corner."""
    x0, y0, length = 0.955, 0.72, 0.16
    kw = {"xycoords": "axes fraction", "textcoords": "axes fraction", "zorder": 10,
              "arrowprops": {"arrowstyle": "-|>", "color": "black", "lw": 1.2}}
    ax.annotate("", xy=(x0, y0 + length), xytext=(x0, y0), **kw)
    ax.annotate("", xy=(x0 - length * _aspect_fix(ax), y0), xytext=(x0, y0), **kw)
    ax.text(x0, y0 + length + 0.03, "N", transform=ax.transAxes, ha="center", va="bottom",
            fontsize=9, fontweight="bold")
    ax.text(x0 - length * _aspect_fix(ax) - 0.015, y0, "E", transform=ax.transAxes, ha="right",
            va="center", fontsize=9, fontweight="bold")


def _aspect_fix(ax) -> float:
    """Axes-fraction length that looks as long horizontally as ``1`` does vertically."""
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    ratio = abs(y1 - y0) / abs(x1 - x0)  # equal aspect: box height / width in data
    return float(np.clip(ratio, 0.1, 1.0))


# --------------------------------------------------------------------------- radius vs time


def radius_time(report, ax=None, max_labels: int = DEFAULT_MAX_LABELS):
    """Ring radius versus UTC with ring regions, ring features and planet-hidden time.

    Parameters
    ----------
    report : occplan.events.EventReport
    ax : matplotlib Axes, optional
    max_labels : int
        How many features to name (edges and narrow rings first, then by weight, the
        observable amplitude); every scored feature crossed gets a marker coloured by
        :func:`zone_status`.

    Returns
    -------
    matplotlib.axes.Axes
    """
    ax = ax or _new_axes((9, 5.5))
    tr = report.track
    body = tr.body
    t0, t1 = _crossing_window(report)
    sel = (tr.tdb_s >= t0) & (tr.tdb_s <= t1)
    t = tr.tdb_s[sel]
    r = tr.ring_radius_km[sel]
    x = _to_dates(report, t)
    colours = _region_colours(body)
    for reg in body.rings:
        ax.axhspan(reg.inner_km, reg.outer_km, color=colours[reg.name], alpha=0.45, lw=0,
                   zorder=0, gid=f"region:{reg.name}")
    for i, (a, b) in enumerate(report.hidden):
        ax.axvspan(*_to_dates(report, [a, b]), color=HIDDEN_COLOUR, alpha=0.55, lw=0, zorder=0.5,
                   hatch="//", gid="planet-hidden", label="planet hides the star" if i == 0 else None)
    hid = _hidden_mask(report, t)
    for i0, i1, hidden in _segments(t, hid):
        ax.plot(x[i0:i1], r[i0:i1], color="black", lw=1.4, linestyle="--" if hidden else "-",
                zorder=3)
    _zone_marks(ax, report, max_labels)

    finite = r[np.isfinite(r)]  # nan where the ray meets the ring plane behind the observer
    top = max(1.1 * body.outer_ring_km, float(finite.max()) if finite.size else 0.0)
    # the bottom of a central chord is behind the planet: show it down to half the inner ring
    low = float(finite.min()) - 0.05 * body.outer_ring_km if finite.size else 0.0
    bottom = max(0.0, min(0.9 * body.inner_ring_km, max(low, 0.5 * body.inner_ring_km)))
    ax.set_ylim(bottom, min(top, 1.25 * body.outer_ring_km))
    # region names beside the axis, spread so that narrow rings' names do not overlap
    lo_y, hi_y = ax.get_ylim()
    regs = sorted((r for r in body.rings if lo_y <= 0.5 * (r.inner_km + r.outer_km) <= hi_y),
                  key=lambda r: r.inner_km)
    ys = _spread([0.5 * (r.inner_km + r.outer_km) for r in regs], ax, min_gap_fraction=0.03)
    for reg, y in zip(regs, ys):
        ax.text(1.005, y, reg.name, fontsize=7, va="center", transform=ax.get_yaxis_transform(),
                clip_on=False, gid=f"region-label:{reg.name}")
    if x.size:
        ax.set_xlim(x[0], x[-1])
    ax.yaxis.set_major_formatter(KM)
    ax.set_ylabel("ring radius (10$^3$ km)")
    ax.set_xlabel(f"time (UTC, {_utc(t0):%Y-%m-%d})")
    loc = mdates.AutoDateLocator(minticks=4, maxticks=9)
    ax.xaxis.set_major_locator(loc)
    ax.xaxis.set_major_formatter(mdates.DateFormatter("%H:%M"))
    ca = tr.closest_approach_radius_km
    ax.set_title(f"Ring radius along the chord (closest approach {ca:,.0f} km at "
                 f"{_hhmm(tr.closest_approach_s)} UTC)", fontsize=10)
    handles = [Line2D([], [], color="black", lw=1.4, label="visible star"),
               Line2D([], [], color="black", lw=1.4, ls="--", label="behind the planet")]
    if report.hidden:
        handles.append(Patch(facecolor=HIDDEN_COLOUR, hatch="//", label="planet hides the star"))
    handles += [Line2D([], [], color=c, marker="_", ls="none", markersize=10, mew=2.5,
                       label=f"feature: {STATUS_LABELS[k]}") for k, c in STATUS_COLOURS.items()]
    ax.legend(handles=handles, loc="upper center", bbox_to_anchor=(0.5, -0.13), fontsize=7,
              ncol=3, frameon=False)
    if not tr.passes:
        ax.text(0.5, 0.5, "no ring crossing in this window", transform=ax.transAxes,
                ha="center", fontsize=11)
    return ax


def _zone_marks(ax, report, max_labels):
    """Markers on every zone crossing; labels for the strongest, spread to avoid overlap."""
    ca = report.track.closest_approach_s
    by_res: dict = {}
    for z in report.zones:
        if z.feature.weight <= 0:
            continue  # corotation zones are listed in the tables, not drawn
        ax.plot(_to_dates(report, _zone_time(z)), z.feature.resonance_radius_km, marker="_",
                markersize=10, mew=2.5, ls="none", color=STATUS_COLOURS[zone_status(z)], zorder=4,
                gid=f"zone:{z.side}:{zone_name(z.feature)}")
        by_res.setdefault(id(z.feature), []).append(z)
    chosen = _ranked_resonances(report, max_labels, per_satellite=0.3)
    if not chosen:
        return
    chosen.sort(key=lambda res: res.resonance_radius_km)
    y = _spread([res.resonance_radius_km for res in chosen], ax, min_gap_fraction=0.045)
    # the label column sits where the chord turns (the middle of the V), or beside it
    x_label = _to_dates(report, ca)
    for res, yl in zip(chosen, y):
        zs = by_res[id(res)]
        for k, z in enumerate(zs):
            ax.annotate(zone_name(res), xy=(_to_dates(report, _zone_time(z)), res.resonance_radius_km),
                        xytext=(x_label, yl), fontsize=6.5, ha="center", va="center",
                        color="black" if k == 0 else "none", zorder=5,
                        arrowprops={"arrowstyle": "-", "lw": 0.45, "color": "#666666", "alpha": 0.8,
                                        "shrinkA": 1, "shrinkB": 2},
                        bbox={"boxstyle": "round,pad=0.15", "fc": "white", "ec": "none",
                                  "alpha": 0.8 if k == 0 else 0.0},
                        gid="zone-label" if k == 0 else "zone-leader")


def _spread(values, ax, min_gap_fraction: float):
    """Positions near ``values`` at least a fraction of the current y range apart."""
    lo, hi = ax.get_ylim()
    gap = min_gap_fraction * (hi - lo)
    y = np.array(values, dtype=float)
    for _ in range(50):
        moved = False
        for i in range(1, y.size):
            if y[i] - y[i - 1] < gap:
                mid = 0.5 * (y[i] + y[i - 1])
                y[i - 1], y[i] = mid - gap / 2 - 1e-9, mid + gap / 2 + 1e-9
                moved = True
        if not moved:
            break
    return y


# --------------------------------------------------------------------------- coverage chart


def coverage_chart(report, ax=None, max_zones: int = DEFAULT_MAX_ZONES):
    """Which ring features each crossing (ingress, egress) covers, and how well.

    Rows are the scored features the chord crosses (edges and narrow rings first, then by
    weight; at most ``max_zones``), ordered by radius with the outermost on top; columns the
    two radial profiles.  Each cell is coloured by :func:`zone_status` and gives the sampling
    interval the feature needs, dt_req = L / (N |dr/dt|), and the achievable radial
    resolution.

    Returns
    -------
    matplotlib.axes.Axes
    """
    chosen = _ranked_resonances(report, max_zones, per_satellite=0.5)
    ax = ax or _new_axes((6.5, 1.6 + 0.3 * max(len(chosen), 3)))
    tr = report.track
    side_names = [s for s, _, _ in sides(tr)] or ["ingress", "egress"]
    chosen.sort(key=lambda res: res.resonance_radius_km)
    cell = {(id(z.feature), z.side): z for z in report.zones}
    for row, res in enumerate(chosen):
        for col, side in enumerate(side_names):
            z = cell.get((id(res), side))
            if z is None:
                ax.add_patch(Rectangle((col + 0.04, row + 0.08), 0.92, 0.84, facecolor="white",
                                       edgecolor="#bbbbbb", hatch="xx", lw=0.5,
                                       gid=f"cell:{side}:none"))
                ax.text(col + 0.5, row + 0.5, "not crossed", ha="center", va="center",
                        fontsize=6, color="#777777")
                continue
            status = zone_status(z)
            ax.add_patch(Rectangle((col + 0.04, row + 0.08), 0.92, 0.84, lw=0.6, edgecolor="white",
                                   facecolor=STATUS_COLOURS[status], gid=f"cell:{side}:{status}"))
            ax.text(col + 0.5, row + 0.5, _cell_text(z, status), ha="center", va="center",
                    fontsize=6, color="black" if status != "resolvable" else "white")
    n = len(chosen)
    ax.set_xlim(0, len(side_names))
    ax.set_ylim(0, max(n, 1))
    ax.set_xticks(np.arange(len(side_names)) + 0.5)
    ax.set_xticklabels([_side_label(report, s) for s in side_names], fontsize=8)
    ax.xaxis.tick_top()
    ax.set_yticks(np.arange(n) + 0.5)
    ax.set_yticklabels([f"{zone_name(res)}  {res.resonance_radius_km:,.0f} km" for res in chosen],
                       fontsize=7)
    ax.tick_params(length=0)
    for spine in ax.spines.values():
        spine.set_visible(False)
    ax.set_ylabel("feature and its radius (km)", fontsize=8)
    total = len({id(z.feature) for z in report.zones if z.feature.weight > 0})
    shown = f"{n} of {total} features crossed" if total > n else f"{total} features crossed"
    res = report.resolution
    tel = report.telescope
    sd = res.get("stellar_diameter_km")
    ax.set_title(f"Feature coverage per crossing ({shown})", fontsize=10, pad=22)
    ax.set_xlabel(f"cell: required sampling interval dt_req and achievable resolution; camera "
                  f"{tel.cadence_s:g} s, {res['band']} band, Fresnel {res['fresnel_km']:.2f} km, "
                  + (f"star {sd:.2f} km" if sd is not None else "star diameter not evaluated"),
                  fontsize=7, wrap=True)
    handles = [Patch(facecolor=c, label=STATUS_LABELS[k]) for k, c in STATUS_COLOURS.items()]
    handles.append(Patch(facecolor="white", edgecolor="#bbbbbb", hatch="xx",
                         label="not crossed on this side"))
    ax.legend(handles=handles, loc="upper center", bbox_to_anchor=(0.5, -0.06 if n else 0.5),
              fontsize=7, ncol=2, frameon=False)
    if not n:
        ax.text(0.5, 0.6, "the chord crosses no ring feature", transform=ax.transAxes,
                ha="center", fontsize=9)
    return ax


def _side_label(report, side):
    zs = [z for z in report.zones if z.side == side]
    if not zs:
        return side
    a, b = min(z.start_s for z in zs), max(z.end_s for z in zs)
    lo, hi = sorted((a, b))
    return f"{side}\n{_hhmm(lo)}-{_hhmm(hi)} UTC"


def _cell_text(z, status) -> str:
    if z.behind_planet:
        return "behind the planet"
    dt = z.required_interval_s
    txt = f"dt ≤ {dt:.2g} s, res {z.achievable_resolution_km:.1f} km"
    if z.usable is False:
        return "not observable\n" + txt
    if status == "located":
        return f"{txt}\nradius to {z.location_sigma_km:.2g} km"
    if status == "unresolved" and z.reasons:
        why = z.reasons[0]
        if why.startswith("achievable"):
            why = "limited by " + why.split("limited by the ")[-1]
        elif why.startswith("feature SNR") or why.startswith("SNR"):
            why = why.split(" < ")[0].replace("feature SNR per resolution element", "feature SNR")
        elif why.startswith("only part of the zone"):
            why = "zone partly crossed"  # the cell holds about 25 characters a line
        return f"{txt}\n{why}"
    return txt


# --------------------------------------------------------------------------- figure, files


def event_figure(report, max_labels: int = DEFAULT_MAX_LABELS, max_zones: int = DEFAULT_MAX_ZONES):
    """The three panels on one landscape page (A4-sized) for an observing proposal.

    Left: sky view (top) and radius versus time (bottom); right: zone coverage.
    """
    fig = _new_figure((13.5, 9.0))
    fig.get_layout_engine().set(rect=(0.0, 0.02, 1.0, 0.98))  # room for the footer line
    grid = fig.add_gridspec(2, 2, width_ratios=[2.1, 1.0], height_ratios=[1.0, 1.15])
    sky = fig.add_subplot(grid[0, 0])
    rad = fig.add_subplot(grid[1, 0])
    cov = fig.add_subplot(grid[:, 1])
    sky_view(report, ax=sky)
    radius_time(report, ax=rad, max_labels=max_labels)
    coverage_chart(report, ax=cov, max_zones=max_zones)
    fig.suptitle(_event_title(report), fontsize=12, fontweight="bold")
    meta = report.track.meta
    corr = meta.get("corrections", {})
    fig.text(0.005, 0.002,
             f"occplan {meta.get('occplan_version', '')}; ephemeris "
             f"{', '.join(Path(k).name for k in meta.get('kernels', []))}; planet centre: "
             f"{corr.get('planet_centre', '?')}; light deflection by the planet "
             f"{'on' if corr.get('planet_deflection') else 'off'}; times UTC. "
             "Site rules and the observatory's safety practice come first.",
             fontsize=6, color="#555555", ha="left", va="bottom")
    return fig


def _single(report, panel):
    if panel == "sky":
        ax = sky_view(report)
    elif panel == "radius":
        ax = radius_time(report)
    else:
        ax = coverage_chart(report)
    return ax.figure


def _targets(out, fmt, panel, individual):
    """[(path, panel), ...] to write, and the format."""
    if panel not in PANELS:
        raise InputError(f"unknown panel {panel!r}; choose one of {', '.join(PANELS)}")
    path = Path(out)
    folder = path.is_dir() or path.suffix == ""
    if folder:
        fmt = (fmt or "png").lower()
        stem, parent = "event", path
    else:
        suffix = path.suffix.lower().lstrip(".")
        if suffix not in FORMATS:
            raise InputError(f"cannot write a figure to {str(path)!r}: use a .png or .pdf file name")
        if fmt is not None and fmt.lower() != suffix:
            raise InputError(f"format {fmt!r} does not match the file name {path.name!r}")
        fmt, stem, parent = suffix, path.stem, path.parent
    if fmt not in FORMATS:
        raise InputError(f"unknown figure format {fmt!r}; choose png or pdf")
    if folder:
        main = parent / (stem + ("" if panel == "all" else f"_{panel}") + f".{fmt}")
    else:
        main = path
    targets = [(main, panel)]
    if individual and panel == "all":
        targets += [(parent / f"{stem}_{p}.{fmt}", p) for p in PANELS[1:]]
    return targets, fmt


def save_event_figures(report, out, fmt: str | None = None, overwrite: bool = False,
                       panel: str = "all", individual: bool = False, dpi: int = 200) -> list[Path]:
    """Write the event figure(s); returns the paths written.

    Parameters
    ----------
    out : str or Path
        A ``.png`` or ``.pdf`` file, or a folder (then ``event.<fmt>`` inside it).
    fmt : {'png', 'pdf'}, optional
        Needed only for a folder (default png); must match a file name's extension.
    overwrite : bool
        Replace existing files; without it an existing target raises
        :class:`occplan.errors.OutputExistsError` before anything is drawn.
    panel : {'all', 'sky', 'radius', 'coverage'}
        The combined figure or one panel alone.
    individual : bool
        With ``panel='all'``, also write each panel to ``<name>_sky.<fmt>`` etc.

    Notes
    -----
    Each file is rendered to a temporary file in the same folder and renamed into place, so
    an interrupted run never leaves a half-written figure.
    """
    targets, fmt = _targets(out, fmt, panel, individual)
    for path, _ in targets:
        if path.exists() and not overwrite:
            raise OutputExistsError(f"{path} exists; pass --overwrite (overwrite=True) to replace it")
        if not path.parent.is_dir():
            raise InputError(f"folder {str(path.parent)!r} for the figure does not exist")
    written = []
    for path, what in targets:
        fig = event_figure(report) if what == "all" else _single(report, what)
        _atomic_save(fig, path, fmt, dpi, overwrite)
        written.append(path)
    return written


def _atomic_save(fig, path: Path, fmt: str, dpi: int, overwrite: bool = True) -> None:
    from .tables import atomic_write

    atomic_write(path, lambda fh: fig.savefig(fh, format=fmt, dpi=dpi,
                                              metadata=_file_metadata(fmt)), overwrite=overwrite)


def _file_metadata(fmt: str) -> dict:
    from . import __version__

    creator = f"occplan {__version__} (matplotlib)"
    return {"Creator": creator} if fmt == "pdf" else {"Software": creator}


def save_axes_figure(ax, path, overwrite: bool = False, dpi: int = 150) -> Path:
    """Write the figure holding ``ax`` (PNG or PDF, atomically; an existing file only with
    ``overwrite``)."""
    from .tables import check_out

    path = Path(path)
    check_out(path, overwrite)
    _atomic_save(ax.figure, path, path.suffix.lower()[1:], dpi, overwrite)
    return path
