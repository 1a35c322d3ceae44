"""Welded section files (TOML): reading and validation.

A section file has optional file-level defaults and one table per welded
section; every value that is a quantity carries its unit::

    [defaults]
    rail = "60E1"
    sleeper = "concrete"            # timber | concrete | steel
    sleeper_spacing = "0.6 m"       # default: the spacing behind the presets (0.65 m timber/steel, 0.60 m concrete)
    ballast = "consolidated"        # consolidated | partial | disturbed
    shoulder = "full"               # full | reduced
    drift_allowance = "5 K"
    gap_limit = "50 mm"
    tension_stress_limit = "160 MPa"
    return_period = 50              # years

    [sections.NV-101]
    name = "Hollin Cut to Marrow Bridge"
    location = "km 12.400 - 13.600"
    latitude = 47.15                # degrees north (optional: the climate record's)
    longitude = 8.9                 # degrees east
    climate = "climate/ostvale.csv.gz"   # relative to this file
    # columns = { tmax = "temp_max [degC]", tmin = "temp_min [degC]" }  # CSV as published (trackplan.columns)
    # tz = "UTC+01:00"              # zone of naive timestamps (default: the file's, else the longitude's)
    radius = "800 m"                # absent for tangent track
    track_azimuth = "35 deg"        # direction of the track axis from north
    misalignment = "20 mm"
    misalignment_length = "10 m"
    length = "1200 m"               # between fixed points
    shade = 0.1                     # 0 open .. 1 fully shaded
    neutral_temperature = "27 degC" # recorded neutral (stress-free) temperature
    neutral_date = 2019-06-14
    neutral_basis = "destressed"    # laid | destressed | measured | estimated | unknown
    youngs_modulus = "210 GPa"      # steel overrides (optional)
    alpha = "1.15e-5 1/K"
    climate_units_confirmed = true  # the record's temperature unit is right even if it looks like
                                    # another (default false: such a record is refused)

    loading = "freight-22.5t"       # train of the stability analysis (see `trackplan stability --help`), or "none"

    [sections.NV-101.stability]     # stability overrides (optional): peak_resistance, limit_resistance,
    peak_resistance = "12 kN/m"     # peak_displacement, limit_displacement, longitudinal_resistance
                                    # ("rigid" for full restraint), lateral_stiffness, support_modulus, axle_load

    [[sections.NV-101.events]]      # dated events (used by risk-day screening)
    date = 2022-04-02
    kind = "tamping"                # destress | renewal | tamping | ballast-work
    recovery_days = 30              # lateral resistance recovers over this many days
    [[sections.NV-101.events]]
    date = 2023-05-10
    kind = "destress"
    neutral_temperature = "32 degC"

An optional ``[network]`` table describes the file (``name``, ``description``,
``operator``). Every field is validated with a message naming the file, the section and the
field, and what is accepted; quantities are checked against their plausible range
(:mod:`trackplan.ranges`), and all the missing fields and bad quantities of a section are
reported together. :func:`load_sections` returns the good sections
and the list of problems, so that one bad section does not lose the others
(the command line's ``--strict`` refuses the whole file instead).
"""

from __future__ import annotations

import datetime as dt
import math
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

from trackplan import names, rails, thermal, units
from trackplan.track import OVERRIDES
from trackplan.errors import InputError, excerpt

SLEEPERS = ("timber", "concrete", "steel")
BALLAST_STATES = ("consolidated", "partial", "disturbed")
SHOULDERS = ("full", "reduced")
NEUTRAL_BASES = ("laid", "destressed", "measured", "estimated", "unknown")
EVENT_KINDS = ("destress", "renewal", "tamping", "ballast-work")
#: Events that set a new neutral temperature.
NEUTRAL_EVENTS = ("destress", "renewal")
#: Events that disturb the ballast (reduced lateral resistance for a while).
DISTURBING_EVENTS = ("tamping", "ballast-work", "renewal")

