"""Reading and writing Touchstone files (IBIS Open Forum, versions 1.1 and 2.0) without pickle or eval.

:func:`read_sweep` parses the text itself, checks it strictly and returns a :class:`~deembed.sweep.Sweep`
whose S-parameters are referenced to 50 ohm on every port, whatever the file used.
:func:`write_touchstone` writes a version 1 file that reads back bit for bit.

Rules followed (IBIS Touchstone Rev 1.1 and Version 2.0 specifications):

* case-insensitive; ``!`` starts a comment that runs to the end of the line;
* option line ``# <unit> <parameter> <format> R <n>``, fields in any order, missing fields default to
  GHz, S, MA, R 50; a second option line is ignored (as the specification says) and noted;
* version 1: the port count comes from the extension ``.sNp``; 1- and 2-port files hold one frequency
  per line (2-port in the order N11 N21 N12 N22); 3 or more ports wrap over several lines;
  Z and Y data are normalised to R;
* version 2 (``[Version] 2.0`` first): ``[Number of Ports]``, ``[Two-Port Data Order]``,
  ``[Number of Frequencies]``, ``[Reference]``, ``[Matrix Format]`` (Full, Lower, Upper),
  ``[Network Data]``, ``[Noise Data]`` (skipped), ``[Begin Information]``/``[End Information]``
  (skipped), ``[End]``; Z and Y data are in ohms and siemens (not normalised).

Decisions where the specification leaves room:

* frequencies must be finite, not negative and strictly increasing; 0 Hz is accepted, which can
  only be the first point;
* each frequency's data starts on a new line (a record that ends part-way through a line is an error:
  it almost always means a wrong port count);
* data that is not ASCII, NaN or infinite values, hybrid H/G parameters and ``[Mixed-Mode Order]`` are
  errors; comments may hold any bytes (read as UTF-8, else Latin-1);
* a frequency written as ``14.2`` in MHz is read as the decimal 14.2e6 correctly rounded (the exponent
  is shifted in the text), not as ``14.2 * 1e6``, so grids from different files agree exactly.
"""
from __future__ import annotations

import codecs
import re
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from ..base.errors import InputFileError, OptionError
from ..physics.network import renormalise_s, s_from_y, s_from_z
from ..physics.rf import Z_REF_OHM
from .sweep import Sweep
from .atomic import write_text_atomic, write_text_chunks_atomic
from .inputfile import read_input_bytes
from .numtext import CHUNK_ROWS, scale_decimal_tokens

__all__ = ["read_sweep", "write_touchstone"]

_UNIT_EXP = {"hz": 0, "khz": 3, "mhz": 6, "ghz": 9}
_UNIT_NAME = {0: "Hz", 3: "kHz", 6: "MHz", 9: "GHz"}
_PARAMS = ("s", "y", "z", "h", "g")
_FORMATS = ("db", "ma", "ri")

_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?\Z")
_NOT_FINITE = {"nan", "+nan", "-nan", "inf", "+inf", "-inf", "infinity", "+infinity", "-infinity"}
_BAD_CHAR = re.compile(r"[^\x20-\x7e\t]")
_FAST_BAD = re.compile(r"[^0-9eE+\-. \t\n]")
_KEYWORD = re.compile(r"\s*\[([^\]]*)\]\s*(.*)\Z")
_COMMENT_LINE = re.compile(r"^[ \t]*!(.*)$", re.M)
_OPTION_IN_DATA = re.compile(r"^[ \t]*#.*$", re.M)
_KEYWORD_IN_DATA = re.compile(r"^[ \t]*\[", re.M)
_KEYWORD_IN_DATA_B = re.compile(rb"^[ \t]*\[", re.M)
_SNP = re.compile(r"\.s(\d+)p\Z", re.I)
_FIRST_TOKEN = re.compile(r"^[ \t]*([^ \t\n]+)", re.M)

_DEFAULTS_NOTE = "no option line: read with the Touchstone defaults GHz S MA R 50"


@dataclass
class _Options:
    unit_exp: int = 9
    param: str = "s"
    fmt: str = "ma"
    r_ohm: float = 50.0
    line: int | None = None


@dataclass
class _Header:
    version: int = 1
    nports: int | None = None
    opts: _Options | None = None
    order_21_12: bool = True
    nfreq: int | None = None
    nfreq_line: int | None = None
    z_ref: list | None = None
    matrix: str = "full"
    order_given: bool = False
    comments: list = field(default_factory=list)
    notes: list = field(default_factory=list)


# ----------------------------------------------------------------------------------------------
# reading


SWEEP_PORTS = (1, 2)
"""The ports a reflection can be taken from: a sweep file is a .s1p, or a .s2p whose S11 or S22 is used."""


def check_port(port, field: str = "port") -> None:
    """Refuse a port other than 1 or 2 (None, a .s1p's own reflection, is fine)."""
    if port is not None and (isinstance(port, bool) or port not in SWEEP_PORTS):
        raise OptionError(field, f"{port!r} is not a port of a 2-port file; use 1 or 2")


