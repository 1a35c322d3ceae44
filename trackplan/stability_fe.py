"""Finite-element model and path following of the lateral stability analysis.

The equations, discretisation and path-following method are described in
:mod:`trackplan.stability`; this module holds the numerics: constitutive laws, closed forms,
Hermite beam elements, assembly of residual and banded tangent, Newton iterations with
switching displacement control, and the trace of the equilibrium path.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from trackplan.errors import InputError
from trackplan.track import (
    DISPLACEMENT_LIMIT_M, MAX_DISPLACEMENT_M, MAX_RISE_K, SNAP_THRESHOLD_K, StabilityError, TrackStabilityInput,
    ELEMENT_LENGTH_M, HALF_LENGTH_M,
)

# ----------------------------------------------------------------------------------------------
# Constitutive laws and closed forms
# ----------------------------------------------------------------------------------------------

def lateral_resistance(w_m, peak_N_per_m, limit_N_per_m, peak_displacement_m: float,
                       limit_displacement_m: float = 0.1):
    """Lateral resistance of the ballast per metre of track and its tangent (piecewise linear).

    Parameters
    ----------
    w_m : float or array
        Lateral displacement from the stress-free position [m].
    peak_N_per_m, limit_N_per_m : float or array
        Peak and limit resistance [N/m] (arrays broadcast with ``w_m``: resistance varying along
        the track under vehicle loading).
    peak_displacement_m : float
        Displacement at the peak [m].
    limit_displacement_m : float
        Displacement at which the resistance has fallen to the limit [m].

    Returns
    -------
    (F, dF) : arrays
        Resistance [N/m] (odd in ``w``) and its derivative ``dF/dw`` [N/m**2].

    Notes
    -----
    With ``a = |w|`` (corners rounded over 20 % of the segment before them, :data:`CORNER`)::

        F = F_p a / w_p                                     a <= w_p
        F = F_p - (F_p - F_L) (a - w_p) / (w_L - w_p)       w_p < a <= w_L
        F = F_L                                             a > w_L

    the characteristic of the published track-buckling analyses: a linear rise to the peak,
    linear softening to the limit, constant beyond (Kish and Samavedam, 2013, lateral resistance
    characteristic of the buckling model; Esveld, 2001, ch. 7). Its initial stiffness is
    ``F_p / w_p``.
    """
    w = np.asarray(w_m, dtype=float)
    a = np.abs(w)
    Fp = np.asarray(peak_N_per_m, dtype=float)
    FL = np.asarray(limit_N_per_m, dtype=float)
    wp, wl = peak_displacement_m, limit_displacement_m
    m1 = Fp / wp
    m2 = -(Fp - FL) / (wl - wp)
    r1, d1 = _ramp(a - wp, CORNER * wp)
    r2, d2 = _ramp(a - wl, CORNER * (wl - wp))
    F = m1 * a + (m2 - m1) * r1 - m2 * r2
    dF = m1 + (m2 - m1) * d1 - m2 * d2
    return np.sign(w) * F, dF * np.ones_like(w)


#: Half-width of the rounding of the two corners of the lateral law, as a fraction of the
#: segment before each corner: the Newton iterations need a continuous tangent. The peak is
#: lowered by ``(m1 - m2) CORNER w_p / 4`` (about 5 % of ``F_p``), on the safe side.
CORNER = 0.2


def _ramp(t, d):
    """``max(0, t)`` with its corner rounded by a parabola over ``|t| < d``; and its slope."""
    inner = np.abs(t) < d
    r = np.where(t >= d, t, np.where(inner, (t + d) ** 2 / (4 * d), 0.0))
    dr = np.where(t >= d, 1.0, np.where(inner, (t + d) / (2 * d), 0.0))
    return r, dr


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


def gauss_point_resistances(inp: TrackStabilityInput, x_start_m: np.ndarray, h: float):
    """Peak and limit lateral resistance [N/m] at the Gauss points of elements starting at
    ``x_start_m`` [m] of length ``h`` [m]: uniform, or varying along the track under the load case."""
    from trackplan import loading

    xg = x_start_m[:, None] + (_GP[None, :] + 1.0) * h / 2.0
    return (loading.resistance_along(xg, inp.peak_resistance_N_per_m, inp.loading),
            loading.resistance_along(xg, inp.limit_resistance_N_per_m, inp.loading))


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
        if self.lat_k is None:
            self.Fp_g, self.FL_g = gauss_point_resistances(inp, x[:-1], h)
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
        return lateral_resistance(w, self.Fp_g, self.FL_g, inp.peak_displacement_m, inp.limit_displacement_m)

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


def _lost(path, message: str) -> StabilityError:
    """The error of a path that could not be followed further, carrying the part traced
    (``partial_path``: the rises reached bound the upper critical rise from below)."""
    exc = StabilityError(message, "stability analysis")
    exc.partial_path = path
    return exc


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
    wmin_after = 0.0  # largest displacement at the lowest rise after the peak [m]
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
                raise _lost(path, f"the equilibrium path could not be followed beyond a rise of {T_prev:.1f} K "
                                  f"and a lateral displacement of {path.disp[-1] * 1e3:.1f} mm (no converged state); "
                                  "check the parameters")
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
            raise _lost(path, f"the equilibrium path turns back at a rise of {T_prev:.1f} K and a lateral "
                              f"displacement of {path.disp[-1] * 1e3:.1f} mm before a lower critical rise was found; "
                              "check the parameters")
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
                Tmin_after, wmin_after = Tn, wmax
            Tmax = max(Tmax, Tn)
        else:
            if Tn < Tmin_after:
                Tmin_after, wmin_after = Tn, wmax
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
        # past the trough: risen clearly above it, and well beyond its displacement (a small bump
        # on a long, steep descent from a high peak is not the trough: the path goes on falling)
        if (trough_seen and Tn > Tmin_after + max(1.0, 0.05 * (Tmax - Tmin_after)) and wmax > 2 * DISPLACEMENT_LIMIT_M
                and wmax > 1.5 * wmin_after):
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
    (``k`` for a Winkler foundation, ``F_p / w_p`` for the peak/limit law, along the track). For a linear
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
    Ng = _hermite(_GP, h)
    if inp.lateral_stiffness_N_per_m2 is not None:
        k0 = np.full((ne, len(_GP)), inp.lateral_stiffness_N_per_m2)
    else:
        k0 = gauss_point_resistances(inp, np.arange(ne) * h, h)[0] / inp.peak_displacement_m
    kf = np.einsum("eg,g,gi,gj->eij", k0, _GW * h / 2, Ng, Ng)
    kb, kg = _bending_matrix(inp.EI_lateral_Nm2, h), _geometric_matrix(h)
    A = np.zeros((nd, nd))
    B = np.zeros((nd, nd))
    for e in range(ne):
        s = slice(2 * e, 2 * e + 4)
        A[s, s] += kb + kf[e] + inp.torsional_resistance_N * kg
        B[s, s] += kg
    keep = [i for i in range(nd) if i not in (1, nd - 1)]  # slopes zero at the centre and the far end
    A, B = A[np.ix_(keep, keep)], B[np.ix_(keep, keep)]
    mu = eigh(B, A, eigvals_only=True)  # mu = 1 / P
    P = 1.0 / mu.max()
    return float(P / (inp.EA_N * inp.alpha_per_K))




# ----------------------------------------------------------------------------------------------
# The buckled branch of strong track, followed back from a larger misalignment
# ----------------------------------------------------------------------------------------------

#: Misalignments [m] tried first, in order, to reach the buckled branch of a track whose own path
#: shows no peak below the analysis limit (the first that shows a snap-through is used); then
#: misalignments from 1.5 times the given one upward (weak track snaps through only with small ones).
BRANCH_START_MISALIGNMENTS_M = (0.05, 0.1, 0.2)
#: Largest step of the misalignment along the continuation, as a change of its logarithm [-].
BRANCH_LOG_STEP = 0.2
#: Largest relative fall of the trough in one step toward a smaller misalignment [-]: the lower
#: critical rise grows (slowly) as the misalignment shrinks, so a trough that falls by more than
#: this has left the branch (seen on weak curved track, where it fell toward zero).
BRANCH_MAX_FALL = 0.02


def _solve_at_centre(M: _Model, q: np.ndarray, T: float, u: float):
    """Equilibrium with the centre's lateral displacement prescribed to ``u`` [m]; ``(q, T)`` or None."""
    qg = q.copy()
    qg[0] = u
    res = _newton(M, qg, T, 0, maxit=30)
    return None if res is None else (res[0], res[1])


