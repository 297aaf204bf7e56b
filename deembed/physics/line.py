"""Feed lines as physics: RLGC sections, their cascade, and the line's 2-port at any frequencies.

A :class:`Section` is a uniform coaxial run described the way a technician knows it (nominal Z0,
velocity factor or one-way delay, length, matched loss) and modelled as a distributed RLGC line:

* L and C from the nominal Z0 and the delay: ``L*l = Z0*tau``, ``C*l = tau/Z0``;
* R grows as sqrt(f) (skin effect): the conductor part of the matched loss, ``alpha_c = R/(2 Z0)``;
* G grows as f (dielectric loss): the dielectric part, ``alpha_d = G Z0/2``.

The characteristic impedance ``Zc = sqrt((R + jwL)/(G + jwC))`` is then complex, most of all at low
frequency, as it is in real coax.

A :class:`Line` is a cascade of sections (and of measured 2-ports), port 1 at the analyzer,
port 2 at the antenna. Everything is vectorised over frequency: frequency is the first axis.

References
----------
Pozar, *Microwave Engineering*, 4th ed. (Wiley 2012), sec. 2.1 (RLGC, gamma and Z0), sec. 2.7
(low-loss line: alpha = R/2Z0 + G Z0/2), Table 4.2 (ABCD to S).
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import ClassVar, Protocol

import numpy as np

from ..base.errors import OptionError
from ..base.units import fmt_freq
from .rf import Z_REF_OHM

C0_M_PER_S = 299_792_458.0
DB_PER_NP = 20 / np.log(10)  # 8.685889638...
M_PER_100FT = 30.48


@dataclass(frozen=True)
class LossModel:
    """Matched loss of a whole section, A(f) = c_np * sqrt(f_hz) + d_np * f_hz, in nepers.

    ``c_np`` is the conductor (skin-effect) coefficient, Np/sqrt(Hz); ``d_np`` the dielectric one, Np/Hz.
    """

    c_np: float = 0.0
    d_np: float = 0.0

    def np_at(self, freq_hz):
        f = np.asarray(freq_hz, dtype=float)
        return self.c_np * np.sqrt(f) + self.d_np * f

    def db_at(self, freq_hz):
        return DB_PER_NP * self.np_at(freq_hz)

    def scaled(self, factor: float) -> "LossModel":
        return LossModel(self.c_np * factor, self.d_np * factor)

    @classmethod
    def from_k(cls, k1_db_per_100ft, k2_db_per_100ft, length_m) -> "LossModel":
        """From the trade's cable coefficients: dB/100 ft = k1*sqrt(f_MHz) + k2*f_MHz, for a length in m."""
        per_m = length_m / M_PER_100FT / DB_PER_NP
        return cls(k1_db_per_100ft * per_m / 1e3, k2_db_per_100ft * per_m / 1e6)

    @staticmethod
    def fit_misfit(model: "LossModel", points, *, rel_tol: float = 0.005, abs_tol_db: float = 0.005) -> str | None:
        """A warning when a fitted model does not honour the given loss points, else None.

        Two points are met exactly whenever a physical fit exists (both coefficients >= 0: the loss rises at
        least as fast as sqrt(f) and no faster than f); otherwise, and for three or more points that no
        c sqrt(f) + d f passes through, the warning lists each point beside the fitted value.
        A point counts as met within 0.5 % or 0.005 dB (our choice: the printed precision).
        """
        pts = [(float(db), float(hz)) for db, hz in points]
        if len(pts) < 2:
            return None
        fitted = [float(model.db_at(hz)) for _, hz in pts]
        if all(abs(fv - db) <= max(rel_tol * db, abs_tol_db) for (db, _), fv in zip(pts, fitted)):
            return None
        pairs = "; ".join(f"{db:.3g} dB at {fmt_freq(hz)} -> {fv:.3g} dB" for (db, hz), fv in zip(pts, fitted))
        return ("the loss points cannot all be met by a physical line loss (conductor loss rising as sqrt(f) plus "
                "dielectric loss rising as f, neither negative), so the nearest such loss is used: given -> used: "
                f"{pairs}. Check the figures, or describe the line by cable and length")

    @classmethod
    def fit(cls, points, option: str = "loss") -> "LossModel":
        """Fit to measured or quoted points [(dB, Hz), ...].

        One point: all conductor loss (sqrt(f) scaling). Two or more: non-negative least squares
        on [sqrt(f), f], weighted so every point counts in relative terms.
        """
        pts = [(float(db), float(hz)) for db, hz in points]
        if not pts:
            return cls()
        for db, hz in pts:
            if db < 0 or hz <= 0:
                raise OptionError(option, "each loss point needs a loss of 0 dB or more at a positive frequency")
        if len(pts) == 1:
            db, hz = pts[0]
            return cls(db / DB_PER_NP / np.sqrt(hz), 0.0)
        from scipy.optimize import nnls

        db = np.array([p[0] for p in pts])
        hz = np.array([p[1] for p in pts])
        if len(np.unique(hz)) < 2:
            raise OptionError(option, "two loss points at the same frequency; give them at different frequencies")
        w = 1.0 / np.maximum(db, 1e-3)
        a = np.column_stack([np.sqrt(hz), hz]) * w[:, None]
        coef, _ = nnls(a, db / DB_PER_NP * w)
        return cls(float(coef[0]), float(coef[1]))


