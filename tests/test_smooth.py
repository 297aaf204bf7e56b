"""Findings from smooth local models and the noise estimate (deembed.analysis.smooth).

Check values: E10 (series RLC, R = 50 ohm, f0 = 14 MHz, Q = 20: SWR-2 edges 13.754700 and 14.249675 MHz,
Q_Z = 20) from /work/shared/reference/check-values.md [D]; Yaghjian-Best Q (F18); the Savitzky-Golay filter of
scipy.signal as an independent implementation of the detection smoother; Gasser, Sroka & Jennen-Steinmetz
(Biometrika 73(3), 1986) for the pseudo-residual noise estimator.
"""
import math

import numpy as np
import pytest

from deembed.analysis import smooth
from deembed.analysis.findings import end_findings


def series_rlc(f, r=50.0, f0=14e6, q=20.0):
    ind = q * r / (2 * np.pi * f0)
    cap = 1 / ((2 * np.pi * f0) ** 2 * ind)
    w = 2 * np.pi * f
    return r + 1j * (w * ind - 1 / (w * cap))


def parallel_rlc(f, r=2000.0, f0=10e6, q=10.0):
    # Q = R / (w0 L) for a parallel RLC (textbook circuit theory)
    ind = r / (q * 2 * np.pi * f0)
    cap = 1 / ((2 * np.pi * f0) ** 2 * ind)
    w = 2 * np.pi * f
    return 1 / (1 / r + 1 / (1j * w * ind) + 1j * w * cap)


def gamma(z):
    return (z - 50) / (z + 50)


def noisy(g, rms, seed):
    rng = np.random.default_rng(seed)
    return g + rms / math.sqrt(2) * (rng.standard_normal(g.size) + 1j * rng.standard_normal(g.size))


def test_e10_series_rlc_edges_resonance_and_q():
    # check-values E10 [D]: 2:1 edges 13.754700 and 14.249675 MHz, Q_Z = 20 (Yaghjian-Best F18)
    f = np.linspace(12e6, 16e6, 801)
    d = end_findings(f, gamma(series_rlc(f)))
    assert d["resonances_hz"][0] == pytest.approx(14e6, abs=5.0)
    (lo, hi), = d["swr_spans_hz"]["2"]
    assert lo == pytest.approx(13.754700e6, abs=20.0)
    assert hi == pytest.approx(14.249675e6, abs=20.0)
    assert d["q"] == pytest.approx(20.0, rel=1e-4)
    assert d["min_swr"]["swr"] == pytest.approx(1.0, abs=1e-4)


def test_parallel_rlc_resistance_and_q():
    # a parallel RLC resonates where B = 0 with Z = R, and its Q_Z equals the circuit Q = R/(w0 L)
    # (Yaghjian-Best: Q_Z equals the circuit Q of a series or parallel RLC at resonance)
    f = np.linspace(9e6, 11e6, 401)
    d = end_findings(f, gamma(parallel_rlc(f)))
    (r,) = d["resonances"]
    assert r["kind"] == "parallel"
    assert r["freq_hz"] == pytest.approx(10e6, abs=50.0)
    assert r["r_ohm"] == pytest.approx(2000.0, rel=1e-3)


def test_detection_smoother_matches_scipy_savgol():
    from scipy.signal import savgol_filter

    rng = np.random.default_rng(0)
    g = rng.standard_normal(300) + 1j * rng.standard_normal(300)
    ours = smooth.detection_trace(g, 6)
    ref = savgol_filter(g.real, 13, 3, mode="interp") + 1j * savgol_filter(g.imag, 13, 3, mode="interp")
    assert np.max(np.abs(ours - ref)) < 1e-12


def test_pseudo_residuals_vanish_on_a_straight_line_with_uneven_spacing():
    # Gasser et al. 1986: the pseudo-residual is the deviation from the line through the two neighbours
    f = np.sort(np.random.default_rng(3).uniform(1e6, 2e6, 50))
    assert np.max(np.abs(smooth.pseudo_residuals(f, 0.3 + 2e-7 * f))) < 1e-12


