"""The neutral-temperature register: every section's neutral history in an embedded database.

A railway keeps, for every welded section, the record of how its neutral
(stress-free) temperature was set and what was done to the track since. The
register holds that record as *entries*, one per event, in an SQLite file
through SQLAlchemy Core (so that a server database can follow later).

Entries
-------
Each entry belongs to one section and has a kind (:data:`KINDS`):

``laid``, ``renewed``
    Rail laid (or relaid) at a recorded neutral temperature.
``destressed``, ``adjusted``, ``repaired``
    The neutral temperature was set by destressing (free rail stretched or
    heated to the target), by a restrained adjustment, or restored by a repair
    with a closure rail (a repair may leave the value unrecorded).
``measured``
    The neutral temperature was measured in the track; a measurement always
    carries its standard uncertainty ``u`` [K] and its method.
``tamped``
    Track maintenance that disturbs the ballast (and may shift the neutral
    temperature of curved track): lateral resistance is reduced for
    ``recovery_days``. Imported ``ballast-work`` events are ``tamped``
    entries with the method ``ballast-work``.
``note``
    Free text, no neutral temperature.

Every neutral temperature also has a *basis* (the section file's words:
``laid``, ``destressed``, ``measured``, ``estimated``, ``unknown``) that
says how well it is known; a typed entry takes it from its kind unless the
person says the figure is ``estimated`` or ``unknown``.

Append-only
-----------
Nothing is edited or deleted (the database refuses UPDATE and DELETE on
entries). A correction is a new entry that names the entry it corrects; the
*effective* entries of a section are those no later entry corrects. A
correction of kind ``note`` without a neutral temperature withdraws the
corrected entry. The *latest neutral* of a section is its effective entry
with a neutral temperature that has the latest date (then the highest id).

Store
-----
Schema version in the ``meta`` table, migrations applied in one transaction
when an older register is opened; a register of a newer schema is refused.
WAL journal, ``BEGIN IMMEDIATE`` write transactions and a busy timeout, so
that concurrent writers wait for each other and lose nothing, and a writer
killed mid-transaction leaves the database as before.

Processes
---------
Every transaction opens its own connection and closes it at the end, so a
register holds no connection between calls and a process may fork and let its
children write. A connection open while a process forks makes SQLite's locks
in the child unreliable (committed entries can be lost): a forked process
refuses to connect to a register it inherited open
(:mod:`trackplan.register_fork`).

This module imports SQLAlchemy at top level: import it only inside the code
paths that use the register.

References
----------
SQLite documentation, "Write-Ahead Logging" and "Atomic Commit In SQLite"
(sqlite.org); SQLAlchemy 2.0 documentation, "SQLite: Serializable isolation /
Savepoints / Transactional DDL" (the pysqlite transaction recipe used here).
US Code of Federal Regulations, 49 CFR 213.119 (CWR plans: record keeping of
rail neutral temperature, from memory).
"""

from __future__ import annotations

import contextlib
import datetime as dt
import math
import os
from dataclasses import dataclass, field
from pathlib import Path

import sqlalchemy as sa

from trackplan import ranges
from trackplan.errors import InputError
from trackplan.register_fork import ForkedConnectionError, refuse_inherited  # noqa: F401 (re-exported)

#: Schema version this code writes; older registers are migrated, newer refused.
SCHEMA_VERSION = 2

KINDS = ("laid", "destressed", "adjusted", "measured", "repaired", "tamped", "renewed", "note")
#: Kinds that must carry a neutral temperature.
NEUTRAL_REQUIRED = ("laid", "destressed", "adjusted", "measured", "renewed")
#: Kinds that may carry one (``repaired``: the value restored, when recorded).
NEUTRAL_ALLOWED = NEUTRAL_REQUIRED + ("repaired",)
#: Kinds that disturb the ballast (lateral resistance reduced for a while).
DISTURBING = ("tamped", "renewed")
BASES = ("laid", "destressed", "measured", "estimated", "unknown")
#: Basis of a typed entry's neutral temperature, from its kind.
KIND_BASIS = {"laid": "laid", "renewed": "laid", "destressed": "destressed", "adjusted": "destressed",
              "repaired": "destressed", "measured": "measured"}

#: Plausible neutral temperatures [degC]. A value set by laying or destressing
#: lies in the range of neutral temperatures in practice (as for section files,
#: :mod:`trackplan.sections`); a measured value may lie further out, as a badly
#: set or long-drifted string can (:data:`trackplan.destressing.CURRENT_NEUTRAL_RANGE_C`).
SET_RANGE_C = ranges.bounds("neutral_temperature")
MEASURED_RANGE_C = ranges.bounds("measured_neutral_temperature")
#: Accepted standard uncertainty of a neutral temperature [K] (0 excluded).
UNCERTAINTY_RANGE_K = (0.0, 25.0)
#: Earliest date accepted (welded rail did not exist before it).
EARLIEST_DATE = dt.date(1900, 1, 1)

