"""Named frequency bands: the band list file (the check of a sweep across them is :mod:`deembed.analysis.bandcheck`).

The band list is a small TOML file of our own::

    [[band]]
    name = "40 m"
    low = "7.0MHz"
    high = "7.3MHz"

Frequencies are strings with a unit, read by :func:`deembed.units.parse_frequency`. The packaged
default (``deembed/data/bands.toml``) is a sample of amateur bands; edges depend on licence and region.
"""
from __future__ import annotations

import os
from dataclasses import dataclass


from ..base.errors import InputFileError, OptionError
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
