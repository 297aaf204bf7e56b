"""The HTML report: one self-contained file a technician can open, print or mail.

Everything the report shows is in the one file: plots are embedded as base64 PNG data URIs, the
style sheet is inline and nothing refers to the network (no external style sheets, scripts or fonts).
The page is ``templates/report.html.j2`` on the pages' shared base template and stylesheet
(:mod:`deembed.render.pages`): this module works out what to show, as plain numbers and text; the
template holds the markup, and every value placed in it is escaped.

Colours follow :mod:`deembed.render.plots`: slate for the analyzer end, copper for the feedpoint.
"""
from __future__ import annotations

import datetime as _dt
import math
import os

from . import plots
from ..analysis.between import METHOD_TEXT as BETWEEN_TEXT
from ..base.units import fmt_freq
from ..base.verdicts import TEXT as VERDICT_TEXT, WITHIN
from ..io.atomic import write_text_atomic
from ..physics.between import FEEDPOINT_ERROR_WARN
from .intervals import fmt_freq_interval, fmt_number
from .pages import LINE_LOSS_COLOUR, file_data_uri, finite, num, png_data_uri, render_page
from .plots import ANALYZER_COLOUR, FEEDPOINT_COLOUR
from .text import freq_text, sweep_step_hz, trim_amount, trim_resonance_interval

MAX_RESONANCES = 4
MAX_SPANS = 3
MAX_COMMENT_LINES = 12

PLOTS = (  # key in `written`, caption
    ("swr_png", "SWR against frequency at the analyzer (slate, dashed) and at the feedpoint (copper). "
                "Dotted lines mark the SWR thresholds."),
    ("return_loss_png", "Return loss at both ends; larger is a better match. The line's loss makes the "
                        "analyzer end look better than the antenna is."),
    ("impedance_png", "Feedpoint resistance R and reactance X after the line is removed (50 ohm system)."),
    ("smith_png", "Smith chart (50 ohm): the measured trace and the corrected feedpoint trace; "
                  "the dot marks the lowest frequency."),
    ("budget_png", "Where the transmitter's power goes at each frequency, with the reflected power absorbed "
                   "at the transmitter end."),
)

METHOD_TEXT = {
    "section": ("Closed-form de-embedding through a physical model. Each section is a uniform transmission line "
                "(RLGC model: characteristic impedance, delay and a loss that grows with frequency); the sections "
                "are cascaded into one 2-port at the sweep's own frequencies and removed from the measured "
                "reflection exactly:"),
    "measured": ("Closed-form de-embedding through the line's measured 2-port (S-parameters taken on the sweep's own "
                 "frequencies), cascaded with any modelled sections and removed from the measured reflection "
                 "exactly:"),
    "characterized": ("Closed-form de-embedding through a characterized line: the 2-port found from standards placed "
                      "at the far end of the run, used as measured on its own frequencies and, between them, as the "
                      "table below says; removed from the measured reflection exactly:"),
    "other": "Closed-form de-embedding of the line's 2-port from the measured reflection:",
}
"""How the line was removed, by the kinds of the line's parts (:class:`deembed.physics.line.LinePart`)."""


# ------------------------------------------------------------------------------------------ formatting

class _Freq:
    """Frequencies in one unit for the whole report, with as many decimals as the sweep's step resolves."""

    def __init__(self, low_hz: float, high_hz: float, points: int):
        top = max(abs(high_hz), abs(low_hz), 1.0)
        self.unit, self.scale = next(((u, s) for u, s in (("GHz", 1e9), ("MHz", 1e6), ("kHz", 1e3))
                                      if top >= s), ("Hz", 1.0))
        step = (high_hz - low_hz) / (points - 1) if points > 1 else 0.0
        if step > 0:
            self.decimals = min(max(math.ceil(-math.log10(step / self.scale)), 0), 6)
        else:
            self.decimals = 3

    def num(self, hz) -> str:
        return "n/a" if not finite(hz) else f"{hz / self.scale:.{self.decimals}f}"

    def __call__(self, hz) -> str:
        return "n/a" if not finite(hz) else f"{self.num(hz)} {self.unit}"

    def span(self, lo, hi) -> str:
        return f"{self.num(lo)}\u2013{self.num(hi)} {self.unit}"


def _width(hz) -> str:
    """A bandwidth: 404 kHz, 1.2 MHz."""
    if not finite(hz):
        return "n/a"
    if hz == 0:
        return "one point"
    return fmt_freq(hz, 3)


