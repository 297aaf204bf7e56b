"""The HTML report: one self-contained file a technician can open, print or mail.

Everything the report shows is in the one file: plots are embedded as base64 PNG data URIs, the
style sheet is inline and nothing refers to the network (no external style sheets, scripts or fonts).
Every string that comes from a file or from the user (file names, file comments, line descriptions,
band names, warnings) passes through :func:`html.escape` before it is placed in the page.

Colours follow :mod:`deembed.plots`: slate for the analyzer end, copper for the feedpoint.
"""
from __future__ import annotations

import base64
import datetime as _dt
import math
import os
from html import escape

from . import plots
from ..io.atomic import write_text_atomic
from .safety import SAFETY_FOOT, SAFETY_ITEMS
from .plots import FEEDPOINT_COLOUR, GRID_COLOUR, ANALYZER_COLOUR
from ..base.units import fmt_freq
from ..base.verdicts import TEXT as VERDICT_TEXT, WITHIN
from .intervals import fmt_freq_interval, fmt_number

LINE_LOSS_COLOUR = "#8b6c3e"  # the "lost in the line" trace of plots.budget_plot
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


# ------------------------------------------------------------------------------------------ formatting

def _e(value) -> str:
    """Escape anything for HTML text or a quoted attribute."""
    return escape(str(value), quote=True)


def _finite(x) -> bool:
    return x is not None and isinstance(x, (int, float)) and math.isfinite(x)


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
        return "n/a" if not _finite(hz) else f"{hz / self.scale:.{self.decimals}f}"

    def __call__(self, hz) -> str:
        return "n/a" if not _finite(hz) else f"{self.num(hz)} {self.unit}"

    def span(self, lo, hi) -> str:
        return f"{self.num(lo)}&ndash;{self.num(hi)} {self.unit}"


def _width(hz) -> str:
    """A bandwidth: 404 kHz, 1.2 MHz."""
    if not _finite(hz):
        return "n/a"
    if hz == 0:
        return "one point"
    return fmt_freq(hz, 3)


def _num(x, fmt: str = ".2f", none: str = "n/a") -> str:
    return none if not _finite(x) else format(x, fmt)


# --------------------------------------------------------------------------------------- the sections

def _header(summary: dict, fq: _Freq, run_time: _dt.datetime) -> str:
    sw = summary["sweep"]
    src = str(sw.get("file", ""))
    name = os.path.basename(src) or src
    folder = os.path.dirname(src)
    pts = sw.get("points")
    step = (sw["high_hz"] - sw["low_hz"]) / (pts - 1) if pts and pts > 1 else None
    facts = [
        ("Sweep file", f'<span class="mono">{_e(name)}</span>'
                       + (f'<br><span class="muted small mono">{_e(folder)}</span>' if folder else "")),
        ("Points", f"{_e(pts)}" + (f' <span class="muted">(step {_e(_width(step))})</span>' if step else "")),
        ("Range", f"{fq.span(sw['low_hz'], sw['high_hz'])}"),
        ("Run", _e(run_time.strftime("%Y-%m-%d %H:%M %Z").strip())),
    ]
    cells = "".join(f"<div><dt>{k}</dt><dd>{v}</dd></div>" for k, v in facts)
    comments = [str(c) for c in (sw.get("comments") or []) if str(c).strip()]
    note = ""
    if comments:
        shown = comments[:MAX_COMMENT_LINES]
        more = len(comments) - len(shown)
        body = "\n".join(_e(c) for c in shown) + (f"\n… {more} more line(s)" if more > 0 else "")
        note = (f'<details class="comments"><summary>Comments in the sweep file ({len(comments)})</summary>'
                f"<pre>{body}</pre></details>")
    return f"""
<header class="masthead">
  <p class="kicker">deembed &middot; feedpoint report</p>
  <h1>{_e(name)}</h1>
  <p class="lede">What the antenna looks like at its feedpoint, once the feed line between it and the analyzer
  is taken out of the measurement.</p>
  <dl class="facts">{cells}</dl>
  {note}
</header>"""


def _glance(summary: dict, fq: _Freq) -> str:
    """Three headline numbers: lowest SWR at each end and the line's loss."""
    fp, sh, ln = summary["feedpoint"], summary["analyzer"], summary["line"]

    def low(end):
        m = end.get("min_swr") or {}
        u = end.get("uncertainty") or {}
        if _finite(m.get("swr")) and u.get("min_swr"):
            text = fmt_number(m["swr"], u["min_swr"])          # "1.20 (1.12 to 1.29)"
            value, _, rest = text.partition(" (")
            return (_e(value), _e(f"{rest.rstrip(')')} ({u['coverage']:.0%}), at ")
                    + _e(fmt_freq_interval(m.get("freq_hz"), u.get("min_swr_freq_hz"))))
        return _num(m.get("swr")), "at " + fq(m.get("freq_hz"))

    fp_s, fp_f = low(fp)
    sh_s, sh_f = low(sh)
    ml = ln.get("matched_loss_db") or {}
    return f"""
<div class="glance">
  <div class="stat feed"><span class="label">Lowest SWR at the feedpoint</span>
    <span class="value">{fp_s}</span><span class="sub">{fp_f}</span></div>
  <div class="stat analyzer"><span class="label">Lowest SWR seen at the analyzer</span>
    <span class="value">{sh_s}</span><span class="sub">{sh_f}</span></div>
  <div class="stat line"><span class="label">Line loss, one way (matched)</span>
    <span class="value">{_num(ml.get('at_low'))}&ndash;{_num(ml.get('at_high'))} dB</span>
    <span class="sub">across the sweep</span></div>
</div>"""


