"""The site file: several antennas, each with its line, a baseline sweep and later sweeps.

The site file is TOML of our own design; paths in it are relative to the file::

    name = "Ridgeback Hill"            # the site's name, for the index page
    catalog = "my-cables.toml"         # optional: your own cable catalog for every antenna

    [limits]                           # optional: limits for every antenna (defaults: deembed.analysis.limits.Limits)
    max_shift = "50kHz"
    max_swr_rise = 0.2

    [[antenna]]
    name = "2 m vertical"
    line = "vertical-2m.line.toml"     # a line description (.toml) or a measured/characterized .s2p ...
    baseline = "vertical-2m.s1p"       # the sweep taken when the antenna was known good
    latest = ["vertical-2m-after.s1p"] # one or more later sweeps (a single string is fine too)
    limits = { max_shift = "100kHz" }  # optional: this antenna's own limits, over the site's

    [[antenna]]
    name = "40 m dipole"
    cable = "rg8x"                     # ... or one section inline: cable, length, vf, delay, z0, loss
    length = "38m"
    baseline = "dipole-40m.s1p"
    latest = "dipole-40m-after.s1p"
    after_line = "dipole-40m-2026.s2p" # optional: a fresh characterization for the latest sweeps
    port = 1                           # optional: the port of a 2-port sweep file

A sweep entry (``baseline``, or an item of ``latest``) may also be a table with the day it was taken,
``{ file = "after.s1p", date = "2026-03-14" }``; every such date is checked when the file is read, before
any antenna runs (a bad one is the site file's fault, not one antenna's). ``history = "FILE"`` (relative
to the site file) or ``history = "postgresql://..."`` names the history store every run records into;
without it the store is ``<site>.history.sqlite`` beside the site file
(:func:`deembed.io.history.default_store_path`).

This module reads the file and each antenna's entry into plain objects (:class:`Site`, :class:`AntennaJob`,
:class:`AntennaFiles`) and builds an antenna's line; the limits' values are checked by
:func:`deembed.analysis.limits.parse_limits` in the site job (:mod:`deembed.jobs.site`), which runs the antennas.
A problem with the file as a whole raises at once; a problem with one antenna's entry is raised when that
antenna is read (:func:`read_antenna`), so a bad antenna fails alone.
"""
from __future__ import annotations

import os
import re
from dataclasses import dataclass, field, replace

from ..base.errors import InputFileError, OptionError
from ..physics.line import Line
from .atomic import stem_of
from .cables import catalog
from .history import default_store_path, is_url, parse_date
from .linefile import SECTION_KEYS, read_line_file, section_from_table
from .tomlfile import load_toml
from .touchstone import check_port

SITE_KEYS = ("name", "catalog", "limits", "history", "antenna")
"""Keys of the site file's top level."""

ANTENNA_KEYS = ("name", "line", "cable", "length", "vf", "delay", "z0", "loss", "baseline", "latest", "after_line",
             "port", "limits", "columns")
"""Keys of one ``[[antenna]]`` entry."""


@dataclass(frozen=True)
class AntennaJob:
    """One antenna as read from the site file (checked in the worker, so a bad antenna fails alone)."""

    index: int
    name: str
    slug: str
    entry: dict
    site_file: str
    base_dir: str
    out_dir: str
    cables: str | None = None
    site_limits: dict = field(default_factory=dict)
    site_name: str = ""
    record: bool = False

    @property
    def where(self) -> str:
        """How error messages name this antenna: ``antenna 2 (40 m dipole)``."""
        return f"antenna {self.index} ({self.name})"


@dataclass(frozen=True)
class Site:
    """A site file read: its name, its path and one :class:`AntennaJob` per antenna, in file order."""

    name: str
    path: str
    jobs: tuple
    history: str = ""
    """Where runs are recorded: the ``history`` key (a file relative to the site file, or a
    ``postgresql://`` URL), or else the SQLite file beside the site file."""


@dataclass(frozen=True)
class AntennaFiles:
    """The files and settings of one antenna, checked and with their paths resolved.

    ``line_file`` and ``after_line_file`` are None when the antenna has no such key (an inline line; no fresh
    characterization). ``own_limits`` is the antenna's ``limits`` table, still as written.
    """

    baseline: str
    latest: tuple
    line_file: str | None
    after_line_file: str | None
    port: int | None
    own_limits: dict
    dates: dict = field(default_factory=dict)
    """Sweep path -> the date the site file gives it (``YYYY-MM-DD``), or None."""


