"""Calibration maths for a run measured from its analyzer end with standards at its far end.

* the three-term one-port error model (directivity e00, source match e11, reflection tracking e10e01)
  solved per frequency from open, short and load, and read as the reciprocal 2-port of the run
  (:func:`osl_error_terms`, :func:`error_terms_to_two_port`);
* a uniform line from open and short, Zc = sqrt(Zoc Zsc), tanh(gamma l) = Zsc / Zc (:func:`open_short_line`);
* matched loss from the open/short return loss (:func:`matched_loss_from_return_loss`).

Pure functions of numpy arrays, reflections at 50 ohm, frequency the first axis.

References
----------
D. Rytting, "Network Analyzer Error Models and Calibration Methods", seminar notes (the three-term model).
D. M. Pozar, *Microwave Engineering* 4th ed. (Wiley 2012), sec. 2.1, 2.7 (lossy lines).
S. W. Ellingson, *Electromagnetics Vol. 1* (VT Publishing 2018), "Measurement of transmission line
characteristics" (line from open- and short-circuit impedances).
F. Witt, "Measuring Cable Loss", *QEX* May/Jun 2005, p. 44 (matched loss from open/short return loss).
"""
from __future__ import annotations


import numpy as np

from ..base.errors import CharacterizationError, OptionError
from .deembedding import feedpoint_gamma
from .line import abcd_to_s
from .rf import Z_REF_OHM


# --------------------------------------------------------------------------------------------------
# Standards
# --------------------------------------------------------------------------------------------------
def standard_gammas(freq_hz, *, open_c_f=0.0, short_l_h=0.0, load_r_ohm=Z_REF_OHM, z_ref_ohm=Z_REF_OHM):
    """Actual reflections of an open, a short and a load with small lumped offsets.

    Parameters
    ----------
    freq_hz : array_like (n,)
        Frequencies, Hz.
    open_c_f : float
        Fringing capacitance of the open, F (0 = ideal open).
    short_l_h : float
        Inductance of the short, H (0 = ideal short).
    load_r_ohm : float
        Resistance of the load, ohm (``z_ref_ohm`` = ideal load).

    Returns
    -------
    (gamma_open, gamma_short, gamma_load) : three complex arrays (n,)

    Notes
    -----
    Gamma = (Z - Zref)/(Z + Zref) (Pozar 4th ed. eq. 2.35) with Z_open = 1/(j w C), Z_short = j w L,
    Z_load = R; written for the open as (1 - j w C Zref)/(1 + j w C Zref) so that C = 0 gives exactly +1.
    """
    w = 2 * np.pi * np.asarray(freq_hz, dtype=float)
    yc = 1j * w * open_c_f * z_ref_ohm
    g_open = (1 - yc) / (1 + yc)
    zl = 1j * w * short_l_h
    g_short = (zl - z_ref_ohm) / (zl + z_ref_ohm)
    g_load = np.full(w.shape, (load_r_ohm - z_ref_ohm) / (load_r_ohm + z_ref_ohm), dtype=complex)
    return g_open, g_short, g_load


# --------------------------------------------------------------------------------------------------
# Open, short and load: the three-term error model and its 2-port
# --------------------------------------------------------------------------------------------------
def osl_error_terms(m_open, m_short, m_load, *, freq_hz=None, open_c_f=0.0, short_l_h=0.0,
                    load_r_ohm=Z_REF_OHM, z_ref_ohm=Z_REF_OHM):
    """Solve the one-port three-term error model from open, short and load measured through the run.

    Parameters
    ----------
    m_open, m_short, m_load : array_like complex (n,)
        Reflections measured at the analyzer with the open, short and load at the far end.
    freq_hz : array_like (n,), optional
        Frequencies, Hz; needed only when a standard has an offset (capacitance or inductance).
    open_c_f, short_l_h, load_r_ohm : float
        The standards' offsets (see :func:`standard_gammas`); defaults are ideal standards.

    Returns
    -------
    (e00, e11, e10e01) : complex arrays (n,)
        Directivity, source match and reflection tracking.

    Notes
    -----
    Model: Gm = e00 + e10e01 Ga / (1 - e11 Ga) (Rytting; check-values F16). Ideal standards (Ga = +1, -1, 0)
    give the closed form e00 = M_L, A = M_O - e00, B = M_S - e00, e11 = (A + B)/(A - B),
    e10e01 = -2AB/(A - B) (check-values F17). Otherwise the linear form
    Gm = b + Ga a + Ga Gm c with a = e10e01 - e00 e11, b = e00, c = e11 gives three linear equations per
    frequency, solved in one batched call.
    """
    mo, ms, ml = (np.asarray(m, dtype=complex) for m in (m_open, m_short, m_load))
    ideal = open_c_f == 0 and short_l_h == 0 and load_r_ohm == z_ref_ohm
    if ideal:
        e00 = ml.copy()
        a = mo - e00
        b = ms - e00
        den = a - b
        if np.any(den == 0):
            raise CharacterizationError("the open and the short measure the same; check that the files are an "
                                        "open and a short at the far end")
        return e00, (a + b) / den, -2 * a * b / den
    if freq_hz is None:
        raise OptionError("freq_hz", "standards with offsets need the frequencies; pass freq_hz")
    ga = np.stack(standard_gammas(freq_hz, open_c_f=open_c_f, short_l_h=short_l_h, load_r_ohm=load_r_ohm,
                                  z_ref_ohm=z_ref_ohm), axis=-1)  # (n, 3)
    gm = np.stack(np.broadcast_arrays(mo, ms, ml), axis=-1)  # (n, 3)
    # unknowns x = (a, b, c): Ga*a + b + Ga*Gm*c = Gm
    mat = np.stack([ga, np.ones_like(ga), ga * gm], axis=-1)  # (n, 3, 3)
    try:
        x = np.linalg.solve(mat, gm[..., None])[..., 0]
    except np.linalg.LinAlgError:
        raise CharacterizationError("the three standards do not determine the error terms at some frequency "
                                    "(two standards measure the same); check the files") from None
    a, e00, e11 = x[..., 0], x[..., 1], x[..., 2]
    return e00, e11, a + e00 * e11


