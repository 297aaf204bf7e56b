"""How far each finding can be trusted: Monte Carlo propagation of the analyzer's and the line's uncertainty.

Method: propagation of distributions by Monte Carlo, JCGM 101:2008 (Supplement 1 to the GUM). Every input
quantity gets a probability distribution; ``draws`` sets of inputs are drawn at once (vectorised: arrays of
shape (draws, frequencies)); each set is de-embedded and its findings worked out by the same local models
that place the reported findings (:mod:`deembed.analysis.smooth`); the coverage interval of each finding is
the probabilistically symmetric one (JCGM 101 7.7: the (1 - p)/2 and (1 + p)/2 quantiles of its draws).
The generator is seeded, so the same inputs give the same intervals.

Input quantities and their distributions
----------------------------------------
* **Analyzer noise**: complex Gaussian, RMS ``s`` estimated from the sweep itself
  (:func:`deembed.analysis.smooth.noise_rms`), independent from point to point; s / sqrt 2 on each of the
  real and imaginary parts.
* **Analyzer calibration**: the residual error terms of a one-port calibration, to first order
  dGamma = e_d + e_t Gamma + e_s Gamma^2 (residual directivity e_d, reflection tracking e_t, source match
  e_s: the three-term error model, check-values F16 / D. Rytting's error-model notes), each complex and
  uniform on a disc whose radius is the stated bound, constant across the sweep within one draw (our choice:
  the residual terms vary slowly with frequency). :data:`CAL_PRESETS` gives bounds for a hobby analyzer and a
  calibrated bench VNA.
* **Line**: per section, its length, velocity factor (or delay), matched loss (as a fraction) and nominal
  Z0, each rectangular between its tolerance bounds (JCGM 101 6.4.2) or normal for figures from a fit
  (6.4.7); see :mod:`deembed.physics.tolerance`.

Which source limits a finding is estimated from the same draws: each finding's draws are regressed
linearly on the drawn scalar inputs (line parameters, calibration terms); each input's share of the
variance is b_i^2 var(x_i) / var(y) (first-order, as in JCGM 100:2008 5.1.3 with sensitivity coefficients
b_i estimated from the sample), and what the regression leaves is the analyzer noise (the only input not
drawn as a scalar).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..physics.between import unit_disc
from ..physics.line_draws import cascade_parts, s_terms, section_parts, section_s_terms
from ..physics.tolerance import Tolerance, default_tolerance
from .smooth import EventSet

C0_M_PER_S = 299_792_458.0
DB_PER_NP = 20 / math.log(10)

DEFAULT_DRAWS = 1000
DEFAULT_SEED = 1
DEFAULT_COVERAGE = 0.95

MAX_LOST_FRACTION = 0.025
"""A finding whose event is lost (not found inside its local window) in more than this fraction of the
draws gets no interval: a note says so instead."""

BAND_MAX_ELEMENTS = 4_000_000
"""Most (draws x frequencies) evaluated for the per-frequency SWR band; longer sweeps use fewer draws for
the band (at least :data:`BAND_MIN_DRAWS`) or get none."""

BAND_MIN_DRAWS = 200

CHUNK_ELEMENTS = 100_000
"""Draws are processed in chunks of about this many (draw, frequency) elements, so that the temporaries stay
in the processor's cache (about 3x faster than whole arrays on a 1001 x 1000 step)."""


@dataclass(frozen=True)
class Calibration:
    """Bounds of the residual one-port calibration terms, in linear reflection units.

    Attributes
    ----------
    name : str
    directivity, tracking, source_match : float
        Radius of the disc each complex residual term is drawn from.
    source : str
        Where the figures come from.
    """

    name: str
    directivity: float
    tracking: float
    source_match: float
    source: str

    def describe(self) -> str:
        if self.directivity == self.tracking == self.source_match == 0:
            return f"{self.name} (no calibration error)"
        return (f"{self.name}: residual directivity {self.directivity:g}, tracking {self.tracking:g}, "
                f"source match {self.source_match:g} ({self.source})")


CAL_PRESETS = {
    "hobby": Calibration("hobby", 0.02, 0.02, 0.03,
                         "a hobby analyzer calibrated with an inexpensive open/short/load kit: load return loss "
                         "about 34 dB, open and short models good to about 0.2 dB; from memory"),
    "bench": Calibration("bench", 0.005, 0.006, 0.008,
                         "a calibrated bench VNA with a characterized mechanical kit: effective directivity "
                         "about 46 dB, tracking within about 0.05 dB; from memory"),
    "none": Calibration("none", 0.0, 0.0, 0.0, "calibration error ignored"),
}
"""Calibration presets; ``hobby`` is the default."""


