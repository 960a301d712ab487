"""The command line tells the truth: exit codes, messages with their cells, no tracebacks, no
leftovers, the user's file names and permissions (docs/reference/cli.md, "Exit codes of the
command line").

Workbooks are built in the tests with openpyxl; port data are invented.
"""

import errno
import os
import signal
import stat
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import openpyxl
import pytest
from openpyxl.worksheet.formula import ArrayFormula

import portflux.workbook.check as check_module
from portflux.cli import main
from portflux.workbook import output
from portflux.workbook.audit import Audit, Finding, audit, describe, is_message, read_formulas

PORTS = [("port", "role", "area", "density", "vx"), (None, None, "m^2", "kg/m^3", "m/s"),
         ("jet", "in", 0.01, 1000.0, 30.0), ("exit", "out", 0.01, 1000.0, 30.0)]


def workbook(path, cells=None, arrays=None, ports=PORTS, title="Ports"):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = title
    for r in ports:
        ws.append(list(r))
    for at, f in (cells or {}).items():
        ws[at] = f
    for ref, f in (arrays or {}).items():
        ws[ref.split(":")[0]] = ArrayFormula(ref, f)
    wb.save(path)
    return str(path)


def leftovers(folder, keep):
    return sorted(set(os.listdir(folder)) - set(keep))


def run(argv, capsys):
    code = main(argv)
    out, err = capsys.readouterr()
    assert "Traceback" not in out + err
    return code, out, err


# ---- recalc: messages and error values ---------------------------------------------------------

def test_recalc_exits_1_and_names_sheet_and_cell_of_each_portflux_message(tmp_path, capsys):
    bad = [r if r[0] != "jet" else ("jet", "in", -0.01, 1000.0, 30.0) for r in PORTS]
    src = workbook(tmp_path / "in.xlsx", {"H1": "=PFX_POWER(A1:E4, 10)", "H3": "=H1"},
                   {"J1:L3": "=PFX_MASSFLOWS(A1:E4, 10)"}, ports=bad)
    code, out, err = run(["recalc", src, "-o", str(tmp_path / "out.xlsx")], capsys)
    assert code == 1
    assert "portflux message: Ports!H1: ports row 3, area: must be > 0" in err
    assert "portflux message: Ports!J1: ports row 3, area:" in err and "9 cells" in err
    assert "2 cell(s) answer with a portflux message" in err      # H3 only repeats H1
    assert "Ports!H3" not in err
    assert os.path.exists(tmp_path / "out.xlsx")                  # written, for the user to see


def test_recalc_exits_1_on_an_error_value_in_a_native_formula(tmp_path, capsys):
    src = workbook(tmp_path / "in.xlsx", {"H1": "=PFX_POWER(A1:E4, 10)", "H2": "=1/0"})
    code, _, err = run(["recalc", src, "-o", str(tmp_path / "out.xlsx"), "-q"], capsys)
    assert code == 1
    assert "error value: Ports!H2: #DIV/0!" in err
    assert "1 formula cell(s) hold a spreadsheet error value" in err


def test_na_padding_of_a_larger_array_range_is_not_an_error(tmp_path, capsys):
    # Two ports in a 5-row, 2-column range: rows 3-5 and column 2 are padding, as Excel pads.
    src = workbook(tmp_path / "in.xlsx", arrays={"J1:K5": "=PFX_MASSFLOWS(A1:E4, 10)"})
    code, out, err = run(["recalc", src, "-o", str(tmp_path / "out.xlsx")], capsys)
    assert code == 0, err
    assert "#N/A" not in err and out == ""       # not a template: no summary


def test_an_array_range_of_na_throughout_is_an_error(tmp_path, capsys):
    src = workbook(tmp_path / "in.xlsx", arrays={"J1:K2": "=NA()"})
    code, _, err = run(["recalc", src, "-o", str(tmp_path / "out.xlsx")], capsys)
    assert code == 1 and "error value: Ports!J1: #N/A (in 4 cells of its range)" in err


