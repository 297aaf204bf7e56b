"""Plots of a correction. Each function takes ``ax=None`` and returns the matplotlib Figure.

Figures are built without pyplot (no global state, no GUI backend); nothing calls ``show()``.
Every figure has a fixed layout (set margins, the legend in a set place; no layout solver, no search for the
emptiest corner), and a trace with more points than the image can show is thinned first: a frequency trace
to its min/max envelope, two runs of points per pixel column (:func:`envelope`), a Smith chart trace to one
point per 2-pixel cell it passes through (:func:`path_cells`). Every peak and dip survives; the picture is
the same, and its cost no longer grows with the sweep.
Colours: the analyzer-end trace in slate, the feedpoint trace in copper.
"""
from __future__ import annotations

import numpy as np

from ..analysis.summary import PLOT_BOUNDS
from ..io.atomic import atomic_path
from ..physics import rf

ANALYZER_COLOUR = "#5b6b7a"
FEEDPOINT_COLOUR = "#c0582b"
GRID_COLOUR = "#d9d4cc"
LABELS = {"analyzer": "at the analyzer (measured)", "feedpoint": "at the feedpoint (corrected)"}


DPI = 110
"""Resolution of every saved figure, dots per inch."""
FREQ_FIGSIZE = (8, 4.5)
FREQ_MARGINS = {"left": 0.095, "right": 0.975, "bottom": 0.115, "top": 0.83}
"""Fixed layout of the frequency plots (fractions of the figure): room for the title and the legend above."""


RUNS_PER_COLUMN = 2
"""Runs of points per pixel column in :func:`envelope`: with two, a run's edge falls within half a pixel of
where the full trace would turn, and the drawing matches the unthinned one to antialiasing shades."""


