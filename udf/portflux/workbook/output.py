"""Writing output files: atomically, with the user's permissions, and nothing left behind.

Every file portflux writes for a user (a recalculated workbook, the template, the demo's result)
goes through :func:`write_atomic` or :func:`atomic_path`:

- the data go to a temporary file in the target's own folder (same file system), are flushed to
  disk, and the temporary file is renamed over the target in one step (:func:`os.replace`), so a
  reader sees the old file or the new one, never half of one;
- the new file gets the permissions an ordinary ``open(path, "w")`` would give: ``0o666`` less the
  process's umask for a new file, the old file's permission bits when one is replaced (a
  temporary file from :func:`tempfile.mkstemp` alone would be ``0o600``);
- on any failure, including ``KeyboardInterrupt`` and the :class:`Terminated` exception that
  :func:`signals_raise` makes of SIGTERM, the temporary file is removed and the target is
  untouched;
- a full disk or quota (``ENOSPC``, ``EDQUOT``) becomes one plain :class:`OutputError` naming the
  file, instead of an ``OSError`` traceback.

The interface is small on purpose, so that every writer can use it::

    write_atomic(path, lambda f: f.write(data))          # writer gets a binary file object
    with atomic_path(path) as tmp:                         # writer needs a path of its own
        workbook.save(tmp)

>>> import os, pathlib, tempfile
>>> d = tempfile.mkdtemp()
>>> p = write_atomic(os.path.join(d, "a.txt"), lambda f: f.write(b"hello"))
>>> pathlib.Path(p).read_bytes(), os.listdir(d)
(b'hello', ['a.txt'])
"""

from __future__ import annotations

import contextlib
import errno
import os
import signal
import stat
import tempfile
import threading
from typing import Callable, Iterator

from ..core import PortfluxError

try:
    _EDQUOT = errno.EDQUOT           # not defined on every platform (Windows)
except AttributeError:
    _EDQUOT = None

#: errno values that mean "the disk (or the user's quota) is full".
DISK_FULL = frozenset(e for e in (errno.ENOSPC, _EDQUOT) if e is not None)
#: errno values of a write refused by the disk or by a limit: the message names the file.
WRITE_REFUSED = DISK_FULL | {errno.EFBIG}

_HANDLED = (signal.SIGTERM, signal.SIGINT)    # both exist on every platform Python runs on
_umask_lock = threading.Lock()


class OutputError(PortfluxError):
    """An output file that could not be written; the message names the file and what to do."""


class Terminated(BaseException):
    """Raised in the main thread when SIGTERM arrives while :func:`signals_raise` is active.

    A ``BaseException`` like ``KeyboardInterrupt``: ``except Exception`` does not swallow it, and
    every ``finally`` on the way out runs (so temporary files are removed).
    """

    def __init__(self, signum: int = signal.SIGTERM):
        super().__init__(signum)
        self.signum = signum


def current_umask() -> int:
    """The process's umask (read by setting and restoring it, under a lock).

    >>> 0 <= current_umask() <= 0o777
    True
    """
    with _umask_lock:
        mask = os.umask(0o022)
        os.umask(mask)
    return mask


def explain(exc: OSError, path) -> str:
    """One plain sentence for an ``OSError`` met while writing ``path``.

    >>> explain(OSError(errno.ENOSPC, "No space left on device"), "out.xlsx")
    'out.xlsx: the disk is full (no space left on device); nothing was written. Free some space or choose another folder.'
    """
    path = os.fspath(path)
    if exc.errno in DISK_FULL:
        what = "the disk quota is exceeded" if exc.errno == _EDQUOT \
            else "the disk is full (no space left on device)"
        return f"{path}: {what}; nothing was written. Free some space or choose another folder."
    if exc.errno == errno.EFBIG:
        return (f"{path}: the file would be larger than this process may write (the file-size "
                f"limit, 'ulimit -f'); nothing was written. Raise the limit or write less.")
    if exc.errno in (errno.EACCES, errno.EPERM, errno.EROFS):
        return f"{path}: cannot write here ({exc.strerror or exc}); choose another folder."
    return f"{path}: cannot write ({exc.strerror or exc})."


