"""``deembed locate``: where along the line the reflections come from."""
from __future__ import annotations

import json
from typing import List, Optional

import typer

from ..base.errors import OptionError
from .options import CableOpt, CablesOpt, ColumnsOpt, DelayOpt, LineOpt, LossOpt, PortOpt, VfOpt, Z0Opt, check_port


def _db(text: str, option: str) -> float:
    from ..base.units import parse_db

    v = parse_db(text, option, "level", "30dB")
    if not 0 < v <= 200:
        raise OptionError(option, f"{text!r}: give a level above 0 dB and at most 200 dB, e.g. 30dB")
    return v


def locate_command(
    sweep: str = typer.Argument(..., help="Sweep taken at the analyzer end, on equal frequency steps: Touchstone, "
                                          "or a text table with --columns."),
    cable: Optional[str] = CableOpt,
    length: Optional[str] = typer.Option(None, "--length", help="The run's physical length (30m, 98ft), if known: "
                                                                "compared with the far end the sweep finds."),
    vf: Optional[str] = VfOpt,
    delay: Optional[str] = DelayOpt,
    z0: Optional[str] = Z0Opt,
    loss: Optional[List[str]] = LossOpt,
    line: Optional[str] = LineOpt,
    cables: Optional[str] = CablesOpt,
    port: Optional[int] = PortOpt,
    columns: Optional[str] = ColumnsOpt,
    out: str = typer.Option("deembed-out", "--out", help="Folder for the results (created if needed)."),
    unit: str = typer.Option("m", "--unit", help="Distance unit for display: m or ft (JSON is always in m)."),
    lowpass: bool = typer.Option(False, "--lowpass", help="Low-pass view (signed reflections and impedance along "
                                                          "the line); needs a sweep whose points are multiples of "
                                                          "its step, from near 0 Hz."),
    beta: float = typer.Option(6.0, "--kaiser-beta", help="Kaiser window beta: 0 none (sharpest, side lobes -13 dB), "
                                                          "6 (default, side lobes about -44 dB), 10 smoother."),
    pad: int = typer.Option(8, "--pad", help="Zero padding factor for a smooth trace (1 to 64)."),
    threshold: str = typer.Option("30dB", "--threshold", help="List reflections down to this far below the "
                                                              "strongest, e.g. 30dB."),
    floor: Optional[str] = typer.Option(None, "--floor", help="List only reflections whose seen return loss is at "
                                                              "most this, e.g. 40dB."),
    keep: Optional[str] = typer.Option(None, "--keep", help="Keep only this stretch of the line, FROM:TO (e.g. "
                                                            "3m:60m, or 15ns:300ns one way), and write the sweep "
                                                            "back as <name>.gated.s1p."),
    remove: Optional[str] = typer.Option(None, "--remove", help="Remove this stretch of the line, FROM:TO (e.g. "
                                                                "0m:3m for the analyzer jumper), and write "
                                                                "<name>.gated.s1p."),
    resolve: Optional[str] = typer.Option(None, "--resolve", help="Also say what sweep would resolve this distance, "
                                                                  "e.g. 0.5m."),
    no_plots: bool = typer.Option(False, "--no-plots", help="Skip the PNG plot."),
    as_json: bool = typer.Option(False, "--json", help="Print the summary as JSON on standard output."),
):
    """Look along the line: where reflections sit, the far end, the line's length; gate a stretch."""
    from ..io.jsonfile import to_jsonable
    from ..jobs import locate as job

    check_port(port)
    if unit not in ("m", "ft"):
        raise OptionError("--unit", f"{unit!r}: use m or ft")
    if not 0 <= beta <= 40:
        raise OptionError("--kaiser-beta", f"{beta:g}: use a beta from 0 (no window) to 40")
    if not 1 <= pad <= 64:
        raise OptionError("--pad", f"{pad}: use a padding factor from 1 to 64")
    view = job.line_view(cable=cable, length=length, vf=vf, delay=delay, z0=z0, loss=loss or (), line=line,
                         cables=cables)
    from ..io.tablesweep import parse_columns

    opts = job.LocateOptions(port=port, columns=parse_columns(columns) if columns else None, lowpass=lowpass, beta=beta, pad=pad,
                             threshold_db=_db(threshold, "--threshold"),
                             floor_db=_db(floor, "--floor") if floor else None, unit=unit, keep=keep, remove=remove,
                             resolve=resolve, plots=not no_plots)
    from ..io.outfolder import claimed

    with claimed(out):  # --out is this run's from here: a second run into it is refused at once
        summary, _ = job.locate_file(sweep, view, out, opts)
    if as_json:
        print(json.dumps(to_jsonable(summary), indent=2))
    else:
        from ..render.along import locate_text

        print(locate_text(summary, out))
