"""Observable ring features from the resonance catalogue.

A chord records features, not raw resonance terms.  :func:`derive_features` turns the
output of :func:`occplan.resonances.find_resonances` into:

- **density waves** and **bending waves** that fit inside their ring segment (a region
  between gaps), launched only where the ring is massive enough to carry them;
- **edges**: a first-order Lindblad resonance within ``edge_distance_km`` of a segment edge
  (ILR at an outer edge, OLR at an inner edge, or inside a narrow ring: a forced mode),
  with a torque of at least ``min_edge_torque_dyn_cm``, holds that edge and forces an
  m-lobed distortion of it, whatever the assumed viscosity -- unless the match is likely by
  chance: the m:(m-+1) terms of one satellite form a comb with spacing
  S = (2/3) r / (m (m -+ 1)), so an edge placed at random lies within d of one of them with
  probability 2 d / S; a match with 2 d / S above ``max_edge_chance`` is not a holder
  (Pan 31:30, 10 km from the Keeler gap's outer edge in a comb 98 km apart, is not listed;
  Galatea 42:43, 0.3 km from the Adams ring in a comb 23 km apart, is);
- **narrow rings**: a ring narrower than ``narrow_ring_max_width_km`` is one feature, with
  the resonances that hold its edges as members;
- **corotation** features where the libration zone is at least ``corotation_min_width_km``
  wide;
- **overlap regions**: three or more consecutive waves of one satellite and kind whose zones
  overlap are one region, not separate waves.

Terms of one commensurability (Ophelia 14:13, 28:26 and 42:39 sit within a few km) and of
co-orbital satellites (Janus and Epimetheus) are merged into one feature whose torque is the
sum of its members' (their patterns rotate at different speeds, so the time-averaged torques
add).

Wave amplitude (linear theory)
------------------------------
A tightly wound density wave with surface-density amplitude sigma_1 and radial wavenumber k
carries the angular-momentum flux F = m r pi^2 G sigma_1^2 / k^2 (the gravitational flux of a
tightly wound wave, F = m r Phi_1^2 / 4G with Phi_1 = 2 pi G sigma_1 / |k|; Goldreich &
Tremaine 1979; Binney & Tremaine 2008, sec. 6.2, from memory).  Far from resonance F equals
the resonance torque T = (T/sigma) sigma_0, and k = x / ell^2 grows linearly with the distance
x from resonance, so the fractional amplitude grows as

    sigma_1 / sigma_0 = (x / ell^2) sqrt((T/sigma) / (m pi^2 G r sigma_0)) exp(-(x/x_D)^3)

until viscous damping takes over (:func:`occplan.resonances.wave_zones`).  Its peak, at
x = x_D / 3^(1/3) (not closer than ell, where the asymptotic form starts to hold), is the
feature's ``amplitude``; values above 1 mean a nonlinear wave (the profile is then set by
the ring's full optical depth, so the weight saturates at 1).  A bending wave with vertical
amplitude h carries the same flux with sigma_1 / |k| replaced by sigma_0 h (the corrugated
sheet's potential is 2 pi G sigma_0 h), so the same expression gives its slope k h; its
optical-depth signature is the slope times cot|B*| (the slant path changes with the local
tilt; Shu, Cuzzi & Lissauer 1983, from memory).

Launch criterion: a wave is listed only where it completes its first wavelength before it is
damped, x_D >= x_1 = 2 sqrt(pi) ell, and where that first wavelength fits inside its ring
segment on the propagation side.  Since x_1 ~ sigma^(1/2) and x_D ~ sigma, this is a
surface-density threshold: tenuous rings and narrow ringlets narrower than the wave carry
none.  Wave zones are clipped at segment edges.  Segments fainter than
``min_optical_depth`` (dusty rings: Saturn's D ring, Neptune's Galle and Lassell rings) hold
no features at all: they dim the star by under a per cent.
"""

from __future__ import annotations

import math
import tomllib
from dataclasses import dataclass, replace
from functools import lru_cache
from importlib import resources

import numpy as np

from .bodies import get_body
from .errors import DataFileError

G_CGS = 6.67430e-8  # cm^3 g^-1 s^-2 (CODATA 2018)
KM_TO_CM = 1e5
FEATURE_KINDS = ("density wave", "bending wave", "edge", "narrow ring", "corotation",
                 "overlap region")