def test_many_messages_show_the_first_five_and_the_count(tmp_path, capsys):
    cells = {f"H{i}": f"=PFX_POWER(A1:E4, {i}, \"XYZ\")" for i in range(1, 9)}
    src = workbook(tmp_path / "in.xlsx", cells)
    code, _, err = run(["recalc", src, "-o", str(tmp_path / "out.xlsx")], capsys)
    assert code == 1
    assert err.count("portflux message: Ports!H") == 5
    assert "... and 3 more" in err and "8 cell(s) answer with a portflux message" in err


def test_recalc_of_the_template_succeeds_and_prints_its_summary(tmp_path, capsys):
    code, out, err = run(["template", str(tmp_path / "t.xlsx")], capsys)
    assert code == 0
    code, out, err = run(["recalc", str(tmp_path / "t.xlsx"), "-o", str(tmp_path / "o.xlsx")],
                         capsys)
    assert code == 0, err
    assert "force on body x [N]" in out and "status" in out and "speed of maximum power" in out
    assert "portflux message" not in err and "error value" not in err


def test_the_shipped_template_has_padding_but_no_findings(tmp_path):
    from portflux.workbook.check import recalc
    from portflux.workbook.template import shipped_template

    src = shipped_template()
    summary = recalc(src, tmp_path / "o.xlsx")
    found = audit(src, summary.values)
    assert found.clean and found.padding > 0 and summary.error_cells   # all its #N/A pad
    # the engine's own reading of the formulas (what the command line uses) is the file's
    formulas, arrays = read_formulas(src)
    assert summary.arrays == arrays
    assert {k: t.lstrip("=") for k, t in summary.formulas.items()} == \
        {k: t.lstrip("=") for k, t in formulas.items()}
    assert audit(src, summary.values, summary.formulas, summary.arrays) == found


def test_findings_are_the_same_from_the_engines_reading_and_from_the_file(tmp_path):
    from portflux.workbook.check import recalc

    src = workbook(tmp_path / "in.xlsx", {"H1": "=PFX_POWER(A1:E4, 10)", "H2": "=1/0"})
    summary = recalc(src, tmp_path / "o.xlsx")
    by_engine = audit(src, summary.values, summary.formulas, summary.arrays)
    assert by_engine == audit(src, summary.values) and not by_engine.clean


def test_recalc_refuses_to_write_over_its_input(tmp_path, capsys):
    src = workbook(tmp_path / "in.xlsx", {"H1": "=PFX_POWER(A1:E4, 10)"})
    before = Path(src).read_bytes()
    code, _, err = run(["recalc", src, "-o", src], capsys)
    assert code == 2 and "refusing to write over the input" in err
    assert Path(src).read_bytes() == before


def test_refusals_of_the_output_name_the_users_file(tmp_path, capsys):
    src = workbook(tmp_path / "in.xlsx", {"H1": "=PFX_POWER(A1:E4, 10)"})
    for out, words in ((tmp_path / "out.xls", "the output must keep the input's extension"),
                       (tmp_path / "no" / "out.xlsx", "does not exist")):
        code, _, err = run(["recalc", src, "-o", str(out)], capsys)
        assert code == 2 and f"portflux: {out}: " in err and words in err
        assert ".part" not in err
    assert leftovers(tmp_path, ["in.xlsx"]) == []


def test_engine_log_records_and_warnings_do_not_reach_the_terminal(tmp_path, capsys, monkeypatch):
    import logging
    import warnings

    real = check_module.recalc

    def noisy(*a, **k):
        logging.getLogger("portflux.workbook.engine").warning("internal engine detail")
        warnings.warn("internal library warning")
        return real(*a, **k)

    monkeypatch.setattr(check_module, "recalc", noisy)
    src = workbook(tmp_path / "in.xlsx", {"H1": "=PFX_POWER(A1:E4, 10)"})
    code, out, err = run(["recalc", src, "-o", str(tmp_path / "out.xlsx")], capsys)
    assert code == 0 and "internal" not in out + err


