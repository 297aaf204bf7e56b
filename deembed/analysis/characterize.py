"""Characterize a feed line from reflections measured at its analyzer end with standards at its far end.

Three ways in, by what was measured at the far end:

* **open, short and load**: the three-term one-port error model (directivity e00, source match e11,
  reflection tracking e10e01) solved per frequency, then read as the reciprocal 2-port of the whole run,
  connectors, adapters and mixed-impedance sections included (:func:`osl_error_terms`,
  :func:`error_terms_to_two_port`);
* **open and short**: a uniform line, Zc = sqrt(Zoc Zsc), tanh(gamma l) = Zsc / Zc (:func:`open_short_line`);
* **open alone or short alone**: the physical line model fitted by least squares (:func:`fit_line_model`).

Every method also fits the physical model (a :class:`~deembed.line.Section`: nominal Z0, one-way delay,
matched loss c*sqrt(f) + d*f) so the line can be evaluated at frequencies other than the measured ones
without interpolating raw complex values across many phase turns (:class:`CharacterizedLine`).

Conventions: reflections at 50 ohm; port 1 of every 2-port at the analyzer, port 2 at the far end;
frequency is the first axis; everything vectorised over frequency.

References
----------
D. Rytting, "Network Analyzer Error Models and Calibration Methods", seminar notes (the three-term model).
D. M. Pozar, *Microwave Engineering* 4th ed. (Wiley 2012), sec. 2.1, 2.7 (lossy lines).
S. W. Ellingson, *Electromagnetics Vol. 1* (VT Publishing 2018), "Measurement of transmission line
characteristics" (line from open- and short-circuit impedances).
F. Witt, "Measuring Cable Loss", *QEX* May/Jun 2005, p. 44 (matched loss from open/short return loss).
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ..base.errors import CharacterizationError, OptionError
from ..physics.grid import inside
from ..physics.calibration import (error_terms_to_two_port, matched_loss_from_return_loss,
                                   open_short_line, osl_error_terms, standard_gammas, uniform_two_port)
from ..base.units import fmt_freq
from ..physics.between import FEEDPOINT_ERROR_WARN, GRID_MARGIN
from ..physics.deembedding import embed_gamma
from ..physics.line import C0_M_PER_S, DB_PER_NP, M_PER_100FT, Line, LossModel, Section, abcd_to_s
from ..physics.rf import Z_REF_OHM, z_from_gamma
from ..io.charfile import CharacterizedLine

METHODS = ("open-short-load", "open-short", "open", "short")

CATALOG_FLAG_RATIO = 1.5
"""Measured loss above this multiple of the catalog figure is flagged (wet, crushed or aged cable).

