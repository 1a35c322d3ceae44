"""Generate the synthetic sample climates of trackplan (fictional stations).

Run from the repository root::

    python climate_samples/generate.py

It writes each record into ``climate_samples/``, the one copy: the package
ships this folder (``setup.py``; found through ``trackplan.samples``), so
``trackplan demo`` reads it after ``pip install .`` too. The files are
gzip-compressed CSV in trackplan's own format (``trackplan.weather``).
Everything is fictional: invented station names, invented but plausible
coordinates, weather drawn from a seeded random generator. Do not use these
records to plan real track.

Stations
--------
=================  ================  ======  ==================================
key                climate           step    columns
=================  ================  ======  ==================================
kestrel_plains     hot continental   hourly  air temperature, GHI, wind (10 m)
gullhaven_quay     mild maritime     hourly  air temperature, GHI, wind (10 m)
                   (southern hemisphere)
quennick_sands      hot arid          daily   tmax, tmin
=================  ================  ======  ==================================

All cover 1995-01-01 to 2024-12-31 (30 years) in local standard time.

Model
-----
All random draws come from one ``numpy.random.Generator`` (PCG64) per station,
seeded with ``SEED`` plus the station's number, so every run gives the same
files.

1. *Daily mean air temperature* ``Tm = C(d) + Y(year) + A(d) + H(d)``:

   * ``C(d) = mean + amp * cos(2 pi (doy - peak_doy) / 365.25)``: the seasonal
     cycle;
   * ``Y``: a year-to-year AR(1) anomaly (standard deviation 0.5 K, lag-one
     correlation 0.3) plus a trend of ``trend_K_per_decade`` about 2010;
   * ``A``: a daily AR(1) anomaly (persistence ``phi``), whose standard
     deviation varies with the season between ``sd_winter`` and ``sd_summer``;
   * ``H``: heat waves: a Poisson number per year (``hw_rate``), each starting
     on a day drawn within ``hw_window`` days of the warmest day, lasting
     ``hw_days`` days, with a peak excess ``hw_K`` and a ``sin**0.5`` shape
     (a plateau with short ramps).

2. *Daily cloud fraction* ``N`` (0-1): a latent AR(1) Gaussian (persistence
   0.5) correlated with the temperature anomaly (warm days clearer, heat-wave
   days clearer still) is mapped through the normal CDF to a Beta
   distribution with a seasonal mean (``cloud_summer``, ``cloud_winter``) and
   concentration 2.5.

3. *Daily range* ``DTR = dtr_cloudy + (dtr_clear - dtr_cloudy) (1 - N)`` plus
   noise (0.8 K); ``tmax = Tm + DTR/2``, ``tmin = Tm - DTR/2``.

4. *Hourly air temperature*: the minimum at sunrise and the maximum
   ``t_max_after_noon_h`` after solar noon (sunrise from the declination of
   Cooper (1969) and the sunrise hour angle ``cos w0 = -tan(lat) tan(decl)``;
   solar noon with the equation of time of Spencer (1971)); a half-cosine
   rise from minimum to maximum and an exponential-shaped fall towards the
   next morning's minimum (after the day/night shape of Parton and Logan,
   1981), plus an hourly AR(1) noise (0.35 K, lag-one 0.8).

5. *Global horizontal irradiance*: pvlib's Ineichen clear-sky model with the
   Linke turbidity climatology at the station, reduced by an hourly cloud
   fraction ``Nh`` (the daily ``N`` plus hourly AR(1) noise, 0.15, lag-one
   0.85, clipped to 0-1) with Kasten and Czeplak (1980):
   ``GHI = GHI_clear (1 - 0.75 Nh**3.4)``.

6. *Wind speed at 10 m*: a daily log-normal AR(1) (persistence 0.5, log
   standard deviation 0.30) about a seasonal mean, 25 % calmer in heat waves,
   times a diurnal factor ``1 + wind_diurnal cos(2 pi (h - 15) / 24)`` and an
   hourly log-normal AR(1) noise (0.15, lag-one 0.7).

Values are instantaneous at the timestamp; temperature rounded to 0.1 K, GHI
to 1 W/m**2, wind to 0.1 m/s. The hourly files' daily extremes differ
slightly from step 3 because of the hourly noise.

References
----------
Cooper, P. I. (1969). The absorption of radiation in solar stills. Solar Energy 12, 333-346.
Spencer, J. W. (1971). Fourier series representation of the position of the sun. Search 2, 172.
Parton, W. J. and Logan, J. A. (1981). A model for diurnal variation in soil and air
temperature. Agricultural Meteorology 23, 205-216.
Kasten, F. and Czeplak, G. (1980). Solar and terrestrial radiation dependent on the amount
and type of cloud. Solar Energy 24, 177-189.
Ineichen, P. and Perez, R. (2002). A new airmass independent formulation for the Linke
turbidity coefficient. Solar Energy 73, 151-157 (pvlib.clearsky.ineichen).
"""

