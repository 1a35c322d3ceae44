"""A fast stand-in for the stability analysis: critical rises as functions of the uncertain inputs.

The Monte Carlo of :mod:`trackplan.risk` needs the buckling rise of a track for tens of thousands
of combinations of lateral resistance, longitudinal resistance and misalignment; the full
analysis (:func:`trackplan.stability.solve_equilibrium_curve`) takes 30-100 ms each. The stand-in
solves the full analysis once on a regular grid over those three inputs for one *family* (rail,
steel, sleeper, ballast, shoulder, spacing, radius, loading: everything else fixed) and
interpolates between the grid points.

Inputs of the stand-in (each a factor or value against the family's own track):

* ``peak_factor``: factor on the peak AND limit lateral resistance (their ratio is kept);
* ``longitudinal_factor``: factor on the longitudinal resistance (1 when the track is held rigid);
* ``misalignment_m``: misalignment amplitude [m] (its length stays the family's).

Outputs (each at most :data:`CAP_K`, 100 K, applied after the interpolation): the physical buckling rise (:func:`trackplan.stability.physical_base`: lower critical
rise for snap-through, rise at 25 mm lateral displacement for progressive response, never above
the upper critical rise), the upper critical rise and the allowable rise [K].

Interpolation is in the logarithms of the inputs and of the outputs: each interval of the grid is
divided into :data:`UPSAMPLE` parts, the values there from monotone piecewise-cubic (PCHIP)
interpolation along each axis in turn (no overshoot at the kinks of the response, Fritsch and
Carlson 1980), and the stand-in is multilinear on that finer grid. Outside the grid the full
analysis answers (memoised on inputs rounded to 0.5 % in the logarithm). A grid point where the
full analysis cannot trace the curve takes the value interpolated (in the logarithms) between its
good neighbours along the misalignment axis and is counted in :attr:`Surrogate.filled_points`.

The grid is cached on disk (``.npz``), keyed on a hash of the model version, the family's track
inputs and the bundled preset files, in the user cache folder (``TRACKPLAN_CACHE_DIR`` relocates
it; never inside the package).

References
----------
Forrester, A., Sobester, A. and Keane, A. (2008). *Engineering Design via Surrogate Modelling*.
Wiley (surrogates built on designed samples; error measured on independent test points).
Fritsch, F. N. and Carlson, R. E. (1980). Monotone piecewise cubic interpolation. *SIAM Journal
on Numerical Analysis* 17, 238-246 (PCHIP).
"""

from __future__ import annotations

import dataclasses
import hashlib
import os
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

#: Version of the stand-in's grid and of the model it stands in for; bump when either changes.
MODEL_VERSION = "risk-surrogate-7"
#: Default grid: (low, high, points) of each input; factors and misalignment on log-spaced axes.
#: With the default spreads (data/risk_inputs.csv) the grid spans about -5.6..+5.1 standard
#: deviations of the peak resistance, -5.5..+5.5 of the longitudinal resistance and -4.7..+4.5
#: of the misalignment (median 20 mm), so that the full model is rarely needed beyond it. The
#: response changes fastest along the misalignment (snap-through to progressive), so that axis is
#: the finest (steps of 20 %).
PEAK_AXIS = (0.25, 3.5, 12)
LONGITUDINAL_AXIS = (0.2, 5.0, 5)
MISALIGNMENT_AXIS_M = (0.003, 0.12, 21)
#: Each interval of the grid is divided into this many for the interpolation (PCHIP between).
UPSAMPLE = 4
#: Rises above this are given as this value [K]: no rail temperature reaches a rise of 100 K above a
#: neutral temperature in use (80 degC rail above a -20 degC neutral). The grid keeps the analysis's
#: own values (up to its limit of 200 K) and the cap is applied after the interpolation, so that a
#: cell the cap crosses is interpolated on the smooth values, not across the kink of the cap.
CAP_K = 100.0
#: Names of the outputs, in the order of the stored arrays.
OUTPUTS = ("buckling_rise_K", "upper_critical_rise_K", "allowable_rise_K")
ENV_CACHE = "TRACKPLAN_CACHE_DIR"


