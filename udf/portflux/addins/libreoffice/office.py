"""Find LibreOffice, import its Python bridge (pyuno) and run a private headless office.

Used by ``portflux libreoffice ...``, ``portflux recalc --engine libreoffice`` and the tests.
A :class:`HeadlessOffice` runs one ``soffice --headless`` process with a private user profile
(its own folder, never the user's), installs the add-in there through LibreOffice's extension
manager (no ``unopkg``, which refuses to run as root without ``--shared``), and hands out a UNO
desktop to load, recalculate and store documents. Stopping it ends that process only.
"""

from __future__ import annotations

import glob
import os
import re
import shutil
import signal
import subprocess
import sys
import tempfile
import time
import uuid

#: Oldest LibreOffice that maps an add-in's CompatibilityName to the same name in .xlsx files
#: (7.4 reads ``PFX_FOO`` in an .xlsx as an unknown name: #NAME?).
MIN_VERSION = (25, 2)


from ...core import PortfluxError


from ...workbook.soffice import (bounded, isolated, isolation, private_profile,  # noqa: E402
                                  soffice_path)   # one finder and one sandbox for every user


class OfficeError(PortfluxError):
    """LibreOffice is missing, too old, or failed; the message says what to install or do."""


def program_dir():
    """LibreOffice's program folder (holds types.rdb and pyuno), or None."""
    s = soffice_path()
    if s is None:
        return None
    d = os.path.dirname(s)
    return d if os.path.isfile(os.path.join(d, "types.rdb")) else None


_version_cache = {}


def version():
    """LibreOffice's version as a tuple of ints (e.g. (25, 2, 3, 2)), or None if absent."""
    s = soffice_path()
    if s is None:
        return None
    if s not in _version_cache:
        try:
            r = subprocess.run([s, "--version"], capture_output=True, text=True, timeout=60,
                               env=clean_env())
            m = re.search(r"LibreOffice\s+(\d+(?:\.\d+)+)", r.stdout)
            _version_cache[s] = tuple(int(x) for x in m.group(1).split(".")) if m else None
        except (OSError, subprocess.SubprocessError):
            _version_cache[s] = None
    return _version_cache[s]


def import_uno():
    """Import pyuno (``uno``) into this Python, adding LibreOffice's folders if needed.

    pyuno is built for one Python: on Debian the system python3 (package python3-uno). A
    virtual environment of the same Python version can use it from there.
    """
    try:
        import uno  # noqa: F401
        return uno
    except ImportError:
        pass
    prog = program_dir()
    tried = []
    for d in ["/usr/lib/python3/dist-packages", prog,
              *(glob.glob("/usr/lib/python3*/site-packages"))]:
        if d and os.path.isfile(os.path.join(d, "uno.py")) and d not in sys.path:
            tried.append(d)
            sys.path.append(d)
            try:
                import uno  # noqa: F401
                return uno
            except ImportError:
                sys.path.remove(d)
    raise OfficeError("LibreOffice's Python bridge (pyuno) cannot be imported by "
                      f"{sys.executable} (Python {sys.version.split()[0]}); on Debian: "
                      "apt-get install python3-uno, and run portflux with the system python3 "
                      "or a virtual environment made from it"
                      + (f" (tried {', '.join(tried)})" if tried else ""))


def unavailable_reason():
    """Why LibreOffice cannot run the add-in here (text), or None when it can."""
    if soffice_path() is None:
        return ("LibreOffice ('soffice') is not installed; Debian bookworm: apt-get install -t "
                "bookworm-backports libreoffice-calc-nogui python3-uno")
    v = version()
    if v is None or v[:2] < MIN_VERSION:
        shown = ".".join(map(str, v)) if v else "unknown"
        return (f"LibreOffice {shown} is older than "
                f"{'.'.join(map(str, MIN_VERSION))}, which maps the add-in's names to the same "
                "names in .xlsx files; Debian bookworm: apt-get install -t bookworm-backports "
                "libreoffice-calc-nogui python3-uno")
    try:
        import_uno()
    except OfficeError as e:
        return str(e)
    return None