@dataclass(frozen=True)
class Section:
    """A uniform run of line.

    Parameters
    ----------
    z0_ohm : float
        Nominal (high-frequency, lossless) characteristic impedance, ohm.
    delay_s : float
        One-way propagation delay, s (= length / (VF c)).
    loss : LossModel
        Matched loss of the whole section.
    length_m, vf : float or None
        Physical length and velocity factor, when known (for reports; the physics needs only the delay).
    label : str
        What the section is ("RG-213, 30.0 m").
    """

    z0_ohm: float
    delay_s: float
    loss: LossModel = field(default_factory=LossModel)
    length_m: float | None = None
    vf: float | None = None
    label: str = "line"
    tolerance: object = field(default=None, compare=False)
    """How well the section is known (:class:`deembed.physics.tolerance.Tolerance`), for the uncertainty;
    None means the defaults for how it is described."""
    kind: ClassVar[str] = "section"

    @classmethod
    def from_length(cls, z0_ohm, vf, length_m, loss=None, label="line") -> "Section":
        return cls(z0_ohm, length_m / (vf * C0_M_PER_S), loss or LossModel(), length_m, vf, label)

    def rlgc_total(self, freq_hz):
        """R, L, G, C of the whole section (ohm, H, S, F), each shaped like ``freq_hz``.

        Notes
        -----
        alpha_c = R/(2 Z0) and alpha_d = G Z0/2 (Pozar 4th ed. sec. 2.7) give R = 2 Z0 A_c(f) and
        G = 2 A_d(f)/Z0 for the section's conductor and dielectric matched losses A_c, A_d (Np).
        """
        f = np.asarray(freq_hz, dtype=float)
        r = 2 * self.z0_ohm * self.loss.c_np * np.sqrt(f)
        g = 2 * self.loss.d_np * f / self.z0_ohm
        return r, self.z0_ohm * self.delay_s, g, self.delay_s / self.z0_ohm

    def propagation(self, freq_hz):
        """(gamma*l, Zc): the section's complex electrical length (Np + j rad) and characteristic impedance.

        Notes
        -----
        gamma = sqrt((R + jwL)(G + jwC)), Zc = sqrt((R + jwL)/(G + jwC)) (Pozar 4th ed. sec. 2.1).
        """
        r, l, g, c = self.rlgc_total(freq_hz)
        w = 2 * np.pi * np.asarray(freq_hz, dtype=float)
        zs = r + 1j * w * l
        yp = g + 1j * w * c
        gl = np.sqrt(zs * yp)
        # principal roots: Re(gamma) >= 0 and Re(Zc) > 0 for passive lines; with zs and yp in the first
        # quadrant, zs / sqrt(zs yp) is the principal sqrt(zs / yp) and costs one root less.
        # At 0 Hz zs = yp = 0: Zc is 0/0 there, and its limit is the nominal Z0 (R ~ sqrt(f), G ~ f).
        if self.delay_s <= 0:
            return gl, np.full(np.shape(w), complex(self.z0_ohm))
        with np.errstate(divide="ignore", invalid="ignore"):
            zc = zs / gl
        return gl, np.where(np.isfinite(zc), zc, self.z0_ohm)

    def abcd_parts_and_loss(self, freq_hz):
        """((A, B, C, D), matched loss dB) from one evaluation of the propagation constant."""
        gl, zc = self.propagation(freq_hz)
        return self._abcd_from(gl, zc), DB_PER_NP * gl.real

    def abcd_parts(self, freq_hz):
        """(A, B, C, D), each shaped like ``freq_hz``: A = D = cosh(gl), B = Zc sinh(gl), C = sinh(gl)/Zc."""
        return self._abcd_from(*self.propagation(freq_hz))

    @staticmethod
    def _abcd_from(gl, zc):
        e = np.exp(gl)
        ei = 1 / e
        ch = (e + ei) * 0.5
        sh = (e - ei) * 0.5
        return ch, zc * sh, sh / zc, ch

    def s_params(self, freq_hz):
        """S (n, 2, 2) at 50 ohm."""
        return abcd_to_s(self.abcd(freq_hz))

    def abcd(self, freq_hz):
        """ABCD matrix of the section, shape (n, 2, 2)."""
        return _abcd_matrix(*self.abcd_parts(freq_hz))

    def deembed_terms(self, freq_hz, z_ref_ohm: float = Z_REF_OHM):
        """(S11, S21*S12, S22, matched loss dB), each (n,), in one pass: one sqrt and one exp per point.

        Notes
        -----
        With gl = sqrt(Z'Y') l (as in :meth:`propagation`), the reflection of Zc = Z'l/gl against the reference,
        rho = (Zc - z_ref)/(Zc + z_ref) = (Z'l - z_ref gl)/(Z'l + z_ref gl), and P^2 = exp(-2 gl), a uniform
        line is S11 = S22 = rho (1 - P^2)/(1 - rho^2 P^2) and S21 S12 = P^2 (1 - rho^2)^2/(1 - rho^2 P^2)^2
        (the ABCD form cosh/sinh of Pozar 4th ed. sec. 2.1 through Table 4.2, multiplied out; from memory,
        checked against scikit-rf's DistributedCircuit in tests/test_line_terms.py). The matched loss is
        Re(gl) in dB, from the same root. At 0 Hz Zc is taken as its limit, the nominal Z0.
        """
        f = np.asarray(freq_hz, dtype=float)
        if self.delay_s <= 0 or f.ndim != 1:
            return _terms_from_abcd(*self.abcd_parts(f), z_ref_ohm) + (self.matched_loss_db(f),)
        z0, tau = self.z0_ohm, self.delay_s
        w = (2 * np.pi) * f
        zs = np.empty(f.shape, dtype=complex)  # series impedance of the whole section, R + jwL
        zs.real = (2 * z0 * self.loss.c_np) * np.sqrt(f)
        zs.imag = (z0 * tau) * w
        gl = np.empty(f.shape, dtype=complex)  # shunt admittance G + jwC, then gamma*l
        gl.real = 2 * self.loss.d_np * f / z0
        gl.imag = (tau / z0) * w
        del w
        gl *= zs
        np.sqrt(gl, out=gl)
        loss_db = gl.real * DB_PER_NP
        t = gl * z_ref_ohm
        rho = zs - t
        zs += t
        with np.errstate(divide="ignore", invalid="ignore"):  # 0/0 at 0 Hz, set just below
            rho /= zs
        zero = f == 0
        if zero.any():
            rho[zero] = (z0 - z_ref_ohm) / (z0 + z_ref_ohm)
        p2 = np.multiply(gl, -2.0, out=zs)
        np.exp(p2, out=p2)
        del gl
        r2 = np.multiply(rho, rho, out=t)
        inv = r2 * p2
        np.subtract(1.0, inv, out=inv)
        np.divide(1.0, inv, out=inv)
        np.subtract(1.0, r2, out=r2)
        r2 *= inv
        r2 *= r2
        r2 *= p2  # S21 S12
        np.subtract(1.0, p2, out=p2)
        p2 *= rho
        p2 *= inv  # S11 = S22
        return p2, r2, p2, loss_db

    def matched_loss_db(self, freq_hz):
        """One-way matched loss, dB: Re(gamma l) in dB from the full RLGC propagation constant."""
        return DB_PER_NP * self.propagation(freq_hz)[0].real

    def describe(self) -> str:
        bits = [self.label, f"Z0 {self.z0_ohm:g} ohm"]
        if self.length_m is not None:
            bits.append(f"{self.length_m:.3f} m")
        if self.vf is not None:
            bits.append(f"VF {self.vf:g}")
        bits.append(f"delay {self.delay_s * 1e9:.3f} ns")
        return ", ".join(bits)