def cache_dir() -> Path:
    """The folder of cached stand-ins: ``$TRACKPLAN_CACHE_DIR`` or the user cache folder."""
    env = os.environ.get(ENV_CACHE)
    if env:
        return Path(env)
    base = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
    return Path(base) / "trackplan" / "surrogates"


def family_input(inp):
    """The family's reference input: the given track with its misalignment fixed to the default
    (the key of the family does not depend on the misalignment, which is an input of the stand-in)."""
    from trackplan.track import DEFAULT_MISALIGNMENT_M

    return dataclasses.replace(inp, misalignment_m=DEFAULT_MISALIGNMENT_M)


def _preset_hash() -> str:
    from importlib import resources

    h = hashlib.sha256()
    for name in ("track_presets.csv", "track_support.csv", "train_presets.csv", "rails.csv"):
        h.update(resources.files("trackplan").joinpath(f"data/{name}").read_bytes())
    return h.hexdigest()[:16]


def family_key(inp, axes) -> str:
    """Content hash of a family: model version, inputs, grid axes and preset files."""
    h = hashlib.sha256()
    h.update(MODEL_VERSION.encode())
    h.update(repr(family_input(inp)).encode())
    h.update(repr([tuple(np.round(a, 9)) for a in axes]).encode())
    h.update(_preset_hash().encode())
    return h.hexdigest()[:24]


def _axes(peak=None, longitudinal=None, misalignment=None):
    """Grid axes ``[peak factors, longitudinal factors, misalignments]`` (log-spaced); default the
    module's :data:`PEAK_AXIS`, :data:`LONGITUDINAL_AXIS` and :data:`MISALIGNMENT_AXIS_M`."""
    spec = (peak or PEAK_AXIS, longitudinal or LONGITUDINAL_AXIS, misalignment or MISALIGNMENT_AXIS_M)
    return [np.geomspace(lo, hi, n) for lo, hi, n in spec]


def point_input(base, peak_factor: float, longitudinal_factor: float, misalignment_m: float):
    """The full model's input at one point of the stand-in's domain."""
    lon = base.longitudinal_resistance_N_per_m
    return dataclasses.replace(
        base, peak_resistance_N_per_m=base.peak_resistance_N_per_m * peak_factor,
        limit_resistance_N_per_m=base.limit_resistance_N_per_m * peak_factor,
        longitudinal_resistance_N_per_m=None if lon is None else lon * longitudinal_factor,
        misalignment_m=float(misalignment_m))


def full_model(base, peak_factor: float, longitudinal_factor: float, misalignment_m: float,
               cap_K: float = CAP_K):
    """``(buckling_rise_K, upper_critical_rise_K, allowable_rise_K)`` of the full analysis at one
    point, each at most ``cap_K`` [K]; NaNs where the curve cannot be traced."""
    from trackplan.stability import StabilityError, analyse_stability

    try:
        r = analyse_stability(point_input(base, float(peak_factor), float(longitudinal_factor), misalignment_m))
    except StabilityError:
        return (np.nan, np.nan, np.nan)
    return tuple(min(cap_K, float(v)) for v in (r.buckling_rise_K, r.upper_critical_rise_K, r.allowable_rise_K))


def _solve_row(args):
    from trackplan.track import MAX_RISE_K

    base, pf, lf, mis = args
    return full_model(base, pf, lf, mis, cap_K=MAX_RISE_K)


