"""Probability of buckling: the uncertain inputs and the Monte Carlo core (pure functions).

A section buckles in a season when, on at least one day, the compressive rise of the rail above
its (drifted, uncertain) neutral temperature exceeds the buckling rise of the loaded track:

.. math::

    \\max_d \\left(T_{s,d} + b + e_d\\right) - T_N > C,
    \\qquad T_N = T_{N,0} + \\sigma_N z_N - t\\,(r + \\sigma_r z_r)

with :math:`T_{s,d}` the daily maximum rail temperature of day ``d`` of season ``s`` of the record
(a season drawn at random), :math:`b \\sim N(0, \\sigma_b^2)` the rail temperature model's error
over the season, :math:`e_d \\sim N(0, \\sigma_d^2)` its day-to-day error, :math:`T_{N,0}` the
latest recorded neutral temperature, :math:`\\sigma_N` the spread of its basis, ``t`` the years
since it was set and ``r`` the fall per year in service; :math:`C` the physical buckling rise
(:func:`trackplan.stability.physical_base`) of the track with lognormal peak lateral and
longitudinal resistances and a lognormal misalignment amplitude. See ``docs/methods/risk.md``.

The probability is the fraction of samples that buckle; its standard error
:math:`\\sqrt{p(1-p)/n}`. Every what-if of a section reuses the same standard normal draws
(common random numbers), so differences between what-ifs are not blurred by sampling noise.

References
----------
Ang, A. H.-S. and Tang, W. H. (2007). *Probability Concepts in Engineering*, 2nd ed. Wiley
(reliability index, ``P_f = Phi(-beta)`` for normal capacity and demand; Monte Carlo estimates
and their standard error).
Kish, A. and Samavedam, G. (2013). *Track buckling prevention: theory, safety concepts, and
applications*. US DOT/FRA/ORD-13/16 (buckling rises of the loaded track; uncertainty of the inputs).
"""

from __future__ import annotations

import csv
import math
import zlib
from dataclasses import asdict, dataclass, replace
from functools import lru_cache
from importlib import resources

import numpy as np

from trackplan.errors import InputError

#: Days of a season kept for the daily maximum: those within this many day-to-day error
#: standard deviations of the season's hottest day (the others cannot be the hottest) ...
TOP_DAYS_SIGMAS = 5.0
#: ... at most this many.
TOP_DAYS_MAX = 24
#: A season enters the probability when at least this share of its days has a rail temperature.
SEASON_MIN_COVERAGE = 0.9
#: The uncertain inputs, in the order of the columns of the standard normal draws.
DRIVERS = ("neutral", "drift", "peak_resistance", "longitudinal_resistance", "misalignment", "rail_temperature")


@dataclass(frozen=True)
class DefaultRow:
    name: str
    value: float
    unit: str
    source: str


@lru_cache(maxsize=1)
def defaults() -> dict[str, DefaultRow]:
    """The bundled default spreads (``data/risk_inputs.csv``), name -> row."""
    text = resources.files("trackplan").joinpath("data/risk_inputs.csv").read_text(encoding="utf-8")
    lines = [ln for ln in text.splitlines() if ln.strip() and not ln.startswith("#")]
    return {r["name"]: DefaultRow(r["name"], float(r["value"]), r["unit"], r["source"])
            for r in csv.DictReader(lines)}


#: Fields of ``[sections.ID.risk]``: name -> (kind, low, high) where kind is a units kind (the value
#: is text with a unit) or "number" (a bare number).
OVERRIDE_FIELDS = {
    "neutral_sd": ("temperature_difference", 0.0, 20.0),
    "drift_per_year": ("temperature_difference", -2.0, 5.0),
    "drift_per_year_sd": ("temperature_difference", 0.0, 3.0),
    "years_since_neutral": ("number", 0.0, 60.0),
    "peak_resistance_cov": ("number", 0.0, 1.0),
    "longitudinal_resistance_cov": ("number", 0.0, 1.0),
    "misalignment_spread": ("number", 0.0, 1.5),
    "rail_temperature_bias_sd": ("temperature_difference", 0.0, 10.0),
    "rail_temperature_daily_sd": ("temperature_difference", 0.0, 10.0),
}


