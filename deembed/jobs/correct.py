"""The main job end to end, from file names to written results.

``correct_file`` reads a sweep, removes a line, works out the findings and writes the outputs into a
folder. The command line, the demo and the site runner call it; it is a plain library function too.
"""
from __future__ import annotations

import json
import os
from dataclasses import dataclass, field, replace

import numpy as np

from ..analysis.summary import CorrectionSummary, summarise, table_columns
from ..physics.deembedding import correct
from ..base.errors import OptionError
from ..io.atomic import check_not_input
from ..physics.budget import power_budget
from ..analysis.findings import trim_advice, trim_resonance
from ..analysis.trust import UncertaintySettings, assess, resonance_draws
from ..analysis.bandcheck import band_check
from ..io.bands import load_bands
from ..analysis.summary import ranges_text
from ..base.errors import InputFileError
from ..io.atomic import write_text_atomic
from ..io.touchstone import write_touchstone
from ..render.report import write_report
from ..io.atomic import atomic_path, stem_of
from ..render import plots
from ..io.anysweep import read_any_sweep
from ..io.tablesweep import MagnitudeSweep
from ..physics.magnitude import correct_magnitude
from ..analysis.summary import magnitude_summary, magnitude_table, power_summary
from ..io.jsonfile import to_jsonable
from ..io.outfolder import OutputFolder
from ..io.numtext import is_float_table, table_blocks, write_csv_chunks
from ..analysis.along import for_correction
from ..render.along import along_plot


@dataclass
class Options:
    """What the user asked for beyond the line itself."""

    port: int | None = None
    thresholds: tuple = (1.5, 2.0, 3.0)
    target_hz: float | None = None
    power_w: float | None = None
    bands_file: str | None = None
    bands: bool = False
    plots: bool = True
    html: bool = True
    notes: list = field(default_factory=list)
    uncertainty: UncertaintySettings | None = field(default_factory=UncertaintySettings)
    columns: object = None          # a --columns text or a ColumnMap, for sweeps exported as text tables
    columns_option: str = "--columns"


def output_paths(sweep_path: str, out_dir: str) -> dict:
    stem = stem_of(sweep_path)
    j = lambda suffix: os.path.join(out_dir, stem + suffix)  # noqa: E731
    return {
        "feedpoint_s1p": j(".feedpoint.s1p"),
        "table_csv": j(".table.csv"),
        "summary_json": j(".summary.json"),
        "swr_png": j(".swr.png"),
        "smith_png": j(".smith.png"),
        "impedance_png": j(".impedance.png"),
        "return_loss_png": j(".return-loss.png"),
        "budget_png": j(".budget.png"),
        "along_png": j(".along.png"),
        "report_html": j(".report.html"),
    }


def prepare_out_dir(out_dir: str) -> None:
    """Create the output folder; refuse one that is a file or cannot be created.

    (Outputs that would overwrite an input are refused by :func:`refuse_overwriting_inputs`.)
    """
    if os.path.exists(out_dir) and not os.path.isdir(out_dir):
        raise OptionError("out", f"{out_dir} is a file; give a folder for the results")
    try:
        os.makedirs(out_dir, exist_ok=True)
    except OSError as exc:
        raise OptionError("out", f"cannot create the folder {out_dir} ({exc.strerror}); check the path: its parent "
                                   "folders must exist as folders and be writable") from None


def refuse_overwriting_inputs(paths: dict, inputs) -> None:

    for p in paths.values():
        check_not_input(p, [i for i in inputs if i], "out")


def budget_columns(corr, power_w: float) -> dict:
    """Per-frequency power budget columns for a transmitter power (the budget applied to the sweep)."""

    b = power_budget(power_w, corr.matched_loss_db, corr.gamma_feedpoint)
    return {
        "budget_forward_at_antenna_w": b["at_antenna"]["forward_w"],
        "budget_reflected_at_antenna_w": b["at_antenna"]["reflected_w"],
        "budget_delivered_w": b["at_antenna"]["delivered_w"],
        "budget_reflected_at_tx_w": b["at_transmitter"]["reflected_w"],
        "budget_line_dissipated_w": b["line"]["dissipated_w"],
        "budget_retuned_delivered_w": b["matched_at_transmitter"]["delivered_w"],
    }