# ---- message classification against the worksheet functions' own messages -------------------

def test_every_catalogued_message_is_recognised_and_no_flag_is():
    sys.path.insert(0, os.path.dirname(__file__))
    from test_badinput_catalogue import CATALOGUE

    for name, func, args, _ in CATALOGUE:
        out = func(*args)
        if name.startswith("flag:"):
            texts = [c for r in out for c in r if isinstance(c, str)]
            assert texts and not any(is_message(t) for t in texts), (name, texts)
        else:
            assert is_message(out), (name, out)


def test_describe_counts_messages_and_errors():
    found = Audit(messages=tuple(Finding("S", f"A{i}", "ports: the range is blank")
                                 for i in range(1, 8)),
                  errors=(Finding("S", "B1", "#VALUE!"),))
    lines = describe(found)
    assert lines[:5] == [f"portflux message: S!A{i}: ports: the range is blank"
                         for i in range(1, 6)]
    assert lines[5:] == ["... and 2 more", "7 cell(s) answer with a portflux message",
                         "error value: S!B1: #VALUE!",
                         "1 formula cell(s) hold a spreadsheet error value"]


# ---- check --------------------------------------------------------------------------------------

def test_check_names_the_users_file_not_a_temporary_copy(tmp_path, capsys):
    src = workbook(tmp_path / "mine.xlsx", {"H1": "=PFX_POWER(A1:E4, 10)"})
    code, out, err = run(["check", src], capsys)
    assert code == 2
    assert f"portflux: {src}: no sheet 'Check cases'" in err
    assert "checked" not in err.replace("checking", "")


def test_check_of_the_shipped_template_passes(capsys):
    code, out, err = run(["check"], capsys)
    assert code == 0 and "reference cases: 73 PASS, 0 FAIL" in out


def test_check_without_a_shipped_template_builds_one_and_names_no_temporary_file(
        capsys, monkeypatch):
    import portflux.workbook.template as T

    monkeypatch.setattr(T, "shipped_template", lambda: None)
    code, out, err = run(["check"], capsys)
    assert code == 0 and "reference cases: 73 PASS, 0 FAIL" in out
    assert err.splitlines() == ["checking the built-in template ..."]


def test_demo_progress_names_no_temporary_file(tmp_path, capsys):
    code, out, err = run(["demo", "-o", str(tmp_path / "d.xlsx")], capsys)
    assert code == 0 and f"result workbook: {tmp_path / 'd.xlsx'}" in out
    assert "recalculating the demo scenario ..." in err and f"-> {tmp_path / 'd.xlsx'}" in err
    assert ".part" not in err and "portflux-fill" not in err


# ---- template -----------------------------------------------------------------------------------

def test_template_refuses_to_overwrite_without_force(tmp_path, capsys):
    p = tmp_path / "t.xlsx"
    p.write_bytes(b"my own work")
    code, _, err = run(["template", str(p)], capsys)
    assert code == 2 and "exists; use --force" in err
    assert p.read_bytes() == b"my own work" and leftovers(tmp_path, ["t.xlsx"]) == []
    code, _, _ = run(["template", str(p), "--force"], capsys)
    assert code == 0 and p.read_bytes()[:2] == b"PK"


def test_outputs_honour_the_umask(tmp_path, capsys):
    old = os.umask(0o027)
    try:
        assert run(["template", str(tmp_path / "t.xlsx")], capsys)[0] == 0
        assert run(["recalc", str(tmp_path / "t.xlsx"), "-o", str(tmp_path / "o.xlsx"), "-q"],
                   capsys)[0] == 0
        assert run(["demo", "-o", str(tmp_path / "d.xlsx")], capsys)[0] == 0
    finally:
        os.umask(old)
    for name in ("t.xlsx", "o.xlsx", "d.xlsx"):
        assert stat.S_IMODE(os.stat(tmp_path / name).st_mode) == 0o640, name