def slugify(name: str) -> str:
    """'2 m Vertical (north)' -> '2-m-vertical-north'; folder names safe on every system."""
    s = re.sub(r"[^a-z0-9]+", "-", str(name).lower()).strip("-")
    return s[:60] or "antenna"


def read_site(path, out_dir: str) -> Site:
    """Read a site file; problems with the file as a whole raise :class:`InputFileError`.

    The ``[limits]`` table is only checked to be a table here; its values are checked by the site job.
    """

    p = str(path)
    data = load_toml(p)
    unknown = sorted(set(data) - set(SITE_KEYS))
    if unknown:
        raise InputFileError(p, f"unknown key(s) {', '.join(unknown)}; a site file has {', '.join(SITE_KEYS)}")
    antennas = data.get("antenna")
    if not isinstance(antennas, list) or not antennas or not all(isinstance(f, dict) for f in antennas):
        raise InputFileError(p, "no [[antenna]] tables; describe each antenna and its line as an [[antenna]] table with name, line, "
                                "baseline and latest")
    limits = data.get("limits", {})
    if not isinstance(limits, dict):
        raise InputFileError(p, "[limits] should be a table, e.g. max_shift = \"50kHz\"")
    base = os.path.dirname(os.path.abspath(p))
    cables = data.get("catalog")
    if cables is not None:
        if not isinstance(cables, str) or not cables.strip():
            raise InputFileError(p, "catalog should name a cable catalog file, e.g. catalog = \"my-cables.toml\"")
        cables = os.path.join(base, cables)
        try:
            catalog(cables)  # a bad site-wide catalog is the site file's fault, not every feed's
        except InputFileError as exc:
            raise InputFileError(p, f"catalog = {data['catalog']!r}: {exc}") from None
    jobs, used = [], set()
    for i, entry in enumerate(antennas, 1):
        name = str(entry.get("name") or f"antenna {i}")
        slug = slugify(name)
        k = 2
        while slug in used:
            slug, k = f"{slugify(name)}-{k}", k + 1
        used.add(slug)
        jobs.append(AntennaJob(i, name, slug, dict(entry), p, base, os.path.join(out_dir, slug), cables, dict(limits)))
    site_name = str(data.get("name") or os.path.basename(p))
    hist = data.get("history")
    if hist is None:
        history = default_store_path(p)
    elif not isinstance(hist, str) or not hist.strip():
        raise InputFileError(p, "history should be a file name or a postgresql:// URL, e.g. "
                                "history = \"site.history.sqlite\"")
    else:
        history = hist if is_url(hist) else os.path.join(base, hist)
    for job in jobs:  # a bad date is the site file's fault: refused before any antenna runs
        check_sweep_dates(job)
    return Site(site_name, p, tuple(replace(j, site_name=site_name) for j in jobs), history)


def _date_of(job: AntennaJob, where: str, d) -> str:
    """A sweep table's ``date``: a TOML date literal or YYYY-MM-DD text, checked (:func:`parse_date`)."""
    if hasattr(d, "isoformat") and not isinstance(d, str):  # a TOML date literal
        d = d.isoformat()
    try:
        return parse_date(str(d), f"{where} date")
    except OptionError as exc:
        raise InputFileError(job.site_file, str(exc)) from None


def check_sweep_dates(job: AntennaJob) -> None:
    """Check every ``date`` of an antenna's sweep tables (``baseline``, each item of ``latest``); a bad one
    raises :class:`InputFileError` naming the site file, the antenna and the key."""
    latest = job.entry.get("latest")
    items = [("baseline", job.entry.get("baseline"))]
    items += [("latest", x) for x in (latest if isinstance(latest, list) else [latest])]
    for key, v in items:
        if isinstance(v, dict) and "date" in v:
            _date_of(job, f"{job.where}: '{key}'", v["date"])


