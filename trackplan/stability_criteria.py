"""Allowable-rise criteria of the lateral stability analysis: the physical base and its scalings.

Pure functions of the critical rises of one analysis (:mod:`trackplan.stability` applies them);
the calibration against practice reads the loaded reference track through the analysis itself.
See docs/methods/stability.md.
"""

from __future__ import annotations

from functools import lru_cache
from typing import Callable

from trackplan import names
from trackplan.track import DISPLACEMENT_LIMIT_M, MARGIN_FACTOR, SNAP_THRESHOLD_K  # noqa: F401

# ----------------------------------------------------------------------------------------------
# Allowable-rise criteria
# ----------------------------------------------------------------------------------------------


def physical_base(upper_K: float, lower_K: float | None, rise_at_limit_K: float | None,
                  shallow_trough_K: float | None = None):
    """The critical rise an allowable is built on: ``(value_K, words)``.

    For snap-through the lower critical rise (below it no buckled equilibrium exists, so no
    disturbance can buckle the track: Kerr's "safe" temperature increase, 1978; the lower
    buckling temperature on which Kish and Samavedam, 2013, build their safety concept); for
    progressive response, which has no such threshold, the rise at a lateral displacement of
    :data:`DISPLACEMENT_LIMIT_M` (a displacement-based limit as Kish and Samavedam use for
    progressive buckling; 25 mm is this project's choice, of the order of the alignment
    tolerances of maintained track, from memory); whichever is lower, never above the upper
    critical rise. A dip after the peak shallower than :data:`SNAP_THRESHOLD_K` does not make the
    response snap-through, but its bottom (``shallow_trough_K``) is still a rise at which a
    buckled equilibrium exists: it is a candidate too, so that the base does not jump where the
    dip crosses the threshold.
    """
    cands = []
    if shallow_trough_K is not None:
        cands.append((shallow_trough_K, f"bottom of a shallow dip after the peak {shallow_trough_K:.1f} K"))
    if lower_K is not None:
        cands.append((lower_K, f"lower critical rise {lower_K:.1f} K"))
    if rise_at_limit_K is not None:
        cands.append((rise_at_limit_K, f"rise at {DISPLACEMENT_LIMIT_M * 1e3:.0f} mm lateral displacement "
                                       f"{rise_at_limit_K:.1f} K"))
    cands.append((upper_K, f"upper critical rise {upper_K:.1f} K"))
    return min(cands)


def allowable_lower_critical(upper_K: float, lower_K: float | None, rise_at_limit_K: float | None,
                             shallow_trough_K: float | None = None):
    """Allowable rise: :func:`physical_base` divided by :data:`MARGIN_FACTOR` (1.2).

    The margin factor covers the scatter of the resistances and the misalignment; it is this
    project's choice, not a published value. Kept as a named option (``lower-critical``).

    Returns ``(allowable_K, words)``.
    """
    base, what = physical_base(upper_K, lower_K, rise_at_limit_K, shallow_trough_K)
    words = (f"{what} divided by a margin factor of {MARGIN_FACTOR:g} "
             "(lower critical rise for snap-through, rise at a 25 mm lateral displacement for progressive "
             "response, whichever is lower; after Kerr 1978 and Kish and Samavedam 2013)")
    return base / MARGIN_FACTOR, words


def allowable_upper_quarter(upper_K: float, lower_K: float | None, rise_at_limit_K: float | None,
                            shallow_trough_K: float | None = None):
    """Allowable rise ``T_min + 0.25 (T_max - T_min)``, never above the upper critical rise.

    A less conservative criterion, written from memory of the buckling-energy safety concept of
    Kish and Samavedam (2013), which allows part of the band between the lower and the upper
    buckling temperature where the energy needed to buckle is still large. For progressive
    response the rule of :func:`allowable_lower_critical`. Not safe-side on its own: use it
    only for comparison.

    Returns ``(allowable_K, words)``.
    """
    if lower_K is None:
        return allowable_lower_critical(upper_K, lower_K, rise_at_limit_K, shallow_trough_K)
    allow = min(lower_K + 0.25 * (upper_K - lower_K), upper_K)
    if rise_at_limit_K is not None:
        allow = min(allow, rise_at_limit_K)
    return allow, (f"lower critical rise {lower_K:.1f} K plus 25 % of the band up to the upper critical rise "
                   f"{upper_K:.1f} K (after Kish and Samavedam 2013, from memory; not safe-side on its own)")


