"""Hostile workbooks, round two, without LibreOffice: the package reader refuses what reaches
outside the workbook and what two readers could read differently; the engine refuses work it
can estimate as too large; the contained child dies with the command; file-size errors name
the file; the worksheet functions bound what a bridge hands them.

Every workbook is built in the test (``hostile_books``). Each test fails on the code before
this round (the refusal did not exist, the wrong value was read, or the child outlived the
command); the expected messages and values are portflux's own rules (docs/security.md, "Hostile
workbooks"), the xlsx grammar from ECMA-376 Part 1 (from memory: 18.17.7 ST_Xstring escapes,
the numbers of <v> as xsd:double, booleans 0/1).
"""

import os
import resource
import signal
import subprocess
import sys
import textwrap
import time
import zipfile

import openpyxl
import pytest
from openpyxl.worksheet.formula import ArrayFormula

from hostile_books import (BOOK, BOOK_RELS, MAIN, MC, REL, SHEET1, STRICT, TYPES, book, edit,
                           png, rewrite, with_picture, zip_bytes)
from portflux import cells as C
from portflux.addins.libreoffice.recalc import LibreOfficeRecalcError, check_formulas
from portflux.cli import main
from portflux.workbook import worksheet_functions
from portflux.workbook.engine import RecalcError, Recalculator, recalc_file

FUNCS = worksheet_functions()
#: The documented bounds (docs/security.md, "Hostile workbooks"): written out, so that this file
#: also runs (and fails) against the code before them.
MAX_ARRAY_CELLS, MAX_WORK_CELLS = 250_000, 25_000_000


def refused_everywhere(path, *fragments):
    """The embedded engine (both entry points) and the LibreOffice engine's checks refuse the
    workbook, each with every fragment in its message, and nothing is written."""
    out = os.path.join(os.path.dirname(path), "out.xlsx")
    texts = []
    with pytest.raises(RecalcError) as a:
        Recalculator(path, FUNCS)
    texts.append(str(a.value))
    with pytest.raises(RecalcError) as b:
        recalc_file(path, out, FUNCS)
    texts.append(str(b.value))
    with pytest.raises(LibreOfficeRecalcError) as c:
        check_formulas(path)
    texts.append(str(c.value))
    for text in texts:
        for fragment in fragments:
            assert fragment in text, text
    assert not os.path.exists(out)
    return texts[0]


# ----------------------------------------------------------------- nothing external, ever --
CONNECTIONS = "application/vnd.openxmlformats-officedocument.spreadsheetml.connections+xml"
QUERY = "application/vnd.openxmlformats-officedocument.spreadsheetml.queryTable+xml"
CONNECTION_XML = (b'<connections xmlns="' + MAIN.encode() + b'"><connection id="1" name="q" '
                  b'type="4" refreshOnLoad="1"><webPr url="http://127.0.0.1:9/steal"/>'
                  b'</connection></connections>')


@pytest.mark.parametrize("how", ["relationship and content type", "content type only",
                                 "relationship only"])
def test_a_data_connection_under_any_part_name_is_refused(tmp_path, how):
    src = book(tmp_path, {"A1": 1.0, "B1": "=A1*2"})
    rel = (f'<Relationship Id="rIdC" Type="{REL}/connections" Target="c/data.xml"/>').encode()
    ct = f'<Override PartName="/xl/c/data.xml" ContentType="{CONNECTIONS}"/>'.encode()

    def change(name, data):
        if name == BOOK_RELS and how != "content type only":
            return data.replace(b"</Relationships>", rel + b"</Relationships>")
        if name == TYPES and how != "relationship only":
            return data.replace(b"</Types>", ct + b"</Types>")
        return data
    bad = rewrite(src, tmp_path / "conn.xlsx", change, [("xl/c/data.xml", CONNECTION_XML)])
    refused_everywhere(bad, "links to other files or data sources", "a data connection")


@pytest.mark.parametrize("rtype, what", [("queryTable", "a query table"),
                                         ("externalLink", "a link to another workbook"),
                                         ("oleObject", "an OLE object")])
def test_query_tables_external_links_and_ole_objects_are_refused_by_type(tmp_path, rtype, what):
    src = book(tmp_path, {"A1": 1.0})
    rel = f'<Relationship Id="rIdQ" Type="{REL}/{rtype}" Target="../q/anything.xml"/>'
    rels = ('<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/'
            f'relationships">{rel}</Relationships>').encode()
    bad = rewrite(src, tmp_path / "q.xlsx", extra=[("xl/worksheets/_rels/sheet1.xml.rels", rels),
                                                   ("xl/q/anything.xml", b"<x/>")])
    refused_everywhere(bad, what, "xl/worksheets/_rels/sheet1.xml.rels")


