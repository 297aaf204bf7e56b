"""Plain-text renderings of results for the terminal."""
from __future__ import annotations

import os
import sys

from ..analysis.between import between_text, between_warnings
from ..analysis.limits import FIELD_OF_JSON, LIMIT_NAMES
from ..base.textsafe import write_control
from ..base.units import SWR_PRINT_MAX, fmt_freq, fmt_span, fmt_swr
from ..base.verdicts import ERROR, TEXT as VERDICT_TEXT, WITHIN
from .along import along_line_text
from .intervals import fmt_freq_interval, fmt_number, fmt_shift_interval, signed_fixed, step_for


def _unc(end: dict) -> dict:
    """An end's intervals: OPTIONAL (no key without phase, None without draws)."""
    return end.get("uncertainty") or {}


def sweep_step_hz(sweep: dict) -> float | None:
    """The mean frequency step of a summary's ``sweep`` block (None for one point): what its frequencies resolve."""
    n = sweep.get("points") or 0
    if n < 2 or sweep.get("low_hz") is None or sweep.get("high_hz") is None:
        return None
    return (sweep["high_hz"] - sweep["low_hz"]) / (n - 1)


def freq_text(value_hz, interval=None, step_hz=None, *, with_interval: bool = True) -> str:
    """A frequency with the digits its resolution supports (our rule; common practice, no source): its coverage
    interval's when it has one (``7.041 MHz (7.032 to 7.050)``, or ``7.041 MHz`` alone without
    ``with_interval``), else the sweep's step ``step_hz`` (6.848 MHz on a 2 kHz grid), else 4 figures."""
    step = step_for(*interval) if interval else None
    if step is not None:
        return fmt_freq_interval(value_hz, interval) if with_interval else fmt_freq(value_hz, resolution_hz=step)
    if step_hz:
        return fmt_freq(value_hz, resolution_hz=step_hz)
    return fmt_freq(value_hz)


def in_direction(value, interval):
    """A signed change and its interval, as an amount in the value's own direction: ``-0.9`` with
    ``[-1.72, 0.066]`` is 0.9 with ``[-0.066, 1.72]`` (shorten by 0.9, from -0.1 to 1.7)."""
    if not interval or value is None:
        return (None if value is None else abs(value)), interval
    if value < 0:
        return -value, [-interval[1], -interval[0]]
    return value, list(interval)


def _edge(value, iv, at_sweep_edge: bool, step_hz=None) -> str:
    if at_sweep_edge:
        return f"{fmt_freq(value)} (sweep edge)"
    return freq_text(value, iv, step_hz)


def _spans(spans, most: int = 2, cut=None, ivs=None, step_hz=None) -> str:
    """The widest ``most`` spans, in frequency order, and how many more there are; edges with their
    intervals, and edges where the sweep cuts a span marked."""
    if not spans:
        return "none in sweep"
    cut = list(cut or [False] * len(spans))
    ivs = list(ivs or [[None, None]] * len(spans))
    order = sorted(range(len(spans)), key=lambda i: spans[i][1] - spans[i][0], reverse=True)[:most]
    parts = []
    for i in sorted(order):
        lo, hi = spans[i]
        iv_lo, iv_hi = (ivs[i] if i < len(ivs) and ivs[i] else [None, None])
        a = _edge(lo, iv_lo, bool(cut[i]) and iv_lo is None and _at_edge(lo, spans), step_hz)
        b = _edge(hi, iv_hi, bool(cut[i]) and iv_hi is None and _at_edge(hi, spans), step_hz)
        parts.append(fmt_span(lo, hi) if a == b else f"{a} to {b}")  # never "a to a"
    text = ", ".join(parts)
    if any(cut[i] for i in order):
        text += " (cut by the sweep)"
    return text + (f" (+{len(spans) - most} narrow)" if len(spans) > most else "")


def _at_edge(value, spans) -> bool:
    lows = [s[0] for s in spans]
    highs = [s[1] for s in spans]
    return value == min(lows) or value == max(highs)


