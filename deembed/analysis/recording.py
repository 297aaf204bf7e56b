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
  It is recorded whatever the comparison's cause; when the cause is not the line alone (``antenna``,
  ``unclear``) the method says that the fit may carry part of the antenna's change, and its per-run
  interval is widened by the fit's misfit (below), so such a run weighs little in the loss trend.
- for a comparison: ``resonance_shift_hz``, ``min_swr_change``, ``largest_gamma_change`` (feedpoint).

Two intervals per value
-----------------------
``low``/``high``, the recorded interval: where the findings carry an uncertainty interval (the end's
``uncertainty`` block from the Monte Carlo step: ``resonance_hz``, ``resonances_hz``, ``min_swr``,
``min_swr_freq_hz``, ``swr_spans_hz``, ``q``; a comparison's ``resonance_shift_interval_hz`` and
``min_swr_change_interval``), re-scaled to 95 % coverage (normal errors assumed) when it was made for
another, so every stored interval means the same. It holds every source: the line description's
tolerance, the calibration kit's residuals and the analyzer's noise.

``run_low``/``run_high``, the per-run interval (95 %): only what differs from one run of the same feed to
the next. The line description's tolerance is the same in every run through that description, and the
calibration kit's residual errors are taken as the same at every calibration (the choice ``compare`` makes
for its paired draws); both shift every run alike and cannot move a trend, so they are left out and what
remains is the analyzer's noise. For the findings it comes from a second Monte Carlo run
(:func:`run_intervals`, JCGM 101:2008) with the line held at its description and no calibration error,
the same draws, seed and local models otherwise. A characterized line's estimated error between its
measured points and its own measurement scatter are still drawn there (the Monte Carlo step draws them from
the line itself; they are common to every run through that characterization too, so this per-run interval is
wider than it need be for such a line). The trend fits weigh each run by it (:mod:`deembed.analysis.trend`).

