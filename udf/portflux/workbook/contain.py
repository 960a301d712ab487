"""Run one evaluation in a child process with bounded memory, CPU time and wall-clock time.

On POSIX systems :func:`run_contained` forks a child, lowers its address-space limit
(``RLIMIT_AS``: what the parent already maps plus :data:`DEFAULT_LIMITS` ``memory_bytes``) and its
CPU-time limit (``RLIMIT_CPU``), runs the function there and sends its result back through a pipe
as JSON (plain data only: the parent never unpickles what a child that read a hostile file
sends). The parent waits at most ``wall_seconds`` and kills the child after that. A child
that runs out of memory, exceeds its CPU time, dies or is killed becomes a :class:`RecalcError`
naming the workbook; a Python traceback never reaches the user.

The child leads a process group of its own, and whatever it starts (LibreOffice, for
``recalc --engine libreoffice``) stays in that group. However the parent leaves -- a result, a
refusal, the wall-clock limit, SIGTERM or Ctrl-C (raised as exceptions in the parent, see
:func:`portflux.workbook.output.signals_raise`) -- it kills the whole group before it returns,
so no computing child outlives the command. A parent killed outright (SIGKILL) cannot do that:
the child then sees its lifeline pipe close and kills its own group.

Where ``os.fork`` or :mod:`resource` is missing (Windows), the function runs in the calling
process without these limits; :data:`CONTAINED` says which, and ``portflux recalc`` states it.
The formula interpreter itself never runs workbook content as code either way; the limits bound
what a well-formed but enormous workbook can cost.
"""

from __future__ import annotations

import gc
import json
import os
import select
import signal
import sys
import time

from .output import signals_held
from .xlvalues import RecalcError
from ..core.errors import PortfluxError

try:
    import resource
except ImportError:       # Windows
    resource = None

__all__ = ["CONTAINED", "DEFAULT_LIMITS", "run_contained"]

#: True where evaluations run in a limited child process (POSIX with fork and resource).
CONTAINED = resource is not None and hasattr(os, "fork")

#: Default bounds of one contained evaluation.
DEFAULT_LIMITS = {
    "memory_bytes": 4 * 2**30,     # address space beyond what the parent already maps
    "cpu_seconds": 600,            # CPU time of the child
    "wall_seconds": 900.0,         # elapsed time before the child is killed
}


def _mapped_bytes() -> int:
    try:
        with open("/proc/self/statm") as fh:
            return int(fh.read().split()[0]) * os.sysconf("SC_PAGE_SIZE")
    except (OSError, ValueError, IndexError, AttributeError):
        return 0


def _kill_group(pid: int) -> None:
    for kill in (os.killpg, os.kill):
        try:
            kill(pid, signal.SIGKILL)
            return
        except ProcessLookupError:
            return
        except OSError:
            continue


def _limit(kind, value):
    soft, hard = resource.getrlimit(kind)
    if hard != resource.RLIM_INFINITY:
        value = min(value, hard)
    resource.setrlimit(kind, (value, hard))


def _watch_lifeline(fd):
    """In the child: when the parent's end of the lifeline closes (the parent died), kill this
    process group (the child and what it started)."""
    import threading

    def watch():
        try:
            while os.read(fd, 1):
                pass
        except OSError:
            pass
        os.killpg(0, signal.SIGKILL)
    threading.Thread(target=watch, daemon=True, name="portflux-lifeline").start()


def _child(fn, write_fd, limits, lifeline):
    status = 0
    try:
        os.setpgid(0, 0)
    except OSError:
        pass
    signal.signal(signal.SIGTERM, signal.SIG_DFL)
    signal.signal(signal.SIGINT, signal.SIG_IGN)       # the parent decides, and kills the group
    if hasattr(signal, "pthread_sigmask"):             # held by the parent around the fork
        signal.pthread_sigmask(signal.SIG_UNBLOCK, (signal.SIGTERM, signal.SIGINT))
    _watch_lifeline(lifeline)
    # The child lives for one evaluation and its memory is capped: the cyclic collector would
    # only traverse the (large, mostly acyclic) formula structures again and again.
    gc.disable()
    try:
        _limit(resource.RLIMIT_AS, _mapped_bytes() + int(limits["memory_bytes"]))
        used = resource.getrusage(resource.RUSAGE_SELF)
        _limit(resource.RLIMIT_CPU, int(used.ru_utime + used.ru_stime) +
               int(limits["cpu_seconds"]))
        try:
            payload = ("ok", fn())
        except (RecalcError, PortfluxError) as exc:
            payload = ("refused", str(exc))
        except MemoryError:
            payload = ("memory", None)
        except OSError as exc:         # raised again in the parent, as the caller expects
            payload = ("os", [exc.errno, exc.strerror if exc.errno else str(exc)])
        except RecursionError:
            payload = ("recursion", None)
        except BaseException as exc:  # noqa: BLE001 - reported to the parent, never shown raw
            payload = ("fault", f"{type(exc).__name__}: {exc}")
        try:
            data = json.dumps(payload, allow_nan=False).encode()
        except MemoryError:
            data = json.dumps(["memory", None]).encode()
        except (TypeError, ValueError) as exc:
            data = json.dumps(["fault", f"result is not plain data ({exc})"]).encode()
        view = memoryview(data)
        while view:
            n = os.write(write_fd, view)
            view = view[n:]
    except BaseException:  # noqa: BLE001
        status = 1
    finally:
        os._exit(status)


