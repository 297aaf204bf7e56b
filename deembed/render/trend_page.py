"""The trend page of one feed: one self-contained HTML file in the report's design.

It is ``templates/trend.html.j2`` on the pages' shared base template and stylesheet
(:mod:`deembed.render.pages`): the masthead, at-a-glance cards, the warnings box, grid tables, figures and
the safety section look as they do in the report. The figure is embedded as a PNG data URI; every value
placed in the page is escaped.
"""
from __future__ import annotations

import datetime as _dt
import os

from ..analysis.trend import change_text
from ..base.units import fmt_freq
from .pages import png_data_uri, render_page

QUANTITY_TEXT = {"line_loss_db": "line loss", "resonance_hz": "feedpoint resonance", "min_swr": "lowest SWR"}


MINUS = "\u2212"


def _rate(q: str, v) -> str:
    """A rate per year with a typographic minus; a rate that rounds to zero prints unsigned (0.000 dB/yr)."""
    return change_text(q, v, decimals=3, per_year=True, minus=MINUS)


def _spread(q: str, lo, hi) -> str | None:
    """The half-width of a per-run interval, as ``±0.8 kHz``; None without one."""
    if lo is None or hi is None:
        return None
    h = (hi - lo) / 2
    if q == "resonance_hz":
        return "\u00b1" + fmt_freq(h, 3)
    if q == "line_loss_db":
        return f"\u00b1{h:.3f} dB"
    return f"\u00b1{h:.3f}"


def _value(q: str, v) -> str:

    if v is None:
        return "\u2013"
    if q in ("resonance_hz",):
        return fmt_freq(v, resolution_hz=100.0)   # the same decimals on every row (14.2000 MHz, not 14.2 MHz)
    if q == "line_loss_db":
        return f"{v:.2f} dB"
    return f"{v:.2f}"


def _cards(trend) -> list:
    cards = []
    for q, cls in (("resonance_hz", "feed"), ("min_swr", "feed"), ("line_loss_db", "line")):
        sl = trend.slopes[q]
        iv = sl["interval"]
        flagged = any(f["quantity"] == q for f in trend.flags)
        cards.append({"cls": "bad" if flagged else cls, "label": QUANTITY_TEXT[q], "rate": _rate(q, sl["per_year"]),
                      "sub": ("95 % interval " + _rate(q, iv[0]) + " to " + _rate(q, iv[1])) if iv else
                      "too few runs for an interval",
                      "flagged": flagged})
    return cards


def _runs(runs: list) -> list:
    rows = []
    for r in runs:
        verdict = r.get("verdict")
        v = r["values"]
        full = r.get("values_full") or {}

        def spread(q):
            x = full.get(q)
            return _spread(q, x[3], x[4]) if x is not None and len(x) >= 5 else None

        rows.append({"date": r["date"], "file_time": r["date_source"] == "file_mtime", "file": r["file"],
                     "name": os.path.basename(r["file"]), "role": r["role"],
                     "resonance": _value("resonance_hz", v.get("resonance_hz")), "resonance_pm": spread("resonance_hz"),
                     "min_swr": _value("min_swr", v.get("min_swr")), "min_swr_pm": spread("min_swr"),
                     "line_loss": _value("line_loss_db", v.get("line_loss_db")), "line_loss_pm": spread("line_loss_db"),
                     "within": None if verdict is None else verdict == "within_limits",
                     "cause": r.get("cause_code")})
    return rows


def _limits(limits) -> dict:
    d = limits.as_dict()
    drift = (f"{d['max_drift_percent_per_year']:g} % of the frequency per year"
             if d["max_drift_hz_per_year"] is None else f"{d['max_drift_hz_per_year'] / 1e3:g} kHz per year")
    return {"loss": f"{d['max_loss_rise_db_per_year']:g}", "drift": drift}


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
    return render_page(
        "trend.html.j2", name=trend.name, runs_count=trend.runs, first=first, last=last, site=site, store=store,
        mtime=sum(r["date_source"] == "file_mtime" for r in runs), cards=_cards(trend),
        flags=[{"quantity": QUANTITY_TEXT.get(f["quantity"], f["quantity"]), "reason": f["reason"]}
               for f in trend.flags],
        figure=png_data_uri(png) if png else None, runs=_runs(runs), limits=_limits(limits), notes=trend.notes,
        run_time=run_time.strftime("%Y-%m-%d %H:%M %Z").strip())


__all__ = ["trend_html"]
