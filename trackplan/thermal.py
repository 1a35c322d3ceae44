"""Thermal force in restrained rail and the physics of string ends.

Pure functions over SI floats or numpy arrays. Sign convention (docs/glossary.md):
compression positive, tension negative; a *rise* is rail temperature minus
neutral temperature [K].

Equations (fully restrained rail, Hooke's law with thermal strain):

* stress            ``sigma = E * alpha * (T_rail - T_N)``                    [Pa]
* force per rail    ``P = E * A * alpha * (T_rail - T_N)``                    [N]
* free expansion    ``dL = alpha * L * dT``                                   [m]
* breathing length  ``l_b = |P| / r``  (force decays linearly at a free end)  [m]
* free-end movement ``u = P**2 / (2 E A r)``                                  [m]
* gap at a break    ``g = P**2 / (E A r)``  (two ends, each ``u``; tension)   [m]

where ``r`` is the longitudinal resistance per rail [N/m].

References
----------
Esveld, C. (2001). *Modern Railway Track*, 2nd ed., MRT-Productions, ch. 7
(thermal forces, breathing length, gap at a rail break).
Kerr, A. D. (2003). *Fundamentals of Railway Track Engineering*, Simmons-Boardman,
ch. on thermal stresses in CWR.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from trackplan.errors import InputError


@dataclass(frozen=True)
class Steel:
    """Elastic modulus and thermal expansion of rail steel.

    Attributes
    ----------
    E_Pa : float
        Young's modulus [Pa].
    alpha_per_K : float
        Linear thermal expansion coefficient [1/K].
    name : str
        Preset name or ``"custom"``.
    source : str
        Where the values come from.
    """

    E_Pa: float
    alpha_per_K: float
    name: str = "custom"
    source: str = ""


#: Steel constants by practice. North American: E = 30e6 psi, alpha = 6.5e-6 per degF
#: (AREMA MRE ch. 4 practice; written from memory of the trade values). European:
#: E = 210 GPa (EN 1993-1-1, 3.2.6); alpha = 1.15e-5 per K is the value common in
#: European CWR practice (memory); EN 1993-1-1 gives 1.2e-5 per K for structural steel.
STEEL_PRESETS: dict[str, Steel] = {
    "european": Steel(210e9, 1.15e-5, "european", "E: EN 1993-1-1 3.2.6; alpha: common European CWR practice"),
    "north-american": Steel(
        30e6 * 4.4482216152605 / 0.0254**2,
        6.5e-6 * 9.0 / 5.0,
        "north-american",
        "E = 30e6 psi, alpha = 6.5e-6 /degF: North American CWR practice",
    ),
    "en1993": Steel(210e9, 1.2e-5, "en1993", "EN 1993-1-1 3.2.6 structural steel"),
}


def steel_preset(name: str, where: str | None = None) -> Steel:
    """Look up a steel preset by name; unknown names list the valid ones (field ``steel``)."""
    try:
        return STEEL_PRESETS[name]
    except KeyError:
        raise InputError(f"unknown steel preset {name!r}; accepted: {', '.join(STEEL_PRESETS)}", where,
                         field="steel") from None


def default_steel(north_american: bool) -> Steel:
    """The steel preset that goes with a profile family."""
    return STEEL_PRESETS["north-american" if north_american else "european"]


def check_steel(E_Pa: float, alpha_per_K: float, where: str = "steel") -> None:
    """Refuse steel constants outside any plausible range for rail steel."""
    if not 150e9 <= E_Pa <= 250e9:
        raise InputError(f"Young's modulus {E_Pa / 1e9:.1f} GPa is outside 150-250 GPa for rail steel", where)
    if not 8e-6 <= alpha_per_K <= 16e-6:
        raise InputError(
            f"expansion coefficient {alpha_per_K:.3g} 1/K is outside 8e-6..16e-6 1/K for rail steel", where
        )


def thermal_stress(rise_K, E_Pa: float, alpha_per_K: float):
    """Longitudinal stress in fully restrained rail.

    Parameters
    ----------
    rise_K : float or array
        Rail temperature minus neutral temperature [K].
    E_Pa : float
        Young's modulus [Pa].
    alpha_per_K : float
        Thermal expansion coefficient [1/K].

    Returns
    -------
    float or array
        Stress [Pa], compression positive.

    References
    ----------
    Esveld (2001), *Modern Railway Track*, ch. 7: ``sigma = E alpha dT``.
    """
    return E_Pa * alpha_per_K * np.asarray(rise_K, dtype=float)


def thermal_force(rise_K, E_Pa: float, area_m2: float, alpha_per_K: float):
    """Longitudinal force per rail in fully restrained rail, ``P = E A alpha dT``.

    Parameters
    ----------
    rise_K : float or array
        Rail temperature minus neutral temperature [K].
    E_Pa : float
        Young's modulus [Pa].
    area_m2 : float
        Rail cross-section area [m**2].
    alpha_per_K : float
        Thermal expansion coefficient [1/K].

    Returns
    -------
    float or array
        Force per rail [N], compression positive. The force does not depend on
        the length of the welded string.
    """
    return thermal_stress(rise_K, E_Pa, alpha_per_K) * area_m2


def free_expansion(length_m, rise_K, alpha_per_K: float):
    """Change of length of an unrestrained rail, ``dL = alpha L dT`` [m]."""
    return alpha_per_K * np.asarray(length_m, dtype=float) * np.asarray(rise_K, dtype=float)


def _check_resistance(r):
    r = np.asarray(r, dtype=float)
    if np.any(~(r > 0)):
        raise InputError("longitudinal resistance must be positive (e.g. '8 kN/m' per rail)", field="resistance")
    return r


def breathing_length(force_N, resistance_N_per_m):
    """Length over which the force decays to zero at a free end, ``l_b = |P| / r``.

    Parameters
    ----------
    force_N : float or array
        Force per rail in the restrained part of the string [N].
    resistance_N_per_m : float or array
        Longitudinal resistance per rail [N/m], positive.

    Returns
    -------
    float or array
        Breathing length [m].

    References
    ----------
    Esveld (2001), *Modern Railway Track*, ch. 7 (breathing length).
    """
    return np.abs(np.asarray(force_N, dtype=float)) / _check_resistance(resistance_N_per_m)


def end_movement(force_N, E_Pa: float, area_m2: float, resistance_N_per_m):
    """Movement of a free string end, ``u = P**2 / (2 E A r)`` [m].

    The strain ``P / (E A)`` decays linearly to zero over the breathing length,
    so the end moves by half the free expansion of the breathing length:
    ``u = alpha dT l_b / 2``. Positive value; the end moves outward in
    compression, inward in tension.
    """
    P = np.asarray(force_N, dtype=float)
    return P**2 / (2.0 * E_Pa * area_m2 * _check_resistance(resistance_N_per_m))


def pull_apart_gap(force_N, E_Pa: float, area_m2: float, resistance_N_per_m):
    """Gap opened by a rail break in tension, ``g = P**2 / (E A r)`` [m].

    Both broken ends retract by :func:`end_movement`. Zero where the rail is in
    compression (``force_N >= 0``), where a break does not open.

    References
    ----------
    Esveld (2001), *Modern Railway Track*, ch. 7 (gap at a rail fracture).
    """
    P = np.asarray(force_N, dtype=float)
    gap = 2.0 * end_movement(P, E_Pa, area_m2, resistance_N_per_m)
    return np.where(P < 0, gap, 0.0)


def gap_drop_K(gap_m, E_Pa: float, area_m2: float, alpha_per_K: float, resistance_N_per_m):
    """Fall below neutral [K] at which a break opens ``gap_m``: the inverse of :func:`pull_apart_gap`.

    Notes
    -----
    With ``P = E A alpha dT`` in ``g = P**2 / (E A r)``: ``dT = sqrt(g r / (E A)) / alpha``.

    References
    ----------
    Esveld (2001), *Modern Railway Track*, ch. 7 (gap at a rail fracture).
    """
    return np.sqrt(np.asarray(gap_m, dtype=float) * resistance_N_per_m / (E_Pa * area_m2)) / alpha_per_K


def gap_force_N(gap_m, E_Pa: float, area_m2: float, resistance_N_per_m):
    """Tension force magnitude [N] at which a break opens ``gap_m``: ``|P| = sqrt(g E A r)``."""
    return np.sqrt(np.asarray(gap_m, dtype=float) * E_Pa * area_m2 * resistance_N_per_m)


def gap_resistance_N_per_m(gap_m: float, drop_K, E_Pa: float, area_m2: float, alpha_per_K: float):
    """Longitudinal resistance [N/m] for which a fall ``drop_K`` below neutral opens at most ``gap_m``:
    ``r = E A (alpha dT)**2 / g``."""
    return E_Pa * area_m2 * (alpha_per_K * np.asarray(drop_K, dtype=float)) ** 2 / gap_m


@dataclass(frozen=True, kw_only=True)
class ColdSide:
    """The cold-side group of a section: steel, rail area, longitudinal resistance and the two limits.

    Built by keyword only, so that no two figures can be swapped unnoticed.

    Attributes
    ----------
    E_Pa : float
        Elastic modulus [Pa].
    area_m2 : float
        Rail cross-section area [m**2].
    alpha_per_K : float
        Thermal expansion coefficient [1/K].
    resistance_N_per_m : float
        Longitudinal resistance per rail [N/m].
    gap_limit_m : float
        Allowable pull-apart gap at a break [m].
    tension_stress_limit_Pa : float
        Allowable thermal tension stress [Pa].
    """

    E_Pa: float
    area_m2: float
    alpha_per_K: float
    resistance_N_per_m: float
    gap_limit_m: float
    tension_stress_limit_Pa: float

    def stress_drop_K(self) -> float:
        """Fall below neutral [K] at which the tension stress reaches its limit: ``sigma_lim / (E alpha)``."""
        return self.tension_stress_limit_Pa / (self.E_Pa * self.alpha_per_K)

    def gap_drop_K(self) -> float:
        """Fall below neutral [K] at which a break opens the gap limit (:func:`gap_drop_K`)."""
        return float(gap_drop_K(self.gap_limit_m, self.E_Pa, self.area_m2, self.alpha_per_K,
                                self.resistance_N_per_m))

    def limit_drop_K(self) -> float:
        """The largest fall below neutral [K] within both cold limits."""
        return min(self.stress_drop_K(), self.gap_drop_K())

    def gap_m(self, drop_K) -> float:
        """Gap a break opens [m] after a fall ``drop_K`` [K] below neutral (:func:`pull_apart_gap`)."""
        force = thermal_force(-abs(float(drop_K)), self.E_Pa, self.area_m2, self.alpha_per_K)
        return float(pull_apart_gap(force, self.E_Pa, self.area_m2, self.resistance_N_per_m))

    def tension_stress_Pa(self, drop_K) -> float:
        """Tension stress magnitude [Pa] after a fall ``drop_K`` [K] below neutral: ``E alpha dT``."""
        return self.E_Pa * self.alpha_per_K * abs(float(drop_K))


def state(rise_K: float, tol_K: float = 1e-9) -> str:
    """``compression``, ``tension`` or ``neutral`` for a rise [K]."""
    if rise_K > tol_K:
        return "compression"
    if rise_K < -tol_K:
        return "tension"
    return "neutral"


@dataclass(frozen=True)
class RestrainedRail:
    """Force and stress of fully restrained rail at one rail temperature (``trackplan force``).

    Attributes
    ----------
    rail_temperature_C : float
        Rail temperature [degC].
    rise_K : float
        Rail temperature less neutral [K].
    stress_Pa, force_per_rail_N : float
        Thermal stress [Pa] and force per rail [N], compression positive.
    breathing_length_m, end_movement_m : float or None
        At a free end, with a longitudinal resistance given [m].
    pull_apart_gap_m : float or None
        Gap a break would open, in tension with a resistance given [m].
    """

    rail_temperature_C: float
    rise_K: float
    stress_Pa: float
    force_per_rail_N: float
    breathing_length_m: float | None = None
    end_movement_m: float | None = None
    pull_apart_gap_m: float | None = None

    @property
    def state(self) -> str:
        return state(self.rise_K)


def restrained_rail(rail_temperature_C: float, *, neutral_C: float, E_Pa: float, area_m2: float,
                    alpha_per_K: float, resistance_N_per_m: float | None = None) -> RestrainedRail:
    """Force and stress of restrained rail at a rail temperature; with a resistance [N/m] per rail, the
    breathing length, end movement and (in tension) the break gap (:func:`thermal_force` and the others)."""
    rise = float(rail_temperature_C) - float(neutral_C)
    P = float(thermal_force(rise, E_Pa, area_m2, alpha_per_K))
    sigma = float(thermal_stress(rise, E_Pa, alpha_per_K))
    if resistance_N_per_m is None:
        return RestrainedRail(float(rail_temperature_C), rise, sigma, P)
    r = resistance_N_per_m
    return RestrainedRail(float(rail_temperature_C), rise, sigma, P, float(breathing_length(P, r)),
                          float(end_movement(P, E_Pa, area_m2, r)),
                          float(pull_apart_gap(P, E_Pa, area_m2, r)) if P < 0 else None)