def read_sweep(path, *, port: int | None = None, expect_ports: int | None = 1) -> Sweep:
    """Read a Touchstone file into a :class:`Sweep` referenced to 50 ohm.

    Parameters
    ----------
    path : str or os.PathLike
        A version 1 file named ``.sNp`` or a version 2.0 file (any name).
    port : int, optional
        Take the reflection S_kk of port ``k`` (1-based) of a multi-port file and return a one-port
        sweep. S_kk is taken after the whole matrix has been renormalised to 50 ohm (the other ports
        terminated in 50 ohm).
    expect_ports : int or None, default 1
        Port count the caller needs (after ``port`` selection); ``None`` accepts any.

    Returns
    -------
    Sweep
        ``freq_hz`` (n,) strictly increasing; ``s`` (n, p, p) complex at 50 ohm on every port;
        ``file_z_ref_ohm`` the reference the file stated (of the selected port); ``comments`` the
        whole-line comments; ``notes`` remarks about the reading (defaults used, lines ignored).

    Raises
    ------
    InputFileError
        For anything that is not a readable Touchstone file, with the line number where there is one.
    OptionError
        ``port`` out of range for the file.

    Notes
    -----
    Z and Y data are turned into S at 50 ohm by S = (Z - 50 I)(Z + 50 I)^-1 and
    S = (I - 50 Y)(I + 50 Y)^-1 (Pozar, *Microwave Engineering* 4th ed., eq. 4.44 from memory);
    version 1 Z, Y are first multiplied, divided by R. S data referenced to real resistances r_i are
    renormalised with rho_i = (r_i - 50)/(r_i + 50), A = diag(sqrt(1 - rho_i^2)):
    S' = A^-1 (S + rho)(I + rho S)^-1 A, which equals the route through Z = R^1/2 (I - S)^-1 (I + S) R^1/2,
    S' = (Z - 50 I)(Z + 50 I)^-1, but stays finite for an ideal open (S = I). For one port it is
    Gamma' = (Gamma + rho)/(1 + rho Gamma).
    """
    name = str(path)
    if port is not None:
        if isinstance(port, bool) or not isinstance(port, (int, np.integer)) or port < 1:
            raise OptionError("port", f"{port!r} is not a port number; use 1, 2, ...")
    text = _read_text(Path(path), name)  # str, or bytes for a plain ASCII file (no text copy of it)
    hdr, data_start, data_line, data_end = _parse_header_of(text, name)
    p = hdr.nports
    if hdr.version == 1:
        m = _SNP.search(name)
        if not m or int(m.group(1)) < 1:
            raise InputFileError(name, "cannot tell the number of ports: a version 1 Touchstone file must be "
                                       "named .s1p (one port), .s2p (two ports), ...; rename it")
        p = hdr.nports = int(m.group(1))
    npairs = p * (p + 1) // 2 if hdr.matrix != "full" else p * p
    ncol = 1 + 2 * npairs
    per_line = hdr.version == 1 and p <= 2
    vals, freq_hz, rec_line = _parse_region(text, data_start, data_end, data_line, hdr, ncol, per_line, p, name)
    if hdr.version == 1:
        del text  # the data is all that is needed from here: keep the peak memory down
    if vals.shape[0] == 0:
        where = "after [Network Data]" if hdr.version == 2 else ""
        raise InputFileError(name, f"no data {where}: the file holds no frequency points; "
                                   f"export the sweep again".replace("  ", " "))
    if hdr.version == 2:
        _check_after_data(text, data_end, hdr, name, vals.shape[0])
    _check_values(vals, freq_hz, rec_line, name)
    n = _to_matrices(vals, p, hdr)
    z_ref = np.asarray(hdr.z_ref if hdr.z_ref is not None else [hdr.opts.r_ohm] * p, dtype=float)
    s = _to_s50(n, hdr, z_ref, name, rec_line)
    sel_ref = z_ref
    if port is not None:
        if port > p:
            raise OptionError("port", f"{name} has {p} port{'s' if p > 1 else ''}; "
                                      f"use `port` {' or `port` '.join(str(k) for k in range(1, p + 1))}")
        s = s[:, port - 1:port, port - 1:port].copy()
        sel_ref = z_ref[port - 1:port]
    if s.shape[1] == 1:
        _check_reflection(s[:, 0, 0], freq_hz, rec_line, name)
    if expect_ports is not None and s.shape[1] != expect_ports:
        if expect_ports == 1:
            picks = " or ".join(f"`port` {k}" for k in range(1, p + 1))
            sparams = " or ".join(f"S{k}{k}" for k in range(1, p + 1))
            raise InputFileError(name, f"this is a {p}-port file but a one-port sweep is needed; "
                                       f"pass {picks} to use {sparams}")
        raise InputFileError(name, f"this is a {s.shape[1]}-port file but a {expect_ports}-port file is "
                                   f"needed here (a feed line is a 2-port, .s2p)")
    return Sweep(freq_hz=freq_hz, s=s, source=name, file_z_ref_ohm=float(sel_ref[0]),
                 comments=tuple(hdr.comments), notes=tuple(hdr.notes))


def _read_text(p: Path, name: str) -> str | bytes:
    """The file's text with ``\n`` line ends: as bytes when it is all ASCII (then a byte offset is a character
    offset, and each chunk is decoded when it is parsed, so no str copy of a big file is made), else as str."""
    data = read_input_bytes(p, name)  # a regular file within the size limit, or a clear refusal
    if not data or data.isspace():  # (not data.strip(), which copies the file)
        raise InputFileError(name, "the file is empty; export the sweep again as Touchstone (.s1p)")
    binary = ("this looks like a binary file, not a Touchstone text file; export the sweep as "
              "Touchstone (.s1p/.s2p text)")
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
        if data.isascii():
            if b"\r" in data:
                data = data.replace(b"\r\n", b"\n").replace(b"\r", b"\n")
            return data
        if data.startswith(codecs.BOM_UTF8):
            data = data[len(codecs.BOM_UTF8):]
        try:
            text = data.decode("utf-8")
        except UnicodeDecodeError:
            text = data.decode("latin-1")
    del data
    if "\r" in text:
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    return text


