"""A characterized run between its measured frequencies: delay-removed interpolation and its error.

A run characterized at the far end (open, short, load) is known exactly on the frequencies it was measured
on. A sweep taken later with another analyzer setting falls between them. Interpolating the raw
S-parameters there is wrong: over a run of a few tens of metres the transmission phase turns through many
turns across the band, and S11/S22 are sums of echoes whose phases turn as fast. Almost all of that
variation is the delay of the run itself, so it is taken out first:

1. **Delay removed.** Every S-parameter of the run (S11 = e00, S22 = e11, S21, S12; e10e01 = S21 S12) is
   multiplied by exp(+j 2 pi f tau), tau the run's fitted one-way delay. S21 and S12 then have their
   main path at zero delay. S11's and S22's echoes, which arrive between 0 (a connector at the near end)
   and 2 tau (the far end) to first order, are centred at zero and spread over at most +/-tau. What is
   left varies slowly with frequency. This is the electrical-delay (port-extension) correction of
   ordinary VNA practice, applied to the error terms instead of to a measured reflection (J. Dunsmore,
   *Handbook of Microwave Component Measurements*, 2nd ed., Wiley 2020, ch. 3, "electrical delay" and
   "port extension"; from memory).
2. **Interpolated on the residual.** The residual is interpolated by a piecewise cubic through the four
   nearest characterized points (Lagrange form, non-uniform grids allowed). Its error is
   f''''(xi)/4! prod(x - x_k) (R. L. Burden, J. D. Faires, *Numerical Analysis*, 9th ed., Brooks/Cole 2011,
   Theorem 3.3; from memory). Being local, it keeps every frequency's work vectorised, and it passes
   through the measured values exactly, so a sweep on the characterization's own points is unchanged.
3. **Delay put back** by multiplying with exp(-j 2 pi f tau).

How fine the characterization must be
-------------------------------------
An echo of two-way delay t makes the residual turn as exp(-j 2 pi f (t - tau)); the fastest residual is
that of the longest echo, T2 = 2 tau, at +/-tau after removal. Sampling in frequency is alias-free for a
response confined to a time span T2 when the step is below 1/T2, and the unwrapped phase of S21 S12
(which has its delay at T2) needs a step below 1/(2 T2) (the sampling theorem applied in frequency:
A. V. Oppenheim, R. W. Schafer, *Discrete-Time Signal Processing*, 3rd ed., Pearson 2010, sec. 8.4; from
memory). We ask for a step of at most 1/(2 T2 M) with the margin ``GRID_MARGIN`` M = 4. Why 4: with
step h, an echo of size a at the window's edge has |f''''| = (2 pi tau)^4 a and the cubic's error is at
most (9/16) h^4 |f''''| / 24 at the middle of an interval; with h = 1/(2 T2 M) that is
(3/128) (pi/(2M))^4 a, which is 5.6e-4 a for M = 4 (and 2.2e-3 a for M = 3). Under 1e-3 of the echo
is our choice (common practice, no source).

Error estimate
--------------
Leave-one-out: each characterized point is predicted from its four nearest neighbours without it (the
same cubic and delay removal), and compared with its measured value (M. Stone, "Cross-validatory choice
and assessment of statistical predictions", J. R. Stat. Soc. B 36 (1974) 111; from memory). The
neighbours are then up to twice as far as in real use, so the figure errs on the high side (by up to
2^4 = 16 for a well-sampled residual, about 1 near the sampling limit); measurement noise in the
characterization shows in it too. The S-parameter errors are carried to the feedpoint reflection to
first order (:func:`feedpoint_error`).

Conventions: S at 50 ohm, port 1 at the analyzer, port 2 at the far end; frequency is the first axis;
every function is vectorised over frequency (no loop over frequency points).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .grid import FREQ_MATCH_RTOL, nearest_points

GRID_MARGIN = 4.0
"""The characterization's step must be at most 1/(2 x longest two-way delay x GRID_MARGIN) (see above)."""