def _warnings(summary: dict) -> str:
    items = [str(w) for w in summary.get("warnings") or []]
    if not items:
        return """
<section id="warnings" class="warnings none">
  <h2>Warnings</h2>
  <p>None: the sweep and the correction raised no warnings.</p>
</section>"""
    lis = "".join(f"<li>{_e(w)}</li>" for w in items)
    n = len(items)
    return f"""
<section id="warnings" class="warnings" role="alert">
  <h2>Warnings <span class="count">{n}</span></h2>
  <p>Read these before trusting the numbers below.</p>
  <ul>{lis}</ul>
</section>"""


def _method(line) -> str:
    kinds = {type(p).__name__ for p in getattr(line, "parts", ())}
    formula = ('<p class="formula">&Gamma;<sub>feed</sub> = (&Gamma;<sub>meas</sub> &minus; S<sub>11</sub>) / '
               '(S<sub>22</sub> (&Gamma;<sub>meas</sub> &minus; S<sub>11</sub>) + S<sub>21</sub>S<sub>12</sub>)</p>')
    if kinds <= {"Section"}:
        how = ("Closed-form de-embedding through a physical model. Each section is a uniform transmission line "
               "(RLGC model: characteristic impedance, delay and a loss that grows with frequency); the sections "
               "are cascaded into one 2-port at the sweep's own frequencies and removed from the measured "
               "reflection exactly:")
    elif "MeasuredTwoPort" in kinds and kinds <= {"MeasuredTwoPort", "Section"}:
        how = ("Closed-form de-embedding through the line's measured 2-port (S-parameters taken on the sweep's own "
               "frequencies), cascaded with any modelled sections and removed from the measured reflection exactly:")
    elif "CharacterizedLine" in kinds:
        how = ("Closed-form de-embedding through a characterized line: the 2-port found from standards placed at "
               "the far end of the run, used as measured on its own frequencies and, between them, as the table "
               "below says; removed from the measured reflection exactly:")
    else:
        how = "Closed-form de-embedding of the line's 2-port from the measured reflection:"
    return f"<p>{how}</p>{formula}"


def _parts_table(line) -> str:
    rows = []
    for i, p in enumerate(getattr(line, "parts", ()), 1):
        if type(p).__name__ == "Section":
            length = f"{p.length_m:.2f} m" if getattr(p, "length_m", None) is not None else "&mdash;"
            vf = f"{p.vf:.3g}" if getattr(p, "vf", None) is not None else "&mdash;"
            rows.append(f"<tr><td>{i}</td><td>{_e(p.label)}</td><td class='n'>{p.z0_ohm:g} &Omega;</td>"
                        f"<td class='n'>{length}</td><td class='n'>{vf}</td>"
                        f"<td class='n'>{p.delay_s * 1e9:.2f} ns</td></tr>")
        else:
            rows.append(f"<tr><td>{i}</td><td colspan='5'>{_e(p.describe())}</td></tr>")
    if not rows:
        return ""
    return ("<table class='grid parts'><thead><tr><th>#</th><th>Section (analyzer end first)</th>"
            "<th class='n'>Z0</th><th class='n'>Length</th><th class='n'>VF</th><th class='n'>Delay</th></tr>"
            f"</thead><tbody>{''.join(rows)}</tbody></table>")


def _line(summary: dict, corr, fq: _Freq) -> str:
    ln = summary["line"]
    ml = ln.get("matched_loss_db") or {}
    el = ln.get("electrical_length_deg") or {}
    f0, f1 = ln.get("low_hz"), ln.get("high_hz")

    def turns(deg):
        return "" if not _finite(deg) else f' <span class="muted">({deg / 360:.2f} &lambda;)</span>'

    def two_way(db):
        return _num(2 * db) if _finite(db) else "n/a"

    delay = f"<p class='muted'>Total one-way delay {ln['delay_ns']:.2f} ns.</p>" if _finite(ln.get("delay_ns")) else ""
    return f"""
<section id="line">
  <h2>Line removed</h2>
  <p class="description"><span class="label">As described</span>{_e(ln.get('description', ''))}</p>
  {_parts_table(corr.line)}
  <table class="grid edges">
    <thead><tr><th></th><th class="n">at {fq(f0)}</th><th class="n">at {fq(f1)}</th></tr></thead>
    <tbody>
      <tr><th>Matched loss, one way</th><td class="n">{_num(ml.get('at_low'))} dB</td>
          <td class="n">{_num(ml.get('at_high'))} dB</td></tr>
      <tr><th>Matched loss, there and back</th><td class="n">{two_way(ml.get('at_low'))} dB</td>
          <td class="n">{two_way(ml.get('at_high'))} dB</td></tr>
      <tr><th>Electrical length</th><td class="n">{_num(el.get('at_low'), '.0f')}&deg;{turns(el.get('at_low'))}</td>
          <td class="n">{_num(el.get('at_high'), '.0f')}&deg;{turns(el.get('at_high'))}</td></tr>
    </tbody>
  </table>
  {delay}
  <h3>How it was removed</h3>
  {_method(corr.line)}
  {_between(ln.get("between_points"))}
</section>"""


