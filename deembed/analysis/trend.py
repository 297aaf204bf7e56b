"""Trends over a feed's recorded sweeps: straight-line fits per year, and the flags a technician acts on.

Straight-line fit (:func:`weighted_slope`)
------------------------------------------
Each quantity (the feedpoint resonance, the lowest feedpoint SWR, the line's matched loss at the band
centre) is fitted as y = a + b t, t in years, by weighted least squares (Bevington & Robinson, *Data
Reduction and Error Analysis for the Physical Sciences*, 3rd ed., ch. 6, sec. 6.3, eqs. 6.12 and
6.21-6.22, from memory):

    S = sum w, Sx = sum w t, Sy = sum w y, Sxx = sum w t^2, Sxy = sum w t y, D = S Sxx - Sx^2
    b = (S Sxy - Sx Sy) / D,   var(b) = S / D  (w = 1 / sigma^2)

Which uncertainty weighs a run: its *per-run* interval (``run_low``/``run_high`` in the store), the part
of its uncertainty that differs from run to run (the analyzer's noise; see
:mod:`deembed.analysis.recording`). The full recorded interval is not used as a weight: it is mostly the
line description's tolerance and the calibration kit's residuals, the same in every run through that
description, which shift every run alike and cannot move a trend (on the sample 40 m dipole the full
resonance interval is about +/-33 kHz while the runs scatter by about 0.7 kHz). When any run of a series
has no per-run interval, every run weighs the same.

The weights are then taken as relative: var(b) is always multiplied by the reduced chi-square
chi2 / (n - 2), chi2 = sum w r^2, in both directions, which is what ``numpy.polyfit(..., cov=True)`` does
("the weights are presumed to be unreliable except in a relative sense and everything is scaled such that
the reduced chi2 is unity"; ``cov="unscaled"`` leaves it out; numpy documentation of ``polyfit``, from
memory; ``scipy.optimize.curve_fit`` calls the unscaled form ``absolute_sigma=True``). With equal weights
this is the standard error of ``scipy.stats.linregress``. The slope's interval is
b +/- t(0.975, n - 2) sqrt(var(b)) (Student's t, as the scale comes from the residuals); with two runs
there is no interval (and no flag). :func:`weighted_slope` keeps the unscaled form
(``absolute_sigma=True``, normal quantile) for callers whose sigmas are known absolutely.

Flags (:func:`trend_flags`)
---------------------------
- ``line_loss_db`` rising faster than ``max_loss_rise_db_per_year`` (default 0.2 dB/yr): the fitted
  slope is above the limit and its whole interval is above zero (the rise is real, not noise).
- ``resonance_hz`` drifting faster than ``max_drift`` per year (default 0.2 % of the frequency per
  year, or a frequency per year): |slope| above the limit and the interval excludes zero.
- a step: a run whose value the trend of the runs before it does not explain. With at least
  :data:`STEP_MIN_EARLIER` earlier runs, the earlier runs are fitted (weighted and scaled as above) and the
  new value compared with the fit's prediction; it is a step when the difference exceeds both
  t(1 - STEP_ALPHA / 2, dof) times the prediction's standard uncertainty (fit and new point together, the
  new point's own sigma scaled by the same reduced chi-square) and the quantity's :data:`STEP_FLOOR` (a
  change too small to matter whatever the noise).

The defaults are our choice (common practice, no source): water in a coax run typically shows as a few
tenths of a dB per year at VHF; 0.2 %/yr of resonance is a 1 % move in five years, about a tenth of a
moderate-Q antenna's 2:1 bandwidth.
"""
from __future__ import annotations

import datetime as _dt
import math
from dataclasses import dataclass, field

import numpy as np

from ..base.errors import OptionError
from ..base.units import fmt_freq, no_unit, parse_db, parse_frequency_difference, parse_percent

