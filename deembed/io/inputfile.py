"""Opening input files: only regular files, no bigger than the input size limit, with clear refusals.

Every file deembed reads (sweeps, measured 2-ports, line files, catalogs, band lists, site files) comes
through :func:`read_input_bytes`. It refuses, naming the file and saying what to do:

* anything that is not a regular file: a folder, a device (``/dev/zero`` would never end), a pipe, a
  socket; a broken link, a link loop; a path through a folder it may not enter;
* a file above the input size limit, checked before reading (and again while reading, for a file that
  grows): 256 MiB unless the environment variable ``DEEMBED_MAX_INPUT_SIZE`` (or the command line's
  ``--max-input-size``) says otherwise, e.g. ``DEEMBED_MAX_INPUT_SIZE=1GiB``. A ``correct`` run takes at
  its peak about 6 times the file's size in memory for a Touchstone sweep and about 12 times for a text table
  (measured: a 94 MB .s1p, 545 MB; a 72 MB CSV, 883 MB), so the limit also bounds the memory a run can take.

Each file read is noted (inside :func:`recording_inputs`), so that a command can refuse, before it
writes anything, an output that would replace one of its inputs.
"""
from __future__ import annotations

import contextlib
import errno
import os
import re
import stat

from ..base.errors import InputFileError, OptionError, field_ref

ENV_MAX_INPUT = "DEEMBED_MAX_INPUT_SIZE"
DEFAULT_MAX_INPUT_BYTES = 256 * 1024 ** 2
"""256 MiB: a 10^6-point two-port Touchstone file in full precision fits, with room to spare."""

_SIZE = re.compile(r"^\s*([0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE]([+-]?[0-9]{1,3}))?\s*([kKMGT]?i?[bB]?)\s*$")
_MULT = {"": 1, "k": 1e3, "K": 1e3, "M": 1e6, "G": 1e9, "T": 1e12,
         "ki": 1024, "Ki": 1024, "Mi": 1024 ** 2, "Gi": 1024 ** 3, "Ti": 1024 ** 4}

_recorders: list = []


def parse_size(text: str, where: str = "max_input_size") -> int:
    """A size in bytes from ``"256MiB"``, ``"1GB"``, ``"500kB"`` or a bare number of bytes.

    Raises
    ------
    OptionError
        For anything else, or a size below 1 kB (no sweep fits in less).
    """
    m = _SIZE.match(str(text))
    if not m:
        raise OptionError(where, f"{text!r} is not a size; write it like 256MiB, 1GB or 500kB")
    exp = int(m.group(2) or 0)
    if exp > 20:
        raise OptionError(where, f"{text!r}: give a size from 1kB up (for example 256MiB)")
    num = float(m.group(1)) * (10.0 ** exp)
    suffix = m.group(3)
    if suffix.endswith(("b", "B")):
        suffix = suffix[:-1]
    if suffix not in _MULT:
        raise OptionError(where, f"{text!r}: unknown unit; use B, kB, MB, GB, KiB, MiB or GiB")
    size = num * _MULT[suffix]
    if not size >= 1000 or size > 2 ** 62:
        raise OptionError(where, f"{text!r}: give a size from 1kB up (for example 256MiB)")
    return int(size)


def max_input_bytes() -> int:
    """The input size limit in force: ``DEEMBED_MAX_INPUT_SIZE`` when set, else 256 MiB."""
    text = os.environ.get(ENV_MAX_INPUT, "").strip()
    if not text:
        return DEFAULT_MAX_INPUT_BYTES
    return parse_size(text, f"environment variable {ENV_MAX_INPUT}")


def format_size(n: int) -> str:
    """``268435456`` -> ``'256 MiB'``; ``1500000`` -> ``'1.43 MiB'``."""
    for unit, k in (("GiB", 1024 ** 3), ("MiB", 1024 ** 2), ("KiB", 1024)):
        if n >= k:
            return f"{n / k:.3g} {unit}"
    return f"{n} bytes"


def _too_big(name: str, size: int | None, limit: int) -> InputFileError:
    what = f"is {format_size(size)}" if size is not None else "is larger than that"
    return InputFileError(name, f"{what}, above the input size limit of {format_size(limit)}; check that it "
                                f"is the right file, or raise the limit with {ENV_MAX_INPUT}=SIZE (or "
                                f"{field_ref('max_input_size')} SIZE), e.g. 1GiB")


