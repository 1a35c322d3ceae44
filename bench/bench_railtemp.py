"""Benchmark: 30 years of hourly records to design rail temperatures.

Prints the time of each step for the synthetic 30-year hourly sample
``climate_samples/kestrel_plains_hourly.csv.gz`` (about 263,000 rows): read,
solar preparation, transient rail temperature and daily extremes, annual
extremes with the Gumbel fit and bootstrap interval. The issue's target is
under 3 s in total. Then the per-section cost once the record is prepared
(what the ``check`` command pays for every section sharing a record).

Run: ``python bench/bench_railtemp.py [FILE]``
"""

from __future__ import annotations

import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def main(path: str | None = None) -> None:
    t0 = time.perf_counter()
    from trackplan import extremes, railtemp, rails, weather

    t_import = time.perf_counter() - t0
    path = path or str(ROOT / "climate_samples" / "kestrel_plains_hourly.csv.gz")
    t = time.perf_counter()
    df, meta = weather.read_record(path)
    t_read = time.perf_counter() - t
    site = railtemp.RailSite(meta["latitude_deg"], meta["longitude_deg"], meta["elevation_m"] or 0.0,
                             track_azimuth_deg=30.0)
    profile = rails.get_profile("60E1")
    t = time.perf_counter()
    prep = railtemp.prepare_solar(df, meta, site)
    t_prep = time.perf_counter() - t
    t = time.perf_counter()
    daily = railtemp.daily_rail_extremes(df, meta, profile, site, prepared=prep)
    t_rail = time.perf_counter() - t
    t = time.perf_counter()
    de = extremes.design_extremes(daily, 50, "gumbel", years=meta["years"])
    t_fit = time.perf_counter() - t
    total = t_read + t_prep + t_rail + t_fit
    print(f"record: {path} ({len(df)} rows, {de.years} complete years)")
    print(f"import trackplan.weather/railtemp/extremes: {t_import:6.3f} s (not counted)")
    print(f"read record                                : {t_read:6.3f} s")
    print(f"solar position, irradiance split, dates    : {t_prep:6.3f} s")
    print(f"transient rail temperature + daily extremes: {t_rail:6.3f} s")
    print(f"annual extremes, Gumbel fit, bootstrap     : {t_fit:6.3f} s")
    print(f"total                                      : {total:6.3f} s  (target < 3 s)")
    print(f"design max {de.design_max_rail_temperature_C:.1f} degC (CI {de.max_ci_C[0]:.1f}-{de.max_ci_C[1]:.1f}), "
          f"design min {de.design_min_rail_temperature_C:.1f} degC")
    # per section, record prepared
    n = 20
    t = time.perf_counter()
    for k in range(n):
        s = railtemp.RailSite(site.latitude_deg, site.longitude_deg, site.elevation_m,
                              track_azimuth_deg=9.0 * k, shade_factor=0.05 * (k % 5))
        d = railtemp.daily_rail_extremes(df, meta, profile, s, prepared=prep)
        extremes.design_extremes(d, 50, "gumbel", years=meta["years"])
    per = (time.perf_counter() - t) / n
    print(f"per section (prepared record): {per * 1e3:6.1f} ms -> 1000 sections about {per * 1000:5.1f} s "
          "plus one read and preparation per record")


if __name__ == "__main__":
    main(sys.argv[1] if len(sys.argv) > 1 else None)
