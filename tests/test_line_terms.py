"""The one-pass line terms (S11, S21*S12, S22, matched loss) and the block-wise correct() against outside
references: scikit-rf's DistributedCircuit and its cascade of the inverse (an independent implementation).
"""
import numpy as np
import pytest
import skrf

from deembed.io.cables import catalog
from deembed.io.sweep import one_port
from deembed.physics import deembedding
from deembed.physics.deembedding import correct, embed_gamma
from deembed.physics.line import DB_PER_NP, Line, LossModel, MeasuredTwoPort, Section


def _skrf_line(sec: Section, freq_hz):
    """The same RLGC section built by scikit-rf 2.2 DistributedCircuit.line with z0_port=50 (scikit-rf-notes.md)."""
    r, l, g, c = sec.rlgc_total(freq_hz)
    med = skrf.media.DistributedCircuit(skrf.Frequency.from_f(freq_hz, unit="Hz"), C=c, L=l, R=r, G=g, z0_port=50)
    return med.line(1.0, "m")


@pytest.mark.parametrize("cable,length_m", [("rg213", 30.0), ("rg58", 2.0), ("rg6", 45.0)])
def test_section_terms_match_scikit_rf(cable, length_m):
    f = np.linspace(0.3e6, 900e6, 2001)
    sec = catalog()[cable].section(length_m)
    s11, s21s12, s22, loss_db = sec.deembed_terms(f)
    ref = _skrf_line(sec, f).s
    assert np.max(np.abs(s11 - ref[:, 0, 0])) < 1e-12
    assert np.max(np.abs(s22 - ref[:, 1, 1])) < 1e-12
    assert np.max(np.abs(s21s12 - ref[:, 1, 0] * ref[:, 0, 1])) < 1e-12
    # matched loss: alpha*l of scikit-rf's own propagation constant, in dB (Np -> dB: 20/ln 10)
    r, l, g, c = sec.rlgc_total(f)
    med = skrf.media.DistributedCircuit(skrf.Frequency.from_f(f, unit="Hz"), C=c, L=l, R=r, G=g, z0_port=50)
    assert np.max(np.abs(loss_db - DB_PER_NP * med.gamma.real)) < 1e-12


def test_cascade_terms_match_scikit_rf():
    f = np.linspace(0.5e6, 500e6, 301)
    cat = catalog()
    parts = (cat["rg58"].section(2.0), cat["rg6"].section(12.0), cat["rg213"].section(40.0))
    s11, s21s12, s22, loss_db = Line(parts).deembed_terms(f)
    ref = (_skrf_line(parts[0], f) ** _skrf_line(parts[1], f) ** _skrf_line(parts[2], f)).s
    assert np.max(np.abs(s11 - ref[:, 0, 0])) < 1e-10
    assert np.max(np.abs(s22 - ref[:, 1, 1])) < 1e-10
    assert np.max(np.abs(s21s12 - ref[:, 1, 0] * ref[:, 0, 1])) < 1e-10
    assert np.allclose(loss_db, sum(p.matched_loss_db(f) for p in parts), rtol=1e-14, atol=0)


def test_zero_hertz_and_zero_length_are_a_thru():
    # A line at 0 Hz, or of zero length, has no electrical length: S11 = S22 = 0, S21 S12 = 1
    # (common practice, no source). Its characteristic impedance at 0 Hz is taken as the nominal Z0.
    f = np.array([0.0, 1e6])
    s11, s21s12, s22, loss = Section(75.0, 100e-9, LossModel(1e-5, 1e-11)).deembed_terms(f)
    assert s11[0] == 0 and s22[0] == 0 and s21s12[0] == 1 and loss[0] == 0
    assert np.all(np.isfinite(s11)) and np.all(np.isfinite(s21s12))
    z = Section(50.0, 0.0).deembed_terms(np.array([1e6, 1e9]))
    assert np.allclose(z[0], 0, atol=1e-15) and np.allclose(z[1], 1, atol=1e-15)


def test_correct_equals_scikit_rf_inverse_cascade_blockwise():
    # Independent path: scikit-rf's line.inv ** measurement (scikit-rf-notes.md: exact to 1e-15)
    f = np.linspace(1e6, 60e6, 20_011)  # several blocks, the last one short
    sec = catalog()["rg213"].section(30.0)
    rng = np.random.default_rng(7)
    g_load = 0.6 * np.exp(1j * rng.uniform(0, 2 * np.pi, f.size))
    line = Line((sec,))
    meas = embed_gamma(g_load, line.s_params(f))
    corr = correct(one_port(f, meas), line)
    ref = _skrf_line(sec, f).inv ** skrf.Network(frequency=skrf.Frequency.from_f(f, unit="Hz"),
                                                 s=meas.reshape(-1, 1, 1), z0=50)
    assert np.max(np.abs(corr.gamma_feedpoint - ref.s[:, 0, 0])) < 1e-12
    assert np.max(np.abs(corr.gamma_feedpoint - g_load)) < 1e-12
    assert np.allclose(corr.matched_loss_db, line.matched_loss_db(f), rtol=1e-14, atol=0)


def test_blocks_do_not_change_the_answer(monkeypatch):
    f = np.linspace(1e6, 30e6, 1000)
    line = Line((catalog()["rg58"].section(2.0), catalog()["rg213"].section(20.0)))
    sweep = one_port(f, 0.4 * np.exp(1j * f / 3e6))
    whole = correct(sweep, line)
    monkeypatch.setattr(deembedding, "BLOCK_POINTS", 7)
    parts = correct(sweep, line)
    assert np.array_equal(whole.gamma_feedpoint, parts.gamma_feedpoint)
    assert np.array_equal(whole.matched_loss_db, parts.matched_loss_db)


def test_measured_two_port_is_used_on_its_own_grid():
    f = np.linspace(1e6, 30e6, 101)
    s = Line((catalog()["rg213"].section(10.0),)).s_params(f)
    line = Line((MeasuredTwoPort(f, s),))
    assert not line.blockwise
    s11, s21s12, s22, loss = line.deembed_terms(f)
    assert np.array_equal(s11, s[:, 0, 0]) and np.array_equal(s21s12, s[:, 1, 0] * s[:, 0, 1])
    assert np.array_equal(loss, -20 * np.log10(np.abs(s[:, 1, 0])))


def test_measured_two_port_at_some_of_its_own_points_only():
    # A measured 2-port is known at its measured frequencies and nowhere else (invariant, no source needed):
    # any subset of them gives those rows exactly; a frequency it was not measured at is refused.
    from deembed.base.errors import OptionError

    f = np.linspace(1e6, 30e6, 11)
    s = np.random.default_rng(3).normal(size=(11, 2, 2)) * 0.1 + 0j
    part = MeasuredTwoPort(f, s)
    rows = np.array([0, 4, 10])
    assert np.array_equal(part.s_params(f[rows]), s[rows])
    with pytest.raises(OptionError):
        part.s_params(np.array([f[0], 2.5e6]))
    with pytest.raises(OptionError):
        part.s_params(np.array([31e6]))