DEFAULT_DB = "trackplan.sqlite"
ENV_DB = "TRACKPLAN_DB"
#: Seconds a writer waits for another writer's transaction before giving up.
BUSY_TIMEOUT_S = 60.0

# --------------------------------------------------------------------------
# Schema
# --------------------------------------------------------------------------

metadata = sa.MetaData()

meta_table = sa.Table(
    "meta", metadata,
    sa.Column("key", sa.Text, primary_key=True),
    sa.Column("value", sa.Text, nullable=False),
)

sections_table = sa.Table(
    "sections", metadata,
    sa.Column("id", sa.Text, primary_key=True),
    sa.Column("name", sa.Text, nullable=False, server_default=""),
    sa.Column("location", sa.Text, nullable=False, server_default=""),
    sa.Column("source", sa.Text, nullable=False),
    sa.Column("added_at", sa.Text, nullable=False),
    sa.Column("added_by", sa.Text, nullable=False),
)

entries_table = sa.Table(
    "entries", metadata,
    sa.Column("id", sa.Integer, primary_key=True, autoincrement=True),
    sa.Column("section_id", sa.Text, sa.ForeignKey("sections.id"), nullable=False),
    sa.Column("kind", sa.Text, nullable=False),
    sa.Column("date", sa.Text),  # ISO date; null only for an imported neutral without a date
    sa.Column("neutral_temperature_C", sa.Float),
    sa.Column("uncertainty_K", sa.Float),
    sa.Column("method", sa.Text),
    sa.Column("basis", sa.Text),
    sa.Column("recovery_days", sa.Integer),
    sa.Column("entered_at", sa.Text, nullable=False),
    sa.Column("entered_by", sa.Text, nullable=False),
    sa.Column("source", sa.Text, nullable=False),
    sa.Column("corrects", sa.Integer, sa.ForeignKey("entries.id")),
    sa.Column("note", sa.Text),
    sa.Column("import_key", sa.Text),
    sa.UniqueConstraint("section_id", "import_key", name="uq_entries_import"),
    sa.CheckConstraint(f"kind IN ({', '.join(repr(k) for k in KINDS)})", name="ck_entries_kind"),
)


def _migrate_1(conn) -> None:
    """Version 1: meta, sections and entries tables."""
    metadata.create_all(conn, tables=[meta_table, sections_table, entries_table])


def _migrate_2(conn) -> None:
    """Version 2: an index for per-section history, and the append-only guard on entries."""
    conn.exec_driver_sql("CREATE INDEX IF NOT EXISTS ix_entries_section_date ON entries (section_id, date, id)")
    if conn.dialect.name == "sqlite":
        for op in ("UPDATE", "DELETE"):
            conn.exec_driver_sql(
                f"CREATE TRIGGER IF NOT EXISTS entries_no_{op.lower()} BEFORE {op} ON entries "
                "BEGIN SELECT RAISE(ABORT, 'register entries are append-only'); END")


#: Migration steps: ``MIGRATIONS[v - 1]`` brings a register from version ``v - 1`` to ``v``.
MIGRATIONS = [_migrate_1, _migrate_2]
assert len(MIGRATIONS) == SCHEMA_VERSION


# --------------------------------------------------------------------------
# Entries
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class Entry:
    """One register entry (SI; dates as :class:`datetime.date`, or None)."""

    id: int
    section_id: str
    kind: str
    date: dt.date | None
    neutral_temperature_C: float | None
    uncertainty_K: float | None
    method: str | None
    basis: str | None
    recovery_days: int | None
    entered_at: str
    entered_by: str
    source: str
    corrects: int | None
    note: str | None
    corrected_by: int | None = None

    def as_json(self) -> dict:
        return {
            "id": self.id, "kind": self.kind, "date": self.date.isoformat() if self.date else None,
            "neutral_temperature_C": self.neutral_temperature_C, "uncertainty_K": self.uncertainty_K,
            "method": self.method, "basis": self.basis, "recovery_days": self.recovery_days,
            "entered_at": self.entered_at, "entered_by": self.entered_by, "source": self.source,
            "corrects": self.corrects, "corrected_by": self.corrected_by, "note": self.note,
        }


@dataclass(frozen=True)
class NewEntry:
    """An entry to be written: validated by :func:`validate_entry` before any write."""

    section_id: str
    kind: str
    date: dt.date | None
    entered_by: str
    source: str = "typed in"
    neutral_temperature_C: float | None = None
    uncertainty_K: float | None = None
    method: str | None = None
    basis: str | None = None
    recovery_days: int | None = None
    corrects: int | None = None
    note: str | None = None
    import_key: str | None = None


