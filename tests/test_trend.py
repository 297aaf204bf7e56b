"""Trend fits and flags.

Sources: the straight-line fit is checked against scipy.stats.linregress (equal weights: slope and its
standard error) and numpy.polyfit with weights (cov=True, the scatter-scaled covariance the trend uses in
both directions; cov="unscaled" for the absolute-sigma form), and against Bevington & Robinson, Data
Reduction and Error Analysis, 3rd ed., eqs. 6.12 and 6.21-6.22 written out by hand; the interval uses
Student's t (scipy.stats.t). The flags are checked on invented data with known trends, and on the
invented sample history (deembed/jobs/sample_history.py), where only the 2 m vertical's run takes on
water: once with findings alone (equal weights) and once through the whole site path with the Monte Carlo
intervals, where a drift and a step injected into the dry feeds' runs must be flagged.
"""
from __future__ import annotations

import dataclasses

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


def test_scatter_smaller_than_the_sigmas_scales_down_like_polyfit():
    """Scatter smaller than the stated uncertainties (a shared tolerance in every interval): the weights are
    relative and var(b) is scaled by chi2/(n-2) below 1 too, as numpy.polyfit(cov=True); the interval uses
    Student's t with n - 2 degrees of freedom."""
    rng = np.random.default_rng(8)
    t = np.array([0.0, 0.5, 1.0, 1.6, 2.0, 2.5, 3.1])
    sigma = np.array([0.05, 0.1, 0.05, 0.2, 0.1, 0.05, 0.1])
    y = 1.0 - 0.02 * t + rng.normal(0, 1, t.size) * sigma * 0.3
    fit = weighted_slope(t, y, sigma)
    assert fit.chi2_reduced < 1
    p, cov = np.polyfit(t, y, 1, w=1 / sigma, cov=True)
    assert fit.per_year == pytest.approx(p[0], rel=1e-10)
    assert fit.stderr_per_year == pytest.approx(np.sqrt(cov[0, 0]), rel=1e-10)
    k = stats.t.ppf(0.975, t.size - 2)
    assert fit.interval == pytest.approx((p[0] - k * np.sqrt(cov[0, 0]), p[0] + k * np.sqrt(cov[0, 0])), rel=1e-10)
    # the same sigmas all ten times larger (a tolerance common to every run) give the same slope and interval
    wide = weighted_slope(t, y, sigma * 10)
    assert wide.interval == pytest.approx(fit.interval, rel=1e-10)


def test_shared_tolerance_does_not_hide_a_drift():
    """Intervals dominated by a tolerance common to every run (+/-33 kHz on a 40 m dipole while the runs
    scatter by 0.7 kHz): a drift of 20 kHz/yr is still resolved; the interval matches scipy.stats.linregress
    (equal sigmas), not the +/-33 kHz bars."""
    rng = np.random.default_rng(31)
    t = years_since(DATES)
    y = 6.96e6 + 20e3 * t + rng.normal(0, 700, t.size)
    fit = weighted_slope(t, y, np.full(t.size, 33e3 / 1.96))
    ref = stats.linregress(t, y)
    assert fit.per_year == pytest.approx(ref.slope, rel=1e-10)
    assert fit.stderr_per_year == pytest.approx(ref.stderr, rel=1e-9)
    assert fit.interval[0] > 15e3


