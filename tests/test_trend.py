"""Trend fits and flags.

Sources: the straight-line fit is checked against scipy.stats.linregress (equal weights: slope and its
standard error) and numpy.polyfit with weights (cov="unscaled" for known uncertainties, cov=True for
the scatter-scaled covariance), and against Bevington & Robinson, Data Reduction and Error Analysis,
3rd ed., eqs. 6.12 and 6.21-6.22 written out by hand; the interval uses Student's t (scipy.stats.t).
The flags are checked on invented data with known trends, and on the invented sample history
(deembed/jobs/sample_history.py), where only the 2 m vertical's run takes on water.
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from deembed.analysis.trend import (STEP_ALPHA, STEP_FLOOR, STEP_MIN_EARLIER, Series, TrendLimits, entry_trend,
                                    parse_trend_limits, step_flags, step_predictions, weighted_slope, years_since)
from deembed.base.errors import OptionError


def test_equal_weights_match_linregress():
    rng = np.random.default_rng(7)
    t = np.sort(rng.uniform(0, 4, 9))
    y = 3.6 + 0.31 * t + rng.normal(0, 0.05, t.size)
    fit = weighted_slope(t, y)
    ref = stats.linregress(t, y)
    assert fit.per_year == pytest.approx(ref.slope, rel=1e-12)
    assert fit.stderr_per_year == pytest.approx(ref.stderr, rel=1e-10)
    assert fit.intercept == pytest.approx(ref.intercept, rel=1e-12)
    k = stats.t.ppf(0.975, t.size - 2)
    assert fit.interval[0] == pytest.approx(ref.slope - k * ref.stderr, rel=1e-10)
    assert fit.interval[1] == pytest.approx(ref.slope + k * ref.stderr, rel=1e-10)


def test_known_uncertainties_match_polyfit_unscaled():
    """Scatter smaller than the stated uncertainties: var(b) = S/D (numpy.polyfit cov='unscaled')."""
    rng = np.random.default_rng(8)
    t = np.array([0.0, 0.5, 1.0, 1.6, 2.0, 2.5, 3.1])
    sigma = np.array([0.05, 0.1, 0.05, 0.2, 0.1, 0.05, 0.1])
    y = 1.0 - 0.02 * t + rng.normal(0, 1, t.size) * sigma * 0.3
    fit = weighted_slope(t, y, sigma)
    assert fit.chi2_reduced < 1
    p, cov = np.polyfit(t, y, 1, w=1 / sigma, cov="unscaled")
    assert fit.per_year == pytest.approx(p[0], rel=1e-10)
    assert fit.stderr_per_year == pytest.approx(np.sqrt(cov[0, 0]), rel=1e-10)
    # Bevington & Robinson eqs. 6.12, 6.21-6.22 by hand
    w = 1 / sigma ** 2
    D = w.sum() * (w * t * t).sum() - (w * t).sum() ** 2
    b = (w.sum() * (w * t * y).sum() - (w * t).sum() * (w * y).sum()) / D
    assert fit.per_year == pytest.approx(b, rel=1e-10)
    assert fit.stderr_per_year == pytest.approx(np.sqrt(w.sum() / D), rel=1e-10)


def test_known_uncertainties_too_small_scale_like_polyfit():
    """Scatter larger than the stated uncertainties: scaled by chi2/(n-2), as numpy.polyfit(cov=True)."""
    rng = np.random.default_rng(9)
    t = np.linspace(0, 3, 8)
    sigma = np.full(t.size, 0.01)
    y = 2.0 + 0.1 * t + rng.normal(0, 0.05, t.size)
    fit = weighted_slope(t, y, sigma)
    assert fit.chi2_reduced > 1
    p, cov = np.polyfit(t, y, 1, w=1 / sigma, cov=True)
    assert fit.per_year == pytest.approx(p[0], rel=1e-10)
    assert fit.stderr_per_year == pytest.approx(np.sqrt(cov[0, 0]), rel=1e-10)


def test_two_runs_have_a_slope_but_no_interval():
    fit = weighted_slope([0.0, 1.0], [1.0, 1.5])
    assert fit.per_year == pytest.approx(0.5, rel=1e-12)
    assert fit.interval is None
    with pytest.raises(ValueError):
        weighted_slope([1.0, 1.0], [1.0, 2.0])


def test_years_since():
    # 2024 is a leap year: 366 days; a year of the fit is 365.25 days (Julian year, IAU)
    assert years_since(["2023-03-18", "2024-03-18"])[1] == pytest.approx(366 / 365.25, rel=1e-15)


def _runs(dates, **series):
    return [{"date": d, "file": f"{d}.s1p", "values": {q: (None if v[i] is None else (v[i], None, None))
                                                        for q, v in series.items()}}
            for i, d in enumerate(dates)]


DATES = ["2023-03-18", "2023-09-30", "2024-03-23", "2024-10-05", "2025-03-15", "2025-09-27", "2026-03-21"]


def test_flags_loss_rise_and_not_flat():
    rng = np.random.default_rng(11)
    t = years_since(DATES)
    wet = _runs(DATES, line_loss_db=list(3.6 + 0.35 * t + rng.normal(0, 0.03, t.size)))
    dry = _runs(DATES, line_loss_db=list(3.6 + rng.normal(0, 0.03, t.size)))
    fw, fd = entry_trend("wet", wet), entry_trend("dry", dry)
    assert [f["quantity"] for f in fw.flags] == ["line_loss_db"]
    assert fw.slopes["line_loss_db"]["per_year"] == pytest.approx(0.35, abs=0.05)
    assert fd.flags == []
    # the limit is settable: 0.5 dB/yr lets the same wet run pass
    assert entry_trend("wet", wet, TrendLimits(max_loss_rise_db_per_year=0.5)).flags == []


def test_flags_resonance_drift_fraction_and_absolute():
    rng = np.random.default_rng(12)
    t = years_since(DATES)
    res = list(7.1e6 - 40e3 * t + rng.normal(0, 1e3, t.size))  # -40 kHz/yr at 7.1 MHz = 0.56 %/yr
    tr = entry_trend("dipole", _runs(DATES, resonance_hz=res))
    assert [f["quantity"] for f in tr.flags] == ["resonance_hz"]
    assert tr.flags[0]["kind"] == "rate"
    assert entry_trend("dipole", _runs(DATES, resonance_hz=res), parse_trend_limits(max_drift="1%")).flags == []
    assert entry_trend("dipole", _runs(DATES, resonance_hz=res), parse_trend_limits(max_drift="50kHz")).flags == []
    assert entry_trend("dipole", _runs(DATES, resonance_hz=res), parse_trend_limits(max_drift="20kHz")).flags


def test_step_the_trend_does_not_explain():
    rng = np.random.default_rng(13)
    t = years_since(DATES)
    swr = 1.3 + rng.normal(0, 0.01, t.size)
    swr[5:] += 0.4  # a connector let go between the 5th and 6th sweeps
    flags = step_flags(Series("min_swr", tuple(DATES), tuple(swr), (None,) * 7, (None,) * 7), DATES[0])
    assert [f["date"] for f in flags][:1] == [DATES[5]]
    # a steady trend of the same total size is explained by the runs before it: no step
    steady = 1.3 + 0.4 * t / t[-1] + rng.normal(0, 0.01, t.size)
    assert step_flags(Series("min_swr", tuple(DATES), tuple(steady), (None,) * 7, (None,) * 7), DATES[0]) == []
    # a jump below the floor is not worth a flag however quiet the data
    quiet = 1.3 + np.zeros(t.size)
    quiet[6] += STEP_FLOOR["min_swr"] * 0.9
    quiet[:6] += np.array([1, -1, 1, -1, 1, -1]) * 1e-4
    assert step_flags(Series("min_swr", tuple(DATES), tuple(quiet), (None,) * 7, (None,) * 7), DATES[0]) == []


def test_step_predictions_match_a_fit_per_run():
    """The one-pass prediction of each run from the runs before it against scipy.stats.linregress on
    those runs and the textbook prediction interval of a new observation,
    s * sqrt(1 + 1/n + (x0 - xbar)^2 / Sxx) (Montgomery & Runger, Applied Statistics and Probability
    for Engineers, sec. 11-7, from memory); and, with intervals, against numpy.polyfit with weights."""
    rng = np.random.default_rng(21)
    dates = [f"{2010 + k // 2}-{'03' if k % 2 == 0 else '09'}-15" for k in range(14)]
    t = years_since(dates)
    y = 145.6e6 + 3e3 * t + rng.normal(0, 2e4, t.size)
    p = step_predictions(Series("resonance_hz", tuple(dates), tuple(y), (None,) * 14, (None,) * 14), dates[0])
    assert list(p["index"]) == list(range(STEP_MIN_EARLIER, 14))
    for j, i in enumerate(p["index"]):
        ref = stats.linregress(t[:i], y[:i])
        s = np.sqrt(np.sum((y[:i] - ref.intercept - ref.slope * t[:i]) ** 2) / (i - 2))
        sxx = np.sum((t[:i] - t[:i].mean()) ** 2)
        assert p["pred"][j] == pytest.approx(ref.intercept + ref.slope * t[i], rel=1e-12)
        assert p["sd"][j] == pytest.approx(s * np.sqrt(1 + 1 / i + (t[i] - t[:i].mean()) ** 2 / sxx), rel=1e-7)
        assert p["k"][j] == pytest.approx(stats.t.ppf(1 - STEP_ALPHA / 2, i - 2), rel=1e-12)
    sig = rng.uniform(1e4, 3e4, t.size)
    iv = Series("resonance_hz", tuple(dates), tuple(y), tuple(y - 1.959963984540054 * sig),
                tuple(y + 1.959963984540054 * sig))
    p = step_predictions(iv, dates[0])
    for j, i in enumerate(p["index"]):
        coef = np.polyfit(t[:i], y[:i], 1, w=1 / sig[:i])
        assert p["pred"][j] == pytest.approx(np.polyval(coef, t[i]), rel=1e-12)


def test_json_form_has_exactly_the_listed_keys():
    t = years_since(DATES)
    tr = entry_trend("x", _runs(DATES, line_loss_db=list(3 + 0.5 * t), resonance_hz=[1e7] * 7,
                                min_swr=[1.2, 1.21, 1.19, 1.2, 1.22, 1.2, 1.21]))
    d = tr.to_dict()
    assert set(d) == {"name", "runs", "slopes", "flags"}
    assert set(d["slopes"]) == {"line_loss_db", "resonance_hz", "min_swr"}
    assert all(set(s) == {"per_year", "interval"} for s in d["slopes"].values())
    assert all(set(f) == {"quantity", "reason"} for f in d["flags"])


def test_bad_limits():
    for opt, val in (("--max-loss-rise", "fast"), ("--max-loss-rise", "-1dB"), ("--max-drift", "2 furlongs"),
                     ("--max-drift", "150%")):
        with pytest.raises(OptionError, match=opt):
            parse_trend_limits(**{opt[2:].replace("-", "_"): val})


def test_invented_history_flags_the_wet_line_only():
    """The sample history through the same path as `deembed site` (correct, compare, record values),
    without writing plots: only the 2 m vertical is flagged, for its line loss, and the fitted rise is
    the generator's 10 %/yr of the dry loss."""
    from deembed.analysis.compare import compare_corrections
    from deembed.analysis.recording import sweep_values
    from deembed.analysis.summary import summarise
    from deembed.io.sweep import one_port
    from deembed.jobs import sample_history as sh
    from deembed.physics.deembedding import correct

    sweeps = sh.history_sweeps()
    trends = {}
    for name, (prefix, line_of, f, z, _) in sh.antennas().items():
        line = line_of(0.0)
        base = None
        runs = []
        for date in sh.SWEEP_DATES:
            _, ff, g = sweeps[(name, date)]
            corr = correct(one_port(ff, g, source=f"{prefix}-{date}.s1p"), line)
            summary = summarise(corr)
            cmp = None
            if base is None:
                base = corr
            else:
                cmp = compare_corrections(base, corr)
            vals = {v.quantity: (v.value, v.low, v.high) for v in sweep_values(corr, summary, cmp) if v.idx == 0}
            runs.append({"date": date, "values": vals})
        trends[name] = entry_trend(name, runs)
    assert {n: [f["quantity"] for f in t.flags] for n, t in trends.items()} == {
        "2 m vertical": ["line_loss_db"], "40 m dipole": [], "20 m ground plane": []}
    dry_db = float(sh.antennas()["2 m vertical"][1](0.0).matched_loss_db(np.array([146e6]))[0])
    rise = trends["2 m vertical"].slopes["line_loss_db"]
    assert rise["interval"][0] <= sh.WATER_LOSS_GROWTH_PER_YEAR * dry_db <= rise["interval"][1]


