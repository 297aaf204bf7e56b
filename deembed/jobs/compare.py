"""``deembed compare``: two sweeps through their lines, compared; the overlay plot, JSON and HTML page written.

:func:`compare_files` is the whole job from file names (the command line and the demo call it); the site
job calls :func:`write_compare_outputs` on corrections it has already made.
"""
from __future__ import annotations

import json
import os
from dataclasses import replace

from ..analysis.compare import Comparison, compare_corrections
from ..analysis.limits import Limits
from ..io.atomic import check_not_input, stem_of, write_text_atomic
from ..io.jsonfile import to_jsonable
from ..io.linefile import read_line_file
from ..io.anysweep import read_phase_sweep
from ..physics.deembedding import correct
from ..analysis.along import compare_along
from ..render.compare_page import along_overlay, compare_html, compare_plot
from ..render.plots import save
from ..io.outfolder import OutputFolder
from .correct import check_finite, line_sources


def compare_paths(after_path: str, out_dir: str) -> dict:
    """Output names for comparing the sweep ``after_path`` with its baseline, in ``out_dir``."""

    stem = stem_of(after_path)
    return {k: os.path.join(out_dir, stem + suffix) for k, suffix in
            (("compare_json", ".compare.json"), ("compare_png", ".compare.png"), ("compare_html", ".compare.html"),
             ("compare_along_png", ".compare-along.png"))}


def write_compare_outputs(result: Comparison, before, after, paths: dict, inputs=(), *, title: str = "",
                          reports=()) -> dict:
    """Write the comparison's JSON, overlay PNG and HTML atomically; returns the paths written.

    ``reports`` lists each side's correction report as ``(side, path)``; the page links them (relative to it).
    """

    for p in paths.values():
        check_not_input(p, [i for i in inputs if i], "out")
    os.makedirs(os.path.dirname(os.path.abspath(paths["compare_json"])), exist_ok=True)
    save(compare_plot(before, after, title), paths["compare_png"])
    paths = dict(paths)
    along_png = paths.pop("compare_along_png", None)
    along_info, along_data = compare_along(before, after)
    if along_png and along_data is not None:
        tr_b, tr_a, s_a = along_data
        save(along_overlay(tr_b, tr_a, s_a), along_png)
        paths["compare_along_png"] = along_png
    result = replace(result, outputs={k: os.path.basename(v) for k, v in paths.items()})
    write_text_atomic(paths["compare_json"], json.dumps(to_jsonable(result), indent=2, allow_nan=False) + "\n")
    here = os.path.dirname(os.path.abspath(paths["compare_html"]))
    links = [(side, os.path.relpath(os.path.abspath(p), here)) for side, p in reports if p]
    write_text_atomic(paths["compare_html"], compare_html(result, paths["compare_png"], title,
                                                          along_png=paths.get("compare_along_png"), reports=links))
    return paths


def compare_files(baseline: str, after: str, line, *, after_line: str | None = None, limits: Limits | None = None,
                  port: int | None = None, out: str | None = None, cables: str | None = None,
                  extrapolate: bool = False, inputs=(), title: str = "", settings=None, tolerances=(),
                  columns=None, warnings=()) -> Comparison:
    """Correct a baseline and an after-work sweep and compare them; write the outputs when ``out`` is given.

    Parameters
    ----------
    baseline, after : str
        The two sweeps (Touchstone; ``port`` picks the reflection of a 2-port file).
    line : deembed.physics.line.Line
        The line both sweeps are corrected through (the baseline always).
    after_line : str, optional
        A fresh line file (.toml or .s2p) for the after sweep only.
    limits : Limits, optional
        The verdict's limits (defaults: :class:`~deembed.analysis.limits.Limits`).
    out : str, optional
        Folder for ``<after>.compare.json/.png/.html``; nothing is written without it.
    cables, extrapolate
        For reading ``after_line`` (a cable catalog of one's own; a characterized line beyond its range).
    inputs : iterable of str
        Further input files no output may overwrite (line and catalog files).
    settings : UncertaintySettings, optional
        How the intervals are worked out (default: 1000 draws, seed 1, hobby calibration; 0 draws for none).
    tolerances : iterable of str
        ``NAME=VALUE`` line tolerances for ``after_line`` (as ``--tol``).
    columns : optional
        How to read a text table (``--columns``), for both sweeps.
    warnings : iterable of str
        Warnings about ``line`` made while building it (e.g. loss points no physical loss meets): they head the
        comparison's ``warnings``, as in ``correct``.

    Returns
    -------
    Comparison
        The comparison (:func:`deembed.analysis.compare.compare_corrections`), with ``outputs`` (paths
        written) when ``out`` is given.
    """

    result, _, _ = compare_files_with_corrections(baseline, after, line, after_line=after_line, limits=limits,
                                                  port=port, out=out, cables=cables, extrapolate=extrapolate,
                                                  inputs=inputs, title=title, settings=settings,
                                                  tolerances=tolerances, columns=columns, warnings=warnings)
    return result


def compare_files_with_corrections(baseline: str, after: str, line, *, after_line: str | None = None,
                                   limits: Limits | None = None, port: int | None = None, out: str | None = None,
                                   cables: str | None = None, extrapolate: bool = False, inputs=(),
                                   title: str = "", settings=None, tolerances=(), columns=None, warnings=()) -> tuple:
    """:func:`compare_files`, also returning both corrections: ``(result, before, after)`` (for recording).

    Both corrections are refused as ``correct`` refuses them (:func:`deembed.jobs.correct.check_finite`: a
    feedpoint reflection that is not finite somewhere), before anything is worked out or written."""
    other = line
    warnings = list(warnings)
    if after_line:
        other, after_notes = read_line_file(after_line, cables, extrapolate, tolerances=tolerances)
        warnings += [f"after-work line: {n}" for n in after_notes]
    need = "comparing with a baseline (resonance shift, the antenna-or-line cause)"
    before = correct(read_phase_sweep(baseline, columns, port=port, needs=need), line)
    later = correct(read_phase_sweep(after, columns, port=port, needs=need), other)
    for corr in (before, later):
        check_finite(corr)
    result = compare_corrections(before, later, limits, settings=settings, warnings=warnings)
    if out:
        result = replace(result, outputs=write_compare_folder(
            result, before, later, after, out, inputs=[baseline, after, after_line, cables, *inputs,
                                                       *line_sources(line), *line_sources(other)], title=title))
    return result, before, later


def write_compare_folder(result: Comparison, before, after, after_path: str, out_dir: str, inputs=(), *,
                         title: str = "") -> dict:
    """Write one comparison's outputs into ``out_dir`` as one transaction; returns the final paths.

    Every output is checked against ``inputs`` (and every file read so far) before anything is written;
    on a failure or an interruption ``out_dir`` keeps what it had.
    """
    inputs = [i for i in inputs if i]
    for p in compare_paths(after_path, out_dir).values():
        check_not_input(p, inputs, "out")
    with OutputFolder(out_dir, inputs=inputs) as out:
        written = write_compare_outputs(result, before, after, compare_paths(after_path, out.stage), title=title)
    return {k: out.final(v) for k, v in written.items()}