def _local_trough(M: _Model, q: np.ndarray, T: float, u: float, rel: float = 0.12, max_shift: int = 16):
    """The lowest rise of the buckled branch near centre displacement ``u`` [m].

    The branch is followed with the centre's displacement prescribed (the rise free), downhill
    in steps of ``rel u`` until the rise grows on both sides; a parabola through the bracket, then
    through a bracket a quarter as wide around its vertex, gives the trough. Where the branch
    cannot be followed further with the centre's displacement (it folds back in that
    displacement), the last state reached bounds the bracket. Returns ``(q, T, u)`` of the lowest
    equilibrium solved (the rise is always that of a solved state), or None.
    """
    pts: dict[float, tuple] = {}

    def reach(v, state, depth=0):
        """Solve at ``v`` from ``state``, through intermediate displacements if Newton needs them."""
        r = _solve_at_centre(M, state[0], state[1], v)
        if r is None and depth < 3:
            mid = reach(0.5 * (state[0][0] + v), state, depth + 1)
            r = None if mid is None else reach(v, mid, depth + 1)
        return r

    def at(v, near):
        """Rise at centre displacement ``v`` (solved from the state at ``near``); inf where the
        branch cannot be reached (a wall of the bracket)."""
        if v <= 0:
            return math.inf
        if v not in pts:
            r = reach(v, pts[near])
            if r is None:
                return math.inf
            pts[v] = r
        return pts[v][1]

    r = _solve_at_centre(M, q, T, u)
    if r is None:
        return None
    pts[u] = r
    b = u
    for width in (rel * u, rel * u / 4):
        a, c = b - width, b + width
        Ta, Tb, Tc = at(a, b), pts[b][1], at(c, b)
        for _ in range(max_shift):
            if Tb <= Ta and Tb <= Tc:
                break
            if Ta < Tb:
                c, Tc, b, Tb = b, Tb, a, Ta
                a = b - width
                Ta = at(a, b)
            else:
                a, Ta, b, Tb = b, Tb, c, Tc
                c = b + width
                Tc = at(c, b)
        else:
            return None
        den = Ta - 2.0 * Tb + Tc
        if math.isfinite(den) and den > 0:
            v = b + 0.5 * width * (Ta - Tc) / den
            if math.isfinite(at(v, b)) and pts[v][1] < Tb:
                b = v
    best = min(pts, key=lambda v: pts[v][1])
    qb, Tb = pts[best]
    return qb, Tb, best