def apply_error_terms(gamma_m, e00, e11, e10e01):
    """Remove the error terms from a measured reflection: Ga = (Gm - e00)/(e10e01 + e11 (Gm - e00)) (F16).

    The same closed form as de-embedding a 2-port (S11 = e00, S21 S12 = e10e01, S22 = e11).
    """
    return feedpoint_gamma(np.asarray(gamma_m, dtype=complex), e00, e10e01, e11)


def continuous_sqrt(p, freq_hz):
    """The square root of ``p`` (n,) whose phase runs continuously across the sweep.

    Notes
    -----
    The phase of ``p`` is unwrapped and halved, so neighbouring points take the same branch. That leaves one
    sign for the whole sweep; it is chosen so that the phase, extrapolated by a straight line to 0 Hz, lands
    nearer 0 than pi (a run's transmission phase is -w*tau plus a small dispersive part). With a single
    point the principal root is taken.
    """
    p = np.asarray(p, dtype=complex)
    f = np.asarray(freq_hz, dtype=float)
    half = np.unwrap(np.angle(p)) / 2
    t = np.sqrt(np.abs(p)) * np.exp(1j * half)
    if p.size >= 2:
        intercept = np.polyfit(f, half, 1)[1]
        if abs((intercept + np.pi) % (2 * np.pi) - np.pi) > np.pi / 2:
            t = -t
    return t


def error_terms_to_two_port(e00, e11, e10e01, freq_hz):
    """The reciprocal 2-port equivalent to the error terms, S (n, 2, 2), port 1 at the analyzer.

    Notes
    -----
    S11 = e00, S22 = e11, S21 = S12 = sqrt(e10e01) with the branch of :func:`continuous_sqrt`. Only the
    product S21 S12 matters for de-embedding; the sign of S21 matters for the physical-model fit and for
    any later cascade.
    """
    t = continuous_sqrt(e10e01, freq_hz)
    s = np.empty(np.shape(t) + (2, 2), dtype=complex)
    s[:, 0, 0] = e00
    s[:, 1, 1] = e11
    s[:, 0, 1] = t
    s[:, 1, 0] = t
    return s


# --------------------------------------------------------------------------------------------------
# Open and short: a uniform line
# --------------------------------------------------------------------------------------------------
def _anchor_im(im, freq_hz, approx_delay_s):
    """Unwrap Im(gamma l) (known mod pi) across the sweep and fix its integer multiple of pi."""
    f = np.asarray(freq_hz, dtype=float)
    im = np.unwrap(im, period=np.pi) if im.size >= 2 else im
    if approx_delay_s is not None:
        m = np.round(np.mean(2 * np.pi * f * approx_delay_s - im) / np.pi)
    elif im.size >= 2:
        m = np.round(-np.polyfit(f, im, 1)[1] / np.pi)  # beta*l -> 0 at 0 Hz
    else:
        m = 0.0  # principal branch: assumes a line shorter than a quarter wave
    return im + m * np.pi


