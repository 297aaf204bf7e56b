"""``deembed budget``: the power budget along a line."""
from __future__ import annotations

import json
from dataclasses import replace
from typing import Optional

import typer

from ..base.errors import OptionError


def budget_command(
    power: str = typer.Option(..., "--power", help="Forward power at the transmitter, e.g. 100W."),
    loss: str = typer.Option(..., "--loss", help="One-way matched loss of the line, e.g. 1.8dB."),
    antenna_swr: Optional[str] = typer.Option(None, "--antenna-swr", help="SWR at the antenna, e.g. 2.5 (or 2.5:1)."),
    measured_swr: Optional[str] = typer.Option(None, "--measured-swr", help="SWR read at the transmitter end, e.g. "
                                                                            "1.8: the antenna's is inferred."),
    as_json: bool = typer.Option(False, "--json", help="Print a JSON object on standard output."),
):
    """Power budget along a line: what reaches the antenna, what comes back, what the line burns."""
    from ..physics import rf
    from ..physics.budget import MAX_SWR, antenna_swr_from_measured, check_matched_loss, check_power, power_budget
    from ..base.units import parse_db, parse_power, parse_swr

    p = parse_power(power)
    check_power(p, "--power")
    loss = parse_db(loss, "--loss", "matched loss", "1.8dB")
    check_matched_loss(loss, "--loss")
    if (antenna_swr is None) == (measured_swr is None):
        raise OptionError("--antenna-swr", "give exactly one of --antenna-swr and --measured-swr")
    for opt, text in (("--antenna-swr", antenna_swr), ("--measured-swr", measured_swr)):
        if text is not None and parse_swr(text, opt) > MAX_SWR:
            raise OptionError(opt, f"{text!r} is above {MAX_SWR:.0f}:1, where every figure is that of a total "
                                   "reflection (|Gamma| = 1 to six digits); give the SWR the analyzer shows, or "
                                   f"{MAX_SWR:.0f} at most")
    if antenna_swr is not None:
        antenna_swr = parse_swr(antenna_swr, "--antenna-swr")
    else:
        measured_swr = parse_swr(measured_swr, "--measured-swr")
    swr_ant = antenna_swr if antenna_swr is not None else antenna_swr_from_measured(measured_swr, loss)
    g_ant = float(rf.gamma_mag_from_swr(swr_ant))
    b = power_budget(p, loss, g_ant)
    if measured_swr is not None:
        b = replace(b, inferred_from_measured_swr=measured_swr)
    from ..io.jsonfile import to_jsonable

    if as_json:
        print(json.dumps(to_jsonable(b.to_dict()), indent=2))
        return
    from ..render.text import budget_text

    print(budget_text(b, p, loss))
