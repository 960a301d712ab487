"""``portflux libreoffice build | install | uninstall``.

``install`` builds the add-in with the site-packages folders of the Python running it recorded
in the package (so LibreOffice's Python imports *this* portflux and numpy), installs it with
LibreOffice's ``unopkg`` (for every user with ``--shared``, which ``unopkg`` requires when run
as root), then checks it in a private headless LibreOffice: ``=PFX_ABOUT()`` must show
portflux's version, else the message the cell shows is printed and the command fails.
LibreOffice's Python must be the same Python version as the one running the command (on Debian
both are the system python3: make the virtual environment with ``/usr/bin/python3 -m venv``).
"""

from __future__ import annotations

import os
import subprocess
import sys
import tempfile

from .registry import EXTENSION_ID, OXT_NAME


def _unopkg():
    from .office import OfficeError, soffice_path, unavailable_reason

    s = soffice_path()
    if s is None:
        raise OfficeError(unavailable_reason())
    for name in ("unopkg", "unopkg.exe", "unopkg.com"):
        p = os.path.join(os.path.dirname(s), name)
        if os.path.isfile(p):
            return p
    raise OfficeError(f"unopkg not found beside {s}")


def _run_unopkg(args, timeout=300):
    from .office import OfficeError, clean_env

    try:
        r = subprocess.run([_unopkg(), *args], stdin=subprocess.DEVNULL, capture_output=True,
                           text=True, timeout=timeout, env=clean_env())
    except subprocess.TimeoutExpired:
        raise OfficeError(f"unopkg {args[0]} did not finish within {timeout} s; is LibreOffice "
                          f"running? close it and try again") from None
    text = "\n".join(x for x in (r.stdout.strip(), r.stderr.strip()) if x)
    if r.returncode != 0:
        raise OfficeError(f"unopkg {' '.join(args[:1])} failed ({r.returncode}): {text}")
    return text


def _shared(shared):
    """unopkg refuses to run as root without --shared (the extension is then for all users)."""
    is_root = hasattr(os, "geteuid") and os.geteuid() == 0
    return bool(shared or is_root)


def verify(oxt_path, timeout=120.0) -> str:
    """Compute ``=PFX_ABOUT()`` in a private headless LibreOffice with this package; return
    the text of its version cell (the portflux version, or the message the cell shows)."""
    from .office import HeadlessOffice

    with HeadlessOffice(oxt_path, timeout=timeout) as office:
        doc = office.new_sheet()
        try:
            sheet = doc.Sheets.getByIndex(0)
            sheet.getCellRangeByName("A1:B2").setArrayFormula("=PFX_ABOUT()")
            doc.calculateAll()
            first = sheet.getCellRangeByName("A1").getString()
            return sheet.getCellRangeByName("B2").getString() if first == "item" else first
        finally:
            doc.close(True)


def cmd_build(args) -> int:
    from .package import build_oxt, site_dirs_of_this_python

    out = args.output or OXT_NAME
    dirs = site_dirs_of_this_python() if args.record_site else None
    build_oxt(out, dirs)
    print(f"add-in written: {out}" + (" (finds portflux in: " + ", ".join(dirs) + ")"
                                      if dirs else " (needs portflux in LibreOffice's Python)"))
    return 0


def cmd_install(args) -> int:
    from ... import __version__
    from .office import OfficeError, unavailable_reason
    from .package import build_oxt, site_dirs_of_this_python

    reason = unavailable_reason()
    if reason:
        raise OfficeError(reason)
    with tempfile.TemporaryDirectory(prefix="portflux-oxt-") as tmp:
        oxt = build_oxt(os.path.join(tmp, OXT_NAME), site_dirs_of_this_python())
        shown = verify(oxt)
        if shown != __version__:
            print(f"portflux: the add-in does not work in LibreOffice; a cell shows: {shown}",
                  file=sys.stderr)
            return 1
        shared = _shared(args.shared)
        _run_unopkg(["add", "--force", *(["--shared"] if shared else []), oxt])
    print(f"portflux {__version__} add-in installed in LibreOffice "
          f"({'all users' if shared else 'this user'}); it imports portflux from "
          f"{sys.prefix}. Restart LibreOffice, then type =PFX_ABOUT() in a cell.")
    return 0


def cmd_uninstall(args) -> int:
    shared = _shared(args.shared)
    _run_unopkg(["remove", *(["--shared"] if shared else []), EXTENSION_ID])
    print(f"portflux add-in removed from LibreOffice ({'all users' if shared else 'this user'})")
    return 0


def add_parser(sub) -> None:
    """Add ``libreoffice build|install|uninstall`` to the command line's subparsers."""
    lo = sub.add_parser("libreoffice", help="build, install or remove the LibreOffice Calc add-in")
    s = lo.add_subparsers(dest="lo_command", required=True)
    b = s.add_parser("build", help="write the add-in package (.oxt)")
    b.add_argument("-o", "--output", help=f"file to write (default ./{OXT_NAME})")
    b.add_argument("--record-site", action="store_true",
                   help="record this Python's site-packages in the package, so LibreOffice's "
                        "Python (same version) imports portflux from here")
    b.set_defaults(func=cmd_build)
    i = s.add_parser("install", help="install the add-in for LibreOffice (using this Python's "
                                     "portflux), then check it in a headless LibreOffice")
    i.add_argument("--shared", action="store_true",
                   help="for all users (always so when run as root)")
    i.set_defaults(func=cmd_install)
    u = s.add_parser("uninstall", help="remove the add-in from LibreOffice")
    u.add_argument("--shared", action="store_true",
                   help="remove the all-users install (always so when run as root)")
    u.set_defaults(func=cmd_uninstall)
