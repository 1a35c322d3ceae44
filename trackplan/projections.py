"""Climate-projection ensembles: a folder of CF NetCDF files of daily tasmax and tasmin.

A folder is an *ensemble*: one file (or one set of files) per model and
experiment. The files hold daily maximum and minimum near-surface air
temperature, ``tasmax`` and ``tasmin`` (found by name, or by ``standard_name =
air_temperature`` with ``cell_methods`` ``time: maximum`` / ``time: minimum``),
both in one file or each in files of its own (the archives' layout), split in
time into any number of files, in a unit of temperature named by the variable's
``units`` attribute (``K``, ``degC``, ``Celsius``, ``degF``: the rule of
:mod:`trackplan.readers_cf`), on a time axis in any CF calendar
(``standard``/``gregorian``, ``proleptic_gregorian``, ``noleap``/``365_day``,
``all_leap``/``366_day``, ``360_day``), decoded with cftime so no day is dropped
or invented. The grid has 1-D latitude/longitude coordinates (a rectilinear
grid) or 2-D ones (a curvilinear grid), found by ``standard_name`` or the usual
names (``lat``/``latitude``/``nav_lat``, ``lon``/``longitude``/``nav_lon``).

Model and experiment come from the global attributes (CMIP6 names first):

==========  ==========================================================
what        attributes, in order, then the fallback
==========  ==========================================================
model       ``source_id``, ``model_id`` (CMIP5), ``model``; else the
            third ``_``-separated part of the file name
            (``VAR_day_MODEL_EXPERIMENT_...``, the CMOR file name)
experiment  ``experiment_id``, ``experiment``, ``scenario``; else the
            fourth ``_``-separated part of the file name
member      ``variant_label``, ``realization``; else ``r1``
==========  ==========================================================

A *run* is one model (and member) and one scenario: the model's
``historical`` files followed by that scenario's files (a scenario file that
already starts in the historical years stands alone). Mixed calendars within
one model are refused: the model's runs are left out and the problem reported.

Everything here reads metadata or one grid cell at a time; the heavy packages
(xarray, cftime, netCDF4) are imported inside the functions.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from trackplan.errors import InputError

#: (factor, offset) to degC of the unit names the CF point-series reader accepts (trackplan.readers_cf).
TO_CELSIUS = {"K": (1.0, -273.15), "degC": (1.0, 0.0), "degF": (5.0 / 9.0, -32.0 * 5.0 / 9.0)}
CALENDAR_DAYS = {"standard": None, "gregorian": None, "proleptic_gregorian": None, "julian": None,
                 "noleap": 365, "365_day": 365, "all_leap": 366, "366_day": 366, "360_day": 360}
VARIABLES = ("tasmax", "tasmin")
FILE_PATTERNS = ("*.nc", "*.nc4", "*.netcdf")
EARTH_RADIUS_M = 6_371_008.8  # mean radius (IUGG)


def to_celsius(var, name: str, where: str):
    """(factor, offset) turning the values of ``var`` into degC, from its ``units`` attribute.

    The same names as the CF point-series reader (:mod:`trackplan.readers_cf`): K, degC
    (degrees_C, Celsius), degF; no unit, or one of another dimension, is refused.
    """
    from trackplan.readers_cf import _unit

    return TO_CELSIUS[_unit(var, name, where)]


def haversine_m(lat1, lon1, lat2, lon2):
    """Great-circle distance [m] on a sphere of :data:`EARTH_RADIUS_M` (arrays broadcast)."""
    p1, p2 = np.radians(lat1), np.radians(lat2)
    dp = p2 - p1
    dl = np.radians((np.asarray(lon2) - np.asarray(lon1) + 180.0) % 360.0 - 180.0)
    a = np.sin(dp / 2) ** 2 + np.cos(p1) * np.cos(p2) * np.sin(dl / 2) ** 2
    return 2 * EARTH_RADIUS_M * np.arcsin(np.sqrt(np.clip(a, 0.0, 1.0)))


@dataclass(frozen=True)
class Grid:
    """Cell centres of a file, flattened: ``lat[k]``, ``lon[k]`` [deg]; ``shape`` and dims to unflatten."""

    lat: np.ndarray
    lon: np.ndarray
    shape: tuple
    dims: tuple  # names of the horizontal dimensions, in order

    def key(self) -> tuple:
        return (self.shape, self.dims, self.lat.round(4).tobytes(), self.lon.round(4).tobytes())


@dataclass(frozen=True)
class Cell:
    """The nearest grid cell to a place."""

    index: tuple  # indices along Grid.dims
    latitude_deg: float
    longitude_deg: float
    distance_m: float
    spacing_m: float  # distance from this cell to its nearest neighbour


@dataclass
class ProjectionFile:
    path: Path
    model: str
    experiment: str
    member: str
    calendar: str
    first_year: int
    last_year: int
    grid: Grid
    variables: dict  # "tasmax"/"tasmin" -> (name in file, factor, offset)
    notes: list = field(default_factory=list)


@dataclass
class Run:
    """One model (member) and scenario: historical files then the scenario's, on one grid and calendar."""

    model: str
    member: str
    scenario: str
    calendar: str
    files: list  # ProjectionFile, in time order
    grid: Grid

    @property
    def label(self) -> str:
        return f"{self.model} {self.scenario}"

    @property
    def first_year(self) -> int:
        return min(f.first_year for f in self.files)

    @property
    def last_year(self) -> int:
        return max(f.last_year for f in self.files)