def test_replacing_a_file_keeps_its_permissions(tmp_path):
    p = tmp_path / "a.bin"
    p.write_bytes(b"old")
    os.chmod(p, 0o604)
    output.write_atomic(p, lambda f: f.write(b"new"))
    assert p.read_bytes() == b"new" and stat.S_IMODE(os.stat(p).st_mode) == 0o604


def test_an_unwritable_folder_names_the_users_file_not_a_temporary_one(tmp_path, capsys,
                                                                     monkeypatch):
    real_open = os.open

    def denied(path, *a, **k):      # the folder refuses new files (root ignores chmod)
        if os.path.dirname(os.fspath(path)) == str(tmp_path):
            raise PermissionError(errno.EACCES, "Permission denied", os.fspath(path))
        return real_open(path, *a, **k)

    monkeypatch.setattr(output.os, "open", denied)
    code, _, err = run(["template", str(tmp_path / "t.xlsx")], capsys)
    assert code == 2
    assert err.strip() == (f"portflux: {tmp_path / 't.xlsx'}: cannot write here (Permission "
                           f"denied); choose another folder.")


# ---- full disk ----------------------------------------------------------------------------------

@pytest.mark.parametrize("where", ["fsync", "replace"])
def test_a_full_disk_gives_one_plain_message_and_no_leftovers(tmp_path, capsys, monkeypatch,
                                                              where):
    src = workbook(tmp_path / "in.xlsx", {"H1": "=PFX_POWER(A1:E4, 10)"})

    def full(*a, **k):
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(os, where, full)
    code, out, err = run(["recalc", src, "-o", str(tmp_path / "out.xlsx")], capsys)
    assert code == 2
    lines = [ln for ln in err.splitlines() if ln.startswith("portflux:")]
    assert lines == [f"portflux: {tmp_path / 'out.xlsx'}: the disk is full (no space left on "
                     f"device); nothing was written. Free some space or choose another folder."]
    assert leftovers(tmp_path, ["in.xlsx"]) == []


def test_a_full_disk_while_writing_the_template(tmp_path, capsys, monkeypatch):
    monkeypatch.setattr(os, "fsync", lambda fd: (_ for _ in ()).throw(
        OSError(errno.EDQUOT, "Disk quota exceeded")))
    code, _, err = run(["template", str(tmp_path / "t.xlsx")], capsys)
    assert code == 2 and "the disk quota is exceeded; nothing was written" in err
    assert os.listdir(tmp_path) == []


@pytest.fixture
def tiny_disk(tmp_path):
    """A real 16 KiB tmpfs (root and mount needed; skipped elsewhere)."""
    import shutil

    mnt = tmp_path / "tiny"
    mnt.mkdir()
    if not (hasattr(os, "geteuid") and os.geteuid() == 0 and shutil.which("mount")):
        pytest.skip("a tmpfs needs root and mount")
    p = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=16k", "tmpfs", str(mnt)],
                       capture_output=True, text=True)
    if p.returncode:
        pytest.skip(f"cannot mount a tmpfs here: {p.stderr.strip()}")
    try:
        yield mnt
    finally:
        subprocess.run(["umount", str(mnt)], check=False)


def test_a_really_full_disk_gives_one_plain_message(tmp_path, tiny_disk):
    src = workbook(tmp_path / "in.xlsx", {"H1": "=PFX_POWER(A1:E4, 10)"})
    for argv in (["template", str(tiny_disk / "t.xlsx")],
                 ["recalc", src, "-o", str(tiny_disk / "o.xlsx")]):
        if argv[0] == "recalc":       # an output larger than the disk: the template's recalc
            subprocess.run([sys.executable, "-m", "portflux.cli", "template",
                            str(tmp_path / "big.xlsx")], check=True, capture_output=True)
            argv[1] = str(tmp_path / "big.xlsx")
        p = subprocess.run([sys.executable, "-m", "portflux.cli", *argv, *(["-q"] if
                            argv[0] == "recalc" else [])], capture_output=True, text=True)
        assert p.returncode == 2, p.stderr
        assert p.stderr.strip().splitlines()[-1].endswith(
            "the disk is full (no space left on device); nothing was written. Free some space "
            "or choose another folder."), p.stderr
        assert "Traceback" not in p.stderr and os.listdir(tiny_disk) == []


