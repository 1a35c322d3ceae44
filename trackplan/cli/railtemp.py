"""``trackplan railtemp``: rail temperatures and design extremes from a weather record."""

from __future__ import annotations

import math
from pathlib import Path
from typing import Optional

import typer
from rich.markup import escape
from rich.panel import Panel
from rich.table import Table

from trackplan import names, rails, units
from trackplan.cli.common import (
    ALLOW_SHORT_OPTION,
    COLUMN_OPTION,
    JSON_OPTION,
    TZ_OPTION,
    UNITS_OPTION,
    UnitSystem,
    command,
    console,
    emit_json,
    phase,
    print_caution,
)
from trackplan.errors import InputError

#: Method names offered on the command line (``auto`` and the keys of trackplan.railtemp.METHODS).
METHOD_CHOICES = names.method_choices()
DISTRIBUTION_CHOICES = names.DISTRIBUTIONS


def _angle(text: Optional[str], option: str, lo: float, hi: float, what: str) -> Optional[float]:
    if text is None:
        return None
    v = units.parse(text, "angle", option, default_unit="deg")
    if not lo <= v <= hi:
        raise InputError(f"{text!r} is out of range; give {what}", option)
    return v


def _fraction(text: Optional[str], option: str) -> float:
    if text is None:
        return 0.0
    try:
        v = float(str(text).strip().rstrip("%")) / (100.0 if str(text).strip().endswith("%") else 1.0)
    except ValueError:
        raise InputError(f"cannot read {text!r}; give a fraction from 0 (open sky) to 1 (tunnel), e.g. 0.3",
                         option) from None
    if not (math.isfinite(v) and 0.0 <= v <= 1.0):
        raise InputError(f"{text!r} is out of range; give a fraction from 0 (open sky) to 1 (tunnel)", option)
    return v


