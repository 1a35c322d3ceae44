"""Column mapping: read a record's columns and units without editing the file.

A mapping says which column of a file holds which quantity, and in what unit::

    --column "tmax=temp_max [degC]" --column "tmin=temp_min [degC]"

or, in a section file, ``columns = { tmax = "temp_max [degC]", tmin = "temp_min [degC]" }``.
The left side is a quantity name of the record (:data:`CANONICAL`, or ``time``
for the timestamp column), the right side the column's name as written in the
file's header and, in brackets, its unit. The unit may be left out only when
the header itself carries it (``tmax [degC]``).

Without a mapping, a CSV header is read as follows:

* a column ``name [unit]`` whose name is a quantity of the record, or a
  common name of one (:data:`COMMON_NAMES`), is read;
* a column with a common name of a needed quantity (``TMAX``, ``temp_max``,
  ``tasmax``, ``max_temp``, ``temp``...: :data:`COMMON_NAMES`) but no unit is
  refused: the message proposes the exact ``--column`` to write. A unit is
  never guessed;
* every other column is ignored, and listed once in a warning.

Nothing is read from a column that the mapping or the header's own unit
does not define.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

from trackplan.errors import InputError, UnitKindError, excerpt, option_ref

#: Where advice names the column mapping or the zone the user gives (the command line's --column, --tz).
_COLUMN, _TZ = option_ref("column"), option_ref("tz")

#: Quantity names a mapping may use -> canonical column (``time`` is the timestamp column).
CANONICAL = {
    "time": "time",
    "date": "time",
    "air_temperature": "air_temperature_C",
    "ghi": "ghi_W_m2",
    "dni": "dni_W_m2",
    "dhi": "dhi_W_m2",
    "wind_speed": "wind_speed_m_s",
    "relative_humidity": "relative_humidity_pct",
    "cloud_fraction": "cloud_fraction",
    "tmax": "tmax_C",
    "tmin": "tmin_C",
    "sunshine_fraction": "sunshine_fraction",
}

#: Header names (lower case, ``_`` for spaces and dashes) recognised as a quantity of a
#: published or common layout; read only with a unit (from the header or a mapping).
COMMON_NAMES = {
    "tmax": ("tmax", "temp_max", "tasmax", "max_temp", "maxtemp", "max_temperature", "temperature_max",
             "maximum_temperature", "t_max", "tx", "max_air_temperature", "daily_max", "high"),
    "tmin": ("tmin", "temp_min", "tasmin", "min_temp", "mintemp", "min_temperature", "temperature_min",
             "minimum_temperature", "t_min", "tn", "min_air_temperature", "daily_min", "low"),
    "air_temperature": ("air_temperature", "temperature", "temp", "tas", "temp_air", "air_temp", "t_air",
                        "dry_bulb", "drybulb", "t2m", "tmp"),
}

#: Names of a timestamp column (lower case).
TIME_NAMES = ("time", "timestamp", "datetime", "date_time", "date", "day", "valid_time", "obs_time")

_SPEC_RE = re.compile(r"^\s*([^=\s]+)\s*=\s*(.*?)\s*$")
_SOURCE_RE = re.compile(r"^(.*?)\s*(?:\[([^\[\]]*)\])?\s*$")


def norm(name: str) -> str:
    """Header name in the form used for matching: lower case, ``_`` for spaces and dashes."""
    return re.sub(r"[\s\-]+", "_", name.strip().lower())


@dataclass(frozen=True)
class ColumnMap:
    """One mapping: quantity ``name`` (key of :data:`CANONICAL`) from ``source`` in ``unit``."""

    name: str
    source: str
    unit: str | None
    where: str


def parse_spec(text: str, where: str) -> ColumnMap:
    """Read ``NAME="SOURCE [UNIT]"`` (the ``--column`` option)."""
    m = _SPEC_RE.match(str(text))
    if not m or not m.group(2):
        raise InputError(f"cannot read {excerpt(text)}; write QUANTITY=\"COLUMN [UNIT]\", e.g. "
                         "\"tmax=temp_max [degC]\"", where)
    return _mapping(m.group(1), m.group(2).strip().strip('"').strip("'"), where)


def _mapping(name: str, source_text: str, where: str) -> ColumnMap:
    key = norm(name)
    if key not in CANONICAL:
        raise InputError(f"unknown quantity {excerpt(name)}; accepted: {', '.join(CANONICAL)}", where)
    m = _SOURCE_RE.match(source_text)
    source = (m.group(1) if m else source_text).strip()
    unit = (m.group(2) or "").strip() if m else ""
    if not source:
        raise InputError(f"no column name for {name}; write e.g. \"{name}=temp_max [degC]\"", where)
    if CANONICAL[key] == "time" and unit:
        raise InputError(f"the timestamp column takes no unit (got [{unit}])", where)
    return ColumnMap(key, source, unit or None, where)


def parse_options(texts, where: str = "column") -> dict[str, ColumnMap]:
    """Mappings from repeated ``QUANTITY="SOURCE [UNIT]"`` texts (``None`` or empty: no mapping).

    ``where`` is the field name, or the option when the command line calls (it names its option).
    """
    return _collect([parse_spec(t, where) for t in (texts or [])])


def parse_table(table, where: str) -> dict[str, ColumnMap]:
    """Mappings from a section file's ``columns = { tmax = "temp_max [degC]", ... }``."""
    if not isinstance(table, dict):
        raise InputError("expected a table such as { tmax = \"temp_max [degC]\", tmin = \"temp_min [degC]\" }",
                         where)
    out = []
    for k, v in table.items():
        if not isinstance(v, str):
            raise InputError(f"expected text \"COLUMN [UNIT]\" for {k}, got {excerpt(v)}", f"{where}.{k}")
        out.append(_mapping(k, v, f"{where}.{k}"))
    return _collect(out)


