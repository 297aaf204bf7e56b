"""Limits of a comparison: how much change after work is still acceptable, parsed from text or numbers."""
from __future__ import annotations

import math
from dataclasses import asdict, dataclass

from ..base.errors import OptionError
from ..base.units import parse_db, parse_frequency, parse_frequency_difference, parse_percent


LIMIT_NAMES = {k: k for k in ("max_shift", "max_swr_rise", "max_gamma_change", "max_bw_loss", "max_loss_change")}
"""Each limit's name in JSON and site files (and in error messages)."""

JSON_NAMES = {
    "max_shift": "max_shift_hz",
    "max_swr_rise": "max_swr_rise",
    "max_gamma_change": "max_gamma_change",
    "max_bw_loss": "max_bw_loss_percent",
    "max_loss_change": "max_loss_change_db",
}
"""Each limit's name in JSON output: the same words as in a site file, with the unit as a suffix (JSON numbers
carry no unit). On the command line the same words are kebab-case options (``--max-shift``)."""

FIELD_OF_JSON = {v: k for k, v in JSON_NAMES.items()}
"""JSON name -> site-file name (``max_shift_hz`` -> ``max_shift``), for text that names a limit."""


@dataclass(frozen=True)
class Limits:
    """How much change after work is still acceptable (all about the feedpoint, except the line loss).

    Attributes
    ----------
    max_shift_hz : float
        Largest acceptable move of the feedpoint resonance, Hz (default 50 kHz). A resonance that was in
        the baseline sweep and has left the after sweep also exceeds it.
    max_swr_rise : float
        Largest acceptable rise of the feedpoint's lowest SWR (default 0.2, e.g. 1.3 to 1.5).
    max_gamma_change : float
        Largest acceptable change of the feedpoint |Gamma| at any frequency (default 0.1).
    max_bw_loss_percent : float
        Largest acceptable loss of the feedpoint's total 2:1 SWR bandwidth, per cent of the baseline's
        (default 25 %). Not checked when the baseline has no 2:1 span.
    max_loss_change_db : float
        Largest acceptable change of the line's one-way matched loss, dB (default 0.5 dB); checked only
        when a fresh line description is given for the after sweep.

    Notes
    -----
    The defaults are our choice (common practice, no source): 50 kHz is about a tenth of a typical HF
    dipole's 2:1 bandwidth; an SWR rise of 0.2 and a |Gamma| change of 0.1 are well above the trace noise
    of a calibrated analyzer behind a few dB of line, well below a change anyone would accept.
    """

    max_shift_hz: float = 50e3
    max_swr_rise: float = 0.2
    max_gamma_change: float = 0.1
    max_bw_loss_percent: float = 25.0
    max_loss_change_db: float = 0.5

    def __post_init__(self):
        checks = (("max_shift_hz", "max_shift", 0.0, None), ("max_swr_rise", "max_swr_rise", 0.0, None),
                  ("max_gamma_change", "max_gamma_change", 0.0, 2.0),
                  ("max_bw_loss_percent", "max_bw_loss", 0.0, 100.0),
                  ("max_loss_change_db", "max_loss_change", 0.0, None))
        for attr, option, lo, hi in checks:
            v = getattr(self, attr)
            if not isinstance(v, (int, float)) or not math.isfinite(v) or v < lo or (hi is not None and v > hi):
                bound = f"between {lo:g} and {hi:g}" if hi is not None else f"{lo:g} or more"
                raise OptionError(option, f"{v!r}: the limit must be a number {bound}")

    def as_dict(self) -> dict:
        return asdict(self)


def parse_limits(values: dict, *, base: Limits | None = None, names: dict | None = None) -> Limits:
    """Limits from text or numbers keyed ``max_shift``, ``max_swr_rise``, ``max_gamma_change``,
    ``max_bw_loss``, ``max_loss_change`` (missing or None keys keep ``base``'s values).

    ``max_shift`` takes a frequency with a unit ("50kHz"); ``max_bw_loss`` a per cent ("25" or "25%");
    ``max_loss_change`` dB ("0.5" or "0.5dB"); the others plain numbers. ``names`` maps each key to the
    name used in error messages (default: the key itself).
    """

    base = base or Limits()
    names = {**LIMIT_NAMES, **(names or {})}
    unknown = sorted(set(values) - set(LIMIT_NAMES))
    if unknown:
        raise OptionError("limits", f"unknown limit(s) {', '.join(unknown)}; use {', '.join(LIMIT_NAMES)}")
    out = base.as_dict()
    for key, v in values.items():
        if v is None:
            continue
        opt = names[key]
        if isinstance(v, bool):
            raise OptionError(opt, f"{v!r} is not a limit; write it like {LIMIT_EXAMPLES[key]}")
        if key == "max_shift":
            out["max_shift_hz"] = parse_shift(str(v), opt)
        elif key == "max_bw_loss":
            out["max_bw_loss_percent"] = parse_percent(str(v), opt, "bandwidth loss", LIMIT_EXAMPLES[key])
        elif key == "max_loss_change":
            out["max_loss_change_db"] = parse_db(str(v), opt, "loss change", LIMIT_EXAMPLES[key])
        else:
            out[key] = _number(v, opt, "")  # max_swr_rise, max_gamma_change: same name in Limits
    return Limits(**out)


LIMIT_EXAMPLES = {"max_shift": "50kHz", "max_swr_rise": "0.2", "max_gamma_change": "0.1", "max_bw_loss": "25%",
                  "max_loss_change": "0.5dB"}
"""An example of each limit's value, as written on the command line and in a site file."""


def parse_shift(text: str, option: str) -> float:
    """A frequency shift limit: '50kHz', '0Hz' (zero allowed; the unit is required). -> Hz."""
    hz = parse_frequency_difference(text, option, LIMIT_EXAMPLES["max_shift"], "frequency shift")
    if hz < 0:
        raise OptionError(option, f"{text!r}: a shift limit must be 0 or more")
    return hz


def _number(v, option: str, unit: str) -> float:
    if isinstance(v, bool):
        raise OptionError(option, f"{v!r} is not a number")
    text = str(v).strip()
    if unit and text.lower().endswith(unit):
        text = text[: -len(unit)].strip()
    try:
        x = float(text)
    except ValueError:
        raise OptionError(option, f"cannot read {v!r} as a number{' of ' + unit if unit else ''}; "
                                  f"write it like {'25%' if unit == '%' else '0.5dB' if unit else '0.2'}") from None
    if not math.isfinite(x) or x < 0:
        raise OptionError(option, f"{v!r}: a limit must be a finite number, 0 or more")
    return x


# ------------------------------------------------------------------------------------------- grids