SETTING_KEYS = ("min_amplitude", "narrow_ring_max_width_km", "edge_distance_km",
                "max_edge_chance", "min_edge_torque_dyn_cm",
                "edge_width_km", "corotation_min_width_km", "min_optical_depth",
                "overlap_min_members")


# --------------------------------------------------------------------------- settings


@dataclass(frozen=True)
class FeatureSettings:
    """Thresholds of the feature catalogue (``occplan/data/features.toml``)."""

    min_amplitude: float
    narrow_ring_max_width_km: float
    edge_distance_km: float
    max_edge_chance: float
    min_edge_torque_dyn_cm: float
    edge_width_km: float
    corotation_min_width_km: float
    min_optical_depth: float
    overlap_min_members: int
    sources: tuple = ()
    path: str = ""

    def describe(self) -> dict:
        return {k: getattr(self, k) for k in SETTING_KEYS} | {"path": self.path}


def _read_settings(text: str, where: str) -> FeatureSettings:
    try:
        data = tomllib.loads(text)
    except (tomllib.TOMLDecodeError, UnicodeDecodeError) as exc:
        raise DataFileError(f"feature settings {where}: not valid TOML ({exc})") from None
    sources = data.pop("source", {})
    unknown = set(data) - set(SETTING_KEYS)
    if unknown:
        raise DataFileError(f"feature settings {where}: unknown key(s) {', '.join(sorted(unknown))}; "
                            f"allowed: {', '.join(SETTING_KEYS)}")
    missing = set(SETTING_KEYS) - set(data)
    if missing:
        raise DataFileError(f"feature settings {where}: missing {', '.join(sorted(missing))}")
    for key in SETTING_KEYS:
        v = data[key]
        if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v) or v < 0:
            raise DataFileError(f"feature settings {where}: {key} = {v!r} must be a number >= 0")
    return FeatureSettings(**{k: data[k] for k in SETTING_KEYS},
                           sources=tuple(sorted(sources.items())), path=where)


@lru_cache(maxsize=8)
def load_settings(path: str | None = None) -> FeatureSettings:
    """The default feature settings, or those of a user TOML file of the same layout."""
    if path is None:
        text = (resources.files("occplan") / "data" / "features.toml").read_text(encoding="utf-8")
        return _read_settings(text, "occplan/data/features.toml")
    from .schema import input_text

    return _read_settings(input_text(path, "feature settings"), str(path))


# --------------------------------------------------------------------------- the feature


