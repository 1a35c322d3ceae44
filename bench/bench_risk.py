"""Benchmark and error measurement of the buckling probability.

1. The stand-in of the stability model (trackplan.surrogate) for four track families (60E1 on
   concrete sleepers, consolidated and partly consolidated, tangent; 60E1 on timber, consolidated,
   tangent; 54E1 on timber, partly consolidated, 600 m curve): build time, error against the full
   model on 300 random points of the domain (overall, and for misalignments of 10 mm and more) and
   on 300 points drawn with the default spreads, and the time of 1e5 evaluations (target under 1 s).
2. The Monte Carlo over a generated network of N sections on the three bundled 30-year sample
   climates (four track families): the time to build the network's stand-ins, then the wall time of
   ``RiskRunner.run_all`` with N sections x 10,000 samples with the stand-ins cached (target:
   1,000 sections in at most 120 s; it includes the daily rail temperatures of every record and
   orientation).

Run: ``python bench/bench_risk.py [N]`` (default 1000). The stand-ins are cached in a temporary
folder (``TRACKPLAN_CACHE_DIR``), so the first run measures the build.
"""

from __future__ import annotations

import os
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
RECORDS = ["kestrel_plains_hourly.csv.gz", "gullhaven_quay_hourly.csv.gz", "quennick_sands_daily.csv.gz"]


def stand_in(folder: Path) -> None:
    from trackplan import rails, surrogate, thermal
    from trackplan.track import build_track

    for rail, sleeper, ballast, radius in (("60E1", "concrete", "consolidated", None),
                                           ("60E1", "concrete", "partial", None),
                                           ("60E1", "timber", "consolidated", None),
                                           ("54E1", "timber", "partial", 600.0)):
        base = build_track(rails.get_profile(rail), thermal.default_steel(False), sleeper=sleeper, ballast=ballast,
                           radius_m=radius)
        t = time.perf_counter()
        s = surrogate.load_or_build(base, test_points=0)  # cached: the network below reuses it
        tb = time.perf_counter() - t
        n_pts = int(np.prod([a.size for a in s.axes]))
        t = time.perf_counter()
        e = surrogate.measure_error(s, 300, seed=3)
        tm = time.perf_counter() - t
        x = np.random.default_rng(0)
        pf = np.exp(0.25 * x.standard_normal(100_000))
        lf = np.exp(0.29 * x.standard_normal(100_000))
        mm = 0.02 * np.exp(0.4 * x.standard_normal(100_000))
        t = time.perf_counter()
        s.interpolate(pf, lf, mm)
        te = time.perf_counter() - t
        print(f"{rail}/{sleeper}/{ballast}/{'tangent' if radius is None else f'R {radius:.0f} m'}: "
              f"grid {n_pts} points built in {tb:.1f} s ({s.filled_points} filled), "
              f"300 test points in {tm:.1f} s; error max {e['max_error_pct']:.2f} %, 95th percentile "
              f"{e['p95_error_pct']:.2f} %, mean {e['mean_error_pct']:.2f} % ({e['failed']} test points failed in "
              f"the full model); largest overstatement (unsafe side) {e['max_overstatement_pct']:.2f} %; share of "
              f"points within 2 %: {e['share_within_2pct']:.1%}; below 80 K ({e['points_below_80K']} points): max {e['max_error_below_80K_pct']:.2f} %; "
              f"allowable rise max {e['allowable_max_error_pct']:.2f} %, upper critical rise max "
              f"{e['upper_max_error_pct']:.1f} %; 1e5 evaluations {te * 1e3:.0f} ms")
        # the same on points drawn as the Monte Carlo draws them with the default spreads
        from trackplan import risk

        d = risk.defaults()
        sp = (np.sqrt(np.log1p(d["peak_resistance_cov"].value ** 2)),
              np.sqrt(np.log1p(d["longitudinal_resistance_cov"].value ** 2)), d["misalignment_spread"].value)
        e2 = surrogate.measure_error(s, 300, seed=4, spreads=sp)
        print(f"   300 points drawn with the default spreads: max {e2['max_error_pct']:.2f} %, 95th percentile "
              f"{e2['p95_error_pct']:.2f} %, mean {e2['mean_error_pct']:.2f} %, largest overstatement "
              f"{e2['max_overstatement_pct']:.2f} %, within 2 %: {e2['share_within_2pct']:.1%}, "
              f"allowable rise max {e2['allowable_max_error_pct']:.2f} %")
        # the same measured where the misalignment is 10 mm or more
        rng = np.random.default_rng(3)
        lo = np.log([a[0] for a in s.axes])
        hi = np.log([a[-1] for a in s.axes])
        lo[2] = np.log(0.010)
        X = np.exp(lo + (hi - lo) * rng.random((300, 3)))
        full = np.array([surrogate.full_model(s.base, *p)[0] for p in X])
        sur = s.interpolate(X[:, 0], X[:, 1], X[:, 2])
        ok = np.isfinite(full)
        err = np.abs(sur[ok] - full[ok]) / full[ok] * 100
        print(f"   misalignment 10 mm and more: max {err.max():.2f} %, 95th percentile {np.percentile(err, 95):.2f} %, "
              f"share of points within 2 %: {np.mean(err <= 2.0):.1%}")
        print("   worst points (peak factor, longitudinal factor, misalignment m, full K, stand-in K):")
        for w in e["worst"][:3]:
            print("     ", tuple(round(v, 4) for v in w))