from __future__ import annotations

import gzip
import io
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd
from scipy import signal, special, stats

SEED = 20240611
START, END = "1995-01-01", "2024-12-31"

ROOT = Path(__file__).resolve().parent.parent
OUT_DIR = ROOT / "climate_samples"


@dataclass(frozen=True)
class Station:
    key: str
    name: str
    climate: str
    hourly: bool
    latitude: float
    longitude: float
    elevation_m: float
    utc_offset_h: float
    mean_C: float
    amp_K: float
    peak_doy: float
    sd_winter: float
    sd_summer: float
    phi: float
    dtr_clear: float
    dtr_cloudy: float
    cloud_summer: float
    cloud_winter: float
    hw_rate: float
    hw_days: tuple[int, int]
    hw_K: tuple[float, float]
    hw_window: int
    wind_mean: float
    wind_season: float
    wind_diurnal: float
    trend_K_per_decade: float = 0.2
    t_max_after_noon_h: float = 2.5


STATIONS = (
    Station("kestrel_plains", "Kestrel Plains", "hot continental", True,
            41.20, -97.40, 480.0, -6.0,
            mean_C=11.0, amp_K=14.0, peak_doy=200, sd_winter=5.0, sd_summer=2.8, phi=0.75,
            dtr_clear=15.0, dtr_cloudy=7.0, cloud_summer=0.35, cloud_winter=0.55,
            hw_rate=1.3, hw_days=(3, 9), hw_K=(4.0, 8.0), hw_window=40,
            wind_mean=4.6, wind_season=0.15, wind_diurnal=0.30),
    Station("gullhaven_quay", "Gullhaven Quay", "mild maritime", True,
            -42.35, 147.95, 25.0, 10.0,
            mean_C=12.0, amp_K=4.5, peak_doy=32, sd_winter=1.8, sd_summer=2.4, phi=0.6,
            dtr_clear=10.0, dtr_cloudy=4.5, cloud_summer=0.55, cloud_winter=0.65,
            hw_rate=0.5, hw_days=(1, 3), hw_K=(5.0, 9.0), hw_window=35,
            wind_mean=6.0, wind_season=0.10, wind_diurnal=0.15),
    Station("quennick_sands", "Quennick Sands", "hot arid", False,
            32.40, -112.90, 390.0, -7.0,
            mean_C=22.5, amp_K=10.0, peak_doy=195, sd_winter=2.6, sd_summer=1.8, phi=0.7,
            dtr_clear=17.0, dtr_cloudy=10.0, cloud_summer=0.15, cloud_winter=0.25,
            hw_rate=1.0, hw_days=(3, 8), hw_K=(3.0, 5.5), hw_window=35,
            wind_mean=3.5, wind_season=0.10, wind_diurnal=0.35),
)


def _ar1(rng: np.random.Generator, n: int, phi: float) -> np.ndarray:
    """Unit-variance AR(1) series of length n (stationary start)."""
    e = rng.standard_normal(n) * np.sqrt(1.0 - phi**2)
    e[0] = rng.standard_normal()
    return signal.lfilter([1.0], [1.0, -phi], e)


def _season(doy: np.ndarray, peak_doy: float) -> np.ndarray:
    """+1 at the warmest day of the year, -1 half a year later."""
    return np.cos(2 * np.pi * (doy - peak_doy) / 365.25)


def _declination_deg(doy: np.ndarray) -> np.ndarray:
    """Solar declination [deg], Cooper (1969)."""
    return 23.45 * np.sin(2 * np.pi * (284 + doy) / 365.0)


def _equation_of_time_min(doy: np.ndarray) -> np.ndarray:
    """Equation of time [min], Spencer (1971)."""
    g = 2 * np.pi * (doy - 1) / 365.0
    return 229.18 * (0.000075 + 0.001868 * np.cos(g) - 0.032077 * np.sin(g)
                     - 0.014615 * np.cos(2 * g) - 0.040849 * np.sin(2 * g))


