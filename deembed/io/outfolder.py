"""A command's outputs as one transaction: all of them appear in ``--out``, or none does.

::

    with OutputFolder("results", inputs=[sweep_path]) as out:
        write_png(out.path("a.swr.png"))       # written into a hidden staging folder inside results/
        write_json(out.path("a.summary.json"))
    # here, and only here, every file is moved into results/

How it works:

* ``--out`` is created if needed and locked (``.deembed-lock`` inside it, an ``flock`` that the kernel
  drops when the process ends, however it ends). A command takes the lock when it starts, before it reads
  anything (:func:`claimed`; the transaction then uses that lock), so a second run into the same folder
  while the first holds it is refused at once, with the first run's process id, and not only when it comes
  to write. The lock file is removed at the end; one left by a killed run is not held by anyone and is
  simply taken over.
* A path where a file stands in the way of the folder (``--out afile``, ``--out afile/sub``) cannot hold
  results: :class:`OutputWriteError` (exit status 3), like every other reason the results cannot be written.
* Outputs are written into ``--out/.deembed-stage-XXXX/``. Staging folders left by killed runs are
  removed by the next run that takes the lock.
* On success, before anything in ``--out`` is touched, every final path is checked: none may be an
  input of the command (the files given, and every file read through
  :func:`deembed.io.inputfile.read_input_bytes`), and no folder may stand where a file goes (or a
  file where a folder goes). Then, with SIGINT, SIGTERM and SIGHUP held back, each file is moved into
  place; a file it replaces is first moved aside, and if a move fails the ones done are undone. So
  ``--out`` holds either what it held before or the complete new set.
* The outputs of one command for one sweep are one set. A command names every file its set may hold
  (``replaces``: the names it writes for that sweep's stem, with or without plots); a file of those names
  that this run does not write (the report and plots of an earlier run, on a rerun with ``--no-plots``) is
  removed in the same transaction, so ``--out`` never holds an earlier set's files beside the new ones.
  Only those names are touched, never an input, and never any other file.
* On any failure, or an interruption, the staging folder is removed and ``--out`` is left as it was
  (a folder this run created is removed again when it is empty).
* An ``OSError`` inside the block (a full disk, a read-only folder, a folder in the way) becomes an
  :class:`OutputWriteError` naming the path: exit status 3, not the "check failed" status 1.
"""
from __future__ import annotations

import contextlib
import errno
import os
import shutil
import tempfile

from ..base.errors import OptionError, OutputWriteError, field_ref
from ..base.signals import signals_held
from .atomic import same_path
from .inputfile import inputs_read

LOCK_NAME = ".deembed-lock"
STAGE_PREFIX = ".deembed-stage-"
_PREVIOUS = ".previous"


def _what_to_do(exc: OSError) -> str:
    code = exc.errno
    if code in (errno.ENOSPC, getattr(errno, "EDQUOT", -1)):
        return "the disk is full; free some space or choose another `out`"
    if code in (errno.EACCES, errno.EPERM):
        return "permission denied; make the folder writable or choose another `out`"
    if code == errno.EROFS:
        return "the file system is read-only; choose another `out`"
    if code == errno.EISDIR:
        return "a folder stands where an output file goes; move or rename it"
    if code in (errno.ENOTDIR, errno.EEXIST):
        return "a file stands where a folder is needed; move or rename it, or choose another `out`"
    return "check the folder and the disk"


