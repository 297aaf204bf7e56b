"""``deembed characterize``: measure a feed line from its analyzer end with standards at its far end.

A plain function with typer-annotated options; ``deembed.cli`` registers it as a command. It parses the
options, calls :func:`deembed.characterize.characterize`, writes the run's 2-port and prints a report.
"""
from __future__ import annotations

import json
from typing import List, Optional

import numpy as np
import typer

from .errors import InputFileError, OptionError


def characterize_command(
    open_file: Optional[str] = typer.Option(None, "--open", help="Sweep (.s1p) with an open at the far end."),
    short_file: Optional[str] = typer.Option(None, "--short", help="Sweep (.s1p) with a short at the far end."),
    load_file: Optional[str] = typer.Option(None, "--load", help="Sweep (.s1p) with a 50 ohm load at the far end."),
    out: str = typer.Option(..., "--out", help="Where to write the run's 2-port (.s2p); use it with "
                                               "`deembed correct --line`."),
    length: Optional[str] = typer.Option(None, "--length", help="Physical length of the run, e.g. 30m or 98ft: "
                                                                "gives the velocity factor and loss per 100 m/ft."),
    cable: Optional[str] = typer.Option(None, "--cable", help="Catalog cable id to compare the measured loss with."),
    cables: Optional[str] = typer.Option(None, "--cables", help="Your own cable catalog (TOML)."),
    z0: float = typer.Option(50.0, "--z0", help="Nominal Z0 (ohm) for a one-standard fit."),
    open_c: Optional[str] = typer.Option(None, "--open-c", help="The open's fringing capacitance, e.g. 12fF "
                                                                "(default: ideal open)."),
    short_l: Optional[str] = typer.Option(None, "--short-l", help="The short's inductance, e.g. 5pH "
                                                                  "(default: ideal short)."),
    load_r: Optional[str] = typer.Option(None, "--load-r", help="The load's resistance, e.g. 50.3ohm "
                                                                "(default: 50 ohm)."),
    at: Optional[List[str]] = typer.Option(None, "--at", help="Frequency to report the loss at, e.g. 14MHz; "
                                                              "repeat or separate with commas."),
    as_json: bool = typer.Option(False, "--json", help="Print the report as JSON on standard output."),
):
    """Characterize a feed line from open/short/load sweeps taken through it, for `correct --line`."""
    from . import cables as _cables
    from .characterize import characterization_report, characterize, write_characterization
    from .outputs import check_not_input
    from .touchstone import read_sweep
    from .units import parse_capacitance, parse_frequency, parse_inductance, parse_length, parse_resistance

    given = {name: path for name, path in (("open", open_file), ("short", short_file), ("load", load_file)) if path}
    if not given:
        raise OptionError("--open", "give the far-end sweeps: --open and --short (and --load), or one of them alone")
    if not str(out).lower().endswith(".s2p"):
        raise OptionError("--out", f"{out!r}: the run's 2-port is a Touchstone .s2p file; name it like LINE.s2p")
    check_not_input(out, list(given.values()) + [cables], "--out")
    if not (z0 > 0 and np.isfinite(z0)):
        raise OptionError("--z0", f"{z0:g}: the characteristic impedance must be a positive number of ohms")
    if load_r is not None and "load" not in given:
        raise OptionError("--load-r", "describes the load standard; give --load too, or drop --load-r")
    if open_c is not None and "open" not in given:
        raise OptionError("--open-c", "describes the open standard; give --open too, or drop --open-c")
    if short_l is not None and "short" not in given:
        raise OptionError("--short-l", "describes the short standard; give --short too, or drop --short-l")
    c_f = parse_capacitance(open_c, "--open-c") if open_c is not None else 0.0
    l_h = parse_inductance(short_l, "--short-l") if short_l is not None else 0.0
    r_ohm = parse_resistance(load_r, "--load-r") if load_r is not None else 50.0
    length_m = parse_length(length, "--length", allow_zero=False) if length is not None else None
    cab = _cables.lookup(cable, _cables.catalog(cables), "--cable") if cable else None
    at_hz = None
    if at:
        at_hz = sorted({parse_frequency(t.strip(), "--at") for item in at for t in item.split(",") if t.strip()})

    sweeps = {name: read_sweep(path, expect_ports=1) for name, path in given.items()}
    names = list(sweeps)
    ref = sweeps[names[0]]
    for name in names[1:]:
        sw = sweeps[name]
        if sw.freq_hz.shape != ref.freq_hz.shape or not np.array_equal(sw.freq_hz, ref.freq_hz):
            raise InputFileError(given[name], f"its frequencies differ from those of {given[names[0]]}; sweep every "
                                              "standard over the same points")
    if ref.freq_hz.size and ref.freq_hz[0] <= 0:
        raise InputFileError(given[names[0]], "starts at 0 Hz; a line cannot be characterized at DC (its model "
                                              "has no Z0 there); drop the 0 Hz point")
    gam = {name: sw.gamma for name, sw in sweeps.items()}
    ch = characterize(ref.freq_hz, gamma_open=gam.get("open"), gamma_short=gam.get("short"),
                      gamma_load=gam.get("load"), z0_ohm=z0, open_c_f=c_f, short_l_h=l_h, load_r_ohm=r_ohm)
    report = characterization_report(ch, at_hz=at_hz, length_m=length_m, cable=cab,
                                     gamma_open=gam.get("open"), gamma_short=gam.get("short"))
    report["inputs"] = dict(given)
    report["out"] = str(out)
    write_characterization(out, ch, comments=tuple(f"{k}: {v}" for k, v in given.items()))
    if as_json:
        print(json.dumps(report, indent=2))
    else:
        print(report_text(report))