def _os_error(name: str, exc: OSError) -> InputFileError:
    """A refusal for an OSError met while opening ``name``, saying what is wrong in words."""
    code = exc.errno
    if code == errno.ENOENT:
        if os.path.islink(name):
            return InputFileError(name, f"is a link to {os.readlink(name)!r}, which does not exist; point it at "
                                        "the real file")
        return InputFileError(name, "no such file; check the name and the folder")
    if code == errno.ELOOP:
        return InputFileError(name, "is a symbolic link that leads back to itself (a link loop); point it at the "
                                    "real file")
    if code == errno.EACCES or code == errno.EPERM:
        return InputFileError(name, "cannot be read: permission denied on the file or on a folder above it; make "
                                    "it readable (and its folders searchable) for this user")
    if code == errno.ENOTDIR:
        return InputFileError(name, "a part of this path is a file, not a folder; check the path")
    if code == errno.ENAMETOOLONG:
        return InputFileError(name, "the path is too long; move the file to a shorter path")
    return InputFileError(name, f"cannot be read ({exc.strerror or exc}); check the file")


def check_input_file(path, name: str | None = None) -> os.stat_result:
    """Refuse ``path`` unless it is a regular file within the input size limit; returns its stat.

    Parameters
    ----------
    path : str or os.PathLike
    name : str, optional
        How to name the file in a message (default: ``path`` as given).
    """
    name = str(path) if name is None else name
    try:
        st = os.stat(path)
    except OSError as exc:
        raise _os_error(name, exc) from None
    except ValueError:  # an embedded NUL byte
        raise InputFileError(name.replace("\x00", "\\x00"), "the path holds a NUL character; check it") from None
    _check_kind(name, st)
    limit = max_input_bytes()
    if st.st_size > limit:
        raise _too_big(name, st.st_size, limit)
    return st


def _check_kind(name: str, st: os.stat_result) -> None:
    if stat.S_ISDIR(st.st_mode):
        raise InputFileError(name, "is a folder, not a file; give the path of the file in it")
    if not stat.S_ISREG(st.st_mode):
        kind = ("a device" if stat.S_ISCHR(st.st_mode) or stat.S_ISBLK(st.st_mode) else
                "a pipe" if stat.S_ISFIFO(st.st_mode) else "a socket" if stat.S_ISSOCK(st.st_mode) else
                "not a regular file")
        raise InputFileError(name, f"is {kind}, not a regular file; save the data to a file and give that")


def read_input_bytes(path, name: str | None = None) -> bytes:
    """The whole content of the input file ``path``, after the checks of :func:`check_input_file`.

    The file is opened without blocking (a pipe put in its place after the check cannot hang the
    run), checked again on the open descriptor, and read to at most the limit plus one byte.
    """
    name = str(path) if name is None else name
    check_input_file(path, name)
    limit = max_input_bytes()
    flags = os.O_RDONLY | getattr(os, "O_NONBLOCK", 0) | getattr(os, "O_NOCTTY", 0) | getattr(os, "O_BINARY", 0)
    try:
        fd = os.open(path, flags)
    except OSError as exc:
        raise _os_error(name, exc) from None
    try:
        st = os.fstat(fd)
        _check_kind(name, st)
        if st.st_size > limit:
            raise _too_big(name, st.st_size, limit)
        chunks, total = [], 0
        while True:
            try:
                block = os.read(fd, min(1 << 24, limit + 1 - total))
            except OSError as exc:
                raise InputFileError(name, f"cannot be read ({exc.strerror}); check the file and the disk") from None
            if not block:
                break
            chunks.append(block)
            total += len(block)
            if total > limit:
                raise _too_big(name, None, limit)
    finally:
        os.close(fd)
    note_input(path)
    return b"".join(chunks)


def note_input(path) -> None:
    """Record ``path`` as an input of the running command (see :func:`recording_inputs`)."""
    if not _recorders:
        return
    try:
        real = os.path.realpath(path)
    except (OSError, ValueError):
        return
    for rec in _recorders:
        rec.add(real)


@contextlib.contextmanager
def recording_inputs():
    """Within the block, every file read through :func:`read_input_bytes` is recorded; yields the set.

    The command line records each command's inputs, and a site worker each entry's, so that
    :class:`~deembed.io.outfolder.OutputFolder` can refuse an output that would replace any of them.
    """
    rec: set = set()
    _recorders.append(rec)
    try:
        yield rec
    finally:
        _recorders.remove(rec)


def inputs_read() -> list:
    """Every input file read so far inside the active :func:`recording_inputs` blocks (real paths)."""
    return sorted(set().union(*_recorders)) if _recorders else []
