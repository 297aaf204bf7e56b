"""Build a :class:`~deembed.line.Line` from what the user says: command-line options or a line file.

A line file is TOML of our own design (documented in the README)::

    name = "Tower run, 20 m beam"

    [[section]]                 # from the analyzer toward the antenna
    label = "indoor jumper"
    cable = "rg58"
    length = "1.5m"

    [[section]]
    label = "main run"
    z0 = "50ohm"
    vf = 0.85
    length = "98ft"
    loss = ["0.8dB@21MHz", "2.3dB@100MHz"]   # this section's one-way matched loss

    [[section]]
    measured = "lightning-arrestor.s2p"      # a measured 2-port, path relative to this file

    [cables.my-rg213]           # optional: cables of your own, same fields as the catalog
    name = "..."  z0 = 50  vf = 0.66  k1 = 0.18  k2 = 0.0025  source = "..."

Each section takes ``cable`` and/or ``z0`` (ohm), its physical length as ``length`` (with a unit) and
a velocity factor (``vf`` or the cable's) or as ``delay`` (one-way), and its matched loss from the
cable or from ``loss`` points. The same rules serve the single-section command-line options.
"""
from __future__ import annotations

import os
from dataclasses import dataclass, field

from . import cables as _cables
from ..base.errors import InputFileError, OptionError
from ..physics.budget import check_matched_loss
from ..physics.line import C0_M_PER_S, Line, LossModel, MeasuredTwoPort, Section
from ..physics.tolerance import default_tolerance
from .tomlfile import load_toml
from ..base.units import no_unit, parse_delay, parse_length, parse_loss_point, parse_positive, parse_resistance
from .charfile import line_from_characterization
from .touchstone import read_sweep


@dataclass
class SectionSpec:
    """What is known of one section, as text or numbers, before it is checked."""

    cable: str | None = None
    length: str | None = None
    vf: object = None
    delay: str | None = None
    z0: object = None
    loss: list = field(default_factory=list)
    label: str | None = None
    tolerance: dict = field(default_factory=dict)


SECTION_KEYS = ("cable", "length", "vf", "delay", "z0", "loss")
"""The keys that describe one section of line (in a line file's [[section]], a site file's feed, the options)."""

_OPT = {k: k for k in SECTION_KEYS}
"""Default names of the section fields in messages and notes: the fields themselves (a caller such as the
command line passes its own names, e.g. its options)."""

TOLERANCE_NAMES = ("length", "vf", "delay", "loss", "z0")
"""Quantities a tolerance can be set for (``--tol NAME=VALUE`` or a section's ``tolerance`` table)."""


def parse_tolerance_items(items, option: str = "tolerance") -> dict:
    """``["length=0.2m", "loss=15%"]`` (or a dict) -> ``{"length": "0.2m", "loss": "15%"}``, names checked.

    An item may hold several, separated by commas (``"length=0.2m,vf=0.02"``), as every list is given."""
    out = {}
    if isinstance(items, dict):
        pairs = list(items.items())
    else:
        pairs = []
        if isinstance(items, str):
            items = [items]
        for it in [t.strip() for item in items or () for t in str(item).split(",") if t.strip()]:
            if "=" not in str(it):
                raise OptionError(option, f"{it!r}: write NAME=VALUE, e.g. length=0.2m, vf=0.02, loss=15%, z0=2ohm, "
                                          "delay=1ns")
            k, v = str(it).split("=", 1)
            pairs.append((k, v))
    for k, v in pairs:
        k = str(k).strip().lower()
        if k not in TOLERANCE_NAMES:
            raise OptionError(option, f"unknown tolerance {k!r}; use {', '.join(TOLERANCE_NAMES)}")
        if isinstance(v, bool) or not isinstance(v, (str, int, float)):
            raise OptionError(option, f"{k}: give the tolerance as text such as \"0.2m\" or \"15%\", or a number")
        out[k] = str(v).strip()
    return out


def _fraction(text: str, option: str, what: str):
    """'15%' -> 0.15; None when the text has no per cent sign."""
    t = text.strip()
    if not t.endswith("%"):
        return None
    try:
        v = float(t[:-1])
    except ValueError:
        raise OptionError(option, f"{what} tolerance {text!r}: write a per cent like 15%") from None
    if not (0 <= v < 100):
        raise OptionError(option, f"{what} tolerance {text!r}: a per cent from 0 to below 100")
    return v / 100