@dataclass(frozen=True)
class Feature:
    """One observable ring feature (module docstring).

    Attributes
    ----------
    name : str
        Unique within a body, e.g. "Mimas 5:3 density wave", "Janus/Epimetheus 7:6 edge",
        "epsilon ring".
    feature : str
        One of FEATURE_KINDS.
    satellite, label, kind, wave : str
        The principal term's satellite (co-orbitals joined by "/"), commensurability
        (faster:slower), resonance kind (ILR/OLR/IVR/OVR/CR, '' for a ring without one) and
        wave ('density', 'bending' or 'none').
    m, k, p, order : int
        The principal (strongest) term.
    resonance_radius_km : float
        Torque-weighted mean radius of the terms (a narrow ring: its mean semi-major axis).
    zone_inner_km, zone_outer_km : float
        Radial extent the chord must cross to record the feature.
    propagation : str
        'outward', 'inward' or 'none'.
    amplitude : float
        Peak fractional surface-density amplitude (density waves), slope (bending waves), 1
        for edges and narrow rings, nan where linear theory gives none (corotation).
    weight : float
        min(1, amplitude): what the feature is worth to the ranking (0 for corotation).
    torque_dyn_cm : float
        Combined torque of the terms (dyn cm; 0 for a ring without a resonance).
    first_wavelength_km, damping_length_km, shortest_wavelength_km : float
        Waves only (nan otherwise).
    scale_km : float
        What must be resolved: the shortest wavelength in the zone (waves), the edge width
        (edges), the ring's width (narrow rings), the libration width (corotation), the
        median shortest wavelength of the members (overlap regions).
    region : str
        Ring region (narrow ring or ringlet) holding the feature.
    optical_depth, surface_density_g_cm2 : float
        The region's normal optical depth and surface density.
    terms : tuple of str
        The resonance terms merged into the feature, "satellite label kind (m, k, p)".
    note : str
        What the feature is, in words (e.g. "m = 2 forced distortion of the B ring's outer edge").
    """

    name: str
    feature: str
    satellite: str
    label: str
    kind: str
    wave: str
    m: int
    k: int
    p: int
    order: int
    resonance_radius_km: float
    zone_inner_km: float
    zone_outer_km: float
    propagation: str
    amplitude: float
    weight: float
    torque_dyn_cm: float
    first_wavelength_km: float
    damping_length_km: float
    shortest_wavelength_km: float
    scale_km: float
    region: str
    optical_depth: float
    surface_density_g_cm2: float
    terms: tuple = ()
    note: str = ""
    edge_radius_km: float = float("nan")  # edges: the ring edge the resonance holds

    @property
    def edge(self) -> bool:
        return self.feature == "edge"

    @property
    def timing_radius_km(self) -> float:
        """The radius whose crossing times the feature: an edge's ring edge (what the light
        curve shows), otherwise the resonance radius (a narrow ring: its mean semi-major axis)."""
        if self.feature == "edge" and math.isfinite(self.edge_radius_km):
            return float(self.edge_radius_km)
        return float(self.resonance_radius_km)

    @property
    def width_km(self) -> float:
        return self.zone_outer_km - self.zone_inner_km

    def to_row(self) -> dict:
        row = {k: getattr(self, k) for k in (
            "name", "feature", "satellite", "label", "kind", "wave", "m", "k", "p", "order",
            "resonance_radius_km", "zone_inner_km", "zone_outer_km", "propagation", "amplitude",
            "weight", "torque_dyn_cm", "first_wavelength_km", "damping_length_km",
            "shortest_wavelength_km", "scale_km", "region", "optical_depth",
            "surface_density_g_cm2", "edge_radius_km", "note")}
        row["terms"] = "; ".join(self.terms)
        return row


# --------------------------------------------------------------------------- ring segments


@dataclass(frozen=True)
class Segment:
    """A stretch of ring material between edges: a region minus its gaps, or a ringlet."""

    region: str
    inner_km: float
    outer_km: float
    narrow: bool
    optical_depth: float
    surface_density_g_cm2: float
    viscosity_cm2_s: float
    inner_bound: str = ""  # what lies inside the inner edge ('' : the region's own edge)
    outer_bound: str = ""

    def edge_name(self, which: str) -> str:
        gap = self.inner_bound if which == "inner" else self.outer_bound
        if gap:
            return f"the {'outer' if which == 'inner' else 'inner'} edge of the {gap} ({self.region})"
        return f"the {which} edge of the {self.region}"


def segments(body, settings: FeatureSettings) -> list[Segment]:
    """Ring segments of a body, by semi-major axis (narrow eccentric rings by their edges'
    semi-major axes), with gaps cut out and the ringlets inside gaps kept."""
    out = []
    gaps = sorted(body.gaps, key=lambda g: g.inner_km)
    for reg in body.rings:
        lo, hi = reg.edge_a_km
        narrow = (hi - lo) < settings.narrow_ring_max_width_km
        pieces = [(lo, hi, "", "")]
        for gap in gaps:
            if gap.inner_km <= lo and gap.outer_km >= hi:
                continue  # a ringlet inside a gap keeps its own limits
            nxt = []
            for a, b, na, nb in pieces:
                if gap.outer_km <= a or gap.inner_km >= b:
                    nxt.append((a, b, na, nb))
                    continue
                if gap.inner_km > a:
                    nxt.append((a, gap.inner_km, na, gap.name))
                if gap.outer_km < b:
                    nxt.append((gap.outer_km, b, gap.name, nb))
            pieces = nxt
        if not reg.optical_depth >= settings.min_optical_depth:
            continue  # too faint to record a feature
        for a, b, na, nb in pieces:
            out.append(Segment(reg.name, a, b, narrow, reg.optical_depth,
                               reg.surface_density_g_cm2, reg.viscosity_cm2_s, na, nb))
    # a ringlet lies inside a broader region's gap: the innermost container wins
    out.sort(key=lambda s: (s.inner_km, -(s.outer_km - s.inner_km)))
    return out


