"""Light of the planet and its rings inside the photometric aperture, blurred by seeing.

The background under an occultation star is the planet's and the rings' scattered sunlight
that falls into the photometric aperture.  Near the limb of Uranus or Neptune (or anywhere
inside Saturn's bright rings) it can exceed the star many times over, and the seeing spreads
the planet's light well past its geometric limb.  :class:`ApertureBackground` evaluates it
at any sky position (f east, g north, km from the planet's centre):

    B(p) = sum_x  S(x) E(|x - p|) dA

with S the surface brightness of the sky scene (photons s^-1 per km^2 of sky plane, detected)
and E(d) the fraction of a point source's light at distance d from the aperture's centre that
the aperture collects.  For a Gaussian seeing profile of width sigma (FWHM / 2.3548) and an
aperture of radius a, E(d) = P(chi'^2_2(lambda = d^2/sigma^2) <= a^2/sigma^2): the
noncentral chi-square distribution with two degrees of freedom (the offset Gaussian's radius
follows the Rice distribution; scipy.stats.ncx2).  A real seeing profile has wider wings
than a Gaussian (a Moffat profile with beta ~ 4.8, Trujillo et al. 2001, from memory), so this
is a lower bound on the light reaching the aperture from well outside it.

The scene (common practice; every number from the body file's [photometry] table):

- the planet's disk (the oblate outline at the observer's B, position angle P) at
  I/F = the geometric albedo p of the band (zero-phase brightness; no limb darkening), seen
  through the near side of the rings where they cover it (transmission exp(-tau/|sin B|));
- the rings, each region at I/F = (I/F of an optically thick ring, the body file's
  ``ring_reflectivity_if``) x (1 - exp(-2 tau / |sin B|)), the single-scattering
  dependence on the normal optical depth tau with the Sun and observer at nearly the same
  elevation (Cuzzi et al. 1984, from memory); the far side hidden where the disk is in front;
  gaps dark.  The unlit face (Sun and observer on opposite sides of the ring plane) is not
  modelled: the output says so.
"""

from __future__ import annotations

import math

import numpy as np

from .errors import InputError

GAUSS_FWHM_TO_SIGMA = 1.0 / (2.0 * math.sqrt(2.0 * math.log(2.0)))
REACH_SIGMAS = 4.0  # light from farther than a + 4 sigma adds under 1e-4 of a point source
PIXELS_PER_SIGMA = 3.0
MAX_GRID = 160  # cells across the integration disc (bounds the cost when sigma << a)