def parse_date(text, where: str = "date", today: dt.date | None = None) -> dt.date:
    """A date ``YYYY-MM-DD`` that exists, not in the future and not before 1900."""
    today = today or dt.date.today()
    if isinstance(text, dt.datetime):
        d = text.date()
    elif isinstance(text, dt.date):
        d = text
    else:
        try:
            d = dt.date.fromisoformat(str(text).strip())
        except ValueError:
            raise InputError(f"cannot read {text!r} as a date; write an existing date YYYY-MM-DD, e.g. 2024-06-14",
                             where) from None
    if d > today:
        raise InputError(f"{d.isoformat()} is in the future (today is {today.isoformat()})", where)
    if d < EARLIEST_DATE:
        raise InputError(f"{d.isoformat()} is before {EARLIEST_DATE.isoformat()}; accepted: dates from "
                         f"{EARLIEST_DATE.isoformat()} to today", where)
    return d


def validate_entry(e: NewEntry, today: dt.date | None = None) -> NewEntry:
    """Check one entry against the rules of the register; returns it with its basis filled in.

    Raises
    ------
    InputError
        Unknown kind; missing author; impossible or future date; a neutral
        temperature missing where the kind sets or measures one, present where
        it does not, or outside the plausible range; a measurement without its
        uncertainty or method; an uncertainty out of range; an unknown basis.
    """
    w = f"section {e.section_id}"
    if e.kind not in KINDS:
        raise InputError(f"unknown kind {e.kind!r}; accepted: {', '.join(KINDS)}", f"{w} kind")
    if not (e.entered_by or "").strip():
        raise InputError("every entry needs the name of the person who enters it", f"{w} entered_by")
    if e.date is None:
        if e.import_key is None:
            raise InputError("a date is required (YYYY-MM-DD)", f"{w} date")
    else:
        parse_date(e.date, f"{w} date", today)
    t = e.neutral_temperature_C
    if t is not None and not math.isfinite(t):
        raise InputError("the neutral temperature must be a finite number", f"{w} neutral_temperature")
    if e.kind in NEUTRAL_REQUIRED and t is None:
        raise InputError(f"a {e.kind} entry needs the neutral temperature (e.g. 27 degC)", f"{w} neutral_temperature")
    if e.kind not in NEUTRAL_ALLOWED and t is not None:
        raise InputError(f"a {e.kind} entry carries no neutral temperature; kinds with one: "
                         f"{', '.join(NEUTRAL_ALLOWED)}", f"{w} neutral_temperature")
    if t is not None:
        lo, hi = MEASURED_RANGE_C if e.kind == "measured" else SET_RANGE_C
        if not lo <= t <= hi:
            what = "a measured neutral temperature" if e.kind == "measured" else "a neutral temperature set in practice"
            raise InputError(f"{t:.1f} degC is outside {lo:g}..{hi:g} degC, the plausible range of {what} "
                             "(check the unit: degC or degF)", f"{w} neutral_temperature")
    u = e.uncertainty_K
    if u is not None:
        if t is None:
            raise InputError("an uncertainty belongs to a neutral temperature; give both", f"{w} uncertainty")
        if not (math.isfinite(u) and UNCERTAINTY_RANGE_K[0] < u <= UNCERTAINTY_RANGE_K[1]):
            raise InputError(f"uncertainty {u:g} K is outside (0, {UNCERTAINTY_RANGE_K[1]:g}] K", f"{w} uncertainty")
    if e.kind == "measured" and e.import_key is None:
        if u is None:
            raise InputError("a measured neutral temperature needs its standard uncertainty (e.g. 2 K)",
                             f"{w} uncertainty")
        if not (e.method or "").strip():
            raise InputError("a measured neutral temperature needs its method (e.g. 'rail uplift', 'strain gauge', "
                             "'cut and measure')", f"{w} method")
    basis = e.basis
    if t is None:
        if basis is not None:
            raise InputError("a basis belongs to a neutral temperature", f"{w} basis")
    else:
        default = KIND_BASIS[e.kind]
        if basis is None:
            basis = default
        elif basis not in BASES:
            raise InputError(f"unknown basis {basis!r}; accepted: {', '.join(BASES)}", f"{w} basis")
        elif e.import_key is None and basis not in (default, "estimated", "unknown"):
            raise InputError(f"a {e.kind} entry's figure is {default}, estimated or unknown, not {basis}", f"{w} basis")
        if e.kind == "measured" and basis != "measured":
            raise InputError("a measured entry's basis is 'measured'", f"{w} basis")
    rd = e.recovery_days
    if rd is not None:
        if e.kind not in DISTURBING:
            raise InputError(f"recovery days belong to {', '.join(DISTURBING)} entries", f"{w} recovery_days")
        if isinstance(rd, bool) or not isinstance(rd, int) or not 0 <= rd <= 730:
            raise InputError(f"expected a whole number of days 0..730, got {rd!r}", f"{w} recovery_days")
    return NewEntry(**{**e.__dict__, "basis": basis})


