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

Lateral resistance law (per metre of track), odd in ``w``, with ``a = |w|``::

    F = F_p a / w_p                                     a <= w_p
    F = F_p - (F_p - F_L) (a - w_p) / (w_L - w_p)       w_p < a <= w_L
    F = F_L                                             a > w_L

the piecewise-linear characteristic of the published buckling analyses (Kish and Samavedam,
2013), with its two corners rounded by parabolas over 20 % of the segment before each (the
Newton iterations need a continuous tangent; the peak comes out about 5 % lower, on the safe
side). ``w_L`` is 100 mm in the presets (limit reached at 75-125 mm in push tests, from memory).
With ``lateral_stiffness_N_per_m2`` given, ``F = k w`` (Winkler) instead. Under a train
(:mod:`trackplan.loading`) ``F_p`` and ``F_L`` vary along the track: the axles press the track
down and add friction, the uplift between bogies removes the base part of the resistance; the
train stands where it leaves least resistance over the misalignment. Longitudinal resistance per
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
loads are quasi-static vertical loads (no dynamic increment, no lateral wheel forces of curving);
only buckles symmetric about the
misalignment centre are traced. A perfect straight track (zero misalignment) is analysed by
bifurcation: its upper critical rise is the rise at which the straight track's tangent
stiffness becomes singular (Hetenyi's ``P = 2 sqrt(k EI)`` for a linear foundation), and its
post-buckling curve is traced with a 1 mm trigger misalignment.

When the path cannot be followed honestly the analysis raises :class:`StabilityError` with the
rise and displacement where it stopped, instead of returning a number: no converged state with the
smallest step; the path turning back before a trough was found; a loss of stability of the traced
symmetric path before its peak (a bifurcation to a shape this analysis does not follow). In a sweep
of 200 random parameter sets across the preset ranges about 5 % end so (``bench`` marker of the
test suite). Beyond a trough (or on a
rising curve past twice the displacement limit) a stop is not an error; the result's ``notes`` say so.

Critical rises and allowable rise
---------------------------------
upper critical rise ``T_max``: the first peak of the curve. lower critical rise ``T_min``: the
trough after it, below which no buckled equilibrium exists; above it a disturbance (e.g. a
passing train) can make the track jump to a buckled shape. The response is ``snap-through``
when the curve drops by more than :data:`SNAP_THRESHOLD_K` after its peak, else
``progressive``. The criticals the allowable uses are those of the loaded track (the train of the
input's load case); :func:`with_unloaded` adds those of the empty track for comparison. The
allowable rise follows a registered criterion (:data:`CRITERIA`; default ``practice-calibrated``,
see :func:`allowable_practice_calibrated`; the uncalibrated ``lower-critical`` and
``upper-quarter`` remain by name).

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
UIC (2005). *Laying and maintenance of CWR track*, leaflet 720 R, 2nd ed. (safety criterion on
the maximum and minimum buckling temperatures of the loaded track).
Network Rail track standards, as quoted in published summaries of UK practice: CWR stressed to
27 degC, undisturbed and fully ballasted, critical at a rail temperature of 53 degC (the
calibration of the default criterion).
"""


from __future__ import annotations

import dataclasses
from dataclasses import dataclass
from functools import lru_cache
from typing import Callable

import numpy as np

from trackplan.errors import InputError
from trackplan.track import (  # noqa: F401  (re-exported: the analysis's public names)
    DEFAULT_MISALIGNMENT_LENGTH_M, DEFAULT_MISALIGNMENT_M, DISPLACEMENT_LIMIT_M, ELEMENT_LENGTH_M, HALF_LENGTH_M,
    MARGIN_FACTOR, MAX_DISPLACEMENT_M, MAX_RISE_K, MIN_RADIUS_M, REFERENCE_SPACING_M, SNAP_THRESHOLD_K,
    TRIGGER_MISALIGNMENT_M, ResistancePreset, StabilityError, TrackStabilityInput, ballast_states, check_input,
    get_preset, presets, shoulder_types, sleeper_types, spacing_factor, track_parameters,
)
from trackplan.stability_fe import (  # noqa: F401
    BRANCH_START_MISALIGNMENTS_M, _Model, _Path, _newton, _refine, _trace, bifurcation_rise, trough_by_continuation,
    euler_critical_force, gauss_point_resistances,
    hetenyi_critical_force, lateral_resistance, longitudinal_resistance, pinned_column_critical_force,
)

from trackplan.stability_criteria import (  # noqa: F401  (re-exported)
    CRITERIA, DEFAULT_CRITERION, PRACTICE_REFERENCE, PRACTICE_RISE_K, allowable_lower_critical,
    allowable_practice_calibrated, allowable_upper_quarter, physical_base, practice_reference_base_K,
)

#: The note of a result read from the curve of a perfectly straight track's trigger misalignment
#: (one constant: a retraced result drops exactly this note).
_TRIGGER_NOTE = (f"the allowable rise is read from the curve traced with the {TRIGGER_MISALIGNMENT_M * 1e3:g} mm "
                 "trigger misalignment; real track has misalignments of 10-50 mm: give one for planning")


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
    shallow_trough_rise_K : float or None
        Bottom of a dip after the peak shallower than :data:`SNAP_THRESHOLD_K` (progressive
        response) [K]; a candidate of :attr:`buckling_rise_K`.
    path_stop : str
        Why the path following stopped (:data:`STOP_BIFURCATION` when the traced path lost
        stability before its peak).
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
    unloaded_upper_critical_rise_K: float | None = None
    unloaded_lower_critical_rise_K: float | None = None
    shallow_trough_rise_K: float | None = None
    path_stop: str = ""

    @property
    def buckling_rise_K(self) -> float:
        """The physical base of the allowable rise (:func:`physical_base`) [K]."""
        return physical_base(self.upper_critical_rise_K, self.lower_critical_rise_K,
                             self.rise_at_displacement_limit_K, self.shallow_trough_rise_K)[0]

    @property
    def loading_name(self) -> str:
        """Train preset the criticals were computed with, or ``none``."""
        case = self.inputs.loading
        return "none" if case is None else case.name

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
            "loading": self.loading_name,
            "loading_position": None if inp.loading is None else inp.loading.position,
            "unloaded_upper_critical_rise_K": self.unloaded_upper_critical_rise_K,
            "unloaded_lower_critical_rise_K": self.unloaded_lower_critical_rise_K,
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


#: Misalignment [m] whose result stands in, as the last resort, when the given misalignment's path
#: cannot be followed and its buckled branch cannot be followed back either (its critical rises are
#: lower than those of a smaller misalignment, so taking it is on the safe side).
RETRACE_MISALIGNMENT_M = 0.05


#: On a curve, a path that falls from a peak above this rise [K] (a small misalignment on strong
#: track) descends steeply and far and can end on a higher buckled branch than the one its
#: trough belongs to: its trough is checked against the branch followed back from a larger
#: misalignment. (Seen between 150 and 200 K in sweeps of 300-600 m curves; lower peaks fall
#: gently and were not seen to.)
STEEP_PEAK_K = 140.0

def _traced_misalignment(inp: TrackStabilityInput) -> float:
    """The misalignment the path is traced with [m]: the given one, or the trigger for a perfect track."""
    return TRIGGER_MISALIGNMENT_M if inp.misalignment_m == 0.0 else inp.misalignment_m


def _rise_at_limit(D: np.ndarray, T: np.ndarray, last: int) -> float | None:
    """Rise [K] at which the lateral displacement ``D`` [m] first reaches :data:`DISPLACEMENT_LIMIT_M`
    on the path up to index ``last`` (the rising branch), interpolated; None if it does not."""
    if D[: last + 1].max() < DISPLACEMENT_LIMIT_M:
        return None
    k = int(np.argmax(D[: last + 1] >= DISPLACEMENT_LIMIT_M))
    return float(np.interp(DISPLACEMENT_LIMIT_M, D[k - 1:k + 1], T[k - 1:k + 1]))


#: :attr:`StabilityResult.path_stop` of a path that lost stability before its peak.
STOP_BIFURCATION = "bifurcation before the peak"


def _bifurcation_words(rise_K: float) -> str:
    return (f"the equilibrium path loses stability at a rise of {rise_K:.1f} K before its peak "
            "(a bifurcation to another buckled shape, which this analysis does not follow); the upper critical "
            "rise is at most that value, and the buckled branch could not be followed from a larger misalignment "
            "either, so no lower critical rise can be given")


def _with_followed_branch(res: StabilityResult, criterion: str, element_length_m: float, half_length_m: float,
                          why: str, branch: tuple | None = None) -> StabilityResult | None:
    """``res`` with the lower critical rise of its own buckled branch, reached through a larger
    misalignment and followed back (:func:`trackplan.stability_fe.trough_by_continuation`); None
    when the branch cannot be followed or its trough is not below the upper critical rise."""
    inp = res.inputs
    if inp.misalignment_m >= BRANCH_START_MISALIGNMENTS_M[-1]:
        return None
    d0 = _traced_misalignment(inp)
    if branch is None:
        branch = trough_by_continuation(inp, d0, element_length_m, half_length_m)
    if branch is None or branch[0] >= res.upper_critical_rise_K:
        return None
    lower, d_lo, d_start = branch
    allow, words = CRITERIA[criterion](res.upper_critical_rise_K, lower, res.rise_at_displacement_limit_K)
    note = (f"{why}; the buckled branch was reached through a {d_start * 1e3:g} mm misalignment and followed back "
            f"to the given one (lower critical rise {lower:.1f} K)")
    return dataclasses.replace(
        res, lower_critical_rise_K=lower, lower_critical_displacement_m=d_lo, allowable_rise_K=float(allow),
        response="snap-through" if res.upper_critical_rise_K - lower >= SNAP_THRESHOLD_K else "progressive",
        criterion=words, shallow_trough_rise_K=None,
        notes=tuple(n for n in res.notes if n != _TRIGGER_NOTE) + (note,))


def _partial_path_with_branch(inp: TrackStabilityInput, exc: StabilityError, criterion: str,
                              element_length_m: float, half_length_m: float) -> StabilityResult | None:
    """The result of a path that could not be followed to its end: the part traced gives the upper
    critical rise (its highest rise, a lower bound when the peak was not passed) and the rise at
    25 mm before it; the lower critical rise is that of the buckled branch followed back from a
    larger misalignment. None when there is no partial path or no such branch below its peak."""
    path = getattr(exc, "partial_path", None)
    if path is None or len(path.rise) < 3 or inp.misalignment_m >= BRANCH_START_MISALIGNMENTS_M[-1]:
        return None
    d0 = _traced_misalignment(inp)
    T, D = np.asarray(path.rise), np.asarray(path.disp)
    k = int(np.argmax(T))
    upper = float(min(T[k], MAX_RISE_K))
    rise_lim = _rise_at_limit(D, T, k)
    branch = trough_by_continuation(inp, d0, element_length_m, half_length_m)
    if (branch is None or branch[0] >= upper) and rise_lim is not None:
        # rising past the displacement limit before it was lost (and no buckled branch below its
        # highest rise): progressive up to there, and the limit governs (as for a path that stops
        # on a rising curve beyond twice the limit)
        allow, words = CRITERIA[criterion](upper, None, rise_lim)
        return StabilityResult(
            upper_critical_rise_K=upper, lower_critical_rise_K=None, allowable_rise_K=float(allow),
            response="progressive", criterion=words, curve_displacement_m=D, curve_rise_K=T, inputs=inp,
            upper_critical_displacement_m=float(D[k]), rise_at_displacement_limit_K=rise_lim,
            criterion_name=criterion, path_stop="lost", notes=(
                f"the equilibrium path could not be followed to its end ({exc.bare_message}); it rose past the "
                f"{DISPLACEMENT_LIMIT_M * 1e3:.0f} mm displacement limit before, and no buckled branch was found below "
                "its highest rise: the displacement limit governs",))
    if branch is None or branch[0] >= upper:
        return None
    lower, d_lo, d_start = branch
    allow, words = CRITERIA[criterion](upper, lower, rise_lim)
    return StabilityResult(
        upper_critical_rise_K=upper, lower_critical_rise_K=float(lower), allowable_rise_K=float(allow),
        response="snap-through" if upper - lower >= SNAP_THRESHOLD_K else "progressive", criterion=words,
        curve_displacement_m=D, curve_rise_K=T, inputs=inp, upper_critical_displacement_m=float(D[k]),
        lower_critical_displacement_m=d_lo, rise_at_displacement_limit_K=rise_lim, criterion_name=criterion,
        path_stop="lost", notes=(
            f"the equilibrium path could not be followed to its end ({exc.bare_message}); the upper critical rise "
            f"is the highest rise it reached, and the buckled branch was reached through a {d_start * 1e3:g} mm "
            f"misalignment and followed back to the given one (lower critical rise {lower:.1f} K)",))


def solve_equilibrium_curve(inp: TrackStabilityInput, *, criterion: str = DEFAULT_CRITERION,
                            element_length_m: float = ELEMENT_LENGTH_M, half_length_m: float = HALF_LENGTH_M,
                            progress: Callable[[float], None] | None = None) -> StabilityResult:
    """Trace the equilibrium curve and derive the critical and allowable rises (not cached).

    The critical rises are those of the given track (:func:`_solve_curve`). Under the
    ``practice-calibrated`` criterion the allowable rise never credits a misalignment smaller
    than the reference one (:data:`trackplan.track.DEFAULT_MISALIGNMENT_M`, 20 mm): it is at
    most the allowable rise of the same track with that misalignment. The practice figure the
    criterion is calibrated on is for maintained track, whose misalignments are found, not
    chosen, and grow in service; a smaller one measured today is no ground for a higher
    allowable rise (this project's safe-side choice).
    """
    res = _solve_curve(inp, criterion=criterion, element_length_m=element_length_m,
                       half_length_m=half_length_m, progress=progress)
    if (criterion != "practice-calibrated" or inp.lateral_stiffness_N_per_m2 is not None
            or inp.misalignment_m >= DEFAULT_MISALIGNMENT_M or not np.isfinite(res.allowable_rise_K)):
        return res
    ref_inp = dataclasses.replace(inp, misalignment_m=DEFAULT_MISALIGNMENT_M)
    try:
        if element_length_m == ELEMENT_LENGTH_M and half_length_m == HALF_LENGTH_M:
            ref = analyse_stability(ref_inp, criterion)
        else:
            ref = _solve_curve(ref_inp, criterion=criterion, element_length_m=element_length_m,
                               half_length_m=half_length_m)
    except StabilityError:
        return res  # the analysis with the reference misalignment gives no number: nothing to cap with
    if ref.allowable_rise_K >= res.allowable_rise_K:
        return res
    ref_mm = DEFAULT_MISALIGNMENT_M * 1e3
    words = (f"{res.criterion}; capped at the allowable rise of the same track with the reference misalignment of "
             f"{ref_mm:g} mm, {ref.allowable_rise_K:.1f} K (a smaller misalignment is not credited)")
    return dataclasses.replace(res, allowable_rise_K=ref.allowable_rise_K, criterion=words, notes=res.notes + (
        f"the given {inp.misalignment_m * 1e3:g} mm misalignment is smaller than the reference {ref_mm:g} mm: its "
        "critical rises are shown, but the allowable rise is that of the reference misalignment (misalignments "
        "grow in service)",))


def _solve_curve(inp: TrackStabilityInput, *, criterion: str = DEFAULT_CRITERION,
                 element_length_m: float = ELEMENT_LENGTH_M, half_length_m: float = HALF_LENGTH_M,
                 progress: Callable[[float], None] | None = None) -> StabilityResult:
    """The critical and allowable rises of the given track, its misalignment as given.

    Strong track with a small misalignment can show no peak below :data:`MAX_RISE_K`,
    although its buckled equilibrium branch (and so its lower critical rise) exists far
    lower. Then the buckled branch is reached through a larger misalignment and followed back
    to the given one (:func:`trackplan.stability_fe.trough_by_continuation`): the lower critical
    rise is that of the given misalignment, continuous where the peak of the path crosses the
    analysis limit (it falls slowly with the misalignment: 67.7 K at 10 mm, 66.4 K at 20 mm and
    61.7 K at 50 mm for consolidated concrete-sleeper 60E1 track under the default train). The
    allowable rise is never read off a curve that merely stopped rising at the limit of the
    analysis. The result keeps the curve of the given misalignment and says so in its notes.
    Only when the branch cannot be followed back is the lower critical rise of a
    :data:`RETRACE_MISALIGNMENT_M` misalignment used (lower: on the safe side). A linear
    (Winkler) foundation has no softening and no lower critical rise; it is left as traced.
    When the path of a misalignment smaller than :data:`RETRACE_MISALIGNMENT_M` cannot be
    followed at all, the result of that larger misalignment is returned instead (lower critical
    rises: on the safe side), said in its notes.

    Parameters are those of :func:`_solve_traced`.
    """
    kw = dict(criterion=criterion, element_length_m=element_length_m, half_length_m=half_length_m)
    try:
        res = _solve_traced(inp, progress=progress, **kw)
        if res.path_stop == STOP_BIFURCATION:
            followed = _with_followed_branch(res, criterion, element_length_m, half_length_m,
                                             f"the path loses stability at a rise of {res.upper_critical_rise_K:.1f} K "
                                             "before its peak (a bifurcation the analysis does not follow; the upper "
                                             "critical rise is given as that rise)")
            if followed is not None:
                return followed
            if res.rise_at_displacement_limit_K is None:
                raise StabilityError(_bifurcation_words(res.upper_critical_rise_K), "stability analysis")
            # no larger misalignment snaps through (the response is turning progressive) and the
            # displacement limit was reached before the loss of stability: that limit governs
            return dataclasses.replace(res, notes=res.notes + (
                f"the path loses stability at a rise of {res.upper_critical_rise_K:.1f} K, after reaching the "
                f"{DISPLACEMENT_LIMIT_M * 1e3:.0f} mm displacement limit at {res.rise_at_displacement_limit_K:.1f} K, "
                "and no larger misalignment snaps through: the displacement limit governs",))
    except StabilityError as exc:
        if inp.lateral_stiffness_N_per_m2 is not None:
            raise
        rescued = _partial_path_with_branch(inp, exc, criterion, element_length_m, half_length_m)
        if rescued is not None:
            return rescued
        if inp.misalignment_m >= RETRACE_MISALIGNMENT_M:
            raise
        # the path of the given misalignment could not be followed: a larger misalignment lowers
        # both critical rises, so its result (if it can be traced) is on the safe side
        wide = dataclasses.replace(inp, misalignment_m=RETRACE_MISALIGNMENT_M)
        try:
            alt = _solve_traced(wide, **kw)
        except StabilityError:
            raise exc from None
        if alt.path_stop == STOP_BIFURCATION:
            raise exc from None
        note = (f"the equilibrium path of the given {inp.misalignment_m * 1e3:g} mm misalignment could not be followed "
                f"({exc.bare_message}); the result is that of a {RETRACE_MISALIGNMENT_M * 1e3:g} mm misalignment, "
                "whose critical rises are lower (on the safe side)")
        return dataclasses.replace(alt, notes=alt.notes + (note,))
    suspect = {"path following stopped after the trough": "the path could not be followed past its trough"}
    if (inp.radius_m is not None and inp.misalignment_m < RETRACE_MISALIGNMENT_M
            and res.upper_critical_rise_K >= STEEP_PEAK_K):
        suspect["past the trough"] = "on a curve the path can end on a higher buckled branch"
    if (res.path_stop in suspect and res.lower_critical_rise_K is not None
            and inp.misalignment_m < BRANCH_START_MISALIGNMENTS_M[-1]):
        # a trough where the path could not be followed further may be a bump on the descent, and
        # on curves the path can end on another, higher branch: the branch followed back from a
        # larger misalignment decides if the trough lies lower
        d0 = _traced_misalignment(inp)
        branch = trough_by_continuation(inp, d0, element_length_m, half_length_m)
        if branch is not None and branch[0] < res.lower_critical_rise_K - 0.01:
            followed = _with_followed_branch(res, criterion, element_length_m, half_length_m,
                                             suspect[res.path_stop], branch)
            if followed is not None:
                return followed
    reached_limit = float(np.max(res.curve_rise_K)) >= MAX_RISE_K - 1e-6
    if (res.lower_critical_rise_K is not None or not reached_limit or inp.lateral_stiffness_N_per_m2 is not None
            or inp.misalignment_m >= BRANCH_START_MISALIGNMENTS_M[-1]):
        return res
    followed = _with_followed_branch(res, criterion, element_length_m, half_length_m,
                                     f"no peak up to the analysis limit of {MAX_RISE_K:g} K with the given "
                                     "misalignment")
    if followed is not None:
        return followed
    if inp.misalignment_m >= RETRACE_MISALIGNMENT_M:
        return res
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
        notes=tuple(n for n in res.notes if n != _TRIGGER_NOTE)
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
        raise InputError(f"unknown criterion {criterion!r}; accepted: {', '.join(CRITERIA)}", field="criterion")
    notes = []
    perfect = inp.misalignment_m == 0.0
    d0 = _traced_misalignment(inp)
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
    upper = lower = shallow = None
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
            exc = StabilityError(
                f"the equilibrium curve still falls at the end of the traced range ({path.stop}, rise "
                f"{T[-1]:.1f} K at {D[-1] * 1e3:.0f} mm); no lower critical rise found", "stability analysis")
            exc.partial_path = path
            raise exc
        if upper - lower >= SNAP_THRESHOLD_K:
            response = "snap-through"
        else:
            notes.append(f"the curve dips by only {upper - lower:.2f} K after its peak; treated as progressive "
                         "(the bottom of the dip still counts as a buckling rise)")
            shallow = lower
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
    rise_lim = _rise_at_limit(D, T, i_peak if i_peak is not None else len(T) - 1)
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
    straight_bifurcation = perfect and inp.radius_m is None and path.bifurcation_rise_K is not None \
        and path.bifurcation_rise_K >= 0.97 * upper  # the loss of stability is the straight track's own
    path_stop = path.stop
    if path.bifurcation_rise_K is not None and path.bifurcation_rise_K < upper and not straight_bifurcation:
        # the branch that starts there is not traced: its trough is unknown from this path; the
        # upper critical rise is at most the bifurcation rise, and the lower critical rise can only
        # come from the buckled branch followed from elsewhere (solve_equilibrium_curve)
        if inp.lateral_stiffness_N_per_m2 is not None:
            raise StabilityError(_bifurcation_words(path.bifurcation_rise_K), "stability analysis")
        upper, d_up, lower, d_lo, shallow, response = path.bifurcation_rise_K, None, None, None, None, "progressive"
        if rise_lim is not None and rise_lim > upper:
            rise_lim = None
        path_stop = STOP_BIFURCATION
    if lower is not None and lower > upper:
        lower = upper
    allow, words = CRITERIA[criterion](min(upper, upper_traced), lower, rise_lim, shallow)
    if perfect:
        notes.append(_TRIGGER_NOTE)
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
    if inp.loading is None:
        notes.append("unloaded track (no vehicle on it); the frame effect of the sleepers is not modelled")
    else:
        notes.append(f"train {inp.loading.name} standing with the misalignment centre at its {inp.loading.position} "
                     "(quasi-static vertical loads; dynamic increments and lateral wheel forces not modelled); "
                     "the frame effect of the sleepers is not modelled")
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
        shallow_trough_rise_K=None if shallow is None else float(shallow),
        path_stop=path_stop,
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


def with_unloaded(result: StabilityResult) -> StabilityResult:
    """``result`` with the critical rises of the same track without vehicles filled in."""
    if result.inputs.loading is None:
        return dataclasses.replace(result, unloaded_upper_critical_rise_K=result.upper_critical_rise_K,
                                   unloaded_lower_critical_rise_K=result.lower_critical_rise_K)
    try:
        free = analyse_stability(dataclasses.replace(result.inputs, loading=None), result.criterion_name)
    except StabilityError as exc:  # the comparison is not worth losing the loaded result
        return dataclasses.replace(result, notes=result.notes + (
            f"the unloaded track could not be analysed for comparison ({exc.bare_message})",))
    return dataclasses.replace(result, unloaded_upper_critical_rise_K=free.upper_critical_rise_K,
                               unloaded_lower_critical_rise_K=free.lower_critical_rise_K)


def clear_cache() -> None:
    """Forget cached results and followed branches (for benchmarks and tests)."""
    from trackplan import stability_fe

    _cached.cache_clear()
    stability_fe._BRANCHES.clear()


__all__ = [
    "CRITERIA", "DEFAULT_CRITERION", "StabilityError", "StabilityResult", "TrackStabilityInput",
    "allowable_lower_critical", "allowable_upper_quarter", "analyse_stability", "ballast_states",
    "bifurcation_rise", "check_input", "clear_cache", "euler_critical_force", "get_preset",
    "hetenyi_critical_force", "lateral_resistance", "longitudinal_resistance", "pinned_column_critical_force",
    "presets", "shoulder_types", "sleeper_types", "solve_equilibrium_curve", "track_parameters",
]