def fine_grid(log_axes: list, log_values: np.ndarray):
    """Divide each interval of the grid into :data:`UPSAMPLE` parts, the values there from PCHIP
    interpolation along each axis in turn (tensor product; monotone between grid points, so no
    overshoot where the response has a kink). ``log_values`` has the outputs on its first axis.

    Returns ``(fine log axes, fine log values)``.
    """
    from scipy.interpolate import PchipInterpolator

    axes, V = [], np.asarray(log_values, dtype=float)
    for k, la in enumerate(log_axes):
        if la.size < 3:  # two points: PCHIP is the straight line the multilinear step draws anyway
            axes.append(la)
            continue
        fine = np.concatenate([np.linspace(la[i], la[i + 1], UPSAMPLE, endpoint=False) for i in range(la.size - 1)]
                              + [la[-1:]])
        V = PchipInterpolator(la, V, axis=k + 1)(fine)
        axes.append(fine)
    return axes, V


@dataclass
class Surrogate:
    """Gridded critical rises of one track family and their interpolation.

    Attributes
    ----------
    base : TrackStabilityInput
        The family's reference track (factors 1, default misalignment).
    axes : list of numpy.ndarray
        Grid axes: peak factor [-], longitudinal factor [-], misalignment [m].
    values : numpy.ndarray
        Shape ``(3, n_peak, n_long, n_mis)``: the :data:`OUTPUTS` at the grid points [K], as the
        analysis gives them (up to its limit of 200 K; :data:`CAP_K` is applied on interpolation).
    filled_points : int
        Grid points where the full analysis failed and a neighbour's value stands in.
    """

    base: object
    axes: list
    values: np.ndarray
    filled_points: int = 0
    measured_error: float | None = None  # largest relative error on random test points at build [%]
    measured_overstatement: float | None = None  # largest overstatement of the buckling rise there [%]
    fallback_calls: int = 0
    _memo: dict = field(default_factory=dict, repr=False)

    def _fine(self):
        """The finer grid the interpolation works on: ``(log axes, log values)`` (see :data:`UPSAMPLE`)."""
        if "_fine_grid" not in self.__dict__:
            self.__dict__["_fine_grid"] = fine_grid([np.log(a) for a in self.axes], np.log(self.values))
        return self.__dict__["_fine_grid"]

    def in_domain(self, peak_factor, longitudinal_factor, misalignment_m) -> np.ndarray:
        x = np.broadcast_arrays(peak_factor, longitudinal_factor, misalignment_m)
        ok = np.ones(x[0].shape, dtype=bool)
        for a, v in zip(self.axes, x):
            ok &= (v >= a[0] * (1 - 1e-12)) & (v <= a[-1] * (1 + 1e-12))
        return ok

    def interpolate(self, peak_factor, longitudinal_factor, misalignment_m, output: int = 0) -> np.ndarray:
        """The output at each point (inputs clipped to the grid), at most :data:`CAP_K` [K]:
        multilinear in the logarithms on the finer grid of :meth:`_fine`."""
        x = [np.log(np.asarray(v, dtype=float)) for v in np.broadcast_arrays(peak_factor, longitudinal_factor,
                                                                          misalignment_m)]
        shape = x[0].shape
        log_axes, log_values = self._fine()
        idx, w = [], []
        for la, v in zip(log_axes, x):
            v = np.clip(v.ravel(), la[0], la[-1])
            i = np.clip(np.searchsorted(la, v, side="right") - 1, 0, la.size - 2)
            idx.append(i)
            w.append((v - la[i]) / (la[i + 1] - la[i]))
        V = log_values[output]
        out = np.zeros(idx[0].size)
        for c0 in (0, 1):
            w0 = w[0] if c0 else 1 - w[0]
            for c1 in (0, 1):
                w1 = w[1] if c1 else 1 - w[1]
                for c2 in (0, 1):
                    w2 = w[2] if c2 else 1 - w[2]
                    out += w0 * w1 * w2 * V[idx[0] + c0, idx[1] + c1, idx[2] + c2]
        return np.minimum(CAP_K, np.exp(out)).reshape(shape)

    def __call__(self, peak_factor, longitudinal_factor, misalignment_m, output: int = 0) -> np.ndarray:
        """The output at each point: interpolated inside the grid, the full model outside it [K]."""
        pf, lf, mm = (np.asarray(v, dtype=float) for v in np.broadcast_arrays(peak_factor, longitudinal_factor,
                                                                             misalignment_m))
        out = self.interpolate(pf, lf, mm, output)
        outside = ~self.in_domain(pf, lf, mm)
        if outside.any():
            for k in np.flatnonzero(outside.ravel()):
                key = tuple(np.round(np.log([pf.flat[k], lf.flat[k], mm.flat[k]]) / 0.005).astype(int))
                if key not in self._memo:
                    p, l_, m = np.exp(np.array(key) * 0.005)
                    self.fallback_calls += 1
                    self._memo[key] = full_model(self.base, p, l_, m)
                v = self._memo[key][output]
                if np.isfinite(v):
                    out.flat[k] = v  # else: the interpolated value at the nearest grid edge stands
        return out


