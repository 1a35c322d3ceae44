"""Generate the synthetic climate-projection ensemble of the trackplan demo (invented models).

Run from the repository root::

    python climate_samples/generate_projections.py

It writes ``examples/projections/*.nc``: CF-1.8 NetCDF files of daily maximum and
minimum near-surface air temperature (``tasmax``, ``tasmin``), one file per model and
experiment, in the layout of the climate-model archives (global attributes
``source_id``, ``experiment_id``, ``variant_label``). **Everything is invented**: the
two "models" do not exist, the weather is drawn from a seeded random generator and
only loosely follows the fictional sample stations of ``climate_samples/generate.py``.
Do not use these files to plan real track.

Ensemble
--------
=========  ==========  =============================  =========  ========================
model      calendar    grid                           units      quirks
=========  ==========  =============================  =========  ========================
ALDER-2    ``noleap``  1-D latitude/longitude, 2.5    K          warm bias (+1.2 K), wider
                       degree cells, irregular rows              seasonal cycle
                       and columns near the stations
BIRCH-1    ``360_day`` 2-D latitude/longitude          degC       cold bias (-1.5 K), damped
                       (curvilinear ``y``, ``x``), 3             day-to-day spread (x0.8)
                       patches of 2 x 2 cells
=========  ==========  =============================  =========  ========================

Experiments: ``historical`` (1981-01-01 to 2014-12-31) and the two scenarios
``ssp245`` and ``ssp585`` (2015-01-01 to 2100-12-31), named after the CMIP6
experiments they imitate. Each (model, experiment) is one file.

Model
-----
One ``numpy.random.Generator`` (PCG64) per model and experiment, seeded with
``SEED`` plus fixed offsets, so every run writes the same numbers.

For each of the three station regions, with the day of the model year ``j``
(1..L, L = 365 or 360 days) and the station's parameters from
``climate_samples/generate.py`` (mean, amplitude, warmest day, spread, daily range):

* seasonal cycle ``mean + bias + lapse + amp * f_amp * cos(2 pi (j - peak L/365.25) / L)``,
  with ``lapse = -0.6 K`` per degree of latitude poleward of the station;
* warming ``W(t)``: 0.2 K per decade up to 2014 (about 2010), then to 2100 a
  quadratic rise reaching +2.0 K (``ssp245``) or +4.5 K (``ssp585``) above 2014;
* a daily AR(1) anomaly (lag-one 0.7) with the station's seasonal spread times
  ``f_sd``, shared by the cells of a region, plus an independent 0.4 K noise
  per cell, and a summer skew (hot tails: ``+ 0.35 sd * max(a, 0)**2``);
* ``tasmax = mean + dtr/2``, ``tasmin = mean - dtr/2`` with the station's clear-sky
  daily range times ``f_dtr`` plus 1 K noise (at least 1 K).

The values are stored as float32 rounded to multiples of 1/128 K (finer than
0.01 K; the rule of netCDF's ``least_significant_digit = 2``) and compressed
(gzip level 5 with shuffle, through h5netcdf), which keeps the folder small.
"""

from __future__ import annotations

import importlib.util
import sys
from dataclasses import dataclass
from pathlib import Path

import numpy as np

SEED = 20261202
ROOT = Path(__file__).resolve().parent.parent
OUT_DIR = ROOT / "examples" / "projections"
HIST_YEARS = (1981, 2014)
FUTURE_YEARS = (2015, 2100)
SCENARIO_WARMING_K = {"ssp245": 2.0, "ssp585": 4.5}
QUANTIZE_BITS = 7


@dataclass(frozen=True)
class Model:
    source_id: str
    calendar: str
    days_per_year: int
    units: str
    bias_K: float
    f_amp: float
    f_sd: float
    f_dtr: float
    two_d: bool


MODELS = (
    Model("ALDER-2", "noleap", 365, "K", bias_K=1.2, f_amp=1.08, f_sd=1.0, f_dtr=1.1, two_d=False),
    Model("BIRCH-1", "360_day", 360, "degC", bias_K=-1.5, f_amp=0.95, f_sd=0.8, f_dtr=0.85, two_d=True),
)


