"""Parsing and printing of quantities with units: the only place units are read or written.

Everything inside the package is SI (Hz, m, s, W, ohm, dB). Each parser takes the option's name
so that its error names it.
"""
from __future__ import annotations

import math
import re

from .errors import OptionError

_NUM = r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?"

_FREQ = {"hz": 1.0, "khz": 1e3, "mhz": 1e6, "ghz": 1e9}
_LENGTH = {"m": 1.0, "cm": 0.01, "mm": 0.001, "km": 1000.0, "ft": 0.3048, "feet": 0.3048, "foot": 0.3048,
           "'": 0.3048, "in": 0.0254, "inch": 0.0254, '"': 0.0254}
_TIME = {"s": 1.0, "ms": 1e-3, "us": 1e-6, "µs": 1e-6, "ns": 1e-9, "ps": 1e-12}
_POWER = {"w": 1.0, "mw": 1e-3, "kw": 1e3}

FEET_PER_M = 1 / 0.3048


def _split(text, option: str, what: str, example: str):
    if text is None:
        raise OptionError(option, f"a {what} is needed, e.g. {example}")
    s = str(text).strip()
    m = re.fullmatch(rf"\s*({_NUM})\s*([^\d\s]*)\s*", s)
    if not m:
        raise OptionError(option, f"cannot read {s!r} as a {what}; write it like {example}")
    value = float(m.group(1))
    if not math.isfinite(value):
        raise OptionError(option, f"{s!r} is not a finite {what}; write it like {example}")
    return value, m.group(2).lower()


def no_unit(text, option: str, example: str) -> OptionError:
    """The one error every quantity gives for a bare number: the same words everywhere, with an example that fits
    the quantity."""
    return OptionError(option, f"{text!r} has no unit; write it with its unit, e.g. {example}")


def _scaled(text, option, what, example, table, default_unit=None):
    value, unit = _split(text, option, what, example)
    if unit == "":
        if default_unit is None:
            raise no_unit(text, option, example)
        unit = default_unit
    if unit not in table:
        units = ", ".join(sorted({k for k in table if k.isalpha()}))
        raise OptionError(option, f"unknown unit {unit!r} in {text!r}; use one of {units} (e.g. {example})")
    scaled = value * table[unit]
    if not math.isfinite(scaled):
        raise OptionError(option, f"{text!r} is too large a {what}; write it like {example}")
    return scaled


def parse_frequency(text, option: str = "frequency", example: str = "7.1MHz") -> float:
    """'7.1MHz', '7100 kHz', '1.3e9Hz' -> Hz. A unit is required; the result must be positive."""
    hz = _scaled(text, option, "frequency", example, _FREQ)
    if hz <= 0:
        raise OptionError(option, f"{text!r}: a frequency must be positive")
    return hz


def parse_frequency_difference(text, option: str = "frequency", example: str = "50kHz",
                               what: str = "frequency difference") -> float:
    """A frequency difference or shift: '50kHz', '0Hz', '-20 kHz' -> Hz, sign kept.

    A unit is required, as for :func:`parse_frequency`, but zero and negative values are read as written:
    the caller decides which are allowed. ``what`` names the quantity in the error ("frequency shift").
    """
    return _scaled(text, option, what, example, _FREQ)


MAX_LINE_LENGTH_M = 1e6
"""Longest length accepted (1000 km): far beyond any feed line, well inside what the line maths can take."""


def parse_length(text, option: str = "length", allow_zero: bool = True) -> float:
    """'30m', '98ft', '98 ft', "12'" -> metres. A unit is required (metres and feet are both in use)."""
    m = _scaled(text, option, "length", "30m or 98ft", _LENGTH)
    if m < 0 or (m == 0 and not allow_zero):
        raise OptionError(option, f"{text!r}: a length must be {'zero or ' if allow_zero else ''}positive")
    if m > MAX_LINE_LENGTH_M:
        raise OptionError(option, f"{text!r}: longer than {MAX_LINE_LENGTH_M / 1e3:g} km, which no feed line is; "
                                  "check the number and its unit (30m, 98ft)")
    return m