def _share(percent: float) -> str:
    """A share of the transmitter's power: whole percent, or one decimal below 10 %."""
    return f"{percent:.1f}\u00a0%" if percent < 9.95 else f"{percent:.0f}\u00a0%"


# --------------------------------------------------------------------------------------- the sections

def _header(summary: dict, fq: _Freq, run_time: _dt.datetime) -> dict:
    sw = summary["sweep"]
    src = str(sw.get("file", ""))
    name = os.path.basename(src) or src
    pts = sw.get("points")
    step = (sw["high_hz"] - sw["low_hz"]) / (pts - 1) if pts and pts > 1 else None
    comments = [str(c) for c in (sw.get("comments") or []) if str(c).strip()]
    return {
        "name": name,
        "facts": [
            {"label": "Sweep file", "value": name, "mono": True, "below": os.path.dirname(src)},
            {"label": "Points", "value": pts, "muted": f"(step {_width(step)})" if step else None},
            {"label": "Range", "value": fq.span(sw["low_hz"], sw["high_hz"])},
            {"label": "Run", "value": run_time.strftime("%Y-%m-%d %H:%M %Z").strip()},
        ],
        "comments": comments[:MAX_COMMENT_LINES],
        "comments_total": len(comments),
        "comments_more": max(len(comments) - MAX_COMMENT_LINES, 0),
    }


def _glance(summary: dict, fq: _Freq) -> dict:
    """Three headline numbers: lowest SWR at each end and the line's loss."""

    def low(end):
        m = end["min_swr"]
        u = end.get("uncertainty") or {}  # OPTIONAL: none without phase, None without draws
        if finite(m.get("swr")) and u.get("min_swr"):
            text = fmt_number(m["swr"], u["min_swr"])          # "1.20 (1.12 to 1.29)"
            value, _, rest = text.partition(" (")
            return {"swr": value, "sub": f"{rest.rstrip(')')} ({u['coverage']:.0%}), at "
                                         + fmt_freq_interval(m.get("freq_hz"), u.get("min_swr_freq_hz"))}
        return {"swr": num(m.get("swr")), "sub": "at " + fq(m.get("freq_hz"))}

    ml = summary["line"]["matched_loss_db"]
    return {"feedpoint": low(summary["feedpoint"]), "analyzer": low(summary["analyzer"]),
            "loss": f"{num(ml.get('at_low'))}\u2013{num(ml.get('at_high'))} dB"}


def _method(line) -> str:
    kinds = {p.kind for p in getattr(line, "parts", ())}
    if kinds <= {"section"}:
        return METHOD_TEXT["section"]
    if "measured" in kinds and kinds <= {"measured", "section"}:
        return METHOD_TEXT["measured"]
    if "characterized" in kinds:
        return METHOD_TEXT["characterized"]
    return METHOD_TEXT["other"]


def _parts(line) -> list:
    rows = []
    for i, p in enumerate(getattr(line, "parts", ()), 1):
        if p.kind == "section":
            rows.append({"i": i, "label": p.label, "z0": f"{p.z0_ohm:g} \u03a9",
                         "length": f"{p.length_m:.2f} m" if p.length_m is not None else "\u2014",
                         "vf": f"{p.vf:.3g}" if p.vf is not None else "\u2014",
                         "delay": f"{p.delay_s * 1e9:.2f} ns"})
        else:
            rows.append({"i": i, "describe": p.describe()})
    return rows


def _line(summary: dict, corr, fq: _Freq) -> dict:
    ln = summary["line"]
    ml = ln["matched_loss_db"]
    el = ln["electrical_length_deg"]

    def edge(key):
        deg = el.get(key)
        db = ml.get(key)
        return {"loss": num(db), "two_way": num(2 * db) if finite(db) else "n/a",
                "deg": num(deg, ".0f"), "turns": f"({deg / 360:.2f} \u03bb)" if finite(deg) else None}

    return {
        "description": ln.get("description", ""),
        "parts": _parts(corr.line),
        "f0": fq(ln.get("low_hz")), "f1": fq(ln.get("high_hz")),
        "start": edge("at_low"), "stop": edge("at_high"),
        "delay_ns": f"{ln['delay_ns']:.2f}" if finite(ln.get("delay_ns")) else None,
        "method": _method(corr.line),
        "between": _between(ln.get("between_points")),
    }