def daily_series(st: Station, rng: np.random.Generator) -> pd.DataFrame:
    """Daily mean, max, min [degC], cloud fraction [1], wind [m/s], heat-wave excess [K]."""
    days = pd.date_range(START, END, freq="D")
    n = len(days)
    doy = days.day_of_year.to_numpy().astype(float)
    year = days.year.to_numpy()
    s = _season(doy, st.peak_doy)
    clim = st.mean_C + st.amp_K * s
    # year-to-year anomaly and trend
    years = np.arange(year.min(), year.max() + 1)
    ya = 0.5 * _ar1(rng, len(years), 0.3) + st.trend_K_per_decade * (years - 2010) / 10.0
    y_anom = ya[year - year.min()]
    # daily AR(1) anomaly, seasonal spread
    sd = st.sd_winter + (st.sd_summer - st.sd_winter) * (1 + s) / 2
    a_unit = _ar1(rng, n, st.phi)
    anom = sd * a_unit
    # heat waves
    hw = np.zeros(n)
    warmest = st.peak_doy
    for i, y in enumerate(years):
        k = rng.poisson(st.hw_rate)
        for _ in range(k):
            start_doy = warmest + rng.integers(-st.hw_window, st.hw_window + 1)
            dur = int(rng.integers(st.hw_days[0], st.hw_days[1] + 1))
            amp = rng.uniform(*st.hw_K)
            t0 = pd.Timestamp(int(y), 1, 1) + pd.Timedelta(days=float(start_doy - 1))
            j0 = int((t0 - days[0]).days)
            shape = np.sin(np.pi * (np.arange(dur) + 0.5) / dur) ** 0.5
            j = np.arange(j0, j0 + dur)
            ok = (j >= 0) & (j < n)
            hw[j[ok]] = np.maximum(hw[j[ok]], amp * shape[ok])
        del i
    tmean = clim + y_anom + anom + hw
    # cloud fraction: Gaussian copula to a seasonal Beta
    rho = 0.45
    z = -rho * a_unit + np.sqrt(1 - rho**2) * _ar1(rng, n, 0.5) - 0.6 * (hw > 0)
    u = np.clip(special.ndtr(z), 1e-6, 1 - 1e-6)
    mean_cloud = st.cloud_winter + (st.cloud_summer - st.cloud_winter) * (1 + s) / 2
    conc = 2.5
    cloud = stats.beta.ppf(u, mean_cloud * conc, (1 - mean_cloud) * conc)
    dtr = st.dtr_cloudy + (st.dtr_clear - st.dtr_cloudy) * (1 - cloud) + 0.8 * rng.standard_normal(n)
    dtr = np.maximum(dtr, 1.5)
    # wind: daily log-normal AR(1)
    ls = 0.30
    wmean = st.wind_mean * (1 - st.wind_season * s) * np.where(hw > 0, 0.75, 1.0)
    wind = wmean * np.exp(ls * _ar1(rng, n, 0.5) - ls**2 / 2)
    return pd.DataFrame(
        {"tmean": tmean, "tmax": tmean + dtr / 2, "tmin": tmean - dtr / 2, "cloud": cloud,
         "wind": wind, "heatwave": hw},
        index=days,
    )