def _between(bp) -> str:
    """The line section's table on how a characterized run was evaluated between its points."""
    if not bp:
        return ""
    from ..analysis.between import METHOD_TEXT
    from ..physics.between import FEEDPOINT_ERROR_WARN

    err = bp.get("estimated_error")
    big = _finite(err) and err > FEEDPOINT_ERROR_WARN
    pill = (f" <span class='pill {'fail' if big else 'ok'}'>{'above' if big else 'within'} "
            f"{FEEDPOINT_ERROR_WARN:g}</span>") if bp.get("method") != "exact" else ""
    where = bp.get("estimated_error_at_hz")
    at = f" (largest at {_e(fmt_freq(where))})" if _finite(where) else ""
    rows = [("Method", _e(METHOD_TEXT.get(bp.get("method"), bp.get("method", "")))),
            ("Sweep points", f"{bp.get('points_on_grid', 0)} on characterized points, {bp.get('points_between', 0)} "
                             f"between them, {bp.get('points_beyond', 0)} beyond the range"),
            ("Estimated error at the feedpoint", f"up to {_num(err, '.2g')} in |&Gamma;|{at}{pill}"
                                                 f"<br><span class='muted'>from {_e(bp.get('error_from', ''))}</span>"),
            ("Characterization step", f"{_e(fmt_freq(bp.get('grid_step_hz')))}; this run needs "
                                      f"{_e(fmt_freq(bp.get('needed_step_hz')))} or less, that is 1/(2 &times; "
                                      f"{_num((bp.get('longest_two_way_delay_s') or 0) * 1e9, '.1f')} ns) for its "
                                      f"longest two-way delay, with a margin of {bp.get('grid_margin', 0):g}")]
    if _finite(bp.get("delay_removed_s")):
        rows.append(("Delay removed before interpolating", f"{bp['delay_removed_s'] * 1e9:.2f} ns one way"))
    body = "".join(f"<tr><th>{k}</th><td>{v}</td></tr>" for k, v in rows)
    return (f"<h3>Between characterized points</h3><table class='grid between'><tbody>{body}</tbody></table>")


def _resonances_html(end: dict, fq: _Freq) -> str:
    items = [r for r in end.get("resonances") or [] if _finite(r.get("freq_hz"))]
    if not items:
        return '<span class="muted">none in the sweep</span>'
    centre = (end.get("min_swr") or {}).get("freq_hz")
    chosen = items
    if len(items) > MAX_RESONANCES:
        key = (lambda r: abs(r["freq_hz"] - centre)) if _finite(centre) else (lambda r: r["freq_hz"])
        chosen = sorted(sorted(items, key=key)[:MAX_RESONANCES], key=lambda r: r["freq_hz"])
    lis = []
    u = end.get("uncertainty") or {}
    ivs = u.get("resonances_hz") or []
    lost = u.get("not_resolved") or {}
    for r in chosen:
        r_ohm = f", R {r['r_ohm']:.1f} &Omega;" if _finite(r.get("r_ohm")) else ""
        j = items.index(r)
        iv = ivs[j] if j < len(ivs) else None
        where = _e(fmt_freq_interval(r["freq_hz"], iv)) if iv else fq(r["freq_hz"])
        if f"resonances_hz[{j}]" in lost:
            where += f" <span class='muted'>(not placed in {lost[f'resonances_hz[{j}]']:.0%} of the draws)</span>"
        lis.append(f"<li>{where} <span class='kind'>{_e(r.get('kind', ''))}{r_ohm}</span></li>")
    more = len(items) - len(chosen)
    tail = (f"<li class='muted'>+{more} more crossing{'s' if more > 1 else ''} further from the best match"
            "</li>") if more > 0 else ""
    return f"<ul class='plain'>{''.join(lis)}{tail}</ul>"


def _spans_html(end: dict, key: str, freq_range, fq: _Freq) -> str:
    spans = [s for s in (end.get("swr_spans_hz") or {}).get(key) or [] if s and _finite(s[0]) and _finite(s[1])]
    cuts = list((end.get("swr_spans_cut_by_sweep_edge") or {}).get(key) or [])
    if len(cuts) != len(spans):  # older summaries: work the flag out from the sweep's edges
        cuts = [s[0] <= freq_range[0] or s[1] >= freq_range[1] for s in spans]
    if not spans:
        return '<span class="muted">nowhere in the sweep</span>'
    order = sorted(range(len(spans)), key=lambda i: spans[i][1] - spans[i][0], reverse=True)
    shown = sorted(order[:MAX_SPANS])
    lis = []
    for i in shown:
        lo, hi = spans[i]
        cut = (' <span class="tag edge" title="the span reaches the end of the sweep; the antenna\'s real span '
               'is wider">cut by sweep edge</span>') if cuts[i] else ""
        lis.append(f"<li>{fq.span(lo, hi)} <span class='muted'>({_width(hi - lo)})</span>{cut}</li>")
    rest = [spans[i] for i in order[MAX_SPANS:]]
    tail = ""
    if rest:
        widest = max(hi - lo for lo, hi in rest)
        tail = (f"<li class='muted'>+{len(rest)} narrower span{'s' if len(rest) > 1 else ''} "
                f"(each {_width(widest)} or less)</li>")
    return f"<ul class='plain'>{''.join(lis)}{tail}</ul>"


