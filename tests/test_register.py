"""The neutral-temperature register store (real SQLite files): rules, corrections, migrations,
concurrent writers, a writer killed mid-transaction; the achieved neutral from mark readings."""

from __future__ import annotations

import contextlib
import datetime as dt
import multiprocessing as mp
import os
import signal
import sqlite3
from pathlib import Path

import numpy as np
import pytest

from trackplan import register as R
from trackplan.destressing import achieved_neutral_temperature, mark_movements
from trackplan.errors import InputError
from trackplan.marks import Reading, achieved_from_readings

ROOT = Path(__file__).resolve().parents[1]
EXAMPLE = ROOT / "examples" / "network.toml"
D = dt.date


@pytest.fixture(scope="module")
def imported(tmp_path_factory):
    from trackplan.sections import load_sections

    r = R.open_register(tmp_path_factory.mktemp("reg") / "reg.sqlite", create=True)
    r.import_sections(load_sections(EXAMPLE).sections, "J. Okafor", "network.toml")
    r.engine.dispose()
    return r.path


@pytest.fixture
def reg(imported, tmp_path):
    """A fresh copy of the imported example network's register."""
    import shutil

    return R.open_register(shutil.copy(imported, tmp_path / "reg.sqlite"))


@contextlib.contextmanager
def _sqlite(path):
    """A plain sqlite3 connection, committed and *closed* at the end (``with sqlite3.connect()`` alone
    does not close: the connection lives on, open, until the garbage collector frees it, and a process
    forked before that hands it to its children)."""
    c = sqlite3.connect(path)
    try:
        with c:
            yield c
    finally:
        c.close()


def _count(path) -> int:
    with _sqlite(path) as c:
        return c.execute("SELECT count(*) FROM entries").fetchone()[0]


def _held_open_here(path) -> bool:
    """Whether this process has the register (or its WAL or shared-memory file) open."""
    files = set()
    for p in (Path(path), Path(f"{path}-wal"), Path(f"{path}-shm")):
        with contextlib.suppress(OSError):
            st = os.stat(p)
            files.add((st.st_dev, st.st_ino))
    held = set()
    for fd in os.listdir("/dev/fd"):
        with contextlib.suppress(OSError, ValueError):
            st = os.fstat(int(fd))
            held.add((st.st_dev, st.st_ino))
    return bool(files & held)


def test_import_is_idempotent_and_keeps_the_file_facts(reg):
    n = _count(reg.path)
    from trackplan.sections import load_sections

    again = reg.import_sections(load_sections(EXAMPLE).sections, "J. Okafor", "network.toml")
    assert again["entries_added"] == 0 and again["sections_added"] == 0 and again["entries_present"] == n
    assert _count(reg.path) == n
    h = reg.history("KP-101")
    first = h.entries[0]
    assert (first.kind, first.date, first.neutral_temperature_C, first.basis) == ("destressed", D(2021, 5, 18), 44.0,
                                                                                  "destressed")
    assert [e.kind for e in h.entries] == ["destressed", "tamped"] and h.entries[1].recovery_days == 30
    assert first.source == "section file network.toml" and first.entered_by == "J. Okafor"


def test_log_correction_and_latest_neutral(reg):
    m = reg.log(R.NewEntry("KP-101", "measured", D(2024, 5, 1), "B. Crew", neutral_temperature_C=30.0,
                           uncertainty_K=2.0, method="rail uplift"))
    assert reg.history("KP-101").latest_neutral.id == m
    # a correction replaces the corrected entry; the corrected one stays in the history
    c = reg.log(R.NewEntry("KP-101", "measured", D(2024, 5, 1), "B. Crew", neutral_temperature_C=32.0,
                           uncertainty_K=2.0, method="rail uplift", corrects=m, note="typing slip"))
    h = reg.history("KP-101")
    assert h.latest_neutral.id == c and h.latest_neutral.neutral_temperature_C == 32.0
    assert [e.id for e in h.entries if e.corrected_by == c] == [m]
    # a note without a neutral withdraws it: the earlier neutral is the latest again
    reg.log(R.NewEntry("KP-101", "note", D(2024, 5, 2), "B. Crew", corrects=c, note="wrong section"))
    assert reg.history("KP-101").latest_neutral.neutral_temperature_C == 44.0
    assert reg.verify() == []


