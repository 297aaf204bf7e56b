"""De-embedding when only the size of the reflection is known (SWR or return loss, no phase).

Without phase the feedpoint reflection cannot be solved for: only its size can be estimated, through
the matched-loss relation

    |Gamma_feedpoint| ~ |Gamma_analyzer| / |S21 S12|        (= |Gamma_analyzer| / |S21|^2, reciprocal)

which is exact for a line matched to the 50-ohm reference (S11 = S22 = 0). For a matched uniform line
|S21|^2 = exp(-2 alpha l) = 10^(-ML/10), ML the one-way matched loss in dB, and the relation is the
handbook's "a lossy line improves the apparent SWR" (check-values F8: RL_in = RL_load + 2 ML).

A real coaxial line is not matched to 50 ohm: its characteristic impedance Zc is complex (conductor
loss makes Im Zc negative at low frequency), so S11 and S22 of the line at 50 ohm are small but not
zero, and the relation is not exact. The exact solution (:func:`deembed.core.feedpoint_gamma`) is

    Gamma_f = D / (t + S22 D),    D = Gamma_a - S11,   t = S21 S12,

and the triangle inequality bounds it for every phase of the unknown Gamma_a:

    (|Ga| - |S11|)+ / (|t| + |S22| (|Ga| - |S11|)+)  <=  |Gamma_f|  <=  (|Ga| + |S11|) / (|t| - |S22| (|Ga| + |S11|))

(the upper bound is infinite when its denominator is not positive). To first order the error of the
estimate is at most |S11|/|t| + |S22| |Gamma_f|^2. For one uniform section with rho = (Zc - 50)/(Zc + 50),
S11 = S22 = rho (1 - e^(-2 gamma l)) / (1 - rho^2 e^(-2 gamma l)), so |S11| <= |rho| (1 + e^(-2 alpha l)) /
(1 - |rho|^2) ~ 2 |rho|: the bound is of the order of |Zc - 50| / 50, amplified by the line's two-way loss.
The bound is computed per frequency from the line's own S-parameters, so a line that is far from
50 ohm (a 75-ohm section, a measured run with a bad connector) shows it as a wide interval.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np


def feedpoint_gamma_mag(gamma_analyzer_mag, s):
    """|Gamma| at the feedpoint from |Gamma| at the analyzer, with its bound.

    Parameters
    ----------
    gamma_analyzer_mag : array_like (n,)
        |Gamma| measured at the analyzer end (50 ohm).
    s : ndarray (n, 2, 2), complex
        The line's S-parameters at 50 ohm on the same frequencies, port 1 at the analyzer.

    Returns
    -------
    (estimate, low, high) : three ndarrays (n,)
        The matched-loss estimate |Ga| / |S21 S12| and the interval that holds the true |Gamma_f|
        whatever the phase of Gamma_a (``high`` may be ``inf``). See the module docstring.
    """
    ga = np.abs(np.asarray(gamma_analyzer_mag, dtype=float))
    s11 = np.abs(s[:, 0, 0])
    s22 = np.abs(s[:, 1, 1])
    t = np.abs(s[:, 1, 0] * s[:, 0, 1])
    with np.errstate(divide="ignore", invalid="ignore"):
        est = ga / t
        d_lo = np.maximum(ga - s11, 0.0)
        d_hi = ga + s11
        low = d_lo / (t + s22 * d_lo)
        den = t - s22 * d_hi
        high = np.where(den > 0, d_hi / np.where(den > 0, den, 1.0), np.inf)
    return est, low, high


def swr_from_mag(mag):
    """SWR (1 + m)/(1 - m) of |Gamma| values; ``inf`` at and above 1 (Pozar 4th ed. eq. 2.41)."""
    m = np.asarray(mag, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        s = (1 + m) / (1 - m)
    return np.where(m >= 1, np.inf, s)


@dataclass(frozen=True)
class MagnitudeCorrection:
    """A magnitude-only sweep and its feedpoint estimate, on the sweep's frequencies.

    Attributes
    ----------
    freq_hz : (n,) Hz
    gamma_analyzer_mag : (n,) |Gamma| measured at the analyzer end
    gamma_feedpoint_mag : (n,) matched-loss estimate of |Gamma| at the feedpoint
    gamma_feedpoint_mag_low, gamma_feedpoint_mag_high : (n,) the interval that holds the true value
    matched_loss_db : (n,) one-way matched loss of the line
    line : the line removed
    source : where the sweep came from
    """

    freq_hz: np.ndarray
    gamma_analyzer_mag: np.ndarray
    gamma_feedpoint_mag: np.ndarray
    gamma_feedpoint_mag_low: np.ndarray
    gamma_feedpoint_mag_high: np.ndarray
    matched_loss_db: np.ndarray
    line: object
    source: str = "<memory>"

    has_phase = False

    @property
    def swr_feedpoint(self):
        return swr_from_mag(self.gamma_feedpoint_mag)

    @property
    def swr_analyzer(self):
        return swr_from_mag(self.gamma_analyzer_mag)


def correct_magnitude(sweep, line) -> MagnitudeCorrection:
    """Estimate the feedpoint |Gamma| of a magnitude-only ``sweep`` behind ``line`` (see module docstring).

    ``sweep`` has ``freq_hz``, ``gamma_mag`` and ``source`` (a :class:`deembed.io.tablesweep.MagnitudeSweep`).
    """
    f = sweep.freq_hz
    s = line.s_params(f)
    est, low, high = feedpoint_gamma_mag(sweep.gamma_mag, s)
    return MagnitudeCorrection(freq_hz=f, gamma_analyzer_mag=np.asarray(sweep.gamma_mag, dtype=float),
                               gamma_feedpoint_mag=est, gamma_feedpoint_mag_low=low,
                               gamma_feedpoint_mag_high=high,
                               matched_loss_db=np.asarray(line.matched_loss_db(f), dtype=float),
                               line=line, source=sweep.source)
