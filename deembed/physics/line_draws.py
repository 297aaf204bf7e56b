"""Line 2-ports for many parameter sets at once: the RLGC section broadcast over draws and frequency.

The Monte Carlo uncertainty (:mod:`deembed.analysis.uncertainty`) evaluates the line for a thousand
drawn sets of (Z0, delay, loss) at once. These functions are the same physics as
:class:`deembed.physics.line.Section` (a test checks them against it to 1e-12), written so that every
parameter may be an array shaped ``(draws, 1)`` broadcasting against frequency ``(n,)``.
"""
from __future__ import annotations

import math

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


DRAWS_ERROR_BOUND = 1e-6
"""Largest error of :func:`section_s_terms` with ``single_trig=True`` in any of S11, S21 S12, S22 (a test checks
it against the double-precision terms over lines up to thousands of radians long)."""


SINGLE_TRIG_MIN_D2 = 0.5625
"""``single_trig`` is used only where |1 - rho^2 t^2|^2 >= this everywhere, checked as |rho|^2 <= 0.25 (the
terms divide by 1 - rho^2 t^2 and so amplify the single-precision error by up to 1/|1 - rho^2 t^2|^2; a
50-ohm-like line has |rho| < 0.3, so it is near 1); otherwise the double-precision exponential is used."""


class Scratch:
    """Work arrays kept between calls of a loop that evaluates blocks of the same sizes again and again.

    ``get(name, shape, dtype)`` returns an array of that shape backed by a buffer kept under ``name``
    (grown when too small). Fresh large temporaries cost page faults on every call once the allocator
    returns freed memory to the system, which on a Monte Carlo block of a few tens of thousands of values
    costs about as much as the arithmetic itself; arrays from a Scratch are valid until the next ``get``
    of the same name."""

    def __init__(self):
        self._bufs = {}
        self._views = {}

    def get(self, name: str, shape, dtype=float) -> np.ndarray:
        key = (name, shape, dtype)
        view = self._views.get(key)
        if view is not None:
            return view
        shape = tuple(int(x) for x in shape)
        n = math.prod(shape)
        dt = np.dtype(dtype)
        buf = self._bufs.get((name, dt.str))
        if buf is None or buf.size < n:
            buf = np.empty(max(n, 1), dtype=dt)
            self._bufs[(name, dt.str)] = buf
            self._views = {k: v for k, v in self._views.items() if k[0] != name}
        view = buf[:n].reshape(shape)
        if len(self._views) < 512:
            self._views[key] = view
        return view


