"""Delay-removed interpolation between characterized points: the maths on its own (deembed.physics.between).

Checks against facts outside the project:
- Lagrange interpolation through four points reproduces every polynomial of degree <= 3 exactly, and its
  error is f''''(xi)/4! prod(x - x_k) (Burden & Faires, *Numerical Analysis* 9th ed., Theorem 3.3; from memory).
- A pure delay exp(-j 2 pi f tau) times a cubic in f is reproduced exactly once the delay is removed (the same
  theorem applied to the residual).
- The alias-free step for a one-way delay tau is 1/(4 tau) (scikit-rf time domain: alias-free one-way range
  v/(4 df), /work/shared/reference/scikit-rf-notes.md, measured).
- The first-order feedpoint error agrees with a finite difference of the closed-form de-embedding
  (Gamma_L = (Gm - S11)/(S22 (Gm - S11) + S21 S12), check-values F16), an independent path.
"""
from __future__ import annotations

import numpy as np
import pytest

from deembed.physics import between as bw

RNG = np.random.default_rng(15)


def _grid(n=31, f0=3e6, f1=30e6, jitter=0.3):
    """A non-uniform grid (steps vary by +/-30 %)."""
    steps = 1 + jitter * (RNG.uniform(-1, 1, n - 1))
    g = np.concatenate([[0.0], np.cumsum(steps)])
    return f0 + (f1 - f0) * g / g[-1]


def test_cubic_times_delay_is_reproduced_exactly():
    # Burden & Faires Thm 3.3: the error term vanishes for degree <= 3, so only rounding remains
    g = _grid()
    tau = 180e-9  # 180 ns: about 5 turns of phase across the grid
    x = (g - 3e6) / 27e6
    poly = (0.3 - 0.2j) + (0.5 + 0.1j) * x - 0.7 * x ** 2 + (0.2 + 0.4j) * x ** 3
    vals = poly * np.exp(-2j * np.pi * g * tau)
    f = np.sort(RNG.uniform(g[0], g[-1], 500))
    xf = (f - 3e6) / 27e6
    want = ((0.3 - 0.2j) + (0.5 + 0.1j) * xf - 0.7 * xf ** 2 + (0.2 + 0.4j) * xf ** 3) * np.exp(-2j * np.pi * f * tau)
    got = bw.interpolate(g, vals, f, tau)
    assert np.max(np.abs(got - want)) < 1e-12
    assert np.max(bw.leave_one_out(g, vals, tau)) < 1e-12
    # without removing the delay the same data are not a cubic, and the interpolation misses by far
    assert np.max(np.abs(bw.interpolate(g, vals, f, 0.0) - want)) > 1e-2


def test_exact_on_grid_points_and_any_trailing_shape():
    g = _grid()
    s = RNG.normal(size=(g.size, 2, 2)) + 1j * RNG.normal(size=(g.size, 2, 2))
    np.testing.assert_array_equal(bw.interpolate(g, s, g, 0.0), s)
    pick = g[[0, 5, 17, g.size - 1]]
    np.testing.assert_allclose(bw.interpolate(g, s, pick, 123e-9), s[[0, 5, 17, g.size - 1]], rtol=0, atol=1e-15)


def test_error_of_one_echo_within_the_lagrange_bound():
    # One echo at the edge of the window (two-way delay 2 tau, tau removed): residual a exp(-j 2 pi f tau).
    # Thm 3.3 bound on the middle interval of a uniform grid: (9/16) h^4 (2 pi tau)^4 a / 24.
    tau, a = 127e-9, 0.2
    h = bw.needed_step_hz(2 * tau)  # exactly the step the margin allows
    g = 3e6 + h * np.arange(60)
    vals = a * np.exp(-2j * np.pi * g * 2 * tau)
    f = np.linspace(g[2], g[-3], 3001)  # intervals with a centred stencil
    err = np.abs(bw.interpolate(g, vals, f, tau) - a * np.exp(-2j * np.pi * f * 2 * tau))
    bound = 9 / 16 * h ** 4 * (2 * np.pi * tau) ** 4 * a / 24
    assert err.max() <= bound
    assert err.max() > 0.3 * bound  # the bound is nearly reached: the test can tell
    assert bound / a == pytest.approx(3 / 128 * (np.pi / 8) ** 4, rel=1e-12)  # the docstring's 5.6e-4 for margin 4
    assert bound / a < 1e-3


def test_leave_one_out_errs_on_the_high_side_for_a_resolved_echo():
    tau, a = 127e-9, 0.2
    h = bw.needed_step_hz(2 * tau) / 2
    g = 3e6 + h * np.arange(80)
    vals = a * np.exp(-2j * np.pi * g * 2 * tau)
    loo = bw.leave_one_out(g, vals, tau)
    f = np.linspace(g[0], g[-1], 5001)
    err = np.abs(bw.interpolate(g, vals, f, tau) - a * np.exp(-2j * np.pi * f * 2 * tau))
    assert np.all(err <= bw.local_error(g, loo, f) + 1e-15)


def test_needed_step_is_the_alias_free_step_with_the_margin():
    # scikit-rf notes (measured): alias-free one-way range v/(4 df) -> df < 1/(4 tau) for one-way delay tau
    tau = 127e-9
    assert bw.needed_step_hz(2 * tau, margin=1) == pytest.approx(1 / (4 * tau), rel=1e-12)
    assert bw.needed_step_hz(2 * tau) == pytest.approx(1 / (4 * tau) / bw.GRID_MARGIN, rel=1e-12)
    assert bw.needed_step_hz(0.0) == np.inf


