"""A site of several feeds, each checked against its baseline: the site file and ``deembed site``.

The site file is TOML of our own design; paths in it are relative to the file::

    name = "Ridgeback Hill"            # the site's name, for the index page
    cables = "my-cables.toml"          # optional: your own cable catalog for every feed

    [limits]                           # optional: limits for every feed (defaults: deembed.analysis.limits.Limits)
    max_shift = "50kHz"
    max_swr_rise = 0.2

    [[feed]]
    name = "2 m vertical"
    line = "vertical-2m.line.toml"     # a line description (.toml) or a measured/characterized .s2p ...
    baseline = "vertical-2m.s1p"       # the sweep taken when the feed was known good
    latest = ["vertical-2m-after.s1p"] # one or more later sweeps (a single string is fine too)
    limits = { max_shift = "100kHz" }  # optional: this feed's own limits, over the site's

    [[feed]]
    name = "40 m dipole"
    cable = "rg8x"                     # ... or one section inline: cable, length, vf, delay, z0, loss
    length = "38m"
    baseline = "dipole-40m.s1p"
    latest = "dipole-40m-after.s1p"
    after_line = "dipole-40m-2026.s2p" # optional: a fresh characterization for the latest sweeps
    port = 1                           # optional: the port of a 2-port sweep file

Every feed is corrected (``deembed correct`` outputs in ``OUT/<feed-slug>/``), compared against its
baseline (``<latest>.compare.json/.png/.html`` beside them), and the site gets ``OUT/index.html`` (one
self-contained page linking every feed's files) and ``OUT/site.json``. Feeds run in parallel on up to
two processes; a feed that fails (a bad file, a line that does not fit) is recorded as an error and the
others carry on.
"""
from __future__ import annotations

import json
import os
import re
from dataclasses import dataclass, field

from ..base.errors import DeembedError, InputFileError, OptionError

FEED_KEYS = ("name", "line", "cable", "length", "vf", "delay", "z0", "loss", "baseline", "latest", "after_line",
             "port", "limits")
from ..io.tomlfile import load_toml
from ..analysis.limits import parse_limits
from ..io.cables import catalog
from ..io.linefile import SectionSpec, as_text, build_section, read_line_file
from ..physics.line import Line
from . import correct as workflow
from ..analysis.compare import compare_corrections
from .compare import compare_paths, write_compare_outputs
from ..io.atomic import write_text_atomic
from ..io.jsonfile import to_jsonable
from ..render.site_index import index_html
SECTION_KEYS = ("cable", "length", "vf", "delay", "z0", "loss")
SITE_KEYS = ("name", "cables", "limits", "feed")
DEFAULT_WORKERS = 2
"""Processes for the feeds: both cores of the ordinary two-core machine the tool is meant for."""


@dataclass(frozen=True)
class FeedJob:
    """One feed as read from the site file (checked in the worker, so a bad feed fails alone)."""

    index: int
    name: str
    slug: str
    entry: dict
    site_file: str
    base_dir: str
    out_dir: str
    cables: str | None = None
    site_limits: dict = field(default_factory=dict)


@dataclass(frozen=True)
class Site:
    name: str
    path: str
    jobs: tuple


def slugify(name: str) -> str:
    """'2 m Vertical (north)' -> '2-m-vertical-north'; folder names safe on every system."""
    s = re.sub(r"[^a-z0-9]+", "-", str(name).lower()).strip("-")
    return s[:60] or "feed"


def read_site(path, out_dir: str) -> Site:
    """Read a site file; problems with the file as a whole raise :class:`InputFileError`."""

    p = str(path)
    data = load_toml(p)
    unknown = sorted(set(data) - set(SITE_KEYS))
    if unknown:
        raise InputFileError(p, f"unknown key(s) {', '.join(unknown)}; a site file has {', '.join(SITE_KEYS)}")
    feeds = data.get("feed")
    if not isinstance(feeds, list) or not feeds or not all(isinstance(f, dict) for f in feeds):
        raise InputFileError(p, "no [[feed]] tables; describe each feed as a [[feed]] table with name, line, "
                                "baseline and latest")
    limits = data.get("limits", {})
    if not isinstance(limits, dict):
        raise InputFileError(p, "[limits] should be a table, e.g. max_shift = \"50kHz\"")
    _check_limits(limits, p, "[limits]")
    base = os.path.dirname(os.path.abspath(p))
    cables = data.get("cables")
    if cables is not None:
        cables = os.path.join(base, str(cables))
    jobs, used = [], set()
    for i, entry in enumerate(feeds, 1):
        name = str(entry.get("name") or f"feed {i}")
        slug = slugify(name)
        k = 2
        while slug in used:
            slug, k = f"{slugify(name)}-{k}", k + 1
        used.add(slug)
        jobs.append(FeedJob(i, name, slug, dict(entry), p, base, os.path.join(out_dir, slug), cables, dict(limits)))
    return Site(str(data.get("name") or os.path.basename(p)), p, tuple(jobs))


