"""From a correction to what a technician reads: the per-frequency table, the summary and warnings.

Pure functions of arrays and small dicts; nothing here writes files or plots.
"""
from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, replace

import numpy as np

from ..base.errors import InputFileError
from ..base.results import Result
from ..base.units import fmt_freq, fmt_span
from ..physics import rf
from ..physics.budget import MAX_MATCHED_LOSS_DB, matched_loss_refusal, power_budget
from .between import between_error, between_points, between_warnings, has_characterized_part
from .findings import end_findings
from .magnitude import magnitude_findings
from .smooth import noise_rms
from .trust import assess, sources_record, uncertainty_blocks

TWO_WAY_LOSS_WARN_DB = 10.0
"""Two-way matched loss above which the correction amplifies measurement error too much to trust.

Through a line of one-way matched loss ML, an error dG in the measured reflection becomes about
dG * 10^(ML/10) at the feedpoint (from Gamma_in = Gamma_L * exp(-2 gamma l)); at 10 dB two-way the
factor is 3.2, so a typical analyzer's 0.01-0.02 uncertainty becomes 0.03-0.06 in |Gamma|.
The threshold is our choice (common practice, no source).
"""


def end_columns(gamma) -> dict:
    """Per-frequency columns for one end: Gamma, |Gamma|, SWR, return loss, R, X (50 ohm)."""
    return rf.reflection_columns(gamma)


END_COLUMN_NAMES = ("gamma_re", "gamma_im", "gamma_mag", "swr", "return_loss_db", "r_ohm", "x_ohm")


class Table(Mapping):
    """The per-frequency table of a correction: a read-only mapping of column name to array, in order.

    Columns are worked out when they are asked for, whole (``table[name]``) or for a block of rows at a time
    (:meth:`rows`), so a large sweep's table never has to be held whole: all of it would take 8 bytes per
    point per column. ``dict(table)`` gives the plain dict of arrays.
    """

    float_columns = True  # every column is a float array (the CSV writer relies on it)

    def __init__(self, corr, budget: dict | None = None, swr_band=None):
        self._corr = corr
        self._budget = dict(budget or {})
        self._fixed = {}
        names = ["freq_hz"] + [f"{end}_{k}" for end in ("analyzer", "feedpoint") for k in END_COLUMN_NAMES]
        if swr_band is not None:  # the feedpoint SWR's coverage interval at each frequency
            self._fixed["feedpoint_swr_low"], self._fixed["feedpoint_swr_high"] = swr_band
            names += ["feedpoint_swr_low", "feedpoint_swr_high"]
        names.append("line_matched_loss_db")
        if has_characterized_part(corr.line):  # estimated |dGamma| from evaluating the line between its points
            self._fixed["feedpoint_between_points_error"] = between_error(corr.line, corr.freq_hz,
                                                                          corr.gamma_feedpoint)
            names.append("feedpoint_between_points_error")
        names += list(self._budget)
        self._names = tuple(names)

    def __len__(self) -> int:
        return len(self._names)

    def __iter__(self):
        return iter(self._names)

    def __contains__(self, name) -> bool:
        return name in self._names

    @property
    def n_rows(self) -> int:
        return int(self._corr.freq_hz.shape[0])

    def __getitem__(self, name):
        if name not in self._names:
            raise KeyError(name)
        return self.rows(0, self.n_rows, (name,))[name]

    def rows(self, start: int, stop: int, names=None) -> dict:
        """The columns ``names`` (default: all, in order) for rows ``start:stop``."""
        want = self._names if names is None else tuple(names)
        c = self._corr
        sl = slice(start, stop)
        out = {}
        ends = {}
        for name in want:
            if name == "freq_hz":
                out[name] = c.freq_hz[sl]
            elif name == "line_matched_loss_db":
                out[name] = c.matched_loss_db[sl]
            elif name in self._fixed:
                out[name] = self._fixed[name][sl]
            elif name in self._budget:
                out[name] = np.asarray(self._budget[name])[sl]
            else:
                end, key = name.split("_", 1)
                if end not in ends:
                    g = c.gamma_analyzer if end == "analyzer" else c.gamma_feedpoint
                    ends[end] = end_columns(g[sl])
                out[name] = ends[end][key]
        return out


