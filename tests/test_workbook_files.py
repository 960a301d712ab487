"""Workbook files: bad, hostile and precious ones.

* the input workbook is never modified and the output appears whole or not at all;
* a file that is not a workbook, a damaged one, a zip bomb and an XML entity bomb are refused
  with a message naming the file and the fault, before any reader inflates them, in bounded
  memory (measured with tracemalloc);
* formula text from a workbook reaches only the formula engine's own functions and ours, never
  Python's ``eval``/``open`` nor a shell.

Every workbook here is built by the test in ``tmp_path``; the port data are invented.
"""

import hashlib
import os
import struct
import tracemalloc
import zipfile

import openpyxl
import pytest
from openpyxl.worksheet.formula import ArrayFormula

import portflux.cells as C
from portflux.core import PortfluxError
from portflux.workbook import engine, worksheet_functions
from portflux.workbook.engine import RecalcError, Recalculator, recalc_file
from portflux.workbook.safety import (LIMITS, WorkbookFileError,
                                      check_workbook_file)

FUNCS = worksheet_functions()

# A jet of water (A = 0.002 m^2, V = 30 m/s) turned through 90 degrees by a vane running away
# from the nozzle at U = 10 m/s; the outlet is given in the vane's frame (invented scenario).
PORT_ROWS = [
    ("port", "role", "frame", "area", "density", "vx", "vy"),
    (None, None, None, "m^2", "kg/m^3", "m/s", "m/s"),
    ("jet", "in", "abs", 0.002, 998.0, 30.0, 0.0),
    ("exit", "out", "rel", 0.002, 998.0, 0.0, 20.0),
]
RHO, AREA, V, U = 998.0, 0.002, 30.0, 10.0


def sha256(path) -> str:
    return hashlib.sha256(open(path, "rb").read()).hexdigest()


def build_book(path, extra=None):
    """A small portflux workbook: the port table on 'Ports', formulas beside it."""
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = "Ports"
    for r, row in enumerate(PORT_ROWS, 1):
        for c, v in enumerate(row, 1):
            ws.cell(r, c, v)
    ws["J1"] = U
    ws["J2"] = "=PFX_POWER(A1:G4, J1)"
    ws["J3"] = ArrayFormula("J3:L3", "=PFX_BODYFORCE(A1:G4, J1)")
    ws["J4"] = "=J2/1000"
    for coord, text in (extra or {}).items():
        ws[coord] = text
    wb.save(path)
    return str(path)


@pytest.fixture
def book(tmp_path):
    return build_book(tmp_path / "vane.xlsx")


def rewrite(src, dst, change=lambda name, data: data, compression=zipfile.ZIP_DEFLATED):
    """Copy a package part by part through ``change(name, data) -> bytes``."""
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", compression) as zout:
        for info in zin.infolist():
            zout.writestr(info.filename, change(info.filename, zin.read(info)))
    return str(dst)


def listing(folder):
    return sorted(p.name for p in folder.iterdir())


# ------------------------------------------------------------------ input kept, output whole --
def test_recalculation_leaves_the_input_workbook_byte_identical(book, tmp_path):
    before, mtime = sha256(book), os.stat(book).st_mtime_ns
    summary = recalc_file(book, tmp_path / "out.xlsx", FUNCS)
    assert sha256(book) == before and os.stat(book).st_mtime_ns == mtime
    # The written values are those of the moving-vane closed form F_x = rho A (V-U)^2 for a
    # 90 degree turn, P = F_x U (F. M. White, Fluid Mechanics, sec. 3.4; from memory).
    fx = RHO * AREA * (V - U) ** 2
    out = openpyxl.load_workbook(tmp_path / "out.xlsx", data_only=True)["Ports"]
    assert out["J2"].value == pytest.approx(fx * U)
    assert out["J3"].value == pytest.approx(fx)
    assert out["K3"].value == pytest.approx(-fx)
    assert summary.error_cells == {}


def test_output_is_written_to_a_temporary_file_in_its_folder_then_renamed(book, tmp_path,
                                                                         monkeypatch):
    moves = []
    real_replace = os.replace

    def spy(src, dst):
        moves.append((src, dst, os.path.getsize(src)))
        real_replace(src, dst)

    monkeypatch.setattr(engine.os, "replace", spy)
    out = tmp_path / "out.xlsx"
    recalc_file(book, out, FUNCS)
    [(src, dst, size)] = moves
    assert os.path.dirname(src) == str(tmp_path) and src != str(out) and dst == str(out)
    assert size == out.stat().st_size and not os.path.exists(src)