# ---- signals ------------------------------------------------------------------------------------

CHILD = textwrap.dedent("""
    import sys, time
    import portflux.workbook.template as T

    def slow(path):                     # a writer caught half-way
        with open(path, "wb") as f:
            f.write(b"PK partial")
            f.flush()
            print("writing", flush=True)
            time.sleep(60)

    T.build_template = slow
    from portflux.cli import main
    sys.exit(main(["template", sys.argv[1]]))
""")


@pytest.mark.parametrize("sig, code, word", [(signal.SIGTERM, 128 + signal.SIGTERM, "terminated"),
                                             (signal.SIGINT, 130, "interrupted")])
def test_a_signal_during_a_write_leaves_no_temporary_file_and_no_traceback(tmp_path, sig, code,
                                                                          word):
    target = tmp_path / "t.xlsx"
    child = subprocess.Popen([sys.executable, "-c", CHILD, str(target)], stdout=subprocess.PIPE,
                             stderr=subprocess.PIPE, text=True)
    try:
        assert child.stdout.readline().strip() == "writing"
        assert len(os.listdir(tmp_path)) == 1          # the temporary file, mid-write
        child.send_signal(sig)
        out, err = child.communicate(timeout=60)
    finally:
        if child.poll() is None:
            child.kill()
    assert child.returncode == code, err
    assert "Traceback" not in err and f"portflux: {word}" in err
    assert os.listdir(tmp_path) == []


def test_sigterm_during_a_real_recalc_leaves_nothing_behind(tmp_path):
    src = tmp_path / "t.xlsx"
    subprocess.run([sys.executable, "-m", "portflux.cli", "template", str(src)], check=True,
                   capture_output=True)
    child = subprocess.Popen([sys.executable, "-m", "portflux.cli", "recalc", str(src), "-o",
                              str(tmp_path / "o.xlsx")], stdout=subprocess.PIPE,
                             stderr=subprocess.PIPE, text=True)
    try:
        deadline = time.monotonic() + 60
        while len(os.listdir(tmp_path)) < 2 and child.poll() is None \
                and time.monotonic() < deadline:
            time.sleep(0.002)           # the output's temporary file has appeared: kill now
        child.send_signal(signal.SIGTERM)
        _, err = child.communicate(timeout=60)
    finally:
        if child.poll() is None:
            child.kill()
    if child.returncode == 0:
        pytest.skip("the recalculation finished before the signal arrived")
    assert child.returncode == 128 + signal.SIGTERM, err
    assert "Traceback" not in err
    assert os.listdir(tmp_path) == ["t.xlsx"]


def test_a_signal_the_moment_the_temporary_file_exists_leaves_nothing_behind(tmp_path,
                                                                            monkeypatch):
    """SIGTERM may reach Python's handler in the main thread at any statement, even inside a
    block that holds the signal with pthread_sigmask, when another thread (a BLAS pool) took
    it; seen under load as a stray empty '.o.*.part.xlsx'. Here the handler 'runs' right after
    the temporary file is created, before any caller could have learnt its name."""
    real_open = os.open

    def open_then_terminated(path, *a, **k):
        fd = real_open(path, *a, **k)
        if os.path.dirname(os.fspath(path)) == str(tmp_path):
            os.close(fd)
            raise output.Terminated(signal.SIGTERM)
        return fd

    monkeypatch.setattr(output.os, "open", open_then_terminated)
    with pytest.raises(output.Terminated):
        with output.atomic_path(tmp_path / "o.xlsx"):
            pass
    assert os.listdir(tmp_path) == []


# ---- exit codes ---------------------------------------------------------------------------------

