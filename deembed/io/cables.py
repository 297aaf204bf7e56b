"""The cable catalog: built-in entries (a data file in the package) and a user's own file.

A catalog file is TOML: one table per cable id with ``name``, ``z0`` (ohm), ``vf``, ``k1`` and ``k2``
(matched loss in dB/100 ft = k1*sqrt(f/MHz) + k2*f/MHz) and a ``source`` that says where the figures
come from. See ``deembed/data/cables.toml``.
"""
from __future__ import annotations

from dataclasses import dataclass
import math
import os

import numpy as np

from ..base.errors import InputFileError, OptionError
from ..physics.line import LossModel, Section

from .tomlfile import DATA_DIR, load_toml, tomllib


@dataclass(frozen=True)
class Cable:
    id: str
    name: str
    z0_ohm: float
    vf: float
    k1: float  # dB/100 ft per sqrt(MHz)
    k2: float  # dB/100 ft per MHz
    source: str
    vf_tol: float | None = None      # +/- on the velocity factor (absolute)
    loss_tol: float | None = None    # +/- on the matched loss, as a fraction
    z0_tol: float | None = None      # +/- on Z0, ohm
    tol_source: str = ""

    def loss_db_per_100ft(self, freq_hz):
        f_mhz = np.asarray(freq_hz, dtype=float) / 1e6
        return self.k1 * np.sqrt(f_mhz) + self.k2 * f_mhz

    def section(self, length_m: float, label: str | None = None, vf: float | None = None) -> Section:
        """A section of this cable ``length_m`` long (optionally with a measured velocity factor)."""
        v = vf if vf is not None else self.vf
        return Section.from_length(self.z0_ohm, v, length_m, LossModel.from_k(self.k1, self.k2, length_m),
                                   label=label or f"{self.name}")


def parse_catalog(data: dict, origin: str) -> dict[str, Cable]:
    out = {}
    for cid, entry in data.items():
        if not isinstance(entry, dict):
            raise InputFileError(origin, f"[{cid}] should be a table of cable fields (name, z0, vf, k1, k2, source)")
        missing = [k for k in ("z0", "vf", "k1", "k2") if k not in entry]
        if missing:
            raise InputFileError(origin, f"cable [{cid}] lacks {', '.join(missing)}; give z0, vf, k1 and k2")
        if any(isinstance(entry[k], bool) for k in ("z0", "vf", "k1", "k2")):
            raise InputFileError(origin, f"cable [{cid}]: z0, vf, k1 and k2 must be numbers, not true/false")
        try:
            z0, vf, k1, k2 = (float(entry[k]) for k in ("z0", "vf", "k1", "k2"))
        except (TypeError, ValueError):
            raise InputFileError(origin, f"cable [{cid}]: z0, vf, k1 and k2 must be numbers") from None
        if not (0 < z0 < math.inf and 0 < vf <= 1 and 0 <= k1 < math.inf and 0 <= k2 < math.inf):
            raise InputFileError(origin, f"cable [{cid}]: need finite z0 > 0, 0 < vf <= 1, k1 >= 0, k2 >= 0; "
                                         "correct the entry")
        tols = {}
        for key in ("vf_tol", "loss_tol", "z0_tol"):
            if key in entry:
                v = entry[key]
                if isinstance(v, bool) or not isinstance(v, (int, float)) or not (0 <= float(v) < math.inf):
                    raise InputFileError(origin, f"cable [{cid}]: {key} must be a number, 0 or more "
                                                 "(vf_tol absolute, loss_tol a fraction such as 0.25, z0_tol in ohm)")
                tols[key] = float(v)
        out[cid.lower()] = Cable(cid.lower(), str(entry.get("name", cid)), z0, vf, k1, k2,
                                 str(entry.get("source", "user catalog, no source given")), **tols,
                                 tol_source=str(entry.get("tol_source", "")))
    return out


def builtin_catalog() -> dict[str, Cable]:
    with open(os.path.join(DATA_DIR, "cables.toml"), encoding="utf-8") as fh:
        text = fh.read()
    return parse_catalog(tomllib.loads(text), "deembed/data/cables.toml")


def catalog(user_file=None) -> dict[str, Cable]:
    """The built-in catalog, with a user's catalog file (if given) added on top (same ids replace)."""
    cat = builtin_catalog()
    if user_file:
        cat.update(parse_catalog(load_toml(user_file), str(user_file)))
    return cat


def lookup(cable_id: str, cat: dict[str, Cable], option: str = "cable") -> Cable:
    key = cable_id.strip().lower()
    if key not in cat:
        raise OptionError(option, f"unknown cable {cable_id!r}; known: {', '.join(sorted(cat))} "
                                  "(or add yours with `cables` FILE)")
    return cat[key]
