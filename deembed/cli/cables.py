"""``deembed cables``: the cable catalog."""
from __future__ import annotations

from typing import Optional

import typer

from .options import CablesOpt


def cables_command(cables: Optional[str] = CablesOpt,
                   at: str = typer.Option("10MHz,100MHz", "--at", help="Frequencies to show the loss at.")):
    """List the cable catalog with loss per 100 m and per 100 ft."""
    from ..io.cables import catalog
    from ..base.units import FEET_PER_M, parse_frequency

    freqs = [parse_frequency(t.strip(), "--at") for t in at.split(",") if t.strip()]
    cat = catalog(cables)
    head = f"{'id':15}{'Z0':>5}{'VF':>6}  " + "".join(f"{f'dB/100m @{f / 1e6:g}MHz':>20}" for f in freqs) + "  name"
    print(head)
    for c in cat.values():
        losses = "".join(f"{float(c.loss_db_per_100ft(f)) * FEET_PER_M:>20.2f}" for f in freqs)
        print(f"{c.id:15}{c.z0_ohm:>5g}{c.vf:>6.2f}  {losses}  {c.name}")
    print("\nFigures are generic nominal values from memory unless your catalog says otherwise; "
          "measure your own run with `deembed characterize` when it matters.")
