"""Lateral stability of continuous welded track: the equilibrium curve, critical rises, allowable rise.

The track panel (two rails with their sleepers) is modelled as one beam lying in the horizontal
plane on a nonlinear lateral foundation (the ballast), held longitudinally by a nonlinear
longitudinal resistance, with an initial (stress-free) misalignment and, on a curve, the
curvature of the track. Heating the rails by a rise ``dT`` above the neutral temperature puts
them in compression; the equilibrium curve (rise against the largest lateral displacement) is
traced through snap-through with a path-following Newton method. From the curve come the
upper critical rise (the peak), the lower critical rise (the trough after it), the type of
response and the allowable rise.

Model
-----
Unknowns along the half-length ``0 <= x <= L`` (symmetry about the centre ``x = 0`` of the
misalignment): lateral displacement ``w(x)`` measured from the initial, stress-free misaligned
position ``w0(x)`` (outward of the curve positive) and axial displacement ``u(x)`` of the two
rails (away from the centre positive).

Axial strain of the rails (shallow-beam / Marguerre kinematics for a curve of radius ``R``)::

    eps = u' + w / R + w0' w' + w'**2 / 2

Axial force of the track (two rails), tension positive, compression ``P = -N``::

    N = EA (eps - alpha dT)

Total potential energy of the half-length (its stationary points are the equilibria)::

    Pi = int_0^L [ EI w''**2 / 2 + c_t w'**2 / 2 + EA (eps - alpha dT)**2 / 2
                   + Phi_lat(w) + 2 Phi_lon(u) ] dx  +  G_out(u(L))

with ``Phi_lat' = F(w)`` the lateral resistance per metre of track, ``Phi_lon' = r(u)`` the
longitudinal resistance per metre of rail (two rails), ``c_t`` the fastener torsional
resistance [N m/rad per m] (zero unless given) and ``G_out`` the energy of the semi-infinite
breathing zone beyond ``L`` (below). Its Euler-Lagrange equations are::

    EI w'''' - c_t w'' + [P (w0' + w')]' - P / R + F(w) = 0        (lateral)
    -N' + 2 r(u) = 0                                             (axial)

so a compressive force pushes a curve outward with ``P/R`` per metre and an outward
displacement relieves it (``w/R`` lengthens the arc).

Boundary conditions: at the centre ``w' = 0``, zero shear (symmetry) and ``u = 0``; at
``x = L`` (default 40 m, far beyond any buckle) ``w' = 0`` and zero shear, so the far track may
shift uniformly outward on a curve. Beyond ``L`` the rails lie in a breathing zone of
semi-infinite length in which ``EA u'' = 2 r(u)``; integrating once gives the exact end force
``EA u'(L) = -sign(u) sqrt(2 EA Phi2(|u|))``, ``Phi2 = 2 int_0^u r``, so the axial force at
``L`` is ``N(L) = -EA alpha dT - sign(u) sqrt(2 EA Phi2)``: a buckle draws in rail from its
neighbours over as long a length as the longitudinal resistance needs (Kerr's breathing zones,
here without any assumption on their length). With ``longitudinal_resistance_N_per_m=None``
(full restraint) ``u = 0`` everywhere and the pre-buckling axial force is uniformly
``EA alpha dT``.

Lateral resistance law (per metre of track), odd in ``w``, with ``s = |w| / w_p``::

    F = F_p s (2 - s)                                    s <= 1   (initial stiffness 2 F_p / w_p)
    F = F_L + (F_p - F_L) (1 + t) exp(-t),  t = (|w| - w_p) / d    s > 1

It rises to the peak ``F_p`` at ``w_p`` with zero slope, then softens smoothly (C1) to the limit
``F_L``; ``d = (w_lim - w_p) / 4.744`` so that the excess over ``F_L`` has fallen to 5 % at
``w_lim`` (default 100 mm, domain notes: limit reached at 75-125 mm). With
``lateral_stiffness_N_per_m2`` given, ``F = k w`` (Winkler) instead. Longitudinal resistance per
rail: ``r(u) = r_max tanh(u / u_s)``, a smooth form of the usual bilinear law with slip
displacement ``u_s`` (2 mm). Both laws are treated as nonlinear-elastic (no unloading branch),
as in the usual analyses of a monotonically growing buckle.

Initial misalignment (stress-free, full cosine wave of length ``L0`` and amplitude ``d0``)::

    w0 = d0 (1 + cos(2 pi x / L0)) / 2   for |x| <= L0 / 2, else 0

Discretisation and solution: Hermite cubic beam elements for ``w`` (0.5 m), linear elements for
``u``, the membrane strain averaged over each element (exactly integrated, which avoids membrane
locking of curved elements), three-point Gauss integration of the lateral resistance, nodal
lumping of the longitudinal resistance. The rise ``dT`` is an unknown: each step prescribes
the increment of one lateral displacement (the one that moved most in the previous step,
switching displacement control after Batoz and Dhatt, 1979), so the path is followed through
limit points in ``dT`` (snap-through) and in displacement. The linear systems are banded
(half-bandwidth 5) and are solved with LAPACK band solvers; one curve takes some tens of
milliseconds.

Limits of the model (stated in every result's ``notes`` where they apply): the rail-sleeper frame
effect is not included (``EI`` is that of the two rails alone, which is conservative); vehicle
loads (uplift waves, lateral forces) are not modelled; only buckles symmetric about the
misalignment centre are traced. A perfect straight track (zero misalignment) is analysed by
bifurcation: its upper critical rise is the rise at which the straight track's tangent
stiffness becomes singular (Hetenyi's ``P = 2 sqrt(k EI)`` for a linear foundation), and its
post-buckling curve is traced with a 1 mm trigger misalignment.

When the path cannot be followed honestly the analysis raises :class:`StabilityError` with the
rise and displacement where it stopped, instead of returning a number: no converged state with the
smallest step; the path turning back before a trough was found; a loss of stability of the traced
symmetric path before its peak (a bifurcation to a shape this analysis does not follow). In a sweep
of 200 random parameter sets across the preset ranges about 5 % end so. Beyond a trough (or on a
rising curve past twice the displacement limit) a stop is not an error; the result's ``notes`` say so.

Critical rises and allowable rise
---------------------------------
upper critical rise ``T_max``: the first peak of the curve. lower critical rise ``T_min``: the
trough after it, below which no buckled equilibrium exists; above it a disturbance (e.g. a
passing train) can make the track jump to a buckled shape. The response is ``snap-through``
when the curve drops by more than :data:`SNAP_THRESHOLD_K` after its peak, else
``progressive``. The allowable rise follows a registered criterion (:data:`CRITERIA`; default
``lower-critical``): see :func:`allowable_lower_critical`.

References
----------
Hetenyi, M. (1946). *Beams on Elastic Foundation*. University of Michigan Press (critical force
``2 sqrt(k EI)`` of an infinite beam on a Winkler foundation).
Timoshenko, S. P., Gere, J. M. (1961). *Theory of Elastic Stability*, 2nd ed., McGraw-Hill
(Euler load ``pi**2 EI / L**2`` of a pinned column; beam-columns).
Kerr, A. D. (1978). *Thermal Buckling of Straight Tracks: Fundamentals, Analyses, and Preventive
Measures*, report FRA/ORD-78/49, US Federal Railroad Administration (buckled zone, breathing
zones, the minimum post-buckling temperature increase as the "safe" increase).
Kish, A., Samavedam, G. (2013). *Track Buckling Prevention: Theory, Safety Concepts, and
Applications*, report DOT/FRA/ORD-13/16, US Federal Railroad Administration (upper and lower
buckling temperatures, snap-through versus progressive response, lateral resistance with peak
and limit, misalignment).
Batoz, J.-L., Dhatt, G. (1979). Incremental displacement algorithms for nonlinear problems.
*International Journal for Numerical Methods in Engineering* 14, 1262-1267 (displacement control
through limit points).
Esveld, C. (2001). *Modern Railway Track*, 2nd ed., MRT-Productions, ch. 7 (lateral resistance,
track stability).
"""