DAYS_PER_YEAR = 365.25
INTERVAL_Z = 1.959963984540054
"""Recorded intervals are read as 95 % intervals of a normal error: half-width = 1.96 sigma."""
CONFIDENCE = 0.95
STEP_ALPHA = 0.01
"""Two-sided false-alarm probability per tested run for a step (a 99 % prediction interval); the
floors below keep ordinary trace noise from raising one."""
STEP_MIN_EARLIER = 3
STEP_FLOOR = {"line_loss_db": 0.1, "min_swr": 0.1, "resonance_fraction": 0.001}
"""Smallest step worth a flag: 0.1 dB of line loss, 0.1 of SWR, 0.1 % of the resonant frequency."""

QUANTITIES = ("line_loss_db", "resonance_hz", "min_swr")
UNITS = {"line_loss_db": "dB", "resonance_hz": "Hz", "min_swr": ""}


@dataclass(frozen=True)
class SlopeFit:
    """A straight-line fit y = intercept + per_year * t (t in years from ``t0``).

    ``weighted``: the runs were weighted by their per-run uncertainties (else equally);
    ``chi2_reduced``: sum w r^2 / (n - 2), by which the slope's variance was scaled (None for two runs).
    """

    per_year: float
    stderr_per_year: float | None
    interval: tuple | None
    intercept: float
    n: int
    weighted: bool
    chi2_reduced: float | None

    def predict(self, t_years):
        return self.intercept + self.per_year * np.asarray(t_years, float)

    def to_dict(self) -> dict:
        return {"per_year": self.per_year, "interval": list(self.interval) if self.interval else None}


def weighted_slope(t_years, y, sigma=None, *, confidence: float = CONFIDENCE,
                   absolute_sigma: bool = False) -> SlopeFit:
    """Weighted least-squares straight line through (t, y); slope per unit of t (years).

    Parameters
    ----------
    t_years : array_like, shape (n,)
        Times, years (any origin).
    y : array_like, shape (n,)
        The values.
    sigma : array_like, shape (n,), optional
        Uncertainty of each value (its relative size sets the weights); None for equal weights.
    confidence : float
        Two-sided confidence of the slope's interval (default 0.95).
    absolute_sigma : bool
        False (default): the slope's variance is scaled by the reduced chi-square, as
        ``numpy.polyfit(..., cov=True)``, and the interval uses Student's t with n - 2 degrees of freedom.
        True: ``sigma`` is taken as known (``cov="unscaled"``) and the interval uses the normal quantile.

    Returns
    -------
    SlopeFit
        See the module notes for the formulas.
    """
    from scipy import stats

    t = np.asarray(t_years, float)
    y = np.asarray(y, float)
    n = t.size
    if n < 2 or np.ptp(t) == 0:
        raise ValueError("a slope needs at least two runs on different dates")
    weighted = sigma is not None
    if absolute_sigma and not weighted:
        raise ValueError("absolute_sigma needs the sigmas")
    w = 1.0 / np.asarray(sigma, float) ** 2 if weighted else np.ones(n)
    t0 = float(np.sum(w * t) / np.sum(w))  # centred for numerical safety; the slope does not depend on it
    x = t - t0
    S, Sx, Sy = w.sum(), (w * x).sum(), (w * y).sum()
    Sxx, Sxy = (w * x * x).sum(), (w * x * y).sum()
    D = S * Sxx - Sx * Sx
    b = (S * Sxy - Sx * Sy) / D
    a = (Sxx * Sy - Sx * Sxy) / D
    dof = n - 2
    resid = y - (a + b * x)
    chi2 = float(np.sum(w * resid ** 2))
    chi2_red = chi2 / dof if dof > 0 else None
    se, interval = None, None
    if absolute_sigma:
        se = math.sqrt(S / D)
        k = float(stats.norm.ppf(0.5 + confidence / 2))
        interval = (float(b - k * se), float(b + k * se))
    elif dof > 0:
        se = math.sqrt(S / D * chi2_red)
        k = float(stats.t.ppf(0.5 + confidence / 2, dof))
        interval = (float(b - k * se), float(b + k * se))
    return SlopeFit(float(b), se, interval, float(a - b * t0), n, weighted, chi2_red)