def _start_candidates(target_m: float) -> list:
    """Misalignments [m] through which the buckled branch is sought for ``target_m``, in order:
    :data:`BRANCH_START_MISALIGNMENTS_M`, then 1.5, 3, 6... times ``target_m`` (below the first of
    those), every one above ``target_m``. The order depends on ``target_m`` only, so the start
    (and the result) does not depend on what was computed before."""
    small = [target_m * 1.5 * 2.0**k for k in range(8)]
    cands = list(BRANCH_START_MISALIGNMENTS_M) + [d for d in small if d < BRANCH_START_MISALIGNMENTS_M[0]]
    return [d for d in cands if d > target_m]


def _start_state(inp: TrackStabilityInput, d: float, element_m: float, half_m: float):
    """The trough ``(q, T)`` of the path traced with misalignment ``d`` [m] if it snaps through below
    the analysis limit (a state on the buckled branch), else None."""
    try:
        path = _trace(_Model(inp, d, element_m, half_m))
    except StabilityError:
        return None
    T = np.asarray(path.rise)
    i_peak = next((i for i in range(1, len(T) - 1) if T[i] >= T[i - 1] and T[i + 1] < T[i]), None)
    if i_peak is None:
        return None
    j = i_peak + int(np.argmin(T[i_peak:]))
    if j >= len(T) - 1 or T[i_peak] - T[j] < SNAP_THRESHOLD_K:
        return None
    q, Tj = path.states[j]
    return (q, float(Tj)) if q[0] > 0 else None