def _plain(text, option, what, upper):
    try:
        v = float(text)
    except ValueError:
        raise OptionError(option, f"{what} tolerance {text!r} is not a number") from None
    if not (v >= 0 and (upper is None or v < upper)) or v != v or v == float("inf"):
        raise OptionError(option, f"{what} tolerance {text!r}: must be 0 or more"
                                  f"{'' if upper is None else f' and below {upper:g}'}")
    return v


TOLERANCE_EXAMPLES = {"length": "length=0.2m", "vf": "vf=0.02", "delay": "delay=1ns", "loss": "loss=15%",
                      "z0": "z0=2ohm"}
"""How each tolerance is written: with its unit (a per cent works for every one; the velocity factor, a pure
number, also stands bare)."""

_OHM = ("ohms", "ohm", "\u03c9", "\u2126")


def _tolerance(spec: SectionSpec, cable, z0, vf, length_m, delay_s, loss_from: str, option: str):
    """The section's tolerance: defaults (the catalog's where it has them) with the user's figures on top.

    Every figure carries its unit, as every quantity does: a length in m or ft, a delay in ns, Z0 in ohm,
    the loss in per cent, or any of them in per cent; the velocity factor has no unit, so a bare number (or a
    per cent) is right for it. A bare number elsewhere is refused with the one hint for a missing unit."""
    by_delay = spec.delay is not None
    tol = default_tolerance(length_m=None if by_delay else length_m, vf=None if by_delay else vf,
                            delay_s=delay_s if by_delay else None, z0_ohm=z0, loss_from=loss_from,
                            cable_vf_tol=cable.vf_tol if cable and spec.vf is None else None,
                            cable_loss_tol=cable.loss_tol if cable and loss_from == "catalog" else None,
                            cable_z0_tol=cable.z0_tol if cable and spec.z0 is None else None,
                            cable_source=(cable.tol_source or cable.source) if cable else "")
    given = parse_tolerance_items(spec.tolerance, option)
    new = {}
    for k, text in given.items():
        frac = _fraction(text, option, k)
        if frac is None and k != "vf" and _is_bare_number(text):
            raise no_unit(f"{k}={text}", option, TOLERANCE_EXAMPLES[k] + (" or 1%" if k == "length" else ""))
        if k == "length":
            if by_delay or length_m is None:
                raise OptionError(option, "a length tolerance needs a section given by its length; give delay=... "
                                          "instead")
            new["length_m"] = frac * length_m if frac is not None else parse_length(text, option)
        elif k == "vf":
            if by_delay:
                raise OptionError(option, "a velocity-factor tolerance needs a section given by length and VF; "
                                          "give delay=... instead")
            new["vf"] = frac * vf if frac is not None else _plain(text, option, "velocity factor", 1.0)
        elif k == "delay":
            if not by_delay:
                raise OptionError(option, "a delay tolerance needs a section given by its delay; give length=... "
                                          "and vf=... instead")
            new["delay_s"] = frac * delay_s if frac is not None else parse_delay(text, option)
        elif k == "loss":
            if frac is None:
                raise OptionError(option, f"loss tolerance {text!r}: give it as a per cent of the loss, e.g. loss=15%")
            new["loss_fraction"] = frac
        elif k == "z0":
            if frac is not None:
                new["z0_ohm"] = frac * z0
                continue
            t = text.strip()
            unit = next((u for u in _OHM if t.lower().endswith(u)), None)
            if unit is None:
                raise OptionError(option, f"Z0 tolerance {text!r}: give it in ohm or as a per cent, e.g. z0=2ohm or "
                                          "z0=4%")
            new["z0_ohm"] = _plain(t[:-len(unit)].strip(), option, "Z0 (ohm)", None)
    return tol.with_values(**new) if new else tol