@pytest.mark.parametrize("entry, words", [
    (dict(section_id="NOPE", kind="note", date=D(2024, 1, 1)), "unknown section"),
    (dict(kind="measured", date=D(2024, 1, 1), neutral_temperature_C=30.0, method="uplift"), "uncertainty"),
    (dict(kind="measured", date=D(2024, 1, 1), neutral_temperature_C=30.0, uncertainty_K=2.0), "method"),
    (dict(kind="destressed", date=D(2024, 1, 1), neutral_temperature_C=85.0), "-10..60"),
    (dict(kind="measured", date=D(2024, 1, 1), neutral_temperature_C=-35.0, uncertainty_K=2, method="m"), "-30..70"),
    (dict(kind="destressed", date=D(2999, 1, 1), neutral_temperature_C=25.0), "future"),
    (dict(kind="destressed", date=D(1850, 1, 1), neutral_temperature_C=25.0), "before 1900"),
    (dict(kind="destressed", date=D(2024, 1, 1)), "needs the neutral"),
    (dict(kind="tamped", date=D(2024, 1, 1), neutral_temperature_C=25.0), "carries no neutral"),
    (dict(kind="note", date=D(2024, 1, 1), corrects=999), "no entry 999"),
    (dict(kind="note", date=D(2024, 1, 1), corrects=2), "belongs to section"),
    (dict(kind="note", date=D(2024, 1, 1), entered_by=" "), "name of the person"),
    (dict(kind="fixed", date=D(2024, 1, 1)), "accepted: laid"),
])
def test_bad_entries_are_refused_and_nothing_is_written(reg, entry, words):
    n = _count(reg.path)
    base = dict(section_id="KP-102", entered_by="B. Crew")
    with pytest.raises(InputError, match=words):
        reg.log(R.NewEntry(**{**base, **entry}))
    assert _count(reg.path) == n


def test_entries_are_append_only_in_the_database(reg):
    with _sqlite(reg.path) as c:
        for sql in ("UPDATE entries SET neutral_temperature_C = 20", "DELETE FROM entries"):
            with pytest.raises(sqlite3.DatabaseError, match="append-only"):
                c.execute(sql)


def test_correcting_twice_is_refused(reg):
    a = reg.log(R.NewEntry("KP-102", "note", D(2024, 1, 1), "X", note="a"))
    reg.log(R.NewEntry("KP-102", "note", D(2024, 1, 1), "X", note="b", corrects=a))
    with pytest.raises(InputError, match="already corrected"):
        reg.log(R.NewEntry("KP-102", "note", D(2024, 1, 1), "X", note="c", corrects=a))


def test_due_reasons(reg):
    today = D(2026, 6, 1)
    rows = {r["id"]: r for r in R.due(reg.histories(), today, R.parse_period("5y"))}
    # GQ-202 was tamped after its neutral was set
    assert "tamped_since" in rows["GQ-202"]["reason_codes"]
    # KP-102: laid 2012, more than 5 years ago, never measured
    assert rows["KP-102"]["reason_codes"] == ["not_verified", "never_measured"]
    assert rows["KP-102"]["last_verified"] == D(2012, 9, 3)
    reg.log(R.NewEntry("KP-102", "measured", D(2026, 5, 1), "B. Crew", neutral_temperature_C=23.0, uncertainty_K=2.0,
                       method="rail uplift"))
    rows = {r["id"]: r for r in R.due(reg.histories(), today, R.parse_period("5y"))}
    assert "KP-102" not in rows
    reg.log(R.NewEntry("KP-102", "laid", D(2026, 5, 2), "B. Crew", neutral_temperature_C=25.0, basis="estimated"))
    rows = {r["id"]: r for r in R.due(reg.histories(), today, R.parse_period("5y"))}
    assert rows["KP-102"]["reason_codes"] == ["basis_estimated"]
    assert R.parse_period("18m") == round(18 * 30.44) and R.parse_period("90d") == 90
    with pytest.raises(InputError, match="period"):
        R.parse_period("5 years")


