"""``deembed site``: every antenna of a site file corrected and checked against its baseline.

The site file's format is in :mod:`deembed.io.sitefile`. Every antenna is corrected (``deembed correct``
outputs in ``OUT/<antenna-slug>/``), compared against its baseline (``<latest>.compare.json/.png/.html``
beside them), and the site gets ``OUT/index.html`` (one self-contained page linking every antenna's files)
and ``OUT/site.json``. Antennas run in parallel on up to two processes (:mod:`deembed.jobs.pool`: imports before forking, a
time limit per antenna, workers that end with the run); an antenna that fails (a bad file, a
line that does not fit) is recorded as an error and the others carry on.
"""
from __future__ import annotations

import json
import os
from dataclasses import dataclass, field, replace

from ..analysis.compare import compare_corrections
from ..analysis.limits import parse_limits
from ..analysis.compare import Cause
from ..base.errors import DeembedError, InputFileError, OptionError, OutputWriteError
from ..base.results import INTERNAL, Result
from ..base.verdicts import ERROR, OUTSIDE, WITHIN
from ..io.atomic import same_path, write_text_atomic
from ..io.history import check_target, is_url, open_store
from ..io.inputfile import recording_inputs
from ..io.jsonfile import to_jsonable
from ..io.outfolder import OutputFolder
from ..io.sitefile import AntennaJob, Site, after_line, antenna_line, read_antenna, read_site
from ..io.tablesweep import parse_columns
from ..render.site_index import index_html
from . import correct as workflow
from .compare import compare_paths, write_compare_outputs
from .pool import can_fork, preload, run_all
from .record import build_record, sweep_date
from .trend import compute_trends, write_trend_outputs

DEFAULT_WORKERS = 2
"""Processes for the antennas: both cores of the ordinary two-core machine the tool is meant for."""
DEFAULT_TIME_LIMIT_S = 600.0
"""Time limit per antenna: ten minutes, far above the seconds an ordinary antenna takes (README: deembed site)."""


def load_site(path, out_dir: str) -> Site:
    """Read a site file and check its site-wide ``[limits]``; problems raise :class:`InputFileError`."""

    site = read_site(path, out_dir)
    if site.jobs:
        _check_limits(site.jobs[0].site_limits, site.path, "[limits]")
    return site


def _check_limits(values: dict, path: str, where: str):

    try:
        return parse_limits(values, names={k: f"{where} {k}" for k in values})
    except OptionError as exc:
        raise InputFileError(path, str(exc)) from None


# ------------------------------------------------------------------------------------------- results

@dataclass(frozen=True)
class SiteComparison(Result):
    """One latest sweep of an antenna against its baseline (``antennas[].comparisons[]`` in site.json): the
    comparison's verdict and headline numbers (:class:`deembed.analysis.compare.Comparison` holds the rest, in
    the sweep's own ``.compare.json``), the files written and the sweep's correction warnings."""

    file: str
    date: str | None
    date_source: str | None
    verdict: str
    limits_exceeded: list
    reasons: list
    cause: Cause
    resonance_shift_hz: float | None
    resonance_shift_interval_hz: list | None
    certainty: dict
    min_swr_change: float | None
    largest_gamma_change_feedpoint: float | None
    outputs: dict
    warnings: list
    between_points: dict | None


@dataclass(frozen=True)
class AntennaResult(Result):
    """One antenna of a site (``antennas[]`` in site.json), made by :func:`run_antenna`.

    A failed antenna (``verdict`` ``error``, ``error`` its message) has no ``after_line`` nor ``limits`` keys;
    ``trend`` (OPTIONAL) is its trend page, run count and flags when the run was recorded. ``inputs_read``,
    ``write_failed`` and ``records`` travel from the worker to :func:`run_site` and are no part of the JSON.
    """

    name: str
    slug: str
    verdict: str
    error: str | None
    line: str | None
    after_line: str | None = None
    limits: dict | None = None
    baseline: dict | None = None
    comparisons: tuple = ()
    trend: dict | None = None
    inputs_read: tuple = field(default=(), metadata=INTERNAL)
    write_failed: bool = field(default=False, metadata=INTERNAL)
    records: tuple = field(default=(), metadata=INTERNAL)

    OPTIONAL = ("limits", "trend")

    def _shown(self, name: str) -> bool:
        if name == "after_line":
            return self.limits is not None  # checked (limits read): the after-line is said, null or not
        return super()._shown(name)


@dataclass(frozen=True)
class SiteResult(Result):
    """A whole site (site.json, ``site --json``), made by :func:`run_site`: ``verdict`` over every antenna,
    ``counts`` per verdict, the :class:`AntennaResult` of each in file order, the files written; ``history``
    (OPTIONAL) what was recorded into the store, when the run was recorded."""

    site: str
    file: str
    verdict: str
    counts: dict
    antennas: tuple
    outputs: dict
    history: dict | None = None

    OPTIONAL = ("history",)