def test_recorded_intervals_from_the_uncertainty_block():
    """Intervals the findings carry reach the record; one of 68.27 % coverage is re-scaled to 95 % about
    the value with the normal quantiles (scipy.stats.norm), so every stored interval means the same."""
    from deembed.analysis.recording import sweep_values
    from deembed.analysis.summary import summarise
    from deembed.io.sweep import one_port
    from deembed.jobs import sample_history as sh
    from deembed.physics.deembedding import correct

    _, f, g = sh.history_sweeps()[("40 m dipole", sh.SWEEP_DATES[0])]
    corr = correct(one_port(f, g), sh.antennas()["40 m dipole"][1](0.0))
    summary = summarise(corr)
    fp = summary["feedpoint"]
    lo, hi = fp["min_swr"]["swr"] - 0.02, fp["min_swr"]["swr"] + 0.03
    fp["uncertainty"] = {"coverage": 0.95, "min_swr": [lo, hi], "q": None,
                         "resonances_hz": [[fp["resonances_hz"][0] - 1e3, fp["resonances_hz"][0] + 1e3]]}
    vals = {(v.quantity, v.idx): v for v in sweep_values(corr, summary)}
    assert (vals[("min_swr", 0)].low, vals[("min_swr", 0)].high) == (lo, hi)
    assert vals[("resonances_hz", 0)].high - vals[("resonances_hz", 0)].low == pytest.approx(2e3)
    assert vals[("q", 0)].low is None
    fp["uncertainty"]["coverage"] = float(stats.norm.cdf(1) - stats.norm.cdf(-1))  # one standard deviation
    v = {(v.quantity, v.idx): v for v in sweep_values(corr, summary)}[("min_swr", 0)]
    assert v.value - v.low == pytest.approx(0.02 * stats.norm.ppf(0.975), rel=1e-9)
    assert v.high - v.value == pytest.approx(0.03 * stats.norm.ppf(0.975), rel=1e-9)