HEAD_BYTES = 1 << 16
"""The part of an ASCII file decoded to read its header; a header that runs past it is read from the whole."""


def _parse_header_of(text, name: str):
    """:func:`_parse_header` of the text from :func:`_read_text`; for bytes, of the first lines decoded, with
    the data's end found in the whole file."""
    if isinstance(text, str):
        return _parse_header(text, name)
    cut = text.rfind(b"\n", 0, HEAD_BYTES) + 1  # whole lines only
    got = _parse_header(text[:cut].decode("ascii"), name, complete=False) if 0 < cut < len(text) else None
    if got is None:  # no data line among them (or a small file): the whole text
        return _parse_header(text.decode("ascii"), name)
    hdr, data_start, data_line, _ = got
    return hdr, data_start, data_line, _data_end(text, data_start) if hdr.version == 2 else len(text)


def _chunk(text, a: int, b: int) -> str:
    """``text[a:b]`` as str (an ASCII bytes text is decoded here, one chunk at a time)."""
    return text[a:b] if isinstance(text, str) else text[a:b].decode("ascii")


def _nl(text):
    return "\n" if isinstance(text, str) else b"\n"


def _lines(text: str, start: int = 0):
    """Yield (position, end, line) for each line of ``text`` from ``start``."""
    pos = start
    n = len(text)
    while pos < n:
        end = text.find("\n", pos)
        if end < 0:
            end = n
        yield pos, end, text[pos:end]
        pos = end + 1


def _check_chars(content: str, lineno: int, name: str) -> None:
    m = _BAD_CHAR.search(content)
    if m:
        raise InputFileError(name, f"character U+{ord(m.group()):04X} is not allowed outside a comment "
                                   f"(Touchstone is plain ASCII); remove it or put it after '!'", line=lineno)


def _parse_options(content: str, lineno: int, name: str) -> _Options:
    toks = content.strip()[1:].split()
    opts = _Options(line=lineno)
    seen = set()
    i = 0
    while i < len(toks):
        t = toks[i].lower()
        if t in _UNIT_EXP:
            kind = "frequency unit"
            opts.unit_exp = _UNIT_EXP[t]
        elif t in _PARAMS:
            kind = "parameter"
            if t in ("h", "g"):
                raise InputFileError(name, f"hybrid {t.upper()}-parameters cannot be used; export S-parameters",
                                     line=lineno)
            opts.param = t
        elif t in _FORMATS:
            kind = "format"
            opts.fmt = t
        elif t == "r":
            kind = "reference resistance"
            if i + 1 >= len(toks):
                raise InputFileError(name, "'R' in the option line has no value; write e.g. 'R 50'", line=lineno)
            v = toks[i + 1]
            if not _NUMBER.match(v) or not (0 < float(v) < float("inf")):
                raise InputFileError(name, f"reference resistance {v!r} must be a positive number of ohms, "
                                           f"e.g. 'R 50'", line=lineno)
            opts.r_ohm = float(v)
            i += 1
        else:
            if t.startswith("r") and _NUMBER.match(t[1:]):
                raise InputFileError(name, f"write the reference resistance as 'R {t[1:]}' with a space",
                                     line=lineno)
            raise InputFileError(name, f"{toks[i]!r} is not an option-line field; use a unit (Hz, kHz, MHz, "
                                       f"GHz), a parameter (S, Y, Z), a format (RI, MA, DB) and 'R <ohms>'",
                                 line=lineno)
        if kind in seen:
            raise InputFileError(name, f"the option line gives the {kind} twice; keep one", line=lineno)
        seen.add(kind)
        i += 1
    return opts