def _q_html(end: dict, fq: _Freq) -> tuple[str, str]:
    q, qf, qb = end.get("q"), end.get("q_freq_hz"), end.get("q_from_span")
    if not _finite(q):  # no resolved resonance near the match: neither Q means anything at this end
        na = '<span class="muted">n/a (no resonance near the match)</span>'
        return na, '<span class="muted">n/a</span>'
    iv = (end.get("uncertainty") or {}).get("q")
    q_imp = f"{_e(fmt_number(q, iv, default_decimals=1))} <span class='muted'>at {fq(qf)}</span>"
    q_bw = f"{qb:.1f}" if _finite(qb) else '<span class="muted">n/a</span>'
    return q_imp, q_bw


def _trust(summary: dict) -> str:
    """How far the findings can be trusted: the noise, how the intervals were made, what limits them."""
    sw = summary["sweep"]
    u = (summary.get("feedpoint") or {}).get("uncertainty") or {}
    noise = sw.get("noise_gamma_rms")
    parts = []
    if _finite(noise):
        parts.append(f"The sweep's noise, estimated from the sweep itself, is {noise:.2g} rms in &Gamma; at the "
                     "analyzer.")
    if u:
        cal = ((u.get("sources") or {}).get("calibration") or {}).get("preset", "")
        parts.append(f"Intervals beside the values hold the true value with {u['coverage']:.0%} probability: "
                     f"{u['draws']} Monte Carlo draws (JCGM 101:2008, seed {u['seed']}) of the analyzer's noise and "
                     f"calibration error{' (' + _e(cal) + ')' if cal else ''} and of the line's tolerances.")
        if u.get("limited_by"):
            parts.append(f"<strong>What limits this result:</strong> {_e(u['limited_by'])}.")
    else:
        parts.append("No uncertainty intervals were worked out for this run (--draws 0).")
    return f"<p class='small' id='trust'>{' '.join(parts)}</p>"


def _findings(summary: dict, fq: _Freq) -> str:
    fp, sh = summary["feedpoint"], summary["analyzer"]
    sw = summary["sweep"]
    rng = (sw["low_hz"], sw["high_hz"])
    rows = []

    def row(label, a, b, hint=""):
        h = f"<span class='hint'>{hint}</span>" if hint else ""
        rows.append(f"<tr><th scope='row'>{label}{h}</th><td class='analyzer'>{a}</td><td class='feed'>{b}</td></tr>")

    def low(end):
        m = end.get("min_swr") or {}
        if not _finite(m.get("swr")):
            return '<span class="muted">n/a</span>'
        u = end.get("uncertainty") or {}
        if u.get("min_swr"):
            return (f"<strong>{_e(fmt_number(m['swr'], u['min_swr']))}</strong> <span class='muted'>at "
                    f"{_e(fmt_freq_interval(m.get('freq_hz'), u.get('min_swr_freq_hz')))}</span>")
        return f"<strong>{m['swr']:.2f}</strong> <span class='muted'>at {fq(m.get('freq_hz'))}</span>"

    row("Lowest SWR", low(sh), low(fp))
    row("Resonances", _resonances_html(sh, fq), _resonances_html(fp, fq), "where X crosses zero")
    keys = list((fp.get("swr_spans_hz") or {}).keys())
    for key in sorted(keys, key=float):
        row(f"SWR &le; {_e(key)}", _spans_html(sh, key, rng, fq), _spans_html(fp, key, rng, fq))
    qi_sh, qb_sh = _q_html(sh, fq)
    qi_fp, qb_fp = _q_html(fp, fq)
    row("Q from the impedance", qi_sh, qi_fp, "slope of Z at the resonance nearest the best match")
    row("Q from the 2:1 span", qb_sh, qb_fp, "assumes a match at the centre; not given when the sweep cuts the span")
    table = f"""
<table class="ends">
  <colgroup><col class="label"><col><col></colgroup>
  <thead><tr><th></th><th class="analyzer">At the analyzer <small>measured</small></th>
  <th class="feed">At the feedpoint <small>corrected</small></th></tr></thead>
  <tbody>{''.join(rows)}</tbody>
</table>"""
    return f"""
<section id="findings">
  <h2>Findings at both ends</h2>
  <p>The left column is what the analyzer saw through the line; the right column is the antenna itself.
  A lossy line makes the analyzer end look better matched and broader than the antenna really is.</p>
  {_trust(summary)}
  {table}
  {_trim(fp, fq)}
  {_bands(summary, fq)}
  {_power(summary, fq)}
</section>"""


