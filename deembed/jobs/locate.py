"""``deembed locate``: where along the line the reflections come from.

Reads a sweep, transforms it along the line (band-pass, or low-pass when asked and the grid allows),
finds the reflections, the far end and the line's length, optionally gates a window and writes the
gated sweep back as Touchstone, and writes the outputs into a folder:

* ``<stem>.along.json``: the summary (the same object ``--json`` prints)
* ``<stem>.along.csv``: the trace, one row per time sample (one-way delay, distance, seen and
  compensated levels; low-pass adds the step response and the impedance it implies)
* ``<stem>.along.png``: the plot
* ``<stem>.gated.s1p``: with ``--keep`` or ``--remove``
"""
from __future__ import annotations

import json
import os
from dataclasses import dataclass, field

import numpy as np

from ..base.errors import InputFileError, OptionError
from ..base.units import FEET_PER_M, parse_delay, parse_length, parse_positive
from ..io import cables as cables_mod
from ..io.atomic import atomic_path, check_not_input, stem_of, write_text_atomic
from ..io.jsonfile import to_jsonable
from ..io.linefile import line_from_options
from ..io.anysweep import read_phase_sweep
from ..io.touchstone import write_touchstone
from ..io.outfolder import OutputFolder
from ..physics import runmap as rm
from ..physics import timedomain as td
from ..physics.line import LossModel
from ..analysis.along import AlongOptions, along, m_at
from ..render.along import along_plot, save


LocateOptions = AlongOptions


@dataclass
class LineView:
    """What is known of the line for looking along it."""

    runmap: object = None          # RunMap or None (nothing known: one-way delay axis, no loss)
    described_length_m: float | None = None
    notes: list = field(default_factory=list)
    inputs: list = field(default_factory=list)


def line_view(cable=None, length=None, vf=None, delay=None, z0=None, loss=(), line=None, cables=None) -> LineView:
    """The line options of ``correct``, read for a look along the line.

    Unlike ``correct``, the length may be unknown: ``--vf`` or ``--cable`` alone give distances (and the
    cable its loss per metre); ``--length`` alone is compared with what the sweep finds, and gives a
    velocity factor estimate.
    """
    loss = list(loss or [])
    view = LineView(inputs=[line, cables])
    if line or delay or (length and (vf or cable)):
        line_vf = vf if line else None  # --vf with --line: the velocity factor of a run the file gives as a delay
        the_line, notes = line_from_options(cable=cable, length=length, vf=None if line else vf, delay=delay, z0=z0,
                                            loss=loss, cables_file=cables, line_file=line)
        source = f"line file {os.path.basename(line)}" if line else "the line options"
        m, why = rm.from_line(the_line, source=the_line.describe())
        if m is None:
            raise OptionError("line", why + "; describe it as sections (a .toml line file), or leave `line` out "
                                            "and give `vf` or `cable`")
        if line_vf is not None:
            if m.knows_distance:
                raise OptionError("vf", f"{os.path.basename(line)} already gives every section's velocity factor; "
                                        "leave `vf` out")
            m = rm.with_vf(m, _vf(line_vf))
            view.notes.append(f"velocity factor {_vf(line_vf):g} (given) for the parts of {os.path.basename(line)} "
                              "known only by their delay")
        elif not m.knows_distance:
            view.notes.append(f"{os.path.basename(line) if line else 'the line'} gives the run's delay but not its "
                              "velocity factor: the trace is against one-way delay (a velocity factor would give "
                              "distances)")
        view.runmap = m
        view.described_length_m = m.length_m
        view.notes += notes
        if not m.has_loss:
            view.notes.append(f"no loss known from {source}: reflections are shown as seen only")
        return view
    if loss:
        raise OptionError("loss", "`loss` is the whole run's matched loss, so it needs the run's `length` (with "
                                  "`vf` or `cable`) or `delay`; or give `cable` for a loss per metre")
    if z0:
        view.notes.append("the line's Z0 is not used to look along the line")
    if length:
        view.described_length_m = parse_length(length, "length", allow_zero=False)
        view.runmap = rm.uniform(None, source=f"length {view.described_length_m:g} m, velocity factor unknown")
        view.notes.append("velocity factor unknown: distances are shown as one-way delay, and the far end's delay "
                          "with the given length estimates the velocity factor")
        return view
    if cable:
        c = cables_mod.lookup(cable, cables_mod.catalog(cables), "cable")
        v = c.vf if vf is None else _vf(vf)
        per_m = LossModel.from_k(c.k1, c.k2, 1.0)
        view.runmap = rm.uniform(v, per_m.c_np, per_m.d_np, source=f"{c.name} (catalog: velocity factor, loss per m)")
        return view
    if vf:
        view.runmap = rm.uniform(_vf(vf), source="the given velocity factor")
        view.notes.append("no loss known (give a cable, or the run's length with its loss): reflections are shown "
                          "as seen only")
        return view
    view.notes.append("no velocity factor known (give one, or a cable): the trace is against one-way delay")
    return view


