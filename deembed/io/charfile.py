"""Characterization files: a run's measured 2-port as Touchstone, its fitted physical model in a comment.

The model line reads ``! deembed-line-model: {json}``. :func:`line_from_characterization` turns such a
file back into a :class:`~deembed.physics.line.Line` whose part is a :class:`CharacterizedLine`.
"""
from __future__ import annotations

import json
import math
import os
from dataclasses import dataclass, replace
from functools import cached_property
from typing import ClassVar

import numpy as np

from ..base.errors import InputFileError, OptionError
from ..base.units import fmt_freq
from ..physics import between as bw
from ..physics.grid import FREQ_MATCH_RTOL, inside, nearest_points
from ..physics.line import Line, LossModel, Section, abcd_parts_of, abcd_to_s, s_to_abcd
from .inputfile import check_input_file
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
            "c_np": sec.loss.c_np, "d_np": sec.loss.d_np, "low_hz": ch.low_hz, "high_hz": ch.high_hz,
            "rms_residual": ch.fit.rms_residual}


def write_characterization(path, ch, comments=()) -> None:
    """Write the run's 2-port as Touchstone (atomically), its fitted model in a comment line.

    The model line reads ``! deembed-line-model: {json}`` (keys of :func:`model_record`).
    """

    lines = ["deembed line characterization, method " + ch.method,
             "port 1 at the analyzer, port 2 at the far end of the run; S at 50 ohm",
             *comments,
             MODEL_TAG + " " + json.dumps(model_record(ch), sort_keys=True)]
    write_touchstone(path, ch.freq_hz, ch.s, comments=tuple(lines), fmt="RI", unit="MHz")


_REQUIRED = ("method", "z0_ohm", "delay_s", "c_np", "d_np", "low_hz", "high_hz")


def _find_model(path: str):
    """(record dict, line number) from a file's model comment, or None when the file has none."""

    check_input_file(path)  # a regular file within the size limit: never a device that reads forever
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
            and 0 < vals["low_hz"] <= vals["high_hz"]):
        raise InputFileError(p, "the line-model comment holds values no line can have; run deembed characterize "
                                "again to rewrite the file", line=num)

    sw = read_sweep(p, expect_ports=2)
    sec = Section(vals["z0_ohm"], vals["delay_s"], LossModel(vals["c_np"], vals["d_np"]),
                  label=f"characterized line ({vals['method']})")
    misfit = rec.get("rms_residual", 0.0)
    misfit = float(misfit) if isinstance(misfit, (int, float)) and math.isfinite(misfit) and misfit >= 0 else 0.0
    part = CharacterizedLine(np.asarray(sw.freq_hz, dtype=float), np.asarray(sw.s, dtype=complex), sec,
                             vals["low_hz"], vals["high_hz"], str(vals["method"]), p, bool(allow_extrapolation),
                             misfit)
    return Line((part,))


def with_extrapolation(line: Line, allow: bool = True) -> Line:
    """The same line with every characterized part allowed (or not) to extrapolate."""
    parts = tuple(replace(p, allow_extrapolation=allow) if isinstance(p, CharacterizedLine) else p
                  for p in line.parts)
    return Line(parts, name=line.name)


