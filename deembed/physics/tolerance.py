"""How well a line is known: tolerances on its length, velocity factor or delay, matched loss and Z0.

A :class:`Tolerance` travels with a line section and feeds the Monte Carlo uncertainty
(:mod:`deembed.analysis.uncertainty`). Bounds stated as "plus or minus" are half-widths of rectangular
distributions (JCGM 101:2008, 6.4.2: all that is known is that the value lies between two limits); values
taken from a least-squares fit are standard uncertainties of normal distributions (JCGM 101:2008, 6.4.7).

Defaults (used when neither the catalog, the command line nor the line file says otherwise) and their
provenance are the module constants below; each carries its source or says "common practice, no source" or
"from memory".
"""
from __future__ import annotations

from dataclasses import dataclass, field, replace

DEFAULT_LENGTH_FRACTION = 0.01
"""+/-1 % of the stated length: a run measured with a tape along its route (common practice, no source)."""

DEFAULT_DELAY_FRACTION = 0.01
"""+/-1 % of a stated one-way delay (read off a time-domain trace or computed; common practice, no source)."""

DEFAULT_VF_ABS = 0.01
"""+/-0.01 on a velocity factor the user states without a catalog cable (a VF measured with an open stub
is good to about 1-2 %; common practice, no source)."""

DEFAULT_LOSS_FRACTION_POINTS = 0.10
"""+/-10 % on matched loss given as "X dB @ F" points (a quoted or measured figure; common practice,
no source)."""

DEFAULT_LOSS_FRACTION_CATALOG = 0.25
"""+/-25 % on catalog matched loss: generic nominal figures against a given maker's cable (from memory;
the catalog itself says +/-15-25 %)."""

DEFAULT_Z0_FRACTION = 0.04
"""+/-4 % of the nominal Z0 (50 +/- 2 ohm: MIL-C-17G maxima for RG-58 and RG-213 as quoted second-hand
in the shared check values, section 1.2; applied to other impedances in proportion, from memory)."""

SOURCES = {
    "length": "+/-1 % of the length (common practice, no source)",
    "delay": "+/-1 % of the delay (common practice, no source)",
    "vf": "+/-0.01 (common practice, no source)",
    "loss_points": "+/-10 % of the stated loss (common practice, no source)",
    "loss_catalog": "+/-25 % of the catalog loss (generic figures, from memory)",
    "z0": "+/-4 % of Z0 (50 +/- 2 ohm per MIL-C-17G maxima, quoted second-hand)",
}


@dataclass(frozen=True)
class Tolerance:
    """Tolerances of one uniform section.

    Attributes
    ----------
    length_m : float
        Half-width on the physical length, m (0: exact or not used).
    vf : float
        Half-width on the velocity factor (absolute).
    delay_s : float
        Half-width on the one-way delay, s; used when the section was given by its delay (no length/VF).
    loss_fraction : float
        Half-width on the matched loss, as a fraction of it (0.25 = +/-25 %).
    z0_ohm : float
        Half-width on the nominal characteristic impedance, ohm.
    distribution : str
        ``"rectangular"`` (the figures are bounds) or ``"normal"`` (they are standard uncertainties, e.g. from a fit).
    loss_scales_with_length : bool
        The loss is per unit length (a catalog cable), so a longer drawn length loses more.
    sources : tuple of (name, text)
        Where each figure comes from.
    """

    length_m: float = 0.0
    vf: float = 0.0
    delay_s: float = 0.0
    loss_fraction: float = 0.0
    z0_ohm: float = 0.0
    distribution: str = "rectangular"
    loss_scales_with_length: bool = False
    sources: tuple = field(default=())

    def source(self, name: str) -> str:
        return dict(self.sources).get(name, "")

    def with_values(self, **kw) -> "Tolerance":
        """A copy with some half-widths replaced; their sources become "set by the user"."""
        srcs = dict(self.sources)
        for k in kw:
            srcs[k.removesuffix("_m").removesuffix("_s").removesuffix("_ohm").removesuffix("_fraction")] = "set by the user"
        return replace(self, sources=tuple(srcs.items()), **kw)


def default_tolerance(*, length_m=None, vf=None, delay_s=None, z0_ohm=50.0, loss_from: str = "none",
                      cable_vf_tol=None, cable_loss_tol=None, cable_z0_tol=None, cable_source: str = "") -> Tolerance:
    """The default tolerance of a section described by length/VF or delay, loss source and Z0.

    Parameters
    ----------
    length_m, vf, delay_s : float or None
        How the section was described (length and VF, or delay).
    z0_ohm : float
        Nominal Z0.
    loss_from : str
        ``"catalog"``, ``"points"`` (--loss) or ``"none"`` (lossless assumed: no loss tolerance).
    cable_vf_tol, cable_loss_tol, cable_z0_tol : float, optional
        The catalog entry's own tolerances (VF absolute, loss fraction, Z0 ohm), with ``cable_source``.
    """
    srcs = {}
    t = {}
    if length_m is not None and vf is not None:
        t["length_m"] = DEFAULT_LENGTH_FRACTION * float(length_m)
        srcs["length"] = SOURCES["length"]
        if cable_vf_tol is not None:
            t["vf"] = float(cable_vf_tol)
            srcs["vf"] = cable_source or "catalog"
        else:
            t["vf"] = DEFAULT_VF_ABS
            srcs["vf"] = SOURCES["vf"]
    elif delay_s is not None:
        t["delay_s"] = DEFAULT_DELAY_FRACTION * float(delay_s)
        srcs["delay"] = SOURCES["delay"]
    if loss_from == "catalog":
        t["loss_fraction"] = float(cable_loss_tol) if cable_loss_tol is not None else DEFAULT_LOSS_FRACTION_CATALOG
        srcs["loss"] = cable_source if cable_loss_tol is not None and cable_source else SOURCES["loss_catalog"]
    elif loss_from == "points":
        t["loss_fraction"] = DEFAULT_LOSS_FRACTION_POINTS
        srcs["loss"] = SOURCES["loss_points"]
    if cable_z0_tol is not None:
        t["z0_ohm"] = float(cable_z0_tol)
        srcs["z0"] = cable_source or "catalog"
    else:
        t["z0_ohm"] = DEFAULT_Z0_FRACTION * float(z0_ohm)
        srcs["z0"] = SOURCES["z0"]
    return Tolerance(**t, loss_scales_with_length=(loss_from == "catalog"), sources=tuple(srcs.items()))


__all__ = ["DEFAULT_DELAY_FRACTION", "DEFAULT_LENGTH_FRACTION", "DEFAULT_LOSS_FRACTION_CATALOG",
           "DEFAULT_LOSS_FRACTION_POINTS", "DEFAULT_VF_ABS", "DEFAULT_Z0_FRACTION", "SOURCES", "Tolerance",
           "default_tolerance"]