#: Planning defaults, each overridable in [defaults] or per section.
DEFAULTS = {
    "sleeper": "concrete",
    "ballast": "consolidated",
    "shoulder": "full",
    "track_azimuth": "0 deg",
    "misalignment": "20 mm",  # misalignments 10-50 mm over 6-12 m (from memory; docs/methods/stability.md)
    "misalignment_length": "10 m",
    "shade": 0.0,
    # Allowance for the fall of neutral temperature in service. North American practice allows
    # tens of degF (a 30 degF reduction allowance appears in US federal research, docs/methods/neutral-target.md);
    # 5 K is a planning default for well-maintained track, to be set by the railway.
    "drift_allowance": "5 K",
    # A break gap over about 50 mm (2 in) is commonly treated as dangerous (common practice).
    "gap_limit": "50 mm",
    # Thermal tension stress limit: planning default (from memory), to be replaced by the
    # railway's own value, which depends on rail grade, traffic bending and residual stresses.
    "tension_stress_limit": "160 MPa",
    "laying_tolerance": "3 K",
    "return_period": 50,
    "recovery_days": 30,
    # Train standing on the track in the stability analysis (trackplan.loading; "none" = unloaded).
    "loading": "freight-22.5t",
}

_KNOWN_FIELDS = {
    "name", "location", "chainage", "latitude", "longitude", "climate", "rail", "steel",
    "youngs_modulus", "alpha", "sleeper", "sleeper_spacing", "ballast", "shoulder", "radius",
    "track_azimuth", "misalignment", "misalignment_length", "length", "shade",
    "neutral_temperature", "neutral_date", "neutral_basis", "drift_allowance", "gap_limit",
    "tension_stress_limit", "laying_tolerance", "return_period", "stability", "events",
    "recovery_days", "rail_temperature_method", "loading", "columns", "tz", "climate_units_confirmed", "risk",
}
_DEFAULTABLE = _KNOWN_FIELDS - {"name", "location", "chainage", "stability", "events", "neutral_date",
                                "neutral_temperature", "neutral_basis"}

#: Most sections in one file, events in one section, characters in an id and in a name or location.
MAX_SECTIONS = 20_000
MAX_EVENTS = 1_000
MAX_ID_CHARS = 80
MAX_TEXT_CHARS = 200

#: Rail temperature methods (``auto`` and the keys of ``trackplan.railtemp.METHODS``).
RAIL_TEMPERATURE_METHODS = names.method_choices()
#: Fields of the optional [network] table (descriptive only).
NETWORK_FIELDS = ("name", "description", "operator")
#: Fields a section must have (in the section or in [defaults]).
REQUIRED_FIELDS = ("rail", "climate", "neutral_temperature")
#: Kind of every quantity field, for the first pass that reports every bad field of a section at once.
QUANTITY_FIELDS = {
    "youngs_modulus": "stress", "alpha": "expansion", "radius": "length", "sleeper_spacing": "length",
    "misalignment": "length", "misalignment_length": "length", "length": "length",
    "track_azimuth": "angle", "neutral_temperature": "temperature", "drift_allowance": "temperature_difference",
    "gap_limit": "length", "tension_stress_limit": "stress", "laying_tolerance": "temperature_difference",
}

#: Stability overrides accepted in [sections.ID.stability], with their kind (one table with the
#: command line: :data:`trackplan.track.OVERRIDES`; short lengths are written with a unit here).
STABILITY_FIELDS = {name: ("length" if kind == "short_length" else kind) for name, (kind, _) in OVERRIDES.items()}


@dataclass(frozen=True)
class Event:
    """A dated event on a section.

    Attributes
    ----------
    date : datetime.date
    kind : str
        One of :data:`EVENT_KINDS`.
    neutral_temperature_C : float or None
        New neutral temperature set by a destressing or renewal [degC].
    recovery_days : int
        Days over which a disturbed ballast recovers its lateral resistance.
    """

    date: dt.date
    kind: str
    neutral_temperature_C: float | None = None
    recovery_days: int = 0


