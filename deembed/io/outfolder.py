"""A command's outputs as one transaction: all of them appear in ``--out``, or none does.

::

    with OutputFolder("results", inputs=[sweep_path]) as out:
        write_png(out.path("a.swr.png"))       # written into a hidden staging folder inside results/
        write_json(out.path("a.summary.json"))
    # here, and only here, every file is moved into results/

How it works:

* ``--out`` is created if needed and locked (``.deembed-lock`` inside it, an ``flock`` that the kernel
  drops when the process ends, however it ends). A second run into the same folder while the first
  holds it is refused at once, with the first run's process id. The lock file is removed at the end;
  one left by a killed run is not held by anyone and is simply taken over.
* Outputs are written into ``--out/.deembed-stage-XXXX/``. Staging folders left by killed runs are
  removed by the next run that takes the lock.
* On success, before anything in ``--out`` is touched, every final path is checked: none may be an
  input of the command (the files given, and every file read through
  :func:`deembed.io.inputfile.read_input_bytes`), and no folder may stand where a file goes (or a
  file where a folder goes). Then, with SIGINT, SIGTERM and SIGHUP held back, each file is moved into
  place; a file it replaces is first moved aside, and if a move fails the ones done are undone. So
  ``--out`` holds either what it held before or the complete new set.
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
    """

    def __init__(self, out_dir, *, option: str = "out", inputs=()):
        self.out_dir = os.fspath(out_dir)
        self.option = option
        self._inputs = [os.fspath(p) for p in inputs if p is not None]
        self._lock_fd = None
        self._created: list[str] = []
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
        out = self.out_dir
        if os.path.lexists(out) and not os.path.isdir(out):
            raise OptionError(self.option, f"{out} is a file; give a folder for the results")
        try:
            self._make_dirs(out)
        except OSError as exc:
            raise OutputWriteError(exc.filename or out, f"cannot create the results folder ({exc.strerror}): "
                                                        f"{_what_to_do(exc)}") from None
        try:
            self._lock()
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
        """Move every staged file into ``out_dir`` (see the module); returns the final paths."""
        from .inputfile import inputs_read

        files = self._staged_files()
        inputs = self._inputs + inputs_read()
        plan = []
        for rel in files:
            dest = os.path.join(self.out_dir, rel)
            self._check_destination(rel, dest, inputs)
            plan.append((os.path.join(self.stage, rel), dest, os.path.join(self.stage, _PREVIOUS, rel)))
        done = []
        with signals_held():
            try:
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
                raise OutputWriteError(self.out_dir, f"another deembed run (process {holder}) is writing into "
                                                     "this folder; wait for it to finish, or choose another "
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

