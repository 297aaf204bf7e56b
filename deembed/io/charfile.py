"""Characterization files: a run's measured 2-port as Touchstone, its fitted physical model in a comment.

The model line reads ``! deembed-line-model: {json}``. :func:`line_from_characterization` turns such a
file back into a :class:`~deembed.physics.line.Line` whose part is a :class:`CharacterizedLine`.
"""
from __future__ import annotations

import json
import math
import os
from dataclasses import dataclass, replace

import numpy as np

from ..base.errors import InputFileError, OptionError
from ..base.units import fmt_freq
from ..physics.grid import inside, nearest_points
from ..physics.line import Line, LossModel, Section, abcd_to_s, s_to_abcd
from .touchstone import read_sweep, write_touchstone

MODEL_TAG = "deembed-line-model:"
"""Comment prefix under which a characterization file stores its fitted physical model (JSON)."""


# --------------------------------------------------------------------------------------------------
# Files
# --------------------------------------------------------------------------------------------------
def model_record(ch) -> dict:
    """The fitted model as stored in a characterization file's comment."""
    sec = ch.section
    return {"version": 1, "method": ch.method, "z0_ohm": sec.z0_ohm, "delay_s": sec.delay_s,
            "c_np": sec.loss.c_np, "d_np": sec.loss.d_np, "f_min_hz": ch.f_min_hz, "f_max_hz": ch.f_max_hz,
            "residual_rms": ch.fit.residual_rms}


def write_characterization(path, ch, comments=()) -> None:
    """Write the run's 2-port as Touchstone (atomically), its fitted model in a comment line.

    The model line reads ``! deembed-line-model: {json}`` (keys of :func:`model_record`).
    """

    lines = ["deembed line characterization, method " + ch.method,
             "port 1 at the analyzer, port 2 at the far end of the run; S at 50 ohm",
             *comments,
             MODEL_TAG + " " + json.dumps(model_record(ch), sort_keys=True)]
    write_touchstone(path, ch.freq_hz, ch.s, comments=tuple(lines), fmt="RI", unit="MHz")


_REQUIRED = ("method", "z0_ohm", "delay_s", "c_np", "d_np", "f_min_hz", "f_max_hz")


def _find_model(path: str):
    """(record dict, line number) from a file's model comment, or None when the file has none."""

    if not os.path.isfile(path):
        return None
    try:
        with open(path, "r", encoding="latin-1") as fh:
            for num, text in enumerate(fh, 1):
                s = text.strip()
                if not s.startswith("!"):
                    continue
                body = s[1:].strip()
                if body.startswith(MODEL_TAG):
                    return body[len(MODEL_TAG):].strip(), num
    except OSError:
        return None
    return None


def line_from_characterization(path, allow_extrapolation: bool = False):
    """A :class:`~deembed.line.Line` from a characterization file, or None for a plain 2-port file.

    The line uses the measured 2-port on the characterization's own frequencies and the fitted physical
    model elsewhere inside its range; beyond the range it refuses unless ``allow_extrapolation``.
    """
    p = str(path)
    found = _find_model(p)
    if found is None:
        return None
    text, num = found
    try:
        rec = json.loads(text)
        vals = {k: rec[k] for k in _REQUIRED}
        for k in _REQUIRED[1:]:
            vals[k] = float(vals[k])
            if not math.isfinite(vals[k]):
                raise ValueError(k)
    except (ValueError, KeyError, TypeError):
        raise InputFileError(p, "the line-model comment is damaged; run deembed characterize again to rewrite "
                                "the file", line=num) from None
    if not (vals["z0_ohm"] > 0 and vals["delay_s"] >= 0 and vals["c_np"] >= 0 and vals["d_np"] >= 0
            and 0 < vals["f_min_hz"] <= vals["f_max_hz"]):
        raise InputFileError(p, "the line-model comment holds values no line can have; run deembed characterize "
                                "again to rewrite the file", line=num)

    sw = read_sweep(p, expect_ports=2)
    sec = Section(vals["z0_ohm"], vals["delay_s"], LossModel(vals["c_np"], vals["d_np"]),
                  label=f"characterized line ({vals['method']})")
    part = CharacterizedLine(np.asarray(sw.freq_hz, dtype=float), np.asarray(sw.s, dtype=complex), sec,
                             vals["f_min_hz"], vals["f_max_hz"], str(vals["method"]), p, bool(allow_extrapolation))
    return Line((part,))


