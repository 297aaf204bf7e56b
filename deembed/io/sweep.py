"""A measured sweep: the small object every reader returns and every command consumes."""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..physics.rf import Z_REF_OHM


@dataclass(frozen=True)
class Sweep:
    """Network data read from a file.

    Attributes
    ----------
    freq_hz : ndarray, shape (n,)
        Strictly increasing frequencies, Hz.
    s : ndarray, shape (n, p, p), complex
        S-parameters referenced to ``Z_REF_OHM`` (50 ohm) on every port, whatever the file used.
    source : str
        Where the data came from (a path), for messages.
    file_z_ref_ohm : float
        The reference resistance the file itself stated (for reporting only).
    comments : tuple of str
        Comment lines of the file, without the leading '!'.
    notes : tuple of str
        Remarks made while reading (defaults used, lines ignored), for the caller to show.
    """

    freq_hz: np.ndarray
    s: np.ndarray
    source: str = "<memory>"
    file_z_ref_ohm: float = Z_REF_OHM
    comments: tuple = field(default_factory=tuple)
    notes: tuple = field(default_factory=tuple)

    @property
    def nports(self) -> int:
        return int(self.s.shape[1])

    @property
    def npoints(self) -> int:
        return int(self.freq_hz.shape[0])

    @property
    def gamma(self) -> np.ndarray:
        """The one-port reflection coefficient (S11 at 50 ohm), shape (n,)."""
        return self.s[:, 0, 0]

    def to_network(self, name: str | None = None):
        """The same data as a :class:`skrf.Network` (50 ohm ports). Imports scikit-rf on first use."""
        import skrf

        freq = skrf.Frequency.from_f(self.freq_hz, unit="Hz")
        return skrf.Network(frequency=freq, s=self.s, z0=Z_REF_OHM, name=name)


def one_port(freq_hz, gamma, source: str = "<memory>") -> Sweep:
    """Build a one-port :class:`Sweep` from arrays (Gamma at 50 ohm)."""
    f = np.asarray(freq_hz, dtype=float)
    g = np.asarray(gamma, dtype=complex).reshape(-1, 1, 1)
    return Sweep(freq_hz=f, s=g, source=source)