@dataclass(frozen=True)
class Uncertainty:
    """The spreads of one section's uncertain inputs (SI; see ``data/risk_inputs.csv``).

    Attributes
    ----------
    neutral_sd_K : float
        Standard deviation of the latest recorded neutral temperature [K].
    drift_per_year_K, drift_per_year_sd_K : float
        Mean and standard deviation of the fall of the neutral temperature per year [K].
    years_since_neutral : float
        Years since the neutral temperature was set [year].
    peak_resistance_cov, longitudinal_resistance_cov : float
        Coefficients of variation of the lognormal resistances [-].
    misalignment_spread : float
        Standard deviation of the logarithm of the misalignment amplitude [-].
    rail_temperature_bias_sd_K, rail_temperature_daily_sd_K : float
        Rail temperature error over a season and from day to day [K].
    """

    neutral_sd_K: float
    drift_per_year_K: float
    drift_per_year_sd_K: float
    years_since_neutral: float
    peak_resistance_cov: float
    longitudinal_resistance_cov: float
    misalignment_spread: float
    rail_temperature_bias_sd_K: float
    rail_temperature_daily_sd_K: float

    def as_json(self) -> dict:
        return asdict(self)

    def fixed(self, driver: str) -> "Uncertainty":
        """The same spreads with one driver (a name of :data:`DRIVERS`) held at its median."""
        field_of = {"neutral": {"neutral_sd_K": 0.0}, "drift": {"drift_per_year_sd_K": 0.0},
                    "peak_resistance": {"peak_resistance_cov": 0.0},
                    "longitudinal_resistance": {"longitudinal_resistance_cov": 0.0},
                    "misalignment": {"misalignment_spread": 0.0},
                    "rail_temperature": {"rail_temperature_bias_sd_K": 0.0, "rail_temperature_daily_sd_K": 0.0}}
        return replace(self, **field_of[driver])

    def measured(self) -> "Uncertainty":
        """After measuring the neutral temperature now: a measurement's spread, no drift since."""
        return replace(self, neutral_sd_K=defaults()["neutral_sd_measured"].value, years_since_neutral=0.0)


def parse_overrides(raw, where: str) -> dict:
    """Validate a ``[sections.ID.risk]`` table: ``{name: SI value}``; bad fields raise InputError."""
    from trackplan import units

    if not raw:
        return {}
    out = {}
    for k, v in dict(raw).items():
        w = f"{where}.{k}"
        if k not in OVERRIDE_FIELDS:
            raise InputError(f"unknown risk input {k!r}; accepted: {', '.join(OVERRIDE_FIELDS)}", w)
        kind, lo, hi = OVERRIDE_FIELDS[k]
        if kind == "number":
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not math.isfinite(v):
                raise InputError(f"expected a number, got {v!r}", w)
            val = float(v)
        else:
            if not isinstance(v, str):
                raise InputError(f"{v!r} has no unit; e.g. \"{units._example(kind)}\"", w)
            val = units.parse(v, kind, w)
        if not lo <= val <= hi:
            unit = "" if kind == "number" else " K"
            raise InputError(f"{val:g}{unit} is outside {lo:g}..{hi:g}{unit}", w)
        out[k] = val
    return out


def uncertainty_for(basis: str, years_since_neutral: float | None, overrides: dict | None = None) -> Uncertainty:
    """The spreads of a section: defaults by neutral basis, then the section's overrides (SI)."""
    d = {k: r.value for k, r in defaults().items()}
    ov = dict(overrides or {})
    years = years_since_neutral if years_since_neutral is not None else d["undated_years"]
    return Uncertainty(
        neutral_sd_K=ov.get("neutral_sd", d[f"neutral_sd_{basis}"]),
        drift_per_year_K=ov.get("drift_per_year", d["drift_per_year"]),
        drift_per_year_sd_K=ov.get("drift_per_year_sd", d["drift_per_year_sd"]),
        years_since_neutral=ov.get("years_since_neutral", max(0.0, float(years))),
        peak_resistance_cov=ov.get("peak_resistance_cov", d["peak_resistance_cov"]),
        longitudinal_resistance_cov=ov.get("longitudinal_resistance_cov", d["longitudinal_resistance_cov"]),
        misalignment_spread=ov.get("misalignment_spread", d["misalignment_spread"]),
        rail_temperature_bias_sd_K=ov.get("rail_temperature_bias_sd", d["rail_temperature_bias_sd"]),
        rail_temperature_daily_sd_K=ov.get("rail_temperature_daily_sd", d["rail_temperature_daily_sd"]),
    )


