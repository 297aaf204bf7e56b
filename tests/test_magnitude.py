"""Magnitude-only de-embedding (SWR or return loss without phase) against outside references.

Checks: the handbook relation of SWR behind a lossy matched line (check-values F8 and the E5 table,
[D] from Gamma(z) = Gamma_L exp(-2 gamma l), handbook form ARRL *Antenna Book* [M]); the full complex
correction of the same sweep (the bound must hold at every point, whatever the phase); scikit-rf's
own line model and cascade as an independent path for building the analyzer-end sweep; the
series-RLC worked example E10 (2:1 edges 13.754700 and 14.249675 MHz).
"""
import numpy as np
import pytest
import skrf

from deembed.physics import rf
from deembed.io.cables import catalog
from deembed.physics.deembedding import correct, embed_gamma
from deembed.physics.line import DB_PER_NP, Line, LossModel, MeasuredTwoPort, Section
from deembed.io.sweep import one_port
from deembed.analysis.magnitude import NO_PHASE_REASON, magnitude_findings
from deembed.io.tablesweep import MagnitudeSweep
from deembed.physics.magnitude import correct_magnitude, feedpoint_gamma_mag, swr_from_mag


def matched_line(f_hz, loss_db):
    """A line exactly matched to 50 ohm with the given one-way matched loss: S11 = S22 = 0, S21 = S12 = 10^(-ML/20)."""
    s = np.zeros((len(f_hz), 2, 2), dtype=complex)
    t = 10 ** (-np.asarray(loss_db, dtype=float) / 20) * np.exp(-1j * 2 * np.pi * f_hz * 1e-7)
    s[:, 1, 0] = s[:, 0, 1] = t
    return Line((MeasuredTwoPort(np.asarray(f_hz, dtype=float), s, label="matched test line"),))


@pytest.mark.parametrize("ml_db, swr_load, swr_in", [
    # check-values E5 [D] (F8/F9): matched loss, SWR at the load, SWR at the input
    (1.0, 3.0, 2.3177),
    (1.0, 2.0, 1.7203),
    (3.0, 3.0, 1.6688),
    (0.5, 5.0, 3.9281),
    (2.0, 10.0, 3.1343),
])
def test_handbook_relation_matched_line(ml_db, swr_load, swr_in):
    f = np.array([7.0e6, 7.1e6])
    line = matched_line(f, [ml_db, ml_db])
    sweep = MagnitudeSweep(f, rf.gamma_mag_from_swr(np.array([swr_in, swr_in])), "swr")
    mc = correct_magnitude(sweep, line)
    # exact for a matched line: the bound has zero width
    assert np.array_equal(mc.gamma_feedpoint_mag_low, mc.gamma_feedpoint_mag)
    assert np.array_equal(mc.gamma_feedpoint_mag_high, mc.gamma_feedpoint_mag)
    # E5 gives SWR_in to 5 significant figures: d(SWR_L)/d(SWR_in) amplification allows about 2e-3 relative
    assert mc.swr_feedpoint == pytest.approx(swr_load, rel=2e-3)
    # F8: RL_in = RL_load + 2 ML
    rl_in = -20 * np.log10(mc.gamma_analyzer_mag)
    rl_load = -20 * np.log10(mc.gamma_feedpoint_mag)
    assert rl_in - rl_load == pytest.approx(2 * ml_db, abs=1e-9)


def _random_loads(n, rng, max_mag=0.9):
    return max_mag * np.sqrt(rng.uniform(0, 1, n)) * np.exp(1j * rng.uniform(-np.pi, np.pi, n))


