"""The site's index page: one self-contained page linking every antenna's files."""
from __future__ import annotations

import html
import os
from urllib.parse import quote


from .intervals import fmt_shift_interval
from ..base.verdicts import ERROR, TEXT as VERDICT_TEXT, WITHIN


def _link(rel_path, text) -> str:
    return f'<a href="{html.escape(quote(rel_path.replace(os.sep, "/")), quote=True)}">{html.escape(text)}</a>'


def _trend_cell(trend) -> str:
    """A link to the antenna's trend page, with its flags, for the antenna's cell."""
    if not trend:
        return ""
    flags = trend.get("flags") or []
    mark = (f' <b class="flag" title="{html.escape("; ".join(flags), quote=True)}">trend flagged ({len(flags)})</b>'
            if flags else "")
    text = f"trend over {trend['runs']} run(s)"
    return f'<br><small>{_link(trend["page"], text)}{mark}</small>'


def _history_note(history) -> str:
    if not history:
        return ""
    e = html.escape
    if history.get("error"):
        return f'<p class="flag">Not recorded: {e(history["error"])}</p>'
    flagged = history.get("flagged") or []
    more = f' Trend flagged for {e(", ".join(flagged))}.' if flagged else " No trend flagged."
    return (f'<p>History: {history["added"]} new sweep(s) recorded, {history["already"]} already there, in '
            f'<span style="font-family:monospace">{e(history["store"])}</span>.{more}</p>')


def index_html(summary: dict) -> str:
    """The site's index: one self-contained page, a row per comparison, links to each antenna's files.

    Every string from the site file or the sweeps passes through :func:`html.escape`.
    """
    e = html.escape
    rows = []
    for ant in summary["antennas"]:
        name = e(ant["name"])
        if ant["verdict"] == ERROR:
            rows.append(f'<tr class="{ERROR}"><td>{name}</td><td class="st">{VERDICT_TEXT[ERROR]}</td>'
                        f'<td colspan="4">{e(ant["error"])}</td></tr>')
            continue
        base = ant["baseline"]
        trend = _trend_cell(ant.get("trend"))
        base_links = " ".join(_link(p, k.replace("_", " ")) for k, p in base["outputs"].items()
                              if k in ("report_html", "summary_json", "swr_png"))
        for cmp in ant["comparisons"]:
            st = cmp["verdict"]
            shift = cmp["resonance_shift_hz"]
            shift_txt = "n/a" if shift is None else fmt_shift_interval(shift, cmp.get("resonance_shift_interval_hz"))
            links = " ".join(_link(p, k.replace("_", " ")) for k, p in cmp["outputs"].items()
                             if k in ("compare_html", "compare_png", "compare_json", "report_html"))
            why = "; ".join(cmp["reasons"])
            bp = cmp.get("between_points")
            btw = ""
            if bp:
                err = bp.get("estimated_error")
                btw = (f"<br><small>between characterized points: {e(str(bp.get('method')))}"
                       + (f", estimated error up to {err:.2g} in |&Gamma;|" if err is not None and
                          bp.get("method") != "exact" else "") + "</small>")
            rows.append(
                f'<tr class="{st}"><td>{name}<br><small>{e(ant["line"] or "")}</small>{btw}{trend}</td>'
                f'<td class="st">{VERDICT_TEXT[st]}</td>'
                f'<td>{e(os.path.basename(cmp["file"]))}<br><small>baseline {e(os.path.basename(base["file"]))}: '
                f'{base_links}</small></td>'
                f'<td>{e(shift_txt)}</td>'
                f'<td><b>{e(cmp["cause"]["code"])}</b>: {e(cmp["cause"]["text"])}'
                f'{"<br><small>" + e(why) + "</small>" if why else ""}</td>'
                f'<td>{links}</td></tr>')
    c = summary["counts"]
    head = e(summary["site"])
    overall = (f"{VERDICT_TEXT[WITHIN]}: every antenna" if summary["verdict"] == WITHIN else
               f"{c['outside_limits']} outside limits, {c['error']} with an error")
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8"><title>{head}: antennas against their baselines</title>
<style>body{{font-family:system-ui,sans-serif;max-width:80em;margin:1.5em auto;padding:0 1.5em;color:#222;background:#fbfaf8}}
table{{border-collapse:collapse;width:100%}} td,th{{border-bottom:1px solid #d9d4cc;padding:.4em;vertical-align:top;text-align:left}}
tr.within_limits .st{{color:#1d6b3a}} tr.outside_limits .st,tr.error .st,.flag{{color:#a3261d;font-weight:bold}} small{{color:#555}}</style>
</head><body>
<h1>{head}</h1>
<p>{e(overall)} ({len(summary['antennas'])} antenna(s), site file {e(os.path.basename(summary['file']))}).</p>
<table><thead><tr><th>Antenna</th><th>Verdict</th><th>Sweep</th><th>Resonance shift</th><th>Cause</th><th>Files</th></tr></thead>
<tbody>
{chr(10).join(rows)}
</tbody></table>
{_history_note(summary.get("history"))}
<p><small>Resonance shift: feedpoint, after minus baseline. Limits and the antenna-or-line rule: see
the README. Sweeps compared through each antenna's line description; nothing here replaces a look at the
antenna by a qualified climber when the numbers say it changed.</small></p>
</body></html>
"""