def same_file(a, b) -> bool:
    """True when two paths name one file (the same path, a link to it, or a hard link).

    >>> same_file(".", "./")
    True
    """
    a, b = os.fspath(a), os.fspath(b)
    if os.path.realpath(a) == os.path.realpath(b):
        return True
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False


def _temp_name(path: str) -> tuple[str, str, str]:
    folder = os.path.dirname(os.path.abspath(path))
    base = os.path.basename(path)
    stem, ext = os.path.splitext(base)
    # The extension stays last: writers that check it (recalc_file, build_template) accept the name.
    return folder, f".{stem}.", f".part{ext}"


def _mode_for(path: str) -> int:
    try:
        st = os.stat(path)
        if stat.S_ISREG(st.st_mode):
            return stat.S_IMODE(st.st_mode)
    except OSError:
        pass
    return 0o666 & ~current_umask()


@contextlib.contextmanager
def signals_held():
    """Hold SIGTERM/SIGINT back for a few statements (delivered on exit), where supported."""
    if not (hasattr(signal, "pthread_sigmask") and threading.current_thread()
            is threading.main_thread()):
        yield
        return
    old = signal.pthread_sigmask(signal.SIG_BLOCK, _HANDLED)
    try:
        yield
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, old)


def _remove(path: str | None) -> None:
    if path:
        with contextlib.suppress(FileNotFoundError):
            os.unlink(path)


@contextlib.contextmanager
def atomic_path(path, *, overwrite: bool = True) -> Iterator[str]:
    """Yield a temporary path beside ``path``; on a clean exit move it into place.

    The caller writes the temporary file by its own means (it has the same extension as
    ``path``). On a clean exit the file is flushed to disk, given the permissions described in the
    module notes and renamed to ``path``; with ``overwrite=False`` an existing ``path`` is refused
    (:class:`OutputError`), checked at the moment of the rename (a hard link where the file system
    supports it, so no race). On any exception the temporary file is removed.

    Parameters
    ----------
    path : str or os.PathLike
        The file to write. Its folder must exist.
    overwrite : bool
        Replace an existing file (default) or refuse to.
    """
    path = os.fspath(path)
    folder, prefix, suffix = _temp_name(path)
    if not os.path.isdir(folder):
        raise OutputError(f"{path}: folder {folder} does not exist; create it or choose "
                          f"another output path")
    if not overwrite and os.path.lexists(path):
        raise OutputError(_exists(path))
    owned: list = []                 # the temporary file's name, once it is ours
    try:
        _create_temp(folder, prefix, suffix, path, owned)
        yield owned[0]
        _finish(owned[0], path, overwrite)
        owned.clear()
    except OSError as e:
        ours = e.filename is not None and os.fspath(e.filename) in (*owned, path)
        if e.errno in WRITE_REFUSED or ours:
            raise OutputError(explain(e, path)) from None
        raise                        # e.g. the writer could not read its input: not ours
    finally:
        for name in owned:
            _remove(name)


#: A new file, never an existing one (O_BINARY exists, and matters, on Windows only).
_CREATE_NEW = os.O_WRONLY | os.O_CREAT | os.O_EXCL | (os.O_BINARY if os.name == "nt" else 0)


