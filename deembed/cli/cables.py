"""``deembed cables``: the cable catalog."""
from __future__ import annotations

from typing import List, Optional

import typer

from .options import CablesOpt, split_list


def cables_command(cables: Optional[str] = CablesOpt,
                   at: Optional[List[str]] = typer.Option(None, "--at", metavar="FREQ",
                                                          help="Frequencies to show the loss at (commas, or repeat "
                                                               "the option; default 10MHz,100MHz).")):
    """List the cable catalog with loss per 100 m and per 100 ft."""
    from ..io.cables import catalog
    from ..base.units import FEET_PER_M, fmt_freq, parse_frequency

    freqs = [parse_frequency(t, "--at") for t in (split_list(at) or ["10MHz", "100MHz"])]
    cat = catalog(cables)
    cells = [f"{fmt_freq(f).replace(' ', '')}" for f in freqs]
    head = (f"{'id':15}{'Z0':>5}{'VF':>6}  " + "".join(f"{'dB/100m @' + c:>18}{'dB/100ft':>10}" for c in cells)
            + "  name")
    print(head)
    for c in cat.values():
        losses = "".join(f"{float(c.loss_db_per_100ft(f)) * FEET_PER_M:>18.2f}{float(c.loss_db_per_100ft(f)):>10.2f}"
                         for f in freqs)
        print(f"{c.id:15}{c.z0_ohm:>5g}{c.vf:>6.2f}  {losses}  {c.name}")
    print("\nFigures are generic nominal values from memory unless your catalog says otherwise; "
          "measure your own run with `deembed characterize` when it matters.")