def _segment_of(segs: list[Segment], r_km: float) -> Segment | None:
    best = None
    for s in segs:
        if s.inner_km <= r_km < s.outer_km and (best is None or
                                               s.outer_km - s.inner_km < best.outer_km - best.inner_km):
            best = s
    return best


# --------------------------------------------------------------------------- amplitudes


def wave_amplitude(torque_per_sigma_cgs, m, r_km, sigma_g_cm2, first_wavelength_km,
                   damping_length_km, reach_km=np.inf):
    """Peak fractional amplitude of a linear density wave (slope of a bending wave).

    Parameters
    ----------
    torque_per_sigma_cgs : float or array
        Torque per unit surface density, cm^4 s^-2.
    m : int or array
    r_km, sigma_g_cm2 : float or array
        Resonance radius and the ring's surface density.
    first_wavelength_km, damping_length_km : float or array
        x_1 = 2 sqrt(pi) ell and x_D (:func:`occplan.resonances.wave_zones`).
    reach_km : float or array
        How far the wave can run before a ring edge; the peak is taken inside it.

    Returns
    -------
    float or array
        sigma_1 / sigma_0 at x = min(max(x_D / 3^(1/3), ell), reach) (module docstring).
    """
    ell = np.asarray(first_wavelength_km, dtype=float) / (2.0 * np.sqrt(np.pi))
    x_d = np.asarray(damping_length_km, dtype=float)
    x = np.minimum(np.maximum(x_d / np.cbrt(3.0), ell), reach_km)
    k_cm = x / ell**2 / KM_TO_CM
    with np.errstate(divide="ignore", invalid="ignore"):
        flux = np.asarray(torque_per_sigma_cgs, dtype=float) / (
            np.asarray(m, dtype=float) * np.pi**2 * G_CGS * np.asarray(r_km) * KM_TO_CM
            * np.asarray(sigma_g_cm2, dtype=float))
        return k_cm * np.sqrt(flux) * np.exp(-((x / x_d) ** 3))


# --------------------------------------------------------------------------- derivation


def _groups(body) -> dict:
    """Satellite name -> group name: co-orbitals (semi-major axes within 0.1 %) share one,
    the more massive first ("Janus/Epimetheus")."""
    sats = sorted(body.satellites, key=lambda s: s.a_km)
    out = {}
    i = 0
    while i < len(sats):
        j = i + 1
        while j < len(sats) and abs(sats[j].a_km - sats[i].a_km) < 1e-3 * sats[i].a_km:
            j += 1
        members = sorted(sats[i:j], key=lambda s: -s.gm_km3_s2)
        name = "/".join(s.name for s in members)
        for s in members:
            out[s.name] = name
        i = j
    return out


def _ratio(res) -> tuple[int, int]:
    a, b = (int(x) for x in res.label.split(":"))
    g = math.gcd(a, b) or 1
    return a // g, b // g


def _term(res) -> str:
    return f"{res.satellite} {res.label} {res.kind} (m={res.m}, k={res.k}, p={res.p})"


def _edge_candidates(resonances, segs, settings, group):
    """{index: (segment, edge radius, 'inner'|'outer')} of first-order Lindblad terms that
    hold a segment edge (module docstring)."""
    hits = {}
    d_max = settings.edge_distance_km
    for i, res in enumerate(resonances):
        if res.k != 0 or res.p != 0 or res.kind not in ("ILR", "OLR"):
            continue
        m, r = res.m, res.resonance_radius_km
        # the m:(m-+1) terms of one satellite form a comb: an edge lies within d of one of
        # them by chance with probability 2 d / spacing (module docstring)
        spacing = (np.inf if m == 1 else (2.0 / 3.0) * r / (m * (m - 1))) if res.kind == "ILR" \
            else (2.0 / 3.0) * r / (m * (m + 1))
        best = None
        for s in segs:
            if res.torque_per_sigma * s.surface_density_g_cm2 < settings.min_edge_torque_dyn_cm:
                continue
            # (edge radius, which, distance that decides the chance of the match)
            options = [(s.outer_km, "outer", None)] if res.kind == "ILR" else \
                [(s.inner_km, "inner", None)]
            if s.narrow and s.inner_km <= r <= s.outer_km:  # a forced mode inside a narrow ring:
                # the whole ring responds, so the match is judged by the distance to its
                # mean radius (Galatea 42:43 sits 0.3 km from the Adams ring's)
                options.append((r, "inner" if r - s.inner_km < s.outer_km - r else "outer",
                                abs(r - 0.5 * (s.inner_km + s.outer_km))))
            for edge, which, d_chance in options:
                d = abs(r - edge)
                if 2.0 * (d if d_chance is None else d_chance) / spacing > settings.max_edge_chance:
                    continue  # as likely a chance alignment as a holder
                if d <= d_max and (best is None or d < best[0]):
                    best = (d, s, edge, which)
        if best is not None:
            hits[i] = best
    # one holder per edge and satellite group: the closest (neighbouring m of one moon can
    # both fall within the tolerance of a narrow ring's edge)
    closest = {}
    for i, (d, s, _edge, which) in hits.items():
        key = (id(s), which, group.get(resonances[i].satellite, resonances[i].satellite))
        if key not in closest or d < closest[key][0]:
            closest[key] = (d, i)
    keep = {i for _, i in closest.values()}
    return {i: hits[i][1:] for i in keep}


