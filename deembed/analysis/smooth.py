"""Findings that noise cannot move: the sweep's noise from the data, and a smooth local model near each event.

Two steps, both pure numpy:

1. **Noise from the data** (:func:`noise_rms`). The difference-based residual-variance estimator of
   Gasser, Sroka and Jennen-Steinmetz: each interior point is compared with the straight line through its
   two neighbours. A smooth curve leaves almost nothing; independent noise leaves a pseudo-residual of known
   variance. The median (not the mean) of the squared pseudo-residuals is used so that the few points where
   the trace itself bends sharply (a resonance on a coarse grid) do not count as noise.

2. **Events from a local model** (:func:`find_events`, :class:`EventSet`). Each event (a reactance zero, the
   SWR minimum, an SWR-span edge) is first located on a lightly smoothed trace, then placed by a local
   least-squares polynomial fitted to the raw samples around it: the method of Savitzky and Golay (local
   polynomial regression), applied to the normalised impedance z = Z/Z0 near events where the
   impedance is low, or to the normalised admittance y = 1/z where it is high. Near a series resonance Z is
   almost linear in frequency (R nearly constant, X rising through zero) and near a parallel one Y is,
   so a cubic fits either over a window many samples wide and averages the noise of every sample in it.
   The points are weighted by the inverse variance of their noise after the change of variable. The
   window is the widest (up to :data:`MAX_HALF_WINDOW_FRACTION` of the frequency) whose fit leaves
   residuals consistent with the noise (reduced chi-square test); the two domains are both tried and the
   better kept. The windows and domains are chosen once, on the measured trace, and then held fixed, so
   that the same linear projection serves any batch of perturbed traces (the Monte Carlo draws of
   :mod:`deembed.analysis.uncertainty`) in one matrix product.

Everything derived (the frequency where X = 0, the lowest SWR and its frequency, where the SWR crosses a
threshold, Yaghjian-Best Q from the fitted impedance and its derivative) comes from the fitted polynomial
evaluated on a fine grid inside the window: never from a single sample.

References
----------
A. Savitzky and M. J. E. Golay, "Smoothing and differentiation of data by simplified least squares
procedures," Anal. Chem. 36(8):1627-1639, 1964, doi:10.1021/ac60214a047.
T. Gasser, L. Sroka and C. Jennen-Steinmetz, "Residual variance and residual pattern in nonlinear
regression," Biometrika 73(3):625-633, 1986, doi:10.1093/biomet/73.3.625 (pseudo-residuals for unequal
spacing).
A. D. Yaghjian and S. R. Best, "Impedance, bandwidth, and Q of antennas," IEEE Trans. Antennas Propag.
53(4):1298-1324, 2005, doi:10.1109/TAP.2005.844443 (Q from Z and dZ/dw; formula quoted from memory).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from ..physics.line_draws import Scratch

Z_REF_OHM = 50.0

DEGREE = 3
"""Degree of the local polynomial."""

MIN_WINDOW_POINTS = 7
"""Fewest samples in a local fit (a cubic needs 4; 7 leaves 3 degrees of freedom for the residual test)."""

MAX_WINDOW_POINTS = 401
"""Most samples used in one local fit; denser windows are thinned evenly (a 10^6-point sweep stays fast)."""

MAX_HALF_WINDOW_FRACTION = 0.03
"""Widest half-window tried, as a fraction of the event's frequency. Our choice: a resonant antenna's
impedance is close to a low-order polynomial over a few per cent of its frequency (series RLC: the
curvature of X is of order (df/f)^2)."""

WINDOW_SHRINK = 0.7
"""Ratio between successive half-windows tried."""

FINE_POINTS = 61
"""Points of the fine grid on which the fitted model is searched inside a window."""

CHI2_SLACK = 1.5
"""A window is accepted when the reduced chi-square of its fit is below CHI2_SLACK + 3 sqrt(2/dof) (three
standard deviations of the chi-square statistic above its mean, plus room for the noise estimate's own
error of 10-20 %). Our choice."""

NOISE_FLOOR = 1e-6
"""Smallest noise (in Gamma) assumed when a trace is noise-free (synthetic data)."""

MERGE_STEPS = 4
"""Events of the same kind closer than this many sweep steps on the detection trace are one event
(the same rule as the per-sample findings; common practice, no source)."""

RESOLVED_GAMMA_LIMIT = 0.99
"""A reactance zero where |Gamma| is at or above this is not a resolved resonance (the chart point sits at
the open or the short circuit)."""


# ------------------------------------------------------------------------------------------------- noise

def pseudo_residuals(freq_hz, values):
    """Gasser-Sroka-Jennen-Steinmetz pseudo-residuals of a sampled curve, scaled to unit noise gain.

    Parameters
    ----------
    freq_hz : ndarray (n,)
        Strictly increasing frequencies, Hz.
    values : ndarray (n,)
        Samples (complex or real).

    Returns
    -------
    ndarray (n - 2,)
        e_i = (a_i v_{i-1} + b_i v_{i+1} - v_i) / sqrt(a_i^2 + b_i^2 + 1) for interior points, with
        a_i = (f_{i+1} - f_i)/(f_{i+1} - f_{i-1}) and b_i = (f_i - f_{i-1})/(f_{i+1} - f_{i-1}): for
        independent noise of variance s^2 each has variance s^2; a straight line gives 0.
    """
    f = np.asarray(freq_hz, dtype=float)
    v = np.asarray(values)
    if f.size < 3:
        return np.zeros(0, dtype=v.dtype)
    span = f[2:] - f[:-2]
    a = (f[2:] - f[1:-1]) / span
    b = (f[1:-1] - f[:-2]) / span
    return (a * v[:-2] + b * v[2:] - v[1:-1]) / np.sqrt(a * a + b * b + 1)


def noise_rms(freq_hz, gamma, *, gain=None) -> float:
    """RMS noise of a complex reflection sweep, estimated from the sweep itself.

    Parameters
    ----------
    freq_hz : ndarray (n,)
        Strictly increasing frequencies, Hz.
    gamma : ndarray (n,), complex
        The sweep (or a de-embedded version of it).
    gain : ndarray (n,), optional
        Per-point factor that refers the noise to another plane: the estimate is of ``gain * noise``.
        Used to estimate the analyzer-end noise from the smoother feedpoint trace
        (``gain = |dGamma_analyzer / dGamma_feedpoint|``).

    Returns
    -------
    float
        s with E|n|^2 = s^2 (the complex RMS; each of the real and imaginary parts has s / sqrt 2). 0 for
        fewer than 5 finite points.

    Notes
    -----
    Pseudo-residuals e_i (:func:`pseudo_residuals`, Gasser et al. 1986) of complex Gaussian noise have
    |e_i|^2 exponentially distributed with mean s^2, so median(|e_i|^2) = s^2 ln 2.
    """
    f = np.asarray(freq_hz, dtype=float)
    g = np.asarray(gamma, dtype=complex)
    ok = np.isfinite(g)
    if gain is not None:
        gain = np.asarray(gain, dtype=float)
        ok &= np.isfinite(gain)
    f, g = f[ok], g[ok]
    if f.size < 5:
        return 0.0
    e = pseudo_residuals(f, g)
    if gain is not None:
        e = e * gain[ok][1:-1]
    return float(math.sqrt(np.median(np.abs(e) ** 2) / math.log(2)))


# ------------------------------------------------------------------------------------------- local model

def _to_domain(gamma, domain: str):
    """Normalised impedance z = (1 + G)/(1 - G) or admittance y = (1 - G)/(1 + G)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        if domain == "z":
            return (1 + gamma) / (1 - gamma)
        return (1 - gamma) / (1 + gamma)