# --------------------------------------------------------------------------
# Opening, migrating
# --------------------------------------------------------------------------


def resolve_path(db: str | Path | None) -> Path:
    """The register's file: the given path, else ``$TRACKPLAN_DB``, else ``trackplan.sqlite`` here."""
    return Path(db or os.environ.get(ENV_DB) or DEFAULT_DB)


def _engine(path: Path):
    engine = sa.create_engine(sa.engine.URL.create("sqlite", database=str(path)),
                              connect_args={"timeout": BUSY_TIMEOUT_S}, poolclass=sa.pool.NullPool)

    @sa.event.listens_for(engine, "do_connect")
    def _before_connect(_dialect, _record, _cargs, _cparams):
        # every transaction connects anew (NullPool): no connection is ever open across a fork
        # by this module; a file inherited open from the parent (another connection) is refused
        refuse_inherited(path)

    @sa.event.listens_for(engine, "connect")
    def _on_connect(dbapi_conn, _record):
        # pysqlite's own transaction handling is switched off; SQLAlchemy's "begin" below
        # emits BEGIN IMMEDIATE, so a writer holds the write lock from its first statement.
        dbapi_conn.isolation_level = None
        cur = dbapi_conn.cursor()
        cur.execute(f"PRAGMA busy_timeout={int(BUSY_TIMEOUT_S * 1000)}")
        cur.execute("PRAGMA journal_mode=WAL")
        cur.execute("PRAGMA synchronous=FULL")
        cur.execute("PRAGMA foreign_keys=ON")
        cur.close()

    @sa.event.listens_for(engine, "begin")
    def _on_begin(conn):
        # a writer takes the write lock at once (no deadlock between two readers turning writers);
        # a reader sees one consistent snapshot (WAL) without blocking writers
        conn.exec_driver_sql("BEGIN IMMEDIATE" if conn.get_execution_options().get("write") else "BEGIN")

    return engine


def _schema_version(conn) -> int:
    names = set(sa.inspect(conn).get_table_names())
    if "meta" not in names:
        if names:
            raise InputError(f"not a trackplan register (tables {sorted(names)}, no schema version)")
        return 0
    row = conn.execute(sa.select(meta_table.c.value).where(meta_table.c.key == "schema_version")).first()
    try:
        return int(row[0]) if row else 0
    except ValueError:
        raise InputError(f"unreadable schema version {row[0]!r}") from None


