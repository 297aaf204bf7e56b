"""Trends over a feed's recorded sweeps: straight-line fits per year, and the flags a technician acts on.

Straight-line fit (:func:`weighted_slope`)
------------------------------------------
Each quantity (the feedpoint resonance, the lowest feedpoint SWR, the line's matched loss at the band
centre) is fitted as y = a + b t, t in years, by weighted least squares (Bevington & Robinson, *Data
Reduction and Error Analysis for the Physical Sciences*, 3rd ed., sec. 6.3, eqs. 6.12 and 6.21-6.22):

    S = sum w, Sx = sum w t, Sy = sum w y, Sxx = sum w t^2, Sxy = sum w t y, D = S Sxx - Sx^2
    b = (S Sxy - Sx Sy) / D,   var(b) = S / D

with w = 1 / sigma^2. When every run carries an interval, sigma is its half-width over
:data:`INTERVAL_Z` (the intervals are read as 95 % ones) and var(b) is multiplied by the reduced
chi-square when that is above 1 (the scatter is larger than the intervals say; the same scaling as
``numpy.polyfit(..., cov=True)``). Otherwise every run weighs the same and sigma is estimated from the
residuals, s^2 = sum r^2 / (n - 2), which gives the standard error of ``scipy.stats.linregress``.
The slope's interval is b +/- t(0.975, n - 2) sqrt(var(b)); with two runs there is no interval (and
no flag).

Flags (:func:`trend_flags`)
---------------------------
- ``line_loss_db`` rising faster than ``max_loss_rise_db_per_year`` (default 0.2 dB/yr): the fitted
  slope is above the limit and its whole interval is above zero (the rise is real, not noise).
- ``resonance_hz`` drifting faster than ``max_drift`` per year (default 0.2 % of the frequency per
  year, or a frequency per year): |slope| above the limit and the interval excludes zero.
- a step: a run whose value the trend of the runs before it does not explain. With at least
  :data:`STEP_MIN_EARLIER` earlier runs, the earlier runs are fitted and the new value compared with
  the fit's prediction; it is a step when the difference exceeds both t(1 - STEP_ALPHA / 2, dof) times
  the prediction's standard uncertainty (fit and new point together) and the quantity's
  :data:`STEP_FLOOR` (a change too small to matter whatever the noise).

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
from ..base.units import fmt_freq, parse_frequency

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
    """A straight-line fit y = intercept + per_year * t (t in years from ``t0``)."""

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


def weighted_slope(t_years, y, sigma=None, *, confidence: float = CONFIDENCE) -> SlopeFit:
    """Weighted least-squares straight line through (t, y); slope per unit of t (years).

    Parameters
    ----------
    t_years : array_like, shape (n,)
        Times, years (any origin).
    y : array_like, shape (n,)
        The values.
    sigma : array_like, shape (n,), optional
        Standard uncertainty of each value; None for equal weights with the scatter estimated from
        the residuals.
    confidence : float
        Two-sided confidence of the slope's interval (default 0.95).

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
    var_b = S / D
    chi2_red = chi2 / dof if dof > 0 else None
    if weighted:
        if chi2_red is not None and chi2_red > 1:
            var_b *= chi2_red
    elif dof > 0:
        var_b *= chi2_red  # w = 1: s^2 = sum r^2 / (n - 2)
    else:
        var_b = None
    se = math.sqrt(var_b) if var_b is not None else None
    interval = None
    if se is not None and dof > 0:
        k = float(stats.t.ppf(0.5 + confidence / 2, dof))
        interval = (float(b - k * se), float(b + k * se))
    elif se is not None:  # two runs with known uncertainties: normal interval
        k = float(stats.norm.ppf(0.5 + confidence / 2))
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