FEEDPOINT_ERROR_WARN = 0.01
"""Estimated error in |Gamma| at the feedpoint above which the user is told (issue 15's figure)."""



# --------------------------------------------------------------------------------------------------
# The grid
# --------------------------------------------------------------------------------------------------
def needed_step_hz(two_way_delay_s: float, margin: float = GRID_MARGIN) -> float:
    """Largest characterization step that resolves echoes up to ``two_way_delay_s``: 1/(2 T2 margin), Hz.

    Returns ``inf`` for a run without delay.
    """
    t2 = float(two_way_delay_s)
    return float("inf") if t2 <= 0 else 1.0 / (2.0 * t2 * margin)


def largest_step_hz(grid_hz) -> float:
    """The widest gap between neighbouring characterized frequencies, Hz (0 for fewer than 2 points)."""
    g = np.asarray(grid_hz, dtype=float)
    return float(np.max(np.diff(g))) if g.size >= 2 else 0.0


# --------------------------------------------------------------------------------------------------
# Delay removal and the local cubic
# --------------------------------------------------------------------------------------------------
def remove_delay(freq_hz, values, delay_s: float):
    """``values`` (n, ...) times exp(+j 2 pi f delay): the phase rotation of a delay taken out."""
    f = np.asarray(freq_hz, dtype=float)
    rot = np.exp(2j * np.pi * f * float(delay_s))
    v = np.asarray(values, dtype=complex)
    return v * rot.reshape(rot.shape + (1,) * (v.ndim - 1))


def restore_delay(freq_hz, values, delay_s: float):
    """The inverse of :func:`remove_delay`."""
    return remove_delay(freq_hz, values, -float(delay_s))


def _lagrange_weights(nodes, x):
    """Lagrange weights through four node arrays ``nodes`` (each (m,)) at ``x`` (m,): a list of four (m,) arrays."""
    d = [x - xn for xn in nodes]
    w = []
    for a in range(4):  # loops over the 4 stencil points, not over frequency
        num, den = 1.0, 1.0
        for b in range(4):
            if a != b:
                num = num * d[b]
                den = den * (nodes[a] - nodes[b])
        w.append(num / den)
    return w


def _combine(w, resid, idx):
    """sum_k w[k] * resid[idx[k]], resid (n, ...) with any trailing shape; one (m, ...) temporary at a time."""
    out = None
    for wk, ik in zip(w, idx):
        term = resid[ik] * wk.reshape(wk.shape + (1,) * (resid.ndim - 1))
        out = term if out is None else out.__iadd__(term)
    return out


def cubic_stencil(grid_hz, freq_hz):
    """Indices (m, 4) of the four characterized points a cubic through ``freq_hz`` uses.

    Inside the interval [g_j, g_j+1] the nodes are j-1 .. j+2 (the interval in the middle); at the ends
    of the grid the four nearest on the one side.
    """
    g = np.asarray(grid_hz, dtype=float)
    if g.size < 4:
        raise ValueError("a cubic needs at least 4 characterized points")
    j = np.clip(np.searchsorted(g, np.asarray(freq_hz, dtype=float), side="right") - 1, 0, g.size - 2)
    start = np.clip(j - 1, 0, g.size - 4)
    return start[:, None] + np.arange(4)[None, :]


