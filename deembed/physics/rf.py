"""Reflection arithmetic: impedance, reflection coefficient, SWR, return loss, mismatch loss.

Pure numpy functions of arrays; frequency (when present) is the first axis.
All impedances in ohms, losses in dB as positive numbers.
"""
from __future__ import annotations

import numpy as np

Z_REF_OHM = 50.0
"""Reference impedance every sweep is renormalised to for the work."""


def gamma_from_z(z_ohm, z0_ohm=Z_REF_OHM):
    """Reflection coefficient of an impedance.

    Notes
    -----
    Gamma = (Z - Z0) / (Z + Z0)  (Pozar, *Microwave Engineering* 4th ed., eq. 2.35).
    """
    z = np.asarray(z_ohm, dtype=complex)
    with np.errstate(divide="ignore", invalid="ignore"):
        return (z - z0_ohm) / (z + z0_ohm)


def z_from_gamma(gamma, z0_ohm=Z_REF_OHM):
    """Impedance from a reflection coefficient, Z = Z0 (1 + Gamma) / (1 - Gamma); Gamma = 1 gives inf."""
    g = np.asarray(gamma, dtype=complex)
    with np.errstate(divide="ignore", invalid="ignore"):
        if g.ndim == 0:
            return z0_ohm * (1 + g) / (1 - g)
        z = np.add(1, g)  # the same operations in place: two arrays' worth of memory instead of four
        z *= z0_ohm
        z /= np.subtract(1, g)
        return z


def swr(gamma):
    """Standing-wave ratio, (1 + |Gamma|) / (1 - |Gamma|) (Pozar 4th ed. eq. 2.41).

    |Gamma| >= 1 gives ``inf`` rather than a negative number.
    """
    m = np.abs(np.asarray(gamma))
    with np.errstate(divide="ignore", invalid="ignore"):
        if m.ndim == 0:
            return np.where(m >= 1, np.inf, (1 + m) / (1 - m))
        s = np.add(1, m)  # in place, as above
        s /= np.subtract(1, m)
    s[m >= 1] = np.inf
    return s


def gamma_mag_from_swr(s):
    """|Gamma| = (s - 1) / (s + 1)."""
    s = np.asarray(s, dtype=float)
    return (s - 1) / (s + 1)


def return_loss_db(gamma):
    """Return loss, -20 log10 |Gamma|, a positive number of dB (Pozar 4th ed. eq. 2.38)."""
    m = np.abs(np.asarray(gamma))
    with np.errstate(divide="ignore"):
        return -20 * np.log10(m)


def mismatch_loss_db(gamma):
    """Mismatch loss, -10 log10(1 - |Gamma|^2), dB."""
    m2 = np.abs(np.asarray(gamma)) ** 2
    with np.errstate(divide="ignore", invalid="ignore"):
        return -10 * np.log10(1 - m2)


def reflection_columns(gamma) -> dict:
    """Per-frequency quantities of a reflection (50 ohm): Gamma, |Gamma|, SWR, return loss, R, X.

    Keys ``gamma_re``, ``gamma_im``, ``gamma_mag``, ``swr``, ``return_loss_db``, ``r_ohm``, ``x_ohm``; each an
    array shaped like ``gamma``.
    """
    g = np.asarray(gamma, dtype=complex)
    z = z_from_gamma(g)
    return {
        "gamma_re": g.real,
        "gamma_im": g.imag,
        "gamma_mag": np.abs(g),
        "swr": swr(g),
        "return_loss_db": return_loss_db(g),
        "r_ohm": z.real,
        "x_ohm": z.imag,
    }
