"""``deembed demo``: the main job on the bundled sample sweeps."""
from __future__ import annotations


import typer



def demo_command(out: str = typer.Option("out/demo", "--out", help="Folder for the demo's results.")):
    """Run the main job on the bundled sample sweeps of an invented station."""
    from ..jobs.demo import run_demo

    run_demo(out)