def test_newer_schema_is_refused_without_writing(reg):
    path = reg.path
    reg.engine.dispose()
    with _sqlite(path) as c:
        c.execute("UPDATE meta SET value = '99' WHERE key = 'schema_version'")
    before = path.read_bytes()
    with pytest.raises(InputError, match="schema version 99"):
        R.open_register(path)
    assert path.read_bytes() == before


def test_migration_from_version_1(tmp_path):
    import sqlalchemy as sa

    path = tmp_path / "old.sqlite"
    eng = sa.create_engine(f"sqlite:///{path}")
    with eng.begin() as conn:
        R._migrate_1(conn)
        conn.execute(R.meta_table.insert().values(key="schema_version", value="1"))
        conn.execute(R.sections_table.insert().values(id="S1", source="typed", added_at="2020-01-01", added_by="X"))
        conn.execute(R.entries_table.insert().values(section_id="S1", kind="laid", date="2020-01-01",
                                                     neutral_temperature_C=25.0, basis="laid", entered_at="2020-01-01",
                                                     entered_by="X", source="typed in"))
    eng.dispose()
    reg = R.open_register(path)
    assert reg.verify() == []  # version 2 now, with the append-only guard
    assert reg.history("S1").latest_neutral.neutral_temperature_C == 25.0
    with _sqlite(path) as c:
        assert c.execute("SELECT value FROM meta").fetchone()[0] == str(R.SCHEMA_VERSION)
        assert c.execute("PRAGMA journal_mode").fetchone()[0] == "wal"


def test_not_a_register(tmp_path):
    p = tmp_path / "x.sqlite"
    p.write_text("hello, not a database" * 100)
    with pytest.raises(InputError, match="cannot open the register"):
        R.open_register(p)
    with pytest.raises(InputError, match="no register here"):
        R.open_register(tmp_path / "missing.sqlite")
    assert not (tmp_path / "missing.sqlite").exists()


# --------------------------------------------------------------------------
# Concurrency and crashes (real processes)
# --------------------------------------------------------------------------


def _writer(path, name, n, barrier):
    r = R.open_register(path)
    barrier.wait()
    for i in range(n):
        r.log(R.NewEntry("KP-102", "note", D(2024, 1, 1), name, note=f"{name} {i}"))


def test_three_processes_logging_at_once_lose_nothing(reg):
    n0 = _count(reg.path)
    assert not _held_open_here(reg.path)  # no connection may cross the fork (see the next test)
    ctx = mp.get_context("fork")
    barrier = ctx.Barrier(3)
    procs = [ctx.Process(target=_writer, args=(reg.path, f"writer {k}", 25, barrier)) for k in range(3)]
    for p in procs:
        p.start()
    for p in procs:
        p.join(60)
        assert p.exitcode == 0
    notes = [e.note for e in reg.history("KP-102").entries if e.kind == "note"]
    assert _count(reg.path) == n0 + 75 and len(set(notes)) == 75
    assert reg.verify() == []


def _forked_logger(path, reg, conn):
    """In a forked child: log one entry (through the parent's Register when given), report the outcome."""
    try:
        r = reg if reg is not None else R.open_register(path)
        conn.send(("done", r.log(R.NewEntry("KP-102", "note", D(2024, 1, 1), "forked", note="from a child"))))
    except R.ForkedConnectionError as exc:
        conn.send(("refused", str(exc)))