def _vf(text) -> float:
    return parse_positive(text, "vf", "velocity factor", upper=1.0)


def output_paths(sweep_path: str, out_dir: str) -> dict:
    stem = stem_of(sweep_path)
    j = lambda suffix: os.path.join(out_dir, stem + suffix)  # noqa: E731
    return {"along_json": j(".along.json"), "along_csv": j(".along.csv"), "along_png": j(".along.png"),
            "gated_s1p": j(".gated.s1p")}


def gate_window(text: str, option: str, m) -> tuple[float, float]:
    """'2m:40m', '6ft:100ft' or '10ns:200ns' (one way) -> (lo, hi) one-way delays, s."""
    parts = str(text).split(":")
    if len(parts) != 2:
        raise OptionError(option, f"cannot read {text!r}; give the window as FROM:TO, e.g. 0m:3m or 40m:200m "
                                  "(or one-way delays, 0ns:15ns)")
    out = []
    for p in parts:
        p = p.strip()
        if p.lower().endswith("s"):
            out.append(parse_delay(p, option))
            continue
        dist = parse_length(p, option)
        if m is None or not m.knows_distance:
            raise OptionError(option, f"{p!r} is a distance, but no velocity factor is known; give `vf` or `cable`, "
                                      "or the window as one-way delays (e.g. 0ns:15ns)")
        out.append(float(m.delay_of_distance_s(dist)[0]))
    lo, hi = out
    if not hi > lo:
        raise OptionError(option, f"{text!r}: the window's end must lie beyond its start")
    return lo, hi


def gated_sweep(freq_hz, gamma, view: LineView, opts: LocateOptions, source: str) -> tuple[np.ndarray, dict]:
    """Gate the sweep (``--keep`` or ``--remove``): the gated reflection and what the gate did."""
    if opts.keep and opts.remove:
        raise OptionError("keep", "give either `keep` or `remove`, not both")
    option, text = ("keep", opts.keep) if opts.keep else ("remove", opts.remove)
    grid, why = td.grid_of(freq_hz)
    if grid is None:
        raise InputFileError(source, f"cannot be gated: {why}")
    lo, hi = gate_window(text, option, view.runmap)
    if 2 * hi > td.alias_free_s(grid):
        raise OptionError(option, f"{text!r} reaches past the sweep's alias-free range; end the window sooner, "
                                  "or sweep in smaller steps")
    res_s = td.resolution_s(grid) / 2
    g = td.gate(gamma, grid, 2 * lo, 2 * hi, keep=bool(opts.keep), beta=opts.beta, pad=opts.pad)
    edge = band_edges(grid.freq_hz, g.droop_db)
    info = {"action": "keep" if opts.keep else "remove", "window": text,
            "from_one_way_ns": lo * 1e9, "to_one_way_ns": hi * 1e9,
            "from_m": m_at(view.runmap, 0.0, lo), "to_m": m_at(view.runmap, 0.0, hi),
            "edge_width_ns": res_s * 1e9, "band_edge": edge}
    notes = []
    if hi - max(lo, 0.0) < 2 * res_s:
        notes.append("the window is narrower than two resolution cells: what it keeps is mostly the window's own shape"
                     if opts.keep else
                     "the window is narrower than two resolution cells: it takes away only the middle of a reflection "
                     "there, and the reflection's flanks stay in the sweep")
    info["notes"] = notes
    info["band_edge_text"] = band_edge_text(edge)
    return g.gamma, info


EDGE_DB = 20.0  # a point is in the band-edge zone when window and gate take off more than this (errors x10)


def band_edges(f, droop_db) -> dict:
    """The zones at each band edge where window and gate take off more than :data:`EDGE_DB`, and the
    most they take off between those zones.

    From each edge inward, the zone ends at the last point (in that half of the band) that the gate
    alone sags by more than :data:`EDGE_DB`.
    """
    d = np.nan_to_num(np.asarray(droop_db, dtype=float), nan=np.inf)
    n = d.size
    half = n // 2
    low_hits = np.nonzero(d[:half] > EDGE_DB)[0]
    high_hits = np.nonzero(d[half:] > EDGE_DB)[0] + half
    lo_end = int(low_hits[-1]) if low_hits.size else -1
    hi_start = int(high_hits[0]) if high_hits.size else n
    inner = d[lo_end + 1:hi_start]
    return {"low_zone_hz": [float(f[0]), float(f[lo_end])] if lo_end >= 0 else None,
            "high_zone_hz": [float(f[hi_start]), float(f[-1])] if hi_start < n else None,
            "droop_max_db": float(np.max(d[np.isfinite(d)])) if np.isfinite(d).any() else None,
            "inside_max_db": float(np.max(np.abs(inner))) if inner.size else None}