class LinePart(Protocol):
    """What every part of a :class:`Line` offers: :class:`Section`, :class:`MeasuredTwoPort` and
    :class:`deembed.io.charfile.CharacterizedLine`.

    ``kind`` says what the part is: ``"section"`` (a modelled RLGC section: it also has ``z0_ohm``, ``delay_s``,
    ``loss``, ``length_m`` and ``vf``), ``"measured"`` (a 2-port known only at its measured frequencies) or
    ``"characterized"`` (a run known from a far-end characterization, with a model between its points: it also
    has ``section``, the fitted model, and ``between_points``). Code asks ``part.kind`` (or ``isinstance`` on the
    concrete classes), never ``hasattr`` or the class name.
    """

    kind: ClassVar[str]
    label: str

    def abcd_parts(self, freq_hz) -> tuple:
        """A, B, C, D as four (n,) arrays."""

    def s_params(self, freq_hz):
        """S (n, 2, 2) at 50 ohm, port 1 toward the analyzer."""

    def matched_loss_db(self, freq_hz):
        """One-way matched loss, dB."""

    def describe(self) -> str:
        """One line for people."""


def abcd_parts_of(m) -> tuple:
    """An ABCD stack (n, 2, 2) as its four (n,) arrays."""
    return m[..., 0, 0], m[..., 0, 1], m[..., 1, 0], m[..., 1, 1]