def open_short_line(z_oc, z_sc, *, freq_hz=None, open_c_f=0.0, short_l_h=0.0, approx_delay_s=None):
    """Characteristic impedance and complex electrical length of a uniform line from Zoc and Zsc.

    Parameters
    ----------
    z_oc, z_sc : array_like complex (n,)
        Input impedances with the far end open and shorted, ohm.
    freq_hz : array_like (n,), optional
        Frequencies, Hz. Needed for offsets and to choose the branch of beta*l over a sweep.
    open_c_f, short_l_h : float
        Offsets of the open (F) and short (H); 0 = ideal.
    approx_delay_s : float, optional
        Approximate one-way delay (length / (VF c)), to anchor the branch of beta*l.

    Returns
    -------
    (zc_ohm, gamma_l) : complex arrays (n,)
        Zc (Re > 0) and gamma*l = alpha*l + j beta*l (Np + j rad).

    Notes
    -----
    Ideal standards: Zc = sqrt(Zoc Zsc), tanh(gamma l) = Zsc / Zc (check-values F14, Ellingson vol. 1,
    lossy form from F6). tanh has period j*pi, so beta*l is known only mod pi: the principal value is
    unwrapped across the sweep and its multiple of pi fixed either by ``approx_delay_s`` or by
    extrapolating beta*l to 0 at 0 Hz; a single frequency with neither takes the principal branch
    (a line shorter than a quarter wave, as in Cheng's example, check-values E3).

    With offsets (Z_L = 1/(jwC) for the open, jwL for the short) the symmetric line's ABCD (A = D,
    A^2 - BC = 1) obeys Zin (C + A Y_L) = A + B Y_L for each termination: two linear homogeneous equations
    in (A, B, C), whose solution is the cross product of their coefficient rows, scaled so that
    A^2 - BC = 1. Then Zc = sqrt(B/C), gamma*l = ln(A + B/Zc).
    """
    zoc = np.asarray(z_oc, dtype=complex)
    zsc = np.asarray(z_sc, dtype=complex)
    if open_c_f == 0 and short_l_h == 0:
        zc = np.sqrt(zoc * zsc)
        zc = np.where(zc.real < 0, -zc, zc)
        gl = np.arctanh(zsc / zc)
    else:
        if freq_hz is None:
            raise OptionError("freq_hz", "standards with offsets need the frequencies; pass freq_hz")
        w = 2 * np.pi * np.asarray(freq_hz, dtype=float)
        y_open = 1j * w * open_c_f
        z_short = 1j * w * short_l_h
        r1 = np.stack([zoc * y_open - 1, -y_open, zoc], axis=-1)  # A(Zin Y - 1) - B Y + C Zin = 0
        r2 = np.stack([zsc - z_short, -np.ones_like(zsc), zsc * z_short], axis=-1)  # A(Zin - Z) - B + C Zin Z = 0
        abc = np.cross(r1, r2)
        abc = abc / np.sqrt(abc[..., 0] ** 2 - abc[..., 1] * abc[..., 2])[..., None]
        a, b, c = abc[..., 0], abc[..., 1], abc[..., 2]
        zc = np.sqrt(b / c)
        zc = np.where(zc.real < 0, -zc, zc)
        gl = np.log(a + b / zc)
        gl = np.where(gl.real < 0, -gl, gl)  # the root with a passive (decaying) wave
    if freq_hz is not None:
        gl = gl.real + 1j * _anchor_im(gl.imag, freq_hz, approx_delay_s)
    elif approx_delay_s is not None:
        raise OptionError("freq_hz", "an approximate delay needs the frequencies")
    return zc, gl


def uniform_two_port(zc_ohm, gamma_l, z_ref_ohm=Z_REF_OHM):
    """S (n, 2, 2) at ``z_ref_ohm`` of a uniform line given per frequency by Zc and gamma*l (ABCD, Pozar Table 4.2)."""
    zc = np.asarray(zc_ohm, dtype=complex)
    gl = np.asarray(gamma_l, dtype=complex)
    m = np.empty(gl.shape + (2, 2), dtype=complex)
    ch, sh = np.cosh(gl), np.sinh(gl)
    m[..., 0, 0] = ch
    m[..., 0, 1] = zc * sh
    m[..., 1, 0] = sh / zc
    m[..., 1, 1] = ch
    return abcd_to_s(m, z_ref_ohm)


def matched_loss_from_return_loss(rl_open_db=None, rl_short_db=None):
    """The trade's quick estimate of one-way matched loss from an open- and/or short-terminated line, dB.

    Notes
    -----
    An open or short at the far end returns everything it gets, so the return loss at the input is twice
    the one-way matched loss: ML = RL/2; with both, ML = (RL_open + RL_short)/4 evens out the ripple of a
    Zc not quite 50 ohm (F. Witt, QEX May/Jun 2005 p. 44, citing the ARRL Antenna Book; check-values F11).
    """
    vals = [np.asarray(v, dtype=float) for v in (rl_open_db, rl_short_db) if v is not None]
    if not vals:
        raise OptionError("return loss", "give the return loss with the far end open, shorted, or both")
    return sum(vals) / (2 * len(vals))