def _row(label: str, left: str, right: str) -> str:
    """A label and two columns; a long left cell pushes the right one onto its own line."""
    if len(left) > 32:
        return f"{label:24}{left}\n{'':58}{right}"
    return f"{label:24}{left:34}{right}"


def _min(end: dict, step_hz=None) -> str:
    m = end["min_swr"]
    if m.get("swr") is None:
        return "n/a"
    u = _unc(end)
    swr = fmt_swr(m["swr"]) if m["swr"] > SWR_PRINT_MAX else fmt_number(m["swr"], u.get("min_swr"))
    text = f"{swr} at {freq_text(m['freq_hz'], u.get('min_swr_freq_hz'), step_hz)}"
    if m.get("swr_low") is not None or m.get("swr_high") is not None:  # a sweep without phase: the bound
        text += f" (true: {fmt_swr(m.get('swr_low'))} to {fmt_swr(m.get('swr_high'))})"
    return text


def _res(end: dict, step_hz=None) -> str:
    if end.get("phase") is False:
        return "n/a (needs phase)"
    items = end.get("resonances") or []
    if not items:
        return "none in sweep"
    if len(items) > 3:  # the line's rotation makes many crossings at the analyzer end
        return f"{len(items)} crossings, {fmt_span(items[0]['freq_hz'], items[-1]['freq_hz'], step_hz)}"
    u = _unc(end)
    ivs = u.get("resonances_hz") or [None] * len(items)
    lost = u.get("not_resolved") or {}
    cells = []
    for j, (r, iv) in enumerate(zip(items, ivs)):
        cell = f"{freq_text(r['freq_hz'], iv, step_hz)}, {r['kind']}"
        if f"resonances_hz[{j}]" in lost:
            cell += f" (not placed in {lost[f'resonances_hz[{j}]']:.0%} of the draws)"
        cells.append(cell)
    return "; ".join(cells)


def _q(end: dict) -> str:
    q, qb = end.get("q"), end.get("q_from_span")
    if end.get("phase") is False:
        return f"n/a (from 2:1 span: {'n/a' if qb is None else f'{qb:.1f}'})"
    if q is None:  # no resolved resonance near the match: neither Q means anything here
        return "n/a (no resonance near the match)"
    a = fmt_number(q, _unc(end).get("q"), default_decimals=1) if q is not None else "n/a"
    b = f"{qb:.1f}" if qb is not None else "n/a"
    return f"{a} (from 2:1 span: {b})"


def trim_resonance_interval(fp: dict, trim: dict):
    """The coverage interval of the resonance the trimming advice is about (None when it has none)."""
    ivs = _unc(fp).get("resonances_hz") or []
    for r, iv in zip(fp.get("resonances") or [], ivs):
        if r.get("freq_hz") == trim.get("resonance_hz"):
            return iv
    return None


def trim_amount(trim: dict, unit: str = "%") -> tuple[str, str | None]:
    """The trimming change as an amount in the verb's direction, with its interval in that direction too:
    "0.9 % (-0.1 to 1.7)" (shorten) for a change of -0.9 % with [-1.72, +0.07] (negative = shorten); and, when
    there is no interval because the resonance was lost in too many draws, a note saying so (else None)."""
    amount, iv = in_direction(trim["length_change_percent"], trim.get("length_change_percent_interval"))
    lost = trim.get("resonance_lost_fraction")
    note = f"no interval: the resonance is not placed in {lost:.0%} of the draws" if iv is None and lost else None
    return fmt_number(amount, iv, default_decimals=1, unit=unit), note


def _trim(trim: dict, fp: dict | None = None, step_hz=None) -> str:
    res = freq_text(trim["resonance_hz"], trim_resonance_interval(fp or {}, trim), step_hz, with_interval=False)
    head = f"\ntrim    resonance {res}, target {fmt_freq(trim['target_hz'], 6)}: "
    if trim.get("refused"):
        return head + f"no advice ({trim['refused']})"
    verb = "lengthen" if trim["length_change_percent"] > 0 else "shorten"
    amount, note = trim_amount(trim)
    return head + f"{verb} the element by about {amount} (first estimate; cut in small steps" + \
        (f"; {note})" if note else ")")