@dataclass(frozen=True)
class MeasuredTwoPort:
    """A 2-port known only at its measured frequencies (S at 50 ohm, port 1 toward the analyzer)."""

    freq_hz: np.ndarray
    s: np.ndarray
    label: str = "measured 2-port"
    source: str = ""
    kind: ClassVar[str] = "measured"

    def s_params(self, freq_hz):
        f = np.asarray(freq_hz, dtype=float)
        if f.shape == self.freq_hz.shape and np.array_equal(f, self.freq_hz):
            return self.s
        # some of its own frequencies (the uncertainty step evaluates a line at a subset of the sweep's points)
        idx = np.searchsorted(self.freq_hz, f)
        if f.ndim == 1 and np.all(idx < self.freq_hz.size) and np.array_equal(self.freq_hz[np.minimum(idx, self.freq_hz.size - 1)], f):
            return self.s[idx]
        raise OptionError(
            "line",
            f"{self.source or self.label} was measured at other frequencies than the sweep; "
            "measure the line over the sweep's own points, or characterize it so it can be evaluated through its model",
        )

    def abcd(self, freq_hz):
        return s_to_abcd(self.s_params(freq_hz))

    def abcd_parts(self, freq_hz):
        return abcd_parts_of(self.abcd(freq_hz))

    def matched_loss_db(self, freq_hz):
        """Insertion loss -20 log10 |S21|, dB (the matched loss when the 2-port is near Z_REF)."""
        with np.errstate(divide="ignore"):  # S21 = 0 (an open run) is an infinite loss
            return -20 * np.log10(np.abs(self.s_params(freq_hz)[:, 1, 0]))

    def describe(self) -> str:
        return f"{self.label} ({self.source})" if self.source else self.label


@dataclass(frozen=True)
class Line:
    """A feed line: sections (and measured 2-ports) in order from the analyzer to the antenna."""

    parts: tuple
    name: str = ""

    def __post_init__(self):
        if not self.parts:
            raise OptionError("line", "a line needs at least one section")

    def abcd_parts(self, freq_hz):
        """Cascade ABCD as four arrays (A, B, C, D), multiplied out element by element."""
        total = None
        for part in self.parts:
            p = part.abcd_parts(freq_hz)
            if total is None:
                total = p
            else:
                a1, b1, c1, d1 = total
                a2, b2, c2, d2 = p
                total = (a1 * a2 + b1 * c2, a1 * b2 + b1 * d2, c1 * a2 + d1 * c2, c1 * b2 + d1 * d2)
        return total

    def abcd(self, freq_hz):
        """Cascade ABCD, shape (n, 2, 2)."""
        return _abcd_matrix(*self.abcd_parts(freq_hz))

    def s_params(self, freq_hz, z_ref_ohm: float = Z_REF_OHM):
        """The whole line's S-parameters at ``z_ref_ohm``, shape (n, 2, 2)."""
        if len(self.parts) == 1 and self.parts[0].kind != "section":  # a measured or characterized 2-port (50 ohm)
            return self.parts[0].s_params(freq_hz)
        return _abcd_parts_to_s(*self.abcd_parts(freq_hz), z_ref_ohm)

    def deembed_terms(self, freq_hz, z_ref_ohm: float = Z_REF_OHM):
        """(S11, S21*S12, S22, matched loss dB) of the whole line, each (n,): all de-embedding needs.

        One section: :meth:`Section.deembed_terms` (one sqrt, one exp per point). A measured or characterized
        2-port alone: its own S. A cascade: the sections' ABCD, each from one sqrt and one exp, multiplied out.
        """
        f = np.asarray(freq_hz, dtype=float)
        if len(self.parts) == 1:
            part = self.parts[0]
            if isinstance(part, Section):
                return part.deembed_terms(f, z_ref_ohm)
            s = part.s_params(f)  # a measured or characterized 2-port: its own S (50 ohm)
            return s[:, 0, 0], s[:, 1, 0] * s[:, 0, 1], s[:, 1, 1], np.asarray(part.matched_loss_db(f), dtype=float)
        total = None
        loss = np.zeros(f.shape)
        for part in self.parts:
            if isinstance(part, Section):
                p, part_loss = part.abcd_parts_and_loss(f)
            else:
                p = part.abcd_parts(f)
                part_loss = part.matched_loss_db(f)
            loss += part_loss
            if total is None:
                total = p
            else:
                a1, b1, c1, d1 = total
                a2, b2, c2, d2 = p
                total = (a1 * a2 + b1 * c2, a1 * b2 + b1 * d2, c1 * a2 + d1 * c2, c1 * b2 + d1 * d2)
        return _terms_from_abcd(*total, z_ref_ohm) + (loss,)

    @property
    def blockwise(self) -> bool:
        """True when the line can be evaluated on any subset of frequencies (a model, no measured grid)."""
        return all(isinstance(p, Section) for p in self.parts)

    def matched_loss_db(self, freq_hz):
        """One-way matched loss of the whole run, dB: the sum of the parts' matched losses."""
        return sum(p.matched_loss_db(freq_hz) for p in self.parts)

    @property
    def delay_s(self) -> float | None:
        """Total one-way delay of the modelled sections and characterized runs (their fitted delay); None if
        any part is a measured 2-port known only as numbers."""
        secs = [p if p.kind == "section" else p.section if p.kind == "characterized" else None for p in self.parts]
        if any(s is None for s in secs):
            return None
        return float(sum(s.delay_s for s in secs))

    def describe(self) -> str:
        head = f"{self.name}: " if self.name else ""
        return head + " + ".join(p.describe() for p in self.parts)


