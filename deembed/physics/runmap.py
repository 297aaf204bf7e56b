"""Where a one-way delay lies on the line, and how much line loss lies before it.

A :class:`RunMap` is the line seen from the analyzer as consecutive stretches, each with its one-way
delay, its velocity factor (when known) and its matched loss spread evenly along it. Beyond the last
described stretch the line is taken to go on like its last stretch (same velocity factor and loss per
unit delay), so that reflections past the described end still get a distance and a loss estimate.

Distance: ``d = VF c tau`` inside each stretch. Loss: the matched loss of a stretch (``c sqrt(f) + d f``
nepers, :class:`~deembed.physics.line.LossModel`) is uniform per unit length, so a reflection at delay
``tau`` sees the sum of the whole stretches before it plus the fraction of the one it is in.
Pure numpy; built from a line description by :func:`from_line` or from a cable alone.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

C0_M_PER_S = 299_792_458.0


@dataclass(frozen=True)
class Stretch:
    """One uniform stretch: one-way delay, velocity factor (None: unknown), loss per second of delay.

    ``c_np_per_s`` (Np / sqrt(Hz) / s) and ``d_np_per_s`` (Np / Hz / s) are the matched-loss
    coefficients divided by the stretch's delay.
    """

    delay_s: float
    vf: float | None
    c_np_per_s: float = 0.0
    d_np_per_s: float = 0.0
    label: str = ""


@dataclass(frozen=True)
class RunMap:
    """The line as consecutive stretches from the analyzer; the last one continues past the end.

    Attributes
    ----------
    stretches : tuple of Stretch (at least one)
    length_m : the described line's physical length, when known
    delay_s : the described line's one-way delay, when known
    has_loss : whether any loss is known
    source : what the description came from, for messages
    """

    stretches: tuple
    length_m: float | None = None
    delay_s: float | None = None
    has_loss: bool = False
    source: str = ""

    @property
    def knows_distance(self) -> bool:
        return all(s.vf is not None for s in self.stretches)

    def _bounds(self):
        d = np.array([s.delay_s for s in self.stretches], dtype=float)
        start = np.concatenate([[0.0], np.cumsum(d)[:-1]])
        return start, d

    def _inside(self, tau):
        """Delay spent inside each stretch up to one-way delay ``tau``: shape (len(tau), n_stretches)."""
        tau = np.atleast_1d(np.asarray(tau, dtype=float))
        start, d = self._bounds()
        d = d.copy()
        d[-1] = np.inf  # the last stretch continues
        return np.clip(tau[:, None] - start[None, :], 0.0, d[None, :])

    def distance_m(self, tau_s):
        """One-way physical distance of one-way delays (array), m; None when a velocity factor is unknown."""
        if not self.knows_distance:
            return None
        v = np.array([s.vf for s in self.stretches]) * C0_M_PER_S
        return (self._inside(tau_s) * v).sum(axis=1)

    def delay_of_distance_s(self, distance_m):
        """Inverse of :meth:`distance_m` (array of metres to one-way delay, s)."""
        dist = np.atleast_1d(np.asarray(distance_m, dtype=float))
        start, d = self._bounds()
        v = np.array([s.vf for s in self.stretches]) * C0_M_PER_S
        lengths = d * v
        lengths[-1] = np.inf
        start_m = np.concatenate([[0.0], np.cumsum(lengths)[:-1]])
        inside = np.clip(dist[:, None] - start_m[None, :], 0.0, lengths[None, :])
        return (inside / v).sum(axis=1)

    def loss_np(self, tau_s, freq_hz):
        """One-way matched loss from the analyzer to each delay, Np: shape (len(tau), len(freq))."""
        inside = self._inside(tau_s)
        c = (inside * np.array([s.c_np_per_s for s in self.stretches])).sum(axis=1)
        d = (inside * np.array([s.d_np_per_s for s in self.stretches])).sum(axis=1)
        f = np.atleast_1d(np.asarray(freq_hz, dtype=float))
        return c[:, None] * np.sqrt(f)[None, :] + d[:, None] * f[None, :]

    def describe(self) -> str:
        bits = []
        if self.source:
            bits.append(self.source)
        vfs = sorted({s.vf for s in self.stretches if s.vf is not None})
        if vfs and self.knows_distance:
            bits.append("velocity factor " + ", ".join(f"{v:g}" for v in vfs))
        if not self.has_loss:
            bits.append("no loss known")
        return "; ".join(bits)


def model_section(part):
    """The uniform section that stands for a line part along the line: the part itself for a modelled
    section, the fitted model of a characterized run (its delay and matched loss; its velocity factor and
    length are unknown), None for a measured 2-port known only as numbers."""
    if getattr(part, "kind", "") == "section":
        return part
    return getattr(part, "section", None)


def from_line(line, source: str = "") -> tuple[RunMap | None, str]:
    """A run map from a :class:`~deembed.physics.line.Line`; (None, why) when a part has no delay (a
    measured 2-port). A characterized run contributes its fitted delay and loss (:func:`model_section`);
    its velocity factor is unknown, so the map then gives delays, not distances."""
    stretches = []
    length = 0.0
    length_known = True
    for part in line.parts:
        sec = model_section(part)
        delay = getattr(sec, "delay_s", None)
        loss = getattr(sec, "loss", None)
        if delay is None or loss is None:
            return None, (f"{part.describe()} is a measured 2-port with no known delay, so where reflections sit "
                          "along it cannot be worked out from the description")
        if delay <= 0:
            continue
        stretches.append(Stretch(float(delay), sec.vf, loss.c_np / delay, loss.d_np / delay,
                                 getattr(part, "label", sec.label)))
        if sec.length_m is None:
            length_known = False
        else:
            length += sec.length_m
    if not stretches:
        return None, "the line description has no length"
    has_loss = any(s.c_np_per_s or s.d_np_per_s for s in stretches)
    return RunMap(tuple(stretches), length if length_known else None, float(sum(s.delay_s for s in stretches)),
                  has_loss, source), ""


def with_vf(m: RunMap, vf: float) -> RunMap:
    """The same map with ``vf`` for every stretch whose velocity factor is unknown (a characterized run is
    known by its delay only); the length follows when every stretch then has one."""
    stretches = tuple(s if s.vf is not None else replace(s, vf=float(vf)) for s in m.stretches)
    length = float(sum(s.delay_s * s.vf * C0_M_PER_S for s in stretches))
    return replace(m, stretches=stretches, length_m=length)


def uniform(vf: float | None, c_np_per_m: float = 0.0, d_np_per_m: float = 0.0, source: str = "") -> RunMap:
    """A line of unknown length with one velocity factor (None: unknown) and a loss per metre."""
    if vf is None:
        return RunMap((Stretch(1.0, None),), source=source)
    v = vf * C0_M_PER_S
    return RunMap((Stretch(1.0, vf, c_np_per_m * v, d_np_per_m * v),), has_loss=bool(c_np_per_m or d_np_per_m),
                  source=source)