class OutputFolder:
    """The outputs of one command, written into ``out_dir`` as one transaction (see the module).

    Parameters
    ----------
    out_dir : str or os.PathLike
        The results folder (``--out``).
    option : str
        The field that named it, for messages (``out``; the command line shows ``--out``).
    inputs : iterable of paths
        Files the command reads; outputs may not replace them (``None`` entries are skipped). Files
        read through :func:`~deembed.io.inputfile.read_input_bytes` are added automatically.
    replaces : iterable of str
        Every file name (relative to ``out_dir``) of the command's output set: one of them that this run does
        not write is removed at the commit (see the module). Added to those its :func:`claimed` gave.
    """

    def __init__(self, out_dir, *, option: str = "out", inputs=(), replaces=()):
        self.out_dir = os.fspath(out_dir)
        self.option = option
        self._inputs = [os.fspath(p) for p in inputs if p is not None]
        self._replaces = {os.path.normpath(os.fspath(r)) for r in replaces}
        self._lock_fd = None
        self._created: list[str] = []
        self._claim: OutputFolder | None = None
        self.stage = None
        self._active = False

    # ------------------------------------------------------------------ paths
    def path(self, *parts) -> str:
        """Where to write the output ``out_dir/<parts>`` during the run (its folder is created)."""
        p = os.path.join(self.stage, *parts)
        os.makedirs(os.path.dirname(p), exist_ok=True)
        return p

    def final(self, staged_path) -> str:
        """The place in ``out_dir`` of a path written under the staging folder (also after the commit)."""
        rel = os.path.relpath(os.fspath(staged_path), self.stage)
        return os.path.join(self.out_dir, rel)

    def add_inputs(self, paths) -> None:
        """More inputs the command read (e.g. reported back by worker processes)."""
        self._inputs.extend(os.fspath(p) for p in paths if p is not None)

    # ------------------------------------------------------------------ life cycle
    def __enter__(self) -> "OutputFolder":
        claim = _held_claim(self.out_dir)
        if claim is not None:  # the command took the folder when it started: use its lock
            self._claim = claim
            self._replaces |= claim._replaces
        else:
            self._take()
        out = self.out_dir
        try:
            self._remove_stale()
            self.stage = tempfile.mkdtemp(prefix=STAGE_PREFIX, dir=out)
            self._active = True
        except OSError as exc:
            self._release()
            raise OutputWriteError(out, f"cannot write into the results folder ({exc.strerror}): "
                                        f"{_what_to_do(exc)}") from None
        except BaseException:
            self._release()
            raise
        return self

    def _take(self) -> None:
        """Create ``out_dir`` if needed and lock it (a file in the way: :class:`OutputWriteError`)."""
        out = self.out_dir
        in_the_way = _file_in_the_way(out)
        if in_the_way is not None:
            shown = in_the_way if os.path.isabs(out) else os.path.relpath(in_the_way)
            what = "is a file" if os.path.abspath(in_the_way) == os.path.abspath(out) else \
                f"cannot be a folder: {shown} is a file"
            raise OutputWriteError(out, f"{what}, and the results go into a folder; give a folder, or move or "
                                        f"rename the file, or choose another {field_ref(self.option)}")
        try:
            self._make_dirs(out)
        except OSError as exc:
            self._release()
            raise OutputWriteError(exc.filename or out, f"cannot create the results folder ({exc.strerror}): "
                                                        f"{_what_to_do(exc)}") from None
        try:
            self._lock()
        except OSError as exc:
            self._release()
            raise OutputWriteError(out, f"cannot write into the results folder ({exc.strerror}): "
                                        f"{_what_to_do(exc)}") from None
        except BaseException:
            self._release()
            raise

    def __exit__(self, et, ev, tb) -> bool:
        if et is None:
            try:
                self.commit()
            except BaseException:
                self.abort()
                raise
            return False
        self.abort()
        if isinstance(ev, OSError):
            where = ev.filename
            if where and self.stage and os.fspath(where).startswith(self.stage):
                where = self.final(where)
            raise OutputWriteError(where or self.out_dir,
                                   f"could not write the results ({ev.strerror or ev}): {_what_to_do(ev)}; "
                                   f"nothing in {self.out_dir} was changed") from None
        return False

    def abort(self) -> None:
        """Remove the staging folder and the lock; ``out_dir`` keeps what it had."""
        if self._active:
            shutil.rmtree(self.stage, ignore_errors=True)
            self._active = False
        self._release()

    def commit(self) -> list[str]:
        """Move every staged file into ``out_dir`` and remove the earlier set's files this run does not write
        (see the module); returns the final paths."""
        files = self._staged_files()
        inputs = self._inputs + inputs_read()
        plan = []
        for rel in files:
            dest = os.path.join(self.out_dir, rel)
            self._check_destination(rel, dest, inputs)
            plan.append((os.path.join(self.stage, rel), dest, os.path.join(self.stage, _PREVIOUS, rel)))
        written = {os.path.normpath(rel) for rel in files}
        stale = []
        for rel in sorted(self._replaces - written):
            dest = os.path.join(self.out_dir, rel)
            if os.path.isfile(dest) and not os.path.islink(dest) and not any(same_path(dest, i) for i in inputs):
                stale.append((dest, os.path.join(self.stage, _PREVIOUS, rel)))
        done = []
        with signals_held():
            try:
                for dest, aside in stale:  # set aside first: undone like the rest if a move fails
                    os.makedirs(os.path.dirname(aside), exist_ok=True)
                    os.replace(dest, aside)
                    done.append((dest, aside, False))
                for src, dest, aside in plan:
                    parent = os.path.dirname(dest)
                    if not os.path.isdir(parent):
                        self._make_dirs(parent)
                    moved_aside = False
                    if os.path.lexists(dest):
                        os.makedirs(os.path.dirname(aside), exist_ok=True)
                        os.replace(dest, aside)
                        moved_aside = True
                    done.append((dest, aside if moved_aside else None, False))
                    os.replace(src, dest)
                    done[-1] = (dest, done[-1][1], True)
            except OSError as exc:
                for dest, aside, placed in reversed(done):
                    with contextlib.suppress(OSError):
                        if placed:
                            os.unlink(dest)
                        if aside:
                            os.replace(aside, dest)
                raise OutputWriteError(exc.filename or self.out_dir,
                                       f"could not move the results into place ({exc.strerror}): "
                                       f"{_what_to_do(exc)}; {self.out_dir} keeps its earlier files") from None
            shutil.rmtree(self.stage, ignore_errors=True)
            self._active = False
            self._created = []  # they hold the results now
            if self._claim is not None:
                self._claim._created = []
            self._release()
        return [d for _, d, _ in plan]

    # ------------------------------------------------------------------ helpers
    def _staged_files(self) -> list[str]:
        rels = []
        for root, dirs, names in os.walk(self.stage):
            if root == self.stage and _PREVIOUS in dirs:
                dirs.remove(_PREVIOUS)
            dirs.sort()
            for n in sorted(names):
                if n.startswith("."):  # a temporary file of an atomic write: never an output
                    continue
                rels.append(os.path.relpath(os.path.join(root, n), self.stage))
        return rels

    def _check_destination(self, rel: str, dest: str, inputs) -> None:
        # a file standing where a folder of the output is needed
        walk = self.out_dir
        for part in rel.split(os.sep)[:-1]:
            walk = os.path.join(walk, part)
            if os.path.lexists(walk) and not os.path.isdir(walk):
                raise OutputWriteError(walk, "a file stands where a results folder goes; move or rename it, or "
                                             f"choose another {field_ref(self.option)}")
        if os.path.isdir(dest):
            raise OutputWriteError(dest, "a folder stands where an output file goes; move or rename it, or "
                                         f"choose another {field_ref(self.option)}")
        for inp in inputs:
            if same_path(dest, inp):
                raise OptionError(self.option, f"the output {dest} would replace the input file {inp}; choose "
                                               f"another {field_ref(self.option)} folder (or rename the input) so the input "
                                               "is kept")

    def _make_dirs(self, path: str) -> None:
        missing = []
        p = os.path.abspath(path)
        while not os.path.lexists(p):
            missing.append(p)
            parent = os.path.dirname(p)
            if parent == p:
                break
            p = parent
        os.makedirs(path, exist_ok=True)
        self._created.extend(reversed(missing))

    def _lock(self) -> None:
        try:
            import fcntl
        except ModuleNotFoundError:  # pragma: no cover - not a POSIX system: no lock
            return
        path = os.path.join(self.out_dir, LOCK_NAME)
        while True:
            fd = os.open(path, os.O_RDWR | os.O_CREAT, 0o644)
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except BlockingIOError:
                try:
                    holder = os.read(fd, 64).decode("ascii", "replace").strip() or "unknown"
                finally:
                    os.close(fd)
                raise OutputWriteError(self.out_dir, f"another deembed run (process {holder}) holds this folder "
                                                     "for its results; wait for it to finish, or choose another "
                                                     f"{field_ref(self.option)}") from None
            try:
                same = os.path.samestat(os.fstat(fd), os.stat(path))
            except FileNotFoundError:
                same = False
            if same:
                break
            os.close(fd)  # the file was removed by the run that held it: lock the new one
        os.ftruncate(fd, 0)
        os.write(fd, f"{os.getpid()}\n".encode())
        self._lock_fd = fd

    def _release(self) -> None:
        if self._claim is not None:  # the lock and the folders it created are the claim's to release
            self._claim = None
            return
        if self._lock_fd is not None:
            with contextlib.suppress(OSError):
                os.unlink(os.path.join(self.out_dir, LOCK_NAME))
            with contextlib.suppress(OSError):
                os.close(self._lock_fd)
            self._lock_fd = None
        for d in reversed(self._created):  # folders this run created, if they stayed empty
            with contextlib.suppress(OSError):
                os.rmdir(d)
        self._created = []

    def _remove_stale(self) -> None:
        for name in os.listdir(self.out_dir):
            if name.startswith(STAGE_PREFIX):
                shutil.rmtree(os.path.join(self.out_dir, name), ignore_errors=True)