def abcd_to_s(m, z_ref_ohm: float = Z_REF_OHM):
    """ABCD (n, 2, 2) to S (n, 2, 2) at a real reference impedance (Pozar 4th ed. Table 4.2)."""
    return _abcd_parts_to_s(m[..., 0, 0], m[..., 0, 1], m[..., 1, 0], m[..., 1, 1], z_ref_ohm)


def _abcd_parts_to_s(a, b, c, d, z_ref_ohm: float = Z_REF_OHM):
    b, c = b / z_ref_ohm, c * z_ref_ohm
    inv = 1 / (a + b + c + d)
    s = np.empty(np.shape(a) + (2, 2), dtype=complex)
    s[..., 0, 0] = (a + b - c - d) * inv
    s[..., 1, 0] = 2 * inv
    s[..., 0, 1] = 2 * (a * d - b * c) * inv
    s[..., 1, 1] = (-a + b - c + d) * inv
    return s


def _terms_from_abcd(a, b, c, d, z_ref_ohm: float = Z_REF_OHM):
    """(S11, S21*S12, S22) from ABCD parts at a real reference (Pozar 4th ed. Table 4.2):
    S21 S12 = 4 (AD - BC) / (A + B/Z + CZ + D)^2."""
    b, c = b / z_ref_ohm, c * z_ref_ohm
    inv = 1 / (a + b + c + d)
    s11 = (a + b - c - d) * inv
    s22 = (-a + b - c + d) * inv
    s21s12 = 4 * (a * d - b * c) * inv * inv
    return s11, s21s12, s22


def _abcd_matrix(a, b, c, d):
    m = np.empty(np.shape(a) + (2, 2), dtype=complex)
    m[..., 0, 0], m[..., 0, 1], m[..., 1, 0], m[..., 1, 1] = a, b, c, d
    return m


def s_to_abcd(s, z_ref_ohm: float = Z_REF_OHM):
    """S (n, 2, 2) at a real reference impedance to ABCD (Pozar 4th ed. Table 4.2)."""
    s11, s12, s21, s22 = s[..., 0, 0], s[..., 0, 1], s[..., 1, 0], s[..., 1, 1]
    m = np.empty(s.shape, dtype=complex)
    den = 2 * s21
    m[..., 0, 0] = ((1 + s11) * (1 - s22) + s12 * s21) / den
    m[..., 0, 1] = z_ref_ohm * ((1 + s11) * (1 + s22) - s12 * s21) / den
    m[..., 1, 0] = ((1 - s11) * (1 - s22) - s12 * s21) / den / z_ref_ohm
    m[..., 1, 1] = ((1 - s11) * (1 + s22) + s12 * s21) / den
    return m
