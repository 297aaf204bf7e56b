"""A sweep's worst SWR across each named band (the bands come from :mod:`deembed.io.bands`)."""
from __future__ import annotations

import math

import numpy as np

from ..base.verdicts import verdict_of
from ..io.bands import Band
from ..physics.rf import swr
from .findings import check_swr_threshold


def band_check(freq_hz, gamma, bands, threshold) -> list[dict]:
    """The worst SWR a sweep shows inside each band it reaches.

    Parameters
    ----------
    freq_hz : array_like, shape (n,)
        Strictly increasing frequencies, Hz.
    gamma : array_like, shape (n,), complex
        Reflection coefficient at 50 ohm.
    bands : sequence of Band
    threshold : float
        SWR limit, above 1.

    Returns
    -------
    list of dict
        One per band that overlaps the sweep, in the order given: ``name``, ``low_hz``,
        ``high_hz``, ``worst_swr``, ``worst_swr_freq_hz``, ``verdict`` (``within_limits`` when worst_swr <= threshold, over the
        covered part only), ``covered_fraction`` (share of the band's width inside the sweep, 0..1).
        Bands that the sweep does not reach are left out. Non-finite SWR gives ``worst_swr`` None
        and ``verdict`` ``outside_limits``.

    Notes
    -----
    The worst SWR is the maximum over the sweep points inside the covered part of the band and
    the SWR at the covered part's two edges, interpolated linearly in SWR between neighbouring
    points (the same interpolation as :func:`deembed.findings.swr_spans`).
    """
    t = check_swr_threshold(threshold)
    f = np.asarray(freq_hz, dtype=float).reshape(-1)
    s = swr(np.asarray(gamma, dtype=complex).reshape(-1))
    if f.shape != s.shape:
        raise ValueError(f"freq_hz has {f.size} points but gamma has {s.size}; they must match")
    if f.size == 0:
        return []
    out = []
    for b in bands:
        lo, hi = max(b.low_hz, f[0]), min(b.high_hz, f[-1])
        if lo > hi:
            continue
        inside = (f >= lo) & (f <= hi)
        f_pts = np.concatenate(([lo, hi], f[inside]))
        with np.errstate(invalid="ignore"):
            s_pts = np.concatenate((np.interp([lo, hi], f, s), s[inside]))
        s_pts = np.where(np.isnan(s_pts), np.inf, s_pts)
        k = int(np.argmax(s_pts))
        worst = float(s_pts[k])
        finite = math.isfinite(worst)
        out.append({
            "name": b.name,
            "low_hz": float(b.low_hz),
            "high_hz": float(b.high_hz),
            "worst_swr": worst if finite else None,
            "worst_swr_freq_hz": float(f_pts[k]),
            "verdict": verdict_of(finite and worst <= t),
            "covered_fraction": float((hi - lo) / (b.high_hz - b.low_hz)),
        })
    return out


__all__ = ["Band", "band_check"]