def _stations():
    spec = importlib.util.spec_from_file_location("trackplan_climate_generate", ROOT / "climate_samples" / "generate.py")
    mod = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = mod  # dataclasses look their module up
    spec.loader.exec_module(mod)
    return mod.STATIONS


def _cells_1d(stations):
    """Irregular rectilinear grid: two 2.5-degree rows and columns around each station."""
    lats, lons = [], []
    for st in stations:
        c_lat = (np.floor(st.latitude / 2.5) + 0.5) * 2.5
        c_lon = (np.floor(st.longitude / 2.5) + 0.5) * 2.5
        lats += [c_lat, c_lat + 2.5 * (1 if st.latitude > c_lat else -1)]
        lons += [c_lon, c_lon + 2.5 * (1 if st.longitude > c_lon else -1)]
    return np.array(sorted(set(lats))), np.array(sorted(set(lons)))


def _cells_2d(stations):
    """Curvilinear grid (y = 2, x = 2 per station): slightly rotated 2-degree patches."""
    lat2 = np.zeros((2, 2 * len(stations)))
    lon2 = np.zeros_like(lat2)
    for k, st in enumerate(stations):
        for i in range(2):
            for j in range(2):
                lat2[i, 2 * k + j] = round(st.latitude - 0.7 + 2.0 * i + 0.3 * j, 3)
                lon2[i, 2 * k + j] = round(st.longitude - 1.1 + 2.0 * j - 0.3 * i, 3)
    return lat2, lon2


def _ar1(rng, n, phi):
    from scipy import signal

    e = rng.standard_normal(n) * np.sqrt(1.0 - phi**2)
    e[0] = rng.standard_normal()
    return signal.lfilter([1.0], [1.0, -phi], e)


def _warming(years_frac, experiment):
    w = 0.02 * (np.minimum(years_frac, 2014.5) - 2010.0)
    if experiment != "historical":
        x = np.clip((years_frac - 2014.5) / (2100.5 - 2014.5), 0.0, None)
        w = w + SCENARIO_WARMING_K[experiment] * (0.4 * x + 0.6 * x**2)
    return w


def _series(model, experiment, stations, cell_lat, cell_lon, rng):
    """tasmax, tasmin [degC] of shape (time, cells) and the time values [days since the first day]."""
    y0, y1 = HIST_YEARS if experiment == "historical" else FUTURE_YEARS
    L = model.days_per_year
    years = np.repeat(np.arange(y0, y1 + 1), L)
    j = np.tile(np.arange(1, L + 1), y1 - y0 + 1)
    n = years.size
    tfrac = years + (j - 0.5) / L
    warm = _warming(tfrac, experiment)
    # nearest station region of each cell
    st_of = [int(np.argmin([(la - s.latitude) ** 2 + (lo - s.longitude) ** 2 for s in stations]))
             for la, lo in zip(cell_lat, cell_lon)]
    region_anom = {}
    for k, st in enumerate(stations):
        s = np.cos(2 * np.pi * (j - st.peak_doy * L / 365.25) / L)
        sd = (st.sd_winter + (st.sd_summer - st.sd_winter) * (1 + s) / 2) * model.f_sd
        a = _ar1(rng, n, 0.7)
        region_anom[k] = (s, sd * (a + 0.35 * np.clip(a, 0, None) ** 2 * (s > 0.3)))
    tmax = np.empty((n, len(cell_lat)), dtype=np.float64)
    tmin = np.empty_like(tmax)
    for c, (la, lo) in enumerate(zip(cell_lat, cell_lon)):
        st = stations[st_of[c]]
        s, anom = region_anom[st_of[c]]
        lapse = -0.6 * (abs(la) - abs(st.latitude))
        mean = (st.mean_C + model.bias_K + lapse + st.amp_K * model.f_amp * s + warm + anom
                + 0.4 * rng.standard_normal(n))
        dtr = np.maximum(st.dtr_clear * model.f_dtr * (0.8 + 0.2 * s) + 1.0 * rng.standard_normal(n), 1.0)
        tmax[:, c] = mean + dtr / 2
        tmin[:, c] = mean - dtr / 2
    return tmax, tmin, np.arange(n, dtype=float)


def quantize(x, bits: int = QUANTIZE_BITS):
    """float32 rounded to multiples of 2**-bits (1/128 K: finer than 0.01 K), so that the trailing
    mantissa bits are zero and the values compress well (the rule of netCDF's least_significant_digit)."""
    scale = float(2**bits)
    return (np.around(np.asarray(x) * scale) / scale).astype(np.float32)


