"""Figures of one event: what each panel draws, the sky-plane conventions, files, the CLI.

The event: a star placed 1 arcsec north of Saturn's astrometric position at 02:00 UTC on
2027-06-15, seen from a southern site (30 S, 45 E) where Saturn rises 20 deg above the
horizon at 01:00 UTC and the Sun stays below -12 deg until 02:55 UTC, so both ring crossings
(about 01:00 and 02:45) are observable and the planet hides the middle of the chord.
"""

from __future__ import annotations

import math
import re

import matplotlib.dates as mdates
import numpy as np
import pytest
from matplotlib.image import imread
from shapely.geometry import MultiPolygon, Polygon
from shapely.ops import unary_union

from occplan import plotting
from occplan.coverage import planet_disk
from occplan.ephemeris import J2000_TDB_JD, Observer, StarSpec, parse_utc, tdb_s_of
from occplan.errors import InputError, OutputExistsError
from occplan.events import evaluate_event

from .test_geometry import offset_star, saturn_radec

T_MID = float(tdb_s_of(parse_utc("2027-06-15T02:00:00Z")))
SITE = Observer.site("plot test site", -30.0, 45.0, 1800.0)
HHMM = re.compile(r"^\d\d:\d\d$")


@pytest.fixture(scope="module")
def star(eph, saturn):
    ra, dec = saturn_radec(eph, saturn, T_MID)
    s = offset_star(ra, dec, 0.0, 1.0)
    return StarSpec(ra_deg=s.ra_deg, dec_deg=s.dec_deg, vmag=11.0, kmag=10.0, name="test star")


@pytest.fixture(scope="module")
def report(saturn, star):
    return evaluate_event(saturn, star, SITE, (T_MID - 2 * 3600, T_MID + 2 * 3600))


def test_the_event_has_what_the_figures_must_show(report):
    """The scenario itself: both sides cross the rings, the planet hides the middle, zones
    are crossed on both sides and the site can observe them (so the colours are not all
    grey)."""
    tr = report.track
    assert {p.side for p in tr.passes} == {"ingress", "egress"}
    assert len(report.hidden) == 1
    assert {z.side for z in report.zones} == {"ingress", "egress"}
    statuses = {plotting.zone_status(z) for z in report.zones}
    assert {"hidden", "unresolved"} <= statuses
    assert any(z.usable for z in report.zones)


# --------------------------------------------------------------------------- sky view


def _patch_geometry(patch) -> MultiPolygon:
    """The area a PathPatch fills (even-odd rings -> shapely), in data coordinates."""
    rings = [Polygon(p) for p in patch.get_path().to_polygons() if len(p) >= 4]
    shells = [r for r in rings if r.is_valid]
    area = None
    for r in shells:  # exterior and holes alternate in depth: symmetric difference
        area = r if area is None else area.symmetric_difference(r)
    return area if area is not None else MultiPolygon()


def _patches(ax, prefix):
    return [p for p in ax.patches if (p.get_gid() or "").startswith(prefix)]


def test_sky_view_is_labelled_with_east_to_the_left(report):
    ax = plotting.sky_view(report)
    assert "Sky plane" in ax.get_title()
    assert "km" in ax.get_xlabel() and "east" in ax.get_xlabel()
    assert "km" in ax.get_ylabel() and "north" in ax.get_ylabel()
    # as on the sky: north up, east (positive f) to the left
    assert ax.xaxis_inverted() and not ax.yaxis_inverted()
    east = ax.transData.transform((1e5, 0.0))
    west = ax.transData.transform((-1e5, 0.0))
    assert east[0] < west[0]
    assert ax.get_aspect() == 1.0
    texts = {t.get_text() for t in ax.texts}
    assert {"N", "E"} <= texts
    legend = [t.get_text() for t in ax.get_legend().get_texts()]
    for reg in report.track.body.rings:
        assert reg.name in legend
    assert any("hidden by the planet" in t for t in legend)
    # the chord: solid where visible, dashed behind the planet
    styles = {ln.get_gid(): ln.get_linestyle() for ln in ax.lines if ln.get_gid()}
    assert styles["chord"] == "-" and styles["chord-hidden"] == "--"


