"""``portflux libreoffice install --profile DIR``: the add-in installed into one LibreOffice
user profile through the extension manager (no ``unopkg``, so as root too), kept there, and
running the portflux that installed it; removed again with ``uninstall --profile DIR``.

The checks start a separate headless LibreOffice on the profile afterwards, without adding
anything: what it computes comes from what the install left in the profile.
"""

import os
import types

import pytest

import portflux
from libreoffice_support import needs_libreoffice
from portflux.addins.libreoffice import install
from portflux.cli import main

HOME = os.path.dirname(os.path.abspath(portflux.__file__))     # PFX_ABOUT's "installed at"


def _about_in(profile):
    office = install._profile_office(str(profile))
    with office:
        doc = office.new_sheet()
        try:
            sheet = doc.Sheets.getByIndex(0)
            sheet.getCellRangeByName("A1:B3").setArrayFormula("=PFX_ABOUT()")
            doc.calculateAll()
            return [[sheet.getCellByPosition(c, r).getString() for c in range(2)]
                    for r in range(3)]
        finally:
            doc.close(True)


@needs_libreoffice
def test_install_into_a_profile_keeps_the_addin_there_running_this_portflux(tmp_path, capsys):
    profile = tmp_path / "lo-profile"
    assert main(["libreoffice", "install", "--profile", str(profile)]) == 0
    out = capsys.readouterr().out
    assert f"the profile {profile}" in out and HOME in out
    about = _about_in(profile)            # a fresh office on the profile, nothing added
    assert about[1] == ["portflux", portflux.__version__]
    assert about[2] == ["installed at", HOME]

    assert main(["libreoffice", "uninstall", "--profile", str(profile)]) == 0
    assert _about_in(profile)[0][0] != "item"       # no add-in left: PFX_ABOUT is unknown


@needs_libreoffice
def test_a_profile_in_use_is_refused_and_left_alone(tmp_path, capsys):
    profile = tmp_path / "busy"
    profile.mkdir()
    (profile / ".lock").write_text("another LibreOffice\n")
    assert main(["libreoffice", "install", "--profile", str(profile)]) == 2
    err = capsys.readouterr().err
    assert "LibreOffice is running with the profile" in err and "close it" in err
    assert sorted(os.listdir(profile)) == [".lock"]


def test_as_root_the_default_is_roots_own_profile_not_all_users(monkeypatch, tmp_path):
    monkeypatch.setattr(install, "_is_root", lambda: True)
    monkeypatch.setattr(install.sys, "platform", "linux")
    monkeypatch.setenv("XDG_CONFIG_HOME", str(tmp_path / "cfg"))
    args = types.SimpleNamespace(shared=False, profile=None)
    assert install._where(args) == ("profile", str(tmp_path / "cfg" / "libreoffice" / "4"))
    assert install._where(types.SimpleNamespace(shared=True, profile=None)) == ("shared", None)
    monkeypatch.setattr(install, "_is_root", lambda: False)
    assert install._where(args) == ("unopkg", None)


def test_profile_and_shared_exclude_each_other(capsys):
    assert main(["libreoffice", "install", "--shared", "--profile", "/tmp/x"]) == 2
    assert "exclude each other" in capsys.readouterr().err


def test_no_libreoffice_profile_to_remove_from_is_said(tmp_path, capsys):
    assert main(["libreoffice", "uninstall", "--profile", str(tmp_path / "none")]) == 2
    assert "no LibreOffice profile in" in capsys.readouterr().err
