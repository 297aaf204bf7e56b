"""The reflection along the line: a sweep's inverse Fourier transform, its window, resolution and gating.

A reflection ``Gamma`` that sits a one-way delay ``tau`` down the line comes back as
``Gamma * exp(-j 2 pi f 2 tau)`` at the analyzer, so the inverse Fourier transform of a sweep taken on a
uniform frequency grid has a peak at the round-trip time ``2 tau`` whose height is ``|Gamma|``
(attenuated by the line's two-way loss on the way). Two transforms:

* **band-pass**: any uniform grid. The response is complex; only its magnitude is meaningful (the
  grid's low edge turns the phase). Resolution from the span ``B = f_high - f_low``.
* **low-pass**: only for a *harmonic* grid, one whose points are whole multiples of the step
  (``f_k = (k + m) df`` with ``m`` small), so the spectrum can be mirrored about 0 Hz into a real time
  response. The missing points below the sweep (at most :data:`LOWPASS_MAX_MISSING`, 0 Hz included) are
  filled by extrapolation. The impulse keeps its sign (an open is positive, a short negative) and its
  running sum, the step response, reads as the impedance along the line. Resolution from ``2 f_high``.

Formulas (round-trip time; one-way distance is ``v t / 2`` with ``v = VF c``):

* range resolution ``dt = 1 / B`` (band-pass), ``1 / (2 f_high)`` (low-pass): the Fourier uncertainty
  relation of a band-limited pulse (Rayleigh criterion for an unwindowed sweep); one-way
  ``dd = v / (2 B)`` and ``v / (4 f_high)``. A window widens the actual trace; :func:`pulse_width_s`
  measures that width for the window in use.
* alias-free range ``T = 1 / df`` (the inverse transform of a grid with step ``df`` repeats every
  ``1/df``); one-way ``v / (2 df) = v (N - 1) / (2 B)``.

(Oppenheim & Schafer, *Discrete-Time Signal Processing*, 3rd ed., sec. 8.1 (DFT sampling and time
aliasing) and sec. 10.2 (windowing and resolution); common practice of time-domain reflectometry
with network analyzers, from memory.)

Window: Kaiser, ``numpy.kaiser(N, beta)``; :data:`DEFAULT_KAISER_BETA` = 6 puts the highest side lobe
about 44 dB below the main lobe (Kaiser & Schafer 1980, from memory), so reflections down to 30 dB
below the strongest are not confused with side lobes; ``beta = 0`` is no window (sharpest, side lobes
at -13 dB). Everything is numpy, vectorised over frequency and time; nothing here reads or writes files.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..base.units import fmt_freq

C0_M_PER_S = 299_792_458.0
DEFAULT_KAISER_BETA = 6.0
DEFAULT_PAD = 8
LOWPASS_MAX_MISSING = 2   # points below the sweep (0 Hz included) a low-pass transform may extrapolate
GRID_TOLERANCE = 1e-3     # a grid is uniform when every step is within this fraction of the mean step
MIN_POINTS = 16
BLOCK_POINTS = 1 << 16  # points per block where a whole-sweep temporary would cost memory (a 512 kB block)


@dataclass(frozen=True)
class Grid:
    """A uniform frequency grid: ``f_k = low_hz + k step_hz``, ``k = 0 .. n-1`` (the sweep's low edge, its
    step and its number of points; :attr:`high_hz` is its high edge)."""

    low_hz: float
    step_hz: float
    n: int

    @property
    def high_hz(self) -> float:
        return self.low_hz + self.step_hz * (self.n - 1)

    @property
    def span_hz(self) -> float:
        return self.step_hz * (self.n - 1)

    @property
    def harmonic_index(self) -> float:
        """low edge / step: a whole number for a grid whose points are multiples of the step."""
        return self.low_hz / self.step_hz

    @property
    def freq_hz(self) -> np.ndarray:
        return self.low_hz + self.step_hz * np.arange(self.n)


def grid_of(freq_hz) -> tuple[Grid | None, str]:
    """The uniform grid of a sweep's frequencies, or (None, why not)."""
    f = np.asarray(freq_hz, dtype=float)
    if f.ndim != 1 or f.size < MIN_POINTS:
        return None, f"it has {f.size} points; a transform along the line needs at least {MIN_POINTS}"
    step = (f[-1] - f[0]) / (f.size - 1)
    if not step > 0:
        return None, "its frequencies do not increase"
    worst = max(float(np.max(np.abs(np.diff(f[i:i + BLOCK_POINTS + 1]) - step)))
                for i in range(0, f.size - 1, BLOCK_POINTS))
    if worst > GRID_TOLERANCE * step:
        return None, (f"its frequency steps are not equal (they vary by up to {worst / step:.1%} of the mean step); "
                      "sweep with equal (linear) steps")
    return Grid(float(f[0]), float(step), int(f.size)), ""