The line's loss (:func:`line_loss_values`): the recorded interval draws the description's own tolerance
(the Monte Carlo step's line draws, the same seed) and, for a fitted change, adds the fit's standard
uncertainty. Its per-run standard uncertainty is how far the sweep's own noise moves a loss reading: the
fitted change's coefficient c (Gamma_after = Gamma_before exp(-2 c sqrt f) ...) is an unweighted least-squares
estimate, whose variance with independent noise of variance s_i^2 on each of the real and imaginary parts
at each frequency is sum J_i^2 s_i^2 / (sum J_i^2)^2 with J_i^2 = 4 f_i |Gamma_i|^2 (linearised least
squares, Bevington & Robinson 3rd ed. ch. 8, from memory; s_i = the feedpoint noise / sqrt 2). Every run,
the baseline too, carries its own noise into the fitted changes, so every run gets that figure from its own
sweep. For a fitted run the figure is multiplied by sqrt(max(1, chi2_fit)), chi2_fit being the fit's mean
squared residual over what the two sweeps' noise alone would leave: a change the line model does not
explain (the antenna changed) widens it.
"""
from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

from ..io.history import Value
from ..physics.line import DB_PER_NP
from .compare import fitted_resonance
from .trust import assess, line_terms
from .uncertainty import CAL_PRESETS, LineDraws, draw_line, end_block, feedpoint_gain, run as mc_run, seeds


def _num(x):
    if x is None:
        return None
    try:
        x = float(x)
    except (TypeError, ValueError):
        return None
    return x if math.isfinite(x) else None


Z95 = 1.959963984540054

LOSS_SPAWN_KEY = 23
"""The fitted loss change's normal draws come from their own stream (SeedSequence child 23 of the seed)."""


def _pair(iv):
    if isinstance(iv, Mapping):
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


def _v(quantity, value, unit, method="", idx=0, iv=None, coverage=None, run_iv=None, run_coverage=None):
    lo, hi = _pair(iv)
    value = _num(value)
    lo, hi = _as_95(value, lo, hi, coverage)
    rlo, rhi = _pair(run_iv)
    rlo, rhi = _as_95(value, rlo, rhi, run_coverage)
    return Value(quantity, value, lo, hi, unit, method, idx, rlo, rhi)


def _u(block: dict | None, *path):
    """``block[path[0]][path[1]]...`` or None (the findings' ``uncertainty`` block, where present)."""
    cur = block
    for k in path:
        if isinstance(cur, Mapping):  # a plain block or a typed result (deembed.base.results.Result)
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


# ------------------------------------------------------------------------------ the per-run intervals

def settings_of(summary: dict | None, comparison: dict | None = None) -> dict | None:
    """``{"draws", "seed", "coverage"}`` of the Monte Carlo step behind a summary (or a comparison), or None
    when there was none (no intervals were asked for)."""
    for block in (_u(summary, "feedpoint", "uncertainty"), _u(comparison, "uncertainty")):
        if isinstance(block, Mapping) and block.get("draws"):
            return {"draws": int(block["draws"]), "seed": int(block.get("seed", 1)),
                    "coverage": float(block.get("coverage", 0.95))}
    return None


def fixed_line_draws(line, n: int) -> LineDraws:
    """``n`` identical draws of ``line`` as described: every section at its nominal Z0, delay and loss."""
    params = []
    for part in line.parts:
        if part.kind != "section":
            params.append(None)
            continue
        params.append({"z0": np.full((n, 1), float(part.z0_ohm)), "delay": np.full((n, 1), float(part.delay_s)),
                       "c": np.full((n, 1), float(part.loss.c_np)), "d": np.full((n, 1), float(part.loss.d_np))})
    return LineDraws(line, params, [], n)


def _thresholds(summary: dict) -> tuple:
    keys = summary["feedpoint"]["swr_spans_hz"]
    try:
        th = tuple(sorted(float(k) for k in keys))
    except ValueError:
        th = ()
    return th or (1.5, 2.0, 3.0)


def run_intervals(corr, summary: dict, settings: dict | None) -> dict | None:
    """The per-run intervals of the feedpoint findings (an ``uncertainty`` block of the same shape as the
    summary's), from the Monte Carlo step with the line held at its description and no calibration error:
    the analyzer's noise alone (see the module notes). None without settings or with fewer than 7 points."""
    if settings is None or corr.freq_hz.size < 7:
        return None
    n = settings["draws"]
    a = assess(corr.freq_hz, corr.gamma_analyzer, corr.gamma_feedpoint, corr.line, thresholds=_thresholds(summary),
               settings=None)
    mc = mc_run(corr.freq_hz, corr.gamma_analyzer, corr.line, a.events_fp, a.events_an, noise_rms=a.noise_rms,
                calibration=CAL_PRESETS["none"], n_draws=n, seed=settings["seed"], coverage=settings["coverage"],
                line_draws=fixed_line_draws(corr.line, n), band=False)
    return end_block(mc.feedpoint, a.events_fp.nominal or {}, coverage=mc.coverage, n_draws=n, seed=mc.seed)


def loss_noise_sd_db(corr, noise_rms: float, fc: float) -> float | None:
    """Standard uncertainty (dB, at ``fc``) that this sweep's own noise gives a loss reading through its line
    (see the module notes: the unweighted least-squares variance of c, in dB at the band centre)."""
    f = np.asarray(corr.freq_hz, float)
    g = np.asarray(corr.gamma_feedpoint, complex)
    if not (noise_rms and math.isfinite(noise_rms)) or f.size < 2:
        return None
    _, s21s12, s22 = line_terms(corr.line, f)
    gain = feedpoint_gain(s21s12, s22, g)
    with np.errstate(divide="ignore", invalid="ignore"):
        s2 = (noise_rms / gain) ** 2 / 2          # per component, at the feedpoint
    j2 = 4 * f * np.abs(g) ** 2
    ok = np.isfinite(s2) & np.isfinite(j2)
    den = float(np.sum(j2[ok]))
    if not den > 0:
        return None
    var_c = float(np.sum(j2[ok] * s2[ok])) / den ** 2
    return DB_PER_NP * math.sqrt(fc) * math.sqrt(var_c)


def fit_chi2(corr, fitted: dict, noise_after: float, noise_before: float | None) -> float | None:
    """The line-change fit's mean squared residual over what both sweeps' noise alone would leave."""
    rms = _num(fitted.get("rms_residual"))
    if rms is None or not noise_after:
        return None
    f = np.asarray(corr.freq_hz, float)
    _, s21s12, s22 = line_terms(corr.line, f)
    gain = feedpoint_gain(s21s12, s22, np.asarray(corr.gamma_feedpoint, complex))
    ratio = (noise_before / noise_after) if noise_before else 1.0
    with np.errstate(divide="ignore", invalid="ignore"):
        expected = (noise_after / gain) ** 2 * (1 + ratio ** 2)   # E|r|^2 per frequency, complex
    expected = expected[np.isfinite(expected)]
    if not expected.size or not float(np.mean(expected)) > 0:
        return None
    return rms ** 2 / float(np.mean(expected))


def description_loss_draws(line, fc: float, settings: dict) -> np.ndarray | None:
    """Draws of the line's one-way matched loss at ``fc`` from its description's tolerance (the Monte Carlo
    step's line draws, same seed), or None when no section's loss has a tolerance."""
    n = settings["draws"]
    ld = draw_line(line, n, seeds(settings["seed"])[0])
    extra = np.zeros(n)
    varied = False
    sf = math.sqrt(fc)
    for part, p in zip(line.parts, ld.params):
        if p is None:
            continue
        nominal = part.loss.c_np * sf + part.loss.d_np * fc
        if nominal <= 0:
            continue
        ratio = (p["c"][:, 0] * sf + p["d"][:, 0] * fc) / nominal
        if np.ptp(ratio) > 0:
            varied = True
        extra += float(part.matched_loss_db(np.array([fc]))[0]) * (ratio - 1)
    return extra if varied else None


def line_loss_values(corr, summary: dict, comparison: dict | None, settings: dict | None) -> list:
    """``line_loss_db`` (value, recorded interval, per-run interval) and ``line_loss_freq_hz``."""
    fc, loss = line_loss_at_centre(corr)
    method = "the line's description at the band centre"
    fit_sd = None
    chi2 = None
    noise = _num(_u(summary, "sweep", "noise_gamma_rms"))
    if comparison is not None:
        ln = comparison["line"]
        fit = ln["fitted_change"] or {}  # None with a line of its own for each sweep
        c = _num(fit.get("c_np_per_sqrt_hz"))
        if ln.get("same_line") and c is not None:
            code = comparison["cause"]["code"]
            loss = loss + DB_PER_NP * c * math.sqrt(fc)
            method = "the line's description plus the change fitted against the baseline, at the band centre"
            if code not in ("line", "unchanged"):
                method += (f" (the comparison's cause is {code}: the fitted change may carry part of the antenna's "
                           "change)")
            unc = comparison["uncertainty"] or {}  # None without draws
            na = _num(unc.get("noise_gamma_rms_after")) or noise
            nb = _num(unc.get("noise_gamma_rms_before"))
            chi2 = fit_chi2(corr, fit, na, nb) if na else None
            own = loss_noise_sd_db(corr, na, fc) if na else None
            if own is not None:
                base = own * (nb / na) if nb and na else own      # the baseline's noise, through the same line
                fit_sd = math.hypot(own, base) * math.sqrt(max(1.0, chi2 or 1.0))
        elif not ln.get("same_line"):
            method = "the fresh line file at the band centre"
    iv, run_iv = None, None
    if settings is not None:
        sd_run = loss_noise_sd_db(corr, noise, fc) if noise else None
        if sd_run is not None and chi2 is not None:
            sd_run *= math.sqrt(max(1.0, chi2))
        if sd_run is not None:
            run_iv = (loss - Z95 * sd_run, loss + Z95 * sd_run)
        draws = description_loss_draws(corr.line, fc, settings)
        if fit_sd is not None:
            rng = np.random.default_rng(np.random.SeedSequence(settings["seed"], spawn_key=(LOSS_SPAWN_KEY,)))
            fit_draws = fit_sd * rng.standard_normal(settings["draws"])
            draws = fit_draws if draws is None else draws + fit_draws
        if draws is not None:
            lo, hi = np.quantile(loss + draws, [0.025, 0.975])
            iv = (float(lo), float(hi))
    return [_v("line_loss_db", loss, "dB", method, iv=iv, run_iv=run_iv),
            _v("line_loss_freq_hz", fc, "Hz", "middle of the sweep")]


# ------------------------------------------------------------------------------------------ the values

def sweep_values(corr, summary: dict, comparison: dict | None = None, settings: dict | None = None) -> tuple:
    """The values to record for one corrected sweep (see the module notes).

    ``settings`` (``{"draws", "seed", "coverage"}``) are the Monte Carlo settings for the per-run intervals
    and the line loss's interval; by default those behind the summary or the comparison
    (:func:`settings_of`), none when neither had any (then no intervals are recorded)."""

    fp = summary["feedpoint"]
    u = fp.get("uncertainty") or {}  # OPTIONAL: none without phase, None without draws
    cov = u.get("coverage")
    settings = settings if settings is not None else settings_of(summary, comparison)
    r = run_intervals(corr, summary, settings) or {}
    rcov = r.get("coverage")
    out = []
    res, how = _num(fp.get("resonance_hz")), "findings (the resonance nearest the lowest SWR)"
    near = fp["min_swr"]["freq_hz"]
    run_res = r.get("resonance_hz")
    if res is None and near is not None:
        res = fitted_resonance(corr.freq_hz, corr.gamma_feedpoint, near)
        how = "quadratic fit of X(f) near the lowest SWR"
        lo, hi = _pair(run_res)
        if lo is not None and _num(res) is not None:  # the draws place it by the local model: same width, about
            run_res = (res - (hi - lo) / 2, res + (hi - lo) / 2)  # this value
    out.append(_v("resonance_hz", res, "Hz", how, iv=u.get("resonance_hz"), coverage=cov,
                  run_iv=run_res, run_coverage=rcov))
    for i, x in enumerate(fp.get("resonances_hz") or []):
        out.append(_v("resonances_hz", x, "Hz", "findings", idx=i, iv=_u(u, "resonances_hz", i), coverage=cov,
                      run_iv=_u(r, "resonances_hz", i), run_coverage=rcov))
    ms = fp["min_swr"]
    out.append(_v("min_swr", ms.get("swr"), "", "findings", iv=u.get("min_swr"), coverage=cov,
                  run_iv=r.get("min_swr"), run_coverage=rcov))
    out.append(_v("min_swr_freq_hz", ms.get("freq_hz"), "Hz", "findings", iv=u.get("min_swr_freq_hz"),
                  coverage=cov, run_iv=r.get("min_swr_freq_hz"), run_coverage=rcov))
    for k, lst in fp["swr_spans_hz"].items():
        for i, (lo, hi) in enumerate(lst):
            out.append(_v(f"swr_span_{k}_low_hz", lo, "Hz", "findings", idx=i,
                          iv=_u(u, "swr_spans_hz", k, i, 0), coverage=cov,
                          run_iv=_u(r, "swr_spans_hz", k, i, 0), run_coverage=rcov))
            out.append(_v(f"swr_span_{k}_high_hz", hi, "Hz", "findings", idx=i,
                          iv=_u(u, "swr_spans_hz", k, i, 1), coverage=cov,
                          run_iv=_u(r, "swr_spans_hz", k, i, 1), run_coverage=rcov))
    out.append(_v("q", fp.get("q"), "", "from the impedance (Yaghjian-Best)", iv=u.get("q"), coverage=cov,
                  run_iv=r.get("q"), run_coverage=rcov))
    out.append(_v("q_from_span", fp.get("q_from_span"), "", "from the 2:1 span", iv=u.get("q_from_span"),
                  coverage=cov))
    if comparison is not None:
        ccov = _u(comparison, "uncertainty", "coverage")
        out.append(_v("resonance_shift_hz", comparison.get("resonance_shift_hz"), "Hz", "against the baseline",
                      iv=comparison.get("resonance_shift_interval_hz"), coverage=ccov))
        out.append(_v("min_swr_change", comparison.get("min_swr_change"), "", "against the baseline",
                      iv=comparison.get("min_swr_change_interval"), coverage=ccov))
        out.append(_v("largest_gamma_change", comparison.get("largest_gamma_change_feedpoint"), "",
                      "against the baseline"))
    out.extend(line_loss_values(corr, summary, comparison, settings))
    return tuple(v for v in out if v.value is not None)


def verdict_of(comparison: dict | None):
    """(verdict status, cause code, cause text) of a comparison, or three None."""
    if comparison is None:
        return None, None, None
    return comparison["verdict"]["status"], comparison["cause"]["code"], comparison["cause"]["text"]


__all__ = ["band_centre_hz", "description_loss_draws", "fit_chi2", "fixed_line_draws", "line_loss_at_centre",
           "line_loss_values", "loss_noise_sd_db", "run_intervals", "settings_of", "sweep_values", "verdict_of"]
