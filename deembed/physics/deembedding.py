"""De-embedding: the feedpoint reflection from a sweep taken through a known 2-port, in closed form.

Port 1 of the 2-port faces the analyzer, port 2 the antenna; all at the same real reference (50 ohm).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import rf
from .line import Line, Section


def feedpoint_gamma(gamma_in, s11, s21s12, s22, out=None):
    """Remove a 2-port from a one-port measurement.

    Parameters
    ----------
    gamma_in : ndarray (n,)
        Reflection measured at port 1.
    s11, s21s12, s22 : ndarray (n,)
        The 2-port's S11, the product S21*S12, and S22.
    out : ndarray, optional
        Where to write the result (may be a fresh array; must not alias the inputs).

    Returns
    -------
    ndarray (n,) : the reflection of the load at port 2.

    Notes
    -----
    Gamma_in = S11 + S21 S12 Gamma_L / (1 - S22 Gamma_L), the input reflection of a terminated
    2-port (Pozar, *Microwave Engineering* 4th ed., from memory; the same form as the one-port
    error model, check-values F16), solved for Gamma_L:
    Gamma_L = (Gamma_in - S11) / (S22 (Gamma_in - S11) + S21 S12).
    Written with in-place operations so that a 10^6-point sweep needs two temporaries.
    """
    d = np.subtract(gamma_in, s11, out=out)
    t = np.multiply(s22, d)
    t += s21s12
    d /= t
    return d


def embed_gamma(gamma_load, s):
    """Reflection at port 1 of a 2-port ``s`` (n, 2, 2) terminated by ``gamma_load`` at port 2."""
    g = np.asarray(gamma_load, dtype=complex)
    return s[:, 0, 0] + s[:, 0, 1] * s[:, 1, 0] * g / (1 - s[:, 1, 1] * g)


@dataclass(frozen=True)
class Correction:
    """A sweep and its line-corrected counterpart, on the sweep's frequencies.

    Attributes
    ----------
    freq_hz : (n,) frequencies, Hz
    gamma_analyzer : (n,) reflection measured at the analyzer end (50 ohm)
    gamma_feedpoint : (n,) reflection at the feedpoint (50 ohm)
    matched_loss_db : (n,) one-way matched loss of the line
    line : the line removed
    source : where the sweep came from
    """

    freq_hz: np.ndarray
    gamma_analyzer: np.ndarray
    gamma_feedpoint: np.ndarray
    matched_loss_db: np.ndarray
    line: object
    source: str = "<memory>"

    def to_frame(self):
        """The per-frequency quantities at both ends and the line's matched loss as a :class:`pandas.DataFrame`
        (imports pandas): ``freq_hz``, ``analyzer_*`` and ``feedpoint_*`` (Gamma, |Gamma|, SWR, return loss, R,
        X) and ``line_matched_loss_db``, the columns of the table ``deembed correct`` writes."""
        import pandas as pd

        cols = {"freq_hz": self.freq_hz}
        for end, g in (("analyzer", self.gamma_analyzer), ("feedpoint", self.gamma_feedpoint)):
            cols.update({f"{end}_{k}": v for k, v in rf.reflection_columns(g).items()})
        cols["line_matched_loss_db"] = self.matched_loss_db
        return pd.DataFrame(cols)

    def feedpoint_network(self, name: str = "feedpoint"):
        """The corrected feedpoint as a :class:`skrf.Network` (imports scikit-rf)."""
        import skrf

        return skrf.Network(frequency=skrf.Frequency.from_f(self.freq_hz, unit="Hz"),
                            s=self.gamma_feedpoint.reshape(-1, 1, 1), z0=50.0, name=name)


BLOCK_POINTS = 8192
"""Frequencies evaluated per block in :func:`correct`: a block's temporaries (a few 128 kB arrays) stay in
the processor's cache, and the memory a call needs beyond its inputs and results stays fixed."""


def line_terms(line, freq_hz):
    """(S11, S21*S12, S22, matched loss dB) of ``line`` at ``freq_hz``, each (n,).

    A :class:`~deembed.physics.line.Line` or a :class:`~deembed.physics.line.Section` gives them in one pass
    (:meth:`deembed.physics.line.Line.deembed_terms`); any other line part (:class:`~deembed.physics.line.LinePart`:
    a measured or characterized 2-port) is taken through its (n, 2, 2) S-parameters.
    """
    f = np.asarray(freq_hz, dtype=float)
    if isinstance(line, (Line, Section)):
        return line.deembed_terms(f)
    s = line.s_params(f)
    return s[:, 0, 0], s[:, 1, 0] * s[:, 0, 1], s[:, 1, 1], np.asarray(line.matched_loss_db(f), dtype=float)


def correct(sweep, line) -> Correction:
    """De-embed ``line`` from a one-port ``sweep`` (a :class:`deembed.sweep.Sweep`).

    The line's 2-port is evaluated at exactly the sweep's frequencies through its physical model
    (or taken as measured, when it was measured on the same points), once per call: S11, S21*S12, S22
    and the matched loss come from one evaluation of the propagation constant. A modelled line is taken
    :data:`BLOCK_POINTS` frequencies at a time.
    """
    f = sweep.freq_hz
    g_in = sweep.gamma
    n = f.shape[0]
    step = BLOCK_POINTS if isinstance(line, Line) and line.blockwise else max(n, 1)
    g_feed = np.empty(n, dtype=complex)
    loss = np.empty(n, dtype=float)
    # where the line passes nothing the result is not finite; callers refuse it (jobs.correct.check_finite)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore", under="ignore"):
        for i in range(0, n, step):
            j = min(i + step, n)
            s11, s21s12, s22, loss_db = line_terms(line, f[i:j])
            feedpoint_gamma(g_in[i:j], s11, s21s12, s22, out=g_feed[i:j])
            loss[i:j] = loss_db
    return Correction(freq_hz=f, gamma_analyzer=g_in, gamma_feedpoint=g_feed, matched_loss_db=loss,
                      line=line, source=sweep.source)


def deembed_network(network, line):
    """De-embed ``line`` from a one-port :class:`skrf.Network`; returns a new Network (50 ohm).

    For users who carry on in scikit-rf. The Network must be referenced to 50 ohm.
    """
    import skrf

    f = network.frequency.f
    s11, s21s12, s22, _ = line_terms(line, f)
    with np.errstate(divide="ignore", invalid="ignore"):  # a line that passes nothing gives inf/nan, not warnings
        g_feed = feedpoint_gamma(network.s[:, 0, 0], s11, s21s12, s22)
    return skrf.Network(frequency=network.frequency, s=g_feed.reshape(-1, 1, 1), z0=50.0,
                        name=(network.name or "sweep") + " at feedpoint")