def with_extrapolation(line: Line, allow: bool = True) -> Line:
    """The same line with every characterized part allowed (or not) to extrapolate."""
    parts = tuple(replace(p, allow_extrapolation=allow) if isinstance(p, CharacterizedLine) else p
                  for p in line.parts)
    return Line(parts, name=line.name)


@dataclass(frozen=True)
class CharacterizedLine:
    """A run known from a characterization: measured on its own points, its physical model elsewhere.

    Attributes
    ----------
    freq_hz, s : the characterization's frequencies (Hz) and 2-port (n, 2, 2) at 50 ohm.
    section : the fitted physical model.
    f_min_hz, f_max_hz : the characterized range.
    method, source : how and from which file.
    allow_extrapolation : evaluate the model beyond the range (otherwise refuse).

    Notes
    -----
    Off the measured points the run is evaluated through its fitted model, never by interpolating the
    measured complex values (which turn through many phase turns over a long run). For a run that is not
    uniform (adapters, a 75 ohm section) the model is one equivalent uniform line, so off-grid values are
    approximate; on the measured points they are exact.
    """

    freq_hz: np.ndarray
    s: np.ndarray
    section: Section
    f_min_hz: float
    f_max_hz: float
    method: str = ""
    source: str = "<memory>"
    allow_extrapolation: bool = False

    def _on_grid(self, f):
        """Indices of ``f`` in the measured grid when every point is one of them, else None."""
        g = self.freq_hz
        if f.shape == g.shape and np.array_equal(f, g):
            return np.arange(g.size)
        best, hit = nearest_points(g, f)
        if np.all(hit):
            return best
        return None

    def _check_range(self, f):
        if self.allow_extrapolation or f.size == 0:
            return
        lo, hi = float(np.min(f)), float(np.max(f))
        if not inside(lo, hi, self.f_min_hz, self.f_max_hz):

            raise OptionError("--line", f"{self.source} characterizes the line from {fmt_freq(self.f_min_hz)} to "
                                        f"{fmt_freq(self.f_max_hz)}, but the sweep runs from {fmt_freq(lo)} to "
                                        f"{fmt_freq(hi)}; characterize the line over the sweep's range, or pass "
                                        "--extrapolate to use its fitted model beyond it")

    def s_params(self, freq_hz):
        """S (n, 2, 2) at 50 ohm: measured values on the characterization's points, the model elsewhere."""
        f = np.atleast_1d(np.asarray(freq_hz, dtype=float))
        idx = self._on_grid(f)
        if idx is not None:
            return self.s[idx]
        self._check_range(f)
        return abcd_to_s(self.section.abcd(f))

    def abcd(self, freq_hz):
        return s_to_abcd(self.s_params(freq_hz))

    def matched_loss_db(self, freq_hz):
        """One-way matched loss of the fitted model, dB (the line's loss without the mismatch ripple)."""
        f = np.asarray(freq_hz, dtype=float)
        self._check_range(np.atleast_1d(f))
        return self.section.matched_loss_db(f)

    def describe(self) -> str:

        sec = self.section
        return (f"characterized line ({self.method}, {fmt_freq(self.f_min_hz)}-{fmt_freq(self.f_max_hz)}"
                f"{', ' + self.source if self.source else ''}): model Z0 {sec.z0_ohm:.4g} ohm, "
                f"delay {sec.delay_s * 1e9:.4f} ns")