def analyse(sweep, line, opts: Options):
    """Correct a sweep and work out everything the outputs show. Returns (correction, summary, table)."""
    return _analyse(sweep, line, opts)[:3]


def _analyse(sweep, line, opts: Options):
    """:func:`analyse`, and the look along the line's (trace, summary) for its plot when plots are asked for
    (worked out once per run; None without plots, so that a big sweep's trace is not kept while writing)."""
    corr = correct(sweep, line)
    check_finite(corr)
    a = assess(corr.freq_hz, corr.gamma_analyzer, corr.gamma_feedpoint, line, thresholds=opts.thresholds,
               settings=opts.uncertainty)
    summary = summarise(corr, thresholds=opts.thresholds, notes=list(opts.notes) + list(getattr(sweep, "notes", ())),
                        sweep_info={"comments": list(getattr(sweep, "comments", ()))}, assessment=a)
    budget = budget_columns(corr, opts.power_w) if opts.power_w else None
    table = table_columns(corr, budget, swr_band=a.swr_band)
    along, along_data = for_correction(corr.freq_hz, corr.gamma_analyzer, line)
    summary = replace(summary, along_the_line=along)
    if not opts.plots:
        along_data = None
    if opts.target_hz is not None:
        trim, why_not = trim_for(a, summary, opts.target_hz)
        summary = replace(summary, feedpoint=replace(summary.feedpoint, trim=trim)).warned(*why_not)
    if opts.power_w:
        summary = replace(summary, power=budget_summary(corr, budget, opts.power_w))
    if opts.bands or opts.bands_file:

        bands = load_bands(opts.bands_file)
        limit = 2.0 if 2.0 in opts.thresholds else opts.thresholds[0]
        summary = replace(summary, bands={
            "swr_limit": limit,
            "feedpoint": band_check(corr.freq_hz, corr.gamma_feedpoint, bands, limit),
            "analyzer": band_check(corr.freq_hz, corr.gamma_analyzer, bands, limit),
        })
    return corr, summary, table, along_data


def trim_for(a, summary: CorrectionSummary, target_hz: float) -> tuple:
    """Trimming advice for the series resonance the user means (see :func:`trim_resonance`), with its interval:
    ``(advice or None, warnings)``, a warning for the summary when there is none or the target is too far."""
    fp = summary.feedpoint
    primary = fp.q_freq_hz or _primary_hz(a)
    chosen = trim_resonance(fp.resonances, target_hz, primary)
    if chosen is None:
        return None, ["no series resonance at the feedpoint inside the sweep: no trimming advice; "
                      "sweep a wider range around the target"]
    j = [r["freq_hz"] for r in fp.resonances].index(chosen["freq_hz"])
    cov = a.settings.coverage if a.settings is not None else 0.95
    trim = trim_advice(chosen["freq_hz"], target_hz, resonance_draws_hz=resonance_draws(a, j), coverage=cov)
    return trim, [f"no trimming advice: {trim['refused']}"] if trim["refused"] else []


def _primary_hz(a):
    ev = a.events_fp
    if ev.primary is None or ev.nominal is None:
        return None
    v = ev.nominal.get(f"res_hz_{ev.primary}")
    return v if v is not None and np.isfinite(v) else None


def check_finite(corr) -> None:
    """Refuse a correction that is not a finite number somewhere, before anything is written.

    A Touchstone file cannot hold NaN or infinity, and findings made around such points would be
    meaningless. It happens where the line passes nothing (S21 S12 = 0, e.g. a measured 2-port of an
    open run) or where the sweep's values are extreme.
    """

    bad = ~np.isfinite(corr.gamma_feedpoint)
    if bad.any():
        raise InputFileError(corr.source, f"removing the line gives no finite feedpoint reflection at "
                                          f"{int(bad.sum())} of {bad.size} points ({ranges_text(corr.freq_hz, bad)}): "
                                          "the line passes nothing there or the sweep's values are extreme; check "
                                          "the line description (a measured 2-port's S21) and the sweep at those "
                                          "frequencies")


