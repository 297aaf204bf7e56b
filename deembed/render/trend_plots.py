"""The trend figure of one feed: resonance, lowest SWR and line loss over time, with the fitted lines.

Built without pyplot (no global state, no GUI backend); returns the Figure. Points whose date came
from the file's modification time are drawn hollow; error bars show recorded intervals; a dashed
line is the weighted straight-line fit; a flagged quantity's panel is titled in red.
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
        if s is None or not s.values:
            ax.text(0.5, 0.5, "not recorded", transform=ax.transAxes, ha="center", va="center", color="#777")
            continue
        x = _dates(s.dates)
        y = np.array(s.values) * scale
        lo = np.array([np.nan if v is None else v for v in s.lows], float) * scale
        hi = np.array([np.nan if v is None else v for v in s.highs], float) * scale
        has_iv = np.isfinite(lo) & np.isfinite(hi)
        if has_iv.any():
            err = np.vstack([np.where(has_iv, y - lo, 0.0), np.where(has_iv, hi - y, 0.0)])
            ax.errorbar(x, y, yerr=err, fmt="none", ecolor=colour, elinewidth=1.0, capsize=3, alpha=0.8)
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