def _from_domain(w, domain: str):
    """Gamma from a normalised impedance (domain "z") or admittance ("y")."""
    with np.errstate(divide="ignore", invalid="ignore"):
        if domain == "z":
            return (w - 1) / (w + 1)
        return (1 - w) / (1 + w)


def _domain_gain(gamma, domain: str):
    """|dw/dGamma| for the change of variable (noise in w = gain * noise in Gamma)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        if domain == "z":
            return 2 / np.abs(1 - gamma) ** 2
        return 2 / np.abs(1 + gamma) ** 2


@dataclass(frozen=True)
class LocalModel:
    """A weighted least-squares polynomial on a window of the sweep, in z or y.

    Attributes
    ----------
    idx : ndarray of int
        Sweep indices used (in increasing order; possibly thinned).
    fc_hz, h_hz : float
        Centre and half-width of the window; the polynomial variable is u = (f - fc)/h.
    domain : str
        "z" (normalised impedance) or "y" (normalised admittance).
    proj : ndarray (DEGREE + 1, len(idx))
        Weighted least-squares projector: coefficients = w[idx] @ proj.T (lowest power first).
    u_lo, u_hi : float
        The data's range of u inside the window (searches stay inside it).
    at_sweep_lo, at_sweep_hi : bool
        Whether the window reaches the sweep's first / last sample.
    chi2 : float
        Reduced chi-square of the fit on the measured trace.
    """

    idx: np.ndarray
    fc_hz: float
    h_hz: float
    domain: str
    proj: np.ndarray
    u_lo: float
    u_hi: float
    at_sweep_lo: bool
    at_sweep_hi: bool
    chi2: float

    def coefficients(self, gamma_sub):
        """Polynomial coefficients (..., DEGREE + 1) from Gamma on this window's samples (..., len(idx))."""
        return _rmat(_to_domain(gamma_sub, self.domain), self.proj.T)

    def fine_u(self, n: int = FINE_POINTS):
        """The fine grid of u on which the fitted model is searched (the default grid is cached)."""
        return self.fine if n == FINE_POINTS else np.linspace(self.u_lo, self.u_hi, n)

    @cached_property
    def fine(self) -> np.ndarray:
        """The default fine grid (:data:`FINE_POINTS` values of u from ``u_lo`` to ``u_hi``), made once."""
        return np.linspace(self.u_lo, self.u_hi, FINE_POINTS)

    @cached_property
    def fine_vt(self) -> np.ndarray:
        """Transposed Vandermonde matrix (DEGREE + 1, FINE_POINTS) of :attr:`fine`: coefficients @ fine_vt
        gives the model on the fine grid. Made once per model."""
        return np.ascontiguousarray(_vander(self.fine).T)

    def freq(self, u):
        return self.fc_hz + np.asarray(u) * self.h_hz


def _vander(u, deg=DEGREE):
    return np.vander(np.asarray(u, dtype=float), deg + 1, increasing=True)


def _rmat(a, m):
    """a @ m for complex a and real m, as two real products (mixed-type matmul is not done by BLAS)."""
    m = np.ascontiguousarray(m)
    if np.iscomplexobj(a):
        out = np.empty(a.shape[:-1] + (m.shape[-1],), dtype=complex)
        out.real = np.ascontiguousarray(a.real) @ m
        out.imag = np.ascontiguousarray(a.imag) @ m
        return out
    return a @ m


def _fit(freq, gamma, sigma, idx, fc, h, domain):
    """Weighted LS fit on idx; returns (LocalModel, reduced chi-square in Gamma)."""
    u = (freq[idx] - fc) / h
    g = gamma[idx]
    w_data = _to_domain(g, domain)
    wt = 1.0 / (sigma[idx] * _domain_gain(g, domain))       # 1 / std of the noise in w
    ok = np.isfinite(w_data) & np.isfinite(wt)
    if ok.sum() < MIN_WINDOW_POINTS:
        return None, math.inf
    v = _vander(u)
    a = v * wt[:, None]
    a[~ok] = 0.0
    pinv = np.linalg.pinv(a)                                  # (p, n)
    proj = pinv * wt[None, :]
    proj[:, ~ok] = 0.0
    coef = _rmat(np.where(ok, w_data, 0), proj.T)
    fitted = _from_domain(_rmat(coef, v.T), domain)
    r = (g - fitted) / sigma[idx]
    dof = max(int(ok.sum()) - (DEGREE + 1), 1)
    chi2 = float(np.sum(np.abs(r[ok]) ** 2) / dof)          # complex residual: E|r|^2 = 1 per point
    model = LocalModel(idx, float(fc), float(h), domain, proj, float(u.min()), float(u.max()),
                       bool(idx[0] == 0), bool(idx[-1] == freq.size - 1), chi2)
    return model, chi2


def _window_idx(freq, fc, h):
    lo = int(np.searchsorted(freq, fc - h, side="left"))
    hi = int(np.searchsorted(freq, fc + h, side="right"))
    idx = np.arange(lo, hi)
    if idx.size > MAX_WINDOW_POINTS:
        idx = np.unique(np.round(np.linspace(lo, hi - 1, MAX_WINDOW_POINTS)).astype(int))
    return idx