def _trust_lines(summary: dict) -> list[str]:
    """The noise, how the intervals were made, and what limits the result."""
    sw = summary["sweep"]
    u = _unc(summary["feedpoint"])
    out = []
    noise = sw.get("noise_gamma_rms")
    if noise is not None:
        out.append(f"noise   {noise:.2g} rms in Gamma at the analyzer, estimated from the sweep")
    if u:
        src = u.get("sources") or {}
        cal = (src.get("calibration") or {}).get("preset", "")
        out.append(f"        intervals: {u['coverage']:.0%} coverage, {u['draws']} Monte Carlo draws (JCGM 101), "
                   f"seed {u['seed']}" + (f", analyzer calibration '{cal}'" if cal else ""))
        if u.get("limited_by"):
            out.append(f"limits  what limits this result: {u['limited_by']}")
    return out


def results_line(out_dir: str, files: dict | None) -> str:
    """Where the results went, naming the files that were written (no report named when none was)."""
    folder = os.path.join(out_dir, "")
    names = list((files or {}).values())
    if any(n.endswith(".report.html") for n in names):
        return f"results in {folder} (open the .report.html; also .summary.json, .table.csv, .feedpoint.s1p)"
    shown = ", ".join(n for n in names if not n.endswith(".png")) or "nothing"
    return f"results in {folder} ({shown})"


def correction_text(summary: dict, out_dir: str | None = None) -> str:
    """A short readable summary of one correction, both ends side by side."""
    sw, ln = summary["sweep"], summary["line"]
    fp, sh = summary["feedpoint"], summary["analyzer"]
    lines = [
        f"sweep   {sw['file']}: {sw['points']} points, {fmt_span(sw['low_hz'], sw['high_hz'])}",
        f"line    {ln['description']}",
        f"        matched loss {ln['matched_loss_db']['at_low']:.2f} dB at {fmt_freq(ln['low_hz'])}, "
        f"{ln['matched_loss_db']['at_high']:.2f} dB at {fmt_freq(ln['high_hz'])}",
        *([f"        between points: {between_text(ln['between_points'])}"] if ln.get("between_points") else []),
    ]
    lines += _trust_lines(summary)
    step = sweep_step_hz(sw)
    lines += [
        "",
        f"{'':24}{'at the analyzer':34}{'at the feedpoint' if sw.get('phase', True) else 'at the feedpoint (no phase)'}",
        _row("lowest SWR", _min(sh, step), _min(fp, step)),
        _row("resonance (X = 0)", _res(sh, step), _res(fp, step)),
    ]
    for key in fp["swr_spans_hz"]:
        cells = []
        for end in (sh, fp):
            ivs = (_unc(end).get("swr_spans_hz") or {}).get(key)
            cells.append(_spans(end["swr_spans_hz"].get(key), cut=end["swr_spans_cut_by_sweep_edge"].get(key),
                                ivs=ivs, step_hz=step))
        lines.append(_row(f"SWR <= {key} span", *cells))
    lines.append(_row("Q near best match", _q(sh), _q(fp)))
    if fp.get("phase") is False:
        lines.append(f"\nresonance and Q: {fp['not_available']['resonances']}")
    trim = fp.get("trim")
    if trim:
        lines.append(_trim(trim, fp, step))
    bands = summary.get("bands")
    if bands:
        lines.append(f"\nbands   worst SWR in each band (limit {bands['swr_limit']:g}:1)      analyzer  feedpoint")
        for b_sh, b_fp in zip(bands["analyzer"], bands["feedpoint"]):
            mark = VERDICT_TEXT[b_fp["verdict"]]
            lines.append(f"        {b_fp['name']:36}{fmt_swr(b_sh.get('worst_swr')):>10}"
                         f"{fmt_swr(b_fp.get('worst_swr')):>11}  {mark}")
    power = summary.get("power")
    if power:  # the budget's words and shape (deembed budget --json), at the feedpoint's best match
        ant, tx, ln_ = power["at_antenna"], power["at_transmitter"], power["line"]
        lines.append(f"\npower   {tx['forward_w']:g} W at {fmt_freq(power['at_freq_hz'], resolution_hz=step)}: "
                     f"{_num1(ant['delivered_w'])} W into the antenna, {_num1(ln_['dissipated_w'])} W lost in the line, "
                     f"{_num1(tx['reflected_w'], 2)} W back at the transmitter")
    along = summary.get("along_the_line")
    if along:
        lines.append("")
        lines.append("along the line: " + along_line_text(along))
    if summary.get("warnings"):
        lines.append("")
        lines += [f"warning: {w}" for w in summary["warnings"]]
    if out_dir:
        lines.append("\n" + results_line(out_dir, summary.get("outputs")))
    return "\n".join(lines)


