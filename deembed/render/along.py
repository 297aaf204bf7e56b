"""The look along the line as text and as a plot.

Plot colours follow the other plots: what the analyzer sees in slate, the reflection at its place
(line loss taken off) in copper; reflections found are marked with their distance, the far end with a
filled marker, the described line's end with a dotted line, a gate window as a shaded band.
Figures are built without pyplot (no global state); nothing calls ``show()``. As the correction plots
(:mod:`deembed.render.plots`): a fixed layout (set margins, the legend in a row above the axes, no layout
solver and no search for an empty corner), and each trace cut to the part in view and thinned to its
min/max envelope when it has more points than the axes have pixel columns (:func:`~deembed.render.plots.envelope`).
"""
from __future__ import annotations

import math

import numpy as np

from ..base.units import FEET_PER_M, fmt_freq
from .plots import DPI, RUNS_PER_COLUMN, envelope
from .plots import save as save_png

SEEN_COLOUR = "#5b6b7a"
AT_POINT_COLOUR = "#c0582b"
STEP_COLOUR = "#2f7d6d"
GRID_COLOUR = "#d9d4cc"
GATE_COLOUR = "#e8dcc4"


def _dist(m, unit: str):
    if m is None:
        return None
    return m * FEET_PER_M if unit == "ft" else m


def fmt_dist(m, unit: str = "m", digits: int = 1) -> str:
    if m is None or (isinstance(m, float) and not math.isfinite(m)):
        return "n/a"
    return f"{_dist(m, unit):.{digits}f} {unit}"


def _x(trace: dict, unit: str):
    """The x values and label: distance in the display unit, or one-way delay in ns."""
    if trace["distance_m"] is not None:
        return _dist(trace["distance_m"], unit), f"Distance along the line ({unit})"
    return trace["one_way_delay_s"] * 1e9, "One-way delay along the line (ns)"


def _x_of(refl: dict, unit: str, by_distance: bool):
    return _dist(refl["distance_m"], unit) if by_distance else refl["one_way_delay_ns"]


ALONG_FIGSIZE = {False: (9, 4.8), True: (9, 6.5)}   # by low-pass (a second panel for the impedance)
ALONG_MARGINS = {False: {"left": 0.08, "right": 0.98, "bottom": 0.105, "top": 0.85},
                 True: {"left": 0.08, "right": 0.98, "bottom": 0.075, "top": 0.885, "hspace": 0.22}}
"""Fixed layout of the along-the-line plot (fractions of the figure): room above for the title and the legend."""


def _columns(ax) -> int:
    """Pixel columns of the axes at the saved resolution."""
    return max(int(ax.figure.get_figwidth() * DPI * ax.get_position().width), 1)


def _in_view(x, x_end: float, width_px: int, *ys) -> np.ndarray:
    """Indices of the samples to draw: those up to one past ``x_end`` (the plot's right end), thinned to the
    min/max envelope of ``ys`` over the axes' pixel columns when there are more of them than it can show."""
    stop = int(min(x.shape[0], np.searchsorted(x, x_end, side="right") + 1))
    keep = envelope(stop, RUNS_PER_COLUMN * width_px, *[y[:stop] for y in ys if y is not None])
    return keep