def budget_summary(corr, budget: dict, power_w: float) -> dict:
    """The budget at the feedpoint's best-matched frequency, for the summary."""

    return power_summary(power_w, corr.freq_hz, corr.matched_loss_db, corr.gamma_feedpoint)


def write_outputs(corr, summary: CorrectionSummary, table: dict, paths: dict, opts: Options,
                  along_data=False) -> tuple[dict, CorrectionSummary]:
    """Write every output atomically; returns the paths written and the summary with its ``outputs``.
    ``along_data``: the look along the line for its plot as :func:`_analyse` gave it (by default worked out
    here)."""

    written = {}
    comments = [f"deembed: feedpoint reflection of {os.path.basename(corr.source)}",
                f"line removed: {summary['line']['description']}",
                "reference 50 ohm"]
    write_touchstone(paths["feedpoint_s1p"], corr.freq_hz, corr.gamma_feedpoint, comments=comments)
    written["feedpoint_s1p"] = paths["feedpoint_s1p"]
    write_table_csv(table, paths["table_csv"])
    written["table_csv"] = paths["table_csv"]
    if opts.plots:
        written.update(write_plots(corr, table, paths, opts, along_data))
    summary = replace(summary, outputs={k: os.path.basename(v) for k, v in written.items()})
    if opts.html:

        write_report(paths["report_html"], corr, summary, table, written)
        written["report_html"] = paths["report_html"]
        summary = replace(summary, outputs={**summary.outputs, "report_html": os.path.basename(paths["report_html"])})
    write_text_atomic(paths["summary_json"], json.dumps(to_jsonable(summary), indent=2, allow_nan=False) + "\n")
    written["summary_json"] = paths["summary_json"]
    return written, summary


def write_table_csv(table: dict, path: str) -> None:
    """The per-frequency table as CSV (``%.9g``), written chunk by chunk; the bytes pandas'
    ``to_csv(index=False, float_format="%.9g")`` writes, at several times its speed and without pandas."""
    with atomic_path(path) as tmp:
        if not is_float_table(table):  # a column that is not float: let pandas decide its text
            import pandas as pd

            pd.DataFrame(dict(table)).to_csv(tmp, index=False, float_format="%.9g")
            return
        with open(tmp, "w", encoding="utf-8", newline="") as fh:
            write_csv_chunks(fh, table.keys(), table_blocks(table), float_format="%.9g")


def write_plots(corr, table: dict, paths: dict, opts: Options, along_data=False) -> dict:

    figs = plots.correction_plots(corr, table, opts.thresholds)
    if along_data is False:  # not worked out by the caller
        along_data = for_correction(corr.freq_hz, corr.gamma_analyzer, corr.line)[1]
    if along_data is not None:
        trace, along_summary = along_data
        figs["along_png"] = along_plot(trace, along_summary, "m", described_m=along_summary["length"] and
                                       along_summary["length"].get("described_length_m"))
    for key, fig in figs.items():
        plots.save(fig, paths[key])
    return {k: paths[k] for k in figs}


def line_sources(line) -> list:
    """Files a line was built from (a measured 2-port's path), for the output-over-input check."""
    return [getattr(part, "source", None) for part in getattr(line, "parts", ()) if getattr(part, "source", None)]


def correct_file(sweep_path: str, line, out_dir: str, opts: Options | None = None, line_inputs=(), *,
                 staged: bool = False):
    """Read, correct, analyse and write. Returns (correction, summary, written paths).

    The outputs are one transaction (:class:`~deembed.io.outfolder.OutputFolder`): all of them appear
    in ``out_dir`` or, on any failure or interruption, none does. With ``staged=True`` the caller
    already runs such a transaction and ``out_dir`` lies inside its staging folder: the files are
    written there directly.
    """

    opts = opts or Options()
    sweep = read_any_sweep(sweep_path, opts.columns, port=opts.port, expect_ports=1, option=opts.columns_option)
    inputs = [sweep_path, opts.bands_file, *line_inputs, *line_sources(line)]
    refuse_overwriting_inputs(output_paths(sweep_path, out_dir), inputs)
    if isinstance(sweep, MagnitudeSweep):
        corr, summary, table = analyse_magnitude(sweep, line, opts)
        write = write_magnitude_outputs
    else:
        corr, summary, table, along_data = _analyse(sweep, line, opts)

        def write(corr, summary, table, paths, opts):
            return write_outputs(corr, summary, table, paths, opts, along_data)
    del sweep  # the correction holds what the outputs need
    if staged:
        os.makedirs(out_dir, exist_ok=True)
        written, summary = write(corr, summary, table, output_paths(sweep_path, out_dir), opts)
        return corr, summary, written
    with OutputFolder(out_dir, inputs=inputs) as out:
        written, summary = write(corr, summary, table, output_paths(sweep_path, out.stage), opts)
    return corr, summary, {k: out.final(v) for k, v in written.items()}


