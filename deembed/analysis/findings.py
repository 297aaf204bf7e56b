"""What the antenna is doing: resonances, SWR minimum, SWR bandwidths, Q and trim advice.

Pure numpy functions of a one-port sweep: ``freq_hz`` with shape (n,), strictly increasing, and the
reflection coefficient ``gamma`` (n,) complex, referenced to 50 ohm (:data:`deembed.rf.Z_REF_OHM`);
impedances come from :func:`deembed.rf.z_from_gamma`. :func:`end_findings` gathers everything into a
JSON-ready dict of plain Python floats (non-finite values become ``None``).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..base.errors import OptionError
from ..base.results import UNSET, Result
from ..physics.rf import gamma_from_z, swr, z_from_gamma
from .smooth import MIN_WINDOW_POINTS, find_events
from .uncertainty import interval

DEFAULT_THRESHOLDS = (1.5, 2.0, 3.0)
"""SWR levels whose bandwidths :func:`end_findings` reports."""

RESOLVED_GAMMA_LIMIT = 0.99
"""A crossing of X = 0 with |Gamma| at or above this is not reported (see :func:`resonances`)."""

NOISE_MERGE_STEPS = 4
"""Crossings (or span gaps) closer together than this many sweep steps are measurement noise
around one event and are merged (see :func:`resonances` and :func:`swr_spans`). Our choice
(common practice, no source): analyzer noise makes X or the SWR dither around a level for a few
points; a real second resonance or a real notch is wider than that on any sensible sweep."""


@dataclass(frozen=True)
class Resonance:
    """One zero crossing of the reactance.

    Attributes
    ----------
    freq_hz : float
        Frequency of the crossing, Hz (interpolated between the two samples around it).
    r_ohm : float
        Resistance at the crossing, ohm.
    kind : str
        ``"series"`` (X rises through zero, dX/df > 0) or ``"parallel"`` (X falls through zero,
        dX/df < 0: an anti-resonance).
    swr : float
        SWR at the crossing on 50 ohm, from ``r_ohm`` (Z is real there).
    """

    freq_hz: float
    r_ohm: float
    kind: str
    swr: float


# --------------------------------------------------------------------------------------------- helpers

def _arrays(freq_hz, values, name):
    f = np.asarray(freq_hz, dtype=float).reshape(-1)
    v = np.asarray(values, dtype=complex).reshape(-1)
    if f.shape != v.shape:
        raise ValueError(f"freq_hz has {f.size} points but {name} has {v.size}; they must match")
    return f, v


def finite_or_none(x):
    """A plain Python float, or None for None, NaN and infinities (JSON has neither): how every finding's
    number goes into its JSON form (also used by :mod:`deembed.analysis.magnitude`)."""
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def check_swr_threshold(threshold) -> float:
    """An SWR threshold as a float; refuses anything that is not a finite SWR above 1 (the one check, for
    bandwidth spans, Q from a span and the band check)."""
    t = float(threshold)
    if not math.isfinite(t) or t <= 1:
        raise OptionError("SWR threshold", f"{threshold!r} is not an SWR above 1; give one such as 2")
    return t


def threshold_key(threshold) -> str:
    """Dict key of a threshold in :func:`bandwidths`: ``f"{t:g}"`` (2.0 -> "2", 1.5 -> "1.5")."""
    return f"{float(threshold):g}"


# ---------------------------------------------------------------------------------------- resonances

def resonances(freq_hz, z_ohm, *, gamma_limit: float = RESOLVED_GAMMA_LIMIT,
               merge_steps: int = NOISE_MERGE_STEPS) -> list[Resonance]:
    """Frequencies where the reactance crosses zero, with the resistance there and the sense.

    Parameters
    ----------
    freq_hz : array_like, shape (n,)
        Strictly increasing frequencies, Hz.
    z_ohm : array_like, shape (n,), complex
        Impedance, ohm.
    gamma_limit : float, keyword-only
        Crossings whose |Gamma| on 50 ohm is at or above this are not reported (default 0.99,
        i.e. R above 9.95 kohm or below 0.25 ohm).

    Returns
    -------
    list of Resonance
        In increasing frequency.

    Notes
    -----
    A crossing is a pair of neighbouring samples where X changes sign (or an interior sample with
    X exactly 0 between samples of opposite sign). Its sense is the sign of the change:
    X rising through zero is a series resonance, X falling through zero a parallel one
    (anti-resonance); for a lossless one-port, Foster's reactance theorem makes these the zeros and
    the poles of Z.

    The crossing is interpolated linearly in the quantity that is smooth near that kind of
    resonance: in Z = R + jX for a series crossing (a series RLC has R constant and X nearly
    linear), in Y = G + jB = 1/Z for a parallel crossing (a parallel RLC has G constant and B nearly
    linear). The fraction t where the imaginary part reaches zero gives
    f = f_k + t (f_{k+1} - f_k) and R (or 1/G) at the same t. Interpolating a parallel crossing
    in X instead would see X jump from large positive to large negative when the samples straddle
    a sharp anti-resonance and would badly under-read R; in Y nothing jumps.

    Rule for crossings "through infinity": a sign change of X whose interpolated |Gamma| is at or
    above ``gamma_limit`` is skipped. This is the case of a pole of Z (G ~ 0, a lossless or
    unresolved tank) or a zero of Z (R ~ 0), where the chart point sits at the open or short and
    the sign of X is set by a tiny, noise-sized imaginary part; R there is not resolved.
    Pairs with a non-finite sample (Gamma = 1 gives Z = inf) are skipped.

    Noise: neighbouring crossings less than ``merge_steps`` sweep steps apart form a cluster (X
    dithering around zero). A cluster of an odd number of crossings is one resonance, at the mean
    frequency and resistance of its crossings, with the sense of the net change of X across it; an
    even number means X touched zero and went back, and is not reported. ``merge_steps=0`` keeps
    every crossing.
    """
    found = _crossings(freq_hz, z_ohm, gamma_limit)
    if merge_steps <= 0 or len(found) < 2:
        return found
    f = np.asarray(freq_hz, dtype=float)
    gap = merge_steps * float(np.median(np.diff(f)))
    clusters, current = [], [found[0]]
    for r in found[1:]:
        if r.freq_hz - current[-1].freq_hz < gap:
            current.append(r)
        else:
            clusters.append(current)
            current = [r]
    clusters.append(current)
    out = []
    for c in clusters:
        if len(c) % 2 == 0:
            continue
        fr = float(np.mean([r.freq_hz for r in c]))
        rr = float(np.mean([r.r_ohm for r in c]))
        out.append(Resonance(fr, rr, c[0].kind, float(swr(gamma_from_z(complex(rr))))))
    return out


def _crossings(freq_hz, z_ohm, gamma_limit) -> list[Resonance]:
    """Every sign change of X (see :func:`resonances`), without merging."""
    f, z = _arrays(freq_hz, z_ohm, "z_ohm")
    if f.size < 2:
        return []
    x = z.imag
    finite = np.isfinite(z)
    x0, x1 = x[:-1], x[1:]
    pair_ok = finite[:-1] & finite[1:]
    idx_s = np.flatnonzero(pair_ok & (x0 < 0) & (x1 > 0))  # rising
    idx_p = np.flatnonzero(pair_ok & (x0 > 0) & (x1 < 0))  # falling
    # interpolate at the crossings only (a few points, not the whole sweep)
    with np.errstate(divide="ignore", invalid="ignore"):
        # series: linear in Z
        xa, xb = x[idx_s], x[idx_s + 1]
        t_s = xa / (xa - xb)
        r_s = z.real[idx_s] + t_s * (z.real[idx_s + 1] - z.real[idx_s])
        # parallel: linear in Y (B = Im Y has the opposite sign of X)
        ya, yb = 1.0 / z[idx_p], 1.0 / z[idx_p + 1]
        t_p = ya.imag / (ya.imag - yb.imag)
        g_p = ya.real + t_p * (yb.real - ya.real)
        r_p = 1.0 / g_p
    freqs = [f[idx_s] + t_s * (f[idx_s + 1] - f[idx_s]), f[idx_p] + t_p * (f[idx_p + 1] - f[idx_p])]
    rs = [r_s, r_p]
    kinds = [np.full(idx_s.size, "series", dtype=object), np.full(idx_p.size, "parallel", dtype=object)]

    # interior samples sitting exactly on X = 0 between samples of opposite sign
    if f.size >= 3:
        xm, xc, xp = x[:-2], x[1:-1], x[2:]
        on_zero = finite[1:-1] & finite[:-2] & finite[2:] & (xc == 0) & (xm * xp < 0)
        k = np.flatnonzero(on_zero) + 1
        freqs.append(f[k])
        rs.append(z.real[k])
        kinds.append(np.where(x[k + 1] > x[k - 1], "series", "parallel").astype(object))

    freq_all = np.concatenate(freqs)
    r_all = np.concatenate(rs)
    kind_all = np.concatenate(kinds)
    with np.errstate(divide="ignore", invalid="ignore"):
        g_all = gamma_from_z(r_all.astype(complex))
    keep = np.isfinite(freq_all) & np.isfinite(r_all) & (r_all >= 0) & (np.abs(g_all) < gamma_limit)
    order = np.argsort(freq_all[keep], kind="stable")
    s_all = swr(g_all[keep])[order]
    return [Resonance(float(fr), float(r), str(kd), float(s))
            for fr, r, kd, s in zip(freq_all[keep][order], r_all[keep][order], kind_all[keep][order], s_all)]


# -------------------------------------------------------------------------------------------- minimum

def min_swr(freq_hz, gamma) -> tuple[float | None, float | None]:
    """The SWR minimum, interpolated between samples.

    Parameters
    ----------
    freq_hz : array_like, shape (n,)
        Strictly increasing frequencies, Hz.
    gamma : array_like, shape (n,), complex
        Reflection coefficient at 50 ohm.

    Returns
    -------
    (freq_hz, swr) : tuple of float
        Frequency of the minimum, Hz, and the SWR there. ``(None, None)`` when no sample is finite.

    Notes
    -----
    The parabola is fitted to the reflected-power fraction |Gamma|^2 through the lowest sample and
    its two neighbours (any spacing, Lagrange form). Where Gamma(f) is locally linear in f (as it is
    near a match), |Gamma(f)|^2 = |Gamma_k + Gamma'(f - f_k)|^2 is exactly quadratic in f, whereas
    |Gamma| and SWR have a V-shaped cusp at a perfect match that a parabola fits poorly.
    The SWR is then (1 + |Gamma|)/(1 - |Gamma|) (Pozar 4th ed. eq. 2.41). At the first or last
    sample, or when the three points do not curve upwards, the sampled point is returned.
    """
    f, g = _arrays(freq_hz, gamma, "gamma")
    p = np.abs(g) ** 2
    p = np.where(np.isfinite(p), p, np.nan)
    if f.size == 0 or np.all(np.isnan(p)):
        return None, None
    k = int(np.nanargmin(p))
    f_min, p_min = f[k], p[k]
    if 0 < k < f.size - 1 and np.isfinite(p[k - 1]) and np.isfinite(p[k + 1]):
        x0, x1, x2 = f[k - 1] - f[k], 0.0, f[k + 1] - f[k]
        y0, y1, y2 = p[k - 1], p[k], p[k + 1]
        # p(x) = a x^2 + b x + c through the three points (x relative to f_k)
        d0 = y0 / ((x0 - x1) * (x0 - x2))
        d1 = y1 / ((x1 - x0) * (x1 - x2))
        d2 = y2 / ((x2 - x0) * (x2 - x1))
        a = d0 + d1 + d2
        b = -(d0 * (x1 + x2) + d1 * (x0 + x2) + d2 * (x0 + x1))
        c = y1
        if a > 0:
            xv = min(max(-b / (2 * a), x0), x2)
            f_min = f[k] + xv
            p_min = max(a * xv * xv + b * xv + c, 0.0)
    return float(f_min), float(swr(math.sqrt(p_min)))


# ----------------------------------------------------------------------------------------- bandwidth

def swr_spans(freq_hz, gamma, threshold, *, merge_steps: int = NOISE_MERGE_STEPS) -> list[tuple[float, float]]:
    """Contiguous frequency spans where SWR <= ``threshold``.

    Parameters
    ----------
    freq_hz : array_like, shape (n,)
        Strictly increasing frequencies, Hz.
    gamma : array_like, shape (n,), complex
        Reflection coefficient at 50 ohm.
    threshold : float
        SWR limit, above 1.

    Returns
    -------
    list of (low_hz, high_hz)
        In increasing frequency. An edge between two samples is interpolated linearly in SWR; an
        edge that is the sweep's first or last frequency means the sweep cut the span (the true
        span is wider): test it with :func:`span_cut_by_sweep_edge`. A span of a single sample
        has low_hz == high_hz. Samples with NaN count as above the threshold. Spans separated by a
        gap of less than ``merge_steps`` sweep steps (the SWR dithering about the threshold) are
        joined into one.
    """
    t = check_swr_threshold(threshold)
    f, g = _arrays(freq_hz, gamma, "gamma")
    if f.size == 0:
        return []
    s = swr(g)
    inside = np.isfinite(s) & (s <= t)
    edges = np.diff(np.concatenate(([0], inside.astype(np.int8), [0])))
    starts = np.flatnonzero(edges == 1)          # first inside sample of each run
    stops = np.flatnonzero(edges == -1) - 1      # last inside sample of each run

    def edge(k_in, k_out):
        s_in, s_out = s[k_in], s[k_out]
        with np.errstate(divide="ignore", invalid="ignore"):
            frac = (t - s_in) / (s_out - s_in)
        frac = np.where(np.isfinite(frac), np.clip(frac, 0.0, 1.0), 0.0)
        return f[k_in] + frac * (f[k_out] - f[k_in])

    lo = f[starts].copy()
    m = starts > 0
    lo[m] = edge(starts[m], starts[m] - 1)
    hi = f[stops].copy()
    m = stops < f.size - 1
    hi[m] = edge(stops[m], stops[m] + 1)
    spans = [(float(a), float(b)) for a, b in zip(lo, hi)]
    if merge_steps > 0 and len(spans) > 1:
        gap = merge_steps * float(np.median(np.diff(f)))
        merged = [spans[0]]
        for a, b in spans[1:]:
            if a - merged[-1][1] < gap:
                merged[-1] = (merged[-1][0], b)
            else:
                merged.append((a, b))
        spans = merged
    return spans


def span_cut_by_sweep_edge(span, freq_hz) -> bool:
    """True when a span from :func:`swr_spans` reaches the sweep's first or last frequency.

    Such a span is cut by the sweep: the antenna's true bandwidth there is larger than the span.
    An interpolated edge always lies strictly inside the sweep, so the test is exact.
    """
    f = np.asarray(freq_hz, dtype=float).reshape(-1)
    if f.size == 0:
        return False
    return bool(span[0] <= f[0] or span[1] >= f[-1])


def swr_spans_by_threshold(freq_hz, gamma, thresholds=DEFAULT_THRESHOLDS) -> dict[str, list[list[float]]]:
    """Spans of SWR <= each threshold, keyed by :func:`threshold_key` (``"1.5"``, ``"2"``, ``"3"``).

    Returns
    -------
    dict
        ``{key: [[low_hz, high_hz], ...]}``, plain floats (see :func:`swr_spans`).
    """
    return {threshold_key(t): [[lo, hi] for lo, hi in swr_spans(freq_hz, gamma, t)]
            for t in thresholds}


# ------------------------------------------------------------------------------------------------ Q

def q_impedance(freq_hz, z_ohm, f0_hz, *, half_window_hz: float | None = None) -> float:
    """Antenna Q from the frequency derivative of its impedance (Yaghjian and Best).

    Parameters
    ----------
    freq_hz : array_like, shape (n,)
        Strictly increasing frequencies, Hz (at least 2).
    z_ohm : array_like, shape (n,), complex
        Impedance, ohm.
    f0_hz : float
        Frequency where Q is wanted, Hz; normally a resonance.
    half_window_hz : float, optional
        When given (and it holds at least 5 samples), R, X and their derivatives at f0 come from a
        least-squares quadratic in w fitted to the samples within f0 +/- this, which keeps
        measurement noise from dominating the derivative (a noisy sweep's point-to-point
        differences can be many times the true slope). Without it, central differences.

    Returns
    -------
    float
        Q, or NaN when it cannot be computed (fewer than 2 samples, f0 outside the sweep,
        R0 <= 0, or non-finite samples next to f0).

    Notes
    -----
    Q_Z(w0) = (w0 / 2 R0) sqrt(R'(w0)^2 + (X'(w0) + |X0| / w0)^2), w = 2 pi f, with the derivatives
    with respect to w taken by second-order central differences on the sampled grid
    (``numpy.gradient``, first-order at the ends) and R, X, R', X' interpolated linearly at f0.
    At a resonance (X0 = 0) it reduces to w0 |Z'(w0)| / 2 R0. It equals the circuit Q of a
    series or a parallel RLC at its resonance.

    References
    ----------
    A. D. Yaghjian and S. R. Best, "Impedance, bandwidth, and Q of antennas," IEEE Trans. Antennas
    Propag. 53(4):1298-1324, Apr. 2005, doi:10.1109/TAP.2005.844443 (formula quoted from memory).
    """
    f, z = _arrays(freq_hz, z_ohm, "z_ohm")
    f0 = float(f0_hz)
    if f.size < 2 or not (f[0] <= f0 <= f[-1]):
        return math.nan
    w = 2 * np.pi * f
    w0 = 2 * np.pi * f0
    if half_window_hz is not None:
        near = (np.abs(f - f0) <= half_window_hz) & np.isfinite(z)
        if near.sum() >= 5:
            dw = w[near] - w0
            cr = np.polyfit(dw, z.real[near], 2)
            cx = np.polyfit(dw, z.imag[near], 2)
            r0, dr0, x0, dx0 = cr[2], cr[1], cx[2], cx[1]
            if not r0 > 0:
                return math.nan
            q = float(w0 / (2 * r0) * math.hypot(dr0, dx0 + abs(x0) / w0))
            return q if math.isfinite(q) else math.nan
    with np.errstate(invalid="ignore", over="ignore"):  # a Z = inf sample spoils only its neighbours
        dr = np.gradient(z.real, w)
        dx = np.gradient(z.imag, w)
        r0 = np.interp(f0, f, z.real)
        x0 = np.interp(f0, f, z.imag)
        dr0 = np.interp(f0, f, dr)
        dx0 = np.interp(f0, f, dx)
    if not r0 > 0:
        return math.nan
    q = float(w0 / (2 * r0) * math.hypot(dr0, dx0 + abs(x0) / w0))
    return q if math.isfinite(q) else math.nan


def q_from_span(f_lo, f_hi, threshold_swr) -> float:
    """Q from the fractional bandwidth between two SWR = ``threshold_swr`` edges.

    Parameters
    ----------
    f_lo, f_hi : float
        Lower and upper edge, Hz (0 < f_lo < f_hi).
    threshold_swr : float
        The SWR at both edges, above 1.

    Returns
    -------
    float
        Q, or NaN when the edges do not make a span.

    Notes
    -----
    Q = (s - 1) / (FBW sqrt(s)), FBW = (f_hi - f_lo) / f0, f0 = sqrt(f_lo f_hi). It assumes the
    antenna is matched (SWR 1) at the centre; it is exact for a series RLC with R = 50 ohm and only
    an estimate otherwise; the caller must say so.

    References
    ----------
    A. D. Yaghjian and S. R. Best, IEEE Trans. Antennas Propag. 53(4):1298-1324, 2005 (matched-at-
    centre relation FBW ~ (s - 1)/(Q sqrt s), from memory).
    """
    s = check_swr_threshold(threshold_swr)
    lo, hi = float(f_lo), float(f_hi)
    if not (math.isfinite(lo) and math.isfinite(hi)) or lo <= 0 or hi <= lo:
        return math.nan
    f0 = math.sqrt(lo * hi)
    fbw = (hi - lo) / f0
    return (s - 1) / (fbw * math.sqrt(s))


# --------------------------------------------------------------------------------------------- trim

TRIM_RULE_LIMIT = 0.15
"""Largest relative distance between the resonance and the target for which trimming advice is given.
Our choice (common practice, no source): f ~ 1/length holds for small changes of one resonant element,
while its end effects, the reactance of its feed region and its coupling to nearby conductors stay much
the same; over about 15 % they do not, and far enough away (a factor near 2 or 3) the element answers
on another mode altogether. Beyond it: cut in steps and sweep again."""


def trim_advice(resonance_hz, target_hz, *, resonance_draws_hz=None, coverage: float = 0.95) -> dict:
    """How much to change a resonant element's length to move its resonance to ``target_hz``.

    Parameters
    ----------
    resonance_hz, target_hz : float
        The series resonance to move and where it should go, Hz.
    resonance_draws_hz : ndarray, optional
        Monte Carlo draws of the resonance (NaN where a draw lost it): the change then gets a coverage interval.
    coverage : float
        Coverage probability of that interval.

    Returns
    -------
    dict
        ``{"target_hz", "resonance_hz", "length_change_percent", "length_change_percent_interval",
        "resonance_lost_fraction", "refused"}``; a negative change means shorten. ``refused`` is None, or the
        reason there is no advice (the target is more than :data:`TRIM_RULE_LIMIT` away), with
        ``length_change_percent`` None. ``resonance_lost_fraction`` is the share of the draws that lost the
        resonance (None without draws).

    Notes
    -----
    Resonant frequency scales as 1/length (common practice, no source), so
    L_new / L_old = f_res / f_target and the change is (f_res / f_target - 1) * 100 %.

    The interval follows the resonance's own rule (:func:`deembed.analysis.uncertainty.interval`): when more
    than :data:`~deembed.analysis.uncertainty.MAX_LOST_FRACTION` of the draws lose the resonance, neither the
    resonance nor the change gets an interval (an interval from the draws that kept it would be too narrow).
    """
    res, tgt = float(resonance_hz), float(target_hz)
    if not (math.isfinite(tgt) and tgt > 0):
        raise OptionError("target frequency", f"{target_hz!r} is not a positive frequency; give one like 7.15MHz")
    if not (math.isfinite(res) and res > 0):
        raise OptionError("resonance frequency", f"{resonance_hz!r} is not a positive frequency")
    out = {"target_hz": tgt, "resonance_hz": res, "length_change_percent": (res / tgt - 1.0) * 100.0,
           "length_change_percent_interval": None, "resonance_lost_fraction": None, "refused": None}
    if abs(tgt / res - 1) > TRIM_RULE_LIMIT:
        out["length_change_percent"] = None
        out["refused"] = (f"the target is {abs(tgt / res - 1):.0%} away from the resonance; the rule that resonance "
                          f"scales as 1/length only holds within about {TRIM_RULE_LIMIT:.0%}, where the element's end "
                          "effects, feed and surroundings stay the same (farther out it may answer on another mode): "
                          "cut or add in steps and sweep again")
        return out
    if resonance_draws_hz is not None:
        d = np.asarray(resonance_draws_hz, dtype=float).reshape(-1)
        if d.size >= 10:
            out["resonance_lost_fraction"] = float(np.mean(~np.isfinite(d)))
            out["length_change_percent_interval"] = interval((d / tgt - 1.0) * 100.0, coverage)
    return out


def trim_resonance(resonances, target_hz, primary_hz=None):
    """The series resonance the trimming advice is about, or None.

    Among the series resonances (X rising through zero: the element's own resonance; a parallel one is
    not moved the same way by its length), the one at the SWR minimum (``primary_hz``) when it is within
    :data:`TRIM_RULE_LIMIT` of the target, else the one nearest the target.

    Parameters
    ----------
    resonances : list of dict
        ``{"freq_hz", "kind", ...}`` as in :func:`end_findings`.
    """
    series = [r for r in resonances if r.get("kind") == "series" and r.get("freq_hz")]
    if not series:
        return None
    tgt = float(target_hz)
    if primary_hz is not None:
        prim = min(series, key=lambda r: abs(r["freq_hz"] - primary_hz))
        if abs(prim["freq_hz"] - primary_hz) <= 1e-9 * primary_hz + 1e-3 and abs(tgt / prim["freq_hz"] - 1) <= TRIM_RULE_LIMIT:
            return prim
    return min(series, key=lambda r: abs(r["freq_hz"] - tgt))


# ------------------------------------------------------------------------------------- end findings

@dataclass(frozen=True)
class EndFindings(Result):
    """What the findings say about one end of the line (``feedpoint`` and ``analyzer`` of correct's summary).

    Made by :func:`end_findings` (see there for each field; every number a Python float or None). Two keys only
    some outputs have, null or not when there (:data:`~deembed.base.results.UNSET` otherwise): ``uncertainty``,
    the end's intervals (:func:`deembed.analysis.summary.summarise` sets it, None without draws), and ``trim``,
    the trim advice at the feedpoint (set by ``correct --target``). ``noise_gamma_rms`` is None for a sweep too
    short for the local models.
    """

    min_swr: dict
    resonances_hz: list
    resonances: list
    swr_spans_hz: dict
    swr_spans_cut_by_sweep_edge: dict
    q: float | None
    q_freq_hz: float | None
    q_from_span: float | None
    noise_gamma_rms: float | None = None
    uncertainty: object = UNSET
    trim: object = UNSET


def end_findings(freq_hz, gamma, thresholds=DEFAULT_THRESHOLDS, *, events=None, sigma=None) -> EndFindings:
    """Everything the findings can say about one end of the line, ready for JSON.

    The findings come from the smooth local models of :mod:`deembed.analysis.smooth` (a local polynomial fit
    near each event, Savitzky-Golay), not from single samples; the per-sample functions above remain for
    checks and for callers that want them.

    Parameters
    ----------
    freq_hz : array_like, shape (n,)
        Strictly increasing frequencies, Hz.
    gamma : array_like, shape (n,), complex
        Reflection coefficient at 50 ohm.
    thresholds : sequence of float
        SWR levels for the bandwidths.
    events : EventSet, optional
        The end's events when already located (:func:`deembed.analysis.smooth.find_events`).
    sigma : float or ndarray, optional
        Noise RMS per sample (default: estimated from ``gamma``).

    Returns
    -------
    EndFindings
        ``min_swr``: ``{"freq_hz", "swr"}``;
        ``resonances_hz``: list of float;
        ``resonances``: list of ``{"freq_hz", "r_ohm", "kind", "swr"}``;
        ``swr_spans_hz``: ``{key: [[low_hz, high_hz], ...]}`` (see :func:`swr_spans_by_threshold`);
        ``swr_spans_cut_by_sweep_edge``: ``{key: [bool per span]}``;
        ``q``: Yaghjian-Best Q at the resonance nearest the SWR minimum, from the local model (None without
        one, or when that resonance is not inside the widest SWR span around the minimum: a reactance zero
        far from any match, such as the line makes at the analyzer end, has no meaningful Q);
        ``q_freq_hz``: that resonance's frequency (None without one);
        ``q_from_span``: Q from the 2:1 span that contains the SWR minimum (None when there is
        none or the sweep cuts it); valid only if the antenna is matched near the centre;
        ``noise_gamma_rms``: the noise the local models assumed (complex RMS in Gamma).
        Every number is a Python float; NaN and inf become None.
    """
    f, g = _arrays(freq_hz, gamma, "gamma")
    if f.size < MIN_WINDOW_POINTS:     # too short for a local model: between-sample interpolation
        return sample_end_findings(f, g, thresholds)
    if events is None:
        events = find_events(f, g, sigma=sigma, thresholds=thresholds)
    v = events.findings(gamma=g) if events.nominal is None else events.findings(
        {k: np.array([x]) for k, x in events.nominal.items()})
    return EndFindings(
        min_swr=v["min_swr"],
        resonances_hz=[finite_or_none(x) for x in v["resonances_hz"]],
        resonances=v["resonances"],
        swr_spans_hz={k: [[finite_or_none(lo), finite_or_none(hi)] for lo, hi in sp]
                      for k, sp in v["swr_spans_hz"].items()},
        swr_spans_cut_by_sweep_edge=v["swr_spans_cut_by_sweep_edge"],
        q=v["q"],
        q_freq_hz=v["q_freq_hz"],
        q_from_span=finite_or_none(v["q_from_span"]) if v["q_from_span"] is not None else None,
        noise_gamma_rms=v["noise_gamma_rms"],
    )


def sample_end_findings(freq_hz, gamma, thresholds=DEFAULT_THRESHOLDS) -> EndFindings:
    """The per-sample findings (interpolation between samples), for sweeps too short for the local models.

    Parameters
    ----------
    freq_hz : array_like, shape (n,)
        Strictly increasing frequencies, Hz.
    gamma : array_like, shape (n,), complex
        Reflection coefficient at 50 ohm.
    thresholds : sequence of float
        SWR levels for the bandwidths.

    Returns
    -------
    EndFindings
        ``min_swr``: ``{"freq_hz", "swr"}``;
        ``resonances_hz``: list of float;
        ``resonances``: list of ``{"freq_hz", "r_ohm", "kind", "swr"}``;
        ``swr_spans_hz``: ``{key: [[low_hz, high_hz], ...]}`` (see :func:`bandwidths`);
        ``swr_spans_cut_by_sweep_edge``: ``{key: [bool per span]}``;
        ``q``: Yaghjian-Best Q at the resonance nearest the SWR minimum (None without one);
        ``q_freq_hz``: that resonance's frequency (None without one);
        ``q_from_span``: Q from the 2:1 span that contains the SWR minimum (None when there is
        none or the sweep cuts it); valid only if the antenna is matched near the centre;
        ``noise_gamma_rms``: None (no local model assumed any noise).
        Every number is a Python float; NaN and inf become None.
    """
    f, g = _arrays(freq_hz, gamma, "gamma")
    z = z_from_gamma(g)
    f_min, s_min = min_swr(f, g)
    res = resonances(f, z)
    spans = {threshold_key(t): swr_spans(f, g, t) for t in thresholds}

    q_bw = None
    span2 = None
    if f_min is not None:
        for lo, hi in swr_spans(f, g, 2.0):
            if lo <= f_min <= hi:
                span2 = (lo, hi)
                if not span_cut_by_sweep_edge((lo, hi), f):
                    q_bw = finite_or_none(q_from_span(lo, hi, 2.0))
                break

    q = q_freq = None
    if res and f_min is not None:
        nearest = min(res, key=lambda r: abs(r.freq_hz - f_min))
        # derivatives from a local quadratic fit over 1 % of f0 or a quarter of the 2:1 span,
        # whichever is narrower, so that noise does not swamp them
        hw = 0.01 * nearest.freq_hz
        if span2 is not None and span2[1] > span2[0]:
            hw = min(hw, 0.25 * (span2[1] - span2[0]))
        q = finite_or_none(q_impedance(f, z, nearest.freq_hz, half_window_hz=hw))
        q_freq = nearest.freq_hz

    return EndFindings(
        min_swr={"freq_hz": finite_or_none(f_min), "swr": finite_or_none(s_min)},
        resonances_hz=[finite_or_none(r.freq_hz) for r in res],
        resonances=[{"freq_hz": finite_or_none(r.freq_hz), "r_ohm": finite_or_none(r.r_ohm), "kind": r.kind,
                     "swr": finite_or_none(r.swr)} for r in res],
        swr_spans_hz={k: [[finite_or_none(lo), finite_or_none(hi)] for lo, hi in v] for k, v in spans.items()},
        swr_spans_cut_by_sweep_edge={k: [span_cut_by_sweep_edge(sp, f) for sp in v] for k, v in spans.items()},
        q=q,
        q_freq_hz=finite_or_none(q_freq),
        q_from_span=q_bw,
    )