def _is_bare_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def build_section(spec: SectionSpec, cat: dict, names: dict = _OPT) -> tuple[Section, list[str]]:
    """Check a section's description and build it; returns (section, notes)."""
    notes: list[str] = []
    cable = _cables.lookup(spec.cable, cat, names["cable"]) if spec.cable else None
    z0 = parse_resistance(as_text(spec.z0), names["z0"]) if spec.z0 is not None else None
    if z0 is None:
        z0 = cable.z0_ohm if cable else 50.0
    vf = parse_positive(spec.vf, names["vf"], "velocity factor", upper=1.0) if spec.vf is not None else None
    length_m = parse_length(spec.length, names["length"]) if spec.length is not None else None
    delay_s = parse_delay(spec.delay, names["delay"]) if spec.delay is not None else None

    if delay_s is not None:
        if length_m is not None:
            implied = length_m / (C0_M_PER_S * delay_s) if delay_s > 0 else float("inf")
            if vf is not None and abs(implied - vf) > 1e-6 * vf:
                raise OptionError(names["delay"], "length, velocity factor and delay disagree; give two of the three")
            if not 0 < implied <= 1:
                raise OptionError(names["delay"], f"a delay of {delay_s * 1e9:g} ns over {length_m:g} m means a "
                                                  f"velocity factor of {implied:.3g}, outside (0, 1]; check both")
            vf = implied
    elif length_m is not None:
        if vf is None:
            if cable is None:
                raise OptionError(names["vf"], "the velocity factor is needed with a length "
                                               f"(give {names['vf']}, {names['cable']} or {names['delay']})")
            vf = cable.vf
        delay_s = length_m / (vf * C0_M_PER_S)
    else:
        raise OptionError(names["length"], f"the line's length is needed (e.g. {names['length']} 30m), "
                                           f"or its one-way delay ({names['delay']} 152ns)")

    if spec.loss:
        points = [parse_loss_point(p, names["loss"]) for p in spec.loss]
        for db, hz in points:
            check_matched_loss(db, names["loss"], hz)
        loss = LossModel.fit(points, names["loss"])
        misfit = LossModel.fit_misfit(loss, points)
        if misfit:
            notes.append(misfit)
        if cable:
            notes.append(f"matched loss taken from {names['loss']}, not from the {cable.id} catalog figures")
    elif cable:
        if length_m is None:
            raise OptionError(names["length"], f"a cable's loss needs its length; give {names['length']}")
        loss = LossModel.from_k(cable.k1, cable.k2, length_m)
    else:
        loss = LossModel()
        notes.append(f"no loss given for the line: it is taken as lossless (give {names['loss']} or {names['cable']})")

    if delay_s == 0 and (loss.c_np or loss.d_np):
        raise OptionError(names["length"], "a section with loss must have a length or delay above zero")
    label = spec.label or (cable.name if cable else f"{z0:g} ohm line")
    loss_from = "points" if spec.loss else ("catalog" if cable else "none")
    tol = _tolerance(spec, cable, z0, vf, length_m, delay_s, loss_from, names.get("tolerance", "tolerance"))
    return Section(z0, delay_s, loss, length_m, vf, label, tolerance=tol), notes


def line_from_options(*, cable=None, length=None, vf=None, delay=None, z0=None, loss=(), cables_file=None,
                      line_file=None, allow_extrapolation: bool = False, names: dict | None = None,
                      tolerances=()) -> tuple[Line, list[str]]:
    """The line described by one section's values (or by a line file); ``names`` says how messages and notes
    name each of ``cable``, ``length``, ``vf``, ``delay``, ``z0``, ``loss``, ``line`` and ``tolerance``
    (default: so). ``tolerances`` (``NAME=VALUE`` items) set the section's tolerances, or those of every
    section of a line file (over the file's own)."""
    n = {**_OPT, "line": "line", "tolerance": "tolerance", **(names or {})}
    given = [n[k] for k, v in (("cable", cable), ("length", length), ("vf", vf), ("delay", delay),
                               ("z0", z0), ("loss", loss)) if v]
    if line_file:
        if given:
            raise OptionError(n["line"], f"give either {n['line']} or {', '.join(given)}, not both")
        return read_line_file(line_file, cables_file, allow_extrapolation, tolerances=tolerances,
                              tolerance_name=n["tolerance"])
    if not given:
        raise OptionError(n["line"], f"say which line to remove: {n['cable']} ID {n['length']} L, or "
                                     f"{n['length']}/{n['vf']}/{n['loss']}, or {n['line']} FILE")
    cat = _cables.catalog(cables_file)
    tol = parse_tolerance_items(tolerances, n["tolerance"])
    sec, notes = build_section(SectionSpec(cable, length, vf, delay, z0, list(loss or []), tolerance=tol), cat,
                               {k: n[k] for k in (*SECTION_KEYS, "tolerance")})
    return Line((sec,)), notes


