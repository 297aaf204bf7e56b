"""Network-parameter conversions: Z and Y to S, and S renormalised to another reference impedance.

Pure numpy functions of stacks of matrices ``(n, p, p)`` (frequency first), vectorised over frequency.
They return what the arithmetic gives, including non-finite values where a matrix has no S-parameter
equivalent; the caller (the Touchstone reader) decides what to tell the user. A singular multi-port
system raises :class:`numpy.linalg.LinAlgError`.

References
----------
Pozar, *Microwave Engineering*, 4th ed., sec. 4.3 (S from Z: S = (Z - Z0 I)(Z + Z0 I)^-1, eq. 4.44, from
memory); Kurokawa, "Power waves and the scattering matrix", IEEE Trans. MTT 13 (1965) 194-202, for the
change of (real) reference impedances.
"""
from __future__ import annotations

import numpy as np

from .rf import Z_REF_OHM


def s_from_z(z, z_ref_ohm: float = Z_REF_OHM):
    """S of an impedance matrix ``z`` (ohm, (n, p, p)) at the real reference ``z_ref_ohm`` on every port.

    One port: Gamma = (Z - Z0)/(Z + Z0). Several: S = (Z + Z0 I)^-1 (Z - Z0 I), the same matrix as
    (Z - Z0 I)(Z + Z0 I)^-1 because the two factors commute.
    """
    z = np.asarray(z)
    if z.shape[-1] == 1:
        return (z - z_ref_ohm) / (z + z_ref_ohm)
    eye = np.eye(z.shape[-1])
    return np.linalg.solve(z + z_ref_ohm * eye, z - z_ref_ohm * eye)


def s_from_y(y, z_ref_ohm: float = Z_REF_OHM):
    """S of an admittance matrix ``y`` (siemens, (n, p, p)): S = (I + Z0 Y)^-1 (I - Z0 Y)."""
    y = np.asarray(y)
    if y.shape[-1] == 1:
        return (1 - z_ref_ohm * y) / (1 + z_ref_ohm * y)
    eye = np.eye(y.shape[-1])
    return np.linalg.solve(eye + z_ref_ohm * y, eye - z_ref_ohm * y)


def renormalise_s(s, z_ref_ohm, z_new_ohm: float = Z_REF_OHM):
    """S referenced to the real resistances ``z_ref_ohm`` (one per port) re-referenced to ``z_new_ohm``.

    With rho_i = (r_i - Z0)/(r_i + Z0) and A = diag(sqrt(1 - rho_i^2)):
    S' = A^-1 (S + rho)(I + rho S)^-1 A. This equals the route through Z = R^1/2 (I - S)^-1 (I + S) R^1/2,
    S' = (Z - Z0 I)(Z + Z0 I)^-1, but stays finite for an ideal open (S = I). For one port it is
    Gamma' = (Gamma + rho)/(1 + rho Gamma).
    """
    s = np.asarray(s)
    z_ref = np.asarray(z_ref_ohm, dtype=float)
    if np.all(z_ref == z_new_ohm):
        return s
    rho = (z_ref - z_new_ohm) / (z_ref + z_new_ohm)
    p = s.shape[-1]
    if p == 1:
        return (s + rho[0]) / (1 + rho[0] * s)
    x = s + np.diag(rho)
    y = np.eye(p) + rho[:, None] * s
    out = np.swapaxes(np.linalg.solve(np.swapaxes(y, 1, 2), np.swapaxes(x, 1, 2)), 1, 2)
    a = np.sqrt(1 - rho ** 2)
    return out * a[None, None, :] / a[None, :, None]


__all__ = ["renormalise_s", "s_from_y", "s_from_z"]
