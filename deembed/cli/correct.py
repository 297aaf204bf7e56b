"""``deembed correct``: a sweep through a known line to the feedpoint."""
from __future__ import annotations

import json
import sys
from typing import List, Optional

import typer

from .options import (CableOpt, CablesOpt, ColumnsOpt, CalOpt, DateOpt, DelayOpt, DrawsOpt, ExtrapolateOpt, LengthOpt, LineOpt,
                      LossOpt, NameOpt, PortOpt, RecordOpt, SeedOpt, TolOpt, VfOpt, Z0Opt, build_line, check_port,
                      parse_thresholds, record_options, uncertainty_settings)


def correct_command(
    sweep: str = typer.Argument(..., help="Sweep taken at the analyzer end: Touchstone (.s1p, or .s2p with --port), "
                                          "or a text table with --columns."),
    cable: Optional[str] = CableOpt,
    length: Optional[str] = LengthOpt,
    vf: Optional[str] = VfOpt,
    delay: Optional[str] = DelayOpt,
    z0: Optional[str] = Z0Opt,
    loss: Optional[List[str]] = LossOpt,
    line: Optional[str] = LineOpt,
    cables: Optional[str] = CablesOpt,
    extrapolate: bool = ExtrapolateOpt,
    port: Optional[int] = PortOpt,
    columns: Optional[str] = ColumnsOpt,
    out: str = typer.Option("deembed-out", "--out", help="Folder for the results (created if needed)."),
    swr_limits: Optional[List[str]] = typer.Option(None, "--swr-limits", metavar="SWR",
                                                   help="SWR levels for the spans (commas, or repeat the option; "
                                                        "default 1.5,2,3)."),
    target: Optional[str] = typer.Option(None, "--target", metavar="FREQ", help="Wanted resonant frequency, e.g. 7.15MHz: trimming advice."),
    power: Optional[str] = typer.Option(None, "--power", help="Transmitter power for a power budget, e.g. 100W."),
    bands: bool = typer.Option(False, "--bands", help="Check the built-in sample band list."),
    bands_file: Optional[str] = typer.Option(None, "--bands-file", help="Check the bands in this TOML file."),
    no_plots: bool = typer.Option(False, "--no-plots", help="Skip the PNG plots and the HTML report."),
    as_json: bool = typer.Option(False, "--json", help="Print the summary as JSON on standard output."),
    record: Optional[str] = RecordOpt,
    date: Optional[str] = DateOpt,
    name: Optional[str] = NameOpt,
    tol: Optional[List[str]] = TolOpt,
    draws: int = DrawsOpt,
    seed: int = SeedOpt,
    cal_uncertainty: str = CalOpt,
):
    """Correct a sweep through a known line: feedpoint Touchstone, table, summary, plots and report.

    Input files above 256 MiB are refused; --max-input-size SIZE (e.g. 1GiB, before or after the command name)
    or DEEMBED_MAX_INPUT_SIZE raises the limit.
    """
    from ..io.jsonfile import to_jsonable
    from ..io.outfolder import claimed
    from ..jobs import correct as workflow
    from ..base.units import parse_frequency, parse_power
    from ..physics.budget import check_power
    from ..io.tablesweep import parse_columns

    check_port(port)
    if power:
        check_power(parse_power(power), "--power")
    the_date, _ = record_options(record, date, name)
    settings = uncertainty_settings(draws, seed, cal_uncertainty)
    # the folder is this run's from here, before any file is read (a second run into it is refused at once),
    # and the run's outputs are one set: an earlier run's files for this sweep that this one does not write
    # go with the commit (but not NAME.along.png, which `deembed locate` writes under the same name)
    own = [p for k, p in workflow.output_paths(sweep, "").items() if k != "along_png"]
    with claimed(out, replaces=own):
        the_line, notes = build_line(cable, length, vf, delay, z0, loss, line, cables, extrapolate, tol)
        opts = workflow.Options(
            port=port, thresholds=parse_thresholds(swr_limits or "1.5,2,3"),
            target_hz=parse_frequency(target, "--target") if target else None,
            power_w=parse_power(power) if power else None,
            bands=bands, bands_file=bands_file, plots=not no_plots, html=not no_plots, notes=notes,
            uncertainty=settings,
            columns=parse_columns(columns) if columns is not None else None,
        )
        corr, summary, _ = workflow.correct_file(sweep, the_line, out, opts, line_inputs=[line, cables])
    if as_json:
        print(json.dumps(to_jsonable(summary), indent=2))
    else:
        from ..render.text import correction_text

        print(correction_text(summary, out))
    if record is not None:
        from ..jobs.record import record_correction, recorded_text

        info = record_correction(record, corr, summary, sweep, name=name, date=the_date)
        print(recorded_text(info), file=sys.stderr if as_json else sys.stdout)