def table_columns(corr, budget: dict | None = None, swr_band=None) -> Table:
    """All columns of the per-frequency table, in order (a :class:`Table`: a mapping of equal-length arrays
    worked out on demand).

    ``swr_band`` (low, high) adds the feedpoint SWR's coverage interval at each frequency
    (``feedpoint_swr_low``, ``feedpoint_swr_high``)."""
    return Table(corr, budget, swr_band)


def sweep_step(freq_hz) -> float | None:
    """The sweep's step (the median spacing of its points), the resolution its frequencies are printed to;
    None for a single point."""
    f = np.asarray(freq_hz, dtype=float)
    if f.size < 2:
        return None
    step = float(np.median(np.diff(f)))
    return step if np.isfinite(step) and step > 0 else None


def ranges_text(freq_hz, mask, limit: int = 4) -> str:
    """'20.900 to 21.150 MHz, 21.300 MHz' for the runs where mask is true, printed to the sweep's step
    (:func:`deembed.base.units.fmt_span`: a run's edges are never the same text)."""
    idx = np.flatnonzero(mask)
    if idx.size == 0:
        return ""
    step = sweep_step(freq_hz)
    breaks = np.flatnonzero(np.diff(idx) > 1)
    starts = np.concatenate(([idx[0]], idx[breaks + 1]))
    ends = np.concatenate((idx[breaks], [idx[-1]]))
    parts = []
    for a, b in list(zip(starts, ends))[:limit]:
        fa, fb = float(freq_hz[a]), float(freq_hz[b])
        parts.append(fmt_freq(fa, resolution_hz=step) if a == b else fmt_span(fa, fb, step))
    more = len(starts) - limit
    return ", ".join(parts) + (f" and {more} more range(s)" if more > 0 else "")


def error_growth_text(two_way_db: float) -> str:
    """How much a small measurement error grows through a line of ``two_way_db`` two-way matched loss,
    ``'3.2x'`` (``%.2g``): the factor 10^(dB/20), worked out from the dB figure, which
    :data:`deembed.physics.budget.MAX_MATCHED_LOSS_DB` keeps far inside floating point (no overflow)."""
    return f"{10.0 ** (min(float(two_way_db), 2 * MAX_MATCHED_LOSS_DB) / 20.0):.2g}x"


def loss_warning(freq_hz, matched_loss_db) -> list[str]:
    """The warning for a two-way line loss above :data:`TWO_WAY_LOSS_WARN_DB` (none below it)."""
    two_way = 2 * np.asarray(matched_loss_db, dtype=float)
    hot = two_way > TWO_WAY_LOSS_WARN_DB
    if not hot.any():
        return []
    worst = float(np.nanmax(np.where(hot, two_way, np.nan)))
    return [f"two-way line loss exceeds {TWO_WAY_LOSS_WARN_DB:g} dB ({ranges_text(freq_hz, hot)}; up to {worst:.1f} "
            f"dB): small measurement errors grow about {error_growth_text(worst)} at the feedpoint there, so treat "
            "those corrected values as rough"]


def refuse_absurd_loss(corr) -> None:
    """Refuse a correction through a line whose matched loss, at the sweep's frequencies, is above
    :data:`~deembed.physics.budget.MAX_MATCHED_LOSS_DB` (the bound and message of every matched loss): most
    often the sweep's frequencies are in another unit than the one given (Hz read as MHz), or the length
    or loss has a typing mistake. Raises :class:`InputFileError` naming the sweep."""
    ml = np.asarray(corr.matched_loss_db, dtype=float)
    over = ml > MAX_MATCHED_LOSS_DB
    if over.any():
        k = int(np.argmax(np.where(over, ml, -np.inf)))
        raise InputFileError(corr.source, "through the line given, "
                             + matched_loss_refusal(float(ml[k]), float(corr.freq_hz[k])))