def _fork_and_log(ctx, path, reg=None):
    a, b = ctx.Pipe()
    p = ctx.Process(target=_forked_logger, args=(path, reg, b))
    p.start()
    return p, a


def test_a_forked_process_refuses_a_register_its_parent_has_open(reg):
    # A child inherits SQLite's record of the locks its parent holds, but not the locks (POSIX locks belong
    # to a process): its writes can be lost although reported done (sqlite.org, "How To Corrupt An SQLite
    # Database File", section 2.6). Every way the parent can hold the file open at the fork is refused.
    n0 = _count(reg.path)
    ctx = mp.get_context("fork")
    held = sqlite3.connect(reg.path)  # a plain connection, open across the fork
    try:
        held.execute("SELECT count(*) FROM entries").fetchone()
        p, a = _fork_and_log(ctx, reg.path)
        assert a.poll(30)
        state, message = a.recv()
        p.join(30)
    finally:
        held.close()
    assert state == "refused" and str(reg.path) in message and "forked" in message, (state, message)
    with reg.transaction():  # the register's own connection, open across the fork; the child uses `reg`
        p, a = _fork_and_log(ctx, reg.path, reg)
        assert a.poll(30)
        state, message = a.recv()
        p.join(30)
    assert state == "refused" and str(reg.path) in message, (state, message)
    assert _count(reg.path) == n0
    # nothing open at the fork: the child writes, through the parent's Register too (no connection is kept)
    assert not _held_open_here(reg.path)
    p, a = _fork_and_log(ctx, reg.path, reg)
    assert a.poll(30)
    state, entry_id = a.recv()
    p.join(30)
    assert state == "done" and p.exitcode == 0
    assert _count(reg.path) == n0 + 1 and reg.entries()[-1].id == entry_id and reg.verify() == []


def _killed_writer(path, conn):
    import time

    r = R.open_register(path)
    with r.transaction() as w:
        for i in range(5):
            w.log(R.NewEntry("KP-102", "note", D(2024, 1, 1), "doomed", note=f"half-written {i}"))
        conn.send("inside")
        time.sleep(60)  # killed here, with the transaction open


def test_writer_killed_mid_transaction_leaves_the_register_as_before(reg):
    n0 = _count(reg.path)
    ctx = mp.get_context("fork")
    a, b = ctx.Pipe()
    p = ctx.Process(target=_killed_writer, args=(reg.path, b))
    p.start()
    try:
        assert a.poll(30) and a.recv() == "inside"
    finally:
        os.kill(p.pid, signal.SIGKILL)
        p.join(10)
    assert p.exitcode == -signal.SIGKILL
    r = R.open_register(reg.path)
    assert _count(r.path) == n0 and r.verify() == []
    assert not any(e.entered_by == "doomed" for e in r.entries())
    r.log(R.NewEntry("KP-102", "note", D(2024, 1, 1), "after", note="the lock was released"))
    assert _count(r.path) == n0 + 1


def test_failed_import_writes_nothing(tmp_path):
    from trackplan.sections import load_sections

    sections = load_sections(EXAMPLE).sections
    r = R.open_register(tmp_path / "r.sqlite", create=True)
    bad = sections[1].__class__(**{**sections[1].__dict__, "neutral_temperature_C": 99.0})
    with pytest.raises(InputError, match="-10..60"):
        r.import_sections([sections[0], bad], "X", "net.toml")
    assert r.section_ids() == [] and _count(r.path) == 0


# --------------------------------------------------------------------------
# The register as the source of a section's neutral history
# --------------------------------------------------------------------------