class ApertureBackground:
    """Planet and ring light in a photometric aperture at any sky position (module docstring).

    Parameters
    ----------
    body : Body
    band_name : str
    telescope : TelescopeProfile
        aperture_m, central_obstruction, throughput, aperture_radius_arcsec,
        seeing_fwhm_arcsec.
    distance_km : float
        Observer-planet distance.
    heliocentric_distance_au : float
    opening_angle_deg, star_elevation_deg, pole_angle_deg : float
        B, B* and P of the chord.
    """

    def __init__(self, body, band_name, telescope, distance_km, heliocentric_distance_au,
                 opening_angle_deg, star_elevation_deg, pole_angle_deg, sun_opening_angle_deg=None):
        from scipy.stats import ncx2

        from . import photometry as ph

        self.body = body
        self.band = ph.band(band_name)
        km_per_arcsec = float(distance_km) * ph.ARCSEC_RAD
        self.km_per_arcsec = km_per_arcsec
        self.aperture_km = telescope.aperture_radius_arcsec * km_per_arcsec
        fwhm = float(getattr(telescope, "seeing_fwhm_arcsec", 1.5))
        if not (math.isfinite(fwhm) and fwhm > 0):
            raise InputError(f"seeing FWHM {fwhm!r} arcsec must be > 0")
        self.sigma_km = fwhm * GAUSS_FWHM_TO_SIGMA * km_per_arcsec
        self.notes = []
        albedo = ph._from_body(body, "planet_geometric_albedo", self.band)
        ring_if = ph._from_body(body, "ring_reflectivity_if", self.band)
        self.evaluated = albedo is not None and ring_if is not None
        if not self.evaluated:
            missing = [k for k, v in (("planet_geometric_albedo", albedo),
                                      ("ring_reflectivity_if", ring_if)) if v is None]
            self.notes.append(f"background not evaluated: the body file has no {' or '.join(missing)} "
                              f"for band {self.band.name}; the SNR is left undefined")
            albedo = albedo or 0.0
            ring_if = ring_if or 0.0
        if sun_opening_angle_deg is not None and opening_angle_deg * sun_opening_angle_deg < 0:
            self.notes.append("the observer sees the unlit face of the rings: their light is "
                              "overestimated (lit-face model)")
        # photons/s detected per km^2 of sky plane at I/F = 1
        area = ph.collecting_area_m2(telescope.aperture_m, telescope.central_obstruction)
        mu1 = ph.surface_brightness_mag_arcsec2(self.band, 1.0, heliocentric_distance_au)
        per_arcsec2 = self.band.photon_flux_m2_s * 10.0 ** (-0.4 * mu1) * area * telescope.throughput
        self.rate_per_km2_if1 = float(per_arcsec2 / km_per_arcsec**2)
        self.albedo = float(albedo)
        self.ring_if = float(ring_if)
        self.b = math.radians(opening_angle_deg)
        self.b_star = math.radians(star_elevation_deg)
        self.p = math.radians(pole_angle_deg)
        # encircled-energy table E(d) on 0 .. a + reach
        reach = self.aperture_km + REACH_SIGMAS * self.sigma_km
        d = np.linspace(0.0, reach, 512)
        self._d = d
        self._e = ncx2.cdf((self.aperture_km / self.sigma_km) ** 2, 2, (d / self.sigma_km) ** 2)
        self._reach = reach
        n = int(min(MAX_GRID, max(24, math.ceil(2 * reach / (self.sigma_km / PIXELS_PER_SIGMA)))))
        x = np.linspace(-reach, reach, n)
        self._cell_km2 = (x[1] - x[0]) ** 2
        gx, gy = np.meshgrid(x, x)
        keep = np.hypot(gx, gy) <= reach
        self._gx, self._gy = gx[keep], gy[keep]
        self._weight = np.interp(np.hypot(self._gx, self._gy), d, self._e) * self._cell_km2
        self._cache = {}

    # ---------------------------------------------------------------- the scene
    def surface_if(self, f_km, g_km):
        """(planet I/F, ring I/F) of the scene at sky offsets (arrays)."""
        f = np.asarray(f_km, dtype=float)
        g = np.asarray(g_km, dtype=float)
        u = f * math.cos(self.p) - g * math.sin(self.p)
        w = f * math.sin(self.p) + g * math.cos(self.p)
        sb_obs = max(abs(math.sin(self.b)), 1e-6)
        sbs = max(abs(math.sin(self.b_star)), 1e-6)
        r = np.hypot(u, w / sbs)
        req = self.body.equatorial_radius_km
        minor = math.sqrt((req * math.sin(self.b)) ** 2
                          + (self.body.polar_radius_km * math.cos(self.b)) ** 2)
        on_disk = (u / req) ** 2 + (w / minor) ** 2 <= 1.0
        far = w * math.copysign(1.0, self.b_star) < 0
        tau = np.zeros(r.shape)
        for reg in self.body.rings:
            tau[(r >= reg.inner_km) & (r < reg.outer_km)] = reg.optical_depth
        for gap in self.body.gaps:
            tau[(r >= gap.inner_km) & (r < gap.outer_km)] = 0.0
        for reg in self.body.rings:  # ringlets inside gaps
            if any(gp.inner_km <= reg.inner_km and reg.outer_km <= gp.outer_km for gp in self.body.gaps):
                tau[(r >= reg.inner_km) & (r < reg.outer_km)] = reg.optical_depth
        ring_if = self.ring_if * (1.0 - np.exp(-2.0 * tau / sb_obs))
        ring_if = np.where(far & on_disk, 0.0, ring_if)
        planet_if = np.where(on_disk, self.albedo * np.where(far, 1.0, np.exp(-tau / sb_obs)), 0.0)
        return planet_if, ring_if

    # ---------------------------------------------------------------- the aperture
    def rates(self, f_km: float, g_km: float) -> dict:
        """Detected photons/s from the planet and the rings in an aperture centred at (f, g)."""
        planet, ring = self.rates_many(np.array([f_km]), np.array([g_km]))
        return {"planet_rate_photons_s": float(planet[0]), "ring_rate_photons_s": float(ring[0]),
                "rate_photons_s": float(planet[0] + ring[0])}

    def rates_many(self, f_km, g_km):
        """(planet, ring) photons/s in apertures centred at many sky positions (arrays).

        Positions are quantized to a twentieth of the seeing sigma and cached."""
        q = self.sigma_km / 20.0
        keys = list(zip(np.round(np.asarray(f_km) / q).astype(np.int64).tolist(),
                        np.round(np.asarray(g_km) / q).astype(np.int64).tolist()))
        todo = sorted({k for k in keys if k not in self._cache})
        for chunk in range(0, len(todo), 64):
            part = np.array(todo[chunk:chunk + 64], dtype=float) * q
            fx = part[:, :1] + self._gx[None, :]
            gx = part[:, 1:] + self._gy[None, :]
            planet_if, ring_if = self.surface_if(fx, gx)
            planet = planet_if @ self._weight * self.rate_per_km2_if1
            ring = ring_if @ self._weight * self.rate_per_km2_if1
            for k, pl, rg in zip(todo[chunk:chunk + 64], planet, ring):
                self._cache[k] = (float(pl), float(rg))
        out = np.array([self._cache[k] for k in keys]).reshape(-1, 2)
        return out[:, 0], out[:, 1]

    def describe(self) -> dict:
        return {"model": "planet disk at its geometric albedo and rings at I/F_thick (1 - "
                         "exp(-2 tau/|sin B|)), convolved with a Gaussian seeing profile and "
                         "summed over the aperture (occplan.skylight)",
                "seeing_fwhm_arcsec": self.sigma_km / GAUSS_FWHM_TO_SIGMA / self.km_per_arcsec,
                "aperture_radius_km": self.aperture_km, "planet_geometric_albedo": self.albedo,
                "ring_if_thick": self.ring_if, "evaluated": self.evaluated, "notes": list(self.notes)}