def _parse_header(text: str, name: str, complete: bool = True):
    """Read everything before the data. Returns (header, data start, its line number, data end).

    ``complete=False``: ``text`` is the file's first lines only; None when the data does not start in them."""
    hdr = _Header()
    first = True
    lineno = 0
    pending_ref = None  # [line, values] while [Reference] values are being collected
    in_info = False
    for pos, end, raw in _lines(text):
        lineno += 1
        content, bang, comment = raw.partition("!")
        if not content.strip():
            if bang:
                hdr.comments.append(comment.strip())
            continue
        if in_info:
            if _KEYWORD.match(content) and _norm_kw(_KEYWORD.match(content).group(1)) == "end information":
                in_info = False
            continue
        _check_chars(content, lineno, name)
        stripped = content.strip()
        if pending_ref is not None and not stripped.startswith(("[", "#")):
            pending_ref[1].extend(stripped.split())
            _finish_reference(hdr, pending_ref, name, final=False)
            if hdr.z_ref is not None:
                pending_ref = None
            continue
        if pending_ref is not None:
            _finish_reference(hdr, pending_ref, name, final=True)
            pending_ref = None
        if stripped.startswith("#"):
            if first:
                hdr.version = 1
            if hdr.opts is None:
                hdr.opts = _parse_options(stripped, lineno, name)
            else:
                hdr.notes.append(f"line {lineno}: a second option line was ignored (the Touchstone rule); "
                                 f"the one on line {hdr.opts.line} applies")
            first = False
            continue
        km = _KEYWORD.match(stripped)
        if km:
            kw, arg = _norm_kw(km.group(1)), km.group(2).strip()
            if first:
                if kw != "version":
                    raise InputFileError(name, f"[{km.group(1)}] before [Version]: a version 2 Touchstone file "
                                               f"starts with '[Version] 2.0'", line=lineno)
            elif hdr.version == 1:
                if kw == "version":
                    raise InputFileError(name, "[Version] must be the first line that is not a comment; move it "
                                               "to the top", line=lineno)
                raise InputFileError(name, f"keyword [{km.group(1)}] in a version 1 file; add '[Version] 2.0' as "
                                           f"the first line if this is a version 2 file", line=lineno)
            first = False
            if kw == "version":
                if hdr.version == 2:
                    raise InputFileError(name, "[Version] appears twice; keep the first", line=lineno)
                if arg not in ("2.0", "2.1", "2"):
                    raise InputFileError(name, f"[Version] {arg!r} is not supported; version 1.x files have no "
                                               f"[Version] line, version 2 files say '[Version] 2.0'", line=lineno)
                hdr.version = 2
            elif kw == "network data":
                _check_v2_before_data(hdr, name, lineno)
                return hdr, end + 1, lineno + 1, _data_end(text, end + 1)
            elif hdr.opts is None and kw != "begin information":
                raise InputFileError(name, f"[{km.group(1)}] comes before the option line; put the option line "
                                           f"('# MHz S RI R 50' or similar) right after [Version]", line=lineno)
            elif kw == "number of ports":
                hdr.nports = _positive_int(arg, kw, lineno, name)
            elif kw == "two-port data order":
                if arg.lower() not in ("12_21", "21_12"):
                    raise InputFileError(name, f"[Two-Port Data Order] must be 12_21 or 21_12, not {arg!r}",
                                         line=lineno)
                hdr.order_21_12 = arg.lower() == "21_12"
                hdr.order_given = True
            elif kw == "number of frequencies":
                hdr.nfreq = _positive_int(arg, kw, lineno, name)
                hdr.nfreq_line = lineno
            elif kw == "number of noise frequencies":
                _positive_int(arg, kw, lineno, name)
            elif kw == "reference":
                if hdr.nports is None:
                    raise InputFileError(name, "[Reference] comes before [Number of Ports]; put [Number of Ports] "
                                               "first", line=lineno)
                pending_ref = [lineno, arg.split()]
                _finish_reference(hdr, pending_ref, name, final=False)
                if hdr.z_ref is not None:
                    pending_ref = None
            elif kw == "matrix format":
                if arg.lower() not in ("full", "lower", "upper"):
                    raise InputFileError(name, f"[Matrix Format] must be Full, Lower or Upper, not {arg!r}",
                                         line=lineno)
                hdr.matrix = arg.lower()
            elif kw == "mixed-mode order":
                raise InputFileError(name, "mixed-mode (differential) data cannot be used; export single-ended "
                                           "S-parameters", line=lineno)
            elif kw == "begin information":
                in_info = True
            elif kw in ("noise data", "end", "end information"):
                raise InputFileError(name, f"[{km.group(1)}] before [Network Data]; the network data section "
                                           f"is missing", line=lineno)
            else:
                raise InputFileError(name, f"unknown keyword [{km.group(1)}]; check its spelling against the "
                                           f"Touchstone 2.0 keywords", line=lineno)
            continue
        # a data line
        if hdr.version == 2:
            raise InputFileError(name, "data before [Network Data]; add the [Network Data] line above the data",
                                 line=lineno)
        if hdr.opts is None:
            hdr.opts = _Options()
            hdr.notes.append(_DEFAULTS_NOTE)
        return hdr, pos, lineno, len(text)
    if not complete:
        return None
    if pending_ref is not None:
        _finish_reference(hdr, pending_ref, name, final=True)
    if hdr.version == 2:
        raise InputFileError(name, "no [Network Data] keyword: a version 2 file needs '[Network Data]' "
                                   "followed by the data")
    raise InputFileError(name, "no data: the file holds only comments or the option line; export the "
                               "sweep again")


def _norm_kw(kw: str) -> str:
    return " ".join(kw.lower().split())


def _positive_int(arg: str, kw: str, lineno: int, name: str) -> int:
    if not re.fullmatch(r"\+?\d+", arg) or int(arg) < 1:
        raise InputFileError(name, f"[{kw.title()}] needs a positive whole number, not {arg!r}", line=lineno)
    return int(arg)


def _finish_reference(hdr: _Header, pending, name: str, final: bool) -> None:
    lineno, vals = pending
    p = hdr.nports
    if len(vals) > p or (final and len(vals) < p):
        raise InputFileError(name, f"[Reference] needs {p} resistance{'s' if p > 1 else ''} (one per port), "
                                   f"found {len(vals)}", line=lineno)
    if len(vals) == p:
        for v in vals:
            if not _NUMBER.match(v) or not (0 < float(v) < float("inf")):
                raise InputFileError(name, f"[Reference] value {v!r} must be a positive number of ohms",
                                     line=lineno)
        hdr.z_ref = [float(v) for v in vals]