def parse_delay(text, option: str = "delay") -> float:
    """One-way delay: '152ns', '0.152us' (a unit is required). -> seconds."""
    s = _scaled(text, option, "delay", "152ns", _TIME)
    if s < 0:
        raise OptionError(option, f"{text!r}: a delay must be zero or positive")
    return s


def parse_power(text, option: str = "power") -> float:
    """'100W', '1.5kW', '500mW' (a unit is required). -> watts (positive)."""
    w = _scaled(text, option, "power", "100W", _POWER)
    if w <= 0:
        raise OptionError(option, f"{text!r}: a power must be positive")
    return w


LOSS_POINT_EXAMPLE = "0.8dB@21MHz"


def parse_db(text, option: str, what: str = "level", example: str = "1.2dB", allow_negative: bool = False) -> float:
    """'1.2dB' -> 1.2. The unit dB is required (a bare number is refused like every quantity's)."""
    value, unit = _split(text, option, what, example)
    if unit == "":
        raise no_unit(text, option, example)
    if unit != "db":
        raise OptionError(option, f"unknown unit {unit!r} in {text!r}; a {what} is in dB (e.g. {example})")
    if value < 0 and not allow_negative:
        raise OptionError(option, f"{text!r}: a {what} must be 0 dB or more")
    return value


def parse_percent(text, option: str, what: str = "share", example: str = "25%") -> float:
    """'25%' -> 25.0 (per cent, 0 or more). The % sign is required."""
    value, unit = _split(text, option, what, example)
    if unit == "":
        raise no_unit(text, option, example)
    if unit != "%":
        raise OptionError(option, f"unknown unit {unit!r} in {text!r}; a {what} is in per cent (e.g. {example})")
    if value < 0:
        raise OptionError(option, f"{text!r}: a {what} must be 0 % or more")
    return value


def parse_loss_point(text, option: str = "loss") -> tuple[float, float]:
    """'0.8dB@21MHz' -> (0.8, 21e6): a one-way matched loss in dB at a frequency."""
    s = str(text).strip()
    parts = s.split("@")
    if len(parts) != 2:
        raise OptionError(option, f"cannot read {s!r}; write the loss and its frequency like {LOSS_POINT_EXAMPLE}")
    db = parse_db(parts[0].strip(), option, "matched loss", LOSS_POINT_EXAMPLE)
    return db, parse_frequency(parts[1], option, "21MHz")


def parse_swr(text, option: str) -> float:
    """An SWR: '2.5' or '2.5:1' (a ratio, no unit). Must be 1 or more."""
    t = str(text).strip()
    if t.endswith(":1"):
        t = t[:-2].strip()
    try:
        v = float(t)
    except ValueError:
        raise OptionError(option, f"cannot read {text!r} as an SWR; write it like 2.5 or 2.5:1") from None
    if not (v >= 1):
        raise OptionError(option, f"{text!r}: an SWR is 1 or more")
    return v


def parse_positive(text, option: str, what: str = "value", upper: float | None = None,
                   upper_inclusive: bool = True) -> float:
    """A plain positive number, optionally bounded above (e.g. velocity factor in (0, 1])."""
    if isinstance(text, bool):  # true/false from a TOML file are not numbers
        raise OptionError(option, f"{text!r} is not a number; give the {what} as a number")
    try:
        v = float(text)
    except (TypeError, ValueError):
        raise OptionError(option, f"cannot read {text!r} as a number; give the {what} as a number") from None
    if not math.isfinite(v) or v <= 0:
        raise OptionError(option, f"{text!r}: the {what} must be a positive number")
    if upper is not None and (v > upper or (v == upper and not upper_inclusive)):
        bound = f"at most {upper:g}" if upper_inclusive else f"below {upper:g}"
        raise OptionError(option, f"{text!r}: the {what} must be {bound}")
    return v


def _freq_unit(hz: float):
    for unit, scale in (("GHz", 1e9), ("MHz", 1e6), ("kHz", 1e3)):
        if abs(hz) >= scale:
            return unit, scale
    return "Hz", 1.0