def envelope(n: int, width: int, *ys):
    """Indices that keep the min/max envelope of the traces ``ys`` (each (n,)) in ``width`` runs.

    With ``n`` at most twice ``width`` all points are kept. Otherwise the points are split into ``width``
    runs of consecutive indices (for an evenly spaced sweep, a run is a fixed share of a pixel column) and
    each run keeps the index of its smallest and its largest value of every trace, in order, plus the
    first and last point: every peak and dip of the drawn line survives, and a column never shows more than
    the line's vertical extent. A run with a NaN keeps one NaN point, so a gap in the trace stays a gap.
    """
    if n <= 2 * width or width < 1:
        return np.arange(n)
    per = -(-n // width)  # points per run, rounded up
    runs = -(-n // per)
    keep = np.zeros(n, dtype=bool)
    keep[0] = keep[-1] = True
    base = np.arange(runs) * per
    for y in ys:
        y = np.asarray(y, dtype=float)
        blocks = np.full(runs * per, np.nan)
        blocks[:n] = y
        blocks = blocks.reshape(runs, per)
        nan = np.isnan(blocks)
        lo = np.argmin(np.where(nan, np.inf, blocks), axis=1) + base
        hi = np.argmax(np.where(nan, -np.inf, blocks), axis=1) + base
        keep[np.minimum(lo, n - 1)] = True
        keep[np.minimum(hi, n - 1)] = True
        nan_at = np.flatnonzero(np.isnan(y))
        if nan_at.size:
            first = np.unique(nan_at // per, return_index=True)[1]
            keep[nan_at[first]] = True
    return np.flatnonzero(keep)


def path_cells(x, y, lims, size_px, cell_px: float = 2.0):
    """Indices that keep a 2-D path (a Smith chart trace) to within ``cell_px`` pixels.

    The plane ``lims`` = (x0, x1, y0, y1) drawn over ``size_px`` = (width, height) pixels is cut into cells of
    ``cell_px`` pixels; a point is kept when it lies in another cell than the point before it (and the
    first and last points always). Every cell the path passes through keeps a point, so the drawn line is
    the same to the eye; a sweep that crawls within a cell costs one point there instead of thousands.
    Non-finite points are kept (they break the line, as they would unthinned).
    """
    x = np.asarray(x, dtype=float)
    y = np.asarray(y, dtype=float)
    n = x.shape[0]
    if n < 3:
        return np.arange(n)
    x0, x1, y0, y1 = lims
    with np.errstate(invalid="ignore"):
        cx = np.floor((x - x0) * (size_px[0] / cell_px / (x1 - x0)))
        cy = np.floor((y - y0) * (size_px[1] / cell_px / (y1 - y0)))
    keep = np.empty(n, dtype=bool)
    keep[0] = True
    np.not_equal(cx[1:], cx[:-1], out=keep[1:])
    keep[1:] |= cy[1:] != cy[:-1]
    keep[-1] = True
    return np.flatnonzero(keep)


def _width_px(ax) -> int:
    """Pixel columns of the axes (the figure's width in pixels times the axes' share of it)."""
    fig = ax.figure
    return max(int(fig.get_figwidth() * DPI * ax.get_position().width), 1)


def plot_thinned(ax, x, y, **kw):
    """``ax.plot(x, y, **kw)``, thinned to the min/max envelope the axes' pixel width can show."""
    x = np.asarray(x)
    y = np.asarray(y)
    idx = envelope(x.shape[0], RUNS_PER_COLUMN * _width_px(ax), y)
    if idx.shape[0] < x.shape[0]:
        x, y = x[idx], y[idx]
    return ax.plot(x, y, **kw)


def _axes(ax, figsize=FREQ_FIGSIZE):
    if ax is not None:
        return ax.figure, ax
    from matplotlib.figure import Figure

    fig = Figure(figsize=figsize)
    fig.subplots_adjust(**FREQ_MARGINS)
    return fig, fig.add_subplot()


def finish(ax, ylabel: str, title: str) -> None:
    """The frequency axis, labels, grid and legend every frequency plot shares.

    The legend sits in a row above the axes, under the title, so it never hides a trace and needs no
    search of the data for an empty corner."""
    ax.set_xlabel("Frequency (MHz)")
    ax.set_ylabel(ylabel)
    ax.set_title(title, pad=26)
    ax.grid(True, color=GRID_COLOUR, lw=0.6)
    ax.legend(loc="lower left", bbox_to_anchor=(0.0, 1.005), ncol=3, fontsize=9, frameon=False,
              borderaxespad=0.0, handlelength=2.6)


# PLOT_BOUNDS (deembed.analysis.summary): values beyond them are left out of the plots (the trace breaks
# there) instead of being drawn, and the summary's warnings say where.


def shown(values, bound: float):
    """``values`` with every non-finite value or magnitude above ``bound`` made NaN (not drawn)."""
    with np.errstate(invalid="ignore", over="ignore"):
        v = np.array(values, dtype=complex if np.iscomplexobj(values) else float)
        v[~(np.abs(v) <= bound)] = np.nan
    return v


def _mhz(freq_hz):
    return np.asarray(freq_hz) / 1e6


def _marks(f_mhz) -> dict:
    """Line style extras: a sweep of one or two points is drawn with markers, or it would not show."""
    return {"marker": "o", "ms": 5} if np.size(f_mhz) < 3 else {}


def _xrange(ax, f_mhz) -> None:
    """X axis over the sweep, set explicitly (traces that are all off-scale or one point wide would
    otherwise leave matplotlib's autoscale with nothing to go on)."""
    lo, hi = float(f_mhz[0]), float(f_mhz[-1])
    pad = 0.02 * (hi - lo) if hi > lo else max(0.01 * abs(lo), 1e-3)
    ax.set_xlim(lo - pad, hi + pad)


def swr_marks(thresholds) -> tuple:
    """The SWR thresholds drawn as dotted lines on an SWR plot: those up to 3:1 (higher ones crowd the top)."""
    return tuple(t for t in thresholds if t <= 3)


def swr_scale(ax, traces, limits=(2.0,), label_at=None) -> None:
    """The SWR axis every SWR plot shares: 1 to the highest finite SWR (at least 3, at most 10), with a
    dotted line at each of ``limits`` (labelled ``2:1`` at x = ``label_at`` when given)."""
    finite = np.concatenate([np.asarray(s)[np.isfinite(s)] for s in traces]) if traces else np.array([])
    top = min(max(float(finite.max()) if finite.size else 3.0, 3.0), 10.0)
    for lim in limits:
        ax.axhline(lim, color="#8a8a8a", lw=0.8, ls=":")
        if label_at is not None:
            ax.text(label_at, lim, f" {lim:g}:1", va="bottom", ha="left", fontsize=8, color="#6a6a6a")
    ax.set_ylim(1.0, top * 1.05)


def swr_plot(corr, ax=None, limits=(2.0,), title="SWR at both ends", band=None, coverage: float = 0.95):
    """SWR against frequency at the analyzer and at the feedpoint, on one chart.

    ``band`` (low, high), arrays like the sweep: the feedpoint SWR's coverage interval at each frequency,
    shaded behind the feedpoint trace."""
    fig, ax = _axes(ax)
    f = _mhz(corr.freq_hz)
    s_sh, s_fp = (shown(rf.swr(g), PLOT_BOUNDS["swr"]) for g in (corr.gamma_analyzer, corr.gamma_feedpoint))
    if band is not None and band[0] is not None and band[1] is not None:
        lo = np.asarray(band[0], dtype=float)
        hi = np.minimum(np.asarray(band[1], dtype=float), 1e3)
        ax.fill_between(f, lo, hi, where=np.isfinite(lo), color=FEEDPOINT_COLOUR, alpha=0.18, lw=0,
                        label=f"feedpoint, {coverage:.0%} interval")
    plot_thinned(ax, f, s_sh, color=ANALYZER_COLOUR, lw=1.6, ls="--", label=LABELS["analyzer"], **_marks(f))
    plot_thinned(ax, f, s_fp, color=FEEDPOINT_COLOUR, lw=2.0, label=LABELS["feedpoint"], **_marks(f))
    _xrange(ax, f)
    swr_scale(ax, [s_sh, s_fp], limits, label_at=f[0])
    finish(ax, "SWR", title)
    return fig


def magnitude_swr_plot(corr, limits=(2.0,), ax=None, title="SWR at both ends (sweep without phase)"):
    """SWR at the analyzer and the feedpoint estimate of a magnitude-only correction, with the band that holds
    the true feedpoint SWR whatever the phase."""
    fig, ax = _axes(ax)
    f = _mhz(corr.freq_hz)
    s_sh = rf.swr(corr.gamma_analyzer_mag)
    s_fp = rf.swr(corr.gamma_feedpoint_mag)
    lo, hi = rf.swr(corr.gamma_feedpoint_mag_low), rf.swr(corr.gamma_feedpoint_mag_high)
    ax.fill_between(f, lo, np.where(np.isfinite(hi), hi, np.nan), color=FEEDPOINT_COLOUR, alpha=0.18, lw=0,
                    label="feedpoint: true SWR lies in this band")
    plot_thinned(ax, f, s_sh, color=ANALYZER_COLOUR, lw=1.6, ls="--", label=LABELS["analyzer"], **_marks(f))
    plot_thinned(ax, f, s_fp, color=FEEDPOINT_COLOUR, lw=2.0, label="at the feedpoint (estimated from |Gamma|)", **_marks(f))
    _xrange(ax, f)
    swr_scale(ax, [s_sh, s_fp], limits, label_at=f[0])
    finish(ax, "SWR", title)
    return fig


def return_loss_plot(corr, ax=None):
    """Return loss (positive dB) at both ends."""
    fig, ax = _axes(ax)
    f = _mhz(corr.freq_hz)
    plot_thinned(ax, f, shown(rf.return_loss_db(corr.gamma_analyzer), PLOT_BOUNDS["db"]), color=ANALYZER_COLOUR, lw=1.6, ls="--", label=LABELS["analyzer"],
           **_marks(f))
    plot_thinned(ax, f, shown(rf.return_loss_db(corr.gamma_feedpoint), PLOT_BOUNDS["db"]), color=FEEDPOINT_COLOUR, lw=2.0, label=LABELS["feedpoint"], **_marks(f))
    _xrange(ax, f)
    ax.invert_yaxis()
    finish(ax, "Return loss (dB, larger is better)", "Return loss at both ends")
    return fig


def impedance_plot(corr, ax=None):
    """The feedpoint's resistance and reactance (50 ohm system)."""
    fig, ax = _axes(ax)
    f = _mhz(corr.freq_hz)
    z = shown(rf.z_from_gamma(corr.gamma_feedpoint), PLOT_BOUNDS["ohm"])
    plot_thinned(ax, f, z.real, color=FEEDPOINT_COLOUR, lw=2.0, label="R (resistance)", **_marks(f))
    plot_thinned(ax, f, z.imag, color="#2f7d6d", lw=2.0, ls="-.", label="X (reactance)", **_marks(f))
    _xrange(ax, f)
    ax.axhline(0, color="#444444", lw=0.8)
    ax.axhline(50, color="#8a8a8a", lw=0.8, ls=":")
    finite = np.abs(np.concatenate([z.real, z.imag]))
    finite = finite[np.isfinite(finite)]
    if finite.size:
        lim = min(float(np.percentile(finite, 98)) * 1.2 + 10, 2000.0)
        ax.set_ylim(-lim, lim)
    finish(ax, "Ohms", "Feedpoint impedance (corrected)")
    return fig


def smith_grid(ax):
    t = np.linspace(0, 2 * np.pi, 400)
    ax.plot(np.cos(t), np.sin(t), color="#7d7d7d", lw=1.0)
    for r in (0.2, 0.5, 1.0, 2.0, 5.0):  # constant-resistance circles: centre r/(1+r), radius 1/(1+r)
        c, rad = r / (1 + r), 1 / (1 + r)
        ax.plot(c + rad * np.cos(t), rad * np.sin(t), color=GRID_COLOUR, lw=0.7)
    xs = np.concatenate(([0.0], np.geomspace(1e-3, 200, 600)))  # dense near r = 0, where the arcs bend most
    for x in (0.2, 0.5, 1.0, 2.0, 5.0):  # constant-reactance arcs, drawn as images of the line z = r + jx
        for sign in (1, -1):
            g = rf.gamma_from_z(xs + 1j * sign * x, 1.0)
            ax.plot(g.real, g.imag, color=GRID_COLOUR, lw=0.7)
    ax.plot([-1, 1], [0, 0], color=GRID_COLOUR, lw=0.7)
    for r in (0.2, 0.5, 1.0, 2.0, 5.0):
        ax.text((r - 1) / (r + 1), 0.01, f"{50 * r:g}", fontsize=7, color="#7d7d7d", ha="center", va="bottom")


def smith_trace(ax, gamma, colour, ls="-", label=None, lw=1.8, ms=5) -> None:
    """One reflection trace on a Smith chart, with a dot at the sweep's lowest frequency (thinned to what the
    axes' pixels can show, :func:`path_cells`)."""
    gamma = shown(gamma, PLOT_BOUNDS["gamma"])  # far-off points are not drawn (never a stalled rasterizer)
    side = _width_px(ax)
    idx = path_cells(gamma.real, gamma.imag, (-1.08, 1.08, -1.08, 1.08), (side, side))
    ax.plot(gamma.real[idx], gamma.imag[idx], color=colour, lw=lw, ls=ls, label=label)
    ax.plot(gamma.real[:1], gamma.imag[:1], "o", color=colour, ms=ms)


def smith_frame(ax, title: str, fontsize=None) -> None:
    """The Smith chart's square frame without axes, and its title."""
    ax.set_xlim(-1.08, 1.08)
    ax.set_ylim(-1.08, 1.08)
    ax.set_aspect("equal")
    ax.axis("off")
    ax.set_title(title, fontsize=fontsize)


def smith_plot(corr, ax=None):
    """Smith chart (50 ohm) with the measured and corrected traces; circles mark the sweep's start."""
    if ax is None:
        from matplotlib.figure import Figure

        fig = Figure(figsize=(6.2, 6.2))
        fig.subplots_adjust(left=0.02, right=0.98, bottom=0.02, top=0.93)
        ax = fig.add_subplot()
    fig = ax.figure
    smith_grid(ax)
    for g, colour, ls, key in ((corr.gamma_analyzer, ANALYZER_COLOUR, "--", "analyzer"),
                               (corr.gamma_feedpoint, FEEDPOINT_COLOUR, "-", "feedpoint")):
        smith_trace(ax, g, colour, ls, LABELS[key])
    smith_frame(ax, "Smith chart (50 ohm); dot = lowest frequency")
    ax.legend(loc="lower left", fontsize=8, frameon=False)
    return fig


def budget_plot(freq_hz, budget: dict, ax=None):
    """Power budget against frequency: delivered into the antenna, lost in the line, returned."""
    fig, ax = _axes(ax)
    f = _mhz(freq_hz)
    plot_thinned(ax, f, budget["budget_delivered_w"], color=FEEDPOINT_COLOUR, lw=2.0, label="radiated or lost in the antenna",
           **_marks(f))
    plot_thinned(ax, f, budget["budget_line_dissipated_w"], color="#8b6c3e", lw=1.6, ls="-.", label="lost in the line",
           **_marks(f))
    plot_thinned(ax, f, budget["budget_reflected_at_tx_w"], color=ANALYZER_COLOUR, lw=1.6, ls="--",
           label="reflected back to the transmitter", **_marks(f))
    _xrange(ax, f)
    finish(ax, "Watts", "Where the transmitter's power goes")
    return fig


PLOT_KEYS = ("swr_png", "smith_png", "impedance_png", "return_loss_png", "budget_png")
"""Every plot of a correction, by its output key, in the order they are written."""


def correction_plot(key: str, corr, table: dict | None = None, thresholds=(2.0,)):
    """The plot ``key`` (one of :data:`PLOT_KEYS`) of a correction, or None when it has nothing to show
    (the power budget without budget columns in ``table``)."""
    if key == "swr_png":
        band = (table.get("feedpoint_swr_low"), table.get("feedpoint_swr_high")) if table else None
        return swr_plot(corr, limits=swr_marks(thresholds), band=band)
    if key == "return_loss_png":
        return return_loss_plot(corr)
    if key == "impedance_png":
        return impedance_plot(corr)
    if key == "smith_png":
        return smith_plot(corr)
    if key == "budget_png" and table and "budget_delivered_w" in table:
        return budget_plot(corr.freq_hz, table)
    return None


def correction_plots(corr, table: dict | None = None, thresholds=(2.0,)) -> dict:
    """Every plot a correction has, as {output key: Figure} (the budget only when ``table`` has its columns)."""
    figs = {k: correction_plot(k, corr, table, thresholds) for k in PLOT_KEYS}
    return {k: f for k, f in figs.items() if f is not None}


def save(fig, path, dpi: int = DPI) -> None:
    """Save a figure atomically (temporary file in the same folder, then rename)."""

    with atomic_path(path) as tmp:
        fig.savefig(tmp, dpi=dpi, format="png")