def _check_v2_before_data(hdr: _Header, name: str, lineno: int) -> None:
    if hdr.opts is None:
        raise InputFileError(name, "[Network Data] comes before the option line; put the option line "
                                   "('# MHz S RI R 50' or similar) right after [Version]", line=lineno)
    if hdr.nports is None:
        raise InputFileError(name, "no [Number of Ports] before [Network Data]; add e.g. '[Number of Ports] 1'",
                             line=lineno)
    if hdr.nports == 2 and not hdr.order_given:
        raise InputFileError(name, "a 2-port version 2 file needs [Two-Port Data Order] 12_21 or 21_12 before "
                                   "[Network Data]", line=lineno)
    if hdr.nfreq is None:
        raise InputFileError(name, "no [Number of Frequencies] before [Network Data]; add it (the number of "
                                   "frequency points)", line=lineno)
    if hdr.z_ref is not None and hdr.opts.param != "s":
        pass  # Z and Y data in version 2 are not normalised: the references do not enter the conversion
    m = _SNP.search(name)
    if m and int(m.group(1)) != hdr.nports:
        hdr.notes.append(f"[Number of Ports] says {hdr.nports} although the name ends .s{m.group(1)}p; "
                         f"the keyword was followed")


def _data_end(text, start: int) -> int:
    m = (_KEYWORD_IN_DATA if isinstance(text, str) else _KEYWORD_IN_DATA_B).search(text, start)
    return m.start() if m else len(text)


def _clean_region(region: str, first_line: int, hdr: _Header, name: str) -> str:
    """Collect comments, drop later option lines (noting them) and strip comments from the data text."""
    if "!" in region:
        hdr.comments.extend(c.strip() for c in _COMMENT_LINE.findall(region))
        region = re.sub(r"!.*", "", region)
    if "#" in region:
        for m in _OPTION_IN_DATA.finditer(region):
            ln = first_line + region.count("\n", 0, m.start())
            if hdr.opts.line is None:
                raise InputFileError(name, "the option line comes after data; move it above the first data "
                                           "line", line=ln)
            hdr.notes.append(f"line {ln}: a second option line was ignored (the Touchstone rule)")
        region = _OPTION_IN_DATA.sub("", region)
    if hdr.version == 1 and "[" in region:
        m = _KEYWORD_IN_DATA.search(region)
        if m:
            ln = first_line + region.count("\n", 0, m.start())
            raise InputFileError(name, "keyword in a version 1 file; add '[Version] 2.0' as the first line if "
                                       "this is a version 2 file", line=ln)
    return region


CHUNK_CHARS = 1 << 20
"""Data text parsed per chunk (whole lines): the parse's temporaries stay a few megabytes at any size."""


def _parse_region(text, start, end, first_line, hdr, ncol, per_line, p, name):
    """Parse the data text ``text[start:end]`` chunk by chunk (one record per line) or at once (records over
    several lines). Returns (values (n, ncol) in the file's units, frequencies in Hz, line of each record)."""
    noise_ok = hdr.version == 1 and p == 2
    exp = hdr.opts.unit_exp
    nl = _nl(text)
    if per_line:
        cap = text.count(nl, start, end) + 1  # at most one record per line
        bounds = []
        a = start
        while a < end:
            b = text.find(nl, min(a + CHUNK_CHARS, end), end)
            b = end if b < 0 else b + 1
            bounds.append((a, b))
            a = b
    else:
        cap = None
        bounds = [(start, end)]
    vals = freq = rec = None
    k = 0
    line = first_line
    for a, b in bounds:
        region = _clean_region(_chunk(text, a, b), line, hdr, name)
        if region.strip():
            parsed = _parse_fast(region, ncol, per_line)
            if parsed is not None:
                v, ftoks, rec_rel = parsed
                r = rec_rel + line
                stopped = False
            else:
                prev = float(vals[k - 1, 0]) if k else None
                v, ftoks, r, stopped = _parse_slow(region, line, ncol, per_line, noise_ok=noise_ok, p=p, name=name,
                                                   hdr=hdr, prev_first=prev)
            f = _freq_hz(ftoks, exp)
            del ftoks
            if cap is None:
                vals, freq, rec, k = v, f, r, v.shape[0]
            else:
                if vals is None:
                    vals = np.empty((cap, ncol))
                    freq = np.empty(cap)
                    rec = np.empty(cap, dtype=np.int32)  # line numbers: a file within the size limit has < 2**31
                m = v.shape[0]
                vals[k:k + m], freq[k:k + m], rec[k:k + m] = v, f, r
                k += m
            if stopped:
                break
        line += text.count(nl, a, b)
    if vals is None:
        return np.empty((0, ncol)), np.empty(0), np.empty(0, dtype=np.int64)
    return vals[:k], freq[:k], rec[:k]


def _parse_fast(region: str, ncol: int, per_line: bool):
    """Whole-array parse of clean data; None when anything is unusual (the slow pass then explains)."""
    if _FAST_BAD.search(region):
        return None
    buf = np.frombuffer(region.encode("ascii"), dtype=np.uint8)
    edge = np.diff((buf > 32).view(np.int8), prepend=np.int8(0), append=np.int8(0))
    starts = np.flatnonzero(edge == 1)  # first character of each token
    ends = np.flatnonzero(edge == -1)  # one past its last character
    del edge
    ntok = starts.size
    if ntok == 0 or ntok % ncol:
        return None
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        try:
            vals = np.fromstring(region, dtype=float, sep=" ")
        except (ValueError, DeprecationWarning):
            return None
    if vals.size != ntok:
        return None
    tok_line = np.searchsorted(np.flatnonzero(buf == 10), starts)
    rec_first = tok_line[::ncol]
    rec_last = tok_line[ncol - 1::ncol]
    if per_line:
        if not np.array_equal(rec_first, rec_last) or np.any(np.diff(rec_first) <= 0):
            return None
    elif np.any(rec_first[1:] <= rec_last[:-1]):
        return None
    ftoks = _FIRST_TOKEN.findall(region) if per_line else None  # one record per line: its first token
    if ftoks is None or len(ftoks) != rec_first.size:
        ftoks = [region[a:b] for a, b in zip(starts[::ncol].tolist(), ends[::ncol].tolist())]
    return vals.reshape(-1, ncol), ftoks, rec_first