def section_s_terms(z0_ohm, delay_s, c_np, d_np, freq_hz, z_ref_ohm: float = 50.0, *, single_trig: bool = False,
                    scratch: Scratch | None = None):
    """(S11, S21 S12, S22) of one uniform RLGC section, broadcast like :func:`section_parts` (fewer temporaries).

    ``single_trig`` takes exp(-2 gamma l) = exp(-2 alpha) (cos 2 beta - j sin 2 beta) with the exponential,
    cosine and sine in single precision, after reducing 2 beta to [-pi, pi] in double precision: the error
    of each term stays below :data:`DRAWS_ERROR_BOUND` (single-precision functions are vectorised, several
    times faster than the complex exponential; where the line is so badly mismatched that the error would
    be amplified, :data:`SINGLE_TRIG_MIN_D2`, the double-precision exponential is used). For Monte Carlo draws, whose spread is thousands of times
    larger. With a ``scratch`` (:class:`Scratch`) every array, the returned ones included, lives in its
    buffers: use the terms before the next call with the same scratch.

    Notes
    -----
    For a uniform line of characteristic impedance Zc and t = exp(-gamma l), with rho = (Zc - Zref)/(Zc + Zref):
    S11 = S22 = rho (1 - t^2) / (1 - rho^2 t^2), S21 = S12 = t (1 - rho^2) / (1 - rho^2 t^2) (Pozar 4th ed.
    sec. 2.7 and 4.3; the same as :func:`s_terms` of :func:`section_parts`, which a test checks).

    Worked out for speed (the Monte Carlo step evaluates it for every draw at every frequency it needs):
    gamma l = sqrt((a + jx)(b + jx)) with a = 2 A_c, b = 2 A_d, x = w tau is taken in real arithmetic
    (the principal root from |P| and the larger of its two parts, the smaller as Im P / (2 x larger), so
    neither loses digits), and rho without forming Zc: Zc = Z0 (a + jx) / (gamma l), so
    rho = (Z0 (a + jx) - Zref gamma l) / (Z0 (a + jx) + Zref gamma l), one complex division. At 0 Hz, where
    both are 0/0, Zc is its limit, the nominal Z0 (R ~ sqrt f, G ~ f).
    """
    sc = scratch if scratch is not None else Scratch()
    f = np.asarray(freq_hz, dtype=float)
    shape = np.broadcast_shapes(np.shape(f), np.shape(delay_s), np.shape(c_np), np.shape(d_np), np.shape(z0_ohm))
    x = np.multiply(2 * np.pi * f, delay_s, out=sc.get("x", shape))
    a = np.multiply(c_np, 2 * np.sqrt(f), out=sc.get("a", shape))
    b = np.multiply(d_np, 2 * f, out=sc.get("b", shape))
    # P = (a + jx)(b + jx) = (ab - x^2) + j x (a + b)
    p = np.multiply(a, b, out=sc.get("p", shape))
    xx = np.multiply(x, x, out=sc.get("xx", shape))
    p -= xx
    q = np.add(a, b, out=sc.get("q", shape))
    q *= x
    m = np.multiply(p, p, out=sc.get("m", shape))
    np.multiply(q, q, out=xx)
    m += xx
    np.sqrt(m, out=m)                        # |P|
    gl = sc.get("gl", shape, complex)
    if p.size and p.max() < 0 <= q.min():    # the usual case (w tau above the loss terms): Im sqrt(P) is the larger part
        m -= p
        m *= 0.5
        big = np.sqrt(m, out=m)
        gl.imag = big
        gl.real = q
        with np.errstate(divide="ignore", invalid="ignore"):
            gl.real /= big + big
    else:
        np.abs(p, out=xx)
        m += xx
        m *= 0.5
        big = np.sqrt(m, out=m)              # the larger part of sqrt(P): sqrt((|P| + |Re P|) / 2)
        small = np.add(big, big, out=xx)
        with np.errstate(divide="ignore", invalid="ignore"):
            np.divide(q, small, out=small)   # the other: Im P / (2 big)
        neg = p < 0
        gl.imag = small
        np.copyto(gl.imag, np.copysign(big, q), where=neg)
        gl.real = big
        np.copyto(gl.real, np.abs(small, out=small), where=neg)
    zero = (big == 0) if (np.min(f, initial=1.0) <= 0 or np.min(delay_s) <= 0) else None
    num = sc.get("num", shape, complex)      # Z0 (a + jx) - Zref gamma l, then rho
    num.real = a
    num.imag = x
    num *= z0_ohm
    den = np.multiply(gl, z_ref_ohm, out=sc.get("den", shape, complex))
    den += num
    num *= 2
    num -= den                               # 2 Z0 zs - (Z0 zs + Zref gl) = Z0 zs - Zref gl
    with np.errstate(divide="ignore", invalid="ignore"):
        rho = np.divide(num, den, out=num)
    if zero is not None and zero.any():
        rho[zero] = np.broadcast_to((z0_ohm - z_ref_ohm) / (z0_ohm + z_ref_ohm), shape)[zero]
        gl[zero] = 0.0
    if single_trig:
        th = np.multiply(gl.imag, 2, out=a)  # 2 beta, reduced exactly to [-pi, pi]
        k = np.multiply(th, 1 / (2 * np.pi), out=b)
        np.rint(k, out=k)
        k *= 2 * np.pi
        th -= k
        th32 = sc.get("th32", shape, np.float32)
        th32[...] = th
        e32 = sc.get("e32", shape, np.float32)
        e32[...] = gl.real
        e32 *= -2
        np.exp(e32, out=e32)
        c32 = np.cos(th32, out=sc.get("c32", shape, np.float32))
        c32 *= e32
        np.sin(th32, out=th32)
        th32 *= e32
        np.negative(th32, out=th32)
        t = gl                               # t^2 = exp(-2 gamma l)
        t.real = c32
        t.imag = th32
    else:
        gl *= -2
        t = np.exp(gl, out=gl)               # t^2 = exp(-2 gamma l)
    r2 = np.multiply(rho, rho, out=sc.get("r2", shape, complex))
    inv = np.multiply(r2, t, out=sc.get("inv", shape, complex))
    np.subtract(1, inv, out=inv)
    if single_trig and r2.size and not np.abs(r2, out=a).max() <= 1 - math.sqrt(SINGLE_TRIG_MIN_D2):
        # |1 - rho^2 t^2| >= 1 - |rho|^2 (|t| <= 1): a badly mismatched line, no single precision
        return section_s_terms(z0_ohm, delay_s, c_np, d_np, freq_hz, z_ref_ohm, scratch=scratch)
    np.reciprocal(inv, out=inv)              # 1 / (1 - rho^2 t^2)
    s11 = np.subtract(1, t, out=den)
    s11 *= rho
    s11 *= inv
    s21s12 = np.subtract(1, r2, out=r2)
    s21s12 *= s21s12
    s21s12 *= t
    inv *= inv
    s21s12 *= inv
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


__all__ = ["DRAWS_ERROR_BOUND", "SINGLE_TRIG_MIN_D2", "Scratch", "cascade_parts", "s_terms", "section_parts", "section_s_terms"]
