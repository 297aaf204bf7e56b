"""Sweeps exported as text tables (CSV, semicolon, tab or space separated), mapped by ``--columns``.

Many analyzers export a sweep as a table rather than Touchstone: frequency with R and X, with the
reflection's real and imaginary parts, with return loss and phase, or with SWR or return loss alone.
The user names the columns in order, for example::

    freq:MHz,r,x        frequency in MHz, resistance and reactance in ohms
    freq:Hz,re,im       real and imaginary part of the reflection coefficient (50 ohm)
    freq:MHz,rl,phase   return loss in dB (positive) and the reflection's phase in degrees
    freq:kHz,swr        SWR alone (no phase)
    freq:MHz,rl         return loss alone (no phase)
    freq:MHz,-,swr      ``-`` skips a column

Decisions (ours):

* the delimiter is taken from the first data line: a tab, else a semicolon, else a comma, else runs of
  spaces; a decimal comma is accepted when the delimiter is a tab, a semicolon or spaces;
* leading lines whose first field is not a number are header lines: they are skipped and reported in
  the sweep's notes, never an error; blank lines are skipped anywhere; any other line that is not
  numbers is an error naming its line and column;
* a trailing delimiter at the end of a line (``1,2,3,``) is accepted;
* frequencies must be finite, not negative and strictly increasing (as in our Touchstone reader);
* a return-loss column whose values are all zero or negative is taken as |S11| in dB, with a note
  (return loss is positive: T. S. Bird, IEEE AP Magazine 51(2):166-167, 2009, from memory);
* an SWR below 1 is an error; R and X are in ohms whatever the reference, and every sweep is turned
  into a reflection at 50 ohm.

The numbers are read with pandas (imported inside the function). Sweeps with phase come back as a
:class:`~deembed.sweep.Sweep`; SWR or return loss alone come back as a :class:`MagnitudeSweep`, which
has no complex reflection at all, so nothing downstream can mistake it for one.
"""
from __future__ import annotations

import codecs
import io
import math
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..base.errors import InputFileError, OptionError, field_ref
from ..physics.rf import Z_REF_OHM
from .inputfile import read_input_bytes
from .sweep import Sweep

__all__ = ["ColumnMap", "MagnitudeSweep", "parse_columns", "read_table_sweep", "COLUMNS_EXAMPLES"]

_FREQ_UNITS = {"hz": (1.0, "Hz"), "khz": (1e3, "kHz"), "mhz": (1e6, "MHz"), "ghz": (1e9, "GHz")}
_KINDS = {
    "r": "resistance, ohm", "x": "reactance, ohm", "re": "reflection, real part", "im": "reflection, imaginary part",
    "rl": "return loss, dB", "phase": "reflection phase, degrees", "swr": "SWR",
}
_SETS = {
    frozenset({"r", "x"}): "rx",
    frozenset({"re", "im"}): "reim",
    frozenset({"rl", "phase"}): "rlphase",
    frozenset({"swr"}): "swr",
    frozenset({"rl"}): "rl",
}
COLUMNS_EXAMPLES = "freq:MHz,r,x or freq:Hz,re,im or freq:MHz,rl,phase or freq:kHz,swr or freq:MHz,rl"
_NUMBER = re.compile(r"\s*[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?\s*\Z")
_CTRL = re.compile(r"[\x00-\x08\x0b-\x1f\x7f]")


def named(option: str) -> str:
    """How a message names where the mapping came from: a field (``columns``) as a field reference, which the
    command line shows as its option; a place in a file (``antenna 2 (x): 'columns'``) as it is."""
    return field_ref(option) if re.fullmatch(r"[a-z][a-z0-9_]*", option) else option