def _between(bp) -> dict | None:
    """How a characterized run was evaluated between its points."""
    if not bp:
        return None
    err = bp.get("estimated_error")
    big = finite(err) and err > FEEDPOINT_ERROR_WARN
    where = bp.get("estimated_error_at_hz")
    return {
        "method": BETWEEN_TEXT.get(bp.get("method"), bp.get("method", "")),
        "points": (f"{bp.get('points_on_grid', 0)} on characterized points, {bp.get('points_between', 0)} "
                   f"between them, {bp.get('points_beyond', 0)} beyond the range"),
        "error": num(err, ".2g"), "error_at": fmt_freq(where) if finite(where) else None,
        "error_pill": None if bp.get("method") == "exact" else
        {"ok": not big, "text": f"{'above' if big else 'within'} {FEEDPOINT_ERROR_WARN:g}"},
        "error_from": bp.get("error_from", ""),
        "grid_step": fmt_freq(bp.get("grid_step_hz")), "needed_step": fmt_freq(bp.get("needed_step_hz")),
        "two_way_ns": num((bp.get("longest_two_way_delay_s") or 0) * 1e9, ".1f"),
        "margin": f"{bp.get('grid_margin', 0):g}",
        "delay_removed_ns": f"{bp['delay_removed_s'] * 1e9:.2f}" if finite(bp.get("delay_removed_s")) else None,
    }


def _resonances(end: dict, fq: _Freq) -> dict:
    items = [r for r in end.get("resonances") or [] if finite(r.get("freq_hz"))]
    centre = end["min_swr"]["freq_hz"]
    chosen = items
    if len(items) > MAX_RESONANCES:
        key = (lambda r: abs(r["freq_hz"] - centre)) if finite(centre) else (lambda r: r["freq_hz"])
        chosen = sorted(sorted(items, key=key)[:MAX_RESONANCES], key=lambda r: r["freq_hz"])
    u = end.get("uncertainty") or {}
    ivs = u.get("resonances_hz") or []
    lost = u.get("not_resolved") or {}
    shown = []
    for r in chosen:
        j = items.index(r)
        iv = ivs[j] if j < len(ivs) else None
        miss = lost.get(f"resonances_hz[{j}]")
        shown.append({"freq": fmt_freq_interval(r["freq_hz"], iv) if iv else fq(r["freq_hz"]),
                      "lost": f"(not placed in {miss:.0%} of the draws)" if miss is not None else None,
                      "kind": r.get("kind", ""),
                      "r": f", R {r['r_ohm']:.1f} \u03a9" if finite(r.get("r_ohm")) else ""})
    return {"items": shown, "more": len(items) - len(chosen)}


def _spans(end: dict, key: str, freq_range, fq: _Freq) -> dict:
    spans = [s for s in end["swr_spans_hz"].get(key) or [] if s and finite(s[0]) and finite(s[1])]
    cuts = list(end["swr_spans_cut_by_sweep_edge"].get(key) or [])
    if len(cuts) != len(spans):  # older summaries: work the flag out from the sweep's edges
        cuts = [s[0] <= freq_range[0] or s[1] >= freq_range[1] for s in spans]
    order = sorted(range(len(spans)), key=lambda i: spans[i][1] - spans[i][0], reverse=True)
    ivs = ((end.get("uncertainty") or {}).get("swr_spans_hz") or {}).get(key) or []

    def edges(i):
        if i >= len(ivs) or not ivs[i] or not any(ivs[i]):
            return ""
        lo, hi = spans[i]
        return "; ".join(f"{w} edge {fmt_freq_interval(v, iv)}" for w, v, iv in (("low", lo, ivs[i][0]),
                                                                              ("high", hi, ivs[i][1])) if iv)

    shown = [{"span": fq.span(*spans[i]), "width": _width(spans[i][1] - spans[i][0]), "cut": cuts[i],
              "edges": edges(i)} for i in sorted(order[:MAX_SPANS])]
    rest = [spans[i] for i in order[MAX_SPANS:]]
    return {"items": shown, "rest": len(rest), "rest_widest": _width(max(hi - lo for lo, hi in rest)) if rest else None}