def _token_error(t: str, lineno: int, name: str):
    if t.lower() in _NOT_FINITE:
        return InputFileError(name, f"value {t!r} is NaN or infinite: the point was not measured; remove the "
                                    f"line or measure again", line=lineno)
    return InputFileError(name, f"{t!r} is not a number; data lines hold only numbers (comments start with '!')",
                          line=lineno)


def _parse_slow(region, first_line, ncol, per_line, *, noise_ok, p, name, hdr, prev_first=None):
    """Line-by-line parse that finds the line of any fault.

    ``prev_first`` is the frequency (file units) of the record before this text, if any. Returns (values,
    frequency tokens, record lines, whether a noise block ended the network data here)."""
    rows, ftoks, rec_lines = [], [], []
    stopped = False
    cur, cur_line = [], None
    need = (f"{ncol} values for each frequency (the frequency and {ncol - 1} numbers, "
            f"i.e. {(ncol - 1) // 2} complex values as pairs)")
    for k, raw in enumerate(region.split("\n")):
        ln = first_line + k
        content = raw.split("!", 1)[0]
        _check_chars(content, ln, name)
        toks = content.split()
        if not toks:
            continue
        for t in toks:
            if not _NUMBER.match(t):
                raise _token_error(t, ln, name)
        if per_line:
            if len(toks) != ncol:
                last = rows[-1][0] if rows else prev_first
                if noise_ok and len(toks) == 5 and last is not None and float(toks[0]) <= last:
                    hdr.notes.append(f"line {ln}: noise parameters from here on were skipped")
                    stopped = True
                    break
                raise InputFileError(name, f"found {len(toks)} values but a {p}-port file needs {need} on each "
                                           f"line; check the file is complete and named .s{{N}}p for its "
                                           f"port count".replace("{N}", str(p)), line=ln)
            rows.append([float(t) for t in toks])
            ftoks.append(toks[0])
            rec_lines.append(ln)
            continue
        for j, t in enumerate(toks):
            if not cur:
                if j > 0:
                    raise InputFileError(name, f"the data of the frequency at line {cur_line} end part-way "
                                               f"through this line; a {p}-port file needs {need}, and each "
                                               f"frequency starts a new line", line=ln)
                cur_line = ln
                ftoks.append(t)
            cur.append(float(t))
            if len(cur) == ncol:
                rows.append(cur)
                rec_lines.append(cur_line)
                cur = []
    if cur:
        raise InputFileError(name, f"the data of the frequency starting at this line stop after {len(cur)} "
                                   f"values; a {p}-port file needs {need} (is the file truncated?)",
                             line=cur_line)
    vals = np.array(rows, dtype=float).reshape(-1, ncol)
    return vals, ftoks, np.array(rec_lines, dtype=np.int64), stopped


def _scale_text(t: str, exp: int) -> str:
    """The decimal text ``t`` times 10**exp, as text for float() (exact: only the exponent changes)."""
    low = t.lower()
    if "e" in low:
        mant, e = low.split("e")
        return f"{mant}e{int(e) + exp}"
    return f"{t}e{exp}"


def _move_point(t: str, exp: int) -> str:
    """Plain decimal text ``t`` (as repr gives it) times 10**exp, written without an exponent if it has none."""
    if "e" in t.lower():
        return _scale_text(t, exp)
    sign = ""
    if t[0] in "+-":
        sign, t = t[0], t[1:]
    whole, _, frac = t.partition(".")
    digits = whole + frac
    point = len(whole) + exp
    if point <= 0:
        digits = "0" * (1 - point) + digits
        point = 1
    if point > len(digits):
        digits += "0" * (point - len(digits))
    head = digits[:point].lstrip("0") or "0"
    tail = digits[point:].rstrip("0")
    return sign + head + ("." + tail if tail else ".0")


def _freq_hz(ftoks: list, exp: int) -> np.ndarray:
    """Frequency tokens in the file's unit -> Hz, each the correctly rounded value of the decimal times 10**exp."""
    return scale_decimal_tokens(ftoks, exp)


def _check_values(vals, freq_hz, rec_line, name):
    bad = ~np.isfinite(vals).all(axis=1) | ~np.isfinite(freq_hz)
    if bad.any():
        k = int(np.argmax(bad))
        raise InputFileError(name, "a value is too large to be a number (overflows to infinity); check this "
                                   "line", line=int(rec_line[k]))
    if freq_hz[0] < 0 or (freq_hz < 0).any():
        k = int(np.argmax(freq_hz < 0))
        raise InputFileError(name, f"negative frequency {_num(vals[k, 0])}; frequencies must be zero or positive: "
                                   f"remove the point or export the sweep again",
                             line=int(rec_line[k]))
    d = np.diff(freq_hz)
    if (d <= 0).any():
        k = int(np.argmax(d <= 0))
        a, b = int(rec_line[k]), int(rec_line[k + 1])
        if d[k] == 0:
            msg = (f"frequency {_num(vals[k + 1, 0])} is repeated (also on line {a}); Touchstone frequencies must "
                   f"strictly increase: remove the duplicate")
        else:
            msg = (f"frequency goes down from {_num(vals[k, 0])} (line {a}) to {_num(vals[k + 1, 0])}; Touchstone "
                   f"frequencies must strictly increase: sort the file or remove the extra points")
        raise InputFileError(name, msg, line=b)