@dataclass(frozen=True)
class ColumnMap:
    """What each column of a text table holds, in file order.

    Attributes
    ----------
    kinds : tuple of str or None
        Per column: ``"freq"``, ``"r"``, ``"x"``, ``"re"``, ``"im"``, ``"rl"``, ``"phase"``, ``"swr"``,
        or ``None`` for a skipped column.
    freq_scale : float
        Hz per unit of the frequency column.
    freq_unit : str
        The frequency unit as written for people ("MHz").
    quantity : str
        ``"rx"``, ``"reim"``, ``"rlphase"``, ``"swr"`` or ``"rl"``.
    spec : str
        The mapping as given, for messages.
    """

    kinds: tuple
    freq_scale: float
    freq_unit: str
    quantity: str
    spec: str

    @property
    def has_phase(self) -> bool:
        return self.quantity in ("rx", "reim", "rlphase")

    def index(self, kind: str) -> int:
        return self.kinds.index(kind)

    def describe(self) -> str:
        return ", ".join("skipped" if k is None else ("frequency, " + self.freq_unit if k == "freq" else _KINDS[k])
                         for k in self.kinds)


@dataclass(frozen=True)
class MagnitudeSweep:
    """A one-port sweep known only by the size of its reflection (SWR or return loss, no phase).

    Attributes
    ----------
    freq_hz : ndarray (n,)
        Strictly increasing frequencies, Hz.
    gamma_mag : ndarray (n,)
        |Gamma| at 50 ohm (zero or more; above 1 only if the export says so).
    quantity : str
        What the file held: ``"swr"`` or ``"rl"``.
    source : str
        Where the data came from, for messages.
    notes : tuple of str
        Remarks made while reading (header lines skipped, sign conventions).
    """

    freq_hz: np.ndarray
    gamma_mag: np.ndarray
    quantity: str = "swr"
    source: str = "<memory>"
    notes: tuple = field(default_factory=tuple)
    comments: tuple = field(default_factory=tuple)

    has_phase = False

    @property
    def npoints(self) -> int:
        return int(self.freq_hz.shape[0])

    @property
    def nports(self) -> int:
        return 1


def parse_columns(text, option: str = "columns") -> ColumnMap:
    """Read a column mapping such as ``freq:MHz,r,x`` (see the module docstring).

    Raises
    ------
    OptionError
        Naming ``option`` (the field ``columns``, or a place in a file) and what would be right.
    """
    if text is None or not str(text).strip():
        raise OptionError(option, f"name the table's columns in order, e.g. {COLUMNS_EXAMPLES}")
    spec = str(text).strip()
    kinds: list = []
    scale = unit = None
    for raw in spec.split(","):
        tok = raw.strip()
        low = tok.lower()
        if low == "-":
            kinds.append(None)
            continue
        if low.startswith("freq"):
            if low == "freq" or not low.startswith("freq:"):
                raise OptionError(option, f"{tok!r}: the frequency column needs its unit, e.g. freq:MHz "
                                          "(Hz, kHz, MHz or GHz)")
            u = low.split(":", 1)[1].strip()
            if u not in _FREQ_UNITS:
                raise OptionError(option, f"{tok!r}: unknown frequency unit {u!r}; use Hz, kHz, MHz or GHz "
                                          "(e.g. freq:MHz)")
            if "freq" in kinds:
                raise OptionError(option, f"{spec!r} names the frequency column twice; name it once")
            scale, unit = _FREQ_UNITS[u]
            kinds.append("freq")
            continue
        if ":" in low and low.split(":", 1)[0] in _KINDS:
            raise OptionError(option, f"{tok!r}: only the frequency column takes a unit (R and X are ohms, "
                                      "rl is dB, phase is degrees); write it without ':'")
        if low not in _KINDS:
            what = repr(tok) if tok else "an empty name"
            raise OptionError(option, f"{what} is not a column name; use freq:UNIT, r, x, re, im, rl, phase, "
                                      f"swr, or - to skip a column (e.g. {COLUMNS_EXAMPLES})")
        if low in kinds:
            raise OptionError(option, f"{spec!r} names {low!r} twice; name each column once")
        kinds.append(low)
    if "freq" not in kinds:
        raise OptionError(option, f"{spec!r} has no frequency column; add it with its unit, e.g. freq:MHz,r,x")
    named = frozenset(k for k in kinds if k not in (None, "freq"))
    quantity = _SETS.get(named)
    if quantity is None:
        if not named:
            hint = "name what the other columns hold"
        elif "r" in named or "x" in named:
            hint = "R and X go together (freq:MHz,r,x)"
        elif "re" in named or "im" in named:
            hint = "the real and imaginary parts go together (freq:Hz,re,im)"
        elif "phase" in named and "rl" not in named:
            hint = "a phase needs its return loss (freq:MHz,rl,phase)"
        else:
            hint = "SWR stands alone (freq:kHz,swr); return loss goes alone or with phase"
        raise OptionError(option, f"{spec!r} is not a set deembed can read: {hint}; one of {COLUMNS_EXAMPLES}")
    return ColumnMap(kinds=tuple(kinds), freq_scale=scale, freq_unit=unit, quantity=quantity, spec=spec)