def lowpass_check(grid: Grid) -> tuple[bool, str]:
    """Can this grid be mirrored about 0 Hz? Returns (allowed, reason when not)."""
    m = grid.harmonic_index
    whole = round(m)
    if abs(m - whole) > 0.01:
        return False, (f"its points are not whole multiples of its step (low edge {fmt_freq(grid.low_hz, 6)}, "
                       f"step {fmt_freq(grid.step_hz, 6)})")
    if whole > LOWPASS_MAX_MISSING:
        return False, (f"it starts {whole} steps above 0 Hz and at most {LOWPASS_MAX_MISSING} missing points "
                       "can be extrapolated")
    return True, ""


def lowpass_hint(grid: Grid) -> str:
    """What sweep would allow a low-pass transform with the same top frequency."""
    return (f"sweep from {fmt_freq(grid.step_hz, 6)} to {fmt_freq(grid.high_hz, 6)} in steps of "
            f"{fmt_freq(grid.step_hz, 6)} (every point a whole multiple of the step)")


def fft_size(n: int, pad: int) -> int:
    """A fast transform length of at least ``pad * n`` points (a product of 2, 3 and 5)."""
    target = max(int(pad), 1) * int(n)
    best = 1 << int(np.ceil(np.log2(target)))
    p5 = 1
    while p5 < best:
        p35 = p5
        while p35 < best:
            q = p35
            while q < target:
                q *= 2
            best = min(best, q)
            p35 *= 3
        p5 *= 5
    return best


def kaiser(n: int, beta: float) -> np.ndarray:
    """Kaiser window of ``n`` points (``beta = 0``: no window).

    ``numpy.kaiser``'s own formula, ``I0(beta sqrt(1 - ((k - a)/a)^2)) / I0(beta)`` with ``a = (n - 1)/2``, worked
    out a block of points at a time (the same values; ``numpy.i0`` makes a dozen temporaries of its input's size).
    """
    if not beta > 0:
        return np.ones(n)
    if n <= BLOCK_POINTS:
        return np.kaiser(n, beta)
    out = np.empty(n)
    alpha = (n - 1) / 2.0
    scale = np.i0(float(beta))
    for i in range(0, n, BLOCK_POINTS):
        k = np.arange(i, min(n, i + BLOCK_POINTS))
        out[i:i + k.size] = np.i0(beta * np.sqrt(1 - ((k - alpha) / alpha) ** 2.0)) / scale
    return out