@dataclass(frozen=True)
class Section:
    """One welded section, validated, SI.

    Attributes carry units in their names; see the module docstring for the
    TOML fields they come from.
    """

    id: str
    name: str
    location: str
    file: Path
    latitude_deg: float | None
    longitude_deg: float | None
    climate_path: Path
    profile: rails.RailProfile
    steel: thermal.Steel
    sleeper: str
    sleeper_spacing_m: float
    ballast: str
    shoulder: str
    radius_m: float | None
    track_azimuth_deg: float
    misalignment_m: float
    misalignment_length_m: float
    length_m: float | None
    shade_factor: float
    neutral_temperature_C: float
    neutral_date: dt.date | None
    neutral_basis: str
    drift_allowance_K: float
    gap_limit_m: float
    tension_stress_limit_Pa: float
    laying_tolerance_K: float
    return_period_years: float
    recovery_days: int
    rail_temperature_method: str
    climate_units_confirmed: bool = False
    stability_overrides: tuple = ()  # tuple of (name, SI value) pairs: hashable
    loading: str = "freight-22.5t"  # train preset of the stability analysis, or "none"
    events: tuple = ()  # tuple of Event, sorted by date
    neutral_entry_id: int | None = None  # the register entry of the latest neutral (None: from the section file)
    climate_columns: tuple = ()  # column mapping of the climate record: tuple of trackplan.columns.ColumnMap
    climate_tz: str | None = None  # zone of the record's naive timestamps (field ``tz``)
    risk: tuple = ()  # [sections.ID.risk]: (name, SI value) pairs of trackplan.risk.OVERRIDE_FIELDS

    @property
    def current_neutral_temperature_C(self) -> float:
        """Current neutral estimate: the latest recorded value less the drift allowance [degC]."""
        return self.latest_neutral_temperature_C - self.drift_allowance_K

    @property
    def latest_neutral_temperature_C(self) -> float:
        """Neutral temperature after the latest neutral-setting event (or the recorded one) [degC]."""
        t = self.neutral_temperature_C
        for ev in self.events:
            if ev.kind in NEUTRAL_EVENTS and ev.neutral_temperature_C is not None:
                if self.neutral_date is None or ev.date >= self.neutral_date:
                    t = ev.neutral_temperature_C
        return t

    @property
    def curve_label(self) -> str:
        return "tangent" if self.radius_m is None else f"R {self.radius_m:.0f} m"


@dataclass
class SectionFile:
    """Result of reading a section file: the good sections and the problems found."""

    path: Path
    sections: list[Section] = field(default_factory=list)
    problems: list[InputError] = field(default_factory=list)


class _Fields:
    """Accessor for one section's fields with defaults and messages."""

    def __init__(self, table: dict, defaults: dict, where: str):
        self.t = table
        self.d = defaults
        self.where = where

    def raw(self, key, required=False):
        if key in self.t:
            return self.t[key]
        if key in self.d:
            return self.d[key]
        if key in DEFAULTS:
            return DEFAULTS[key]
        if required:
            raise InputError(f"missing field '{key}'", self.where)
        return None

    def w(self, key):
        if key not in self.t and key in self.d:  # the value came from [defaults]: say so
            return f"{self.where} {key} (from [defaults])"
        return f"{self.where} {key}"

    def quantity(self, key, kind, required=False):
        v = self.raw(key, required)
        if v is None:
            return None
        if isinstance(v, (int, float)) and not isinstance(v, bool):
            raise InputError(
                f"{v!r} has no unit; write it as a string with a unit, e.g. {key} = \"{units._example(kind)}\"",
                self.w(key),
            )
        if not isinstance(v, str):
            raise InputError(f"expected a quantity with a unit, e.g. \"{units._example(kind)}\"", self.w(key))
        return units.parse(v, kind, self.w(key))

    def choice(self, key, options):
        v = self.raw(key)
        if not isinstance(v, str) or v not in options:
            raise InputError(f"unknown value {excerpt(v)}; accepted: {', '.join(options)}", self.w(key))
        return v

    def number(self, key, lo, hi, what):
        v = self.raw(key)
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise InputError(f"expected a number ({what}), got {excerpt(v)}", self.w(key))
        if not math.isfinite(v):
            raise InputError(f"{v!r} is not a finite number ({what})", self.w(key))
        if not lo <= v <= hi:
            raise InputError(f"{v!r} is outside {lo}..{hi} ({what})", self.w(key))
        return float(v)


