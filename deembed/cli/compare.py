"""``deembed compare``: check a feed against its baseline after work.

Exit status: 0 when everything is within its limits, 1 when a limit is exceeded, 2 for bad input
(:func:`deembed.cli.app.main` turns a :class:`~deembed.base.errors.DeembedError` into one line).
"""
from __future__ import annotations

import json
import os
import sys
from typing import List, Optional

import typer

from .options import (CableOpt, CablesOpt, ColumnsOpt, CalOpt, DelayOpt, DrawsOpt, ExtrapolateOpt, LengthOpt, LineOpt, LossOpt,
                      NameOpt, PortOpt, RecordOpt, SeedOpt, TolOpt, VfOpt, Z0Opt, OPTION_FOR_FIELD, build_line,
                      check_port, record_options, uncertainty_settings)
from ..base.verdicts import WITHIN

MaxShiftOpt = typer.Option(None, "--max-shift", help="Largest acceptable move of the feedpoint resonance, "
                                                     "e.g. 50kHz (default 50kHz).")
MaxSwrRiseOpt = typer.Option(None, "--max-swr-rise", help="Largest acceptable rise of the lowest feedpoint SWR "
                                                          "(default 0.2).")
MaxGammaOpt = typer.Option(None, "--max-gamma-change", help="Largest acceptable change of the feedpoint |Gamma| "
                                                            "at any frequency (default 0.1).")
MaxBwLossOpt = typer.Option(None, "--max-bw-loss", help="Largest acceptable loss of the 2:1 bandwidth, per cent "
                                                        "of the baseline's, e.g. 25% (default 25%).")
MaxLossChangeOpt = typer.Option(None, "--max-loss-change", help="Largest acceptable change of the line's matched "
                                                                "loss with --after-line, e.g. 0.5dB (default 0.5dB).")


def compare_command(
    baseline: str = typer.Argument(..., help="Sweep taken when the antenna was known good (.s1p, or a table with --columns)."),
    after: str = typer.Argument(..., help="Sweep taken after the work (.s1p, or a table with --columns)."),
    cable: Optional[str] = CableOpt,
    length: Optional[str] = LengthOpt,
    vf: Optional[str] = VfOpt,
    delay: Optional[str] = DelayOpt,
    z0: Optional[str] = Z0Opt,
    loss: Optional[List[str]] = LossOpt,
    line: Optional[str] = LineOpt,
    cables: Optional[str] = CablesOpt,
    extrapolate: bool = ExtrapolateOpt,
    after_line: Optional[str] = typer.Option(None, "--after-line", help="A fresh line description or "
                                             "characterization (.toml/.s2p) for the AFTER sweep; the baseline "
                                             "keeps the line options."),
    port: Optional[int] = PortOpt,
    columns: Optional[str] = ColumnsOpt,
    max_shift: Optional[str] = MaxShiftOpt,
    max_swr_rise: Optional[str] = MaxSwrRiseOpt,
    max_gamma_change: Optional[str] = MaxGammaOpt,
    max_bw_loss: Optional[str] = MaxBwLossOpt,
    max_loss_change: Optional[str] = MaxLossChangeOpt,
    out: Optional[str] = typer.Option(None, "--out", help="Folder for the overlay plot, the JSON and a small "
                                                          "HTML page."),
    as_json: bool = typer.Option(False, "--json", help="Print the comparison as JSON on standard output."),
    record: Optional[str] = RecordOpt,
    date: Optional[str] = typer.Option(None, "--date", help="The day the AFTER sweep was taken, YYYY-MM-DD, for "
                                                            "--record (default: its file's modification day, flagged)."),
    baseline_date: Optional[str] = typer.Option(None, "--baseline-date", help="The day the baseline was taken, "
                                                "for --record (default: its file's modification day, flagged)."),
    name: Optional[str] = NameOpt,
    tol: Optional[List[str]] = TolOpt,
    draws: int = DrawsOpt,
    seed: int = SeedOpt,
    cal_uncertainty: str = CalOpt,
):
    """Compare an after-work sweep with a baseline through the same line: did the antenna or the line change?

    Exit status 0 when within every limit, 1 when any is exceeded, 2 for bad input.
    """
    from ..analysis.limits import parse_limits
    from ..io.jsonfile import to_jsonable
    from ..jobs.compare import compare_files_with_corrections
    from ..render.text import compare_text
    from ..io.tablesweep import parse_columns

    check_port(port)
    limits = parse_limits({"max_shift": max_shift, "max_swr_rise": max_swr_rise,
                           "max_gamma_change": max_gamma_change, "max_bw_loss": max_bw_loss,
                           "max_loss_change": max_loss_change})
    the_date, the_baseline_date = record_options(record, date, name, baseline_date=baseline_date)
    from ..analysis.trust import UncertaintySettings

    settings = uncertainty_settings(draws, seed, cal_uncertainty)
    the_line, line_notes = build_line(cable, length, vf, delay, z0, loss, line, cables, extrapolate, tol)
    from ..io.outfolder import claimed

    with claimed(out):  # --out (when given) is this run's from here: a second run into it is refused at once
        result, before, later = compare_files_with_corrections(baseline, after, the_line, after_line=after_line,
                                                               limits=limits, port=port, out=out, cables=cables,
                                                               extrapolate=extrapolate, inputs=[line],
                                                               settings=settings if settings is not None
                                                               else UncertaintySettings(draws=0),
                                                               tolerances=tol or (),
                                                               columns=parse_columns(columns) if columns else None,
                                                               warnings=line_notes)
    if as_json:
        print(json.dumps(to_jsonable(result), indent=2, allow_nan=False))
    else:
        print(compare_text(result, OPTION_FOR_FIELD))
        if out:
            print(f"\nresults in {os.path.join(out, '')} (open the .compare.html)")
    if record is not None:
        from ..jobs.record import record_comparison, recorded_text

        info = record_comparison(record, before, later, result, baseline, after, name=name, date=the_date,
                                 baseline_date=the_baseline_date)
        print(recorded_text(info), file=sys.stderr if as_json else sys.stdout)
    if result["verdict"]["status"] != WITHIN:
        raise typer.Exit(code=1)