def derive_features(body, resonances, settings: FeatureSettings | None = None) -> list[Feature]:
    """The observable features of a body's resonance catalogue (module docstring).

    Parameters
    ----------
    body : Body or str
    resonances : list of Resonance
        From :func:`occplan.resonances.find_resonances` (any radius range and order).
    settings : FeatureSettings, optional
        Thresholds (default ``occplan/data/features.toml``).

    Returns
    -------
    list of Feature, sorted by radius.
    """
    body = get_body(body)
    settings = settings or load_settings()
    segs = segments(body, settings)
    group = _groups(body)
    # a term listed twice (same satellite, kind, m, k, p) is one term
    unique = {}
    for res in resonances:
        unique.setdefault((res.satellite, res.kind, res.m, res.k, res.p), res)
    resonances = list(unique.values())
    edges = _edge_candidates(resonances, segs, settings, group)

    # 1. single terms -> candidate features (key: what merges them)
    cands = []  # (key, Feature, per-sigma torque) for merging
    for i, res in enumerate(resonances):
        seg = _segment_of(segs, res.resonance_radius_km)
        if i in edges:
            seg, edge_r, which = edges[i]
            cands.append(("edge", seg, which, res, edge_r))
            continue
        if seg is None or not seg.surface_density_g_cm2 > 0:
            continue
        if seg.narrow:
            continue  # a narrow ring is one feature: only its edge resonances are members
        sig = res.surface_density_g_cm2 if np.isfinite(res.surface_density_g_cm2) \
            else seg.surface_density_g_cm2
        if res.wave in ("density", "bending"):
            x1, xd = res.first_wavelength_km, res.damping_length_km
            if not (np.isfinite(x1) and np.isfinite(xd) and xd >= x1):
                continue  # damped before its first wavelength: the ring cannot carry it
            r = res.resonance_radius_km
            reach = seg.outer_km - r if res.propagation == "outward" else r - seg.inner_km
            if reach < x1:
                continue  # the first wavelength does not fit before the segment's edge
            amp = float(wave_amplitude(res.torque_per_sigma, res.m, r, sig, x1, xd, reach))
            if not amp >= settings.min_amplitude:
                continue
            cands.append(("wave", seg, "", res, amp))
        elif res.kind == "CR":
            if res.zone_outer_km - res.zone_inner_km >= settings.corotation_min_width_km:
                cands.append(("cr", seg, "", res, float("nan")))

    # 2. merge one commensurability of one satellite group (and co-orbital pairs)
    merged: dict = {}
    for kind, seg, which, res, extra in cands:
        side = "inner" if res.kind in ("ILR", "IVR") else "outer" if res.kind in ("OLR", "OVR") \
            else "cr"
        if kind == "edge":
            key = ("edge", group.get(res.satellite, res.satellite), _ratio(res), seg.region,
                   seg.inner_km, which)
        else:
            key = (kind, group.get(res.satellite, res.satellite), _ratio(res), side,
                   res.wave, seg.region, seg.inner_km)
        merged.setdefault(key, []).append((seg, which, res, extra))
    # wave terms of a commensurability that also holds an edge add their forcing to the edge
    for key in [k for k in merged if k[0] == "wave" and k[4] == "density"]:
        _, grp, ratio, side, _, region, seg_lo = key
        for ekey in merged:
            if ekey[0] == "edge" and ekey[1] == grp and ekey[2] == ratio and ekey[3] == region \
                    and side == ("inner" if ekey[5] == "outer" else "outer"):
                merged[ekey].extend(merged.pop(key))
                break

    # co-located only: terms of one commensurability farther apart than the edge tolerance
    # (plus the spread of a co-orbital group's orbits) are separate features
    spread = {}
    for s in body.satellites:
        spread.setdefault(group.get(s.name, s.name), []).append(s.a_km)
    feats = []
    for key, items in merged.items():
        tol = settings.edge_distance_km + float(np.ptp(spread.get(key[1], [0.0])))
        items.sort(key=lambda it: it[2].resonance_radius_km)
        cluster = [items[0]]
        for it in items[1:]:
            if it[2].resonance_radius_km - cluster[-1][2].resonance_radius_km > tol:
                feats.append(_merge(key, cluster, group, settings))
                cluster = []
            cluster.append(it)
        feats.append(_merge(key, cluster, group, settings))

    # 3. overlapping wave trains of one satellite group and kind -> one region
    feats = _overlap_regions(feats, settings)

    # 4. narrow rings: one feature each, holding their edges
    feats = _narrow_rings(body, feats, segs, settings)
    # unique names: siblings of one name are told apart by their principal term
    count: dict = {}
    for f in feats:
        count[f.name] = count.get(f.name, 0) + 1
    out, seen = [], set()
    for f in sorted(feats, key=lambda f: (f.resonance_radius_km, f.name)):
        name = f.name if count[f.name] == 1 else f"{f.name} ({f.kind} m={f.m}, k={f.k}, p={f.p})"
        while name in seen:
            name += "'"
        seen.add(name)
        out.append(f if name == f.name else replace(f, name=name))
    return out