def test_a_raising_function_leaves_no_output_and_the_previous_output_intact(book, tmp_path):
    out = tmp_path / "out.xlsx"
    out.write_bytes(b"last week's results")

    def broken(*args):
        raise RuntimeError("simulated failure inside a worksheet function")

    with pytest.raises(RecalcError, match="PFX_POWER raised RuntimeError: simulated"):
        recalc_file(book, out, dict(FUNCS, PFX_POWER=broken))
    assert out.read_bytes() == b"last week's results"
    assert listing(tmp_path) == ["out.xlsx", "vane.xlsx"]


def test_a_write_failing_half_way_leaves_no_partial_file(book, tmp_path, monkeypatch):
    out = tmp_path / "out.xlsx"
    calls = []
    real = zipfile.ZipFile.writestr

    def flaky(self, info, data, *a, **k):
        calls.append(info)
        if len(calls) == 3:
            raise OSError("no space left on device (simulated)")
        return real(self, info, data, *a, **k)

    monkeypatch.setattr(zipfile.ZipFile, "writestr", flaky)
    with pytest.raises(OSError, match="simulated"):
        recalc_file(book, out, FUNCS)
    assert listing(tmp_path) == ["vane.xlsx"]


@pytest.mark.parametrize("alias", ["same path", "relative alias", "symlink", "hard link",
                                   "dotted path"])
def test_writing_over_the_input_is_refused_however_it_is_named(book, tmp_path, monkeypatch,
                                                               alias):
    monkeypatch.chdir(tmp_path)
    target = {"same path": book, "relative alias": "vane.xlsx",
              "dotted path": str(tmp_path / "sub" / ".." / "vane.xlsx")}.get(alias)
    (tmp_path / "sub").mkdir()
    if alias == "symlink":
        target = str(tmp_path / "sub" / "link.xlsx")
        os.symlink(book, target)
    elif alias == "hard link":
        target = str(tmp_path / "sub" / "hard.xlsx")
        os.link(book, target)
    before = sha256(book)
    with pytest.raises(RecalcError, match="refusing to write over the input"):
        recalc_file(book, target, FUNCS)
    assert sha256(book) == before


# ------------------------------------------------------------------------------ bad files --
def corrupted(book, tmp_path):
    """Flip bytes inside the compressed data of the sheet part (the directory stays intact)."""
    data = bytearray(open(book, "rb").read())
    with zipfile.ZipFile(book) as z:
        info = z.getinfo("xl/worksheets/sheet1.xml")
    name_len, extra_len = struct.unpack("<HH", data[info.header_offset + 26:
                                                    info.header_offset + 30])
    start = info.header_offset + 30 + name_len + extra_len
    for k in range(start + 5, start + min(info.compress_size - 2, 60)):
        data[k] ^= 0x5A
    p = tmp_path / "corrupted.xlsx"
    p.write_bytes(bytes(data))
    return str(p)


