"""From a correction to what a technician reads: the per-frequency table, the summary and warnings.

Pure functions of arrays and small dicts; nothing here writes files or plots.
"""
from __future__ import annotations

import numpy as np

from ..physics import rf
from ..base.units import fmt_freq
from .between import between_error, between_points, between_warnings, has_characterized_part
from .findings import end_findings

TWO_WAY_LOSS_WARN_DB = 10.0
"""Two-way matched loss above which the correction amplifies measurement error too much to trust.

Through a line of one-way matched loss ML, an error dG in the measured reflection becomes about
dG * 10^(ML/10) at the feedpoint (from Gamma_in = Gamma_L * exp(-2 gamma l)); at 10 dB two-way the
factor is 3.2, so a typical analyzer's 0.01-0.02 uncertainty becomes 0.03-0.06 in |Gamma|.
The threshold is our choice (common practice, no source).
"""


def end_columns(gamma) -> dict:
    """Per-frequency columns for one end: Gamma, |Gamma|, SWR, return loss, R, X (50 ohm)."""
    g = np.asarray(gamma, dtype=complex)
    z = rf.z_from_gamma(g)
    return {
        "gamma_re": g.real,
        "gamma_im": g.imag,
        "gamma_mag": np.abs(g),
        "swr": rf.swr(g),
        "return_loss_db": rf.return_loss_db(g),
        "r_ohm": z.real,
        "x_ohm": z.imag,
    }


def table_columns(corr, budget: dict | None = None, swr_band=None) -> dict:
    """All columns of the per-frequency table, in order (a dict of equal-length arrays).

    ``swr_band`` (low, high) adds the feedpoint SWR's coverage interval at each frequency
    (``feedpoint_swr_low``, ``feedpoint_swr_high``)."""
    cols = {"freq_hz": corr.freq_hz}
    for end, g in (("analyzer", corr.gamma_analyzer), ("feedpoint", corr.gamma_feedpoint)):
        cols.update({f"{end}_{k}": v for k, v in end_columns(g).items()})
        if end == "feedpoint" and swr_band is not None:
            cols["feedpoint_swr_low"], cols["feedpoint_swr_high"] = swr_band
    cols["line_matched_loss_db"] = corr.matched_loss_db
    if has_characterized_part(corr.line):  # estimated |dGamma| from evaluating the line between its points
        cols["feedpoint_between_points_error"] = between_error(corr.line, corr.freq_hz, corr.gamma_feedpoint)
    if budget:
        cols.update(budget)
    return cols


def ranges_text(freq_hz, mask, limit: int = 4) -> str:
    """'13.9-14.1 MHz, 21.2 MHz' for the runs where mask is true."""
    idx = np.flatnonzero(mask)
    if idx.size == 0:
        return ""
    breaks = np.flatnonzero(np.diff(idx) > 1)
    starts = np.concatenate(([idx[0]], idx[breaks + 1]))
    ends = np.concatenate((idx[breaks], [idx[-1]]))
    parts = []
    for a, b in list(zip(starts, ends))[:limit]:
        parts.append(fmt_freq(freq_hz[a]) if a == b else f"{fmt_freq(freq_hz[a])} to {fmt_freq(freq_hz[b])}")
    more = len(starts) - limit
    return ", ".join(parts) + (f" and {more} more range(s)" if more > 0 else "")


