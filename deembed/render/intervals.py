"""A value beside its coverage interval, with no more digits than the interval supports.

"7.041 MHz (7.032 to 7.050)": the last printed digit is the one the interval's half-width reaches to,
with two significant digits of the half-width when its leading digit is 1 or 2 (JCGM 100:2008 7.2.6: an
uncertainty is given to at most two significant digits; the value is rounded to match).
"""
from __future__ import annotations

import math

_FREQ_UNITS = ((1e9, "GHz"), (1e6, "MHz"), (1e3, "kHz"), (1.0, "Hz"))


def step_for(low: float, high: float) -> float | None:
    """The rounding step (a power of ten) that an interval [low, high] supports, or None."""
    if low is None or high is None:
        return None
    half = (float(high) - float(low)) / 2
    if not (math.isfinite(half) and half > 0):
        return None
    e = math.floor(math.log10(half))
    if half / 10 ** e < 3:
        e -= 1
    return 10.0 ** e


def _decimals(step: float) -> int:
    return max(0, -int(math.floor(math.log10(step) + 1e-9)))


def fmt_number(value, interval=None, *, default_decimals: int = 2, unit: str = "") -> str:
    """A plain number with its interval: ``1.20 (1.13 to 1.28)``; without an interval, ``default_decimals``."""
    if value is None or not math.isfinite(float(value)):
        return "n/a"
    sp = f" {unit}" if unit else ""
    step = step_for(*interval) if interval else None
    if step is None:
        return f"{float(value):.{default_decimals}f}{sp}"
    d = _decimals(step)
    lo, hi = interval
    return f"{float(value):.{d}f}{sp} ({float(lo):.{d}f} to {float(hi):.{d}f})"


def freq_unit(value_hz: float) -> tuple[float, str]:
    v = abs(float(value_hz))
    for scale, name in _FREQ_UNITS:
        if v >= scale:
            return scale, name
    return 1.0, "Hz"


def fmt_freq_interval(value_hz, interval=None, *, default_digits: int = 6) -> str:
    """A frequency with its interval in the same unit: ``7.041 MHz (7.032 to 7.050)``.

    Without an interval the value has ``default_digits`` significant digits."""
    if value_hz is None or not math.isfinite(float(value_hz)):
        return "n/a"
    scale, unit = freq_unit(value_hz)
    v = float(value_hz) / scale
    step = step_for(*interval) if interval else None
    if step is None:
        return f"{v:.{default_digits}g} {unit}"
    d = _decimals(step / scale)
    lo, hi = (float(x) / scale for x in interval)
    return f"{v:.{d}f} {unit} ({lo:.{d}f} to {hi:.{d}f})"


def signed_fixed(v: float, d: int) -> str:
    """``+1.2``, ``-0.4``; a value that rounds to zero prints as ``0.0``, never ``-0.0`` or ``+0.0``."""
    text = f"{v:+.{d}f}"
    return text[1:] if float(text) == 0 else text


def fmt_shift_interval(value_hz, interval=None) -> str:
    """A signed frequency change in kHz with its interval: ``-400 kHz (-412 to -388)``."""
    if value_hz is None or not math.isfinite(float(value_hz)):
        return "n/a"
    v = float(value_hz) / 1e3
    step = step_for(*interval) if interval else None
    if step is None:
        return f"{signed_fixed(v, 1)} kHz"
    d = _decimals(step / 1e3)
    lo, hi = (float(x) / 1e3 for x in interval)
    return f"{signed_fixed(v, d)} kHz ({signed_fixed(lo, d)} to {signed_fixed(hi, d)})"


__all__ = ["fmt_freq_interval", "fmt_number", "fmt_shift_interval", "freq_unit", "step_for"]
