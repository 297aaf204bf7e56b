"""Comparison outputs: the overlay plot, the JSON and the HTML page of one comparison, written atomically."""
from __future__ import annotations

import json
import os
from .correct import stem_of
from ..io.atomic import check_not_input, write_text_atomic
from ..render.plots import save
from ..io.jsonfile import to_jsonable
from ..render.compare_page import compare_html, compare_plot


def compare_paths(after_path: str, out_dir: str) -> dict:
    """Output names for comparing the sweep ``after_path`` with its baseline, in ``out_dir``."""

    stem = stem_of(after_path)
    return {k: os.path.join(out_dir, stem + suffix) for k, suffix in
            (("compare_json", ".compare.json"), ("compare_png", ".compare.png"), ("compare_html", ".compare.html"))}


def write_compare_outputs(result: dict, before, after, paths: dict, inputs=(), *, title: str = "") -> dict:
    """Write the comparison's JSON, overlay PNG and HTML atomically; returns the paths written."""

    for p in paths.values():
        check_not_input(p, [i for i in inputs if i], "--out")
    os.makedirs(os.path.dirname(os.path.abspath(paths["compare_json"])), exist_ok=True)
    save(compare_plot(before, after, title), paths["compare_png"])
    result = dict(result, outputs={k: os.path.basename(v) for k, v in paths.items()})
    write_text_atomic(paths["compare_json"], json.dumps(to_jsonable(result), indent=2, allow_nan=False) + "\n")
    write_text_atomic(paths["compare_html"], compare_html(result, paths["compare_png"], title))
    return dict(paths)