from __future__ import annotations

import csv
import math
from dataclasses import dataclass, field, fields, replace
from functools import lru_cache
from importlib import resources
from typing import Callable

import numpy as np

from trackplan.errors import InputError

# ----------------------------------------------------------------------------------------------
# Constants of the method
# ----------------------------------------------------------------------------------------------

#: Default initial misalignment amplitude [m] and length [m] (domain notes: 10-50 mm over 6-12 m).
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
MIN_RADIUS_M = 100.0


class StabilityError(InputError):
    """The equilibrium curve could not be traced for these parameters.

    Subclass of :class:`InputError` so that the command line reports it as a message (exit
    code 2) and never as a traceback; the message says where the path following stopped.
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
        _positive(inp.lateral_stiffness_N_per_m2, "lateral stiffness (--lateral-stiffness)", where)
    else:
        _positive(inp.peak_resistance_N_per_m, "peak lateral resistance (--peak-resistance)", where)
        _positive(inp.limit_resistance_N_per_m, "limit lateral resistance (--limit-resistance)", where,
                  allow_zero=True)
        if inp.limit_resistance_N_per_m > inp.peak_resistance_N_per_m:
            raise InputError(
                f"limit lateral resistance {inp.limit_resistance_N_per_m / 1e3:g} kN/m is above the peak "
                f"{inp.peak_resistance_N_per_m / 1e3:g} kN/m; the limit (residual) resistance is at most the peak",
                where,
            )
        _positive(inp.peak_displacement_m, "displacement at peak (--peak-displacement)", where)
        if inp.peak_displacement_m > 0.05:
            raise InputError(f"displacement at peak {inp.peak_displacement_m * 1e3:g} mm is beyond 50 mm; "
                             "push tests give a few mm up to about 12 mm", where)
        _positive(inp.limit_displacement_m, "limit displacement", where)
        if inp.limit_displacement_m <= 1.5 * inp.peak_displacement_m:
            raise InputError(
                f"limit displacement {inp.limit_displacement_m * 1e3:g} mm must be well beyond the displacement "
                f"at peak {inp.peak_displacement_m * 1e3:g} mm (at least 1.5 times)", where)
    if inp.longitudinal_resistance_N_per_m is not None:
        _positive(inp.longitudinal_resistance_N_per_m, "longitudinal resistance (--longitudinal-resistance)", where)
        _positive(inp.slip_displacement_m, "slip displacement", where)
    if inp.radius_m is not None:
        _positive(inp.radius_m, "radius (--radius)", where)
        if inp.radius_m < MIN_RADIUS_M:
            raise InputError(f"radius {inp.radius_m:g} m is below {MIN_RADIUS_M:g} m, outside the range of "
                             "this analysis (plain line curves); give a radius of 100 m or more, or omit it for "
                             "tangent track", where)
    _positive(inp.misalignment_m, "misalignment (--misalignment)", where, allow_zero=True)
    if inp.misalignment_m > 0.5:
        raise InputError(f"misalignment {inp.misalignment_m * 1e3:g} mm is beyond 500 mm", where)
    _positive(inp.misalignment_length_m, "misalignment length (--misalignment-length)", where)
    if not 1.0 <= inp.misalignment_length_m <= 40.0:
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


def get_preset(sleeper: str, ballast: str, shoulder: str = "full") -> ResistancePreset:
    """Look up a preset; unknown names raise :class:`InputError` listing the valid ones."""
    for value, valid, opt in ((sleeper, sleeper_types(), "--sleeper"), (ballast, ballast_states(), "--ballast"),
                              (shoulder, shoulder_types(), "--shoulder")):
        if value not in valid:
            raise InputError(f"unknown value {value!r}; accepted: {', '.join(valid)}", opt)
    return presets()[(sleeper, ballast, shoulder)]


_FIELD_NAMES = [f.name for f in fields(TrackStabilityInput)]


def track_parameters(profile, steel, sleeper: str, ballast: str, shoulder: str = "full",
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
    p = get_preset(sleeper, ballast, shoulder)
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
    check_input(inp, f"track parameters ({sleeper}/{ballast}/{shoulder})")
    return inp


# ----------------------------------------------------------------------------------------------
# Constitutive laws and closed forms
# ----------------------------------------------------------------------------------------------

_SOFT = 4.744  # (1 + t) exp(-t) = 0.05 at t = 4.744


def lateral_resistance(w_m, peak_N_per_m: float, limit_N_per_m: float, peak_displacement_m: float,
                       limit_displacement_m: float = 0.1):
    """Lateral resistance of the ballast per metre of track and its tangent.

    Parameters
    ----------
    w_m : float or array
        Lateral displacement from the stress-free position [m].
    peak_N_per_m, limit_N_per_m : float
        Peak and limit resistance [N/m].
    peak_displacement_m : float
        Displacement at the peak [m].
    limit_displacement_m : float
        Displacement at which the excess over the limit has fallen to 5 % [m].

    Returns
    -------
    (F, dF) : arrays
        Resistance [N/m] (odd in ``w``) and its derivative ``dF/dw`` [N/m**2].

    Notes
    -----
    ``F = F_p s (2 - s)`` for ``s = |w|/w_p <= 1``; ``F = F_L + (F_p - F_L)(1 + t) e^-t`` with
    ``t = (|w| - w_p) / d``, ``d = (w_lim - w_p) / 4.744`` beyond. Continuous with a continuous
    slope; peak ``F_p`` at ``w_p``; tends to ``F_L``. The shape (rise to a peak at a few mm,
    softening to a limit) follows the lateral push-test curves described by Kish and Samavedam
    (2013) and Esveld (2001, ch. 7); the closed form is this project's.
    """
    w = np.asarray(w_m, dtype=float)
    a = np.abs(w)
    s = a / peak_displacement_m
    lam = limit_N_per_m / peak_N_per_m
    d = (limit_displacement_m - peak_displacement_m) / _SOFT
    t = np.maximum(a - peak_displacement_m, 0.0) / d
    e = np.exp(-t)
    inner = s <= 1.0
    g = np.where(inner, s * (2.0 - s), lam + (1.0 - lam) * (1.0 + t) * e)
    dg = np.where(inner, (2.0 - 2.0 * s) / peak_displacement_m, -(1.0 - lam) * t * e / d)
    return np.sign(w) * peak_N_per_m * g, peak_N_per_m * dg


def longitudinal_resistance(u_m, resistance_N_per_m: float, slip_m: float = 0.002):
    """Longitudinal resistance per metre of rail, ``r_max tanh(u/u_s)``, and its tangent.

    A smooth form of the bilinear (elastic up to the slip displacement, then constant) law of
    ballast longitudinal resistance (UIC 774-3 uses the bilinear form with 2 mm).

    Returns ``(r [N/m], dr/du [N/m**2])``.
    """
    th = np.tanh(np.asarray(u_m, dtype=float) / slip_m)
    return resistance_N_per_m * th, resistance_N_per_m * (1.0 - th * th) / slip_m


def hetenyi_critical_force(k_N_per_m2: float, EI_Nm2: float) -> float:
    """Critical axial force of an infinite beam on a Winkler foundation, ``2 sqrt(k EI)`` [N].

    References
    ----------
    Hetenyi (1946), *Beams on Elastic Foundation*.
    """
    return 2.0 * math.sqrt(k_N_per_m2 * EI_Nm2)


def euler_critical_force(EI_Nm2: float, length_m: float) -> float:
    """Euler load of a pinned-pinned column, ``pi**2 EI / L**2`` [N] (Timoshenko and Gere, 1961)."""
    return math.pi**2 * EI_Nm2 / length_m**2


# ----------------------------------------------------------------------------------------------
# Finite elements
# ----------------------------------------------------------------------------------------------

_GP, _GW = np.polynomial.legendre.leggauss(3)


def _hermite(xi: np.ndarray, h: float) -> np.ndarray:
    s = (xi + 1.0) / 2.0
    return np.stack([1 - 3 * s**2 + 2 * s**3, h * (s - 2 * s**2 + s**3), 3 * s**2 - 2 * s**3,
                     h * (-s**2 + s**3)], -1)


def _bending_matrix(EI: float, h: float) -> np.ndarray:
    return EI / h**3 * np.array([[12, 6 * h, -12, 6 * h], [6 * h, 4 * h * h, -6 * h, 2 * h * h],
                                 [-12, -6 * h, 12, -6 * h], [6 * h, 2 * h * h, -6 * h, 4 * h * h]])


def _geometric_matrix(h: float) -> np.ndarray:
    """``int N'^T N' dx`` of the Hermite cubic."""
    return (1.0 / (30.0 * h)) * np.array([[36, 3 * h, -36, 3 * h], [3 * h, 4 * h * h, -3 * h, -h * h],
                                          [-36, -3 * h, 36, -3 * h], [3 * h, -h * h, -3 * h, 4 * h * h]])


def pinned_column_critical_force(EI_Nm2: float, length_m: float, n_elements: int = 20) -> float:
    """Critical force of a pinned-pinned column with no foundation, by the model's beam elements.

    The same Hermite bending and geometric matrices as the track model, assembled for a column
    of ``length_m`` with ``w = 0`` at both ends; the smallest eigenvalue of
    ``K_b phi = P K_g phi``. Converges to Euler's ``pi**2 EI / L**2``.

    Returns the critical force [N].
    """
    from scipy.linalg import eigh

    h = length_m / n_elements
    nd = 2 * (n_elements + 1)
    Kb = np.zeros((nd, nd))
    Kg = np.zeros((nd, nd))
    kb, kg = _bending_matrix(EI_Nm2, h), _geometric_matrix(h)
    for e in range(n_elements):
        s = slice(2 * e, 2 * e + 4)
        Kb[s, s] += kb
        Kg[s, s] += kg
    keep = [i for i in range(nd) if i not in (0, nd - 2)]
    vals = eigh(Kb[np.ix_(keep, keep)], Kg[np.ix_(keep, keep)], eigvals_only=True)
    return float(vals[vals > 0].min())


class _Model:
    """Discretised half-length of track: assembly of residual, tangent and load vector."""

    def __init__(self, inp: TrackStabilityInput, misalignment_m: float, element_m: float, half_length_m: float):
        self.inp = inp
        ne = max(8, int(round(half_length_m / element_m)))
        h = half_length_m / ne
        self.ne, self.h, self.L = ne, h, half_length_m
        self.rigid = inp.longitudinal_resistance_N_per_m is None
        m = 2 if self.rigid else 3
        self.m = m
        self.nn = ne + 1
        self.n = m * self.nn
        self.bw = 2 * m - 1
        self.EA, self.EI, self.alpha = inp.EA_N, inp.EI_lateral_Nm2, inp.alpha_per_K
        x = np.linspace(0.0, half_length_m, self.nn)
        self.x = x
        d0, L0 = misalignment_m, inp.misalignment_length_m
        inside = x < L0 / 2
        w0 = np.where(inside, 0.5 * d0 * (1 + np.cos(2 * np.pi * x / L0)), 0.0)
        t0 = np.where(inside, -0.5 * d0 * (2 * np.pi / L0) * np.sin(2 * np.pi * x / L0), 0.0)
        self.w0 = w0
        q0 = np.stack([w0[:-1], t0[:-1], w0[1:], t0[1:]], -1)
        self.q0 = q0
        self.G = _geometric_matrix(h)
        self.Kb = _bending_matrix(self.EI, h)
        invR = 0.0 if inp.radius_m is None else 1.0 / inp.radius_m
        self.cR = invR * np.array([h / 2, h * h / 12, h / 2, -h * h / 12])
        self.Gq0 = q0 @ self.G
        self.e0 = -0.5 * np.einsum("ei,ei->e", q0, self.Gq0) / h
        self.Ng = _hermite(_GP, h)
        self.gw = _GW * h / 2
        self.NN = np.einsum("gi,gj->gij", self.Ng, self.Ng)
        e = np.arange(ne)
        self.wdofs = np.stack([m * e, m * e + 1, m * e + m, m * e + m + 1], -1)
        self.edofs = (m * e)[:, None] + np.arange(2 * m)[None, :]
        if m == 3:
            self.udofs = np.stack([m * e + 2, m * e + 5], -1)
            self.loc_w = np.array([0, 1, 3, 4])
        else:
            self.loc_w = np.array([0, 1, 2, 3])
        nd = 2 * m
        ii, jj = np.meshgrid(np.arange(nd), np.arange(nd), indexing="ij")
        rows = 2 * self.bw + self.edofs[:, ii] - self.edofs[:, jj]  # (ne, nd, nd), LAPACK gbsv layout
        cols = self.edofs[:, jj]
        self.band_flat = (rows * self.n + cols).ravel()
        self.vec_flat = self.edofs.ravel()
        trib = np.full(self.nn, h)
        trib[0] = trib[-1] = h / 2
        self.trib = trib
        fixed = [1, m * ne + 1] + ([2] if m == 3 else [])
        self.fixed = np.array(fixed)
        self.wnodes = np.arange(self.nn) * m
        zr, zc = zip(*[self.zero_index(f) for f in self.fixed])
        self.zero_rows, self.zero_cols = np.concatenate(zr), np.concatenate(zc)
        self.lat_k = inp.lateral_stiffness_N_per_m2
        self.ct = inp.torsional_resistance_N
        if not self.rigid:
            self.r2 = 2.0 * inp.longitudinal_resistance_N_per_m
            self.us = inp.slip_displacement_m

    def zero_index(self, f: int):
        """Band indices of row and column ``f`` (to impose a fixed DOF)."""
        bw = self.bw
        j = f + np.arange(-bw, bw + 1)
        j = j[(j >= 0) & (j < self.n)]
        return np.concatenate([2 * bw + f - j, 2 * bw + j - f]), np.concatenate([j, np.full(len(j), f)])

    # -- constitutive
    def lateral(self, w):
        inp = self.inp
        if self.lat_k is not None:
            return self.lat_k * w, np.full_like(w, self.lat_k)
        return lateral_resistance(w, inp.peak_resistance_N_per_m, inp.limit_resistance_N_per_m,
                                  inp.peak_displacement_m, inp.limit_displacement_m)

    def initial_lateral_stiffness(self) -> float:
        if self.lat_k is not None:
            return self.lat_k
        return 2.0 * self.inp.peak_resistance_N_per_m / self.inp.peak_displacement_m

    # -- assembly
    def assemble(self, q: np.ndarray, T: float):
        """Residual R, load vector b = dR/dT and banded tangent.

        The tangent is in the LAPACK ``gbsv`` layout: ``ab[2 bw + i - j, j] = K[i, j]`` (the first
        ``bw`` rows are workspace for the factorisation).
        """
        m, h, ne = self.m, self.h, self.ne
        qw = q[self.wdofs]
        qt = qw + self.q0
        Gq = qt @ self.G
        v_w = self.cR + Gq
        eps = (qw @ self.cR + 0.5 * np.einsum("ei,ei->e", qt, Gq)) / h + self.e0
        nd = 2 * m
        v = np.empty((ne, nd))
        v[:, self.loc_w] = v_w
        if m == 3:
            qu = q[self.udofs]
            eps = eps + (qu[:, 1] - qu[:, 0]) / h
            v[:, 2] = -1.0
            v[:, 5] = 1.0
        N = self.EA * (eps - self.alpha * T)
        fe = N[:, None] * v
        be = (-self.EA * self.alpha) * v
        Ke = (self.EA / h) * v[:, :, None] * v[:, None, :]
        wg = qw @ self.Ng.T
        F, dF = self.lateral(wg)
        fw = qw @ self.Kb + (F * self.gw) @ self.Ng
        Kww = self.Kb[None] + N[:, None, None] * self.G[None] + np.einsum("eg,gij->eij", dF * self.gw, self.NN)
        if self.ct:
            fw += self.ct * (qw @ self.G)
            Kww += self.ct * self.G[None]
        lw = self.loc_w
        fe[:, lw] += fw
        Ke[:, lw[:, None], lw[None, :]] += Kww
        n = self.n
        R = np.bincount(self.vec_flat, weights=fe.ravel(), minlength=n)
        b = np.bincount(self.vec_flat, weights=be.ravel(), minlength=n)
        ab = np.bincount(self.band_flat, weights=Ke.ravel(), minlength=(3 * self.bw + 1) * n).reshape(-1, n)
        if m == 3:
            u = q[2::3]
            th = np.tanh(u / self.us)
            R[2::3] += self.trib * self.r2 * th
            ab[2 * self.bw, 2::3] += self.trib * self.r2 * (1 - th * th) / self.us
            uL = u[-1]
            z = abs(uL) / self.us
            if z < 1e-6:
                ks = math.sqrt(self.EA * self.r2 / self.us)
                fs = ks * uL
            else:
                phi = self.r2 * self.us * (z + math.log1p(math.exp(-2 * z)) - math.log(2.0))
                root = math.sqrt(2 * self.EA * phi)
                fs = math.copysign(root, uL)
                ks = self.EA * self.r2 * math.tanh(z) / root
            R[-1] += fs + self.EA * self.alpha * T
            b[-1] += self.EA * self.alpha
            ab[2 * self.bw, -1] += ks
        return R, b, ab, N


# ----------------------------------------------------------------------------------------------
# Path following
# ----------------------------------------------------------------------------------------------


def _newton(M: _Model, q: np.ndarray, T: float, c: int, maxit: int = 12):
    """Newton iterations with DOF ``c`` prescribed (its value in ``q``) and the rise free.

    Bordered elimination: with the fixed DOFs and ``c`` removed, ``K x = -R`` and ``K y = b``
    are solved together (one band LU); the rise increment follows from equation ``c``.
    """
    from scipy.linalg.lapack import dgbsv

    bw, n = M.bw, M.n
    fixed = np.append(M.fixed, c)
    lo, hi = max(0, c - bw), min(n, c + bw + 1)
    js = np.arange(lo, hi)
    keep_c = ~np.isin(js, fixed)
    zr, zc = M.zero_index(c)
    rhs = np.empty((n, 2))
    for it in range(1, maxit + 1):
        R, b, ab, _ = M.assemble(q, T)
        Kc = ab[bw + bw + c - js, js] * keep_c
        ab[M.zero_rows, M.zero_cols] = 0.0
        ab[zr, zc] = 0.0
        ab[2 * bw, fixed] = 1.0
        rhs[:, 0] = -R
        rhs[:, 1] = b
        rhs[fixed] = 0.0
        _, _, sol, info = dgbsv(bw, bw, ab, rhs, overwrite_ab=1, overwrite_b=0)
        if info != 0:
            return None
        x, y = sol[:, 0], sol[:, 1]
        den = b[c] - Kc @ y[lo:hi]
        if den == 0.0 or not math.isfinite(den):
            return None
        dT = (-R[c] - Kc @ x[lo:hi]) / den
        dq = x - dT * y
        big = np.max(np.abs(dq))
        if not (math.isfinite(big) and math.isfinite(dT)) or big > 1.0 or abs(dT) > 1e3:
            return None
        q = q + dq
        T = T + dT
        if big < 1e-9 and abs(dT) < 1e-6:
            return q, T, it
    return None


def _initial_tangent(M: _Model):
    """Load-control tangent ``dq/dT = -K^-1 b`` at the unstressed state; (control DOF, dq/dT)."""
    from scipy.linalg.lapack import dgbsv

    q = np.zeros(M.n)
    R, b, ab, _ = M.assemble(q, 0.0)
    ab[M.zero_rows, M.zero_cols] = 0.0
    ab[2 * M.bw, M.fixed] = 1.0
    rhs = -b.copy()
    rhs[M.fixed] = 0.0
    _, _, sol, info = dgbsv(M.bw, M.bw, ab, rhs[:, None])
    tan = sol[:, 0] if info == 0 else np.zeros(M.n)
    if not np.any(tan[M.wnodes]):  # straight perfect track: no lateral motion before buckling
        return 0, np.eye(1, M.n, 0)[0]
    c = int(M.wnodes[np.argmax(np.abs(tan[M.wnodes]))])
    return c, tan


def _positive_definite(M: _Model, q: np.ndarray, T: float) -> bool:
    """Is the tangent stiffness (load control) positive definite? (stability of the state)"""
    from scipy.linalg import cholesky_banded

    _, _, ab, _ = M.assemble(q, T)
    bw = M.bw
    ab[M.zero_rows, M.zero_cols] = 0.0
    ab[2 * bw, M.fixed] = 1.0
    try:
        cholesky_banded(ab[bw: 2 * bw + 1], lower=False, check_finite=False)
        return True
    except np.linalg.LinAlgError:
        return False


@dataclass
class _Path:
    disp: list = field(default_factory=list)    # largest lateral displacement [m]
    rise: list = field(default_factory=list)    # [K]
    s: list = field(default_factory=list)       # path coordinate [m]
    states: list = field(default_factory=list)
    stop: str = ""
    bifurcation_rise_K: float | None = None


def _trace(M: _Model, progress: Callable[[float], None] | None = None, dT_cap: float = 8.0,
           rel_step: float = 0.3) -> _Path:
    """Follow the equilibrium path from the unstressed state until it is fully described."""
    inp = M.inp
    wp = inp.peak_displacement_m if inp.lateral_stiffness_N_per_m2 is None else 0.005
    path = _Path()
    q = np.zeros(M.n)
    T = 0.0
    path.disp.append(0.0)
    path.rise.append(0.0)
    path.s.append(0.0)
    path.states.append((q, T))
    step = 0.05 * wp
    step_min = 1e-7
    c = 0
    peak_seen = False
    trough_seen = False
    Tmax = -np.inf
    Tmin_after = np.inf
    pd_checked_until_peak = True
    pending = None

    def rising_far():
        # beyond twice the displacement limit with no snap (no peak, or a dip below the threshold)
        return path.disp[-1] >= 2 * DISPLACEMENT_LIMIT_M and (not peak_seen or Tmax - Tmin_after < SNAP_THRESHOLD_K)
    for _ in range(600):
        q_prev, T_prev = path.states[-1]
        if len(path.states) >= 2:
            q_pp, T_pp = path.states[-2]
            dqs = q_prev - q_pp
            dwn = dqs[M.wnodes]
            c = int(M.wnodes[np.argmax(np.abs(dwn))])
            scale = step / max(abs(dqs[c]), 1e-15)
            qp = q_prev + scale * dqs
            Tp = T_prev + scale * (T_prev - T_pp)
            target = q_prev[c] + math.copysign(step, dqs[c])
        else:
            # first step: control the DOF that moves most along the initial (load-control) tangent
            c, tan = _initial_tangent(M)
            scale = step / max(abs(tan[c]), 1e-15)
            qp = q_prev + scale * tan
            Tp = T_prev + scale
            target = qp[c]
        qp[c] = target
        res = _newton(M, qp, Tp, c)
        ok = res is not None
        if ok:
            qn, Tn, its = res
            dw = np.max(np.abs(qn[M.wnodes] - q_prev[M.wnodes]))
            if abs(Tn - T_prev) > 2.0 * dT_cap or dw > 3.0 * step or not math.isfinite(Tn) or Tn <= 0.0:
                ok = False  # too far, or a buckled state without compression: not on the path
            elif len(path.states) >= 2:
                # no reversal: the path must go on in the direction it came from
                d_new = qn[M.wnodes] - q_prev[M.wnodes]
                d_old = q_prev[M.wnodes] - path.states[-2][0][M.wnodes]
                if float(d_new @ d_old) <= 0.0:
                    ok = False
        if not ok:
            step *= 0.4
            if step < step_min and trough_seen and T_prev > Tmin_after + 0.05:
                path.stop = "path following stopped after the trough"
                return path
            if step < step_min and rising_far():
                path.stop = "path following stopped on a rising curve"
                return path
            if step < step_min:
                raise StabilityError(
                    f"the equilibrium path could not be followed beyond a rise of {T_prev:.1f} K and a lateral "
                    f"displacement of {path.disp[-1] * 1e3:.1f} mm (no converged state); check the parameters",
                    "stability analysis",
                )
            continue
        wabs = np.abs(qn[M.wnodes])
        wmax = float(wabs.max())
        if wmax < 0.7 * max(path.disp):
            # the path turns back toward small displacements (a fold of the whole buckle):
            # what follows is not needed and is not trusted
            if trough_seen and T_prev > Tmin_after + 0.05:
                path.stop = "path following stopped after the trough"
                return path
            if rising_far():
                path.stop = "path following stopped on a rising curve"
                return path
            raise StabilityError(
                f"the equilibrium path turns back at a rise of {T_prev:.1f} K and a lateral displacement of "
                f"{path.disp[-1] * 1e3:.1f} mm before a lower critical rise was found; check the parameters",
                "stability analysis")
        path.disp.append(wmax)
        path.rise.append(float(Tn))
        path.s.append(path.s[-1] + dw)
        path.states.append((qn, Tn))
        if progress is not None:
            progress(min(1.0, wmax / MAX_DISPLACEMENT_M))
        # stability monitor on the rising branch: loss of positive definiteness while the rise
        # still grows is a bifurcation from the traced (symmetric) path
        # (a loss just before the peak is the limit point itself: confirmed only if the rise
        # still grows at the next point)
        if pending is not None:
            if Tn > T_prev:
                path.bifurcation_rise_K = pending
            pending = None
            pd_checked_until_peak = False
        elif not peak_seen and pd_checked_until_peak and Tn > T_prev and Tn > 0:
            if not _positive_definite(M, qn, Tn):
                pending = float(T_prev)
        if not peak_seen:
            if Tn < Tmax - 1e-9:
                peak_seen = True
                Tmin_after = Tn
            Tmax = max(Tmax, Tn)
        else:
            if Tn < Tmin_after:
                Tmin_after = Tn
            elif not trough_seen and Tn > Tmin_after + 1e-9:
                trough_seen = True
        # buckle reaching the far end of the model
        w = qn[M.wnodes]
        far = abs(w[-1] - w[int(0.75 * (M.nn - 1))])
        if far > 0.02 * max(abs(w[0] - w[-1]), 1e-6) and wmax > 0.05:
            path.stop = "buckle reaches the end of the modelled length"
            return path
        # end conditions
        if Tn >= MAX_RISE_K:
            path.stop = "rise limit"
            return path
        if wmax >= MAX_DISPLACEMENT_M:
            path.stop = "displacement limit"
            return path
        if trough_seen and Tn > Tmin_after + max(1.0, 0.05 * (Tmax - Tmin_after)) and wmax > 2 * DISPLACEMENT_LIMIT_M:
            path.stop = "past the trough"
            return path
        # step control: iterations, rise change, resolution relative to the displacement
        dTn = abs(Tn - T_prev)
        fac = 1.5 if its <= 4 else (1.0 if its <= 7 else 0.6)
        if dTn > 0:
            fac = min(fac, dT_cap / dTn)
        step = min(step * max(fac, 0.3), rel_step * wmax + 0.5 * wp, 0.04)
        step = max(step, 1e-6)
    raise StabilityError("the equilibrium path needed more than 600 steps; check the parameters",
                         "stability analysis")


def _refine(M: _Model, path: _Path, i: int, n_sub: int = 8):
    """Re-trace the path between points ``i-1`` and ``i+1`` in ``n_sub`` small steps.

    Returns ``(disp, rise)`` arrays of the refined points (including both ends), or None.
    """
    if i <= 0 or i >= len(path.states) - 1:
        return None
    qa, Ta = path.states[i - 1]
    qb, Tb = path.states[i + 1]
    dq = qb - qa
    c = int(M.wnodes[np.argmax(np.abs(dq[M.wnodes]))])
    disp, rise = [path.disp[i - 1]], [path.rise[i - 1]]
    q, T = qa, Ta
    for k in range(1, n_sub + 1):
        f = k / n_sub
        qp = q + dq / n_sub
        Tp = T + (Tb - Ta) / n_sub
        qp[c] = qa[c] + f * dq[c]
        res = _newton(M, qp, Tp, c)
        if res is None:
            return None
        q, T, _ = res
        disp.append(float(np.abs(q[M.wnodes]).max()))
        rise.append(float(T))
    return np.array(disp), np.array(rise)


def bifurcation_rise(inp: TrackStabilityInput, element_m: float = ELEMENT_LENGTH_M,
                     half_length_m: float = HALF_LENGTH_M) -> float:
    """Rise at which the straight, perfect tangent track becomes unstable [K].

    The straight state ``w = 0`` is an equilibrium at every rise; it loses stability when
    ``(K_b + K_f + c_t K_g) phi = P K_g phi`` has ``P = EA alpha dT`` as its smallest
    eigenvalue, with ``K_f`` the foundation matrix of the initial lateral stiffness
    (``k`` for a Winkler foundation, ``2 F_p / w_p`` for the peak/limit law). For a linear
    foundation this is Hetenyi's ``P = 2 sqrt(k EI)`` on a long track.

    Raises
    ------
    InputError
        On curved track (there the pre-buckling state is not straight).
    """
    from scipy.linalg import eigh

    if inp.radius_m is not None:
        raise InputError("the bifurcation rise is defined for tangent track only", "bifurcation_rise")
    ne = max(8, int(round(half_length_m / element_m)))
    h = half_length_m / ne
    nd = 2 * (ne + 1)
    k0 = inp.lateral_stiffness_N_per_m2 if inp.lateral_stiffness_N_per_m2 is not None else \
        2.0 * inp.peak_resistance_N_per_m / inp.peak_displacement_m
    Ng = _hermite(_GP, h)
    kf = k0 * np.einsum("g,gi,gj->ij", _GW * h / 2, Ng, Ng)
    kb, kg = _bending_matrix(inp.EI_lateral_Nm2, h), _geometric_matrix(h)
    A = np.zeros((nd, nd))
    B = np.zeros((nd, nd))
    for e in range(ne):
        s = slice(2 * e, 2 * e + 4)
        A[s, s] += kb + kf + inp.torsional_resistance_N * kg
        B[s, s] += kg
    keep = [i for i in range(nd) if i not in (1, nd - 1)]  # slopes zero at the centre and the far end
    A, B = A[np.ix_(keep, keep)], B[np.ix_(keep, keep)]
    mu = eigh(B, A, eigvals_only=True)  # mu = 1 / P
    P = 1.0 / mu.max()
    return float(P / (inp.EA_N * inp.alpha_per_K))


# ----------------------------------------------------------------------------------------------
# Allowable-rise criteria
# ----------------------------------------------------------------------------------------------


def allowable_lower_critical(upper_K: float, lower_K: float | None, rise_at_limit_K: float | None):
    """Allowable rise: the smaller of the lower critical rise and the rise at 25 mm, over 1.2.

    For snap-through, the lower critical rise is the rise below which no buckled equilibrium
    exists, so that no disturbance can buckle the track (Kerr, 1978, who takes it as the "safe"
    temperature increase; Kish and Samavedam, 2013, call it the lower buckling temperature and
    build their allowable on it). For progressive response there is no such threshold and the
    rise at a lateral displacement of :data:`DISPLACEMENT_LIMIT_M` (25 mm) is used instead
    (a displacement-based limit, as Kish and Samavedam do for progressive buckling; the 25 mm
    value is this project's choice, of the order of the alignment tolerances of maintained track,
    from memory). Either value is divided by :data:`MARGIN_FACTOR` (1.2) to cover the scatter of
    the resistances and the misalignment (this project's choice). The result is never above the
    upper critical rise.

    Returns ``(allowable_K, words)``.
    """
    cands = []
    if lower_K is not None:
        cands.append((lower_K, f"lower critical rise {lower_K:.1f} K"))
    if rise_at_limit_K is not None:
        cands.append((rise_at_limit_K, f"rise at {DISPLACEMENT_LIMIT_M * 1e3:.0f} mm lateral displacement "
                                       f"{rise_at_limit_K:.1f} K"))
    if not cands:
        cands.append((upper_K, f"upper critical rise {upper_K:.1f} K"))
    base, what = min(cands)
    allow = min(base / MARGIN_FACTOR, upper_K / MARGIN_FACTOR)
    words = (f"{what} divided by a margin factor of {MARGIN_FACTOR:g} "
             "(lower critical rise for snap-through, rise at a 25 mm lateral displacement for progressive "
             "response, whichever is lower; after Kerr 1978 and Kish and Samavedam 2013)")
    return allow, words


def allowable_upper_quarter(upper_K: float, lower_K: float | None, rise_at_limit_K: float | None):
    """Allowable rise ``T_min + 0.25 (T_max - T_min)``, never above the upper critical rise.

    A less conservative criterion, written from memory of the safety concept of Kish and
    Samavedam (2013), which allows part of the band between the lower and the upper buckling
    temperature where the energy needed to buckle is still large. For progressive response the
    rise at 25 mm over the margin factor, as :func:`allowable_lower_critical`.

    Returns ``(allowable_K, words)``.
    """
    if lower_K is None:
        return allowable_lower_critical(upper_K, lower_K, rise_at_limit_K)
    allow = min(lower_K + 0.25 * (upper_K - lower_K), upper_K)
    if rise_at_limit_K is not None:
        allow = min(allow, rise_at_limit_K)
    return allow, (f"lower critical rise {lower_K:.1f} K plus 25 % of the band up to the upper critical rise "
                   f"{upper_K:.1f} K (after Kish and Samavedam 2013, from memory)")


#: Registry of allowable-rise criteria: name -> function(upper_K, lower_K, rise_at_25mm_K).
CRITERIA: dict[str, Callable] = {
    "lower-critical": allowable_lower_critical,
    "upper-quarter": allowable_upper_quarter,
}
DEFAULT_CRITERION = "lower-critical"


# ----------------------------------------------------------------------------------------------
# Analysis
# ----------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class StabilityResult:
    """Result of a stability analysis (the terminal table, JSON and plot read this object).

    Attributes
    ----------
    upper_critical_rise_K : float
        Peak of the equilibrium curve (bifurcation rise for a perfect tangent track) [K].
    lower_critical_rise_K : float or None
        Trough after the peak [K]; None for progressive response.
    allowable_rise_K : float
        Allowable rise above neutral under :attr:`criterion` [K].
    response : str
        ``"snap-through"`` or ``"progressive"``.
    criterion : str
        How the allowable rise was derived, in words.
    curve_displacement_m, curve_rise_K : numpy arrays
        The equilibrium curve: largest lateral displacement [m] and rise [K].
    inputs : TrackStabilityInput
        The parameters used.
    upper_critical_displacement_m, lower_critical_displacement_m : float or None
        Displacements at the critical points [m].
    rise_at_displacement_limit_K : float or None
        Rise at which the lateral displacement reaches 25 mm on the rising branch [K].
    buckle_half_length_m : float or None
        Distance from the centre to the first zero of the lateral displacement at the lower
        critical point (or at the end of the curve) [m].
    notes : tuple of str
        What the reader must know about this result (trigger misalignment, stopping reason...).
    criterion_name : str
        Key of :data:`CRITERIA` used.
    """

    upper_critical_rise_K: float
    lower_critical_rise_K: float | None
    allowable_rise_K: float
    response: str
    criterion: str
    curve_displacement_m: np.ndarray
    curve_rise_K: np.ndarray
    inputs: TrackStabilityInput
    upper_critical_displacement_m: float | None = None
    lower_critical_displacement_m: float | None = None
    rise_at_displacement_limit_K: float | None = None
    buckle_half_length_m: float | None = None
    notes: tuple = ()
    criterion_name: str = DEFAULT_CRITERION

    def as_json(self) -> dict:
        """JSON-ready dict (SI, units in key names)."""
        inp = self.inputs
        return {
            "upper_critical_rise_K": self.upper_critical_rise_K,
            "lower_critical_rise_K": self.lower_critical_rise_K,
            "allowable_rise_K": self.allowable_rise_K,
            "response": self.response,
            "criterion": self.criterion,
            "criterion_name": self.criterion_name,
            "upper_critical_displacement_mm": None if self.upper_critical_displacement_m is None
            else self.upper_critical_displacement_m * 1e3,
            "lower_critical_displacement_mm": None if self.lower_critical_displacement_m is None
            else self.lower_critical_displacement_m * 1e3,
            "rise_at_25mm_K": self.rise_at_displacement_limit_K,
            "buckle_half_length_m": self.buckle_half_length_m,
            "lateral_EI_kNm2": inp.EI_lateral_Nm2 / 1e3,
            "axial_EA_kN": inp.EA_N / 1e3,
            "alpha_per_K": inp.alpha_per_K,
            "parameters": inp.as_json(),
            "notes": list(self.notes),
            "curve": [{"lateral_displacement_mm": float(d) * 1e3, "rise_K": float(t)}
                      for d, t in zip(self.curve_displacement_m, self.curve_rise_K)],
        }


def _extremum(s, T, i):
    """Refine a discrete extremum at index i by a parabola through its neighbours: (s*, T*)."""
    if i <= 0 or i >= len(T) - 1:
        return s[i], T[i]
    x = np.array(s[i - 1:i + 2])
    y = np.array(T[i - 1:i + 2])
    A = np.vstack([x**2, x, np.ones(3)]).T
    try:
        a, b, c = np.linalg.solve(A, y)
    except np.linalg.LinAlgError:
        return s[i], T[i]
    if a == 0:
        return s[i], T[i]
    xs = -b / (2 * a)
    if not x[0] <= xs <= x[2]:
        return s[i], T[i]
    return xs, float(a * xs * xs + b * xs + c)


def _critical_point(M: _Model, path: _Path, i: int, sign: int):
    """Displacement and rise of the extremum near point ``i`` (peak: sign +1, trough: -1).

    The path is re-traced finely around the point and a parabola is fitted through the best
    refined point and its neighbours; falls back on the coarse points if refinement fails.
    """
    ref = _refine(M, path, i)
    if ref is None:
        s = np.asarray(path.s)
        sx, Tx = _extremum(s, np.asarray(path.rise), i)
        return float(np.interp(sx, s, np.asarray(path.disp))), float(Tx)
    d, T = ref
    k = int(np.argmax(sign * T))
    s = np.arange(len(T), dtype=float)
    sx, Tx = _extremum(s, T, k)
    if sign * Tx < sign * T[k]:
        Tx = T[k]
    return float(np.interp(sx, s, d)), float(Tx)


#: Misalignment [m] with which the buckled branch is traced when the given one shows no peak
#: below :data:`MAX_RISE_K` (its lower critical rise is a little lower than that of a smaller
#: misalignment, so taking it is on the safe side).
RETRACE_MISALIGNMENT_M = 0.05


def solve_equilibrium_curve(inp: TrackStabilityInput, *, criterion: str = DEFAULT_CRITERION,
                            element_length_m: float = ELEMENT_LENGTH_M, half_length_m: float = HALF_LENGTH_M,
                            progress: Callable[[float], None] | None = None) -> StabilityResult:
    """Trace the equilibrium curve and derive the critical and allowable rises (not cached).

    Strong track with a small misalignment can show no peak below :data:`MAX_RISE_K`,
    although its buckled equilibrium branch (and so its lower critical rise) exists far
    lower. Then the buckled branch is traced again with :data:`RETRACE_MISALIGNMENT_M`
    (the lower critical rise falls only slowly with the misalignment: 68.9 K at 20 mm and
    64.4 K at 50 mm for consolidated concrete-sleeper 60E1 track), and its lower critical
    rise is used: the allowable rise is never read off a curve that merely stopped rising
    at the limit of the analysis. The result keeps the curve of the given misalignment
    and says so in its notes. A linear (Winkler) foundation has no softening and no lower
    critical rise; it is left as traced.

    Parameters are those of :func:`_solve_traced`.
    """
    res = _solve_traced(inp, criterion=criterion, element_length_m=element_length_m,
                        half_length_m=half_length_m, progress=progress)
    reached_limit = float(np.max(res.curve_rise_K)) >= MAX_RISE_K - 1e-6
    if (res.lower_critical_rise_K is not None or not reached_limit or inp.lateral_stiffness_N_per_m2 is not None
            or inp.misalignment_m >= RETRACE_MISALIGNMENT_M):
        return res
    import dataclasses

    wide = dataclasses.replace(inp, misalignment_m=RETRACE_MISALIGNMENT_M)
    try:
        alt = _solve_traced(wide, criterion=criterion, element_length_m=element_length_m, half_length_m=half_length_m)
    except StabilityError as exc:
        raise StabilityError(
            f"the curve shows no peak up to the analysis limit of {MAX_RISE_K:g} K and the buckled branch could not "
            f"be traced with a {RETRACE_MISALIGNMENT_M * 1e3:g} mm misalignment either ({exc.bare_message})",
            "stability analysis") from None
    if alt.lower_critical_rise_K is None:
        lower, response = None, "progressive"
        allow, words = CRITERIA[criterion](min(res.upper_critical_rise_K, alt.upper_critical_rise_K), None,
                                           alt.rise_at_displacement_limit_K)
    else:
        lower, response = alt.lower_critical_rise_K, "snap-through"
        allow, words = CRITERIA[criterion](res.upper_critical_rise_K, lower, None)
    note = (f"no peak up to the analysis limit of {MAX_RISE_K:g} K with the given misalignment; the buckled branch "
            f"was traced with a {RETRACE_MISALIGNMENT_M * 1e3:g} mm misalignment, whose "
            + (f"lower critical rise {lower:.1f} K" if lower is not None else "response") +
            " is used (on the safe side)")
    return dataclasses.replace(
        res, lower_critical_rise_K=lower, response=response, allowable_rise_K=float(allow), criterion=words,
        lower_critical_displacement_m=alt.lower_critical_displacement_m if lower is not None else None,
        notes=tuple(n for n in res.notes if not n.startswith("the allowable rise is read from the curve traced"))
        + (note,))


def _solve_traced(inp: TrackStabilityInput, *, criterion: str = DEFAULT_CRITERION,
                  element_length_m: float = ELEMENT_LENGTH_M, half_length_m: float = HALF_LENGTH_M,
                  progress: Callable[[float], None] | None = None) -> StabilityResult:
    """Trace the equilibrium curve of ``inp`` and derive the critical and allowable rises.

    Parameters
    ----------
    inp : TrackStabilityInput
        Validated parameters.
    criterion : str
        Allowable-rise criterion, a key of :data:`CRITERIA`.
    element_length_m : float
        Element length of the mesh [m] (default 0.5 m; results change by well under 1 % at 0.25 m).
    half_length_m : float
        Modelled half-length [m]; doubled once automatically if the buckle reaches its end.
    progress : callable, optional
        Called with the fraction of the displacement range traced so far.

    Raises
    ------
    InputError
        Non-physical input, unknown criterion.
    StabilityError
        The path could not be followed (message says where).
    """
    check_input(inp)
    if criterion not in CRITERIA:
        raise InputError(f"unknown criterion {criterion!r}; accepted: {', '.join(CRITERIA)}", "--criterion")
    notes = []
    perfect = inp.misalignment_m == 0.0
    d0 = TRIGGER_MISALIGNMENT_M if perfect else inp.misalignment_m
    L = half_length_m
    for attempt in range(2):
        M = _Model(inp, d0, element_length_m, L)
        path = _trace(M, progress)
        if path.stop != "buckle reaches the end of the modelled length":
            break
        L *= 2
    if path.stop == "buckle reaches the end of the modelled length":
        notes.append(f"the buckle reached the end of the modelled {L:g} m half-length; the curve stops there")
    s = np.asarray(path.s)
    T = np.asarray(path.rise)
    D = np.asarray(path.disp)
    # first peak and the trough after it
    i_peak = None
    for i in range(1, len(T) - 1):
        if T[i] >= T[i - 1] and T[i + 1] < T[i]:
            i_peak = i
            break
    upper = lower = None
    d_up = d_lo = None
    response = "progressive"
    if i_peak is not None:
        d_up, upper = _critical_point(M, path, i_peak, +1)
        rest = T[i_peak:]
        j = i_peak + int(np.argmin(rest))
        if j < len(T) - 1:
            d_lo, lower = _critical_point(M, path, j, -1)
        elif path.stop == "path following stopped on a rising curve":
            d_lo, lower = float(D[j]), float(T[j])
        else:
            raise StabilityError(
                f"the equilibrium curve still falls at the end of the traced range ({path.stop}, rise "
                f"{T[-1]:.1f} K at {D[-1] * 1e3:.0f} mm); no lower critical rise found", "stability analysis")
        if upper - lower >= SNAP_THRESHOLD_K:
            response = "snap-through"
        else:
            notes.append(f"the curve dips by only {upper - lower:.2f} K after its peak; treated as progressive")
            lower = None
            d_lo = None
    if path.stop == "path following stopped on a rising curve":
        notes.append(f"the path could not be followed beyond {D[-1] * 1e3:.0f} mm (rise {T[-1]:.1f} K); "
                     "no snap-through up to there")
    if response == "progressive":
        if i_peak is None:
            upper = float(T.max())
            d_up = float(D[int(np.argmax(T))])
            if path.stop == "rise limit":
                upper = MAX_RISE_K
                notes.append(f"no buckling up to a rise of {MAX_RISE_K:g} K (the limit of the analysis); "
                             "the upper critical rise is given as that limit")
            elif path.stop == "displacement limit":
                notes.append(f"no peak up to a lateral displacement of {MAX_DISPLACEMENT_M * 1e3:.0f} mm; "
                             "the upper critical rise is the rise at that displacement")
    # rise at the displacement limit on the rising branch (before the peak)
    rise_lim = None
    stop_i = i_peak if i_peak is not None else len(T) - 1
    if D[: stop_i + 1].max() >= DISPLACEMENT_LIMIT_M:
        k = int(np.argmax(D[: stop_i + 1] >= DISPLACEMENT_LIMIT_M))
        rise_lim = float(np.interp(DISPLACEMENT_LIMIT_M, D[k - 1:k + 1], T[k - 1:k + 1]))
    # The allowable rise always comes from the traced curve (never from the bifurcation rise of a
    # perfectly straight track, which no real track reaches).
    upper_traced = upper
    if perfect and inp.radius_m is None:
        t_bif = bifurcation_rise(inp, element_length_m, half_length_m)
        notes.append(f"perfect track: the upper critical rise is the bifurcation rise {t_bif:.1f} K of the straight "
                     f"track; the curve is traced with a {TRIGGER_MISALIGNMENT_M * 1e3:g} mm trigger misalignment")
        upper = t_bif
        d_up = 0.0
    elif perfect:
        notes.append(f"no misalignment given on a curve: the curve is traced with a {TRIGGER_MISALIGNMENT_M * 1e3:g} mm "
                     "trigger misalignment")
    if path.bifurcation_rise_K is not None and path.bifurcation_rise_K < upper:
        # the buckled branch that starts there is not traced: its trough is unknown, so no
        # lower critical rise (and no allowable rise) can be given honestly
        raise StabilityError(
            f"the equilibrium path loses stability at a rise of {path.bifurcation_rise_K:.1f} K before its peak "
            "(a bifurcation to another buckled shape, which this analysis does not follow); the upper critical "
            "rise is at most that value, no lower critical rise can be given", "stability analysis")
    if lower is not None and lower > upper:
        lower = upper
    allow, words = CRITERIA[criterion](min(upper, upper_traced), lower, rise_lim)
    if perfect:
        notes.append(f"the allowable rise is read from the curve traced with the {TRIGGER_MISALIGNMENT_M * 1e3:g} mm "
                     "trigger misalignment; real track has misalignments of 10-50 mm: give one for planning")
        if upper_traced >= MAX_RISE_K and lower is None and rise_lim is None:
            allow = float("nan")
            words = (f"no allowable rise: the perfect track shows no buckling up to the analysis limit of "
                     f"{MAX_RISE_K:g} K; give a realistic misalignment")
    # half-length of the buckle at the lower critical point (or the last state)
    idx = (j if lower is not None else len(T) - 1)
    qb, _ = path.states[idx]
    w = qb[M.wnodes]
    sign_change = np.nonzero(np.sign(w[1:]) != np.sign(w[0]))[0]
    half = float(M.x[sign_change[0] + 1]) if len(sign_change) else None
    if inp.longitudinal_resistance_N_per_m is None:
        notes.append("full longitudinal restraint (rigid): the rails cannot slide toward the buckle")
    notes.append("frame effect of the sleepers and vehicle loads not modelled")
    return StabilityResult(
        upper_critical_rise_K=float(upper),
        lower_critical_rise_K=None if lower is None else float(lower),
        allowable_rise_K=float(allow),
        response=response,
        criterion=words,
        curve_displacement_m=D,
        curve_rise_K=T,
        inputs=inp,
        upper_critical_displacement_m=d_up,
        lower_critical_displacement_m=d_lo,
        rise_at_displacement_limit_K=rise_lim,
        buckle_half_length_m=half,
        notes=tuple(notes),
        criterion_name=criterion,
    )


@lru_cache(maxsize=4096)
def _cached(inp: TrackStabilityInput, criterion: str) -> StabilityResult:
    return solve_equilibrium_curve(inp, criterion=criterion)


def analyse_stability(inp: TrackStabilityInput, criterion: str = DEFAULT_CRITERION) -> StabilityResult:
    """Equilibrium curve, critical rises and allowable rise of a track (cached on identical inputs).

    Parameters
    ----------
    inp : TrackStabilityInput
        Parameters (see :func:`track_parameters`).
    criterion : str
        Allowable-rise criterion, a key of :data:`CRITERIA` (default ``lower-critical``).

    Returns
    -------
    StabilityResult
        The same object for identical inputs within one run (``functools.lru_cache``); treat
        it as read-only.

    Raises
    ------
    InputError
        Non-physical input.
    StabilityError
        The equilibrium path could not be followed.

    Notes
    -----
    See the module docstring for the equations, boundary conditions and criteria.
    """
    check_input(inp)
    return _cached(inp, criterion)


def clear_cache() -> None:
    """Forget cached results (for benchmarks and tests)."""
    _cached.cache_clear()


__all__ = [
    "CRITERIA", "DEFAULT_CRITERION", "StabilityError", "StabilityResult", "TrackStabilityInput",
    "allowable_lower_critical", "allowable_upper_quarter", "analyse_stability", "ballast_states",
    "bifurcation_rise", "check_input", "clear_cache", "euler_critical_force", "get_preset",
    "hetenyi_critical_force", "lateral_resistance", "longitudinal_resistance", "pinned_column_critical_force",
    "presets", "shoulder_types", "sleeper_types", "solve_equilibrium_curve", "track_parameters",
]