def _trim(fp: dict, fq: _Freq) -> str:
    t = fp.get("trim")
    if not t:
        return ""
    if t.get("refused"):
        return f"""
<div class="callout trim">
  <h3>Trimming</h3>
  <p><strong>No trimming advice</strong> for the target {fq(t.get('target_hz'))} from the resonance at
  {fq(t.get('resonance_hz'))}: {_e(t['refused'])}.</p>
</div>"""
    if not _finite(t.get("length_change_percent")):
        return ""
    pct = t["length_change_percent"]
    verb = "Lengthen" if pct > 0 else "Shorten"
    iv = t.get("length_change_percent_interval")
    if iv and iv[0] * iv[1] > 0:
        iv = sorted(abs(x) for x in iv)
    amount = _e(fmt_number(abs(pct), iv, default_decimals=1, unit="%")).replace(" %", "&nbsp;%")
    return f"""
<div class="callout trim">
  <h3>Trimming</h3>
  <p><strong>{verb} the element by about {amount}</strong> to move its resonance from
  {fq(t.get('resonance_hz'))} to the target {fq(t.get('target_hz'))}.</p>
  <p class="small">A first estimate for a simple wire or element, from resonance scaling as one over length.
  Nearby objects, end effects, traps and loading change it: approach the length in small cuts and sweep again
  after each.</p>
</div>"""


def _pill(verdict) -> str:
    if verdict is None:
        return ""
    cls = "ok" if verdict == WITHIN else "fail"
    return f'<span class="pill {cls}">{VERDICT_TEXT[verdict]}</span>'


def _bands(summary: dict, fq: _Freq) -> str:
    b = summary.get("bands")
    if not b:
        return ""
    sh = {x["name"]: x for x in b.get("analyzer") or []}
    rows = []
    for x in b.get("feedpoint") or []:
        y = sh.get(x["name"], {})
        cov = x.get("covered_fraction")
        part = (f"<span class='tag edge'>swept {cov * 100:.0f}&nbsp;%</span>"
                if _finite(cov) and cov < 0.999 else "")

        def cell(r):
            if not r:
                return "<td class='n muted'>n/a</td>"
            w = r.get("worst_swr")
            val = "&infin;" if w is None else f"{w:.2f}"
            return (f"<td class='n'>{val} <span class='muted small'>at {fq(r.get('worst_swr_freq_hz'))}</span> "
                    f"{_pill(r.get('verdict'))}</td>")

        rows.append(f"<tr><th scope='row'>{_e(x['name'])}</th><td>{fq.span(x['low_hz'], x['high_hz'])} {part}</td>"
                    f"{cell(y)}{cell(x)}</tr>")
    if not rows:
        body = "<p class='muted'>None of the listed bands falls inside the sweep.</p>"
    else:
        body = ("<table class='grid bands'><thead><tr><th>Band</th><th>Edges</th>"
                "<th class='n analyzer'>Worst SWR at the analyzer</th><th class='n feed'>Worst SWR at the feedpoint</th>"
                f"</tr></thead><tbody>{''.join(rows)}</tbody></table>")
    return f"""
<div class="block">
  <h3>Bands <span class="muted small">(limit {_num(b.get('swr_limit'), 'g')}:1)</span></h3>
  {body}
  <p class="small muted">Band edges come from the band list used; they depend on licence and region.
  Only the swept part of a band is checked.</p>
</div>"""


def _power(summary: dict, fq: _Freq) -> str:
    p = summary.get("power")
    if not p or not _finite(p.get("transmitter_w")):
        return ""
    tx = p["transmitter_w"]
    parts = [("into the antenna", p.get("delivered_w"), FEEDPOINT_COLOUR),
             ("lost in the line", p.get("line_dissipated_w"), LINE_LOSS_COLOUR),
             ("back at the transmitter", p.get("reflected_at_tx_w"), ANALYZER_COLOUR)]
    segs, legend = [], []
    for label, w, colour in parts:
        if not _finite(w):
            continue
        share = max(w / tx * 100, 0.0)
        segs.append(f'<span style="width:{share:.2f}%;background:{colour}" title="{_e(label)}"></span>')
        legend.append(f'<li><i style="background:{colour}"></i><strong>{w:.1f} W</strong> {_e(label)} '
                      f'<span class="muted">({_share(share)})</span></li>')
    retuned = p.get("retuned_delivered_w")
    extra = (f"<p class='small'>With a matching unit at the transmitter end sending the returned power back up "
             f"the line, about <strong>{retuned:.1f} W</strong> reaches the antenna.</p>") if _finite(retuned) else ""
    return f"""
<div class="block">
  <h3>Power budget <span class="muted small">({tx:g} W at {fq(p.get('at_freq_hz'))}, the feedpoint's best match)</span></h3>
  <div class="bar" role="img" aria-label="power budget">{''.join(segs)}</div>
  <ul class="legend">{''.join(legend)}</ul>
  {extra}
</div>"""


def _share(percent: float) -> str:
    """A share of the transmitter's power: whole percent, or one decimal below 10 %."""
    return f"{percent:.1f}&nbsp;%" if percent < 9.95 else f"{percent:.0f}&nbsp;%"


