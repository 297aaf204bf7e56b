"""The HTML report: one self-contained file, every section present, nothing from a file unescaped.

Sources of the expected facts: HTML5 data URIs (RFC 2397, "data:[<mediatype>][;base64],<data>");
the PNG signature b"\\x89PNG\\r\\n\\x1a\\n" (PNG specification, ISO/IEC 15948, section 5.2).
The escaping rule is html.escape's: < > & " ' become entities (Python standard library docs).
"""
from __future__ import annotations

import base64
import html
import os
import re

import numpy as np
import pytest

from deembed.physics import rf
from deembed.jobs import correct as workflow
from deembed.physics.deembedding import embed_gamma
from deembed.io.linefile import line_from_options
from deembed.io.touchstone import write_touchstone

HOSTILE_NAME = "<img src=x onerror=alert(1)>"          # a file name cannot hold "/", so no </script> here
HOSTILE_COMMENT = "<script>alert('comment')</script>"
HOSTILE_LINE = "<script>alert('line')</script>"
HOSTILE_BAND = "<script>alert('band')</script>"
HOSTILE_NOTE = "<script>alert('note')</script>"

SECTIONS = ("Line removed", "Findings at both ends", "Plots", "Warnings", "Safety")


def _series_z(freq_hz, f0_hz=7.0e6, r0_ohm=60.0, q=11.0):
    """Series RLC feedpoint, Z = R0 (f/f0)^2 + j Q R0 (f/f0 - f0/f) (an invented test antenna)."""
    x = freq_hz / f0_hz
    return r0_ohm * x**2 + 1j * q * r0_ohm * (x - 1 / x)


def _run(tmp_path, *, name="dipole", comments=("test sweep",), line_name="test feed", band="40 m",
         notes=(), length="30m", plots=True, power=100.0, seed=7):
    """Write a sweep through a known line into tmp_path and run the whole workflow on it."""
    rng = np.random.default_rng(seed)
    f = np.linspace(6.6e6, 7.6e6, 201)
    line_toml = tmp_path / "run.line.toml"
    line_toml.write_text(f'name = "{line_name}"\n[[section]]\nlabel = "main run"\ncable = "rg58"\n'
                         f'length = "{length}"\n', encoding="utf-8")
    bands = tmp_path / "bands.toml"
    bands.write_text(f'[[band]]\nname = "{band}"\nlow = "7.0MHz"\nhigh = "7.3MHz"\n', encoding="utf-8")
    line, line_notes = line_from_options(line_file=str(line_toml))
    g = embed_gamma(rf.gamma_from_z(_series_z(f)), line.s_params(f))
    g = g + 0.001 * (rng.standard_normal(f.size) + 1j * rng.standard_normal(f.size))
    sweep = tmp_path / f"{name}.s1p"
    write_touchstone(str(sweep), f, g, comments=list(comments))
    opts = workflow.Options(target_hz=7.1e6, power_w=power, bands_file=str(bands), plots=plots,
                            notes=list(line_notes) + list(notes))
    corr, summary, written = workflow.correct_file(str(sweep), line, str(tmp_path / "out"), opts)
    path = written["report_html"]
    with open(path, encoding="utf-8") as fh:
        return fh.read(), summary, written


@pytest.fixture(scope="module")
def plain(tmp_path_factory):
    return _run(tmp_path_factory.mktemp("plain"))


def test_report_is_one_file_beside_the_other_outputs(plain):
    text, summary, written = plain
    out = os.path.dirname(written["report_html"])
    htmls = [n for n in os.listdir(out) if n.endswith(".html")]
    assert htmls == ["dipole.report.html"]
    assert not [n for n in os.listdir(out) if n.startswith(".")]  # no temporary file left behind (atomic write)
    assert summary["outputs"]["report_html"] == "dipole.report.html"
    assert text.startswith("<!DOCTYPE html>") and text.rstrip().endswith("</html>")


def test_report_refers_to_nothing_outside_itself(plain):
    text = plain[0]
    # no network reference of any kind: absolute URLs, protocol-relative URLs, @import, url() to a file
    assert not re.search(r"https?://", text, re.I)
    assert not re.search(r"""(?:src|href)\s*=\s*["']?\s*//""", text, re.I)
    assert "@import" not in text
    assert not re.search(r"url\(", text, re.I)
    assert "<script" not in text.lower()
    assert "<link" not in text.lower()
    # every src is a data URI
    srcs = re.findall(r"""\bsrc\s*=\s*["']([^"']*)["']""", text)
    assert srcs and all(s.startswith("data:image/png;base64,") for s in srcs)