def years_since(dates, origin: str | None = None) -> np.ndarray:
    """ISO dates (YYYY-MM-DD) as years after ``origin`` (default: the first date)."""
    d = [_dt.date.fromisoformat(s) for s in dates]
    o = _dt.date.fromisoformat(origin) if origin else d[0]
    return np.array([(x - o).days / DAYS_PER_YEAR for x in d], float)


def sigma_from_interval(low, high):
    """Standard uncertainty from a recorded 95 % interval; None when there is none."""
    if low is None or high is None or not (math.isfinite(low) and math.isfinite(high)) or high <= low:
        return None
    return (high - low) / (2 * INTERVAL_Z)


# ------------------------------------------------------------------------------------------ limits

@dataclass(frozen=True)
class TrendLimits:
    """What rate of change is still acceptable (see the module notes for the defaults)."""

    max_loss_rise_db_per_year: float = 0.2
    max_drift_hz_per_year: float | None = None
    max_drift_fraction_per_year: float | None = 0.002

    def drift_limit_hz(self, resonance_hz: float) -> float:
        if self.max_drift_hz_per_year is not None:
            return self.max_drift_hz_per_year
        return self.max_drift_fraction_per_year * abs(resonance_hz)

    def as_dict(self) -> dict:
        return {"max_loss_rise_db_per_year": self.max_loss_rise_db_per_year,
                "max_drift_hz_per_year": self.max_drift_hz_per_year,
                "max_drift_percent_per_year": None if self.max_drift_fraction_per_year is None
                else 100 * self.max_drift_fraction_per_year}


LOSS_RISE_EXAMPLE = "0.2dB"
DRIFT_EXAMPLE = "0.2% or 20kHz"


def _per_year(text: str) -> str:
    t = str(text).strip()
    for suffix in ("/yr", "/year", "per year"):
        if t.lower().endswith(suffix):
            return t[: -len(suffix)].strip()
    return t


def parse_trend_limits(max_loss_rise: str | None = None, max_drift: str | None = None) -> TrendLimits:
    """Limits from text: the loss rise per year (field ``max_loss_rise``: ``0.2dB``, also ``0.2dB/yr``) and the
    drift per year (field ``max_drift``: a share of the frequency, ``0.2%``, or a frequency, ``20kHz``). A bare
    number is refused with the hint every quantity gives (:func:`deembed.base.units.no_unit`)."""

    out = {}
    if max_loss_rise is not None:
        v = parse_db(_per_year(max_loss_rise), "max_loss_rise", "loss rise per year", LOSS_RISE_EXAMPLE)
        if not math.isfinite(v):
            raise OptionError("max_loss_rise", f"{max_loss_rise!r}: give a finite loss rise per year, e.g. "
                                               f"{LOSS_RISE_EXAMPLE}")
        out["max_loss_rise_db_per_year"] = v
    if max_drift is not None:
        text = _per_year(max_drift)
        if text.endswith("%"):
            v = parse_percent(text, "max_drift", "drift per year", "0.2%")
            if v > 100:
                raise OptionError("max_drift", f"{max_drift!r}: give a per cent between 0 and 100, e.g. 0.2%")
            out["max_drift_fraction_per_year"] = v / 100
            out["max_drift_hz_per_year"] = None
        else:
            try:
                float(text)
            except ValueError:
                hz = parse_frequency_difference(text, "max_drift", DRIFT_EXAMPLE, "drift per year")
            else:
                raise no_unit(max_drift, "max_drift", DRIFT_EXAMPLE)
            if hz < 0:
                raise OptionError("max_drift", f"{max_drift!r}: a drift limit is 0 or more, e.g. {DRIFT_EXAMPLE}")
            out["max_drift_hz_per_year"] = hz
            out["max_drift_fraction_per_year"] = None
    return TrendLimits(**out)