def test_apply_to_section_follows_the_latest_entry(reg):
    from trackplan.sections import load_sections

    s = {x.id: x for x in load_sections(EXAMPLE).sections}["KP-101"]
    reg.log(R.NewEntry("KP-101", "destressed", D(2023, 9, 1), "C", neutral_temperature_C=33.0))
    last = reg.log(R.NewEntry("KP-101", "measured", D(2024, 3, 1), "C", neutral_temperature_C=29.5, uncertainty_K=2,
                              method="rail uplift"))
    a = R.apply_to_section(s, reg.history("KP-101"))
    assert a.neutral_temperature_C == 44.0 and a.neutral_date == D(2021, 5, 18)
    assert a.latest_neutral_temperature_C == 29.5 and a.neutral_entry_id == last and a.neutral_basis == "measured"
    assert [(e.kind, e.date) for e in a.events] == [("tamping", D(2023, 6, 12)), ("destress", D(2023, 9, 1)),
                                                    ("destress", D(2024, 3, 1))]
    assert a.climate_path == s.climate_path and a.length_m == s.length_m  # the track description is the file's


# --------------------------------------------------------------------------
# The achieved neutral from mark readings: inverse of the destressing's forward calculation
# --------------------------------------------------------------------------

ALPHA = 1.15e-5


def test_inverse_recovers_the_forward_movements():
    xs = np.array([100.0, 200.0, 300.0, 400.0])
    us = mark_movements(xs, 15.0, 25.0, ALPHA)  # forward: what a pull to 25 degC moves each mark
    a = achieved_from_readings([Reading(x, u) for x, u in zip(xs, us)], 15.0, ALPHA, 1.0, 1e-3, target_neutral_C=27.0)
    assert a.neutral_temperature_C == pytest.approx(25.0, abs=1e-9)
    assert a.per_mark_C == pytest.approx(list(achieved_neutral_temperature(us, xs, 15.0, ALPHA)))
    assert all(t == pytest.approx(25.0) for *_, t in a.segments)
    # uniform pull: uncertainty from the base temperature and one reading at 400 m only
    assert a.components_K["non_uniformity"] == 0.0
    assert a.uncertainty_K == pytest.approx(np.hypot(1.0, 1e-3 / (ALPHA * 400.0)))
    assert a.expected_movements_m == pytest.approx(list(mark_movements(xs, 15.0, 27.0, ALPHA)))


def test_inverse_of_a_pull_that_stopped_short():
    # the last 100 m reached only 19 degC: the mean is the far mark's, the lowest stretch is shown
    xs = np.array([100.0, 200.0, 300.0, 400.0])
    seg_T = np.array([25.0, 25.0, 25.0, 19.0])
    us = np.cumsum(mark_movements(np.diff(np.concatenate([[0.0], xs])), 15.0, seg_T, ALPHA))
    a = achieved_from_readings([Reading(x, u) for x, u in zip(xs, us)], 15.0, ALPHA, 1.0, 1e-3)
    assert a.neutral_temperature_C == pytest.approx(15.0 + us[-1] / (ALPHA * 400.0)) == pytest.approx(23.5)
    assert a.lowest_segment_C == pytest.approx(19.0)
    # length-weighted variance (3 x 1.5^2 + 4.5^2) / 4 = 6.75 K^2, less the reading noise of the
    # four 100 m stretches (one reading for the first, two for the others)
    noise = (1e-3 / (ALPHA * 100.0)) ** 2 * (1 + 2 + 2 + 2) / 4
    assert a.components_K["non_uniformity"] == pytest.approx(np.sqrt(6.75 - noise))


def test_inverse_centre_pull_two_halves():
    half = 200.0
    xs = np.array([100.0, 200.0])
    ua = mark_movements(xs, 10.0, 26.0, ALPHA)
    ub = mark_movements(xs, 10.0, 24.0, ALPHA)
    rs = [Reading(x, u, "A") for x, u in zip(xs, ua)] + [Reading(x, u, "B") for x, u in zip(xs, ub)]
    a = achieved_from_readings(rs, 10.0, ALPHA, 0.5, 1e-3)
    assert a.neutral_temperature_C == pytest.approx(25.0)  # both halves equal length
    assert a.components_K["readings"] == pytest.approx(1e-3 * np.sqrt(2) / (ALPHA * 2 * half))