_METHOD_TEXT = {
    "open-short-load": "open, short and load: three-term error model, the run's 2-port as measured",
    "open-short": "open and short: uniform line, Zc = sqrt(Zoc Zsc)",
    "open": "open alone: physical line model fitted",
    "short": "short alone: physical line model fitted",
}


def report_text(r: dict) -> str:
    """The characterization report as plain text."""
    from .units import fmt_freq

    m = r["model"]
    out = [f"Feed-line characterization  ->  {r.get('out', '')}",
           f"  method     {_METHOD_TEXT.get(r['method'], r['method'])}",
           f"  sweep      {fmt_freq(r['f_min_hz'])} to {fmt_freq(r['f_max_hz'])}, {r['points']} points"]
    std = r.get("standards", {})
    if std and (std.get("open_c_f") or std.get("short_l_h") or std.get("load_r_ohm", 50.0) != 50.0):
        out.append(f"  standards  open {std['open_c_f'] * 1e15:g} fF, short {std['short_l_h'] * 1e12:g} pH, "
                   f"load {std['load_r_ohm']:g} ohm")
    out.append("")
    out.append("Line model")
    out.append(f"  Z0               {m['z0_ohm']:.2f} ohm{'' if m['z0_fitted'] else ' (nominal, not measured)'}")
    out.append(f"  one-way delay    {m['delay_s'] * 1e9:.3f} ns  (electrical length {m['electrical_length_m']:.3f} m)")
    if "vf" in r:
        out.append(f"  velocity factor  {r['vf']:.4f}  over {r['length_m']:.3f} m")
    if "k1_db_per_100ft" in r:
        out.append(f"  loss law         {r['k1_db_per_100ft']:.4g} sqrt(f) + {r['k2_db_per_100ft']:.4g} f  "
                   "dB/100 ft, f in MHz")
    else:
        out.append(f"  loss law         {r['k1_db_run']:.4g} sqrt(f) + {r['k2_db_run']:.4g} f  dB for the run, "
                   "f in MHz")
    out.append(f"  model misfit     {m['residual_rms']:.2e} RMS, {m['residual_max']:.2e} worst")
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
    if r.get("notes"):
        out.append("")
        out.append("Notes")
        out += [f"  - {n}" for n in r["notes"]]
    return "\n".join(out)
