"""The portflux Calc add-in component (shipped in the .oxt as ``portflux_calc.py``).

LibreOffice's Python loader runs this file. It only bootstraps: it puts the folders recorded
in ``portflux_site.json`` (beside it in the installed extension) ahead of LibreOffice's own --
the folder of the portflux that built the add-in first, then that Python's site-packages with
``site.addsitedir`` (which also runs their .pth files, as an editable install needs) -- then
hands every call to :mod:`portflux.addins.libreoffice.adapter`. If portflux or numpy cannot be
imported, or LibreOffice's Python imports another portflux than the recorded one, every
function shows one message in its cell saying why and what to do. ``=PFX_ABOUT()`` shows the
version and the folder of the portflux that runs.

Outside LibreOffice (no ``uno``) this module defines nothing.
"""

import json
import os
import site
import sys

SERVICE = "org.portflux.calc.Functions"
_state = {}


def _site_record():
    here = os.path.dirname(os.path.abspath(globals().get("__file__", "") or "."))
    try:
        with open(os.path.join(here, "portflux_site.json"), encoding="utf-8") as f:
            return json.load(f)
    except (OSError, ValueError):
        return {}


def _put_first(rec):
    """Put the recorded folders ahead of LibreOffice's own: the folder portflux was built from
    first, then the recording Python's site-packages (``site.addsitedir``, which also runs
    their .pth files, as an editable install needs). So a checkout on PYTHONPATH, or an
    environment's portflux, is not shadowed by another copy in LibreOffice's Python."""
    before = list(sys.path)
    for d in rec.get("site_dirs") or ():
        if os.path.isdir(d) and d not in sys.path:
            site.addsitedir(d)
    added = [p for p in sys.path if p not in before]
    home = rec.get("portflux")
    first = [home] if home and os.path.isdir(home) else []
    sys.path[:] = first + [p for p in added if p not in first] + \
        [p for p in before if p not in first]


def _not_the_recorded_one(rec, portflux):
    """A message if LibreOffice's Python imported another portflux than the one recorded."""
    home, version = rec.get("portflux"), rec.get("version")
    if not home:
        return None
    here = os.path.dirname(os.path.dirname(os.path.abspath(portflux.__file__)))
    got = getattr(portflux, "__version__", "?")
    if os.path.realpath(here) == os.path.realpath(home) and (version is None or
                                                            version == got):
        return None
    return (f"portflux: the add-in was installed from portflux {version} in {home}, but "
            f"LibreOffice's Python imports portflux {got} from {here}; run 'portflux "
            f"libreoffice install' again from the environment you want it to use")[:500]


def _adapter():
    """The adapter module, or a message saying why portflux cannot be imported."""
    if "adapter" in _state:
        return _state["adapter"]
    if "error" in _state:
        return _state["error"]
    rec = _site_record()
    here_py = f"{sys.version_info[0]}.{sys.version_info[1]}"
    recorded = rec.get("python")
    note = ""
    if recorded and recorded != here_py:
        note = (f"; the install recorded Python {recorded} but LibreOffice runs Python "
                f"{here_py}: reinstall with a Python {here_py}")
    else:
        _put_first(rec)
    try:
        import portflux
        from portflux.addins.libreoffice import adapter
    except Exception as e:  # noqa: BLE001 - shown in the cell instead
        _state["error"] = (
            f"portflux: cannot import portflux in LibreOffice's Python {here_py} "
            f"({sys.executable}): {type(e).__name__}: {e}{note}; run 'portflux libreoffice "
            f"install' from a Python {here_py} environment that has portflux, or install "
            f"portflux and numpy into LibreOffice's Python")[:500]
        return _state["error"]
    other = _not_the_recorded_one(rec, portflux)
    if other:
        _state["error"] = other
        return other
    _state["adapter"] = adapter
    return adapter


try:
    import unohelper
    from com.sun.star.lang import XLocalizable, XServiceInfo, XServiceName
    from org.portflux.calc import XPortfluxFunctions
except ImportError:     # not inside LibreOffice
    unohelper = None

if unohelper is not None:
    class PortfluxFunctions(unohelper.Base, XPortfluxFunctions, XServiceName, XServiceInfo,
                            XLocalizable):
        """Every PFX_ method is looked up by name and forwarded to the adapter.

        Calc reads names, help texts and compatibility names from CalcAddIns.xcu (generated
        from the registry): the component does not implement XAddIn, which Calc would prefer
        over the configuration (and XAddIn's answers would need portflux imported)."""

        def __init__(self, ctx=None):
            self.ctx = ctx
            self.locale = None

        def __getattr__(self, name):
            if not name.startswith("PFX_"):
                raise AttributeError(name)

            def method(*args):
                a = _adapter()
                if isinstance(a, str):
                    return ((a,),)
                return a.call(name, args)
            return method

        # XServiceName, XServiceInfo, XLocalizable
        def getServiceName(self):
            return SERVICE

        def getImplementationName(self):
            return SERVICE

        def supportsService(self, name):
            return name in self.getSupportedServiceNames()

        def getSupportedServiceNames(self):
            return ("com.sun.star.sheet.AddIn", SERVICE)

        def setLocale(self, locale):
            self.locale = locale

        def getLocale(self):
            return self.locale

    g_ImplementationHelper = unohelper.ImplementationHelper()
    g_ImplementationHelper.addImplementation(
        PortfluxFunctions, SERVICE, ("com.sun.star.sheet.AddIn", SERVICE))