@dataclass(frozen=True)
class Response:
    """The transformed sweep on a padded time grid.

    Attributes
    ----------
    t_s : round-trip time of each sample, s, from 0 up to :attr:`covers_s` (exclusive)
    amplitude : (M,) complex (band-pass) or real (low-pass) impulse response, scaled so that a
        reflection ``Gamma`` that is the same at every frequency gives a peak of height ``Gamma``
    step : (M,) real step response (low-pass only, else None): the reflection seen up to each time
    weights : (N,) the weights each sweep point carried (window, and 2x for mirrored low-pass points),
        normalised to sum 1; used to compensate a frequency-dependent line loss consistently
    mode : "band-pass" or "low-pass"
    notes : remarks (extrapolated points)
    covers_s : the round-trip time the samples cover: the whole alias-free period ``1/df``, or only its
        first part when the transform was asked to reach no farther (:func:`bandpass` with ``reach_s``)
    """

    t_s: np.ndarray
    amplitude: np.ndarray
    step: np.ndarray | None
    weights: np.ndarray
    mode: str
    notes: tuple = ()
    covers_s: float = float("inf")

    @property
    def magnitude(self) -> np.ndarray:
        return np.abs(self.amplitude)


PART_SAVING = 16
""":func:`bandpass` with ``reach_s`` works out only the first part of the period when that part is at most
this fraction (1/16) of it; otherwise the whole padded transform, as without ``reach_s``."""

_PART_BLOCK = 1 << 16  # elements per block of :func:`first_samples` (a 1 MB complex block)


