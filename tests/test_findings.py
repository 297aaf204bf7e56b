"""Findings (deembed.analysis.findings) and band checks (deembed.io.bands) against circuit models with known answers.

Sources are named beside each expected value, with the provenance tags of
/work/shared/reference/check-values.md ([D] derived from the named formula, [M] from memory,
[C] common practice).
"""
from __future__ import annotations

import json
import math

import numpy as np
import pytest

from deembed.analysis import findings as fd
from deembed.analysis.bandcheck import band_check
from deembed.io.bands import Band, load_bands
from deembed.base.errors import InputFileError, OptionError
from deembed.physics.rf import gamma_from_z, swr

# ----------------------------------------------------------------------------- circuit models

# E10: series RLC, R = 50 ohm, f0 = 14 MHz, Q = 20 ([D] check-values E10)
E10_R, E10_F0, E10_Q = 50.0, 14e6, 20.0
E10_L = E10_Q * E10_R / (2 * np.pi * E10_F0)
E10_C = 1 / (E10_Q * E10_R * 2 * np.pi * E10_F0)


def series_rlc_z(f_hz, r=E10_R, l_h=E10_L, c_f=E10_C):
    w = 2 * np.pi * np.asarray(f_hz, dtype=float)
    return r + 1j * (w * l_h - 1 / (w * c_f))


def parallel_rlc_z(f_hz, r=2000.0, f0=7.1e6, q=10.0):
    # parallel RLC: resonant at f0 = 1/(2 pi sqrt(LC)) with Z = R there, Q = R / (w0 L)
    # (Pozar 4th ed. Sec. 6.1, series and parallel resonant circuits [M])
    w0 = 2 * np.pi * f0
    c, l_h = q / (r * w0), r / (q * w0)
    w = 2 * np.pi * np.asarray(f_hz, dtype=float)
    return 1 / (1 / r + 1j * (w * c - 1 / (w * l_h)))


FINE = np.arange(13.0e6, 15.0e6 + 1, 1e3)  # 1 kHz steps


# ----------------------------------------------------------------------------- E10

def test_e10_swr2_edges_bandwidth_and_q():
    g = gamma_from_z(series_rlc_z(FINE))
    spans = fd.swr_spans(FINE, g, 2.0)
    assert len(spans) == 1
    lo, hi = spans[0]
    assert lo == pytest.approx(13.754700e6, abs=1e3)  # [D] check-values E10
    assert hi == pytest.approx(14.249675e6, abs=1e3)  # [D] check-values E10
    fbw = (hi - lo) / math.sqrt(lo * hi)
    assert fbw == pytest.approx(1 / (20 * math.sqrt(2)), rel=1e-3)  # [D] E10: FBW = 1/(20 sqrt 2)
    assert not fd.span_cut_by_sweep_edge(spans[0], FINE)
    assert fd.q_from_span(lo, hi, 2.0) == pytest.approx(20.0, abs=0.1)  # [D] E10 via F19
    assert fd.q_impedance(FINE, series_rlc_z(FINE), 14e6) == pytest.approx(20.0, abs=0.05)  # [D] E10 via F18


def test_q_from_bandwidth_on_exact_e10_edges():
    # F19 is exact for a series RLC matched at centre: the E10 edges give Q = 20 ([D] check-values E10/F19)
    assert fd.q_from_span(13.754700e6, 14.249675e6, 2.0) == pytest.approx(20.0, abs=2e-3)
    assert math.isnan(fd.q_from_span(14e6, 14e6, 2.0))
    with pytest.raises(OptionError):
        fd.q_from_span(13e6, 14e6, 1.0)


def test_e10_resonance_is_series_at_14_mhz():
    res = fd.resonances(FINE, series_rlc_z(FINE))
    assert len(res) == 1
    assert res[0].kind == "series"
    assert res[0].freq_hz == pytest.approx(14e6, abs=10.0)  # [D] E10: f0 = 1/(2 pi sqrt(LC)) = 14 MHz
    assert res[0].r_ohm == pytest.approx(50.0, abs=1e-6)  # [D] E10: R = 50 ohm
    assert res[0].swr == pytest.approx(1.0, abs=1e-6)  # [D] F2: Z = 50 ohm is matched