def test_sky_view_time_ticks_are_utc_minutes(report):
    """Tick labels HH:MM, in time order along the path, at whole multiples of the step."""
    ax = plotting.sky_view(report, tick_minutes=10)
    labels = [t.get_text() for t in ax.texts if HHMM.match(t.get_text())]
    assert len(labels) >= 6
    minutes = [int(x[:2]) * 60 + int(x[3:]) for x in labels]
    assert all(m % 10 == 0 for m in minutes)
    assert np.all(np.diff(minutes) == 10)
    # each label sits at its tick: the tick's time maps to the track position there.  The
    # reference UTC -> TDB conversion is astropy's (independent of skyfield), within 1 ms.
    from astropy.time import Time

    tr = report.track
    tick_line = next(ln for ln in ax.lines if ln.get_gid() == "time-ticks")
    f_ticks = np.asarray(tick_line.get_xdata())
    day = "2027-06-15"
    for label, f_tick in zip(labels, f_ticks):
        t_tdb = Time(f"{day}T{label}:00", scale="utc").tdb
        t_s = (t_tdb.jd1 - J2000_TDB_JD + t_tdb.jd2) * 86400.0
        # sky speed ~15 km/s (Earth's orbital motion): 1 ms is 0.02 km; 1 km tolerance
        assert np.interp(t_s, tr.tdb_s, tr.sky_f_km) == pytest.approx(f_tick, abs=1.0)


def test_far_side_of_the_rings_is_hidden_by_the_disk(report, saturn):
    """What is drawn over the disk is only the near half of the rings.

    Independent depth test (common practice, vector geometry): a sky point (f, g) on the
    ring plane lies at distance lam = -(f n.e + g n.n_north) / (n.s) beyond the planet's sky
    plane along the line of sight s; the near half has lam < 0.  Here n is the pole from the
    body file's IAU model and s, e, n_north the star's direction and its east/north axes,
    computed directly rather than from the plotting code's projection.
    """
    ax = plotting.sky_view(report)
    tr = report.track
    disk_patch, = _patches(ax, "planet-disk")
    disk = planet_disk(saturn, tr.meta["opening_angle_deg"], tr.meta["pole_position_angle_deg"])
    assert _patch_geometry(disk_patch).symmetric_difference(disk).area < 1e-6 * disk.area
    z_disk = disk_patch.get_zorder()
    near = _patches(ax, "ring-near:")
    far = _patches(ax, "ring-far:")
    assert near and far
    assert all(p.get_zorder() > z_disk for p in near)
    assert all(p.get_zorder() < z_disk for p in far)
    far_area = unary_union([_patch_geometry(p) for p in far])
    near_area = unary_union([_patch_geometry(p) for p in near])
    # nothing of the far side is drawn on the disk (slivers from polygon edges, under 1 km^2
    # per ring region: 12 regions and ringlets at Saturn)
    assert far_area.intersection(disk).area < 1.0 * len(far)
    # and the rings in front of the disk are drawn over it (a band tens of 10^3 km long)
    assert near_area.intersection(disk).area > 1e8

    # depth of sample points: near patches in front of the sky plane, far patches behind it
    ra, dec = math.radians(tr.star.ra_deg), math.radians(tr.star.dec_deg)
    s = np.array([math.cos(dec) * math.cos(ra), math.cos(dec) * math.sin(ra), math.sin(dec)])
    e = np.cross([0.0, 0.0, 1.0], s)
    e /= np.linalg.norm(e)
    north = np.cross(s, e)
    jd = J2000_TDB_JD + tr.closest_approach_s / 86400.0
    n = saturn.pole.unit_vector(jd)

    def depth(points):
        f, g = points[:, 0], points[:, 1]
        return -(f * (n @ e) + g * (n @ north)) / (n @ s)

    rng = np.random.default_rng(1)
    for area, sign in ((near_area, -1.0), (far_area, 1.0)):
        x0, y0, x1, y1 = area.bounds
        pts = np.column_stack([rng.uniform(x0, x1, 4000), rng.uniform(y0, y1, 4000)])
        import shapely

        inside = pts[shapely.contains_xy(area, pts[:, 0], pts[:, 1])]
        assert len(inside) > 100
        # exactly on the long axis the depth is 0: leave out points within 100 km of it
        d = depth(inside)
        d = d[np.abs(d) > 100.0]
        assert np.all(np.sign(d) == sign)


# --------------------------------------------------------------------------- radius vs time