#: Rise above neutral that UK practice takes as critical for undisturbed, fully ballasted CWR
#: stressed to 27 degC (critical rail temperature 53 degC; Network Rail track standards, as
#: quoted in published summaries of UK practice) [K].
PRACTICE_RISE_K = 26.0
#: The reference track of that figure in this model: 60E1 rails on concrete sleepers in
#: consolidated ballast with a full shoulder, tangent, the default misalignment and loading.
PRACTICE_REFERENCE = {"rail": "60E1", "sleeper": "concrete", "ballast": "consolidated", "shoulder": "full"}


@lru_cache(maxsize=1)
def practice_reference_base_K() -> float:
    """:func:`physical_base` of the loaded reference track (:data:`PRACTICE_REFERENCE`) [K]."""
    from trackplan import rails, thermal
    from trackplan.track import build_track

    prof = rails.get_profile(PRACTICE_REFERENCE["rail"])
    inp = build_track(prof, thermal.default_steel(prof.is_north_american), sleeper=PRACTICE_REFERENCE["sleeper"],
                      ballast=PRACTICE_REFERENCE["ballast"], shoulder=PRACTICE_REFERENCE["shoulder"])
    from trackplan.stability import _cached

    return _cached(inp, "lower-critical").buckling_rise_K


def allowable_practice_calibrated(upper_K: float, lower_K: float | None, rise_at_limit_K: float | None,
                                  shallow_trough_K: float | None = None):
    """Allowable rise: the physical base of the loaded track scaled so that the reference track
    gets the rise that practice takes as critical.

    ``allowable = base(track) * PRACTICE_RISE_K / base(reference)``, with ``base`` from
    :func:`physical_base` (lower critical rise, or the rise at 25 mm for progressive response,
    of the track under the train at its worst position) and the reference track of
    :data:`PRACTICE_REFERENCE`.

    Why: the analysis computes the buckling physics of one idealised track; the lower critical
    rise of well-maintained concrete-sleeper track comes out at about 2.5 times the 26 K rise that
    UK practice treats as critical for such track (Network Rail track standards), because what
    the model leaves out (dynamic wheel loads and lateral forces, the scatter of ballast
    resistance along a line, unrecorded misalignments, the uncertainty of the neutral
    temperature itself) is covered there by experience. The model keeps the relative strength of
    tracks (timber against concrete, disturbed against consolidated, curves against tangent);
    practice fixes the level. This is this project's calibration, stated in every result; the
    uncalibrated criteria stay available by name.

    Returns ``(allowable_K, words)``.
    """
    base, what = physical_base(upper_K, lower_K, rise_at_limit_K, shallow_trough_K)
    ref = practice_reference_base_K()
    factor = PRACTICE_RISE_K / ref
    words = (f"{what} of the track times {factor:.3f}: the factor that brings the reference track "
             f"(60E1, concrete sleepers, consolidated ballast, tangent; base {ref:.1f} K) to the {PRACTICE_RISE_K:g} K "
             "rise that UK practice takes as critical for undisturbed, fully ballasted track (Network Rail track "
             "standards); the physics after Kerr 1978 and Kish and Samavedam 2013")
    return base * factor, words


#: Registry of allowable-rise criteria: name -> function(upper_K, lower_K, rise_at_25mm_K, shallow_trough_K=None).
CRITERIA: dict[str, Callable] = {
    "practice-calibrated": allowable_practice_calibrated,
    "lower-critical": allowable_lower_critical,
    "upper-quarter": allowable_upper_quarter,
}
DEFAULT_CRITERION = names.DEFAULT_CRITERION