def test_series_resonance_between_coarse_samples():
    # 14 MHz not on the grid; X = wL - 1/(wC) is close to linear so the crossing is found closely
    f = np.arange(13.03e6, 15e6, 100e3)
    res = fd.resonances(f, series_rlc_z(f))
    assert [r.kind for r in res] == ["series"]
    assert res[0].freq_hz == pytest.approx(14e6, abs=1e3)  # [D] E10 f0; 1 kHz = interpolation error bound here
    assert res[0].r_ohm == pytest.approx(50.0, abs=1e-9)  # R constant in the model


# ----------------------------------------------------------------------------- parallel resonance

def test_parallel_rlc_gives_parallel_kind_and_its_q():
    f = np.arange(6e6, 8e6 + 1, 1e3)
    z = parallel_rlc_z(f)
    res = fd.resonances(f, z)
    assert [r.kind for r in res] == ["parallel"]
    assert res[0].freq_hz == pytest.approx(7.1e6, abs=10.0)  # model f0 (Pozar Sec. 6.1 [M])
    assert res[0].r_ohm == pytest.approx(2000.0, rel=1e-6)  # Z = R at resonance (Pozar Sec. 6.1 [M])
    assert res[0].swr == pytest.approx(40.0, rel=1e-6)  # [D] F2: 2000/50
    # Yaghjian-Best Q_Z equals the circuit Q of a parallel RLC too (F18 [M]): Q = R/(w0 L) = 10
    assert fd.q_impedance(f, z, res[0].freq_hz) == pytest.approx(10.0, abs=0.05)


def test_coarsely_sampled_parallel_resonance_keeps_its_resistance():
    # 500 kHz steps straddle a resonance 710 kHz wide: X jumps from +0.1R to -0.1R between samples,
    # but G = 1/R is constant, so interpolating in admittance recovers R (model: Pozar Sec. 6.1 [M])
    f = np.arange(5e6, 9e6 + 1, 0.5e6)
    z = parallel_rlc_z(f)
    assert np.min(np.abs(z.imag)) > 0.05 * 2000  # the samples really do miss the crossing's neighbourhood
    res = fd.resonances(f, z)
    assert [r.kind for r in res] == ["parallel"]
    assert res[0].r_ohm == pytest.approx(2000.0, rel=1e-9)
    assert res[0].freq_hz == pytest.approx(7.1e6, abs=5e3)  # B not quite linear in f: 2.8 kHz off [D]


def test_crossing_through_the_open_circuit_is_not_a_resonance():
    # A pole of Z (lossless tank, G = 0) or a tank whose R is far beyond what a 50 ohm sweep resolves
    # (|Gamma| >= 0.99) is not reported; noise near Gamma = +1 flips the sign of X too: not reported.
    f = np.arange(6e6, 8e6 + 1, 10e3) + 3e3  # 7.1 MHz falls between samples
    w0, L = 2 * np.pi * 7.1e6, 1e-6
    c = 1 / (w0 ** 2 * L)
    w = 2 * np.pi * f
    z_lossless = 1 / (1j * (w * c - 1 / (w * L)))
    assert fd.resonances(f, z_lossless) == []
    z_huge_r = parallel_rlc_z(f, r=1e6, f0=7.1e6, q=10.0)  # |Gamma| = 0.9999 at resonance ([D] F1)
    assert fd.resonances(f, z_huge_r) == []
    # the gamma limit is what leaves it out: with no limit it is found, with its R (model, Pozar Sec. 6.1 [M])
    found = fd.resonances(f, z_huge_r, gamma_limit=1.0)
    assert [r.kind for r in found] == ["parallel"] and found[0].r_ohm == pytest.approx(1e6, rel=1e-9)
    rng = np.random.default_rng(3)
    g_noisy = 0.999 * np.exp(1j * rng.normal(0, 1e-3, f.size))
    from deembed.physics.rf import z_from_gamma
    assert fd.resonances(f, z_from_gamma(g_noisy)) == []
    assert len(fd.resonances(f, z_from_gamma(g_noisy), gamma_limit=1.0, merge_steps=0)) > 10  # the sign flips are there