def _ends(summary: dict, fq: _Freq) -> dict:
    fp, sh = summary["feedpoint"], summary["analyzer"]
    sw = summary["sweep"]
    rng = (sw["low_hz"], sw["high_hz"])

    def low(end):
        m = end["min_swr"]
        if not finite(m.get("swr")):
            return None
        u = end.get("uncertainty") or {}
        if u.get("min_swr"):
            return {"swr": fmt_number(m["swr"], u["min_swr"]),
                    "at": fmt_freq_interval(m.get("freq_hz"), u.get("min_swr_freq_hz"))}
        return {"swr": f"{m['swr']:.2f}", "at": fq(m.get("freq_hz"))}

    def q(end):
        if not finite(end.get("q")):  # no resolved resonance near the match: neither Q means anything at this end
            return {"imp": None, "imp_na": "n/a (no resonance near the match)", "span": None}
        iv = (end.get("uncertainty") or {}).get("q")
        return {"imp": fmt_number(end["q"], iv, default_decimals=1), "imp_at": fq(end.get("q_freq_hz")),
                "imp_na": "n/a", "span": num(end.get("q_from_span"), ".1f", None)}

    keys = sorted(fp["swr_spans_hz"], key=float)
    return {
        "low": (low(sh), low(fp)),
        "resonances": (_resonances(sh, fq), _resonances(fp, fq)),
        "spans": [{"key": k, "cells": (_spans(sh, k, rng, fq), _spans(fp, k, rng, fq))} for k in keys],
        "q": (q(sh), q(fp)),
    }


def _trust(summary: dict) -> dict:
    """How far the findings can be trusted: the noise, how the intervals were made, what limits them."""
    sw = summary["sweep"]
    u = summary["feedpoint"].get("uncertainty") or {}  # OPTIONAL: none without phase, None without draws
    noise = sw.get("noise_gamma_rms")
    out = {"noise": f"{noise:.2g}" if finite(noise) else None, "mc": None, "limited_by": None}
    if u:
        cal = ((u.get("sources") or {}).get("calibration") or {}).get("preset", "")
        out["mc"] = {"coverage": f"{u['coverage']:.0%}", "draws": u["draws"], "seed": u["seed"], "cal": cal}
        out["limited_by"] = u.get("limited_by") or None
    return out


def _trim(fp: dict, fq: _Freq, step_hz=None) -> dict | None:
    """The trimming callout: the change in the verb's direction with its interval (as the terminal), the
    resonance with the digits its interval supports (else the sweep's step), the target as given."""
    t = fp.get("trim")
    if not t:
        return None
    res = freq_text(t.get("resonance_hz"), trim_resonance_interval(fp, t), step_hz, with_interval=False) \
        if finite(t.get("resonance_hz")) else "n/a"
    to = fmt_freq(t.get("target_hz"), 6)
    if t.get("refused"):
        return {"refused": t["refused"], "from": res, "to": to}
    if not finite(t.get("length_change_percent")):
        return None
    pct = t["length_change_percent"]
    amount, note = trim_amount(t)
    return {"verb": "Lengthen" if pct > 0 else "Shorten", "amount": amount.replace(" %", "\u00a0%"), "from": res,
            "to": to, "note": note[:1].upper() + note[1:] + "." if note else None}


def _bands(summary: dict, fq: _Freq) -> dict | None:
    b = summary.get("bands")
    if not b:
        return None
    sh = {x["name"]: x for x in b.get("analyzer") or []}

    def cell(r):
        if not r:
            return None
        w = r.get("worst_swr")
        return {"worst": "\u221e" if w is None else f"{w:.2f}", "at": fq(r.get("worst_swr_freq_hz")),
                "verdict": None if r.get("verdict") is None else
                {"ok": r["verdict"] == WITHIN, "text": VERDICT_TEXT[r["verdict"]]}}

    rows = []
    for x in b.get("feedpoint") or []:
        cov = x.get("covered_fraction")
        rows.append({"name": x["name"], "edges": fq.span(x["low_hz"], x["high_hz"]),
                     "swept": f"{cov * 100:.0f}\u00a0%" if finite(cov) and cov < 0.999 else None,
                     "cells": (cell(sh.get(x["name"], {})), cell(x))})
    return {"limit": num(b.get("swr_limit"), "g"), "rows": rows}


def _power(summary: dict, fq: _Freq) -> dict | None:
    p = summary.get("power")
    if not p:
        return None
    ant, tx_end = p["at_antenna"], p["at_transmitter"]
    tx = tx_end.get("forward_w")  # the budget's words (deembed budget --json): the transmitter's forward power
    if not finite(tx) or tx <= 0:
        return None
    parts = []
    for label, w, colour in (("into the antenna", ant.get("delivered_w"), FEEDPOINT_COLOUR),
                             ("lost in the line", p["line"]["dissipated_w"], LINE_LOSS_COLOUR),
                             ("back at the transmitter", tx_end.get("reflected_w"), ANALYZER_COLOUR)):
        if finite(w):
            share = max(w / tx * 100, 0.0)
            parts.append({"label": label, "w": f"{w:.1f}", "colour": colour, "width": f"{share:.2f}",
                          "share": _share(share)})
    retuned = p["matched_at_transmitter"]["delivered_w"]
    return {"tx": f"{tx:g}", "at": fq(p.get("at_freq_hz")), "parts": parts,
            "retuned": f"{retuned:.1f}" if finite(retuned) else None}