def zero_uncertainty(years_since_neutral: float = 0.0, drift_per_year_K: float = 0.0) -> Uncertainty:
    """Every spread zero (a deterministic replay of the record)."""
    return Uncertainty(0.0, drift_per_year_K, 0.0, years_since_neutral, 0.0, 0.0, 0.0, 0.0, 0.0)


# --------------------------------------------------------------------------
# Draws
# --------------------------------------------------------------------------


def section_seed(seed: int, section_id: str) -> np.random.SeedSequence:
    """A seed sequence of its own for each section (independent of the order of the file)."""
    return np.random.SeedSequence([int(seed), zlib.crc32(section_id.encode("utf-8"))])


@dataclass(frozen=True)
class Draws:
    """Standard normal draws of one section, shared by all its what-ifs (common random numbers).

    Attributes
    ----------
    z : numpy.ndarray
        Shape ``(n, 6)``: neutral, drift, peak resistance, longitudinal resistance, misalignment,
        rail temperature bias (the order of :data:`DRIVERS`).
    daily : numpy.ndarray
        Shape ``(n, k)``: day-to-day rail temperature errors of the ``k`` hottest days.
    season : numpy.ndarray
        Shape ``(n,)``: the season of each sample (index into the record's seasons).
    """

    z: np.ndarray
    daily: np.ndarray
    season: np.ndarray


def draw(seed, n: int, n_seasons: int, k_days: int) -> Draws:
    """Draws for ``n`` samples: seasons stratified (each season equally often, in random order)."""
    rng = np.random.default_rng(seed)
    z = rng.standard_normal((n, len(DRIVERS)))
    daily = rng.standard_normal((n, k_days))
    season = rng.permutation(np.arange(n) % n_seasons)
    return Draws(z=z, daily=daily, season=season)


# --------------------------------------------------------------------------
# Pure core
# --------------------------------------------------------------------------


def top_days(rail_max_C, season_index, n_seasons: int, daily_sd_K: float) -> np.ndarray:
    """The hottest days of each season that can be its hottest once the daily error is added.

    Parameters
    ----------
    rail_max_C : array
        Daily maximum rail temperature [degC] (NaN = missing).
    season_index : array of int
        Season of each day (0 .. n_seasons - 1).
    daily_sd_K : float
        Standard deviation of the day-to-day error [K].

    Returns
    -------
    numpy.ndarray
        Shape ``(n_seasons, k)``, hottest first, ``-inf`` where a season has fewer days; ``k`` is
        the largest number of days within :data:`TOP_DAYS_SIGMAS` standard deviations of their
        season's hottest (at most :data:`TOP_DAYS_MAX`, at least 1).
    """
    t = np.asarray(rail_max_C, dtype=float)
    s = np.asarray(season_index)
    ok = np.isfinite(t)
    t, s = t[ok], s[ok]
    order = np.lexsort((-t, s))
    t, s = t[order], s[order]
    start = np.searchsorted(s, np.arange(n_seasons))
    rank = np.arange(t.size) - start[s]
    season_max = np.full(n_seasons, -np.inf)
    np.maximum.at(season_max, s, t)
    within = t >= season_max[s] - TOP_DAYS_SIGMAS * daily_sd_K
    k = int(min(TOP_DAYS_MAX, max(1, (rank[within].max() + 1) if within.any() else 1)))
    out = np.full((n_seasons, k), -np.inf)
    keep = rank < k
    out[s[keep], rank[keep]] = t[keep]
    return out