def _merge(key, items, group, settings) -> Feature:
    kind = key[0]
    if kind == "edge" and not any(it[1] in ("inner", "outer") for it in items):
        kind = "wave"  # wave terms of an edge's commensurability, but not co-located with it
    grp = key[1]
    seg = items[0][0]
    terms = [it[2] for it in items]
    torques = np.array([t.torque_per_sigma for t in terms])
    principal = terms[int(np.argmax(torques))]
    w = torques / torques.sum() if torques.sum() > 0 else np.full(len(terms), 1.0 / len(terms))
    r_mean = float(np.sum(w * [t.resonance_radius_km for t in terms]))
    sig = seg.surface_density_g_cm2
    torque = float(torques.sum() * sig)
    ratio = principal.label  # the strongest term names the feature (Mimas 4:2, not 2:1)
    common = dict(satellite=grp, label=ratio, kind=principal.kind, m=principal.m, k=principal.k,
                  p=principal.p, order=principal.order, resonance_radius_km=r_mean, region=seg.region,
                  optical_depth=seg.optical_depth, surface_density_g_cm2=sig,
                  terms=tuple(_term(t) for t in sorted(terms, key=lambda t: -t.torque_per_sigma)),
                  torque_dyn_cm=torque)
    nan = float("nan")
    if kind == "edge":
        edge_r = next((it[3] for it in items if it[1] in ("inner", "outer")), r_mean)
        which = next(it[1] for it in items if it[1] in ("inner", "outer"))
        lo, hi = min(r_mean, edge_r), max(r_mean, edge_r)
        pad = settings.edge_width_km + 5.0
        return Feature(name=f"{grp} {ratio} edge", feature="edge", wave="none",
                       zone_inner_km=lo - pad, zone_outer_km=hi + pad, propagation="none",
                       amplitude=1.0, weight=1.0, first_wavelength_km=nan, damping_length_km=nan,
                       shortest_wavelength_km=nan, scale_km=settings.edge_width_km,
                       edge_radius_km=float(edge_r),
                       note=(f"holds {seg.edge_name(which)} at {edge_r:,.1f} km "
                             f"({abs(edge_r - principal.resonance_radius_km):.1f} km away): an "
                             f"m = {principal.m} forced distortion"), **common)
    if kind == "cr":
        lo = min(t.zone_inner_km for t in terms)
        hi = max(t.zone_outer_km for t in terms)
        return Feature(name=f"{grp} {ratio} corotation", feature="corotation", wave="none",
                       zone_inner_km=lo, zone_outer_km=hi, propagation="none", amplitude=nan,
                       weight=0.0, first_wavelength_km=nan, damping_length_km=nan,
                       shortest_wavelength_km=nan, scale_km=hi - lo,
                       note="corotation resonance: a libration zone that can confine arcs or "
                            "clumps; linear theory predicts no radial profile for it: listed, "
                            "not scored",
                       **common)
    amps = np.array([it[3] for it in items])
    # amplitudes add as the square root of the summed torques (flux ~ amplitude^2)
    amp = float(amps.max() * math.sqrt(torques.sum() / principal.torque_per_sigma)) \
        if principal.torque_per_sigma > 0 else float(amps.max())
    lo = max(min(t.zone_inner_km for t in terms), seg.inner_km)
    hi = min(max(t.zone_outer_km for t in terms), seg.outer_km)
    shortest = float(max(min(t.shortest_wavelength_km for t in terms),
                         # a clipped zone ends before its shortest wavelength is reached
                         2.0 * np.pi * (principal.first_wavelength_km**2 / (4 * np.pi))
                         / max(hi - lo, 1e-9)))
    feature = "density wave" if principal.wave == "density" else "bending wave"
    return Feature(name=f"{grp} {ratio} {feature}", feature=feature, wave=principal.wave,
                   zone_inner_km=lo, zone_outer_km=hi, propagation=principal.propagation,
                   amplitude=amp, weight=min(1.0, amp),
                   first_wavelength_km=principal.first_wavelength_km,
                   damping_length_km=principal.damping_length_km,
                   shortest_wavelength_km=shortest, scale_km=shortest,
                   note="nonlinear (linear amplitude > 1)" if amp > 1 else "", **common)


