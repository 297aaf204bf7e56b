"""What the history store keeps of one corrected sweep: the numbers a trend is drawn from.

:func:`sweep_values` turns a correction, its summary and (for a later sweep) its comparison against
the baseline into :class:`deembed.io.history.Value` rows:

- ``resonance_hz``: the feedpoint resonance nearest the lowest SWR, placed by the quadratic fit of
  X(f) that ``compare`` uses (:func:`deembed.analysis.compare.fitted_resonance`), so noise moves it
  least; ``resonances_hz`` (idx 0, 1, ...): every resonance the findings list.
- ``min_swr`` and ``min_swr_freq_hz``: the feedpoint's lowest SWR and where.
- ``swr_span_<k>_low_hz`` / ``swr_span_<k>_high_hz`` (idx per span): the SWR span edges, k = "1.5",
  "2", "3".
- ``q`` and ``q_from_span``.
- ``line_loss_db`` (with ``line_loss_freq_hz``): the line's one-way matched loss at the band centre
  (the middle of the sweep). For a sweep on its own, or through a fresh line file, it is that line's
  loss there. For a later sweep compared through the *same* line description as its baseline it is
  the description's loss plus the change fitted against the baseline
  (:func:`deembed.analysis.compare.fit_line_change`): that is what shows water creeping into the run.
  When the comparison says the antenna changed (so the fit does not describe a line change) no line
  loss is recorded for that sweep.
- for a comparison: ``resonance_shift_hz``, ``min_swr_change``, ``max_gamma_change`` (feedpoint).

Intervals: where the findings carry an uncertainty interval for a value (``<key>_interval`` beside
it, ``[low, high]``), it is recorded as ``low``/``high``.
"""
from __future__ import annotations

import math

import numpy as np

from ..physics.line import DB_PER_NP
from .compare import fitted_resonance
from ..io.history import Value


def _num(x):
    if x is None:
        return None
    try:
        x = float(x)
    except (TypeError, ValueError):
        return None
    return x if math.isfinite(x) else None


def _interval(block: dict, key: str):
    """``(low, high)`` recorded beside ``key`` in ``block``, or (None, None)."""
    iv = block.get(f"{key}_interval")
    if iv is None and isinstance(block.get("intervals"), dict):
        iv = block["intervals"].get(key)
    if isinstance(iv, dict):
        iv = [iv.get("low"), iv.get("high")]
    if isinstance(iv, (list, tuple)) and len(iv) == 2:
        return _num(iv[0]), _num(iv[1])
    return None, None


def _v(quantity, value, unit, method="", idx=0, block=None, key=None):
    lo, hi = _interval(block, key) if block is not None and key else (None, None)
    return Value(quantity, _num(value), lo, hi, unit, method, idx)


def band_centre_hz(corr) -> float:
    f = np.asarray(corr.freq_hz, float)
    return float(0.5 * (f[0] + f[-1]))


def line_loss_at_centre(corr) -> tuple[float, float]:
    """(centre frequency, the line's one-way matched loss there), from the correction's own loss."""
    fc = band_centre_hz(corr)
    return fc, float(np.interp(fc, np.asarray(corr.freq_hz, float), np.asarray(corr.matched_loss_db, float)))


def sweep_values(corr, summary: dict, comparison: dict | None = None) -> tuple:
    """The values to record for one corrected sweep (see the module notes)."""

    fp = summary["feedpoint"]
    out = []
    near = (fp.get("min_swr") or {}).get("freq_hz")
    res = None
    if near is not None:
        res = fitted_resonance(corr.freq_hz, corr.gamma_feedpoint, near)
    out.append(_v("resonance_hz", res, "Hz", "quadratic fit of X(f) near the lowest SWR", block=fp,
                  key="resonance_hz"))
    for i, r in enumerate(fp.get("resonances_hz") or []):
        out.append(_v("resonances_hz", r, "Hz", "findings", idx=i))
    ms = fp.get("min_swr") or {}
    out.append(_v("min_swr", ms.get("swr"), "", "findings", block=ms, key="swr"))
    out.append(_v("min_swr_freq_hz", ms.get("freq_hz"), "Hz", "findings", block=ms, key="freq_hz"))
    spans = fp.get("swr_spans_hz", fp.get("swr_spans_hz")) or {}
    for k, lst in spans.items():
        for i, (lo, hi) in enumerate(lst):
            out.append(_v(f"swr_span_{k}_low_hz", lo, "Hz", "findings", idx=i))
            out.append(_v(f"swr_span_{k}_high_hz", hi, "Hz", "findings", idx=i))
    out.append(_v("q", fp.get("q"), "", "from the impedance (Yaghjian-Best)", block=fp, key="q"))
    q_span = fp.get("q_from_span", fp.get("q_from_span"))
    out.append(_v("q_from_span", q_span, "", "from the 2:1 span", block=fp,
                  key="q_from_span" if "q_from_span" in fp else "q_from_span"))

    fc, loss = line_loss_at_centre(corr)
    method = "the line's description at the band centre"
    if comparison is not None:
        ln = comparison.get("line") or {}
        if ln.get("same_line"):
            fit = ln.get("fitted_change") or {}
            code = (comparison.get("cause") or {}).get("code")
            c = fit.get("c_np_per_sqrt_hz")
            if code in ("line", "unchanged") and c is not None:
                loss = loss + DB_PER_NP * float(c) * math.sqrt(fc)
                method = "the line's description plus the change fitted against the baseline, at the band centre"
            else:
                loss = None  # the antenna changed too: the fit says nothing about the line alone
        else:
            method = "the fresh line file at the band centre"
        out.append(_v("resonance_shift_hz", comparison.get("resonance_shift_hz"), "Hz", "against the baseline",
                      block=comparison, key="resonance_shift_hz"))
        out.append(_v("min_swr_change", comparison.get("min_swr_change"), "", "against the baseline",
                      block=comparison, key="min_swr_change"))
        out.append(_v("max_gamma_change", comparison.get("largest_gamma_change_feedpoint"), "",
                      "against the baseline", block=comparison, key="largest_gamma_change_feedpoint"))
    if loss is not None:
        out.append(_v("line_loss_db", loss, "dB", method, block=summary.get("line") or {}, key="loss_at_centre_db"))
        out.append(_v("line_loss_freq_hz", fc, "Hz", "middle of the sweep"))
    return tuple(v for v in out if v.value is not None)


def verdict_of(comparison: dict | None):
    """(verdict status, cause code, cause text) of a comparison, or three None."""
    if comparison is None:
        return None, None, None
    verdict = (comparison.get("verdict") or {}).get("status")
    d = comparison.get("cause") or {}
    return verdict, d.get("code"), d.get("text")


__all__ = ["band_centre_hz", "line_loss_at_centre", "sweep_values", "verdict_of"]