def write_file(model, experiment, stations, path):
    import xarray as xr

    rng = np.random.default_rng([SEED, MODELS.index(model), ["historical", *SCENARIO_WARMING_K].index(experiment)])
    if model.two_d:
        lat2, lon2 = _cells_2d(stations)
        cell_lat, cell_lon = lat2.ravel(), lon2.ravel()
    else:
        lat1, lon1 = _cells_1d(stations)
        LA, LO = np.meshgrid(lat1, lon1, indexing="ij")
        cell_lat, cell_lon = LA.ravel(), LO.ravel()
    tmax, tmin, days = _series(model, experiment, stations, cell_lat, cell_lon, rng)
    offset = 273.15 if model.units == "K" else 0.0
    y0 = HIST_YEARS[0] if experiment == "historical" else FUTURE_YEARS[0]
    time_attrs = {"standard_name": "time", "axis": "T", "units": f"days since {y0}-01-01 12:00:00",
                  "calendar": model.calendar}
    if model.two_d:
        shape = (days.size,) + lat2.shape
        dims = ("time", "y", "x")
        coords = {"time": ("time", days, time_attrs),
                  "lat": (("y", "x"), lat2, {"standard_name": "latitude", "units": "degrees_north"}),
                  "lon": (("y", "x"), lon2, {"standard_name": "longitude", "units": "degrees_east"})}
    else:
        shape = (days.size, lat1.size, lon1.size)
        dims = ("time", "lat", "lon")
        coords = {"time": ("time", days, time_attrs),
                  "lat": ("lat", lat1, {"standard_name": "latitude", "units": "degrees_north", "axis": "Y"}),
                  "lon": ("lon", lon1, {"standard_name": "longitude", "units": "degrees_east", "axis": "X"})}
    ds = xr.Dataset(
        {
            "tasmax": (dims, quantize(tmax + offset).reshape(shape),
                       {"standard_name": "air_temperature", "long_name": "Daily Maximum Near-Surface Air Temperature",
                        "units": model.units, "cell_methods": "time: maximum"}),
            "tasmin": (dims, quantize(tmin + offset).reshape(shape),
                       {"standard_name": "air_temperature", "long_name": "Daily Minimum Near-Surface Air Temperature",
                        "units": model.units, "cell_methods": "time: minimum"}),
        },
        coords=coords,
        attrs={
            "Conventions": "CF-1.8",
            "title": f"SYNTHETIC daily temperature of the invented model {model.source_id}, {experiment}",
            "source_id": model.source_id,
            "experiment_id": experiment,
            "variant_label": "r1i1p1f1",
            "frequency": "day",
            "institution": "none: invented for the trackplan demo",
            "comment": "Synthetic data from climate_samples/generate_projections.py (seeded). Not a real model; "
                       "do not use to plan real track.",
        },
    )
    enc = {v: {"compression": "gzip", "compression_opts": 5, "shuffle": True, "dtype": "float32",
               "chunksizes": (min(days.size, 3650),) + shape[1:]} for v in ("tasmax", "tasmin")}
    enc["time"] = {"dtype": "float64"}
    tmp = path.with_suffix(".tmp")
    ds.to_netcdf(tmp, engine="h5netcdf", encoding=enc)
    tmp.replace(path)


def file_name(model, experiment) -> str:
    y = HIST_YEARS if experiment == "historical" else FUTURE_YEARS
    return f"tasmax-tasmin_day_{model.source_id}_{experiment}_r1i1p1f1_{y[0]}0101-{y[1]}1231.nc"


def main() -> None:
    stations = _stations()
    OUT_DIR.mkdir(parents=True, exist_ok=True)
    total = 0
    for model in MODELS:
        for experiment in ("historical", *SCENARIO_WARMING_K):
            path = OUT_DIR / file_name(model, experiment)
            write_file(model, experiment, stations, path)
            size = path.stat().st_size
            total += size
            print(f"{path.relative_to(ROOT)}  {size / 1e6:.2f} MB")
    print(f"total {total / 1e6:.2f} MB")


if __name__ == "__main__":
    main()