@dataclass
class Ensemble:
    runs: list
    problems: list  # InputError
    notes: list


def _open(path: Path):
    import xarray as xr

    try:
        coder = xr.coders.CFDatetimeCoder(use_cftime=True)
        return xr.open_dataset(path, decode_times=coder)
    except (OSError, ValueError, RuntimeError, TypeError, KeyError) as exc:
        raise InputError(f"cannot read as CF NetCDF: {str(exc).splitlines()[0][:160]}", str(path)) from None


def _find_variable(ds, name: str):
    if name in ds.data_vars:
        return name
    method = "maximum" if name == "tasmax" else "minimum"
    for v, da in ds.data_vars.items():
        if da.attrs.get("standard_name") == "air_temperature" and f"time: {method}" in str(da.attrs.get("cell_methods", "")):
            return v
    return None


def _coordinate(ds, kind: str):
    names = ("lat", "latitude", "nav_lat", "y_lat") if kind == "lat" else ("lon", "longitude", "nav_lon", "x_lon")
    std = "latitude" if kind == "lat" else "longitude"
    for v in list(ds.coords) + list(ds.data_vars):
        if ds[v].attrs.get("standard_name") == std:
            return v
    for v in names:
        if v in ds.coords or v in ds.data_vars:
            return v
    return None


def _grid(ds, var: str, where: str) -> Grid:
    la, lo = _coordinate(ds, "lat"), _coordinate(ds, "lon")
    if la is None or lo is None:
        raise InputError("no latitude/longitude coordinates (standard_name latitude/longitude, or lat/lon)", where)
    lat, lon = ds[la], ds[lo]
    dims = tuple(d for d in ds[var].dims if d != "time")
    if lat.ndim == 1 and lon.ndim == 1:
        if dims != (lat.dims[0], lon.dims[0]):
            raise InputError(f"{var} has dimensions {ds[var].dims}; expected (time, {lat.dims[0]}, {lon.dims[0]})",
                             where)
        LA, LO = np.meshgrid(lat.values.astype(float), lon.values.astype(float), indexing="ij")
    elif lat.ndim == 2 and lat.dims == lon.dims and dims == lat.dims:
        LA, LO = lat.values.astype(float), lon.values.astype(float)
    else:
        raise InputError(f"latitude/longitude of dimensions {lat.dims}/{lon.dims} do not fit {var} {ds[var].dims}; "
                         "accepted: 1-D lat and lon, or 2-D lat and lon on the variable's horizontal dimensions",
                         where)
    return Grid(LA.ravel(), ((LO.ravel() + 180.0) % 360.0) - 180.0, LA.shape, dims)


def _name_part(path: Path, k: int) -> str | None:
    parts = path.stem.split("_")
    return parts[k] if len(parts) > k and parts[k] else None