def _sweep(job: AntennaJob, key: str, v) -> tuple[str, str | None]:
    """A sweep entry: a file name, or a table ``{ file = "after.s1p", date = "2026-03-14" }``.
    Returns (path, date or None)."""
    where = f"{job.where}: '{key}'"
    date = None
    if isinstance(v, dict):
        unknown = sorted(set(v) - {"file", "date"})
        if unknown:
            raise InputFileError(job.site_file, f"{where}: unknown key(s) {', '.join(unknown)} in a sweep table; "
                                                "use file and date, e.g. { file = \"after.s1p\", date = \"2026-03-14\" }")
        if "date" in v:
            date = _date_of(job, where, v["date"])
        v = v.get("file")
    if not isinstance(v, str) or not v.strip():
        raise InputFileError(job.site_file, f"{where} should be a file name, or a table like "
                                            "{ file = \"after.s1p\", date = \"2026-03-14\" }")
    return os.path.join(job.base_dir, v), date


def _path(job: AntennaJob, key: str) -> str:
    v = job.entry.get(key)
    if not isinstance(v, str) or not v.strip():
        raise InputFileError(job.site_file, f"{job.where}: '{key}' should be a file name")
    return os.path.join(job.base_dir, v)


def _maybe(job: AntennaJob, key: str):
    return _path(job, key) if key in job.entry else None


def read_antenna(job: AntennaJob) -> AntennaFiles:
    """Check one antenna's entry (keys, port, file names) and resolve its paths against the site file's folder."""

    where = job.where
    unknown = sorted(set(job.entry) - set(ANTENNA_KEYS))
    if unknown:
        raise InputFileError(job.site_file, f"{where}: unknown key(s) {', '.join(unknown)}; "
                                            f"use {', '.join(ANTENNA_KEYS)}")
    own = job.entry.get("limits", {})
    if not isinstance(own, dict):
        raise InputFileError(job.site_file, f"{where}: limits should be a table, e.g. {{ max_shift = \"50kHz\" }}")
    port = job.entry.get("port")
    try:
        check_port(port)
    except OptionError:
        raise InputFileError(job.site_file, f"{where}: port = {port!r}; use 1 or 2 (or leave it out for a .s1p)") \
            from None
    baseline, base_date = _sweep(job, "baseline", job.entry.get("baseline"))
    latest = job.entry.get("latest")
    latest = [latest] if isinstance(latest, (str, dict)) else latest
    if not isinstance(latest, list) or not latest:
        raise InputFileError(job.site_file, f"{where}: 'latest' should name one or more sweeps, "
                                            "e.g. latest = [\"after.s1p\"]")
    dated = [_sweep(job, "latest", x) for x in latest]
    latest = [p for p, _ in dated]
    dates = {baseline: base_date, **dict(dated)}
    stems = [stem_of(x) for x in [baseline, *latest]]
    if len(set(stems)) != len(stems):
        raise InputFileError(job.site_file, f"{where}: two sweeps share a file name ({', '.join(stems)}); their "
                                            "outputs would collide, so give them different names")
    line_file = job.entry.get("line")
    line_file = os.path.join(job.base_dir, line_file) if isinstance(line_file, str) else None
    return AntennaFiles(baseline, tuple(latest), line_file, _maybe(job, "after_line"), port, dict(own), dates)


def antenna_line(job: AntennaJob) -> tuple[Line, list]:
    """The antenna's line: from its ``line`` file, or one section from its inline keys. Returns (line, notes)."""

    where = job.where
    inline = [k for k in SECTION_KEYS if k in job.entry]
    if "line" in job.entry:
        if inline:
            raise InputFileError(job.site_file, f"{where}: give either 'line' or {', '.join(inline)}, not both")
        return read_line_file(_path(job, "line"), job.cables)
    if not inline:
        raise InputFileError(job.site_file, f"{where}: say which line feeds it: line = \"FILE\" (.toml or .s2p), "
                                            "or cable and length")
    sec, notes = section_from_table(job.entry, catalog(job.cables), job.site_file, where, label=job.name)
    return Line((sec,), name=job.name), notes


def after_line(job: AntennaJob, files: AntennaFiles, line: Line, notes: list) -> tuple[Line, list]:
    """The line for the latest sweeps: the antenna's ``after_line`` file when it has one, else ``line`` itself."""

    if files.after_line_file is None:
        return line, notes
    return read_line_file(files.after_line_file, job.cables)


__all__ = ["ANTENNA_KEYS", "SECTION_KEYS", "SITE_KEYS", "AntennaFiles", "AntennaJob", "Site", "after_line", "antenna_line",
           "check_sweep_dates", "read_antenna", "read_site", "slugify"]