def along_plot(trace: dict, summary: dict, unit: str = "m", described_m: float | None = None,
               other: dict | None = None, labels=("seen at the analyzer", "at its place (line loss taken off)"),
               colours=(AT_POINT_COLOUR, "#9aa7b3")):
    """Reflection level along the line (dB), with the reflections marked; low-pass adds the impedance.

    ``other`` is a second trace (same keys) drawn for comparison (a baseline sweep); both are then drawn as
    seen at the analyzer, ``labels`` and ``colours`` naming (this trace, the other).
    """
    from matplotlib.figure import Figure

    lowpass = trace.get("impedance_ohm") is not None
    fig = Figure(figsize=ALONG_FIGSIZE[lowpass])
    fig.subplots_adjust(**ALONG_MARGINS[lowpass])
    ax = fig.add_subplot(2 if lowpass else 1, 1, 1)
    x, xlabel = _x(trace, unit)
    by_distance = trace["distance_m"] is not None
    with np.errstate(divide="ignore"):
        seen_db = 20 * np.log10(trace["seen"])
        at_db = 20 * np.log10(trace["at_point"]) if trace["at_point"] is not None else None
    x_end = view_end(x, trace, summary, unit, described_m)
    z = np.clip(trace["impedance_ohm"], 0, 500) if lowpass else None
    keep = _in_view(x, x_end, _columns(ax), seen_db, at_db, z)
    if other is not None:
        ox, _ = _x(other, unit)
        with np.errstate(divide="ignore"):
            other_db = 20 * np.log10(other["seen"])
        okeep = _in_view(ox, x_end, _columns(ax), other_db)
        ax.plot(ox[okeep], other_db[okeep], color=colours[1], lw=1.4, ls="--", label=labels[1])
        ax.plot(x[keep], seen_db[keep], color=colours[0], lw=1.7, label=labels[0])
    else:
        ax.plot(x[keep], seen_db[keep], color=SEEN_COLOUR, lw=1.4, ls="--" if at_db is not None else "-",
                label=labels[0])
        if at_db is not None:
            ax.plot(x[keep], at_db[keep], color=AT_POINT_COLOUR, lw=1.8, label=labels[1])
    gate = summary.get("gate")
    if gate:
        lo = gate["from_m"] if by_distance else gate["from_one_way_ns"]
        hi = gate["to_m"] if by_distance else gate["to_one_way_ns"]
        if by_distance:
            lo, hi = _dist(lo, unit), _dist(hi, unit)
        ax.axvspan(lo, hi, color=GATE_COLOUR, alpha=0.6, lw=0, label=f"gate: {gate['action']} {gate['window']}")
    if described_m is not None and by_distance:
        ax.axvline(_dist(described_m, unit), color="#444444", lw=1.0, ls=":", label="described length")
    past_far_end = False
    for k, r in enumerate(summary.get("reflections", [])):
        xr = _x_of(r, unit, by_distance)
        if xr is None:
            continue
        yr = -r["return_loss_db"] if (other is not None or r["return_loss_at_point_db"] is None) \
            else -r["return_loss_at_point_db"]
        ax.plot([xr], [yr], marker="v", ms=8 if r["far_end"] else 6, color="#222222",
                mfc="#222222" if r["far_end"] else "white", ls="none")
        if past_far_end:  # echoes: marked, not labelled
            continue
        text = (fmt_dist(r["distance_m"], unit) if by_distance else f"{r['one_way_delay_ns']:.1f} ns")
        if r["far_end"]:
            text += " (far end)"
            past_far_end = True
        ax.annotate(text, (xr, yr), textcoords="offset points", xytext=(0, 7 + 11 * (k % 2)), ha="center",
                    fontsize=8)
    finite = seen_db[np.isfinite(seen_db)]
    top = 9.0
    bottom = max(float(np.min(finite)) if finite.size else -80.0, -80.0)
    if summary.get("reflections"):
        weakest = min(-(r["return_loss_at_point_db"] or r["return_loss_db"]) for r in summary["reflections"])
        bottom = max(min(bottom, weakest - 15), -90.0)
    ax.set_ylim(bottom, top)
    ax.set_xlim(float(x[0]), x_end)
    ax.set_xlabel(xlabel)
    ax.set_ylabel("Reflection (dB, 0 = total)")
    mode = summary.get("mode", "band-pass")
    ax.set_title(f"Along the line ({mode}, {fmt_freq(summary['low_hz'])} to {fmt_freq(summary['high_hz'])}, "
                 f"resolution {fmt_res(summary, unit)})", fontsize=10, pad=22)
    ax.grid(True, color=GRID_COLOUR, lw=0.6)
    handles, _ = ax.get_legend_handles_labels()
    ax.legend(loc="lower left", bbox_to_anchor=(0.0, 1.005), ncol=max(len(handles), 1), fontsize=8, frameon=False,
              borderaxespad=0.0, handlelength=2.6)
    if lowpass:
        ax2 = fig.add_subplot(2, 1, 2, sharex=ax)
        ax2.plot(x[keep], z[keep], color=STEP_COLOUR, lw=1.6, label="impedance along the line (from the step response)")
        ax2.axhline(50, color="#8a8a8a", lw=0.8, ls=":")
        ax2.set_ylim(0, min(max(150.0, float(np.nanpercentile(z, 99)) * 1.1), 500.0))
        ax2.set_xlabel(xlabel)
        ax2.set_ylabel("Ohms (seen through the line)")
        ax2.grid(True, color=GRID_COLOUR, lw=0.6)
        ax2.legend(loc="upper right", fontsize=8)
    return fig