def clean_env():
    env = dict(os.environ)
    # A Python virtual environment must not leak into LibreOffice's own Python.
    # LibreOffice's embedded Python finds its home by looking for "python3" on PATH; a virtual
    # environment's or pyenv's python3 there would give it another Python's standard library.
    for k in ("PYTHONPATH", "PYTHONHOME", "VIRTUAL_ENV", "PYENV_VERSION", "CONDA_PREFIX"):
        env.pop(k, None)
    keep = []
    for d in env.get("PATH", "").split(os.pathsep):
        if d and (os.path.isfile(os.path.join(d, "pyvenv.cfg"))
                  or os.path.isfile(os.path.join(os.path.dirname(d), "pyvenv.cfg"))
                  or "pyenv" in d or "conda" in d):
            continue
        keep.append(d)
    env["PATH"] = os.pathsep.join(keep) or os.defpath
    return env


def _url(path):
    uno = import_uno()
    return uno.systemPathToFileUrl(os.path.abspath(path))


def props(**kw):
    from com.sun.star.beans import PropertyValue

    out = []
    for k, v in kw.items():
        p = PropertyValue()
        p.Name, p.Value = k, v
        out.append(p)
    return tuple(out)


def _approving_environment():
    """A UNO command environment that approves the extension manager's questions (headless,
    no one to ask: "Extension ... is about to be installed")."""
    import unohelper
    from com.sun.star.task import XInteractionHandler
    from com.sun.star.ucb import XCommandEnvironment

    approve = import_uno().getTypeByName("com.sun.star.task.XInteractionApprove")

    class Approve(unohelper.Base, XCommandEnvironment, XInteractionHandler):
        def getInteractionHandler(self):
            return self

        def getProgressHandler(self):
            return None

        def handle(self, request):
            for c in request.Continuations:
                if c.queryInterface(approve) is not None:
                    c.select()
                    return

    return Approve()


