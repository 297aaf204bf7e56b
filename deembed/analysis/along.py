"""The look along the line as a computation: transform, reflections, figures; nothing read or written.

Used by ``deembed locate`` (jobs/locate.py), and by ``correct`` and ``compare`` for their "along the line"
parts. See :mod:`deembed.physics.timedomain` for the transforms and formulas and
:mod:`deembed.analysis.reflections` for the peak rules.
"""
from __future__ import annotations

import os
from dataclasses import dataclass

import numpy as np

from ..base.errors import InputFileError, OptionError
from ..base.units import parse_length
from ..physics import runmap as rm
from ..physics import timedomain as td
from . import reflections as refl_mod


@dataclass
class AlongOptions:
    """What the user asked for beyond the sweep and the line."""

    port: int | None = None
    columns: object = None          # a --columns text or a ColumnMap, for sweeps exported as text tables
    lowpass: bool = False
    beta: float = td.DEFAULT_KAISER_BETA
    pad: int = td.DEFAULT_PAD
    threshold_db: float = refl_mod.DEFAULT_THRESHOLD_DB
    floor_db: float | None = None
    unit: str = "m"
    keep: str | None = None
    remove: str | None = None
    resolve: str | None = None
    plots: bool = True


def transform(freq_hz, gamma, opts: AlongOptions, source: str = "the sweep", reach_s: float | None = None):
    """(grid, response) for a sweep, or a one-line error naming the file or the ``lowpass`` choice.

    ``reach_s`` (round trip): how far along the line the band-pass trace is needed; on a dense sweep only that
    first part of the alias-free period is worked out (:func:`~deembed.physics.timedomain.bandpass`)."""
    grid, why = td.grid_of(freq_hz)
    if grid is None:
        raise InputFileError(source, f"cannot be looked at along the line: {why}")
    if opts.lowpass:
        ok, why = td.lowpass_check(grid)
        if not ok:
            raise OptionError("lowpass", f"{source}: no low-pass view: {why}; for one, {td.lowpass_hint(grid)}. "
                                         "Without the low-pass view the band-pass view works on this sweep")
        return grid, td.lowpass(gamma, grid, opts.beta, opts.pad)
    return grid, td.bandpass(gamma, grid, opts.beta, opts.pad, reach_s=reach_s)


def _one_way(tau_s, runmap):
    """Distances (m) of one-way delays, or None when no velocity factor is known."""
    if runmap is None or not runmap.knows_distance:
        return None
    return runmap.distance_m(tau_s)


