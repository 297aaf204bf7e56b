"""A lumped joint in a line: a series impedance followed by a shunt admittance (a connector or splice).

A sound connector is close to nothing at HF; a corroded or wet one adds contact resistance in series
and capacitance (or leakage) across the line. As a 2-port, series ``Z`` then shunt ``Y`` has
``ABCD = [[1 + Z Y, Z], [Y, 1]]`` (Pozar, *Microwave Engineering* 4th ed., Table 4.1, the series and shunt
elements cascaded). It fits in a :class:`~deembed.physics.line.Line` beside the RLGC sections.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .rf import Z_REF_OHM


@dataclass(frozen=True)
class Joint:
    """Series resistance and inductance, then shunt capacitance and conductance, at one point of a line."""

    series_r_ohm: float = 0.0
    series_l_h: float = 0.0
    shunt_c_f: float = 0.0
    shunt_g_s: float = 0.0
    label: str = "joint"

    def abcd_parts(self, freq_hz):
        w = 2 * np.pi * np.asarray(freq_hz, dtype=float)
        z = self.series_r_ohm + 1j * w * self.series_l_h
        y = self.shunt_g_s + 1j * w * self.shunt_c_f
        one = np.ones_like(z)
        return one + z * y, z, y, one

    def matched_loss_db(self, freq_hz):
        """Insertion loss between 50 ohm ports, -20 log10 |S21|, dB."""
        a, b, c, d = self.abcd_parts(freq_hz)
        s21 = 2 / (a + b / Z_REF_OHM + c * Z_REF_OHM + d)
        return -20 * np.log10(np.abs(s21))

    def describe(self) -> str:
        return (f"{self.label}: series {self.series_r_ohm:g} ohm + {self.series_l_h * 1e9:g} nH, shunt "
                f"{self.shunt_c_f * 1e12:g} pF + {self.shunt_g_s * 1e3:g} mS")