# ------------------------------------------------------------------------------------------- one feed

def run_antenna(job: AntennaJob) -> AntennaResult:
    """Correct, compare and write one antenna; never raises (a failure is the result's ``error``).

    The result's ``inputs_read`` lists every file the antenna read (for the site's output-over-input
    check); ``write_failed`` is true when its own outputs could not be written (a full disk), which fails the
    whole site run rather than the antenna alone.
    """
    with recording_inputs() as read:
        try:
            result = _run_antenna(job)
        except DeembedError as exc:
            result = _failed(job, str(exc))
        except OSError as exc:  # writing into the staging folder: the disk, not the antenna
            result = replace(_failed(job, f"could not write its results ({exc.strerror or exc})"), write_failed=True)
        except Exception as exc:  # a failing antenna must not stop the others
            result = _failed(job, f"internal error: {type(exc).__name__}: {exc}")
    return replace(result, inputs_read=tuple(sorted(read)))


def _failed(job: AntennaJob, message: str) -> AntennaResult:
    return AntennaResult(name=job.name, slug=job.slug, verdict=ERROR, error=message, line=None)


def _columns(job: AntennaJob):
    """The entry's ``columns`` key (for sweeps exported as text tables), checked; None without one."""
    v = job.entry.get("columns")
    if v is None:
        return None
    if not isinstance(v, str):
        raise InputFileError(job.site_file, f"{job.where}: 'columns' should be text, e.g. columns = \"freq:MHz,r,x\"")
    try:
        return parse_columns(v, f"{job.where}: 'columns'")
    except OptionError as exc:
        raise InputFileError(job.site_file, str(exc)) from None


def _run_antenna(job: AntennaJob) -> AntennaResult:

    files = read_antenna(job)
    try:
        limits = parse_limits(job.site_limits, names={k: f"[limits] {k}" for k in job.site_limits})
        limits = parse_limits(files.own_limits, base=limits,
                              names={k: f"{job.where} limits.{k}" for k in files.own_limits})
    except OptionError as exc:
        raise InputFileError(job.site_file, str(exc)) from None
    port, baseline, latest = files.port, files.baseline, list(files.latest)
    line, notes = antenna_line(job)
    other, after_notes = after_line(job, files, line, notes)
    line_inputs = [job.cables, files.line_file] + ([files.after_line_file] if files.after_line_file else [])
    out = job.out_dir
    rel = lambda p: os.path.relpath(p, os.path.dirname(out))  # noqa: E731  (relative to the site's folder)
    columns = _columns(job)
    opts = workflow.Options(port=port, notes=notes, columns=columns, columns_option=f"{job.where}: 'columns'")
    base_corr, base_summary, base_written = workflow.correct_file(baseline, line, out, opts, line_inputs=line_inputs,
                                                                  staged=True)
    if getattr(base_corr, "has_phase", True) is False:
        raise InputFileError(baseline, "this sweep holds SWR or return loss only, without phase; the site check "
                                       "compares with the baseline (resonance shift, the antenna-or-line cause), "
                                       "which needs the phase: export R and X, or a Touchstone file")
    bd, bsrc = sweep_date(baseline, files.dates.get(baseline), "site_file")
    base_block = {"file": baseline, "outputs": {k: rel(v) for k, v in base_written.items()},
                  "warnings": base_summary["warnings"],
                  "between_points": base_summary["line"].get("between_points"),
                  "date": bd, "date_source": bsrc}
    records, comparisons, verdict = [], [], WITHIN
    if job.record:
        d, src = bd, bsrc
        records.append(build_record(site=job.site_name, antenna=job.name, sweep_path=baseline, date=d,
                                    date_source=src, role="baseline", corr=base_corr, summary=base_summary))
    for sweep in latest:
        a_opts = workflow.Options(port=port, notes=after_notes, columns=columns,
                                  columns_option=f"{job.where}: 'columns'")
        corr, summary, written = workflow.correct_file(sweep, other, out, a_opts,
                                                       line_inputs=line_inputs + [baseline], staged=True)
        d, src = sweep_date(sweep, files.dates.get(sweep), "site_file")
        res = compare_corrections(base_corr, corr, limits)
        paths = compare_paths(sweep, out)
        cw = write_compare_outputs(res, base_corr, corr, paths, inputs=[baseline, *latest, *line_inputs],
                                   title=f"{job.name}: {os.path.basename(sweep)} against {os.path.basename(baseline)}",
                                   reports=[("baseline", base_written.get("report_html")),
                                            ("after the work", written.get("report_html"))])
        comparisons.append(SiteComparison(
            file=sweep,
            date=d,
            date_source=src,
            verdict=res.verdict.status,
            limits_exceeded=res.verdict.limits_exceeded,
            reasons=res.verdict.reasons,
            cause=res.cause,
            resonance_shift_hz=res.resonance_shift_hz,
            resonance_shift_interval_hz=res.resonance_shift_interval_hz,
            certainty=res.verdict.certainty or {},
            min_swr_change=res.min_swr_change,
            largest_gamma_change_feedpoint=res.largest_gamma_change_feedpoint,
            outputs={**{k: rel(v) for k, v in written.items()}, **{k: rel(v) for k, v in cw.items()}},
            warnings=summary["warnings"],
            between_points=summary["line"].get("between_points"),
        ))
        if res.verdict.status != WITHIN:
            verdict = OUTSIDE
        if job.record:
            records.append(build_record(site=job.site_name, antenna=job.name, sweep_path=sweep, date=d,
                                        date_source=src, role="latest", corr=corr, summary=summary, comparison=res,
                                        baseline_sha256=records[0].sweep_sha256))
    return AntennaResult(name=job.name, slug=job.slug, verdict=verdict, error=None, line=line.describe(),
                         after_line=other.describe() if other is not line else None, limits=limits.as_dict(),
                         baseline=base_block, comparisons=tuple(comparisons), records=tuple(records))


