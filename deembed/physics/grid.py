"""Frequency grids: when two sweeps' frequencies count as the same points.

Frequencies read from two files rarely agree to the last bit (a file in MHz, another in Hz); points
within :data:`FREQ_MATCH_RTOL` of each other, relative, are taken as the same point. Used wherever
values known on one grid are looked up on another (a characterized line on a sweep's points, two sweeps
compared point by point).
"""
from __future__ import annotations

import numpy as np

FREQ_MATCH_RTOL = 1e-9
"""Relative tolerance under which two frequencies count as the same point (common practice, no source: far
below any analyzer's frequency step, far above the rounding of a frequency written with 10 digits)."""


def nearest_points(grid_hz, freq_hz, rtol: float = FREQ_MATCH_RTOL):
    """For each of ``freq_hz``, the index of the nearest point of the increasing ``grid_hz``, and whether it matches.

    Returns
    -------
    idx : ndarray of int (m,)
        Index into ``grid_hz`` of the point nearest each frequency.
    hit : ndarray of bool (m,)
        True where that point is within ``rtol`` (relative) of the frequency.
    """
    g = np.asarray(grid_hz, float)
    f = np.asarray(freq_hz, float)
    idx = np.clip(np.searchsorted(g, f), 0, g.size - 1)
    idx_lo = np.clip(idx - 1, 0, g.size - 1)
    idx = np.where(np.abs(g[idx_lo] - f) < np.abs(g[idx] - f), idx_lo, idx)
    return idx, np.abs(g[idx] - f) <= rtol * np.abs(f)


def inside(lo_hz: float, hi_hz: float, low_hz: float, high_hz: float, rtol: float = FREQ_MATCH_RTOL) -> bool:
    """True when [lo_hz, hi_hz] lies inside [low_hz, high_hz], the ends widened by ``rtol``."""
    return lo_hz >= low_hz * (1 - rtol) and hi_hz <= high_hz * (1 + rtol)


__all__ = ["FREQ_MATCH_RTOL", "inside", "nearest_points"]