def _check_limits(values: dict, path: str, where: str):

    try:
        return parse_limits(values, names={k: f"{where} {k}" for k in values})
    except OptionError as exc:
        raise InputFileError(path, str(exc)) from None


# ------------------------------------------------------------------------------------------- one feed

def run_feed(job: FeedJob) -> dict:
    """Correct, compare and write one feed; never raises (a failure is the result's ``error``)."""
    try:
        return _run_feed(job)
    except DeembedError as exc:
        return _failed(job, str(exc))
    except Exception as exc:  # a failing feed must not stop the others
        return _failed(job, f"internal error: {type(exc).__name__}: {exc}")


def _failed(job: FeedJob, message: str) -> dict:
    return {"name": job.name, "slug": job.slug, "status": "error", "error": message, "line": None,
            "baseline": None, "comparisons": []}


def _path(job: FeedJob, key: str):
    v = job.entry.get(key)
    if not isinstance(v, str) or not v.strip():
        raise InputFileError(job.site_file, f"feed {job.index} ({job.name}): '{key}' should be a file name")
    return os.path.join(job.base_dir, v)


def _feed_line(job: FeedJob):

    where = f"feed {job.index} ({job.name})"
    inline = [k for k in SECTION_KEYS if k in job.entry]
    if "line" in job.entry:
        if inline:
            raise InputFileError(job.site_file, f"{where}: give either 'line' or {', '.join(inline)}, not both")
        return read_line_file(_path(job, "line"), job.cables)
    if not inline:
        raise InputFileError(job.site_file, f"{where}: say which line feeds it: line = \"FILE\" (.toml or .s2p), "
                                            "or cable and length")
    e = job.entry
    loss = e.get("loss", [])
    loss = [loss] if isinstance(loss, str) else list(loss)
    spec = SectionSpec(e.get("cable"), as_text(e.get("length")), e.get("vf"), as_text(e.get("delay")), e.get("z0"), loss,
                       job.name)
    try:
        sec, notes = build_section(spec, catalog(job.cables), {k: f"{where} '{k}'" for k in SECTION_KEYS})
    except OptionError as exc:
        raise InputFileError(job.site_file, str(exc)) from None
    return Line((sec,), name=job.name), notes


def _run_feed(job: FeedJob) -> dict:

    where = f"feed {job.index} ({job.name})"
    unknown = sorted(set(job.entry) - set(FEED_KEYS))
    if unknown:
        raise InputFileError(job.site_file, f"{where}: unknown key(s) {', '.join(unknown)}; "
                                            f"use {', '.join(FEED_KEYS)}")
    own = job.entry.get("limits", {})
    if not isinstance(own, dict):
        raise InputFileError(job.site_file, f"{where}: limits should be a table, e.g. {{ max_shift = \"50kHz\" }}")
    try:
        limits = parse_limits(job.site_limits, names={k: f"[limits] {k}" for k in job.site_limits})
        limits = parse_limits(own, base=limits, names={k: f"{where} limits.{k}" for k in own})
    except OptionError as exc:
        raise InputFileError(job.site_file, str(exc)) from None
    port = job.entry.get("port")
    if port is not None and (isinstance(port, bool) or port not in (1, 2)):
        raise InputFileError(job.site_file, f"{where}: port = {port!r}; use 1 or 2 (or leave it out for a .s1p)")
    baseline = _path(job, "baseline")
    latest = job.entry.get("latest")
    latest = [latest] if isinstance(latest, str) else latest
    if not isinstance(latest, list) or not latest or not all(isinstance(x, str) and x.strip() for x in latest):
        raise InputFileError(job.site_file, f"{where}: 'latest' should name one or more sweeps, "
                                            "e.g. latest = [\"after.s1p\"]")
    latest = [os.path.join(job.base_dir, x) for x in latest]
    stems = [workflow.stem_of(x) for x in [baseline, *latest]]
    if len(set(stems)) != len(stems):
        raise InputFileError(job.site_file, f"{where}: two sweeps share a file name ({', '.join(stems)}); their "
                                            "outputs would collide, so give them different names")

    line, notes = _feed_line(job)
    after_line, after_notes = line, notes
    line_inputs = [job.cables, _maybe(job, "line")]
    if "after_line" in job.entry:
        after_line, after_notes = read_line_file(_path(job, "after_line"), job.cables)
        line_inputs.append(_path(job, "after_line"))
    out = job.out_dir
    rel = lambda p: os.path.relpath(p, os.path.dirname(out))  # noqa: E731  (relative to the site's folder)
    opts = workflow.Options(port=port, notes=notes)
    base_corr, base_summary, base_written = workflow.correct_file(baseline, line, out, opts, line_inputs=line_inputs)
    result = {"name": job.name, "slug": job.slug, "status": "passed", "error": None,
              "line": line.describe(), "after_line": after_line.describe() if after_line is not line else None,
              "limits": limits.as_dict(),
              "baseline": {"file": baseline, "outputs": {k: rel(v) for k, v in base_written.items()},
                           "warnings": base_summary.get("warnings", [])},
              "comparisons": []}
    for sweep in latest:
        a_opts = workflow.Options(port=port, notes=after_notes)
        corr, summary, written = workflow.correct_file(sweep, after_line, out, a_opts,
                                                       line_inputs=line_inputs + [baseline])
        res = compare_corrections(base_corr, corr, limits)
        paths = compare_paths(sweep, out)
        cw = write_compare_outputs(res, base_corr, corr, paths, inputs=[baseline, *latest, *line_inputs],
                                   title=f"{job.name}: {os.path.basename(sweep)} against {os.path.basename(baseline)}")
        result["comparisons"].append({
            "file": sweep,
            "within_limits": res["verdict"]["within_limits"],
            "exceeded": res["verdict"]["exceeded"],
            "reasons": res["verdict"]["reasons"],
            "diagnosis": res["diagnosis"],
            "resonance_shift_hz": res["resonance_shift_hz"],
            "min_swr_change": res["min_swr_change"],
            "max_gamma_change_feedpoint": res["max_gamma_change_feedpoint"],
            "outputs": {**{k: rel(v) for k, v in written.items()}, **{k: rel(v) for k, v in cw.items()}},
            "warnings": summary.get("warnings", []),
        })
        if not res["verdict"]["within_limits"]:
            result["status"] = "exceeded"
    return result