def _date(v, where: str, today: dt.date) -> dt.date:
    if isinstance(v, dt.datetime):
        v = v.date()
    elif isinstance(v, str):
        try:
            v = dt.date.fromisoformat(v)
        except ValueError:
            raise InputError(f"cannot read {v!r} as a date; write YYYY-MM-DD (e.g. 2019-06-14)", where) from None
    if not isinstance(v, dt.date):
        raise InputError(f"expected a date YYYY-MM-DD, got {v!r}", where)
    if v > today:
        raise InputError(f"{v.isoformat()} is in the future (today is {today.isoformat()})", where)
    return v


def _events(raw, where: str, today: dt.date, default_recovery: int) -> tuple:
    if raw is None:
        return ()
    if not isinstance(raw, list):
        raise InputError("expected a list of [[...events]] tables", where)
    if len(raw) > MAX_EVENTS:
        raise InputError(f"{len(raw)} events; at most {MAX_EVENTS} per section", where)
    out = []
    for i, ev in enumerate(raw):
        w = f"{where} events[{i}]"
        if not isinstance(ev, dict):
            raise InputError("expected a table with date and kind", w)
        unknown = set(ev) - {"date", "kind", "neutral_temperature", "recovery_days", "note"}
        if unknown:
            raise InputError(f"unknown field(s) {sorted(unknown)}; accepted: date, kind, neutral_temperature, "
                             "recovery_days, note", w)
        if "date" not in ev:
            raise InputError("missing field 'date'", w)
        d = _date(ev["date"], f"{w} date", today)
        kind = ev.get("kind")
        if kind not in EVENT_KINDS:
            raise InputError(f"unknown kind {kind!r}; accepted: {', '.join(EVENT_KINDS)}", f"{w} kind")
        tn = None
        if kind in NEUTRAL_EVENTS:
            if "neutral_temperature" not in ev:
                raise InputError(f"a {kind} event needs neutral_temperature (e.g. \"32 degC\")", w)
            v = ev["neutral_temperature"]
            if not isinstance(v, str):
                raise InputError(f"{v!r} has no unit; write e.g. \"32 degC\"", f"{w} neutral_temperature")
            tn = units.parse(v, "temperature", f"{w} neutral_temperature")
            _check_neutral_range(tn, f"{w} neutral_temperature")
        rec = 0
        if kind in DISTURBING_EVENTS:
            rec = ev.get("recovery_days", default_recovery)
            if isinstance(rec, bool) or not isinstance(rec, int) or not 0 <= rec <= 730:
                raise InputError(f"recovery_days must be a whole number of days 0..730, got {rec!r}",
                                 f"{w} recovery_days")
        out.append(Event(d, kind, tn, int(rec)))
    out.sort(key=lambda e: e.date)
    for a, b in zip(out, out[1:]):
        if a.date == b.date and a.kind in NEUTRAL_EVENTS and b.kind in NEUTRAL_EVENTS:
            raise InputError(f"two neutral-setting events on {a.date.isoformat()}", where)
        if a.recovery_days and b.kind in DISTURBING_EVENTS and (b.date - a.date).days < a.recovery_days:
            raise InputError(
                f"disturbance windows overlap: {a.kind} on {a.date.isoformat()} recovers over {a.recovery_days} "
                f"days, but {b.kind} follows on {b.date.isoformat()}; shorten recovery_days or merge the events",
                where,
            )
    return tuple(out)


def _check_neutral_range(t: float, where: str) -> None:
    if not -10.0 <= t <= 60.0:
        raise InputError(f"{t:.1f} degC is outside -10..60 degC, the range of neutral temperatures in practice", where)