def test_known_uncertainties_match_polyfit_unscaled():
    """The absolute-sigma form (sigma known; scipy's curve_fit absolute_sigma=True): var(b) = S/D, as
    numpy.polyfit(cov='unscaled'), with the normal quantile."""
    rng = np.random.default_rng(8)
    t = np.array([0.0, 0.5, 1.0, 1.6, 2.0, 2.5, 3.1])
    sigma = np.array([0.05, 0.1, 0.05, 0.2, 0.1, 0.05, 0.1])
    y = 1.0 - 0.02 * t + rng.normal(0, 1, t.size) * sigma * 0.3
    fit = weighted_slope(t, y, sigma, absolute_sigma=True)
    p, cov = np.polyfit(t, y, 1, w=1 / sigma, cov="unscaled")
    assert fit.per_year == pytest.approx(p[0], rel=1e-10)
    assert fit.stderr_per_year == pytest.approx(np.sqrt(cov[0, 0]), rel=1e-10)
    # Bevington & Robinson eqs. 6.12, 6.21-6.22 by hand
    w = 1 / sigma ** 2
    D = w.sum() * (w * t * t).sum() - (w * t).sum() ** 2
    b = (w.sum() * (w * t * y).sum() - (w * t).sum() * (w * y).sum()) / D
    assert fit.per_year == pytest.approx(b, rel=1e-10)
    assert fit.stderr_per_year == pytest.approx(np.sqrt(w.sum() / D), rel=1e-10)
    z = stats.norm.ppf(0.975)
    assert fit.interval == pytest.approx((b - z * np.sqrt(w.sum() / D), b + z * np.sqrt(w.sum() / D)), rel=1e-10)


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
    p_full = step_predictions(iv, dates[0])
    p_equal = step_predictions(Series("resonance_hz", tuple(dates), tuple(y), (None,) * 14, (None,) * 14), dates[0])
    # recorded (full) intervals alone do not weigh the runs: the same predictions as with equal weights
    assert np.array_equal(p_full["pred"], p_equal["pred"]) and np.array_equal(p_full["sd"], p_equal["sd"])
    iv = Series("resonance_hz", tuple(dates), tuple(y), (None,) * 14, (None,) * 14, (),
                tuple(y - 1.959963984540054 * sig), tuple(y + 1.959963984540054 * sig))
    p = step_predictions(iv, dates[0])
    for j, i in enumerate(p["index"]):
        coef, cov = np.polyfit(t[:i], y[:i], 1, w=1 / sig[:i], cov=True)
        assert p["pred"][j] == pytest.approx(np.polyval(coef, t[i]), rel=1e-12)
        # prediction variance: the fit's (x0^T C x0, C from polyfit cov=True) and the new run's own, scaled by the
        # same reduced chi-square
        x0 = np.array([t[i], 1.0])
        resid = y[:i] - np.polyval(coef, t[:i])
        red = np.sum((resid / sig[:i]) ** 2) / (i - 2)
        assert p["sd"][j] == pytest.approx(np.sqrt(x0 @ cov @ x0 + red * sig[i] ** 2), rel=1e-6)
        assert p["k"][j] == pytest.approx(stats.t.ppf(1 - STEP_ALPHA / 2, i - 2), rel=1e-12)


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
    for field, val in (("max_loss_rise", "fast"), ("max_loss_rise", "-1dB"), ("max_drift", "2 furlongs"),
                       ("max_drift", "150%"), ("max_drift", "-5kHz")):
        with pytest.raises(OptionError, match=field) as exc:
            parse_trend_limits(**{field: val})
        assert exc.value.field == field  # the library names the field; the command line maps it to its option


def test_bare_numbers_get_the_one_no_unit_hint():
    """A bare number is refused with the words every quantity uses (deembed.base.units.no_unit), with an
    example that fits: a loss rise in dB, a drift as a share or a frequency (never a 7.1MHz-like frequency)."""
    from deembed.base.units import no_unit

    for field, val, example in (("max_loss_rise", "0.2", "0.2dB"), ("max_drift", "20", "0.2% or 20kHz"),
                                ("max_drift", "0", "0.2% or 20kHz")):
        with pytest.raises(OptionError) as exc:
            parse_trend_limits(**{field: val})
        assert str(exc.value) == str(no_unit(val, field, example))
        assert "MHz" not in str(exc.value)
    lim = parse_trend_limits(max_loss_rise="0.3dB/yr", max_drift="20kHz/yr")
    assert (lim.max_loss_rise_db_per_year, lim.max_drift_hz_per_year) == (0.3, 20e3)
    assert parse_trend_limits(max_drift="0.5%").max_drift_fraction_per_year == pytest.approx(0.005, rel=1e-15)
    assert parse_trend_limits(max_drift="0Hz").max_drift_hz_per_year == 0.0


def test_a_rate_that_rounds_to_zero_prints_unsigned():
    from deembed.analysis.trend import change_text

    assert change_text("line_loss_db", -1e-5, decimals=3, per_year=True) == "0.000 dB/yr"
    assert change_text("min_swr", -4e-4, decimals=3, per_year=True, minus="\u2212") == "0.000/yr"
    assert change_text("resonance_hz", 0.0, per_year=True) == "0 Hz/yr"
    assert change_text("line_loss_db", -0.0006, decimals=3, per_year=True) == "-0.001 dB/yr"
    assert change_text("resonance_hz", -42.9e3, per_year=True) == "-42.9 kHz/yr"
    assert change_text("min_swr", 0.4) == "+0.40"


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
    unc = {"coverage": 0.95, "min_swr": [lo, hi], "q": None,
           "resonances_hz": [[fp["resonances_hz"][0] - 1e3, fp["resonances_hz"][0] + 1e3]]}

    def with_block(block):  # the summary is a frozen typed result: a copy with this uncertainty block
        return dataclasses.replace(summary, feedpoint=dataclasses.replace(fp, uncertainty=block))

    vals = {(v.quantity, v.idx): v for v in sweep_values(corr, with_block(unc))}
    assert (vals[("min_swr", 0)].low, vals[("min_swr", 0)].high) == (lo, hi)
    assert vals[("resonances_hz", 0)].high - vals[("resonances_hz", 0)].low == pytest.approx(2e3)
    assert vals[("q", 0)].low is None
    one_sd = dict(unc, coverage=float(stats.norm.cdf(1) - stats.norm.cdf(-1)))  # one standard deviation
    v = {(v.quantity, v.idx): v for v in sweep_values(corr, with_block(one_sd))}[("min_swr", 0)]
    assert v.value - v.low == pytest.approx(0.02 * stats.norm.ppf(0.975), rel=1e-9)
    assert v.high - v.value == pytest.approx(0.03 * stats.norm.ppf(0.975), rel=1e-9)


