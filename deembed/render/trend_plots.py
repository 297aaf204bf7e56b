"""The trend figure of one feed: resonance, lowest SWR and line loss over time, with the fitted lines.

Built without pyplot (no global state, no GUI backend); returns the Figure. Points whose date came
from the file's modification time are drawn hollow; thin error bars show the recorded intervals (every
source, mostly the line's tolerance that all runs share), thick ones the per-run intervals the fit weighs
each run by; a dashed line is the weighted straight-line fit; a flagged quantity's panel is titled in red.
"""
from __future__ import annotations

import datetime as _dt

import numpy as np

from .plots import FEEDPOINT_COLOUR, GRID_COLOUR
from ..analysis.trend import years_since

LOSS_COLOUR = "#8b6c3e"
FLAG_COLOUR = "#b3261e"
PANELS = (  # quantity, axis label, scale, colour
    ("resonance_hz", "Feedpoint resonance (MHz)", 1e-6, FEEDPOINT_COLOUR),
    ("min_swr", "Lowest feedpoint SWR", 1.0, FEEDPOINT_COLOUR),
    ("line_loss_db", "Line matched loss at band centre (dB)", 1.0, LOSS_COLOUR),
)


def _dates(texts):
    return [_dt.datetime.fromisoformat(t) for t in texts]


ZOOM_RATIO = 4.0
"""When the recorded intervals reach more than this many times the spread of the values (and their per-run
bars) beyond it, the panel shows the values and lets those bars run off its edges: otherwise a line
tolerance shared by every run would flatten the trend into a line."""


def _zoom(ax, core, full_reach) -> None:
    lo, hi = core
    width = hi - lo
    if not (np.isfinite(width) and width > 0):
        return
    if (lo - full_reach[0]) + (full_reach[1] - hi) > ZOOM_RATIO * width:
        ax.set_ylim(lo - 0.35 * width, hi + 0.35 * width)
        ax.text(0.99, 0.02, "thin bars run off the panel", transform=ax.transAxes, ha="right", va="bottom",
                fontsize=7, color="#777")


def trend_figure(trend, date_sources: dict | None = None):
    """Three stacked panels over a shared date axis for one :class:`deembed.analysis.trend.EntryTrend`.

    ``date_sources`` maps a date text to "file_mtime" where that run's date is only the file's.
    """
    from matplotlib.dates import AutoDateLocator, ConciseDateFormatter
    from matplotlib.figure import Figure


    date_sources = date_sources or {}
    fig = Figure(figsize=(8, 8.4), layout="constrained")
    axes = fig.subplots(3, 1, sharex=True)
    flagged = {f["quantity"] for f in trend.flags}
    for ax, (q, label, scale, colour) in zip(axes, PANELS):
        s = trend.series.get(q)
        ax.grid(True, color=GRID_COLOUR, lw=0.6)
        ax.set_ylabel(label)
        ax.ticklabel_format(axis="y", useOffset=False)  # 14.199 MHz on the axis, not 0.001 + 1.42e1
        if s is None or not s.values:
            ax.text(0.5, 0.5, "not recorded", transform=ax.transAxes, ha="center", va="center", color="#777")
            continue
        x = _dates(s.dates)
        y = np.array(s.values) * scale
        core = [np.nanmin(y), np.nanmax(y)]      # what the panel must show: the values and their per-run bars
        full_reach = list(core)
        for lows, highs, width, cap, alpha, what in ((s.lows, s.highs, 0.8, 3, 0.45, "recorded interval"),
                                                      (s.run_lows, s.run_highs, 3.0, 0, 0.9, "per-run interval")):
            if len(lows) != len(y):
                continue
            lo = np.array([np.nan if v is None else v for v in lows], float) * scale
            hi = np.array([np.nan if v is None else v for v in highs], float) * scale
            has_iv = np.isfinite(lo) & np.isfinite(hi)
            if has_iv.any():
                # an interval placed by another estimator may not hold the value: no negative bar
                err = np.maximum(np.vstack([np.where(has_iv, y - lo, 0.0), np.where(has_iv, hi - y, 0.0)]), 0.0)
                ax.errorbar(x, y, yerr=err, fmt="none", ecolor=colour, elinewidth=width, capsize=cap, alpha=alpha,
                            label=what)
                reach = [float(np.min(lo[has_iv])), float(np.max(hi[has_iv]))]
                if what == "per-run interval":
                    core = [min(core[0], reach[0]), max(core[1], reach[1])]
                else:
                    full_reach = reach
        _zoom(ax, core, full_reach)
        mtime = np.array([date_sources.get(d) == "file_mtime" for d in s.dates])
        xs = np.array(x, dtype=object)
        ax.plot(list(xs[~mtime]), y[~mtime], "o", color=colour, ms=6, label="sweep")
        if mtime.any():
            ax.plot(list(xs[mtime]), y[mtime], "o", mfc="white", mec=colour, ms=6,
                    label="date from the file's time (uncertain)")
        fit = trend.fits.get(q)
        if fit is not None:
            t = years_since(s.dates, trend.origin)
            tt = np.linspace(t.min(), t.max(), 50)
            d0 = _dt.datetime.fromisoformat(trend.origin)
            xx = [d0 + _dt.timedelta(days=float(v) * 365.25) for v in tt]
            ax.plot(xx, fit.predict(tt) * scale, "--", color="#444", lw=1.2, label="fitted trend")
        if q in flagged:
            ax.set_title("flagged: see the list above the plots", color=FLAG_COLOUR, fontsize=10, loc="left")
        ax.legend(loc="best", fontsize=8)
    loc = AutoDateLocator()
    axes[-1].xaxis.set_major_locator(loc)
    axes[-1].xaxis.set_major_formatter(ConciseDateFormatter(loc))
    axes[-1].set_xlabel("Date of the sweep")
    return fig


__all__ = ["trend_figure"]
