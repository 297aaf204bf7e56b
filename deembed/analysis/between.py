"""What a correction says about a characterized line between its measured points.

A characterized run is exact on its own frequencies; a sweep on other frequencies needs it between them,
interpolated with its delay removed or through its fitted model (:mod:`deembed.physics.between`,
:class:`deembed.io.charfile.CharacterizedLine`). These functions turn that into the ``line.between_points``
block of summary.json and compare.json, the warnings, and one line of text for the terminal and the report.
"""
from __future__ import annotations

import numpy as np

from ..base.units import fmt_freq
from ..physics.between import FEEDPOINT_ERROR_WARN, GRID_MARGIN
from ..physics.line import Line

METHOD_TEXT = {
    "exact": "exact (every sweep frequency is one of the characterized points)",
    "interpolated": "interpolated between characterized points (S-parameters with the run's delay removed, "
                    "local cubic, delay put back)",
    "model": "through the fitted transmission-line model between characterized points",
}


def _characterized_part(line):
    """The line's one characterized part when it is the whole line, else None (with the part count)."""
    all_parts = line.parts if isinstance(line, Line) else ()
    parts = [p for p in all_parts if p.kind == "characterized"]
    if not parts:
        return None, 0
    return parts[0], len(all_parts)


def has_characterized_part(line) -> bool:
    """Whether the line has a characterized part (one that can be evaluated between its points)."""
    return _characterized_part(line)[0] is not None


def between_points(line, freq_hz, gamma_feedpoint=None) -> dict | None:
    """The ``between_points`` block for a line used at ``freq_hz``; None for a line with no characterized part.

    ``gamma_feedpoint`` (the corrected reflection) sharpens the error estimate; it is used only when the
    characterized run is the whole line (otherwise the worst antenna, |Gamma_L| = 1, is assumed).
    """
    part, n = _characterized_part(line)
    if part is None:
        return None
    return part.between_points(freq_hz, gamma_feedpoint if n == 1 else None)


def between_error(line, freq_hz, gamma_feedpoint=None):
    """Per-frequency estimated |dGamma| at the feedpoint from evaluating a characterized line between its
    points (zeros for a line with no characterized part). A term for uncertainty intervals."""
    part, n = _characterized_part(line)
    f = np.atleast_1d(np.asarray(freq_hz, dtype=float))
    if part is None:
        return np.zeros(f.shape)
    return part.feedpoint_error(f, gamma_feedpoint if n == 1 else None)


def between_warnings(bp: dict | None, label: str = "") -> list[str]:
    """Plain-language warnings about a ``between_points`` block (none when every point is exact)."""
    if not bp or bp.get("method") == "exact" or not (bp.get("points_between") or bp.get("points_beyond")):
        return []
    head = f"{label}: " if label else ""
    src = bp.get("characterization") or "the characterization"
    out = []
    err = bp.get("estimated_error") or 0.0
    big = err > FEEDPOINT_ERROR_WARN
    if bp.get("grid_too_coarse") and (bp.get("method") == "interpolated" or big):
        out.append(f"{head}{src} has points up to {fmt_freq(bp['grid_step_hz'])} apart, too far for this run: "
                   f"its longest echo (two-way delay {bp['longest_two_way_delay_s'] * 1e9:.1f} ns) needs points at "
                   f"most {fmt_freq(bp['needed_step_hz'])} apart (1/(2 x delay) with a margin of {GRID_MARGIN:g}) "
                   "to be interpolated between them; characterize the run again with a step of "
                   f"{fmt_freq(bp['needed_step_hz'])} or less, or sweep on its own frequencies")
    if big:
        where = bp.get("estimated_error_at_hz")
        at = f" (largest at {fmt_freq(where)})" if where else ""
        out.append(f"{head}between the characterized points of {src} the feedpoint reflection may be off by up to "
                   f"{err:.3f} in |Gamma|{at}, estimated from {bp.get('error_from', 'the characterization')}; "
                   "characterize the run on a finer grid, or sweep on its own frequencies")
    return out


SHORT_TEXT = {
    "exact": "exact (the sweep is on the characterized points)",
    "interpolated": "interpolated with the run's delay removed",
    "model": "fitted line model",
}


def between_text(bp: dict | None) -> str:
    """One short line: how the line was evaluated between its points and the estimated error."""
    if not bp:
        return ""
    m = bp.get("method", "")
    text = SHORT_TEXT.get(m, m)
    if m == "exact":
        return text
    err = bp.get("estimated_error")
    how = "leave-one-out" if m == "interpolated" else "model misfit"
    tail = f", estimated error up to {err:.2g} in |Gamma| at the feedpoint ({how})" if err is not None else ""
    beyond = bp.get("points_beyond") or 0
    extra = f"; {beyond} point(s) beyond its range through the model" if beyond else ""
    return f"{text}{tail}{extra}"


__all__ = ["METHOD_TEXT", "SHORT_TEXT", "between_error", "between_points", "between_text", "between_warnings",
           "has_characterized_part"]