# ------------------------------------------------------------------------------------------------------
# the sample history through the site's own path, with the Monte Carlo intervals (recorded and per-run)


@pytest.fixture(scope="module")
def mc_history():
    """Every run of the sample history as `deembed site` records it (correct with the Monte Carlo step,
    compare against the first visit, the values and both intervals), as entry_trend's runs per antenna."""
    from deembed.analysis.compare import compare_corrections
    from deembed.analysis.recording import sweep_values
    from deembed.analysis.summary import summarise
    from deembed.analysis.trust import UncertaintySettings, assess
    from deembed.io.sweep import one_port
    from deembed.jobs import sample_history as sh
    from deembed.physics.deembedding import correct

    settings = UncertaintySettings(draws=400)
    sweeps = sh.history_sweeps()
    out = {}
    for name, (prefix, line_of, f, z, _) in sh.antennas().items():
        line = line_of(0.0)
        base, runs = None, []
        for date in sh.SWEEP_DATES:
            _, ff, g = sweeps[(name, date)]
            corr = correct(one_port(ff, g, source=f"{prefix}-{date}.s1p"), line)
            a = assess(corr.freq_hz, corr.gamma_analyzer, corr.gamma_feedpoint, line, settings=settings)
            summary = summarise(corr, assessment=a)
            cmp = None
            if base is None:
                base = corr
            else:
                cmp = compare_corrections(base, corr, settings=settings)
            vals = {v.quantity: (v.value, v.low, v.high, v.run_low, v.run_high)
                    for v in sweep_values(corr, summary, cmp) if v.idx == 0}
            runs.append({"date": date, "file": f"{prefix}-{date}.s1p", "values": vals})
        out[name] = runs
    return out


def _shifted(runs, quantity, shift):
    """The runs with ``shift(i, t_years)`` added to one quantity's value and both its intervals."""
    t = years_since([r["date"] for r in runs])
    out = []
    for i, r in enumerate(runs):
        v = r["values"][quantity]
        d = shift(i, t[i])
        vals = dict(r["values"])
        vals[quantity] = tuple(None if x is None else x + d for x in v)
        out.append({**r, "values": vals})
    return out


def test_mc_history_flags_the_wet_line_only_and_weighs_by_the_per_run_intervals(mc_history):
    """With every interval recorded, the dry feeds are not flagged and the wet one is, for its loss only;
    every run has a per-run interval much narrower than its recorded one (the line's tolerance is out)."""
    trends = {n: entry_trend(n, runs) for n, runs in mc_history.items()}
    assert {n: [f["quantity"] for f in t.flags] for n, t in trends.items()} == {
        "2 m vertical": ["line_loss_db"], "40 m dipole": [], "20 m ground plane": []}
    for name in ("40 m dipole", "20 m ground plane"):
        for q in ("resonance_hz", "line_loss_db"):
            s = trends[name].series[q]
            assert trends[name].fits[q].weighted
            full = np.subtract(s.highs, s.lows)
            per_run = np.subtract(s.run_highs, s.run_lows)
            assert np.all(per_run < full / 5), (name, q)