def parse_calibration(text, option: str = "--cal") -> Calibration:
    """A preset name (``hobby``, ``bench``, ``none``) or one bound in |Gamma| used for all three terms."""
    from ..base.errors import OptionError

    t = str(text).strip().lower()
    if t in CAL_PRESETS:
        return CAL_PRESETS[t]
    try:
        v = float(t)
    except ValueError:
        raise OptionError(option, f"{text!r} is neither {', '.join(CAL_PRESETS)} nor a bound in |Gamma| "
                                  "such as 0.02") from None
    if not (math.isfinite(v) and 0 <= v < 1):
        raise OptionError(option, f"{text!r}: a calibration bound in |Gamma| is between 0 and 1, e.g. 0.02")
    return Calibration(f"{v:g}", v, v, v, "set by the user")


# ------------------------------------------------------------------------------------------ line draws

@dataclass
class LineDraws:
    """Drawn parameter sets of a line: per part, arrays (D, 1) of z0, delay, c, d (or None for a fixed part)."""

    line: object
    params: list
    inputs: list          # [(name, ndarray (D,))] scalar inputs for the contribution analysis
    n: int

    def terms(self, freq_hz, rows: slice = slice(None)):
        """(S11, S21 S12, S22), each (draws in ``rows``, len(freq_hz))."""
        f = np.asarray(freq_hz, dtype=float)
        shape = (len(range(self.n)[rows]), f.size)
        if len(self.params) == 1 and self.params[0] is not None:   # one section: S directly
            p = self.params[0]
            s11, s21s12, s22 = section_s_terms(p["z0"][rows], p["delay"][rows], p["c"][rows], p["d"][rows], f)
            return tuple(np.broadcast_to(x, shape) for x in (s11, s21s12, s22))
        parts = []
        for part, p in zip(self.line.parts, self.params):
            if p is None:
                a = _fixed_abcd(part, f)
                parts.append(tuple(x[None, :] for x in a))
            else:
                parts.append(section_parts(p["z0"][rows], p["delay"][rows], p["c"][rows], p["d"][rows], f))
        a, b, c, d = cascade_parts(parts)
        s11, s21s12, s22 = s_terms(a, b, c, d)
        return tuple(np.broadcast_to(x, shape) for x in (s11, s21s12, s22))


def _fixed_abcd(part, f):
    return part.abcd_parts(f)  # every line part has it (deembed.physics.line.LinePart)


def _is_section(part) -> bool:
    return part.kind == "section"


def section_tolerance(part) -> Tolerance:
    """A section's tolerance: its own (``part.tolerance``) or the defaults for how it is described."""
    tol = getattr(part, "tolerance", None)
    if tol is not None:
        return tol
    has_loss = bool(part.loss.c_np or part.loss.d_np)
    return default_tolerance(length_m=part.length_m, vf=part.vf, delay_s=part.delay_s, z0_ohm=part.z0_ohm,
                             loss_from="points" if has_loss else "none")


def _unit(rng, n, distribution):
    """Draws of a standardised input: uniform on [-1, 1] (bounds) or standard normal (standard uncertainty)."""
    if distribution == "normal":
        return rng.standard_normal(n)
    return rng.uniform(-1.0, 1.0, n)