def _collect(maps: list[ColumnMap]) -> dict[str, ColumnMap]:
    out: dict[str, ColumnMap] = {}
    by_col: dict[str, ColumnMap] = {}
    by_source: dict[str, ColumnMap] = {}
    for cm in maps:
        col = CANONICAL[cm.name]
        if col in by_col:
            raise InputError(f"two columns mapped to {cm.name}: {excerpt(by_col[col].source)} and {excerpt(cm.source)}; "
                             "map each quantity once", cm.where)
        if cm.source in by_source:
            raise InputError(f"column {excerpt(cm.source)} mapped twice ({by_source[cm.source].name} and {cm.name}); "
                             "map each column once", cm.where)
        by_col[col] = cm
        by_source[cm.source] = cm
        out[cm.name] = cm
    return out


def merge(base: dict[str, ColumnMap], override: dict[str, ColumnMap]) -> dict[str, ColumnMap]:
    """``override`` (e.g. the command line) replaces ``base`` (e.g. a section file) quantity by quantity."""
    out = {k: v for k, v in base.items() if CANONICAL[k] not in {CANONICAL[o] for o in override}}
    out.update(override)
    return _collect(list(out.values()))


def key(mapping: dict[str, ColumnMap] | None) -> tuple:
    """A hashable form of a mapping (for caches of records read)."""
    return tuple(sorted((k, v.source, v.unit) for k, v in (mapping or {}).items()))


@dataclass
class Header:
    """A resolved CSV header."""

    time_index: int  # position of the timestamp column
    columns: dict  # header text -> (quantity name, unit, where of the unit)
    ignored: list  # header texts not read


def _find(names: list[str], source: str, where: str) -> int:
    if source in names:
        return names.index(source)
    low = [norm(n) for n in names]
    if norm(source) in low:
        return low.index(norm(source))
    bare = [norm(_SOURCE_RE.match(n).group(1)) for n in names]
    if norm(source) in bare and bare.count(norm(source)) == 1:
        return bare.index(norm(source))
    raise InputError(f"no column {excerpt(source)} in the file; its columns are: "
                     + _column_list(names), where)