GAMMA_ABSURD = 10.0
"""Largest |reflection| a one-port sweep may hold. A passive antenna reflects at most |Gamma| = 1 (an
analyzer's calibration error adds a little); ten times that is no measurement, only a wrong export or a
damaged file, and values around 1e155 and beyond would stall the plots."""


def _check_reflection(g, freq_hz, rec_line, name) -> None:
    with np.errstate(over="ignore", invalid="ignore"):
        mag = np.abs(g)
    bad = ~(mag <= GAMMA_ABSURD)
    if bad.any():
        k = int(np.argmax(bad))
        raise InputFileError(name, f"|Gamma| = {mag[k]:.3g} at {freq_hz[k] / 1e6:.6g} MHz: a reflection above "
                                   f"{GAMMA_ABSURD:g} cannot come from an antenna (a passive load reflects at most "
                                   "1); check this value and the format line (RI, MA or DB)",
                             line=int(rec_line[min(k, len(rec_line) - 1)]))


def _num(v: float) -> str:
    return repr(float(v))


def _check_after_data(text: str, data_end: int, hdr: _Header, name: str, nrec: int) -> None:
    """Version 2: the keywords after the network data; [Number of Frequencies] must match."""
    if hdr.nfreq is not None and hdr.nfreq != nrec:
        raise InputFileError(name, f"[Number of Frequencies] says {hdr.nfreq} but [Network Data] holds {nrec} "
                                   f"frequencies; correct the count or check the file is complete",
                             line=hdr.nfreq_line)
    saw_end = False
    skipping = None
    lineno = text.count(_nl(text), 0, data_end) if data_end < len(text) else None
    if lineno is None:
        hdr.notes.append("no [End] keyword at the end of the version 2 file")
        return
    for _pos, _e, raw in _lines(_chunk(text, data_end, len(text))):
        lineno += 1
        content = raw.split("!", 1)[0].strip()
        if not content:
            continue
        km = _KEYWORD.match(content)
        if km:
            kw = _norm_kw(km.group(1))
            if kw == "end":
                saw_end = True
                break
            if kw in ("noise data", "begin information"):
                skipping = kw
                continue
            if kw == "end information":
                skipping = None
                continue
            if kw == "network data":
                raise InputFileError(name, "[Network Data] appears twice; keep one data section", line=lineno)
            raise InputFileError(name, f"[{km.group(1)}] after the network data; keywords other than [Noise Data] "
                                       f"and [End] belong before [Network Data]", line=lineno)
        if skipping is None:
            raise InputFileError(name, "unexpected text after the network data", line=lineno)
    if skipping == "noise data":
        hdr.notes.append("the [Noise Data] section was skipped")
    if not saw_end:
        hdr.notes.append("no [End] keyword at the end of the version 2 file")


def _to_matrices(vals: np.ndarray, p: int, hdr: _Header) -> np.ndarray:
    """(n, ncol) numbers -> (n, p, p) complex network data, in the file's parameter and reference."""
    a = vals[:, 1::2]
    b = vals[:, 2::2]
    fmt = hdr.opts.fmt
    if fmt == "ri":
        c = a + 1j * b
    else:
        mag = a if fmt == "ma" else 10.0 ** (a / 20.0)
        ang = np.deg2rad(b)
        c = mag * (np.cos(ang) + 1j * np.sin(ang))
    n = c.shape[0]
    if hdr.matrix != "full":
        m = np.zeros((n, p, p), dtype=complex)
        rows, cols = (np.tril_indices(p) if hdr.matrix == "lower" else np.triu_indices(p))
        m[:, rows, cols] = c
        m[:, cols, rows] = c
        return m
    m = c.reshape(n, p, p)
    if p == 2 and hdr.order_21_12:
        m = m.transpose(0, 2, 1)  # N11 N21 N12 N22 is column by column
    return np.ascontiguousarray(m)


def _to_s50(m: np.ndarray, hdr: _Header, z_ref: np.ndarray, name: str, rec_line) -> np.ndarray:
    p = m.shape[1]
    param = hdr.opts.param
    r = hdr.opts.r_ohm
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        if param == "s":
            return renormalise_s(m, z_ref, Z_REF_OHM)
        try:
            if param == "z":
                s = s_from_z(m * r if hdr.version == 1 else m, Z_REF_OHM)
            else:
                s = s_from_y(m / r if hdr.version == 1 else m, Z_REF_OHM)
        except np.linalg.LinAlgError:
            eye = np.eye(p)
            a = (m * r if hdr.version == 1 else m) + Z_REF_OHM * eye if param == "z" else \
                eye + Z_REF_OHM * (m / r if hdr.version == 1 else m)
            k = int(np.argmin(np.abs(np.linalg.det(a))))
            raise InputFileError(name, "these parameters have no S-parameter equivalent at 50 ohm (singular "
                                       "matrix); check the values", line=int(rec_line[k])) from None
    bad = ~np.isfinite(s).reshape(s.shape[0], -1).all(axis=1)
    if bad.any():
        k = int(np.argmax(bad))
        raise InputFileError(name, f"the {param.upper()}-parameters here have no S-parameter equivalent at "
                                   f"50 ohm; check the values", line=int(rec_line[k]))
    return s