def _signed(text: str) -> str:
    """'0.000 (-0.002 to 0.003)' -> '+0.000 (-0.002 to +0.003)'."""
    head, _, rest = text.partition(" (")
    sign = lambda t: t if t.startswith("-") else "+" + t  # noqa: E731
    if not rest:
        return sign(head)
    lo, _, hi = rest.rstrip(")").partition(" to ")
    return f"{sign(head)} ({sign(lo)} to {sign(hi)})"


def _num1(v, decimals: int = 1) -> str:
    return "n/a" if v is None else f"{v:.{decimals}f}"


def _num(v) -> str:
    return "n/a" if v is None else f"{v:.2f}"


def budget_text(b: dict, power_w: float, loss_db: float) -> str:
    """The power budget as a few readable lines."""
    a, t, ln, m = b["at_antenna"], b["at_transmitter"], b["line"], b["matched_at_transmitter"]
    lines = [
        f"transmitter {power_w:g} W forward into a line of {loss_db:g} dB matched loss",
    ]
    if "inferred_from_measured_swr" in b:
        lines.append(f"antenna SWR inferred from {b['inferred_from_measured_swr']:g}:1 read at the transmitter: "
                     f"{fmt_swr(a['swr'])}:1")
    lines += [
        "",
        "reflected power absorbed at the transmitter end (no matching unit):",
        f"  at the antenna      forward {a['forward_w']:.2f} W, reflected {a['reflected_w']:.2f} W, "
        f"delivered {a['delivered_w']:.2f} W, SWR {fmt_swr(a['swr'])}:1",
        f"  at the transmitter  reflected back {t['reflected_w']:.2f} W, SWR {fmt_swr(t['swr'])}:1, "
        f"return loss {t['return_loss_db']:.2f} dB",
        f"  lost in the line    {ln['dissipated_w']:.2f} W",
        "",
        "matching unit at the transmitter end re-reflecting the returned power (handbook total-loss formula):",
        f"  total line loss {m['total_loss_db']:.3f} dB ({m['additional_loss_db']:.3f} dB more than matched), "
        f"delivered {m['delivered_w']:.2f} W, lost in the line {m['dissipated_w']:.2f} W",
    ]
    return "\n".join(lines)


def stderr_progress():
    """A progress callback writing ``site: 2/5 antennas done (name: verdict)`` to standard error.

    It writes nothing for a short run (3 antennas or fewer) when standard error is not a terminal.
    """
    tty = sys.stderr.isatty()

    def show(done, n, result):
        if not tty and n <= 3:
            return
        msg = f"site: {done}/{n} antennas done ({result['name']}: {VERDICT_TEXT[result['verdict']]})"
        if tty:
            write_control(sys.stderr, "\r")  # our own cursor control; the message itself is escaped
            sys.stderr.write(msg.ljust(78) + ("\n" if done == n else ""))
        else:
            sys.stderr.write(msg + "\n")
        sys.stderr.flush()

    return show


