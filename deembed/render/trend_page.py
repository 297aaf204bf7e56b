"""The trend page of one feed: one self-contained HTML file in the report's design.

It uses the report's style sheet (:data:`deembed.render.report.CSS`) and its building blocks
(masthead, at-a-glance cards, the warnings box, grid tables, figures, the safety section), so a
technician who knows the report reads this page the same way. The figure is embedded as a PNG data
URI; every string from a file, a site file or the store passes through :func:`html.escape`.
"""
from __future__ import annotations

import base64
import os
import datetime as _dt
from html import escape

from . import report
from .. import __version__
from ..base.units import fmt_freq

QUANTITY_TEXT = {"line_loss_db": "line loss", "resonance_hz": "feedpoint resonance", "min_swr": "lowest SWR"}


def _e(v) -> str:
    return escape("" if v is None else str(v), quote=True)


def _rate(q: str, v) -> str:

    if v is None:
        return "n/a"
    if q == "resonance_hz":
        return ("+" if v >= 0 else "&minus;") + _e(fmt_freq(abs(v), 3)) + "/yr"
    if q == "line_loss_db":
        return f"{v:+.3f} dB/yr".replace("-", "&minus;")
    return f"{v:+.3f}/yr".replace("-", "&minus;")


def _value(q: str, v) -> str:

    if v is None:
        return "&ndash;"
    if q in ("resonance_hz",):
        return _e(fmt_freq(v, 6))
    if q == "line_loss_db":
        return f"{v:.2f} dB"
    return f"{v:.2f}"


def _glance(trend) -> str:
    cards = []
    for q, cls in (("resonance_hz", "feed"), ("min_swr", "feed"), ("line_loss_db", "line")):
        sl = trend.slopes[q]
        iv = sl["interval"]
        sub = ("95 % interval " + _rate(q, iv[0]) + " to " + _rate(q, iv[1])) if iv else \
            "too few runs for an interval"
        flagged = any(f["quantity"] == q for f in trend.flags)
        pill = ' <span class="pill fail">flagged</span>' if flagged else ""
        cards.append(f'<div class="stat {cls}"><span class="label">{_e(QUANTITY_TEXT[q])} per year{pill}</span>'
                     f'<span class="value">{_rate(q, sl["per_year"])}</span><span class="sub">{sub}</span></div>')
    return f'<div class="glance">{"".join(cards)}</div>'


def _flags(trend) -> str:
    if not trend.flags:
        return ('<section class="warnings none"><h2>Nothing flagged</h2><p>No quantity moves faster than its limit '
                'and no run breaks from the trend before it.</p></section>')
    items = "".join(f"<li><strong>{_e(QUANTITY_TEXT.get(f['quantity'], f['quantity']))}:</strong> {_e(f['reason'])}</li>"
                    for f in trend.flags)
    return (f'<section class="warnings"><h2>Flagged <span class="count">{len(trend.flags)}</span></h2>'
            f"<ul>{items}</ul></section>")


def _runs_table(runs: list) -> str:
    rows = []
    for r in runs:
        src = r["date_source"]
        mark = ' <span class="tag edge" title="no date was given: this is the file\'s modification time">file time</span>' \
            if src == "file_mtime" else ""
        verdict = r.get("verdict")
        pill = "" if verdict is None else \
            (' <span class="pill ok">within limits</span>' if verdict == "within_limits"
             else ' <span class="pill fail">outside limits</span>')
        cause = f'<br><span class="kind">{_e(r.get("cause_code"))}</span>' if r.get("cause_code") else ""
        v = r["values"]
        rows.append(
            f'<tr><td class="n">{_e(r["date"])}{mark}</td><td><span class="mono" title="{_e(r["file"])}">'
            f'{_e(os.path.basename(r["file"]))}</span>'
            f'<br><span class="kind">{_e(r["role"])}</span></td>'
            f'<td class="n">{_value("resonance_hz", v.get("resonance_hz"))}</td>'
            f'<td class="n">{_value("min_swr", v.get("min_swr"))}</td>'
            f'<td class="n">{_value("line_loss_db", v.get("line_loss_db"))}</td><td>{pill}{cause}</td></tr>')
    return ('<table class="grid"><thead><tr><th>Date</th><th>Sweep</th><th class="n">Resonance</th>'
            '<th class="n">Lowest SWR</th><th class="n">Line loss</th><th>Against the baseline</th></tr></thead>'
            f'<tbody>{"".join(rows)}</tbody></table>')