def truncated(book, tmp_path):
    p = tmp_path / "truncated.xlsx"
    p.write_bytes(open(book, "rb").read()[: os.path.getsize(book) // 2])
    return str(p)


def text_file(book, tmp_path):
    p = tmp_path / "notes.xlsx"
    p.write_text("port,role,area\njet,in,0.002\n")
    return str(p)


def empty_file(book, tmp_path):
    p = tmp_path / "empty.xlsx"
    p.write_bytes(b"")
    return str(p)


def old_binary(book, tmp_path):
    p = tmp_path / "old.xlsx"
    p.write_bytes(b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(600))   # OLE2 compound file magic
    return str(p)


def plain_zip(book, tmp_path):
    p = tmp_path / "archive.xlsx"
    with zipfile.ZipFile(p, "w") as z:
        z.writestr("readme.txt", "not a workbook")
    return str(p)


def lying_size(book, tmp_path):
    """The directory declares fewer inflated bytes than the part holds (size header forged)."""
    p = tmp_path / "lying.xlsx"
    with zipfile.ZipFile(book) as zin, zipfile.ZipFile(p, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            zout.writestr(info.filename, zin.read(info))
            if info.filename == "xl/worksheets/sheet1.xml":
                zout.filelist[-1].file_size = 10
    return str(p)


@pytest.mark.parametrize("make, fragment", [
    (corrupted, "is corrupted"),
    (truncated, "not a zip archive"),
    (text_file, "not an .xlsx workbook (not a zip archive)"),
    (empty_file, "not an .xlsx workbook (not a zip archive)"),
    (old_binary, "old binary .xls file or an encrypted workbook"),
    (plain_zip, "the package has no [Content_Types].xml and no xl/workbook.xml"),
    (lying_size, "'xl/worksheets/sheet1.xml' is corrupted"),
], ids=lambda x: getattr(x, "__name__", None))
def test_a_damaged_or_foreign_file_is_refused_with_a_clear_message(book, tmp_path, make,
                                                                   fragment):
    path = make(book, tmp_path)
    with pytest.raises(WorkbookFileError) as info:
        check_workbook_file(path)
    assert str(info.value).startswith(path + ": ") and fragment in str(info.value)
    assert isinstance(info.value, PortfluxError)
    out = tmp_path / "out.xlsx"
    with pytest.raises(RecalcError, match="^" + path.replace(".", r"\.")) as info2:
        recalc_file(path, out, FUNCS)
    assert fragment in str(info2.value) and not out.exists()


def test_a_healthy_workbook_passes_the_file_check(book):
    assert check_workbook_file(book) is None


def test_limits_are_checked_and_can_be_set(book):
    with pytest.raises(WorkbookFileError, match=r"declares \d+ parts, above the limit 3"):
        check_workbook_file(book, max_entries=3)
    with pytest.raises(WorkbookFileError, match="the file is .* above the limit 1 KiB"):
        check_workbook_file(book, max_file_bytes=1024)
    with pytest.raises(TypeError, match="unknown limit"):
        check_workbook_file(book, max_bombs=1)
    assert set(LIMITS) >= {"max_entries", "max_total_bytes", "max_ratio", "max_part_bytes"}


# -------------------------------------------------------------------------------- zip bombs --
def peak_memory(call):
    """Peak Python memory [bytes] traced while ``call()`` raises WorkbookFileError; its message."""
    tracemalloc.start()
    try:
        with pytest.raises(WorkbookFileError) as info:
            call()
        return tracemalloc.get_traced_memory()[1], str(info.value)
    finally:
        tracemalloc.stop()


def test_a_part_declaring_10_gib_is_refused_without_inflating_it(book, tmp_path):
    p = tmp_path / "declared.xlsx"
    with zipfile.ZipFile(book) as zin, zipfile.ZipFile(p, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            zout.writestr(info.filename, zin.read(info))
        zout.writestr("xl/worksheets/sheet2.xml", b"<worksheet/>")
        zout.filelist[-1].file_size = 10 * 2**30        # the central directory says 10 GiB
    peak, msg = peak_memory(lambda: check_workbook_file(p))
    assert "part 'xl/worksheets/sheet2.xml' declares 10 GiB inflated, above the limit" in msg
    assert peak < 8 * 2**20
    with pytest.raises(RecalcError, match="zip bomb"):
        Recalculator(p, FUNCS)


def test_a_highly_compressed_sheet_is_refused_in_bounded_memory(book, tmp_path):
    # 256 MiB of zeros deflate to about 0.25 MiB (deflate's ratio limit is about 1032:1;
    # RFC 1951 block format, common practice), far beyond any real sheet.
    p = tmp_path / "zeros.xlsx"
    with zipfile.ZipFile(book) as zin, zipfile.ZipFile(p, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            zout.writestr(info.filename, zin.read(info))
        with zout.open("xl/worksheets/sheet2.xml", "w") as member:
            block = bytes(2**20)
            for _ in range(256):
                member.write(block)
    assert os.path.getsize(p) < 2**20
    peak, msg = peak_memory(lambda: check_workbook_file(p))
    assert "part 'xl/worksheets/sheet2.xml' is compressed" in msg and "above the limit 100:1" in msg
    assert peak < 8 * 2**20


def test_a_package_with_too_many_parts_is_refused_from_its_end_record(book, tmp_path):
    p = tmp_path / "many.xlsx"
    with zipfile.ZipFile(book) as zin, zipfile.ZipFile(p, "w") as zout:
        for info in zin.infolist():
            zout.writestr(info.filename, zin.read(info))
        for k in range(LIMITS["max_entries"]):
            zout.writestr(f"xl/media/p{k}.bin", b"")
    peak, msg = peak_memory(lambda: check_workbook_file(p))
    assert f"parts, above the limit {LIMITS['max_entries']}" in msg
    assert peak < 2 * 2**20          # the directory itself is never parsed


# -------------------------------------------------------------------------- entity bombs --
LAUGHS = (b'<?xml version="1.0"?>\n<!DOCTYPE lolz [<!ENTITY lol "lol">'
          + b"".join(b'<!ENTITY lol%d "%s">' % (k, (b"&lol%d;" % (k - 1) if k > 1 else b"&lol;")
                                                    * 10) for k in range(1, 10))
          + b"]>\n")


def entity_bomb(book, tmp_path, part="xl/worksheets/sheet1.xml"):
    def change(name, data):
        if name != part:
            return data
        body = data.split(b"?>", 1)[1] if data.startswith(b"<?xml") else data
        return LAUGHS + body.replace(b"<sheetData>", b"<sheetData>&lol9;", 1)
    return rewrite(book, tmp_path / "laughs.xlsx", change)


def test_openpyxl_reads_every_workbook_through_defusedxml(book, tmp_path):
    # openpyxl uses defusedxml when it is installed (openpyxl docs, "Security").
    assert openpyxl.DEFUSEDXML is True
    from defusedxml import DefusedXmlException
    with pytest.raises(ValueError) as info:      # openpyxl wraps the parser's refusal
        openpyxl.load_workbook(entity_bomb(book, tmp_path))
    assert isinstance(info.value.__cause__, DefusedXmlException), repr(info.value.__cause__)


@pytest.mark.parametrize("part", ["xl/worksheets/sheet1.xml", "xl/workbook.xml",
                                  "[Content_Types].xml", "xl/styles.xml", "_rels/.rels"])
def test_an_xml_entity_bomb_in_any_part_is_refused_in_bounded_memory(book, tmp_path, part):
    path = entity_bomb(book, tmp_path, part)
    peak, msg = peak_memory(lambda: check_workbook_file(path))
    assert f"part {part!r} is not safe XML: it declares a DTD" in msg
    assert peak < 4 * 2**20          # 10^9 'lol's would need gigabytes
    with pytest.raises(RecalcError, match="entity bomb"):
        recalc_file(path, tmp_path / "out.xlsx", FUNCS)
    assert not (tmp_path / "out.xlsx").exists()


def test_a_dtd_hidden_behind_a_long_prolog_is_still_found(book, tmp_path):
    pad = b"<!--" + b" " * 200_000 + b"-->"
    dtd = LAUGHS.split(b"?>", 1)[1]

    def change(name, data):
        if name != "xl/styles.xml":
            return data
        body = data.split(b"?>", 1)[1] if data.startswith(b"<?xml") else data
        return pad + dtd + body
    path = rewrite(book, tmp_path / "pad.xlsx", change)
    with pytest.raises(WorkbookFileError, match="'xl/styles.xml' is not safe XML"):
        check_workbook_file(path)


# ------------------------------------------------------------ formulas are not Python code --
PAYLOADS = [
    '=__import__("os").system("touch {x}")',
    "=cmd|' /C touch {x}'!A0",
    '=EVAL("__import__(\'os\').system(\'touch {x}\')")',
    '=EXEC("open(\'{x}\', \'w\')")',
    '=OPEN("{x}", "w")',
    '=PFX_POWER(A1:G4, __import__("os").system("touch {x}"))',
    '=1;__import__("os").system("touch {x}")',
]


@pytest.mark.parametrize("payload", PAYLOADS, ids=range(len(PAYLOADS)))
def test_formula_text_is_never_run_as_python_or_shell(tmp_path, monkeypatch, payload):
    monkeypatch.chdir(tmp_path)
    marker = tmp_path / "X"
    book = build_book(tmp_path / "payload.xlsx", {"N1": payload.format(x=marker)})
    try:
        summary = recalc_file(book, tmp_path / "out.xlsx", FUNCS)
    except RecalcError as e:
        assert "N1" in str(e) or "payload.xlsx" in str(e)
    else:
        assert summary.values[("Ports", "N1")] in engine.ERROR_VALUES, summary.values
    assert not marker.exists(), "a formula ran Python or shell code"


def test_the_engine_knows_excel_functions_and_registered_ones_and_refuses_others(tmp_path):
    ok = build_book(tmp_path / "ok.xlsx",
                    {"N1": '=IF(SUM(J1:J2)>0, PFX_POWER(A1:G4, 2), _xlfn.IFNA(1, 2))'})
    assert Recalculator(ok, FUNCS).value("Ports", "N1") == pytest.approx(
        RHO * AREA * (V - 2.0) ** 2 * 2.0)          # White, Fluid Mechanics, sec. 3.4 (from memory)
    for coord, text, fragment in (("B9", '=SUM(1)+open("x")', "calls OPEN, which is neither"),
                                  ("C9", "=cmd|' /C calc'!A0", "cannot be read")):
        bad = build_book(tmp_path / f"bad_{coord}.xlsx", {coord: text})
        with pytest.raises(RecalcError, match=rf"cell {coord}: .*{fragment}"):
            Recalculator(bad, FUNCS).evaluate()