def _maybe(job: FeedJob, key: str):
    return os.path.join(job.base_dir, job.entry[key]) if isinstance(job.entry.get(key), str) else None


# ------------------------------------------------------------------------------------------- the site

def run_site(path, out_dir: str, *, workers: int = DEFAULT_WORKERS, progress=None) -> dict:
    """Check every feed of a site file; write ``index.html`` and ``site.json`` into ``out_dir``.

    Parameters
    ----------
    path : str
        The site file.
    out_dir : str
        Folder for the results (created if needed); each feed gets a sub-folder named after it.
    workers : int
        Processes to run feeds on (default 2); 1 runs them one after another in this process.
    progress : callable, optional
        Called as ``progress(done, total, feed_result)`` after each feed.

    Returns
    -------
    dict
        ``{"site", "file", "all_passed", "counts", "feeds": [per-feed results, in file order], "outputs"}``.
    """

    if os.path.exists(out_dir) and not os.path.isdir(out_dir):
        raise OptionError("--out", f"{out_dir} is a file; give a folder for the results")
    site = read_site(path, out_dir)
    os.makedirs(out_dir, exist_ok=True)
    results = [None] * len(site.jobs)
    total = len(site.jobs)
    if workers > 1 and total > 1:
        from concurrent.futures import ProcessPoolExecutor, as_completed

        with ProcessPoolExecutor(max_workers=min(workers, total)) as pool:
            futures = {pool.submit(run_feed, job): i for i, job in enumerate(site.jobs)}
            for done, fut in enumerate(as_completed(futures), 1):
                i = futures[fut]
                try:
                    results[i] = fut.result()
                except Exception as exc:  # a worker that died (out of memory, killed) fails its feed only
                    results[i] = _failed(site.jobs[i], f"the worker process failed: {type(exc).__name__}: {exc}")
                if progress:
                    progress(done, total, results[i])
    else:
        for i, job in enumerate(site.jobs):
            results[i] = run_feed(job)
            if progress:
                progress(i + 1, total, results[i])
    counts = {s: sum(r["status"] == s for r in results) for s in ("passed", "exceeded", "error")}
    summary = {"site": site.name, "file": site.path, "all_passed": counts["passed"] == total, "counts": counts,
               "feeds": results, "outputs": {"index_html": "index.html", "site_json": "site.json"}}
    write_text_atomic(os.path.join(out_dir, "site.json"),
                      json.dumps(to_jsonable(summary), indent=2, allow_nan=False) + "\n")
    write_text_atomic(os.path.join(out_dir, "index.html"), index_html(summary))
    return summary

