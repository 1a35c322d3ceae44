"""Destressing physics: free thermal length change of a rail string and what follows from it.

Adjustment (pull) length, reference-mark movements, the achieved neutral
temperature from an observed movement, the heating temperature that closes a
gap, the opening and closure of a repair (docs/methods/destressing.md). Pure
functions over arrays, SI floats inside; the plan that uses them is
:func:`trackplan.destressing.plan_destressing`.
"""

from __future__ import annotations

import numpy as np

from trackplan import thermal
from trackplan.errors import InputError


# Physics
# --------------------------------------------------------------------------


def adjustment_length(length_m, from_C, to_C, alpha_per_K: float):
    """Change of length that moves a string's neutral temperature, ``alpha L (T_to - T_from)`` [m].

    Parameters
    ----------
    length_m : float or array
        Pulled length [m].
    from_C : float
        Temperature the rail is stress-free at before the pull: the rail
        temperature of free rail, or the current neutral temperature of
        restrained rail [degC].
    to_C : float
        Target neutral temperature [degC].
    alpha_per_K : float
        Thermal expansion coefficient [1/K].

    Returns
    -------
    float or array
        Extension [m]; negative when rail must be added.

    Notes
    -----
    Free expansion of the pulled length over ``T_to - T_from``
    (:func:`trackplan.thermal.free_expansion`): a rail stretched by this
    amount at ``T_from`` has the length it would have free at ``T_to``.

    References
    ----------
    Esveld (2001), *Modern Railway Track*, ch. 7: ``dL = alpha L dT``.
    """
    return thermal.free_expansion(length_m, np.asarray(to_C, dtype=float) - np.asarray(from_C, dtype=float), alpha_per_K)


def mark_movements(distances_m, from_C, to_C, alpha_per_K: float):
    """Expected movement of reference marks, ``alpha x (T_to - T_from)`` [m].

    Parameters
    ----------
    distances_m : float or array
        Distance of each mark from the fixed end of its pulled length [m].
    from_C, to_C : float
        As in :func:`adjustment_length` [degC].
    alpha_per_K : float
        Thermal expansion coefficient [1/K].

    Notes
    -----
    With the rail free (on rollers) the stretch is uniform along the pulled
    length, so a point at ``x`` from the fixed end moves by the stretch of the
    length ``0..x``. A mark that moves less than this shows a pull that did not
    reach it (friction, a roller missing, a clip left on).
    """
    return adjustment_length(distances_m, from_C, to_C, alpha_per_K)


def achieved_neutral_temperature(observed_movement_m, at_mark_m, base_temperature_C, alpha_per_K: float):
    """Neutral temperature reached, from the movement observed at one mark.

    Parameters
    ----------
    observed_movement_m : float or array
        Movement of the mark towards the cut, measured against its fixed
        reference [m].
    at_mark_m : float or array
        Distance of that mark from the fixed end of its pulled length [m], > 0.
    base_temperature_C : float
        The temperature the rail was stress-free at when the mark was set: the
        rail temperature (free, repair, heating) or the current neutral
        temperature (restrained) [degC].
    alpha_per_K : float
        Thermal expansion coefficient [1/K].

    Returns
    -------
    float or array
        Achieved neutral temperature [degC].

    Notes
    -----
    Inverse of :func:`mark_movements`: ``T_N = T_base + u / (alpha x)``. It
    assumes the stretch is uniform over ``0..x`` (rail free on rollers); a
    mark near the cut gives the average over the whole pulled length.
    """
    x = np.asarray(at_mark_m, dtype=float)
    if np.any(~(x > 0)):
        raise InputError("the mark must be at a positive distance from the fixed end", field="at_mark")
    return base_temperature_C + np.asarray(observed_movement_m, dtype=float) / (alpha_per_K * x)


