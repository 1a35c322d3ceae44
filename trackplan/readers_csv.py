"""Reader of our CSV weather record (``trackplan-csv``): header with units, metadata lines.

The layout is described in :mod:`trackplan.weather`; the column mapping of
other CSV layouts in :mod:`trackplan.columns`.
"""

from __future__ import annotations


import numpy as np
import pandas as pd

from trackplan import columns
from trackplan.errors import InputError, excerpt
from trackplan.readers_checks import _check_values, _finish
from trackplan.readers_common import (
    _META_RE,
    CSV_QUANTITIES,
    _base_meta,
    _check_order,
    _Ctx,
    _parse_dates,
    _parse_meta_lines,
    _parse_times,
    _parse_timezone,
    _read_csv_text,
    _raise_bad_number,
    _unit_factor,
)


# Our CSV
# --------------------------------------------------------------------------


def _read_trackplan_csv(text: str, ctx: _Ctx) -> tuple[pd.DataFrame, dict]:
    meta = _base_meta()
    # metadata lines and the header
    meta_lines: list[tuple[int, str, str]] = []
    header = None
    header_line = 0
    pos = 0
    lineno = 0
    while pos < len(text):
        end = text.find("\n", pos)
        if end < 0:
            end = len(text)
        line = text[pos:end].rstrip("\r")
        lineno += 1
        pos = end + 1
        s = line.strip()
        if not s:
            continue
        if s.startswith("#"):
            m = _META_RE.match(s)
            if m:
                meta_lines.append((lineno, m.group(1), m.group(2)))
            continue
        header = line
        header_line = lineno
        break
    if header is None:
        raise InputError(
            "no header and no data, only comment lines; expected a header such as "
            "'time,air_temperature [degC]' or 'date,tmax [degC],tmin [degC]'",
            ctx.label,
        )
    _parse_meta_lines(meta_lines, meta, ctx)

    names = [h.strip() for h in header.split(",")]
    tname, cand, ignored = columns.csv_plan(names, ctx.columns, CSV_QUANTITIES, ctx.at(header_line))
    used = {h: (q.column, q, *_unit_factor(u, q, w), u) for h, (q, u, w, _) in cand.items()}

    # the data, vectorised
    dtypes = {tname: str}
    dtypes.update({h: "float64" for h in used})
    read_kw = dict(
        skiprows=header_line - 1,
        header=0,
        usecols=[tname, *used],
        skip_blank_lines=False,
        skipinitialspace=True,
    )
    raw, typed = _read_csv_text(text, dtypes, read_kw, "CSV", ctx.label)
    if not typed:
        _raise_bad_number(raw, list(used), names, header_line, ctx)
        raise  # pragma: no cover - the line above always raises
    # drop blank lines (all empty), remember file line of each row
    lines = np.arange(len(raw)) + header_line + 1
    blank = raw[tname].isna().to_numpy() & raw[list(used)].isna().all(axis=1).to_numpy()
    if blank.any():
        raw = raw.loc[~blank]
        lines = lines[~blank]
    if len(raw) == 0:
        raise InputError("header but no data rows", ctx.at(header_line))
    tcol = raw[tname]
    bad_t = tcol.isna().to_numpy()
    if bad_t.any():
        i = int(np.argmax(bad_t))
        raise InputError(f"empty {excerpt(tname)} cell; every row needs a timestamp", ctx.at(int(lines[i]), "1"))

    tz_text, tz_where = meta.pop("_tz_text", (None, None))
    tcol, step_kind = columns.step_of(tcol, lines, ctx)
    used = columns.csv_keep(used, cand, ignored, names, step_kind, ctx, ctx.at(header_line))
    data = pd.DataFrame(index=pd.RangeIndex(len(raw)))
    for h, (col, q, f, o, unit) in used.items():
        data[col] = raw[h].to_numpy(dtype=float) * f + o
        meta["units_in_file"][col] = unit
    tz_text, tz_where = columns.zone_text(tz_text, tz_where, ctx, step_kind)
    if step_kind == "hourly":
        index = _parse_times(tcol, tz_text, tz_where, meta, lines, ctx)
    else:
        index = _parse_dates(tcol, lines, ctx)
        if tz_text is not None:
            meta["tz"], meta["utc_offset_h"] = _parse_timezone(tz_text, tz_where)
    data.index = index
    _check_order(index, lines, ctx)

    if step_kind == "hourly":
        if meta["wind_height_m"] is None and "wind_speed_m_s" in data:
            meta["wind_height_m"] = 10.0
        timing = meta["irradiance_timing"] or "instant"
        meta["irradiance_timing"] = timing
    _check_values(data, meta, lines, used, ctx)
    data = _finish(data, meta, ctx, step_kind)
    return data, meta