def view_end(x, trace: dict, summary: dict, unit: str, described_m=None) -> float:
    """Right end of the plot: 1.6 times the farther of the far end and the described length (at least ten
    trace widths), within the alias-free range; the CSV keeps the whole range."""
    by_distance = trace["distance_m"] is not None
    marks = [summary.get("far_end_m") if by_distance else summary.get("far_end_one_way_delay_ns")]
    if by_distance and described_m:
        marks.append(described_m)
    marks = [m for m in marks if m]
    width = summary.get("trace_width_m") if by_distance else summary.get("trace_width_ns")
    if not marks:
        return float(x[-1])
    far = 1.6 * max(marks)
    if width:
        far = max(far, 10 * width)
    if by_distance:
        far = _dist(far, unit)
    return float(min(far, x[-1]))


def fmt_res(summary: dict, unit: str = "m") -> str:
    if summary.get("resolution_m") is not None:
        return fmt_dist(summary["resolution_m"], unit, 2)
    return f"{summary['resolution_ns']:.2f} ns"


def save(fig, path, dpi: int = DPI) -> None:
    """Save a figure atomically (:func:`deembed.render.plots.save`)."""
    save_png(fig, path, dpi)


def length_text(ln: dict, unit: str = "m") -> str:
    """The length verdict in the display unit (the JSON keeps metres)."""
    fe, desc, res = ln.get("far_end_m"), ln.get("described_length_m"), ln.get("resolution_m")
    if fe is None or ln.get("velocity_factor_estimate") is not None:
        return ln["verdict"]
    if desc is None:
        return f"the sweep puts the far end at {fmt_dist(fe, unit)} (resolution {fmt_dist(res, unit, 2)})"
    head = (f"the description says {fmt_dist(desc, unit)}; the sweep puts the far end at {fmt_dist(fe, unit)} "
            f"(resolution {fmt_dist(res, unit, 2)}): ")
    if ln.get("agrees_with_description"):
        return head + "they agree within the resolution"
    diff = fe - desc
    return head + (f"{fmt_dist(abs(diff), unit)} {'longer' if diff > 0 else 'shorter'} than described, more than the "
                   "resolution: check the length, the velocity factor, or what is at the end")


NOTABLE_RL_DB = 30.0  # reflections on the way weaker than this (return loss at the point) are not named in one line


def along_line_text(info: dict) -> str:
    """One line for ``correct``'s summary: the far end against the description and the notable reflections on
    the way (return loss at the point of at most :data:`NOTABLE_RL_DB`; the full list is in the report)."""
    if not info.get("resolves_line"):
        return info.get("text", "")
    ln = info.get("length") or {}
    head = ln.get("verdict") or info.get("text", "")
    before = []
    for r in info.get("reflections", []):
        if r.get("far_end"):
            break
        if r.get("distance_m") is None or (info.get("resolution_m") and r["distance_m"] < info["resolution_m"]):
            continue  # the analyzer's own connection
        rl = r["return_loss_at_point_db"] if r.get("return_loss_at_point_db") is not None else r["return_loss_db"]
        if rl > NOTABLE_RL_DB:
            continue
        before.append(f"{r['distance_m']:.1f} m (return loss {rl:.1f} dB there)")
    if before:
        head += "; on the way: " + ", ".join(before)
    return head


