"""LibreOffice's ``soffice`` for the report, the add-in and the bench: where it is, and how
portflux runs it (one place for every caller).

portflux never lets LibreOffice near the network or other files. The package reader refuses a
workbook that links outside itself and LibreOffice only opens a rebuilt copy
(:mod:`portflux.workbook.rebuild`); as defence in depth every LibreOffice process runs

* with a **private profile** (:func:`private_profile`) whose settings block links from
  documents (``BlockUntrustedRefererLinks``: no linked picture or file is fetched), never update
  links, disable OLE/DDE active content and macros, and do not load a workbook's VBA;
* **without network** where the platform allows (:func:`isolation`): in a network namespace of
  its own (``unshare -n``, Linux, as root or with ``CAP_SYS_ADMIN``; for a converter without a
  UNO pipe, ``unshare -rn`` also works in an unprivileged user namespace). Elsewhere the two
  layers above stand alone, and :func:`isolation` says why;
* with **bounded memory and CPU time** where :mod:`resource` exists (:func:`bounded`).

>>> soffice_path() is None or soffice_path().endswith(("soffice", "soffice.exe", "libreoffice"))
True
"""

from __future__ import annotations

import functools
import glob
import os
import shutil
import subprocess

__all__ = ["LIMITS", "PROFILE_SETTINGS", "bounded", "isolation", "isolated", "private_profile",
           "soffice_path"]

#: Settings written into every private profile (registry path, property, value). Each names
#: a LibreOffice configuration property (officecfg, LibreOffice 25.2 ``main.xcd``).
PROFILE_SETTINGS = (
    ("/org.openoffice.Office.Common/Security/Scripting", "BlockUntrustedRefererLinks", "true"),
    ("/org.openoffice.Office.Common/Security/Scripting", "MacroSecurityLevel", "3"),
    ("/org.openoffice.Office.Common/Security/Scripting", "DisableMacrosExecution", "true"),
    ("/org.openoffice.Office.Calc/Content/Update", "Link", "1"),            # 1 = never
    ("/org.openoffice.Office.Calc/Filter/Import/VBA", "Load", "false"),
    ("/org.openoffice.Office.Calc/Filter/Import/VBA", "Executable", "false"),
)

#: Bounds of every LibreOffice process (address space, CPU seconds).
LIMITS = {"memory_bytes": 4 * 2**30, "cpu_seconds": 900}


def soffice_path():
    """The ``soffice`` executable, or None."""
    for name in ("soffice", "libreoffice"):
        p = shutil.which(name)
        if p:
            return os.path.realpath(p)
    for p in ("/usr/lib/libreoffice/program/soffice", "/opt/libreoffice/program/soffice",
              *sorted(glob.glob("/opt/libreoffice*/program/soffice"), reverse=True),
              "/Applications/LibreOffice.app/Contents/MacOS/soffice",
              r"C:\Program Files\LibreOffice\program\soffice.exe"):
        if os.path.isfile(p):
            return p
    return None


def private_profile(folder) -> str:
    """Create a LibreOffice user profile in ``folder`` holding :data:`PROFILE_SETTINGS`;
    return its URL for ``-env:UserInstallation=``.

    >>> import tempfile
    >>> private_profile(tempfile.mkdtemp()).startswith("file://")
    True
    """
    from pathlib import Path

    folder = os.path.abspath(os.fspath(folder))
    user = os.path.join(folder, "user")
    os.makedirs(user, exist_ok=True)
    items = "".join(f'<item oor:path="{path}"><prop oor:name="{name}" oor:op="fuse"><value>'
                    f"{value}</value></prop></item>\n" for path, name, value in PROFILE_SETTINGS)
    text = ('<?xml version="1.0" encoding="UTF-8"?>\n<oor:items xmlns:oor="http://openoffice.'
            'org/2001/registry" xmlns:xs="http://www.w3.org/2001/XMLSchema" xmlns:xsi="http://'
            f'www.w3.org/2001/XMLSchema-instance">\n{items}</oor:items>\n')
    Path(user, "registrymodifications.xcu").write_text(text, encoding="utf-8")
    return Path(folder).as_uri()


@functools.lru_cache(maxsize=None)
def _probe(prefix: tuple) -> bool:
    try:
        return subprocess.run([*prefix, "true"], stdin=subprocess.DEVNULL,
                              stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                              timeout=20).returncode == 0
    except (OSError, subprocess.SubprocessError):
        return False


def isolation(*, pipe: bool = True) -> tuple[list, str]:
    """``(command prefix, description)`` that runs a program without network access here, or
    ``([], why not)``. ``pipe``: the program talks to portflux over a UNO pipe (then a user
    namespace, which renames the user, cannot be used: the pipe's name holds the user id)."""
    unshare = shutil.which("unshare")
    if unshare is None or not os.path.exists("/proc/self/ns/net"):
        return [], "no network isolation on this platform (no 'unshare')"
    if _probe((unshare, "-n", "--")):
        return [unshare, "-n", "--"], "in a network namespace of its own (no network)"
    if not pipe and _probe((unshare, "-rn", "--")):
        return [unshare, "-rn", "--"], "in a user and network namespace of its own (no network)"
    return [], ("network isolation is not permitted here (unshare -n needs root or "
                "CAP_SYS_ADMIN); LibreOffice relies on its profile's link blocking")


def isolated(args, *, pipe: bool = True) -> list:
    """``args`` prefixed to run without network where :func:`isolation` can."""
    prefix, _ = isolation(pipe=pipe)
    return [*prefix, *args]


def bounded():
    """A ``preexec_fn`` for :class:`subprocess.Popen` that applies :data:`LIMITS` (POSIX), or
    None where :mod:`resource` is missing."""
    try:
        import resource
    except ImportError:
        return None

    def apply():
        for kind, value in ((resource.RLIMIT_AS, LIMITS["memory_bytes"]),
                            (resource.RLIMIT_CPU, LIMITS["cpu_seconds"])):
            soft, hard = resource.getrlimit(kind)
            if hard != resource.RLIM_INFINITY:
                value = min(value, hard)
            resource.setrlimit(kind, (value, hard))
    return apply
