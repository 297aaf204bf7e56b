"""Findings of a correction with their uncertainty: the one place where noise, events and draws meet.

:func:`assess` takes a sweep at the analyzer end, its de-embedded feedpoint trace and the line, and returns
an :class:`Assessment`: the sweep's noise (estimated from the data), the events of both ends placed by
local models (:mod:`deembed.analysis.smooth`), their findings, and, unless switched off, the Monte Carlo
draws and the ``uncertainty`` blocks (:mod:`deembed.analysis.uncertainty`). Every command that reports
findings (correct, compare, site) goes through here, so the same sweep through the same line gives the
same findings everywhere.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .smooth import EventSet, find_events, noise_rms
from .uncertainty import (CAL_PRESETS, DEFAULT_COVERAGE, DEFAULT_DRAWS, DEFAULT_SEED, Calibration, LineDraws, McResult,
                          end_block, feedpoint_gain, is_section, run, section_tolerance)


@dataclass(frozen=True)
class UncertaintySettings:
    """How the uncertainty is worked out.

    Attributes
    ----------
    draws : int
        Monte Carlo draws (0 switches the uncertainty off).
    seed : int
        Seed of the random generator (same seed, same intervals).
    coverage : float
        Coverage probability of the intervals.
    calibration : Calibration
        Bounds of the analyzer's residual calibration error (:data:`CAL_PRESETS`).
    """

    draws: int = DEFAULT_DRAWS
    seed: int = DEFAULT_SEED
    coverage: float = DEFAULT_COVERAGE
    calibration: Calibration = CAL_PRESETS["hobby"]


@dataclass
class Assessment:
    """What :func:`assess` found (see the module notes)."""

    noise_rms: float
    events_fp: EventSet
    events_an: EventSet
    mc: McResult | None = None
    settings: UncertaintySettings | None = None
    notes: list = field(default_factory=list)

    @property
    def swr_band(self):
        return None if self.mc is None else self.mc.swr_band


def line_terms(line, freq_hz):
    """(S11, S21 S12, S22) of the line at the sweep's frequencies."""
    s = line.s_params(freq_hz)
    return s[:, 0, 0], s[:, 1, 0] * s[:, 0, 1], s[:, 1, 1]


def assess(freq_hz, gamma_an, gamma_fp, line, *, thresholds=(1.5, 2.0, 3.0),
           settings: UncertaintySettings | None = UncertaintySettings(), line_draws: LineDraws | None = None,
           terms=None, noise_key: int = 0) -> Assessment:
    """Noise, events and (optionally) Monte Carlo draws for one corrected sweep.

    Parameters
    ----------
    freq_hz, gamma_an, gamma_fp : ndarray (n,)
        Frequencies, the analyzer-end sweep and its de-embedded feedpoint trace.
    line : Line
        The line removed.
    thresholds : sequence of float
        SWR levels of the spans.
    settings : UncertaintySettings or None
        None (or 0 draws): findings only.
    line_draws : LineDraws, optional
        Shared line draws (compare).
    terms : tuple, optional
        The line's (S11, S21 S12, S22) at ``freq_hz`` when already known.
    noise_key : int
        Another noise stream with the same line and calibration draws (:func:`deembed.analysis.uncertainty.run`).
    """
    f = np.asarray(freq_hz, dtype=float)
    g_an = np.asarray(gamma_an, dtype=complex)
    g_fp = np.asarray(gamma_fp, dtype=complex)
    s11, s21s12, s22 = terms if terms is not None else line_terms(line, f)
    gain = feedpoint_gain(s21s12, s22, g_fp)
    noise = noise_rms(f, g_fp, gain=gain)
    with np.errstate(divide="ignore", invalid="ignore"):
        sigma_fp = np.where(gain > 0, noise / gain, np.inf)
    events_fp = find_events(f, g_fp, sigma=sigma_fp, thresholds=thresholds, noise_gamma_rms=noise)
    events_an = find_events(f, g_an, sigma=noise, thresholds=thresholds, noise_gamma_rms=noise)
    events_fp.findings(gamma=g_fp)
    events_an.findings(gamma=g_an)
    out = Assessment(noise, events_fp, events_an, settings=settings)
    if settings is not None and settings.draws > 0 and f.size >= 7:
        out.mc = run(f, g_an, line, events_fp, events_an, noise_rms=noise, calibration=settings.calibration,
                     n_draws=settings.draws, seed=settings.seed, coverage=settings.coverage, line_draws=line_draws,
                     noise_key=noise_key)
        out.notes += out.mc.notes
    return out


def uncertainty_blocks(a: Assessment, line, sources: dict | None = None) -> dict:
    """``{"feedpoint": block, "analyzer": block}`` for the summary (empty without draws)."""
    if a.mc is None:
        return {}
    mc = a.mc

    def ml(fr):
        try:
            return float(np.asarray(line.matched_loss_db(np.array([fr])), dtype=float).reshape(-1)[0])
        except Exception:  # a measured 2-port known only on its own points
            return math.nan

    fp = end_block(mc.feedpoint, a.events_fp.nominal or {}, coverage=mc.coverage, n_draws=mc.n, seed=mc.seed,
                   matched_loss_db=ml, sources=sources)
    an = end_block(mc.analyzer, a.events_an.nominal or {}, coverage=mc.coverage, n_draws=mc.n, seed=mc.seed)
    return {"feedpoint": fp, "analyzer": an}


def resonance_draws(a: Assessment, j: int):
    """Monte Carlo draws of the j-th reported feedpoint resonance (None without draws)."""
    if a.mc is None:
        return None
    kept = a.events_fp.kept_resonances()
    if not 0 <= j < len(kept):
        return None
    return a.mc.feedpoint.values.get(f"res_hz_{kept[j]}")


def sources_record(a: Assessment, line) -> dict:
    """What went into the uncertainty: the noise, the calibration, each section's tolerances and their sources."""
    mc = a.mc
    secs = []
    for k, part in enumerate(line.parts, 1):
        if not is_section(part):
            if part.kind == "characterized":
                secs.append({"section": k, "characterized": "as measured on its own points; between them the "
                             "estimated error of the interpolation or model used there, one offset per draw "
                             "uniform on a disc of that radius; its own measurement scatter (RMS, carried to the "
                             "feedpoint) as Gaussian offsets independent from one characterized point to the "
                             "next, where its measured points are used (the fitted model averages it out)"})
            else:
                secs.append({"section": k, "fixed": "a measured 2-port: taken as exact"})
            continue
        t = section_tolerance(part)
        row = {"section": k, "distribution": t.distribution}
        for name, val, key in (("length_m", t.length_m, "length"), ("vf", t.vf, "vf"), ("delay_s", t.delay_s, "delay"),
                               ("loss_fraction", t.loss_fraction, "loss"), ("z0_ohm", t.z0_ohm, "z0")):
            if val:
                row[name] = val
                row[f"{key}_source"] = t.source(key)
        secs.append(row)
    return {
        "noise_gamma_rms": a.noise_rms,
        "noise_source": "estimated from the sweep (difference-based pseudo-residuals)",
        "calibration": {"preset": mc.calibration.name, "directivity": mc.calibration.directivity,
                        "tracking": mc.calibration.tracking, "source_match": mc.calibration.source_match,
                        "source": mc.calibration.source},
        "line": secs,
    }


__all__ = ["Assessment", "UncertaintySettings", "assess", "line_terms", "resonance_draws", "sources_record",
           "uncertainty_blocks"]