def test_radius_time_marks_every_zone_and_labels_without_overlap(report):
    ax = plotting.radius_time(report, max_labels=10)
    assert "Ring radius" in ax.get_title()
    assert "km" in ax.get_ylabel() and "UTC" in ax.get_xlabel()
    assert ax.get_legend() is not None
    marks = [ln for ln in ax.lines if (ln.get_gid() or "").startswith("zone:")]
    scored = [z for z in report.zones if z.feature.weight > 0]  # corotation zones: tables only
    assert len(marks) == len(scored)
    # colours follow the zone status
    from matplotlib.colors import to_hex

    for z in scored:
        gid = f"zone:{z.side}:{plotting.zone_name(z.feature)}"
        mark = next(ln for ln in marks if ln.get_gid() == gid)
        assert to_hex(mark.get_color()) == plotting.STATUS_COLOURS[plotting.zone_status(z)]
        assert mark.get_ydata()[0] == pytest.approx(z.feature.resonance_radius_km)
    # hidden intervals greyed, one span each
    spans = [p for p in ax.patches if p.get_gid() == "planet-hidden"]
    assert len(spans) == len(report.hidden)
    # ring regions as bands
    bands = [p for p in ax.patches if (p.get_gid() or "").startswith("region:")]
    assert len(bands) == len(report.track.body.rings)
    # labels: a limited number, no two overlapping on the rendered figure
    labels = [t for t in ax.texts if t.get_gid() == "zone-label"]
    assert 3 <= len(labels) <= 10
    ax.figure.canvas.draw()
    renderer = ax.figure.canvas.get_renderer()
    # the text itself (an Annotation's own extent includes its leader line)
    from matplotlib.text import Text

    boxes = [Text.get_window_extent(t, renderer) for t in labels]
    for i in range(len(boxes)):
        for j in range(i + 1, len(boxes)):
            assert not boxes[i].overlaps(boxes[j]), (labels[i].get_text(), labels[j].get_text())
    tick_labels = [t.get_text() for t in ax.get_xticklabels()]
    assert tick_labels and all(HHMM.match(t) for t in tick_labels if t)


def test_radius_time_times_agree_with_astropy(report):
    """The x position of a zone marker is its crossing time in UTC.  Reference: astropy's
    TDB -> UTC conversion (independent of skyfield); 5 ms tolerance for the one-offset
    conversion (TDB - UTC changes by microseconds over a few hours)."""
    from astropy.time import Time

    ax = plotting.radius_time(report)
    z = next(z for z in report.zones if np.isfinite(z.time_s) and z.feature.weight > 0)
    mark = next(ln for ln in ax.lines if ln.get_gid() == f"zone:{z.side}:{plotting.zone_name(z.feature)}")
    x = mdates.num2date(mark.get_xdata()[0])
    ref = Time(J2000_TDB_JD, z.time_s / 86400.0, format="jd", scale="tdb").utc.to_datetime(
        timezone=x.tzinfo)
    assert abs((x - ref).total_seconds()) < 5e-3


# --------------------------------------------------------------------------- coverage chart


def test_coverage_chart_cells_follow_zone_status(report):
    ax = plotting.coverage_chart(report, max_zones=20)
    assert "coverage" in ax.get_title().lower()
    cells = [p for p in ax.patches if (p.get_gid() or "").startswith("cell:")]
    rows = ax.get_yticklabels()
    assert len(rows) == 20
    assert len(cells) == 2 * len(rows)
    # every row names a zone and its radius in km
    assert all(re.search(r"[0-9,]+ km$", t.get_text()) for t in rows)
    names = [t.get_text().rsplit("  ", 1)[0] for t in rows]
    # resonance-held edges and narrow rings crossed are always among the rows
    edges = {plotting.zone_name(z.feature) for z in report.zones
             if z.feature.feature in ("edge", "narrow ring")}
    assert edges <= set(names)
    # colours: each crossed cell has the colour of that zone's status
    from matplotlib.colors import to_hex

    by_key = {(plotting.zone_name(z.feature), z.side): z for z in report.zones}
    sides = ["ingress", "egress"]
    for cell in cells:
        col = round(cell.get_x())
        row = round(cell.get_y())
        side, status = cell.get_gid().split(":")[1:]
        assert side == sides[col]
        z = by_key.get((names[row], side))
        if z is None:
            assert status == "none"
        else:
            assert status == plotting.zone_status(z)
            assert to_hex(cell.get_facecolor()) == plotting.STATUS_COLOURS[status]
    legend = [t.get_text() for t in ax.get_legend().get_texts()]
    assert len(legend) == len(plotting.STATUS_COLOURS) + 1 and "resolvable" in legend
    # radii increase upward
    radii = [float(t.get_text().rsplit("  ", 1)[1].replace(",", "").split()[0]) for t in rows]
    assert radii == sorted(radii)