def interpolate(grid_hz, values, freq_hz, delay_s: float = 0.0):
    """Values (n, ...) known on ``grid_hz`` (n,), interpolated to ``freq_hz`` (m,) with a delay removed.

    Parameters
    ----------
    grid_hz : array (n,), strictly increasing, n >= 4
    values : complex array (n, ...): S-parameters (n, 2, 2) or error terms (n, 3), any trailing shape.
    freq_hz : array (m,) inside the grid's range (outside, the end cubic extrapolates: callers refuse).
    delay_s : the delay taken out before and put back after (the run's one-way delay for S-parameters).

    Returns
    -------
    complex array (m, ...); exactly the measured value where ``freq_hz`` is a grid point.
    """
    g = np.asarray(grid_hz, dtype=float)
    f = np.atleast_1d(np.asarray(freq_hz, dtype=float))
    if g.size < 4:
        raise ValueError("a cubic needs at least 4 characterized points")
    resid = remove_delay(g, values, delay_s)
    coef = _interval_cubics(g, resid)  # (n-1, 4, ...): per interval, powers 0..3 of u
    j = np.clip(np.searchsorted(g, f, side="right") - 1, 0, g.size - 2)
    h = np.diff(g)
    u = (f - g[j]) / h[j]
    u = u.reshape(u.shape + (1,) * (resid.ndim - 1))
    out = coef[j, 3] * u
    for p in (2, 1):
        out += coef[j, p]
        out *= u
    out += coef[j, 0]
    tol = FREQ_MATCH_RTOL * np.abs(f)
    for near in (j, j + 1):  # the measured value itself where the frequency is a grid point
        exact = np.abs(g[near] - f) <= tol
        if exact.any():
            out[exact] = resid[near[exact]]
    return restore_delay(f, out, delay_s)


def _interval_cubics(g, resid):
    """Power-basis coefficients (n-1, 4, ...) of the cubic used on each interval [g_j, g_j+1].

    The cubic through the interval's four stencil points (:func:`cubic_stencil`), written in
    u = (x - g_j) / (g_j+1 - g_j) so the 4 x 4 systems stay well conditioned; solved once per interval of
    the characterization (batched), so a sweep of any length costs one gather and three multiply-adds.
    """
    n = g.size
    nodes = cubic_stencil(g, g[:-1])  # (n-1, 4): the stencil of each interval
    un = (g[nodes] - g[:-1, None]) / np.diff(g)[:, None]
    vander = un[:, :, None] ** np.arange(4)[None, None, :]  # (n-1, 4 nodes, 4 powers)
    y = resid[nodes].reshape(n - 1, 4, -1)
    c = np.linalg.solve(vander, y)  # batched over intervals, not over sweep frequencies
    return c.reshape((n - 1, 4) + resid.shape[1:])


def leave_one_out_residual(grid_hz, values, delay_s: float = 0.0):
    """Leave-one-out residual, predicted minus measured (n, ...) complex, with the delay removed.

    Point i is predicted by the cubic through its four nearest neighbours (i-2, i-1, i+1, i+2 inside;
    one-sided near the ends) with the same delay removed. The two end points cannot be predicted
    without extrapolating; they take their neighbour's figure. Needs at least 5 points.
    """
    g = np.asarray(grid_hz, dtype=float)
    n = g.size
    if n < 5:
        raise ValueError("a leave-one-out estimate needs at least 5 characterized points")
    resid = remove_delay(g, values, delay_s)
    i = np.arange(1, n - 1)
    start = np.clip(i - 2, 0, n - 5)  # five consecutive points i-2..i+2 (shifted at the ends), minus i
    five = start[:, None] + np.arange(5)[None, :]
    keep = five != i[:, None]
    idx = list(five[keep].reshape(i.size, 4).T)
    pred = _combine(_lagrange_weights([g[k] for k in idx], g[i]), resid, idx)
    out = np.empty(resid.shape, dtype=complex)
    out[1:-1] = pred - resid[i]
    out[0], out[-1] = out[1], out[-2]
    return out


def leave_one_out(grid_hz, values, delay_s: float = 0.0):
    """Leave-one-out error |predicted - measured| (n, ...) of :func:`interpolate` on its own grid
    (:func:`leave_one_out_residual`; |exp(j phi)| = 1, so the same error with the delay put back)."""
    return np.abs(leave_one_out_residual(grid_hz, values, delay_s))