def draw_line(line, n_draws: int, rng) -> LineDraws:
    """Draw ``n_draws`` parameter sets for every section of ``line`` (parts that are not sections stay fixed)."""
    params, inputs = [], []
    several = sum(_is_section(p) for p in line.parts) > 1
    for k, part in enumerate(line.parts, 1):
        if not _is_section(part):
            params.append(None)
            continue
        tol = section_tolerance(part)
        tag = f" (section {k})" if several else ""
        dist = tol.distribution
        z0 = part.z0_ohm + tol.z0_ohm * _unit(rng, n_draws, dist)
        length_ratio = np.ones(n_draws)
        if part.length_m and part.vf and (tol.length_m or tol.vf):
            xl = _unit(rng, n_draws, dist)
            xv = _unit(rng, n_draws, dist)
            length = part.length_m + tol.length_m * xl
            vf = part.vf + tol.vf * xv
            delay = part.delay_s * (length / part.length_m) * (part.vf / vf)
            length_ratio = length / part.length_m
            if tol.length_m:
                inputs.append((f"line length{tag}", xl))
            if tol.vf:
                inputs.append((f"velocity factor{tag}", xv))
        else:
            xd = _unit(rng, n_draws, dist)
            delay = part.delay_s + tol.delay_s * xd
            if tol.delay_s:
                inputs.append((f"line delay{tag}", xd))
        xa = _unit(rng, n_draws, dist)
        scale = 1 + tol.loss_fraction * xa
        if tol.loss_scales_with_length:
            scale = scale * length_ratio
        if tol.loss_fraction and (part.loss.c_np or part.loss.d_np):
            inputs.append((f"line loss{tag}", xa))
        if tol.z0_ohm:
            inputs.append((f"line Z0{tag}", (z0 - part.z0_ohm) / tol.z0_ohm))
        params.append({"z0": z0[:, None], "delay": np.maximum(delay, 0.0)[:, None],
                       "c": (part.loss.c_np * scale)[:, None], "d": (part.loss.d_np * scale)[:, None]})
    return LineDraws(line, params, inputs, n_draws)


# -------------------------------------------------------------------------------------- analyzer draws

@dataclass
class AnalyzerDraws:
    """Drawn calibration residuals (D, 1) complex and the noise RMS; noise itself is drawn per use."""

    e_d: np.ndarray
    e_t: np.ndarray
    e_s: np.ndarray
    noise_rms: float
    rng: object
    inputs: list
    n: int

    def gamma(self, gamma_sub, rows: slice = slice(None)):
        """Draws (draws in ``rows``, m) of the analyzer-end reflection at the given samples (m,)."""
        g = np.asarray(gamma_sub, dtype=complex)[None, :]
        out = g + self.e_d[rows] + self.e_t[rows] * g + self.e_s[rows] * (g * g)
        if self.noise_rms > 0:
            s = self.noise_rms / math.sqrt(2)
            # single precision is ample for noise draws (a relative 1e-7 of a noise of 1e-3 or so) and halves the
            # generator's work
            noise = self.rng.standard_normal((2, out.shape[0], g.shape[1]), dtype=np.float32)
            noise *= s
            out.real += noise[0]
            out.imag += noise[1]
        return out


def _disc(rng, n, radius):
    r = radius * np.sqrt(rng.uniform(0, 1, n))
    ph = rng.uniform(0, 2 * np.pi, n)
    return r * np.exp(1j * ph)


def draw_analyzer(cal: Calibration, noise_rms: float, n_draws: int, rng) -> AnalyzerDraws:
    """Draw the calibration residuals (uniform on discs) and set up the noise draws."""
    e_d, e_t, e_s = (_disc(rng, n_draws, r) for r in (cal.directivity, cal.tracking, cal.source_match))
    inputs = []
    for name, e, r in (("directivity", e_d, cal.directivity), ("tracking", e_t, cal.tracking),
                       ("source match", e_s, cal.source_match)):
        if r > 0:
            inputs += [("analyzer calibration", e.real / r), ("analyzer calibration", e.imag / r)]
    return AnalyzerDraws(e_d[:, None], e_t[:, None], e_s[:, None], float(noise_rms), rng, inputs, n_draws)


# ------------------------------------------------------------------------------------------- intervals

def interval(values, coverage: float = DEFAULT_COVERAGE):
    """Probabilistically symmetric coverage interval [low, high] of Monte Carlo draws (JCGM 101 7.7).

    Returns None when more than :data:`MAX_LOST_FRACTION` of the draws are NaN (the event was lost)."""
    v = np.asarray(values, dtype=float).reshape(-1)
    fin = np.isfinite(v)
    if v.size == 0 or fin.mean() < 1 - MAX_LOST_FRACTION:
        return None
    lo, hi = np.quantile(v[fin], [(1 - coverage) / 2, (1 + coverage) / 2])
    return [float(lo), float(hi)]