class HeadlessOffice:
    """One headless LibreOffice with a private profile and the portflux add-in installed.

    Use: ``with HeadlessOffice(oxt) as office: doc = office.load("book.xlsx")``; ``stop()``
    (or leaving the block) ends that process only and deletes the profile. The profile holds
    :data:`portflux.workbook.soffice.PROFILE_SETTINGS` (links blocked and never updated, no
    macros, no active content); the process runs without network where
    :func:`~portflux.workbook.soffice.isolation` can (``isolation`` says how it ran) and with
    the memory and CPU bounds of :func:`~portflux.workbook.soffice.bounded`.
    """

    def __init__(self, oxt_path=None, *, timeout=120.0, own_session=True, folder=None):
        reason = unavailable_reason()
        if reason:
            raise OfficeError(reason)
        #: False: the office stays in the caller's process group (a contained recalculation
        #: is ended, office included, by killing its group).
        self.own_session = own_session
        self.isolation = None
        self.uno = import_uno()
        self.timeout = timeout
        self.oxt_path = oxt_path
        self.tmp = tempfile.mkdtemp(prefix="portflux-lo-", dir=folder)
        self.profile = os.path.join(self.tmp, "profile")
        self.proc = None
        self.desktop = None
        self.ctx = None
        self.killed = False

    # -- process ---------------------------------------------------------------------------
    def _start(self):
        pipe = "portflux_" + uuid.uuid4().hex
        args = [soffice_path(), "--headless", "--invisible", "--nologo", "--norestore",
                "--nodefault", "--nolockcheck", "--nofirststartwizard",
                "-env:UserInstallation=" + private_profile(self.profile),
                f"--accept=pipe,name={pipe};urp;StarOffice.ComponentContext"]
        self.isolation = isolation(pipe=True)[1]
        self.proc = subprocess.Popen(isolated(args, pipe=True), stdin=subprocess.DEVNULL,
                                     stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                                     env=clean_env(), start_new_session=self.own_session,
                                     preexec_fn=bounded())
        local = self.uno.getComponentContext()
        resolver = local.ServiceManager.createInstanceWithContext(
            "com.sun.star.bridge.UnoUrlResolver", local)
        deadline = time.monotonic() + self.timeout
        last = None
        while time.monotonic() < deadline:
            if self.proc.poll() is not None:
                raise OfficeError(f"soffice exited with code {self.proc.returncode} at start-up")
            try:
                self.ctx = resolver.resolve(
                    f"uno:pipe,name={pipe};urp;StarOffice.ComponentContext")
                break
            except Exception as e:  # noqa: BLE001 - NoConnectException until it listens
                last = e
                time.sleep(0.2)
        else:
            raise OfficeError(f"soffice did not accept a connection within {self.timeout:.0f} "
                              f"s ({last})")
        self.desktop = self.ctx.ServiceManager.createInstanceWithContext(
            "com.sun.star.frame.Desktop", self.ctx)

    def _add_extension(self):
        """Install the .oxt into the private profile (extension manager, 'user' repository)."""
        em = self.ctx.getValueByName("/singletons/com.sun.star.deployment.ExtensionManager")
        em.addExtension(_url(self.oxt_path), (), "user", None, _approving_environment())

    def remove_extension(self, identifier, file_name):
        """Remove an extension from this office's profile ('user' repository)."""
        em = self.ctx.getValueByName("/singletons/com.sun.star.deployment.ExtensionManager")
        em.removeExtension(identifier, file_name, "user", None, _approving_environment())

    def start(self):
        """Start the office and add the extension; on any failure nothing is left running."""
        try:
            self._start()
            if self.oxt_path:
                # Calc reads its add-in list when a formula first needs it: adding the
                # extension before any document is loaded is enough (no restart).
                try:
                    self._add_extension()
                except Exception as e:  # noqa: BLE001 - UNO exceptions: say what failed
                    raise OfficeError(f"LibreOffice refused the add-in {self.oxt_path}: "
                                      f"{type(e).__name__}: {e}") from None
        except BaseException:
            self._kill_process()
            self.stop()
            raise
        return self

    def _terminate(self):
        if self.desktop is not None:
            try:
                self.desktop.terminate()
            except Exception:  # noqa: BLE001 - the bridge drops when the office exits
                pass
        self.desktop = self.ctx = None
        if self.proc is not None:
            try:
                self.proc.wait(timeout=30)
            except subprocess.TimeoutExpired:
                self.proc.kill()
                self.proc.wait(timeout=30)
            self.proc = None

    def kill(self):
        """End the office process at once (the recalculation timeout)."""
        if self.proc is not None and self.proc.poll() is None:
            self.killed = True
        self._kill_process()

    def _kill_process(self):
        proc = self.proc
        if proc is not None and proc.poll() is None:
            try:
                if not self.own_session:
                    raise AttributeError      # the caller's group: end this process only
                os.killpg(proc.pid, signal.SIGKILL)
            except (OSError, AttributeError):
                proc.kill()

    def stop(self):
        try:
            self._terminate()
        finally:
            if self.proc is not None and self.proc.poll() is None:
                self.proc.kill()
            shutil.rmtree(self.tmp, ignore_errors=True)

    def __enter__(self):
        return self.start()

    def __exit__(self, *exc):
        self.stop()

    # -- documents -------------------------------------------------------------------------
    def load(self, path, *, hidden=True):
        """Open a document without running macros or updating links."""
        from com.sun.star.document.MacroExecMode import NEVER_EXECUTE
        from com.sun.star.document.UpdateDocMode import NO_UPDATE

        return self.desktop.loadComponentFromURL(
            _url(path), "_blank", 0,
            props(Hidden=hidden, MacroExecutionMode=NEVER_EXECUTE, UpdateDocMode=NO_UPDATE,
                  ReadOnly=False))

    def new_sheet(self):
        return self.desktop.loadComponentFromURL("private:factory/scalc", "_blank", 0,
                                                 props(Hidden=True))

    def store_xlsx(self, doc, path, *, macro_enabled=False):
        """Save as Office Open XML (.xlsx, or .xlsm with ``macro_enabled``)."""
        name = "Calc MS Excel 2007 VBA XML" if macro_enabled else "Calc MS Excel 2007 XML"
        doc.storeToURL(_url(path), props(FilterName=name))