# ---------------------------------------------------------------------------------------------- reading

def _read_text(path: Path, name: str) -> str:
    data = read_input_bytes(path, name)  # a regular file within the size limit, or a clear refusal
    if not data.strip():
        raise InputFileError(name, "the file is empty; export the sweep again")
    binary = "this looks like a binary file, not a text table; export the sweep as CSV or text"
    if data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        try:
            text = data.decode("utf-16")
        except UnicodeDecodeError:
            raise InputFileError(name, binary) from None
    else:
        if b"\x00" in data:
            raise InputFileError(name, binary)
        sample = data[:65536]
        ctrl = sum(sample.count(bytes([c])) for c in list(range(0, 9)) + [11, 12] + list(range(14, 32)) + [127])
        if ctrl > 0.1 * len(sample):
            raise InputFileError(name, binary)
        if data.startswith(codecs.BOM_UTF8):
            data = data[len(codecs.BOM_UTF8):]
        try:
            text = data.decode("utf-8")
        except UnicodeDecodeError:
            text = data.decode("latin-1")
    if "\r" in text:
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    return text


def _shown(line: str, width: int = 60) -> str:
    """A header line as it may be shown: control characters escaped, long lines cut."""
    s = _CTRL.sub(lambda m: f"\\x{ord(m.group()):02x}", line.strip())
    return repr(s if len(s) <= width else s[:width - 3] + "...")


def _is_number(tok: str, decimal_comma: bool = False) -> bool:
    t = tok.replace(",", ".") if decimal_comma else tok
    return bool(_NUMBER.match(t))


def _split(line: str, sep: str) -> list:
    return line.split() if sep == " " else line.split(sep)


def _detect(line: str):
    """(separator, decimal_comma) from the first data line. ``" "`` stands for runs of spaces."""
    if "\t" in line:
        sep = "\t"
    elif ";" in line:
        sep = ";"
    else:
        toks = line.split()
        if "," in line and len(toks) >= 2 and all(_is_number(t, True) for t in toks):
            return " ", True            # 14,2 1,53: spaces between numbers with decimal commas
        sep = "," if "," in line else " "
    if sep == ",":
        return sep, False
    toks = [t for t in _split(line, sep) if t.strip()]
    comma = any("," in t for t in toks) and all(_is_number(t, True) for t in toks)
    return sep, comma


def _first_field(line: str) -> str:
    for sep in ("\t", ";", ","):
        if sep in line:
            return line.split(sep, 1)[0].strip()
    parts = line.split()
    return parts[0] if parts else ""