def compare_text(result: dict, limit_names: dict | None = None) -> str:
    """A few readable lines: the numbers at both ends, the verdict naming the limits exceeded, the cause.

    ``limit_names`` says how to name each limit (the command line passes its option names); default: the
    limit's site-file name (``max_shift``). Frequencies get the digits their interval supports, else those of
    the sweep's step.
    """

    fp, sh = result["feedpoint"], result["analyzer"]
    names = limit_names or LIMIT_NAMES

    def num(v, spec=".3f"):
        return "n/a" if v is None else format(v, spec)

    def res(side):
        v = result[f"resonance_{side}_hz"]
        if v is None:
            return "n/a"
        step = result["baseline" if side == "before" else "after"]["step_hz"]
        return freq_text(v, result.get(f"resonance_{side}_interval_hz"), step)

    shift = result["resonance_shift_hz"]
    lines = [
        f"baseline {result['baseline']['file']}",
        f"after    {result['after']['file']}",
        f"compared on {result['grid']['points']} points, "
        f"{fmt_span(result['grid']['low_hz'], result['grid']['high_hz'])} ({result['grid']['method']})",
        "",
        f"{'':28}{'at the analyzer':28}{'at the feedpoint'}",
        f"{'resonance':28}{'(not meaningful)':28}{res('before')} -> {res('after')}",
    ]
    if shift is not None:
        iv = result.get("resonance_shift_interval_hz")
        extra = "" if iv or result.get("uncertainty") is None else " (interval not placed: see the line's tolerances)"
        lines.append(f"{'resonance shift':28}{'':28}{fmt_shift_interval(shift, iv)}{extra}")
    for label, key, spec, ivkey in (("lowest SWR change", "min_swr_change", "+.3f", "min_swr_change_interval"),
                                    ("2:1 bandwidth change (kHz)", "swr_2_width_change_hz", None,
                                     "swr_2_width_change_interval_hz"),
                                    ("largest |Gamma| change", "largest_gamma_change", ".3f", None)):
        iv = result.get(ivkey) if ivkey else None
        if spec is None:
            a = "n/a" if sh is None else f"{sh[key] / 1e3:+.1f}"
            b = fmt_shift_interval(fp[key], iv).removesuffix(" kHz").replace(" kHz (", " (") if iv else \
                f"{fp[key] / 1e3:+.1f}"
        else:
            a = "n/a" if sh is None else num(sh[key], spec)
            b = num(fp[key], spec)
            if iv and fp[key] is not None:
                b = _signed(fmt_number(fp[key], iv, default_decimals=3))
        lines.append(f"{label:28}{a:28}{b}")
    def noise(end):  # as correct prints the sweep's noise
        cells = ["n/a" if not end or end.get(k) is None else f"{end[k]:.2g}"
                 for k in ("trace_noise_before", "trace_noise_after")]
        return " / ".join(cells)

    lines.append(f"{'noise, rms in Gamma':28}{noise(sh):28}{noise(fp)}  (baseline / after; at the feedpoint: "
                 "the sweep's, referred through the line)")
    u = result.get("uncertainty")
    if u:
        lines.append(f"{'':28}intervals: {u['coverage']:.0%} coverage, {u['draws']} draws; {u['method'].split('; ', 1)[-1]}")
    ln = result["line"]
    if ln["loss_change_db"] is not None:
        lines.append(f"\nline     {ln['before']}\n  now    {ln['after']}\n         matched loss change "
                     f"{signed_fixed(ln['loss_change_db']['at_centre'], 2)} dB at band centre")
    texts = {k: between_text(bp) for k, bp in (ln.get("between_points") or {}).items() if bp}
    if len(set(texts.values())) == 1 and len(texts) == 2:
        lines.append(f"line between points: {next(iter(texts.values()))}")
    else:
        lines += [f"line between points ({which}): {text}" for which, text in texts.items()]
    v = result["verdict"]
    lines.append("")
    if v["status"] == WITHIN:
        lines.append(f"verdict  {VERDICT_TEXT[WITHIN]}")
    else:
        exceeded = ", ".join(names.get(FIELD_OF_JSON[k], k) for k in v["limits_exceeded"])
        lines.append(f"verdict  {VERDICT_TEXT[v['status']]} ({exceeded})")
        lines += [f"         - {r}" for r in v["reasons"]]
    cert = v.get("certainty") or {}
    for k, text in (v.get("certainty_text") or {}).items():
        if cert.get(k) == "undetermined" and k not in v["limits_exceeded"]:
            continue  # said in the JSON and on the page; the numbers above already show the missing interval
        lines.append(f"         {names.get(FIELD_OF_JSON.get(k, k), k)}: {text}")
    lines.append(f"cause    {result['cause']['code']}: {result['cause']['text']}")
    along = result.get("along_the_line")
    if along:
        lines.append(f"along    {along['text']}")
    lines += [f"warning: {w}" for w in result.get("warnings") or []]
    lines += [f"note: {n}" for n in result["notes"]]
    return "\n".join(lines)


