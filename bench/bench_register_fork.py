"""Neutral-temperature register: writers forked from a parent, run many times; counts lost entries.

Each run copies a register (the example network imported), forks three writer processes (the
"fork" start method) that append 25 entries each, one transaction each, as
``tests/test_register.py::test_three_processes_logging_at_once_lose_nothing`` does, and then
counts the entries with a fresh connection (again after 0.2 s, to tell a late view from a loss).

A run is
- *lost* when every writer exited 0 (reported all its writes done) and entries are missing, or
  two writers were given the same entry id;
- *refused* when a writer refused to connect to a register it inherited open from the parent
  (``ForkedConnectionError``): a loud failure, nothing reported done is missing;
- *failed* when a writer stopped with another error;
- *hung* when a writer gave no answer within 60 s (a child forked while another thread of the
  parent was inside SQLite, e.g. the collector closing a leaked connection, inherits SQLite's
  global lock held and waits for it forever; the other writers then wait at the start line).

Options (any combination):
  --leak        the parent counts the entries just before forking with a ``sqlite3`` connection
                that it leaves to the garbage collector (``with sqlite3.connect(p) as c:`` does not
                close; a connection is freed only by the cycle collector), so the children inherit
                an open connection to the register
  --open        the parent holds a connection open across the fork and closes it 50 ms later
  --parent-gc   a thread of the parent runs the garbage collector every 10 ms while the children
                write (what the threads of a Dask cluster in the parent make happen)
  --dask        an in-process Dask LocalCluster alive in the parent (as in the test session)
  --load N      N busy-loop processes beside the run

Run: ``python bench/bench_register_fork.py [RUNS] [options]`` (default 40 runs).
"""

from __future__ import annotations

import argparse
import datetime as dt
import gc
import multiprocessing as mp
import queue as queue_module
import shutil
import sqlite3
import tempfile
import threading
import time
from pathlib import Path

from trackplan import register as R
from trackplan.samples import example_network

WRITERS, ENTRIES = 3, 25


def _writer(path, name, barrier, queue):
    try:
        reg = R.open_register(path)
        barrier.wait()
        ids = [reg.log(R.NewEntry("KP-102", "note", dt.date(2024, 1, 1), name, note=f"{name} {i}"))
               for i in range(ENTRIES)]
        queue.put((name, "ok", ids))
    except getattr(R, "ForkedConnectionError", ()):  # (absent before the register refused it)
        queue.put((name, "refused", []))
        barrier.abort()
    except Exception as exc:  # noqa: BLE001 - every other failure is counted, then reported
        queue.put((name, f"error {type(exc).__name__}: {exc}", []))
        barrier.abort()


def _leaky_count(path) -> int:
    with sqlite3.connect(path) as c:  # not closed: left to the garbage collector
        return c.execute("SELECT count(*) FROM entries").fetchone()[0]


def _count(path) -> int:
    c = sqlite3.connect(path)
    try:
        return c.execute("SELECT count(*) FROM entries").fetchone()[0]
    finally:
        c.close()


def _busy():
    while True:
        pass


def _collector():
    while True:
        time.sleep(0.01)
        gc.collect(0)


def one_run(path: Path, ctx, leak: bool, hold_open: bool) -> tuple[str, str]:
    R.open_register(path).engine.dispose()
    n0 = _leaky_count(path) if leak else _count(path)
    held = sqlite3.connect(path) if hold_open else None
    if held is not None:
        held.execute("SELECT count(*) FROM entries").fetchone()
    queue, barrier = ctx.Queue(), ctx.Barrier(WRITERS)
    procs = [ctx.Process(target=_writer, args=(path, f"w{k}", barrier, queue)) for k in range(WRITERS)]
    for p in procs:
        p.start()
    if held is not None:
        time.sleep(0.05)
        held.close()
    results = []
    try:
        for _ in procs:
            results.append(queue.get(timeout=60))
    except queue_module.Empty:  # a writer stuck (see "hung" above): end them all
        for p in procs:
            if p.is_alive():
                p.kill()
    for p in procs:
        p.join(60)
    n1 = _count(path)
    time.sleep(0.2)
    n2 = _count(path)
    if len(results) < len(procs):
        return "hung", f"{len(procs) - len(results)} writers gave no answer in 60 s"
    states = [s for _, s, _ in results]
    ids = [i for _, _, got in results for i in got]
    detail = (f"entries {n1 - n0} of {WRITERS * ENTRIES} (after 0.2 s: {n2 - n0}), ids given {len(ids)}, "
              f"distinct {len(set(ids))}, writers {states}")
    if all(s == "ok" for s in states):
        return ("lost" if n1 != n0 + WRITERS * ENTRIES or len(set(ids)) != len(ids) else "ok"), detail
    if any(s == "refused" for s in states):
        return "refused", detail
    return "failed", detail


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("runs", type=int, nargs="?", default=40)
    ap.add_argument("--leak", action="store_true")
    ap.add_argument("--open", action="store_true")
    ap.add_argument("--parent-gc", action="store_true")
    ap.add_argument("--dask", action="store_true")
    ap.add_argument("--load", type=int, default=0)
    ap.add_argument("--verbose", action="store_true")
    a = ap.parse_args()
    ctx = mp.get_context("fork")
    loaders = [ctx.Process(target=_busy, daemon=True) for _ in range(a.load)]
    for p in loaders:
        p.start()
    stack = []
    if a.dask:
        from dask.distributed import Client, LocalCluster

        cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=False, dashboard_address="127.0.0.1:0",
                               host="127.0.0.1", protocol="tcp")
        stack += [cluster, Client(cluster)]
    if a.parent_gc:
        threading.Thread(target=_collector, daemon=True).start()
    from trackplan.sections import load_sections

    counts = {"ok": 0, "lost": 0, "refused": 0, "failed": 0, "hung": 0}
    t0 = time.perf_counter()
    with tempfile.TemporaryDirectory() as d:
        base = Path(d) / "base.sqlite"
        reg = R.open_register(base, create=True)
        reg.import_sections(load_sections(example_network()).sections, "bench", "network.toml")
        reg.engine.dispose()
        for k in range(a.runs):
            path = Path(d) / f"run{k}.sqlite"
            shutil.copy(base, path)
            outcome, detail = one_run(path, ctx, a.leak, a.open)
            counts[outcome] += 1
            if outcome != "ok" and (a.verbose or outcome == "lost"):
                print(f"run {k}: {outcome}: {detail}", flush=True)
            for f in Path(d).glob(f"run{k}.sqlite*"):
                f.unlink()
    for obj in reversed(stack):
        obj.close()
    for p in loaders:
        p.kill()
    opts = [o for o, on in (("leak", a.leak), ("open", a.open), ("parent-gc", a.parent_gc), ("dask", a.dask)) if on]
    print(f"{a.runs} runs ({', '.join(opts) or 'no open connection in the parent'}; load {a.load}) in "
          f"{time.perf_counter() - t0:.0f} s: " + ", ".join(f"{k} {v}" for k, v in counts.items()))


if __name__ == "__main__":
    main()
