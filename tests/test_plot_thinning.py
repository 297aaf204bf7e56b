"""Plot thinning: the min/max envelope keeps every peak, and a thinned trace draws the same picture as the
whole trace (the reference: matplotlib drawing every point, compared pixel by pixel).
"""
import io

import numpy as np
import pytest

from deembed.render import plots
from deembed.render.plots import envelope, path_cells


def test_short_traces_are_not_touched():
    assert np.array_equal(envelope(1000, 500, np.zeros(1000)), np.arange(1000))
    assert np.array_equal(envelope(2, 1, np.zeros(2)), np.arange(2))


def test_envelope_keeps_each_columns_extremes_and_the_ends():
    rng = np.random.default_rng(1)
    n, width = 100_003, 700
    y = np.cumsum(rng.standard_normal(n))
    y[31_337] = 1e6  # a one-point spike must survive
    y[77_777] = -1e6
    idx = envelope(n, width, y)
    assert idx.size <= 2 * width + 2 and idx[0] == 0 and idx[-1] == n - 1
    assert np.all(np.diff(idx) > 0)
    per = -(-n // width)
    for start in range(0, n, per):  # every run of points keeps its own min and max
        run = y[start:start + per]
        kept = y[idx[(idx >= start) & (idx < start + per)]]
        assert kept.max() == run.max() and kept.min() == run.min()


def test_envelope_keeps_gaps():
    y = np.ones(10_000)
    y[5000] = np.nan
    idx = envelope(y.size, 100, y)
    assert np.isnan(y[idx]).sum() == 1


def _pixels(fig) -> np.ndarray:
    buf = io.BytesIO()
    fig.savefig(buf, dpi=plots.DPI, format="rgba")
    w, h = (fig.get_size_inches() * plots.DPI).round().astype(int)
    return np.frombuffer(buf.getvalue(), dtype=np.uint8).reshape(h, w, 4)[..., :3].astype(int)


def _frequency_figure(f, y, thin: bool):
    fig, ax = plots._axes(None)
    if thin:
        plots.plot_thinned(ax, f, y, color="#c0582b", lw=2.0)
    else:
        ax.plot(f, y, color="#c0582b", lw=2.0)
    ax.set_xlim(f[0], f[-1])
    ax.set_ylim(-40, 40)
    return fig


def test_thinned_frequency_trace_draws_the_same_picture():
    # Reference: matplotlib's Agg renderer drawing all 10^5 points. Antialiasing may shade a few edge
    # pixels differently; the trace itself must cover the same pixels.
    rng = np.random.default_rng(2)
    f = np.linspace(1.0, 60.0, 100_000)
    y = 20 * np.sin(f) + np.cumsum(rng.standard_normal(f.size)) * 0.05 + rng.standard_normal(f.size)
    whole = _pixels(_frequency_figure(f, y, thin=False))
    thin = _pixels(_frequency_figure(f, y, thin=True))
    ink_whole = (whole.sum(axis=2) < 600)
    ink_thin = (thin.sum(axis=2) < 600)
    differ = np.abs(whole - thin).max(axis=2)
    assert (differ > 64).sum() <= 0.03 * ink_whole.sum()  # edge pixels shaded a little differently
    assert (differ > 200).sum() <= 0.001 * ink_whole.sum()  # but hardly a pixel inked in one and not the other
    assert abs(int(ink_whole.sum()) - int(ink_thin.sum())) <= 0.02 * ink_whole.sum()


def test_thinned_smith_trace_draws_the_same_picture():
    from matplotlib.figure import Figure

    t = np.linspace(0, 40 * np.pi, 100_000)  # twenty turns, as a long line makes at the analyzer end
    g = (0.3 + 0.5 * t / t[-1]) * np.exp(-1j * t)
    pics = []
    for thin in (False, True):
        fig = Figure(figsize=(6.2, 6.2))
        ax = fig.add_subplot()
        ax.set_xlim(-1.08, 1.08)
        ax.set_ylim(-1.08, 1.08)
        ax.set_aspect("equal")
        ax.axis("off")
        idx = path_cells(g.real, g.imag, (-1.08, 1.08, -1.08, 1.08), (plots._width_px(ax),) * 2) if thin \
            else np.arange(g.size)
        if thin:
            assert idx.size < g.size / 3
        ax.plot(g.real[idx], g.imag[idx], color="#5b6b7a", lw=1.8)
        pics.append(_pixels(fig))
    ink = (pics[0].sum(axis=2) < 600).sum()
    differ = (np.abs(pics[0] - pics[1]).max(axis=2) > 64).sum()
    assert differ <= 0.02 * ink


@pytest.mark.parametrize("n", [1, 2, 5])
def test_tiny_paths_are_kept(n):
    x = np.linspace(0, 1, n)
    assert np.array_equal(path_cells(x, x, (0, 1, 0, 1), (100, 100)), np.arange(n))


def test_compare_plot_thins_its_swr_traces():
    # A dense sweep gives each SWR trace of the comparison figure no more points than its axes' pixel columns
    # can show (two runs per column), and keeps the sweep's highest SWR (the envelope keeps every peak).
    from types import SimpleNamespace

    from deembed.render.compare_page import compare_plot

    n = 200_001
    f = np.linspace(140e6, 152e6, n)
    rng = np.random.default_rng(7)
    g = 0.2 + 0.01 * rng.standard_normal(n) + 0j
    g[123_456] = 0.6  # one spike: SWR 4
    side = SimpleNamespace(freq_hz=f, gamma_feedpoint=g, gamma_analyzer=g * 0.5)
    fig = compare_plot(side, side)
    swr_axes = fig.axes[0]
    columns = int(fig.get_figwidth() * plots.DPI * swr_axes.get_position().width)  # the axes' pixel columns
    for line in swr_axes.get_lines():
        x = line.get_xdata()
        if len(x) > 2:
            assert len(x) <= 2 * plots.RUNS_PER_COLUMN * columns + 2
    assert max(np.nanmax(line.get_ydata()) for line in swr_axes.get_lines() if len(line.get_xdata()) > 2) == \
        pytest.approx(4.0)  # SWR = (1 + 0.6) / (1 - 0.6), F2 in the check values (Pozar eq. 2.41, from memory)
