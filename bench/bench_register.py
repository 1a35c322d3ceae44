"""Neutral-temperature register: write throughput and concurrent writers.

Creates a register in a temporary folder with one section, then
1. one process appends N entries, one transaction each (entries per second);
2. P processes append N entries each at the same time; checks that none is lost.
Run: ``python bench/bench_register.py [N] [P]`` (default 200 entries, 6 processes).
"""

from __future__ import annotations

import datetime as dt
import multiprocessing as mp
import sqlite3
import sys
import tempfile
import time
from pathlib import Path

from trackplan import register as R


def _writer(path, name, n, barrier):
    reg = R.open_register(path)
    barrier.wait()
    for i in range(n):
        reg.log(R.NewEntry("B-1", "note", dt.date(2024, 1, 1), name, note=f"{name} {i}"))


def main(n: int = 200, procs: int = 6) -> None:
    with tempfile.TemporaryDirectory() as d:
        path = Path(d) / "bench.sqlite"
        reg = R.open_register(path, create=True)
        with reg.transaction() as w:
            w.add_section("B-1", "bench section", "", "bench", "bench")
        t0 = time.perf_counter()
        for i in range(n):
            reg.log(R.NewEntry("B-1", "note", dt.date(2024, 1, 1), "one", note=str(i)))
        t1 = time.perf_counter()
        print(f"one writer: {n} entries in {t1 - t0:.2f} s ({n / (t1 - t0):.0f} entries/s, one transaction each)")
        ctx = mp.get_context("fork")
        barrier = ctx.Barrier(procs)
        ps = [ctx.Process(target=_writer, args=(path, f"w{k}", n, barrier)) for k in range(procs)]
        t0 = time.perf_counter()
        for p in ps:
            p.start()
        for p in ps:
            p.join()
        t1 = time.perf_counter()
        with sqlite3.connect(path) as c:
            total = c.execute("SELECT count(*) FROM entries").fetchone()[0]
        lost = n + procs * n - total
        print(f"{procs} writers at once: {procs * n} entries in {t1 - t0:.2f} s; lost {lost}; "
              f"exit codes {[p.exitcode for p in ps]}; verify: {R.open_register(path).verify() or 'consistent'}")


if __name__ == "__main__":
    main(*(int(a) for a in sys.argv[1:3]))
