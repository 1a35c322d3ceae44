"""Benchmark: read 30 years of hourly weather (about 263,000 rows) with trackplan.weather.

Run: ``python bench/bench_weather.py``. Prints the best and median of several reads of
the packaged hourly sample (gzip CSV), of the same record as plain CSV in degF, and of a
TMY3 file. Target: well under 1 s for 30 years of hourly rows (the whole ``railtemp`` path
has a 3 s budget).
"""

from __future__ import annotations

import gzip
import statistics
import tempfile
import time
from pathlib import Path

from trackplan.weather import read_record, sample_records


def timed(path: Path, repeat: int = 5) -> tuple[float, float, int]:
    times = []
    n = 0
    for _ in range(repeat):
        t0 = time.perf_counter()
        data, _ = read_record(path)
        times.append(time.perf_counter() - t0)
        n = len(data)
    return min(times), statistics.median(times), n


def main() -> None:
    import pvlib

    samples = sample_records()
    hourly = samples["kestrel_plains"]
    with tempfile.TemporaryDirectory() as tmp:
        # the same record as plain CSV with the temperature in degF (unit conversion path)
        text = gzip.decompress(hourly.read_bytes()).decode()
        head, _, body = text.partition("time,air_temperature [degC]")
        rows = body.split("\n")
        out = [head + "time,air_temperature [degF]" + rows[0]]
        for r in rows[1:]:
            if r:
                t, a, rest = r.split(",", 2)
                out.append(f"{t},{float(a) * 1.8 + 32:.1f},{rest}")
        plain = Path(tmp) / "kestrel_degF.csv"
        plain.write_text("\n".join(out) + "\n")
        cases = [
            ("30 y hourly, gzip CSV (sample)", hourly),
            ("30 y hourly, plain CSV, degF", plain),
            ("30 y daily, gzip CSV (sample)", samples["quennick_sands"]),
            ("TMY3 Greensboro (pvlib file)", Path(pvlib.__file__).parent / "data" / "723170TYA.CSV"),
        ]
        read_record(hourly)  # warm-up (imports)
        print(f"{'record':38s} {'rows':>8s} {'best [s]':>9s} {'median [s]':>11s}")
        for name, p in cases:
            best, med, n = timed(p)
            print(f"{name:38s} {n:8d} {best:9.3f} {med:11.3f}")


if __name__ == "__main__":
    main()
