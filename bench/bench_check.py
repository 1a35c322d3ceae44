"""Benchmark of ``trackplan check`` on a generated network.

Generates 20 synthetic hourly climate records of 30 years (the sample-climate
generator, ``climate_samples/generate.py``, with other seeds and shifted
coordinates) and a section file of N sections (default 1,000) sharing them, with
varied rail profiles, sleepers, ballast states, curve radii, azimuths and shade.
Then runs the check command in-process and prints the wall time and the peak
resident memory. Target (issue 5): 1,000 sections in at most 60 s and 2 GB.

Run: ``python bench/bench_check.py [N_SECTIONS]``.
"""

from __future__ import annotations

import dataclasses
import resource
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "climate_samples"))


def make_records(folder: Path, n_records: int = 20) -> list[Path]:
    import generate  # climate_samples/generate.py

    hourly = [s for s in generate.STATIONS if s.hourly]
    paths = []
    for i in range(n_records):
        base = hourly[i % len(hourly)]
        st = dataclasses.replace(base, key=f"bench_{i:02d}", name=f"Bench Station {i:02d}",
                                 latitude=base.latitude + 0.3 * i * (1 if base.latitude > 0 else -1),
                                 longitude=base.longitude + 0.2 * i, mean_C=base.mean_C + 0.2 * (i % 5))
        p = folder / f"bench_{i:02d}.csv.gz"
        p.write_bytes(generate.render(st, np.random.default_rng(1000 + i)))
        paths.append(p)
    return paths


def make_network(folder: Path, records: list[Path], n: int, seed: int = 7) -> Path:
    rng = np.random.default_rng(seed)
    lines = ['[defaults]', 'rail = "60E1"', 'drift_allowance = "5 K"', '']
    rails = ["60E1", "54E1", "UIC60", "136RE"]
    sleepers = ["concrete", "concrete", "timber", "steel"]
    ballast = ["consolidated", "consolidated", "consolidated", "partial", "disturbed"]
    for i in range(n):
        lines += [
            f"[sections.S{i:05d}]",
            f'climate = "{records[i % len(records)].name}"',
            f'rail = "{rails[rng.integers(len(rails))]}"',
            f'sleeper = "{sleepers[rng.integers(len(sleepers))]}"',
            f'ballast = "{ballast[rng.integers(len(ballast))]}"',
            f'track_azimuth = "{rng.uniform(0, 360):.1f} deg"',
            f'shade = {rng.choice([0.0, 0.0, 0.0, 0.3, 0.6]):.1f}',
            f'misalignment = "{rng.choice([10, 20, 30])} mm"',
            f'neutral_temperature = "{rng.uniform(20, 40):.1f} degC"',
        ]
        if rng.random() < 0.5:
            lines.append(f'radius = "{rng.choice([300, 450, 600, 800, 1200, 2000])} m"')
        lines.append("")
    f = folder / "network.toml"
    f.write_text("\n".join(lines))
    return f


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 1000
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        t0 = time.perf_counter()
        records = make_records(folder)
        net = make_network(folder, records, n)
        print(f"generated 20 hourly records x 30 years and {n} sections in {time.perf_counter() - t0:.1f} s")
        from typer.testing import CliRunner

        from trackplan.assess import Assessor
        from trackplan.cli import app
        from trackplan.sections import load_sections

        # the phases, on their own (new Assessor: nothing cached)
        t0 = time.perf_counter()
        sf = load_sections(net)
        t1 = time.perf_counter()
        a = Assessor()
        a.prepare_stability(sf.sections)
        t2 = time.perf_counter()
        results, problems = a.assess_all(sf.sections)
        t3 = time.perf_counter()
        print(f"phases: read sections {t1 - t0:.1f} s, stability of {len(a._stability)} distinct tracks "
              f"{t2 - t1:.1f} s, climate + target + check {t3 - t2:.1f} s "
              f"({len(results)} assessed, {len(problems)} problems)")

        # the whole command, in-process, from scratch
        from trackplan import railtemp, stability

        railtemp.clear_prepared_cache()
        stability.clear_cache()
        t0 = time.perf_counter()
        res = CliRunner().invoke(app, ["check", str(net), "--json"])
        dt = time.perf_counter() - t0
        if res.exit_code not in (0, 1, 2):
            print(res.output[-2000:])
            raise SystemExit(f"check failed with exit code {res.exit_code}")
        self_mb = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
        child_mb = resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss / 1024
        print(f"trackplan check: {n} sections, wall time {dt:.1f} s (exit code {res.exit_code}); peak memory "
              f"{self_mb:.0f} MB in the main process, {child_mb:.0f} MB in the largest worker process "
              f"(targets: 60 s, 2048 MB)")


if __name__ == "__main__":
    main()
