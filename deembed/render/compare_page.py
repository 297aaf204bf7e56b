"""Outputs of a comparison: the overlay plot and the self-contained HTML page (``templates/compare.html.j2``
on the pages' shared base template and stylesheet: a verdict, the cause, findings tables with labels for
people, the limits, the line, links to each side's correction report when there are reports).

Colours (our own, distinct from :mod:`deembed.plots`): the baseline in indigo, the after-work sweep in
mustard; solid lines at the feedpoint, dashed at the analyzer end.
"""
from __future__ import annotations

import os

from ..base.units import fmt_freq
from ..base.verdicts import TEXT as VERDICT_TEXT, WITHIN
from ..physics import rf
from ..analysis.compare import CERTAINTY_TEXT
from .along import along_plot
from .intervals import fmt_number, fmt_shift_interval
from .labels import CAUSE_LABELS, LIMIT_LABELS, label
from .pages import file_data_uri, finite, href, render_page
from .plots import PLOT_BOUNDS, finish, plot_thinned, shown, smith_frame, smith_grid, smith_trace, swr_scale
from .text import freq_text

BEFORE_COLOUR = "#3f51a3"
AFTER_COLOUR = "#d19a1c"
BEFORE_LABEL, AFTER_LABEL = "baseline", "after work"


def compare_plot(before, after, title: str = ""):
    """2 x 2 overlay of before and after: SWR and Smith chart, at the feedpoint (top) and the analyzer (bottom).

    Each trace is drawn on its own sweep's frequencies. Returns the matplotlib Figure (no pyplot).
    """
    from matplotlib.figure import Figure


    fig = Figure(figsize=(12, 10))
    # a fixed layout (no constrained-layout solve): room for each SWR panel's title and legend row above it
    fig.subplots_adjust(left=0.06, right=0.985, bottom=0.06, top=0.89 if title else 0.92, hspace=0.42, wspace=0.08)
    axes = fig.subplots(2, 2, width_ratios=(1.5, 1))
    for row, (end, attr, ls) in enumerate((("feedpoint (corrected)", "gamma_feedpoint", "-"),
                                           ("analyzer end (measured)", "gamma_analyzer", "--"))):
        ax_swr, ax_sm = axes[row]
        traces = []
        for corr, colour, label in ((before, BEFORE_COLOUR, BEFORE_LABEL), (after, AFTER_COLOUR, AFTER_LABEL)):
            g = getattr(corr, attr)
            s = shown(rf.swr(g), PLOT_BOUNDS["swr"])
            plot_thinned(ax_swr, corr.freq_hz / 1e6, s, color=colour, lw=1.8, ls=ls, label=label)
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


def _facts(result: dict) -> list:
    g = result["grid"]

    def side(key):
        path = str(result[key]["file"])
        return {"value": os.path.basename(path) or path, "mono": True,
                "below": f"{result[key]['points']} points" + (f", in {os.path.dirname(path)}"
                                                               if os.path.dirname(path) else "")}

    return [{"label": "Baseline", **side("baseline")}, {"label": "After the work", **side("after")},
            {"label": "Compared on", "value": f"{g['points']} points", "below": g["method"]},
            {"label": "Range", "value": f"{fmt_freq(g['low_hz'])} to {fmt_freq(g['high_hz'])}"}]


def _sfmt(v, spec):
    return "n/a" if not finite(v) else format(v, spec)


def _freq(v, interval=None, step_hz=None) -> str:
    return freq_text(v, interval, step_hz) if finite(v) else "n/a"


def _width_change(end: dict, iv) -> str:
    """The change of the 2:1 width in per cent of the baseline's, with its interval when there is one."""
    pct, bw_b = end.get("swr_2_width_change_percent"), end.get("swr_2_width_before_hz")
    if not finite(pct):
        return _sfmt(end["swr_2_width_change_hz"] / 1e3, "+.1f") + " kHz"
    iv_pct = [100 * x / bw_b for x in iv] if iv and finite(bw_b) and bw_b > 0 else None
    text = fmt_number(pct, iv_pct, default_decimals=1)
    head, _, rest = text.partition(" (")
    sign = lambda t: t if t.startswith("-") or float(t) == 0 else "+" + t  # noqa: E731  (0.0, never +0.0)
    if rest:
        lo, _, hi = rest.rstrip(")").partition(" to ")
        return f"{sign(head)} % ({sign(lo)} to {sign(hi)})"
    return f"{sign(head)} %"