def along(freq_hz, gamma, view, opts: AlongOptions, source: str = "the sweep",
          reach_s: float | None = None) -> tuple[dict, dict]:
    """The look along the line: (summary, trace). Pure computation; nothing is written.

    ``view`` carries what is known of the line: ``runmap`` (a :class:`~deembed.physics.runmap.RunMap` or
    None), ``described_length_m`` and ``notes`` (``jobs.locate.LineView``). ``reach_s`` (round trip, band-pass
    only): look no farther than that on a dense sweep (:func:`transform`); the figures (resolution, alias-free
    range) are the sweep's own either way.
    """
    grid, resp = transform(freq_hz, gamma, opts, source, reach_s)
    m = view.runmap
    found = refl_mod.reflections(resp, grid, m, opts.threshold_db, opts.floor_db, opts.pad, opts.beta)
    period = td.alias_free_s(grid)
    width_rt = td.pulse_width_s(grid, opts.beta, resp.mode, opts.pad)
    shown = resp.t_s < min(period, resp.covers_s) - 2 * width_rt
    tau = resp.t_s[shown] / 2
    dist = _one_way(tau, m)
    seen = resp.magnitude[shown]
    trace = {"one_way_delay_s": tau, "distance_m": dist, "seen": seen, "at_point": None,
             "impulse": None, "step": None, "impedance_ohm": None, "mode": resp.mode}
    if m is not None and m.has_loss:
        coarse = np.linspace(0.0, tau[-1], 257)
        factor = td.two_way_factor(resp.weights, grid.freq_hz, m.loss_np, coarse)
        with np.errstate(divide="ignore", over="ignore", invalid="ignore"):  # beyond all reason: inf, not a warning
            trace["at_point"] = seen / np.interp(tau, coarse, factor)
    if resp.mode == "low-pass":
        trace["impulse"] = resp.amplitude[shown]
        step = resp.step[shown]
        trace["step"] = step
        with np.errstate(divide="ignore", invalid="ignore"):
            trace["impedance_ohm"] = np.where(step < 1, 50.0 * (1 + step) / (1 - step), np.inf)

    res_s = td.resolution_s(grid, resp.mode) / 2
    alias_s = period / 2
    lp_ok, lp_why = td.lowpass_check(grid)
    summary = {
        "sweep": os.path.basename(source),
        "points": grid.n, "low_hz": grid.low_hz, "high_hz": grid.high_hz, "step_hz": grid.step_hz,
        "mode": resp.mode,
        "window": {"kind": "kaiser" if opts.beta > 0 else "none", "beta": opts.beta},
        "padding": opts.pad, "transform_points": int(resp.t_s.size),
        "line": m.describe() if m is not None else None,
        "velocity_factor_known": bool(m is not None and m.knows_distance),
        "resolution_m": refl_mod.span_m(m, res_s),
        "resolution_ns": res_s * 1e9,
        "resolution_formula": "v/(2 B), B = high - low" if resp.mode == "band-pass" else "v/(4 f_high)",
        "trace_width_m": refl_mod.span_m(m, width_rt / 2),
        "trace_width_ns": width_rt / 2 * 1e9,
        "alias_free_range_m": m_at(m, 0.0, alias_s),
        "alias_free_range_ns": alias_s * 1e9,
        "alias_free_formula": "v/(2 df), df = frequency step",
        "lowpass_available": lp_ok,
        "lowpass_why_not": None if lp_ok else f"{lp_why}; for one, {td.lowpass_hint(grid)}",
        "compensated": found.compensated,
        "far_end_m": found.length.far_end_m if found.length else None,
        "far_end_one_way_delay_ns": (found.length.far_end_delay_s * 1e9
                                     if found.length and found.length.far_end_delay_s is not None else None),
        "length": found.length.to_dict() if found.length else None,
        "reflections": [r.to_dict() for r in found.reflections],
        "threshold_db": opts.threshold_db, "floor_db": opts.floor_db,
        "notes": list(view.notes) + list(found.notes),
        "unit": opts.unit,
    }
    ln = summary["length"]
    if ln is not None and view.described_length_m is not None and not summary["velocity_factor_known"] \
            and ln["far_end_one_way_delay_ns"]:
        vf_est = refl_mod.vf_from_length(view.described_length_m, ln["far_end_one_way_delay_ns"] * 1e-9)
        ln["velocity_factor_estimate"] = vf_est
        ln["described_length_m"] = view.described_length_m
        ln["verdict"] = (f"with the given length of {view.described_length_m:.1f} m, the far end at "
                         f"{ln['far_end_one_way_delay_ns']:.1f} ns one way means a velocity factor of {vf_est:.3f} "
                         f"(+/- {vf_est * res_s / (ln['far_end_one_way_delay_ns'] * 1e-9):.3f} from the resolution)")
    if m is not None and m.delay_s:
        ok, text = refl_mod.resolves_line(grid, m, resp.mode)
        summary["resolves_line"] = ok
        if not ok:
            summary["notes"].append(text)
    if opts.resolve:
        want = parse_length(opts.resolve, "resolve", allow_zero=False)
        vf = _vf_for_needs(m)
        if vf is None:
            raise OptionError("resolve", "the sweep needed for a distance depends on the velocity factor; give "
                                         "`vf` or `cable`")
        reach = max(filter(None, [summary["far_end_m"], view.described_length_m]), default=None)
        summary["sweep_needed"] = refl_mod.sweep_needed(want, vf, 1.5 * reach if reach else None)
    return summary, trace