@pytest.mark.parametrize("target", ["http://127.0.0.1:9/who-opened-it.png",
                                    "file:///etc/hostname"])
def test_a_linked_picture_is_refused_by_every_engine(tmp_path, target):
    src = book(tmp_path, {"A1": 1.0, "B1": "=A1*2"})
    bad = with_picture(src, tmp_path / "pic.xlsx", target)
    refused_everywhere(bad, "links a picture to", target[:20], 'TargetMode="External"')


def test_an_external_hyperlink_is_read_but_never_reaches_the_copy_libreoffice_opens(tmp_path):
    from portflux.workbook.rebuild import rebuild_file

    wb = openpyxl.Workbook()
    ws = wb.active
    ws["A1"] = "standard"
    ws["A1"].hyperlink = "http://127.0.0.1:9/clicked-only"
    ws["B1"] = "=LEN(A1)"
    wb.save(tmp_path / "link.xlsx")
    assert recalc_file(tmp_path / "link.xlsx", tmp_path / "o.xlsx", FUNCS).values == {
        ("Sheet", "B1"): 8.0}
    done = rebuild_file(tmp_path / "link.xlsx", tmp_path / "copy.xlsx")
    assert b"127.0.0.1" not in zip_bytes(tmp_path / "copy.xlsx")
    assert "hyperlinks (1)" in done.notes


def test_an_embedded_picture_reaches_the_copy_only_as_checked_png_bytes(tmp_path):
    from portflux.workbook.rebuild import rebuild_file

    src = book(tmp_path, {"A1": 1.0})
    pic = png(b"EMBEDDED-OK")
    good = with_picture(src, tmp_path / "pic.xlsx", pic, external=False)
    rebuild_file(good, tmp_path / "copy.xlsx")
    with zipfile.ZipFile(tmp_path / "copy.xlsx") as z:
        media = [n for n in z.namelist() if n.startswith("xl/media/")]
        assert media == ["xl/media/image1.png"] and z.read(media[0]) == pic
    fake = with_picture(src, tmp_path / "fake.xlsx", b"<svg onload='x'/>" + b" " * 64,
                        external=False)
    done = rebuild_file(fake, tmp_path / "copy2.xlsx")
    assert b"svg" not in zip_bytes(tmp_path / "copy2.xlsx")
    assert "pictures other than PNG and JPEG (1)" in done.notes


# ---------------------------------------------------------- one workbook for every reader --
def _strict_name(tmp_path):
    src = book(tmp_path, {"A1": "=HIDDEN"})
    names = (f'<x:definedNames xmlns:x="{STRICT}"><x:definedName name="HIDDEN">INFO("system")'
             f'</x:definedName></x:definedNames>').encode()
    return edit(src, tmp_path / "strict.xlsx", BOOK, b"<calcPr", names + b"<calcPr")


def _second_sheet_data(tmp_path, ns, wrap=lambda x: x):
    src = book(tmp_path, {"A1": 40.0, "B1": "=A1+2"})
    extra = (f'<s:sheetData xmlns:s="{ns}"><s:row r="1"><s:c r="A1"><s:v>987654</s:v></s:c>'
             f'</s:row></s:sheetData>')
    return edit(src, tmp_path / "two.xlsx", SHEET1, b"</sheetData>",
                b"</sheetData>" + wrap(extra).encode())


def _alternate(x):
    return (f'<mc:AlternateContent xmlns:mc="{MC}"><mc:Choice Requires="x14">'
            f'{x.replace("s:", "").replace(f" xmlns:s={chr(34)}{MAIN}{chr(34)}", "")}'
            f'</mc:Choice></mc:AlternateContent>')