_METHOD_TEXT = {
    "open-short-load": "open, short and load: three-term error model, the run's 2-port as measured",
    "open-short": "open and short: uniform line, Zc = sqrt(Zoc Zsc)",
    "open": "open alone: physical line model fitted",
    "short": "short alone: physical line model fitted",
}


def report_text(r: dict) -> str:
    """The characterization report as plain text."""

    m = r["model"]
    out = [f"Feed-line characterization  ->  {r.get('out', '')}",
           f"  method     {_METHOD_TEXT.get(r['method'], r['method'])}",
           f"  sweep      {fmt_span(r['low_hz'], r['high_hz'])}, {r['points']} points"]
    std = r.get("standards", {})
    if std and (std.get("open_c_f") or std.get("short_l_h") or std.get("load_r_ohm", 50.0) != 50.0):
        out.append(f"  standards  open {std['open_c_f'] * 1e15:g} fF, short {std['short_l_h'] * 1e12:g} pH, "
                   f"load {std['load_r_ohm']:g} ohm")
    out.append("")
    out.append("Line model")
    out.append(f"  Z0               {m['z0_ohm']:.2f} ohm{'' if m['z0_fitted'] else ' (nominal, not measured)'}")
    out.append(f"  one-way delay    {m['delay_s'] * 1e9:.3f} ns  (free-space length {m['free_space_length_m']:.3f} m)")
    if "vf" in r:
        out.append(f"  velocity factor  {r['vf']:.4f}  over {r['length_m']:.3f} m")
    if "k1_db_per_100ft" in r:
        out.append(f"  loss law         {r['k1_db_per_100ft']:.4g} sqrt(f) + {r['k2_db_per_100ft']:.4g} f  "
                   "dB/100 ft, f in MHz")
    else:
        out.append(f"  loss law         {r['k1_db_run']:.4g} sqrt(f) + {r['k2_db_run']:.4g} f  dB for the run, "
                   "f in MHz")
    out.append(f"  model misfit     {m['rms_residual']:.2e} RMS, {m['max_residual']:.2e} worst")
    if r.get("zc_measured_ohm"):
        zs = ", ".join(f"{z['re']:.1f}{z['im']:+.1f}j @ {fmt_freq(z['freq_hz'])}" for z in r["zc_measured_ohm"])
        out.append(f"  measured Zc      {zs}")
    out.append("")
    head = f"  {'frequency':>12}  {'matched loss':>12}"
    rows = r["loss"]
    per = any("loss_db_per_100m" in x for x in rows)
    cat = any("catalog_db_per_100ft" in x for x in rows)
    rl = any("loss_db_from_return_loss" in x for x in rows)
    if per:
        head += f"  {'dB/100 m':>9}  {'dB/100 ft':>9}"
    if cat:
        head += f"  {'catalog/100 ft':>14}  {'ratio':>6}"
    if rl:
        head += f"  {'RL/2 check':>10}"
    out.append("One-way matched loss")
    out.append(head)
    for x in rows:
        line = f"  {fmt_freq(x['freq_hz']):>12}  {x['loss_db']:>9.3f} dB"
        if per:
            line += f"  {x['loss_db_per_100m']:>9.3f}  {x['loss_db_per_100ft']:>9.3f}"
        if cat:
            line += f"  {x['catalog_db_per_100ft']:>14.3f}  {x['ratio_to_catalog']:>6.2f}"
        if rl:
            line += f"  {x['loss_db_from_return_loss']:>7.3f} dB"
        if x.get("flag"):
            line += "  << " + x["flag"]
        if x.get("outside_range"):
            line += "  (outside the sweep)"
        out.append(line)
    if "catalog" in r:
        c = r["catalog"]
        verdict = (f"LOSS WELL ABOVE THE CATALOG (>{c['flag_ratio']:g}x)" if c["flagged"]
                   else f"within {c['flag_ratio']:g}x of the catalog")
        out.append(f"  compared with {c['name']} ({c['source']}): {verdict}")
    bp = r.get("between_points")
    if bp:
        how = "interpolated with the run's delay removed" if bp["method"] == "interpolated" else "fitted line model"
        out.append("")
        out.append("Sweeps on other frequencies (between these points)")
        out.append(f"  method           {how}")
        out.append(f"  estimated error  up to {bp['estimated_error_worst']:.2g} in |Gamma| at the feedpoint "
                   "(worst antenna)")
        out.append(f"  step             {fmt_freq(bp['grid_step_hz'])}; this run needs {fmt_freq(bp['needed_step_hz'])} "
                   f"or less{'  << TOO COARSE' if bp['grid_too_coarse'] and bp['method'] == 'interpolated' else ''}")
    if r.get("notes"):
        out.append("")
        out.append("Notes")
        out += [f"  - {n}" for n in r["notes"]]
    return "\n".join(out)