def _end_rows(end: dict, result: dict | None, exceeded, step_hz=None) -> list:
    """The rows of one end's table (``result`` given for the feedpoint, which also has the resonance and the
    intervals); frequencies with the digits their interval supports, else the sweeps' step ``step_hz``."""
    rows = []
    if result is not None:
        steps = (result["baseline"]["step_hz"], result["after"]["step_hz"])
        rows.append({"label": "Resonance", "hint": "reactance zero nearest the best match, fitted",
                     "before": _freq(result["resonance_before_hz"], result.get("resonance_before_interval_hz"),
                                     steps[0]),
                     "after": _freq(result["resonance_after_hz"], result.get("resonance_after_interval_hz"), steps[1]),
                     "change": fmt_shift_interval(result["resonance_shift_hz"], result.get("resonance_shift_interval_hz")),
                     "over": "max_shift_hz" in exceeded})
    rows.append({"label": "Lowest SWR", "before": _sfmt(end["min_swr_before"], ".3f"),
                 "after": _sfmt(end["min_swr_after"], ".3f"),
                 "change": fmt_number(end["min_swr_change"], (result or {}).get("min_swr_change_interval"),
                                      default_decimals=3) if result is not None else _sfmt(end["min_swr_change"], "+.3f"),
                 "over": result is not None and "max_swr_rise" in exceeded})
    rows.append({"label": "Lowest SWR at", "before": _freq(end["min_swr_freq_before_hz"], None, step_hz),
                 "after": _freq(end["min_swr_freq_after_hz"], None, step_hz),
                 "change": fmt_shift_interval(end["min_swr_freq_shift_hz"])})
    rows.append({"label": "Width of the 2:1 span", "hint": "all spans together",
                 "before": fmt_freq(end["swr_2_width_before_hz"], 4) if end["swr_2_width_before_hz"] else "none",
                 "after": fmt_freq(end["swr_2_width_after_hz"], 4) if end["swr_2_width_after_hz"] else "none",
                 "change": _width_change(end, (result or {}).get("swr_2_width_change_interval_hz")),
                 "over": result is not None and "max_bw_loss_percent" in exceeded})
    at = end.get("largest_gamma_change_at_hz")
    rows.append({"label": "Largest change of |\u0393|", "hint": f"at {_freq(at, None, step_hz)}" if finite(at) else None,
                 "before": "", "after": "", "change": _sfmt(end["largest_gamma_change"], ".3f"),
                 "over": result is not None and "max_gamma_change" in exceeded})
    rows.append({"label": "Largest change of \u0393 (complex)", "before": "", "after": "",
                 "change": _sfmt(end["largest_gamma_vector_change"], ".3f")})
    rows.append({"label": "RMS change of \u0393 (complex)", "before": "", "after": "",
                 "change": _sfmt(end["rms_gamma_change"], ".3f")})
    rows.append({"label": "Trace noise", "hint": "rms in \u0393, estimated from the sweep itself as the correction "
                                                 "reports it" + (", referred to the feedpoint through the line"
                                                                 if result is not None else ""),
                 "before": _sfmt(end["trace_noise_before"], ".2g"), "after": _sfmt(end["trace_noise_after"], ".2g"),
                 "change": ""})
    return rows


def _limits_rows(result: dict) -> list:
    lim, fp, ln = result["limits"], result["feedpoint"], result["line"]
    exceeded = result["verdict"]["limits_exceeded"]
    pct = fp.get("swr_2_width_change_percent")
    lc = ln.get("loss_change_db")
    found = {
        "max_shift_hz": fmt_shift_interval(result["resonance_shift_hz"], result.get("resonance_shift_interval_hz")),
        "max_swr_rise": fmt_number(fp["min_swr_change"], result.get("min_swr_change_interval"), default_decimals=3)
        if result.get("min_swr_change_interval") else _sfmt(fp["min_swr_change"], "+.3f"),
        "max_gamma_change": _sfmt(fp["largest_gamma_change"], ".3f"),
        "max_bw_loss_percent": f"{-pct:.1f} % lost" if finite(pct) and pct < 0 else
        (f"{pct:+.1f} %" if finite(pct) else "no 2:1 span at the baseline"),
        "max_loss_change_db": f"{lc['max_abs']:.2f} dB" if lc else "the same line",
    }
    allowed = {
        "max_shift_hz": fmt_freq(lim["max_shift_hz"]) if lim["max_shift_hz"] else "0 Hz",
        "max_swr_rise": f"{lim['max_swr_rise']:g}",
        "max_gamma_change": f"{lim['max_gamma_change']:g}",
        "max_bw_loss_percent": f"{lim['max_bw_loss_percent']:g} %",
        "max_loss_change_db": f"{lim['max_loss_change_db']:g} dB",
    }
    checked = {"max_bw_loss_percent": finite(pct), "max_loss_change_db": lc is not None}
    v = result["verdict"]
    cert, cert_text = v.get("certainty") or {}, v.get("certainty_text") or {}  # OPTIONAL: with intervals only

    def certainty(k):
        c = cert.get(k)
        if c is None:
            return None
        text = cert_text.get(k) or CERTAINTY_TEXT.get(c) or ("the whole interval is inside the limit" if c == "inside"
                                                              else "no interval to tell")
        return {"code": c, "text": text[:1].upper() + text[1:]}

    return [{"label": label(LIMIT_LABELS, k), "allowed": allowed[k], "found": found[k],
             "ok": None if not checked.get(k, True) else k not in exceeded, "certainty": certainty(k)} for k in allowed]