SWR_NOT_PLOTTED = 1e6
"""SWR above which a point is left out of the SWR plots (the trace breaks there; see
:data:`PLOT_BOUNDS`): the figure says nothing there (|Gamma| within 2e-6 of 1)."""

PLOT_BOUNDS = {"gamma": 3.0, "swr": SWR_NOT_PLOTTED, "db": 1e3, "ohm": 1e9}
"""Values beyond these are left out of the plots (:mod:`deembed.render.plots`; the trace breaks there) instead
of being drawn: the Smith chart shows |Gamma| <= 1.08, the other axes far less than these, and coordinates near
the float range (a sweep value of 1e200) make the rasterizer's clipping run for minutes. The summary warns
where points are left out (:func:`unplotted_warnings`)."""


def unplotted_warnings(freq_hz, ends) -> list[str]:
    """One warning per end whose SWR is above :data:`SWR_NOT_PLOTTED` somewhere while |Gamma| is not above 1
    (points above 1 have their own warning, which says they are not drawn): how many points, and where.
    ``ends`` is ``{"analyzer": |Gamma| or Gamma, "feedpoint": ...}``."""
    out = []
    f = np.asarray(freq_hz, dtype=float)
    for end, g in ends.items():
        m = np.abs(np.asarray(g))
        off = (m <= 1 + 1e-9) & ~(rf.swr(m) <= SWR_NOT_PLOTTED)
        if off.any():
            at = "the analyzer" if end == "analyzer" else "the feedpoint"
            out.append(f"the SWR at {at} is above {SWR_NOT_PLOTTED:.0f}:1 (|Gamma| within 2e-6 of 1) at "
                       f"{int(off.sum())} of {f.size} points ({ranges_text(f, off)}): those points are left out of "
                       "the SWR plot")
    return out


OUTLIER_MIN = 0.1
"""Least distance in |Gamma| (or in Gamma) of a sample from the straight line through its two neighbours for it to
be called far off them (:func:`outlier_points`). Our choice, common practice, no source: ten times the
calibration error of an inexpensive analyzer."""


def outlier_points(freq_hz, values, noise: float = 0.0) -> np.ndarray:
    """Indices of samples that lie far off their neighbours (a glitch of the analyzer, a mistyped line).

    A sample k is one when its distance d_k from the straight line through its two neighbours (the
    Gasser-Sroka-Jennen-Steinmetz pseudo-residual before scaling, :func:`deembed.analysis.smooth.pseudo_residuals`)
    is at least :data:`OUTLIER_MIN` and 10 times the noise, at least three times the distance between the two
    neighbours themselves (they agree with each other far better than with it: a trace that really turns
    fast moves its neighbours apart too), and at least 1.5 times the neighbours' own distances (an isolated
    point: in a trace sampled too coarsely every point is off its neighbours, and none stands out). The first
    and last samples have one neighbour and are not judged. ``values`` may be complex (Gamma) or real (|Gamma|).
    """
    f = np.asarray(freq_hz, dtype=float)
    v = np.asarray(values)
    if f.size < 3:
        return np.zeros(0, dtype=int)
    span = f[2:] - f[:-2]
    a = (f[2:] - f[1:-1]) / span
    b = (f[1:-1] - f[:-2]) / span
    with np.errstate(invalid="ignore", over="ignore"):
        d = np.abs(a * v[:-2] + b * v[2:] - v[1:-1])
        spread = np.abs(v[2:] - v[:-2])
        d_pad = np.concatenate(([0.0], d, [0.0]))
        neighbours = np.maximum(d_pad[:-2], d_pad[2:])
        off = (d >= max(OUTLIER_MIN, 10 * noise)) & (d >= 3 * spread) & (d >= 1.5 * neighbours)
    return np.flatnonzero(off) + 1