CASES = {
    "strict-namespace defined name": (
        _strict_name, ["strict Open XML namespace", "xl/workbook.xml"]),
    "second sheetData, strict namespace": (
        lambda t: _second_sheet_data(t, STRICT), ["strict Open XML", "sheet1.xml"]),
    "sheetData inside mc:AlternateContent": (
        lambda t: _second_sheet_data(t, MAIN, _alternate),
        ["markup-compatibility alternative", "<sheetData>", "sheet1.xml"]),
    "element inside <f>": (
        lambda t: edit(book(t, {"A1": 1.0, "A2": 2.0, "B1": "=A1+A2"}), t / "f.xlsx", SHEET1,
                       b"<f>A1+A2</f>", b'<f>A1+A2<q:x xmlns:q="urn:q"/>100+23</f>'),
        ["cell B1: an element (<x>) inside <f>", "sheet1.xml"]),
    "formula in the strict namespace": (
        lambda t: edit(book(t, {"A1": 1.0, "B1": "=A1*2"}), t / "sf.xlsx", SHEET1,
                       b"<f>A1*2</f>", f'<f>A1*2</f><s:f xmlns:s="{STRICT}">A1*3</s:f>'.encode()),
        ["strict Open XML", "sheet1.xml"]),
    "duplicate workbook relationship Id": (
        lambda t: edit(book(t, {"A1": 1.0}), t / "dup.xlsx", BOOK_RELS, b"</Relationships>",
                       f'<Relationship Id="rId1" Type="{REL}/worksheet" '
                       f'Target="worksheets/sheet1.xml"/></Relationships>'.encode()),
        ["two relationships share the Id 'rId1'", "xl/_rels/workbook.xml.rels"]),
    "two shared-string tables": (
        lambda t: with_shared_strings(with_shared_strings(book(t, {"A1": 1.0, "B1": "=A1"}),
                                                          t / "s1.xlsx", "42", "s1"),
                                      t / "s2.xlsx", "123123", "s2"),
        ["names 2 shared-string tables"]),
}


def with_shared_strings(src, dst, text, name):
    """``src`` with a shared-string table ``xl/{name}.xml`` holding ``text``, and cell A1
    showing its first string."""
    rel = f'<Relationship Id="rId{name}" Type="{REL}/sharedStrings" Target="{name}.xml"/>'

    def change(n, d):
        if n == BOOK_RELS:
            return d.replace(b"</Relationships>", rel.encode() + b"</Relationships>")
        if n == SHEET1:
            import re
            return re.sub(rb'<c r="A1"[^>]*>.*?</c>', b'<c r="A1" t="s"><v>0</v></c>', d, 1)
        return d
    return rewrite(src, dst, change, [(f"xl/{name}.xml", f'<sst xmlns="{MAIN}"><si><t>{text}'
                                                          f'</t></si></sst>'.encode())])


def _in_utf16_with_an_entity(t):
    """The sheet part re-encoded in UTF-16, with a DOCTYPE declaring an entity that a cell's
    inline text uses: '<!' is then not a byte sequence of the part, so a check for it on the
    raw bytes alone would hand the part to an unguarded parser."""
    src = book(t, {"A1": "x", "B1": "=LEN(A1)"})

    def change(name, data):
        if name != SHEET1:
            return data
        text = data.decode("utf-8").split("?>", 1)[-1]
        text = ('<?xml version="1.0" encoding="UTF-16"?><!DOCTYPE worksheet '
                '[<!ENTITY e "entity text">]>' + text)
        return text.encode("utf-16")
    return rewrite(src, t / "u16.xlsx", change)


CASES["a sheet in UTF-16 declaring an entity"] = (_in_utf16_with_an_entity,
                                                  ["not encoded in UTF-8", "sheet1.xml"])


@pytest.mark.parametrize("case", sorted(CASES))
def test_what_readers_could_read_differently_is_refused_with_the_part_named(tmp_path, case):
    build, fragments = CASES[case]
    refused_everywhere(os.fspath(build(tmp_path)), *fragments)


@pytest.mark.parametrize("text, t", [("1_000", "n"), ("\u0661\u0662", "n"), ("\uff17", "n"),
                                     ("inf", "n"), (" 12", "n"), ("-1", "b"), ("true", "b")])
def test_values_only_python_reads_as_numbers_or_booleans_are_refused(tmp_path, text, t):
    src = book(tmp_path, {"A1": 5.0, "B1": "=A1+1"})
    cell = f'<c r="A1" t="{t}"><v>{text}</v></c>'.encode()
    bad = edit(src, tmp_path / "v.xlsx", SHEET1, b'<c r="A1" t="n"><v>5</v></c>', cell)
    what = "is not a number as a workbook writes one" if t == "n" else "a boolean must be 0 or 1"
    refused_everywhere(bad, "cell A1", what)