def describe_file(path: Path) -> ProjectionFile:
    """Metadata of one projection file (variables, units, calendar, years, grid, model, experiment)."""
    path = Path(path)
    ds = _open(path)
    try:
        where = str(path)
        variables = {}
        for v in VARIABLES:
            name = _find_variable(ds, v)
            if name is None:
                continue
            f, o = to_celsius(ds[name], name, f"{where} variable {name}")
            if "time" not in ds[name].dims:
                raise InputError(f"variable {name} has no time dimension", where)
            variables[v] = (name, f, o)
        if not variables:
            raise InputError("no tasmax or tasmin variable (daily maximum or minimum air temperature; or "
                             "standard_name air_temperature with cell_methods 'time: maximum' or "
                             "'time: minimum')", where)
        t = ds["time"]
        cal = str(t.encoding.get("calendar") or t.attrs.get("calendar") or "standard").lower()
        if cal not in CALENDAR_DAYS:
            raise InputError(f"calendar {cal!r} of the time axis is not a CF calendar trackplan reads "
                             f"(accepted: {', '.join(CALENDAR_DAYS)})", f"{where} variable time")
        if t.size == 0:
            raise InputError("the time axis is empty", f"{where} variable time")
        times = t.values
        if not hasattr(times[0], "year"):
            raise InputError("the time axis could not be decoded as dates (units 'days since ...' expected)",
                             f"{where} variable time")
        grid = _grid(ds, next(iter(variables.values()))[0], where)
        a = ds.attrs
        model = a.get("source_id") or a.get("model_id") or a.get("model") or _name_part(path, 2)
        experiment = a.get("experiment_id") or a.get("experiment") or a.get("scenario") or _name_part(path, 3)
        member = str(a.get("variant_label") or a.get("realization") or "r1")
        notes = []
        if not (a.get("source_id") and a.get("experiment_id")):
            notes.append(f"{path.name}: model {model!r} and experiment {experiment!r} "
                         "taken from fallbacks (no source_id/experiment_id)")
        if not model or not experiment:
            raise InputError("model or experiment unknown: no source_id/experiment_id attribute and the file name "
                             "is not VAR_day_MODEL_EXPERIMENT_...", where)
        return ProjectionFile(path, str(model), str(experiment).lower(), member, cal,
                              int(times[0].year), int(times[-1].year), grid, variables, notes)
    finally:
        ds.close()


def scan_ensemble(folder: str | Path, scenarios=None) -> Ensemble:
    """Describe every file of an ensemble folder and pair them into runs.

    Bad files and models are collected as problems; the rest is kept.
    """
    folder = Path(folder)
    if not folder.is_dir():
        raise InputError("not a folder of NetCDF files", str(folder))
    paths = sorted({p for pat in FILE_PATTERNS for p in folder.glob(pat)})
    if not paths:
        raise InputError(f"no NetCDF files ({', '.join(FILE_PATTERNS)}) in the folder", str(folder))
    files, problems, notes = [], [], []
    for p in paths:
        try:
            f = describe_file(p)
        except InputError as exc:
            problems.append(exc)
            continue
        files.append(f)
        notes += f.notes
    by_model: dict = {}
    for f in files:
        by_model.setdefault((f.model, f.member), []).append(f)
    runs = []
    wanted = None if not scenarios else {s.lower() for s in scenarios}
    for (model, member), fs in sorted(by_model.items()):
        cals = sorted({f.calendar for f in fs})
        if len(cals) > 1:
            listing = "; ".join(f"{f.path.name}: {f.calendar}" for f in fs)
            problems.append(InputError(f"model {model} mixes calendars ({listing}); one model must use one "
                                       "calendar: its runs are left out", f"{fs[0].path.parent} variable time"))
            continue
        hist = sorted([f for f in fs if f.experiment == "historical"], key=lambda f: f.first_year)
        for scen in sorted({f.experiment for f in fs if f.experiment != "historical"}):
            if wanted is not None and scen not in wanted:
                continue
            fut = sorted([f for f in fs if f.experiment == scen], key=lambda f: f.first_year)
            parts = [h for h in hist if h.last_year < fut[0].first_year] + fut
            missing = [v for v in VARIABLES if not any(v in f.variables for f in parts)]
            if missing:
                problems.append(InputError(
                    f"model {model} {scen}: no {' or '.join(missing)} variable in its files "
                    f"({', '.join(f.path.name for f in parts)}); its run is left out", str(parts[0].path)))
                continue
            gkeys = {f.grid.key() for f in parts}
            if len(gkeys) > 1:
                problems.append(InputError(f"model {model} {scen}: the files are on different grids; "
                                           "its run is left out", str(parts[0].path)))
                continue
            runs.append(Run(model, member, scen, cals[0], parts, parts[0].grid))
        if not hist:
            notes.append(f"model {model}: no historical file; its scenarios must cover the baseline themselves")
    if wanted is not None:
        found = {r.scenario for r in runs}
        for s in sorted(wanted - found):
            problems.append(InputError(f"no run of scenario {s!r} in the folder", str(folder)))
    return Ensemble(runs, problems, notes)