def contributions(values, inputs) -> dict:
    """Share of the variance of a finding's draws owed to each named source (fractions summing to 1).

    The draws are regressed on the standardised scalar inputs (grouped by name); the rest is
    "analyzer noise". Returns {} when the finding does not vary.
    """
    y = np.asarray(values, dtype=float)
    fin = np.isfinite(y)
    if fin.sum() < 10:
        return {}
    y = y[fin]
    var = float(np.var(y))
    if not var > 0:
        return {}
    if inputs:
        x = np.column_stack([np.asarray(a, dtype=float)[fin] for _, a in inputs])
        x = x - x.mean(axis=0)
        coef, *_ = np.linalg.lstsq(x, y - y.mean(), rcond=None)
        parts = {}
        for (name, _), b, col in zip(inputs, coef, x.T):
            parts[name] = parts.get(name, 0.0) + float(b * b * np.var(col))
        explained = sum(parts.values())
    else:
        parts, explained = {}, 0.0
    parts["analyzer noise"] = max(var - explained, 0.0)
    total = sum(parts.values()) or 1.0
    return {k: v / total for k, v in sorted(parts.items(), key=lambda kv: -kv[1])}


# ------------------------------------------------------------------------------------------- the step

@dataclass
class EndDraws:
    """The draws of every finding of one end (from :meth:`EventSet.evaluate`) and what went in."""

    events: EventSet
    values: dict
    inputs: list


@dataclass
class McResult:
    """Everything the Monte Carlo step produced for one sweep."""

    feedpoint: EndDraws
    analyzer: EndDraws
    n: int
    seed: int
    coverage: float
    calibration: Calibration
    noise_rms: float
    line_draws: LineDraws
    swr_band: tuple | None = None          # (low (n,), high (n,)) feedpoint SWR per frequency, or None
    notes: list = field(default_factory=list)