def test_text_escapes_are_decoded_as_excel_decodes_them(tmp_path):
    # ECMA-376 Part 1, ST_Xstring: _xHHHH_ is the character U+HHHH, _x005F_ a literal '_'
    src = book(tmp_path, {"A1": 1.0, "B1": "x", "C1": "=A1&B1"})
    esc = with_shared_strings(src, tmp_path / "s.xlsx", "_x0041__x005F_x0042_", "sst")
    esc = edit(esc, tmp_path / "esc.xlsx", SHEET1, b"<t>x</t>", b"<t>_x0043_</t>")
    calc = Recalculator(esc, FUNCS)
    assert calc.value("Data", "A1") == "A_x0042_"
    assert calc.value("Data", "B1") == "C"
    assert calc.value("Data", "C1") == "A_x0042_C"


# ----------------------------------------------------------------- bounded and truthful --
def test_an_array_formula_over_three_hundred_thousand_cells_is_refused_before_it_is_filled(
        tmp_path):
    wb = openpyxl.Workbook()
    wb.active["A1"] = ArrayFormula("A1:C100000", "=1")      # 300,000 cells from a 4 KB file
    wb.save(tmp_path / "wide.xlsx")
    assert os.path.getsize(tmp_path / "wide.xlsx") < 8000
    refused_everywhere(os.fspath(tmp_path / "wide.xlsx"), "cell A1",
                       f"covers more than {MAX_ARRAY_CELLS:,} cells")


def test_arrays_over_the_cap_together_are_refused_too(tmp_path):
    wb = openpyxl.Workbook()
    for k in range(3):
        wb.active.cell(1, 1 + 2 * k).value = ArrayFormula(
            f"{'ACE'[k]}1:{'ACE'[k]}100000", "=1")
    wb.save(tmp_path / "three.xlsx")
    refused_everywhere(os.fspath(tmp_path / "three.xlsx"), "with the array formulas before it")


def test_four_hundred_sumproducts_over_four_million_cells_are_refused_before_they_start(
        tmp_path):
    wb = openpyxl.Workbook()
    ws = wb.active
    ws["D1000000"] = 1.0                     # the sheet reaches row 10^6: A:D is 4 M cells
    for r in range(1, 401):
        ws.cell(r, 6, "=SUMPRODUCT(A:D,A:D)")
    wb.save(tmp_path / "heavy.xlsx")
    assert os.path.getsize(tmp_path / "heavy.xlsx") < 16000
    t0 = time.monotonic()
    with pytest.raises(RecalcError) as info:    # the old engine ran into the wall-clock limit
        recalc_file(tmp_path / "heavy.xlsx", tmp_path / "o.xlsx", FUNCS,
                    limits={"wall_seconds": 60.0})
    text = str(info.value)
    assert f"above the budget of {MAX_WORK_CELLS:,} cell reads" in text, text
    assert "sheet 'Sheet', cell F1 (8,000,001 cells)" in text
    assert time.monotonic() - t0 < 30
    with pytest.raises(LibreOfficeRecalcError, match="above the budget"):
        check_formulas(tmp_path / "heavy.xlsx")


def test_the_template_is_far_below_the_work_budget():
    from portflux.workbook.budget import MAX_WORK_CELLS as documented, estimate_work
    from portflux.workbook.package import read_package
    from portflux.workbook.safety import read_workbook_bytes
    from portflux.workbook.template import shipped_template

    from portflux.workbook.package import MAX_ARRAY_CELLS as cap

    assert (documented, cap) == (MAX_WORK_CELLS, MAX_ARRAY_CELLS)
    total, _ = estimate_work(read_package(read_workbook_bytes(shipped_template()), "t"))
    assert 1000 < total < MAX_WORK_CELLS / 100      # the template reads ~40,000 cells: 1/600 of the budget


# -------------------------------------------------- the command and its contained child --
SLOW = textwrap.dedent("""
    import openpyxl, sys
    wb = openpyxl.Workbook(); ws = wb.active
    ws["B1000000"] = 1.0                    # A:B is 2 M cells
    for r in range(1, 5):                   # 4 x 4 M cell reads: several seconds of work
        ws.cell(r, 4, "=SUMPRODUCT(A:B,A:B)")
    wb.save(sys.argv[1])
""")


def _children(pid):
    try:
        with open(f"/proc/{pid}/task/{pid}/children") as f:
            return [int(x) for x in f.read().split()]
    except OSError:
        return []