def _all_field_problems(f: "_Fields") -> None:
    """First pass over a section: every missing field, every unreadable or implausible quantity and
    every unknown choice, all reported in one message (the detailed checks that follow stop at the
    first)."""
    problems: list[tuple[str, InputError]] = []
    missing = [k for k in REQUIRED_FIELDS if f.raw(k) is None]
    if missing:
        text = f"missing field(s) {', '.join(repr(k) for k in missing)}"
        problems.append((text, InputError(text, f.where)))
    checks = [(key, lambda k=key, kind=kind: f.quantity(k, kind)) for key, kind in QUANTITY_FIELDS.items()]
    checks += [(key, lambda k=key, o=options: f.choice(k, o))
               for key, options in (("sleeper", SLEEPERS), ("ballast", BALLAST_STATES), ("shoulder", SHOULDERS))]
    for key, check in checks:
        if key in missing:
            continue
        try:
            check()
        except InputError as exc:
            problems.append((f"{key}: {exc.bare_message}", exc))
    if len(problems) == 1:
        raise problems[0][1]
    if len(problems) > 1:
        raise InputError(f"{len(problems)} problems: " + "; ".join(t for t, _ in problems), f.where)


def _climate_path(file: Path, clim: str, where: str) -> Path:
    """The climate record's path, resolved against the section file's folder, checked to be a
    regular file (no folder, pipe, device or link loop; see :mod:`trackplan.safeio`)."""
    import os
    import stat

    from trackplan import safeio

    p = safeio.safe_resolve(file.parent / safeio.check_path(clim, where), where)
    try:
        mode = os.stat(p).st_mode
    except FileNotFoundError:
        raise InputError(f"climate record not found: {excerpt(str(p), 120)}", where) from None
    except OSError as exc:
        raise InputError(f"climate record {excerpt(str(p), 120)}: {safeio._os_message(exc)}", where) from None
    if stat.S_ISDIR(mode):
        raise InputError(f"{excerpt(str(p), 120)} is a folder; give the climate record file", where)
    if not stat.S_ISREG(mode):
        raise InputError(f"{excerpt(str(p), 120)} is not a regular file (a pipe or a device?); give the climate "
                         "record file", where)
    return p


def _text_field(v, limit: int, where: str) -> str:
    """A descriptive text (name, location): a string of printable characters, not too long."""
    if not isinstance(v, str):
        raise InputError(f"expected text in quotes, got {excerpt(v)}", where)
    if len(v) > limit:
        raise InputError(f"{len(v)} characters; at most {limit}", where)
    if not v.isprintable():
        raise InputError("holds control characters (line breaks, escapes); write plain text", where)
    return v


def _check_id(sid: str, file: Path) -> None:
    where = f"{file.name} [sections.{sid[:40]}{'...' if len(sid) > 40 else ''}]"
    if len(sid) > MAX_ID_CHARS:
        raise InputError(f"the section id has {len(sid)} characters; at most {MAX_ID_CHARS}", where)
    if not sid.strip() or not sid.isprintable() or "[" in sid or "]" in sid:
        raise InputError("a section id is printable text without square brackets, e.g. NV-101", where)