# ------------------------------------------------------------------------------------------- series

@dataclass(frozen=True)
class Series:
    """One quantity of one feed over time (runs without a value are left out).

    ``lows``/``highs``: the recorded (full) intervals, for the plots; ``run_lows``/``run_highs``: the per-run
    intervals that weigh the fit (empty or None where there is none).
    """

    quantity: str
    dates: tuple
    values: tuple
    lows: tuple
    highs: tuple
    files: tuple = ()
    run_lows: tuple = ()
    run_highs: tuple = ()

    def sigmas(self):
        """Per-run standard uncertainties when every run has a per-run interval, else None (equal weights)."""
        if len(self.run_lows) != len(self.values) or len(self.run_highs) != len(self.values):
            return None
        s = [sigma_from_interval(lo, hi) for lo, hi in zip(self.run_lows, self.run_highs)]
        return None if not s or any(x is None for x in s) else np.array(s, float)


@dataclass
class EntryTrend:
    """The trend of one feed: its slopes, flags and the series behind them."""

    name: str
    runs: int
    slopes: dict
    flags: list
    series: dict = field(default_factory=dict)
    fits: dict = field(default_factory=dict)
    origin: str | None = None
    notes: list = field(default_factory=list)

    def to_dict(self) -> dict:
        """The JSON form: exactly ``name``, ``runs``, ``slopes`` (per quantity ``per_year`` and
        ``interval``) and ``flags`` (``quantity``, ``reason``)."""
        return {"name": self.name, "runs": self.runs, "slopes": self.slopes,
                "flags": [{"quantity": f["quantity"], "reason": f["reason"]} for f in self.flags]}


def fit_series(series: Series, origin: str) -> SlopeFit | None:
    if len(series.values) < 2 or len(set(series.dates)) < 2:
        return None
    return weighted_slope(years_since(series.dates, origin), series.values, series.sigmas())


def _fmt(q: str, v: float) -> str:

    if q == "resonance_hz":
        return fmt_freq(v, 6)
    if q == "line_loss_db":
        return f"{v:.2f} dB"
    return f"{v:.2f}"


def signed(number_text: str, negative: bool, minus: str = "-") -> str:
    """A formatted magnitude with its sign: ``+`` or ``minus`` in front, none when it reads as zero
    (``0.000``, ``0 Hz``), so a value that rounds to zero never prints as ``-0.000``."""
    if not any(ch in "123456789" for ch in number_text.split(" ")[0]):
        return number_text
    return (minus if negative else "+") + number_text


def change_text(q: str, d, *, decimals: int = 2, per_year: bool = False, minus: str = "-") -> str:
    """A change or a rate of ``q`` for people: ``+0.36 dB``, ``-42.9 kHz/yr``, ``0.000/yr`` (never ``-0``);
    ``n/a`` for None."""
    if d is None or not math.isfinite(d):
        return "n/a"
    tail = "/yr" if per_year else ""
    if q == "resonance_hz":
        return signed(fmt_freq(abs(d), 3), d < 0, minus) + tail
    unit = " dB" if q == "line_loss_db" else ""
    return signed(f"{abs(d):.{decimals}f}", d < 0, minus) + unit + tail


def _rate(q: str, v: float) -> str:
    return change_text(q, v, per_year=True, decimals=2 if q == "line_loss_db" else 3)