def hourly_series(st: Station, daily: pd.DataFrame, rng: np.random.Generator) -> pd.DataFrame:
    """Hourly air temperature [degC], GHI [W/m**2], wind at 10 m [m/s] in local standard time."""
    import pvlib

    days = daily.index
    nd = len(days)
    doy = days.day_of_year.to_numpy().astype(float)
    # sunrise and time of maximum, hours after local standard midnight
    lat = np.radians(st.latitude)
    dec = np.radians(_declination_deg(doy))
    w0 = np.degrees(np.arccos(np.clip(-np.tan(lat) * np.tan(dec), -1, 1)))
    noon = 12.0 - _equation_of_time_min(doy) / 60.0 - (st.longitude - 15.0 * st.utc_offset_h) / 15.0
    rise = noon - w0 / 15.0
    tmax_t = noon + st.t_max_after_noon_h
    d0 = np.arange(nd) * 24.0
    # anchors: (time [h from start], value, rising?) alternating min, max
    at = np.empty(2 * nd)
    av = np.empty(2 * nd)
    at[0::2], at[1::2] = d0 + rise, d0 + tmax_t
    av[0::2], av[1::2] = daily["tmin"].to_numpy(), daily["tmax"].to_numpy()
    nh = nd * 24
    th = np.arange(nh, dtype=float)
    k = np.clip(np.searchsorted(at, th, side="right") - 1, 0, 2 * nd - 2)
    t0, t1 = at[k], at[k + 1]
    f = np.clip((th - t0) / (t1 - t0), 0.0, 1.0)
    rising = (k % 2) == 0
    w_rise = (1 - np.cos(np.pi * f)) / 2
    w_fall = (1 - np.exp(-3.0 * f)) / (1 - np.exp(-3.0))
    w = np.where(rising, w_rise, w_fall)
    temp = av[k] + (av[k + 1] - av[k]) * w
    before = th < at[0]
    temp[before] = av[0]
    temp += 0.35 * _ar1(rng, nh, 0.8)

    tz = f"Etc/GMT{-int(st.utc_offset_h):+d}" if st.utc_offset_h != 0 else "UTC"
    times = pd.date_range(START, periods=nh, freq="h", tz=tz)
    loc = pvlib.location.Location(st.latitude, st.longitude, tz=tz, altitude=st.elevation_m)
    clear = loc.get_clearsky(times, model="ineichen")["ghi"].to_numpy()
    cloud_d = np.repeat(daily["cloud"].to_numpy(), 24)
    nh_cloud = np.clip(cloud_d + 0.15 * _ar1(rng, nh, 0.85), 0.0, 1.0)
    ghi = np.maximum(clear * (1 - 0.75 * nh_cloud**3.4), 0.0)

    hour = th % 24
    wind_d = np.repeat(daily["wind"].to_numpy(), 24)
    wind = wind_d * (1 + st.wind_diurnal * np.cos(2 * np.pi * (hour - 15.0) / 24.0))
    wind *= np.exp(0.15 * _ar1(rng, nh, 0.7) - 0.15**2 / 2)
    return pd.DataFrame(
        {"air_temperature": temp, "ghi": ghi, "wind_speed": np.maximum(wind, 0.0)},
        index=times.tz_localize(None),
    )


def header(st: Station) -> str:
    sign = "+" if st.utc_offset_h >= 0 else "-"
    lines = [
        f"station: {st.name}",
        f"station_id: TP-{st.key.upper()[:3]}-{(STATIONS.index(st) + 1) if st in STATIONS else 0:02d}",
        f"climate: {st.climate}",
        f"latitude: {st.latitude:.2f}",
        f"longitude: {st.longitude:.2f}",
        f"elevation: {st.elevation_m:g} m",
        f"timezone: UTC{sign}{abs(int(st.utc_offset_h)):02d}:00",
    ]
    if st.hourly:
        lines += ["wind_height: 10 m", "irradiance_timing: instant"]
    lines += [
        "note: SYNTHETIC record of a FICTIONAL station, made by climate_samples/generate.py "
        f"(seed {SEED}); not real weather",
    ]
    return "".join(f"# {ln}\n" for ln in lines)


def render(st: Station, rng: np.random.Generator) -> bytes:
    daily = daily_series(st, rng)
    buf = io.StringIO()
    buf.write(header(st))
    if st.hourly:
        h = hourly_series(st, daily, rng)
        out = pd.DataFrame(
            {
                "air_temperature [degC]": h["air_temperature"].round(1) + 0.0,  # + 0.0 turns -0.0 into 0.0
                "ghi [W/m**2]": h["ghi"].round(0).astype(int),
                "wind_speed [m/s]": h["wind_speed"].round(1),
            },
            index=h.index,
        )
        out.index.name = "time"
        out.to_csv(buf, date_format="%Y-%m-%dT%H:%M", lineterminator="\n")
    else:
        out = pd.DataFrame(
            {"tmax [degC]": daily["tmax"].round(1) + 0.0, "tmin [degC]": daily["tmin"].round(1) + 0.0},
            index=daily.index,
        )
        out.index.name = "date"
        out.to_csv(buf, date_format="%Y-%m-%d", lineterminator="\n")
    return gzip.compress(buf.getvalue().encode("utf-8"), compresslevel=9, mtime=0)


def file_name(st: Station) -> str:
    return f"{st.key}_{'hourly' if st.hourly else 'daily'}.csv.gz"


def main() -> None:
    for i, st in enumerate(STATIONS):
        rng = np.random.default_rng(SEED + i)
        data = render(st, rng)
        tmp = OUT_DIR / (file_name(st) + ".tmp")
        tmp.write_bytes(data)
        tmp.replace(OUT_DIR / file_name(st))
        print(f"{file_name(st)}: {st.name} ({st.climate}), {len(data) / 1e6:.2f} MB")


if __name__ == "__main__":
    main()
