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
* **A characterized line between its points**: one offset per draw, uniform on a disc whose radius is the
  estimated error of the interpolation or model used there (:class:`BetweenDraws`).
* **A characterized line's own measurement scatter**: the RMS point-to-point scatter of the
  characterization, carried to the feedpoint reflection like the between-points error; complex Gaussian
  (JCGM 101 6.4.7: a standard uncertainty), independent from one characterized frequency to the next and
  shared by the sweep frequencies nearest the same characterized one (:class:`ScatterDraws`).

Where the draws are evaluated
-----------------------------
The findings need the draws only on the samples of their local windows; the per-frequency SWR band is
worked out on at most :data:`BAND_POINTS` evenly spread sweep frequencies plus the feedpoint windows'
samples, and interpolated linearly in |Gamma| between them (:func:`band_indices`). The line, the
calibration and a characterized line's between-points error vary slowly with frequency; the analyzer noise
is independent from point to point, so the band at each frequency is a local quantity whose draws at a
neighbouring frequency have the same distribution to within the trace's own change over one step. The
cost of the step is therefore bounded in the number of sweep points (windows hold at most
:data:`deembed.analysis.smooth.MAX_WINDOW_POINTS` samples each).

Which source limits a finding is estimated from the same draws: each finding's draws are regressed
linearly on the drawn scalar inputs (line parameters, calibration terms); each input's share of the
variance is b_i^2 var(x_i) / var(y) (first-order, as in JCGM 100:2008 5.1.3 with sensitivity coefficients
b_i estimated from the sample). What the regression leaves belongs to the inputs drawn per point: the
analyzer noise and, for a characterized line, its measurement scatter. When both are drawn, the remainder
is shared between them in proportion to their first-order variances (JCGM 100:2008 eq. (10) with the
finding's sensitivity to each sample of its window, :meth:`deembed.analysis.smooth.EventSet.sensitivity`).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..base.errors import OptionError
from ..physics.between import feedpoint_error, unit_disc
from ..physics.line_draws import Scratch, cascade_parts, s_terms, section_parts, section_s_terms
from ..physics.tolerance import Tolerance, default_tolerance
from .between import between_error, between_points, has_characterized_part
from .smooth import EventSet, as_columns, blocks_for, evaluate_sets

C0_M_PER_S = 299_792_458.0
DB_PER_NP = 20 / math.log(10)

DEFAULT_DRAWS = 1000
DEFAULT_SEED = 1
DEFAULT_COVERAGE = 0.95

MAX_LOST_FRACTION = 0.025
"""A finding whose event is lost (not found inside its local window) in more than this fraction of the
draws gets no interval: a note says so instead."""

BAND_POINTS = 2001
"""Most evenly spread sweep frequencies at which the per-frequency SWR band is worked out from the draws
(besides the feedpoint windows' samples); between them it is interpolated linearly in |Gamma| (see the
module notes). Our choice: a plot or a table read by eye resolves no more, and a test checks that the
interpolated band agrees with the band worked out at every frequency of a dense sweep."""

BAND_MAX_ELEMENTS = 4_000_000
"""Most (draws x frequencies) kept for the per-frequency SWR band; with more draws the band uses the first
BAND_MAX_ELEMENTS / frequencies of them (at least :data:`BAND_MIN_DRAWS`, or there is no band)."""

BAND_MIN_DRAWS = 200

SEARCH_DRAWS = 250
"""Draws whose findings are searched for together (:func:`deembed.analysis.smooth.evaluate_sets`);
the draws themselves are made a block of samples and a few draws at a time
(:data:`deembed.analysis.smooth.BLOCK_ELEMENTS`), so the temporaries stay in the processor's cache."""


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


def parse_calibration(text, field_name: str = "calibration") -> Calibration:
    """A preset name (``hobby``, ``bench``, ``none``) or one bound in |Gamma| used for all three terms.

    Bad text raises :class:`~deembed.base.errors.OptionError` naming ``field_name`` (the settings field
    :attr:`deembed.analysis.trust.UncertaintySettings.calibration`; the command line maps it to its option)."""
    t = str(text).strip().lower()
    if t in CAL_PRESETS:
        return CAL_PRESETS[t]
    try:
        v = float(t)
    except ValueError:
        raise OptionError(field_name, f"{text!r} is neither {', '.join(CAL_PRESETS)} nor a bound in |Gamma| "
                                      "such as 0.02") from None
    if not (math.isfinite(v) and 0 <= v < 1):
        raise OptionError(field_name, f"{text!r}: a calibration bound in |Gamma| is between 0 and 1, e.g. 0.02")
    return Calibration(f"{v:g}", v, v, v, "set by the user")


# ------------------------------------------------------------------------------------------ line draws

@dataclass
class LineDraws:
    """Drawn parameter sets of a line: per part, arrays (D, 1) of z0, delay, c, d (or None for a fixed part)."""

    line: object
    params: list
    inputs: list          # [(name, ndarray (D,))] scalar inputs for the contribution analysis
    n: int

    def terms(self, freq_hz, rows: slice = slice(None), scratch: Scratch | None = None):
        """(S11, S21 S12, S22), each (draws in ``rows``, len(freq_hz)); with a ``scratch`` they live in its
        buffers (:func:`deembed.physics.line_draws.section_s_terms`)."""
        f = np.asarray(freq_hz, dtype=float)
        shape = (len(range(self.n)[rows]), f.size)
        if len(self.params) == 1 and self.params[0] is not None:   # one section: S directly
            p = self.params[0]
            s11, s21s12, s22 = section_s_terms(p["z0"][rows], p["delay"][rows], p["c"][rows], p["d"][rows], f,
                                               single_trig=True, scratch=scratch)
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


def is_section(part) -> bool:
    """Whether a line part is a modelled RLGC section (``kind == "section"``, :class:`deembed.physics.line.LinePart`),
    whose parameters are drawn; measured and characterized parts are not."""
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
    several = sum(is_section(p) for p in line.parts) > 1
    for k, part in enumerate(line.parts, 1):
        if not is_section(part):
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

    def gamma(self, gamma_sub, rows: slice = slice(None), scratch: Scratch | None = None):
        """Draws (draws in ``rows``, m) of the analyzer-end reflection at the given samples (m,); with a
        ``scratch`` they live in its buffers."""
        g = np.asarray(gamma_sub, dtype=complex)
        sc = scratch if scratch is not None else Scratch()
        e_t = self.e_t[rows]
        shape = (e_t.shape[0], g.shape[-1])
        out = np.multiply(e_t, g, out=sc.get("gamma", shape, complex))
        out += g
        tmp = np.multiply(g, g, out=sc.get("gamma_g2", g.shape, complex))
        tmp = np.multiply(self.e_s[rows], tmp, out=sc.get("gamma_tmp", shape, complex))
        out += tmp
        out += self.e_d[rows]
        if self.noise_rms > 0:
            add_complex_noise(out, self.noise_rms, self.rng, sc)
        return out


def add_complex_noise(out, rms: float, rng, scratch: Scratch | None = None):
    """Add circular complex Gaussian noise with E|n|^2 = rms^2 to ``out`` (complex, any shape), in place.

    The Box-Muller transform (G. E. P. Box and M. E. Muller, Ann. Math. Statist. 29 (1958) 610; JCGM 101:2008
    C.4.2): with U, V uniform, n = rms sqrt(-ln(1 - U)) exp(j 2 pi V) has independent normal real and imaginary
    parts of variance rms^2 / 2. Single precision is ample for noise draws (a relative 1e-7 of a noise of 1e-3
    or so; the 24-bit uniforms reach 5.8 standard deviations, beyond which lies a fraction 6e-8 of the draws)
    and it is about twice as fast as drawing two normals per point.
    """
    sc = scratch if scratch is not None else Scratch()
    u = rng.random(dtype=np.float32, out=sc.get("noise_u", (2,) + out.shape, np.float32))
    r = np.log1p(np.negative(u[0], out=u[0]), out=u[0])
    np.negative(r, out=r)
    np.sqrt(r, out=r)
    r *= np.float32(rms)
    ph = u[1]
    ph *= np.float32(2 * np.pi)
    c = np.cos(ph, out=sc.get("noise_c", out.shape, np.float32))
    c *= r
    out.real += c
    np.sin(ph, out=ph)
    ph *= r
    out.imag += ph
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


def contributions(values, inputs, point_variances: dict | None = None) -> dict:
    """Share of the variance of a finding's draws owed to each named source (fractions summing to 1).

    The draws are regressed on the standardised scalar inputs (grouped by name); the rest belongs to the
    sources drawn per point: all of it to "analyzer noise", or, with ``point_variances`` ({name: first-order
    variance} of each per-point source, :func:`point_variances`), shared between them in proportion.
    Returns {} when the finding does not vary.
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
    rest = max(var - explained, 0.0)
    pv = {k: float(v) for k, v in (point_variances or {}).items() if v is not None and math.isfinite(v) and v >= 0}
    total_pv = sum(pv.values())
    if len(pv) > 1 and total_pv > 0:
        for name, v in pv.items():
            parts[name] = parts.get(name, 0.0) + rest * v / total_pv
    else:
        parts[NOISE_SOURCE] = rest
    total = sum(parts.values()) or 1.0
    return {k: v / total for k, v in sorted(parts.items(), key=lambda kv: -kv[1])}


NOISE_SOURCE = "analyzer noise"
SCATTER_SOURCE = "characterization's measurement scatter"


# ------------------------------------------------------------------------------------------- the step

@dataclass
class EndDraws:
    """The draws of every finding of one end (from :meth:`EventSet.evaluate`) and what went in."""

    events: EventSet
    values: dict
    inputs: list
    point_variances: dict = field(default_factory=dict)   # {finding key: {per-point source: first-order variance}}


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

SCATTER_SPAWN_KEY = 16
"""The key of a characterized line's measurement-scatter draws (:class:`ScatterDraws`)."""


def _characterized(line):
    """The line's characterized part and whether it is the whole line (None, False without one)."""
    parts = [p for p in line.parts if p.kind == "characterized"]
    return (parts[0], len(line.parts) == 1) if parts else (None, False)


def _nominal_feedpoint(line, freq_hz, gamma_an):
    """(S (n, 2, 2) of the line, the de-embedded feedpoint reflection (n,)) at the sweep's frequencies."""
    s = line.s_params(freq_hz)
    g_fp = deembed_draws(np.asarray(gamma_an, dtype=complex)[None, :], s[:, 0, 0], s[:, 1, 0] * s[:, 0, 1],
                         s[:, 1, 1])[0]
    return s, g_fp


def draw_between(line, freq_hz, gamma_an, n_draws: int, seed: int, nominal=None) -> BetweenDraws | None:
    """Between-points offset draws for a characterized line (None when the line has none or the sweep is on
    its characterized points). ``nominal``: :func:`_nominal_feedpoint` when already worked out."""
    if not has_characterized_part(line):
        return None
    f = np.asarray(freq_hz, dtype=float)
    _, g_fp = nominal if nominal is not None else _nominal_feedpoint(line, f, gamma_an)
    err = np.asarray(between_error(line, f, g_fp), dtype=float)
    err = np.where(np.isfinite(err), err, 0.0)
    if not np.any(err > 0):
        return None
    rng = np.random.default_rng(np.random.SeedSequence(int(seed), spawn_key=(BETWEEN_SPAWN_KEY,)))
    unit = unit_disc(n_draws, rng)
    name = BETWEEN_SOURCE
    return BetweenDraws(unit, err, [(name, unit.real), (name, unit.imag)])


# the SplitMix64 constants (Steele, Lea and Flood, "Fast splittable pseudorandom number generators",
# OOPSLA 2014): the Weyl increment and the two multipliers of the output mix
_SM_GAMMA = np.uint64(0x9E3779B97F4A7C15)
_SM_M1 = np.uint64(0xBF58476D1CE4E5B9)
_SM_M2 = np.uint64(0x94D049BB133111EB)


def _splitmix64(counter, key):
    """SplitMix64's output for each 64-bit ``counter`` (array) under the stream ``key``: a counter-based
    generator, so a value depends only on (key, counter), never on which others were asked for."""
    z = counter * _SM_GAMMA
    z += key
    z ^= z >> np.uint64(30)
    z *= _SM_M1
    z ^= z >> np.uint64(27)
    z *= _SM_M2
    z ^= z >> np.uint64(31)
    return z


def keyed_complex_normals(key, draws, points, n_points: int):
    """Circular complex Gaussian values (len(draws), len(points)) with E|z|^2 = 1, one per (draw, point).

    Each value depends only on ``key``, its draw number and its point number (SplitMix64 on the counter
    2 (draw n_points + point), two 53-bit uniforms, the Box-Muller transform), so two sweeps asking for the
    same (draw, point) get the same value whatever else they ask for."""
    c = np.asarray(draws, dtype=np.uint64)[:, None] * np.uint64(n_points) + np.asarray(points, dtype=np.uint64)[None, :]
    c *= np.uint64(2)
    u = (_splitmix64(c, key) >> np.uint64(11)).astype(float)
    u += 1.0
    u *= 2.0 ** -53                                   # (0, 1]
    r = np.sqrt(-np.log(u))
    c += np.uint64(1)
    v = (_splitmix64(c, key) >> np.uint64(11)).astype(float)
    v *= 2.0 ** -53 * 2 * np.pi
    return r * np.exp(1j * v)


@dataclass
class ScatterDraws:
    """Draws of a characterized line's own measurement scatter, carried to the feedpoint.

    ``error`` (n,) is the RMS |dGamma| per sweep frequency: the characterization's point-to-point scatter
    (:attr:`deembed.physics.between.Between.scatter`) through the same first-order path as the
    between-points error (:func:`deembed.physics.between.feedpoint_error`), as the summary's
    ``characterization_noise_error`` (its largest value); 0 where the fitted model, not the measured points,
    is used (the fit averages the scatter out). ``grid`` (n,) is the characterized point nearest each
    sweep frequency. The offset of draw k at frequency i is error[i] z(k, grid[i]), z circular complex
    Gaussian with E|z|^2 = 1 (a standard uncertainty: JCGM 101:2008 6.4.7), independent from one
    characterized point to the next; sweep frequencies nearest the same characterized point share it (a
    sweep denser than its characterization cannot average the scatter below the characterization's own
    resolution), and two sweeps through the same characterization share it at the same points, as they
    share the line (compare).
    """

    error: np.ndarray
    grid: np.ndarray
    n_grid: int
    key: np.uint64

    def offsets(self, rows: slice, cols):
        g = self.grid[cols]
        pts, inv = np.unique(g, return_inverse=True)
        z = keyed_complex_normals(self.key, np.arange(rows.start, rows.stop), pts, self.n_grid)
        out = z[:, inv.reshape(-1)]
        out *= self.error[cols][None, :]
        return out


def draw_scatter(line, freq_hz, seed: int, nominal) -> ScatterDraws | None:
    """The measurement-scatter draws of a line's characterized part (None without one, without scatter, or
    where only its fitted model is used). ``nominal``: :func:`_nominal_feedpoint`."""
    part, whole = _characterized(line)
    if part is None or getattr(part.between, "scatter", None) is None:
        return None
    f = np.asarray(freq_hz, dtype=float)
    _, g_fp = nominal
    if between_points(line, f, g_fp)["method"] == "model":
        return None
    ds = np.broadcast_to(np.asarray(part.between.scatter, dtype=float), (f.size, 2, 2))
    err = np.asarray(feedpoint_error(part.s_params(f), ds, g_fp if whole else None), dtype=float)
    inside = (f >= part.low_hz * (1 - 1e-9)) & (f <= part.high_hz * (1 + 1e-9))
    err = np.where(np.isfinite(err) & inside, err, 0.0)
    if not np.any(err > 0):
        return None
    grid = np.asarray(part.freq_hz, dtype=float)
    j = np.clip(np.searchsorted(grid, f), 1, grid.size - 1)
    nearest = np.where(np.abs(f - grid[j - 1]) <= np.abs(grid[j] - f), j - 1, j)
    key = np.random.SeedSequence(int(seed), spawn_key=(SCATTER_SPAWN_KEY,)).generate_state(1, np.uint64)[0]
    return ScatterDraws(err, nearest.astype(np.intp), int(grid.size), np.uint64(key))


def point_variances(events: EventSet, key: str, gamma_fp, sigma_noise, scatter: ScatterDraws | None) -> dict:
    """First-order variances (JCGM 100:2008 eq. (10)) of finding ``key`` from the sources drawn per point.

    ``sigma_noise`` (n,) is the analyzer noise referred to the feedpoint (complex RMS per sample). With the
    finding's sensitivities c to each sample of its window (:meth:`EventSet.sensitivity`), independent
    circular noise of RMS s_i gives sum (c_re^2 + c_im^2) s_i^2 / 2; the scatter, shared by the samples
    nearest one characterized point, gives sum over those points of ((sum c_re e)^2 + (sum c_im e)^2) / 2.
    {} when the finding has no sensitivity."""
    sens = events.sensitivity(key, gamma_fp)
    if sens is None:
        return {}
    idx, c_re, c_im = sens
    out = {NOISE_SOURCE: float(np.sum((c_re ** 2 + c_im ** 2) * np.asarray(sigma_noise)[idx] ** 2) / 2)}
    if scatter is not None:
        e = scatter.error[idx]
        g = scatter.grid[idx]
        _, inv = np.unique(g, return_inverse=True)
        a = np.bincount(inv, weights=c_re * e)
        b = np.bincount(inv, weights=c_im * e)
        out[SCATTER_SOURCE] = float(np.sum(a ** 2 + b ** 2) / 2)
    return out


def deembed_draws(gamma_an_draws, s11, s21s12, s22, out=None):
    """Gamma_L = (Gamma_in - S11) / (S22 (Gamma_in - S11) + S21 S12) for every draw (closed form, as the
    plain de-embedding). ``out`` may be ``gamma_an_draws`` itself."""
    d = np.subtract(gamma_an_draws, s11, out=out)
    den = s22 * d
    den += s21s12
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.divide(d, den, out=d)


def band_indices(n: int, points: int = BAND_POINTS) -> np.ndarray:
    """At most ``points`` sweep indices evenly spread over 0 .. n - 1 (every index for shorter sweeps), the
    first and the last included: where the per-frequency SWR band is worked out from the draws."""
    if n <= points:
        return np.arange(n)
    return np.unique(np.round(np.linspace(0, n - 1, points)).astype(np.intp))


def run(freq_hz, gamma_an, line, events_fp: EventSet, events_an: EventSet, *, noise_rms: float,
        calibration: Calibration = CAL_PRESETS["hobby"], n_draws: int = DEFAULT_DRAWS, seed: int = DEFAULT_SEED,
        coverage: float = DEFAULT_COVERAGE, line_draws: LineDraws | None = None, band: bool = True,
        noise_key: int = 0, band_points: int = BAND_POINTS) -> McResult:
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
    band_points : int
        Most evenly spread frequencies the band is worked out at (:func:`band_indices`; the feedpoint
        windows' samples are added), interpolated between them.

    Notes
    -----
    The draws are made only where they are used (see the module notes): the analyzer end on the samples of
    both ends' windows and the band's frequencies, the line and the feedpoint where the feedpoint's windows
    or the band need them (:func:`deembed.analysis.smooth.evaluate_sets`, block by block). Where the two
    ends' windows share samples, each sample's noise serves both.
    """
    f = np.asarray(freq_hz, dtype=float)
    g = np.asarray(gamma_an, dtype=complex)
    r_line, r_cal, r_noise, _ = seeds(seed)
    if noise_key:
        r_noise, _ = (np.random.default_rng(c) for c in
                         np.random.SeedSequence(int(seed), spawn_key=(7919, int(noise_key))).spawn(2))
    if line_draws is None:
        line_draws = draw_line(line, n_draws, r_line)
    an = draw_analyzer(calibration, noise_rms, n_draws, r_cal)
    an.rng = r_noise
    nominal = _nominal_feedpoint(line, f, g) if has_characterized_part(line) else None
    between = draw_between(line, f, g, n_draws, seed, nominal) if nominal is not None else None
    scatter = draw_scatter(line, f, seed, nominal) if nominal is not None else None

    idx_fp = events_fp.indices()
    idx_an = events_an.indices()
    q = [(1 - coverage) / 2, (1 + coverage) / 2]
    notes = []
    b_idx = band_indices(f.size, band_points) if band else np.zeros(0, dtype=np.intp)
    pts = np.union1d(np.union1d(idx_fp, idx_an), b_idx).astype(np.intp)
    sets = [events_an, events_fp]
    cover = 1 if band and pts.size else None
    cover_cols = np.searchsorted(pts, b_idx)
    plan = blocks_for(sets, pts, cover, cover_cols)
    band_at = plan.columns(1) if cover is not None else np.zeros(0, dtype=np.intp)   # positions in pts
    use = 0
    if band_at.size:
        use = min(n_draws, BAND_MAX_ELEMENTS // band_at.size)
        if use < min(n_draws, BAND_MIN_DRAWS):
            notes.append(f"{n_draws} draws at {band_at.size} frequencies are too many for a per-frequency "
                         "uncertainty band; the findings' intervals are still worked out")
            use = 0
    mags = np.empty((band_at.size, use)) if use else None     # (frequency, draw): each row partitioned
    band_pos = {}                                  # block columns -> their positions in band_at
    g_sub, f_sub = g[pts], f[pts]
    sc = Scratch()
    v_fp, v_an = [], []
    for a in range(0, n_draws, SEARCH_DRAWS):     # the findings of a few hundred draws at a time
        n_rows = min(SEARCH_DRAWS, n_draws - a)

        def draw_an(rows, cols, _, a=a):
            return an.gamma(g_sub[cols], slice(a + rows.start, a + rows.stop), sc)

        def draw_fp(rows, cols, x, a=a):           # from the analyzer-end draws, in place
            r = slice(a + rows.start, a + rows.stop)
            x = deembed_draws(x, *line_draws.terms(f_sub[cols], r, sc), out=x)
            if between is not None or scatter is not None:
                at = pts[cols]
                if between is not None:
                    x += between.offsets(r, at)
                if scatter is not None:
                    x += scatter.offsets(r, at)
            return x

        def keep(s, rows, cols, x, a=a):
            k = min(a + rows.stop, use) - a - rows.start
            if s != 1 or k <= 0:
                return
            key = (cols.start, cols.stop) if isinstance(cols, slice) else id(cols)
            at = band_pos.get(key)
            if at is None:
                at = band_pos[key] = as_columns(np.searchsorted(band_at, np.arange(cols.start, cols.stop)
                                                              if isinstance(cols, slice) else cols))
            r = slice(a + rows.start, a + rows.start + k)
            if isinstance(at, slice):
                np.abs(x[:k], out=mags[at, r].T)
            else:
                mags[at, r] = np.abs(x[:k]).T

        an_v, fp_v = evaluate_sets(sets, pts, n_rows, [draw_an, draw_fp], cover=cover, cover_cols=cover_cols,
                                   visit=keep if mags is not None else None)
        v_an.append(an_v)
        v_fp.append(fp_v)
    v_fp = {k: np.concatenate([c[k] for c in v_fp]) for k in v_fp[0]} if v_fp and idx_fp.size else {}
    v_an = {k: np.concatenate([c[k] for c in v_an]) for k in v_an[0]} if v_an and idx_an.size else {}
    inputs_fp = line_draws.inputs + an.inputs + (between.inputs if between is not None else [])
    pv = {}
    if scatter is not None:          # two sources drawn per point: their first-order shares of what is left
        s_, g_nom = nominal
        gain = feedpoint_gain(s_[:, 1, 0] * s_[:, 0, 1], s_[:, 1, 1], g_nom)
        with np.errstate(divide="ignore", invalid="ignore"):
            sigma = np.where(gain > 0, noise_rms / gain, np.inf)
        keys = [f"res_hz_{events_fp.primary}"] if events_fp.primary is not None else []
        for k in keys + ["min_swr"]:
            pv[k] = point_variances(events_fp, k, g_nom, sigma, scatter)
    res = McResult(EndDraws(events_fp, v_fp, inputs_fp, pv), EndDraws(events_an, v_an, an.inputs), n_draws,
                   int(seed), float(coverage), calibration, float(noise_rms), line_draws, notes=notes)
    if mags is not None:
        res.swr_band = _band(f, pts[band_at], _band_from_mag(mags, q, axis=1))
    return res


def _band_from_mag(mag, q, axis: int = 0):
    """Order statistics (low (m,), high (m,)) of |Gamma| draws along ``axis`` of ``mag`` ((D, m) by default);
    non-finite draws count as |Gamma| = inf (``mag`` is overwritten).

    The quantiles are order statistics picked by a partial sort (``numpy.partition``): the r-th smallest of
    M draws with r = round(p M) (JCGM 101 7.7.2 takes y_(r) and y_(r + q) of the sorted draws)."""
    m = mag
    m[~np.isfinite(m)] = np.inf
    n = m.shape[axis]
    idx = [min(max(int(round(p * n)) - 1, 0), n - 1) for p in q]     # 1-based r = round(p M), 0-based r - 1
    m.partition(sorted(set(idx)), axis=axis)
    return np.take(m, idx[0], axis=axis), np.take(m, idx[1], axis=axis)


def _band(freq_hz, at, mag_lo_hi):
    """The SWR band (low (n,), high (n,)) at every sweep frequency from |Gamma| order statistics at the sweep
    indices ``at``: exact there, linear in |Gamma| between them (an end of a gap with |Gamma| >= 1 or
    infinite makes the gap's SWR infinite)."""
    f = np.asarray(freq_hz, dtype=float)
    out = []
    for m in mag_lo_hi:
        if at.size == f.size:
            full = m
        else:
            xp = f[at]
            j = np.clip(np.searchsorted(xp, f, side="right") - 1, 0, xp.size - 2)
            w = (f - xp[j]) / (xp[j + 1] - xp[j])
            lo, hi = m[j], m[j + 1]
            with np.errstate(invalid="ignore"):
                full = np.where(np.isfinite(lo) & np.isfinite(hi), lo + w * (hi - lo), np.inf)
            full[at] = m
        with np.errstate(divide="ignore", invalid="ignore"):
            out.append(np.where(full < 1, (1 + full) / (1 - full), np.inf))
    return out[0], out[1]


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
        share = contributions(v[headline], end.inputs, end.point_variances.get(headline))
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
    if name == NOISE_SOURCE:
        if matched_loss_db is not None:
            fr = float(np.nanmedian(values.get(headline if headline.startswith("res_hz") else "min_hz", [np.nan])))
            if math.isfinite(fr):
                ml = float(matched_loss_db(fr))
                if ml >= 0.05:
                    return f"analyzer noise amplified by {ml:.1f} dB of line ({frac:.0%} of the variance)"
        return f"analyzer noise ({frac:.0%} of the variance)"
    if name == "analyzer calibration":
        return f"analyzer calibration ({frac:.0%} of the variance)"
    if name == SCATTER_SOURCE:
        return f"the characterization's own measurement scatter ({frac:.0%} of the variance)"
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


__all__ = ["BAND_POINTS", "BETWEEN_SOURCE", "CAL_PRESETS", "Calibration", "LineDraws", "McResult", "NOISE_SOURCE",
           "SCATTER_SOURCE", "ScatterDraws", "add_complex_noise", "band_indices", "change_interval", "contributions",
           "deembed_draws", "draw_analyzer", "draw_between", "draw_line", "draw_scatter", "end_block",
           "feedpoint_gain", "interval", "is_section", "keyed_complex_normals", "limiting_text", "parse_calibration",
           "point_variances", "run", "section_tolerance", "seeds"]