def buckles(hot_days_C, neutral_C, capacity_K, bias_K=0.0, daily_error_K=0.0) -> np.ndarray:
    """Whether each sample buckles: ``max_d(T_d + e_d) + b - T_N > C`` (vectorised over samples).

    Parameters
    ----------
    hot_days_C : array, shape (n, k)
        Daily maximum rail temperatures of each sample's season (``-inf`` padding) [degC].
    neutral_C, capacity_K, bias_K : array, shape (n,)
        Neutral temperature [degC], buckling rise [K], season error of the rail temperature [K].
    daily_error_K : array, shape (n, k) or scalar
        Day-to-day error [K].
    """
    peak = np.max(np.asarray(hot_days_C) + daily_error_K, axis=-1)
    return peak + bias_K - np.asarray(neutral_C) > np.asarray(capacity_K)


def neutral_samples(neutral_C: float, u: Uncertainty, z_neutral, z_drift) -> np.ndarray:
    """``T_N = T_N0 + sigma_N z_N - t (r + sigma_r z_r)`` [degC]."""
    return (neutral_C + u.neutral_sd_K * z_neutral
            - u.years_since_neutral * (u.drift_per_year_K + u.drift_per_year_sd_K * z_drift))


def lognormal_factor(cov: float, z) -> np.ndarray:
    """A lognormal factor with median 1 and coefficient of variation ``cov``: ``exp(s z)``,
    ``s = sqrt(ln(1 + cov**2))``."""
    return np.exp(math.sqrt(math.log1p(cov * cov)) * np.asarray(z))


def capacity_inputs(u: Uncertainty, misalignment_m: float, z) -> tuple:
    """``(peak_factor, longitudinal_factor, misalignment_m)`` of each sample."""
    return (lognormal_factor(u.peak_resistance_cov, z[:, 2]),
            lognormal_factor(u.longitudinal_resistance_cov, z[:, 3]),
            misalignment_m * np.exp(u.misalignment_spread * z[:, 4]))


@dataclass(frozen=True)
class Estimate:
    """A Monte Carlo probability with its standard error and per-season probabilities."""

    probability: float
    standard_error: float
    samples: int
    season_probability: np.ndarray  # per season of the record

    @property
    def upper_95(self) -> float:
        """One-sided 95 % upper bound: ``p + 1.645 se``, or ``3/n`` when no sample buckled."""
        return 3.0 / self.samples if self.probability == 0.0 else min(1.0, self.probability
                                                                       + 1.645 * self.standard_error)


def estimate(hit: np.ndarray, season: np.ndarray, n_seasons: int) -> Estimate:
    """Probability, binomial standard error ``sqrt(p (1 - p) / n)`` and per-season shares."""
    n = hit.size
    p = float(hit.mean())
    per = np.bincount(season, weights=hit.astype(float), minlength=n_seasons) / np.maximum(
        np.bincount(season, minlength=n_seasons), 1)
    return Estimate(p, math.sqrt(max(p * (1 - p), 0.0) / n), n, per)


def run(hot: np.ndarray, neutral_C: float, u: Uncertainty, capacity, misalignment_m: float, d: Draws) -> Estimate:
    """One Monte Carlo estimate for one section and one set of spreads.

    Parameters
    ----------
    hot : array, shape (n_seasons, k)
        :func:`top_days` of the section's record.
    capacity : callable or array
        ``capacity(peak_factor, longitudinal_factor, misalignment_m) -> buckling rise [K]`` (arrays),
        or the buckling rise of each sample already evaluated on these draws [K].
    d : Draws
        The section's draws (``d.daily`` has at least ``k`` columns).
    """
    k = hot.shape[1]
    tn = neutral_samples(neutral_C, u, d.z[:, 0], d.z[:, 1])
    cap = capacity(*capacity_inputs(u, misalignment_m, d.z)) if callable(capacity) else capacity
    hit = buckles(hot[d.season], tn, cap, u.rail_temperature_bias_sd_K * d.z[:, 5],
                  u.rail_temperature_daily_sd_K * d.daily[:, :k])
    return estimate(hit, d.season, hot.shape[0])
