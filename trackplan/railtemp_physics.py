"""Rail temperature physics: the lumped heat balance of a rail in the sun.

The site and coefficient objects, the rail's exposed geometry, the terms of the
balance (wind at rail height, convection, sky temperature, beam silhouette,
diffuse widths), the steady solution and the exponential scan used by the
transient solution. Pure functions over arrays, SI floats inside. The methods
that turn a record into daily extremes are in :mod:`trackplan.railtemp_methods`,
the registry in :mod:`trackplan.railtemp`; equations and sources in the
documentation of :mod:`trackplan.railtemp` and docs/methods/rail-temperature.md.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from trackplan.errors import InputError
from trackplan.rails import RailProfile


#: Stefan-Boltzmann constant [W/(m**2 K**4)] (CODATA 2018).
STEFAN_BOLTZMANN = 5.670374419e-8
_K0 = 273.15

#: Air plus 30 degF expressed as a temperature difference [K].
AIR_PLUS_30F_K = 30.0 * 5.0 / 9.0


# --------------------------------------------------------------------------
# Site and model coefficients
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class RailSite:
    """Where and how the rail sits.

    Attributes
    ----------
    latitude_deg : float
        Latitude, north positive [deg], -90..90.
    longitude_deg : float
        Longitude, east positive [deg], -180..180.
    elevation_m : float
        Height above sea level [m] (clear-sky model).
    track_azimuth_deg : float
        Direction of the track axis, clockwise from north [deg]; 0 and 180 are
        the same track (north-south), 90 is east-west.
    shade_factor : float
        Fraction of sun and sky hidden by cuttings, trees, buildings: 0 open
        sky, 1 fully shaded (tunnel). Scales beam, diffuse and ground-reflected
        sun, the ballast's solar excess and the sky's share of the long-wave
        view (the hidden part is taken at air temperature).
    absorptivity : float
        Solar absorptivity of the rail surface, 0.8 by default for weathered
        (rusty) rail; 0.6-0.9 from bright to rusty rail (docs/methods/rail-temperature.md)
        (from memory).
    emissivity : float
        Long-wave emissivity of the rail surface, 0.85 by default (oxidised
        steel, from memory; about 0.8-0.9, docs/methods/rail-temperature.md).
    """

    latitude_deg: float
    longitude_deg: float
    elevation_m: float = 0.0
    track_azimuth_deg: float = 0.0
    shade_factor: float = 0.0
    absorptivity: float = 0.8
    emissivity: float = 0.85

    def __post_init__(self):
        checks = [
            ("latitude_deg", -90.0, 90.0, "latitude", "a latitude between -90 and 90 deg"),
            ("longitude_deg", -180.0, 180.0, "longitude", "a longitude between -180 and 180 deg"),
            ("elevation_m", -500.0, 9000.0, "elevation", "an elevation between -500 and 9000 m"),
            ("shade_factor", 0.0, 1.0, "shade", "a shade factor from 0 (open sky) to 1 (tunnel)"),
            ("absorptivity", 0.0, 1.0, "absorptivity", "an absorptivity from 0 to 1"),
            ("emissivity", 0.0, 1.0, "emissivity", "an emissivity from 0 to 1"),
        ]
        for name, lo, hi, where, what in checks:
            v = getattr(self, name)
            if not isinstance(v, (int, float)) or not math.isfinite(v) or not lo <= v <= hi:
                raise InputError(f"{v!r} is out of range; give {what}", field=where)
        if not math.isfinite(self.track_azimuth_deg):
            raise InputError("track azimuth must be a finite angle in degrees from north", field="track_azimuth")


@dataclass(frozen=True)
class HeatBalanceParameters:
    """Coefficients of the rail heat balance, with their sources.

    Attributes
    ----------
    specific_heat_J_per_kg_K : float
        Specific heat of rail steel, 480 J/(kg K) (460-490 from memory,
        from memory; carbon steel near 20-40 degC, Incropera & DeWitt table A.1,
        434-480).
    rail_height_above_ballast_m : float
        Height of the rail's centre of wind exposure above the ballast, 0.2 m
        (docs/methods/rail-temperature.md; from memory).
    anemometer_height_m : float
        Height of the station's wind measurement, 10 m (WMO-No. 8 standard
        exposure).
    roughness_length_m : float
        Aerodynamic roughness length of the track bed surroundings, 0.03 m
        (WMO-No. 8 annex 5.B, "open" terrain).
    convective_fraction : float
        Convecting perimeter as a share of the convex-hull perimeter, 0.95
        (wetted perimeter less the foot underside; see the module docstring).
    ballast_excess_K_per_W_m2 : float
        Sunlit ballast surface temperature above air per W/m**2 of unshaded
        global irradiance: 10 K at 850 W/m**2 (tuned from the 15 K of the
        first quick balance; see the module docstring). At night the
        ballast is taken at air temperature.
    ground_albedo : float
        Solar reflectance of the ballast, 0.2 (common value for grey crushed
        stone and open ground; Duffie & Beckman 2013, 2.20, from memory).
    sky_view : float
        Share of the rail's long-wave view that is sky on open track, 0.5;
        the other half is ballast and sleepers (docs/methods/rail-temperature.md).
    default_wind_10m_m_s : float
        Wind at 10 m assumed where an hourly record has none (with a warning),
        2 m/s.
    daily_wind_10m_m_s : float
        Wind at 10 m assumed at the sunniest hour on the daily-extremes path,
        3 m/s (a light afternoon breeze; docs/methods/rail-temperature.md).
    max_step_s : float
        A time step longer than this (a gap) restarts the transient at the
        steady state, 3 h.
    """

    specific_heat_J_per_kg_K: float = 480.0
    rail_height_above_ballast_m: float = 0.2
    anemometer_height_m: float = 10.0
    roughness_length_m: float = 0.03
    convective_fraction: float = 0.95
    ballast_excess_K_per_W_m2: float = 10.0 / 850.0
    ground_albedo: float = 0.2
    sky_view: float = 0.5
    default_wind_10m_m_s: float = 2.0
    daily_wind_10m_m_s: float = 3.0
    max_step_s: float = 3 * 3600.0


DEFAULT_PARAMETERS = HeatBalanceParameters()


@dataclass(frozen=True)
class RailGeometry:
    """Thermal geometry of a metre of rail derived from its profile.

    Attributes
    ----------
    height_m, foot_width_m, head_width_m : float
        Rail height, foot width, head width [m].
    hull_perimeter_m : float
        Perimeter of the convex hull of the section (head top, two flanks from
        head to foot edge, foot underside) [m]; the radiating perimeter.
    flank_length_m : float
        Length of one flank of the hull [m].
    flank_cos_tilt : float
        Cosine of a flank's tilt from horizontal [-].
    heat_capacity_J_per_m_K : float
        Mass per metre times specific heat [J/(m K)].
    """

    height_m: float
    foot_width_m: float
    head_width_m: float
    hull_perimeter_m: float
    flank_length_m: float
    flank_cos_tilt: float
    heat_capacity_J_per_m_K: float


def rail_geometry(profile: RailProfile, params: HeatBalanceParameters = DEFAULT_PARAMETERS) -> RailGeometry:
    """Thermal geometry of a rail profile (convex hull of the section).

    Parameters
    ----------
    profile : RailProfile
        Rail section (height, foot and head width [m], mass per metre [kg/m]).
    params : HeatBalanceParameters
        Coefficients (specific heat).

    Returns
    -------
    RailGeometry

    Notes
    -----
    The hull is the trapezoid with the head width ``w`` on top, the foot width
    ``b`` below and height ``H``; each flank has length
    ``L = sqrt(H**2 + ((b - w)/2)**2)`` and the hull perimeter is
    ``w + b + 2 L``. The concave parts between head and foot exchange long-wave
    radiation mostly with each other, so the hull is the radiating envelope.
    """
    H, b, w = profile.height_m, profile.foot_width_m, profile.head_width_m
    if not (H > 0 and b > 0 and w > 0 and profile.mass_kg_per_m > 0):
        raise InputError(f"rail profile {profile.name} needs positive height, widths and mass", field="rail")
    half = max((b - w) / 2.0, 0.0)
    L = math.hypot(H, half)
    return RailGeometry(
        height_m=H,
        foot_width_m=b,
        head_width_m=w,
        hull_perimeter_m=w + b + 2 * L,
        flank_length_m=L,
        flank_cos_tilt=half / L,
        heat_capacity_J_per_m_K=profile.mass_kg_per_m * params.specific_heat_J_per_kg_K,
    )


# --------------------------------------------------------------------------
# Pure physics over arrays
# --------------------------------------------------------------------------


def wind_at_rail(wind_10m_m_s, params: HeatBalanceParameters = DEFAULT_PARAMETERS):
    """Wind speed at rail height from the station's wind by a log profile.

    Parameters
    ----------
    wind_10m_m_s : float or array
        Wind speed at the anemometer height [m/s].
    params : HeatBalanceParameters
        Heights and roughness length.

    Returns
    -------
    float or array
        Wind speed at rail height [m/s].

    Notes
    -----
    Neutral logarithmic profile ``v(z) = v_ref ln(z/z0) / ln(z_ref/z0)``;
    with z = 0.2 m, z_ref = 10 m, z0 = 0.03 m the factor is 0.33.

    References
    ----------
    Stull (1988), An Introduction to Boundary Layer Meteorology, 9.7.
    """
    z0 = params.roughness_length_m
    f = math.log(params.rail_height_above_ballast_m / z0) / math.log(params.anemometer_height_m / z0)
    return np.maximum(np.asarray(wind_10m_m_s, dtype=float), 0.0) * f


def convection_coefficient(wind_rail_m_s):
    """Convective heat-transfer coefficient of the rail surface.

    Parameters
    ----------
    wind_rail_m_s : float or array
        Wind speed at rail height [m/s].

    Returns
    -------
    float or array
        ``h_c`` [W/(m**2 K)].

    Notes
    -----
    ``h_c = 5.7 + 3.8 v`` (McAdams). The constant term stands for natural
    convection in calm air; Duffie & Beckman note that the correlation may
    include some radiation, so together with the separate long-wave term it
    leans towards more cooling, which the tuned coefficients absorb.

    References
    ----------
    McAdams (1954), Heat Transmission; Duffie & Beckman (2013), 3.15.
    """
    return 5.7 + 3.8 * np.asarray(wind_rail_m_s, dtype=float)


def sky_temperature_K(air_temperature_C):
    """Clear-sky temperature by Swinbank (1963), ``T_sky = 0.0552 T_air**1.5`` [K].

    Parameters
    ----------
    air_temperature_C : float or array
        Air temperature [degC].

    References
    ----------
    Swinbank (1963), QJRMS 89, 339-348.
    """
    return 0.0552 * (np.asarray(air_temperature_C, dtype=float) + _K0) ** 1.5


def beam_silhouette_m(sun_elevation_deg, sun_azimuth_deg, track_azimuth_deg: float, geometry: RailGeometry):
    """Width of the rail's shadow per metre facing the beam [m].

    Parameters
    ----------
    sun_elevation_deg, sun_azimuth_deg : array
        Sun elevation above the horizon and azimuth clockwise from north [deg].
    track_azimuth_deg : float
        Track axis azimuth [deg].
    geometry : RailGeometry

    Returns
    -------
    array
        ``b sin e + H cos e |sin(az_sun - az_track)|`` for the sun above the
        horizon, 0 below [m]. Multiplied by the direct normal irradiance this
        gives the beam intercepted per metre of rail [W/m].

    Notes
    -----
    A long prism of foot width ``b`` and height ``H`` seen from the sun's
    direction (docs/methods/rail-temperature.md). North-south track catches low sun on its side;
    east-west track mostly on its top.
    """
    e = np.radians(np.asarray(sun_elevation_deg, dtype=float))
    daz = np.radians(np.asarray(sun_azimuth_deg, dtype=float) - track_azimuth_deg)
    s = geometry.foot_width_m * np.sin(e) + geometry.height_m * np.cos(e) * np.abs(np.sin(daz))
    return np.where(e > 0, s, 0.0)


def diffuse_width_m(geometry: RailGeometry) -> tuple[float, float]:
    """Widths that multiply sky-diffuse and ground-reflected irradiance [m].

    Returns
    -------
    (sky, ground) : tuple of float
        ``w + 2 L (1 + cos b)/2`` and ``2 L (1 - cos b)/2`` for the hull's head
        top ``w`` and its two flanks of length ``L`` and tilt ``b`` from
        horizontal (isotropic sky and ground, Liu-Jordan view factors,
        Duffie & Beckman 2013, 2.15). The foot underside sits on the sleepers
        and receives neither.
    """
    L, c = geometry.flank_length_m, geometry.flank_cos_tilt
    return geometry.head_width_m + L * (1 + c), L * (1 - c)


@dataclass(frozen=True)
class _Sky:
    """Rail-independent terms of the balance at each step (computed once per record)."""

    ta_K: np.ndarray  # air temperature [K]
    ta4: np.ndarray  # T_air**4 [K**4]
    tsky4: np.ndarray  # T_sky**4 (Swinbank) [K**4]
    ghi: np.ndarray  # [W/m**2], NaN where missing
    dhi: np.ndarray
    beam_top: np.ndarray  # DNI sin(e) where the sun is up [W/m**2]
    beam_side: np.ndarray  # DNI cos(e) where the sun is up [W/m**2]
    sin_az: np.ndarray
    cos_az: np.ndarray
    h_conv: np.ndarray  # convection coefficient at rail height [W/(m**2 K)]
    env4: dict = field(default_factory=dict, repr=False)  # T_env**4 by shade factor


def _sky(air_C, ghi, dni, dhi, wind10, elev, az, params: HeatBalanceParameters) -> _Sky:
    air_C, ghi, dni, dhi, wind10, elev, az = np.broadcast_arrays(
        *[np.asarray(v, dtype=float) for v in (air_C, ghi, dni, dhi, wind10, elev, az)]
    )
    ta = air_C + _K0
    ta2 = ta * ta
    tsky = sky_temperature_K(air_C)
    tsky2 = tsky * tsky
    e = np.radians(elev)
    up = e > 0
    a = np.radians(az)
    return _Sky(
        ta_K=ta,
        ta4=ta2 * ta2,
        tsky4=tsky2 * tsky2,
        ghi=np.maximum(ghi, 0.0),
        dhi=np.maximum(dhi, 0.0),
        beam_top=np.where(up, dni * np.sin(e), 0.0),
        beam_side=np.where(up, dni * np.cos(e), 0.0),
        sin_az=np.sin(a),
        cos_az=np.cos(a),
        h_conv=convection_coefficient(wind_at_rail(wind10, params)),
    )


@dataclass(frozen=True)
class _Coeffs:
    """Per-step terms of the balance for one rail and site."""

    q_W_per_m: np.ndarray  # absorbed sun per metre
    g_conv_W_per_m_K: np.ndarray  # h_c * P_c
    g_rad_W_per_m_K4: float  # eps * sigma * P_r
    t_env4_K4: np.ndarray  # T_env**4


def _assemble(sky: _Sky, geometry: RailGeometry, site: RailSite, params: HeatBalanceParameters) -> _Coeffs:
    """Absorbed sun, conductances and environment temperature for one rail and site."""
    s = 1.0 - site.shade_factor
    w_sky, w_gnd = diffuse_width_m(geometry)
    t = math.radians(site.track_azimuth_deg)
    # |sin(az_sun - az_track)| without a trigonometric call per step
    side = np.abs(sky.sin_az * math.cos(t) - sky.cos_az * math.sin(t))
    beam = geometry.foot_width_m * sky.beam_top + geometry.height_m * sky.beam_side * side
    q = (site.absorptivity * s) * (beam + w_sky * sky.dhi + (params.ground_albedo * w_gnd) * sky.ghi)
    g_conv = sky.h_conv * (params.convective_fraction * geometry.hull_perimeter_m)
    g_rad = site.emissivity * STEFAN_BOLTZMANN * geometry.hull_perimeter_m
    key = (site.shade_factor, params.ballast_excess_K_per_W_m2, params.sky_view)
    t_env4 = sky.env4.get(key)
    if t_env4 is None:
        tb = sky.ta_K + (params.ballast_excess_K_per_W_m2 * s) * sky.ghi
        tb2 = tb * tb
        f_sky = params.sky_view * s
        f_wall = params.sky_view * (1.0 - s)
        f_bal = 1.0 - params.sky_view
        t_env4 = f_sky * sky.tsky4 + f_bal * tb2 * tb2
        if f_wall:
            t_env4 = t_env4 + f_wall * sky.ta4
        if len(sky.env4) < 16:
            sky.env4[key] = t_env4
    return _Coeffs(q, g_conv, g_rad, t_env4)


def _coefficients(
    air_C, ghi, dni, dhi, wind10, elev, az, geometry: RailGeometry, site: RailSite, params: HeatBalanceParameters
) -> _Coeffs:
    return _assemble(_sky(air_C, ghi, dni, dhi, wind10, elev, az, params), geometry, site, params)


def _steady(ta, c: _Coeffs, iterations: int = 2):
    """Newton solve of ``q - g_c (T - Ta) - g_r (T**4 - Te**4) = 0`` for ``T`` [K].

    ``ta`` is the air temperature [K]. Returns ``(T, dLoss/dT)``. The residual
    is monotone and concave in ``T``, so Newton's method from the balance
    linearised at the air temperature converges fast: two steps leave less
    than 1e-5 K over air from -40 to 50 degC, sun to 1100 W/m**2 and wind to
    25 m/s (three steps: 1e-13 K; checked against brentq in the tests).
    Written with in-place operations: it runs on every step of 30-year records
    for every section.
    """
    gc, q, te4 = c.g_conv_W_per_m_K, c.q_W_per_m, c.t_env4_K4
    gr = c.g_rad_W_per_m_K4
    gr4 = 4.0 * gr
    # start: linearised at the air temperature
    t2 = ta * ta
    f = t2 * t2
    f -= te4
    f *= -gr
    f += q
    k = t2 * ta
    k *= gr4
    k += gc
    T = f / k
    T += ta
    for _ in range(iterations):
        np.multiply(T, T, out=t2)
        np.multiply(t2, t2, out=f)
        f -= te4
        f *= -gr
        f += q
        np.subtract(T, ta, out=k)
        k *= gc
        f -= k  # residual
        np.multiply(t2, T, out=k)
        k *= gr4
        k += gc
        f /= k
        T += f
    np.multiply(T, T, out=t2)
    t2 *= T
    t2 *= gr4
    t2 += gc
    return T, t2


def steady_rail_temperature(
    air_temperature_C,
    ghi_W_m2,
    dni_W_m2,
    dhi_W_m2,
    wind_speed_m_s,
    sun_elevation_deg,
    sun_azimuth_deg,
    profile: RailProfile,
    site: RailSite,
    params: HeatBalanceParameters = DEFAULT_PARAMETERS,
):
    """Steady-state rail temperature of the heat balance (no heat storage).

    Parameters
    ----------
    air_temperature_C : float or array
        Air temperature [degC].
    ghi_W_m2, dni_W_m2, dhi_W_m2 : float or array
        Global horizontal, direct normal and diffuse horizontal irradiance [W/m**2].
    wind_speed_m_s : float or array
        Wind speed at 10 m [m/s].
    sun_elevation_deg, sun_azimuth_deg : float or array
        Sun position [deg].
    profile : RailProfile
    site : RailSite
    params : HeatBalanceParameters

    Returns
    -------
    float or array
        Rail temperature [degC] at which absorbed sun equals the losses.

    Notes
    -----
    Per metre of rail (docs/methods/rail-temperature.md)::

        0 = a S - h_c P_c (T - T_air) - eps sigma P_r (T**4 - T_env**4)
        S = (1 - s) [DNI (b sin e + H cos e |sin(az_sun - az_track)|)
                     + DHI w_sky + rho_g GHI w_gnd]
        T_env**4 = f_sky T_sky**4 + (f - f_sky) T_air**4 + (1 - f) T_ballast**4
        T_sky = 0.0552 T_air**1.5  (Swinbank),  T_ballast = T_air + k_b (1 - s) GHI

    with ``P_r`` the hull perimeter, ``P_c`` its convecting share,
    ``f`` the sky view of open track and ``f_sky = f (1 - s)``. Solved by
    Newton's method (the residual is monotone in ``T``).
    """
    geometry = rail_geometry(profile, params)
    arrs = [np.asarray(v, dtype=float) for v in (air_temperature_C, ghi_W_m2, dni_W_m2, dhi_W_m2,
                                                 wind_speed_m_s, sun_elevation_deg, sun_azimuth_deg)]
    shape = np.broadcast_shapes(*(a.shape for a in arrs))
    air, ghi, dni, dhi, wind, elev, az = (np.broadcast_to(a, shape).reshape(-1).copy() for a in arrs)
    c = _coefficients(air, ghi, dni, dhi, wind, elev, az, geometry, site, params)
    T, _ = _steady(air + _K0, c)
    out = (T - _K0).reshape(shape)
    return float(out) if out.ndim == 0 else out


def exponential_scan(log_a, b, block: int = 32):
    """Solve the linear recurrence ``x[n] = exp(log_a[n]) x[n-1] + b[n]``, ``x[-1] = 0``.

    Vectorised with numpy in blocks: within a block the solution is written
    with cumulative sums of ``log_a`` (cumulative products of the decay
    factors), and only the block-end values are carried from block to block in
    a short loop (one pass per ``block`` steps).

    Parameters
    ----------
    log_a : array, shape (n,)
        Logarithms of the decay factors, ``-dt/tau`` (``-inf`` restarts the
        recurrence at ``b[n]``).
    b : array, shape (n,)
        Forcing terms.
    block : int
        Block length; ``log_a`` is clipped at -20 per step (a decay of 2e-9,
        a restart for any purpose) so that in-block growth stays below
        ``exp(640)``, within double precision.

    Returns
    -------
    array, shape (n,)
    """
    la = np.maximum(np.asarray(log_a, dtype=float), -20.0)
    b = np.asarray(b, dtype=float)
    n = la.size
    if n == 0:
        return np.empty(0)
    nb = -(-n // block)
    pad = nb * block - n
    if pad:
        la = np.concatenate([la, np.zeros(pad)])
        b = np.concatenate([b, np.zeros(pad)])
    c = np.cumsum(la.reshape(nb, block), axis=1)  # log of prod a[0..j] in the block
    P = np.exp(c)
    S = np.cumsum(b.reshape(nb, block) / P, axis=1)
    S *= P  # block solution from a zero start
    PL = P[:, -1].tolist()
    SL = S[:, -1].tolist()
    start = [0.0] * nb
    x = 0.0
    for k in range(nb):
        start[k] = x
        x = PL[k] * x + SL[k]
    S += P * np.asarray(start)[:, None]
    return S.reshape(-1)[:n]