def trough_by_continuation(inp: TrackStabilityInput, misalignment_m: float, element_m: float = ELEMENT_LENGTH_M,
                           half_length_m: float = HALF_LENGTH_M):
    """Lower critical rise of a track whose own equilibrium path peaks beyond the analysis limit.

    The buckled branch is reached through a larger misalignment (:func:`_start_candidates`, the
    first whose path snaps through: :func:`_start_state`) and
    followed back to ``misalignment_m`` in steps of at most :data:`BRANCH_LOG_STEP` in its
    logarithm (shorter where a step loses the branch), the trough found again at each step
    (:func:`_local_trough`). The trough moves
    continuously with the misalignment, so the lower critical rise does too (no jump where the
    peak of the path crosses the analysis limit).

    Returns
    -------
    (lower_K, displacement_m, start_m) or None
        Lower critical rise [K], centre displacement at the trough [m] and the misalignment the
        branch was reached with [m]; None when no start was found or the branch was lost.

    References
    ----------
    Allgower, E. L. and Georg, K. (1990). *Numerical Continuation Methods*. Springer (natural
    parameter continuation); Kerr, A. D. (1978), lower buckling temperature as the minimum of the
    post-buckling branch.
    """
    import dataclasses

    track = dataclasses.replace(inp, misalignment_m=0.0)
    for d_s in _start_candidates(misalignment_m):
        key = (track, round(d_s, 12), float(element_m), float(half_length_m))
        ladder = _BRANCHES.get(key)
        if ladder is None:  # this start has not been tried for this track yet
            start = _start_state(inp, d_s, element_m, half_length_m)
            ladder = False if start is None else [(start[0], start[1], float(start[0][0]))]
            if len(_BRANCHES) >= _BRANCHES_MAX:
                _BRANCHES.pop(next(iter(_BRANCHES)))
            _BRANCHES[key] = ladder
        if ladder is False:
            continue
        # the branch is followed along a fixed ladder of misalignments d_s exp(-k BRANCH_LOG_STEP)
        # (kept, so that each branch is followed once, whatever the order of the calls) and from
        # the rung just above the given misalignment to it
        k = int(math.floor(math.log(d_s / misalignment_m) / BRANCH_LOG_STEP + 1e-9))
        while len(ladder) <= k and ladder[-1] is not None:
            i = len(ladder)
            ladder.append(_advance(inp, ladder[-1], d_s * math.exp(-(i - 1) * BRANCH_LOG_STEP),
                                   d_s * math.exp(-i * BRANCH_LOG_STEP), element_m, half_length_m))
        state = ladder[k] if k < len(ladder) else None
        d_k = d_s * math.exp(-k * BRANCH_LOG_STEP)
        if state is not None and misalignment_m < d_k * (1 - 1e-12):
            state = _advance(inp, state, d_k, misalignment_m, element_m, half_length_m)
        if state is not None and 0.0 < state[1] < MAX_RISE_K:
            return float(state[1]), float(state[2]), float(d_s)
    return None


#: The buckled branches followed so far in this process, by track (its misalignment set to 0),
#: start misalignment, element and half-length: the troughs on the ladder of misalignments (False
#: where that start does not snap through). At most :data:`_BRANCHES_MAX` entries are kept.
_BRANCHES: dict = {}
_BRANCHES_MAX = 512


def _advance(inp: TrackStabilityInput, state: tuple, d_from: float, d_to: float, element_m: float,
             half_length_m: float):
    """Follow the trough ``state = (q, T, u)`` of the buckled branch from misalignment ``d_from``
    to ``d_to`` [m] (shorter steps where one loses the branch); the new state or None."""
    q, T, u = state
    d, step = d_from, BRANCH_LOG_STEP
    while d > d_to * (1 + 1e-12):
        d_next = max(d_to, d * math.exp(-step))
        r = _local_trough(_Model(inp, float(d_next), element_m, half_length_m), q, T, u)
        if r is not None and r[1] < (1.0 - BRANCH_MAX_FALL) * T:
            r = None  # the lower critical rise grows as the misalignment shrinks: a fall is another branch
        if r is None:
            step /= 2.0
            if step < BRANCH_LOG_STEP / 16:
                return None
            continue
        (q, T, u), d = r, d_next
        step = min(BRANCH_LOG_STEP, step * 1.5)
    return q, T, u