def test_feedpoint_error_matches_finite_difference_of_deembedding():
    from deembed.physics.deembedding import feedpoint_gamma  # the project's closed form (check-values F16)

    m = 200
    s = np.empty((m, 2, 2), complex)
    s[:, 0, 0] = 0.1 * np.exp(1j * RNG.uniform(0, 6.3, m))
    s[:, 1, 1] = 0.15 * np.exp(1j * RNG.uniform(0, 6.3, m))
    s[:, 1, 0] = s[:, 0, 1] = 0.8 * np.exp(1j * RNG.uniform(0, 6.3, m))
    gl = 0.7 * np.exp(1j * RNG.uniform(0, 6.3, m))
    gm = s[:, 0, 0] + s[:, 0, 1] * s[:, 1, 0] * gl / (1 - s[:, 1, 1] * gl)
    eps = 1e-7
    for (i, j) in ((0, 0), (1, 1), (1, 0)):
        ds = np.zeros((m, 2, 2))
        ds[:, i, j] = eps
        # the bound is reached when the perturbation has the worst phase; try the phase that aligns the terms
        worst = np.zeros(m)
        for ph in np.linspace(0, 2 * np.pi, 16, endpoint=False):
            sp = s.copy()
            sp[:, i, j] += eps * np.exp(1j * ph)
            g2 = feedpoint_gamma(gm, sp[:, 0, 0], sp[:, 1, 0] * sp[:, 0, 1], sp[:, 1, 1])
            worst = np.maximum(worst, np.abs(g2 - gl))
        bound = bw.feedpoint_error(s, ds, gl)
        assert np.all(worst <= bound * (1 + 1e-5))
        assert np.all(worst >= bound * np.cos(np.pi / 16) * (1 - 1e-5))  # one error source: the bound is tight
    # without the antenna's reflection the bound is for the worst antenna (|Gamma_L| = 1)
    ds = np.full((m, 2, 2), 1e-6)
    assert np.all(bw.feedpoint_error(s, ds) >= bw.feedpoint_error(s, ds, gl))


def test_assess_prefers_the_smaller_estimated_error():
    g = 3e6 + 100e3 * np.arange(50)
    tau = 100e-9
    s = np.zeros((g.size, 2, 2), complex)
    s[:, 1, 0] = s[:, 0, 1] = 0.9 * np.exp(-2j * np.pi * g * tau)
    s[:, 0, 0] = 0.2 * np.exp(-2j * np.pi * g * 2 * tau)
    model = s.copy()
    model[:, 0, 0] = 0.0  # a model that misses the far-end echo: off by 0.2
    b = bw.assess(g, s, tau, model)
    assert b.method == "interpolated" and not b.grid_too_coarse
    assert b.worst_feedpoint_error < 1e-4
    b = bw.assess(g, s, tau, s.copy())  # a model that is exact
    assert b.method == "model" and b.worst_feedpoint_error == 0.0
    b = bw.assess(g[::8], s[::8], tau, model[::8])  # step 800 kHz > 1/(16 x 100 ns) = 625 kHz
    assert b.grid_too_coarse and b.needed_step_hz == pytest.approx(625e3)


def test_monte_carlo_offsets_fill_the_disk_uniformly():
    # uniform over a disk of radius e: P(|z| <= r) = (r/e)^2, mean |z| = 2e/3 (elementary geometry)
    e = np.array([0.0, 1e-3, 2e-3])
    z = bw.draw_feedpoint_offsets(e, 20000, np.random.default_rng(1))
    assert z.shape == (20000, 3)
    assert np.all(z[:, 0] == 0) and np.all(np.abs(z[:, 2]) <= 2e-3 + 1e-18)
    assert np.mean(np.abs(z[:, 2])) == pytest.approx(2 / 3 * 2e-3, rel=0.02)
    assert np.mean(np.abs(z[:, 2]) <= 1e-3) == pytest.approx(0.25, abs=0.015)
    np.testing.assert_allclose(z[:, 2], 2 * z[:, 1])  # one draw moves the whole sweep together


def test_smoothing_keeps_an_edge_echo_and_averages_noise():
    # A moving average of width W passes exp(-j 2 pi f t) with gain sinc(pi t W) (the Fourier transform of a
    # rectangle, Oppenheim & Schafer 3rd ed. Table 2.3; from memory); with W = SMOOTH_STEPS x needed step =
    # 1/(4 T2) and t = tau = T2/2 that is sin(pi/8)/(pi/8) = 0.974, the module's "97 %".
    tau = 127e-9
    w = bw.SMOOTH_STEPS * bw.needed_step_hz(2 * tau)
    g = 3e6 + (w / 40) * np.arange(2000)  # 41 points per window, odd so the window is centred
    echo = np.exp(-2j * np.pi * g * tau)
    sm = bw.smooth(g, echo, w)
    mid = slice(100, -100)
    gain = np.abs(sm[mid]) / np.abs(echo[mid])
    assert gain == pytest.approx(np.sin(np.pi / 8) / (np.pi / 8), rel=2e-3)
    noise = RNG.standard_normal(g.size) + 1j * RNG.standard_normal(g.size)
    ratio = np.sqrt(np.mean(np.abs(bw.smooth(g, noise, w)[mid]) ** 2) / np.mean(np.abs(noise) ** 2))
    assert ratio == pytest.approx(1 / np.sqrt(41), rel=0.15)  # white noise: 1/sqrt(N) for N points averaged
    np.testing.assert_allclose(bw.smooth(g, np.full(g.size, 2 - 1j), w), 2 - 1j, rtol=1e-12)
