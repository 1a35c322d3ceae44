"""Rail temperature from weather records.

Rail temperature is what loads a restrained rail, and weather records give air
temperature. This module turns a record (read by :mod:`trackplan.weather`) into
rail temperatures through one registry of named methods, :data:`METHODS`:

``heat-balance``
    Hourly (or finer) transient heat balance of a metre of rail: sun on the
    rail's silhouette for the track's azimuth, convection with the wind brought
    down to rail height, long-wave exchange with sky and ballast, the rail's
    heat capacity, integrated with an exact exponential step
    (:func:`rail_temperature_hourly`).
``daily-extremes``
    For records with only daily maximum and minimum air temperature: daily
    maximum air temperature plus the steady-state solar excess at the sunniest
    moment of that date and place under clear sky (reduced by a sunshine or
    cloud fraction where the record has one); daily minimum rail temperature
    equal to the daily minimum air temperature (:func:`daily_extremes_path`).
``air-plus-30F``
    The traditional North American rule of thumb: rail maximum = air maximum +
    30 degF (16.7 K); rail minimum = air minimum. Kept as a comparison method.

``"auto"`` picks ``heat-balance`` for hourly records (with clear-sky
irradiance and a warning when the record has no irradiance) and
``daily-extremes`` for daily records.

Many sections share a few climate records, so everything that depends only on
the record and the place (solar position, beam/diffuse split, local dates) is
computed once by :func:`prepare_solar` and reused for every rail and track
orientation; :func:`daily_rail_extremes` keeps the last few prepared records in
a small cache keyed by record path, file size and modification time, a digest
of the values, and place.

Calibration (what was tuned, against what)
-------------------------------------------
One coefficient of :class:`HeatBalanceParameters` was tuned against published
figures; the others are handbook or literature values named where they are
defined, or geometry:

* ``ballast_excess_K_per_W_m2`` (sunlit ballast surface above air temperature
  per W/m**2 of global irradiance) was lowered from the 15 K at 850 W/m**2 of
  the first quick balance (docs/methods/rail-temperature.md) to 10 K at 850 W/m**2, so that the median excess
  of rail over air temperature on clear (GHI > 700 W/m**2 and > 0.8 of clear
  sky), calm (wind at 10 m <= 3 m/s), hot (air >= 28 degC) hours of the
  Greensboro NC typical-year file shipped with pvlib is about 19-20 K, at the
  top of the published 17-19 K (measured peaks up to 35 degF = 19 K above air,
  Bruzek et al. 2015). With 15 K it was 20.5-21 K. ``tests/test_railtemp.py``
  checks the figure.
* ``convective_fraction`` = 0.95 is not tuned: the wetted perimeter of a 60E1
  rail estimated from its nominal dimensions (about 0.69 m) less the foot
  underside resting on pads and sleepers (0.15 m) is 0.94 of its convex-hull
  perimeter (0.575 m).
* ``daily_wind_10m_m_s`` = 3 m/s is the wind of that quick balance (a light afternoon breeze; not tuned).

Nothing was fitted to measured rail temperatures, which the project does not
have; the model's daily maximum excess on clear summer days comes out about
20-23 K, a few K warmer (more conservative) than the air + 30 degF rule.

References
----------
Bruzek, R., Trosino, M., Kreisel, L., Al-Nazer, L. (2015). Rail temperature
prediction model. Proceedings of the 2015 Joint Rail Conference, JRC2015-5720,
ASME (published offsets of rail over air temperature; air + 30 degF practice).
Swinbank, W. C. (1963). Long-wave radiation from clear skies. Quarterly Journal
of the Royal Meteorological Society 89, 339-348 (sky temperature).
McAdams, W. H. (1954). Heat Transmission, 3rd ed., McGraw-Hill (wind
convection coefficient ``h = 5.7 + 3.8 v``), as quoted in Duffie, J. A.,
Beckman, W. A. (2013), Solar Engineering of Thermal Processes, 4th ed., 3.15.
Erbs, D. G., Klein, S. A., Duffie, J. A. (1982). Estimation of the diffuse
radiation fraction for hourly, daily and monthly-average global radiation.
Solar Energy 28, 293-302 (beam/diffuse split, via pvlib).
Ineichen, P., Perez, R. (2002). A new airmass independent formulation for the
Linke turbidity coefficient. Solar Energy 73, 151-157 (clear sky, via pvlib).
Kasten, F., Czeplak, G. (1980). Solar and terrestrial radiation dependent on
the amount and type of cloud. Solar Energy 24, 177-189 (cloud reduction).
Allen, R. G., Pereira, L. S., Raes, D., Smith, M. (1998). Crop
evapotranspiration, FAO Irrigation and Drainage Paper 56, eq. 35
(Angstrom-Prescott sunshine relation, a = 0.25, b = 0.50).
Stull, R. B. (1988). An Introduction to Boundary Layer Meteorology, Kluwer,
9.7 (logarithmic wind profile); WMO (2008), Guide to Meteorological
Instruments and Methods of Observation, WMO-No. 8, annex 5.B (roughness
length 0.03 m for open terrain).
Holmgren, W. F., Hansen, C. W., Mikofski, M. A. (2018). pvlib python: a python
package for modeling solar energy systems. Journal of Open Source Software 3(29),
884 (solar position, clear sky, Erbs split).
"""