def m_at(m, tau_from: float, span_s: float):
    if m is None or not m.knows_distance:
        return None
    a, b = m.distance_m(np.array([tau_from, tau_from + span_s]))
    return float(b - a)


def _vf_for_needs(m):
    if m is None or not m.knows_distance:
        return None
    return float(m.stretches[0].vf)




@dataclass
class _View:
    runmap: object
    described_length_m: float | None
    notes: list


def _gamma_of(corr):
    """The reflection measured at the analyzer end of a correction."""
    return corr.gamma_analyzer


def _line_map(line):
    if line is None:
        return None, "no line description"
    return rm.from_line(line)


ALONG_REACH = 8
"""``correct`` and ``compare`` look along the line out to this many times the described line's one-way delay
(the plot shows 1.6 times it; echoes between the ends fall within a few times it). A dense sweep, whose
alias-free range reaches far beyond that, is transformed only that far (our choice, no source)."""


def line_reach_s(m) -> float:
    """The round-trip time ``correct`` and ``compare`` need along a line of run map ``m``."""
    return 2.0 * ALONG_REACH * m.delay_s


def auto_pad(n: int) -> int:
    """Padding for the "along the line" parts of correct and compare: 8x for ordinary sweeps, less for huge
    ones (the trace is for a plot; a 10^6-point sweep needs no padding to look smooth)."""
    return 8 if n <= 65536 else (2 if n <= 1 << 20 else 1)


def for_correction(freq_hz, gamma, line, pad: int | None = None) -> tuple[dict, tuple | None]:
    """``correct``'s "along the line" part: whether the sweep resolves the described line and, when it
    does, the reflections along it. Returns (JSON-ready dict, (trace, summary) for a plot, or None)."""
    m, why = _line_map(line)
    if m is None:
        return {"resolves_line": False, "text": f"no look along the line: {why}"}, None
    grid, why = td.grid_of(freq_hz)
    if grid is None:
        return {"resolves_line": False, "text": f"no look along the line: {_sweep_why(why)}"}, None
    ok, text = refl_mod.resolves_line(grid, m)
    if not ok:
        return {"resolves_line": False, "text": text}, None
    summary, trace = along(freq_hz, gamma, _View(m, m.length_m, []), AlongOptions(pad=pad or auto_pad(grid.n)),
                           reach_s=line_reach_s(m))
    out = {"resolves_line": True, "text": text}
    for k in ("mode", "resolution_m", "resolution_ns", "alias_free_range_m", "far_end_m", "compensated",
              "length", "reflections"):
        out[k] = summary[k]
    return out, (trace, summary)


def _sweep_why(why: str, name: str = "sweep") -> str:
    """A reason from :func:`~deembed.physics.timedomain.grid_of` ("its frequency steps ...", "it has 9 points")
    said of a named sweep ("the sweep's frequency steps ...", "the sweep has 9 points")."""
    if why.startswith("its "):
        return f"the {name}'s {why[4:]}"
    if why.startswith("it "):
        return f"the {name} {why[3:]}"
    return f"the {name}: {why}"


def _same_grid(a: td.Grid, b: td.Grid) -> bool:
    return a.n == b.n and abs(a.low_hz - b.low_hz) <= 1e-6 * a.step_hz and \
        abs(a.step_hz - b.step_hz) <= 1e-9 * a.step_hz


FIRST_CHANGE_DB = 10.0  # a change within this of the largest counts for "where the change starts" (our choice)


