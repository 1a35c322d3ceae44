"""The track description of the stability analysis: inputs, presets and the one way to build them.

Every door into the stability analysis (the ``stability`` command, section files through
:mod:`trackplan.assess`, ``check``, ``screen``, the benchmarks) builds its
:class:`TrackStabilityInput` through :func:`build_track`, so that the same physical inputs give
the same numbers by any door: preset resistances scaled to the sleeper spacing, a peak override
keeping the preset's limit/peak ratio unless the limit is given too, the vehicle load case of the
chosen train at its worst position, and one validation.

The presets are data files with a source column (``data/track_presets.csv``,
``data/track_support.csv``, ``data/train_presets.csv``); see :mod:`trackplan.loading` for the
vehicle loading and :mod:`trackplan.stability` for the analysis.
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass, fields
from functools import lru_cache
from importlib import resources

from trackplan import ranges
from trackplan.errors import InputError, ModelError

# ----------------------------------------------------------------------------------------------
# Constants of the method
# ----------------------------------------------------------------------------------------------

#: Default initial misalignment amplitude [m] and length [m] (track in service has misalignments of some 10-50 mm over 6-12 m, from memory).
DEFAULT_MISALIGNMENT_M = 0.020
DEFAULT_MISALIGNMENT_LENGTH_M = 10.0
#: Trigger misalignment used to trace the post-buckling curve of a perfect track [m].
TRIGGER_MISALIGNMENT_M = 0.001
#: A drop after the peak smaller than this is not counted as snap-through [K].
SNAP_THRESHOLD_K = 1.0
#: Displacement limit of the progressive-response criterion [m].
DISPLACEMENT_LIMIT_M = 0.025
#: Partial factor on the critical rise in the allowable-rise criteria [-].
MARGIN_FACTOR = 1.2
#: The curve is traced up to this largest lateral displacement [m] ...
MAX_DISPLACEMENT_M = 1.0
#: ... or up to this rise [K] (far beyond any rail temperature; the track is then called stable).
MAX_RISE_K = 200.0
#: Default mesh: element length [m] and modelled half-length [m].
ELEMENT_LENGTH_M = 0.5
HALF_LENGTH_M = 40.0
#: Smallest curve radius accepted [m].
MIN_RADIUS_M = ranges.MODEL_LIMITS["radius"].lo


class StabilityError(ModelError):
    """The equilibrium curve could not be traced for these parameters.

    A model error, not bad input: the command line reports it as a message (exit code 2)
    and never as a traceback, a network run as a problem of the section; the message says
    where the path following stopped.
    """


# ----------------------------------------------------------------------------------------------
# Inputs
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class TrackStabilityInput:
    """Everything the stability analysis needs, SI. Frozen (hashable) so results can be cached.

    Attributes
    ----------
    EI_lateral_Nm2 : float
        Lateral bending stiffness of both rails, ``2 E I_lateral`` [N m**2] (no frame effect).
    EA_N : float
        Axial stiffness of both rails, ``2 E A`` [N].
    alpha_per_K : float
        Thermal expansion coefficient [1/K].
    peak_resistance_N_per_m : float
        Peak lateral resistance per metre of track [N/m].
    limit_resistance_N_per_m : float
        Limit (residual) lateral resistance per metre of track [N/m]; not above the peak.
    peak_displacement_m : float
        Lateral displacement at the peak [m].
    longitudinal_resistance_N_per_m : float or None
        Longitudinal resistance per metre per rail [N/m]; None = full restraint (``u = 0``).
    radius_m : float or None
        Curve radius [m]; None = tangent track.
    misalignment_m : float
        Initial misalignment amplitude [m] (0 = perfect track, analysed by bifurcation).
    misalignment_length_m : float
        Length of the misalignment wave [m].
    lateral_stiffness_N_per_m2 : float or None
        If given, a linear (Winkler) lateral foundation of this modulus [N/m**2] replaces the
        peak/limit law.
    limit_displacement_m : float
        Displacement by which the lateral resistance is within 5 % of the limit [m].
    slip_displacement_m : float
        Displacement at which the longitudinal resistance reaches its plateau [m].
    torsional_resistance_N : float
        Fastener torsional resistance, moment per radian of rail rotation per metre of track
        [N m/rad per m = N]; 0 (not modelled) unless given.
    loading : trackplan.loading.LoadCase or None
        Axle loads placed on the track (lateral resistance varying along it); None = unloaded.
    """

    EI_lateral_Nm2: float
    EA_N: float
    alpha_per_K: float
    peak_resistance_N_per_m: float
    limit_resistance_N_per_m: float
    peak_displacement_m: float
    longitudinal_resistance_N_per_m: float | None
    radius_m: float | None
    misalignment_m: float
    misalignment_length_m: float
    lateral_stiffness_N_per_m2: float | None = None
    limit_displacement_m: float = 0.1
    slip_displacement_m: float = 0.002
    torsional_resistance_N: float = 0.0
    loading: object = None

    def validate(self, where: str = "track parameters") -> "TrackStabilityInput":
        """Refuse non-physical values with a message that names the field; return self."""
        check_input(self, where)
        return self

    def as_json(self) -> dict:
        """Parameters with units in the key names (kN, mm, m)."""
        def k(v, f=1e-3):
            return None if v is None else v * f

        return {
            "lateral_EI_kNm2": self.EI_lateral_Nm2 / 1e3,
            "axial_EA_kN": self.EA_N / 1e3,
            "alpha_per_K": self.alpha_per_K,
            "peak_resistance_kN_per_m": k(self.peak_resistance_N_per_m),
            "limit_resistance_kN_per_m": k(self.limit_resistance_N_per_m),
            "peak_displacement_mm": self.peak_displacement_m * 1e3,
            "limit_displacement_mm": self.limit_displacement_m * 1e3,
            "longitudinal_resistance_per_rail_kN_per_m": k(self.longitudinal_resistance_N_per_m),
            "longitudinal_restraint": "rigid" if self.longitudinal_resistance_N_per_m is None else "resistance",
            "slip_displacement_mm": self.slip_displacement_m * 1e3,
            "radius_m": self.radius_m,
            "misalignment_mm": self.misalignment_m * 1e3,
            "misalignment_length_m": self.misalignment_length_m,
            "lateral_stiffness_kN_per_m2": k(self.lateral_stiffness_N_per_m2),
            "torsional_resistance_kNm_per_rad_per_m": self.torsional_resistance_N / 1e3,
            "loading": None if self.loading is None else self.loading.as_json(),
        }


def _positive(value, name, where, allow_zero=False):
    if value is None or not isinstance(value, (int, float)) or not math.isfinite(value):
        raise InputError(f"{name} must be a finite number, got {value!r}", where)
    if value < 0 or (value == 0 and not allow_zero):
        raise InputError(f"{name} must be {'zero or ' if allow_zero else ''}positive, got {value:g}", where)


def check_input(inp: TrackStabilityInput, where: str = "track parameters") -> None:
    """Raise :class:`InputError` for non-physical stability inputs.

    Refused: negative or zero stiffnesses and resistances, a limit resistance above the peak,
    a radius below :data:`MIN_RADIUS_M`, a misalignment shorter than 1 m or larger than 0.5 m,
    a limit displacement not beyond the peak displacement.
    """
    _positive(inp.EI_lateral_Nm2, "lateral bending stiffness EI", where)
    _positive(inp.EA_N, "axial stiffness EA", where)
    _positive(inp.alpha_per_K, "expansion coefficient", where)
    if inp.lateral_stiffness_N_per_m2 is not None:
        _positive(inp.lateral_stiffness_N_per_m2, "lateral stiffness", where)
    else:
        _positive(inp.peak_resistance_N_per_m, "peak lateral resistance", where)
        _positive(inp.limit_resistance_N_per_m, "limit lateral resistance", where,
                  allow_zero=True)
        if inp.limit_resistance_N_per_m > inp.peak_resistance_N_per_m:
            raise InputError(
                f"limit lateral resistance {inp.limit_resistance_N_per_m / 1e3:g} kN/m is above the peak "
                f"{inp.peak_resistance_N_per_m / 1e3:g} kN/m; the limit (residual) resistance is at most the peak",
                where,
            )
        _positive(inp.peak_displacement_m, "displacement at peak", where)
        if inp.peak_displacement_m > ranges.MODEL_LIMITS["peak_displacement"].hi:
            raise InputError(f"displacement at peak {inp.peak_displacement_m * 1e3:g} mm is beyond 50 mm; "
                             "push tests give a few mm up to about 12 mm", where)
        _positive(inp.limit_displacement_m, "limit displacement", where)
        if inp.limit_displacement_m <= inp.peak_displacement_m:
            raise InputError(
                f"limit displacement {inp.limit_displacement_m * 1e3:g} mm must be beyond the displacement "
                f"at peak {inp.peak_displacement_m * 1e3:g} mm", where)
        if inp.limit_displacement_m > ranges.MODEL_LIMITS["limit_displacement"].hi:
            raise InputError(f"limit displacement {inp.limit_displacement_m * 1e3:g} mm is beyond 500 mm; "
                             "push tests reach the limit resistance at 50-150 mm", where)
    if inp.longitudinal_resistance_N_per_m is not None:
        _positive(inp.longitudinal_resistance_N_per_m, "longitudinal resistance", where)
        _positive(inp.slip_displacement_m, "slip displacement", where)
    if inp.radius_m is not None:
        _positive(inp.radius_m, "radius", where)
        if inp.radius_m < MIN_RADIUS_M:
            raise InputError(f"radius {inp.radius_m:g} m is below {MIN_RADIUS_M:g} m, outside the range of "
                             "this analysis (plain line curves); give a radius of 100 m or more, or omit it for "
                             "tangent track", where)
    _positive(inp.misalignment_m, "misalignment", where, allow_zero=True)
    if inp.misalignment_m > ranges.MODEL_LIMITS["misalignment"].hi:
        raise InputError(f"misalignment {inp.misalignment_m * 1e3:g} mm is beyond 500 mm", where)
    _positive(inp.misalignment_length_m, "misalignment length", where)
    lo, hi = ranges.MODEL_LIMITS["misalignment_length"].lo, ranges.MODEL_LIMITS["misalignment_length"].hi
    if not lo <= inp.misalignment_length_m <= hi:
        raise InputError(f"misalignment length {inp.misalignment_length_m:g} m is outside 1-40 m", where)
    _positive(inp.torsional_resistance_N, "torsional resistance", where, allow_zero=True)


# ----------------------------------------------------------------------------------------------
# Presets
# ----------------------------------------------------------------------------------------------


#: Sleeper spacing [m] behind the per-metre values of ``data/track_presets.csv`` (the push-test
#: force per sleeper divided by this spacing; see the file's header). A section with another
#: spacing scales the per-metre resistances by ``reference / actual`` (:func:`spacing_factor`).
REFERENCE_SPACING_M = {"timber": 0.65, "steel": 0.65, "concrete": 0.60}


def spacing_factor(sleeper: str, spacing_m: float) -> float:
    """Factor on the preset per-metre resistances for a sleeper spacing ``spacing_m`` [m]:
    resistance per metre = resistance per sleeper / spacing, so ``reference / spacing``."""
    return REFERENCE_SPACING_M[sleeper] / spacing_m


@dataclass(frozen=True)
class ResistancePreset:
    """One row of ``data/track_presets.csv`` (SI)."""

    sleeper: str
    ballast: str
    shoulder: str
    peak_resistance_N_per_m: float
    limit_resistance_N_per_m: float
    peak_displacement_m: float
    limit_displacement_m: float
    longitudinal_resistance_N_per_m: float
    slip_displacement_m: float
    source: str
    confirmed: bool = False


@lru_cache(maxsize=1)
def presets() -> dict[tuple[str, str, str], ResistancePreset]:
    """The bundled resistance presets, ``(sleeper, ballast, shoulder) -> ResistancePreset``."""
    text = resources.files("trackplan").joinpath("data/track_presets.csv").read_text(encoding="utf-8")
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.startswith("#")]
    out = {}
    for row in csv.DictReader(lines):
        p = ResistancePreset(
            sleeper=row["sleeper"].strip(),
            ballast=row["ballast"].strip(),
            shoulder=row["shoulder"].strip(),
            peak_resistance_N_per_m=float(row["peak_resistance_kN_per_m"]) * 1e3,
            limit_resistance_N_per_m=float(row["limit_resistance_kN_per_m"]) * 1e3,
            peak_displacement_m=float(row["peak_displacement_mm"]) * 1e-3,
            limit_displacement_m=float(row["limit_displacement_mm"]) * 1e-3,
            longitudinal_resistance_N_per_m=float(row["longitudinal_resistance_kN_per_m"]) * 1e3,
            slip_displacement_m=float(row["slip_displacement_mm"]) * 1e-3,
            source=row["source"].strip(),
            confirmed=row.get("confirmed", "no").strip() == "yes",
        )
        out[(p.sleeper, p.ballast, p.shoulder)] = p
    return out


def _ordered(i: int) -> list[str]:
    seen = []
    for key in presets():
        if key[i] not in seen:
            seen.append(key[i])
    return seen


def sleeper_types() -> list[str]:
    """Sleeper types of the presets (``timber``, ``steel``, ``concrete``)."""
    return _ordered(0)


def ballast_states() -> list[str]:
    """Ballast states of the presets (``consolidated``, ``partial``, ``disturbed``)."""
    return _ordered(1)


def shoulder_types() -> list[str]:
    """Ballast shoulder types of the presets (``full``, ``reduced``)."""
    return _ordered(2)


def get_preset(sleeper: str, ballast: str, shoulder: str = "full", where: str = "track") -> ResistancePreset:
    """Look up a preset; unknown names raise :class:`InputError` naming the field and the valid ones."""
    for value, valid, name in ((sleeper, sleeper_types(), "sleeper"), (ballast, ballast_states(), "ballast"),
                               (shoulder, shoulder_types(), "shoulder")):
        if value not in valid:
            raise InputError(f"unknown {name} {value!r}; accepted: {', '.join(valid)}", where)
    return presets()[(sleeper, ballast, shoulder)]


_FIELD_NAMES = [f.name for f in fields(TrackStabilityInput)]


def track_parameters(profile, steel, sleeper: str, ballast: str, shoulder: str = "full", where: str | None = None,
                     **overrides) -> TrackStabilityInput:
    """Stability inputs for a rail profile and steel from the presets, with overrides.

    Parameters
    ----------
    profile : trackplan.rails.RailProfile
        Rail profile (area and lateral second moment of ONE rail).
    steel : trackplan.thermal.Steel
        Young's modulus [Pa] and expansion coefficient [1/K].
    sleeper, ballast, shoulder : str
        Preset names (:func:`sleeper_types`, :func:`ballast_states`, :func:`shoulder_types`).
    **overrides
        Any field of :class:`TrackStabilityInput` (SI), e.g. ``radius_m=800.0``,
        ``peak_resistance_N_per_m=15e3``, ``longitudinal_resistance_N_per_m=None`` (rigid).

    Returns
    -------
    TrackStabilityInput
        Validated inputs: ``EI = 2 E I_lateral``, ``EA = 2 E A``; misalignment
        :data:`DEFAULT_MISALIGNMENT_M` over :data:`DEFAULT_MISALIGNMENT_LENGTH_M` unless given;
        tangent track unless ``radius_m`` is given.

    Raises
    ------
    InputError
        Unknown preset name or override field (the valid ones are listed), non-physical value.
    """
    p = get_preset(sleeper, ballast, shoulder, where or "track")
    unknown = set(overrides) - set(_FIELD_NAMES)
    if unknown:
        raise InputError(f"unknown stability parameter(s) {sorted(unknown)}; accepted: {', '.join(_FIELD_NAMES)}",
                         "track_parameters")
    base = dict(
        EI_lateral_Nm2=2.0 * steel.E_Pa * profile.lateral_inertia_m4,
        EA_N=2.0 * steel.E_Pa * profile.area_m2,
        alpha_per_K=steel.alpha_per_K,
        peak_resistance_N_per_m=p.peak_resistance_N_per_m,
        limit_resistance_N_per_m=p.limit_resistance_N_per_m,
        peak_displacement_m=p.peak_displacement_m,
        longitudinal_resistance_N_per_m=p.longitudinal_resistance_N_per_m,
        radius_m=None,
        misalignment_m=DEFAULT_MISALIGNMENT_M,
        misalignment_length_m=DEFAULT_MISALIGNMENT_LENGTH_M,
        lateral_stiffness_N_per_m2=None,
        limit_displacement_m=p.limit_displacement_m,
        slip_displacement_m=p.slip_displacement_m,
        torsional_resistance_N=0.0,
    )
    base.update({k: (float(v) if isinstance(v, (int, float)) and not isinstance(v, bool) else v)
                 for k, v in overrides.items()})
    inp = TrackStabilityInput(**base)
    check_input(inp, where or f"track parameters ({sleeper}/{ballast}/{shoulder})")
    return inp



#: Physical inputs a person may give to override the presets, with their kind (for parsing) and
#: the field of :class:`TrackStabilityInput` they set. One table for the command line and section files.
OVERRIDES = {
    "peak_resistance": ("force_per_length", "peak_resistance_N_per_m"),
    "limit_resistance": ("force_per_length", "limit_resistance_N_per_m"),
    "peak_displacement": ("short_length", "peak_displacement_m"),
    "limit_displacement": ("short_length", "limit_displacement_m"),
    "longitudinal_resistance": ("force_per_length", "longitudinal_resistance_N_per_m"),
    "lateral_stiffness": ("stiffness_per_area", "lateral_stiffness_N_per_m2"),
    "support_modulus": ("stress", None),
    "axle_load": ("force", None),
}


def build_track(profile, steel, *, sleeper: str, ballast: str, shoulder: str = "full",
                sleeper_spacing_m: float | None = None, radius_m: float | None = None,
                misalignment_m: float = DEFAULT_MISALIGNMENT_M,
                misalignment_length_m: float = DEFAULT_MISALIGNMENT_LENGTH_M,
                loading: str | None = None, overrides: dict | None = None,
                where: str = "track") -> TrackStabilityInput:
    """The stability inputs of a track: the one way every door builds them.

    Parameters
    ----------
    profile : trackplan.rails.RailProfile
        Rail profile.
    steel : trackplan.thermal.Steel
        Young's modulus [Pa] and expansion coefficient [1/K].
    sleeper, ballast, shoulder : str
        Preset names.
    sleeper_spacing_m : float, optional
        Sleeper spacing [m]; the preset resistances (per sleeper over the reference spacing of the
        sleeper type) are scaled by ``reference / spacing``. Default: the reference spacing.
    radius_m : float, optional
        Curve radius [m]; None for tangent track.
    misalignment_m, misalignment_length_m : float
        Initial misalignment amplitude and length [m].
    loading : str, optional
        Train preset name (:func:`trackplan.loading.loading_names`) or ``none``; default
        :data:`trackplan.loading.DEFAULT_LOADING`.
    overrides : dict, optional
        Physical overrides by name (:data:`OVERRIDES`, SI values; ``longitudinal_resistance``
        None = full restraint). A peak resistance given without a limit keeps the preset's
        limit/peak ratio; given overrides are not scaled by the sleeper spacing.
    where : str
        Where the inputs come from, for messages (e.g. a file and section).

    Returns
    -------
    TrackStabilityInput
        Validated inputs, with the load case of the train at its worst position.

    Raises
    ------
    InputError
        Unknown preset, loading or override name (the valid ones are listed), non-physical value.
    """
    from trackplan import loading as loading_mod

    ov = dict(overrides or {})
    unknown = set(ov) - set(OVERRIDES)
    if unknown:
        raise InputError(f"unknown stability input(s) {sorted(unknown)}; accepted: {', '.join(OVERRIDES)}", where)
    p = get_preset(sleeper, ballast, shoulder, where)
    spacing = REFERENCE_SPACING_M[sleeper] if sleeper_spacing_m is None else sleeper_spacing_m
    if not (math.isfinite(spacing) and 0.3 <= spacing <= 1.0):
        raise InputError(f"sleeper spacing {spacing:g} m is outside 0.3..1.0 m", where)
    f = spacing_factor(sleeper, spacing)
    kw = {
        "peak_resistance_N_per_m": p.peak_resistance_N_per_m * f,
        "limit_resistance_N_per_m": p.limit_resistance_N_per_m * f,
        "longitudinal_resistance_N_per_m": p.longitudinal_resistance_N_per_m * f,
        "radius_m": radius_m,
        "misalignment_m": misalignment_m,
        "misalignment_length_m": misalignment_length_m,
    }
    if "peak_resistance" in ov and "limit_resistance" not in ov:
        ov["limit_resistance"] = ov["peak_resistance"] * p.limit_resistance_N_per_m / p.peak_resistance_N_per_m
    for name, value in ov.items():
        field_name = OVERRIDES[name][1]
        if field_name is not None:
            kw[field_name] = value
    inp = track_parameters(profile, steel, sleeper, ballast, shoulder, where=where, **kw)
    name = loading_mod.DEFAULT_LOADING if loading is None else loading
    if inp.lateral_stiffness_N_per_m2 is not None:
        case = None  # a linear foundation has no peak to load; the analysis is the classical one
        if name not in loading_mod.loading_names():
            loading_mod.get_train(name, where)
    else:
        case = loading_mod.load_case(
            name, sleeper, ballast, profile, steel, spacing, support_modulus_N_per_m2=ov.get("support_modulus"),
            axle_load_N=ov.get("axle_load"),
            misalignment_length_m=inp.misalignment_length_m, peak_resistance_N_per_m=inp.peak_resistance_N_per_m,
            where=where)
    from dataclasses import replace

    return replace(inp, loading=case)
