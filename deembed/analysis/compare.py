"""Compare a sweep taken after work on a tower with a baseline: did the feedpoint change, and was it the
antenna or the line?

Both sweeps are de-embedded (normally through the same line description) and compared at both ends:
the feedpoint resonance shift, the change in lowest SWR and in the 2:1 bandwidth, the largest change in
|Gamma| across the band. :func:`compare_corrections` returns a JSON-ready dict with a verdict against
:class:`Limits` and a plain-language cause. Pure functions of arrays and small objects; nothing here
reads or writes files (see :mod:`deembed.jobs.compare` and :mod:`deembed.jobs.site`).

Frequency grids
---------------
When the two sweeps have the same frequencies every quantity is compared point by point. Otherwise the
frequencies common to both (within 1e-9 relative) are used when there are at least
:data:`MIN_COMMON_POINTS` of them; failing that, the baseline's *feedpoint* reflection (already
de-embedded, so smooth) is interpolated with a cubic spline onto the after sweep's frequencies inside
the baseline's range, and the baseline's analyzer-end reflection there is rebuilt by embedding that
interpolated feedpoint through the baseline's line model. The raw analyzer-end values are never
interpolated: behind a long line they turn through many phase turns between points. A line known only
at its measured points (a plain measured .s2p) cannot be evaluated off them, so the analyzer-end
comparison is then left out, with a note.

Antenna or line? (:func:`diagnose`)
-----------------------------------
*One line description for both sweeps.* Both are de-embedded through the same line, so a change in the
line shows up at the feedpoint too. It shows up in a particular form: an extra length of matched line,
or extra loss in it (water in the cable, a crushed run), multiplies the feedpoint reflection by
``exp(-2 (dA(f) + j 2 pi f dtau))`` (Pozar 4th ed. sec. 2.7, Gamma(z) = Gamma_L exp(-2 gamma z)): |Gamma|
scaled smoothly, the phase turned in proportion to frequency. A detuned or damaged antenna changes the
feedpoint reflection near its resonance and not in that form. So the after feedpoint is fitted as
``Gamma_after = Gamma_before * exp(-2 c sqrt(f) - j 4 pi f dtau)`` (:func:`fit_line_change`: a
conductor-like loss change c and a one-way delay change dtau). If that fit leaves no more
than the trace noise (each sweep's noise, estimated from the data as ``correct`` does, referred to the
feedpoint: :func:`feedpoint_noise`) the change is called the line's. A fault at one place on the line
(a wet joint, a crushed spot) is no uniform change of loss or length, so the fit cannot explain it; when
the sweeps resolve the line and the look along it (:func:`deembed.analysis.along.compare_along`, the
transform of the difference of the two sweeps) puts the start of the change on the line, well before
its far end (:func:`change_part_way`), the change is the line's at that distance. Otherwise it is the
antenna's (or its connection at the feedpoint). When the trace noise at the feedpoint is itself above
the |Gamma| limit the sweeps cannot tell, and the cause says so.

*A fresh line description for the after sweep* (``after_line``, e.g. a new far-end characterization).
Each sweep is de-embedded through its own line, so the feedpoint comparison is the antenna's alone and
the lines' matched losses are compared directly. Feedpoint beyond the limits and line loss changed by
more than ``max_loss_change_db``: both; only the feedpoint: the antenna; only the line (or only the
analyzer-end sweep while the feedpoint held still): the line.

Codes: ``unchanged``, ``antenna``, ``line``, ``both``, ``unclear``.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..base.errors import DeembedError, InputFileError
from ..base.results import Result
from ..base.units import fmt_freq
from ..base.verdicts import verdict_of
from ..physics import rf
from ..physics.deembedding import Correction, embed_gamma, line_terms
from ..physics.grid import nearest_points
from ..physics.line import DB_PER_NP
from .along import compare_along
from .between import between_points, between_warnings
from .findings import end_findings, resonances
from .limits import Limits
from .summary import ranges_text, warnings_for
from .trust import UncertaintySettings, assess
from .uncertainty import MAX_LOST_FRACTION, change_interval, draw_line, feedpoint_gain, interval, seeds

MIN_COMMON_POINTS = 3
"""Fewest exactly common frequencies for a point-by-point comparison; fewer means interpolation."""

RESONANCE_FIT_FRACTION = 0.01
"""Half-width of the window, as a fraction of the frequency, over which X(f) is fitted by a quadratic to
place a resonance (:func:`fitted_resonance`). Our choice: wide enough to average trace noise over tens of
points on usual sweeps, narrow enough that X(f) of a resonant antenna is near-quadratic across it."""

MIN_FIT_GAMMA = 0.05
"""Points where |Gamma| is below this at either sweep are left out of the loss-change estimate (the
ratio of two small, noisy magnitudes says nothing about the line)."""

MODEL_FLOOR_GAMMA = 0.005
"""Added to the noise allowance when deciding that the line-change fit explains the change: what a
uniform-line model misses in a real run (its Zc is not exactly the old one's). Our choice."""

NOISE_FACTOR = 1.3
"""The fit's RMS residual may be this many times sqrt(noise^2 + MODEL_FLOOR_GAMMA^2), the combined RMS
trace noise of both sweeps and the model allowance. For pure noise the residual is about 1.0 times the
noise (the RMS of n Gaussian points scatters by about 1/sqrt(2n) relative: 3 % at 600 points); 1.3 leaves
room for the noise estimate's own error. Our choice."""

@dataclass(frozen=True)
class Aligned:
    """Both corrections on one frequency grid (see the module notes for how it is chosen).

    ``gamma_analyzer_before`` is None when the baseline's analyzer-end values could not be placed on the grid.
    """

    freq_hz: np.ndarray
    gamma_feedpoint_before: np.ndarray
    gamma_feedpoint_after: np.ndarray
    gamma_analyzer_before: np.ndarray | None
    gamma_analyzer_after: np.ndarray
    loss_before_db: np.ndarray
    loss_after_db: np.ndarray
    method: str
    notes: tuple = ()


def align(before: Correction, after: Correction) -> Aligned:
    """Put two corrections on one frequency grid without interpolating analyzer-end values."""
    fb, fa = np.asarray(before.freq_hz, float), np.asarray(after.freq_hz, float)
    if fb.shape == fa.shape and np.array_equal(fb, fa):
        return Aligned(fa, before.gamma_feedpoint, after.gamma_feedpoint, before.gamma_analyzer, after.gamma_analyzer,
                       np.asarray(before.matched_loss_db, float), np.asarray(after.matched_loss_db, float),
                       "same frequencies")
    ib, hit = nearest_points(fb, fa)
    if hit.sum() >= MIN_COMMON_POINTS:
        ia, ib = np.flatnonzero(hit), ib[hit]
        note = (f"the sweeps share {ia.size} frequencies (baseline {fb.size} points, after {fa.size}); "
                "compared on those only")
        return Aligned(fa[ia], before.gamma_feedpoint[ib], after.gamma_feedpoint[ia], before.gamma_analyzer[ib],
                       after.gamma_analyzer[ia], np.asarray(before.matched_loss_db, float)[ib],
                       np.asarray(after.matched_loss_db, float)[ia], "common frequencies", (note,))
    inside = (fa >= fb[0]) & (fa <= fb[-1])
    if inside.sum() < MIN_COMMON_POINTS:

        raise InputFileError(after.source, f"this after sweep ({fmt_freq(fa[0])} to {fmt_freq(fa[-1])}) hardly "
                                           f"overlaps the baseline {before.source} ({fmt_freq(fb[0])} to "
                                           f"{fmt_freq(fb[-1])}); sweep the same range as the baseline")
    from scipy.interpolate import CubicSpline

    grid = fa[inside]
    g_feed_b = CubicSpline(fb, before.gamma_feedpoint)(grid)
    loss_b = np.interp(grid, fb, np.asarray(before.matched_loss_db, float))
    notes = [f"the sweeps share no frequencies: the baseline's feedpoint reflection was interpolated (cubic "
             f"spline, after de-embedding) onto {grid.size} of the after sweep's frequencies"]
    try:
        g_analyzer_b = embed_gamma(g_feed_b, before.line.s_params(grid))
        notes.append("the baseline's analyzer-end values there were rebuilt through its line model")
    except DeembedError:
        g_analyzer_b = None
        notes.append("the baseline's line is known only at its measured points, so the analyzer ends are not "
                     "compared; sweep the same frequencies as the baseline to compare them")
    return Aligned(grid, g_feed_b, after.gamma_feedpoint[inside], g_analyzer_b, after.gamma_analyzer[inside], loss_b,
                   np.asarray(after.matched_loss_db, float)[inside], "interpolated", tuple(notes))


# ------------------------------------------------------------------------------------ measurements

def fitted_resonance(freq_hz, gamma, near_hz, *, fraction: float = RESONANCE_FIT_FRACTION):
    """The reactance zero nearest ``near_hz``, placed by a quadratic fit of X(f) around it, Hz (or None).

    Parameters
    ----------
    freq_hz : ndarray (n,)
        Frequencies, Hz.
    gamma : ndarray (n,)
        Reflection at 50 ohm.
    near_hz : float
        The crossing of X = 0 (from :func:`deembed.findings.resonances`) nearest this is taken.
    fraction : float
        Half-width of the fit window as a fraction of the crossing's frequency.

    Notes
    -----
    The crossing between two samples (linear interpolation) moves with the trace noise of those two
    points; behind a few dB of line that is tens of kHz on a low-Q VHF antenna. A least-squares quadratic
    X(f) = p0 + p1 u + p2 u^2 over the window (u the scaled offset) averages the noise of every point in
    it; the root nearest the crossing is the resonance. With fewer than 5 points in the window, or no
    real root inside it, the crossing itself is returned.
    """

    f = np.asarray(freq_hz, float)
    z = rf.z_from_gamma(gamma)
    found = resonances(f, z)
    if not found or near_hz is None:
        return None
    f0 = min(found, key=lambda r: abs(r.freq_hz - near_hz)).freq_hz
    step = float(np.median(np.diff(f))) if f.size > 1 else 0.0
    half = max(fraction * f0, 3 * step)
    sel = (np.abs(f - f0) <= half) & np.isfinite(z.imag)
    if sel.sum() < 5:
        return float(f0)
    u = (f[sel] - f0) / half
    p = np.polyfit(u, z.imag[sel], 2)
    roots = np.roots(p)
    roots = roots[np.isreal(roots)].real
    roots = roots[np.abs(roots) <= 1.0]
    if roots.size == 0:
        return float(f0)
    return float(f0 + roots[np.argmin(np.abs(roots))] * half)


def feedpoint_noise(corr: Correction, noise_rms: float) -> float | None:
    """The sweep's noise referred to the feedpoint: RMS over the sweep of ``noise_rms / gain`` (complex, in Gamma).

    ``noise_rms`` is the analyzer-end noise that ``correct`` reports for the same sweep (estimated from the data by
    :func:`deembed.analysis.smooth.noise_rms`, through :func:`deembed.analysis.trust.assess`); ``gain`` is
    |dGamma_analyzer / dGamma_feedpoint| at each point (:func:`deembed.analysis.uncertainty.feedpoint_gain`), so
    each point's feedpoint noise is the analyzer's divided by what the line does to a small change. These are the
    per-point noise levels the feedpoint's local models assume. None when no point has a finite gain.
    """
    f = np.asarray(corr.freq_hz, float)
    if f.size == 0:
        return None
    try:
        _, s21s12, s22, _ = line_terms(corr.line, f)
    except DeembedError:  # a measured 2-port known only on its own points (not these)
        return None
    gain = feedpoint_gain(s21s12, s22, corr.gamma_feedpoint)
    with np.errstate(divide="ignore", invalid="ignore"):
        sigma = float(noise_rms) / gain
    ok = np.isfinite(sigma)
    return float(np.sqrt(np.mean(sigma[ok] ** 2))) if ok.any() else None


def _end_numbers(freq_hz, g_before, g_after, fb=None, fa=None, *, noise=(None, None)) -> dict:
    """Changes at one end: findings from ``fb``/``fa`` (each sweep's own findings on its own grid, so that a
    sweep's findings are the same here as in ``correct``; worked out on the common grid when not given), the
    point-by-point changes of |Gamma| on the common grid, and ``noise`` (before, after): each sweep's noise at
    this end (``trace_noise_before``/``_after``; see :func:`compare_corrections`)."""
    fb = fb if fb is not None else end_findings(freq_hz, g_before, thresholds=(2.0,))
    fa = fa if fa is not None else end_findings(freq_hz, g_after, thresholds=(2.0,))
    bw_b = _span_total(fb["swr_spans_hz"]["2"])
    bw_a = _span_total(fa["swr_spans_hz"]["2"])
    dmag = np.abs(np.abs(g_after) - np.abs(g_before))
    dc = np.abs(g_after - g_before)
    ok = np.isfinite(dmag)
    i = int(np.argmax(np.where(ok, dmag, -1))) if ok.any() else None
    s_b, s_a = fb["min_swr"]["swr"], fa["min_swr"]["swr"]
    fm_b, fm_a = fb["min_swr"]["freq_hz"], fa["min_swr"]["freq_hz"]
    return {
        "min_swr_before": s_b, "min_swr_after": s_a,
        "min_swr_change": _diff(s_a, s_b),
        "min_swr_freq_before_hz": fm_b, "min_swr_freq_after_hz": fm_a,
        "min_swr_freq_shift_hz": _diff(fm_a, fm_b),
        "swr_2_width_before_hz": bw_b, "swr_2_width_after_hz": bw_a,
        "swr_2_width_change_hz": bw_a - bw_b,
        "swr_2_width_change_percent": (100.0 * (bw_a - bw_b) / bw_b) if bw_b > 0 else None,
        "largest_gamma_change": float(dmag[i]) if i is not None else None,
        "largest_gamma_change_at_hz": float(freq_hz[i]) if i is not None else None,
        "largest_gamma_vector_change": float(np.max(dc[np.isfinite(dc)])) if np.isfinite(dc).any() else None,
        "rms_gamma_change": float(np.sqrt(np.mean(dc[np.isfinite(dc)] ** 2))) if np.isfinite(dc).any() else None,
        "trace_noise_before": noise[0], "trace_noise_after": noise[1],
        "_findings_before": fb,
    }


def _span_total(spans) -> float:
    return float(sum(hi - lo for lo, hi in spans if lo is not None and hi is not None))


def _diff(a, b):
    return None if a is None or b is None else float(a - b)


def fit_line_change(freq_hz, gamma_before, gamma_after) -> dict:
    """Fit the after feedpoint as the baseline seen through an extra (or missing) piece of matched line.

    Model: Gamma_after(f) = Gamma_before(f) exp(-2 c sqrt(f)) exp(-j 4 pi f dtau).

    Returns
    -------
    dict
        ``c_np_per_sqrt_hz``; ``loss_change_db`` at the grid's centre and top (one-way, dB: positive means
        the line now loses more than its description); ``delay_change_ps`` (one-way dtau, ps: positive
        means electrically longer); ``rms_residual`` and ``rms_change`` (complex Gamma units).

    Notes
    -----
    Gamma(z) = Gamma_L exp(-2 gamma z) on a matched line (Pozar 4th ed. sec. 2.7): an extra length adds
    a round-trip phase of -4 pi f dtau, proportional to frequency with no constant term, and its loss a
    factor exp(-2 dA); a conductor-like loss change scales as sqrt(f) (check-values sec. 1.3). c starts
    from the closed-form weighted least squares of ln|Ga/Gb| = -2 c sqrt(f) (weights |Gb|^2); dtau from
    the peak of |sum Ga conj(Gb) exp(j 4 pi f dtau)| over one-way changes up to +/-10 ns (about 2 m of
    coax); both are then refined by nonlinear least squares on the complex residual.
    """
    from scipy.optimize import least_squares

    f = np.asarray(freq_hz, float)
    gb, ga = np.asarray(gamma_before, complex), np.asarray(gamma_after, complex)
    ok = np.isfinite(gb) & np.isfinite(ga)
    f, gb, ga = f[ok], gb[ok], ga[ok]
    sf = np.sqrt(f)
    mb, ma = np.abs(gb), np.abs(ga)
    use = (mb > MIN_FIT_GAMMA) & (ma > MIN_FIT_GAMMA)
    if use.sum() >= 2:
        w = mb[use] ** 2
        c0 = -float(np.sum(w * sf[use] * np.log(ma[use] / mb[use])) / (2 * np.sum(w * f[use])))
    else:
        c0 = 0.0
    tau_max = 10e-9
    # grid fine enough that the round-trip phase at the top frequency moves 0.5 rad per step
    n_t = int(min(max(np.ceil(2 * tau_max * 4 * np.pi * f[-1] / 0.5) + 1, 3), 20001))
    t_grid = np.linspace(-tau_max, tau_max, n_t)
    cross = ga * np.conj(gb)
    best_t, best = 0.0, -1.0
    for start in range(0, n_t, 512):  # chunks of the delay grid, each vectorised over frequency
        tt = t_grid[start:start + 512]
        mag = np.abs(np.exp(4j * np.pi * np.outer(tt, f)) @ cross)
        k = int(np.argmax(mag))
        if mag[k] > best:
            best, best_t = float(mag[k]), float(tt[k])

    t_scale = 1.0 / (4 * np.pi * f[-1])

    def resid(x):
        c, t = x[0], x[1] * t_scale
        r = ga - gb * np.exp(-2 * c * sf - 4j * np.pi * f * t)
        return np.concatenate([r.real, r.imag])

    sol = least_squares(resid, [c0, best_t / t_scale], x_scale=[abs(c0) + 1e-6, 1.0])
    c, t = sol.x[0], sol.x[1] * t_scale
    r = resid(sol.x)
    n = max(f.size, 1)
    fc = float(np.mean(f))
    return {
        "c_np_per_sqrt_hz": float(c),
        "loss_change_db": {"at_centre": float(DB_PER_NP * c * np.sqrt(fc)), "at_high": float(DB_PER_NP * c * sf[-1])},
        "delay_change_ps": float(t * 1e12),
        "rms_residual": float(np.sqrt(np.sum(r ** 2) / n)),
        "rms_change": float(np.sqrt(np.mean(np.abs(ga - gb) ** 2))) if f.size else 0.0,
    }


def _same_line(a, b) -> bool:
    if a is b:
        return True
    try:
        return bool(a == b)
    except (ValueError, TypeError):  # measured 2-ports hold arrays
        return False


# -------------------------------------------------------------------------------------- comparison

def compare_corrections(before: Correction, after: Correction, limits: Limits | None = None, settings=None, *,
                        warnings=()) -> "Comparison":
    """Compare an after-work correction with its baseline (a :class:`Comparison`; ``to_dict()`` is the JSON).

    Parameters
    ----------
    before, after : Correction
        The baseline and the after-work sweeps, de-embedded. Pass the same line to both (the usual case)
        or, with a fresh characterization, each sweep through its own line.
    limits : Limits, optional
        What counts as acceptable (default :class:`Limits`).
    settings : UncertaintySettings, optional
        How the intervals are worked out (default: 1000 draws, seed 1, the hobby calibration preset; 0 draws
        for none). Each sweep's findings come from its own grid (:func:`deembed.analysis.trust.assess`), the
        same as ``correct`` gives.
    warnings : iterable of str
        Warnings about the inputs made before the comparison (the line description's, such as loss points no
        physical line loss can meet); they head the result's ``warnings``.

    Returns
    -------
    Comparison
        ``resonance_shift_hz`` (after minus before: the baseline's feedpoint resonance at its best match and
        the after sweep's nearest one of the same sense, each placed by its local model; None when either has
        none), ``resonance_shift_interval_hz``, ``min_swr_change_interval``, ``swr_2_width_change_interval_hz``
        (coverage intervals from paired draws) and ``uncertainty`` (how they were made),
        ``resonance_before_hz``, ``resonance_after_hz`` with ``resonance_before_interval_hz`` and
        ``resonance_after_interval_hz``, ``min_swr_change``, ``swr_2_width_change_hz``,
        ``largest_gamma_change_feedpoint``, ``largest_gamma_change_analyzer`` (largest change in |Gamma|);
        ``baseline`` and ``after`` (file, points, ``step_hz``: the sweep's median frequency step);
        ``feedpoint`` and ``analyzer`` blocks with the details of each end (``trace_noise_before``/``_after``: at
        the analyzer, the sweep's noise as ``correct`` reports it; at the feedpoint, that noise referred to the
        feedpoint, :func:`feedpoint_noise`); ``line`` (same line or not, the matched-loss change, the fitted line
        change); ``grid``; ``limits``; ``verdict``
        ``{"status": "within_limits" | "outside_limits", "limits_exceeded": [JSON limit names], "reasons"}``
        with the certainty of each limit (:func:`_certainty`); ``cause`` ``{"code", "text"}``; ``warnings``
        (``warnings`` given, then each correction's own, as ``correct`` gives them); ``notes``.

    Raises
    ------
    InputFileError
        When a sweep has no phase, or its feedpoint reflection is below 1 in |Gamma| at none of its points
        (:func:`check_feedpoint`): then nothing at the feedpoint can be compared, and a verdict would pass by
        default.
    """
    for c in (before, after):
        if getattr(c, "has_phase", True) is False:
            raise InputFileError(c.source, "this sweep holds SWR or return loss only, without phase; comparing with a "
                                           "baseline (resonance shift, the antenna-or-line cause) needs the phase: "
                                           "export R and X, or a Touchstone file")
    for c in (before, after):
        check_feedpoint(c)
    limits = limits or Limits()
    al = align(before, after)
    f = al.freq_hz
    same = _same_line(before.line, after.line)
    tr = trust_pair(before, after, same, settings)
    a_b, a_a = tr["before"], tr["after"]
    fb = end_findings(before.freq_hz, before.gamma_feedpoint, thresholds=(2.0,), events=a_b.events_fp)
    fa = end_findings(after.freq_hz, after.gamma_feedpoint, thresholds=(2.0,), events=a_a.events_fp)
    fp = _end_numbers(f, al.gamma_feedpoint_before, al.gamma_feedpoint_after, fb, fa,
                      noise=(feedpoint_noise(before, a_b.noise_rms), feedpoint_noise(after, a_a.noise_rms)))
    fp.pop("_findings_before")
    kb, ka = _matched_resonances(a_b.events_fp, a_a.events_fp)
    res_b = a_b.events_fp.nominal[f"res_hz_{kb}"] if kb is not None else None
    res_a = a_a.events_fp.nominal[f"res_hz_{ka}"] if ka is not None else None
    fp.update({"resonance_before_hz": res_b, "resonance_after_hz": res_a, "resonance_shift_hz": _diff(res_a, res_b)})
    if al.gamma_analyzer_before is not None:
        sh = _end_numbers(f, al.gamma_analyzer_before, al.gamma_analyzer_after,
                          end_findings(before.freq_hz, before.gamma_analyzer, thresholds=(2.0,), events=a_b.events_an),
                          end_findings(after.freq_hz, after.gamma_analyzer, thresholds=(2.0,), events=a_a.events_an),
                          noise=(a_b.noise_rms, a_a.noise_rms))
        sh.pop("_findings_before")
    else:
        sh = None
    intervals, lost = _change_intervals(a_b, a_a, kb, ka)

    dloss = al.loss_after_db - al.loss_before_db
    line = {
        "same_line": same,
        "before": before.line.describe(),
        "after": after.line.describe(),
        "loss_change_db": None if same else {"max_abs": float(np.max(np.abs(dloss))),
                                             "at_centre": float(np.interp(np.mean(f), f, dloss))},
        "delay_change_ps": None,
        "fitted_change": None,
    }
    db, da = getattr(before.line, "delay_s", None), getattr(after.line, "delay_s", None)
    if not same and db is not None and da is not None:
        line["delay_change_ps"] = float((da - db) * 1e12)
    if same:
        line["fitted_change"] = fit_line_change(f, al.gamma_feedpoint_before, al.gamma_feedpoint_after)
    bp_before = between_points(before.line, before.freq_hz, before.gamma_feedpoint)
    bp_after = between_points(after.line, after.freq_hz, after.gamma_feedpoint)
    if bp_before or bp_after:
        line["between_points"] = {"before": bp_before, "after": bp_after}
    wb, wa = between_warnings(bp_before), between_warnings(bp_after)
    between_notes = _said_once(wb, wa)

    step = _step_hz(before.freq_hz), _step_hz(after.freq_hz)
    verdict = _verdict(fp, line, limits, res_b, res_a, resolution_hz=min((x for x in step if x), default=None))
    _certainty(verdict, fp, limits, intervals, line, uncertain=a_b.mc is not None and a_a.mc is not None,
               why=_why_no_interval(lost, res_b, res_a))
    verdict = Verdict(**verdict)
    along = compare_along(before, after)[0]
    cause = Cause(**diagnose(fp, sh, line, limits, verdict, along=along))
    if along.get("shown") and along.get("where") == "part-way along the line" and cause.code != "line":
        place = f"{along['first_change_m']:.1f} m" if along.get("first_change_m") is not None else "part-way"
        notes_along = [f"the look along the line puts the start of the change part-way along the line ({place}): "
                       "check the line there (a joint, a splice, water) as well as the antenna"]
    else:
        notes_along = []
    mc = a_b.mc
    cov = mc.coverage if mc is not None else None
    return Comparison(**{
        "baseline": {"file": before.source, "points": int(before.freq_hz.size), "step_hz": step[0]},
        "after": {"file": after.source, "points": int(after.freq_hz.size), "step_hz": step[1]},
        "grid": {"method": al.method, "points": int(f.size), "low_hz": float(f[0]), "high_hz": float(f[-1])},
        "resonance_shift_hz": fp["resonance_shift_hz"],
        "resonance_before_hz": res_b,
        "resonance_after_hz": res_a,
        "resonance_before_interval_hz": _draws_interval(a_b, kb, cov),
        "resonance_after_interval_hz": _draws_interval(a_a, ka, cov),
        "min_swr_change": fp["min_swr_change"],
        "swr_2_width_change_hz": fp["swr_2_width_change_hz"],
        "resonance_shift_interval_hz": intervals.get("resonance_shift_hz"),
        "min_swr_change_interval": intervals.get("min_swr_change"),
        "swr_2_width_change_interval_hz": intervals.get("swr_2_width_change_hz"),
        "uncertainty": None if mc is None else {
            "coverage": mc.coverage, "draws": mc.n, "seed": mc.seed,
            "method": "Monte Carlo propagation of distributions (JCGM 101:2008); both sweeps share each draw of "
                      "the line and of the calibration residuals, their noise is independent" if same else
                      "Monte Carlo propagation of distributions (JCGM 101:2008); each sweep through its own line, "
                      "the calibration residuals shared, the noise independent",
            "noise_gamma_rms_before": a_b.noise_rms, "noise_gamma_rms_after": a_a.noise_rms,
            "not_worked_out": NO_INTERVAL_TEXT},
        "largest_gamma_change_feedpoint": fp["largest_gamma_change"],
        "largest_gamma_change_analyzer": sh["largest_gamma_change"] if sh else None,
        "feedpoint": fp,
        "analyzer": sh,
        "line": line,
        "limits": limits.as_dict(),
        "verdict": verdict,
        "cause": cause,
        "along_the_line": along,
        "warnings": list(warnings) + _said_once(warnings_for(before), warnings_for(after)),
        "notes": notes_along + list(al.notes) + between_notes + ([f"only {al.freq_hz.size} common frequencies: resonance, bandwidth and the "
                                    "antenna-or-line cause need a sweep, so this verdict says little"]
                                   if al.freq_hz.size < 3 else []),
    })


@dataclass(frozen=True)
class Comparison(Result):
    """An after-work sweep compared with its baseline: the compare JSON (``compare.schema.json``), key for key.

    Made by :func:`compare_corrections` (see there for each field). The blocks ``baseline``, ``after``,
    ``grid``, ``uncertainty``, ``feedpoint``, ``analyzer``, ``line``, ``limits`` and ``along_the_line`` are plain
    JSON data; ``verdict`` is a :class:`Verdict`, ``cause`` a :class:`Cause`. ``outputs`` (OPTIONAL) names the
    files written, set by :mod:`deembed.jobs.compare` with :func:`dataclasses.replace`.
    """

    baseline: dict
    after: dict
    grid: dict
    resonance_shift_hz: float | None
    resonance_before_hz: float | None
    resonance_after_hz: float | None
    resonance_before_interval_hz: list | None
    resonance_after_interval_hz: list | None
    min_swr_change: float | None
    swr_2_width_change_hz: float | None
    resonance_shift_interval_hz: list | None
    min_swr_change_interval: list | None
    swr_2_width_change_interval_hz: list | None
    uncertainty: dict | None
    largest_gamma_change_feedpoint: float | None
    largest_gamma_change_analyzer: float | None
    feedpoint: dict
    analyzer: dict | None
    line: dict
    limits: dict
    verdict: Verdict
    cause: Cause
    along_the_line: dict
    warnings: list
    notes: list
    outputs: dict | None = None

    OPTIONAL = ("outputs",)


NO_INTERVAL_TEXT = ("no interval is worked out for the largest change of |Gamma|: it is a maximum over frequency "
                    "of each draw's whole trace at both sweeps, which the draws do not keep (only each sweep's "
                    "findings and its SWR band)")
"""Why the largest |Gamma| change has no interval (said in ``uncertainty.not_worked_out``)."""


def _said_once(before: list, after: list) -> list:
    """Warnings of both sweeps: those of both once, the others with the sweep they are about."""
    return ([w for w in before if w in after] + [f"baseline: {w}" for w in before if w not in after]
            + [f"after work: {w}" for w in after if w not in before])


def _step_hz(freq_hz) -> float | None:
    """A sweep's median frequency step, Hz (None for a single point): what its frequencies resolve."""
    f = np.asarray(freq_hz, float)
    return float(np.median(np.diff(f))) if f.size > 1 else None


def _draws_interval(a, k, coverage):
    """Coverage interval of one sweep's compared resonance (None without draws, or when it is lost too often)."""
    if a.mc is None or k is None:
        return None
    return interval(a.mc.feedpoint.values[f"res_hz_{k}"], coverage)


def check_feedpoint(corr: Correction) -> None:
    """Refuse a correction with no feedpoint reflection to compare.

    A passive antenna reflects less than it is sent, so its |Gamma| is below 1 (common practice, no source). When
    removing the line gives 1 or more (or no finite value) at every point of a sweep, every feedpoint finding is
    undefined, the limits have nothing to check and a verdict would pass by default: the line description (loss,
    length, velocity factor) or the sweep is wrong. Raises :class:`InputFileError` naming the sweep."""
    g = np.asarray(corr.gamma_feedpoint, complex)
    with np.errstate(invalid="ignore"):
        usable = np.abs(g) < 1.0
    if g.size and not usable.any():
        f = np.asarray(corr.freq_hz, float)
        bad = ~np.isfinite(g)
        how = (f"no finite feedpoint reflection at {int(bad.sum())} of {g.size} points ({ranges_text(f, bad)}), and "
               "|Gamma| 1 or more at the others" if bad.any() else
               f"a feedpoint |Gamma| of 1 or more at every one of its {g.size} points")
        raise InputFileError(corr.source, f"removing the line gives {how}, which no antenna has: nothing at the "
                                          "feedpoint can be compared. Check the line description (loss, length, "
                                          "velocity factor) and the sweep")


def trust_pair(before: Correction, after: Correction, same_line: bool, settings=None) -> dict:
    """Noise, events and Monte Carlo draws of both sweeps, on their own grids.

    Through the same line both sweeps share each draw of the line, so common line errors cancel in the changes
    as they physically do. Both also share each draw of the calibration residuals: the same analyzer and kit
    are assumed (our choice; a kit's residual errors are mostly its standards' own, the same at every
    calibration). Their noise is independent."""
    st = UncertaintySettings() if settings is None else settings
    st = st if st.draws > 0 else None
    ld = None
    if st is not None and same_line and before.freq_hz.size >= 7 and after.freq_hz.size >= 7:
        ld = draw_line(before.line, st.draws, seeds(st.seed)[0])   # what the baseline alone would draw
    a_b = assess(before.freq_hz, before.gamma_analyzer, before.gamma_feedpoint, before.line, thresholds=(2.0,),
                 settings=st, line_draws=ld)
    a_a = assess(after.freq_hz, after.gamma_analyzer, after.gamma_feedpoint, after.line, thresholds=(2.0,),
                 settings=st, line_draws=ld, noise_key=1)
    return {"before": a_b, "after": a_a}


def _matched_resonances(ev_b, ev_a):
    """(baseline index, after index) of the resonance compared: the baseline's at its best match, and the
    after sweep's resonance of the same sense nearest it (None when either has none)."""
    kept_b = ev_b.kept_resonances()
    if ev_b.primary is None or ev_b.primary not in kept_b:
        return None, None
    kb = ev_b.primary
    fb = ev_b.nominal[f"res_hz_{kb}"]
    sense = ev_b.resonances[kb].sense
    cands = [i for i in ev_a.kept_resonances() if ev_a.resonances[i].sense == sense] or ev_a.kept_resonances()
    if not cands:
        return kb, None
    ka = min(cands, key=lambda i: abs(ev_a.nominal[f"res_hz_{i}"] - fb))
    return kb, ka


def _span2_total_draws(a):
    """Total 2:1 span width in every draw (NaN where an edge is lost); edges cut by the sweep stay put."""
    v = a.mc.feedpoint.values
    total = np.zeros(a.mc.n)
    for j, (lo, hi) in enumerate(a.events_fp.spans.get("2", [])):
        lo_d = v.get(f"edge_2_{j}_low", np.full(a.mc.n, lo))
        hi_d = v.get(f"edge_2_{j}_high", np.full(a.mc.n, hi))
        total = total + (hi_d - lo_d)
    return total


def _change_intervals(a_b, a_a, kb, ka) -> tuple[dict, dict]:
    """Coverage intervals of the compared changes from paired draws (after minus before), and for each change
    the share of draws that lost it at each sweep, ``{name: (baseline, after)}`` (NaN draws; the interval is None
    when more than :data:`~deembed.analysis.uncertainty.MAX_LOST_FRACTION` of the differences are lost)."""
    if a_b.mc is None or a_a.mc is None:
        return {}, {}
    vb, va = a_b.mc.feedpoint.values, a_a.mc.feedpoint.values
    cov = a_b.mc.coverage
    pairs = {"min_swr_change": (va["min_swr"], vb["min_swr"]),
             "swr_2_width_change_hz": (_span2_total_draws(a_a), _span2_total_draws(a_b))}
    if kb is not None and ka is not None:
        pairs["resonance_shift_hz"] = (va[f"res_hz_{ka}"], vb[f"res_hz_{kb}"])
    out, lost = {}, {}
    for name, (after_draws, before_draws) in pairs.items():
        out[name] = change_interval(after_draws, before_draws, cov)
        lost[name] = (_lost(before_draws), _lost(after_draws))
    return out, lost


def _lost(draws) -> float:
    d = np.asarray(draws, dtype=float)
    return float(np.mean(np.isnan(d))) if d.size else 0.0


def _why_no_interval(lost: dict, res_b, res_a) -> dict:
    """For each limit, why its change has no interval (the words of ``certainty_text`` for ``undetermined``)."""

    def share(name, what):
        fb, fa = lost.get(name, (0.0, 0.0))
        sides = [f"{x:.0%} of the {side} draws" for x, side in ((fb, "baseline's"), (fa, "after sweep's"))
                 if x > MAX_LOST_FRACTION]
        where = " and ".join(sides) or "too many of the paired draws"
        return (f"its interval was not placed: {what} is lost in {where} (more than {MAX_LOST_FRACTION:.1%}); "
                "tighten the line's tolerances (measure or characterize the line)")

    shift = ("the resonance is no longer inside the after sweep, so there is no shift to give an interval"
             if res_b is not None and res_a is None else
             "the baseline has no resonance to compare" if res_b is None else share("resonance_shift_hz",
                                                                                    "the resonance"))
    return {"max_shift_hz": shift,
            "max_swr_rise": share("min_swr_change", "the lowest SWR"),
            "max_bw_loss_percent": share("swr_2_width_change_hz", "an edge of the 2:1 span"),
            "max_gamma_change": "no interval is worked out for the largest change of |Gamma| (the draws keep "
                                "each sweep's findings, not every draw's whole trace)",
            "max_loss_change_db": "no interval is worked out for the change of the two lines' matched loss"}


CERTAINTY_TEXT = {"exceeded_within_uncertainty": "exceeded, but only within the uncertainty",
                  "beyond": "exceeded beyond the uncertainty",
                  "inside_within_uncertainty": "within the limit, but the uncertainty reaches past it"}
"""What the terminal and the page say for each certainty (``undetermined`` says why, see :func:`_certainty`)."""


def _certainty(verdict: dict, fp: dict, limits: Limits, intervals: dict, line: dict | None = None, *,
               uncertain: bool = False, why: dict | None = None) -> None:
    """Say, for each limit checked, whether it is exceeded beyond the uncertainty or only within it.

    ``verdict["certainty"][name]`` is ``"beyond"`` (exceeded, the whole interval past the limit),
    ``"exceeded_within_uncertainty"`` (exceeded, but the interval reaches back inside), ``"inside_within_uncertainty"``
    (inside, but the interval reaches past the limit), ``"inside"`` (the whole interval inside) or, when the
    uncertainty was worked out (``uncertain``) but this limit's change has no interval, ``"undetermined"``;
    ``verdict["beyond_uncertainty"]`` lists the limits exceeded beyond it, ``verdict["within_uncertainty"]`` those
    exceeded only within it and ``verdict["undetermined"]`` those exceeded with no interval to tell.
    ``verdict["certainty_text"]`` has a sentence for each limit whose certainty needs saying; for an
    ``undetermined`` one it says why there is no interval (``why[name]``)."""
    why = why or {}
    checks = []
    iv = intervals.get("resonance_shift_hz")
    if iv is not None and fp.get("resonance_shift_hz") is not None:
        lim = limits.max_shift_hz
        checks.append(("max_shift_hz", abs(fp["resonance_shift_hz"]) > lim, min(abs(iv[0]), abs(iv[1])) > lim and
                       iv[0] * iv[1] > 0, max(abs(iv[0]), abs(iv[1])) > lim))
    iv = intervals.get("min_swr_change")
    if iv is not None and fp.get("min_swr_change") is not None:
        lim = limits.max_swr_rise
        checks.append(("max_swr_rise", fp["min_swr_change"] > lim, iv[0] > lim, iv[1] > lim))
    iv = intervals.get("swr_2_width_change_hz")
    bw_b = fp.get("swr_2_width_before_hz") or 0.0
    if iv is not None and bw_b > 0 and fp.get("swr_2_width_change_percent") is not None:
        lim = limits.max_bw_loss_percent
        lo_pct, hi_pct = 100 * iv[0] / bw_b, 100 * iv[1] / bw_b
        checks.append(("max_bw_loss_percent", -fp["swr_2_width_change_percent"] > lim, -hi_pct > lim, -lo_pct > lim))
    cert = {}
    for name, exceeded, all_past, some_past in checks:
        if exceeded:
            cert[name] = "beyond" if all_past else "exceeded_within_uncertainty"
        else:
            cert[name] = "inside_within_uncertainty" if some_past else "inside"
    if uncertain:
        checked = {"max_shift_hz": fp.get("resonance_shift_hz") is not None,
                   "max_swr_rise": fp.get("min_swr_change") is not None,
                   "max_gamma_change": fp.get("largest_gamma_change") is not None,
                   "max_bw_loss_percent": fp.get("swr_2_width_change_percent") is not None,
                   "max_loss_change_db": (line or {}).get("loss_change_db") is not None}
        for name, was in checked.items():
            if name not in cert and (was or name in verdict["limits_exceeded"]):
                cert[name] = "undetermined"
    verdict["certainty"] = cert
    exceeded = verdict["limits_exceeded"]
    verdict["beyond_uncertainty"] = [k for k in exceeded if cert.get(k) == "beyond"]
    verdict["within_uncertainty"] = [k for k in exceeded if cert.get(k) == "exceeded_within_uncertainty"]
    verdict["undetermined"] = [k for k in exceeded if cert.get(k) == "undetermined"]
    text = {k: CERTAINTY_TEXT[v] for k, v in cert.items() if v in CERTAINTY_TEXT}
    text.update({k: f"{'exceeded' if k in exceeded else 'within the limit'}; how certain cannot be said: "
                    f"{why.get(k, 'no interval')}" for k, v in cert.items() if v == "undetermined"})
    verdict["certainty_text"] = {k: text[k] for k in cert if k in text}


@dataclass(frozen=True)
class Verdict(Result):
    """A comparison's verdict against its limits (``verdict`` in the compare JSON).

    ``status`` is ``within_limits`` or ``outside_limits``; ``limits_exceeded`` the JSON names of the limits
    exceeded, ``reasons`` one sentence each. With uncertainty intervals, ``certainty`` says per limit whether it
    is exceeded beyond or within the uncertainty, or cannot say (``undetermined``; see :func:`_certainty`).
    """

    status: str
    limits_exceeded: list
    reasons: list
    certainty: dict | None = None
    beyond_uncertainty: list | None = None
    within_uncertainty: list | None = None
    undetermined: list | None = None
    certainty_text: dict | None = None

    OPTIONAL = ("certainty", "beyond_uncertainty", "within_uncertainty", "undetermined", "certainty_text")

    @property
    def ok(self) -> bool:
        return self.status == verdict_of(True)


@dataclass(frozen=True)
class Cause(Result):
    """Antenna or line (``cause`` in the compare JSON): ``code`` (``unchanged``, ``antenna``, ``line``, ``both``,
    ``unclear``) and a sentence for people."""

    code: str
    text: str


def _verdict(fp: dict, line: dict, limits: Limits, res_b, res_a, *, resolution_hz: float | None = None) -> dict:
    """The limits exceeded and a sentence for each; frequencies in them to ``resolution_hz`` (the sweeps' step)."""

    def freq(hz):
        return fmt_freq(hz, resolution_hz=resolution_hz) if resolution_hz else fmt_freq(hz, 6)

    exceeded, reasons = [], []
    shift = fp["resonance_shift_hz"]
    if shift is not None and abs(shift) > limits.max_shift_hz:
        exceeded.append("max_shift_hz")
        reasons.append(f"the feedpoint resonance moved {shift / 1e3:+.1f} kHz (limit {fmt_freq(limits.max_shift_hz)})")
    elif res_b is not None and res_a is None:
        exceeded.append("max_shift_hz")
        reasons.append(f"the feedpoint resonance at {freq(res_b)} is no longer inside the sweep")
    rise = fp["min_swr_change"]
    if rise is not None and rise > limits.max_swr_rise:
        exceeded.append("max_swr_rise")
        reasons.append(f"the lowest feedpoint SWR rose by {rise:.2f} (limit {limits.max_swr_rise:g})")
    dg = fp["largest_gamma_change"]
    if dg is not None and dg > limits.max_gamma_change:
        exceeded.append("max_gamma_change")
        reasons.append(f"the feedpoint |Gamma| changed by up to {dg:.3f} at {freq(fp['largest_gamma_change_at_hz'])} "
                       f"(limit {limits.max_gamma_change:g})")
    pct = fp["swr_2_width_change_percent"]
    if pct is not None and -pct > limits.max_bw_loss_percent:
        exceeded.append("max_bw_loss_percent")
        reasons.append(f"the feedpoint 2:1 bandwidth shrank by {-pct:.1f} % (limit {limits.max_bw_loss_percent:g} %)")
    lc = line["loss_change_db"]
    if lc is not None and lc["max_abs"] > limits.max_loss_change_db:
        exceeded.append("max_loss_change_db")
        reasons.append(f"the line's matched loss changed by up to {lc['max_abs']:.2f} dB "
                       f"(limit {limits.max_loss_change_db:g} dB)")
    return {"status": verdict_of(not exceeded), "limits_exceeded": exceeded, "reasons": reasons}


FEEDPOINT_LIMITS = ("max_shift_hz", "max_swr_rise", "max_gamma_change", "max_bw_loss_percent")


FAR_END_MARGIN_RESOLUTIONS = 2.0
"""How many range resolutions before the far end the sweep shows a change must start to count as on the line
(the margin :func:`deembed.analysis.along.compare_along` uses for "at the far end"; a reflection is about one
resolution wide, so two keep the antenna's own peak out)."""


def change_part_way(along: dict | None):
    """Where the look along the line puts the start of the change, when that is on the line itself rather than at
    its far end: ``(place, distance text, far-end text)`` with ``place`` ``"analyzer end"`` or ``"part-way"``, or
    None.

    From the distances :func:`deembed.analysis.along.compare_along` gives: the start of the change
    (``first_change_m``) more than :data:`FAR_END_MARGIN_RESOLUTIONS` range resolutions before the far end the
    after sweep shows (``far_end_m_after``); within that many resolutions of the analyzer it is the analyzer end.
    Without distances or a far end found in the sweep nothing is said (the start cannot be told from the
    antenna)."""
    if not along or not along.get("shown"):
        return None
    d, fe, res = along.get("first_change_m"), along.get("far_end_m_after"), along.get("resolution_m")
    if d is None or fe is None or not res or not d < fe - FAR_END_MARGIN_RESOLUTIONS * res:
        return None
    place = "analyzer end" if d <= FAR_END_MARGIN_RESOLUTIONS * res else "part-way"
    return place, f"{d:.1f} m", f"{fe:.1f} m (resolution {res:.2f} m)"


def diagnose(fp: dict, sh: dict | None, line: dict, limits: Limits, verdict: dict, along: dict | None = None) -> dict:
    """Antenna or line: the rule in the module notes, as ``{"code", "text"}``.

    ``along`` is the comparison's look along the line (:func:`deembed.analysis.along.compare_along`); with one line
    description, a change that starts on the line (:func:`change_part_way`) is the line's even when the
    uniform-line fit cannot explain it (a fault at one place is no uniform change of loss or length)."""
    fp_out = any(k in verdict["limits_exceeded"] for k in FEEDPOINT_LIMITS)
    if not line["same_line"]:
        line_out = "max_loss_change_db" in verdict["limits_exceeded"]
        analyzer_moved = sh is not None and (sh["largest_gamma_vector_change"] or 0.0) > limits.max_gamma_change
        lc = line["loss_change_db"]["at_centre"]
        if fp_out and line_out:
            return {"code": "both", "text": f"both changed: the feedpoint (each sweep through its own line) is beyond "
                                            f"the limits, and the line's matched loss changed by {lc:+.2f} dB"}
        if fp_out:
            return {"code": "antenna", "text": "the antenna changed: with each sweep corrected through its own line "
                                               "the feedpoint is beyond the limits while the line's loss held"}
        if line_out or analyzer_moved:
            what = f"its matched loss changed by {lc:+.2f} dB" if line_out else \
                "the analyzer-end sweep changed while the corrected feedpoint did not"
            return {"code": "line", "text": f"the line changed, not the antenna: {what}"}
        return {"code": "unchanged", "text": "no change beyond the limits at the feedpoint or in the line"}

    if not fp_out:
        return {"code": "unchanged", "text": "no change beyond the limits: the feedpoint looks as it did at the baseline"}
    noise = math.hypot(fp["trace_noise_before"] or 0.0, fp["trace_noise_after"] or 0.0)
    if noise > limits.max_gamma_change:
        return {"code": "unclear", "text": f"the feedpoint traces are too noisy to tell (about {noise:.3f} rms in Gamma "
                                           "after correction): sweep with more averaging, or characterize the line"}
    fit = line["fitted_change"]
    allowed = NOISE_FACTOR * math.hypot(noise, MODEL_FLOOR_GAMMA)
    if fit["rms_residual"] <= allowed:
        parts = []
        dl = fit["loss_change_db"]["at_centre"]
        if abs(dl) >= 0.05:
            parts.append(f"about {abs(dl):.2f} dB {'more' if dl > 0 else 'less'} one-way loss than its description")
        dt = fit["delay_change_ps"]
        if abs(dt) >= 1.0:
            parts.append(f"an electrical length {'longer' if dt > 0 else 'shorter'} by {abs(dt):.0f} ps one way")
        what = " and ".join(parts) or "a small change of loss or length"
        return {"code": "line", "text": f"looks like the line, not the antenna: the whole change is what {what} "
                                        "would do (the |Gamma| curve kept its shape). Check the run for water, "
                                        "damage or a changed jumper, and characterize it again"}
    on_line = change_part_way(along)
    if on_line is not None:
        where, at, far = on_line
        place = ("at the analyzer end: the jumper or connectors there, or the analyzer's calibration"
                 if where == "analyzer end" else "part-way along the line: a joint, a splice, water or damage there")
        return {"code": "line", "text": f"looks like the line at {at}: the look along the line puts the start of the "
                                        f"change there, well before the far end at {far}, {place}. What lies beyond "
                                        "that point, the antenna included, is seen through it, so whether the antenna "
                                        "changed too can be told only once the line is put right"}
    return {"code": "antenna", "text": "looks like the antenna (or its connection at the feedpoint): the change is "
                                       "not what any change of the line's loss or length would do"}


__all__ = ["FAR_END_MARGIN_RESOLUTIONS", "Aligned", "Cause", "Comparison", "Verdict", "align", "change_part_way", "check_feedpoint", "compare_corrections",
           "diagnose", "feedpoint_noise", "fit_line_change", "fitted_resonance"]
