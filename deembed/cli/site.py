"""``deembed site``: every antenna of a site corrected and checked against its baseline."""
from __future__ import annotations

import json
from typing import Optional

import typer

from ..base.errors import OptionError
from ..base.verdicts import WITHIN


def site_command(
    site_file: str = typer.Argument(..., help="Site file (TOML): the antennas, their lines, baselines and latest sweeps."),
    out: str = typer.Option("deembed-site", "--out", help="Folder for the results: index.html, site.json and "
                                                          "a folder per antenna."),
    workers: int = typer.Option(2, "--workers", help="Processes to run antennas on (default 2; never more than the "
                                                     "antennas or the usable cores: then they run in turn)."),
    time_limit: str = typer.Option("10min", "--time-limit", help="Time limit per antenna, with its unit (s, min, "
                                                                 "h), e.g. 90s or 10min (the default); none for no "
                                                                 "limit. An antenna still running then is recorded "
                                                                 "as failed and the others finish."),
    as_json: bool = typer.Option(False, "--json", help="Print the site summary as JSON on standard output."),
    record: Optional[str] = typer.Option(None, "--record", help="Record into this history store (a SQLite file or "
                                         "a postgresql:// URL) instead of the site's own (its history key, or "
                                         "the .history.sqlite file beside the site file)."),
    no_record: bool = typer.Option(False, "--no-record", help="Record nothing and write no trend pages."),
):
    """Check every antenna of a site against its baseline; one index page. Exit 0 when all are within limits, 1 otherwise."""
    from ..io.jsonfile import to_jsonable
    from ..jobs.site import run_site
    from ..render.text import site_text, stderr_progress

    if record is not None and no_record:
        raise OptionError("--no-record", "give either --record STORE or --no-record, not both")
    from ..jobs.pool import parse_duration

    if workers < 1:
        raise OptionError("--workers", f"{workers}: give 1 or more processes")
    limit_s = parse_duration(time_limit)
    from ..io.outfolder import claimed

    with claimed(out):  # --out is this run's from here: a second run into it is refused at once
        summary = run_site(site_file, out, workers=workers, progress=stderr_progress(), time_limit_s=limit_s,
                           record=False if no_record else (record if record is not None else True))
    if as_json:
        print(json.dumps(to_jsonable(summary), indent=2, allow_nan=False))
    else:
        print(site_text(summary, out))
    if summary["verdict"] != WITHIN:
        raise typer.Exit(code=1)