def smooth(grid_hz, values, width_hz: float):
    """Moving average (n, ...) of ``values`` over the grid points within +/- width/2 of each point.

    Used to split a residual into what changes slowly with frequency (a systematic error: an echo the
    model misses, the interpolation's own error) and the point-to-point scatter of the characterization's
    measurement noise, which averages out. A width below the step leaves the values as they are.
    """
    g = np.asarray(grid_hz, dtype=float)
    v = np.asarray(values)
    half = 0.5 * float(width_hz)
    lo = np.searchsorted(g, g - half, side="left")
    hi = np.searchsorted(g, g + half, side="right")
    c = np.concatenate([np.zeros((1,) + v.shape[1:], dtype=v.dtype), np.cumsum(v, axis=0)])
    cnt = (hi - lo).reshape((-1,) + (1,) * (v.ndim - 1))
    return (c[hi] - c[lo]) / cnt


SMOOTH_STEPS = 2.0
"""Residuals are averaged over SMOOTH_STEPS x the needed step (:func:`needed_step_hz`), 1/(4 T2) wide: an
echo at the edge of the delay-removed window (+/-tau) keeps sinc(pi/8) = 97 % of its size, while the
scatter of N points' noise drops by sqrt(N) (our choice, common practice, no source)."""


def local_error(grid_hz, err, freq_hz, exact_on_grid: bool = True):
    """Per-frequency error (m, ...) from per-grid-point errors (n, ...): the larger of the two points
    around each frequency (the nearest end point beyond the grid); with ``exact_on_grid``, 0 on the grid's
    own points (the measured value is used there), otherwise that point's own figure."""
    g = np.asarray(grid_hz, dtype=float)
    f = np.atleast_1d(np.asarray(freq_hz, dtype=float))
    e = np.asarray(err, dtype=float)
    j = np.clip(np.searchsorted(g, f, side="right") - 1, 0, g.size - 2)
    out = np.maximum(e[j], e[j + 1])
    hit, exact = nearest_points(g, f)
    out[exact] = 0.0 if exact_on_grid else e[hit[exact]]
    beyond = (f < g[0]) & ~exact
    out[beyond] = e[0]
    beyond = (f > g[-1]) & ~exact
    out[beyond] = e[-1]
    return out


# --------------------------------------------------------------------------------------------------
# From S-parameter errors to the feedpoint
# --------------------------------------------------------------------------------------------------
def feedpoint_error(s, ds, gamma_feedpoint=None):
    """First-order error in the feedpoint reflection from errors in the run's S-parameters.

    Parameters
    ----------
    s : complex (m, 2, 2)
        The run's S-parameters at the sweep's frequencies.
    ds : float (m, 2, 2)
        Magnitudes of their errors (bounds or estimates).
    gamma_feedpoint : complex (m,), optional
        The corrected feedpoint reflection; without it the worst case |Gamma_L| = 1 is taken.

    Returns
    -------
    float (m,): bound on |dGamma_L|.

    Notes
    -----
    From Gamma_m = e00 + t Gamma_L / (1 - e11 Gamma_L) with t = e10e01 = S21 S12 (check-values F16), held at
    the measured Gamma_m and differentiated:
    dGamma_L = -(1 - e11 G)^2 / t de00 - G (1 - e11 G) / t dt - G^2 de11, and |dt| <= |S12||dS21| +
    |S21||dS12|. The magnitudes are added (a bound, no cancellation assumed).
    """
    s = np.asarray(s, dtype=complex)
    ds = np.asarray(ds, dtype=float)
    e11 = s[:, 1, 1]
    t = s[:, 1, 0] * s[:, 0, 1]
    if gamma_feedpoint is None:
        gm = np.ones(e11.shape)
        k = 1 + np.abs(e11)
    else:
        g = np.asarray(gamma_feedpoint, dtype=complex)
        g = np.where(np.abs(g) > 1, g / np.abs(g), g)  # a passive antenna: |Gamma_L| <= 1
        gm = np.abs(g)
        k = np.abs(1 - e11 * g)
    dt = np.abs(s[:, 0, 1]) * ds[:, 1, 0] + np.abs(s[:, 1, 0]) * ds[:, 0, 1]
    with np.errstate(divide="ignore", invalid="ignore"):
        out = k ** 2 / np.abs(t) * ds[:, 0, 0] + gm * k / np.abs(t) * dt + gm ** 2 * ds[:, 1, 1]
    return np.where(np.isfinite(out), out, np.inf)


