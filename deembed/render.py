"""Plain-text renderings of results for the terminal."""
from __future__ import annotations

from .units import fmt_freq


def _spans(spans, most: int = 2) -> str:
    """The widest ``most`` spans, in frequency order, and how many more there are."""
    if not spans:
        return "none in sweep"
    widest = sorted(sorted(spans, key=lambda sp: sp[1] - sp[0], reverse=True)[:most])
    text = ", ".join(f"{fmt_freq(lo)} to {fmt_freq(hi)}" for lo, hi in widest)
    return text + (f" (+{len(spans) - most} narrow)" if len(spans) > most else "")


def _row(label: str, left: str, right: str) -> str:
    """A label and two columns; a long left cell pushes the right one onto its own line."""
    if len(left) > 32:
        return f"{label:24}{left}\n{'':58}{right}"
    return f"{label:24}{left:34}{right}"


def _min(end: dict) -> str:
    m = end.get("min_swr") or {}
    if m.get("swr") is None:
        return "n/a"
    return f"{m['swr']:.2f} at {fmt_freq(m['freq_hz'], 6)}"


def _res(end: dict) -> str:
    items = end.get("resonances") or []
    if not items:
        return "none in sweep"
    if len(items) > 3:  # the line's rotation makes many crossings at the analyzer end
        return f"{len(items)} crossings, {fmt_freq(items[0]['freq_hz'], 6)} to {fmt_freq(items[-1]['freq_hz'], 6)}"
    return ", ".join(f"{fmt_freq(r['freq_hz'], 6)} ({r['kind']})" for r in items)


def _q(end: dict) -> str:
    q, qb = end.get("q"), end.get("q_bandwidth")
    if q is None and qb is None:
        return "n/a"
    a = f"{q:.1f}" if q is not None else "n/a"
    b = f"{qb:.1f}" if qb is not None else "n/a"
    return f"{a} (from 2:1 span: {b})"


def correction_text(summary: dict, out_dir: str | None = None) -> str:
    """A short readable summary of one correction, both ends side by side."""
    sw, ln = summary["sweep"], summary["line"]
    fp, sh = summary["feedpoint"], summary["shack"]
    lines = [
        f"sweep   {sw['file']}: {sw['points']} points, {fmt_freq(sw['f_start_hz'])} to {fmt_freq(sw['f_stop_hz'])}",
        f"line    {ln['description']}",
        f"        matched loss {ln['matched_loss_db']['at_start']:.2f} dB at {fmt_freq(ln['f_start_hz'])}, "
        f"{ln['matched_loss_db']['at_stop']:.2f} dB at {fmt_freq(ln['f_stop_hz'])}",
        "",
        f"{'':24}{'at the analyzer':34}{'at the feedpoint'}",
        _row("lowest SWR", _min(sh), _min(fp)),
        _row("resonance (X = 0)", _res(sh), _res(fp)),
    ]
    for key in (fp.get("bandwidth_hz") or {}):
        lines.append(_row(f"SWR <= {key} span", _spans(sh["bandwidth_hz"].get(key)), _spans(fp["bandwidth_hz"][key])))
    lines.append(_row("Q near best match", _q(sh), _q(fp)))
    trim = fp.get("trim")
    if trim:
        verb = "lengthen" if trim["length_change_percent"] > 0 else "shorten"
        lines.append(f"\ntrim    resonance {fmt_freq(trim['resonance_hz'], 6)}, target {fmt_freq(trim['target_hz'], 6)}: "
                     f"{verb} the element by about {abs(trim['length_change_percent']):.1f} % (first estimate; cut in small steps)")
    bands = summary.get("bands")
    if bands:
        lines.append(f"\nbands   worst SWR in each band (limit {bands['swr_limit']:g}:1)      analyzer  feedpoint")
        for b_sh, b_fp in zip(bands["shack"], bands["feedpoint"]):
            mark = "ok" if b_fp.get("ok") else "OVER"
            lines.append(f"        {b_fp['name']:36}{_num(b_sh.get('worst_swr')):>10}{_num(b_fp.get('worst_swr')):>11}  {mark}")
    power = summary.get("power")
    if power:
        lines.append(f"\npower   {power['transmitter_w']:g} W at {fmt_freq(power['at_freq_hz'], 6)}: "
                     f"{power['delivered_w']:.1f} W into the antenna, {power['line_dissipated_w']:.1f} W lost in the line, "
                     f"{power['reflected_at_tx_w']:.2f} W back at the transmitter")
    if summary.get("warnings"):
        lines.append("")
        lines += [f"warning: {w}" for w in summary["warnings"]]
    if out_dir:
        lines.append(f"\nresults in {out_dir}/ (open the .report.html, or .summary.json / .table.csv / .feedpoint.s1p)")
    return "\n".join(lines)


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
                     f"{a['swr']:.2f}:1")
    lines += [
        "",
        "reflected power absorbed at the transmitter end (no matching unit):",
        f"  at the antenna      forward {a['forward_w']:.2f} W, reflected {a['reflected_w']:.2f} W, "
        f"delivered {a['delivered_w']:.2f} W, SWR {a['swr']:.2f}:1",
        f"  at the transmitter  reflected back {t['reflected_w']:.2f} W, SWR {t['swr']:.2f}:1, "
        f"return loss {t['return_loss_db']:.2f} dB",
        f"  lost in the line    {ln['dissipated_w']:.2f} W",
        "",
        "matching unit at the transmitter end re-reflecting the returned power (handbook total-loss formula):",
        f"  total line loss {m['total_loss_db']:.3f} dB ({m['additional_loss_db']:.3f} dB more than matched), "
        f"delivered {m['delivered_w']:.2f} W, lost in the line {m['dissipated_w']:.2f} W",
    ]
    return "\n".join(lines)