def resolve_header(names: list[str], mapping: dict[str, ColumnMap] | None, quantities: dict,
                   where_header: str) -> Header:
    """Which header column is the time, which are read (and in what unit), which are ignored.

    Parameters
    ----------
    names : list of str
        The header's column names as written.
    mapping : dict
        From :func:`parse_options` / :func:`parse_table` (may be empty).
    quantities : dict
        Quantity names the file format accepts with a unit in the header
        (lower case) -> an object with a ``column`` attribute (canonical column).
    where_header : str
        File and line of the header, for messages.

    Raises
    ------
    InputError
        A mapped column not in the file, no timestamp column, a quantity given
        by two columns.
    """
    mapping = mapping or {}
    taken: dict[int, tuple] = {}
    time_index = None
    for name, cm in mapping.items():
        i = _find(names, cm.source, cm.where)
        if CANONICAL[name] == "time":
            time_index = i
            continue
        m = _SOURCE_RE.match(names[i])
        unit = cm.unit or ((m.group(2) or "").strip() if m else "")
        if not unit:
            raise InputError(f"no unit for {name} (column {excerpt(names[i])}): write it in brackets, "
                             f"e.g. {name}=\"{cm.source} [degC]\" (the unit the file's source states)", cm.where)
        taken[i] = (name, unit, cm.where)
    if time_index is None:
        for i, n in enumerate(names):
            if i not in taken and norm(_SOURCE_RE.match(n).group(1)) in TIME_NAMES:
                time_index = i
                break
    if time_index is None:
        raise InputError("no timestamp column; name it 'time' or 'date', or map it with "
                         f"{_COLUMN} \"time=COLUMN\" (the columns are: {_column_list(names)})",
                         where_header)
    mapped_cols = {quantities[n].column if n in quantities else CANONICAL[n] for n, _, _ in taken.values()}
    ignored = []
    for i, h in enumerate(names):
        if i == time_index or i in taken:
            continue
        m = _SOURCE_RE.match(h)
        qname, unit = norm(m.group(1)), (m.group(2) or "").strip()
        if qname not in quantities and recognised(h) in quantities:
            qname = recognised(h)  # a common name (temp_max, TMAX, tasmax...) with its unit in the header
        q = quantities.get(qname)
        if q is not None and unit and q.column not in mapped_cols:
            taken[i] = (qname, unit, f"{where_header} column {i + 1} {excerpt(h)}")
            mapped_cols.add(q.column)
            continue
        ignored.append(h)
    cols: dict = {}
    seen: dict[str, str] = {}
    for i in sorted(taken):
        name, unit, w = taken[i]
        q = quantities.get(name) or quantities.get(norm(name))
        col = q.column
        if col in seen:
            raise InputError(f"two columns for {col}: {excerpt(seen[col])} and {excerpt(names[i])}; map the one to read "
                             f"with {_COLUMN}, e.g. \"{name}={names[i]} [{unit}]\"", w)
        seen[col] = names[i]
        cols[names[i]] = (name, unit, w)
    return Header(time_index, cols, ignored)


def recognised(header: str) -> str | None:
    """The quantity a header name commonly stands for (``None`` if none)."""
    m = _SOURCE_RE.match(header)
    n = norm(m.group(1) if m else header)
    for q, names in COMMON_NAMES.items():
        if n in names:
            return q
    return None


def proposal(missing: list[str], ignored: list[str], step: str) -> str:
    """Words proposing the ``--column`` options for needed quantities found under common names."""
    props = []
    for q in missing:
        for h in ignored:
            if recognised(h) == q:
                props.append(f'{_COLUMN} "{q}={_SOURCE_RE.match(h).group(1).strip()} [degC]"')
                break
    if not props:
        return ""
    return ("; if the columns are what their names say, write " + " ".join(props)
            + " with the unit the file's source states ([degC], [degF] or [K]; a unit is never guessed)")