def test_series_then_parallel_in_one_sweep():
    # series RLC (50 ohm, 14 MHz) in series with a parallel RLC (2 kohm, 21 MHz): X rises through
    # zero, then falls through zero near the 21 MHz anti-resonance (Foster's reactance theorem:
    # zeros and poles alternate [M])
    f = np.arange(10e6, 30e6 + 1, 5e3)
    z = series_rlc_z(f) + parallel_rlc_z(f, r=2000.0, f0=21e6, q=15.0)
    res = fd.resonances(f, z)
    # series, parallel, then series again past the anti-resonance: zeros and poles alternate
    assert [r.kind for r in res] == ["series", "parallel", "series"]
    for r in res:  # the model itself is (nearly) real at each reported frequency, with that R
        z_at = complex(series_rlc_z(r.freq_hz) + parallel_rlc_z(r.freq_hz, r=2000.0, f0=21e6, q=15.0))
        assert abs(z_at.imag) < 2.0
        assert r.r_ohm == pytest.approx(z_at.real, rel=1e-3)


def test_pure_resistor_has_no_resonance():
    f = np.linspace(1e6, 2e6, 11)
    assert fd.resonances(f, np.full(f.size, 75.0 + 0j)) == []


# ----------------------------------------------------------------------------- SWR minimum

def test_min_swr_vertex_of_a_known_parabola():
    # Gamma(f) = 0.1 + j k (f - fm) is linear, so |Gamma|^2 is exactly a parabola with its vertex at fm,
    # where |Gamma| = 0.1 and SWR = 1.1/0.9 ([D] F2); fm lies between samples
    f = np.linspace(7.0e6, 7.3e6, 31)  # 10 kHz steps
    fm = 7.1234e6
    g = 0.1 + 1j * 2e-6 * (f - fm)
    f_min, s_min = fd.min_swr(f, g)
    assert f_min == pytest.approx(fm, abs=1e-3)
    assert s_min == pytest.approx(1.1 / 0.9, abs=1e-9)
    # a sampled point would be off by 3.4 kHz: the interpolation did something
    assert abs(f[np.argmin(np.abs(g))] - fm) > 3e3


def test_min_swr_at_the_sweep_edge_falls_back_to_the_sample():
    f = np.linspace(13.0e6, 13.5e6, 51)
    g = gamma_from_z(series_rlc_z(f))  # SWR falls all the way to the top edge
    f_min, s_min = fd.min_swr(f, g)
    assert f_min == f[-1]
    assert s_min == pytest.approx(float(swr(g[-1])), rel=1e-12)


# ----------------------------------------------------------------------------- spans and edges

def test_span_cut_by_the_sweep_edge_is_flagged():
    f = np.arange(13.9e6, 14.6e6 + 1, 1e3)  # starts inside the 2:1 span (13.7547-14.2497 MHz, [D] E10)
    g = gamma_from_z(series_rlc_z(f))
    spans = fd.swr_spans(f, g, 2.0)
    assert len(spans) == 1
    assert spans[0][0] == f[0]
    assert spans[0][1] == pytest.approx(14.249675e6, abs=1e3)  # [D] check-values E10
    assert fd.span_cut_by_sweep_edge(spans[0], f)
    out = fd.end_findings(f, g)
    assert out["swr_spans_cut_by_sweep_edge"]["2"] == [True]
    assert out["q_from_span"] is None  # the true bandwidth is unknown
    assert out["q"] == pytest.approx(20.0, abs=0.05)  # Q_Z needs only the resonance ([D] E10)


