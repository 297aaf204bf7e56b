"""``deembed trend``: how each feed's resonance, lowest SWR and line loss move over the recorded runs."""
from __future__ import annotations

import json
from typing import Optional

import typer


def trend_command(
    source: str = typer.Argument(..., metavar="SITE_OR_STORE", help="A site file (its history store is used) or a history store: a "
                                           ".sqlite file or a postgresql:// URL."),
    antenna: Optional[str] = typer.Option(None, "--antenna", help="Only this antenna (its name in the store)."),
    out: str = typer.Option(..., "--out", help="Folder for the trend pages (<name>.trend.html), plots and "
                                               "trend.json."),
    max_loss_rise: Optional[str] = typer.Option(None, "--max-loss-rise", help="Flag line loss rising faster than "
                                                "this per year, e.g. 0.2dB (default 0.2dB)."),
    max_drift: Optional[str] = typer.Option(None, "--max-drift", help="Flag a resonance drifting faster than this "
                                            "per year: a share of the frequency (0.2%, the default) or a "
                                            "frequency (20kHz)."),
    as_json: bool = typer.Option(False, "--json", help="Print entries with runs, slopes per year (with 95 % "
                                                       "intervals) and flags as JSON on standard output."),
):
    """Trends over time per antenna: fitted slopes per year with intervals, and flags for line loss rising,
    resonance drifting or a step the earlier trend does not explain.

    Exit status 0 when nothing is flagged, 1 when something is, 2 for bad input.
    """
    from ..analysis.trend import parse_trend_limits
    from ..io.jsonfile import to_jsonable
    from ..jobs.trend import run_trend, trend_json, trend_text

    limits = parse_trend_limits(max_loss_rise, max_drift)
    from ..io.outfolder import claimed

    with claimed(out):  # --out is this run's from here: a second run into it is refused at once
        result = run_trend(source, out, antenna=antenna, limits=limits)
    if as_json:
        print(json.dumps(to_jsonable(trend_json(result)), indent=2, allow_nan=False))
    else:
        print(trend_text(result, out))
    if result["flagged"]:
        raise typer.Exit(code=1)
