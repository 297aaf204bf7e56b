"""The line model and the closed-form de-embedding against outside references.

Sources are named beside each expected value. check-values.md tags: [D] computed from the named
formula, [M] from memory, [R] read in the source.
"""
import numpy as np
import pytest
import skrf

from deembed.physics import rf
from deembed.physics.deembedding import embed_gamma, feedpoint_gamma
from deembed.physics.line import DB_PER_NP, Line, LossModel, Section, abcd_to_s, s_to_abcd
from deembed.io.cables import catalog


def zin_lossy(zl, z0, gl):
    """Lossy-line input impedance, Pozar 4th ed. sec. 2.7 (check-values F6): an independent formula."""
    t = np.tanh(gl)
    return z0 * (zl + z0 * t) / (z0 + zl * t)


def deembed_s(gamma_in, s):
    return feedpoint_gamma(gamma_in, s[:, 0, 0], s[:, 0, 1] * s[:, 1, 0], s[:, 1, 1])


def distortionless_section(z0, vf, length_m, loss_db, f_hz):
    """At one frequency, an equal conductor/dielectric split of the loss gives R/L = G/C: a real Z0."""
    a_np = loss_db / DB_PER_NP
    return Section.from_length(z0, vf, length_m, LossModel(a_np / 2 / np.sqrt(f_hz), a_np / 2 / f_hz))


def test_e7_real_z0_round_trip():
    # check-values E7 [D] from F6: Z0 = 50, VF 0.66, 30.48 m, 0.02 dB/m, 14.2 MHz, ZL = 36 + j20
    f = np.array([14.2e6])
    sec = distortionless_section(50.0, 0.66, 30.48, 0.02 * 30.48, f[0])
    gl, zc = sec.propagation(f)
    assert zc[0] == pytest.approx(50.0, abs=1e-9)  # distortionless line: real Z0 (Pozar 4th ed. sec. 2.7)
    assert np.degrees(gl.imag[0]) == pytest.approx(787.483, abs=2e-3)  # E7: beta*l = 787.483 deg
    s = Line((sec,)).s_params(f)
    g_l = rf.gamma_from_z(36 + 20j)
    g_in = embed_gamma(np.array([g_l]), s)
    z_in = rf.z_from_gamma(g_in)[0]
    assert z_in.real == pytest.approx(76.534, abs=2e-3)  # E7: Zin = 76.534 - j15.293
    assert z_in.imag == pytest.approx(-15.293, abs=2e-3)
    assert abs(g_in[0]) == pytest.approx(0.24029, abs=2e-5)  # E7: |Gamma_in| 0.24029
    assert rf.z_from_gamma(deembed_s(g_in, s))[0] == pytest.approx(36 + 20j, abs=1e-9)  # F7 returns ZL


def test_e8_complex_z0_from_rlgc():
    # check-values E8 [D] from F12 (Pozar 4th ed. sec. 2.1): R 0.05 ohm/m, L 250 nH/m, G 1 uS/m, C 100 pF/m, 10 MHz
    f = np.array([10e6])
    l_m = 30.0
    z0n = np.sqrt(250e-9 / 100e-12)
    delay = l_m * np.sqrt(250e-9 * 100e-12)
    c_np = 0.05 * l_m / (2 * z0n) / np.sqrt(f[0])  # R_total = 2 Z0 c sqrt(f)
    d_np = 1e-6 * l_m * z0n / 2 / f[0]  # G_total = 2 d f / Z0
    sec = Section(z0n, delay, LossModel(c_np, d_np), l_m)
    gl, zc = sec.propagation(f)
    assert zc[0].real == pytest.approx(50.00007, abs=1e-5)  # E8: Z0 = 50.00007 - j0.07560
    assert zc[0].imag == pytest.approx(-0.07560, abs=1e-5)
    assert gl[0].real / l_m == pytest.approx(5.2500e-4, rel=1e-4)  # E8: alpha = 5.2500e-4 Np/m
    assert gl[0].imag / l_m == pytest.approx(0.314160, abs=1e-6)  # E8: beta = 0.314160 rad/m
    assert zin_lossy(25 + 25j, zc, gl)[0] == pytest.approx(25.7790 + 24.6026j, abs=1e-4)  # E8: Zin
    s = Line((sec,)).s_params(f)
    z_in = rf.z_from_gamma(embed_gamma(rf.gamma_from_z(np.array([25 + 25j])), s))[0]
    assert z_in == pytest.approx(25.7790 + 24.6026j, abs=1e-4)  # E8: Zin = 25.7790 + j24.6026