def _png_data_uri(data: bytes) -> str:
    return "data:image/png;base64," + base64.b64encode(data).decode("ascii")


def _render_png(key: str, corr, table: dict, summary: dict) -> bytes | None:
    """A plot rendered in memory, for a report written without the PNG files."""
    import io


    keys = (summary.get("feedpoint") or {}).get("swr_spans_hz") or {}
    fig = plots.correction_plot(key, corr, table, tuple(float(k) for k in keys) or (2.0,))
    if fig is None:
        return None
    buf = io.BytesIO()
    fig.savefig(buf, dpi=110, format="png")
    return buf.getvalue()


def _plots(corr, table: dict, summary: dict, written: dict) -> str:
    figs = []
    for key, caption in PLOTS:
        data = None
        path = (written or {}).get(key)
        if path and os.path.isfile(path):
            with open(path, "rb") as fh:
                data = fh.read()
        elif key != "budget_png" or summary.get("power"):
            data = _render_png(key, corr, table, summary)
        if data is None:
            continue
        alt = caption.split(";")[0].split(".")[0]
        figs.append(f'<figure class="fig"><img src="{_png_data_uri(data)}" alt="{_e(alt)}">'
                    f"<figcaption>{_e(caption)}</figcaption></figure>")
    return f"""
<section id="plots">
  <h2>Plots</h2>
  <div class="figs">{''.join(figs)}</div>
</section>"""


def _along(summary: dict, written: dict) -> str:
    """The "along the line" section: where reflections sit when the sweep resolves the line, otherwise the
    one line saying what sweep would."""
    info = summary.get("along_the_line")
    if not info:
        return ""
    if not info.get("resolves_line"):
        return f"""
<section id="along">
  <h2>Along the line</h2>
  <p>{_e(info.get("text", ""))}</p>
</section>"""
    rows = "".join(
        "<tr><td>{}</td><td>{}</td><td>{}</td><td>{}</td></tr>".format(
            _e(f"{r['distance_m']:.1f} m" if r.get("distance_m") is not None else f"{r['one_way_delay_ns']:.1f} ns"),
            _e(f"{r['return_loss_db']:.1f} dB"),
            _e(f"{r['return_loss_at_point_db']:.1f} dB" if r.get("return_loss_at_point_db") is not None else "n/a"),
            _e(r.get("kind") or ""))
        for r in info.get("reflections", []))
    length = (info.get("length") or {}).get("verdict", "")
    fig = ""
    path = written.get("along_png")
    if path and os.path.isfile(path):
        with open(path, "rb") as fh:
            fig = (f'<figure class="fig"><img src="{_png_data_uri(fh.read())}" alt="Reflection along the line">'
                   "<figcaption>Reflection along the line, as seen at the analyzer (dashed) and at its place "
                   "(line loss taken off); the dotted line is the described length.</figcaption></figure>")
    return f"""
<section id="along">
  <h2>Along the line</h2>
  <p>{_e(info.get("text", "")[:1].upper() + info.get("text", "")[1:])}; {_e(info.get("mode", "band-pass"))} transform
     of the analyzer-end sweep. {_e(length[:1].upper() + length[1:])}.</p>
  <table><thead><tr><th>where</th><th>return loss seen</th><th>at the point</th><th>likely</th></tr></thead>
  <tbody>{rows}</tbody></table>
  {fig}
  <p class="small">See <code>deembed locate</code> for the full look along the line, gating and the low-pass view.</p>
</section>"""


def _safety() -> str:
    lis = "".join(f"<li><strong>{_e(h)}.</strong> {_e(t)}</li>" for h, _, t in SAFETY_ITEMS)
    return f"""
<section id="safety" class="safety">
  <h2>Safety</h2>
  <ul>{lis}</ul>
  <p class="small">{_e(SAFETY_FOOT)}</p>
</section>"""


def _footer(written: dict, run_time: _dt.datetime) -> str:
    from .. import __version__

    files = [os.path.basename(str(p)) for k, p in (written or {}).items() if k != "report_html"]
    listed = ""
    if files:
        listed = ("<p>Other results beside this file: "
                  + ", ".join(f'<span class="mono">{_e(f)}</span>' for f in files) + ".</p>")
    return f"""
<footer>
  {listed}
  <p>Made by deembed {_e(__version__)} on {_e(run_time.strftime('%Y-%m-%d %H:%M %Z').strip())}.
  The corrected values are only as good as the line description and the analyzer's calibration.</p>
</footer>"""