def build(base, axes=None, processes: int | None = None) -> Surrogate:
    """Solve the full analysis on the grid (in parallel processes where available) and fill failures."""
    import itertools

    base = family_input(base)
    axes = _axes() if axes is None else [np.asarray(a, dtype=float) for a in axes]
    pts = list(itertools.product(*axes))
    jobs = [(base, *p) for p in pts]
    rows = None
    if (processes or os.cpu_count() or 1) > 1 and len(jobs) >= 32:
        from trackplan.assess import _fork_context

        ctx = _fork_context()
        if ctx is not None:
            from concurrent.futures import ProcessPoolExecutor

            with ProcessPoolExecutor(max_workers=processes or min(os.cpu_count() or 1, 8), mp_context=ctx) as pool:
                rows = list(pool.map(_solve_row, jobs, chunksize=8))
    if rows is None:
        rows = [_solve_row(j) for j in jobs]
    vals = np.array(rows, dtype=float).T.reshape((len(OUTPUTS),) + tuple(a.size for a in axes))
    filled = 0
    bad = ~np.isfinite(vals[0]) | (vals[0] <= 0)
    if bad.all():
        from trackplan.stability import StabilityError

        raise StabilityError("the stability analysis failed at every point of the stand-in's grid", "risk stand-in")
    if bad.any():
        filled = int(bad.sum())
        # interpolated (in the logarithms) between the good values along the misalignment axis,
        # then along the peak axis, then the longitudinal axis (the end values held beyond them)
        for axis in (3, 1, 2):
            la = np.log(axes[axis - 1])
            for o in range(len(OUTPUTS)):
                v = np.moveaxis(vals[o], axis - 1, -1)
                for ix in np.ndindex(v.shape[:-1]):
                    line = v[ix]
                    good = np.isfinite(line) & (line > 0)
                    if good.any() and not good.all():
                        line[~good] = np.exp(np.interp(la[~good], la[good], np.log(line[good])))
    vals = np.where(np.isfinite(vals) & (vals > 0), vals, np.nan)
    return Surrogate(base=base, axes=axes, values=vals, filled_points=filled)


def load_or_build(inp, axes=None, folder: Path | None = None, test_points: int = 40) -> Surrogate:
    """The family's stand-in from the disk cache, built and saved if absent.

    When built, its error against the full model is measured on ``test_points`` random points of
    its domain (:func:`measure_error`) and kept with it (``measured_error``, largest error [%]).
    """
    base = family_input(inp)
    axes = _axes() if axes is None else [np.asarray(a, dtype=float) for a in axes]
    folder = Path(folder) if folder is not None else cache_dir()
    path = folder / f"{family_key(base, axes)}.npz"
    if path.exists():
        try:
            with np.load(path) as z:
                if str(z["version"]) == MODEL_VERSION:
                    err, over = float(z["error_pct"]), float(z["overstatement_pct"])
                    return Surrogate(base=base, axes=[z["a0"], z["a1"], z["a2"]], values=z["values"],
                                     filled_points=int(z["filled"]), measured_error=err if err >= 0 else None,
                                     measured_overstatement=over if over >= 0 else None)
        except (OSError, KeyError, ValueError):
            pass  # a damaged cache file is rebuilt
    s = build(base, axes)
    if test_points > 0:
        e = measure_error(s, test_points, seed=0)
        s.measured_error, s.measured_overstatement = e["max_error_pct"], e["max_overstatement_pct"]
    try:
        folder.mkdir(parents=True, exist_ok=True)
        tmp = path.with_suffix(f".{os.getpid()}.tmp.npz")
        np.savez(tmp, version=MODEL_VERSION, a0=s.axes[0], a1=s.axes[1], a2=s.axes[2], values=s.values,
                 filled=s.filled_points, error_pct=-1.0 if s.measured_error is None else s.measured_error,
                 overstatement_pct=-1.0 if s.measured_overstatement is None else s.measured_overstatement)
        os.replace(tmp, path)
    except OSError:
        pass  # an unwritable cache folder only costs the rebuild next time
    return s


