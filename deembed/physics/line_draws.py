"""Line 2-ports for many parameter sets at once: the RLGC section broadcast over draws and frequency.

The Monte Carlo uncertainty (:mod:`deembed.analysis.uncertainty`) evaluates the line for a thousand
drawn sets of (Z0, delay, loss) at once. These functions are the same physics as
:class:`deembed.physics.line.Section` (a test checks them against it to 1e-12), written so that every
parameter may be an array shaped ``(draws, 1)`` broadcasting against frequency ``(n,)``.
"""
from __future__ import annotations

import numpy as np


def section_parts(z0_ohm, delay_s, c_np, d_np, freq_hz):
    """ABCD parts (A, B, C, D) of uniform RLGC sections, broadcast over parameters and frequency.

    Parameters
    ----------
    z0_ohm : float or ndarray
        Nominal characteristic impedance, ohm.
    delay_s : float or ndarray
        One-way delay, s (> 0).
    c_np, d_np : float or ndarray
        Matched-loss coefficients of the whole section: A(f) = c sqrt(f) + d f, nepers.
    freq_hz : ndarray (n,)
        Frequencies, Hz.

    Returns
    -------
    tuple of ndarray
        A, B (ohm), C (S), D, each of the broadcast shape of the inputs.

    Notes
    -----
    With R = 2 Z0 A_c, L = Z0 tau, G = 2 A_d / Z0, C = tau / Z0 for the whole section (Pozar,
    *Microwave Engineering* 4th ed. sec. 2.7: alpha_c = R/2Z0, alpha_d = G Z0/2) the series impedance is
    Z0 (2 A_c + j w tau) and the shunt admittance (2 A_d + j w tau) / Z0, so
    gamma l = sqrt((2 A_c + j w tau)(2 A_d + j w tau)) does not depend on Z0, and Zc = Z0 (2 A_c + j w tau) / (gamma l)
    (Pozar 4th ed. sec. 2.1). A = D = cosh(gamma l), B = Zc sinh(gamma l), C = sinh(gamma l) / Zc.
    """
    f = np.asarray(freq_hz, dtype=float)
    w = 2 * np.pi * f
    sf = np.sqrt(f)
    jwt = 1j * (w * delay_s)
    zs_n = 2 * (c_np * sf) + jwt          # series impedance / Z0
    yp_n = 2 * (d_np * f) + jwt           # shunt admittance * Z0
    gl = np.sqrt(zs_n * yp_n)
    with np.errstate(divide="ignore", invalid="ignore"):
        zc = zs_n / gl
    zc = z0_ohm * np.where(np.isfinite(zc), zc, 1.0)   # at 0 Hz: the nominal Z0
    e = np.exp(gl)
    ei = 1 / e
    ch = (e + ei) * 0.5
    sh = (e - ei) * 0.5
    return ch, zc * sh, sh / zc, ch


def section_s_terms(z0_ohm, delay_s, c_np, d_np, freq_hz, z_ref_ohm: float = 50.0):
    """(S11, S21 S12, S22) of one uniform RLGC section, broadcast like :func:`section_parts` (fewer temporaries).

    Notes
    -----
    For a uniform line of characteristic impedance Zc and t = exp(-gamma l), with rho = (Zc - Zref)/(Zc + Zref):
    S11 = S22 = rho (1 - t^2) / (1 - rho^2 t^2), S21 = S12 = t (1 - rho^2) / (1 - rho^2 t^2) (Pozar 4th ed.
    sec. 2.7 and 4.3; the same as :func:`s_terms` of :func:`section_parts`, which a test checks).
    """
    f = np.asarray(freq_hz, dtype=float)
    jwt = (2 * np.pi * f) * delay_s * 1j
    zs_n = jwt + 2 * (c_np * np.sqrt(f))
    gl = jwt
    gl += 2 * (d_np * f)
    gl *= zs_n
    gl = np.sqrt(gl, out=gl)
    zc = zs_n
    with np.errstate(divide="ignore", invalid="ignore"):
        zc /= gl
    if not np.all(np.isfinite(zc)):  # at 0 Hz Zc is 0/0; its limit is the nominal Z0 (R ~ sqrt f, G ~ f)
        zc = np.where(np.isfinite(zc), zc, 1.0)
    zc *= z0_ohm / z_ref_ohm
    rho = (zc - 1) / (zc + 1)
    np.negative(gl, out=gl)
    t = np.exp(gl, out=gl)
    t *= t                       # t^2
    r2 = rho * rho
    den = r2 * t
    np.subtract(1, den, out=den)
    np.reciprocal(den, out=den)  # 1 / (1 - rho^2 t^2)
    s11 = 1 - t
    s11 *= rho
    s11 *= den
    s21s12 = 1 - r2
    s21s12 *= s21s12
    s21s12 *= t
    s21s12 *= den
    s21s12 *= den
    return s11, s21s12, s11


def cascade_parts(parts):
    """Multiply ABCD parts in order (port 1 side first); each item is (A, B, C, D), all broadcastable."""
    total = None
    for p in parts:
        if total is None:
            total = p
            continue
        a1, b1, c1, d1 = total
        a2, b2, c2, d2 = p
        total = (a1 * a2 + b1 * c2, a1 * b2 + b1 * d2, c1 * a2 + d1 * c2, c1 * b2 + d1 * d2)
    return total


def s_terms(a, b, c, d, z_ref_ohm: float = 50.0):
    """(S11, S21 S12, S22) of a 2-port from its ABCD parts, at a real reference impedance.

    Notes
    -----
    Pozar 4th ed. Table 4.2: with b' = B/Z, c' = C Z and den = A + b' + c' + D: S11 = (A + b' - c' - D)/den,
    S22 = (-A + b' - c' + D)/den, S21 = 2/den, S12 = 2 (AD - BC)/den.
    """
    bn = b / z_ref_ohm
    cn = c * z_ref_ohm
    inv = 1 / (a + bn + cn + d)
    s11 = (a + bn - cn - d) * inv
    s22 = (-a + bn - cn + d) * inv
    s21s12 = 4 * (a * d - b * c) * inv * inv
    return s11, s21s12, s22


__all__ = ["cascade_parts", "s_terms", "section_parts", "section_s_terms"]