def nearest_cell(grid: Grid, latitude_deg: float, longitude_deg: float) -> Cell:
    """The grid cell whose centre is nearest (great circle) to the place, with its distance [m].

    ``spacing_m`` is the distance from that cell to its nearest neighbouring cell:
    a place farther from the centre than that is outside the grid.
    """
    d = haversine_m(latitude_deg, longitude_deg, grid.lat, grid.lon)
    k = int(np.nanargmin(d))
    if grid.lat.size > 1:
        dn = haversine_m(grid.lat[k], grid.lon[k], grid.lat, grid.lon)
        dn[k] = np.inf
        spacing = float(np.nanmin(dn))
    else:
        spacing = math.inf
    idx = tuple(int(i) for i in np.unravel_index(k, grid.shape))
    return Cell(idx, float(grid.lat[k]), float(grid.lon[k]), float(d[k]), spacing)


def covers(cell: Cell) -> bool:
    """The place lies within one cell spacing of the nearest cell centre."""
    return cell.distance_m <= cell.spacing_m


@dataclass
class CellSeries:
    """Daily tasmax/tasmin [degC] of one cell of one run, on the model's calendar."""

    tasmax_C: np.ndarray
    tasmin_C: np.ndarray
    year: np.ndarray  # int
    day_of_year: np.ndarray  # 1..days in the model year
    days_in_year: np.ndarray  # length of each day's model year
    calendar: str
    notes: list


def _days_in_year(calendar: str, years: np.ndarray) -> np.ndarray:
    fixed = CALENDAR_DAYS.get(calendar)
    if fixed is not None:
        return np.full(years.shape, fixed)
    leap = (years % 4 == 0) & ((years % 100 != 0) | (years % 400 == 0))
    if calendar == "julian":
        leap = years % 4 == 0
    return np.where(leap, 366, 365)


def _read_variable(files: list, v: str, cell: Cell, notes: list):
    """(year, day of year, values [degC]) of one variable at a cell over its files, in time order.

    Days that two files both hold are taken from the earlier file (and said)."""
    yy, dd, vals = [], [], []
    last_key = None
    for f in sorted((f for f in files if v in f.variables), key=lambda f: (f.first_year, f.last_year)):
        ds = _open(f.path)
        try:
            name, fac, off = f.variables[v]
            values = ds[name].isel(dict(zip(f.grid.dims, cell.index))).values.astype(float) * fac + off
            times = ds["time"].values
        finally:
            ds.close()
        years = np.array([t.year for t in times])
        doy = np.array([t.dayofyr for t in times])
        keys = years * 1000 + doy
        if last_key is not None:
            keep = keys > last_key
            if not keep.all():
                notes.append(f"{f.path.name}: {int((~keep).sum())} day(s) of {v} already in an earlier file skipped")
            years, doy, keys, values = years[keep], doy[keep], keys[keep], values[keep]
        if keys.size:
            last_key = int(keys[-1])
        yy.append(years)
        dd.append(doy)
        vals.append(values)
    return np.concatenate(yy), np.concatenate(dd), np.concatenate(vals)


def read_cell(run: Run, cell: Cell) -> CellSeries:
    """Daily series of one cell of a run (historical then scenario), in degC.

    ``tasmax`` and ``tasmin`` may be in the same files or in files of their own
    (the archives' one variable per file), split in time into several files.
    Days that two files both hold are taken from the earlier file (and said);
    a day a variable lacks is kept as missing (NaN), never filled.
    """
    notes: list = []
    parts = {v: _read_variable(run.files, v, cell, notes) for v in VARIABLES}
    first = min(int(p[0].min()) for p in parts.values())
    last = max(int(p[0].max()) for p in parts.values())
    full_years = np.arange(first, last + 1)
    ndays = _days_in_year(run.calendar, full_years)
    fy = np.repeat(full_years, ndays)
    fd = np.concatenate([np.arange(1, n + 1) for n in ndays])
    fkeys = fy * 1000 + fd
    out = {}
    for v, (year, doy, values) in parts.items():
        arr = np.full(fy.size, np.nan)
        pos = np.searchsorted(fkeys, year * 1000 + doy)
        ok = (pos < fkeys.size) & (fkeys[np.minimum(pos, fkeys.size - 1)] == year * 1000 + doy)
        arr[pos[ok]] = values[ok]
        out[v] = arr
        missing = fy.size - int(ok.sum())
        if missing:
            notes.append(f"{run.label}: {missing} day(s) of {v} missing between or inside the files (left as gaps)")
    return CellSeries(out["tasmax"], out["tasmin"], fy, fd, np.repeat(ndays, ndays), run.calendar, notes)