def two_way_delay_s(one_way_delay_s: float) -> float:
    """The longest first-order echo of a run: the far end's round trip, 2 tau."""
    return 2.0 * float(one_way_delay_s)


# --------------------------------------------------------------------------------------------------
# Which method between the points, and how good it is
# --------------------------------------------------------------------------------------------------
METHODS = ("exact", "interpolated", "model")
"""How a characterized run is evaluated at a sweep's frequencies: on its own points (exact), by
delay-removed interpolation, or through its fitted physical model."""


@dataclass(frozen=True)
class Between:
    """How a characterized run is evaluated between its points, decided once per characterization.

    Attributes
    ----------
    method : "interpolated" or "model" (what is used off the grid; on the grid the values are exact).
    delay_s : the one-way delay taken out before interpolating, s.
    s_error : float (n, 2, 2): estimated error of the chosen method's S-parameters at each grid point
        (leave-one-out for interpolation, the misfit to the measured values for the model).
    interpolation_error, model_error : float (n, 2, 2) or None: both candidates' figures.
    step_hz : the characterization's widest step, Hz.
    needed_step_hz : the step the run's longest echo allows with ``GRID_MARGIN``, Hz.
    worst_feedpoint_error : the largest estimated |dGamma| at the feedpoint over the grid for any antenna
        (|Gamma_L| <= 1), of the chosen method.
    scatter : float (2, 2) or None: RMS point-to-point scatter of the chosen method's residual, the
        characterization's own measurement noise (not an error of the method: it reaches the feedpoint on
        the characterized points too); for uncertainty work.
    """

    method: str
    delay_s: float
    s_error: np.ndarray
    interpolation_error: np.ndarray | None
    model_error: np.ndarray | None
    step_hz: float
    needed_step_hz: float
    worst_feedpoint_error: float
    scatter: np.ndarray | None = None

    @property
    def two_way_delay_s(self) -> float:
        return two_way_delay_s(self.delay_s)

    @property
    def grid_too_coarse(self) -> bool:
        return self.step_hz > self.needed_step_hz * (1 + FREQ_MATCH_RTOL)


def assess(grid_hz, s, delay_s: float, model_s=None, *, model_only: bool = False,
           model_misfit_s11: float = 0.0) -> Between:
    """Decide how a characterized run is evaluated between its points, and estimate the error.

    Parameters
    ----------
    grid_hz : (n,) the characterization's frequencies, Hz (strictly increasing).
    s : complex (n, 2, 2): the run's S-parameters there (50 ohm, port 1 at the analyzer).
    delay_s : the run's fitted one-way delay, s.
    model_s : complex (n, 2, 2), optional: the fitted physical model's S-parameters on the same grid.
    model_only : the measured values are the model's own (a one-standard fit): use the model.
    model_misfit_s11 : a misfit of the model known from its fit, added to its S11 error (a one-standard
        fit's RMS misfit in the reflection measured at the analyzer, which reaches the feedpoint as an
        error in S11 does).

    Notes
    -----
    Both candidates get the same kind of figure per grid point and S-parameter: interpolation its
    leave-one-out residual, the model its misfit to the measured values, each (delay removed) averaged
    over ``SMOOTH_STEPS`` needed steps (:func:`smooth`) so that the characterization's own measurement
    noise, which is there on its measured points as well, is not counted as an error of the method;
    what averages out is kept apart as ``scatter``. Each is carried to the feedpoint
    for the worst antenna (|Gamma_L| = 1, :func:`feedpoint_error`) and the method with the smaller largest
    figure is used; a tie (or fewer than 5 points) keeps the model. A uniform line characterized with
    open and short or with all three standards is then normally evaluated through its model, as before; a
    run of mixed impedances, which one uniform line cannot describe, through interpolation.
    """
    g = np.asarray(grid_hz, dtype=float)
    s = np.asarray(s, dtype=complex)
    step = largest_step_hz(g)
    need = needed_step_hz(two_way_delay_s(delay_s))
    width = SMOOTH_STEPS * need

    def split(resid):  # (systematic error per point, RMS scatter per S-parameter)
        slow = smooth(g, resid, width)
        return np.abs(slow), np.sqrt(np.mean(np.abs(resid - slow) ** 2, axis=0))

    model_err = model_scatter = None
    if model_s is not None:
        model_err, model_scatter = split(remove_delay(g, np.asarray(model_s, dtype=complex) - s, delay_s))
        if model_misfit_s11:
            model_err[:, 0, 0] += float(model_misfit_s11)
    interp_err = interp_scatter = None
    if not model_only and g.size >= 5:
        interp_err, interp_scatter = split(leave_one_out_residual(g, s, delay_s))
    worst = {}
    for name, err in (("interpolated", interp_err), ("model", model_err)):
        if err is not None:
            fe = feedpoint_error(s, err)
            worst[name] = float(np.max(fe)) if fe.size else 0.0
    if not worst:
        raise ValueError("neither interpolation (at least 5 points) nor a model is available")
    method = min(worst, key=lambda k: (worst[k], k != "model"))
    chosen, scatter = (interp_err, interp_scatter) if method == "interpolated" else (model_err, model_scatter)
    return Between(method, float(delay_s), chosen, interp_err, model_err, step, need, worst[method], scatter)