def step_predictions(series: Series, origin: str) -> dict:
    """For every run i with at least :data:`STEP_MIN_EARLIER` runs before it: what the straight line
    through runs 0..i-1 predicts, that prediction's standard uncertainty (the fit's and the new run's
    together) and the coverage factor for :data:`STEP_ALPHA`.

    The weights are the per-run ones when every run has one (else equal), taken as relative: the fit's
    covariance and the new run's variance are both scaled by the earlier runs' reduced chi-square (as
    ``numpy.polyfit(..., cov=True)``), and the coverage factor is Student's t with i - 2 degrees of freedom.
    With equal weights this is the textbook prediction interval of a new observation.

    All runs at once: the weighted line through runs 0..i-1 comes from prefix sums (the same normal
    equations as :func:`weighted_slope`), so a long history costs one pass, not one fit per run.

    Returns
    -------
    dict
        ``index``, ``value``, ``pred``, ``sd``, ``k``, ``usable`` (arrays over the tested runs).
    """
    from scipy import stats

    n = len(series.values)
    if n <= STEP_MIN_EARLIER:
        e = np.array([])
        return {"index": e.astype(int), "value": e, "pred": e, "sd": e, "k": e, "usable": e.astype(bool)}
    t = years_since(series.dates, origin)
    y0 = float(series.values[0])
    y = np.array(series.values, float) - y0          # shifted: sums of squares stay well conditioned
    sig = series.sigmas()
    w = np.ones(n) if sig is None else 1.0 / sig ** 2
    c = lambda v: np.concatenate(([0.0], np.cumsum(v)))  # noqa: E731  c(v)[i] = sum of v over runs 0..i-1
    S, Sx, Sy, Sxx, Sxy, Syy = c(w), c(w * t), c(w * y), c(w * t * t), c(w * t * y), c(w * y * y)
    i = np.arange(STEP_MIN_EARLIER, n)
    S, Sx, Sy, Sxx, Sxy, Syy = S[i], Sx[i], Sy[i], Sxx[i], Sxy[i], Syy[i]
    D = S * Sxx - Sx ** 2
    spread = Sxx - Sx ** 2 / S                        # sum of w (t - tc)^2 over the earlier runs
    ok = spread > 1e-12 * np.maximum(Sxx, 1e-300)
    D = np.where(ok, D, 1.0)
    b = (S * Sxy - Sx * Sy) / D
    a = (Sxx * Sy - Sx * Sxy) / D
    dof = i - 2
    chi2 = np.maximum(Syy - a * Sy - b * Sxy, 0.0)    # sum of w r^2 at the least-squares solution
    red = chi2 / dof                                  # the weights are relative: scale by the reduced chi-square
    var_new = red / w[i]
    k = stats.t.ppf(1 - STEP_ALPHA / 2, dof)
    tc = Sx / S
    var_fit = red * (1 / S + (t[i] - tc) ** 2 / np.where(ok, spread, 1.0))
    return {"index": i, "value": y[i] + y0, "pred": a + b * t[i] + y0, "sd": np.sqrt(var_fit + var_new), "k": k,
            "usable": ok}


def step_flags(series: Series, origin: str) -> list:
    """Runs the earlier trend does not explain (see the module notes and :func:`step_predictions`)."""
    p = step_predictions(series, origin)
    diff = p["value"] - p["pred"]
    if series.quantity == "resonance_hz":
        floor = STEP_FLOOR["resonance_fraction"] * np.abs(p["pred"])
    else:
        floor = np.full(diff.size, STEP_FLOOR.get(series.quantity, 0.0))
    hit = p["usable"] & (np.abs(diff) > p["k"] * p["sd"]) & (np.abs(diff) > floor)
    out = []
    q = series.quantity
    for j in np.flatnonzero(hit):
        run = int(p["index"][j])
        out.append({"quantity": q, "kind": "step", "date": series.dates[run],
                    "reason": f"step on {series.dates[run]}: {_fmt(q, p['value'][j])} where the trend of the {run} "
                              f"runs before predicts {_fmt(q, p['pred'][j])} ({change_text(q, diff[j])}, more than "
                              "the noise and the trend explain)"})
    return out