def _line_rows(ln: dict) -> list:
    rows = [{"label": "Baseline corrected through", "value": ln["before"]}]
    if ln["same_line"]:
        rows[0]["label"] = "Both sweeps corrected through"
    else:
        rows.append({"label": "After sweep corrected through", "value": ln["after"]})
    lc = ln.get("loss_change_db")
    if lc:
        rows.append({"label": "Change of matched loss", "value": f"{lc['at_centre']:+.2f} dB at band centre, "
                                                                 f"up to {lc['max_abs']:.2f} dB"})
    if finite(ln.get("delay_change_ps")):
        rows.append({"label": "Change of delay", "value": f"{ln['delay_change_ps']:+.0f} ps one way"})
    fit = ln.get("fitted_change")
    if fit:
        rows.append({"label": "As a change of the line", "value":
                     f"{fit['loss_change_db']['at_centre']:+.2f} dB one-way loss at band centre, "
                     f"{fit['delay_change_ps']:+.0f} ps one-way delay; leaves {fit['rms_residual']:.4f} rms in "
                     f"\u0393 unexplained of {fit['rms_change']:.4f} rms change"})
    return rows


def compare_html(result: dict, png_path: str | None = None, title: str = "", along_png: str | None = None,
                 *, reports=(), run_time=None) -> str:
    """The comparison's page: verdict, cause, findings tables, limits, the line, the plots and links.

    ``reports`` lists each side's correction report as ``(side, relative path)`` (e.g. ``("baseline",
    "vertical-2m.report.html")``), linked from the page when given.
    """
    import datetime as _dt

    run_time = run_time or _dt.datetime.now().astimezone()
    v = result["verdict"]
    exceeded = v["limits_exceeded"]
    cause = result["cause"]
    figures = []
    uri = file_data_uri(png_path)
    if uri:
        figures.append({"uri": uri, "alt": "overlay of baseline and after-work sweeps",
                        "caption": "Baseline (indigo) and after the work (mustard): SWR and Smith chart at the "
                                   "feedpoint (solid, top) and at the analyzer (dashed, bottom)."})
    along_uri = file_data_uri(along_png)
    u = result.get("uncertainty")
    steps = [x for x in (result["baseline"]["step_hz"], result["after"]["step_hz"]) if x]
    step = min(steps) if steps else None
    return render_page(
        "compare.html.j2",
        title=title or f"{os.path.basename(str(result['after']['file']))} against its baseline",
        facts=_facts(result),
        verdict={"ok": v["status"] == WITHIN, "word": VERDICT_TEXT[v["status"]].capitalize(),
                 "exceeded": [label(LIMIT_LABELS, k) for k in exceeded], "reasons": v["reasons"]},
        cause={"label": label(CAUSE_LABELS, cause["code"]), "text": cause["text"]},
        reports=[{"side": side, "name": os.path.basename(str(p)), "href": href(p)} for side, p in reports if p],
        uncertainty=(f"Intervals: {u['coverage']:.0%} coverage, {u['draws']} Monte Carlo draws (seed {u['seed']}); "
                     f"{u['method']}." + (f" {u['not_worked_out'][:1].upper()}{u['not_worked_out'][1:]}."
                                          if u.get("not_worked_out") else "")) if u else None,
        feedpoint={"heading": "At the feedpoint (corrected)",
                   "rows": _end_rows(result["feedpoint"], result, exceeded, step)},
        analyzer={"heading": "At the analyzer (measured)", "rows": _end_rows(result["analyzer"], None, exceeded, step)}
        if result.get("analyzer") else None,
        warnings=[str(w) for w in result.get("warnings") or []],
        analyzer_missing="the baseline's line is known only at its measured points",
        limits=_limits_rows(result), line_rows=_line_rows(result["line"]), figures=figures,
        along={"uri": along_uri, "text": result["along_the_line"]["text"]} if along_uri else None,
        notes=list(result.get("notes") or []),
        run_time=run_time.strftime("%Y-%m-%d %H:%M %Z").strip())
