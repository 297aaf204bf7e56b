"""``deembed characterize``: measure a feed line from its analyzer end with standards at its far end.

A plain function with typer-annotated options; ``deembed.cli`` registers it as a command. It parses the
options, calls :func:`deembed.characterize.characterize`, writes the run's 2-port and prints a report.
"""
from __future__ import annotations

import json
import os
from typing import List, Optional

import typer

from ..base.errors import InputFileError, OptionError, OutputWriteError
from .options import CablesOpt, split_list


def characterization_name(first_sweep: str) -> str:
    """'far-open.s1p' -> 'far.line.s2p': the stated name of the run's 2-port in the --out folder."""
    import os
    import re

    stem = os.path.splitext(os.path.basename(first_sweep))[0]
    stem = re.sub(r"[-_. ]?(open|short|load)$", "", stem, flags=re.I)
    return f"{stem}.line.s2p" if stem else "line.s2p"


def characterize_command(
    open_file: Optional[str] = typer.Option(None, "--open", help="Sweep (.s1p) with an open at the far end."),
    short_file: Optional[str] = typer.Option(None, "--short", help="Sweep (.s1p) with a short at the far end."),
    load_file: Optional[str] = typer.Option(None, "--load", help="Sweep (.s1p) with a 50 ohm load at the far end."),
    out: str = typer.Option("deembed-out", "--out", metavar="DIR",
                            help="Folder for the run's 2-port, written as NAME.line.s2p (NAME: the first sweep's "
                                 "file name without -open, -short or -load); use it with `deembed correct --line`."),
    length: Optional[str] = typer.Option(None, "--length", help="Physical length of the run, e.g. 30m or 98ft: "
                                                                "gives the velocity factor and loss per 100 m/ft."),
    cable: Optional[str] = typer.Option(None, "--cable", help="Catalog cable id to compare the measured loss with."),
    cables: Optional[str] = CablesOpt,
    z0: str = typer.Option("50ohm", "--z0", help="Nominal Z0 for a one-standard fit, e.g. 50ohm."),
    open_c: Optional[str] = typer.Option(None, "--open-c", help="The open's fringing capacitance, e.g. 12fF "
                                                                "(default: ideal open)."),
    short_l: Optional[str] = typer.Option(None, "--short-l", help="The short's inductance, e.g. 5pH "
                                                                  "(default: ideal short)."),
    load_r: Optional[str] = typer.Option(None, "--load-r", help="The load's resistance, e.g. 50.3ohm "
                                                                "(default: 50 ohm)."),
    at: Optional[List[str]] = typer.Option(None, "--at", metavar="FREQ",
                                           help="Frequencies to report the loss at, e.g. 7.1MHz,21MHz (commas, or "
                                                "repeat the option)."),
    as_json: bool = typer.Option(False, "--json", help="Print the report as JSON on standard output."),
):
    """Characterize a feed line from open/short/load sweeps taken through it, for `correct --line`.

    Input files above 256 MiB are refused; --max-input-size SIZE (e.g. 1GiB, before or after the command name)
    or DEEMBED_MAX_INPUT_SIZE raises the limit.
    """
    import numpy as np

    from ..render.text import report_text
    from ..io import cables as _cables
    from ..analysis.characterize import characterization_report, characterize
    from ..io.charfile import write_characterization
    from ..io.atomic import check_not_input
    from ..io.outfolder import OutputFolder, claimed
    from ..io.touchstone import read_sweep
    from ..base.units import parse_capacitance, parse_frequency, parse_inductance, parse_length, parse_resistance

    given = {name: path for name, path in (("open", open_file), ("short", short_file), ("load", load_file)) if path}
    if not given:
        raise OptionError("--open", "give the far-end sweeps: --open and --short (and --load), or one of them alone")
    if str(out).lower().endswith(".s2p"):
        raise OptionError("--out", f"{out!r}: --out is a folder (the run's 2-port is written into it as NAME.line.s2p); "
                                   "give a folder, e.g. --out results")
    out_file = os.path.join(out, characterization_name(next(iter(given.values()))))
    check_not_input(out, list(given.values()) + [cables], "--out")  # --out naming an input file itself
    check_not_input(out_file, list(given.values()) + [cables], "--out")
    z0 = parse_resistance(z0, "--z0")
    if load_r is not None and "load" not in given:
        raise OptionError("--load-r", "describes the load standard; give --load too, or drop --load-r")
    if open_c is not None and "open" not in given:
        raise OptionError("--open-c", "describes the open standard; give --open too, or drop --open-c")
    if short_l is not None and "short" not in given:
        raise OptionError("--short-l", "describes the short standard; give --short too, or drop --short-l")
    c_f = parse_capacitance(open_c, "--open-c") if open_c is not None else 0.0
    l_h = parse_inductance(short_l, "--short-l") if short_l is not None else 0.0
    r_ohm = parse_resistance(load_r, "--load-r") if load_r is not None else 50.0
    # a calibration standard's offsets are femtofarads, picohenries and ohms near 50 (common practice, no
    # source): far beyond these bounds the value is a typing slip, and the maths would give no line at all
    if abs(c_f) > 1e-9:
        raise OptionError("--open-c", f"{open_c!r}: an open standard's fringing capacitance is femtofarads to a "
                                      "few picofarads; give at most 1nF, e.g. 12fF")
    if abs(l_h) > 1e-6:
        raise OptionError("--short-l", f"{short_l!r}: a short standard's inductance is picohenries to a few "
                                       "nanohenries; give at most 1uH, e.g. 5pH")
    if not 0.5 <= r_ohm <= 5000:
        raise OptionError("--load-r", f"{load_r!r}: a load standard is close to 50 ohm; give 0.5 to 5000 ohm")
    _refuse_same_file_twice(given)
    length_m = parse_length(length, "--length", allow_zero=False) if length is not None else None
    cab = _cables.lookup(cable, _cables.catalog(cables), "--cable") if cable else None
    at_hz = None
    if at:
        at_hz = sorted({parse_frequency(t, "--at") for t in split_list(at)})

    with claimed(out):  # the folder is this run's from here: a second run into it is refused at once
        sweeps = {name: read_sweep(path, expect_ports=1) for name, path in given.items()}
        names = list(sweeps)
        ref = sweeps[names[0]]
        for name in names[1:]:
            sw = sweeps[name]
            if sw.freq_hz.shape != ref.freq_hz.shape or not np.array_equal(sw.freq_hz, ref.freq_hz):
                raise InputFileError(given[name], f"its frequencies differ from those of {given[names[0]]}; sweep "
                                                  "every standard over the same points")
        if ref.freq_hz.size and ref.freq_hz[0] <= 0:
            raise InputFileError(given[names[0]], "starts at 0 Hz; a line cannot be characterized at DC (its model "
                                                  "has no Z0 there); drop the 0 Hz point")
        gam = {name: sw.gamma for name, sw in sweeps.items()}
        ch = characterize(ref.freq_hz, gamma_open=gam.get("open"), gamma_short=gam.get("short"),
                          gamma_load=gam.get("load"), z0_ohm=z0, open_c_f=c_f, short_l_h=l_h, load_r_ohm=r_ohm)
        report = characterization_report(ch, at_hz=at_hz, length_m=length_m, cable=cab,
                                         gamma_open=gam.get("open"), gamma_short=gam.get("short"))
        report["inputs"] = dict(given)
        report["out"] = str(out_file)
        with OutputFolder(out, inputs=[*given.values(), cables]) as folder:
            write_characterization(folder.path(os.path.basename(out_file)), ch,
                                   comments=tuple(f"{k}: {v}" for k, v in given.items()))
    if as_json:
        print(json.dumps(report, indent=2))
    else:
        print(report_text(report))


def _refuse_same_file_twice(given: dict) -> None:
    """Each standard needs its own sweep: refuse one file given for two of them."""
    names = list(given)
    for i, a in enumerate(names):
        for b in names[i + 1:]:
            try:
                same = os.path.samefile(given[a], given[b])
            except OSError:
                same = os.path.abspath(given[a]) == os.path.abspath(given[b])
            if same:
                raise OptionError(f"--{b}", f"{given[b]} is also given as --{a}; each standard needs its own "
                                            f"sweep (taken with the {b} at the far end)")
