"""How wrong Earth orientation gets past the end of its table: a backtest on IERS data.

Run: python benchmarks/eop_extrapolation.py

occplan's time scale reads UT1-UTC and polar motion from the IERS finals2000A file shipped
in the astropy-iers-data package (observed values, then about a year of IERS predictions).
Past the file's end skyfield extrapolates delta T = TT - UT1 with a spline from the last
year's slope towards its long-term parabola, and holds polar motion at its last value.
This script cuts the observed part of the same file at dates from 1985 to 2026 (every
quarter year), extrapolates the way occplan does, and compares with what was observed
90 days to 3 years later.  Printed: the rms, 68th and 95th percentile errors of UT1 (s)
and of polar motion (arcsec, the larger of x and y).  The rms values are the table
``ephemeris.EXTRAPOLATION_UT1_RMS_S`` / ``EXTRAPOLATION_POLAR_RMS_ARCSEC`` quotes.
"""

from __future__ import annotations

import warnings

import numpy as np

HORIZONS_DAYS = (90, 182, 365, 548, 730, 1095)


def main() -> None:
    warnings.simplefilter("ignore")
    from skyfield.timelib import build_delta_t

    from occplan.ephemeris import read_finals

    fin = read_finals()
    obs = fin["ut1_flag"] == "I"
    tt, dt = fin["tt_jd"][obs], fin["delta_t_s"][obs]
    x, y = fin["x_arcsec"][obs], fin["y_arcsec"][obs]
    ut1 = {h: [] for h in HORIZONS_DAYS}
    pm = {h: [] for h in HORIZONS_DAYS}
    for cut_year in np.arange(1985.0, 2026.0, 0.25):
        i = int(np.searchsorted(tt, 2451545.0 + (cut_year - 2000.0) * 365.25))
        delta_t = build_delta_t((tt[:i], dt[:i]))
        for h in HORIZONS_DAYS:
            j = i + h  # the observed rows are daily
            if j < tt.size:
                ut1[h].append(float(delta_t(tt[j])) - dt[j])
                pm[h].append(max(abs(x[j] - x[i - 1]), abs(y[j] - y[i - 1])))
    print("days  cases  UT1 rms  p68    p95 (s)   polar rms  p68    p95 (arcsec)")
    for h in HORIZONS_DAYS:
        u, p = np.abs(ut1[h]), np.abs(pm[h])
        print(f"{h:4d}  {u.size:5d}  {np.sqrt(np.mean(u**2)):6.3f}  {np.percentile(u, 68):6.3f} "
              f"{np.percentile(u, 95):6.3f}    {np.sqrt(np.mean(p**2)):6.3f}  "
              f"{np.percentile(p, 68):6.3f} {np.percentile(p, 95):6.3f}")


if __name__ == "__main__":
    main()