def _close(fds: set, *which) -> None:
    """Close the pipe ends ``which`` still in ``fds`` (each exactly once)."""
    for fd in which:
        if fd in fds:
            fds.discard(fd)
            os.close(fd)


def run_contained(fn, what: str, **limits):
    """``fn()`` evaluated in a limited child process; its result (plain JSON data: dicts with
    text keys, lists, text, numbers, logicals, None; tuples come back as lists).

    ``what`` names the workbook in messages. Keyword overrides of :data:`DEFAULT_LIMITS`.

    >>> run_contained(lambda: 6 * 7, "a test")
    42
    """
    unknown = set(limits) - set(DEFAULT_LIMITS)
    if unknown:
        raise TypeError(f"unknown limit(s): {', '.join(sorted(unknown))}")
    lim = {**DEFAULT_LIMITS, **limits}
    if not CONTAINED:
        return fn()
    sys.stdout.flush()
    sys.stderr.flush()
    read_fd, write_fd = os.pipe()
    life_r, life_w = os.pipe()
    fds = {read_fd, write_fd, life_r, life_w}       # the parent's open ends
    chunks = []
    deadline = time.monotonic() + float(lim["wall_seconds"])
    timed_out = False
    status = None
    pid = None
    # The fork is inside the ``try`` whose ``finally`` kills the child: a SIGTERM raised at any
    # moment after the fork (Python runs the handler in the main thread even while this thread
    # holds the signal, when another thread -- a BLAS pool -- took it) never leaves a child
    # running and writing the output's temporary file after the caller removed it.
    try:
        with signals_held():
            pid = os.fork()
            if pid == 0:                               # child (its mask is restored there)
                os.close(read_fd)
                os.close(life_w)
                _child(fn, write_fd, lim, life_r)
            _close(fds, write_fd, life_r)              # the child's ends
            try:
                os.setpgid(pid, pid)                   # also done by the child: no race
            except OSError:
                pass
        while True:
            left = deadline - time.monotonic()
            if left <= 0:
                timed_out = True
                break
            ready, _, _ = select.select([read_fd], [], [], min(left, 1.0))
            if not ready:
                continue
            chunk = os.read(read_fd, 1 << 20)
            if not chunk:
                break
            chunks.append(chunk)
    finally:
        # whatever ends the wait (a result, the wall-clock limit, SIGTERM raised as an
        # exception, Ctrl-C): the child's group goes first (the zombie keeps its id), then
        # the child is reaped
        if pid == 0:                                   # the child never returns from here
            os._exit(1)
        with signals_held():
            if pid is not None:
                _kill_group(pid)
                _, status = os.waitpid(pid, 0)
            _close(fds, *list(fds))
    if timed_out:
        raise RecalcError(f"{what}: the recalculation took longer than "
                          f"{lim['wall_seconds']:g} s and was stopped")
    if not chunks:
        sig = os.WTERMSIG(status) if os.WIFSIGNALED(status) else None
        why = ("it exceeded its CPU time limit" if sig == signal.SIGXCPU else
               f"it was ended by signal {sig}" if sig else "it ended without a result")
        raise RecalcError(f"{what}: the recalculation stopped: {why} (limits: "
                          f"{lim['memory_bytes'] / 2**30:g} GiB memory, {lim['cpu_seconds']} s "
                          f"CPU)")
    try:
        kind, value = json.loads(b"".join(chunks))
    except (ValueError, TypeError):
        raise RecalcError(f"{what}: the recalculation sent an unreadable result") from None
    if kind == "ok":
        return value
    if kind == "refused":
        raise RecalcError(value)
    if kind == "os":
        raise OSError(*value) if value[0] is not None else OSError(value[1])
    if kind == "memory":
        raise RecalcError(f"{what}: the recalculation needs more than the memory limit of "
                          f"{lim['memory_bytes'] / 2**30:g} GiB; refusing the workbook")
    if kind == "recursion":
        raise RecalcError(f"{what}: the recalculation nests too deeply; refusing the workbook")
    raise RecalcError(f"{what}: internal error during the recalculation ({value})")