# --------------------------------------------------------------------------
# Hooks of the CSV reader (trackplan.weather)
# --------------------------------------------------------------------------

_NEED = {"hourly": ("air_temperature",), "daily": ("tmax", "tmin")}


def csv_plan(names: list[str], mapping, quantities: dict, where_header: str):
    """The timestamp column and the candidate quantity columns of a CSV header.

    Returns
    -------
    (str, dict, list)
        Header text of the timestamp column; header text -> ``(quantity,
        unit, where, mapped)`` of each column to read, ``quantity`` the
        format's quantity object; the header texts of the ignored columns.
    """
    hdr = resolve_header(names, mapping, quantities, where_header)
    mapped = {cm.source for cm in (mapping or {}).values()}
    cand = {}
    for h, (name, unit, w) in hdr.columns.items():
        q = quantities.get(name) or quantities[norm(name)]
        if q.kind not in ("fraction", "percent"):
            from trackplan import units

            try:
                units.to_si(1.0, unit, q.kind)
            except UnitKindError:
                raise InputError(f"unit [{unit}] of {name} (column {excerpt(h)}) is not a {q.kind} unit; accepted: "
                                 + ", ".join(units.accepted_units(q.kind)), w) from None
            except InputError as exc:
                raise InputError(exc.bare_message, w) from None
        cand[h] = (q, unit, w, h in mapped or any(norm(h) == norm(m) for m in mapped))
    return names[hdr.time_index], cand, list(hdr.ignored)


_ISO_RE = r"^\s*\d{4}-\d{2}-\d{2}"
_YMD_RE = r"^\s*(\d{4})[/.](\d{1,2})[/.](\d{1,2})"


def step_of(tcol, lines, ctx):
    """Timestamps written year first with ``/`` or ``.`` made ISO, and the record's time step.

    The step is read from the timestamps, never from the column's name: a
    record is daily when every timestamp falls at midnight and the most common
    step is a day or more, hourly (or finer) otherwise.

    Returns
    -------
    (pandas.Series, str)
        The timestamp texts (ISO 8601) and ``"daily"`` or ``"hourly"``.
    """
    import numpy as np
    import pandas as pd

    s = tcol.astype(str)
    first = str(s.iloc[0])
    if not re.match(_ISO_RE, first) and re.match(_YMD_RE, first):
        s = s.str.replace(_YMD_RE, lambda m: f"{m[1]}-{int(m[2]):02d}-{int(m[3]):02d}", regex=True)
    try:
        t = pd.to_datetime(s, format="ISO8601", errors="coerce", utc=True)
    except (ValueError, TypeError):
        t = pd.Series(pd.NaT, index=s.index)
    ok = t.notna().to_numpy()
    if ok.sum() < 1:
        i = 0
        raise InputError(f"cannot read {excerpt(tcol.iloc[i])} as a date or ISO 8601 timestamp "
                         "(e.g. 1995-07-01 or 1995-07-01T14:00)", ctx.at(int(lines[i])))
    v = pd.DatetimeIndex(t[ok])
    midnight = bool((v == v.normalize()).all())
    d = np.diff(v.asi8)
    if len(d) and (d > 0).any():
        vals, counts = np.unique(d[d > 0], return_counts=True)
        step_ns = float(vals[int(np.argmax(counts))]) * pd.Timedelta(1, unit=v.unit).value
    else:
        step_ns = 86400e9 if len(s.iloc[0].strip()) <= 10 else 3600e9
    daily = midnight and step_ns >= 86400e9
    return pd.Series(s.to_numpy(), index=tcol.index, name=tcol.name), "daily" if daily else "hourly"