def heating_temperature(rail_temperature_C, closing_m, length_m, alpha_per_K: float):
    """Rail temperature at which free expansion closes a given movement.

    Parameters
    ----------
    rail_temperature_C : float
        Present rail temperature of the free rail [degC].
    closing_m : float
        Movement the heated length must make (its free expansion) [m].
    length_m : float
        Heated (free) length [m], > 0.
    alpha_per_K : float
        Thermal expansion coefficient [1/K].

    Returns
    -------
    float
        Temperature to heat the rail to [degC]:
        ``T_heat = T_r + closing / (alpha L)``.

    Notes
    -----
    With ``closing`` equal to the extension for a target neutral temperature
    ``T_t`` (:func:`adjustment_length`), ``T_heat = T_t``: a rail heated
    uniformly to the target and clipped there is neutral at the target.
    """
    if not length_m > 0:
        raise InputError("the heated length must be positive", field="length")
    return rail_temperature_C + closing_m / (alpha_per_K * length_m)


def repair_opening(removed_length_m, length_m, original_neutral_C, rail_temperature_C, alpha_per_K: float):
    """Opening between the free rail ends once the affected length is unclipped.

    Parameters
    ----------
    removed_length_m : float
        Distance between the two cuts measured while the rail was still
        clipped (the rail cut out plus any gap already open at a break), ``R`` [m].
    length_m : float
        Distance between the fixed points (the clips left on each side), across
        the opening, ``D`` [m].
    original_neutral_C : float
        Neutral temperature of the string before the break or cut, ``T_N0`` [degC].
    rail_temperature_C : float
        Rail temperature ``T_r`` [degC].
    alpha_per_K : float
        Thermal expansion coefficient [1/K].

    Returns
    -------
    float
        Opening ``G = R + alpha (D - R) (T_N0 - T_r)`` [m].

    Notes
    -----
    The unclipped rail on the two sides together, ``L_affected = D - R``, was
    held at the strain ``alpha (T_N0 - T_r)`` (tension when colder than its
    neutral). Freed on rollers, it shortens by ``alpha L_affected (T_N0 - T_r)``,
    which widens the opening by that amount.
    """
    return removed_length_m + float(adjustment_length(length_m - removed_length_m, rail_temperature_C, original_neutral_C, alpha_per_K))


def closure_length(opening_m, length_m, target_neutral_C, rail_temperature_C, alpha_per_K: float,
                   weld_allowance_m: float, n_welds: int = 2):
    """Length of the closure rail to cut for a repair.

    Parameters
    ----------
    opening_m : float
        Opening between the free rail ends at the rail temperature, ``G`` [m]
        (measured, or from :func:`repair_opening`).
    length_m : float
        Distance between the fixed points across the opening, ``D`` [m].
    target_neutral_C : float
        Neutral temperature to restore (the original one) or to set, ``T_t`` [degC].
    rail_temperature_C : float
        Rail temperature ``T_r`` of the free rail and of the closure rail [degC].
    alpha_per_K : float
        Thermal expansion coefficient [1/K].
    weld_allowance_m : float
        Signed allowance per weld [m] (see :class:`WeldAllowance`).
    n_welds : int
        Welds that join the closure rail (2).

    Returns
    -------
    float
        Closure length ``C = G - alpha D (T_t - T_r) - n a`` [m], measured on
        the closure rail at the rail temperature.

    Notes
    -----
    After welding, all the rail between the fixed points (the two freed sides,
    the closure rail and the weld metal) must have, at ``T_r``, the free length
    ``D (1 - alpha (T_t - T_r))``: the length that stretches to ``D`` at
    ``T_r`` exactly when its neutral temperature is ``T_t``. The freed sides
    measure ``D - G`` and the welds add ``n a``, which gives ``C``. The tensor
    then closes the ends by ``alpha D (T_t - T_r)`` with the force
    ``E A alpha (T_t - T_r)``. Combined with :func:`repair_opening`:
    ``C = R + alpha (D - R)(T_N0 - T_r) - alpha D (T_t - T_r) - n a``, which
    for ``T_t = T_N0`` is ``R - alpha R (T_N0 - T_r) - n a``: the cut-out
    length, less its own small thermal strain, less the welds.
    """
    return opening_m - float(adjustment_length(length_m, rail_temperature_C, target_neutral_C, alpha_per_K)) - n_welds * weld_allowance_m


# --------------------------------------------------------------------------