def _overlap_regions(feats: list[Feature], settings) -> list[Feature]:
    waves = [f for f in feats if f.feature in ("density wave", "bending wave")]
    rest = [f for f in feats if f.feature not in ("density wave", "bending wave")]
    by_key: dict = {}
    for f in waves:
        by_key.setdefault((f.satellite, f.kind, f.region, f.order), []).append(f)
    out = list(rest)
    for (sat, kind, _region, _order), group in by_key.items():
        group.sort(key=lambda f: f.resonance_radius_km)
        chain = [group[0]]
        chains = []
        for f in group[1:]:
            if f.zone_inner_km < chain[-1].zone_outer_km:
                chain.append(f)
            else:
                chains.append(chain)
                chain = [f]
        chains.append(chain)
        for ch in chains:
            if len(ch) < settings.overlap_min_members:
                out.extend(ch)
                continue
            strongest = max(ch, key=lambda f: f.torque_dyn_cm)
            amp = max(f.amplitude for f in ch)
            lowest_m = min(ch, key=lambda f: f.m)
            what = "density waves" if strongest.wave == "density" else "bending waves"
            out.append(replace(
                strongest, name=f"{sat} {kind} {what} from {lowest_m.label} (overlapping)",
                feature="overlap region", label=f"{lowest_m.label}+",
                resonance_radius_km=float(np.median([f.resonance_radius_km for f in ch])),
                zone_inner_km=min(f.zone_inner_km for f in ch),
                zone_outer_km=max(f.zone_outer_km for f in ch), propagation="none",
                amplitude=amp, weight=min(1.0, amp),
                torque_dyn_cm=float(sum(f.torque_dyn_cm for f in ch)),
                scale_km=float(np.median([f.shortest_wavelength_km for f in ch])),
                terms=tuple(t for f in ch for t in f.terms),
                note=(f"{len(ch)} {kind} wave trains of {sat} whose zones overlap "
                      f"(m = {min(f.m for f in ch)}..{max(f.m for f in ch)} in the catalogue): "
                      "a region of overlapping resonances")))
    return out