class Register:
    """A neutral-temperature register in one SQLite file.

    Use :func:`open_register`; every method opens its own transaction.
    """

    def __init__(self, path: Path, engine):
        self.path = path
        self.engine = engine

    # -- transactions ---------------------------------------------------
    @contextlib.contextmanager
    def transaction(self):
        """A write transaction (``BEGIN IMMEDIATE``): yields a :class:`Writer`; commits on
        success, rolls back on any exception (nothing written)."""
        try:
            with self.engine.connect() as conn:
                conn = conn.execution_options(write=True)
                with conn.begin():
                    yield Writer(self, conn)
        except sa.exc.OperationalError as exc:
            raise InputError(f"the register could not be written ({exc.orig})", str(self.path)) from None

    def _read(self):
        return self.engine.begin()

    # -- writing --------------------------------------------------------
    def log(self, entry: NewEntry, today: dt.date | None = None) -> int:
        """Append one entry in its own transaction; returns its id."""
        with self.transaction() as w:
            return w.log(entry, today)

    def import_sections(self, sections, by: str, source: str, today: dt.date | None = None) -> dict:
        """Import sections and their recorded neutral and events (idempotent).

        Parameters
        ----------
        sections : sequence of trackplan.sections.Section
        by : str
            Who imports.
        source : str
            The section file's name (kept in each entry's source).

        Returns
        -------
        dict
            ``{"sections_added", "entries_added", "entries_present"}`` counts.

        Notes
        -----
        Each imported fact has a key (section, neutral or event, date, kind,
        value); a fact already in the register is not added again. A changed
        recorded neutral in the file becomes a new entry (append-only).
        """
        counts = {"sections_added": 0, "entries_added": 0, "entries_present": 0}
        with self.transaction() as w:
            for s in sections:
                counts["sections_added"] += w.add_section(s.id, s.name, s.location, f"section file {source}", by)
                for e in section_entries(s, by, f"section file {source}"):
                    if w.has_import_key(e.section_id, e.import_key):
                        counts["entries_present"] += 1
                    else:
                        w.log(e, today)
                        counts["entries_added"] += 1
        return counts

    # -- reading --------------------------------------------------------
    def section_ids(self) -> list[str]:
        with self._read() as conn:
            return [r[0] for r in conn.execute(sa.select(sections_table.c.id).order_by(sections_table.c.id))]

    def section_info(self, section_id: str) -> dict:
        with self._read() as conn:
            row = conn.execute(sa.select(sections_table).where(sections_table.c.id == section_id)).mappings().first()
            if row is None:
                raise _unknown_section(conn, section_id)
            return dict(row)

    def entries(self, section_id: str | None = None) -> list[Entry]:
        """All entries (of one section, or all), in id order, each with the id of the entry that corrects it."""
        with self._read() as conn:
            if section_id is not None and conn.execute(
                    sa.select(sections_table.c.id).where(sections_table.c.id == section_id)).first() is None:
                raise _unknown_section(conn, section_id)
            q = sa.select(entries_table).order_by(entries_table.c.id)
            if section_id is not None:
                q = q.where(entries_table.c.section_id == section_id)
            rows = conn.execute(q).mappings().all()
        by_fix = {r["corrects"]: r["id"] for r in rows if r["corrects"] is not None}
        return [_entry(r, by_fix.get(r["id"])) for r in rows]

    def history(self, section_id: str) -> "SectionHistory":
        return SectionHistory(section_id, self.entries(section_id))

    def histories(self) -> dict[str, "SectionHistory"]:
        out: dict[str, list] = {sid: [] for sid in self.section_ids()}
        for e in self.entries():
            out.setdefault(e.section_id, []).append(e)
        return {sid: SectionHistory(sid, es) for sid, es in out.items()}

    def table_rows(self) -> dict[str, tuple[list[str], list[tuple]]]:
        """Every table as ``name -> (columns, rows)`` (for export)."""
        out = {}
        with self._read() as conn:
            for t in (meta_table, sections_table, entries_table):
                res = conn.execute(sa.select(t).order_by(*t.primary_key.columns))
                out[t.name] = (list(res.keys()), [tuple(r) for r in res])
        return out

    def verify(self) -> list[str]:
        """Integrity check: SQLite's own, foreign keys, the schema, and the register's rules.

        Returns the problems found (empty: the register is consistent).
        """
        problems = []
        with self._read() as conn:
            for (msg,) in conn.exec_driver_sql("PRAGMA integrity_check"):
                if msg != "ok":
                    problems.append(f"database: {msg}")
            for row in conn.exec_driver_sql("PRAGMA foreign_key_check"):
                problems.append(f"table {row[0]} row {row[1]} refers to a missing row of {row[2]}")
            v = _schema_version(conn)
            if v != SCHEMA_VERSION:
                problems.append(f"schema version {v}, expected {SCHEMA_VERSION}")
            trig = {r[0] for r in conn.exec_driver_sql("SELECT name FROM sqlite_master WHERE type = 'trigger'")}
            for name in ("entries_no_update", "entries_no_delete"):
                if name not in trig:
                    problems.append(f"the append-only guard {name} is missing")
            rows = conn.execute(sa.select(entries_table).order_by(entries_table.c.id)).mappings().all()
            known = {r[0] for r in conn.execute(sa.select(sections_table.c.id))}
        by_id = {r["id"]: r for r in rows}
        fixed: dict[int, int] = {}
        for r in rows:
            where = f"entry {r['id']} ({r['section_id']})"
            if r["section_id"] not in known:
                problems.append(f"{where}: unknown section")
            c = r["corrects"]
            if c is not None:
                if c not in by_id:
                    problems.append(f"{where}: corrects entry {c}, which does not exist")
                elif c >= r["id"]:
                    problems.append(f"{where}: corrects a later entry {c}")
                elif by_id[c]["section_id"] != r["section_id"]:
                    problems.append(f"{where}: corrects entry {c} of another section")
                if c in fixed:
                    problems.append(f"{where}: entry {c} is already corrected by entry {fixed[c]}")
                fixed[c] = r["id"]
            try:
                d = r["date"]
                validate_entry(NewEntry(
                    section_id=r["section_id"], kind=r["kind"],
                    date=dt.date.fromisoformat(d) if d else None, entered_by=r["entered_by"], source=r["source"],
                    neutral_temperature_C=r["neutral_temperature_C"], uncertainty_K=r["uncertainty_K"],
                    method=r["method"], basis=r["basis"], recovery_days=r["recovery_days"], note=r["note"],
                    import_key=r["import_key"]), today=_entered_date(r["entered_at"]))
            except (InputError, ValueError) as exc:
                problems.append(f"{where}: {exc}")
        return problems


def _entered_date(text: str) -> dt.date:
    try:
        return dt.datetime.fromisoformat(text).date()
    except (TypeError, ValueError):
        return dt.date.today()