# ----------------------------------------------------------------------------------------------
# writing


def _freq_text(freq_hz: np.ndarray, exp: int) -> list:
    """Shortest decimal text per frequency in the unit 10**exp Hz that reads back exactly."""
    if exp == 0:
        return list(map(repr, freq_hz.tolist()))
    txt = list(map(repr, (freq_hz / 10.0 ** exp).tolist()))
    back = _freq_hz(txt, exp)
    for i in np.flatnonzero(back != freq_hz).tolist():
        txt[i] = _move_point(repr(float(freq_hz[i])), -exp)
    return txt


def write_touchstone(path, freq_hz, s, *, comments=(), fmt: str = "RI", unit: str = "MHz") -> None:
    """Write a version 1 Touchstone file (50 ohm), atomically.

    Parameters
    ----------
    path : str or os.PathLike
        Output name, ending ``.s1p`` for one port or ``.s2p`` for two.
    freq_hz : array_like, shape (n,)
        Frequencies, Hz, finite, zero or more, strictly increasing.
    s : array_like, shape (n,), (n, 1, 1) or (n, 2, 2), complex
        S-parameters at 50 ohm.
    comments : iterable of str
        Written first, each line as ``! <text>``.
    fmt : {"RI", "MA", "DB"}
        Number format. RI reads back bit for bit; MA and DB to about 1e-15 (trigonometry).
    unit : {"Hz", "kHz", "MHz", "GHz"}
        Frequency unit of the file. Frequencies are written as the shortest decimal that
        :func:`read_sweep` turns back into exactly ``freq_hz``.

    Raises
    ------
    ValueError
        For arrays of the wrong shape, non-finite values, frequencies not increasing, an unknown
        ``fmt`` or ``unit``, an extension that does not match the port count, or a zero magnitude in DB.

    Notes
    -----
    Option line ``# <unit> S <fmt> R 50``; 2-port data in the order f, S11, S21, S12, S22 (Touchstone
    version 1 rule). Values are written with ``repr`` (shortest text that round-trips a float64).
    """

    f = np.asarray(freq_hz, dtype=float)
    sa = np.asarray(s, dtype=complex)
    if sa.ndim == 1:
        sa = sa.reshape(-1, 1, 1)
    if f.ndim != 1 or sa.ndim != 3 or sa.shape[0] != f.shape[0] or sa.shape[1] != sa.shape[2] \
            or sa.shape[1] not in (1, 2):
        raise ValueError(f"need freq_hz (n,) and s (n,), (n,1,1) or (n,2,2); got {f.shape} and {np.shape(s)}")
    if f.size == 0:
        raise ValueError("no frequency points to write")
    if not np.isfinite(f).all() or (f < 0).any() or (np.diff(f) <= 0).any():
        raise ValueError("frequencies must be finite, zero or more and strictly increasing")
    if not np.isfinite(sa).all():
        raise ValueError("S-parameters must be finite")
    p = sa.shape[1]
    suffix = Path(path).suffix.lower()
    if suffix != f".s{p}p":
        raise ValueError(f"a {p}-port Touchstone file must be named .s{p}p, not {Path(path).name!r}")
    fmt_l = fmt.lower()
    if fmt_l not in _FORMATS:
        raise ValueError(f"fmt must be RI, MA or DB, not {fmt!r}")
    if unit.lower() not in _UNIT_EXP:
        raise ValueError(f"unit must be Hz, kHz, MHz or GHz, not {unit!r}")
    exp = _UNIT_EXP[unit.lower()]
    if fmt_l == "db" and (sa == 0).any():
        raise ValueError("a zero magnitude cannot be written in DB; use fmt='RI'")
    head = [f"! {line}".rstrip() for text in comments for line in str(text).splitlines() or [""]]
    head.append(f"# {_UNIT_NAME[exp]} S {fmt_l.upper()} R 50")
    write_text_chunks_atomic(path, _data_chunks("\n".join(head) + "\n", f, sa, fmt_l, exp))


def _data_chunks(head: str, f, sa, fmt_l: str, exp: int):
    """The file's text in pieces: the head, then the data one chunk of rows at a time (one %-format each)."""
    yield head
    p = sa.shape[1]
    ncol = 1 + 2 * p * p
    row = "%s" + " %r" * (ncol - 1) + "\n"
    for i in range(0, f.size, CHUNK_ROWS):
        j = min(i + CHUNK_ROWS, f.size)
        if p == 2:
            c = sa[i:j, [0, 1, 0, 1], [0, 0, 1, 1]]  # S11 S21 S12 S22
        else:
            c = sa[i:j, 0, 0][:, None]
        if fmt_l == "ri":
            a, b = c.real, c.imag
        else:
            mag = np.abs(c)
            a = 20.0 * np.log10(mag) if fmt_l == "db" else mag
            b = np.rad2deg(np.angle(c))
        block = np.empty((j - i, ncol), dtype=object)
        block[:, 0] = _freq_text(f[i:j], exp)
        block[:, 1::2] = a
        block[:, 2::2] = b
        yield (row * (j - i)) % tuple(block.ravel().tolist())
