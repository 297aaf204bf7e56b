"""The line-model fit on a thinned subset with the analytic Jacobian: the Jacobian against central finite
differences (numerical differentiation, the textbook check), the closed form against scikit-rf's
DistributedCircuit (an independent implementation), and a large fit against the line that made the data.
"""
import numpy as np
import pytest
import skrf

from deembed.analysis import characterize as ch
from deembed.physics.deembedding import embed_gamma
from deembed.physics.line import LossModel, Section


def _skrf_s(sec: Section, f):
    r, l, g, c = sec.rlgc_total(f)
    med = skrf.media.DistributedCircuit(skrf.Frequency.from_f(f, unit="Hz"), C=c, L=l, R=r, G=g, z0_port=50)
    return med.line(1.0, "m").s


SEC = Section(75.0, 180e-9, LossModel(2.5e-5, 4e-10))


def test_closed_form_matches_scikit_rf():
    f = np.linspace(0.5e6, 200e6, 4001)
    s11, t, _, _ = ch._uniform_line_jac(f, SEC.delay_s, SEC.loss.c_np, SEC.loss.d_np, SEC.z0_ohm)
    ref = _skrf_s(SEC, f)
    assert np.max(np.abs(s11 - ref[:, 0, 0])) < 1e-12
    assert np.max(np.abs(s11 - ref[:, 1, 1])) < 1e-12
    assert np.max(np.abs(t - ref[:, 1, 0] * ref[:, 0, 1])) < 1e-12


def test_jacobian_matches_central_differences():
    f = np.linspace(1e6, 100e6, 301)
    p = np.array([SEC.delay_s, SEC.loss.c_np, SEC.loss.d_np, SEC.z0_ohm])
    _, _, ds11, dt = ch._uniform_line_jac(f, *p)
    for k in range(4):
        h = p[k] * 1e-6
        up, dn = p.copy(), p.copy()
        up[k] += h
        dn[k] -= h
        s_up, t_up, _, _ = ch._uniform_line_jac(f, *up)
        s_dn, t_dn, _, _ = ch._uniform_line_jac(f, *dn)
        num_s = (s_up - s_dn) / (2 * h)
        num_t = (t_up - t_dn) / (2 * h)
        scale_s = np.max(np.abs(num_s)) + 1e-30
        scale_t = np.max(np.abs(num_t)) + 1e-30
        assert np.max(np.abs(ds11[k] - num_s)) < 1e-6 * scale_s
        assert np.max(np.abs(dt[k] - num_t)) < 1e-6 * scale_t


def test_subset_covers_the_delay():
    f = np.linspace(1e6, 1e9, 100_000)
    idx = ch._fit_subset(f, 500e-9)  # a long run: needs a step below 1/(8 tau) = 250 kHz
    assert idx[0] == 0 and idx[-1] == f.size - 1
    assert np.max(np.diff(f[idx])) <= 1 / (8 * 500e-9)
    assert ch._fit_subset(np.linspace(1e6, 2e6, 500), 1e-9) is None  # small sweeps: every point


@pytest.mark.parametrize("standard", ["two-port", "open"])
def test_large_fit_recovers_the_line_and_checks_every_point(standard):
    f = np.linspace(1e6, 60e6, 30_001)
    s = _skrf_s(SEC, f)
    if standard == "two-port":
        fit = ch.fit_line_model(f, s=s, z0_ohm=50.0, fit_z0=True)
        assert fit.section.z0_ohm == pytest.approx(75.0, rel=1e-8)
    else:
        sec50 = Section(50.0, SEC.delay_s, SEC.loss)
        g = embed_gamma(np.ones(f.size), _skrf_s(sec50, f))
        fit = ch.fit_line_model(f, gamma_in=g, gamma_load=1.0, z0_ohm=50.0)
    assert fit.n_points == f.size
    assert fit.section.delay_s == pytest.approx(SEC.delay_s, rel=1e-9)
    assert fit.section.loss.c_np == pytest.approx(SEC.loss.c_np, rel=1e-6)
    assert fit.section.loss.d_np == pytest.approx(SEC.loss.d_np, rel=1e-5)
    assert fit.rms_residual < 1e-9 and fit.max_residual < 1e-8