from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

from trackplan.errors import InputError, excerpt
from trackplan.rails import RailProfile

# The layers of this model live in three modules; every name stays importable from here.
from trackplan.railtemp_forcing import (  # noqa: F401
    PreparedRecord,
    _clear_sky,
    _content_digest,
    _interval_convention,
    _local_dates,
    _prepared_for,
    clear_prepared_cache,
    prepare_solar,
    solar_position,
)
from trackplan.railtemp_methods import (  # noqa: F401
    _air_plus_30F,
    _daily_extremes_method,
    _daily_from_hourly,
    _heat_balance_daily,
    _hourly_to_daily_air,
    _peak_sun,
    cloud_factor,
    daily_extremes_path,
    rail_temperature_hourly,
    sunshine_factor,
    transient_rail_temperature,
)
from trackplan.railtemp_physics import (  # noqa: F401
    _K0,
    _assemble,
    AIR_PLUS_30F_K,
    DEFAULT_PARAMETERS,
    STEFAN_BOLTZMANN,
    HeatBalanceParameters,
    RailGeometry,
    RailSite,
    beam_silhouette_m,
    convection_coefficient,
    diffuse_width_m,
    exponential_scan,
    rail_geometry,
    sky_temperature_K,
    steady_rail_temperature,
    wind_at_rail,
)


# --------------------------------------------------------------------------
# Registry
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class RailTemperatureMethod:
    """One way of turning a weather record into daily rail extremes.

    Attributes
    ----------
    name : str
    description : str
    time_steps : tuple of str
        Record time steps the method accepts (``"hourly"``, ``"daily"``).
    source : str
        Published source of the method.
    run : callable
        ``run(df, meta, profile, site, params, prepared) -> (daily DataFrame, warnings)``.
    hourly : callable or None
        ``hourly(df, meta, profile, site, params=..., prepared=...)``: the hourly rail
        temperature series, for a method that computes one (None otherwise).
    """

    name: str
    description: str
    time_steps: tuple
    source: str
    run: Callable = field(repr=False)
    hourly: Callable | None = field(default=None, repr=False)