@command("railtemp")
def railtemp_cmd(
    file: Path = typer.Argument(..., help="Weather record: trackplan CSV (hourly or daily), TMY3, EPW or GHCN-Daily CSV."),
    lat: Optional[str] = typer.Option(None, "--lat", help="Latitude, north positive, e.g. '41.2' or '41.2 deg' (default: from the record)."),
    lon: Optional[str] = typer.Option(None, "--lon", help="Longitude, east positive, e.g. '-97.4' (default: from the record)."),
    azimuth: str = typer.Option("0", "--azimuth", help="Track azimuth, degrees clockwise from north: 0 north-south, 90 east-west."),
    rail: str = typer.Option("60E1", "--rail", help="Rail profile, e.g. 60E1 or 136RE (see `trackplan profiles`)."),
    shade: Optional[str] = typer.Option(None, "--shade", help="Shade factor: 0 open sky (default) .. 1 fully shaded (tunnel)."),
    method: str = typer.Option("auto", "--method", help="Rail temperature method: " + ", ".join(METHOD_CHOICES)
                               + " (auto: heat-balance for hourly records, daily-extremes for daily ones)."),
    return_period: float = typer.Option(50.0, "--return-period", help="Return period of the design values [years], > 1."),
    distribution: str = typer.Option("gumbel", "--distribution", help="Extreme-value distribution: gumbel or gev."),
    out: Optional[Path] = typer.Option(None, "--out", help="Folder for a CSV of rail temperatures and PNG plots."),
    column: Optional[list[str]] = COLUMN_OPTION,
    tz: Optional[str] = TZ_OPTION,
    allow_short: bool = ALLOW_SHORT_OPTION,
    system: UnitSystem = UNITS_OPTION,
    as_json: bool = JSON_OPTION,
) -> None:
    """Rail temperatures from a weather record, and the design maximum and minimum.

    Reads the record, models the rail temperature (hourly heat balance, or the
    daily-extremes path for daily max/min records), takes each complete year's
    maximum and minimum, fits an extreme-value distribution and gives the
    design values for the return period with a confidence interval. Records
    under 10 years warn; under 3 years or a typical-year file give the observed
    extremes instead, and say so.

    Example: trackplan railtemp climate_samples/kestrel_plains_hourly.csv.gz --azimuth 90 --rail 60E1 --return-period 50 --out railtemp-out
    """
    from trackplan import extremes, railtemp, weather

    if method not in METHOD_CHOICES:
        raise InputError(f"unknown method {method!r}; accepted: {', '.join(METHOD_CHOICES)}", "--method")
    if distribution not in DISTRIBUTION_CHOICES:
        raise InputError(f"unknown distribution {distribution!r}; accepted: {', '.join(DISTRIBUTION_CHOICES)}",
                         "--distribution")
    if not (math.isfinite(return_period) and return_period > 1.0):
        raise InputError(f"return period must be more than 1 year, got {return_period:g}", "--return-period")
    lat_v = _angle(lat, "--lat", -90.0, 90.0, "a latitude between -90 and 90 deg")
    lon_v = _angle(lon, "--lon", -180.0, 180.0, "a longitude between -180 and 180 deg")
    az_v = _angle(azimuth, "--azimuth", -360.0, 360.0, "a track azimuth in degrees from north, e.g. 90")
    shade_v = _fraction(shade, "--shade")
    profile = rails.get_profile(rail)
    if out is not None:
        from trackplan import reports

        out_dir = reports.prepare_out_dir(out, inputs=[file], planned=[
            "rail_temperature_hourly.csv", "rail_temperature_daily.csv", "annual_extremes.csv",
            "annual_extremes.png", "return_levels.png", "hottest_week.png"])

    from trackplan import columns, notices

    phase(f"reading {Path(file).name}")
    df, meta = weather.read_record(file, columns=columns.parse_options(column, "--column"), tz=tz, site=(lat_v, lon_v))
    lat_v = lat_v if lat_v is not None else meta.get("latitude_deg")
    lon_v = lon_v if lon_v is not None else meta.get("longitude_deg")
    if lat_v is None or lon_v is None:
        raise InputError("the record gives no latitude/longitude; give --lat and --lon", str(file))
    site = railtemp.RailSite(float(lat_v), float(lon_v), float(meta.get("elevation_m") or 0.0),
                             track_azimuth_deg=float(az_v) % 360.0, shade_factor=shade_v)
    name = railtemp.resolve_method(method, meta, df)
    phase(f"rail temperatures ({name}, {len(df):,} time steps)")
    hourly = None
    if railtemp.METHODS[name].hourly is not None:  # a method with an hourly series: prepare the sun once
        prep = railtemp.prepare_solar(df, meta, site)
        hourly = railtemp.METHODS[name].hourly(df, meta, profile, site, prepared=prep)
        daily = railtemp.daily_rail_extremes(df, meta, profile, site, method=name, prepared=prep)
    else:
        daily = railtemp.daily_rail_extremes(df, meta, profile, site, method=name)
    typical = bool(meta.get("typical_year"))
    phase(f"annual extremes and {distribution} fit")
    design = extremes.design_extremes(daily, return_period, distribution, typical_year=typical,
                                      years=None if typical else meta.get("years"), allow_short=allow_short)
    # the record's lack of coordinates is made good by --lat/--lon
    made_good = ("no_coordinates",) if lat is not None and lon is not None else ()
    warnings = notices.merge(meta.get("warnings"), daily.attrs.get("warnings"), design.warnings, drop=made_good)
    station = meta.get("station") or Path(file).name
    from trackplan.command_json import railtemp_json

    data = railtemp_json(design, station, profile=profile, method=name, site=site, distribution=distribution,
                         meta=meta, allow_short=allow_short, warnings=warnings)

    if out is not None:
        phase(f"writing files to {out}")
        settings = [("command", "trackplan railtemp"), ("record", str(file)), ("station", station),
                    ("latitude", f"{site.latitude_deg:.3f} deg"), ("longitude", f"{site.longitude_deg:.3f} deg"),
                    ("rail", profile.name), ("track azimuth", f"{site.track_azimuth_deg:g} deg"),
                    ("shade", f"{site.shade_factor:g}"), ("method", name),
                    ("return period", f"{return_period:g} years"), ("distribution", distribution)]
        _write_outputs(out_dir, file, df, meta, daily, hourly, design, station, system.value, settings, data)

    if as_json:
        emit_json(data)
        return
    _print(design, station, meta, site, profile, name, warnings, system.value, out)


