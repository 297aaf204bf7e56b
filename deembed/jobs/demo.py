"""`deembed demo`: the main job on the bundled sample sweeps of the invented Ridgeback Hill station."""
from __future__ import annotations

import os

from ..io.linefile import line_from_options
from ..render.text import compare_text, correction_text, site_text
from . import correct as workflow
from .compare import compare_files
from .samples import write_samples
from .site import run_site
from .compare import compare_files_with_corrections
from .record import record_comparison
from .sample_history import SWEEP_DATES, antennas, write_history
from .trend import run_trend, trend_text
from .locate import LocateOptions, line_view, locate_file
from ..render.along import locate_text


def sample_folder(out_dir: str) -> str:
    """The repository's sample_sweeps/ when running from a checkout; otherwise freshly generated ones."""
    here = os.path.join(os.path.dirname(os.path.dirname(os.path.dirname(os.path.abspath(__file__)))), "sample_sweeps")
    if os.path.isfile(os.path.join(here, "dipole-40m.s1p")):
        return here

    folder = os.path.join(out_dir, "sample_sweeps")
    write_samples(folder)
    write_history(os.path.join(folder, "history"))
    return folder


def history_demo(folder: str, out_dir: str, echo=print) -> dict:
    """Record the invented four-year history the way ``deembed compare --record`` does (each visit's sweep
    against the feed's first one, dated), then write the trend pages. Returns the trend result."""
    store = os.path.join(out_dir, "ridgeback-hill-years.history.sqlite")
    for name, (prefix, _, _, _, line_file) in antennas().items():
        line, _ = line_from_options(line_file=os.path.join(folder, line_file))
        first = os.path.join(folder, f"{prefix}-{SWEEP_DATES[0]}.s1p")
        for date in SWEEP_DATES[1:]:
            path = os.path.join(folder, f"{prefix}-{date}.s1p")
            res, base, later = compare_files_with_corrections(first, path, line)
            record_comparison(store, base, later, res, first, path, name=name, date=date,
                              baseline_date=SWEEP_DATES[0])
    result = run_trend(store, os.path.join(out_dir, "trend"))
    echo(trend_text(result, os.path.join(out_dir, "trend")))
    return result


def run_demo(out_dir: str, echo=print) -> dict:
    """Correct the station's sweeps into ``out_dir``; returns {name: summary}."""
    workflow.prepare_out_dir(out_dir)
    samples = sample_folder(out_dir)
    s = lambda name: os.path.join(samples, name)  # noqa: E731
    results = {}

    echo("== 40 m dipole, swept from the analyzer end through a jumper and 36 m of foam coax (line file) ==")
    line, notes = line_from_options(line_file=s("dipole-40m.line.toml"))
    opts = workflow.Options(target_hz=7.1e6, power_w=100.0, bands=True, notes=notes)
    folder = os.path.join(out_dir, "dipole-40m")
    _, summary, _ = workflow.correct_file(s("dipole-40m.s1p"), line, folder, opts)
    echo(correction_text(summary, folder))
    results["dipole-40m"] = summary

    echo("\n== 2 m vertical on the tower, 45 m of RG-213 (catalog cable) ==")
    line, notes = line_from_options(cable="rg213", length="45m")
    opts = workflow.Options(power_w=50.0, bands=True, notes=notes)
    folder = os.path.join(out_dir, "vertical-2m")
    _, summary, _ = workflow.correct_file(s("vertical-2m.s1p"), line, folder, opts)
    echo(correction_text(summary, folder))
    results["vertical-2m"] = summary

    echo("\n== After the tower work: the 2 m vertical against its baseline, and against a wet-run sweep ==")

    line, _ = line_from_options(line_file=s("vertical-2m.line.toml"))
    folder = os.path.join(out_dir, "compare")
    results["compare"] = {}
    for name in ("vertical-2m-after", "vertical-2m-wet"):
        res = compare_files(s("vertical-2m.s1p"), s(f"{name}.s1p"), line, out=folder,
                            inputs=[s("vertical-2m.line.toml")], title=f"2 m vertical: {name} against its baseline")
        echo(compare_text(res) + "\n")
        results["compare"][name] = res

    echo("== Along the line: a wide sweep (0.1 to 60 MHz) of the 30 m ground-plane's feed ==")
    folder = os.path.join(out_dir, "along")
    view = line_view(line=s("groundplane-30m.line.toml"))
    summary, _ = locate_file(s("groundplane-30m-wide.s1p"), view, folder, LocateOptions(lowpass=True))
    echo(locate_text(summary, folder) + "\n")
    results["along"] = summary
    line, _ = line_from_options(line_file=s("groundplane-30m.line.toml"))
    res = compare_files(s("groundplane-30m-wide-baseline.s1p"), s("groundplane-30m-wide.s1p"), line, out=folder,
                        title="30 m ground-plane: this year's wide sweep against last year's")
    echo("-- against last year's wide sweep --\n" + compare_text(res) + "\n")
    results["along_compare"] = res

    echo("== The whole site, every antenna against its baseline (site file) ==")

    folder = os.path.join(out_dir, "site")
    # the demo records into its own output folder, not beside the sample site file
    summary = run_site(s("ridgeback-hill.site.toml"), folder,
                       record=os.path.join(out_dir, "ridgeback-hill.history.sqlite"))
    echo(site_text(summary, folder))
    results["site"] = summary

    echo("\n== Four years of the same antennas: recorded, then trended (one run slowly takes on water) ==")
    results["trend"] = history_demo(os.path.join(samples, "history"), out_dir, echo)

    echo(f"\nDemo results are in {os.path.abspath(out_dir)}/ : one folder per antenna, each with a "
         "<name>.report.html to open in a browser.")
    return results