def test_report_embeds_each_plot_as_a_png_data_uri(plain):
    text, _, written = plain
    uris = re.findall(r'src="data:image/png;base64,([A-Za-z0-9+/=]+)"', text)
    # SWR, return loss, impedance, Smith chart and the power budget (a power was given)
    assert len(uris) == 5
    for u in uris:
        assert base64.b64decode(u)[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature, ISO/IEC 15948 sec. 5.2
    with open(written["swr_png"], "rb") as fh:  # the written PNG itself is what is embedded
        assert base64.b64encode(fh.read()).decode("ascii") in uris


def test_report_has_every_section(plain):
    text, summary, _ = plain
    for title in SECTIONS:
        assert re.search(rf"<h2>{re.escape(title)}\b", text), title
    for bit in ("dipole.s1p", "201", "At the analyzer", "At the feedpoint", "Lowest SWR", "Resonances",
                "SWR &le; 1.5", "SWR &le; 2", "SWR &le; 3", "Q from the impedance", "Q from the 2:1 span",
                "Trimming", "small cuts", "Bands", "Power budget", "deembed 0.1.0",
                "Static on the line", "Never transmit into an analyzer", "RF exposure", "Lightning", "licensed practice"):
        assert bit in text, bit
    # the numbers shown are the summary's (2 decimals for SWR), not something else
    assert f"{summary['feedpoint']['min_swr']['swr']:.2f}" in text
    assert f"{summary['line']['matched_loss_db']['at_high']:.2f} dB" in text
    # the colours of plots.py: slate for the analyzer end, copper for the feedpoint
    from deembed.render.plots import FEEDPOINT_COLOUR, ANALYZER_COLOUR
    assert ANALYZER_COLOUR in text and FEEDPOINT_COLOUR in text


def test_report_says_how_the_line_was_removed(plain):
    text = plain[0]
    assert "RLGC" in text and "Closed-form de-embedding" in text


def test_a_span_cut_by_the_sweep_edge_is_marked(tmp_path):
    # a 300 m run of RG-58 (about 5 dB one way at 7 MHz) makes the analyzer end look matched everywhere:
    # its 3:1 span reaches both ends of the sweep, so the report must say the sweep cut it
    text, summary, _ = _run(tmp_path, length="300m", power=None)
    assert any(summary["analyzer"]["swr_spans_cut_by_sweep_edge"]["3"])
    assert "cut by sweep edge" in text


def test_hostile_names_and_comments_are_escaped(tmp_path):
    text, summary, written = _run(tmp_path, name=HOSTILE_NAME, comments=[HOSTILE_COMMENT, "a & b"],
                                  line_name=HOSTILE_LINE, band=HOSTILE_BAND, notes=[HOSTILE_NOTE])
    assert os.path.basename(written["report_html"]) == HOSTILE_NAME + ".report.html"
    low = text.lower()
    assert "<script" not in low
    assert "<img src=x" not in low and "onerror=alert(1)>" not in low
    for raw in (HOSTILE_NAME, HOSTILE_COMMENT, HOSTILE_LINE, HOSTILE_BAND, HOSTILE_NOTE):
        assert html.escape(raw, quote=True) in text, raw  # shown to the reader, as text
    assert "a &amp; b" in text
    # the only tags in the page are the report's own
    tags = set(re.findall(r"<\s*([a-zA-Z][a-zA-Z0-9]*)", text))
    allowed = {"html", "head", "meta", "title", "style", "body", "header", "p", "h1", "h2", "h3", "dl", "dt",
               "dd", "div", "span", "br", "details", "summary", "pre", "section", "ul", "li", "table",
               "thead", "tbody", "tr", "th", "td", "colgroup", "col", "sub", "strong", "small", "i", "figure",
               "img", "figcaption", "footer"}
    assert tags <= allowed, tags - allowed


def test_warnings_are_shown_prominently(tmp_path):
    note = "the line is taken as lossless & its length is a guess"
    text, summary, _ = _run(tmp_path, notes=[note])
    assert note in summary["warnings"]
    m = re.search(r'<section id="warnings" class="warnings"[^>]*>(.*?)</section>', text, re.S)
    assert m, "the warnings box is missing"
    assert html.escape(note) in m.group(1)
    assert f'<span class="count">{len(summary["warnings"])}</span>' in m.group(1)
    # shown before the findings, not buried after the plots
    assert text.index('id="warnings"') < text.index('id="findings"')


def test_no_warnings_says_so(plain):
    text, summary, _ = plain
    assert summary["warnings"] == []
    assert 'class="warnings none"' in text


def test_report_without_written_plots_renders_them_in_memory(tmp_path):
    text, summary, written = _run(tmp_path, plots=False)
    assert not any(k.endswith("_png") for k in written)
    uris = re.findall(r'src="data:image/png;base64,', text)
    assert len(uris) == 5  # SWR, return loss, impedance, Smith, budget: rendered without files