class Writer:
    """The write operations inside one transaction of :meth:`Register.transaction`."""

    def __init__(self, register: Register, conn):
        self.register = register
        self.conn = conn

    def add_section(self, section_id: str, name: str, location: str, source: str, by: str) -> int:
        """Add a section unless present; returns 1 if added."""
        if not (by or "").strip():
            raise InputError("the name of the person who imports is required", "entered_by")
        if self.conn.execute(sa.select(sections_table.c.id).where(sections_table.c.id == section_id)).first():
            return 0
        self.conn.execute(sections_table.insert().values(id=section_id, name=name or "", location=location or "",
                                                         source=source, added_at=_now(), added_by=by))
        return 1

    def has_import_key(self, section_id: str, key: str) -> bool:
        return self.conn.execute(sa.select(entries_table.c.id).where(
            (entries_table.c.section_id == section_id) & (entries_table.c.import_key == key))).first() is not None

    def log(self, entry: NewEntry, today: dt.date | None = None) -> int:
        """Validate and append one entry; returns its id."""
        e = validate_entry(entry, today)
        conn = self.conn
        if conn.execute(sa.select(sections_table.c.id).where(sections_table.c.id == e.section_id)).first() is None:
            raise _unknown_section(conn, e.section_id)
        if e.corrects is not None:
            row = conn.execute(sa.select(entries_table.c.section_id).where(entries_table.c.id == e.corrects)).first()
            if row is None:
                last = conn.execute(sa.select(sa.func.max(entries_table.c.id))).scalar()
                raise InputError(f"there is no entry {e.corrects} to correct (entries are numbered 1..{last or 0}; "
                                 "see the section's history)", "corrects")
            if row[0] != e.section_id:
                raise InputError(f"entry {e.corrects} belongs to section {row[0]}, not {e.section_id}", "corrects")
            later = conn.execute(sa.select(entries_table.c.id).where(entries_table.c.corrects == e.corrects)).first()
            if later is not None:
                raise InputError(f"entry {e.corrects} is already corrected by entry {later[0]}; correct entry "
                                 f"{later[0]} instead", "corrects")
        values = {k: v for k, v in e.__dict__.items()}
        values["date"] = e.date.isoformat() if e.date else None
        values.update(entered_at=_now(), entered_by=e.entered_by.strip())
        return int(conn.execute(entries_table.insert().values(**values)).inserted_primary_key[0])


def _now() -> str:
    return dt.datetime.now(dt.timezone.utc).isoformat(timespec="seconds")


def _unknown_section(conn, section_id: str) -> InputError:
    ids = [r[0] for r in conn.execute(sa.select(sections_table.c.id).order_by(sections_table.c.id))]
    known = ", ".join(ids[:12]) + (f" ... ({len(ids)} in all)" if len(ids) > 12 else "")
    return InputError(f"unknown section {section_id!r}; the register has: {known or 'no sections yet'} "
                      "(import the section file first)", "section")


def _entry(r, corrected_by: int | None) -> Entry:
    return Entry(
        id=int(r["id"]), section_id=r["section_id"], kind=r["kind"],
        date=dt.date.fromisoformat(r["date"]) if r["date"] else None,
        neutral_temperature_C=r["neutral_temperature_C"], uncertainty_K=r["uncertainty_K"], method=r["method"],
        basis=r["basis"], recovery_days=r["recovery_days"], entered_at=r["entered_at"], entered_by=r["entered_by"],
        source=r["source"], corrects=r["corrects"], note=r["note"], corrected_by=corrected_by)


def open_register(db: str | Path | None = None, create: bool = False) -> Register:
    """Open (and, if older, migrate) a register.

    Parameters
    ----------
    db : path, optional
        The file (default: :func:`resolve_path`).
    create : bool
        Create the file if it does not exist (only ``import`` does).

    Raises
    ------
    InputError
        No such file (and not ``create``), not an SQLite file or not a
        register, a register of a newer schema version than this trackplan.
    """
    from trackplan import safeio

    path = resolve_path(db)
    where = str(path)
    safeio.check_path(path, where)
    if path.is_dir():
        raise InputError("is a folder; give the register's file (e.g. trackplan.sqlite)", where)
    if path.exists() and not path.is_file():
        raise InputError("is not a regular file (a pipe or a device?); give the register's file", where)
    if not path.exists():
        if not create:
            raise InputError("no register here; create one by importing a section file (trackplan register import)",
                             where)
        if not path.parent.is_dir():
            raise InputError(f"the folder {path.parent} does not exist", where)
    engine = _engine(path)
    try:
        with engine.connect() as conn:  # read the version without taking the write lock
            version = _schema_version(conn)
            conn.rollback()
        if version > SCHEMA_VERSION:
            raise InputError(f"the register has schema version {version}, newer than this trackplan reads "
                             f"(up to {SCHEMA_VERSION}); upgrade trackplan to use it", where)
        if version < SCHEMA_VERSION:
            with engine.connect() as conn:
                conn = conn.execution_options(write=True)
                with conn.begin():
                    _migrate(conn, _schema_version(conn))
    except InputError as exc:
        engine.dispose()
        raise InputError(exc.bare_message, where) from None
    except sa.exc.DatabaseError as exc:
        engine.dispose()
        raise InputError(f"cannot open the register ({exc.orig}); accepted: a trackplan register (SQLite file)",
                         where) from None
    return Register(path, engine)