def outlier_warnings(freq_hz, values, what: str = "|Gamma|", noise: float = 0.0) -> list[str]:
    """The warning for samples far off their neighbours (:func:`outlier_points`), with where and how far."""
    idx = outlier_points(freq_hz, values, noise)
    if idx.size == 0:
        return []
    f = np.asarray(freq_hz, dtype=float)
    v = np.abs(np.asarray(values))
    if idx.size == 1:
        k = int(idx[0])
        return [f"1 of {f.size} points of the sweep lies far off its neighbours ({fmt_freq(f[k], resolution_hz=sweep_step(f))}: "
                f"{what} {v[k]:.3g} against {v[k - 1]:.3g} and {v[k + 1]:.3g} beside it), like a glitch of the "
                "analyzer: findings near it (the lowest SWR, a resonance, a span edge) may be pulled by it; sweep "
                "again, or remove the point"]
    mask = np.zeros(f.size, dtype=bool)
    mask[idx] = True
    return [f"{idx.size} of {f.size} points of the sweep lie far off their neighbours ({ranges_text(f, mask)}), "
            "like glitches of the analyzer: findings near them (the lowest SWR, a resonance, a span edge) may be "
            "pulled by them; sweep again, or remove those points"]


def warnings_for(corr) -> list[str]:
    """Plain-language warnings about a correction, each saying at which frequencies."""
    out = []
    f = corr.freq_hz
    out += outlier_warnings(f, corr.gamma_analyzer, "|Gamma|", noise_rms(f, corr.gamma_analyzer))
    g_in = np.abs(corr.gamma_analyzer)
    bad_in = g_in > 1
    if bad_in.any():
        out.append(f"the sweep itself shows |Gamma| above 1 at {int(bad_in.sum())} of {f.size} points "
                   f"({ranges_text(f, bad_in)}): check the analyzer's calibration and reference plane; those points "
                   "are left out of the SWR plot")
    bad = ~(np.abs(corr.gamma_feedpoint) <= 1 + 1e-9)
    if bad.any():
        out.append(f"the corrected feedpoint |Gamma| comes out above 1 at {int(bad.sum())} of {f.size} points "
                   f"({ranges_text(f, bad)}): the line description (loss, length, velocity factor) or the sweep "
                   "is wrong there; those points are left out of the SWR plot")
    out += loss_warning(f, corr.matched_loss_db)
    out += unplotted_warnings(f, {"analyzer": corr.gamma_analyzer, "feedpoint": corr.gamma_feedpoint})
    if f.size < 3:
        out.append("the sweep has fewer than 3 points: it is corrected, but resonance, bandwidth and Q need a sweep")
    return out


def line_summary(line, freq_hz) -> dict:
    """Description, matched loss and electrical length of the line at the sweep's edges."""
    f = np.asarray(freq_hz, dtype=float)
    edges = np.array([f[0], f[-1]])
    # a modelled line is evaluated at the two edges only; a measured one only exists on its own grid
    ml = np.asarray(line.matched_loss_db(edges if getattr(line, "blockwise", False) else f), dtype=float)
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


@dataclass(frozen=True)
class CorrectionSummary(Result):
    """The summary of a correction: correct's ``NAME.summary.json`` (``summary.schema.json``), key for key.

    Made by :func:`summarise` (a sweep with phase: ``feedpoint`` and ``analyzer`` are
    :class:`~deembed.analysis.findings.EndFindings`, with their ``uncertainty``) or :func:`magnitude_summary`
    (SWR or return loss alone: the ends are :func:`deembed.analysis.magnitude.magnitude_findings` dicts, and
    ``sweep.phase`` is false). ``sweep`` and ``line`` are plain JSON data; ``line.between_points`` is there
    only for a characterized line. The OPTIONAL fields are set by :mod:`deembed.jobs.correct` with
    :func:`dataclasses.replace`: ``along_the_line`` (a sweep with phase), ``power`` (``--power``), ``bands``
    (``--bands``), ``outputs`` (the files written, once they are).
    """

    sweep: dict
    line: dict
    feedpoint: Mapping
    analyzer: Mapping
    warnings: list
    along_the_line: dict | None = None
    power: dict | None = None
    bands: dict | None = None
    outputs: dict | None = None

    OPTIONAL = ("along_the_line", "power", "bands", "outputs")

    def warned(self, *more: str) -> "CorrectionSummary":
        """This summary with ``more`` warnings after its own."""
        return replace(self, warnings=[*self.warnings, *more]) if more else self