# ------------------------------------------------------------------------------------------- the site

def run_site(path, out_dir: str, *, workers: int = DEFAULT_WORKERS, progress=None, record: str | bool = True,
             trend_limits=None, time_limit_s: float | None = DEFAULT_TIME_LIMIT_S) -> SiteResult:
    """Check every antenna of a site file; write ``index.html`` and ``site.json`` into ``out_dir``.

    Parameters
    ----------
    path : str
        The site file.
    out_dir : str
        Folder for the results (created if needed); each antenna gets a sub-folder named after it.
    workers : int
        Processes wanted (default 2); :mod:`deembed.jobs.pool` runs no more than the antennas or the usable
        cores, so one antenna or one core runs them one after another.
    progress : callable, optional
        Called as ``progress(done, total, feed_result)`` after each antenna.
    record : str or bool
        True (default): record every sweep into the site's history store (its ``history`` key, or the
        SQLite file beside the site file) and write each antenna's trend page into ``OUT/trend/``; a string:
        that store (file or URL) instead; False: record nothing.
    trend_limits : deembed.analysis.trend.TrendLimits, optional
        Limits for the trend pages.
    time_limit_s : float or None
        Time limit per antenna in seconds (default 600); an antenna still running then is stopped and
        recorded as failed, and the others finish. ``None``: no limit.

    Returns
    -------
    SiteResult
        ``site``, ``file``, ``verdict``, ``counts``, ``antennas`` (an :class:`AntennaResult` each, in file
        order), ``outputs`` and, when recorded, ``history``; ``verdict`` is ``within_limits`` when every antenna is, ``error`` when any could not be checked,
        else ``outside_limits``.

    Notes
    -----
    The outputs are one transaction (:class:`~deembed.io.outfolder.OutputFolder`): on an interruption,
    a full disk or any other failure ``out_dir`` keeps what it had; otherwise every antenna's files and the
    index appear together. The index is written whatever the antennas do (a failed or stopped antenna is a
    row saying why). Recording into the history store happens just before the files are moved into place.
    """

    if os.path.exists(out_dir) and not os.path.isdir(out_dir):
        raise OptionError("out", f"{out_dir} is a file; give a folder for the results")
    site = load_site(path, out_dir)
    store = None
    if record:
        store = record if isinstance(record, str) else site.history
        check_target(store)  # refuse a newer or foreign store before anything runs; nothing is created yet
        site = replace(site, jobs=tuple(replace(j, record=True) for j in site.jobs))
    inputs = refuse_outputs_over_inputs(site, out_dir)
    with OutputFolder(out_dir, inputs=inputs) as out:
        summary = _run_into(site, out, workers, progress, time_limit_s, store, trend_limits)
    return summary