# --------------------------------------------------------------------------- figure and files


def test_event_figure_has_three_titled_panels(report):
    fig = plotting.event_figure(report)
    assert len(fig.axes) == 3
    assert all(ax.get_title() for ax in fig.axes)
    assert "Saturn ring occultation" in fig.get_suptitle()


def test_save_png_and_pdf_refuse_to_overwrite(report, tmp_path):
    png = tmp_path / "event.png"
    written = plotting.save_event_figures(report, png, dpi=40)
    assert written == [png]
    with open(png, "rb") as fh:
        assert fh.read(8) == b"\x89PNG\r\n\x1a\n"
    image = imread(png)
    assert image.shape[1] == pytest.approx(13.5 * 40, abs=2)  # figure width x dpi
    assert image[..., :3].std() > 0.05  # something is drawn
    before = png.read_bytes()
    with pytest.raises(OutputExistsError, match="overwrite"):
        plotting.save_event_figures(report, png)
    assert png.read_bytes() == before
    plotting.save_event_figures(report, png, overwrite=True, panel="sky", dpi=30)
    assert png.read_bytes() != before
    pdf = tmp_path / "event.pdf"
    plotting.save_event_figures(report, pdf, dpi=40)
    assert pdf.read_bytes()[:5] == b"%PDF-"
    with pytest.raises(InputError, match="png or .pdf"):
        plotting.save_event_figures(report, tmp_path / "event.jpg")
    with pytest.raises(InputError, match="does not match"):
        plotting.save_event_figures(report, tmp_path / "other.png", fmt="pdf")
    # no temporary files left behind
    assert sorted(p.name for p in tmp_path.iterdir()) == ["event.pdf", "event.png"]


def test_save_into_a_folder_with_individual_panels(report, tmp_path):
    written = plotting.save_event_figures(report, tmp_path, fmt="png", individual=True, dpi=30)
    assert sorted(p.name for p in written) == ["event.png", "event_coverage.png",
                                               "event_radius.png", "event_sky.png"]
    assert all(p.stat().st_size > 1000 for p in written)
    with pytest.raises(OutputExistsError):
        plotting.save_event_figures(report, tmp_path, individual=True)


def test_plots_of_a_star_that_misses_the_rings(saturn, eph):
    """A clean 'no crossing' result draws without error and says so."""
    ra, dec = saturn_radec(eph, saturn, T_MID)
    far_star = offset_star(ra, dec, 0.0, 120.0)
    rep = evaluate_event(saturn, far_star, SITE, (T_MID - 1800, T_MID + 1800), step_s=60.0)
    assert not rep.track.passes and not rep.zones
    assert "no ring crossing" in " ".join(t.get_text() for t in plotting.radius_time(rep).texts)
    assert "no ring feature" in " ".join(t.get_text() for t in plotting.coverage_chart(rep).texts)
    assert plotting.sky_view(rep).xaxis_inverted()


# --------------------------------------------------------------------------- command line


def test_cli_plot_writes_the_figure(cli, star, tmp_path):
    out = tmp_path / "sky.png"
    args = ["plot", "--star", f"{star.ra_deg:.7f} {star.dec_deg:.7f}", "--vmag", "11",
            "--kmag", "10", "--lat", "-30", "--lon", "45", "--height", "1800",
            "--start", "2027-06-15T00:30Z", "--end", "2027-06-15T03:30Z", "--step", "30",
            "--panel", "sky", "--out", out]
    res = cli(*args)
    assert res.exit_code == 0, res.output
    assert out.read_bytes()[:4] == b"\x89PNG"
    res = cli(*args)
    assert res.exit_code == 2 and "--overwrite" in res.output
    bad = cli(*args[:-1], tmp_path / "sky.svg")
    assert bad.exit_code == 2 and ".png or .pdf" in bad.output
    bad = cli(*args[:-4], "--panel", "map", "--out", tmp_path / "x.png")
    assert bad.exit_code == 2 and "--panel" in bad.output
    assert sorted(p.name for p in tmp_path.iterdir()) == ["sky.png"]