def _render_png(key: str, corr, table: dict, summary: dict) -> bytes | None:
    """A plot rendered in memory, for a report written without the PNG files."""
    import io

    keys = summary["feedpoint"]["swr_spans_hz"]
    fig = plots.correction_plot(key, corr, table, tuple(float(k) for k in keys) or (2.0,))
    if fig is None:
        return None
    buf = io.BytesIO()
    fig.savefig(buf, dpi=110, format="png")
    return buf.getvalue()


def _figures(corr, table: dict, summary: dict, written: dict) -> list:
    figs = []
    for key, caption in PLOTS:
        uri = file_data_uri((written or {}).get(key))
        if uri is None and (key != "budget_png" or summary.get("power")):
            data = _render_png(key, corr, table, summary)
            uri = png_data_uri(data) if data is not None else None
        if uri is not None:
            figs.append({"uri": uri, "alt": caption.split(";")[0].split(".")[0], "caption": caption})
    return figs


def _along(summary: dict, written: dict) -> dict | None:
    """The "along the line" section: where reflections sit when the sweep resolves the line, otherwise the
    one line saying what sweep would."""
    info = summary.get("along_the_line")
    if not info:
        return None

    def cap(t):
        t = str(t or "")
        return t[:1].upper() + t[1:]

    if not info["resolves_line"]:
        return {"resolves": False, "text": cap(info["text"])}
    rows = [{"where": f"{r['distance_m']:.1f} m" if r.get("distance_m") is not None else f"{r['one_way_delay_ns']:.1f} ns",
             "seen": f"{r['return_loss_db']:.1f} dB",
             "at_point": f"{r['return_loss_at_point_db']:.1f} dB" if r.get("return_loss_at_point_db") is not None
             else "n/a",
             "kind": r.get("kind") or ""} for r in info.get("reflections", [])]
    return {"resolves": True, "text": cap(info["text"]), "mode": info.get("mode", "band-pass"),
            "length": cap((info["length"] or {}).get("verdict", "")), "rows": rows,
            "figure": file_data_uri(written.get("along_png"))}


def report_html(corr, summary: dict, table: dict | None = None, written: dict | None = None,
                *, run_time: _dt.datetime | None = None) -> str:
    """The report as one HTML string (see :func:`write_report`)."""
    run_time = run_time or _dt.datetime.now().astimezone()
    sw = summary["sweep"]
    fq = _Freq(sw["low_hz"], sw["high_hz"], int(sw.get("points") or 0))
    written = written or {}
    return render_page(
        "report.html.j2",
        header=_header(summary, fq, run_time),
        glance=_glance(summary, fq),
        warnings=[str(w) for w in summary.get("warnings") or []],
        line=_line(summary, corr, fq),
        ends=_ends(summary, fq),
        trust=_trust(summary),
        trim=_trim(summary["feedpoint"], fq, sweep_step_hz(sw)),
        bands=_bands(summary, fq),
        power=_power(summary, fq),
        figures=_figures(corr, table or {}, summary, written),
        along=_along(summary, written),
        other_files=[os.path.basename(str(p)) for k, p in written.items() if k != "report_html"],
        run_time=run_time.strftime("%Y-%m-%d %H:%M %Z").strip(),
    )


def write_report(path, corr, summary: dict, table: dict | None, written: dict | None) -> None:
    """Write the self-contained HTML report of one correction, atomically.

    Parameters
    ----------
    path : str or os.PathLike
        The report's file name (``<stem>.report.html``).
    corr : deembed.physics.deembedding.Correction
        The correction (its line is described in the report; plots missing from ``written`` are
        rendered from it in memory).
    summary : dict
        From :func:`deembed.jobs.correct.analyse` (``sweep``, ``line``, ``feedpoint``, ``analyzer``,
        ``warnings`` and optionally ``bands``, ``power``, ``feedpoint.trim``).
    table : dict
        Per-frequency columns (for the power-budget plot when it must be rendered here).
    written : dict
        Output key -> path of the files already written; the PNG plots among them are embedded.
    """

    write_text_atomic(path, report_html(corr, summary, table, written))