def trend_flags(fits: dict, series: dict, limits: TrendLimits, origin: str) -> list:
    """Rate flags for line loss and resonance, then steps, as ``{"quantity", "kind", "reason"}`` dicts."""
    flags = []
    f = fits.get("line_loss_db")
    if f is not None and f.interval is not None and f.n >= 3:
        lim = limits.max_loss_rise_db_per_year
        if f.per_year > lim and f.interval[0] > 0:
            flags.append({"quantity": "line_loss_db", "kind": "rate",
                          "reason": f"line loss rising {f.per_year:.2f} dB/yr (95 % interval {f.interval[0]:.2f} to "
                                    f"{f.interval[1]:.2f}), faster than the {lim:g} dB/yr limit: look for water "
                                    "in the run or a corroding connector"})
    f = fits.get("resonance_hz")
    if f is not None and f.interval is not None and f.n >= 3:
        s = series["resonance_hz"]
        lim = limits.drift_limit_hz(float(np.mean(s.values)))
        if abs(f.per_year) > lim and (f.interval[0] > 0 or f.interval[1] < 0):
            flags.append({"quantity": "resonance_hz", "kind": "rate",
                          "reason": f"feedpoint resonance drifting {_rate('resonance_hz', f.per_year)} (95 % interval "
                                    f"{_rate('resonance_hz', f.interval[0])} to {_rate('resonance_hz', f.interval[1])}), "
                                    f"faster than the {_rate('resonance_hz', lim).lstrip('+')} limit: look for ice "
                                    "damage, loosened hardware or corrosion at the antenna"})
    for q in QUANTITIES:
        if q in series:
            flags.extend(step_flags(series[q], origin))
    return flags


def _parts(v):
    """(value, low, high, run_low, run_high) from a run's 3- or 5-tuple."""
    v = tuple(v) + (None,) * (5 - len(v))
    return v[:5]


def entry_trend(name: str, runs, limits: TrendLimits | None = None) -> EntryTrend:
    """The trend of one feed from its runs.

    Parameters
    ----------
    name : str
        The feed's name.
    runs : sequence of dict
        One per dated sweep: ``{"date": "YYYY-MM-DD", "file": str, "line": str (optional), "values":
        {quantity: (value, low, high) or (value, low, high, run_low, run_high)}}`` with None for a missing
        value or interval (``low``/``high``: the recorded interval; ``run_low``/``run_high``: the per-run one
        that weighs the fit).
    limits : TrendLimits, optional
    """
    limits = limits or TrendLimits()
    runs = sorted(runs, key=lambda r: r["date"])
    origin = runs[0]["date"] if runs else None
    series, fits, slopes = {}, {}, {}
    for q in QUANTITIES:
        pts = [(r["date"], *_parts(r["values"][q]), r.get("file", "")) for r in runs
               if r["values"].get(q) is not None and r["values"][q][0] is not None]
        s = Series(q, tuple(p[0] for p in pts), tuple(float(p[1]) for p in pts), tuple(p[2] for p in pts),
                   tuple(p[3] for p in pts), tuple(p[6] for p in pts), tuple(p[4] for p in pts),
                   tuple(p[5] for p in pts))
        series[q] = s
        fit = fit_series(s, origin) if origin else None
        fits[q] = fit
        slopes[q] = fit.to_dict() if fit is not None else {"per_year": None, "interval": None}
    flags = trend_flags(fits, series, limits, origin) if origin else []
    notes = []
    lines = sorted({r["line"] for r in runs if r.get("line")})
    if len(lines) > 1:
        notes.append(f"the runs went through {len(lines)} different line descriptions: the weights leave out each "
                     "description's tolerance, so a change of description can move the values by up to its "
                     "tolerance without a real change")
    return EntryTrend(name, len(runs), slopes, flags, series, fits, origin, notes)


__all__ = ["EntryTrend", "QUANTITIES", "Series", "SlopeFit", "TrendLimits", "change_text", "entry_trend",
           "parse_trend_limits", "signed", "step_flags", "step_predictions", "trend_flags", "weighted_slope",
           "years_since"]
