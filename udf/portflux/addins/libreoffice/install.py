"""``portflux libreoffice build | install | uninstall``.

``install`` builds the add-in with the site-packages folders of the Python running it and the
folder portflux was imported from recorded in the package (so LibreOffice's Python imports
*this* portflux and numpy), checks it by computing ``=PFX_ABOUT()`` in LibreOffice, and
installs it:

* for the current user (the default): with LibreOffice's ``unopkg``, which refuses to run as
  root without ``--shared``; as root, the extension manager installs it into root's own user
  profile instead (as ``--profile`` does, with the default profile folder);
* ``--profile DIR``: into the LibreOffice user profile in DIR (what ``soffice
  -env:UserInstallation=file:///DIR`` uses; created if absent), through LibreOffice's extension
  manager in a headless LibreOffice running on that profile -- for any user, root too; the
  check runs in that same LibreOffice, on the installed copy;
* ``--shared``: for all users (``unopkg --shared``).

The check must show this portflux's version and folder, else the message the cell shows is
printed and the command fails. LibreOffice's Python must be the same Python version as the one
running the command (on Debian both are the system python3: make the virtual environment with
``/usr/bin/python3 -m venv``).
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


def _is_root():
    return hasattr(os, "geteuid") and os.geteuid() == 0


def default_profile() -> str:
    """This user's LibreOffice profile folder (LibreOffice's default UserInstallation:
    $XDG_CONFIG_HOME/libreoffice/4 on Linux, %APPDATA%\\LibreOffice\\4 on Windows,
    ~/Library/Application Support/LibreOffice/4 on macOS; from memory)."""
    if sys.platform.startswith("win"):
        base = os.environ.get("APPDATA") or os.path.expanduser("~")
        return os.path.join(base, "LibreOffice", "4")
    if sys.platform == "darwin":
        return os.path.expanduser("~/Library/Application Support/LibreOffice/4")
    base = os.environ.get("XDG_CONFIG_HOME") or os.path.expanduser("~/.config")
    return os.path.join(base, "libreoffice", "4")


def _where(args):
    """("shared", None), ("unopkg", None) or ("profile", folder): where to install."""
    profile = getattr(args, "profile", None)
    if profile and args.shared:
        from .office import OfficeError
        raise OfficeError("--profile and --shared exclude each other: a profile is one user's")
    if args.shared:
        return "shared", None
    if profile:
        return "profile", os.path.abspath(os.path.expanduser(profile))
    if _is_root():                     # unopkg refuses a per-user install as root
        return "profile", default_profile()
    return "unopkg", None


def _about(office):
    """(version cell, folder cell) of ``=PFX_ABOUT()`` in a running office, or the message a
    cell shows and ''."""
    doc = office.new_sheet()
    try:
        sheet = doc.Sheets.getByIndex(0)
        sheet.getCellRangeByName("A1:B3").setArrayFormula("=PFX_ABOUT()")
        doc.calculateAll()
        first = sheet.getCellRangeByName("A1").getString()
        if first != "item":
            return first, ""
        return (sheet.getCellRangeByName("B2").getString(),
                sheet.getCellRangeByName("B3").getString())
    finally:
        doc.close(True)


def verify(oxt_path, timeout=120.0) -> str:
    """Compute ``=PFX_ABOUT()`` in a private headless LibreOffice with this package; return
    the text of its version cell (the portflux version, or the message the cell shows)."""
    from .office import HeadlessOffice

    with HeadlessOffice(oxt_path, timeout=timeout) as office:
        return _about(office)[0]


def _profile_office(folder, oxt_path=None, timeout=120.0):
    """A headless LibreOffice on the user profile in ``folder`` (refused while a LibreOffice
    runs on it); with ``oxt_path`` the add-in is added to that profile."""
    from .office import HeadlessOffice, OfficeError

    lock = os.path.join(folder, ".lock")
    if os.path.exists(lock):
        raise OfficeError(f"LibreOffice is running with the profile {folder} ({lock} exists); "
                          f"close it and run this again (if no LibreOffice runs, delete the "
                          f".lock file)")
    office = HeadlessOffice(oxt_path, timeout=timeout)
    office.profile = folder          # kept: only the office's own temporary folder is deleted
    return office


def install_in_profile(oxt_path, folder, timeout=120.0):
    """Add the package to the profile in ``folder`` and compute ``=PFX_ABOUT()`` there:
    (version cell, folder cell)."""
    os.makedirs(folder, exist_ok=True)
    with _profile_office(folder, oxt_path, timeout) as office:
        return _about(office)


def remove_from_profile(folder, timeout=120.0):
    """Remove the add-in from the profile in ``folder`` (extension manager)."""
    from .office import OfficeError

    if not os.path.isdir(folder):
        raise OfficeError(f"no LibreOffice profile in {folder}")
    with _profile_office(folder, None, timeout) as office:
        try:
            office.remove_extension(EXTENSION_ID, OXT_NAME)
        except Exception as e:  # noqa: BLE001 - UNO exceptions: say what failed
            raise OfficeError(f"the add-in could not be removed from {folder}: "
                              f"{type(e).__name__}: {e}") from None


def _portflux_home():
    """The folder of the portflux package running this command (PFX_ABOUT's "installed at")."""
    import portflux

    return os.path.dirname(os.path.abspath(portflux.__file__))


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
    where, folder = _where(args)
    home = _portflux_home()
    with tempfile.TemporaryDirectory(prefix="portflux-oxt-") as tmp:
        oxt = build_oxt(os.path.join(tmp, OXT_NAME), site_dirs_of_this_python())
        if where == "profile":
            shown, runs = install_in_profile(oxt, folder)
        else:
            shown, runs = verify(oxt), home
        if shown != __version__ or os.path.realpath(runs) != os.path.realpath(home):
            print(f"portflux: the add-in does not work in LibreOffice; a cell shows: {shown}"
                  + (f" (portflux at {runs})" if runs else ""), file=sys.stderr)
            if where == "profile":
                print(f"portflux: it was added to the profile {folder}; remove it with "
                      f"'portflux libreoffice uninstall --profile {folder}'", file=sys.stderr)
            return 1
        if where != "profile":
            _run_unopkg(["add", "--force", *(["--shared"] if where == "shared" else []), oxt])
    target = {"shared": "all users", "unopkg": "this user",
              "profile": f"the profile {folder}"}[where]
    print(f"portflux {__version__} add-in installed in LibreOffice ({target}); it runs the portflux "
          f"at {home} (Python {sys.version_info[0]}.{sys.version_info[1]}, {sys.prefix}). "
          + (f"Start LibreOffice with -env:UserInstallation=file://{folder} if that is not "
             f"your default profile; " if where == "profile" else "Restart LibreOffice; ")
          + "=PFX_ABOUT() in a cell shows the version and the folder.")
    return 0


def cmd_uninstall(args) -> int:
    where, folder = _where(args)
    if where == "profile":
        remove_from_profile(folder)
        print(f"portflux add-in removed from the LibreOffice profile {folder}")
        return 0
    _run_unopkg(["remove", *(["--shared"] if where == "shared" else []), EXTENSION_ID])
    print(f"portflux add-in removed from LibreOffice "
          f"({'all users' if where == 'shared' else 'this user'})")
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
                                     "portflux), checked by =PFX_ABOUT() in LibreOffice")
    i.add_argument("--shared", action="store_true", help="for all users (unopkg --shared)")
    i.add_argument("--profile", metavar="DIR",
                   help="into the LibreOffice user profile in DIR (soffice "
                        "-env:UserInstallation=file:///DIR), through the extension manager; "
                        "works as root; the default as root is root's own profile")
    i.set_defaults(func=cmd_install)
    u = s.add_parser("uninstall", help="remove the add-in from LibreOffice")
    u.add_argument("--shared", action="store_true", help="remove the all-users install")
    u.add_argument("--profile", metavar="DIR",
                   help="remove it from the LibreOffice user profile in DIR")
    u.set_defaults(func=cmd_uninstall)