@pytest.mark.parametrize("rms", [0.001, 0.01])
def test_noise_estimate_recovers_the_noise_of_a_resonant_trace(rms):
    # complex Gaussian noise of RMS s on a smooth antenna trace: the median-based estimate is within 10 %
    # (its relative spread at 1000 points is about 3 %; Gasser et al. 1986 with |e|^2 ~ exponential)
    f = np.linspace(12e6, 16e6, 1001)
    g = noisy(gamma(series_rlc(f, r=70.0)), rms, seed=11)
    assert smooth.noise_rms(f, g) == pytest.approx(rms, rel=0.10)


def test_lowest_swr_from_the_model_is_not_one_noisy_sample():
    # true lowest SWR of a 60 ohm series RLC is 60/50 = 1.2 at f0 (F2 with Gamma = 10/110);
    # the single lowest noisy sample reads low, the local model does not
    f = np.linspace(13e6, 15e6, 801)
    g = noisy(gamma(series_rlc(f, r=60.0, q=15.0)), 0.01, seed=5)
    d = end_findings(f, g)
    raw = float(np.min((1 + np.abs(g)) / (1 - np.abs(g))))
    assert abs(d["min_swr"]["swr"] - 1.2) < 0.01
    assert abs(raw - 1.2) > 2 * abs(d["min_swr"]["swr"] - 1.2)


def test_noise_makes_no_spurious_spans_or_resonances():
    # a trace hovering around SWR 2 with noise: the per-sample rule would make many narrow spans
    f = np.linspace(13e6, 15e6, 801)
    g = noisy(gamma(series_rlc(f, r=60.0, q=15.0)), 0.01, seed=9)
    d = end_findings(f, g)
    assert len(d["resonances"]) == 1
    for key in ("1.5", "2", "3"):
        assert len(d["swr_spans_hz"][key]) == 1


def test_same_antenna_on_two_grids_gives_the_same_findings():
    # the requirement: findings do not depend on which samples happen to be taken
    z = lambda f: series_rlc(f, r=45.0, q=12.0)  # noqa: E731
    fa = np.linspace(13e6, 15e6, 801)
    fb = np.linspace(13.01e6, 14.99e6, 301)
    da, db = end_findings(fa, gamma(z(fa))), end_findings(fb, gamma(z(fb)))
    assert da["resonances_hz"][0] == pytest.approx(db["resonances_hz"][0], abs=20.0)
    assert da["min_swr"]["swr"] == pytest.approx(db["min_swr"]["swr"], abs=1e-4)
    assert da["q"] == pytest.approx(db["q"], rel=1e-3)


def test_no_q_where_no_resonance_is_near_the_match():
    # the only reactance zero (13.16 MHz, R = 500 ohm, SWR 10) lies far outside the 3:1 span around the best
    # match (Z = 50 + j30 near 14 MHz): a Q there says nothing about the match and is not given
    f = np.linspace(12.5e6, 15e6, 801)
    u = (f - 14e6) / 1e6
    z = 50 + 450 * ((14e6 - f) / 0.84e6) ** 2 + 1j * (30 + 50 * u ** 3)
    d = end_findings(f, gamma(z))
    assert d["resonances"] and abs(d["resonances"][0]["freq_hz"] - 13.157e6) < 20e3
    assert d["q"] is None


def test_a_dense_noisy_sweep_gives_one_event_per_crossing():
    # On a dense sweep the noise alone crosses a threshold (and X = 0) many times around each edge (and each
    # resonance), further apart than a few sweep steps; read with hysteresis (a gap or an excursion inside the
    # noise is none) the E10 antenna [D] still has one resonance at 14 MHz and one span per threshold, with
    # the 2:1 edges at 13.754700 and 14.249675 MHz within the noise's reach (common practice, no source).
    f = np.linspace(12e6, 16e6, 200_001)
    g = noisy(gamma(series_rlc(f)), 0.003, seed=4)
    d = end_findings(f, g)
    assert len(d["resonances_hz"]) == 1 and d["resonances_hz"][0] == pytest.approx(14e6, abs=2e3)
    assert all(len(v) == 1 for v in d["swr_spans_hz"].values())
    (lo, hi), = d["swr_spans_hz"]["2"]
    assert lo == pytest.approx(13.754700e6, abs=5e3) and hi == pytest.approx(14.249675e6, abs=5e3)