def _migrate(conn, version: int) -> None:
    """Apply the migrations after ``version`` in the open transaction (all or none)."""
    if version > SCHEMA_VERSION:
        raise InputError(f"the register has schema version {version}, newer than this trackplan reads "
                         f"(up to {SCHEMA_VERSION})")
    for v in range(version + 1, SCHEMA_VERSION + 1):
        MIGRATIONS[v - 1](conn)
        stmt = sa.dialects.sqlite.insert(meta_table).values(key="schema_version", value=str(v))
        conn.execute(stmt.on_conflict_do_update(index_elements=["key"], set_={"value": str(v)}))


# --------------------------------------------------------------------------
# Import from section files
# --------------------------------------------------------------------------

#: Section-file event kinds -> register kinds (ballast work is kept as a tamped entry
#: with the method 'ballast-work', so that it reads back as the same event).
EVENT_KIND = {"destress": "destressed", "renewal": "renewed", "tamping": "tamped", "ballast-work": "tamped"}


def section_entries(s, by: str, source: str) -> list[NewEntry]:
    """The entries a section file states for one section: its recorded neutral and its events."""
    basis = s.neutral_basis
    kind = {"laid": "laid", "destressed": "destressed", "measured": "measured"}.get(basis, "laid")
    nd = s.neutral_date
    out = [NewEntry(
        section_id=s.id, kind=kind, date=nd, entered_by=by, source=source,
        neutral_temperature_C=float(s.neutral_temperature_C), basis=basis,
        note=None if kind == basis else f"recorded neutral, basis {basis}",
        import_key=f"neutral|{nd.isoformat() if nd else '-'}|{basis}|{s.neutral_temperature_C:.3f}")]
    for ev in s.events:
        k = EVENT_KIND[ev.kind]
        tn = ev.neutral_temperature_C
        out.append(NewEntry(
            section_id=s.id, kind=k, date=ev.date, entered_by=by, source=source,
            neutral_temperature_C=tn, basis=None if tn is None else KIND_BASIS[k],
            method="ballast-work" if ev.kind == "ballast-work" else None,
            recovery_days=ev.recovery_days if k in DISTURBING else None,
            import_key=f"event|{ev.date.isoformat()}|{ev.kind}|{'-' if tn is None else f'{tn:.3f}'}|{ev.recovery_days}"))
    return out


# --------------------------------------------------------------------------
# A section's history: effective entries, latest neutral, what is due
# --------------------------------------------------------------------------

#: Reasons a section is due for a neutral check, most pressing first: code -> text.
DUE_REASONS = {
    "no_neutral": "no neutral temperature in the register",
    "basis_unknown": "neutral temperature unknown",
    "basis_estimated": "neutral temperature estimated only",
    "tamped_since": "tamped since the neutral temperature was last set or measured",
    "not_verified": "neutral temperature not set or measured within the period",
    "never_measured": "neutral temperature never measured in the track",
}


@dataclass
class SectionHistory:
    """All entries of one section and what follows from them."""

    section_id: str
    entries: list[Entry] = field(default_factory=list)

    @property
    def effective(self) -> list[Entry]:
        """Entries no later entry corrects, by date (undated first) then id."""
        return sorted((e for e in self.entries if e.corrected_by is None), key=_order)

    @property
    def neutral_entries(self) -> list[Entry]:
        return [e for e in self.effective if e.neutral_temperature_C is not None]

    @property
    def latest_neutral(self) -> Entry | None:
        n = self.neutral_entries
        return n[-1] if n else None

    @property
    def last_verified(self) -> dt.date | None:
        """Date of the latest neutral that was set or measured (not estimated or unknown)."""
        ds = [e.date for e in self.neutral_entries if e.date and e.basis not in ("estimated", "unknown")]
        return max(ds) if ds else None

    def due_reasons(self, today: dt.date, older_than_days: int) -> list[str]:
        """Codes of :data:`DUE_REASONS` that apply, most pressing first."""
        latest = self.latest_neutral
        if latest is None:
            return ["no_neutral"]
        out = []
        if latest.basis in ("unknown", "estimated"):
            out.append(f"basis_{latest.basis}")
        lv = self.last_verified
        if lv is not None and any(e.kind == "tamped" and e.date and e.date > lv for e in self.effective):
            out.append("tamped_since")
        if lv is None or (today - lv).days > older_than_days:
            out.append("not_verified")
        if not any(e.kind == "measured" for e in self.effective):
            out.append("never_measured")
        return out