def fmt_freq(hz: float, digits: int = 4, resolution_hz: float | None = None) -> str:
    """Readable frequency: 28.4 MHz, 7.1 kHz.

    With ``resolution_hz`` (a sweep's step, say) the number gets the decimals that resolution supports and no
    more: 6.848 MHz on a 2 kHz grid, 145.60 MHz on a 20 kHz grid. Otherwise ``digits`` significant digits.
    """
    if hz is None or not math.isfinite(hz):
        return "n/a"
    unit, scale = _freq_unit(hz)
    if resolution_hz is not None and math.isfinite(resolution_hz) and resolution_hz > 0:
        decimals = max(0, math.ceil(-math.log10(resolution_hz / scale) - 1e-9))
        return f"{hz / scale:.{min(decimals, 12)}f} {unit}"
    return f"{hz / scale:.{digits}g} {unit}"


def fmt_span(lo_hz: float, hi_hz: float, resolution_hz: float | None = None) -> str:
    """'6.848 MHz to 7.065 MHz'. Both edges in the same unit, with the decimals the resolution supports, and never
    the same text twice: a span narrower than the resolution gets as many more decimals as it takes to tell its
    edges apart, and a span of one point is written as that point."""
    if lo_hz is None or hi_hz is None or not (math.isfinite(lo_hz) and math.isfinite(hi_hz)):
        return "n/a"
    if hi_hz == lo_hz:
        return f"{fmt_freq(lo_hz, resolution_hz=resolution_hz)} (one point)"
    unit, scale = _freq_unit(max(abs(lo_hz), abs(hi_hz)))
    if resolution_hz is not None and math.isfinite(resolution_hz) and resolution_hz > 0:
        decimals = max(0, math.ceil(-math.log10(resolution_hz / scale) - 1e-9))
    else:
        decimals = 3
    decimals = min(decimals, 12)
    while f"{lo_hz / scale:.{decimals}f}" == f"{hi_hz / scale:.{decimals}f}" and decimals < 12:
        decimals += 1
    return f"{lo_hz / scale:.{decimals}f} to {hi_hz / scale:.{decimals}f} {unit}"


SWR_PRINT_MAX = 99.0
"""SWR above this prints as "> 99": beyond it the figure says nothing a technician can use (|Gamma| > 0.98)."""


def fmt_swr(swr, decimals: int = 2) -> str:
    """An SWR for people: '1.46', '> 99' above 99 (or infinite), 'n/a' for None/NaN."""
    if swr is None or (isinstance(swr, float) and math.isnan(swr)):
        return "n/a"
    v = float(swr)
    if math.isnan(v):
        return "n/a"
    if v > SWR_PRINT_MAX:
        return f"> {SWR_PRINT_MAX:g}"
    return f"{v:.{decimals}f}"


_CAPACITANCE = {"f": 1.0, "uf": 1e-6, "µf": 1e-6, "nf": 1e-9, "pf": 1e-12, "ff": 1e-15}
_INDUCTANCE = {"h": 1.0, "mh": 1e-3, "uh": 1e-6, "µh": 1e-6, "nh": 1e-9, "ph": 1e-12}
_RESISTANCE = {"ohm": 1.0, "ohms": 1.0, "ω": 1.0, "r": 1.0}


def parse_capacitance(text, option: str = "open_c") -> float:
    """'12fF', '0.05pF' -> farads. A unit is required; a kit's stated offset may be negative."""
    return _scaled(text, option, "capacitance", "12fF", _CAPACITANCE)


def parse_inductance(text, option: str = "short_l") -> float:
    """'5pH', '0.02nH' -> henries. A unit is required; a kit's stated offset may be negative."""
    return _scaled(text, option, "inductance", "5pH", _INDUCTANCE)


def parse_resistance(text, option: str = "load_r") -> float:
    """'50.2ohm' -> ohms (a unit is required: ohm, ohms or Ω). Must be positive."""
    r = _scaled(text, option, "resistance", "50.2ohm", _RESISTANCE)
    if r <= 0:
        raise OptionError(option, f"{text!r}: a resistance must be positive")
    return r