def read_line_file(path, cables_file=None, allow_extrapolation: bool = False, tolerances=(),
                   tolerance_name: str = "tolerance") -> tuple[Line, list[str]]:
    """A line from a TOML line description or a measured/characterized 2-port Touchstone file.

    A section may carry ``tolerance = { length = "0.2m", vf = "0.02", loss = "15%", z0 = "2ohm" }`` (or
    ``delay = "1ns"`` for a section given by its delay); ``tolerances`` (``NAME=VALUE`` items, the command
    line's) override them for every section."""
    p = str(path)
    if not p.lower().endswith(".toml"):
        return _two_port_line(p, allow_extrapolation), []
    data = load_toml(p)
    cat = _cables.catalog(cables_file)
    extra = data.get("cables", {})
    if not isinstance(extra, dict):
        raise InputFileError(p, "'cables' must hold tables, one per cable: [cables.ID] with z0, vf, k1, k2")
    if extra:
        cat.update(_cables.parse_catalog(extra, p))
    sections = data.get("section")
    if not isinstance(sections, list) or not sections or not all(isinstance(e, dict) for e in sections):
        raise InputFileError(p, "no [[section]] tables; describe the line as one or more [[section]] tables")
    known = {"cable", "length", "vf", "delay", "z0", "loss", "label", "measured", "tolerance"}
    cli_tol = parse_tolerance_items(tolerances, tolerance_name)
    parts, notes = [], []
    base = os.path.dirname(os.path.abspath(p))
    for i, entry in enumerate(sections, 1):
        where = f"section {i}"
        unknown = sorted(set(entry) - known)
        if unknown:
            raise InputFileError(p, f"{where}: unknown key(s) {', '.join(unknown)}; use {', '.join(sorted(known))}")
        texts = {"cable": entry.get("cable"), "measured": entry.get("measured"), "label": entry.get("label")}
        texts.update({"loss": entry.get("loss")} if not isinstance(entry.get("loss"), list)
                     else {f"loss[{j}]": v for j, v in enumerate(entry["loss"], 1)})
        wrong = [k for k, v in texts.items() if v is not None and not isinstance(v, str)]
        if wrong:
            raise InputFileError(p, f"{where}: '{wrong[0]}' must be a quoted string, e.g. cable = \"rg213\", "
                                    f"loss = [\"0.8dB@21MHz\"], measured = \"arrestor.s2p\"")
        if "measured" in entry:
            try:
                part = _two_port_line(os.path.join(base, str(entry["measured"])), allow_extrapolation).parts[0]
            except InputFileError as exc:  # the 2-port's own fault, named with where the line file names it
                raise InputFileError(p, f"{where} 'measured': {exc}") from None
            parts.append(part)
            continue
        sec, sec_notes = section_from_table(entry, cat, p, where, tolerances=cli_tol)
        parts.append(sec)
        notes += [f"{where}: {n}" for n in sec_notes]
    return Line(tuple(parts), name=str(data.get("name", ""))), notes


def as_text(v):
    return None if v is None else str(v)


def section_from_table(entry: dict, cat: dict, path: str, where: str, label: str | None = None, tolerances=None):
    """One section from a TOML table (a line file's ``[[section]]``, a site file's feed): (section, notes).

    The keys are those of :data:`SECTION_KEYS`; ``loss`` may be one string or a list. A bad value raises
    :class:`InputFileError` naming ``path`` and the key as ``<where> '<key>'``.
    """
    loss = entry.get("loss", [])
    loss = [loss] if isinstance(loss, str) else list(loss)
    tol_entry = entry.get("tolerance", {})
    if not isinstance(tol_entry, dict):
        raise InputFileError(path, f"{where}: 'tolerance' must be a table, e.g. tolerance = {{ length = \"0.2m\", "
                                   "loss = \"15%\" }")
    try:
        tol = {**parse_tolerance_items(tol_entry, f"{where} 'tolerance'"), **(tolerances or {})}
    except OptionError as exc:
        raise InputFileError(path, str(exc)) from None
    spec = SectionSpec(entry.get("cable"), as_text(entry.get("length")), entry.get("vf"), as_text(entry.get("delay")),
                       entry.get("z0"), loss, label if label is not None else entry.get("label"), tolerance=tol)
    try:
        return build_section(spec, cat, {k: f"{where} '{k}'" for k in (*SECTION_KEYS, "tolerance")})
    except OptionError as exc:
        raise InputFileError(path, str(exc)) from None


def _two_port_line(path: str, allow_extrapolation: bool = False) -> Line:
    """A measured (or characterized) 2-port file as a line. A characterization carries its model."""

    found = line_from_characterization(path, allow_extrapolation=allow_extrapolation)
    if found is not None:
        return found

    sw = read_sweep(path, expect_ports=2)
    return Line((MeasuredTwoPort(sw.freq_hz, sw.s, label="measured 2-port", source=path),))


__all__ = ["SECTION_KEYS", "SectionSpec", "TOLERANCE_NAMES", "build_section", "line_from_options",
           "parse_tolerance_items", "read_line_file", "section_from_table"]