def test_mc_history_slopes_against_polyfit_cov_true(mc_history):
    """Each fitted slope and its standard uncertainty against numpy.polyfit(w = 1/sigma_run, cov=True) on
    the same runs (sigma_run from the recorded per-run 95 % intervals)."""
    for name, runs in mc_history.items():
        tr = entry_trend(name, runs)
        for q in ("resonance_hz", "min_swr", "line_loss_db"):
            s = tr.series[q]
            t = years_since(s.dates, tr.origin)
            sig = (np.array(s.run_highs) - np.array(s.run_lows)) / (2 * 1.959963984540054)
            p, cov = np.polyfit(t, np.array(s.values), 1, w=1 / sig, cov=True)
            fit = tr.fits[q]
            assert fit.per_year == pytest.approx(p[0], rel=1e-8, abs=1e-12)
            assert fit.stderr_per_year == pytest.approx(np.sqrt(cov[0, 0]), rel=1e-8)
            # the weights are relative: the reduced chi-square of the per-run intervals is of order one (they
            # describe the scatter), where the recorded intervals' would be far below it
            assert 0.2 < fit.chi2_reduced < 10, (name, q, fit.chi2_reduced)


@pytest.mark.parametrize("name, f0", [("40 m dipole", 6.96e6), ("20 m ground plane", 14.2e6)])
def test_injected_drift_and_step_are_flagged(mc_history, name, f0):
    """A resonance drift of 0.3 %/yr (1.5 times the default limit) injected into a dry feed's runs is flagged
    as a drift; a 300 kHz step, and one of 0.2 % of the frequency (twice the floor), on the last run as a step;
    a line-loss step of 0.3 dB on the last run as a step; the runs as recorded raise nothing."""
    runs = mc_history[name]
    assert entry_trend(name, runs).flags == []
    drift = entry_trend(name, _shifted(runs, "resonance_hz", lambda i, t: 0.003 * f0 * t))
    assert [(f["quantity"], f["kind"]) for f in drift.flags] == [("resonance_hz", "rate")]
    assert drift.fits["resonance_hz"].interval[0] > 0.002 * f0  # the whole interval is above the limit
    last = len(runs) - 1
    for step in (300e3, 0.002 * f0):
        tr = entry_trend(name, _shifted(runs, "resonance_hz", lambda i, t: step if i == last else 0.0))
        assert [(f["quantity"], f["kind"], f["date"]) for f in tr.flags if f["kind"] == "step"] == [
            ("resonance_hz", "step", runs[last]["date"])]
    tr = entry_trend(name, _shifted(runs, "line_loss_db", lambda i, t: 0.3 if i == last else 0.0))
    assert [(f["quantity"], f["kind"]) for f in tr.flags] == [("line_loss_db", "step")]


# ------------------------------------------------------------------------------------------------------
# what is recorded: the per-run interval and the line's loss


def _one_sweep(name="20 m ground plane", date_index=0, line=None):
    from deembed.io.sweep import one_port
    from deembed.jobs import sample_history as sh
    from deembed.physics.deembedding import correct

    _, f, g = sh.history_sweeps()[(name, sh.SWEEP_DATES[date_index])]
    return correct(one_port(f, g), line or sh.antennas()[name][1](0.0))


def _summary(corr, draws=400):
    from deembed.analysis.summary import summarise
    from deembed.analysis.trust import UncertaintySettings, assess

    a = assess(corr.freq_hz, corr.gamma_analyzer, corr.gamma_feedpoint, corr.line,
               settings=UncertaintySettings(draws=draws))
    return summarise(corr, assessment=a)


def test_per_run_interval_leaves_out_the_line_tolerance():
    """The recorded interval grows with the line's tolerance; the per-run one is the same draw for draw (the
    line held at its description, JCGM 101 with that input fixed): it is the analyzer's noise alone."""
    from dataclasses import replace

    from deembed.analysis.recording import sweep_values
    from deembed.physics.line import Line
    from deembed.physics.tolerance import Tolerance

    corr = _one_sweep()
    sec = corr.line.parts[0]
    loose = Line((replace(sec, tolerance=Tolerance(length_m=0.5, vf=0.02, loss_fraction=0.3, z0_ohm=2.0)),),
                 name="loose")
    tight = Line((replace(sec, tolerance=Tolerance(length_m=0.05, vf=0.002, loss_fraction=0.03, z0_ohm=0.2)),),
                 name="tight")
    got = {}
    for name, line in (("loose", loose), ("tight", tight)):
        c = _one_sweep(line=line)
        got[name] = {v.quantity: v for v in sweep_values(c, _summary(c)) if v.idx == 0}
    for q, grows in (("resonance_hz", 3.0), ("min_swr", 1.0)):  # the lowest SWR's is mostly the calibration's
        lo, ti = got["loose"][q], got["tight"][q]
        assert (lo.high - lo.low) > grows * (ti.high - ti.low), q
        assert (lo.run_low, lo.run_high) == (ti.run_low, ti.run_high), q
        assert lo.run_high - lo.run_low < (ti.high - ti.low) / 5, q
    loss = got["loose"]["line_loss_db"], got["tight"]["line_loss_db"]
    assert (loss[0].high - loss[0].low) > 5 * (loss[1].high - loss[1].low)
    assert (loss[0].run_low, loss[0].run_high) == (loss[1].run_low, loss[1].run_high)