@dataclass(frozen=True)
class CharacterizedLine:
    """A run known from a characterization: measured on its own points, interpolated or modelled between.

    Attributes
    ----------
    freq_hz, s : the characterization's frequencies (Hz) and 2-port (n, 2, 2) at 50 ohm.
    section : the fitted physical model.
    low_hz, high_hz : the characterized range.
    method, source : how and from which file.
    allow_extrapolation : evaluate the model beyond the range (otherwise refuse).
    fit_misfit : the model fit's RMS misfit as stored in the file (used as the error of a one-standard
        characterization, whose stored 2-port is the model's own).

    Notes
    -----
    On the measured points the measured values are used (``exact``). Between them the run is evaluated
    either by interpolating its S-parameters with the run's fitted delay removed (``interpolated``,
    :mod:`deembed.physics.between`) or through its fitted physical model (``model``), whichever has the
    smaller estimated error (:func:`deembed.physics.between.assess`): interpolation for a run of mixed
    impedances, which one equivalent uniform line cannot describe; normally the model for a uniform line.
    A one-standard characterization is always its model. Beyond the range (``allow_extrapolation``) only
    the model can be used. Never the raw complex values interpolated: behind a long run they turn through
    many phase turns between points.
    """

    freq_hz: np.ndarray
    s: np.ndarray
    section: Section
    low_hz: float
    high_hz: float
    method: str = ""
    source: str = "<memory>"
    allow_extrapolation: bool = False
    fit_misfit: float = 0.0

    @cached_property
    def between(self) -> bw.Between:
        """How this run is evaluated between its points, and the error of that (decided once)."""
        model_s = abcd_to_s(self.section.abcd(self.freq_hz))
        single = self.method in ("open", "short")
        return bw.assess(self.freq_hz, self.s, self.section.delay_s, model_s, model_only=single,
                         model_misfit_s11=self.fit_misfit if single else 0.0)

    def _on_grid(self, f):
        """Indices of ``f`` in the measured grid when every point is one of them, else None."""
        g = self.freq_hz
        if f.shape == g.shape and np.array_equal(f, g):
            return np.arange(g.size)
        best, hit = nearest_points(g, f)
        return best if np.all(hit) else None

    def _inside(self, f):
        return (f >= self.low_hz * (1 - FREQ_MATCH_RTOL)) & (f <= self.high_hz * (1 + FREQ_MATCH_RTOL))

    def _check_range(self, f):
        if self.allow_extrapolation or f.size == 0:
            return
        lo, hi = float(np.min(f)), float(np.max(f))
        if not inside(lo, hi, self.low_hz, self.high_hz):

            raise OptionError("line", f"{self.source} characterizes the line from {fmt_freq(self.low_hz)} to "
                                        f"{fmt_freq(self.high_hz)}, but the sweep runs from {fmt_freq(lo)} to "
                                        f"{fmt_freq(hi)}; characterize the line over the sweep's range, or pass "
                                        "`extrapolate` to use its fitted model beyond it")

    def _between_method(self, f) -> str:
        """"exact" when every frequency is a measured point, else the method used between points."""
        if self.method in ("open", "short"):
            return "model"
        return "exact" if self._on_grid(f) is not None else self.between.method

    def s_params(self, freq_hz):
        """S (n, 2, 2) at 50 ohm: measured values on the characterization's points, interpolated (delay
        removed) or modelled between them (:attr:`between`), the model beyond the range."""
        f = np.atleast_1d(np.asarray(freq_hz, dtype=float))
        idx = self._on_grid(f)
        if idx is not None:
            return self.s[idx]
        self._check_range(f)
        last = self.__dict__.get("_last_s")  # the summary, table and error estimate ask again for one sweep
        if last is not None and last[0].shape == f.shape and np.array_equal(last[0], f):
            return last[1]
        s = self._s_between(f)
        s.flags.writeable = False
        self.__dict__["_last_s"] = (f.copy(), s)  # a cache, not a field: the dataclass stays frozen
        return s

    def _s_between(self, f):
        if self.between.method != "interpolated":
            return abcd_to_s(self.section.abcd(f))
        inside = self._inside(f)
        if inside.all():
            return bw.interpolate(self.freq_hz, self.s, f, self.section.delay_s)
        out = abcd_to_s(self.section.abcd(f))
        out[inside] = bw.interpolate(self.freq_hz, self.s, f[inside], self.section.delay_s)
        return out

    def feedpoint_error(self, freq_hz, gamma_feedpoint=None):
        """Estimated error in the feedpoint reflection (|Gamma|, per frequency) from evaluating the run
        between its points; 0 on its own points. ``gamma_feedpoint``: the corrected reflection (else the
        worst antenna, |Gamma_L| = 1). For the uncertainty of a correction, add it to the other sources."""
        f = np.atleast_1d(np.asarray(freq_hz, dtype=float))
        if self._between_method(f) == "exact":
            return np.zeros(f.shape)
        b = self.between
        model_used = self._between_method(f) == "model"
        ds = bw.local_error(self.freq_hz, b.s_error, f, exact_on_grid=not model_used)
        if not model_used and b.model_error is not None:
            outside = ~self._inside(f)
            if outside.any():  # beyond the range the model is used: its misfit at the nearest end
                ds[outside] = bw.local_error(self.freq_hz, b.model_error, f[outside], exact_on_grid=False)
        return bw.feedpoint_error(self.s_params(f), ds, gamma_feedpoint)

    def between_points(self, freq_hz, gamma_feedpoint=None) -> dict:
        """How the run was evaluated at a sweep's frequencies and the estimated error (JSON-ready).

        Keys: ``method`` (exact, interpolated or model), ``characterization`` (the file),
        ``points_on_grid``, ``points_between``, ``points_beyond`` (extrapolated through the model),
        ``estimated_error`` (largest estimated |dGamma| at the feedpoint over the sweep) and
        ``estimated_error_at_hz``, ``error_from`` (how it was estimated), ``grid_step_hz`` (widest step of
        the characterization), ``needed_step_hz`` (what the run's longest echo allows, with ``grid_margin``),
        ``longest_two_way_delay_s``, ``grid_too_coarse``, ``delay_removed_s`` (interpolation only),
        ``characterization_error_worst`` (the chosen method's figure for the worst antenna, |Gamma_L| = 1),
        ``characterization_noise_error`` (the characterization's own point-to-point scatter carried to the
        feedpoint: a measurement uncertainty present on its own points too, not counted in
        ``estimated_error``).
        """
        f = np.atleast_1d(np.asarray(freq_hz, dtype=float))
        b = self.between
        method = self._between_method(f)
        _, exact = nearest_points(self.freq_hz, f)
        beyond = ~self._inside(f)
        err = self.feedpoint_error(f, gamma_feedpoint)
        i = int(np.argmax(err)) if err.size else 0
        worst = float(err[i]) if err.size else 0.0
        if method == "exact":
            source = "none needed: every sweep frequency is a characterized point (its own measurement error aside)"
        elif method == "interpolated":
            source = "leave-one-out interpolation on the characterization"
        elif self.method in ("open", "short"):
            source = "the one-standard model fit's RMS misfit"
        else:
            source = "the model's misfit to the characterization's measured points"
        out = {
            "method": method,
            "characterization": self.source,
            "points_on_grid": int(np.count_nonzero(exact)),
            "points_between": int(np.count_nonzero(~exact & ~beyond)),
            "points_beyond": int(np.count_nonzero(beyond)),
            "estimated_error": worst,
            "estimated_error_at_hz": float(f[i]) if worst > 0 else None,
            "error_from": source,
            "grid_step_hz": b.step_hz,
            "needed_step_hz": b.needed_step_hz,
            "grid_margin": bw.GRID_MARGIN,
            "longest_two_way_delay_s": b.two_way_delay_s,
            "grid_too_coarse": bool(b.grid_too_coarse),
            "characterization_error_worst": b.worst_feedpoint_error,
        }
        if method == "interpolated":
            out["delay_removed_s"] = b.delay_s
        if b.scatter is not None and err.size:  # the characterization's own noise, on and between its points
            ds = np.broadcast_to(b.scatter, (f.size, 2, 2))
            noise = bw.feedpoint_error(self.s_params(f), ds, gamma_feedpoint)
            out["characterization_noise_error"] = float(np.max(noise)) if noise.size else 0.0
        return out

    kind: ClassVar[str] = "characterized"

    def abcd_parts(self, freq_hz):
        return abcd_parts_of(self.abcd(freq_hz))

    def abcd(self, freq_hz):
        return s_to_abcd(self.s_params(freq_hz))

    def matched_loss_db(self, freq_hz):
        """One-way matched loss of the fitted model, dB (the line's loss without the mismatch ripple)."""
        f = np.asarray(freq_hz, dtype=float)
        self._check_range(np.atleast_1d(f))
        return self.section.matched_loss_db(f)

    def describe(self) -> str:

        sec = self.section
        return (f"characterized line ({self.method}, {fmt_freq(self.low_hz)}-{fmt_freq(self.high_hz)}"
                f"{', ' + self.source if self.source else ''}): model Z0 {sec.z0_ohm:.4g} ohm, "
                f"delay {sec.delay_s * 1e9:.4f} ns")