def read_table_sweep(path, columns, *, option: str = "columns"):
    """Read a sweep exported as a text table.

    Parameters
    ----------
    path : str or os.PathLike
        The table (any extension).
    columns : str or ColumnMap
        The column mapping (see the module docstring).
    option : str
        How the mapping was given, for messages: the field ``columns`` (the command line shows its option
        ``--columns``), or a place in a file such as a site file's ``antenna 2 (x): 'columns'``.

    Returns
    -------
    Sweep or MagnitudeSweep
        A :class:`~deembed.sweep.Sweep` (one port, 50 ohm) when the table has phase (R and X, real and
        imaginary, return loss and phase); a :class:`MagnitudeSweep` for SWR or return loss alone.

    Raises
    ------
    InputFileError
        One line naming the file, the line and the column, and what to do.
    OptionError
        A mapping that cannot be read.

    Notes
    -----
    Gamma = (Z - 50)/(Z + 50) from R and X (Pozar, *Microwave Engineering* 4th ed., eq. 2.35);
    |Gamma| = 10^(-RL/20) from return loss (eq. 2.38); |Gamma| = (s - 1)/(s + 1) from SWR (eq. 2.41).
    """
    cmap = columns if isinstance(columns, ColumnMap) else parse_columns(columns, option)
    name = str(path)
    text = _read_text(Path(path), name)

    # leading lines that are not numbers are header lines
    header, pos, lineno, first = [], 0, 0, None
    n = len(text)
    while pos < n:
        end = text.find("\n", pos)
        end = n if end < 0 else end
        line = text[pos:end]
        lineno += 1
        if line.strip():
            if _is_number(_first_field(line), True):
                first = line
                break
            header.append((lineno, line))
        pos = end + 1
    if first is None:
        raise InputFileError(name, "no line of numbers found; export the sweep as a table of numbers "
                                   f"(columns {cmap.spec})")
    data_line = lineno
    sep, dec_comma = _detect(first)
    raw_fields = _split(first, sep)
    trailing = sep != " " and len(raw_fields) > 1 and not raw_fields[-1].strip()
    nfields = len(raw_fields) - (1 if trailing else 0)
    sep_name = {"\t": "tabs", ";": "semicolons", ",": "commas", " ": "spaces"}[sep]
    if nfields != len(cmap.kinds):
        raise InputFileError(name, f"the table has {nfields} column{'s' if nfields != 1 else ''} (separated by "
                                   f"{sep_name}) but {named(option)} {cmap.spec} names {len(cmap.kinds)}; name every "
                                   f"column in order, - to skip one", line=data_line)

    import pandas as pd

    body = text[pos:]
    del text  # the body is all that is needed from here (a large table is not held twice)
    # only the columns in use are read as numbers, so a skipped one may hold anything (text, units, empty; it
    # is kept as text, not usecols'd away, so that a line with too many fields is still refused); one more
    # name than columns: a trailing delimiter on any line lands there and must stay empty
    ncols = nfields + (0 if sep == " " else 1)
    used = [k for k, kind in enumerate(cmap.kinds) if kind is not None]
    read = used + ([nfields] if ncols > nfields else [])
    dtypes = {k: (float if k in read else object) for k in range(ncols)}
    try:
        # bytes, not a StringIO: a StringIO holds four bytes per character, and the C parser reads bytes itself
        frame = pd.read_csv(io.BytesIO(body.encode("utf-8")), encoding="utf-8", sep=r"\s+" if sep == " " else sep,
                            header=None, names=list(range(ncols)), dtype=dtypes, skip_blank_lines=True,
                            decimal="," if dec_comma else ".", skipinitialspace=True, engine="c")
        vals = frame[read].to_numpy(dtype=float)
    except (ValueError, pd.errors.ParserError):
        vals = _slow_values(body, data_line, sep, dec_comma, nfields, cmap, name, option)[:, read]
    if ncols > nfields:
        if not np.isnan(vals[:, -1]).all():
            vals = _slow_values(body, data_line, sep, dec_comma, nfields, cmap, name, option)[:, read]
        vals = vals[:, :len(used)]
    if not np.isfinite(vals).all():
        vals = _slow_values(body, data_line, sep, dec_comma, nfields, cmap, name, option)[:, used]
    where = {k: i for i, k in enumerate(used)}

    def col(kind):
        return vals[:, where[cmap.index(kind)]]

    def line_of(row):
        return _row_line(body, data_line, row)

    freq = col("freq") * cmap.freq_scale
    kf = cmap.index("freq") + 1
    if (freq < 0).any():
        r = int(np.argmax(freq < 0))
        raise InputFileError(name, f"column {kf} (frequency): {col('freq')[r]:g} is negative; frequencies must be "
                                   "zero or positive", line=line_of(r))
    d = np.diff(freq)
    if (d <= 0).any():
        r = int(np.argmax(d <= 0))
        how = "is repeated" if d[r] == 0 else "goes down"
        raise InputFileError(name, f"column {kf} (frequency): {col('freq')[r + 1]:g} {how} after line "
                                   f"{line_of(r)}; frequencies must strictly increase: sort the table or remove "
                                   "the extra points", line=line_of(r + 1))
    notes = []
    if header:
        if len(header) == 1:
            notes.append(f"line {header[0][0]} read as a header: {_shown(header[0][1])}")
        else:
            notes.append(f"lines {header[0][0]}-{header[-1][0]} read as a header ({len(header)} lines; "
                         f"first {_shown(header[0][1])})")
    notes.append(f"columns read as: {cmap.describe()} ({sep_name}"
                 f"{', decimal commas' if dec_comma else ''})")

    q = cmap.quantity
    if q in ("rl", "rlphase"):
        rl = col("rl")
        kr = cmap.index("rl") + 1
        if (rl <= 0).all() and (rl < 0).any():
            rl = -rl
            notes.append(f"column {kr} holds no positive value: read as |S11| in dB (return loss is its negative)")
        mag = 10.0 ** (-rl / 20.0)
    if q == "swr":
        s = col("swr")
        if (s < 1).any():
            r = int(np.argmax(s < 1))
            raise InputFileError(name, f"column {cmap.index('swr') + 1} (SWR): {s[r]:g} is below 1, which no SWR "
                                       "can be; check the column mapping", line=line_of(r))
        with np.errstate(over="ignore", invalid="ignore"):
            mag = (s - 1.0) / (s + 1.0)
    if q in ("swr", "rl"):
        return MagnitudeSweep(freq_hz=freq, gamma_mag=mag, quantity=q, source=name, notes=tuple(notes),
                              comments=tuple(h[1].strip() for h in header))
    if q == "rx":
        z = col("r") + 1j * col("x")
        with np.errstate(divide="ignore", invalid="ignore"):
            g = (z - Z_REF_OHM) / (z + Z_REF_OHM)
        if not np.isfinite(g).all():
            r = int(np.argmax(~np.isfinite(g)))
            raise InputFileError(name, f"R {col('r')[r]:g} and X {col('x')[r]:g} ohm make Z = -50 ohm, which has "
                                       "no reflection coefficient; check the columns", line=line_of(r))
    elif q == "reim":
        g = col("re") + 1j * col("im")
    else:
        g = mag * np.exp(1j * np.deg2rad(col("phase")))
    return Sweep(freq_hz=freq, s=g.reshape(-1, 1, 1), source=name, file_z_ref_ohm=Z_REF_OHM,
                 comments=tuple(h[1].strip() for h in header), notes=tuple(notes))