def test_bandwidths_keys_and_two_separate_spans():
    # two series resonances far apart give two 2:1 spans
    f = np.arange(13e6, 22e6 + 1, 2e3)
    g = np.where(f < 17.5e6, gamma_from_z(series_rlc_z(f)),
                 gamma_from_z(series_rlc_z(f, l_h=E10_L * 14 / 21, c_f=E10_C * 14 / 21)))
    bw = fd.swr_spans_by_threshold(f, g, thresholds=(1.5, 2, 3))
    assert sorted(bw) == ["1.5", "2", "3"]
    assert len(bw["2"]) == 2
    # same Q at 21 MHz: edges scale with f0 ([D] E10 scaled by 21/14)
    assert bw["2"][1][0] == pytest.approx(13.754700e6 * 1.5, abs=2e3)
    assert bw["2"][1][1] == pytest.approx(14.249675e6 * 1.5, abs=2e3)


def test_threshold_at_or_below_one_is_refused():
    with pytest.raises(OptionError):
        fd.swr_spans([1e6, 2e6], [0, 0], 1.0)


# ----------------------------------------------------------------------------- trim advice

def test_e12_trim():
    # dipole 20.2 m resonant at 7.000 MHz -> 19.776 m for 7.150 MHz ([D] check-values E12, F23 [C])
    t = fd.trim_advice(7.000e6, 7.150e6)
    assert t["length_change_percent"] < 0  # shorten
    assert 20.2 * (1 + t["length_change_percent"] / 100) == pytest.approx(19.776, abs=1e-3)
    assert t["target_hz"] == 7.15e6 and t["resonance_hz"] == 7.0e6


# ----------------------------------------------------------------------------- end findings

def _plain(obj):
    """True if obj holds only dict/list/str/bool/None/finite Python float."""
    if isinstance(obj, dict):
        return all(isinstance(k, str) and _plain(v) for k, v in obj.items())
    if isinstance(obj, list):
        return all(_plain(v) for v in obj)
    if isinstance(obj, float):
        return type(obj) is float and math.isfinite(obj)
    return obj is None or type(obj) in (str, bool)


def test_end_findings_e10_is_json_ready():
    g = gamma_from_z(series_rlc_z(FINE))
    out = fd.end_findings(FINE, g)
    assert _plain(out.to_dict())            # a typed result (deembed.base.results.Result); its JSON form is plain
    json.dumps(out.to_dict(), allow_nan=False)
    assert out["min_swr"]["freq_hz"] == pytest.approx(14e6, abs=1e3)  # [D] E10
    assert out["min_swr"]["swr"] == pytest.approx(1.0, abs=1e-6)  # [D] E10 matched at f0
    assert out["resonances_hz"] == [pytest.approx(14e6, abs=10.0)]
    assert out["resonances"][0]["kind"] == "series"
    assert out["swr_spans_hz"]["2"][0] == [pytest.approx(13.754700e6, abs=1e3),  # [D] E10
                                           pytest.approx(14.249675e6, abs=1e3)]
    assert out["swr_spans_cut_by_sweep_edge"]["2"] == [False]
    assert out["q"] == pytest.approx(20.0, abs=0.05)  # [D] E10, F18
    assert out["q_from_span"] == pytest.approx(20.0, abs=0.1)  # [D] E10, F19


@pytest.mark.parametrize("n", [0, 1, 2])
def test_end_findings_tiny_sweeps_do_not_crash(n):
    f = np.array([14.0e6, 14.1e6])[:n]
    g = np.array([0.2, 0.1 + 0.05j])[:n]
    out = fd.end_findings(f, g)
    json.dumps(out.to_dict(), allow_nan=False)
    assert out["q"] is None and out["q_from_span"] is None and out["resonances"] == []
    if n == 1:
        assert out["min_swr"] == {"freq_hz": 14.0e6, "swr": pytest.approx(1.5, abs=1e-12)}  # [D] F2: |G| 0.2
    if n == 0:
        assert out["min_swr"] == {"freq_hz": None, "swr": None}


def test_end_findings_open_circuit_gives_none_not_inf():
    f = np.linspace(1e6, 2e6, 5)
    out = fd.end_findings(f, np.ones(5, dtype=complex))  # Gamma = 1: SWR infinite everywhere
    json.dumps(out.to_dict(), allow_nan=False)
    assert out["min_swr"]["swr"] is None
    assert out["swr_spans_hz"]["2"] == []


