"""Benchmark of risk-day screening on a generated network.

Writes a section file of N sections sharing the three bundled 30-year sample
climates (``climate_samples/``: two hourly records, one daily), with track
azimuths drawn uniformly over 0-360 degrees, four standard track constructions
(rail and sleeper), eight design radii (tangent included), two ballast states,
shade, the default misalignment, neutral temperatures 25-40 degC and dated events (tamping, ballast work, destressing, renewal), then screens every
section from scratch (new Assessor, empty rail-temperature and stability
caches) and prints, for 100, 1,000 and 5,000 sections, the wall time of the whole
``trackplan screen`` command (with and without ``--out``) and then the time of
each step run one after the other in one process.
Target (issue 6): 1,000 sections x 30 years in at most 30 s, cost growing
linearly with the number of sections.

Run: ``python bench/bench_screening.py [N ...]`` (default 100 1000 5000).
"""

from __future__ import annotations

import datetime as dt
import resource
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
RECORDS = ["kestrel_plains_hourly.csv.gz", "gullhaven_quay_hourly.csv.gz", "quennick_sands_daily.csv.gz"]


def make_network(folder: Path, n: int, seed: int = 11) -> Path:
    """Section file of ``n`` sections on the bundled sample climates."""
    rng = np.random.default_rng(seed)
    # a railway builds with a few standard track constructions (rail, sleeper) and design radii;
    # the stability analysis runs once per distinct track and ballast state, so their number matters
    constructions = [("60E1", "concrete"), ("60E1", "concrete"), ("54E1", "concrete"), ("54E1", "timber"),
                     ("136RE", "timber")]
    ballast = ["consolidated"] * 4 + ["partial"]
    radii = [None, None, None, 400, 600, 800, 1200, 2000]
    lines = ['[defaults]', 'drift_allowance = "5 K"', '']
    for i in range(n):
        rec = (ROOT / "climate_samples" / RECORDS[i % len(RECORDS)]).as_posix()
        r = radii[rng.integers(len(radii))]
        k = int(rng.integers(len(constructions)))
        lines += [
            f"[sections.S{i:05d}]",
            f'climate = "{rec}"',
            f'rail = "{constructions[k][0]}"',
            f'sleeper = "{constructions[k][1]}"',
            f'ballast = "{ballast[rng.integers(len(ballast))]}"',
            f'track_azimuth = "{rng.uniform(0, 360):.1f} deg"',
            f"shade = {rng.choice([0.0, 0.0, 0.0, 0.3]):.1f}",
            f'neutral_temperature = "{rng.uniform(25, 40):.1f} degC"',
            "neutral_date = 1996-05-01",
        ]
        if r is not None:
            lines.append(f'radius = "{r} m"')
        # events: about half the sections tamped once or twice, a fifth destressed, a few renewed
        day = dt.date(1997, 1, 1)
        for _ in range(int(rng.integers(0, 4))):
            day = day + dt.timedelta(days=int(rng.integers(200, 2500)))
            if day > dt.date(2024, 6, 1):
                break
            kind = rng.choice(["tamping", "tamping", "ballast-work", "destress", "renewal"])
            lines += ["", f"[[sections.S{i:05d}.events]]", f"date = {day.isoformat()}", f'kind = "{kind}"']
            if kind in ("destress", "renewal"):
                lines.append(f'neutral_temperature = "{rng.uniform(25, 40):.1f} degC"')
            if kind != "destress":
                lines.append(f"recovery_days = {int(rng.integers(10, 60))}")
        lines.append("")
    f = folder / f"network_{n}.toml"
    f.write_text("\n".join(lines))
    return f


def run(n: int, folder: Path) -> dict:
    from trackplan import railtemp, stability
    from trackplan.assess import Assessor
    from trackplan.cli import screen as screen_cli
    from trackplan.screening import ScreenOptions, Screener, flagged_frame, section_json
    from trackplan.sections import load_sections

    net = make_network(folder, n)
    railtemp.clear_prepared_cache()
    stability.clear_cache()
    t = {}
    t0 = time.perf_counter()
    sf = load_sections(net, strict=True)
    t["load"] = time.perf_counter() - t0

    assessor = Assessor()
    screener = Screener(assessor, ScreenOptions())
    # split the cached inputs from the screening itself: daily series and stability results first
    t0 = time.perf_counter()
    for s in sf.sections:
        assessor.daily(s)
    t["daily"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    from trackplan.sections import BALLAST_STATES

    for s in sf.sections:
        for b in BALLAST_STATES[BALLAST_STATES.index(s.ballast):]:
            if b == s.ballast or any(e.recovery_days for e in s.events):
                screener.stability(s, b)
        screener.resistance(s)
    t["stability"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    result = screener.screen_all(sf.sections)
    t["screen"] = time.perf_counter() - t0
    assert not result.problems, result.problems[:3]
    t0 = time.perf_counter()
    [section_json(r) for r in result.sections]
    rows = len(flagged_frame(result))
    t["json+csv frames"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    screen_cli.write_outputs(folder / f"out_{n}", result, net, "si")
    t["files (csv, png)"] = time.perf_counter() - t0
    t["total"] = sum(t.values())
    t["_keys"] = (len(assessor._daily), len(screener._stab), rows)
    return t


def run_command(n: int, folder: Path, with_out: bool) -> float:
    """Wall time of the real ``trackplan screen`` command (in-process, caches emptied first):
    what a user waits for, with the record groups shared out to worker processes."""
    from typer.testing import CliRunner

    from trackplan import railtemp, stability
    from trackplan.cli import app

    net = make_network(folder, n)
    railtemp.clear_prepared_cache()
    stability.clear_cache()
    args = ["screen", str(net), "--json"] + (["--out", str(folder / f"cmd_{n}")] if with_out else [])
    t0 = time.perf_counter()
    res = CliRunner().invoke(app, args)
    dt = time.perf_counter() - t0
    if res.exit_code != 0:
        raise SystemExit(f"screen failed ({res.exit_code}): {res.output[-1500:]}")
    return dt


def main() -> None:
    sizes = [int(a) for a in sys.argv[1:]] or [100, 1000, 5000]
    with tempfile.TemporaryDirectory() as tmp:
        rows = []
        for n in sizes:
            t_cmd = run_command(n, Path(tmp), with_out=False)
            t_out = run_command(n, Path(tmp), with_out=True)
            print(f"{n:>5} sections x 30 years: `trackplan screen` {t_cmd:.1f} s, with --out {t_out:.1f} s "
                  "(whole command, from scratch)", flush=True)
            t = run(n, Path(tmp))
            keys = t.pop("_keys")
            rows.append((n, t))
            parts = ", ".join(f"{k} {v:.1f} s" for k, v in t.items() if k != "total")
            print(f"{n:>5} sections x 30 years: total {t['total']:.1f} s ({parts}); "
                  f"{keys[0]} daily series, {keys[1]} stability analyses, {keys[2]} flagged days", flush=True)
        peak_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
        print(f"peak memory {peak_mb:.0f} MB; target: 1,000 sections in at most 30 s, linear in sections")
        if len(rows) > 1:
            (n0, t0), (n1, t1) = rows[0], rows[-1]
            per0 = t0["screen"] / n0 * 1e3
            per1 = t1["screen"] / n1 * 1e3
            print(f"screening step per section: {per0:.2f} ms at {n0}, {per1:.2f} ms at {n1}")


if __name__ == "__main__":
    main()