def feedpoint_gain(s21s12, s22, gamma_fp):
    """|dGamma_analyzer / dGamma_feedpoint| = |S21 S12| / |1 - S22 Gamma_L|^2 (from Gamma_in = S11 +
    S21 S12 Gamma_L / (1 - S22 Gamma_L), Pozar 4th ed., from memory)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.abs(s21s12) / np.abs(1 - s22 * gamma_fp) ** 2


def seeds(seed: int):
    """Independent child generators for the line, the calibration, the noise and the band (JCGM 101 C.3
    asks for a good generator; numpy's PCG64 with SeedSequence children)."""
    ss = np.random.SeedSequence(int(seed))
    return [np.random.default_rng(c) for c in ss.spawn(4)]


@dataclass
class BetweenDraws:
    """Draws of the offset a characterized line's evaluation between its points adds at the feedpoint.

    ``unit`` (D,) complex, uniform on the unit disc, one per draw for the whole sweep; ``error`` (n,) the
    estimated |dGamma| per frequency (:func:`deembed.analysis.between.between_error`). The offset of draw
    k at frequency i is unit[k] * error[i] (see :func:`deembed.physics.between.draw_feedpoint_offsets`).
    """

    unit: np.ndarray
    error: np.ndarray
    inputs: list

    def offsets(self, rows: slice, cols=slice(None)):
        return self.unit[rows, None] * self.error[cols][None, :]


BETWEEN_SPAWN_KEY = 15
"""The between-points offsets draw from their own stream (SeedSequence child 15 of the seed), so the other
streams stay as they were; baseline and after sweeps share it, as they share the line."""


def draw_between(line, freq_hz, gamma_an, n_draws: int, seed: int) -> BetweenDraws | None:
    """Between-points offset draws for a characterized line (None when the line has none or the sweep is on
    its characterized points)."""
    from .between import between_error, has_characterized_part

    if not has_characterized_part(line):
        return None
    f = np.asarray(freq_hz, dtype=float)
    s = line.s_params(f)
    g_fp = deembed_draws(np.asarray(gamma_an, dtype=complex)[None, :], s[:, 0, 0], s[:, 1, 0] * s[:, 0, 1],
                         s[:, 1, 1])[0]
    err = np.asarray(between_error(line, f, g_fp), dtype=float)
    err = np.where(np.isfinite(err), err, 0.0)
    if not np.any(err > 0):
        return None
    rng = np.random.default_rng(np.random.SeedSequence(int(seed), spawn_key=(BETWEEN_SPAWN_KEY,)))
    unit = unit_disc(n_draws, rng)
    name = BETWEEN_SOURCE
    return BetweenDraws(unit, err, [(name, unit.real), (name, unit.imag)])


def deembed_draws(gamma_an_draws, s11, s21s12, s22):
    """Gamma_L = (Gamma_in - S11) / (S22 (Gamma_in - S11) + S21 S12) for every draw (closed form, as the
    plain de-embedding)."""
    d = gamma_an_draws - s11
    with np.errstate(divide="ignore", invalid="ignore"):
        return d / (s22 * d + s21s12)


def run(freq_hz, gamma_an, line, events_fp: EventSet, events_an: EventSet, *, noise_rms: float,
        calibration: Calibration = CAL_PRESETS["hobby"], n_draws: int = DEFAULT_DRAWS, seed: int = DEFAULT_SEED,
        coverage: float = DEFAULT_COVERAGE, line_draws: LineDraws | None = None, band: bool = True,
        noise_key: int = 0) -> McResult:
    """The Monte Carlo step for one sweep: draws of the analyzer end and of the line, findings of every draw.

    Parameters
    ----------
    freq_hz, gamma_an : ndarray (n,)
        The sweep at the analyzer end.
    line : Line
        The line removed.
    events_fp, events_an : EventSet
        The events (with their fixed local models) of the measured feedpoint and analyzer traces.
    noise_rms : float
        The analyzer noise (complex RMS in Gamma).
    calibration : Calibration
    n_draws, seed, coverage : int, int, float
    line_draws : LineDraws, optional
        Line parameter draws to use (compare shares one set between two sweeps); drawn here otherwise.
    band : bool
        Also work out the feedpoint SWR band at every frequency.
    noise_key : int
        0 for a sweep's own noise stream; another value gives a second, independent noise stream with the
        same line and calibration draws (compare: the after sweep, measured with the same analyzer and kit).
    """
    f = np.asarray(freq_hz, dtype=float)
    g = np.asarray(gamma_an, dtype=complex)
    r_line, r_cal, r_noise, r_band = seeds(seed)
    if noise_key:
        r_noise, r_band = (np.random.default_rng(c) for c in
                           np.random.SeedSequence(int(seed), spawn_key=(7919, int(noise_key))).spawn(2))
    if line_draws is None:
        line_draws = draw_line(line, n_draws, r_line)
    an = draw_analyzer(calibration, noise_rms, n_draws, r_cal)
    an.rng = r_noise
    between = draw_between(line, f, g, n_draws, seed)

    idx_fp = events_fp.indices()
    idx_an = events_an.indices()
    q = [(1 - coverage) / 2, (1 + coverage) / 2]
    notes = []
    full = band and n_draws * f.size <= BAND_MAX_ELEMENTS
    idx = np.arange(f.size) if full else np.union1d(idx_fp, idx_an).astype(int)
    pos_fp = np.searchsorted(idx, idx_fp)
    pos_an = np.searchsorted(idx, idx_an)
    g_sub, f_sub = g[idx], f[idx]
    mags = np.empty((n_draws, idx.size)) if full else None
    v_fp, v_an = [], []
    step = max(1, CHUNK_ELEMENTS // max(idx.size, 1))
    for a in range(0, n_draws, step):        # chunks of draws: the working set stays in cache
        rows = slice(a, min(a + step, n_draws))
        g_an = an.gamma(g_sub, rows)
        s11, s21s12, s22 = line_draws.terms(f_sub, rows)
        g_fp = deembed_draws(g_an, s11, s21s12, s22)
        if between is not None:
            g_fp += between.offsets(rows, idx)
        if idx_fp.size:
            v_fp.append(events_fp.evaluate(g_fp[:, pos_fp], idx_fp))
        if idx_an.size:
            v_an.append(events_an.evaluate(g_an[:, pos_an], idx_an))
        if full:
            mags[rows] = np.abs(g_fp)
    v_fp = {k: np.concatenate([c[k] for c in v_fp]) for k in v_fp[0]} if v_fp else {}
    v_an = {k: np.concatenate([c[k] for c in v_an]) for k in v_an[0]} if v_an else {}
    inputs_fp = line_draws.inputs + an.inputs + (between.inputs if between is not None else [])
    res = McResult(EndDraws(events_fp, v_fp, inputs_fp), EndDraws(events_an, v_an, an.inputs), n_draws, int(seed),
                   float(coverage), calibration, float(noise_rms), line_draws, notes=notes)
    if full:
        res.swr_band = _band_from_mag(mags, q)
    elif band:
        res.swr_band = swr_band(f, g, line_draws, an, coverage, r_band, notes, between)
    return res


def _band_from_mag(mag, q):
    """SWR (low, high) per column from |Gamma| draws (D, n); non-finite draws count as |Gamma| = inf.

    The quantiles are order statistics picked by a partial sort (``numpy.partition``): the r-th smallest of
    M draws with r = round(p M) (JCGM 101 7.7.2 takes y_(r) and y_(r + q) of the sorted draws)."""
    m = np.where(np.isfinite(mag), mag, np.inf)
    n = m.shape[0]
    idx = [min(max(int(round(p * n)) - 1, 0), n - 1) for p in q]     # 1-based r = round(p M), 0-based r - 1
    part = np.partition(m, sorted(set(idx)), axis=0)
    ql = np.stack([part[i] for i in idx])
    with np.errstate(divide="ignore", invalid="ignore"):
        s = np.where(ql < 1, (1 + ql) / (1 - ql), np.inf)
    return s[0], s[1]


def swr_band(freq_hz, gamma_an, line_draws: LineDraws, an: AnalyzerDraws, coverage, rng, notes, between=None):
    """Per-frequency coverage interval of the feedpoint SWR, (low (n,), high (n,)), from the draws."""
    f = np.asarray(freq_hz, dtype=float)
    n_d = line_draws.n
    use = n_d if n_d * f.size <= BAND_MAX_ELEMENTS else BAND_MAX_ELEMENTS // max(f.size, 1)
    if use < BAND_MIN_DRAWS and use < n_d:
        notes.append(f"the sweep has {f.size} points: too many for a per-frequency uncertainty band; "
                     "the findings' intervals are still worked out")
        return None
    lo = np.empty(f.size)
    hi = np.empty(f.size)
    chunk = max(1, CHUNK_ELEMENTS // n_d)
    an_band = AnalyzerDraws(an.e_d, an.e_t, an.e_s, an.noise_rms, rng, an.inputs, n_d)
    q = [(1 - coverage) / 2, (1 + coverage) / 2]
    for a in range(0, f.size, chunk):
        sl = slice(a, min(a + chunk, f.size))
        s11, s21s12, s22 = line_draws.terms(f[sl])
        g_fp = deembed_draws(an_band.gamma(gamma_an[sl]), s11, s21s12, s22)
        if between is not None:
            g_fp += between.offsets(slice(None), sl)
        if use < n_d:
            g_fp = g_fp[:use]
        lo[sl], hi[sl] = _band_from_mag(np.abs(g_fp), q)
    return lo, hi


# ------------------------------------------------------------------------------------------ reporting

def end_block(end: EndDraws, nominal: dict, *, coverage: float, n_draws: int, seed: int,
              matched_loss_db=None, sources: dict | None = None) -> dict:
    """The ``uncertainty`` block of one end for the summary (JSON-ready).

    Parameters
    ----------
    end : EndDraws
    nominal : dict
        The end's findings (:meth:`EventSet.findings` of the measured trace).
    matched_loss_db : callable, optional
        f -> one-way matched loss at f, to name the noise amplification in ``limited_by``.
    """
    v = end.values
    ev = end.events
    out = {"coverage": coverage, "draws": n_draws, "seed": seed,
           "method": "Monte Carlo propagation of distributions (JCGM 101:2008)"}
    res_iv = []
    for i in ev.kept_resonances():
        res_iv.append(interval(v.get(f"res_hz_{i}", []), coverage))
    out["resonances_hz"] = res_iv
    prim = None
    if ev.primary is not None:
        prim = f"res_hz_{ev.primary}"
    out["resonance_hz"] = interval(v[prim], coverage) if prim and prim in v else None
    out["min_swr"] = interval(v.get("min_swr", []), coverage)
    out["min_swr_freq_hz"] = interval(v.get("min_hz", []), coverage)
    out["q"] = interval(v.get("q", []), coverage) if nominal.get("q") is not None else None
    spans = {}
    for key, lst in ev.spans.items():
        rows = []
        for j, _ in enumerate(lst):
            lo = v.get(f"edge_{key}_{j}_low")
            hi = v.get(f"edge_{key}_{j}_high")
            rows.append([interval(lo, coverage) if lo is not None else None,
                         interval(hi, coverage) if hi is not None else None])
        spans[key] = rows
    out["swr_spans_hz"] = spans
    lost = {}
    names = {f"res_hz_{i}": f"resonances_hz[{j}]" for j, i in enumerate(ev.kept_resonances())}
    if prim:
        names[prim] = "resonance_hz"
    names.update({"min_swr": "min_swr", "min_hz": "min_swr_freq_hz", "q": "q"})
    for k, a in v.items():
        frac = float(np.isnan(a).mean()) if np.size(a) else 0.0
        if frac <= MAX_LOST_FRACTION:
            continue
        if k.startswith("edge_"):
            _, key, j, side = k.split("_")
            lost[f"swr_spans_hz[{key}][{j}].{side}"] = frac
        elif k in names and not (k == "q" and nominal.get("q") is None):
            lost[names[k]] = frac
            if k == prim and ev.primary in ev.kept_resonances():
                lost[f"resonances_hz[{ev.kept_resonances().index(ev.primary)}]"] = frac
    out["not_resolved"] = lost
    kept = ev.kept_resonances()
    headline = prim if prim and ev.primary in kept else ("min_swr" if out["min_swr"] else None)
    if headline:
        share = contributions(v[headline], end.inputs)
        name = "resonance_hz" if headline == prim else "min_swr"
        out["contributions"] = {name: share}
        if out.get(name) is None and end.inputs:
            # the finding is lost in many draws: name the input whose large draws lose it
            miss = np.isnan(np.asarray(v[headline], dtype=float)).astype(float)
            size = {}
            for nm, x in end.inputs:            # each source's distance from its nominal (summed over its parts)
                size[nm] = size.get(nm, 0.0) + np.asarray(x, dtype=float) ** 2
            score = {}
            for nm, xx in size.items():
                c = np.corrcoef(miss, xx)[0, 1] if np.std(xx) > 0 and np.std(miss) > 0 else 0.0
                score[nm] = abs(float(c)) if np.isfinite(c) else 0.0
            worst = max(score, key=score.get)
            what = "resonance" if name == "resonance_hz" else "lowest SWR"
            fix = ("characterize the run on a finer grid, or sweep on its own frequencies" if worst == BETWEEN_SOURCE
                   else "tighten that tolerance (measure or characterize the line)")
            text = f"{_as_source(worst)}: the {what} cannot be placed in {lost.get(name, 0):.0%} of the draws; {fix}"
        else:
            text = limiting_text(share, v, headline, matched_loss_db)
        out["limited_by"] = text
    else:
        out["contributions"] = {}
        out["limited_by"] = None
    if sources:
        out["sources"] = sources
    return out


def limiting_text(share: dict, values: dict, headline: str, matched_loss_db=None) -> str | None:
    """A few words naming the largest contributor ("line loss tolerance", "analyzer noise amplified by ...")."""
    if not share:
        return None
    name, frac = next(iter(share.items()))
    if name == "analyzer noise":
        if matched_loss_db is not None:
            fr = float(np.nanmedian(values.get(headline if headline.startswith("res_hz") else "min_hz", [np.nan])))
            if math.isfinite(fr):
                ml = float(matched_loss_db(fr))
                if ml >= 0.05:
                    return f"analyzer noise amplified by {ml:.1f} dB of line ({frac:.0%} of the variance)"
        return f"analyzer noise ({frac:.0%} of the variance)"
    if name == "analyzer calibration":
        return f"analyzer calibration ({frac:.0%} of the variance)"
    return f"{_as_source(name)} ({frac:.0%} of the variance)"


BETWEEN_SOURCE = "line between characterized points"


def _as_source(name: str) -> str:
    """A contribution's name as a cause: a section's tolerance, or a characterized line's estimated error
    between its measured points (which is no tolerance)."""
    if name == BETWEEN_SOURCE:
        return "the characterized line's estimated error between its measured points"
    return f"{name} tolerance"


def change_interval(after_values, before_values, coverage: float = DEFAULT_COVERAGE):
    """Coverage interval of a difference of two findings whose draws are paired (compare: shared line draws)."""
    a = np.asarray(after_values, dtype=float)
    b = np.asarray(before_values, dtype=float)
    with np.errstate(invalid="ignore"):   # inf - inf (an SWR of a lost match in both) is no difference: NaN
        return interval(a - b, coverage)


__all__ = ["CAL_PRESETS", "Calibration", "LineDraws", "McResult", "change_interval", "contributions",
           "deembed_draws", "draw_analyzer", "draw_line", "end_block", "feedpoint_gain", "interval",
           "limiting_text", "parse_calibration", "run", "section_tolerance", "seeds", "swr_band"]