def _skrf_line(sec: Section, freq_hz):
    """The same RLGC section built by scikit-rf's DistributedCircuit (an independent implementation)."""
    r, l, g, c = sec.rlgc_total(freq_hz)
    fr = skrf.Frequency.from_f(freq_hz, unit="Hz")
    med = skrf.media.DistributedCircuit(fr, C=c, L=l, R=r, G=g, z0_port=50)
    return med.line(1.0, "m")


def test_sections_match_scikit_rf_distributed_circuit():
    # Independent path: scikit-rf 2.2 DistributedCircuit.line with z0_port=50 (scikit-rf-notes.md)
    f = np.linspace(0.5e6, 500e6, 301)
    cat = catalog()
    parts = (cat["rg58"].section(2.0), cat["rg6"].section(12.0), cat["rg213"].section(40.0))
    ours = Line(parts).s_params(f)
    ref = _skrf_line(parts[0], f) ** _skrf_line(parts[1], f) ** _skrf_line(parts[2], f)
    assert np.max(np.abs(ours - ref.s)) < 1e-10


def test_deembed_matches_scikit_rf_cascade_and_recovers_load():
    # Independent path: scikit-rf's line.inv ** measurement (scikit-rf-notes.md: exact to 1e-15)
    rng = np.random.default_rng(7)
    f = np.linspace(1e6, 60e6, 257)
    sec = catalog()["rg8x"].section(36.0)
    ref_line = _skrf_line(sec, f)
    load = rng.uniform(-0.8, 0.8, f.size) + 1j * rng.uniform(-0.5, 0.5, f.size)
    load_ntwk = skrf.Network(frequency=ref_line.frequency, s=load.reshape(-1, 1, 1), z0=50)
    meas = ref_line ** load_ntwk
    ours = deembed_s(meas.s[:, 0, 0], Line((sec,)).s_params(f))
    theirs = (ref_line.inv ** meas).s[:, 0, 0]
    assert np.max(np.abs(ours - theirs)) < 1e-12
    assert np.max(np.abs(ours - load)) < 1e-12  # embed then de-embed returns the load


def test_trade_figure_two_to_one_behind_1_25_db():
    # Common practice, no source: a 2:1 antenna behind 1.25 dB of line reads about 1.67:1 and
    # 12 dB return loss at the transmitter (check-values F8: RL_in = RL_L + 2 ML = 9.54 + 2.5 dB)
    # The figure assumes a real Z0, so the line here is distortionless at 14 MHz.
    f = np.array([14.0e6])
    sec = distortionless_section(50.0, 0.66, 30.0, 1.25, f[0])
    g_in = embed_gamma(np.array([rf.gamma_from_z(100.0)]), Line((sec,)).s_params(f))
    assert float(rf.swr(g_in)[0]) == pytest.approx(1.67, abs=0.01)
    assert float(rf.return_loss_db(g_in)[0]) == pytest.approx(12.04, abs=0.05)
    # Real coax has a complex Z0 (R ~ sqrt(f) only): the same antenna then reads a few hundredths off,
    # depending on the line's electrical length, which is why the model keeps Zc complex.
    lengths = np.linspace(30.0, 33.5, 15)
    swrs = []
    for length in lengths:
        real_coax = Section.from_length(50, 0.66, length, LossModel.fit([(1.25, 14e6)]))
        swrs.append(float(rf.swr(embed_gamma(np.array([rf.gamma_from_z(100.0)]), Line((real_coax,)).s_params(f)))[0]))
    assert 0.005 < max(swrs) - min(swrs) < 0.1
    assert np.mean(swrs) == pytest.approx(1.67, abs=0.01)


def test_swr_table_figures():
    # check-values SWR table [D] from F2-F4 (Pozar 4th ed. eqs. 2.38, 2.41): 2:1 -> 9.542 dB, 11.11 %, 0.5115 dB
    g = rf.gamma_mag_from_swr(2.0)
    assert float(rf.return_loss_db(g)) == pytest.approx(9.542, abs=1e-3)
    assert 100 * g**2 == pytest.approx(11.111, abs=1e-3)
    assert float(rf.mismatch_loss_db(g)) == pytest.approx(0.5115, abs=1e-4)
    assert float(rf.swr(g)) == pytest.approx(2.0, abs=1e-12)