def _alive(pid):
    try:
        with open(f"/proc/{pid}/stat") as f:
            return f.read().split(") ")[1][0] not in "ZX"
    except OSError:
        return False


def _slow_recalc(tmp_path):
    src = tmp_path / "slow.xlsx"
    subprocess.run([sys.executable, "-c", SLOW, str(src)], check=True)
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(sys.path))
    proc = subprocess.Popen([sys.executable, "-m", "portflux.cli", "recalc", str(src), "-o",
                             str(tmp_path / "o.xlsx"), "-q"], stderr=subprocess.PIPE, text=True,
                            env=env)
    deadline = time.monotonic() + 60
    while not _children(proc.pid) and time.monotonic() < deadline and proc.poll() is None:
        time.sleep(0.02)
    kids = _children(proc.pid)
    if not kids:
        proc.kill()
        pytest.skip("the recalculation finished before its child could be seen")
    time.sleep(1.0)                          # the child is computing
    return proc, kids[0], src


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc")
def test_sigterm_ends_the_computing_child_and_the_command_within_a_second(tmp_path):
    proc, child, _ = _slow_recalc(tmp_path)
    assert _alive(child)
    t0 = time.monotonic()
    proc.send_signal(signal.SIGTERM)
    _, err = proc.communicate(timeout=60)
    took = time.monotonic() - t0
    assert proc.returncode == 128 + signal.SIGTERM, err
    assert took < 1.0, f"the command took {took:.2f} s to end after SIGTERM"
    assert not _alive(child)
    assert sorted(os.listdir(tmp_path)) == ["slow.xlsx"]


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc")
def test_a_killed_command_leaves_no_computing_child(tmp_path):
    proc, child, _ = _slow_recalc(tmp_path)
    proc.kill()                              # SIGKILL: the parent can clean up nothing
    proc.wait(timeout=60)
    deadline = time.monotonic() + 5
    while _alive(child) and time.monotonic() < deadline:
        time.sleep(0.05)
    assert not _alive(child), "the child kept computing after its command was killed"


FSIZE = textwrap.dedent("""
    import resource, sys
    resource.setrlimit(resource.RLIMIT_FSIZE, (20000, 20000))
    from portflux.cli import main
    sys.exit(main(["recalc", sys.argv[1], "-o", sys.argv[2], "-q"]))
""")


def test_a_file_size_limit_is_reported_naming_the_output(tmp_path):
    from portflux.workbook.template import build_template

    src = build_template(str(tmp_path / "t.xlsx"))          # about 300 KB once written
    out = tmp_path / "out.xlsx"
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(sys.path))
    p = subprocess.run([sys.executable, "-c", FSIZE, src, str(out)], capture_output=True,
                       text=True, env=env, timeout=300)
    assert p.returncode == 2, p.stderr
    line = p.stderr.strip().splitlines()[-1]
    assert line == (f"portflux: {out}: the file would be larger than this process may write "
                    f"(the file-size limit, 'ulimit -f'); nothing was written. Raise the limit "
                    f"or write less."), p.stderr
    assert sorted(os.listdir(tmp_path)) == ["t.xlsx"]


MEMORY = textwrap.dedent("""
    import resource, sys
    from portflux.cli import main
    with open("/proc/self/statm") as f:
        mapped = int(f.read().split()[0]) * resource.getpagesize()
    # the parent may grow by 200 MiB; reading the 30 MB sheet takes far more
    resource.setrlimit(resource.RLIMIT_AS, (mapped + 200 * 2**20, resource.RLIM_INFINITY))
    sys.exit(main(["recalc", sys.argv[1], "-o", sys.argv[2], "--engine", "libreoffice"]))
""")


