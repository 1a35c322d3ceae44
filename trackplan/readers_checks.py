"""Checks of a weather record after its format is read: plausibility, regular grid, gaps, years.

Impossible values and likely unit slips, the regular time grid, interpolation
of short gaps, the gap list and the coverage of each calendar year, shared by
every reader (see :mod:`trackplan.weather` for the metadata they fill).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from trackplan import record_checks
from trackplan.errors import InputError, excerpt
from trackplan.readers_common import (
    MAX_INTERPOLATED_STEPS,
    MONTH_MIN_COVERAGE,
    TYPICAL_YEAR,
    YEAR_MIN_COVERAGE,
    _Ctx,
    _Quantity,
    _si_label,
)


# Plausibility
# --------------------------------------------------------------------------


def _lines_text(lines, mask, values, limit: int = 3) -> str:
    idx = np.flatnonzero(mask)[:limit]
    return ", ".join(f"line {int(lines[i])}: {values[i]:g}" for i in idx)


def _check_values(data: pd.DataFrame, meta: dict, lines, used: dict, ctx: _Ctx) -> None:
    """Flag impossible and implausible values, with the likely unit mistake."""
    by_col = {v[0]: (h, v) for h, v in used.items()}
    lat = meta.get("latitude_deg")
    for col in list(data.columns):
        h, (_, q, f, o, unit) = by_col[col]
        x = data[col].to_numpy()
        raw = (x - o) / f  # as written in the file
        valid = ~np.isnan(x)
        n = int(valid.sum())
        if n == 0:
            ctx.warn(f"column {excerpt(h)} holds no values")
            continue
        out = valid & ((x < q.lo - 1e-9) | (x > q.hi + 1e-9))
        n_out = int(out.sum())
        hint = _unit_hint(q, unit, raw[valid], x[valid])
        if n_out and (n_out >= max(3, 0.01 * n)) and hint:
            raise InputError(
                f"{n_out} of {n} values are outside {q.lo:g}..{q.hi:g} {_si_label(q)} "
                f"in the stated unit [{unit}] ({_lines_text(lines, out, raw)}); {hint}",
                ctx.at(None, repr(h)),
            )
        if n_out:
            ctx.warn(
                f"{n_out} impossible value(s) in column {excerpt(h)} (outside {q.lo:g}..{q.hi:g} {_si_label(q)}; "
                f"{_lines_text(lines, out, raw)}); treated as missing"
                + (f"; {hint}" if hint else ""),
            )
            x = x.copy()
            x[out] = np.nan
            data[col] = x
        elif hint:
            ctx.warn(f"column {excerpt(h)}: {hint}")
    if "tmax_C" in data and "tmin_C" in data:
        tx, tn = data["tmax_C"].to_numpy(), data["tmin_C"].to_numpy()
        both = ~np.isnan(tx) & ~np.isnan(tn)
        inv = both & (tn > tx)
        ninv = int(inv.sum())
        if ninv and ninv > 0.5 * both.sum():
            raise InputError(
                f"tmin is above tmax on {ninv} of {int(both.sum())} days; the tmax and tmin columns "
                "look swapped", ctx.label)
        if ninv:
            ctx.warn(
                f"tmin above tmax on {ninv} day(s) ({_lines_text(lines, inv, tn)}); kept as written"
            )
    confirmed = bool(meta.get("units_confirmed")) or ctx.units_confirmed
    if "air_temperature_C" in data and meta.get("units_in_file", {}).get("air_temperature_C"):
        record_checks.unit_slip(data["air_temperature_C"], None, meta["units_in_file"]["air_temperature_C"], lat,
                                "air_temperature", confirmed, ctx)
    if "tmax_C" in data and "tmin_C" in data:
        record_checks.unit_slip(data["tmax_C"], data["tmin_C"], meta["units_in_file"].get("tmax_C", ""), lat, "tmax",
                                confirmed, ctx)


def _unit_hint(q: _Quantity, unit: str, raw: np.ndarray, x: np.ndarray) -> str:
    """The likely unit mistake when values do not fit the stated unit ('' if none)."""
    u = unit.strip().lower()
    if q.kind == "temperature":
        as_f = (raw - 32.0) * 5.0 / 9.0
        as_c = raw
        if u in ("degc", "deg c", "°c", "celsius") and x.max() > q.hi and as_f.min() >= q.lo and as_f.max() <= q.hi:
            return "these look like degF; write the unit as [degF]"
        if u in ("k", "kelvin") and x.min() < q.lo and as_c.max() <= q.hi and as_c.min() >= q.lo:
            return "these look like degC; write the unit as [degC]"
        if u in ("degf", "deg f", "°f", "fahrenheit") and x.max() > q.hi:
            as_k = raw - 273.15
            if as_k.min() >= q.lo and as_k.max() <= q.hi:
                return "these look like kelvin; write the unit as [K]"
        return ""
    if q.kind == "irradiance":
        mx = float(np.nanmax(x))
        if u in ("w/m**2", "w/m2", "w/m^2") and 0 < mx <= 1.6:
            return f"the largest value is {mx:g} W/m**2; these look like kW/m**2"
        if u.startswith("kw") and x.max() > q.hi and np.nanmax(raw) <= q.hi:
            return "these look like W/m**2; write the unit as [W/m**2]"
        return ""
    if q.kind == "speed":
        if np.nanmean(x) > 15.0:
            return (f"mean wind speed {np.nanmean(x):.1f} m/s is very high; is the unit km/h, mph or knot?")
        return ""
    if q.kind in ("percent", "fraction"):
        mx = float(np.nanmax(x))
        if q.kind == "fraction" and mx > 1.0 and np.nanmax(raw) <= 100.0:
            return "these look like percent; write the unit as [%]"
        if q.kind == "percent" and mx <= 1.0 and len(x) > 24 and u in ("%", "percent", "pct"):
            return f"the largest value is {mx:g} %; these look like a 0-1 fraction; write the unit as [1]"
        return ""
    return ""


# --------------------------------------------------------------------------
# Regular grid, short interpolation, gaps, years
# --------------------------------------------------------------------------


def _runs(mask: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Start indices and lengths of runs of True in ``mask``."""
    m = np.concatenate(([False], mask, [False])).astype(np.int8)
    d = np.diff(m)
    starts = np.flatnonzero(d == 1)
    ends = np.flatnonzero(d == -1)
    return starts, ends - starts