@pytest.mark.parametrize("cable, length_m", [("rg58", 30.0), ("rg213", 45.0), ("rg174", 20.0), ("rg59", 25.0)])
def test_bound_holds_against_full_complex_correction(cable, length_m):
    # the same sweep corrected with its phase (exact) must lie inside the magnitude-only interval
    rng = np.random.default_rng(7)
    f = np.linspace(1.8e6, 54e6, 400)
    line = Line((catalog()[cable].section(length_m),))
    g_feed = _random_loads(f.size, rng)
    g_an = embed_gamma(g_feed, line.s_params(f))
    full = correct(one_port(f, g_an), line)
    assert np.allclose(full.gamma_feedpoint, g_feed, atol=1e-12)
    mc = correct_magnitude(MagnitudeSweep(f, np.abs(g_an), "swr"), line)
    exact = np.abs(full.gamma_feedpoint)
    assert np.all(mc.gamma_feedpoint_mag_low <= exact + 1e-12)
    assert np.all(exact <= mc.gamma_feedpoint_mag_high + 1e-12)
    err = np.abs(mc.gamma_feedpoint_mag - exact)
    width = mc.gamma_feedpoint_mag_high - mc.gamma_feedpoint_mag_low
    assert np.all(err <= width + 1e-12)
    if cable == "rg59":
        # a 75-ohm cable on a 50-ohm analyzer is far from matched: the interval says so (|rho| = 0.2)
        assert np.median(width) > 0.2
    else:
        # a 50-ohm coax: the interval's half-width is the stated first-order error |S11|/|t| + |S22| |Gamma_f|^2
        # (module docstring; second-order terms allowed 10 %), a few hundredths of |Gamma|, not the whole [0, 1]
        s = line.s_params(f)
        first = np.abs(s[:, 0, 0]) / np.abs(s[:, 1, 0] * s[:, 0, 1]) + np.abs(s[:, 1, 1]) * mc.gamma_feedpoint_mag ** 2
        half = np.maximum(mc.gamma_feedpoint_mag_high - mc.gamma_feedpoint_mag,
                          mc.gamma_feedpoint_mag - mc.gamma_feedpoint_mag_low)
        assert np.all(half <= 1.1 * first)
        assert np.all(err <= 1.1 * first)
        assert np.median(half) < 0.05
        # it is widest at the lowest frequency, where Zc departs most from 50 ohm (check-values F13)
        assert width[:20].mean() > width[-20:].mean()


def test_matched_loss_relation_is_the_lossy_matched_line_estimate():
    # For one 50-ohm section, 1/|S21|^2 = 10^(ML/10), ML the one-way matched loss in dB, up to the complex Z0
    # (check-values F8: |Gamma_in| = |Gamma_L| 10^(-2 ML/20)); the small difference is Zc against 50 ohm.
    f = np.array([3.6e6, 14.2e6, 50.1e6])
    line = Line((catalog()["rg213"].section(30.48),))
    s = line.s_params(f)
    two_way = 1 / np.abs(s[:, 1, 0] * s[:, 0, 1])
    assert 10 * np.log10(two_way) == pytest.approx(line.matched_loss_db(f), abs=2e-3)


def test_against_scikit_rf_line_and_cascade():
    # scikit-rf builds the analyzer-end sweep (its own RLGC line and cascade): an independent path
    f = np.linspace(3e6, 30e6, 271)
    sec = catalog()["rg58"].section(25.0)
    r, l, g, c = sec.rlgc_total(f)
    freq = skrf.Frequency.from_f(f, unit="Hz")
    media = skrf.media.DistributedCircuit(freq, R=r, L=l, G=g, C=c, z0_port=50)
    line_net = media.line(1.0, unit="m")  # the totals are per metre of a 1 m line
    rng = np.random.default_rng(3)
    g_load = _random_loads(f.size, rng, 0.8)
    load = skrf.Network(frequency=freq, s=g_load.reshape(-1, 1, 1), z0=50)
    meas = line_net ** load
    mc = correct_magnitude(MagnitudeSweep(f, np.abs(meas.s[:, 0, 0]), "rl"), Line((sec,)))
    assert np.all(mc.gamma_feedpoint_mag_low <= np.abs(g_load) + 1e-9)
    assert np.all(np.abs(g_load) <= mc.gamma_feedpoint_mag_high + 1e-9)