def _section(sid: str, table: dict, defaults: dict, file: Path, today: dt.date,
             user_profiles: dict | None) -> Section:
    _check_id(sid, file)
    where = f"{file.name} [sections.{sid}]"
    if not isinstance(table, dict):
        raise InputError("expected a table of fields", where)
    for key in ("name", "location", "chainage"):
        if key in table:
            _text_field(table[key], MAX_TEXT_CHARS, f"{where} {key}")
    unknown = set(table) - _KNOWN_FIELDS
    if unknown:
        raise InputError(f"unknown field(s) {sorted(unknown)}; accepted: {', '.join(sorted(_KNOWN_FIELDS))}", where)
    f = _Fields(table, defaults, where)
    _all_field_problems(f)

    profile = rails.get_profile(str(f.raw("rail", required=True)), user_profiles, where=f.w("rail"))
    steel_name = f.raw("steel")
    base = thermal.steel_preset(steel_name, f.w("steel")) if steel_name else thermal.default_steel(profile.is_north_american)
    E = f.quantity("youngs_modulus", "stress")
    a = f.quantity("alpha", "expansion")
    steel = base
    if E is not None or a is not None:
        steel = thermal.Steel(E if E is not None else base.E_Pa, a if a is not None else base.alpha_per_K,
                              "custom", f"{base.name} with section overrides")
        thermal.check_steel(steel.E_Pa, steel.alpha_per_K, f.w("youngs_modulus/alpha"))

    lat = f.raw("latitude")
    lon = f.raw("longitude")
    if lat is not None:
        lat = f.number("latitude", -90, 90, "degrees north")
    if lon is not None:
        lon = f.number("longitude", -180, 180, "degrees east")

    clim = f.raw("climate", required=True)
    if not isinstance(clim, str):
        raise InputError("expected a path to a climate record (relative to the section file)", f.w("climate"))
    climate_path = _climate_path(file, clim, f.w("climate"))

    radius = f.quantity("radius", "length")
    if radius is not None and radius <= 0:
        raise InputError("a curve radius must be positive (omit it for tangent track)", f.w("radius"))
    if radius is not None and radius < 100.0:
        raise InputError(f"radius {radius:.0f} m is below 100 m; trackplan's stability model is not for such "
                         "tight curves", f.w("radius"))
    spacing = f.quantity("sleeper_spacing", "length")
    if spacing is None:  # the spacing behind the sleeper type's preset resistances
        from trackplan.stability import REFERENCE_SPACING_M

        spacing = REFERENCE_SPACING_M.get(f.raw("sleeper"), 0.6)
    if not 0.3 <= spacing <= 1.0:
        raise InputError(f"sleeper spacing {spacing:.2f} m is outside 0.3..1.0 m", f.w("sleeper_spacing"))
    mis = f.quantity("misalignment", "length")
    mis_len = f.quantity("misalignment_length", "length")
    if not 0.005 <= mis <= 0.1:
        raise InputError(f"misalignment {mis * 1e3:.0f} mm is outside 5..100 mm (planning needs a realistic "
                         "misalignment: track has 10-50 mm over 6-12 m)", f.w("misalignment"))
    if not 2.0 <= mis_len <= 40.0:
        raise InputError(f"misalignment length {mis_len:.1f} m is outside 2..40 m", f.w("misalignment_length"))
    length = f.quantity("length", "length")
    if length is not None and not length > 0:
        raise InputError("length between fixed points must be positive", f.w("length"))
    az = f.quantity("track_azimuth", "angle") % 360.0

    tn = f.quantity("neutral_temperature", "temperature", required=True)
    _check_neutral_range(tn, f.w("neutral_temperature"))
    nd = f.raw("neutral_date")
    nd = _date(nd, f.w("neutral_date"), today) if nd is not None else None
    basis = f.choice("neutral_basis", NEUTRAL_BASES) if f.raw("neutral_basis") is not None else "unknown"

    drift = f.quantity("drift_allowance", "temperature_difference")
    if not 0 <= drift <= 25:
        raise InputError(f"drift allowance {drift:.1f} K is outside 0..25 K", f.w("drift_allowance"))
    gap = f.quantity("gap_limit", "length")
    if not 0.005 <= gap <= 0.2:
        raise InputError(f"pull-apart gap limit {gap * 1e3:.0f} mm is outside 5..200 mm", f.w("gap_limit"))
    tension = f.quantity("tension_stress_limit", "stress")
    if not 20e6 <= tension <= 400e6:
        raise InputError(f"tension stress limit {tension / 1e6:.0f} MPa is outside 20..400 MPa",
                         f.w("tension_stress_limit"))
    tol = f.quantity("laying_tolerance", "temperature_difference")
    if not 0 < tol <= 10:
        raise InputError(f"laying tolerance {tol:.1f} K is outside 0..10 K", f.w("laying_tolerance"))
    rp = f.number("return_period", 2, 1000, "years")
    rec = f.raw("recovery_days")
    if isinstance(rec, bool) or not isinstance(rec, int) or not 0 <= rec <= 730:
        raise InputError(f"expected a whole number of days 0..730, got {rec!r}", f.w("recovery_days"))
    method = f.raw("rail_temperature_method") or "auto"
    from trackplan import loading as loading_mod

    train = f.raw("loading")
    if not isinstance(train, str) or train not in loading_mod.loading_names():
        raise InputError(f"unknown loading {train!r}; accepted: {', '.join(loading_mod.loading_names())}",
                         f.w("loading"))
    if method not in RAIL_TEMPERATURE_METHODS:
        raise InputError(f"unknown rail temperature method {excerpt(method)}; accepted: "
                         f"{', '.join(RAIL_TEMPERATURE_METHODS)}", f.w("rail_temperature_method"))
    confirmed = f.raw("climate_units_confirmed")
    if confirmed is not None and not isinstance(confirmed, bool):
        raise InputError(f"expected true or false, got {excerpt(confirmed)}", f.w("climate_units_confirmed"))

    stab = table.get("stability", defaults.get("stability", {}))
    if not isinstance(stab, dict):
        raise InputError("expected a table of stability overrides", f.w("stability"))
    overrides = []
    for k, v in stab.items():
        if k not in STABILITY_FIELDS:
            raise InputError(f"unknown stability override {k!r}; accepted: {', '.join(STABILITY_FIELDS)}",
                             f.w(f"stability.{k}"))
        if k == "longitudinal_resistance" and v == "rigid":
            overrides.append((k, None))
            continue
        if not isinstance(v, str):
            raise InputError(f"{v!r} has no unit; e.g. \"{units._example(STABILITY_FIELDS[k])}\"", f.w(f"stability.{k}"))
        val = units.parse(v, STABILITY_FIELDS[k], f.w(f"stability.{k}"))
        if not val > 0:
            raise InputError("must be positive", f.w(f"stability.{k}"))
        overrides.append((k, val))
    risk_raw = {**defaults.get("risk", {}), **table.get("risk", {})} if isinstance(
        defaults.get("risk", {}), dict) and isinstance(table.get("risk", {}), dict) else None
    if risk_raw is None:
        raise InputError("expected a table of risk inputs", f.w("risk"))
    from trackplan.risk import parse_overrides

    risk_inputs = parse_overrides(risk_raw, f"{f.w('risk')}")
    events = _events(table.get("events"), where, today, int(rec))
    if nd is not None:
        for ev in events:
            if ev.kind in NEUTRAL_EVENTS and ev.date < nd:
                raise InputError(
                    f"{ev.kind} event on {ev.date.isoformat()} is before the recorded neutral date "
                    f"{nd.isoformat()}; record the latest neutral temperature as neutral_temperature, or drop the event",
                    where,
                )

    return Section(
        id=sid,
        name=str(table.get("name", sid)),
        location=str(table.get("location", table.get("chainage", ""))),
        file=file,
        latitude_deg=lat,
        longitude_deg=lon,
        climate_path=climate_path,
        profile=profile,
        steel=steel,
        sleeper=f.choice("sleeper", SLEEPERS),
        sleeper_spacing_m=spacing,
        ballast=f.choice("ballast", BALLAST_STATES),
        shoulder=f.choice("shoulder", SHOULDERS),
        radius_m=radius,
        track_azimuth_deg=az,
        misalignment_m=mis,
        misalignment_length_m=mis_len,
        length_m=length,
        shade_factor=f.number("shade", 0.0, 1.0, "0 open sky .. 1 fully shaded"),
        neutral_temperature_C=tn,
        neutral_date=nd,
        neutral_basis=basis,
        drift_allowance_K=drift,
        gap_limit_m=gap,
        tension_stress_limit_Pa=tension,
        laying_tolerance_K=tol,
        return_period_years=rp,
        recovery_days=int(rec),
        rail_temperature_method=str(method),
        loading=train,
        climate_units_confirmed=bool(confirmed),
        stability_overrides=tuple(sorted(overrides)),
        events=events,
        climate_columns=_climate_columns(f),
        climate_tz=_climate_tz(f),
        risk=tuple(sorted(risk_inputs.items())),
    )