def _limits(limits) -> str:
    d = limits.as_dict()
    drift = (f"{d['max_drift_percent_per_year']:g} % of the frequency per year"
             if d["max_drift_hz_per_year"] is None else f"{d['max_drift_hz_per_year'] / 1e3:g} kHz per year")
    return (f"<p>Limits: line loss rising faster than {d['max_loss_rise_db_per_year']:g} dB per year, resonance "
            f"drifting faster than {_e(drift)}, or a run the earlier trend does not explain. Slopes are weighted "
            "least-squares straight lines (each run weighted by its interval when every run has one, otherwise "
            "equally); a rate is flagged only when its 95 % interval also excludes zero.</p>")


def _safety() -> str:
    return report._safety()  # the report's own Safety section, word for word


def trend_html(trend, runs: list, *, site: str, store: str, limits, png: bytes | None,
               run_time: _dt.datetime | None = None) -> str:
    """The page as one HTML string.

    Parameters
    ----------
    trend : deembed.analysis.trend.EntryTrend
    runs : list of dict
        The recorded runs in date order: ``date``, ``date_source``, ``file``, ``role``, ``verdict``,
        ``cause_code``, ``values`` (quantity -> value).
    site, store : str
        The site's name and the store's name (a URL shown without its password).
    limits : deembed.analysis.trend.TrendLimits
    png : bytes or None
        The trend figure.
    """

    run_time = run_time or _dt.datetime.now().astimezone()
    first, last = (runs[0]["date"], runs[-1]["date"]) if runs else ("", "")
    mtime = sum(r["date_source"] == "file_mtime" for r in runs)
    mtime_note = (f'<p class="small muted">{mtime} run(s) have no recorded date: their file\'s modification time '
                  "stands in and is marked &ldquo;file time&rdquo;; give dates in the site file or with --date.</p>"
                  if mtime else "")
    fig = ""
    if png:
        uri = "data:image/png;base64," + base64.b64encode(png).decode("ascii")
        fig = (f'<section id="plots"><h2>Over time</h2><div class="figs"><figure class="fig"><img src="{uri}" '
               'alt="Resonance, lowest SWR and line loss over time"><figcaption>Each dot is one sweep (hollow: date '
               "from the file's time); bars are recorded intervals; the dashed line is the fitted trend."
               "</figcaption></figure></div></section>")
    return f"""<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="deembed {_e(__version__)}">
<title>{_e(trend.name)} &middot; trend</title>
<style>{report.CSS}</style>
</head>
<body>
<header class="masthead">
  <p class="kicker">Trend over time</p>
  <h1>{_e(trend.name)}</h1>
  <p class="lede">{trend.runs} dated sweep(s) of this feed, {_e(first)} to {_e(last)}: is anything drifting
  before it becomes a fault?</p>
  <dl class="facts"><div><dt>Site</dt><dd>{_e(site) or "&ndash; (recorded by correct/compare)"}</dd></div><div><dt>Runs</dt><dd>{trend.runs}</dd></div>
  <div><dt>From</dt><dd>{_e(first)}</dd></div><div><dt>Store</dt><dd class="mono">{_e(store)}</dd></div></dl>
  {mtime_note}
</header>
{_glance(trend)}
{_flags(trend)}
{fig}
<section id="runs"><h2>Every recorded sweep</h2>{_runs_table(runs)}{_limits(limits)}</section>
{_safety()}
<footer><p>Made by deembed {_e(__version__)} on {_e(run_time.strftime('%Y-%m-%d %H:%M %Z').strip())}. A trend is
only as good as the line descriptions and dates behind it; a flag is a reason to look, not a diagnosis.</p></footer>
</body>
</html>
"""


__all__ = ["trend_html"]