def _regularise(data: pd.DataFrame, step: pd.Timedelta, ctx: _Ctx) -> pd.DataFrame:
    idx = data.index
    v = idx.asi8
    st = step.value if hasattr(step, "value") else int(step)
    # nanosecond-free: asi8 is in the index's resolution
    unit_ns = pd.Timedelta(1, unit=idx.unit).value
    st_u = st // unit_ns
    off = (v - v[0]) % st_u
    if (off != 0).any():
        ctx.warn(
            f"timestamps are not on a regular {step} grid ({int((off != 0).sum())} off the grid); "
            "the record is left irregular"
        )
        return data
    n = int((v[-1] - v[0]) // st_u) + 1
    if n == len(v):
        return data
    grid = pd.date_range(idx[0], periods=n, freq=step, unit=idx.unit)
    grid.name = idx.name
    return data.reindex(grid)


def _interpolate_short(data: pd.DataFrame, ctx: _Ctx, step_h: float) -> int:
    total = 0
    for col in data.columns:
        x = data[col].to_numpy()
        miss = np.isnan(x)
        if not miss.any():
            continue
        starts, lens = _runs(miss)
        inside = (starts > 0) & (starts + lens < len(x))
        short = inside & (lens <= MAX_INTERPOLATED_STEPS)
        if not short.any():
            continue
        fill = np.zeros(len(x), dtype=bool)
        for s, L in zip(starts[short], lens[short]):
            fill[s : s + L] = True
        filled = data[col].interpolate(method="time", limit_area="inside").to_numpy()
        x = x.copy()
        x[fill] = filled[fill]
        data[col] = x
        k = int(fill.sum())
        total += k
        ctx.warn(
            f"column {col}: {k} missing value(s) in {int(short.sum())} gap(s) of at most "
            f"{MAX_INTERPOLATED_STEPS} steps ({MAX_INTERPOLATED_STEPS * step_h:g} h) filled by linear "
            "interpolation"
        )
    return total


def _finish(data: pd.DataFrame, meta: dict, ctx: _Ctx, step_kind: str) -> pd.DataFrame:
    """Regular grid, short interpolation, gaps and years; fills ``meta``, returns the data."""
    idx = data.index
    if len(idx) >= 2:
        d = np.diff(idx.asi8)
        vals, counts = np.unique(d, return_counts=True)
        step_u = int(vals[np.argmax(counts)])
        unit_ns = pd.Timedelta(1, unit=idx.unit).value
        step = pd.Timedelta(step_u * unit_ns, unit="ns")
    else:
        step = pd.Timedelta(hours=1) if step_kind == "hourly" else pd.Timedelta(days=1)
    if step_kind == "daily" and step != pd.Timedelta(days=1):
        ctx.warn(f"dates are mostly {step} apart, not one day; read as a daily record")
        step = pd.Timedelta(days=1)
    step_s = step.total_seconds()
    if step_kind == "hourly" and step_s > 3600:
        ctx.warn(f"the time step is {step_s / 3600:g} h, coarser than hourly; the daily cycle of "
                 "rail temperature is resolved poorly")
    meta["time_step"] = step_kind
    meta["time_step_s"] = step_s
    record_checks.check_span(data.index, step, ctx)
    before = data.index
    data = _regularise(data, step, ctx)
    added = len(data) - len(before)
    if added > 0:
        new = data.index[~data.index.isin(before)]
        ctx.warn(f"{added} {'timestamp' if step_kind == 'hourly' else 'date'}(s) missing from the file, "
                 f"first {new[0]} (rows of NaN added so the steps are regular)")

    main = ["air_temperature_C"] if step_kind == "hourly" else ["tmax_C", "tmin_C"]
    main_miss0 = data[main].isna().any(axis=1).to_numpy()
    if step_kind == "hourly":
        _interpolate_short(data, ctx, step_s / 3600)
    main_miss = data[main].isna().any(axis=1).to_numpy()
    starts, lens = _runs(main_miss)
    unit = "h" if step_kind == "hourly" else "days"
    step_in_unit = step_s / 3600 if step_kind == "hourly" else step_s / 86400
    first = []
    for s, L in zip(starts[:5], lens[:5]):
        first.append({
            "start": str(data.index[s]),
            "end": str(data.index[s + L - 1]),
            f"length_{unit}": float(L * step_in_unit),
        })
    gaps = {
        "column": " or ".join(main),
        "count": int(len(starts)),
        "missing": int(main_miss.sum()),
        f"longest_{unit}": float(lens.max() * step_in_unit) if len(lens) else 0.0,
        "interpolated": int(main_miss0.sum() - main_miss.sum()),
        "first": first,
    }
    meta["gaps"] = gaps
    if len(starts):
        ctx.warn(
            f"{len(starts)} gap(s) in {' / '.join(main)} left missing, {int(main_miss.sum())} "
            f"{'steps' if step_kind == 'hourly' else 'days'} in all, longest {gaps[f'longest_{unit}']:g} "
            f"{unit} (first from {first[0]['start']})"
        )
    for col in data.columns:
        if col in main:
            continue
        nm = int(data[col].isna().sum())
        if nm:
            ctx.warn(f"column {col}: {nm} value(s) still missing after the short interpolation"
                     if step_kind == "hourly" else f"column {col}: {nm} missing value(s)")
    _years(data, main_miss, meta, ctx, step_s)
    if step_kind == "hourly":
        from trackplan.quality import _check_solar_timing

        _check_solar_timing(data, meta, ctx)
    return data


def _years(data: pd.DataFrame, main_miss: np.ndarray, meta: dict, ctx: _Ctx, step_s: float) -> None:
    idx = data.index
    if meta.get("typical_year"):
        meta["years"] = [TYPICAL_YEAR]
        meta["year_coverage"] = {TYPICAL_YEAR: float(1.0 - main_miss[idx.year == TYPICAL_YEAR].mean())}
        return
    year = idx.year.to_numpy()
    month = idx.month.to_numpy()
    present = ~main_miss
    y0, y1 = int(year.min()), int(year.max())
    ys = np.arange(y0, y1 + 1)
    key = (year - y0) * 12 + (month - 1)
    got = np.bincount(key[present], minlength=len(ys) * 12).reshape(len(ys), 12)
    per_day = 86400.0 / step_s
    dim = np.array([[pd.Timestamp(int(y), m, 1).days_in_month for m in range(1, 13)] for y in ys])
    expected = dim * per_day
    mcov = got / expected
    ycov = got.sum(axis=1) / expected.sum(axis=1)
    cov = {int(y): round(float(c), 4) for y, c in zip(ys, ycov)}
    complete = [int(y) for y, c, mc in zip(ys, ycov, mcov) if c >= YEAR_MIN_COVERAGE and mc.min() >= MONTH_MIN_COVERAGE]
    missing = [int(y) for y, c in zip(ys, ycov) if c == 0.0]
    meta["years"] = complete
    meta["year_coverage"] = cov
    meta["missing_years"] = missing
    if missing:
        ctx.warn(f"year(s) with no data at all inside the record: {', '.join(map(str, missing))}")
    partial = [y for y in cov if y not in complete and y not in missing]
    if partial:
        ctx.warn(
            "incomplete year(s), left out of the complete years: "
            + ", ".join(f"{y} ({cov[y] * 100:.0f} %)" for y in partial)
        )


# --------------------------------------------------------------------------