def test_zero_length_is_a_thru():
    # Physical invariant (common practice, no source): a zero-length line is a thru
    f = np.linspace(1e6, 100e6, 11)
    s = Line((Section.from_length(75.0, 0.8, 0.0),)).s_params(f)
    assert np.allclose(s[:, 0, 0], 0, atol=1e-15) and np.allclose(s[:, 1, 0], 1, atol=1e-15)


def test_lossless_half_wave_repeats_the_load():
    # Pozar 4th ed. sec. 2.3 (from memory): a lossless half-wave line repeats the load, whatever its Z0
    f0 = 14e6
    sec = Section(75.0, 1 / (2 * f0))  # half a period of one-way delay
    s = Line((sec,)).s_params(np.array([f0]))
    g_l = rf.gamma_from_z(np.array([20 - 35j]))
    assert embed_gamma(g_l, s)[0] == pytest.approx(g_l[0], abs=1e-12)


def test_matched_load_on_lossy_line_at_nominal_z0_is_nearly_matched():
    # A 50 ohm load on a low-loss 50 ohm line is not quite matched: the line's Zc is complex
    # (check-values F13: X0 ~ -0.180 R0 A100 VF / f_MHz, so the residual shrinks as 1/f).
    f = np.array([1e6, 10e6, 100e6])
    sec = catalog()["rg58"].section(30.0)
    g_in = embed_gamma(np.zeros(3, complex), Line((sec,)).s_params(f))
    gl, zc = sec.propagation(f)
    # the same input reflection from the lossy-line input impedance (Pozar 4th ed. sec. 2.7, F6)
    assert g_in == pytest.approx(rf.gamma_from_z(zin_lossy(50.0, zc, gl)), abs=1e-12)
    # and bounded by the Zc mismatch: |Gamma_in| <= 2|rho| / (1 - |rho|^2), rho = (50 - Zc)/(50 + Zc) [D from F1, F6]
    rho = np.abs(rf.gamma_from_z(50.0, zc))
    assert np.all(np.abs(g_in) <= 2 * rho / (1 - rho**2) + 1e-15)
    # conductor loss dominates at HF, where X0 ~ A100/f ~ 1/sqrt(f) (F13): larger at 1 MHz than at 10 MHz
    assert abs(g_in[0]) > abs(g_in[1])
    # F13 holds for conductor loss only: keep RG-58's k1 term, drop its dielectric k2 term
    cond_only = Section(sec.z0_ohm, sec.delay_s, LossModel(sec.loss.c_np, 0.0), sec.length_m, sec.vf)
    _, zc = cond_only.propagation(f)
    a100 = catalog()["rg58"].k1 * np.sqrt(f / 1e6)
    assert zc.imag == pytest.approx(-0.180 * 50 * a100 * 0.66 / (f / 1e6), rel=0.03)  # F13 [D]


def test_loss_fit_reproduces_points_and_catalog():
    # One point: sqrt(f) scaling (check-values sec. 1.3, conductor loss dominant); two: exact through both
    one = LossModel.fit([(1.0, 10e6)])
    assert float(one.db_at(40e6)) == pytest.approx(2.0, rel=1e-12)
    two = LossModel.fit([(0.58, 10e6), (2.0, 100e6)])
    assert float(two.db_at(10e6)) == pytest.approx(0.58, rel=1e-9)
    assert float(two.db_at(100e6)) == pytest.approx(2.0, rel=1e-9)
    # RG-213 catalog k1/k2 fitted through 2.0 dB/100 ft at 100 MHz and 8.0 at 1 GHz (check-values sec. 1.2, [M])
    sec = catalog()["rg213"].section(30.48)
    assert float(sec.matched_loss_db(np.array([100e6]))[0]) == pytest.approx(2.0, rel=2e-3)
    assert float(sec.matched_loss_db(np.array([1000e6]))[0]) == pytest.approx(8.0, rel=2e-3)


def test_abcd_s_round_trip_and_reciprocity():
    f = np.linspace(1e6, 1e9, 50)
    line = Line((catalog()["rg174"].section(5.0), catalog()["rg59"].section(3.0)))
    s = line.s_params(f)
    # a line is reciprocal, S12 = S21, and passive, |S21| < 1 (common practice, no source)
    assert np.allclose(s[:, 0, 1], s[:, 1, 0], atol=1e-14)  # reciprocal
    assert np.allclose(abcd_to_s(s_to_abcd(s)), s, atol=1e-12)  # Pozar 4th ed. Table 4.2 both ways
    assert np.all(np.abs(s[:, 1, 0]) < 1)  # passive