def make_network(folder: Path, n: int, seed: int = 5) -> Path:
    rng = np.random.default_rng(seed)
    tracks = [("60E1", "concrete", "consolidated", None), ("60E1", "concrete", "partial", None),
              ("54E1", "timber", "consolidated", 600), ("54E1", "timber", "partial", 600)]
    bases = ["measured", "destressed", "laid", "estimated", "unknown"]
    lines = ['[defaults]', 'drift_allowance = "5 K"', '']
    for i in range(n):
        rail, sleeper, ballast, radius = tracks[int(rng.integers(len(tracks)))]
        lines += [f"[sections.S{i:05d}]", f'climate = "{(ROOT / "climate_samples" / RECORDS[i % 3]).as_posix()}"',
                  f'rail = "{rail}"', f'sleeper = "{sleeper}"', f'ballast = "{ballast}"',
                  f'track_azimuth = "{rng.uniform(0, 180):.0f} deg"',
                  f'neutral_temperature = "{rng.uniform(18, 40):.1f} degC"',
                  f"neutral_date = {2000 + int(rng.integers(0, 25))}-05-01",
                  f'neutral_basis = "{bases[int(rng.integers(len(bases)))]}"']
        if radius is not None:
            lines.append(f'radius = "{radius} m"')
        lines.append("")
    f = folder / f"network_{n}.toml"
    f.write_text("\n".join(lines))
    return f


def network(folder: Path, n: int) -> None:
    from trackplan.risk_network import RiskOptions, RiskRunner
    from trackplan.sections import load_sections

    f = make_network(folder, n)
    sf = load_sections(f)
    t = time.perf_counter()
    RiskRunner(RiskOptions(samples=10_000, seed=1)).prepare(sf.sections)
    print(f"stand-ins of the network's other families built (and each measured on 40 points): "
          f"{time.perf_counter() - t:.1f} s")
    t = time.perf_counter()
    runner = RiskRunner(RiskOptions(samples=10_000, seed=1))
    res = runner.run_all(sf.sections)
    dt_ = time.perf_counter() - t
    seasons = {len(s.seasons) for s in res.sections}
    print(f"{n} sections x 10,000 samples x {min(seasons)}-{max(seasons)} seasons (stand-ins cached; with the "
          f"drivers and both what-ifs, 9 estimates a section): {dt_:.1f} s; {len(res.problems)} problems; network "
          f"{res.network_expected_buckles_per_year:.2f} expected buckles per year; {res.surrogate_families} "
          f"families, largest error on their build test points {res.surrogate_max_error_pct:.1f} % (overstating "
          f"by at most {res.surrogate_max_overstatement_pct:.1f} %)")


if __name__ == "__main__":
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 1000
    with tempfile.TemporaryDirectory() as tmp:
        os.environ["TRACKPLAN_CACHE_DIR"] = tmp
        stand_in(Path(tmp))
        network(Path(tmp), n)
    print("(figures taken on a shared machine)")
