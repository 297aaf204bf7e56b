"""Named frequency bands and a check of a sweep's SWR across each.

The band list is a small TOML file of our own::

    [[band]]
    name = "40 m"
    low = "7.0MHz"
    high = "7.3MHz"

Frequencies are strings with a unit, read by :func:`deembed.units.parse_frequency`. The packaged
default (``deembed/data/bands.toml``) is a sample of amateur bands; edges depend on licence and region.
"""
from __future__ import annotations

import math
import os
from dataclasses import dataclass

import numpy as np

from ..base.errors import InputFileError, OptionError
from ..physics.rf import swr
from .tomlfile import DATA_DIR, load_toml
from ..base.units import parse_frequency


_KEYS = ("name", "low", "high")


@dataclass(frozen=True)
class Band:
    """A named frequency range, Hz (low_hz < high_hz)."""

    name: str
    low_hz: float
    high_hz: float


def default_bands_path() -> str:
    """The packaged default band list."""
    return os.path.join(DATA_DIR, "bands.toml")


def load_bands(path=None) -> list[Band]:
    """Read a band list.

    Parameters
    ----------
    path : str or path-like, optional
        A TOML file of ``[[band]]`` tables with ``name``, ``low`` and ``high``; None reads the
        packaged default list.

    Returns
    -------
    list of Band
        In file order.

    Raises
    ------
    InputFileError
        The file cannot be read, is not TOML, or a band is malformed (named in the message).
    """
    where = default_bands_path() if path is None else str(path)
    data = load_toml(where, hint="see the [[band]] example in the default list")

    extra = sorted(set(data) - {"band"})
    if extra:
        raise InputFileError(where, f"unknown top-level key {extra[0]!r}; a band list holds only [[band]] tables")
    tables = data.get("band")
    if not isinstance(tables, list) or not tables or not all(isinstance(t, dict) for t in tables):
        raise InputFileError(where, 'no [[band]] tables; write each band as [[band]] with name = "40 m", '
                                    'low = "7.0MHz", high = "7.3MHz"')
    bands, seen = [], set()
    for i, t in enumerate(tables, start=1):
        name = t.get("name")
        label = f"band {i} ({name!r})" if isinstance(name, str) else f"band {i}"
        unknown = sorted(set(t) - set(_KEYS))
        if unknown:
            raise InputFileError(where, f"{label}: unknown key {unknown[0]!r}; a band has name, low and high")
        missing = [k for k in _KEYS if k not in t]
        if missing:
            raise InputFileError(where, f"{label}: missing {missing[0]!r}; a band has name, low and high")
        if not isinstance(name, str) or not name.strip():
            raise InputFileError(where, f"{label}: the name must be a non-empty string, e.g. name = \"40 m\"")
        if name in seen:
            raise InputFileError(where, f"{label}: the name {name!r} is used twice; give each band its own name")
        seen.add(name)
        edges = []
        for key in ("low", "high"):
            try:
                edges.append(parse_frequency(t[key], option=key))
            except OptionError as e:
                raise InputFileError(where, f"{label}: {key}: {e.reason} (write it as a string, e.g. "
                                            f"{key} = \"7.0MHz\")") from None
        if not edges[0] < edges[1]:
            raise InputFileError(where, f"{label}: low ({t['low']}) must be below high ({t['high']})")
        bands.append(Band(name, edges[0], edges[1]))
    return bands


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
        ``high_hz``, ``worst_swr``, ``worst_swr_freq_hz``, ``ok`` (worst_swr <= threshold, over the
        covered part only), ``covered_fraction`` (share of the band's width inside the sweep, 0..1).
        Bands that the sweep does not reach are left out. Non-finite SWR gives ``worst_swr`` None
        and ``ok`` False.

    Notes
    -----
    The worst SWR is the maximum over the sweep points inside the covered part of the band and
    the SWR at the covered part's two edges, interpolated linearly in SWR between neighbouring
    points (the same interpolation as :func:`deembed.findings.bandwidth_spans`).
    """
    t = float(threshold)
    if not math.isfinite(t) or t <= 1:
        raise OptionError("SWR threshold", f"{threshold!r} is not an SWR above 1; give one such as 2")
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
            "ok": bool(finite and worst <= t),
            "covered_fraction": float((hi - lo) / (b.high_hz - b.low_hz)),
        })
    return out
