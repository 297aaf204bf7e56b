"""The site's index page: one self-contained page linking every antenna's pages and files.

It is ``templates/site_index.html.j2`` on the pages' shared base template and stylesheet (the report's
colours for within and outside limits); every value placed in it is escaped.
"""
from __future__ import annotations

import datetime as _dt
import os

from ..base.verdicts import ERROR, OUTSIDE, TEXT as VERDICT_TEXT, WITHIN
from .intervals import fmt_shift_interval
from .labels import CAUSE_LABELS, label
from .pages import href, render_page

LINKS = (("report_html", "report"), ("compare_html", "comparison"), ("compare_png", "overlay plot"),
         ("compare_json", "comparison JSON"), ("summary_json", "summary JSON"))
"""The files linked for each latest sweep, in this order, and what the links say."""


def _trend(trend) -> dict | None:
    if not trend:
        return None
    flags = trend.get("flags") or []
    return {"href": href(trend["page"]), "text": f"trend over {trend['runs']} run(s)",
            "flags": "; ".join(flags), "count": len(flags)}


def _history(history) -> str | None:
    if not history:
        return None
    if history.get("error"):
        return f"Not recorded: {history['error']}"
    flagged = history.get("flagged") or []
    more = f" Trend flagged for {', '.join(flagged)}." if flagged else " No trend flagged."
    return (f"History: {history['added']} new sweep(s) recorded, {history['already']} already there, in "
            f"{history['store']}.{more}")


def _rows(summary: dict) -> list:
    """One row per comparison; what is the antenna's (its name, line, baseline and its report, between-points
    note, trend link) sits once, in the first row of its comparisons (``first``), spanning them (``span``)."""
    rows = []
    for ant in summary["antennas"]:
        if ant["verdict"] == ERROR:
            rows.append({"name": ant["name"], "error": ant["error"], "verdict_text": VERDICT_TEXT[ERROR]})
            continue
        base = ant["baseline"]
        base_report = base["outputs"].get("report_html")
        n_cmp = len(ant["comparisons"])
        for j, cmp in enumerate(ant["comparisons"]):
            shift = cmp["resonance_shift_hz"]
            bp = cmp.get("between_points")
            between = None
            if bp:
                err = bp.get("estimated_error")
                between = (f"between characterized points: {bp.get('method')}"
                           + (f", estimated error up to {err:.2g} in |\u0393|" if err is not None and
                              bp.get("method") != "exact" else ""))
            outs = cmp["outputs"]
            links = [{"href": href(outs[k]), "text": text} for k, text in LINKS if outs.get(k)]
            date = cmp.get("date")
            if j == 0:
                between_first = between
            rows.append({
                "first": j == 0, "span": n_cmp, "between_own": between if j and between != between_first else None,
                "name": ant["name"], "line": ant.get("line") or "", "between": between, "trend": _trend(ant.get("trend")),
                "ok": cmp["verdict"] == WITHIN, "verdict_text": VERDICT_TEXT[cmp["verdict"]],
                "sweep": os.path.basename(cmp["file"]), "baseline": os.path.basename(base["file"]),
                "baseline_report": href(base_report) if base_report else None,
                "date": date if isinstance(date, str) else None,
                "shift": "n/a" if shift is None else fmt_shift_interval(shift, cmp.get("resonance_shift_interval_hz")),
                "cause_label": label(CAUSE_LABELS, cmp["cause"]["code"]), "cause_text": cmp["cause"]["text"],
                "reasons": "; ".join(cmp["reasons"]), "links": links})
    return rows


def index_html(summary: dict, *, run_time: _dt.datetime | None = None) -> str:
    """The site's index: one self-contained page, a row per comparison, links to each antenna's pages."""
    run_time = run_time or _dt.datetime.now().astimezone()
    c = summary["counts"]
    n = len(summary["antennas"])
    overall = (f"{VERDICT_TEXT[WITHIN].capitalize()}: every antenna." if summary["verdict"] == WITHIN else
               f"{c.get(OUTSIDE, 0)} outside limits, {c.get(ERROR, 0)} with an error, of {n} antenna(s).")
    return render_page(
        "site_index.html.j2", site=summary["site"],
        facts=[{"label": "Site file", "value": os.path.basename(summary["file"]), "mono": True},
               {"label": "Antennas", "value": n},
               {"label": "Run", "value": run_time.strftime("%Y-%m-%d %H:%M %Z").strip()}],
        counts={"within": c.get(WITHIN, 0), "outside": c.get(OUTSIDE, 0), "error": c.get(ERROR, 0)},
        overall=overall, rows=_rows(summary), history=_history(summary.get("history")),
        run_time=run_time.strftime("%Y-%m-%d %H:%M %Z").strip())


__all__ = ["index_html"]