def summarise(corr, *, thresholds=(1.5, 2.0, 3.0), notes=(), sweep_info: dict | None = None,
              assessment=None) -> CorrectionSummary:
    """The summary of a correction: both ends' findings (with their uncertainty), the line, warnings.

    ``assessment`` is :func:`deembed.analysis.trust.assess` of the correction (made here, without the
    Monte Carlo step, when not given). A line whose matched loss is beyond any feed line's is refused
    (:func:`refuse_absurd_loss`)."""
    refuse_absurd_loss(corr)
    a = assessment or assess(corr.freq_hz, corr.gamma_analyzer, corr.gamma_feedpoint, corr.line,
                             thresholds=thresholds, settings=None)
    sweep = {"file": corr.source, "points": int(corr.freq_hz.size),
             "low_hz": float(corr.freq_hz[0]), "high_hz": float(corr.freq_hz[-1]),
             "noise_gamma_rms": float(a.noise_rms), **(sweep_info or {})}
    line = line_summary(corr.line, corr.freq_hz)
    warnings = list(notes) + warnings_for(corr) + list(a.notes)
    bp = between_points(corr.line, corr.freq_hz, corr.gamma_feedpoint)
    if bp is not None:
        line["between_points"] = bp
        warnings += between_warnings(bp)
    blocks = uncertainty_blocks(a, corr.line, sources_record(a, corr.line)) if a.mc is not None else {}
    fp = end_findings(corr.freq_hz, corr.gamma_feedpoint, thresholds=thresholds, events=a.events_fp)
    an = end_findings(corr.freq_hz, corr.gamma_analyzer, thresholds=thresholds, events=a.events_an)
    return CorrectionSummary(sweep=sweep, line=line,
                             feedpoint=replace(fp, uncertainty=blocks.get("feedpoint")),
                             analyzer=replace(an, uncertainty=blocks.get("analyzer")),
                             warnings=warnings)


def power_summary(power_w: float, freq_hz, matched_loss_db, gamma_feedpoint) -> dict:
    """The power budget at the feedpoint's best-matched frequency (least |Gamma|), for the summary's ``power``:
    ``at_freq_hz`` and the blocks of ``deembed budget --json`` in the same words (``at_antenna``,
    ``at_transmitter``, ``line``, ``matched_at_transmitter``; the transmitter's power is
    ``at_transmitter.forward_w``). ``gamma_feedpoint`` may be the reflection or its size alone."""
    g = np.abs(np.asarray(gamma_feedpoint))
    i = int(np.nanargmin(g))
    b = power_budget(float(power_w), float(np.asarray(matched_loss_db, dtype=float)[i]), float(g[i]))
    return {"at_freq_hz": float(np.asarray(freq_hz, dtype=float)[i]), **b.to_dict()}


# ------------------------------------------------------------------------------- sweeps without phase

def magnitude_table(corr, budget: dict | None = None) -> dict:
    """Per-frequency columns of a magnitude-only correction: |Gamma|, SWR and return loss at both ends, the
    feedpoint's bound (``_low``/``_high``), the line's matched loss; the budget with a power."""
    lo, hi = corr.gamma_feedpoint_mag_low, corr.gamma_feedpoint_mag_high
    cols = {"freq_hz": corr.freq_hz}
    for end, m in (("analyzer", corr.gamma_analyzer_mag), ("feedpoint", corr.gamma_feedpoint_mag)):
        cols[f"{end}_gamma_mag"] = m
        cols[f"{end}_swr"] = rf.swr(m)
        cols[f"{end}_return_loss_db"] = rf.return_loss_db(m)
    cols["feedpoint_gamma_mag_low"] = lo
    cols["feedpoint_gamma_mag_high"] = hi
    cols["feedpoint_swr_low"] = rf.swr(lo)
    cols["feedpoint_swr_high"] = rf.swr(hi)
    cols["line_matched_loss_db"] = corr.matched_loss_db
    if budget:
        cols.update(budget)
    return cols