def compare_along(before, after, pad: int | None = None) -> tuple[dict, tuple | None]:
    """``compare``'s "along the line" part, for two corrections through the same described line.

    When both sweeps resolve the line, says where along it the largest change sits: on the same
    frequency grid from the transform of the difference of the two sweeps (the change's own reflection,
    which puts it where it happened), otherwise from the largest difference of the two traces' levels.
    Returns (JSON-ready dict, (trace_before, trace_after, summary_after) for the overlay, or None).
    """
    m, why = _line_map(getattr(before, "line", None))
    if m is None:
        return {"shown": False, "text": f"no look along the line: {why}"}, None
    grids = []
    for name, corr in (("baseline", before), ("after-work", after)):
        grid, why = td.grid_of(corr.freq_hz)
        if grid is None:
            return {"shown": False, "text": f"no look along the line: {_sweep_why(why, name + ' sweep')}"}, None
        ok, text = refl_mod.resolves_line(grid, m)
        if not ok:
            return {"shown": False, "text": f"the {name} sweep: {text}"}, None
        grids.append(grid)
    view = _View(m, m.length_m, [])
    pad = pad or auto_pad(max(g.n for g in grids))
    opts = AlongOptions(pad=pad)
    reach = line_reach_s(m)
    s_b, tr_b = along(before.freq_hz, _gamma_of(before), view, opts, reach_s=reach)
    s_a, tr_a = along(after.freq_hz, _gamma_of(after), view, opts, reach_s=reach)
    first_tau = None
    if _same_grid(*grids):
        diff = td.bandpass(_gamma_of(after) - _gamma_of(before), grids[1], opts.beta, pad, reach_s=reach)
        shown = diff.t_s < tr_a["one_way_delay_s"][-1] * 2
        mag = diff.magnitude[shown]
        i = int(np.argmax(mag))
        tau = diff.t_s[i] / 2
        level_db = float(20 * np.log10(mag[i])) if mag[i] > 0 else None
        # the nearest change: the first peak of the difference within FIRST_CHANGE_DB of the largest. What lies
        # beyond a fault changes with it (it is seen through the fault), so the change starts there.
        width = td.pulse_width_s(grids[1], opts.beta, "band-pass", pad)
        t_pk, h_pk, _ = refl_mod.find_peaks(diff.t_s[shown], mag, width, threshold_db=FIRST_CHANGE_DB)
        if t_pk.size:
            first_tau = float(t_pk[0] / 2)
        how = "from the transform of the difference of the two sweeps"
    else:
        x = tr_a["one_way_delay_s"]
        with np.errstate(divide="ignore"):
            d = np.abs(20 * np.log10(tr_a["seen"]) - np.interp(x, tr_b["one_way_delay_s"], 20 * np.log10(tr_b["seen"])))
        d[~np.isfinite(d)] = 0
        i = int(np.argmax(d))
        tau = x[i]
        level_db = None
        how = "from the largest difference of the two traces' levels (the sweeps are on different frequencies)"
    res = s_a["resolution_m"]
    fe = s_a["far_end_m"]

    def place(t):
        d = float(m.distance_m(np.array([t]))[0]) if m.knows_distance else None
        if d is not None and fe is not None and abs(d - fe) <= 2 * res:
            where = "at the far end (the antenna or its connection)"
        elif d is not None and d <= 2 * res:
            where = "at the analyzer end (jumper or connectors there)"
        else:
            where = "part-way along the line"
        return d, (f"{d:.1f} m" if d is not None else f"{t * 1e9:.1f} ns one way"), where

    dist, at, where = place(tau)
    text = f"the largest change sits at {at}, {where}"
    first = None
    if first_tau is not None and first_tau < tau - 2 * td.resolution_s(grids[1]) / 2:
        first, f_at, f_where = place(first_tau)
        text += (f"; but the change starts nearer, at {f_at}, {f_where}: what lies beyond it is seen through it and "
                 "changes with it")
        where = f_where
    text += f" ({how}" + (f"; resolution {res:.2f} m)" if res is not None else ")")
    info = {"shown": True, "largest_change_m": dist, "largest_change_one_way_delay_ns": tau * 1e9,
            "largest_change_level_db": level_db, "first_change_m": first if first is not None else dist,
            "where": where, "resolution_m": res,
            "far_end_m_before": s_b["far_end_m"], "far_end_m_after": fe, "text": text}
    return info, (tr_b, tr_a, s_a)