def _row_line(body: str, data_line: int, row: int) -> int:
    """File line number of data row ``row`` (0-based; blank lines do not count as rows)."""
    k = -1
    for i, line in enumerate(body.split("\n")):
        if line.strip():
            k += 1
            if k == row:
                return data_line + i
    return data_line


def _slow_values(body, data_line, sep, dec_comma, want, cmap, name, option) -> np.ndarray:
    """The table read line by line by our own rules (the slow path, when the fast reader met something it
    could not take): the first bad line raises its one-line error naming the file, the line and the column;
    otherwise the values, (rows, ``want``) with NaN in skipped columns."""
    rows = []
    for i, line in enumerate(body.split("\n")):
        if not line.strip():
            continue
        lineno = data_line + i
        fields = _split(line, sep)
        if sep != " " and len(fields) == want + 1 and not fields[-1].strip():
            fields = fields[:-1]     # one trailing delimiter
        if len(fields) != want:
            raise InputFileError(name, f"this line has {len(fields)} column{'s' if len(fields) != 1 else ''} but "
                                       f"{named(option)} {cmap.spec} names {want}; every line needs the same columns",
                                 line=lineno)
        row = [math.nan] * want
        for k, (tok, kind) in enumerate(zip(fields, cmap.kinds)):
            if kind is None:
                continue
            t = tok.strip()
            what = "frequency" if kind == "freq" else _KINDS[kind].split(",")[0]
            if not t:
                raise InputFileError(name, f"column {k + 1} ({what}) is empty; fill it in or remove the line",
                                     line=lineno)
            if not _is_number(t, dec_comma):
                raise InputFileError(name, f"column {k + 1} ({what}): cannot read {_shown(t, 30)} as a number; "
                                           "fix or remove the line", line=lineno)
            v = float(t.replace(",", ".") if dec_comma else t)
            if not math.isfinite(v):
                raise InputFileError(name, f"column {k + 1} ({what}): {t} is too large to be a number; fix or "
                                           "remove the line", line=lineno)
            row[k] = v
        rows.append(row)
    # one column more, empty, like the fast reader's column for a trailing delimiter
    return np.array([r + [math.nan] for r in rows], dtype=float).reshape(len(rows), want + 1)