def _order(e: Entry):
    return (e.date or dt.date.min, e.id)


def due(histories: dict[str, SectionHistory], today: dt.date, older_than_days: int) -> list[dict]:
    """Sections due for a neutral check, most pressing first.

    Returns
    -------
    list of dict
        ``{"id", "reason", "reason_codes", "last_verified"}`` per section due.
    """
    order = list(DUE_REASONS)
    rows = []
    for sid, h in histories.items():
        codes = h.due_reasons(today, older_than_days)
        if codes:
            rows.append({"id": sid, "reason": "; ".join(DUE_REASONS[c] for c in codes), "reason_codes": codes,
                         "last_verified": h.last_verified})
    rows.sort(key=lambda r: (order.index(r["reason_codes"][0]), r["last_verified"] or dt.date.min, r["id"]))
    return rows


def parse_period(text: str, where: str = "older_than") -> int:
    """A period ``5y``, ``18m``, ``26w`` or ``90d`` in days (years of 365.25 days, months of 30.44)."""
    s = str(text).strip().lower()
    factors = {"y": 365.25, "m": 30.44, "w": 7.0, "d": 1.0}
    try:
        n = float(s[:-1])
        f = factors[s[-1]]
    except (ValueError, KeyError, IndexError):
        raise InputError(f"cannot read {text!r} as a period; write a number and y, m, w or d, e.g. 5y or 18m",
                         where) from None
    if not (math.isfinite(n) and 0 < n <= 100 * (365.25 / f)):
        raise InputError(f"{text!r} is outside 1 day .. 100 years", where)
    return int(round(n * f))


# --------------------------------------------------------------------------
# The register as the source of a section's neutral history (check, target, screen)
# --------------------------------------------------------------------------


def apply_to_section(section, history: SectionHistory):
    """A copy of ``section`` whose neutral history and events come from the register.

    The earliest effective neutral entry becomes the recorded neutral (value and
    date); each later one a neutral-setting event from its date (``renewed``
    as a renewal, every other kind as a destressing: a measurement replaces
    the value from its date on); ``tamped`` entries become tamping (or ballast
    work) events. The basis is the latest neutral entry's, and
    ``neutral_entry_id`` names that entry. Two neutral entries on one day:
    the later entered one counts.

    Raises
    ------
    InputError
        The register has no neutral temperature for the section.
    """
    import dataclasses

    from trackplan.sections import Event

    neutrals = history.neutral_entries
    if not neutrals:
        raise InputError("the register has no neutral temperature for this section", f"section {section.id}")
    by_day: dict = {}
    for e in neutrals:
        by_day[e.date] = e  # later (date, id) wins on the same day
    neutrals = sorted(by_day.values(), key=_order)
    first, latest = neutrals[0], neutrals[-1]
    events = []
    for e in neutrals[1:]:
        rec = 0
        if e.kind == "renewed":
            rec = section.recovery_days if e.recovery_days is None else e.recovery_days
        events.append(Event(e.date, "renewal" if e.kind == "renewed" else "destress", e.neutral_temperature_C, rec))
    for e in history.effective:
        if e.kind == "tamped" and e.date is not None:
            kind = "ballast-work" if e.method == "ballast-work" else "tamping"
            events.append(Event(e.date, kind, None, section.recovery_days if e.recovery_days is None else e.recovery_days))
    events.sort(key=lambda ev: ev.date)
    risk = dict(section.risk)
    if latest.uncertainty_K is not None and "neutral_sd" not in risk:
        risk["neutral_sd"] = float(latest.uncertainty_K)  # the entry's stated uncertainty (trackplan.risk)
    return dataclasses.replace(
        section, neutral_temperature_C=float(first.neutral_temperature_C), neutral_date=first.date,
        neutral_basis=latest.basis or "unknown", events=tuple(events), neutral_entry_id=latest.id,
        risk=tuple(sorted(risk.items())))


def apply_register(sections, db) -> tuple[list, list[InputError]]:
    """Replace the neutral history of every section by the register's.

    Returns the sections that the register holds and a problem for each one it
    does not (so that no section is silently assessed from its section file).
    """
    reg = open_register(db)
    try:
        hist = reg.histories()
    finally:
        reg.engine.dispose()
    out, problems = [], []
    for s in sections:
        where = f"{s.file.name} [sections.{s.id}]"
        if s.id not in hist:
            problems.append(InputError(f"section not in the register {reg.path} (import the section file first)",
                                       where))
            continue
        try:
            out.append(apply_to_section(s, hist[s.id]))
        except InputError as exc:
            problems.append(InputError(exc.bare_message, where))
    return out, problems