MAG_BOUND_WARN = 0.05
"""Half-width of the |Gamma| interval above which a magnitude-only correction is flagged as loose (our choice,
common practice, no source: 0.05 in |Gamma| is about 0.1 in SWR near 1.5:1)."""


def magnitude_warnings(corr) -> list[str]:
    """Warnings of a magnitude-only correction: what is missing, where the estimate breaks down."""
    f = corr.freq_hz
    out = ["no phase in this sweep: the feedpoint SWR comes from the matched-loss relation |Gamma_feedpoint| = "
           "|Gamma_analyzer| / |S21|^2, exact only for a line matched to 50 ohm; the interval given with it holds the "
           "true value whatever the phase (it comes from the line's own mismatch, e.g. its complex Z0). Resonance, "
           "impedance and Q need phase"]
    out += outlier_warnings(f, corr.gamma_analyzer_mag, "|Gamma|")
    bad_in = corr.gamma_analyzer_mag > 1
    if bad_in.any():
        out.append(f"the sweep itself shows |Gamma| above 1 (return loss below 0 dB) at {int(bad_in.sum())} of "
                   f"{f.size} points "
                   f"({ranges_text(f, bad_in)}): check the analyzer's calibration and reference plane; those points "
                   "are left out of the SWR plot")
    over = ~(corr.gamma_feedpoint_mag < 1)
    if over.any():
        out.append(f"the feedpoint estimate reaches |Gamma| 1 or more at {int(over.sum())} of {f.size} points "
                   f"({ranges_text(f, over)}): the line loss given is more than the sweep allows there (check the "
                   "loss and length); those points are left out of the lowest SWR, the spans and the SWR plot")
    half = np.maximum(corr.gamma_feedpoint_mag_high - corr.gamma_feedpoint_mag,
                      corr.gamma_feedpoint_mag - corr.gamma_feedpoint_mag_low)
    loose = half > MAG_BOUND_WARN
    if loose.any():
        worst = float(np.nanmax(np.where(np.isfinite(half), half, np.nan))) if np.isfinite(half).any() else float("inf")
        out.append(f"the line is far from matched to 50 ohm at {int(loose.sum())} of {f.size} points "
                   f"({ranges_text(f, loose)}; |Gamma| uncertain by up to {worst:.2f}): the magnitude-only estimate is "
                   "loose there; a sweep with phase (R and X) removes that uncertainty")
    out += loss_warning(f, corr.matched_loss_db)
    out += unplotted_warnings(f, {"analyzer": corr.gamma_analyzer_mag, "feedpoint": corr.gamma_feedpoint_mag})
    return out


def magnitude_summary(corr, *, thresholds=(1.5, 2.0, 3.0), notes=(),
                      sweep_info: dict | None = None) -> CorrectionSummary:
    """The summary of a magnitude-only correction, in the shape of :func:`summarise`: both ends' findings
    without resonance and Q (``not_available`` says why), the feedpoint's with its bounds."""
    refuse_absurd_loss(corr)
    ok = corr.gamma_feedpoint_mag < 1
    est = np.where(ok, corr.gamma_feedpoint_mag, np.nan)
    return CorrectionSummary(
        sweep={"file": corr.source, "points": int(corr.freq_hz.size), "phase": False,
               "low_hz": float(corr.freq_hz[0]), "high_hz": float(corr.freq_hz[-1]), **(sweep_info or {})},
        line=line_summary(corr.line, corr.freq_hz),
        feedpoint=magnitude_findings(corr.freq_hz, est, thresholds,
                                     gamma_mag_low=corr.gamma_feedpoint_mag_low,
                                     gamma_mag_high=np.where(ok, corr.gamma_feedpoint_mag_high, np.inf)),
        analyzer=magnitude_findings(corr.freq_hz, corr.gamma_analyzer_mag, thresholds),
        warnings=list(notes) + magnitude_warnings(corr),
    )