def test_usage_errors_exit_2(capsys):
    with pytest.raises(SystemExit) as e:
        main(["recalc"])
    assert e.value.code == 2


@pytest.mark.parametrize("content", [None, b"not a workbook"])
def test_an_unreadable_input_exits_2_with_one_message(tmp_path, capsys, content):
    src = tmp_path / "in.xlsx"
    if content is not None:
        src.write_bytes(content)
    code, _, err = run(["recalc", str(src), "-o", str(tmp_path / "o.xlsx")], capsys)
    assert code == 2 and err.strip().splitlines()[-1].startswith("portflux: ")
    assert str(src) in err
    assert leftovers(tmp_path, ["in.xlsx"]) == []


def test_an_internal_fault_exits_3_with_one_line_saying_it_is_a_bug(tmp_path, capsys,
                                                                   monkeypatch):
    def broken(*a, **k):
        raise ZeroDivisionError("float division by zero")

    monkeypatch.setattr(check_module, "recalc", broken)
    src = workbook(tmp_path / "in.xlsx", {"H1": "=PFX_POWER(A1:E4, 10)"})
    code, _, err = run(["recalc", src, "-o", str(tmp_path / "o.xlsx")], capsys)
    assert code == 3
    last = err.strip().splitlines()[-1]
    assert last.startswith("portflux: internal error (ZeroDivisionError: float division by zero)")
    assert "This is a bug in portflux" in last and "please report it" in last
    assert leftovers(tmp_path, ["in.xlsx"]) == []


# ---- Python 3.14: the names it removed from ast --------------------------------------------------

AST_REMOVED = textwrap.dedent("""
    import ast, sys
    for name in ("Str", "Num", "NameConstant", "Bytes", "Ellipsis"):   # removed in Python 3.14
        if hasattr(ast, name):
            delattr(ast, name)
    from portflux.cli import main
    sys.exit(main(["recalc", sys.argv[1], "-o", sys.argv[2], "-q"]))
""")


def test_the_recalc_path_runs_without_the_ast_names_python_3_14_removed(tmp_path):
    # Python 3.14 removed ast.Str, ast.Num, ast.NameConstant, ast.Bytes and ast.Ellipsis
    # (deprecated since 3.8; "What's New In Python 3.14", Removed, ast).
    src = workbook(tmp_path / "in.xlsx", {"H1": "=PFX_POWER(A1:E4, 10) * 2 + 1",
                                          "H2": "=\"a\" & \"b\""})
    out = tmp_path / "out.xlsx"
    p = subprocess.run([sys.executable, "-c", AST_REMOVED, src, str(out)], capture_output=True,
                       text=True, timeout=300)
    assert p.returncode == 0, p.stderr
    wb = openpyxl.load_workbook(out, data_only=True)
    # 0.01 m^2 * 1000 kg/m^3 * 20 m/s relative flow, straight through: no force, no power
    # (common practice, no source): 2 * 0 + 1 = 1.
    assert wb["Ports"]["H1"].value == pytest.approx(1.0)
    assert wb["Ports"]["H2"].value == "ab"


def test_requires_python_states_the_truth():
    # pycel (the formula engine while it is a dependency) uses ast.Str, which Python 3.14 removed
    # ("What's New In Python 3.14", Removed, ast): with pycel the package must exclude 3.14, and
    # without it must not (tools/py314_check.sh proves the demo and recalc on a real 3.14).
    import re

    root = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
    text = Path(root, "pyproject.toml").read_text(encoding="utf-8")
    requires = re.search(r'^requires-python\s*=\s*"([^"]*)"', text, re.M).group(1)
    deps = re.search(r"^dependencies\s*=\s*\[(.*?)\]", text, re.M | re.S).group(1)
    assert requires.startswith(">=3.10")
    if re.search(r'"pycel\b', deps):
        assert "<3.14" in requires, requires
    else:
        assert "<" not in requires, f"nothing stops 3.14 once pycel is gone: {requires}"