def _create_temp(folder: str, prefix: str, suffix: str, shown: str, owned: list) -> None:
    """Create an empty, private temporary file beside the target; its name is in ``owned``.

    The name is put in ``owned`` *before* the file is created, so a signal raised at any
    moment leaves either no file or a file the caller's ``finally`` removes
    (``tempfile.mkstemp`` creates the file before it returns the name, and holding signals
    with ``pthread_sigmask`` does not help when another thread -- a BLAS pool -- takes the
    process's SIGTERM: Python then runs the handler in the main thread anyway)."""
    for _ in range(100):
        owned[:] = [os.path.join(folder, prefix + os.urandom(6).hex() + suffix)]
        try:
            fd = os.open(owned[0], _CREATE_NEW, 0o600)
        except FileExistsError:      # someone else's file: not ours to remove
            owned.clear()
            continue
        except OSError as e:         # name the user's file, not the temporary name tried
            owned.clear()
            raise OutputError(explain(e, shown)) from None
        os.close(fd)
        return
    raise OutputError(f"{shown}: no free temporary file name in {folder}")


def _exists(path: str) -> str:
    return f"{path}: the file exists; use --force to replace it, or choose another name"


def _finish(tmp: str, path: str, overwrite: bool) -> None:
    fd = os.open(tmp, os.O_RDONLY)
    try:
        os.fsync(fd)
    finally:
        os.close(fd)
    os.chmod(tmp, _mode_for(path) if overwrite else 0o666 & ~current_umask())
    if overwrite:
        os.replace(tmp, path)
        return
    try:
        os.link(tmp, path)           # fails if path exists: no check-then-write race
    except FileExistsError:
        raise OutputError(_exists(path)) from None
    except OSError:                  # a file system without hard links
        if os.path.lexists(path):
            raise OutputError(_exists(path)) from None
        os.replace(tmp, path)
        return
    _remove(tmp)


def fill(tmp, writer: Callable[[object], object], shown) -> None:
    """Write the temporary file ``tmp`` of an :func:`atomic_path` block through ``writer(f)``
    (a binary file object), from wherever the data are made (a contained child process: the
    parent keeps the file's name and removes it on any failure). A refused write becomes an
    :class:`OutputError` naming ``shown``, the user's file."""
    try:
        with open(tmp, "wb") as f:
            writer(f)
            f.flush()
    except OSError as e:
        if e.errno in WRITE_REFUSED:
            raise OutputError(explain(e, shown)) from None
        raise


def write_atomic(path, writer: Callable[[object], object], *, overwrite: bool = True) -> str:
    """Write ``path`` atomically: ``writer(f)`` fills a binary file object ``f``.

    Returns ``path`` as a string. Raises :class:`OutputError` for a missing folder, a full disk
    or (with ``overwrite=False``) an existing file; other ``OSError`` pass through. Nothing is
    left behind on any failure. See :func:`atomic_path` and the module notes.

    >>> import os, tempfile
    >>> d = tempfile.mkdtemp()
    >>> p = write_atomic(os.path.join(d, "b.bin"), lambda f: f.write(b"1"))
    >>> write_atomic(p, lambda f: f.write(b"2"), overwrite=False)
    Traceback (most recent call last):
    ...
    portflux.workbook.output.OutputError: ...b.bin: the file exists; use --force to replace it, or choose another name
    """
    with atomic_path(path, overwrite=overwrite) as tmp:
        with open(tmp, "wb") as f:
            writer(f)
            f.flush()
    return os.fspath(path)


@contextlib.contextmanager
def signals_raise() -> Iterator[None]:
    """Within the block, SIGTERM raises :class:`Terminated` and SIGINT ``KeyboardInterrupt``.

    Python's default SIGTERM ends the process at once, skipping ``finally`` blocks, so a
    temporary file being written would stay behind. The previous handlers are restored on exit.
    Only the main thread can install handlers; elsewhere this does nothing.
    """
    if threading.current_thread() is not threading.main_thread():
        yield
        return

    def on_term(signum, frame):
        raise Terminated(signum)

    old = {}
    for s in _HANDLED:
        old[s] = signal.getsignal(s)
    try:
        if hasattr(signal, "SIGTERM"):
            signal.signal(signal.SIGTERM, on_term)
        signal.signal(signal.SIGINT, signal.default_int_handler)
        yield
    finally:
        for s, h in old.items():
            if h is not None:
                signal.signal(s, h)