def csv_keep(used: dict, cand: dict, ignored: list, names: list, step_kind: str, ctx, where_header: str) -> dict:
    """Keep the columns of the record's time step; refuse a record without its needed quantities.

    A column of the other time step is an error when it was mapped, else
    ignored. Ignored columns are listed once (``ignored_columns`` warning).
    """
    ignored = list(ignored)
    out = {}
    for h, v in used.items():
        q, unit, w, mapped = cand[h]
        if q.step not in ("any", step_kind):
            if mapped:
                raise InputError(f"{excerpt(h)} is a {q.step} quantity, but the timestamps make this a {step_kind} "
                                 "record", w)
            ignored.append(h)
            continue
        out[h] = v
    have = {v[0] for v in out.values()}
    need = {"air_temperature": "air_temperature_C", "tmax": "tmax_C", "tmin": "tmin_C"}
    missing = [n for n in _NEED[step_kind] if need[n] not in have]
    if missing:
        for n in missing:
            for h in ignored:
                if recognised(h) == n and not _SOURCE_RE.match(h).group(2):
                    raise InputError(
                        f"column {excerpt(h)} has no unit (read as {n}); write its unit with "
                        f'{_COLUMN} "{n}={_SOURCE_RE.match(h).group(1).strip()} [degC]" (or [degF], [K]: '
                        "the unit the file's source states; a unit is never guessed)",
                        f"{where_header} column {names.index(h) + 1} {excerpt(h)}")
        wanted = "air_temperature" if step_kind == "hourly" else "tmax and tmin"
        raise InputError(f"no column for {', '.join(missing)}: a {step_kind} record (from its timestamps) needs "
                         f"{wanted} with a unit; map them with {_COLUMN}, e.g. "
                         + ('"air_temperature=temp [degC]"' if step_kind == "hourly"
                            else f'"tmax=temp_max [degC]" {_COLUMN} "tmin=temp_min [degC]"'),
                         where_header)
    if ignored:
        bare = [h for h in ignored if not _SOURCE_RE.match(h).group(2) and (recognised(h) or norm(h) in CANONICAL)]
        ctx.warn("column(s) ignored, not used: " + ", ".join(repr(h) for h in ignored)
                 + (f"; {', '.join(repr(h) for h in bare)} name(s) a quantity but give no unit, so are not read"
                    if bare else "")
                 + f" (map a column with {_COLUMN} QUANTITY=\"COLUMN [UNIT]\" to read it)", code="ignored_columns")
    return out


def zone_text(tz_text, tz_where, ctx, step_kind: str = "hourly"):
    """The zone for the record's timestamps: the command line's or section file's ``tz``, else
    the file's own, else the nominal zone of the site's longitude (``round(lon / 15)`` h)."""
    if ctx.tz is not None:
        if tz_text is not None and tz_text.strip() != ctx.tz.strip():
            ctx.warn(f"the file says time zone {excerpt(tz_text)}; {ctx.tz!r} given for the record is used",
                     code="time_zone")
        return ctx.tz, None  # given by the caller: placed at its option or section field
    if tz_text is not None or ctx.site_lon is None:
        return tz_text, tz_where
    off = float(round(ctx.site_lon / 15.0))
    sign = "+" if off >= 0 else "-"
    text = f"UTC{sign}{int(abs(off)):02d}:00"
    if step_kind == "daily":  # local dates: the zone is only reported
        return text, "site longitude"
    ctx.warn(f"the file states no time zone; naive timestamps read as {text}, the nominal zone of the site's "
             f"longitude {ctx.site_lon:g} (give {_TZ}, or tz in the section file, to be sure)", code="time_zone")
    return text, "site longitude"


def _column_list(names, limit: int = 12) -> str:
    """The file's column names for a message: short excerpts, at most ``limit`` of them."""
    shown = ", ".join(excerpt(n) for n in names[:limit])
    return shown + (f" and {len(names) - limit} more" if len(names) > limit else "")