Decision: the catalog's figures are nominal to about +/-15-25 %; 1.5x is well outside that band, so a
flag means something is wrong with the run rather than with the catalog (common practice, no source).
"""

MAX_SINGLE_RESIDUAL = 0.05
"""Largest RMS misfit in reflection (linear units) accepted for a one-standard fit."""


# --------------------------------------------------------------------------------------------------
# The physical model, fitted
# --------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class ModelFit:
    """A physical line model fitted to measured data.

    Attributes
    ----------
    section : Section
        The fitted uniform section (Z0, one-way delay, loss c*sqrt(f) + d*f).
    rms_residual, max_residual : float
        RMS and largest misfit of the fitted quantities (linear reflection / S-parameter units).
    n_points : int
    z0_fitted : bool
        Whether Z0 was fitted (else it is the nominal value given).
    """

    section: Section
    rms_residual: float
    max_residual: float
    n_points: int
    z0_fitted: bool


def _initial_guess(freq_hz, q):
    """Delay and loss from a round-trip quantity q ~ exp(-2 gamma l) (S21 S12, or Gamma_in/Gamma_L)."""
    f = np.asarray(freq_hz, dtype=float)
    phase = np.unwrap(np.angle(q))
    slope = np.polyfit(f, phase, 1)[0]
    tau = -slope / (4 * np.pi)
    from scipy.optimize import nnls

    a_np = -np.log(np.maximum(np.abs(q), 1e-12)) / 2
    cd, _ = nnls(np.column_stack([np.sqrt(f), f]), a_np)
    return tau, float(cd[0]), float(cd[1])


FIT_POINTS = 2000
"""Most frequencies the line-model fit iterates on; the misfit is then checked on every point."""


def _fit_subset(f, tau0: float):
    """Indices of an evenly spread subset of the sweep for the fit (None: use every point).

    At least :data:`FIT_POINTS`, and enough that the round-trip phase of a line of delay ``tau0`` turns less
    than a quarter turn between neighbouring points (a step below 1/(8 tau0)), so the subset cannot alias
    the delay the full sweep resolves."""
    n = f.size
    need = int(math.ceil((float(f.max()) - float(f.min())) * 8.0 * tau0 * 1.1)) + 2  # 10 % margin for rounding
    m = max(FIT_POINTS, need)
    if m >= n:
        return None
    return np.unique(np.linspace(0, n - 1, m).round().astype(np.int64))


def _uniform_line_jac(f, tau, c, d, z0, z_ref=Z_REF_OHM):
    """S11 (= S22) and S21*S12 of a uniform RLGC line, and their derivatives with respect to (tau, c, d, z0).

    With A = 2c sqrt(f) + j w tau (= Z'l/z0) and B = 2 d f + j w tau (= z0 Y'l), gl = sqrt(A B) and
    Zc = z0 A/gl (:class:`~deembed.physics.line.Section`, Pozar 4th ed. sec. 2.1); rho = (Zc - z_ref)/(Zc + z_ref),
    E = exp(-2 gl), D = 1 - rho^2 E: S11 = rho (1 - E)/D and S21 S12 = E (1 - rho^2)^2/D^2
    (:meth:`~deembed.physics.line.Section.deembed_terms`). The derivatives follow by the chain rule:
    dS11/drho = (1 - E)(1 + rho^2 E)/D^2, dS11/dE = rho (rho^2 - 1)/D^2, dT/dE = (1 - rho^2)^2 (1 + rho^2 E)/D^3,
    dT/drho = 4 rho E (1 - rho^2)(E - 1)/D^3, drho/dZc = 2 z_ref/(Zc + z_ref)^2, dE/dgl = -2E.
    Needs f > 0. Returns (s11, t, ds11 (4, n), dt (4, n)).
    """
    w = 2 * np.pi * f
    sq = np.sqrt(f)
    a = 2 * c * sq + 1j * w * tau
    b = 2 * d * f + 1j * w * tau
    gl = np.sqrt(a * b)
    zc = z0 * a / gl
    da = np.array([1j * w, 2 * sq + 0j, np.zeros_like(f, dtype=complex)])  # d/d(tau, c, d)
    db = np.array([1j * w, np.zeros_like(f, dtype=complex), 2 * f + 0j])
    dgl = (da * b + a * db) / (2 * gl)
    dzc = np.empty((4, f.size), dtype=complex)
    dzc[:3] = z0 * (da * gl - a * dgl) / gl ** 2
    dzc[3] = a / gl
    dgl4 = np.vstack([dgl, np.zeros((1, f.size), dtype=complex)])  # gl does not depend on z0
    rho = (zc - z_ref) / (zc + z_ref)
    e = np.exp(-2 * gl)
    r2 = rho * rho
    den = 1 - r2 * e
    k = 1 - r2
    s11 = rho * (1 - e) / den
    t = e * k * k / (den * den)
    drho = dzc * (2 * z_ref / (zc + z_ref) ** 2)
    de = -2 * e * dgl4
    ds11 = ((1 - e) * (1 + r2 * e) / den ** 2) * drho + (rho * (r2 - 1) / den ** 2) * de
    dt = (k * k * (1 + r2 * e) / den ** 3) * de + (4 * rho * e * k * (e - 1) / den ** 3) * drho
    return s11, t, ds11, dt


def fit_line_model(freq_hz, *, s=None, gamma_in=None, gamma_load=None, z0_ohm=Z_REF_OHM, fit_z0=False,
                   max_residual=None, max_nfev=200, label="fitted line") -> ModelFit:
    """Fit a uniform line (delay, conductor and dielectric loss, optionally Z0) by least squares.

    Give either ``s`` (n, 2, 2), a measured 2-port of the run, or ``gamma_in`` (n,) measured with a known
    termination ``gamma_load`` (+1 for an ideal open, -1 for an ideal short) at the far end.

    Parameters
    ----------
    freq_hz : array_like (n,)
        Frequencies, Hz (at least 5).
    z0_ohm : float
        Nominal characteristic impedance, ohm (fixed unless ``fit_z0``).
    max_residual : float, optional
        Refuse a fit whose RMS misfit is above this (linear units).
    max_nfev : int
        Most model evaluations allowed; a fit that needs more is refused as not converged.

    Returns
    -------
    ModelFit

    Raises
    ------
    CharacterizationError
        When the data do not look like a line, the fit does not converge, or its misfit is above
        ``max_residual``; the message says why and what to do.

    Notes
    -----
    The model is :class:`~deembed.line.Section` (RLGC with R ~ sqrt(f), G ~ f; Pozar 4th ed. sec. 2.1, 2.7),
    evaluated as S at 50 ohm. For a 2-port the residuals are S11, S22 and S21*S12 (the product is free of
    the sign ambiguity of S21); for one standard, Gamma_in = S11 + S21 S12 G_L/(1 - S22 G_L).
    Initial guess: Gamma_in ~ G_L exp(-2 gamma l), so the unwrapped phase falls as -4 pi f tau and
    |Gamma_in| = exp(-2 A(f)); the loss is fitted by non-negative least squares on [sqrt(f), f].
    Solved with ``scipy.optimize.least_squares`` (trust-region reflective, bounds keep delay and loss >= 0),
    iterating on an evenly spread subset of at most :data:`FIT_POINTS` frequencies (more if the delay needs
    them, see :func:`_fit_subset`) with the analytic Jacobian of :func:`_uniform_line_jac`; the reported misfit
    and the refusal test use every point.
    """
    from scipy.optimize import least_squares

    f = np.asarray(freq_hz, dtype=float)
    n = f.size
    if n < 5:
        raise CharacterizationError(f"a line model needs at least 5 frequencies to fit; the sweep has {n}. "
                                    "Sweep the line over more points")
    if s is not None:
        s = np.asarray(s, dtype=complex)
        meas = np.concatenate([s[:, 0, 0], s[:, 1, 1], s[:, 1, 0] * s[:, 0, 1]])
        q = s[:, 1, 0] * s[:, 0, 1]
    else:
        g_in = np.asarray(gamma_in, dtype=complex)
        g_l = np.broadcast_to(np.asarray(gamma_load, dtype=complex), g_in.shape)
        meas = g_in
        q = g_in / g_l
    tau0, c0, d0 = _initial_guess(f, q)
    if not tau0 > 0:
        raise CharacterizationError("the measured phase does not fall with frequency as a line's does; check "
                                    "that the file is the line with the standard at its far end, and that the "
                                    "sweep's points are close enough (well under half a turn of round-trip "
                                    "phase apart: a step below 1/(4 x delay))")
    f_top = float(f.max())
    scale = np.array([tau0, 1.0, 1.0, z0_ohm])

    def unpack(x):
        tau = x[0] * scale[0]
        c = x[1] / math.sqrt(f_top)
        d = x[2] / f_top
        z0 = x[3] * scale[3] if fit_z0 else z0_ohm
        return Section(float(z0), float(tau), LossModel(float(c), float(d)), label=label)

    def model(x):
        sm = abcd_to_s(unpack(x).abcd(f))
        if s is not None:
            return np.concatenate([sm[:, 0, 0], sm[:, 1, 1], sm[:, 1, 0] * sm[:, 0, 1]])
        return embed_gamma(g_l, sm)

    def resid(x):
        r = model(x) - meas
        return np.concatenate([r.real, r.imag])

    x0 = np.array([1.0, c0 * math.sqrt(f_top), d0 * f_top, 1.0])
    lo = np.array([1e-6, 0.0, 0.0, 0.05])
    hi = np.array([np.inf, np.inf, np.inf, 20.0])
    npar = 4 if fit_z0 else 3
    x0, lo, hi = x0[:npar], lo[:npar], hi[:npar]
    x0 = np.clip(x0, lo, np.where(np.isfinite(hi), hi, x0 + 1))
    # the fit iterates on an evenly spread subset with the analytic Jacobian; the misfit is checked on all points
    if np.all(f > 0):
        sub = _fit_subset(f, tau0)
        fs = f if sub is None else f[sub]
        if s is not None:
            ms = meas.reshape(3, n)[:, sub].ravel() if sub is not None else meas
        else:
            ms = meas if sub is None else meas[sub]
            gls = g_l if sub is None else g_l[sub]
        dpar = np.array([scale[0], 1 / math.sqrt(f_top), 1 / f_top, scale[3]])  # d(tau, c, d, z0)/dx

        def terms(x):
            xx = np.append(x, 1.0) if npar == 3 else x
            return _uniform_line_jac(fs, xx[0] * scale[0], xx[1] / math.sqrt(f_top), xx[2] / f_top,
                                     xx[3] * scale[3] if fit_z0 else z0_ohm)

        def model_jac(x):
            s11, t, ds11, dt = terms(x)
            ds11, dt = ds11[:npar] * dpar[:npar, None], dt[:npar] * dpar[:npar, None]
            if s is not None:
                return np.concatenate([s11, s11, t]), np.concatenate([ds11, ds11, dt], axis=1)
            den = 1 - s11 * gls
            return s11 + t * gls / den, ds11 * (1 + t * gls * gls / den ** 2) + dt * (gls / den)

        def fun(x):
            r = model_jac(x)[0] - ms
            return np.concatenate([r.real, r.imag])

        def jac(x):
            dm = model_jac(x)[1]
            return np.concatenate([dm.real, dm.imag], axis=1).T
    else:  # a 0 Hz point: the closed form's derivatives are 0/0 there; finite differences on every point
        def fun(x):
            return resid(np.append(x, 1.0) if npar == 3 else x)

        jac = "2-point"
    with np.errstate(all="ignore"):
        res = least_squares(fun, x0, jac=jac, bounds=(lo, hi), method="trf", x_scale="jac", xtol=1e-14,
                            ftol=1e-14, gtol=1e-14, max_nfev=max_nfev)
    if res.status <= 0 or not np.all(np.isfinite(res.x)):
        raise CharacterizationError(f"the line-model fit did not converge ({res.message.rstrip('.')}); "
                                    "check that the files are the standards at the line's far end, or measure "
                                    "open, short and load for a model-free characterization")
    x = res.x if fit_z0 else np.append(res.x, 1.0)
    sec = unpack(x)
    r = model(x) - meas
    rms = float(np.sqrt(np.mean(np.abs(r) ** 2)))
    worst = float(np.max(np.abs(r)))
    if max_residual is not None and rms > max_residual:
        raise CharacterizationError(
            f"the best line-model fit leaves an RMS misfit of {rms:.3g} in reflection (more than {max_residual:g}): "
            "the run does not behave as one uniform line of the given Z0 (adapters, mixed-impedance sections, a "
            "fault), or the file is not the standard at its far end. Measure open and short (or open, short and "
            "load) to characterize it without a model")
    return ModelFit(sec, rms, worst, n, bool(fit_z0))


# --------------------------------------------------------------------------------------------------
# The whole characterization
# --------------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Characterization:
    """A feed line characterized from far-end standards.

    Attributes
    ----------
    method : str
        One of ``METHODS``.
    freq_hz : ndarray (n,)
        The measured frequencies, Hz.
    s : ndarray (n, 2, 2)
        The run's 2-port at 50 ohm, port 1 at the analyzer (for one standard: the fitted model's).
    fit : ModelFit
        The physical model fitted to the run.
    zc_ohm : ndarray (n,) or None
        Characteristic impedance per frequency (open-short method only).
    standards : dict
        The standards' offsets (open_c_f, short_l_h, load_r_ohm).
    notes : tuple of str
    """

    method: str
    freq_hz: np.ndarray
    s: np.ndarray
    fit: ModelFit
    zc_ohm: np.ndarray | None = None
    standards: dict = field(default_factory=dict)
    notes: tuple = ()

    @property
    def section(self) -> Section:
        return self.fit.section

    @property
    def low_hz(self) -> float:
        return float(self.freq_hz[0])

    @property
    def high_hz(self) -> float:
        return float(self.freq_hz[-1])

    def line(self, source: str = "<memory>", allow_extrapolation: bool = False) -> Line:
        """The characterized run as a :class:`~deembed.line.Line`."""
        return Line((CharacterizedLine(self.freq_hz, self.s, self.section, self.low_hz, self.high_hz,
                                       self.method, source, allow_extrapolation, self.fit.rms_residual),))


def _require_finite(s, which: str) -> None:
    """Refuse standards that give no line (the same sweep twice, standards that cannot be told apart)."""
    bad = ~np.isfinite(s).all(axis=(1, 2))
    if bad.any():
        raise CharacterizationError(f"the {which} sweeps give no line at {int(bad.sum())} of {bad.size} points: "
                                    "the standards cannot be told apart there (the same sweep given twice, or a "
                                    "standard's offset far off); check that each file holds its own standard")


def characterize(freq_hz, *, gamma_open=None, gamma_short=None, gamma_load=None, z0_ohm=Z_REF_OHM,
                 open_c_f=0.0, short_l_h=0.0, load_r_ohm=Z_REF_OHM, approx_delay_s=None,
                 max_residual=MAX_SINGLE_RESIDUAL) -> Characterization:
    """Characterize a run from the reflections measured at its analyzer end with standards at its far end.

    Parameters
    ----------
    freq_hz : array_like (n,)
        Strictly increasing frequencies, Hz, shared by every standard's measurement.
    gamma_open, gamma_short, gamma_load : array_like complex (n,), optional
        Reflections (50 ohm) measured with the open, short, load at the far end. Open+short+load,
        open+short, open alone or short alone.
    z0_ohm : float
        Nominal Z0 for a one-standard fit, ohm.
    open_c_f, short_l_h, load_r_ohm : float
        Offsets of a characterized kit (ideal by default).
    approx_delay_s : float, optional
        Approximate one-way delay to anchor the open-short branch of beta*l.
    max_residual : float
        Largest RMS misfit accepted for a one-standard fit.
    """
    f = np.asarray(freq_hz, dtype=float)
    if f.ndim != 1 or f.size == 0 or np.any(np.diff(f) <= 0) or f[0] <= 0:
        raise OptionError("freq_hz", "frequencies must be positive and strictly increasing")
    have = tuple(g is not None for g in (gamma_open, gamma_short, gamma_load))
    offsets = {"open_c_f": float(open_c_f), "short_l_h": float(short_l_h), "load_r_ohm": float(load_r_ohm)}
    g_o, g_s, _ = standard_gammas(f, open_c_f=open_c_f, short_l_h=short_l_h, load_r_ohm=load_r_ohm)
    notes = []
    if have == (True, True, True):
        e00, e11, e10e01 = osl_error_terms(gamma_open, gamma_short, gamma_load, freq_hz=f, open_c_f=open_c_f,
                                           short_l_h=short_l_h, load_r_ohm=load_r_ohm)
        s = error_terms_to_two_port(e00, e11, e10e01, f)
        _require_finite(s, "open, short and load")
        fit = fit_line_model(f, s=s, z0_ohm=z0_ohm, fit_z0=True, label="characterized run (equivalent uniform line)")
        if fit.rms_residual > 0.01:
            notes.append(f"the run is not one uniform line (model misfit {fit.rms_residual:.3g} RMS): the fitted model "
                         "describes it only roughly; on its measured points it is used exactly; for sweeps on "
                         "other frequencies see the between-points figures")
        return Characterization("open-short-load", f, s, fit, None, offsets, tuple(notes))
    if have == (True, True, False):
        zoc, zsc = z_from_gamma(gamma_open), z_from_gamma(gamma_short)
        if not (np.all(np.isfinite(zoc)) and np.all(np.isfinite(zsc))):
            raise CharacterizationError("a reflection of exactly 1 (or exactly -1 for the open) means no line is "
                                        "there; check the files")
        zc, gl = open_short_line(zoc, zsc, freq_hz=f, open_c_f=open_c_f, short_l_h=short_l_h,
                                 approx_delay_s=approx_delay_s)
        s = uniform_two_port(zc, gl)
        _require_finite(s, "open and short")
        fit = fit_line_model(f, s=s, z0_ohm=z0_ohm, fit_z0=True, label="characterized line")
        if fit.rms_residual > 0.01:
            notes.append(f"the line departs from the physical model (misfit {fit.rms_residual:.3g} RMS): the fitted "
                         "model describes it only roughly; for sweeps on other frequencies see the between-points "
                         "figures")
        return Characterization("open-short", f, s, fit, zc, offsets, tuple(notes))
    if have in ((True, False, False), (False, True, False)):
        which = "open" if have[0] else "short"
        g_in = gamma_open if have[0] else gamma_short
        fit = fit_line_model(f, gamma_in=g_in, gamma_load=g_o if have[0] else g_s, z0_ohm=z0_ohm,
                             max_residual=max_residual, label="fitted line")
        s = abcd_to_s(fit.section.abcd(f))
        notes.append(f"one standard only: Z0 taken as {z0_ohm:g} ohm, the line is the fitted model")
        return Characterization(which, f, s, fit, None, offsets, tuple(notes))
    raise OptionError("standards", "give `open`, `short` and `load`; or `open` and `short`; or `open` or `short` "
                                   "alone (a load alone, or a load with one other standard, cannot "
                                               "characterize the line)")


# --------------------------------------------------------------------------------------------------
# Report numbers
# --------------------------------------------------------------------------------------------------
def default_report_frequencies(low_hz, high_hz, most=6):
    """Round frequencies (1-2-5 steps) inside the range, at most ``most`` of them, Hz."""
    lo, hi = float(low_hz), float(high_hz)
    decades = range(int(math.floor(math.log10(lo))), int(math.ceil(math.log10(hi))) + 1)
    vals = [m * 10.0 ** d for d in decades for m in (1, 2, 5) if lo <= m * 10.0 ** d <= hi]
    if not vals:
        return [lo, math.sqrt(lo * hi), hi] if hi > lo else [lo]
    if len(vals) > most:
        idx = np.round(np.linspace(0, len(vals) - 1, most)).astype(int)
        vals = [vals[i] for i in sorted(set(idx))]
    return vals


def characterization_report(ch: Characterization, *, at_hz=None, length_m=None, cable=None,
                            flag_ratio=CATALOG_FLAG_RATIO, gamma_open=None, gamma_short=None) -> dict:
    """The numbers a user wants from a characterization, as a JSON-ready dict (SI units, named in keys).

    Parameters
    ----------
    at_hz : sequence of float, optional
        Frequencies to report the loss at (default: :func:`default_report_frequencies`).
    length_m : float, optional
        Physical length; gives the velocity factor, loss per 100 m / 100 ft and k1, k2 per 100 ft.
    cable : deembed.cables.Cable, optional
        Catalog cable to compare the loss with; measured loss above ``flag_ratio`` times the catalog's is
        flagged. Without ``length_m`` the length is estimated from the delay and the cable's VF.
    gamma_open, gamma_short : arrays (n,), optional
        The raw open/short measurements, for the return-loss check ML = RL/2 (F11).

    Notes
    -----
    k1, k2 (dB per 100 ft at f in MHz: A = k1 sqrt(f) + k2 f) are the fitted LossModel's c, d rescaled:
    k1 = 8.6859 c 1e3 (30.48/length), k2 = 8.6859 d 1e6 (30.48/length), the inverse of
    :meth:`LossModel.from_k`. Loss at a frequency is Re(gamma l) of the full RLGC model, in dB.
    """
    sec = ch.section
    at = list(at_hz) if at_hz else default_report_frequencies(ch.low_hz, ch.high_hz)
    at_arr = np.asarray(at, dtype=float)
    loss_db = np.atleast_1d(sec.matched_loss_db(at_arr))
    notes = list(ch.notes)
    out = {
        "method": ch.method,
        "low_hz": ch.low_hz, "high_hz": ch.high_hz, "points": int(ch.freq_hz.size),
        "standards": dict(ch.standards),
        "model": {"z0_ohm": sec.z0_ohm, "z0_fitted": ch.fit.z0_fitted, "delay_s": sec.delay_s,
                  "free_space_length_m": sec.delay_s * C0_M_PER_S, "c_np": sec.loss.c_np, "d_np": sec.loss.d_np,
                  "rms_residual": ch.fit.rms_residual, "max_residual": ch.fit.max_residual},
    }
    length_used, length_note = length_m, None
    if length_m is None and cable is not None:
        length_used = sec.delay_s * C0_M_PER_S * cable.vf
        length_note = f"length estimated as {length_used:.2f} m from the delay and the {cable.id} velocity factor"
        notes.append(length_note)
    if length_m is not None:
        vf = length_m / (sec.delay_s * C0_M_PER_S)
        out["length_m"] = length_m
        out["vf"] = vf
        if vf > 1.0:
            raise OptionError("length", f"the measured delay {sec.delay_s * 1e9:.4g} ns over {length_m:g} m means a "
                                          f"velocity factor of {vf:.3g}, above 1; check the length")
        if cable is not None and abs(vf - cable.vf) > 0.05 * cable.vf:
            notes.append(f"velocity factor {vf:.3f} differs from the catalog's {cable.vf:g} for {cable.id} by more than 5 %")
    if length_used:
        per_ft = M_PER_100FT / length_used
        out["k1_db_per_100ft"] = DB_PER_NP * sec.loss.c_np * 1e3 * per_ft
        out["k2_db_per_100ft"] = DB_PER_NP * sec.loss.d_np * 1e6 * per_ft
    else:
        out["k1_db_run"] = DB_PER_NP * sec.loss.c_np * 1e3  # whole run, dB per sqrt(MHz)
        out["k2_db_run"] = DB_PER_NP * sec.loss.d_np * 1e6  # whole run, dB per MHz
    rows = []
    flagged = False
    for fa, ldb in zip(at_arr, loss_db):
        row = {"freq_hz": float(fa), "loss_db": float(ldb)}
        if not inside(fa, fa, ch.low_hz, ch.high_hz):
            row["outside_range"] = True
        if length_used:
            row["loss_db_per_100m"] = float(ldb) * 100.0 / length_used
            row["loss_db_per_100ft"] = float(ldb) * M_PER_100FT / length_used
        if cable is not None and length_used:
            cat = float(cable.loss_db_per_100ft(fa))
            row["catalog_db_per_100ft"] = cat
            row["ratio_to_catalog"] = row["loss_db_per_100ft"] / cat if cat > 0 else None
            if cat > 0 and row["ratio_to_catalog"] > flag_ratio:
                row["flag"] = "well above catalog"
                flagged = True
        rows.append(row)
    out["loss"] = rows
    if any(r.get("outside_range") for r in rows):
        notes.append("some report frequencies lie outside the characterized range: their loss is extrapolated")
    if cable is not None:
        out["catalog"] = {"id": cable.id, "name": cable.name, "source": cable.source, "flag_ratio": flag_ratio,
                          "flagged": flagged}
        if flagged:
            notes.append(f"measured loss is well above (more than {flag_ratio:g}x) the catalog figure for "
                         f"{cable.id}: suspect water in the cable, damage, or a poor connector")
    if ch.zc_ohm is not None:
        idx = np.argmin(np.abs(ch.freq_hz[None, :] - at_arr[:, None]), axis=1)  # nearest measured point
        out["zc_measured_ohm"] = [{"freq_hz": float(ch.freq_hz[i]), "re": float(ch.zc_ohm[i].real),
                                   "im": float(ch.zc_ohm[i].imag)} for i in idx]
    rl = {}
    for name, g in (("open", gamma_open), ("short", gamma_short)):
        if g is not None:
            mag = np.abs(np.asarray(g, dtype=complex))
            rl[name] = np.interp(at_arr, ch.freq_hz, -20 * np.log10(mag))  # magnitudes only, not complex values
    if rl:
        est = matched_loss_from_return_loss(rl.get("open"), rl.get("short"))
        for row, e in zip(rows, np.atleast_1d(est)):
            row["loss_db_from_return_loss"] = float(e)
    out["between_points"] = between_assessment(ch)
    notes.extend(characterization_between_notes(out["between_points"]))
    out["notes"] = notes
    return out


def between_assessment(ch: Characterization) -> dict:
    """How a later sweep on other frequencies will see this run between its points (JSON-ready).

    Keys: ``method`` (interpolated or model), ``estimated_error_worst`` (largest estimated |dGamma| at the
    feedpoint over the grid, for the worst antenna |Gamma_L| = 1; a sweep's own figure is usually smaller),
    ``error_from``, ``grid_step_hz``, ``needed_step_hz``, ``grid_margin``, ``longest_two_way_delay_s``,
    ``grid_too_coarse`` (see :mod:`deembed.physics.between`).
    """
    b = ch.line().parts[0].between
    single = ch.method in ("open", "short")
    return {
        "method": b.method,
        "estimated_error_worst": b.worst_feedpoint_error,
        "error_from": ("leave-one-out interpolation on the characterization" if b.method == "interpolated" else
                       "the one-standard model fit's RMS misfit" if single else
                       "the model's misfit to the characterization's measured points"),
        "grid_step_hz": b.step_hz,
        "needed_step_hz": b.needed_step_hz,
        "grid_margin": GRID_MARGIN,
        "longest_two_way_delay_s": b.two_way_delay_s,
        "grid_too_coarse": bool(b.grid_too_coarse),
    }


def characterization_between_notes(bp: dict) -> list[str]:
    """Notes for the characterization report: a grid too coarse for the run, an error above the threshold."""
    out = []
    big = bp["estimated_error_worst"] > FEEDPOINT_ERROR_WARN
    if bp["grid_too_coarse"] and (bp["method"] == "interpolated" or big):
        out.append(f"the points are up to {fmt_freq(bp['grid_step_hz'])} apart, too far for this run: its longest "
                   f"echo (two-way delay {bp['longest_two_way_delay_s'] * 1e9:.1f} ns) needs points at most "
                   f"{fmt_freq(bp['needed_step_hz'])} apart (1/(2 x delay) with a margin of {GRID_MARGIN:g}) for "
                   "sweeps on other frequencies; sweep the standards again with a step of "
                   f"{fmt_freq(bp['needed_step_hz'])} or less")
    if big:
        out.append(f"a sweep on other frequencies may be off by up to {bp['estimated_error_worst']:.3f} in |Gamma| at "
                   f"the feedpoint between these points (worst antenna; estimated from {bp['error_from']}); sweep the "
                   "standards on a finer grid, or sweep the antenna on these same frequencies")
    return out