# ---------------------------------------------------------------------------------------- claims

_CLAIMS: dict = {}
"""Folders this process holds from a command's start (:func:`claimed`): (process id, real path) -> the
:class:`OutputFolder` that holds the lock. The process id keeps a forked worker from taking its parent's."""


def _key(out_dir) -> tuple:
    return os.getpid(), os.path.realpath(os.fspath(out_dir))


def _held_claim(out_dir):
    return _CLAIMS.get(_key(out_dir))


def _file_in_the_way(path: str):
    """The first file (not a folder) on the way to ``path``, ``path`` itself included; None if there is none."""
    p = os.path.abspath(path)
    walk = []
    while True:
        walk.append(p)
        parent = os.path.dirname(p)
        if parent == p:
            break
        p = parent
    for q in reversed(walk):
        if not os.path.lexists(q):
            return None
        if not os.path.isdir(q):
            return q
    return None


@contextlib.contextmanager
def claimed(out_dir, *, option: str = "out", replaces=()):
    """Hold the results folder ``out_dir`` for the whole command: created if needed and locked at once, so a
    second run into it is refused when it starts (not when it comes to write), and kept until the block ends.
    Every :class:`OutputFolder` of ``out_dir`` inside the block uses this lock (and adds ``replaces`` to its
    own). A folder the claim created and nothing was written into is removed again at the end. ``out_dir``
    None (a command without ``--out``): nothing is held. Yields the holding :class:`OutputFolder` (or None).

    Raises
    ------
    OutputWriteError
        ``out_dir`` in use by another run, a file in the way, or a folder that cannot be created.
    """
    if out_dir is None:
        yield None
        return
    holder = OutputFolder(out_dir, option=option, replaces=replaces)
    if _held_claim(out_dir) is not None:  # already held by this command: nothing more to do
        yield _held_claim(out_dir)
        return
    holder._take()
    key = _key(out_dir)
    _CLAIMS[key] = holder
    try:
        yield holder
    finally:
        _CLAIMS.pop(key, None)
        holder._release()