def _run_into(site: Site, out: OutputFolder, workers, progress, time_limit_s, store, trend_limits) -> SiteResult:
    """The body of :func:`run_site`, writing under the transaction's staging folder."""
    stage = out.stage
    jobs = [replace(j, out_dir=os.path.join(stage, j.slug)) for j in site.jobs]
    total = len(jobs)
    if can_fork():  # the workers are forked from this process: import once here, not once per worker
        preload(extra=PRELOAD_OWN)
    results = run_all(jobs, run_antenna, workers=workers, time_limit_s=time_limit_s, on_failure=_failed,
                      progress=progress)
    for r in results:
        out.add_inputs(r.inputs_read)
    broken = [r for r in results if r.write_failed]
    if broken:
        raise OutputWriteError(out.out_dir, f"could not write the results of {broken[0].name}: "
                                            f"{broken[0].error}; free some space or choose another `out` "
                                            "(nothing was changed)")
    records = [rec for r in results for rec in r.records]
    results = [replace(r, inputs_read=(), records=()) for r in results]
    counts = {s: sum(r.verdict == s for r in results) for s in (WITHIN, OUTSIDE, ERROR)}
    overall = WITHIN if counts[WITHIN] == total else ERROR if counts[ERROR] else OUTSIDE
    history = None
    if store is not None:
        history, trends = _record_and_trend(store, site, records, stage, trend_limits)
        results = [replace(r, trend=trends[r.name]) if r.name in trends else r for r in results]
    summary = SiteResult(site=site.name, file=site.path, verdict=overall, counts=counts, antennas=tuple(results),
                         outputs={"index_html": "index.html", "site_json": "site.json"}, history=history)
    write_text_atomic(os.path.join(stage, "site.json"),
                      json.dumps(to_jsonable(summary), indent=2, allow_nan=False) + "\n")
    write_text_atomic(os.path.join(stage, "index.html"), index_html(summary))
    return summary


PRELOAD_OWN = ("deembed.render.report", "deembed.render.compare_page", "deembed.analysis.compare")
"""The project's own modules an antenna needs, imported before the workers are forked."""


def refuse_outputs_over_inputs(site: Site, out_dir: str) -> list:
    """Refuse (exit 2) a site whose outputs would replace any input of any antenna; returns the inputs.

    Checked before anything runs, on every file an antenna names (baselines, latest sweeps, line files,
    after-lines, the catalog, the site file itself). Files named inside line files (a measured
    2-port) are checked again, with every other file read, when the results are moved into place.
    """
    inputs = [site.path]
    outputs = [(os.path.join(out_dir, "site.json"), "the site's summary"),
               (os.path.join(out_dir, "index.html"), "the site's index")]
    for job in site.jobs:
        e = job.entry
        latest = e.get("latest")
        sweeps = [e.get("baseline")] + ([latest] if isinstance(latest, str) else
                                        (latest if isinstance(latest, list) else []))
        sweeps = [os.path.join(job.base_dir, x) for x in sweeps if isinstance(x, str) and x.strip()]
        inputs += sweeps
        inputs += [os.path.join(job.base_dir, e[k]) for k in ("line", "after_line")
                   if isinstance(e.get(k), str) and e[k].strip()]
        folder = os.path.join(out_dir, job.slug)
        for sw in sweeps:
            outputs += [(p, job.where) for p in workflow.output_paths(sw, folder).values()]
            outputs += [(p, job.where) for p in compare_paths(sw, folder).values()]
    if site.jobs and site.jobs[0].cables:
        inputs.append(site.jobs[0].cables)
    for out_path, who in outputs:
        for inp in inputs:
            if same_path(out_path, inp):
                raise InputFileError(site.path, f"{who}: the output {out_path} would replace the input {inp}; "
                                                "choose another `out` folder (or rename the input) so the input "
                                                "is kept")
    return inputs


def _record_and_trend(store: str, site: Site, records: list, out_dir: str, limits) -> tuple[dict, dict]:
    """Record the run's sweeps (one transaction) and write every antenna's trend page into ``OUT/trend/``.

    Returns ``(history, trends)``: what was recorded (the site result's ``history``) and, by antenna name, its
    ``trend`` (its page, relative to ``out_dir``, its run count and flags). A store that fails now is reported
    in ``history``, not raised: the index is still written."""
    info = {"store": store, "added": 0, "already": 0, "error": None, "flagged": []}
    if not records:  # every antenna failed: no store is made, an existing one is left as it was
        kept = "the store was left as it was" if is_url(store) or os.path.exists(store) else "no store was made"
        info["error"] = f"no antenna could be checked, so there was nothing to record ({kept})"
        return info, {}
    try:
        with open_store(store) as st:
            info["store"] = st.name
            res = st.record(records)
        info.update(added=res.added, already=res.already)
        trends = compute_trends(store, site=site.name, limits=limits)
        written = write_trend_outputs(trends, os.path.join(out_dir, "trend"))
    except DeembedError as exc:
        info["error"] = str(exc)
        return info, {}
    by_name = {}
    for e in trends["entries"]:
        name, tr = e["antenna"], e["trend"]
        if name in written["entries"]:  # the last entry of a name, as the antennas of that name show it
            by_name[name] = {"page": os.path.relpath(written["entries"][name]["trend_html"], out_dir),
                             "runs": tr.runs, "flags": [f["reason"] for f in tr.flags]}
    info["flagged"] = [e["antenna"] for e in trends["entries"] if e["trend"].flags]
    return info, by_name