def warnings_for(corr) -> list[str]:
    """Plain-language warnings about a correction, each saying at which frequencies."""
    out = []
    f = corr.freq_hz
    g_in = np.abs(corr.gamma_analyzer)
    bad_in = g_in > 1
    if bad_in.any():
        out.append(f"the sweep itself shows |Gamma| above 1 at {int(bad_in.sum())} of {f.size} points "
                   f"({ranges_text(f, bad_in)}): check the analyzer's calibration and reference plane")
    bad = ~(np.abs(corr.gamma_feedpoint) <= 1 + 1e-9)
    if bad.any():
        out.append(f"the corrected feedpoint |Gamma| comes out above 1 at {int(bad.sum())} of {f.size} points "
                   f"({ranges_text(f, bad)}): the line description (loss, length, velocity factor) or the sweep "
                   "is wrong there")
    two_way = 2 * np.asarray(corr.matched_loss_db)
    hot = two_way > TWO_WAY_LOSS_WARN_DB
    if hot.any():
        worst = float(np.max(two_way))
        out.append(f"two-way line loss exceeds {TWO_WAY_LOSS_WARN_DB:g} dB ({ranges_text(f, hot)}; up to {worst:.1f} dB): "
                   f"small measurement errors grow about {10 ** (worst / 20):.1f}x at the feedpoint there, so treat "
                   "those corrected values as rough")
    if f.size < 3:
        out.append("the sweep has fewer than 3 points: it is corrected, but resonance, bandwidth and Q need a sweep")
    return out


def line_summary(line, freq_hz) -> dict:
    """Description, matched loss and electrical length of the line at the sweep's edges."""
    f = np.asarray(freq_hz, dtype=float)
    edges = np.array([f[0], f[-1]])
    ml = np.asarray(line.matched_loss_db(f), dtype=float)
    out = {
        "description": line.describe(),
        "low_hz": float(edges[0]),
        "high_hz": float(edges[1]),
        "matched_loss_db": {"at_low": float(ml[0]), "at_high": float(ml[-1])},
    }
    delay = getattr(line, "delay_s", None)
    if delay is not None:
        out["delay_ns"] = float(delay * 1e9)
        out["electrical_length_deg"] = {"at_low": float(360 * edges[0] * delay),
                                        "at_high": float(360 * edges[1] * delay)}
    else:  # measured 2-port: read the electrical length off the unwrapped transmission phase
        s21 = line.s_params(f)[:, 1, 0]
        ph = -np.degrees(np.unwrap(np.angle(s21)))
        out["electrical_length_deg"] = {"at_low": float(ph[0]), "at_high": float(ph[-1])}
    return out


def summarise(corr, *, thresholds=(1.5, 2.0, 3.0), notes=(), sweep_info: dict | None = None,
              assessment=None) -> dict:
    """The summary of a correction: both ends' findings (with their uncertainty), the line, warnings (JSON-ready).

    ``assessment`` is :func:`deembed.analysis.trust.assess` of the correction (made here, without the
    Monte Carlo step, when not given)."""
    from .trust import assess, sources_record, uncertainty_blocks

    a = assessment or assess(corr.freq_hz, corr.gamma_analyzer, corr.gamma_feedpoint, corr.line,
                             thresholds=thresholds, settings=None)
    summary = {
        "sweep": {"file": corr.source, "points": int(corr.freq_hz.size),
                  "low_hz": float(corr.freq_hz[0]), "high_hz": float(corr.freq_hz[-1]),
                  "noise_gamma_rms": float(a.noise_rms)},
        "line": line_summary(corr.line, corr.freq_hz),
        "feedpoint": end_findings(corr.freq_hz, corr.gamma_feedpoint, thresholds=thresholds, events=a.events_fp),
        "analyzer": end_findings(corr.freq_hz, corr.gamma_analyzer, thresholds=thresholds, events=a.events_an),
        "warnings": list(notes) + warnings_for(corr) + list(a.notes),
    }
    bp = between_points(corr.line, corr.freq_hz, corr.gamma_feedpoint)
    if bp is not None:
        summary["line"]["between_points"] = bp
        summary["warnings"].extend(between_warnings(bp))
    blocks = uncertainty_blocks(a, corr.line, sources_record(a, corr.line)) if a.mc is not None else {}
    summary["feedpoint"]["uncertainty"] = blocks.get("feedpoint")
    summary["analyzer"]["uncertainty"] = blocks.get("analyzer")
    if sweep_info:
        summary["sweep"].update(sweep_info)
    return summary