def measure_error(s: Surrogate, n: int = 300, seed: int = 0, spreads: tuple | None = None) -> dict:
    """Relative error of the stand-in against the full model on ``n`` random points of its domain
    (uniform in the logarithms), or drawn as the Monte Carlo draws them when ``spreads`` (standard
    deviations of the logarithms of the three inputs) is given.

    Returns ``{"points", "max_error_pct", "p95_error_pct", "mean_error_pct", "failed", "worst",
    "max_error_below_80K_pct", "points_below_80K", "max_overstatement_pct", "share_within_2pct"}``
    for the buckling rise (the output the probability uses), and the largest errors of the upper
    critical rise and of the allowable rise (``upper_max_error_pct``, ``allowable_max_error_pct``;
    each output at most :data:`CAP_K` on both sides); ``worst`` lists the five worst points ``(peak_factor, longitudinal_factor,
    misalignment_m, full_K, surrogate_K)``; the ``below_80K`` figures are over the points whose full
    buckling rise is below 80 K (the rises daily rail temperatures can reach).
    """
    rng = np.random.default_rng(seed)
    lo = np.log([a[0] for a in s.axes])
    hi = np.log([a[-1] for a in s.axes])
    if spreads is None:  # uniform in the logarithms over the grid's domain
        X = np.exp(lo + (hi - lo) * rng.random((n, 3)))
    else:  # as the Monte Carlo draws them: (sd of log peak, sd of log longitudinal, sd of log misalignment)
        X = np.exp(np.array([0.0, 0.0, np.log(s.base.misalignment_m)])
                   + np.asarray(spreads) * rng.standard_normal((n, 3)))
    full3 = np.array([full_model(s.base, *x) for x in X]).reshape(len(X), len(OUTPUTS))
    full = full3[:, 0]
    sur = s(X[:, 0], X[:, 1], X[:, 2])  # as the Monte Carlo uses it (the full model outside the grid)
    ok = np.isfinite(full)

    def max_err(o):
        f, g = full3[ok, o], s(X[ok, 0], X[ok, 1], X[ok, 2], output=o)
        return float(np.max(np.abs(g - f) / f) * 100.0) if f.size else None
    signed = (sur[ok] - full[ok]) / full[ok] * 100.0
    err = np.abs(signed)
    order = np.argsort(-err)[:5]
    Xo, fo, so = X[ok], full[ok], sur[ok]
    low = fo < 80.0
    return {"points": int(ok.sum()), "failed": int((~ok).sum()), "max_error_pct": float(err.max()),
            "p95_error_pct": float(np.percentile(err, 95)), "mean_error_pct": float(err.mean()),
            "max_overstatement_pct": float(max(0.0, signed.max())),
            "share_within_2pct": float(np.mean(err <= 2.0)),
            "max_error_below_80K_pct": float(err[low].max()) if low.any() else None,
            "points_below_80K": int(low.sum()),
            "upper_max_error_pct": max_err(1), "allowable_max_error_pct": max_err(2),
            "worst": [(float(Xo[i, 0]), float(Xo[i, 1]), float(Xo[i, 2]), float(fo[i]), float(so[i])) for i in order]}