CSS = """
:root { --slate: @SLATE@; --copper: @COPPER@; --rule: @RULE@; --lossline: @LOSS@;
  --ink: #22262b; --muted: #646b73; --paper: #fbfaf7; --card: #ffffff; --ok: #2f7d6d; --bad: #b3261e;
  --warn-bg: #fff4e0; --warn-edge: #c27c0e; }
* { box-sizing: border-box; }
html { background: var(--paper); }
body { margin: 0 auto; max-width: 1060px; padding: 28px 32px 48px; color: var(--ink);
  font: 15px/1.5 system-ui, -apple-system, "Segoe UI", Roboto, "Helvetica Neue", Arial, sans-serif;
  font-variant-numeric: tabular-nums; }
h1, h2, h3 { line-height: 1.2; margin: 0; }
h1 { font-size: 30px; font-weight: 700; letter-spacing: -0.01em; word-break: break-all; }
h2 { font-size: 21px; margin: 0 0 12px; padding-bottom: 6px; border-bottom: 2px solid var(--ink); }
h3 { font-size: 16px; margin: 22px 0 8px; }
section { margin: 34px 0 0; }
p { margin: 6px 0 10px; }
.mono { font-family: ui-monospace, "SFMono-Regular", Menlo, Consolas, "Liberation Mono", monospace; font-size: 0.93em; }
.muted { color: var(--muted); }
.small { font-size: 13px; }
.masthead { border-bottom: 1px solid var(--rule); padding-bottom: 18px; }
.kicker { margin: 0 0 4px; text-transform: uppercase; letter-spacing: 0.09em; font-size: 12px; font-weight: 600;
  color: var(--copper); }
.lede { color: var(--muted); margin: 6px 0 16px; max-width: 46em; }
.facts { display: grid; grid-template-columns: 2fr 1.1fr 1.2fr 1.3fr; gap: 12px 22px; margin: 0; }
.facts dt { font-size: 12px; text-transform: uppercase; letter-spacing: 0.06em; color: var(--muted); }
.facts dd { margin: 2px 0 0; font-weight: 500; word-break: break-word; }
.comments { margin-top: 14px; font-size: 13px; }
.comments summary { cursor: pointer; color: var(--muted); }
.comments pre { background: var(--card); border: 1px solid var(--rule); padding: 8px 10px; margin: 6px 0 0;
  white-space: pre-wrap; word-break: break-word; }
.glance { display: grid; grid-template-columns: repeat(3, 1fr); gap: 14px; margin: 22px 0 0; }
.stat { background: var(--card); border: 1px solid var(--rule); border-top: 4px solid var(--slate);
  border-radius: 6px; padding: 12px 16px; display: flex; flex-direction: column; }
.stat.feed { border-top-color: var(--copper); }
.stat.line { border-top-color: var(--lossline); }
.stat .label { font-size: 12px; text-transform: uppercase; letter-spacing: 0.05em; color: var(--muted); }
.stat .value { font-size: 28px; font-weight: 700; line-height: 1.25; }
.stat.feed .value { color: var(--copper); }
.stat.analyzer .value { color: var(--slate); }
.stat .sub { color: var(--muted); font-size: 13px; }
.warnings { background: var(--warn-bg); border: 1px solid #efd4a6; border-left: 6px solid var(--warn-edge);
  border-radius: 6px; padding: 14px 18px 8px; margin-top: 22px; }
.warnings h2 { border: 0; padding: 0; margin: 0 0 4px; color: #7a4600; font-size: 18px; }
.warnings .count { display: inline-block; min-width: 1.6em; padding: 0 6px; border-radius: 10px; text-align: center;
  background: var(--warn-edge); color: #fff; font-size: 13px; vertical-align: middle; }
.warnings ul { margin: 6px 0 8px; padding-left: 20px; }
.warnings li { margin: 4px 0; }
.warnings.none { background: transparent; border: 1px solid var(--rule); border-left: 6px solid var(--ok); }
.warnings.none h2 { color: var(--ok); }
.description { margin: 0 0 4px; }
.description .label { font-size: 12px; text-transform: uppercase; letter-spacing: 0.06em; color: var(--muted);
  margin-right: 8px; }
table { border-collapse: collapse; width: 100%; }
th { text-align: left; font-weight: 600; }
.n { text-align: right; white-space: nowrap; }
table.grid { background: var(--card); border: 1px solid var(--rule); margin: 10px 0; font-size: 14px; }
table.grid th, table.grid td { padding: 6px 10px; border-bottom: 1px solid var(--rule); vertical-align: top; }
table.grid thead th { background: #f2efe9; font-size: 12px; text-transform: uppercase; letter-spacing: 0.04em;
  color: var(--muted); }
table.edges { width: auto; min-width: 60%; }
table.edges tbody th { font-weight: 500; padding-right: 28px; }
.formula { font-family: "Cambria Math", "STIX Two Math", Georgia, serif; font-size: 17px; background: var(--card);
  border: 1px solid var(--rule); border-radius: 6px; padding: 8px 14px; display: inline-block; margin: 2px 0 8px; }
table.ends { background: var(--card); border: 1px solid var(--rule); margin: 14px 0 4px; table-layout: fixed; }
table.ends col.label { width: 21%; }
table.ends th, table.ends td { padding: 9px 14px; border-bottom: 1px solid var(--rule); vertical-align: top; }
table.ends thead th { font-size: 15px; border-bottom: 0; padding-top: 12px; }
table.ends thead th.analyzer { border-top: 5px solid var(--slate); color: var(--slate); background: #eef1f4; }
table.ends thead th.feed { border-top: 5px solid var(--copper); color: var(--copper); background: #fbefe8; }
table.ends thead small { display: block; font-weight: 400; color: var(--muted); font-size: 12px; }
table.ends td.feed { background: #fffaf6; }
table.ends tbody th { font-weight: 600; font-size: 14px; }
.hint { display: block; font-weight: 400; font-size: 12px; color: var(--muted); margin-top: 2px; }
ul.plain { list-style: none; margin: 0; padding: 0; }
ul.plain li { margin: 0 0 3px; }
.kind { color: var(--muted); font-size: 13px; }
.tag { display: inline-block; font-size: 11px; padding: 0 6px; border-radius: 8px; white-space: nowrap;
  vertical-align: 1px; }
.tag.edge { background: #efe9df; color: #6b5a3e; border: 1px solid #dccfb9; }
.pill { display: inline-block; font-size: 11px; font-weight: 700; text-transform: uppercase; letter-spacing: 0.05em;
  padding: 1px 7px; border-radius: 8px; margin-left: 4px; vertical-align: 1px; }
.pill.ok { background: #e2f1ec; color: var(--ok); }
.pill.fail { background: #f9e1df; color: var(--bad); }
th.analyzer { color: var(--slate); }
th.feed { color: var(--copper); }
.callout { background: var(--card); border: 1px solid var(--rule); border-left: 6px solid var(--copper);
  border-radius: 6px; padding: 4px 18px 8px; margin: 20px 0; }
.callout h3 { margin-top: 12px; }
.block { margin-top: 22px; }
.bar { display: flex; height: 22px; border-radius: 5px; overflow: hidden; border: 1px solid var(--rule);
  margin: 8px 0 10px; background: #eee; }
.bar span { display: block; height: 100%; }
.legend { list-style: none; margin: 0; padding: 0; display: flex; flex-wrap: wrap; gap: 6px 26px; font-size: 14px; }
.legend i { display: inline-block; width: 12px; height: 12px; border-radius: 2px; margin-right: 6px;
  vertical-align: -1px; }
.figs { display: flex; flex-direction: column; gap: 18px; }
.fig { margin: 0; background: var(--card); border: 1px solid var(--rule); border-radius: 6px; padding: 10px; }
.fig img { display: block; max-width: 100%; height: auto; margin: 0 auto; }
.fig figcaption { font-size: 13px; color: var(--muted); margin-top: 6px; }
.safety ul { padding-left: 20px; }
.safety li { margin: 6px 0; }
footer { margin-top: 40px; padding-top: 12px; border-top: 1px solid var(--rule); font-size: 13px; color: var(--muted); }
@media (max-width: 760px) {
  body { padding: 18px 14px; }
  .facts, .glance { grid-template-columns: 1fr; }
  table.ends col.label { width: 30%; }
}
@media print {
  html, body { background: #fff; }
  body { max-width: none; padding: 0; font-size: 11pt; }
  * { -webkit-print-color-adjust: exact; print-color-adjust: exact; }
  section, .block, .callout, figure, tr { break-inside: avoid; }
  h2, h3 { break-after: avoid; }
  #plots { break-before: page; }
  .figs { gap: 10px; }
  .fig { border: 0; padding: 0; }
  .fig img { max-height: 9cm; }
  .comments:not([open]) { display: none; }
}
""".replace("@SLATE@", ANALYZER_COLOUR).replace("@COPPER@", FEEDPOINT_COLOUR).replace("@RULE@", GRID_COLOUR).replace(
    "@LOSS@", LINE_LOSS_COLOUR)