def locate_text(summary: dict, out_dir: str | None = None) -> str:
    """The terminal view of ``deembed locate``."""
    u = summary.get("unit", "m")
    by_distance = summary.get("velocity_factor_known")
    lines = [f"Along the line: {summary['sweep']}, {fmt_freq(summary['low_hz'])} to {fmt_freq(summary['high_hz'])}, "
             f"{summary['points']} points in steps of {fmt_freq(summary['step_hz'])}",
             f"  {summary['mode']} transform, window "
             + (f"Kaiser beta {summary['window']['beta']:g}" if summary['window']['kind'] == "kaiser" else "none")
             + f", padded {summary['padding']}x"]
    if summary.get("line"):
        lines.append(f"  line: {summary['line']}")
    if by_distance:
        lines.append(f"  range resolution  {fmt_dist(summary['resolution_m'], u, 2)}  ({summary['resolution_formula']}; "
                     f"the window widens each reflection to {fmt_dist(summary['trace_width_m'], u, 2)} at half height)")
        lines.append(f"  alias-free range  {fmt_dist(summary['alias_free_range_m'], u, 0)}  "
                     f"({summary['alias_free_formula']})")
    else:
        lines.append(f"  range resolution  {summary['resolution_ns']:.2f} ns one way  (1/(2 B) one way; "
                     f"{summary['trace_width_ns']:.2f} ns wide at half height with the window)")
        lines.append(f"  alias-free range  {summary['alias_free_range_ns']:.0f} ns one way  (1/(2 df))")
    if summary["mode"] == "band-pass":
        lines.append("  low-pass view: " + ("available (--lowpass)" if summary["lowpass_available"]
                                            else "not for this sweep: " + summary["lowpass_why_not"]))
    refl = summary["reflections"]
    lines.append("")
    if not refl:
        lines.append("  No reflections above the threshold.")
    else:
        lines.append(f"  Reflections (down to {summary['threshold_db']:g} dB below the strongest"
                     + (f", seen return loss at most {summary['floor_db']:g} dB" if summary.get("floor_db") else "")
                     + "):")
        head = f"    {'where':>12}  {'seen RL':>8}  {'RL at point':>11}  {'width':>9}"
        lines.append(head)
        for r in refl:
            where = fmt_dist(r["distance_m"], u) if by_distance else f"{r['one_way_delay_ns']:.1f} ns"
            width = fmt_dist(r["width_m"], u, 2) if by_distance else f"{r['width_ns']:.1f} ns"
            at = f"{r['return_loss_at_point_db']:.1f} dB" if r["return_loss_at_point_db"] is not None else "n/a"
            sign = {1: " (+)", -1: " (-)"}.get(r.get("sign") or 0, "")
            lines.append(f"    {where:>12}  {r['return_loss_db']:>5.1f} dB  {at:>11}  {width:>9}  "
                         f"{r['kind']}{sign}".rstrip())
        if summary["mode"] == "low-pass":
            lines.append("    (+) toward higher impedance / open, (-) toward lower impedance / short")
    ln = summary.get("length")
    if ln and ln.get("verdict"):
        lines.append("")
        lines.append("  Line length: " + length_text(ln, u))
    need = summary.get("sweep_needed")
    if need:
        s = (f"  To resolve {fmt_dist(need['resolve_m'], u, 2)}: a sweep at least {fmt_freq(need['span_hz'])} wide "
             f"(band-pass), or from near 0 Hz to {fmt_freq(need['lowpass_high_hz'])} (low-pass)")
        if need.get("max_step_hz"):
            s += f"; to reach {fmt_dist(need['reach_m'], u, 0)} without aliasing, steps of at most {fmt_freq(need['max_step_hz'])}"
        lines.append(s)
    gate = summary.get("gate")
    if gate:
        lines.append("")
        lines.append(f"  Gate: {gate['action']} {gate['window']} -> {summary['outputs'].get('gated_s1p', '')}")
        lines.append("    " + gate["band_edge_text"])
        lines += ["    " + n for n in gate.get("notes", [])]
    for n in summary.get("notes", []):
        lines.append("  note: " + n)
    if out_dir:
        lines.append(f"\nWritten to {out_dir}: " + ", ".join(sorted(summary.get("outputs", {}).values())))
    return "\n".join(lines)