def _narrow_rings(body, feats: list[Feature], segs, settings) -> list[Feature]:
    out = [f for f in feats]
    for reg in body.rings:
        lo, hi = reg.edge_a_km
        if hi - lo >= settings.narrow_ring_max_width_km or \
                not reg.optical_depth >= settings.min_optical_depth:
            continue
        held = [f for f in out if f.feature == "edge" and f.region == reg.name]
        out = [f for f in out if f not in held]
        width = hi - lo
        holders = ", ".join(f"{f.satellite} {f.label} ({'inner' if f.kind == 'OLR' else 'outer'} edge)"
                            for f in sorted(held, key=lambda f: f.resonance_radius_km))
        torque = float(sum(f.torque_dyn_cm for f in held))
        principal = max(held, key=lambda f: f.torque_dyn_cm) if held else None
        envelope = (reg.inner_km, reg.outer_km) != (lo, hi)
        note = f"narrow ring, mean width {width:.1f} km"
        if holders:
            note += f"; edges held by {holders}"
        if envelope:
            note += (f"; eccentric: crossed within its radial envelope {reg.inner_km:,.1f}-"
                     f"{reg.outer_km:,.1f} km (circular-ring model)")
        out.append(Feature(
            name=reg.name, feature="narrow ring",
            satellite=principal.satellite if principal else "",
            label=principal.label if principal else "", kind=principal.kind if principal else "",
            wave="none", m=principal.m if principal else 0, k=0, p=0,
            order=principal.order if principal else 0,
            resonance_radius_km=0.5 * (lo + hi), zone_inner_km=reg.inner_km,
            zone_outer_km=reg.outer_km, propagation="none", amplitude=1.0, weight=1.0,
            torque_dyn_cm=torque, first_wavelength_km=float("nan"),
            damping_length_km=float("nan"), shortest_wavelength_km=float("nan"),
            scale_km=width, region=reg.name, optical_depth=reg.optical_depth,
            surface_density_g_cm2=reg.surface_density_g_cm2,
            terms=tuple(t for f in held for t in f.terms), note=note))
    return out


def features_table(features):
    """A list of features as an astropy QTable with units (:mod:`occplan.columns`)."""
    from .tables import to_astropy

    return to_astropy([f.to_row() for f in features], {}, qtable=True)


# --------------------------------------------------------------------------- public entry


_CACHE: dict = {}


def body_features(body, max_order: int = 3, sigma_g_cm2=None, viscosity_cm2_s=None,
                  max_m: int | None = None, settings: FeatureSettings | None = None,
                  rmin_km=None, rmax_km=None, satellites=None,
                  epoch_jd_tdb: float | None = None) -> list[Feature]:
    """A body's feature catalogue (resonances of order <= ``max_order``), cached.

    Parameters as :func:`occplan.resonances.find_resonances`; ``settings`` as
    :func:`derive_features`; ``epoch_jd_tdb`` puts co-orbital satellites (Janus and
    Epimetheus) in their configuration at that date (:meth:`occplan.bodies.Body.at_epoch`).
    """
    from .resonances import DEFAULT_MAX_M, find_resonances

    body = get_body(body).at_epoch(epoch_jd_tdb)
    settings = settings or load_settings()
    max_m = DEFAULT_MAX_M if max_m is None else max_m
    config = tuple((s.name, s.a_km, s.mean_motion_deg_day) for s in body.satellites
                   if s.configurations)
    key = (body.path, body.name, int(max_order), sigma_g_cm2, viscosity_cm2_s, int(max_m),
           settings, rmin_km, rmax_km, tuple(satellites or ()), config)
    if key not in _CACHE:
        res = find_resonances(body, rmin_km=rmin_km, rmax_km=rmax_km, max_order=max_order,
                              satellites=satellites, sigma_g_cm2=sigma_g_cm2,
                              viscosity_cm2_s=viscosity_cm2_s, max_m=max_m,
                              near_rings_km=settings.edge_distance_km)
        feats = derive_features(body, res, settings)
        lo = -np.inf if rmin_km is None else float(rmin_km)
        hi = np.inf if rmax_km is None else float(rmax_km)
        _CACHE[key] = tuple(f for f in feats if f.zone_outer_km >= lo and f.zone_inner_km <= hi)
    return list(_CACHE[key])


__all__ = ["FEATURE_KINDS", "Feature", "FeatureSettings", "body_features", "derive_features",
           "load_settings", "segments", "wave_amplitude"]