def _print(design, station, meta, site, profile, method, warnings, s, out) -> None:
    info = (
        f"[bold]{escape(station)}[/]  {site.latitude_deg:.3f}°, {site.longitude_deg:.3f}°  "
        f"({meta.get('source_format')}, {meta.get('time_step')}, zone {meta.get('tz') or 'not stated'})\n"
        f"rail {profile.name}, track azimuth {site.track_azimuth_deg:g}°, shade {site.shade_factor:g}, "
        f"method {method}"
    )
    console.print(Panel(info, title="railtemp", expand=False), highlight=False)
    table = Table(title="Annual extremes")
    table.add_column("year", justify="right")
    for head in ("max rail", "max air", "min rail", "min air"):
        table.add_column(units.header(head, "temperature", s), justify="right")
    for r in design.annual.itertuples(index=False):
        table.add_row(
            str(int(r.year)),
            units.number(float(r.max_rail_temperature_C), "temperature", s),
            units.number(float(r.max_air_temperature_C), "temperature", s),
            units.number(float(r.min_rail_temperature_C), "temperature", s),
            units.number(float(r.min_air_temperature_C), "temperature", s),
        )
    console.print(table)

    def ci(c):
        if c is None:
            return "–"
        return f"{units.number(c[0], 'temperature', s)} to {units.fmt(c[1], 'temperature', s)}"

    basis = design.design_basis
    label = (f"{design.return_period_years:g}-year return level ({basis})" if basis not in ("observed",
                                                                                            "observed+allowance")
             else "observed extreme" if basis == "observed"
             else f"observed extreme plus allowance for {design.return_period_years:g} years")
    dt = Table(title=f"Design rail temperatures: {label}, {design.years} year(s)")
    dt.add_column("")
    dt.add_column("design value", justify="right")
    dt.add_column("which", justify="left")
    if basis != "observed":
        dt.add_column(f"{design.ci_level:.0%} interval", justify="right")
        dt.add_column("return level", justify="right")
    dt.add_column("recorded (rail, air)", justify="right", no_wrap=True)
    for tail in ("max", "min"):
        d = getattr(design, f"design_{tail}_rail_temperature_C")
        row = ["maximum" if tail == "max" else "minimum", units.fmt(d, "temperature", s),
               getattr(design, f"{tail}_basis")]
        if basis != "observed":
            row.append(ci(getattr(design, f"{tail}_ci_C")))
            row.append(units.fmt(getattr(design, f"{tail}_return_level_C"), "temperature", s))
        row.append(f"{units.fmt(getattr(design, f'observed_{tail}_rail_temperature_C'), 'temperature', s)}, "
                   f"{units.fmt(getattr(design, f'{tail}_air_temperature_C'), 'temperature', s)}")
        dt.add_row(*row)
    console.print(dt)
    if warnings:
        console.print("[yellow]Warnings:[/]", highlight=False)
        for w in warnings:
            console.print(f"  - {units.text_in(w, s)}", highlight=False, markup=False)
    if out is not None:
        console.print(f"Files written to {out}", highlight=False)
    print_caution()