def local_model(freq_hz, gamma, sigma, f_event_hz, *, domains=("z", "y")) -> LocalModel | None:
    """The widest well-fitting local model around ``f_event_hz`` (see the module notes).

    Parameters
    ----------
    freq_hz : ndarray (n,)
    gamma : ndarray (n,) complex
    sigma : ndarray (n,)
        Noise RMS (complex) of each sample of ``gamma``; must be > 0.
    f_event_hz : float
        Where the event was detected.

    Returns
    -------
    LocalModel or None
        None when fewer than :data:`MIN_WINDOW_POINTS` samples are usable around the event.
    """
    f = freq_hz
    fe = float(f_event_hz)
    step = float(np.median(np.diff(f))) if f.size > 1 else 0.0
    h = max(MAX_HALF_WINDOW_FRACTION * abs(fe), 4 * step)
    best_any = None
    while True:
        idx = _window_idx(f, fe, h)
        if idx.size < MIN_WINDOW_POINTS:
            # widen to the nearest MIN_WINDOW_POINTS samples
            k = int(np.clip(np.searchsorted(f, fe), 0, f.size - 1))
            lo = max(0, min(k - MIN_WINDOW_POINTS // 2, f.size - MIN_WINDOW_POINTS))
            idx = np.arange(lo, min(lo + MIN_WINDOW_POINTS, f.size))
            if idx.size < MIN_WINDOW_POINTS:
                return best_any
            h_eff = max(fe - f[idx[0]], f[idx[-1]] - fe, step)
            fits = [_fit(f, gamma, sigma, idx, fe, h_eff, d) for d in domains]
            fits = [m for m in fits if m[0] is not None]
            if not fits:
                return best_any
            return min(fits, key=lambda m: m[1])[0]
        fits = [_fit(f, gamma, sigma, idx, fe, h, d) for d in domains]
        fits = [m for m in fits if m[0] is not None]
        if fits:
            model, chi2 = min(fits, key=lambda m: m[1])
            dof = max(idx.size - (DEGREE + 1), 1)
            if chi2 <= CHI2_SLACK + 3 * math.sqrt(2 / dof):
                return model
            if best_any is None or chi2 < best_any.chi2:
                best_any = model
        h *= WINDOW_SHRINK


# --------------------------------------------------------------------------------------- fine-grid search

def _rising_nearest(u, vals, u0):
    """Where each row of vals (E, D, K) rises through 0, nearest u0 (E,), on the grids u (E, K).

    A rise is a < 0 <= b between neighbours, placed by linear interpolation; of several, the nearest to u0
    (the first on a tie). A falling crossing is found by passing -vals. Returns (E, D) of u, NaN where a row
    has no such crossing. Only the crossings themselves are interpolated (they are few)."""
    hit = vals[..., :-1] < 0
    hit &= vals[..., 1:] >= 0
    e, d, k = np.nonzero(hit)
    n_e, n_d = vals.shape[0], vals.shape[1]
    out = np.full((n_e, n_d), np.nan)
    if e.size == 0:
        return out
    a = vals[e, d, k]
    b = vals[e, d, k + 1]
    t = a / (a - b)
    lo = u[e, k]
    t *= u[e, k + 1] - lo
    t += lo
    dist = np.abs(t - u0[e])
    grp = e * n_d + d                                   # in increasing order (C order of nonzero)
    starts = np.flatnonzero(np.r_[True, grp[1:] != grp[:-1]])
    nearest = np.repeat(np.minimum.reduceat(dist, starts), np.diff(np.r_[starts, grp.size]))
    first = np.flatnonzero(dist == nearest)
    first = first[np.r_[True, grp[first][1:] != grp[first][:-1]]]
    out.reshape(-1)[grp[first]] = t[first]
    return out


def _p2(w_re, w_im):
    """|Gamma|^2 from a normalised immittance w: |w - 1|^2 / |w + 1|^2, the same for z and for y."""
    sq = w_im * w_im
    a = w_re - 1
    a *= a
    a += sq
    b = w_re + 1
    b *= b
    b += sq
    with np.errstate(divide="ignore", invalid="ignore"):
        a /= b
    return a


def _minimum(u, p2, open_lo: bool, open_hi: bool):
    """Minimum of each row of p2 (D, k) (|Gamma|^2 on the fine grid), parabola-refined.

    Returns (u_min, p2_min), NaN where the minimum sits on a window end that is not the sweep's end
    (``open_lo``/``open_hi`` true mean the window end is the sweep's end, where a minimum may sit)."""
    k = np.argmin(p2, axis=1)
    rows = np.arange(p2.shape[0])
    n = u.size
    km = np.clip(k, 1, n - 2)
    y0, y1, y2 = p2[rows, km - 1], p2[rows, km], p2[rows, km + 1]
    du = u[1] - u[0]
    den = y0 - 2 * y1 + y2
    with np.errstate(divide="ignore", invalid="ignore"):
        off = np.where(den > 0, 0.5 * (y0 - y2) / den, 0.0)
    off = np.clip(off, -1, 1)
    interior = (k > 0) & (k < n - 1)
    u_min = np.where(interior, u[km] + off * du, u[k])
    p_min = np.where(interior, y1 - 0.25 * (y0 - y2) * off, p2[rows, k])
    bad = ((k == 0) & ~open_lo) | ((k == n - 1) & ~open_hi)
    return np.where(bad, np.nan, u_min), np.where(bad, np.nan, np.maximum(p_min, 0.0))


def _swr_from_p2(p2):
    m = np.sqrt(p2)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(m < 1, (1 + m) / (1 - m), np.inf)


SENSITIVITY_STEP = 1e-6
"""Step in Gamma of the central differences of :meth:`EventSet.sensitivity` (the test of the first-order
propagation uses the same step; common practice, no source)."""


def _z_parts(g, out, scratch: Scratch | None = None, sign: float = 1.0):
    """Real and imaginary parts of z = (1 + s g)/(1 - s g), s = ``sign`` (+1 or -1), into ``out`` (2, ...),
    non-finite values set to 0 (s = -1 gives y = (1 - g)/(1 + g)).

    (1 + g)/(1 - g) = ((1 - a)(1 + a) - b^2 + 2jb) / ((1 - a)^2 + b^2) for g = a + jb."""
    sc = scratch if scratch is not None else Scratch()
    a, b = g.real, g.imag
    zr, zi = out[0], out[1]
    one_m = sc.get("zp_one_m", a.shape)
    if sign > 0:
        np.subtract(1.0, a, out=one_m)            # 1 - s a
        np.add(a, 1.0, out=zr)                    # 1 + s a
    else:
        np.add(a, 1.0, out=one_m)
        np.subtract(1.0, a, out=zr)
    den = np.multiply(one_m, one_m, out=sc.get("zp_den", a.shape))
    bb = np.multiply(b, b, out=sc.get("zp_bb", a.shape))
    den += bb
    zr *= one_m
    zr -= bb
    np.multiply(b, 2.0 * sign, out=zi)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        np.divide(1.0, den, out=den)
        zr *= den
        zi *= den
    if not (den.size == 0 or den.max() < 1e300):   # NaN, infinite or overflowing somewhere: set those to 0
        bad = ~(np.isfinite(zr) & np.isfinite(zi))
        zr[bad] = 0.0
        zi[bad] = 0.0
    return out


def _y_from_z(z, out, scratch: Scratch):
    """y = 1/z from the parts (2, ...) of :func:`_z_parts`, with the same rule: non-finite values set to 0
    (z = 0 is Gamma = -1, where y is infinite; z set to 0 for Gamma = 1 gives y = 0, its value there)."""
    zr, zi = z[0], z[1]
    yr, yi = out[0], out[1]
    den = np.multiply(zr, zr, out=scratch.get("zp_den", zr.shape))
    den += np.multiply(zi, zi, out=yi)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        np.divide(1.0, den, out=den)
        np.multiply(zr, den, out=yr)
        np.multiply(zi, den, out=yi)
    np.negative(yi, out=yi)
    if not (den.size == 0 or den.max() < 1e300):
        bad = ~(np.isfinite(yr) & np.isfinite(yi))
        yr[bad] = 0.0
        yi[bad] = 0.0
    return out


BLOCK_ELEMENTS = 32_768
"""Traces are turned into coefficients a block of about this many (trace, sample) values at a time (a block
of windows' samples times a few traces), so the temporaries stay small enough for the processor's cache."""

BLOCK_COLUMNS = 2048
"""Most samples in one block of windows (windows that share samples are always in one block)."""


def as_columns(pos):
    """A slice for consecutive positions, else the array itself."""
    pos = np.asarray(pos, dtype=np.intp)
    if pos.size and pos[-1] - pos[0] == pos.size - 1:
        return slice(int(pos[0]), int(pos[-1]) + 1)
    return pos


class _Search:
    """Everything :meth:`EventSet.evaluate` needs after the coefficients, stacked over an end's events: u
    grids, transposed Vandermonde matrices, event positions, signs and levels (made once per EventSet)."""

    def __init__(self, es: "EventSet"):
        events = es.all_events()
        self.es = es
        self.n_events = len(events)
        p = DEGREE + 1
        self.u = np.array([e.model.fine for e in events]).reshape(len(events), FINE_POINTS)
        self.vt = np.array([e.model.fine_vt for e in events]).reshape(len(events), p, FINE_POINTS)
        self.u0 = np.array([e.u0 for e in events], dtype=float)
        self.fc = np.array([e.model.fc_hz for e in events], dtype=float)
        self.h = np.array([e.model.h_hz for e in events], dtype=float)
        self.res_events = list(es.resonances)
        self.res_rows = np.arange(len(es.resonances))
        self.res_is_z = np.array([e.model.domain == "z" for e in es.resonances], dtype=bool)
        # X = Im z rises through a series resonance; B = Im y rises through a parallel one, so -Im y falls
        self.res_sign = np.array([(1.0 if e.model.domain == "z" else -1.0) * (1.0 if e.sense == "series" else -1.0)
                                  for e in es.resonances])
        self.min_row = len(es.resonances) if es.minimum is not None else None
        first_edge = len(es.resonances) + (es.minimum is not None)
        self.edge_events = list(es.edges)
        self.edge_rows = np.arange(first_edge, first_edge + len(es.edges))
        self.edge_level2 = np.array([e.level ** 2 for e in es.edges], dtype=float)
        self.edge_sign = np.array([-1.0 if e.side == "low" else 1.0 for e in es.edges])

    def findings(self, coef, d: int) -> dict:
        """The findings of :meth:`EventSet.evaluate` from every event's coefficients (E, 2d, P): rows 0..d-1
        the real parts, d..2d-1 the imaginary parts."""
        es = self.es
        out = {}
        if self.res_events:
            e = self.res_rows
            x_like = np.matmul(coef[e, d:] * self.res_sign[:, None, None], self.vt[e])   # (R, d, K): +-Im w
            ur = _rising_nearest(self.u[e], x_like, self.u0[e])                           # (R, d)
            fr = self.fc[e][:, None] + ur * self.h[e][:, None]
            u = np.nan_to_num(ur)
            w_re = np.einsum("edp,edp->ed", coef[e, :d], u[..., None] ** np.arange(coef.shape[-1]))
            with np.errstate(divide="ignore", invalid="ignore"):
                r_ohm = Z_REF_OHM * np.where(self.res_is_z[:, None], w_re, 1 / w_re)
            r_ohm = np.where(np.isfinite(ur), r_ohm, np.nan)
            for i in range(len(self.res_events)):
                out[f"res_hz_{i}"] = fr[i]
                out[f"res_r_ohm_{i}"] = r_ohm[i]
                if i == es.primary:
                    out["q"] = _q_at(coef[i, :d] + 1j * coef[i, d:], ur[i], self.res_events[i].model)
        if es.primary is None or "q" not in out:
            out["q"] = np.full(d, np.nan)
        if self.min_row is not None:
            k = self.min_row
            m = es.minimum.model
            fine = np.matmul(coef[k], self.vt[k])         # (2d, K): the model on its fine grid
            um, p2 = _minimum(self.u[k], _p2(fine[:d], fine[d:]), m.at_sweep_lo, m.at_sweep_hi)
            out["min_hz"] = m.freq(um)
            out["min_swr"] = _swr_from_p2(p2)
        else:
            out["min_hz"] = np.full(d, np.nan)
            out["min_swr"] = np.full(d, np.nan)
        if self.edge_events:
            e = self.edge_rows
            # low edge: |Gamma| falls through the level going up in frequency; high edge: it rises
            fine = np.matmul(coef[e], self.vt[e])         # (E, 2d, K)
            vals = _p2(fine[:, :d], fine[:, d:])
            vals -= self.edge_level2[:, None, None]
            vals *= self.edge_sign[:, None, None]
            ue = _rising_nearest(self.u[e], vals, self.u0[e])
            fe = self.fc[e][:, None] + ue * self.h[e][:, None]
            for j, ev in enumerate(self.edge_events):
                out[f"edge_{ev.key}_{ev.span}_{ev.side}"] = fe[j]
        return out


class _Block:
    """A set of union columns, the windows (of any of the event sets) whose samples lie in it, and where each
    set's traces are made inside it."""

    def __init__(self, cols, windows, n_sets: int, extra=None, extra_set: int | None = None):
        """``cols``: sorted union positions; ``windows``: [(set, event row, in y, union positions, projector)];
        ``extra``: union positions (in ``cols``) where set ``extra_set``'s traces are made too."""
        need = [[] for _ in range(n_sets)]
        for si, _, _, at, _ in windows:
            need[si].append(at)
        if extra is not None and len(extra):
            need[extra_set].append(np.asarray(extra, dtype=np.intp))
        used = [s for s in range(n_sets) if need[s]]
        self.stages = (max(used) + 1) if used else 0     # the traces of sets 0 .. stages - 1 are made here
        # set s's traces are made where set s or a later one needs them
        own = [np.unique(np.concatenate(need[s])) if need[s] else np.zeros(0, dtype=np.intp) for s in range(n_sets)]
        at_stage = []
        for s in range(self.stages):
            later = [own[t] for t in range(s, n_sets) if own[t].size]
            at_stage.append(np.unique(np.concatenate(later)) if later else np.zeros(0, dtype=np.intp))
        if self.stages:
            at_stage[0] = np.asarray(cols, dtype=np.intp)
        self.cols = [as_columns(c) for c in at_stage]                       # union positions per stage
        self.size = [int(c.size) for c in at_stage]
        # where stage s's columns sit among stage s - 1's
        self.take = [None] + [as_columns(np.searchsorted(at_stage[s - 1], at_stage[s])) for s in range(1, self.stages)]
        self.windows = [[] for _ in range(n_sets)]   # per set: [(event row, in y, positions among its stage's, proj)]
        for si, k, is_y, at, proj_t in windows:
            self.windows[si].append((k, is_y, as_columns(np.searchsorted(at_stage[si], at)), proj_t))

    def project(self, s: int, g, coef, rows: slice, n_rows: int, sc: Scratch):
        """Coefficients of set s's windows in this block for its traces g (r, size[s]) into coef[event, rows]
        (real parts) and coef[event, n_rows + rows] (imaginary parts)."""
        windows = self.windows[s]
        if not windows:
            return
        r = g.shape[0]
        shape = (2, r, g.shape[1])
        need_z = any(not y for _, y, _, _ in windows)
        need_y = any(y for _, y, _, _ in windows)
        wz = wy = None
        if need_z:
            z = _z_parts(g, sc.get("wz", shape), sc)
            wz = z.reshape(2 * r, -1)
            if need_y:
                wy = _y_from_z(z, sc.get("wy", shape), sc).reshape(2 * r, -1)
        elif need_y:
            wy = _z_parts(g, sc.get("wy", shape), sc, -1.0).reshape(2 * r, -1)
        im = slice(n_rows + rows.start, n_rows + rows.stop)
        c = sc.get("coef", (2 * r, DEGREE + 1))
        for k, is_y, sel, proj_t in windows:
            np.matmul((wy if is_y else wz)[:, sel], proj_t, out=c)     # (2r, P)
            coef[k, rows] = c[:r]
            coef[k, im] = c[r:]


class _Blocks:
    """The union's columns in blocks for evaluating one or more event sets on the same traces.

    Windows that share samples (of any set) are in one block; groups are packed in order into blocks of at
    most about :data:`BLOCK_COLUMNS` samples. In a block, set 0's traces are made on all its columns and
    set s's (s > 0, made from set s - 1's) where set s or a later set has windows. With ``cover`` (a set
    index) and ``cover_cols`` (union positions), set ``cover``'s traces are made there too: inside the block
    that holds such a column, or in blocks of their own (the band's frequencies). For each block and set
    the traces are turned into z (and, when some model is in y, into y = 1/z) once, as contiguous real and
    imaginary parts with non-finite values set to 0, and each window is one small matrix product of its
    columns (a view when its samples are consecutive) with its projector: a single large product makes a
    multi-threaded BLAS start its threads, which costs more than it saves on a busy machine.
    """

    def __init__(self, sets, union, cover: int | None = None, cover_cols=None):
        union = np.asarray(union)
        self.scratch = Scratch()
        wins = []                                            # (set, event row, event, positions in the union)
        for si, es in enumerate(sets):
            for k, e in enumerate(es.all_events()):
                wins.append((si, k, e, np.searchsorted(union, e.model.idx)))
        wins.sort(key=lambda w: (int(w[3][0]), int(w[3][-1])))
        groups = []
        for w in wins:
            lo, hi = int(w[3][0]), int(w[3][-1])
            if groups and lo <= groups[-1][2]:
                groups[-1][0].append(w)
                groups[-1][2] = max(groups[-1][2], hi)
            else:
                groups.append([[w], lo, hi])
        packs = []
        for members, lo, hi in groups:
            cols = np.unique(np.concatenate([w[3] for w in members]))
            if packs and packs[-1][1].size + cols.size <= BLOCK_COLUMNS:
                packs[-1][0].extend(members)
                packs[-1][1] = np.concatenate([packs[-1][1], cols])
            else:
                packs.append([list(members), cols])
        want = np.zeros(union.size, dtype=bool)
        if cover is not None:
            want[np.arange(union.size) if cover_cols is None else np.asarray(cover_cols, dtype=np.intp)] = True
        self.blocks = []
        for members, cols in packs:
            extra = cols[want[cols]] if cover is not None else None
            if cover is not None:
                want[cols] = False
            windows = [(si, k, e.model.domain == "y", at, np.ascontiguousarray(e.model.proj.T))
                       for si, k, e, at in members]
            self.blocks.append(_Block(cols, windows, len(sets), extra, cover))
        if cover is not None:
            rest = np.flatnonzero(want)
            for i in range(0, rest.size, BLOCK_COLUMNS):
                part = rest[i:i + BLOCK_COLUMNS]
                self.blocks.append(_Block(part, [], len(sets), part, cover))

    def columns(self, s: int) -> np.ndarray:
        """Sorted union positions where set s's traces are made."""
        parts = [np.arange(b.cols[s].start, b.cols[s].stop) if isinstance(b.cols[s], slice) else b.cols[s]
                 for b in self.blocks if b.stages > s]
        return np.unique(np.concatenate(parts)) if parts else np.zeros(0, dtype=np.intp)


_BLOCK_CACHE: dict = {}


def blocks_for(sets, union, cover: int | None = None, cover_cols=None) -> _Blocks:
    """The (cached) :class:`_Blocks` of these event sets on ``union``."""
    union = np.asarray(union)
    cc = None if cover_cols is None else np.asarray(cover_cols, dtype=np.intp)
    key = (tuple(id(es) for es in sets), tuple(tuple(id(e) for e in es.all_events()) for es in sets), union.size,
           hash(union.tobytes()), cover, None if cc is None else hash(cc.tobytes()))
    hit = _BLOCK_CACHE.get(key)
    if hit is None or any(a is not b for a, b in zip(hit[0], sets)):
        if len(_BLOCK_CACHE) > 16:
            _BLOCK_CACHE.clear()
        hit = (list(sets), _Blocks(sets, union, cover, cc))
        _BLOCK_CACHE[key] = hit
    return hit[1]


def evaluate_sets(sets, union, n_rows: int, stages, *, cover: int | None = None, cover_cols=None, visit=None) -> list:
    """The findings of several event sets for ``n_rows`` traces each, made block by block on the same samples.

    Parameters
    ----------
    sets : list of EventSet
    union : ndarray of int
        Sorted sweep indices holding every model's indices of every set.
    n_rows : int
    stages : list of callables, one per set
        ``stages[0](rows, cols, None)`` gives set 0's traces (complex (len(rows), len(cols))) for the traces
        ``rows`` (a slice of 0 .. n_rows - 1) on the union positions ``cols`` (a slice or an array);
        ``stages[s](rows, cols, previous)`` gives set s's from set s - 1's (it may work in place: set s - 1's
        windows are done with them). Traces are made only where a block needs them.
    cover : int, optional
        Also make set ``cover``'s traces on the union positions ``cover_cols`` (default: all), windows or not
        (:meth:`_Blocks.columns` says where they are made).
    visit : callable, optional
        ``visit(s, rows, cols, traces)`` is called with every block of every set's traces made.

    Returns
    -------
    list of dict
        :meth:`EventSet.evaluate` of each set.
    """
    d = int(n_rows)
    plan = blocks_for(sets, union, cover, cover_cols)
    searches = [es._search() for es in sets]
    coefs = [np.empty((sr.n_events, 2 * d, DEGREE + 1)) for sr in searches]
    for blk in plan.blocks:
        if not blk.stages:
            continue
        step = max(1, BLOCK_ELEMENTS // max(blk.size[0], 1))
        for a in range(0, d, step):
            rows = slice(a, min(a + step, d))
            g = None
            for s in range(blk.stages):
                if s:
                    take = blk.take[s]
                    if not (isinstance(take, slice) and take.start == 0 and take.stop == g.shape[1]):
                        g = g[:, take]
                g = stages[s](rows, blk.cols[s], g)
                blk.project(s, g, coefs[s], rows, d, plan.scratch)
                if visit is not None:
                    visit(s, rows, blk.cols[s], g)
    return [sr.findings(c, d) for sr, c in zip(searches, coefs)]


# ---------------------------------------------------------------------------------------------- events

@dataclass(frozen=True)
class Event:
    """One event of a trace and the local model that places it.

    ``kind``: "resonance" (with ``sense`` "series"/"parallel"), "minimum", or "edge" (with ``key`` the
    threshold key, ``span`` the span's index, ``side`` "low"/"high", ``level`` the |Gamma| at the
    threshold). ``u0`` is the detected position in the model's variable.
    """

    kind: str
    model: LocalModel
    u0: float
    sense: str = ""
    key: str = ""
    span: int = -1
    side: str = ""
    level: float = 0.0


@dataclass
class EventSet:
    """Every event of one end of one sweep, with fixed local models (see the module notes).

    Attributes
    ----------
    freq_hz : ndarray (n,)
    resonances : list of Event
    minimum : Event or None
    edges : list of Event
    spans : dict
        ``{key: [[low_hz, high_hz], ...]}`` detected spans (edges at the sweep's ends are the sweep's ends).
    cut : dict
        ``{key: [bool per span]}``: the span reaches the sweep's first or last frequency.
    primary : int or None
        Index into ``resonances`` of the resonance nearest the SWR minimum (where Q is taken).
    thresholds : tuple of float
    noise_rms : float
        The analyzer noise (complex RMS in Gamma) reported with the findings.
    """

    freq_hz: np.ndarray
    resonances: list
    minimum: Event | None
    edges: list
    spans: dict
    cut: dict
    primary: int | None
    thresholds: tuple
    noise_rms: float = 0.0
    notes: list = field(default_factory=list)
    nominal: dict | None = None
    _plans: dict = field(default_factory=dict, repr=False, compare=False)

    def indices(self) -> np.ndarray:
        """Sorted union of every model's sweep indices."""
        parts = [e.model.idx for e in self.all_events()]
        if not parts:
            return np.zeros(0, dtype=int)
        return np.unique(np.concatenate(parts))

    def all_events(self):
        out = list(self.resonances)
        if self.minimum is not None:
            out.append(self.minimum)
        return out + list(self.edges)

    # ----------------------------------------------------------------------------------- evaluation
    def evaluate(self, gamma_sub, union_idx=None) -> dict:
        """Every finding for a batch of traces.

        Parameters
        ----------
        gamma_sub : ndarray (D, m) complex
            Traces on the sweep indices ``union_idx`` (default :meth:`indices`); ``union_idx`` is sorted and
            holds every model's indices (it may hold more).

        Returns
        -------
        dict of ndarray (D,)
            ``res_hz_<i>``, ``res_r_ohm_<i>`` for each resonance; ``min_hz``, ``min_swr``; ``edge_<key>_<span>_<side>``
            for each interior span edge; ``q`` at the primary resonance. NaN where a draw loses the event
            inside its window.

        Notes
        -----
        All events are worked out together (:func:`evaluate_sets`): each block of window samples is turned
        into the models' domains in real arithmetic and projected, a few traces at a time; the fine-grid
        search of every event is then one set of array operations over all of them.
        """
        g = np.atleast_2d(np.asarray(gamma_sub, dtype=complex))
        union = self.indices() if union_idx is None else np.asarray(union_idx)
        return evaluate_sets([self], union, g.shape[0], [lambda rows, cols, _: g[rows, cols]])[0]

    def _search(self) -> _Search:
        key = (tuple(id(e) for e in self.all_events()), self.primary)
        hit = self._plans.get("search")
        if hit is None or hit[0] != key:
            hit = (key, _Search(self))
            self._plans["search"] = hit
        return hit[1]

    def sensitivity(self, key: str, gamma):
        """First-order sensitivity of one finding to each sample of its window, by central differences.

        Parameters
        ----------
        key : str
            ``res_hz_<i>`` or ``min_swr`` (or ``min_hz``).
        gamma : ndarray (n,) complex
            The whole trace the sensitivity is taken at (normally the measured one).

        Returns
        -------
        (idx, c_re, c_im) or None
            The window's sweep indices and dy/dRe(Gamma_i), dy/dIm(Gamma_i) there: a perturbation dGamma
            moves the finding by sum(c_re Re dGamma + c_im Im dGamma) to first order. None for a finding with
            no event or that the trace does not place.
        """
        if key.startswith("res_hz_"):
            i = int(key.rsplit("_", 1)[1])
            if not 0 <= i < len(self.resonances):
                return None
            one = EventSet(self.freq_hz, [self.resonances[i]], None, [], {}, {}, None, self.thresholds)
            name = "res_hz_0"
        elif key in ("min_swr", "min_hz") and self.minimum is not None:
            one = EventSet(self.freq_hz, [], self.minimum, [], {}, {}, None, self.thresholds)
            name = key
        else:
            return None
        idx = one.indices()
        g0 = np.asarray(gamma, dtype=complex)[idx]
        m = idx.size
        h = SENSITIVITY_STEP
        batch = np.repeat(g0[None, :], 4 * m + 1, axis=0)
        rows = np.arange(m)
        batch[1 + rows, rows] += h
        batch[1 + m + rows, rows] -= h
        batch[1 + 2 * m + rows, rows] += 1j * h
        batch[1 + 3 * m + rows, rows] -= 1j * h
        y = one.evaluate(batch, idx)[name]
        if not np.isfinite(y[0]):
            return None
        c_re = (y[1:1 + m] - y[1 + m:1 + 2 * m]) / (2 * h)
        c_im = (y[1 + 2 * m:1 + 3 * m] - y[1 + 3 * m:]) / (2 * h)
        if not (np.all(np.isfinite(c_re)) and np.all(np.isfinite(c_im))):
            return None
        return idx, c_re, c_im

    def _near_match(self, spans, f_res, f_min) -> bool:
        """Whether a resonance is the antenna's own near its best match, where Q means something.

        The narrowest SWR span that holds the SWR minimum must hold this resonance and no other reactance zero
        (behind a long line the analyzer end shows a zero every few hundred kHz: none of them is the
        antenna's, and a Q there describes the line). Without such a span, the resonance must be the only
        one in the sweep."""
        if not math.isfinite(f_min):
            return False
        v = self.nominal or {}
        zeros = [v.get(f"res_hz_{i}", math.nan) for i in self.kept_resonances()]
        for t in sorted(self.thresholds):
            for lo, hi in spans.get(threshold_key(t), []):
                if lo <= f_min <= hi:
                    inside = [z for z in zeros if lo <= z <= hi]
                    return len(inside) == 1 and lo <= f_res <= hi
        return len(zeros) == 1

    def kept_resonances(self) -> list[int]:
        """Indices of the resonances that the findings report: placed by the fit on the measured trace, with
        R >= 0 and |Gamma| below :data:`RESOLVED_GAMMA_LIMIT` (needs :meth:`findings` first)."""
        v = self.nominal or {}
        out = []
        for i in range(len(self.resonances)):
            fr, r = v.get(f"res_hz_{i}", math.nan), v.get(f"res_r_ohm_{i}", math.nan)
            if not (math.isfinite(fr) and math.isfinite(r)) or r < 0:
                continue
            if abs((r - Z_REF_OHM) / (r + Z_REF_OHM)) >= RESOLVED_GAMMA_LIMIT:
                continue
            out.append(i)
        return out

    def findings(self, values: dict | None = None, gamma=None) -> dict:
        """The end's findings as a JSON-ready dict (the keys of the per-sample findings, plus ``noise_gamma_rms``).

        ``values`` is :meth:`evaluate` of the measured trace (computed from ``gamma`` when not given).
        """
        if values is None:
            values = self.evaluate(np.asarray(gamma)[self.indices()][None, :])
        v = {k: float(np.asarray(a).reshape(-1)[0]) for k, a in values.items()}
        self.nominal = v
        res = []
        for i in self.kept_resonances():
            fr, r = v[f"res_hz_{i}"], v[f"res_r_ohm_{i}"]
            g = (r - Z_REF_OHM) / (r + Z_REF_OHM)
            res.append({"freq_hz": fr, "r_ohm": r, "kind": self.resonances[i].sense,
                        "swr": (1 + abs(g)) / (1 - abs(g))})
        spans = {}
        for key, lst in self.spans.items():
            out = []
            for j, (lo, hi) in enumerate(lst):
                lo2 = v.get(f"edge_{key}_{j}_low", lo)
                hi2 = v.get(f"edge_{key}_{j}_high", hi)
                lo2 = lo if not math.isfinite(lo2) else lo2
                hi2 = hi if not math.isfinite(hi2) else hi2
                out.append([lo2, hi2])
            spans[key] = out
        q = v.get("q", math.nan)
        q_freq = None
        if self.primary is not None and self.primary in self.kept_resonances():
            fr = v.get(f"res_hz_{self.primary}", math.nan)
            q_freq = fr if math.isfinite(fr) and self._near_match(spans, fr, v["min_hz"]) else None
        return {
            "min_swr": {"freq_hz": _num(v["min_hz"]), "swr": _num(v["min_swr"])},
            "resonances_hz": [r["freq_hz"] for r in res],
            "resonances": [{k: r[k] for k in ("freq_hz", "r_ohm", "kind", "swr")} for r in res],
            "swr_spans_hz": spans,
            "swr_spans_cut_by_sweep_edge": {k: list(c) for k, c in self.cut.items()},
            "q": _num(q) if q_freq is not None else None,
            "q_freq_hz": q_freq,
            "q_from_span": _q_from_span(spans, self.cut, v["min_hz"]),
            "noise_gamma_rms": self.noise_rms,
        }


def _num(x):
    x = float(x)
    return x if math.isfinite(x) else None


def _q_from_span(spans, cut, f_min):
    """Q from the 2:1 span that holds the SWR minimum (Yaghjian-Best matched-at-centre relation:
    FBW = (s - 1)/(Q sqrt s)); None when there is none, the sweep cuts it, or no minimum."""
    if "2" not in spans or not math.isfinite(f_min):
        return None
    for (lo, hi), c in zip(spans["2"], cut.get("2", [])):
        if lo <= f_min <= hi and not c and hi > lo > 0:
            f0 = math.sqrt(lo * hi)
            return (2 - 1) / ((hi - lo) / f0 * math.sqrt(2))
    return None


def _q_at(coef, ur, m: LocalModel):
    """Yaghjian-Best Q_Z = (w0 / 2 R0) |R' + j (X' + |X0| / w0)| at u = ur from the fitted polynomial."""
    d = coef.shape[0]
    u = np.nan_to_num(ur)
    v = _vander(u)                                    # (d, p)
    w0 = np.einsum("dp,dp->d", coef, v)
    dv = np.zeros_like(v)
    dv[:, 1:] = v[:, :-1] * np.arange(1, v.shape[1])
    dw = np.einsum("dp,dp->d", coef, dv)             # dw/du
    with np.errstate(divide="ignore", invalid="ignore"):
        if m.domain == "z":
            z, dz = w0, dw
        else:
            z, dz = 1 / w0, -dw / w0 ** 2
        z = Z_REF_OHM * z
        dz_dw = Z_REF_OHM * dz / (2 * np.pi * m.h_hz)  # per rad/s
        om = 2 * np.pi * m.freq(u)
        r0 = z.real
        q = om / (2 * r0) * np.abs(dz_dw.real + 1j * (dz_dw.imag + np.abs(z.imag) / om))
    ok = np.isfinite(ur) & (r0 > 0) & np.isfinite(q)
    return np.where(ok, q, np.nan) if d else np.zeros(0)


# ---------------------------------------------------------------------------------------------- detection

def detection_trace(gamma, half: int | None = None):
    """A lightly smoothed copy of the trace, used only to locate events (Savitzky-Golay, cubic).

    The half-window is about 1/200 of the points (2 to 10 samples); sweeps under 15 points are not
    smoothed."""
    g = np.asarray(gamma, dtype=complex)
    n = g.size
    if half is None:
        half = int(np.clip(round(n / 200), 2, 10))
    if n < 15 or not np.all(np.isfinite(g)):
        return g.copy()
    k = np.arange(-half, half + 1, dtype=float)
    pinv = np.linalg.pinv(_vander(k / half))          # (p, 2 half + 1): row 0 gives the centre value
    out = np.empty_like(g)
    out[half:n - half] = np.convolve(g, pinv[0][::-1], mode="valid")
    # the first and last half-windows take the value of the fit over the end window (as "interp" ends)
    for sl, us in ((slice(0, 2 * half + 1), slice(0, half)), (slice(n - 2 * half - 1, n), slice(n - half, n))):
        coef = _rmat(g[sl][None, :], pinv.T)[0]
        uu = k / half
        vals = _rmat(coef[None, :], _vander(uu).T)[0]
        out[us] = vals[:half] if us.start == 0 else vals[half + 1:]
    return out


def detection_noise_gain(n: int, half: int | None = None) -> float:
    """The factor by which :func:`detection_trace` scales independent noise at an interior sample (the norm of
    its centre weights); 1 for traces it leaves unsmoothed."""
    if half is None:
        half = int(np.clip(round(n / 200), 2, 10))
    if n < 15:
        return 1.0
    k = np.arange(-half, half + 1, dtype=float)
    return float(np.linalg.norm(np.linalg.pinv(_vander(k / half))[0]))


GAP_SIGMAS = 5.0
"""Two SWR spans are one unless the detection trace rises above the threshold between them by more than this
many standard deviations of its noise in |Gamma|, and two sign changes of X are one cluster unless X leaves its
noise band as far between them (hysteresis, as a noisy threshold crossing is read; common practice, no source):
on a dense sweep the noise alone crosses a level many times around each edge and each resonance, further
apart than a few steps. Five, not three: the smoothed noise's largest excursion over a gap of a few hundred
samples reaches 4 standard deviations (seen on 200001-point test sweeps)."""


def _detect_resonances(f, g, noise=None):
    """Sign changes of X on the detection trace: [(freq_hz, sense)] after merging noise clusters.

    Neighbouring sign changes are one cluster when they are closer than :data:`MERGE_STEPS` steps or when X
    stays within :data:`GAP_SIGMAS` of its noise between them (``noise``: the trace's complex noise RMS per
    sample, which reaches X = Im z as 2 / |1 - Gamma|^2 of it, per part 1 / sqrt 2); a cluster with an odd
    number of them is one resonance at their mean, an even one is none."""
    z = _to_domain(g, "z")
    x = z.imag
    fin = np.isfinite(z)
    x0, x1 = x[:-1], x[1:]
    pair = fin[:-1] & fin[1:]
    rising = pair & (x0 < 0) & (x1 >= 0)
    falling = pair & (x0 > 0) & (x1 <= 0)
    found = []
    for k in np.flatnonzero(rising | falling):
        t = x0[k] / (x0[k] - x1[k])
        fr = f[k] + t * (f[k + 1] - f[k])
        gk = g[k] + t * (g[k + 1] - g[k])
        if abs(gk) >= RESOLVED_GAMMA_LIMIT:
            continue
        found.append((float(fr), "series" if rising[k] else "parallel", int(k)))
    if len(found) < 2:
        return [(fr, sense) for fr, sense, _ in found]
    gap = MERGE_STEPS * float(np.median(np.diff(f)))
    if noise is not None:
        with np.errstate(divide="ignore", invalid="ignore"):
            sx = np.asarray(noise, dtype=float) * 2 / np.abs(1 - g) ** 2 / math.sqrt(2)
    groups = [[0]]
    for i in range(1, len(found)):
        (fa, _, ka), (fb, _, kb) = found[groups[-1][-1]], found[i]
        between = slice(ka + 1, kb + 1)
        noisy = noise is not None and bool(np.all(np.abs(x[between]) < GAP_SIGMAS * sx[between]))
        if fb - fa < gap or noisy:
            groups[-1].append(i)
        else:
            groups.append([i])
    out = []
    for grp in groups:
        if len(grp) % 2 == 0:
            continue
        out.append((float(np.mean([found[i][0] for i in grp])), found[grp[0]][1]))
    return out


def _detect_spans(f, g, threshold, noise=None):
    """Spans of SWR <= threshold on the detection trace (edges interpolated; merged across short gaps and
    across gaps where the trace stays within :data:`GAP_SIGMAS` of its |Gamma| noise ``noise`` (per sample)
    above the threshold)."""
    level = (threshold - 1) / (threshold + 1)
    m = np.abs(g)
    inside = np.isfinite(m) & (m <= level)
    edges = np.diff(np.concatenate(([0], inside.astype(np.int8), [0])))
    starts = np.flatnonzero(edges == 1)
    stops = np.flatnonzero(edges == -1) - 1
    spans = []
    for a, b in zip(starts, stops):
        lo = f[a] if a == 0 else f[a - 1] + (level - m[a - 1]) / (m[a] - m[a - 1]) * (f[a] - f[a - 1])
        hi = f[b] if b == f.size - 1 else f[b] + (level - m[b]) / (m[b + 1] - m[b]) * (f[b + 1] - f[b])
        spans.append([float(lo), float(hi)])
    if len(spans) > 1:
        gap = MERGE_STEPS * float(np.median(np.diff(f)))
        merged = [spans[0]]
        for j in range(1, len(spans)):
            lo, hi = spans[j]
            between = slice(stops[j - 1] + 1, starts[j])       # the samples of the gap, all above the level
            noisy = noise is not None and bool(np.all(m[between] < level + GAP_SIGMAS * noise[between]))
            if lo - merged[-1][1] < gap or noisy:
                merged[-1][1] = hi
            else:
                merged.append([lo, hi])
        spans = merged
    # a span narrower than the merge gap and not at a sweep end is noise around the threshold
    if len(spans) > 0 and f.size > 1:
        gap = MERGE_STEPS * float(np.median(np.diff(f)))
        spans = [s for s in spans if s[1] - s[0] >= gap or s[0] <= f[0] or s[1] >= f[-1]]
    return spans, level


def threshold_key(t) -> str:
    return f"{float(t):g}"


def find_events(freq_hz, gamma, *, sigma=None, thresholds=(1.5, 2.0, 3.0), noise_gamma_rms: float = 0.0) -> EventSet:
    """Locate every event of one end's trace and fix its local model.

    Parameters
    ----------
    freq_hz : ndarray (n,)
        Strictly increasing frequencies, Hz.
    gamma : ndarray (n,) complex
        The trace (50 ohm).
    sigma : ndarray (n,) or float, optional
        Noise RMS of each sample at this plane (for a feedpoint trace: the analyzer noise times the line's
        amplification). Default: estimated from this trace with :func:`noise_rms`.
    thresholds : sequence of float
        SWR levels for the spans.
    noise_gamma_rms : float
        The analyzer noise to report with the findings.
    """
    f = np.asarray(freq_hz, dtype=float).reshape(-1)
    g = np.asarray(gamma, dtype=complex).reshape(-1)
    if sigma is None:
        sigma = noise_rms(f, g)
    sig = np.broadcast_to(np.maximum(np.asarray(sigma, dtype=float), NOISE_FLOOR), f.shape).copy()
    sig[~np.isfinite(sig)] = np.inf
    thresholds = tuple(float(t) for t in thresholds)
    es = EventSet(f, [], None, [], {}, {}, None, thresholds, float(noise_gamma_rms))
    if f.size < MIN_WINDOW_POINTS:
        es.notes.append(f"the sweep has {f.size} points; findings need at least {MIN_WINDOW_POINTS}")
        es.spans = {threshold_key(t): [] for t in thresholds}
        es.cut = {threshold_key(t): [] for t in thresholds}
        return es
    gd = detection_trace(g)

    for fr, sense in _detect_resonances(f, gd, noise=sig * detection_noise_gain(f.size)):
        m = local_model(f, g, sig, fr, domains=("z",) if sense == "series" else ("y",))
        if m is not None:
            es.resonances.append(Event("resonance", m, (fr - m.fc_hz) / m.h_hz, sense=sense))

    p2 = np.abs(gd) ** 2
    if np.isfinite(p2).any():
        k = int(np.nanargmin(np.where(np.isfinite(p2), p2, np.nan)))
        m = local_model(f, g, sig, f[k])
        if m is not None:
            es.minimum = Event("minimum", m, (f[k] - m.fc_hz) / m.h_hz)

    for t in thresholds:
        key = threshold_key(t)
        spans, level = _detect_spans(f, gd, t, noise=sig * (detection_noise_gain(f.size) / math.sqrt(2)))
        es.spans[key] = spans
        es.cut[key] = [bool(lo <= f[0] or hi >= f[-1]) for lo, hi in spans]
        for j, (lo, hi) in enumerate(spans):
            for side, fe in (("low", lo), ("high", hi)):
                if fe <= f[0] or fe >= f[-1]:
                    continue
                m = local_model(f, g, sig, fe)
                if m is not None:
                    es.edges.append(Event("edge", m, (fe - m.fc_hz) / m.h_hz, key=key, span=j, side=side,
                                          level=level))

    if es.resonances and es.minimum is not None:
        fmin = es.minimum.model.freq(es.minimum.u0)
        es.primary = int(np.argmin([abs(e.model.freq(e.u0) - fmin) for e in es.resonances]))
    return es


__all__ = ["Event", "EventSet", "LocalModel", "detection_trace", "find_events", "local_model", "noise_rms",
           "pseudo_residuals"]