def band_edge_text(edge: dict) -> str:
    zones = [z for z in (edge["low_zone_hz"], edge["high_zone_hz"]) if z]
    tail = ""
    if not zones:
        return f"band edges: window and gate take off less than {EDGE_DB:g} dB anywhere" + tail
    spans = " and ".join(f"{a / 1e6:.6g}-{b / 1e6:.6g} MHz" for a, b in zones)
    return (f"band edges: at {spans} the window's taper and the gate's frequency kernel (which reaches past the "
            f"sweep) take off more than {EDGE_DB:g} dB, up to {edge['droop_max_db']:.0f} dB at the very edge; it is "
            "divided back out, which multiplies errors and noise there as much, so do not rely on those points "
            "(a wider sweep, or a lower Kaiser beta, narrows the zone)" + tail)


def locate_file(sweep_path: str, view: LineView, out_dir: str, opts: LocateOptions) -> tuple[dict, dict]:
    """Read, look along the line, gate if asked, and write. Returns (summary, written paths)."""
    sweep = read_phase_sweep(sweep_path, opts.columns, port=opts.port,
                             needs="looking along the line (a time-domain transform)")
    paths = output_paths(sweep_path, out_dir)
    for p in paths.values():
        check_not_input(p, [sweep_path, *[i for i in view.inputs if i]], "out")
    if opts.unit not in ("m", "ft"):
        raise OptionError("unit", f"{opts.unit!r}: use m or ft")
    summary, trace = along(sweep.freq_hz, sweep.gamma, view, opts, sweep_path)
    gated = None
    if opts.keep or opts.remove:
        gated, summary["gate"] = gated_sweep(sweep.freq_hz, sweep.gamma, view, opts, sweep_path)
        if not np.all(np.isfinite(gated)):
            raise OptionError("keep" if opts.keep else "remove", "the gated sweep is not finite; widen the window")
    with OutputFolder(out_dir, inputs=[sweep_path, *[i for i in view.inputs if i]]) as out:  # all, or none
        written = _write_locate(out.stage, sweep_path, sweep, summary, trace, gated, view, opts)
    written = {k: out.final(v) for k, v in written.items()}
    return summary, written


def _write_locate(folder: str, sweep_path: str, sweep, summary: dict, trace: dict, gated, view, opts) -> dict:
    """Write the locate outputs into ``folder`` (the transaction's staging folder); returns their paths."""
    paths = output_paths(sweep_path, folder)
    written = {}
    if gated is not None:
        g = summary["gate"]
        write_touchstone(paths["gated_s1p"], sweep.freq_hz, gated, comments=[
            f"deembed: {os.path.basename(sweep_path)} with {g['action']} {g['window']} along the line",
            g["band_edge_text"], "reference 50 ohm"])
        written["gated_s1p"] = paths["gated_s1p"]
    write_trace_csv(trace, paths["along_csv"])
    written["along_csv"] = paths["along_csv"]
    if opts.plots:
        save(along_plot(trace, summary, opts.unit, described_m=view.described_length_m), paths["along_png"])
        written["along_png"] = paths["along_png"]
    summary["outputs"] = {k: os.path.basename(v) for k, v in written.items()}
    summary["outputs"]["along_json"] = os.path.basename(paths["along_json"])
    write_text_atomic(paths["along_json"], json.dumps(to_jsonable(summary), indent=2, allow_nan=False) + "\n")
    written["along_json"] = paths["along_json"]
    return written


def write_trace_csv(trace: dict, path: str) -> None:
    """The trace as CSV: one row per time sample; levels in dB (20 log10 of the magnitude)."""
    tau = trace["one_way_delay_s"]
    cols = {"one_way_delay_ns": tau * 1e9}
    if trace["distance_m"] is not None:
        cols["distance_m"] = trace["distance_m"]
        cols["distance_ft"] = trace["distance_m"] * FEET_PER_M
    with np.errstate(divide="ignore"):
        cols["seen_db"] = 20 * np.log10(trace["seen"])
        if trace["at_point"] is not None:
            cols["at_point_db"] = 20 * np.log10(trace["at_point"])
    for k in ("impulse", "step", "impedance_ohm"):
        if trace[k] is not None:
            cols[k] = trace[k]
    head = ",".join(cols)
    data = np.column_stack(list(cols.values()))
    with atomic_path(path) as tmp:
        with open(tmp, "w", encoding="utf-8") as fh:
            fh.write(head + "\n")
            np.savetxt(fh, data, delimiter=",", fmt="%.9g")