def _write_outputs(out_dir, file, df, meta, daily, hourly, design, station, s, meta_rows, data) -> None:
    """The hourly and daily rail temperatures (series), annual_extremes.csv (the ``annual`` of the JSON
    ``data``, flattened) and the plots."""
    import numpy as np
    import pandas as pd

    from trackplan import reports

    inputs = [file]
    meta_rows = list(meta_rows)
    kv = dict(meta_rows)
    settings = (f"{kv.get('rail', '')}, azimuth {kv.get('track azimuth', '')}, shade {kv.get('shade', '')}, "
                f"{kv.get('method', '')}; return period {kv.get('return period', '')}, {kv.get('distribution', '')}")
    if hourly is not None:
        # local standard time with its UTC offset, e.g. 1995-07-01T14:00-06:00
        # (datetime_as_string: strftime is far too slow for 30 years of hours)
        off = meta.get("utc_offset_h")
        if off is None:
            off = df.index[0].utcoffset().total_seconds() / 3600.0
        mins = int(round(off * 60))
        suffix = f"{'+' if mins >= 0 else '-'}{abs(mins) // 60:02d}:{abs(mins) % 60:02d}"
        local = df.index.tz_localize(None).to_numpy().astype("datetime64[m]")
        frame = pd.DataFrame({
            "time": np.char.add(np.datetime_as_string(local), suffix),
            "air_temperature_C": df["air_temperature_C"].to_numpy(float).round(2),
            "rail_temperature_C": hourly.to_numpy(float).round(2),
        })
        reports.write_csv(out_dir / "rail_temperature_hourly.csv", frame, inputs, meta_rows)
    dframe = daily.reset_index()
    dframe.columns = ["date", *daily.columns]
    dframe["date"] = pd.DatetimeIndex(dframe["date"]).strftime("%Y-%m-%d")
    reports.write_csv(out_dir / "rail_temperature_daily.csv", dframe.round(2), inputs, meta_rows)
    from trackplan import tables

    reports.write_csv(out_dir / "annual_extremes.csv", tables.frame(tables.csv_rows(data["annual"])), inputs, meta_rows)

    reports.matplotlib_backend()
    import matplotlib.pyplot as plt

    unit = units.display_unit("temperature", s)
    lab = units.label(unit)

    def conv(v):
        return np.asarray([units.from_si(float(x), unit, "temperature") for x in np.atleast_1d(v)])

    a = design.annual
    fig, ax = plt.subplots(figsize=(9, 4.5))
    ax.plot(a.year, conv(a.max_rail_temperature_C), "o-", color="tab:red", label="annual max rail")
    ax.plot(a.year, conv(a.max_air_temperature_C), "s--", color="tab:orange", label="annual max air")
    ax.plot(a.year, conv(a.min_rail_temperature_C), "o-", color="tab:blue", label="annual min rail")
    ax.plot(a.year, conv(a.min_air_temperature_C), "s--", color="tab:cyan", label="annual min air")
    dmax, dmin = conv(design.design_max_rail_temperature_C)[0], conv(design.design_min_rail_temperature_C)[0]
    ax.axhline(dmax, color="tab:red", lw=0.9, ls=":",
               label=f"design max {dmax:.1f} {lab} ({design.max_basis})")
    ax.axhline(dmin, color="tab:blue", lw=0.9, ls=":",
               label=f"design min {dmin:.1f} {lab} ({design.min_basis})")
    # both design lines inside the axes, with room above for the legend
    lo = min(dmin, float(np.nanmin(conv(a.min_rail_temperature_C))))
    hi = max(dmax, float(np.nanmax(conv(a.max_rail_temperature_C))))
    ax.set_ylim(lo - 0.05 * (hi - lo), hi + 0.35 * (hi - lo))
    ax.set_xlabel("year")
    ax.set_ylabel(f"temperature ({lab})")
    ax.set_title(f"{station}: annual rail and air extremes\n{settings}", fontsize=10)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8, ncol=3, loc="upper center")
    reports.save_figure(out_dir / "annual_extremes.png", fig, inputs)

    from trackplan.extremes import plotting_positions

    fig, axes = plt.subplots(1, 2, figsize=(11, 4.5))
    T = np.geomspace(1.1, max(200.0, 2 * design.return_period_years), 80)
    rl = design.return_levels(T) if design.max_fit is not None else None
    n = len(a)
    pp = plotting_positions(n)
    for ax, tail, color in ((axes[0], "max", "tab:red"), (axes[1], "min", "tab:blue")):
        col = f"{tail}_rail_temperature_C"
        obs = np.sort(a[col].to_numpy(float))
        if tail == "min":
            obs = obs[::-1]  # lowest minimum has the longest return period
        Tobs = 1.0 / (1.0 - pp)
        ax.semilogx(Tobs, conv(obs), "o", color="k", ms=4, label="observed annual " + tail)
        if rl is not None:
            ax.semilogx(T, conv(rl[col]), color=color, label=f"{design.distribution} fit")
            lo, hi = rl[f"{tail}_low_C"].to_numpy(float), rl[f"{tail}_high_C"].to_numpy(float)
            if np.all(np.isfinite(lo)):
                ax.fill_between(T, conv(lo), conv(hi), color=color, alpha=0.2,
                                label=f"{design.ci_level:.0%} interval")
        ax.axvline(design.return_period_years, color="grey", lw=0.8, ls=":",
                   label=f"{design.return_period_years:g}-year return period")
        dv = conv(getattr(design, f"design_{tail}_rail_temperature_C"))
        ax.semilogx([design.return_period_years], dv, "D", color=color, mec="k", ms=6,
                    label=f"design value {dv[0]:.1f} {lab} ({getattr(design, f'{tail}_basis')})")
        ax.set_xlabel("return period (years)")
        ax.set_ylabel(f"annual {tail} rail temperature ({lab})")
        ax.grid(alpha=0.3, which="both")
        ax.legend(fontsize=8)
    fig.suptitle(f"{station}: return levels ({design.distribution} fit; design basis {design.design_basis})"
                 f"\n{settings}", fontsize=10)
    reports.save_figure(out_dir / "return_levels.png", fig, inputs)

    if hourly is not None and np.isfinite(hourly.to_numpy(float)).any():
        t_hot = hourly.idxmax()
        lo_t = t_hot - pd.Timedelta(days=3.5)
        hi_t = t_hot + pd.Timedelta(days=3.5)
        sel = (df.index >= lo_t) & (df.index <= hi_t)
        fig, ax = plt.subplots(figsize=(10, 4.5))
        x = df.index[sel].tz_localize(None)
        ax.plot(x, conv(hourly[sel]), color="tab:red", label="rail (heat balance)")
        ax.plot(x, conv(df["air_temperature_C"][sel]), color="tab:orange", label="air")
        ax.set_ylabel(f"temperature ({lab})")
        ax.set_title(f"{station}: hottest week, hour by hour (peak {t_hot:%Y-%m-%d %H:%M})\n{settings}",
                     fontsize=10)
        ax.grid(alpha=0.3)
        if "ghi_W_m2" in df.columns:
            ax2 = ax.twinx()
            ax2.fill_between(x, df["ghi_W_m2"][sel].to_numpy(float), color="gold", alpha=0.25, step="mid")
            ax2.set_ylabel("global irradiance (W/m²)")
        ax.legend(fontsize=8, loc="upper left")
        fig.autofmt_xdate()
        reports.save_figure(out_dir / "hottest_week.png", fig, inputs)
