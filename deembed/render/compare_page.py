"""Outputs of a comparison: the overlay plot, the JSON and a small self-contained HTML page.

Colours (our own, distinct from :mod:`deembed.plots`): the baseline in indigo, the after-work sweep in
mustard; solid lines at the feedpoint, dashed at the analyzer end.
"""
from __future__ import annotations

import html
import os


from ..physics import rf
from .plots import PLOT_BOUNDS, finish, shown, smith_frame, smith_grid, smith_trace, swr_scale
from .text import compare_text
from ..analysis.limits import FIELD_OF_JSON, LIMIT_NAMES
from ..base.verdicts import TEXT as VERDICT_TEXT, WITHIN
from .along import along_plot

BEFORE_COLOUR = "#3f51a3"
AFTER_COLOUR = "#d19a1c"
BEFORE_LABEL, AFTER_LABEL = "baseline", "after work"


def compare_plot(before, after, title: str = ""):
    """2 x 2 overlay of before and after: SWR and Smith chart, at the feedpoint (top) and the analyzer (bottom).

    Each trace is drawn on its own sweep's frequencies. Returns the matplotlib Figure (no pyplot).
    """
    from matplotlib.figure import Figure


    fig = Figure(figsize=(12, 10), layout="constrained")
    axes = fig.subplots(2, 2, width_ratios=(1.5, 1))
    for row, (end, attr, ls) in enumerate((("feedpoint (corrected)", "gamma_feedpoint", "-"),
                                           ("analyzer end (measured)", "gamma_analyzer", "--"))):
        ax_swr, ax_sm = axes[row]
        traces = []
        for corr, colour, label in ((before, BEFORE_COLOUR, BEFORE_LABEL), (after, AFTER_COLOUR, AFTER_LABEL)):
            g = getattr(corr, attr)
            s = shown(rf.swr(g), PLOT_BOUNDS["swr"])
            ax_swr.plot(corr.freq_hz / 1e6, s, color=colour, lw=1.8, ls=ls, label=label)
            traces.append(s)
            smith_trace(ax_sm, g, colour, ls, label, lw=1.6, ms=4)
        swr_scale(ax_swr, traces, (2.0,))
        finish(ax_swr, "SWR", f"SWR at the {end}")
        smith_grid(ax_sm)
        smith_frame(ax_sm, f"Smith chart (50 ohm), {end}\ndot = lowest frequency", fontsize=10)
    if title:
        fig.suptitle(title)
    return fig


def along_overlay(trace_before: dict, trace_after: dict, summary_after: dict):
    """Both sweeps along the line on one chart (baseline and after-work colours), the largest change marked."""
    return along_plot(trace_after, summary_after, "m", other=trace_before, labels=(AFTER_LABEL, BEFORE_LABEL),
                      colours=(AFTER_COLOUR, BEFORE_COLOUR))


def compare_html(result: dict, png_path: str | None = None, title: str = "", along_png: str | None = None) -> str:
    """A small self-contained page (the plot embedded as data) with the numbers, verdict and cause."""
    import base64


    e = html.escape
    img = ""
    if png_path and os.path.isfile(png_path):
        with open(png_path, "rb") as fh:
            data = base64.b64encode(fh.read()).decode("ascii")
        img = f'<img alt="overlay of baseline and after-work sweeps" src="data:image/png;base64,{data}">'
    if along_png and os.path.isfile(along_png):
        with open(along_png, "rb") as fh:
            data = base64.b64encode(fh.read()).decode("ascii")
        img += (f'<h2>Along the line</h2><p>{e(result.get("along_the_line", {}).get("text", ""))}</p>'
                f'<img alt="baseline and after-work sweeps along the line" src="data:image/png;base64,{data}">')
    v = result["verdict"]
    if v["status"] == WITHIN:
        badge = f'<p class="ok">{VERDICT_TEXT[WITHIN]}</p>'
    else:
        names = ", ".join(LIMIT_NAMES[FIELD_OF_JSON[k]] for k in v["limits_exceeded"])
        badge = f'<p class="bad">{VERDICT_TEXT[v["status"]]}: ' + e(names) + "</p>"
    head = e(title or f"{os.path.basename(str(result['after']['file']))} against its baseline")
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{head}</title>
<style>body{{font-family:system-ui,sans-serif;max-width:70em;margin:1.5em auto;padding:0 1.5em;color:#222;background:#fbfaf8}}
pre{{background:#f6f4ef;padding:1em;white-space:pre-wrap}} img{{max-width:100%}}
.ok{{color:#1d6b3a;font-weight:bold}} .bad{{color:#a3261d;font-weight:bold}}</style></head>
<body><h1>{head}</h1>
{badge}
<p><b>Cause:</b> {e(result['cause']['code'])} &mdash; {e(result['cause']['text'])}</p>
<pre>{e(compare_text(result))}</pre>
{img}
</body></html>
"""