def sweep_error(between: Between, grid_hz, s_at_sweep, freq_hz, gamma_feedpoint=None):
    """Estimated |dGamma| at the feedpoint (m,) for a sweep: 0 on the grid's own points, elsewhere the
    chosen method's error of the two grid points around each frequency carried to the feedpoint with the
    sweep's own corrected reflection (or the worst antenna when ``gamma_feedpoint`` is None)."""
    ds = local_error(grid_hz, between.s_error, freq_hz)
    return feedpoint_error(s_at_sweep, ds, gamma_feedpoint)


def draw_feedpoint_offsets(error, draws: int, rng):
    """Monte Carlo draws (draws, m) of the feedpoint-reflection offset from evaluating a run between its points.

    Parameters
    ----------
    error : float (m,): the estimated |dGamma| per frequency (e.g. :func:`sweep_error`; 0 on measured points).
    draws : number of draws.
    rng : numpy.random.Generator (seeded by the caller, so outputs are reproducible).

    Notes
    -----
    The estimate is a bound, not a standard deviation, so each offset is drawn uniformly over the disk of
    that radius (the rectangular distribution for a quantity known only by its bounds, JCGM 100:2008
    sec. 4.3.7, taken to the complex plane; JCGM 101:2008 sec. 6.4.2 for drawing it). One radius fraction
    and one phase per draw serve the whole sweep: the interpolation error changes slowly from one
    frequency to the next, and a shift common to neighbouring points moves findings (a resonance, a span
    edge) more than independent scatter would, so this is the cautious choice. Add the offsets to the
    corrected reflection of each draw.
    """
    e = np.asarray(error, dtype=float)
    return unit_disc(draws, rng)[:, None] * e[None, :]


def unit_disc(draws: int, rng):
    """``draws`` complex numbers uniform over the unit disc: sqrt(U) exp(j 2 pi V), U, V uniform on [0, 1)."""
    r = np.sqrt(rng.uniform(0.0, 1.0, int(draws)))
    ph = rng.uniform(0.0, 2 * np.pi, int(draws))
    return r * np.exp(1j * ph)


__all__ = [
    "Between", "FEEDPOINT_ERROR_WARN", "GRID_MARGIN", "METHODS", "SMOOTH_STEPS", "assess", "cubic_stencil",
    "draw_feedpoint_offsets", "feedpoint_error", "interpolate", "largest_step_hz", "leave_one_out",
    "leave_one_out_residual", "local_error", "needed_step_hz", "remove_delay", "restore_delay", "smooth",
    "sweep_error", "two_way_delay_s", "unit_disc",
]
