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
- for a comparison: ``resonance_shift_hz``, ``min_swr_change``, ``largest_gamma_change`` (feedpoint).

Intervals: where the findings carry an uncertainty interval (the end's ``uncertainty`` block from the
Monte Carlo step: ``resonance_hz``, ``resonances_hz``, ``min_swr``, ``min_swr_freq_hz``, ``swr_spans_hz``,
``q``; a comparison's ``resonance_shift_interval_hz`` and ``min_swr_change_interval``) it is recorded as
``low``/``high``, re-scaled to 95 % coverage (normal errors assumed) when it was made for another, so every
stored interval means the same. The line's loss carries no interval yet.
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


Z95 = 1.959963984540054


def _pair(iv):
    if isinstance(iv, dict):
        iv = [iv.get("low"), iv.get("high")]
    if isinstance(iv, (list, tuple)) and len(iv) == 2:
        lo, hi = _num(iv[0]), _num(iv[1])
        if lo is not None and hi is not None:
            return lo, hi
    return None, None


def _as_95(value, lo, hi, coverage):
    """An interval of another coverage re-scaled to 95 % about the value (normal errors assumed), so that
    every stored interval means the same."""
    if lo is None or value is None or coverage is None or abs(coverage - 0.95) < 1e-9:
        return lo, hi
    from scipy import stats

    k = Z95 / float(stats.norm.ppf(0.5 + coverage / 2))
    return value - (value - lo) * k, value + (hi - value) * k


def _v(quantity, value, unit, method="", idx=0, iv=None, coverage=None):
    lo, hi = _pair(iv)
    value = _num(value)
    lo, hi = _as_95(value, lo, hi, coverage)
    return Value(quantity, value, lo, hi, unit, method, idx)


def _u(block: dict | None, *path):
    """``block[path[0]][path[1]]...`` or None (the findings' ``uncertainty`` block, where present)."""
    cur = block
    for k in path:
        if isinstance(cur, dict):
            cur = cur.get(k)
        elif isinstance(cur, list) and isinstance(k, int) and 0 <= k < len(cur):
            cur = cur[k]
        else:
            return None
    return cur


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
    u = fp.get("uncertainty") or {}
    cov = u.get("coverage")
    out = []
    res, how = _num(fp.get("resonance_hz")), "findings (the resonance nearest the lowest SWR)"
    near = (fp.get("min_swr") or {}).get("freq_hz")
    if res is None and near is not None:
        res = fitted_resonance(corr.freq_hz, corr.gamma_feedpoint, near)
        how = "quadratic fit of X(f) near the lowest SWR"
    out.append(_v("resonance_hz", res, "Hz", how, iv=u.get("resonance_hz"), coverage=cov))
    for i, r in enumerate(fp.get("resonances_hz") or []):
        out.append(_v("resonances_hz", r, "Hz", "findings", idx=i, iv=_u(u, "resonances_hz", i), coverage=cov))
    ms = fp.get("min_swr") or {}
    out.append(_v("min_swr", ms.get("swr"), "", "findings", iv=u.get("min_swr"), coverage=cov))
    out.append(_v("min_swr_freq_hz", ms.get("freq_hz"), "Hz", "findings", iv=u.get("min_swr_freq_hz"),
                  coverage=cov))
    for k, lst in (fp.get("swr_spans_hz") or {}).items():
        for i, (lo, hi) in enumerate(lst):
            out.append(_v(f"swr_span_{k}_low_hz", lo, "Hz", "findings", idx=i,
                          iv=_u(u, "swr_spans_hz", k, i, 0), coverage=cov))
            out.append(_v(f"swr_span_{k}_high_hz", hi, "Hz", "findings", idx=i,
                          iv=_u(u, "swr_spans_hz", k, i, 1), coverage=cov))
    out.append(_v("q", fp.get("q"), "", "from the impedance (Yaghjian-Best)", iv=u.get("q"), coverage=cov))
    out.append(_v("q_from_span", fp.get("q_from_span"), "", "from the 2:1 span", iv=u.get("q_from_span"),
                  coverage=cov))

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
        ccov = _u(comparison, "uncertainty", "coverage")
        out.append(_v("resonance_shift_hz", comparison.get("resonance_shift_hz"), "Hz", "against the baseline",
                      iv=comparison.get("resonance_shift_interval_hz"), coverage=ccov))
        out.append(_v("min_swr_change", comparison.get("min_swr_change"), "", "against the baseline",
                      iv=comparison.get("min_swr_change_interval"), coverage=ccov))
        out.append(_v("largest_gamma_change", comparison.get("largest_gamma_change_feedpoint"), "",
                      "against the baseline"))
    if loss is not None:
        out.append(_v("line_loss_db", loss, "dB", method))
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
