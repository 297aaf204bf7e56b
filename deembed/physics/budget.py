"""Power budget along a feed line: what the transmitter sends, what the antenna gets, what the line eats.

Pure numpy functions; arrays broadcast against each other, scalars in give Python floats out.
Powers in W, losses in dB (positive), the line is described by its one-way matched loss ML in dB.
Both ends are referred to the line's characteristic impedance, taken as real (50 ohm).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..base.errors import OptionError
from ..base.results import Result
from ..base.units import fmt_freq
from .rf import gamma_mag_from_swr, return_loss_db, swr

MAX_MATCHED_LOSS_DB = 1000.0
"""Bound of a line's one-way matched loss, dB: a larger figure is refused wherever it appears (the budget's
loss, a loss point of a line, the loss a line model reaches over a sweep's frequencies). At 1000 dB the two-way
factor is 10^200, still inside floating point (about 10^308); a real feed line never comes near it, so a
figure beyond it is a typing or unit mistake (a sweep's frequencies in Hz read as MHz, say). Our choice,
common practice, no source."""

MAX_SWR = 1e6
"""Largest SWR the budget takes (|Gamma| within 2e-6 of 1): beyond it every power figure is that of a total
reflection to the printed digits, and the total-loss formula divides by almost zero. Our choice, no source."""

MAX_POWER_W = 1e9
"""Largest power the budget takes, W (1 GW, far above any transmitter): a larger figure is a typing mistake."""


def matched_loss_refusal(loss_db: float, at_hz: float | None = None) -> str:
    """The one message for a matched loss above :data:`MAX_MATCHED_LOSS_DB` (``at_hz``: where a line model
    reaches it)."""
    where = f" at {fmt_freq(at_hz)}" if at_hz is not None else ""
    return (f"a one-way matched loss of {loss_db:.4g} dB{where} is above the {MAX_MATCHED_LOSS_DB:g} dB any feed line "
            "may have; check the loss figure, the line's length and the frequency unit")


def check_matched_loss(loss_db, field: str = "loss", at_hz=None) -> None:
    """Refuse a matched loss (a number, or an array with the frequencies ``at_hz``) above
    :data:`MAX_MATCHED_LOSS_DB`, naming ``field``; NaN is left to the caller."""
    ml = np.asarray(loss_db, dtype=float)
    over = ml > MAX_MATCHED_LOSS_DB
    if np.any(over):
        k = int(np.argmax(np.where(over, ml, -np.inf)))
        at = None if at_hz is None else float(np.asarray(at_hz, dtype=float).ravel()[k])
        raise OptionError(field, matched_loss_refusal(float(ml.ravel()[k]), at))


def check_power(power_w, field: str = "power") -> None:
    """Refuse a power above :data:`MAX_POWER_W` (a number or an array), naming ``field``."""
    p = np.asarray(power_w, dtype=float)
    if np.any(p > MAX_POWER_W):
        raise OptionError(field, f"{float(np.max(p)):g} W is above {MAX_POWER_W / 1e9:g} GW, more than any "
                                 "transmitter; check the number and its unit (100W, 1.5kW)")


def _out(x, scalar: bool):
    return float(x) if scalar else x


def _loss_factor(matched_loss_db, option="loss"):
    ml = np.asarray(matched_loss_db, dtype=float)
    if np.any(~np.isfinite(ml)) or np.any(ml < 0):
        raise OptionError(option, "the matched line loss must be a finite number of dB, zero or more (e.g. 1.8dB)")
    check_matched_loss(ml, option)
    return ml, 10.0 ** (ml / 10.0)


@dataclass(frozen=True)
class AtAntenna(Result):
    """The antenna end: forward, reflected and delivered power (W), SWR and |Gamma| there."""

    forward_w: object
    reflected_w: object
    delivered_w: object
    swr: object
    gamma_mag: object


@dataclass(frozen=True)
class AtTransmitter(Result):
    """The transmitter end: forward and reflected power, SWR, return loss (dB), net power into the line, |Gamma|."""

    forward_w: object
    reflected_w: object
    swr: object
    return_loss_db: object
    net_w: object
    gamma_mag: object


@dataclass(frozen=True)
class LineBudget(Result):
    """The line: its matched loss (dB) and the power it dissipates (W)."""

    matched_loss_db: object
    dissipated_w: object


@dataclass(frozen=True)
class MatchedAtTransmitter(Result):
    """With a matching unit at the transmitter end: total and additional loss (dB), delivered, dissipated (W)."""

    total_loss_db: object
    additional_loss_db: object
    delivered_w: object
    dissipated_w: object


@dataclass(frozen=True)
class PowerBudget(Result):
    """Where the power goes (:func:`power_budget`); ``to_dict()`` is ``deembed budget --json``.

    Each value is a float when every input was a scalar, else an array of the broadcast shape.
    ``inferred_from_measured_swr`` is the SWR read at the transmitter when the antenna's was inferred from it.
    """

    at_antenna: AtAntenna
    at_transmitter: AtTransmitter
    line: LineBudget
    matched_at_transmitter: MatchedAtTransmitter
    inferred_from_measured_swr: float | None = None

    OPTIONAL = ("inferred_from_measured_swr",)


def power_budget(power_w, matched_loss_db, gamma_antenna) -> PowerBudget:
    """Where the power goes on a line of matched loss ML feeding an antenna of reflection Gamma_L.

    Parameters
    ----------
    power_w : float or array_like
        Transmitter power, W (positive). In the ``at_*`` and ``line`` entries it is the forward power
        leaving the transmitter, with the reflected wave absorbed at the transmitter end; in
        ``matched_at_transmitter`` it is the net power a matching unit at the transmitter end puts
        into the line (it re-reflects the returning wave, so none comes back to the transmitter).
    matched_loss_db : float or array_like
        One-way matched loss of the line, dB (zero or more).
    gamma_antenna : complex or array_like
        Reflection coefficient of the antenna (only its magnitude is used). Entries with
        |Gamma_L| > 1 (not passive: an over-corrected measurement) give NaN in every quantity
        that depends on Gamma_L.

    Returns
    -------
    PowerBudget
        ``at_antenna``: ``forward_w``, ``reflected_w``, ``delivered_w``, ``swr``, ``gamma_mag``;
        ``at_transmitter``: ``forward_w``, ``reflected_w``, ``swr``, ``return_loss_db``, ``net_w``,
        ``gamma_mag``;
        ``line``: ``matched_loss_db``, ``dissipated_w`` (net into the line minus delivered);
        ``matched_at_transmitter``: ``total_loss_db``, ``additional_loss_db`` (total minus matched),
        ``delivered_w``, ``dissipated_w``.
        Values are arrays of the broadcast shape, or Python floats when every input is a scalar.

    Notes
    -----
    With a = 10^(ML/10) and Pf the forward power at the transmitter (check-values F8, F10):
    forward at the antenna Pf/a; reflected there Pf |Gamma_L|^2 / a; delivered Pf (1 - |Gamma_L|^2)/a;
    |Gamma_in| = |Gamma_L| / a, so the reflected power back at the transmitter is Pf |Gamma_in|^2 and
    the net power into the line Pf (1 - |Gamma_in|^2).

    With a matching unit at the transmitter end the total loss of the mismatched line is
    TL = 10 log10[(a^2 - |Gamma_L|^2) / (a (1 - |Gamma_L|^2))] dB and the antenna gets P 10^(-TL/10)
    (ARRL *Antenna Book*, Transmission Lines chapter, from memory; the same result as Pozar,
    *Microwave Engineering* 4th ed. Sec. 2.7, "the terminated lossy line", from memory). It is
    exact for a real characteristic impedance.
    """
    scalar = all(np.ndim(v) == 0 for v in (power_w, matched_loss_db, gamma_antenna))
    p = np.asarray(power_w, dtype=float)
    if np.any(~np.isfinite(p)) or np.any(p <= 0):
        raise OptionError("power", "the power must be a positive number of watts (e.g. 100W)")
    check_power(p)
    ml, a = _loss_factor(matched_loss_db)
    gl = np.abs(np.asarray(gamma_antenna, dtype=complex))
    gl = np.where(gl <= 1.0, gl, np.nan)
    p, ml, a, gl = np.broadcast_arrays(p, ml, a, gl)
    gl2 = gl ** 2
    g_in = gl / a

    fwd_ant = p / a
    refl_ant = fwd_ant * gl2
    delivered = fwd_ant * (1.0 - gl2)
    refl_tx = p * g_in ** 2
    net = p - refl_tx

    with np.errstate(divide="ignore", invalid="ignore"):
        tl = 10.0 * np.log10((a ** 2 - gl2) / (a * (1.0 - gl2)))
    # TL >= ML exactly ((a^2 - g^2) / (a (1 - g^2)) >= a for a >= 1); rounding can put it a hair below,
    # which would print as -0.000 dB of additional loss
    tl = np.where(tl < ml, ml, tl)
    delivered_m = p * 10.0 ** (-tl / 10.0)

    with np.errstate(divide="ignore"):
        rl_tx = return_loss_db(g_in)
    o = lambda v: _out(v, scalar)  # noqa: E731
    return PowerBudget(
        AtAntenna(o(fwd_ant), o(refl_ant), o(delivered), o(swr(gl)), o(gl)),
        AtTransmitter(o(p), o(refl_tx), o(swr(g_in)), o(rl_tx), o(net), o(g_in)),
        LineBudget(o(ml), o(net - delivered)),
        MatchedAtTransmitter(o(tl), o(tl - ml), o(delivered_m), o(p - delivered_m)),
    )


def antenna_swr_from_measured(measured_swr, matched_loss_db):
    """The antenna's SWR from an SWR read at the transmitter end of a line of matched loss ML.

    Parameters
    ----------
    measured_swr : float or array_like
        SWR read at the transmitter end (finite, 1 or more).
    matched_loss_db : float or array_like
        One-way matched loss of the line, dB.

    Returns
    -------
    float or ndarray
        SWR at the antenna.

    Raises
    ------
    OptionError
        ``measured_swr`` when the reading is not an SWR, or when the line loss would need the
        antenna to reflect all the power or more (|Gamma_L| >= 1): the loss figure or the reading is
        wrong.

    Notes
    -----
    |Gamma_L| = |Gamma_in| 10^(+ML/10), the inverse of check-values F8 (Gamma(z) = Gamma_L e^(-2 gamma l)).
    """
    scalar = np.ndim(measured_swr) == 0 and np.ndim(matched_loss_db) == 0
    s = np.asarray(measured_swr, dtype=float)
    if np.any(~np.isfinite(s)) or np.any(s < 1):
        raise OptionError("measured_swr", "an SWR reading must be a finite number of 1 or more (e.g. 1.5)")
    ml, a = _loss_factor(matched_loss_db)
    s, ml, a = np.broadcast_arrays(s, ml, a)
    g_l = gamma_mag_from_swr(s) * a
    if np.any(g_l >= 1):
        k = np.unravel_index(np.argmax(g_l), g_l.shape)
        raise OptionError(
            "measured_swr",
            f"an SWR of {s[k]:g} read behind {ml[k]:g} dB of matched line loss would need the antenna to "
            f"reflect all the power or more (|Gamma| = {g_l[k]:.3g}); the line loss is larger than the "
            "reading allows, so the loss figure or the reading is wrong")
    return _out(swr(g_l), scalar)