def report_html(corr, summary: dict, table: dict | None = None, written: dict | None = None,
                *, run_time: _dt.datetime | None = None) -> str:
    """The report as one HTML string (see :func:`write_report`)."""
    from .. import __version__

    run_time = run_time or _dt.datetime.now().astimezone()
    sw = summary["sweep"]
    fq = _Freq(sw["low_hz"], sw["high_hz"], int(sw.get("points") or 0))
    name = os.path.basename(str(sw.get("file", ""))) or "sweep"
    body = "".join([
        _header(summary, fq, run_time),
        _glance(summary, fq),
        _warnings(summary),
        _line(summary, corr, fq),
        _findings(summary, fq),
        _plots(corr, table or {}, summary, written or {}),
        _along(summary, written or {}),
        _safety(),
        _footer(written or {}, run_time),
    ])
    return f"""<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="deembed {_e(__version__)}">
<title>{_e(name)} &middot; feedpoint report</title>
<style>{CSS}</style>
</head>
<body>
{body}
</body>
</html>
"""


def write_report(path, corr, summary: dict, table: dict | None, written: dict | None) -> None:
    """Write the self-contained HTML report of one correction, atomically.

    Parameters
    ----------
    path : str or os.PathLike
        The report's file name (``<stem>.report.html``).
    corr : deembed.core.Correction
        The correction (its line is described in the report; plots missing from ``written`` are
        rendered from it in memory).
    summary : dict
        From :func:`deembed.workflow.analyse` (``sweep``, ``line``, ``feedpoint``, ``analyzer``,
        ``warnings`` and optionally ``bands``, ``power``, ``feedpoint.trim``).
    table : dict
        Per-frequency columns (for the power-budget plot when it must be rendered here).
    written : dict
        Output key -> path of the files already written; the PNG plots among them are embedded.
    """

    write_text_atomic(path, report_html(corr, summary, table, written))
