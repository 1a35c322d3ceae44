"""Reader of GHCN-Daily by_station CSV files (daily maximum and minimum air temperature).

The layout and its source are described in :mod:`trackplan.weather`; the
fixed-width ``.dly`` layout is read by :mod:`trackplan.readers_fixed`.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from trackplan.errors import InputError, excerpt
from trackplan.readers_checks import _check_values, _finish
from trackplan.readers_common import (
    _CLOUD,
    _META_RE,
    _SUN,
    _TMAX,
    _TMIN,
    _base_meta,
    _check_latlon,
    _Ctx,
    _first_lines,
    _parse_meta_lines,
    _read_csv_text,
)


# GHCN-Daily by_station CSV
# --------------------------------------------------------------------------

_GHCN_NAMES = ["id", "date", "element", "value", "mflag", "qflag", "sflag", "obstime"]
_GHCN_ELEMENTS = {"TMAX": ("tmax_C", 0.1), "TMIN": ("tmin_C", 0.1),
                  "PSUN": ("sunshine_fraction", 0.01), "ACSH": ("cloud_fraction", 0.01)}


def _read_ghcn_daily(text: str, ctx: _Ctx) -> tuple[pd.DataFrame, dict]:
    meta = _base_meta()
    # optional '# key: value' lines at the top
    meta_lines = []
    skip = 0
    for ln, line in enumerate(_first_lines(text, 200), start=1):
        s = line.strip()
        if s.startswith("#") or not s:
            m = _META_RE.match(s)
            if m:
                meta_lines.append((ln, m.group(1), m.group(2)))
            skip = ln
            continue
        break
    _parse_meta_lines(meta_lines, meta, ctx)
    meta.pop("_tz_text", None)
    dtypes = {"id": str, "date": str, "element": str, "value": "float64", "mflag": str, "qflag": str,
              "sflag": str, "obstime": str}
    kw = dict(header=None, names=_GHCN_NAMES, skiprows=skip, keep_default_na=False,
              na_values={"value": ["", "-9999"]}, skip_blank_lines=False, index_col=False)
    raw, typed = _read_csv_text(text, dtypes, kw, "GHCN-Daily CSV", ctx.label)
    if not typed:
        v = raw["value"]
        num = pd.to_numeric(v, errors="coerce")
        bad = (v.notna() & (v != "") & (v != "-9999") & num.isna()).to_numpy()
        i = int(np.argmax(bad))
        raise InputError(f"{excerpt(v.iloc[i])} is not a number (GHCN-Daily VALUE field)",
                         ctx.at(skip + 1 + i, "4 (VALUE)")) from None
    lines = np.arange(len(raw)) + skip + 1
    keep = raw["id"].notna().to_numpy() & (raw["id"].str.strip() != "").to_numpy()
    raw, lines = raw.loc[keep], lines[keep]
    ids = raw["id"].unique()
    if len(ids) > 1:
        raise InputError(f"the file holds {len(ids)} stations ({', '.join(map(str, ids[:4]))}...); "
                         "give one station per file", ctx.label)
    meta["station_id"] = str(ids[0])
    _ghcn_station_list(Path(ctx.path), meta["station_id"], meta, ctx)
    _check_latlon(meta, ctx, None)
    el = raw["element"].to_numpy(dtype=str)
    sel = np.isin(el, list(_GHCN_ELEMENTS))
    raw, lines, el = raw.loc[sel], lines[sel], el[sel]
    if not (el == "TMAX").any() or not (el == "TMIN").any():
        raise InputError("no TMAX and TMIN lines; a daily record needs both (GHCN-Daily elements, tenths of degC)",
                         ctx.label)
    d = pd.to_datetime(raw["date"], format="%Y%m%d", errors="coerce")
    if d.isna().any():
        i = int(np.argmax(d.isna().to_numpy()))
        raise InputError(f"cannot read {excerpt(raw['date'].iloc[i])} as a date (YYYYMMDD)", ctx.at(int(lines[i]), "2 (DATE)"))
    dup = pd.DataFrame({"d": d.to_numpy(), "e": el}).duplicated().to_numpy()
    if dup.any():
        i = int(np.argmax(dup))
        raise InputError(f"second {el[i]} value for {raw['date'].iloc[i]}; give each date and element once",
                         ctx.at(int(lines[i])))
    vals = raw["value"].to_numpy(dtype=float)
    q = raw["qflag"].fillna("").str.strip().to_numpy(dtype=str)
    flagged = (q != "") & ~np.isnan(vals)
    if flagged.any():
        idx = np.flatnonzero(flagged)[:3]
        ctx.warn(
            f"{int(flagged.sum())} value(s) with a quality flag (failed the archive's checks) treated as missing ("
            + ", ".join(f"line {int(lines[i])}: {el[i]} flag {q[i]}" for i in idx) + ")"
        )
        vals = np.where(flagged, np.nan, vals)
    scale = pd.Series({e: f for e, (_, f) in _GHCN_ELEMENTS.items()})
    si = vals * scale.reindex(el).to_numpy()
    long = pd.DataFrame({"date": d.to_numpy(), "el": el, "v": si, "line": lines})
    wide = long.pivot(index="date", columns="el", values="v").sort_index()
    data = pd.DataFrame(index=pd.DatetimeIndex(wide.index, name="date"))
    for e, (col, _) in _GHCN_ELEMENTS.items():
        if e in wide:
            data[col] = wide[e].to_numpy()
    data.index.freq = None
    line_of = long.pivot_table(index="date", values="line", aggfunc="min").reindex(data.index)["line"].to_numpy()
    used = {}
    for e, (col, _) in _GHCN_ELEMENTS.items():
        if col in data:
            qd = {"tmax_C": _TMAX, "tmin_C": _TMIN, "sunshine_fraction": _SUN, "cloud_fraction": _CLOUD}[col]
            unit = "degC" if e in ("TMAX", "TMIN") else "1"
            used[e] = (col, qd, 1.0, 0.0, unit)
            meta["units_in_file"][col] = "tenths of degC" if e in ("TMAX", "TMIN") else "percent"
    _check_values(data, meta, line_of, used, ctx)
    if meta["station"] is None:
        meta["station"] = meta["station_id"]
    data = _finish(data, meta, ctx, "daily")
    return data, meta


def _ghcn_station_list(path: Path, sid: str, meta: dict, ctx: _Ctx) -> None:
    """Coordinates from ``ghcnd-stations.txt`` beside the file (fixed width, GHCN-Daily readme)."""
    lst = path.parent / "ghcnd-stations.txt"
    if not lst.is_file():
        if meta["latitude_deg"] is None:
            ctx.warn("no latitude/longitude: add '# latitude: ...' and '# longitude: ...' lines or put "
                     "ghcnd-stations.txt beside the file", code="no_coordinates")
        return
    with open(lst, encoding="utf-8", errors="replace") as fh:
        for ln, line in enumerate(fh, start=1):
            if line.startswith(sid):
                try:
                    lat = float(line[12:20])
                    lon = float(line[21:30])
                    elev = float(line[31:37])
                except ValueError:
                    raise InputError("cannot read latitude/longitude/elevation (columns 13-37)",
                                     f"{lst} line {ln}") from None
                if meta["latitude_deg"] is None:
                    meta["latitude_deg"] = lat
                if meta["longitude_deg"] is None:
                    meta["longitude_deg"] = lon
                if meta["elevation_m"] is None and elev > -999:
                    meta["elevation_m"] = elev
                if meta["station"] is None:
                    meta["station"] = line[41:71].strip() or None
                return
    ctx.warn(f"station {sid} is not in {lst}")