# ------------------------------------------------------------------------------- sweeps without phase

def analyse_magnitude(sweep, line, opts: Options):
    """A sweep of SWR or return loss alone: the feedpoint's |Gamma| through the matched-loss relation, with its
    bound (:mod:`deembed.physics.magnitude`). Returns (correction, summary, table)."""
    corr = correct_magnitude(sweep, line)
    notes = list(opts.notes) + list(sweep.notes)
    summary = magnitude_summary(corr, thresholds=opts.thresholds, notes=notes,
                                sweep_info={"comments": list(sweep.comments), "quantity": sweep.quantity})
    budget = None
    if opts.power_w:
        budget = budget_columns_mag(corr, opts.power_w)
        summary = replace(summary, power=budget_summary_mag(corr, budget, opts.power_w))
    table = magnitude_table(corr, budget)
    if opts.target_hz is not None:
        summary = replace(summary, feedpoint={**summary.feedpoint, "trim": None}).warned(
            "no trimming advice: it needs the feedpoint resonance, which a sweep without phase cannot give")
    if opts.bands or opts.bands_file:
        bands = load_bands(opts.bands_file)
        limit = 2.0 if 2.0 in opts.thresholds else opts.thresholds[0]
        summary = replace(summary, bands={
            "swr_limit": limit,
            "feedpoint": band_check(corr.freq_hz, corr.gamma_feedpoint_mag, bands, limit),
            "analyzer": band_check(corr.freq_hz, corr.gamma_analyzer_mag, bands, limit),
        })
    return corr, summary, table


def budget_columns_mag(corr, power_w: float) -> dict:
    """The power budget per frequency from |Gamma| at the feedpoint (the budget needs only its size)."""
    g = np.minimum(corr.gamma_feedpoint_mag, 1.0)
    b = power_budget(power_w, corr.matched_loss_db, g)
    return {
        "budget_forward_at_antenna_w": b["at_antenna"]["forward_w"],
        "budget_reflected_at_antenna_w": b["at_antenna"]["reflected_w"],
        "budget_delivered_w": b["at_antenna"]["delivered_w"],
        "budget_reflected_at_tx_w": b["at_transmitter"]["reflected_w"],
        "budget_line_dissipated_w": b["line"]["dissipated_w"],
        "budget_retuned_delivered_w": b["matched_at_transmitter"]["delivered_w"],
    }


def budget_summary_mag(corr, budget: dict, power_w: float) -> dict:
    return power_summary(power_w, corr.freq_hz, corr.matched_loss_db, np.minimum(corr.gamma_feedpoint_mag, 1.0))


def write_magnitude_outputs(corr, summary: CorrectionSummary, table: dict, paths: dict,
                            opts: Options) -> tuple[dict, CorrectionSummary]:
    """The table, the summary and the SWR plot; returns the paths written and the summary with its ``outputs``.
    No Touchstone file and no HTML report: without phase there is no reflection coefficient to write, and the
    report's Smith chart and impedance plots need one."""
    written = {}
    write_table_csv(table, paths["table_csv"])
    written["table_csv"] = paths["table_csv"]
    if opts.plots:
        fig = plots.magnitude_swr_plot(corr, tuple(t for t in opts.thresholds if t <= 3))
        plots.save(fig, paths["swr_png"])
        written["swr_png"] = paths["swr_png"]
    written["summary_json"] = paths["summary_json"]
    summary = replace(summary, outputs={k: os.path.basename(v) for k, v in written.items()})
    write_text_atomic(paths["summary_json"], json.dumps(to_jsonable(summary), indent=2, allow_nan=False) + "\n")
    return written, summary