def test_line_loss_noise_sd_against_repeated_fits():
    """The per-run standard uncertainty of a loss reading (the unweighted least-squares variance of the
    fitted c, module notes of deembed.analysis.recording) against the scatter of fit_line_change itself over
    200 fresh noise draws of the after sweep against a noise-free baseline (a numpy reference computation of
    the same estimator; 200 draws give the sd to about 5 %)."""
    from deembed.analysis.compare import fit_line_change
    from deembed.analysis.recording import loss_noise_sd_db
    from deembed.io.sweep import one_port
    from deembed.jobs import sample_history as sh
    from deembed.physics import rf
    from deembed.physics.deembedding import correct, embed_gamma
    from deembed.physics.line import DB_PER_NP

    prefix, line_of, f, z, _ = sh.antennas()["2 m vertical"]
    line = line_of(0.0)
    g_in = embed_gamma(rf.gamma_from_z(z(f)), line.s_params(f))
    clean = correct(one_port(f, g_in), line)
    rng = np.random.default_rng(5)
    noise = 0.003 * np.sqrt(2)       # complex RMS of the generator's 0.003 on each part
    fc = 0.5 * (f[0] + f[-1])
    losses = []
    for _ in range(200):
        g = g_in + 0.003 * (rng.standard_normal(f.size) + 1j * rng.standard_normal(f.size))
        noisy = correct(one_port(f, g), line)
        c = fit_line_change(f, clean.gamma_feedpoint, noisy.gamma_feedpoint)["c_np_per_sqrt_hz"]
        losses.append(DB_PER_NP * c * np.sqrt(fc))
    sd = loss_noise_sd_db(clean, noise, fc)
    assert np.std(losses, ddof=1) == pytest.approx(sd, rel=0.15)


def test_line_loss_recorded_when_the_antenna_changed():
    """A later sweep whose antenna changed (its resonance moved 1 %): the line's loss is still recorded, the
    description's plus the fitted change, with a recorded interval, and a per-run interval widened by the
    fit's misfit beyond the baseline's own; a plain later sweep's is not widened."""
    from deembed.analysis.compare import compare_corrections
    from deembed.analysis.recording import sweep_values
    from deembed.io.sweep import one_port
    from deembed.jobs import sample_history as sh
    from deembed.jobs.samples import series_antenna_z
    from deembed.physics import rf
    from deembed.physics.deembedding import correct, embed_gamma
    from deembed.physics.line import DB_PER_NP

    prefix, line_of, f, z, _ = sh.antennas()["40 m dipole"]
    line = line_of(0.0)
    rng = np.random.default_rng(9)

    def sweep(zf):
        g = embed_gamma(rf.gamma_from_z(zf), line.s_params(f))
        return correct(one_port(f, g + 0.003 * (rng.standard_normal(f.size) + 1j * rng.standard_normal(f.size))),
                       line)

    base = sweep(z(f))
    same = sweep(z(f))
    moved = sweep(series_antenna_z(f, 6.96e6 * 1.01, 58.0, 11.0, 2.0))
    vb = {v.quantity: v for v in sweep_values(base, _summary(base))}
    out = {}
    for name, c in (("same", same), ("moved", moved)):
        cmp = compare_corrections(base, c)
        out[name] = (cmp, {v.quantity: v for v in sweep_values(c, _summary(c), cmp)})
    cmp, vm = out["moved"]
    assert cmp["cause"]["code"] == "antenna"
    loss = vm["line_loss_db"]
    fc = 0.5 * (f[0] + f[-1])
    expected = float(line.matched_loss_db(np.array([fc]))[0]) + \
        DB_PER_NP * cmp["line"]["fitted_change"]["c_np_per_sqrt_hz"] * np.sqrt(fc)
    assert loss.value == pytest.approx(expected, rel=1e-9)
    assert loss.low < loss.value < loss.high and "antenna" in loss.method
    widened = (loss.run_high - loss.run_low) / (vb["line_loss_db"].run_high - vb["line_loss_db"].run_low)
    plain = out["same"][1]["line_loss_db"]
    plain_ratio = (plain.run_high - plain.run_low) / (vb["line_loss_db"].run_high - vb["line_loss_db"].run_low)
    assert widened > 3 and plain_ratio < 1.5
