"""What can be said about an antenna from a sweep without phase (SWR or return loss alone).

The lowest SWR and the SWR spans need only |Gamma|; resonance (the reactance crossing zero) and the
impedance Q (the impedance's frequency slope) need the complex reflection, so they are reported as
not available, with the reason. Q from the 2:1 span needs only the SWR curve and is given with the
same caveat as for a full sweep (valid when the antenna is matched near the centre).
"""
from __future__ import annotations

import numpy as np

from .findings import (DEFAULT_THRESHOLDS, finite_or_none, swr_spans, min_swr, q_from_span,
                        span_cut_by_sweep_edge, threshold_key)

NO_PHASE_REASON = ("not available without phase: a resonance is where the feedpoint reactance crosses zero and "
                   "Q comes from the slope of the impedance, and an SWR or return-loss sweep has no phase, so "
                   "neither can be found from it (the lowest SWR is not in general the resonance); export R and X, "
                   "or the reflection with its phase, to get them")


def _spans(f, mag, thresholds):
    return {threshold_key(t): [[finite_or_none(lo), finite_or_none(hi)] for lo, hi in swr_spans(f, mag, t)]
            for t in thresholds}


def magnitude_findings(freq_hz, gamma_mag, thresholds=DEFAULT_THRESHOLDS, *, gamma_mag_low=None,
                       gamma_mag_high=None) -> dict:
    """Findings of one end from |Gamma| alone, ready for JSON.

    Parameters
    ----------
    freq_hz : array_like (n,)
        Strictly increasing frequencies, Hz.
    gamma_mag : array_like (n,)
        |Gamma| at 50 ohm (the estimate, at the feedpoint).
    thresholds : sequence of float
        SWR levels for the spans.
    gamma_mag_low, gamma_mag_high : array_like (n,), optional
        An interval that holds the true |Gamma| (see :mod:`deembed.physics.magnitude`); with it the
        lowest SWR gets its range and each span its inner and outer bound.

    Returns
    -------
    dict
        ``min_swr`` ``{"freq_hz", "swr"}`` (plus ``"swr_low"``, ``"swr_high"`` with a bound);
        ``swr_spans_hz`` and ``swr_spans_cut_by_sweep_edge`` as for a full sweep;
        ``swr_spans_hz_bound`` ``{key: {"inner": spans, "outer": spans}}`` with a bound (the true span
        holds the inner one and lies within the outer one);
        ``resonances_hz``, ``resonances``, ``q``, ``q_freq_hz``: ``None``;
        ``q_from_span``: Q from the 2:1 span holding the lowest SWR (None when cut or absent);
        ``not_available``: ``{"resonances": reason, "q": reason}``; ``phase``: False.
    """
    f = np.asarray(freq_hz, dtype=float).reshape(-1)
    m = np.asarray(gamma_mag, dtype=float).reshape(-1)
    f_min, s_min = min_swr(f, m)
    spans = {threshold_key(t): swr_spans(f, m, t) for t in thresholds}
    q_span = None
    if f_min is not None:
        for lo, hi in swr_spans(f, m, 2.0):
            if lo <= f_min <= hi:
                if not span_cut_by_sweep_edge((lo, hi), f):
                    q_span = finite_or_none(q_from_span(lo, hi, 2.0))
                break
    out = {
        "phase": False,
        "min_swr": {"freq_hz": finite_or_none(f_min), "swr": finite_or_none(s_min)},
        "resonances_hz": None,
        "resonances": None,
        "swr_spans_hz": {k: [[finite_or_none(lo), finite_or_none(hi)] for lo, hi in v] for k, v in spans.items()},
        "swr_spans_cut_by_sweep_edge": {k: [span_cut_by_sweep_edge(sp, f) for sp in v] for k, v in spans.items()},
        "q": None,
        "q_freq_hz": None,
        "q_from_span": q_span,
        "not_available": {"resonances": NO_PHASE_REASON, "q": NO_PHASE_REASON},
    }
    if gamma_mag_low is not None and gamma_mag_high is not None and f_min is not None:
        lo_m = np.asarray(gamma_mag_low, dtype=float).reshape(-1)
        hi_m = np.asarray(gamma_mag_high, dtype=float).reshape(-1)
        # the lowest SWR's range: the least of the lower curve and the least of the upper curve
        _, s_lo = min_swr(f, lo_m)
        _, s_hi = min_swr(f, hi_m)
        out["min_swr"]["swr_low"] = finite_or_none(s_lo)
        out["min_swr"]["swr_high"] = finite_or_none(s_hi)
        inner, outer = _spans(f, hi_m, thresholds), _spans(f, lo_m, thresholds)
        out["swr_spans_hz_bound"] = {k: {"inner": inner[k], "outer": outer[k]} for k in spans}
    return out