def _climate_columns(f) -> tuple:
    from trackplan import columns

    raw = f.raw("columns")
    return () if raw is None else tuple(columns.parse_table(raw, f.w("columns")).values())


def _climate_tz(f) -> str | None:
    raw = f.raw("tz")
    if raw is not None and (not isinstance(raw, str) or not raw.strip()):
        raise InputError("expected a time zone as text: 'UTC', 'UTC-08:00' or an IANA name such as "
                         "'America/Los_Angeles'", f.w("tz"))
    return None if raw is None else raw.strip()


def load_sections(path: str | Path, today: dt.date | None = None, strict: bool = False,
                  user_profiles: dict | None = None) -> SectionFile:
    """Read and validate a section file.

    Parameters
    ----------
    path : path
        The TOML file.
    today : datetime.date, optional
        Dates after it are refused (default: today).
    strict : bool
        Raise if any section has a problem (one error naming every problem) instead of
        returning the good sections and the problems.
    user_profiles : dict, optional
        Extra rail profiles (:func:`trackplan.rails.load_user_profiles`).

    Returns
    -------
    SectionFile
        Good sections in file order, and the problems (one per bad section).

    Raises
    ------
    InputError
        Unreadable file, no sections, duplicate ids, bad defaults; any problem with ``strict``.
    """
    path = Path(path)
    today = today or dt.date.today()
    from trackplan import safeio

    safeio.check_path(path, "section file")
    text = safeio.read_text(path, str(path))
    try:
        data = tomllib.loads(text)
    except RecursionError:
        raise InputError("not valid TOML for trackplan (values nested too deeply)", str(path)) from None
    except tomllib.TOMLDecodeError as exc:
        msg = str(exc)
        if "twice" in msg or "overwrite" in msg.lower():
            raise InputError(f"a table is defined twice ({msg}); each section id must be unique", str(path)) from None
        raise InputError(f"not valid TOML: {msg}", str(path)) from None
    unknown_top = set(data) - {"defaults", "sections", "network"}
    if unknown_top:
        raise InputError(f"unknown top-level table(s) {sorted(unknown_top)}; accepted: [defaults], [network], "
                         "[sections.ID]", str(path))
    network = data.get("network", {})
    if not isinstance(network, dict):
        raise InputError("[network] must be a table", str(path))
    bad_network = set(network) - set(NETWORK_FIELDS)
    if bad_network:
        raise InputError(f"unknown field(s) {sorted(excerpt(k) for k in bad_network)} in [network]; accepted: "
                         f"{', '.join(NETWORK_FIELDS)}", f"{path.name} [network]")
    defaults = data.get("defaults", {})
    if not isinstance(defaults, dict):
        raise InputError("[defaults] must be a table", str(path))
    bad_defaults = set(defaults) - _DEFAULTABLE
    if bad_defaults:
        raise InputError(f"field(s) {sorted(bad_defaults)} cannot be defaults; accepted in [defaults]: "
                         f"{', '.join(sorted(_DEFAULTABLE))}", f"{path.name} [defaults]")
    tables = data.get("sections")
    if not isinstance(tables, dict) or not tables:
        raise InputError("no sections found; add one table per welded section, e.g. [sections.NV-101]", str(path))
    if len(tables) > MAX_SECTIONS:
        raise InputError(f"{len(tables)} sections; at most {MAX_SECTIONS} in one file (split the network)", str(path))
    # Duplicate ids cannot reach us through tomllib (it refuses redefined tables), but ids that
    # differ only in case would confuse every report, so they are refused.
    seen: dict[str, str] = {}
    for sid in tables:
        key = sid.lower()
        if key in seen:
            raise InputError(f"duplicate section id {sid!r} (also {seen[key]!r}); ids must be unique", str(path))
        seen[key] = sid
    out = SectionFile(path=path)
    for sid, table in tables.items():
        try:
            out.sections.append(_section(sid, table, defaults, path.resolve(), today, user_profiles))
        except InputError as exc:
            out.problems.append(exc)
        except Exception as exc:  # never lose the other sections to one that trips an unforeseen case
            out.problems.append(InputError(
                f"could not be read: internal error {type(exc).__name__}: {excerpt(exc, 120)} (a fault in "
                "trackplan; please report it with the section file)", f"{path.name} [sections.{sid[:40]}]"))
    if strict and out.problems:
        if len(out.problems) == 1:
            raise out.problems[0]
        raise InputError(f"{len(out.problems)} sections have problems (--strict refuses the file): "
                         + " | ".join(str(p) for p in out.problems), str(path))
    return out
