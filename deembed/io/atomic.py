"""Writing outputs atomically, and keeping outputs off the inputs.

Every file deembed writes goes through these helpers: the content is written to a temporary file in
the destination folder and renamed into place only when complete, so an interrupted run never leaves
a half-written file under the real name, and an existing file is replaced in one step.
"""
from __future__ import annotations

import contextlib
import os
import tempfile
from pathlib import Path
from typing import Iterable, Iterator

from ..base.errors import OptionError


def _default_mode() -> int:
    """Permission bits a newly created file would get (0o666 less the process umask)."""
    mask = os.umask(0)
    os.umask(mask)
    return 0o666 & ~mask


@contextlib.contextmanager
def atomic_path(path) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; rename it onto ``path`` when the block succeeds.

    The temporary name keeps the real extension (``.name.XXXX.png``) so tools that pick a format from
    the name (``matplotlib.figure.Figure.savefig``) do the right thing. If the block raises, the
    temporary file is removed and ``path`` is left as it was.

    Parameters
    ----------
    path : str or os.PathLike
        The final file name. Its folder must exist.

    Yields
    ------
    pathlib.Path
        The temporary file to write (it exists, empty, when the block starts).
    """
    final = Path(path)
    folder = final.parent if str(final.parent) else Path(".")
    fd, tmp_name = tempfile.mkstemp(dir=folder, prefix=f".{final.name}.", suffix=final.suffix or ".tmp")
    os.close(fd)
    tmp = Path(tmp_name)
    try:
        yield tmp
        if final.exists():
            mode = final.stat().st_mode & 0o7777
        else:
            mode = _default_mode()
        os.chmod(tmp, mode)
        os.replace(tmp, final)
    except BaseException:
        with contextlib.suppress(OSError):
            tmp.unlink()
        raise


def stem_of(path) -> str:
    """The name outputs are made from: ``/x/dipole-40m.s1p`` -> ``dipole-40m`` (a name without extension as is)."""
    base = os.path.basename(str(path))
    stem, ext = os.path.splitext(base)
    return stem if ext else base


def write_bytes_atomic(path, data: bytes) -> None:
    """Write ``data`` to ``path`` atomically (temporary file in the same folder, then rename)."""
    with atomic_path(path) as tmp:
        with open(tmp, "wb") as fh:
            fh.write(data)
            fh.flush()
            os.fsync(fh.fileno())


def write_text_atomic(path, text: str, encoding: str = "utf-8") -> None:
    """Write ``text`` to ``path`` atomically; line endings are written exactly as given."""
    write_bytes_atomic(path, text.encode(encoding))


def write_text_chunks_atomic(path, chunks, encoding: str = "utf-8") -> None:
    """Write the text pieces ``chunks`` (any iterable of str) to ``path`` atomically, one piece at a time,
    so a large file never has to be held whole in memory; line endings are written exactly as given."""
    with atomic_path(path) as tmp:
        with open(tmp, "wb") as fh:
            for piece in chunks:
                fh.write(piece.encode(encoding))
            fh.flush()
            os.fsync(fh.fileno())


def _same_file(a: Path, b: Path) -> bool:
    try:
        if a.exists() and b.exists():
            return os.path.samefile(a, b)
    except OSError:
        pass
    return a.resolve() == b.resolve()


def same_path(a, b) -> bool:
    """True when ``a`` and ``b`` name the same file (through links too), or resolve to the same path."""
    return _same_file(Path(a), Path(b))


def check_not_input(out_path, input_paths: Iterable, option: str) -> None:
    """Refuse an output path that names one of the input files.

    Parameters
    ----------
    out_path : str or os.PathLike
        The output the user asked for.
    input_paths : iterable of str or os.PathLike
        Files the command reads (``None`` entries are skipped).
    option : str
        The option that gave ``out_path`` (for the message), e.g. ``"--out"``.

    Raises
    ------
    OptionError
        If ``out_path`` is the same file as an input (same resolved path, or the same file through
        a link).
    """
    out = Path(out_path)
    for inp in input_paths:
        if inp is None:
            continue
        if _same_file(out, Path(inp)):
            raise OptionError(option, f"{out} is the input file {inp}; choose another output name so "
                                      f"the input is not overwritten")