def _between_lines(ant: dict) -> list[str]:
    """For an antenna on a characterized line: one line saying how the line was evaluated between its points
    (as ``correct``'s terminal does), then that evaluation's warnings, each said once for the antenna."""
    blocks = [("baseline", (ant["baseline"] or {}).get("between_points"))]  # None: a failed antenna
    blocks += [(os.path.basename(str(c.get("file", ""))), c.get("between_points")) for c in ant.get("comparisons") or []]
    blocks = [(who, bp) for who, bp in blocks if bp]
    if not blocks:
        return []
    texts = {}
    for who, bp in blocks:
        texts.setdefault(between_text(bp), []).append(who)
    if len(texts) == 1:
        out = [f"  {ant['name']}: line between points: {next(iter(texts))}"]
    else:
        out = [f"  {ant['name']}: line between points ({', '.join(who)}): {text}" for text, who in texts.items()]
    seen = []
    for _, bp in blocks:
        seen += [w for w in between_warnings(bp) if w not in seen]
    return out + [f"  {ant['name']}: warning: {w}" for w in seen]


def site_text(summary: dict, out: str) -> str:
    """One line per comparison (or antenna that could not be checked), then where the index is."""

    n = len(summary["antennas"])
    lines = [f"site {summary['site']}: {n} antenna{'s' if n != 1 else ''}, {VERDICT_TEXT[summary['verdict']]}"]
    for ant in summary["antennas"]:
        if ant["verdict"] == ERROR:
            lines.append(f"  {ant['name']}: {VERDICT_TEXT[ERROR]}: {ant['error']}")
            continue
        for cmp in ant["comparisons"]:
            st = VERDICT_TEXT[cmp["verdict"]]
            names = [FIELD_OF_JSON.get(k, k) for k in cmp["limits_exceeded"]]
            extra = f" ({', '.join(names)})" if names else ""
            when = " (dated by its file's time)" if cmp.get("date_source") == "file_mtime" else ""
            lines.append(f"  {ant['name']}: {os.path.basename(cmp['file'])}{when}: {st}{extra}; "
                         f"cause {cmp['cause']['code']}")
        lines += _between_lines(ant)
        for reason in (ant.get("trend") or {}).get("flags", []):
            lines.append(f"  {ant['name']}: trend: {reason}")
    hist = summary.get("history")
    if hist:
        if hist.get("error"):
            lines.append(f"history: NOT RECORDED: {hist['error']}")
        else:
            lines.append(f"history: {hist['added']} new sweep(s), {hist['already']} already there, in {hist['store']}"
                         f"; trend pages in {out}/trend/")
    lines.append(f"index: {out}/index.html")
    return "\n".join(lines)