METHODS: dict[str, RailTemperatureMethod] = {
    "heat-balance": RailTemperatureMethod(
        "heat-balance",
        "hourly transient heat balance of the rail (sun on the silhouette, wind, long-wave, heat capacity)",
        ("hourly",),
        "lumped balance, docs/methods/rail-temperature.md; Swinbank (1963); McAdams (1954); pvlib (solar position, Erbs, Ineichen)",
        _heat_balance_daily,
        rail_temperature_hourly,
    ),
    "daily-extremes": RailTemperatureMethod(
        "daily-extremes",
        "daily max air + steady solar excess at the clear-sky peak of that date; daily min rail = min air",
        ("daily", "hourly"),
        "docs/methods/rail-temperature.md; Ineichen & Perez (2002) clear sky; FAO-56 eq. 35; Kasten & Czeplak (1980)",
        _daily_extremes_method,
    ),
    "air-plus-30F": RailTemperatureMethod(
        "air-plus-30F",
        "rule of thumb: rail max = air max + 30 degF (16.7 K); rail min = air min",
        ("daily", "hourly"),
        "North American practice (common practice), discussed by Bruzek et al. (2015), JRC2015-5720",
        _air_plus_30F,
    ),
}


def method_names() -> list[str]:
    """Valid names for ``method``, ``"auto"`` first."""
    return ["auto", *METHODS]


def resolve_method(method: str, meta: dict, df=None) -> str:
    """The registry name ``method`` stands for with this record.

    Raises
    ------
    InputError
        Unknown name (the message lists the valid ones) or a method that
        cannot run on this record's time step.
    """
    step = meta.get("time_step")
    if method == "auto":
        return "heat-balance" if step == "hourly" else "daily-extremes"
    if method not in METHODS:
        raise InputError(f"unknown rail temperature method {excerpt(method)}; accepted: {', '.join(method_names())}",
                         field="rail_temperature_method")
    if step not in METHODS[method].time_steps:
        raise InputError(
            f"method {method!r} needs a record with time step {' or '.join(METHODS[method].time_steps)}, "
            f"but this record is {step!r}; use the method daily-extremes or auto",
            field="rail_temperature_method",
        )
    return method


def daily_rail_extremes(df, meta: dict, profile: RailProfile, site: RailSite, method: str = "auto",
                        params: HeatBalanceParameters = DEFAULT_PARAMETERS,
                        prepared: PreparedRecord | None = None):
    """Daily maximum and minimum rail temperature of a weather record.

    Parameters
    ----------
    df : pandas.DataFrame
        Record from :func:`trackplan.weather.read_record` (hourly or daily).
    meta : dict
        Its metadata (``time_step`` decides between the hourly and daily paths).
    profile : RailProfile
        Rail section.
    site : RailSite
        Place, track azimuth, shade, surface.
    method : str
        ``"auto"`` or a key of :data:`METHODS`.
    params : HeatBalanceParameters
        Model coefficients.
    prepared : PreparedRecord, optional
        :func:`prepare_solar` of this record and place, to reuse across
        sections (otherwise a small cache keyed by ``meta["path"]`` is used).

    Returns
    -------
    pandas.DataFrame
        Index: local dates; columns ``rail_max_C``, ``rail_min_C``,
        ``air_max_C``, ``air_min_C`` [degC]; NaN on days with too few data.
        ``attrs``: ``method`` (registry name used), ``warnings`` (list of str).
    """
    name = resolve_method(method, meta, df)
    out, warnings = METHODS[name].run(df, meta, profile, site, params, prepared)
    out.attrs["method"] = name
    out.attrs["warnings"] = list(warnings)
    return out


__all__ = [
    "AIR_PLUS_30F_K",
    "DEFAULT_PARAMETERS",
    "HeatBalanceParameters",
    "METHODS",
    "PreparedRecord",
    "RailGeometry",
    "RailSite",
    "RailTemperatureMethod",
    "beam_silhouette_m",
    "clear_prepared_cache",
    "cloud_factor",
    "convection_coefficient",
    "daily_extremes_path",
    "daily_rail_extremes",
    "diffuse_width_m",
    "exponential_scan",
    "method_names",
    "prepare_solar",
    "rail_geometry",
    "rail_temperature_hourly",
    "resolve_method",
    "sky_temperature_K",
    "solar_position",
    "steady_rail_temperature",
    "sunshine_factor",
    "transient_rail_temperature",
    "wind_at_rail",
]