# ----------------------------------------------------------------------------- bands

def test_default_band_list():
    bands = load_bands()
    by_name = {b.name: b for b in bands}
    # region-2 sample allocations, from memory (as the data file says)
    assert by_name["40 m"] == Band("40 m", 7.0e6, 7.3e6)
    assert by_name["2 m"].high_hz == pytest.approx(148e6, rel=1e-12)
    assert "60 m" not in by_name
    assert all(b.low_hz < b.high_hz for b in bands)


def test_band_check_e10_on_20_m():
    f = np.arange(13.5e6, 14.3e6 + 1, 1e3)  # covers 14.0-14.3 of the 14.0-14.35 MHz band
    g = gamma_from_z(series_rlc_z(f))
    bands = [Band("20 m", 14.0e6, 14.35e6), Band("40 m", 7.0e6, 7.3e6)]
    out = band_check(f, g, bands, 2.0)
    assert [b["name"] for b in out] == ["20 m"]  # 40 m is outside the sweep: left out
    b = out[0]
    assert b["covered_fraction"] == pytest.approx(0.3 / 0.35, abs=1e-9)
    # worst inside the covered part is at 14.3 MHz: series RLC SWR there from F1/F2 [D]
    s_expected = float(swr(gamma_from_z(series_rlc_z(14.3e6))))
    assert b["worst_swr"] == pytest.approx(s_expected, rel=1e-4)
    assert b["worst_swr_freq_hz"] == pytest.approx(14.3e6, abs=1.0)
    assert b["verdict"] == "outside_limits"  # 14.3 MHz is past the 2:1 edge 14.2497 MHz ([D] E10)
    ok = band_check(f, g, [Band("test", 13.9e6, 14.1e6)], 2.0)[0]
    assert ok["verdict"] == "within_limits" and ok["covered_fraction"] == 1.0


def test_band_check_interpolates_at_band_edges():
    # band edges between samples: SWR at the edge is interpolated, not taken from the nearest point
    f = np.array([10e6, 11e6, 12e6])
    g = gamma_from_z(np.array([50.0, 50.0, 150.0]))  # SWR 1, 1, 3 ([D] F2)
    b = band_check(f, g, [Band("x", 10.2e6, 11.5e6)], 1.5)[0]
    assert b["worst_swr"] == pytest.approx(2.0, abs=1e-12)  # halfway from 1 to 3
    assert b["verdict"] == "outside_limits"


@pytest.mark.parametrize("text, fragment", [
    ('[[band]]\nname = "40 m"\nlow = "7.0MHz"\nhigh = "7.3"\n', "band 1 ('40 m'): high"),
    ('[[band]]\nname = "40 m"\nlow = "7.3MHz"\nhigh = "7.0MHz"\n', "must be below"),
    ('[[band]]\nname = "40 m"\nlow = "7.0MHz"\n', "missing 'high'"),
    ('[[band]]\nname = "40 m"\nlo = "7.0MHz"\nhigh = "7.3MHz"\n', "unknown key 'lo'"),
    ('[[band]\nname = "40 m"\n', "not valid TOML"),
    ('title = "x"\n', "unknown top-level key"),
    ('[[band]]\nname = "a"\nlow = "1MHz"\nhigh = "2MHz"\n[[band]]\nname = "a"\nlow = "3MHz"\nhigh = "4MHz"\n',
     "used twice"),
])
def test_bad_band_files_name_the_file_and_band(tmp_path, text, fragment):
    p = tmp_path / "mybands.toml"
    p.write_text(text)
    with pytest.raises(InputFileError) as e:
        load_bands(p)
    assert e.value.path == str(p)
    assert fragment in str(e.value)


def test_own_band_file(tmp_path):
    p = tmp_path / "mine.toml"
    p.write_text('[[band]]\nname = "CB"\nlow = "26965kHz"\nhigh = "27.405MHz"\n')
    assert load_bands(p) == [Band("CB", 26.965e6, 27.405e6)]