def _largest_divisor(m: int, count: int) -> int:
    """The largest divisor ``d`` of ``m`` with ``m // d >= count`` (1 when ``count >= m``)."""
    best = 1
    k = 1
    while k * k <= m:
        if m % k == 0:
            for d in (k, m // k):
                if m // d >= count and d > best:
                    best = d
        k += 1
    return best


def first_samples(x, m: int, count: int, weights=None) -> np.ndarray:
    """The first samples of ``numpy.fft.ifft(x * weights, n=m)`` (at least ``count`` of them), without the rest.

    Decimation in frequency, exact to rounding: with ``m = D M`` and ``k = D q + r``,
    ``ifft_m(x)[j] = (1/D) sum_r exp(j 2 pi r j / m) ifft_M(x[r::D])[j]`` for ``j < M``, so ``D`` short
    transforms of the interleaved sub-sequences give the first ``M = m / D`` samples (``D`` the largest divisor
    of ``m`` that leaves ``M >= count``). Work as for the whole transform, but memory a block at a time: no
    array of ``m`` (or even ``len(x)``) points is made. Returns the ``M`` samples.
    """
    x = np.asarray(x)
    n = x.shape[0]
    d = _largest_divisor(int(m), int(count))
    if d == 1:
        return np.fft.ifft(x if weights is None else x * weights, n=m)
    big_m = m // d
    rows = n // d                 # sub-sequence points present for every r
    rest = n - rows * d           # and one more for r < rest
    q = rows + (1 if rest else 0)
    xv = x[: rows * d].reshape(rows, d)
    wv = None if weights is None else np.asarray(weights)[: rows * d].reshape(rows, d)
    cols = max(1, min(d, _PART_BLOCK // big_m))
    j = np.arange(big_m)
    twiddle = np.exp((2j * np.pi / m) * np.outer(j, np.arange(cols)))   # exp(j 2 pi s j / m), s < cols
    acc = np.zeros(big_m, dtype=complex)
    for c0 in range(0, d, cols):
        c1 = min(d, c0 + cols)
        blk = np.zeros((q, c1 - c0), dtype=complex)
        blk[:rows] = xv[:, c0:c1]
        if wv is not None:
            blk[:rows] *= wv[:, c0:c1]
        if rest > c0:
            e = min(c1, rest)
            tail = x[rows * d + c0: rows * d + e]
            blk[rows, : e - c0] = tail if weights is None else tail * np.asarray(weights)[rows * d + c0: rows * d + e]
        h = np.fft.ifft(blk, n=big_m, axis=0)                            # (M, c1 - c0)
        acc += np.exp((2j * np.pi * c0 / m) * j) * np.einsum("jc,jc->j", h, twiddle[:, : c1 - c0])
    return acc / d


def bandpass(gamma, grid: Grid, beta: float = DEFAULT_KAISER_BETA, pad: int = DEFAULT_PAD,
             reach_s: float | None = None) -> Response:
    """Band-pass impulse response: ``h(t) = sum_k w_k Gamma_k exp(j 2 pi k df t) / sum_k w_k``.

    One inverse FFT of the windowed sweep, zero-padded to :func:`fft_size` points. With ``reach_s`` (a round-trip
    time) on a dense sweep, one whose alias-free period is at least :data:`PART_SAVING` times longer, only the
    samples up to that time are worked out (:func:`first_samples`): the same values on the same time grid as
    the whole transform, for a memory that does not grow with the padded length.
    """
    g = np.asarray(gamma, dtype=complex)
    w = kaiser(grid.n, beta)
    total = float(w.sum())
    m = fft_size(grid.n, pad)
    count = m if reach_s is None else int(np.ceil(reach_s * m * grid.step_hz)) + 1
    if count * PART_SAVING <= m:
        h = first_samples(g, m, count, w)
    else:
        h = np.fft.ifft(g * w, n=m)
    h *= m / total
    t = np.arange(h.size) / (m * grid.step_hz)
    w /= total
    return Response(t, h, None, w, "band-pass", covers_s=h.size / (m * grid.step_hz))


def lowpass(gamma, grid: Grid, beta: float = DEFAULT_KAISER_BETA, pad: int = DEFAULT_PAD) -> Response:
    """Low-pass impulse and step responses of a sweep on a harmonic grid (check with :func:`lowpass_check`).

    The spectrum from 0 Hz to the top is completed below the sweep by a quadratic fit to its first
    six points (real and imaginary parts apart; the 0 Hz value is made real, as it is for any passive
    one-port, and at most 1 in size), weighted by the right half of a Kaiser window (1 at 0 Hz) and mirrored:
    ``h(t) = [w_0 G_0 + 2 Re sum_k w_k G_k exp(j 2 pi k df t)] / (w_0 + 2 sum_k w_k)``.
    The step response is the running sum of the unscaled impulse; it starts at the negative-time
    tail, so a reflection right at the analyzer is counted whole.
    """
    g = np.asarray(gamma, dtype=complex)
    missing = int(round(grid.harmonic_index))
    notes = []
    if missing:
        k = np.arange(missing, missing + min(6, grid.n))
        fit_re = np.polyfit(k, g[: k.size].real, 2)
        fit_im = np.polyfit(k, g[: k.size].imag, 2)
        below = np.arange(missing)
        filled = np.polyval(fit_re, below) + 1j * np.polyval(fit_im, below)
        filled[0] = np.clip(filled[0].real, -1.0, 1.0)  # passive: real, |Gamma(0)| <= 1
        g = np.concatenate([filled, g])
        notes.append(f"the {missing} point(s) below the sweep, 0 Hz included, are extrapolated "
                     f"(0 Hz reflection taken as {filled[0].real:+.3f})")
    elif abs(g[0].imag) > 0:
        g = g.copy()
        g[0] = g[0].real
    k_tot = g.size
    w = np.kaiser(2 * k_tot - 1, beta)[k_tot - 1:] if beta > 0 else np.ones(k_tot)
    m = fft_size(2 * k_tot, pad)
    raw = np.fft.irfft(g * w, n=m)          # (1/m)[w0 G0 + 2 Re sum w_k G_k e^{j2pi k n/m}]
    total = w[0] + 2 * w[1:].sum()
    h = raw * (m / total)
    tail = max(m // 16, 1)                  # negative times, wrapped to the end of the period
    step = np.cumsum(raw) + raw[-tail:].sum()
    t = np.arange(m) / (m * grid.step_hz)
    weights = np.concatenate([[w[0]], 2 * w[1:]])[missing:]   # the sweep's own points (filled ones dropped)
    return Response(t, h, step, weights / weights.sum(), "low-pass", tuple(notes), covers_s=1.0 / grid.step_hz)


def resolution_s(grid: Grid, mode: str = "band-pass") -> float:
    """Round-trip range resolution, s: ``1/B`` (band-pass) or ``1/(2 f_high)`` (low-pass)."""
    return 1.0 / grid.span_hz if mode == "band-pass" else 1.0 / (2.0 * grid.high_hz)


def alias_free_s(grid: Grid) -> float:
    """Round-trip alias-free range, s: ``1/df``."""
    return 1.0 / grid.step_hz


def pulse_width_s(grid: Grid, beta: float, mode: str = "band-pass", pad: int = DEFAULT_PAD) -> float:
    """Full width at half height (-6 dB) of the trace of a single reflection, round trip, s.

    Measured by transforming a flat unit reflection on this grid with this window, so it includes
    the window's widening of the main lobe. Band-pass: only the main lobe's first samples are worked out
    (:func:`first_samples` of the window itself, on the same time grid as :func:`bandpass`).
    """
    if mode == "band-pass":
        w = kaiser(grid.n, beta)
        m = fft_size(grid.n, pad)
        count = 16 * max(int(pad), 1) + 16
        while True:
            mag = np.abs(first_samples(w, m, min(count, m)))
            below = np.nonzero(mag < mag[0] / 2)[0]
            if below.size or count >= m:
                break
            count *= 4
        dt = 1.0 / (m * grid.step_hz)
    else:
        r = lowpass(np.ones(grid.n, dtype=complex), grid, beta, pad)
        mag = np.abs(r.amplitude)
        below = np.nonzero(mag < mag[0] / 2)[0]
        dt = r.t_s[1] - r.t_s[0]
    half = mag[0] / 2
    if below.size == 0:
        return float(mag.size * dt)
    i = int(below[0])
    # linear interpolation between samples i-1 and i; the main lobe is symmetric about 0
    frac = (mag[i - 1] - half) / (mag[i - 1] - mag[i])
    return float(2 * ((i - 1) + frac) * dt)


def span_for_resolution_hz(resolution_s_: float, mode: str = "band-pass") -> float:
    """The span (band-pass) or top frequency (low-pass) that resolves a round-trip time."""
    return 1.0 / resolution_s_ if mode == "band-pass" else 1.0 / (2.0 * resolution_s_)


def step_for_range_hz(range_s: float) -> float:
    """The largest frequency step whose alias-free range covers a round-trip time."""
    return 1.0 / range_s


def soft_box(t_s, lo_s: float, hi_s: float, edge_s: float) -> np.ndarray:
    """1 between ``lo_s`` and ``hi_s``, 0 outside, with raised-cosine edges ``edge_s`` wide centred on each
    boundary (so a reflection exactly on a boundary is kept at half height)."""
    t = np.asarray(t_s, dtype=float)
    e = max(edge_s, 1e-30)
    rise = np.clip((t - (lo_s - e / 2)) / e, 0.0, 1.0)
    fall = np.clip(((hi_s + e / 2) - t) / e, 0.0, 1.0)
    return (0.5 - 0.5 * np.cos(np.pi * rise)) * (0.5 - 0.5 * np.cos(np.pi * fall))


@dataclass(frozen=True)
class Gated:
    """A gated sweep and the gate's effect on it.

    Attributes
    ----------
    gamma : (N,) the sweep with only the kept part of the line (or without the removed part)
    droop_db : (N,) how much window and gate together take off a reflection in the middle of the kept
        window, dB, before it is divided back out: small in the middle of the band, large toward the
        band edges (where the window tapers and the gate's frequency kernel reaches past the sweep),
        so errors and noise there are multiplied by ``10**(droop_db/20)``
    """

    gamma: np.ndarray
    droop_db: np.ndarray


def gate(gamma, grid: Grid, lo_s: float, hi_s: float, keep: bool = True, beta: float = DEFAULT_KAISER_BETA,
         edge_s: float | None = None, pad: int = DEFAULT_PAD) -> Gated:
    """Keep (or remove) the part of the response between round-trip times ``lo_s`` and ``hi_s``.

    The windowed band-pass response (low side lobes, so the gate's edges cut little of any reflection
    outside it) is multiplied by a :func:`soft_box` gate (edges ``1/B`` wide unless ``edge_s`` is given)
    and transformed back to the sweep's own frequencies. Window and gate together shape the spectrum
    (the window tapers it; the gate, a convolution in frequency, reaches past the band edges where there
    is no data); that shape is measured on a flat reflection at the middle of the window and divided
    out, and ``droop_db`` reports it. Removing a window subtracts the kept part from the sweep.
    A window that starts at or before 0 also takes the response's negative-time tail (the part of a
    reflection at the analyzer that the transform wraps to the end of the period).
    """
    g = np.asarray(gamma, dtype=complex)
    edge = (1.0 / grid.span_hz) if edge_s is None else edge_s
    m = fft_size(grid.n, pad)
    period = 1.0 / grid.step_hz
    t = np.arange(m) / (m * grid.step_hz)
    guard = min(period / 4, 4.0 / grid.span_hz)
    signed = np.where(t > period - guard, t - period, t)
    lo = -period if lo_s <= 0 else lo_s
    box = soft_box(signed, lo, hi_s, edge)
    w = kaiser(grid.n, beta)
    kept = np.fft.fft(np.fft.ifft(g * w, n=m) * box)[: grid.n]
    centre = 0.5 * (max(lo_s, 0.0) + hi_s)
    ref = np.exp(-2j * np.pi * grid.freq_hz * centre)
    shape = np.fft.fft(np.fft.ifft(ref * w, n=m) * box)[: grid.n] / ref
    with np.errstate(divide="ignore", invalid="ignore"):
        kept = kept / shape
        droop = -20 * np.log10(np.abs(shape))
    out = kept if keep else g - kept
    return Gated(out, droop)


TWO_WAY_POINTS = 1 << 16
"""Above this many sweep points :func:`two_way_factor` sums over blocks of neighbouring points (see there)."""


def two_way_factor(weights, freq_hz, loss_np_fn, delays_s) -> np.ndarray:
    """Window-weighted mean two-way transmission ``sum_k w_k exp(-2 A(tau, f_k))`` at each one-way delay.

    This is the factor by which the line's loss lowers the peak of a reflection at ``tau`` that is the
    same at every frequency, so dividing a peak by it gives the reflection as it is at its place.
    ``loss_np_fn(delays, freq)`` returns the one-way matched loss in Np, shape (len(delays), len(freq)).
    A sweep of more than :data:`TWO_WAY_POINTS` points is summed over blocks of neighbouring points, each at its
    weighted mean frequency with its summed weight (the midpoint rule: ``exp(-2 A)`` is smooth in frequency,
    so over a block a few kHz wide the relative error is of order ``(block width)^2 (2 A')^2 / 24``, far
    below 1e-6 for any line; common practice, no source). Worked out a block of (delays, frequencies) at a
    time, so memory stays a few MB whatever the sweep.
    """
    d = np.atleast_1d(np.asarray(delays_s, dtype=float))
    f = np.asarray(freq_hz, dtype=float)
    w = np.asarray(weights, dtype=float)
    if f.size > TWO_WAY_POINTS:
        per = -(-f.size // TWO_WAY_POINTS)
        starts = np.arange(0, f.size, per)
        wb = np.add.reduceat(w, starts)
        f = np.add.reduceat(w * f, starts) / wb
        w = wb
    out = np.zeros(d.shape[0])
    f_step = min(f.size, 1 << 14)
    d_step = max(1, (1 << 16) // f_step)  # (delays, freq) blocks of at most 2^16 values: about 0.5 MB each
    for j in range(0, f.size, f_step):
        fj, wj = f[j:j + f_step], w[j:j + f_step]
        for i in range(0, d.shape[0], d_step):
            a = loss_np_fn(d[i:i + d_step], fj)
            out[i:i + d_step] += (np.exp(-2.0 * a) * wj).sum(axis=1)  # no BLAS call for a thin product
    return out
