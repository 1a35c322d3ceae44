"""Vehicle loading of the track for the stability analysis: vertical load along the track and
the lateral resistance it leaves.

A train standing (or passing slowly) on the track presses it down under its axles and lifts it
between its bogies. The lateral resistance of a sleeper in ballast grows with the vertical load
on it (friction at its base) and loses its base part where the track is lifted. The stability
analysis (:mod:`trackplan.stability`) therefore sees a lateral resistance that varies along the
track; the train is placed where it hurts most: with a lifted zone over the centre of the
misalignment.

Model
-----
Vertical deflection of each rail under its wheel loads: an infinite beam on a Winkler
foundation (Hetenyi, 1946; the classical track model of Zimmermann and Talbot, used in AREMA
practice as the "beam on elastic foundation" method). For one wheel load ``Q`` the rail seat
load per metre of rail is::

    q1(x) = u y(x) = (Q beta / 2) eta(beta |x|),   eta(z) = exp(-z) (cos z + sin z)
    beta = (u / (4 E I_v)) ** 0.25

with ``u`` the track support modulus per rail [N/m**2] and ``E I_v`` the vertical bending
stiffness of one rail. ``eta`` is negative for ``3 pi/4 < z < 7 pi/4`` (the uplift wave). Superposing the wheels of both rails, the vertical load the
train puts on the ballast per metre of track is::

    q(x) = sum_i P_i (beta / 2) eta(beta |x - x_i|)          (P_i axle loads)

whose integral over the whole track is the train's weight.

Lateral resistance with the train (per metre of track, peak and limit alike)::

    F(x) = F_0 + mu q(x)                                   q >= 0 (pressed down)
    F(x) = F_0 - s_b F_0 min(-q(x) / W, 1)                 q <  0 (lifted)

``F_0`` the unloaded resistance, ``mu`` the friction coefficient between sleeper and ballast
under added vertical load, ``s_b`` the share of the unloaded resistance that acts at the
sleeper base (lost when the sleeper is lifted off its bed) and ``W`` the weight of the track
panel per metre (rails and sleepers). The two branches meet at ``q = 0``. Quasi-static: the
dynamic increment of wheel loads and the lateral wheel forces of curving are not included.

Worst position: the train is placed so that the centre of the misalignment lies midway
between the inner axles of two coupled vehicles (``coupling``) or midway between the bogies of
one vehicle (``mid-vehicle``); of the two, the one that leaves the least lateral resistance
over the misalignment (weighted by its shape) is used.

References
----------
Hetenyi, M. (1946). *Beams on Elastic Foundation*. University of Michigan Press.
Kish, A., Samavedam, G. (2013). *Track Buckling Prevention: Theory, Safety Concepts, and
Applications*, report DOT/FRA/ORD-13/16, US Federal Railroad Administration (vehicle uplift
reduces the lateral resistance in the buckling zone; "dynamic" buckling temperatures are
computed with vehicle loads).
Esveld, C. (2001). *Modern Railway Track*, 2nd ed., MRT-Productions, ch. 7 (lateral resistance
grows with vertical load; track stability under traffic).
Selig, E. T., Waters, J. M. (1994). *Track Geotechnology and Substructure Management*. Thomas
Telford (track support modulus).
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass
from functools import lru_cache
from importlib import resources

import numpy as np

from trackplan import names
from trackplan.errors import InputError

#: Accepted range of axle loads [N] (0 excluded, up to 50 t).
AXLE_LOAD_RANGE_N = (1.0e3, 50.0e3 * 9.80665)
#: Accepted range of the track support modulus per rail [N/m**2] (2-150 MPa).
SUPPORT_MODULUS_RANGE_N_PER_M2 = (2.0e6, 150.0e6)
#: Name that switches vehicle loading off (the unloaded, static analysis).
NO_LOADING = names.NO_LOADING
#: Default train preset.
DEFAULT_LOADING = names.DEFAULT_LOADING
#: Number of vehicles of the train placed around the misalignment.
N_VEHICLES = 4
G = 9.80665


@dataclass(frozen=True)
class TrainPreset:
    """A train of identical vehicles (one row of ``data/train_presets.csv``), SI.

    Attributes
    ----------
    name : str
        Preset name.
    axle_load_N : float
        Load of one axle [N].
    axle_spacing_m : float
        Distance between the axles of one bogie [m].
    bogie_centres_m : float
        Distance between the bogie centres of one vehicle [m].
    vehicle_length_m : float
        Length of one vehicle over couplers or buffers [m].
    source : str
        Where the values come from.
    """

    name: str
    axle_load_N: float
    axle_spacing_m: float
    bogie_centres_m: float
    vehicle_length_m: float
    source: str


@dataclass(frozen=True)
class SleeperSupport:
    """Vertical support and weight of a sleeper type in a ballast state (``data/track_support.csv``)."""

    sleeper: str
    ballast: str
    support_modulus_N_per_m2: float
    sleeper_mass_kg: float
    base_share: float
    friction_coefficient: float
    source: str


@dataclass(frozen=True)
class LoadCase:
    """Axle loads placed along the track around the misalignment centre (``x = 0``), SI; hashable.

    Attributes
    ----------
    name : str
        Train preset name.
    position : str
        ``coupling`` or ``mid-vehicle`` (where the misalignment centre lies in the train).
    axle_positions_m : tuple of float
        Axle positions [m] relative to the misalignment centre (symmetric about it).
    axle_load_N : float
        Load of each axle [N].
    support_modulus_N_per_m2 : float
        Track support modulus per rail [N/m**2].
    rail_vertical_EI_Nm2 : float
        Vertical bending stiffness of ONE rail [N m**2].
    track_weight_N_per_m : float
        Weight of the track panel (two rails and the sleepers) per metre [N/m].
    base_share : float
        Share of the unloaded lateral resistance that acts at the sleeper base [-].
    friction_coefficient : float
        Sleeper-ballast friction coefficient for added vertical load [-].
    """

    name: str
    position: str
    axle_positions_m: tuple
    axle_load_N: float
    support_modulus_N_per_m2: float
    rail_vertical_EI_Nm2: float
    track_weight_N_per_m: float
    base_share: float
    friction_coefficient: float

    @property
    def beta_per_m(self) -> float:
        return beta(self.support_modulus_N_per_m2, self.rail_vertical_EI_Nm2)

    def as_json(self) -> dict:
        return {
            "name": self.name, "position": self.position, "axle_load_kN": self.axle_load_N / 1e3,
            "axle_positions_m": [round(x, 3) for x in self.axle_positions_m],
            "support_modulus_per_rail_MPa": self.support_modulus_N_per_m2 / 1e6,
            "track_weight_kN_per_m": self.track_weight_N_per_m / 1e3,
            "base_share": self.base_share, "friction_coefficient": self.friction_coefficient,
        }


def _rows(name: str) -> list[dict]:
    text = resources.files("trackplan").joinpath(f"data/{name}").read_text(encoding="utf-8")
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.startswith("#")]
    return list(csv.DictReader(lines))


@lru_cache(maxsize=1)
def train_presets() -> dict[str, TrainPreset]:
    """The bundled train presets by name (``data/train_presets.csv``)."""
    out = {}
    for r in _rows("train_presets.csv"):
        out[r["name"].strip()] = TrainPreset(
            name=r["name"].strip(), axle_load_N=float(r["axle_load_t"]) * 1e3 * G,
            axle_spacing_m=float(r["axle_spacing_m"]), bogie_centres_m=float(r["bogie_centres_m"]),
            vehicle_length_m=float(r["vehicle_length_m"]), source=r["source"].strip())
    return out


@lru_cache(maxsize=1)
def support_presets() -> dict[tuple[str, str], SleeperSupport]:
    """Track support modulus, sleeper mass and friction data by (sleeper, ballast) (``data/track_support.csv``)."""
    out = {}
    for r in _rows("track_support.csv"):
        s = SleeperSupport(
            sleeper=r["sleeper"].strip(), ballast=r["ballast"].strip(),
            support_modulus_N_per_m2=float(r["support_modulus_MPa"]) * 1e6,
            sleeper_mass_kg=float(r["sleeper_mass_kg"]), base_share=float(r["base_share"]),
            friction_coefficient=float(r["friction_coefficient"]), source=r["source"].strip())
        out[(s.sleeper, s.ballast)] = s
    return out


def loading_names() -> list[str]:
    """Accepted loading names: the train presets and ``none``."""
    return list(train_presets()) + [NO_LOADING]


def get_train(name: str, where: str = "loading") -> TrainPreset:
    """A train preset by name; unknown names raise :class:`InputError` listing the valid ones."""
    t = train_presets().get(name)
    if t is None:
        raise InputError(f"unknown loading {name!r}; accepted: {', '.join(loading_names())}", where)
    return t


def check_train(train: TrainPreset, where: str = "loading") -> None:
    """Refuse axle loads outside (0, 50 t] and geometry that does not describe a bogie vehicle."""
    lo, hi = AXLE_LOAD_RANGE_N
    if not lo <= train.axle_load_N <= hi:
        raise InputError(f"axle load {train.axle_load_N / 1e3:g} kN ({train.axle_load_N / 1e3 / G:.1f} t) is outside "
                         f"{lo / 1e3:g} kN .. {hi / 1e3:.0f} kN (50 t); give the load of one axle", where)
    if not 1.0 <= train.axle_spacing_m <= 4.0:
        raise InputError(f"axle spacing {train.axle_spacing_m:g} m in a bogie is outside 1..4 m", where)
    if not train.axle_spacing_m < train.bogie_centres_m < train.vehicle_length_m - train.axle_spacing_m:
        raise InputError("bogie centres must lie between the axle spacing and the vehicle length less one "
                         "axle spacing", where)


def check_support_modulus(u_N_per_m2: float, where: str = "support_modulus") -> None:
    """Refuse a track support modulus outside 2-150 MPa per rail (soft formation .. slab-like)."""
    lo, hi = SUPPORT_MODULUS_RANGE_N_PER_M2
    if not (math.isfinite(u_N_per_m2) and lo <= u_N_per_m2 <= hi):
        raise InputError(f"track support modulus {u_N_per_m2 / 1e6:g} MPa per rail is outside "
                         f"{lo / 1e6:g}..{hi / 1e6:g} MPa (N/mm per mm of rail)", where)


def beta(support_modulus_N_per_m2: float, rail_vertical_EI_Nm2: float) -> float:
    """Characteristic wave number of a rail on a Winkler foundation, ``(u / 4EI)**0.25`` [1/m]."""
    return (support_modulus_N_per_m2 / (4.0 * rail_vertical_EI_Nm2)) ** 0.25


def vertical_load(x_m, axle_positions_m, axle_load_N: float, support_modulus_N_per_m2: float,
                  rail_vertical_EI_Nm2: float):
    """Vertical load of the axles on the ballast per metre of track [N/m] (downward positive).

    Parameters
    ----------
    x_m : array
        Positions along the track [m].
    axle_positions_m : sequence of float
        Axle positions [m].
    axle_load_N : float
        Load of one axle (both wheels) [N].
    support_modulus_N_per_m2 : float
        Track support modulus per rail [N/m**2].
    rail_vertical_EI_Nm2 : float
        Vertical bending stiffness of one rail [N m**2].

    Notes
    -----
    ``q(x) = sum_i P (beta/2) exp(-z)(cos z + sin z)``, ``z = beta |x - x_i|``: the rail seat load
    of an infinite beam on a Winkler foundation (Hetenyi, 1946), summed over both rails.
    """
    b = beta(support_modulus_N_per_m2, rail_vertical_EI_Nm2)
    x = np.asarray(x_m, dtype=float)
    q = np.zeros_like(x)
    for xi in axle_positions_m:
        z = b * np.abs(x - xi)
        q += np.exp(-z) * (np.cos(z) + np.sin(z))
    return axle_load_N * b / 2.0 * q


def resistance_change(q_N_per_m, F0_N_per_m, weight_N_per_m: float, base_share: float, friction: float):
    """Change of a lateral resistance [N/m] under a vertical load ``q`` [N/m] (module Notes)."""
    q = np.asarray(q_N_per_m, dtype=float)
    F0 = np.asarray(F0_N_per_m, dtype=float)
    lifted = -base_share * F0 * np.minimum(np.maximum(-q, 0.0) / weight_N_per_m, 1.0)
    return np.where(q >= 0.0, friction * q, lifted)


def axle_positions(train: TrainPreset, position: str, n_vehicles: int = N_VEHICLES) -> tuple:
    """Axle positions [m] of ``n_vehicles`` coupled vehicles with the chosen point at ``x = 0``."""
    a, c, L = train.axle_spacing_m, train.bogie_centres_m, train.vehicle_length_m
    axles = []
    for k in range(n_vehicles):
        start = k * L
        for bc in (start + (L - c) / 2, start + (L + c) / 2):
            axles += [bc - a / 2, bc + a / 2]
    axles = np.array(axles)
    mid = n_vehicles // 2
    if position == "coupling":
        centre = mid * L
    elif position == "mid-vehicle":
        centre = mid * L + L / 2
    else:
        raise InputError(f"unknown train position {position!r}; accepted: coupling, mid-vehicle", "loading")
    rel = axles - centre
    half = rel[rel >= 0.0]  # the analysis is symmetric about the misalignment centre: mirror one side
    return tuple(float(v) for v in np.sort(np.concatenate([-half[::-1], half])))


POSITIONS = ("coupling", "mid-vehicle")


def load_case(name: str, sleeper: str, ballast: str, profile, steel, sleeper_spacing_m: float, *,
              support_modulus_N_per_m2: float | None = None, axle_load_N: float | None = None,
              misalignment_length_m: float = 10.0,
              peak_resistance_N_per_m: float = 20e3, where: str = "loading") -> LoadCase | None:
    """The load case of a train preset on a track, at its worst position; None for ``none``.

    Parameters
    ----------
    name : str
        Train preset name or ``none``.
    sleeper, ballast : str
        Sleeper type and ballast state (support modulus, sleeper mass, base share, friction).
    profile : trackplan.rails.RailProfile
        Rail profile (mass and vertical second moment of area of one rail).
    steel : trackplan.thermal.Steel
        Young's modulus [Pa].
    sleeper_spacing_m : float
        Sleeper spacing [m] (track weight per metre).
    support_modulus_N_per_m2 : float, optional
        Track support modulus per rail [N/m**2]; the preset of the sleeper and ballast if None.
    axle_load_N : float, optional
        Axle load [N] instead of the preset's.
    misalignment_length_m : float
        Length of the misalignment [m] (the zone whose resistance decides the worst position).
    peak_resistance_N_per_m : float
        Unloaded peak lateral resistance [N/m] (to compare the positions).
    """
    if name == NO_LOADING:
        return None
    train = get_train(name, where)
    if axle_load_N is not None:
        from dataclasses import replace

        train = replace(train, axle_load_N=axle_load_N)
        check_train(train, "axle_load")
    check_train(train, where)
    sup = support_presets()[(sleeper, ballast)]
    u = sup.support_modulus_N_per_m2 if support_modulus_N_per_m2 is None else support_modulus_N_per_m2
    check_support_modulus(u, "support_modulus" if support_modulus_N_per_m2 is not None else where)
    EIv = steel.E_Pa * profile.vertical_inertia_m4
    W = (2.0 * profile.mass_kg_per_m + sup.sleeper_mass_kg / sleeper_spacing_m) * G
    best = None
    x = np.linspace(-misalignment_length_m / 2, misalignment_length_m / 2, 201)
    shape = 0.5 * (1.0 + np.cos(2.0 * np.pi * x / misalignment_length_m))
    for pos in POSITIONS:
        axles = axle_positions(train, pos)
        q = vertical_load(x, axles, train.axle_load_N, u, EIv)
        F = peak_resistance_N_per_m + resistance_change(q, peak_resistance_N_per_m, W, sup.base_share,
                                                        sup.friction_coefficient)
        score = float(np.sum(F * shape))
        if best is None or score < best[0]:
            best = (score, pos, axles)
    return LoadCase(name=name, position=best[1], axle_positions_m=best[2], axle_load_N=train.axle_load_N,
                    support_modulus_N_per_m2=u, rail_vertical_EI_Nm2=EIv, track_weight_N_per_m=W,
                    base_share=sup.base_share, friction_coefficient=sup.friction_coefficient)


def resistance_along(x_m, F0_N_per_m: float, case: LoadCase | None):
    """Lateral resistance [N/m] along the track at ``x_m`` under a load case (``F0`` if None)."""
    x = np.asarray(x_m, dtype=float)
    if case is None:
        return np.full_like(x, F0_N_per_m)
    q = vertical_load(x, case.axle_positions_m, case.axle_load_N, case.support_modulus_N_per_m2,
                      case.rail_vertical_EI_Nm2)
    return F0_N_per_m + resistance_change(q, F0_N_per_m, case.track_weight_N_per_m, case.base_share,
                                          case.friction_coefficient)