def test_e10_spans_bracketed_behind_a_line():
    # check-values E10 [D]: series RLC, R 50, f0 14 MHz, Q 20 -> 2:1 edges 13.754700 and 14.249675 MHz
    f = np.linspace(13.0e6, 15.0e6, 2001)
    w, w0 = 2 * np.pi * f, 2 * np.pi * 14e6
    l_h = 20 * 50 / w0
    c_f = 1 / (w0 ** 2 * l_h)
    z = 50 + 1j * (w * l_h - 1 / (w * c_f))
    line = Line((catalog()["rg213"].section(30.0),))
    g_an = embed_gamma(rf.gamma_from_z(z), line.s_params(f))
    mc = correct_magnitude(MagnitudeSweep(f, np.abs(g_an), "swr"), line)
    fx = magnitude_findings(f, mc.gamma_feedpoint_mag, gamma_mag_low=mc.gamma_feedpoint_mag_low,
                            gamma_mag_high=mc.gamma_feedpoint_mag_high)
    (inner,) = fx["swr_spans_hz_bound"]["2"]["inner"]
    (outer,) = fx["swr_spans_hz_bound"]["2"]["outer"]
    step = f[1] - f[0]
    assert outer[0] - step <= 13.754700e6 <= inner[0] + step
    assert inner[1] - step <= 14.249675e6 <= outer[1] + step
    (est,) = fx["swr_spans_hz"]["2"]
    assert est[0] == pytest.approx(13.754700e6, abs=5e3)  # within the bracket, which is about 10 kHz wide here
    assert est[1] == pytest.approx(14.249675e6, abs=5e3)
    assert fx["min_swr"]["swr_low"] <= 1.0 + 1e-6 <= fx["min_swr"]["swr_high"]
    assert fx["min_swr"]["freq_hz"] == pytest.approx(14e6, abs=2 * step)
    # resonance and Q from the impedance need phase; Q from the span needs only the SWR (E10: Q = 20)
    assert fx["resonances_hz"] is None and fx["q"] is None
    assert fx["not_available"]["resonances"] == NO_PHASE_REASON
    assert "phase" in NO_PHASE_REASON
    assert fx["q_from_span"] == pytest.approx(20.0, rel=0.02)


def test_bound_formula_edge_cases():
    # a line that passes almost nothing: the upper bound runs to infinity instead of a wrong finite number
    s = np.zeros((1, 2, 2), dtype=complex)
    s[0, 0, 0] = s[0, 1, 1] = 0.3
    s[0, 1, 0] = s[0, 0, 1] = 0.5
    est, low, high = feedpoint_gamma_mag(np.array([0.9]), s)
    assert est[0] == pytest.approx(0.9 / 0.25)
    assert np.isinf(high[0])
    assert low[0] == pytest.approx(0.6 / (0.25 + 0.3 * 0.6))
    assert np.isinf(swr_from_mag(np.array([1.0]))[0])


def test_magnitude_summary_matches_the_summary_schema(tmp_path, capsys):
    """``correct`` of an SWR-only sweep, printed (--json) and written (.summary.json), against the package's JSON
    Schema (draft 2020-12; jsonschema's Draft202012Validator is the independent checker): resonances and Q are
    null, each with its reason under ``not_available``. The schema refuses a null resonance list without the
    reason, so the check can fail."""
    import json
    import pathlib

    jsonschema = pytest.importorskip("jsonschema")
    from deembed.cli.app import main
    from deembed.render.jsonschemas import load_schema

    sweep = pathlib.Path(__file__).resolve().parents[1] / "sample_sweeps" / "vertical-10m.swr.csv"
    code = main(["correct", str(sweep), "--columns", "freq:kHz,swr", "--cable", "rg8x", "--length", "25m",
                 "--out", str(tmp_path), "--json", "--power", "100W"])
    out, err = capsys.readouterr()
    assert code == 0, err
    validator = jsonschema.Draft202012Validator(load_schema("summary"))
    for data in (json.loads(out), json.loads((tmp_path / "vertical-10m.swr.summary.json").read_text())):
        errors = ["/".join(map(str, e.path)) + ": " + e.message for e in validator.iter_errors(data)]
        assert not errors, errors[:5]
        for end in ("feedpoint", "analyzer"):
            assert data[end]["resonances_hz"] is None and data[end]["resonances"] is None
            assert data[end]["not_available"]["resonances"] == NO_PHASE_REASON
    broken = json.loads(out)
    del broken["feedpoint"]["not_available"]
    assert any(validator.iter_errors(broken))