def test_the_libreoffice_engine_reads_a_large_workbook_only_inside_its_contained_child(
        tmp_path):
    # 600,000 cells (a 30 MB sheet) and a call LibreOffice must not make: the refusal comes
    # after the whole workbook is read, which needs several hundred MiB; the parent may use
    # 200 MiB more than it maps at start. Before, it read the file itself: MemoryError, exit 3.
    rows = "".join(f'<row r="{r}">' + "".join(f'<c r="{c}{r}"><v>{r}.5</v></c>' for c in "ABCDEF")
                   + "</row>" for r in range(1, 100_001))
    sheet = (f'<worksheet xmlns="{MAIN}"><sheetData>{rows}<row r="100001"><c r="A100001">'
             f'<f>WEBSERVICE("http://127.0.0.1:9/x")</f></c></row></sheetData></worksheet>')
    src = book(tmp_path, {"A1": 1.0}, name="big.xlsx")
    big = rewrite(src, tmp_path / "bigger.xlsx", lambda n, d: sheet.encode() if n == SHEET1
                  else d)
    env = dict(os.environ, PYTHONPATH=os.pathsep.join(sys.path))
    p = subprocess.run([sys.executable, "-c", MEMORY, big, str(tmp_path / "o.xlsx")],
                       capture_output=True, text=True, env=env, timeout=600)
    assert p.returncode == 2, p.stderr
    assert "cell A100001: the formula calls WEBSERVICE, which reaches outside" in p.stderr
    assert "Traceback" not in p.stderr and "internal error" not in p.stderr
    assert sorted(os.listdir(tmp_path)) == ["big.xlsx", "bigger.xlsx"]


# ------------------------------------------------------------------ the cell functions --
HEAD = ("port", "area", "density", "vx", "vy", "role", "frame")
UNITS = (None, "m^2", "kg/m^3", "m/s", "m/s", None, None)
TWO = (HEAD + (None,) * 9, UNITS + (None,) * 9,
       ("a", 0.002, 998.0, 30.0, 0.0, "in", "abs") + (None,) * 9,
       ("b", 0.002, 998.0, 0.0, 20.0, "out", "rel") + (None,) * 9)
#: w = V - U: the outlet is typed relative (20 m/s along y), so the force on the body along x
#: is mdot (30 - 10) = 998 * 0.002 * 20 * 20 = 798.4 N and the power 7984 W at U = 10 m/s
#: (hand calculation; White, Fluid Mechanics, sec. 3.4, from memory).
POWER = 798.4 * 10.0


@pytest.mark.parametrize("blank", [None, ""], ids=["Excel blanks", "LibreOffice blanks"])
def test_a_whole_column_range_costs_what_its_filled_rows_cost(monkeypatch, blank):
    rows = tuple(tuple(blank if c is None else c for c in r) for r in TWO)
    whole = rows + tuple((blank,) * 16 for _ in range(1_048_576 - len(rows)))   # =PFX_POWER(A:P, 10)
    seen = []
    real = getattr(C, "_entry", lambda names, args: args)

    def spy(names, args):                # what the function body gets from the entry bounds
        out = real(names, args)
        seen.append((len(out[0]), max(map(len, out[0]))))
        return out
    monkeypatch.setattr(C, "_entry", spy, raising=False)
    C.clear_caches()
    t0 = time.perf_counter()
    got = C.PFX_POWER(whole, 10.0)
    took = time.perf_counter() - t0
    assert got == pytest.approx(POWER, rel=1e-12)
    assert seen == [(4, 7)], seen          # two header rows, two ports, seven columns
    assert took < 1.0, f"{took:.2f} s"


def test_four_hundred_thousand_ports_get_a_message_not_a_minute():
    t = (HEAD, UNITS) + tuple((f"p{i}", 0.002, 998.0, 30.0, 0.0, "in" if i % 2 else "out",
                                "abs") for i in range(400_000))
    C.clear_caches()
    t0 = time.perf_counter()
    out = C.PFX_SUMMARY(t, 10.0)
    took = time.perf_counter() - t0
    assert out == ("ports: the range holds 400,002 rows; a table may hold at most 100,000 rows "
                   "below its two header rows (a larger one would take many seconds to read): "
                   "split it, or select only the rows in use")
    assert took < 1.0, f"{took:.2f} s"


@pytest.mark.parametrize("kind", [tuple, list])
@pytest.mark.parametrize("where", ["ports", "cell", "cv_velocity"])
def test_a_hundred_thousand_deep_nesting_gets_a_message(kind, where):
    deep = kind((1.0,))
    for _ in range(100_000):
        deep = kind((deep,))
    if where == "ports":
        args = (deep, 10.0)
    elif where == "cell":
        args = ((HEAD[:2], (None, None), ("a", deep)), 10.0)
    else:
        args = (TWO, deep)
    for f in (C.PFX_POWER, C.PFX_SUMMARY, C.PFX_MASSFLOWS):
        out = f(*args)
        assert isinstance(out, str) and "nested more than two levels deep" in out, out
        assert out.startswith(("ports row", "cv_velocity row")), out