def parse_trend_limits(max_loss_rise: str | None = None, max_drift: str | None = None) -> TrendLimits:
    """Limits from option text: ``--max-loss-rise 0.2dB`` (per year) and ``--max-drift 0.2%`` or ``20kHz``
    (per year)."""

    out = {}
    if max_loss_rise is not None:
        text = str(max_loss_rise).strip()
        for suffix in ("db/yr", "db/year", "db"):
            if text.lower().endswith(suffix):
                text = text[: -len(suffix)].strip()
                break
        try:
            v = float(text)
        except ValueError:
            raise OptionError("--max-loss-rise", f"cannot read {max_loss_rise!r}; write a loss rise per year "
                                                 "like 0.2dB") from None
        if not math.isfinite(v) or v < 0:
            raise OptionError("--max-loss-rise", f"{max_loss_rise!r}: give 0dB or more")
        out["max_loss_rise_db_per_year"] = v
    if max_drift is not None:
        text = str(max_drift).strip()
        for suffix in ("/yr", "/year"):
            if text.lower().endswith(suffix):
                text = text[: -len(suffix)].strip()
        if text.endswith("%"):
            try:
                v = float(text[:-1])
            except ValueError:
                raise OptionError("--max-drift", f"cannot read {max_drift!r}; write 0.2% or 20kHz "
                                                 "(per year)") from None
            if not math.isfinite(v) or v < 0 or v > 100:
                raise OptionError("--max-drift", f"{max_drift!r}: give a per cent between 0 and 100")
            out["max_drift_fraction_per_year"] = v / 100
            out["max_drift_hz_per_year"] = None
        else:
            out["max_drift_hz_per_year"] = (0.0 if text in ("0", "0Hz")
                                            else parse_frequency(text, "--max-drift"))
            out["max_drift_fraction_per_year"] = None
    return TrendLimits(**out)


# ------------------------------------------------------------------------------------------- series

@dataclass(frozen=True)
class Series:
    """One quantity of one feed over time (runs without a value are left out)."""

    quantity: str
    dates: tuple
    values: tuple
    lows: tuple
    highs: tuple
    files: tuple = ()

    def sigmas(self):
        s = [sigma_from_interval(lo, hi) for lo, hi in zip(self.lows, self.highs)]
        return None if any(x is None for x in s) else np.array(s, float)


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


def _rate(q: str, v: float) -> str:

    if q == "resonance_hz":
        return ("+" if v >= 0 else "-") + fmt_freq(abs(v), 3) + "/yr"
    if q == "line_loss_db":
        return f"{v:+.2f} dB/yr"
    return f"{v:+.3f}/yr"


def step_predictions(series: Series, origin: str) -> dict:
    """For every run i with at least :data:`STEP_MIN_EARLIER` runs before it: what the straight line
    through runs 0..i-1 predicts, that prediction's standard uncertainty (the fit's and the new run's
    together) and the coverage factor for :data:`STEP_ALPHA`.

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
    red = chi2 / dof
    if sig is None:
        scale, var_new = red, red
        k = stats.t.ppf(1 - STEP_ALPHA / 2, dof)
    else:
        scale = np.maximum(red, 1.0)
        var_new = sig[i] ** 2 * scale
        k = np.full(i.size, stats.norm.ppf(1 - STEP_ALPHA / 2))
    tc = Sx / S
    var_fit = scale * (1 / S + (t[i] - tc) ** 2 / np.where(ok, spread, 1.0))
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
                              f"runs before predicts {_fmt(q, p['pred'][j])} ({_sign(q, diff[j])}, more than "
                              "the noise and the trend explain)"})
    return out


def _sign(q: str, d: float) -> str:

    if q == "resonance_hz":
        return ("+" if d >= 0 else "-") + fmt_freq(abs(d), 3)
    if q == "line_loss_db":
        return f"{d:+.2f} dB"
    return f"{d:+.2f}"


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


def entry_trend(name: str, runs, limits: TrendLimits | None = None) -> EntryTrend:
    """The trend of one feed from its runs.

    Parameters
    ----------
    name : str
        The feed's name.
    runs : sequence of dict
        One per dated sweep, in date order: ``{"date": "YYYY-MM-DD", "file": str, "values": {quantity:
        (value, low, high)}}`` with None for a missing value or interval.
    limits : TrendLimits, optional
    """
    limits = limits or TrendLimits()
    runs = sorted(runs, key=lambda r: r["date"])
    origin = runs[0]["date"] if runs else None
    series, fits, slopes = {}, {}, {}
    for q in QUANTITIES:
        pts = [(r["date"], *r["values"][q], r.get("file", "")) for r in runs
               if r["values"].get(q) is not None and r["values"][q][0] is not None]
        s = Series(q, tuple(p[0] for p in pts), tuple(float(p[1]) for p in pts), tuple(p[2] for p in pts),
                   tuple(p[3] for p in pts), tuple(p[4] for p in pts))
        series[q] = s
        fit = fit_series(s, origin) if origin else None
        fits[q] = fit
        slopes[q] = fit.to_dict() if fit is not None else {"per_year": None, "interval": None}
    flags = trend_flags(fits, series, limits, origin) if origin else []
    return EntryTrend(name, len(runs), slopes, flags, series, fits, origin)


__all__ = ["EntryTrend", "QUANTITIES", "Series", "SlopeFit", "TrendLimits", "entry_trend", "parse_trend_limits",
           "step_flags", "step_predictions", "trend_flags", "weighted_slope", "years_since"]
