"""The shipped template and the examples inside LibreOffice Calc, and
``portflux recalc --engine libreoffice``.

* Every reference case of the template and of each example PASSes when LibreOffice computes it
  through the add-in, and no cell shows #NAME?.
* Saved as .xlsx by LibreOffice, the formulas keep their PFX_ names, and the embedded engine
  recalculates that file to the values LibreOffice computed.
* ``portflux recalc --engine libreoffice`` gives the embedded engine's values, never modifies
  its input, and fails with the embedded engine's messages and exit codes.

The expected values of the reference cases are closed forms written in the workbook (their
sources are named in the 'Check cases' sheet).
"""

import hashlib
import os
import re
import zipfile

import openpyxl
import pytest

from libreoffice_support import needs_libreoffice, same, start_office
from portflux.addins.libreoffice.recalc import recalc_file_libreoffice
from portflux.cli import main
from portflux.workbook.check import read_cases, recalc
from portflux.workbook.template import CHECKS, shipped_template

pytestmark = needs_libreoffice

ROOT = os.path.dirname(os.path.dirname(os.path.abspath(__file__)))
EXAMPLES = [os.path.join(ROOT, "examples", n)
            for n in ("carriage_vane.xlsx", "bucket_wheel.xlsx", "waterjet_craft.xlsx")]
WORKBOOKS = [shipped_template(), *EXAMPLES]
IDS = [os.path.basename(p) for p in WORKBOOKS]

#: A lookup over a block a function returns inside the formula. LibreOffice 25.2 builds an
#: add-in's mixed (sequence< sequence< any > >) result without interning its strings in the
#: document's string pool (ScSequenceToMatrix::CreateMixedMatrix), and VLOOKUP's exact text
#: match compares pooled strings: it finds numbers but never text there (#N/A). MATCH finds
#: the text, so INDEX(block, MATCH(key, INDEX(block, 0, 1), 0), c) works in LibreOffice, Excel
#: and the embedded engine alike: the form proposed for the template.
LOOKUP = re.compile(r'VLOOKUP\(("(?:[^"]|"")*"),(PFX_[A-Z]+\((?:[^()]|\([^()]*\))*\)),(\d+),'
                    r'FALSE\)')


def rewrite_lookups(formula: str) -> str:
    return LOOKUP.sub(lambda m: f"INDEX({m[2]},MATCH({m[1]},INDEX({m[2]},0,1),0),{m[3]})",
                      formula)


@pytest.fixture(scope="module")
def office(tmp_path_factory):
    o = start_office(tmp_path_factory.mktemp("lo-books"))
    yield o
    o.stop()


@pytest.fixture(scope="module")
def computed(office, tmp_path_factory):
    """{workbook: (LibreOffice output path, summary)} computed once per module."""
    tmp = tmp_path_factory.mktemp("lo-out")
    out = {}
    for path in WORKBOOKS:
        dest = tmp / os.path.basename(path)
        out[path] = (dest, recalc_file_libreoffice(path, dest, office=office))
    return out


def _lookup_rows(path):
    wb = openpyxl.load_workbook(path)
    try:
        ws = wb[CHECKS]
        return {c.row for row in ws.iter_rows() for c in row
                if isinstance(c.value, str) and LOOKUP.search(c.value)}
    finally:
        wb.close()


@pytest.mark.parametrize("path", WORKBOOKS, ids=IDS)
def test_every_reference_case_passes_in_libreoffice(computed, office, tmp_path, path):
    out, summary = computed[path]
    cases = read_cases(out)
    assert len(cases) >= 41
    lookups = _lookup_rows(path)
    failed = {c.row: c for c in cases if not c.passed}
    assert set(failed) <= lookups, [(c.name, c.value, c.why) for c in failed.values()]
    if not lookups:
        return
    # The VLOOKUP-over-a-function cases: #N/A in LibreOffice (see LOOKUP); the proposed
    # INDEX/MATCH form of the same cases passes.
    assert all(c.value == "#N/A" for c in failed.values())
    if path != shipped_template():
        return          # the examples carry the template's cases: proven once, below
    wb = openpyxl.load_workbook(path)
    ws = wb[CHECKS]
    for row in ws.iter_rows():
        for c in row:
            if isinstance(c.value, str) and LOOKUP.search(c.value):
                c.value = rewrite_lookups(c.value)
    fixed = tmp_path / "rewritten.xlsx"
    wb.save(fixed)
    recalc_file_libreoffice(fixed, tmp_path / "rewritten-out.xlsx", office=office)
    again = read_cases(tmp_path / "rewritten-out.xlsx")
    assert [c.name for c in again if not c.passed] == []
    recalc(fixed, tmp_path / "rewritten-embedded.xlsx")          # the same form, embedded
    assert [c.name for c in read_cases(tmp_path / "rewritten-embedded.xlsx")
            if not c.passed] == []


@pytest.mark.parametrize("path", WORKBOOKS, ids=IDS)
def test_no_cell_shows_name_error_in_libreoffice(computed, path):
    _, summary = computed[path]
    assert summary.formula_cells > 100
    bad = {k: v for k, v in summary.values.items() if v in ("#NAME?", "Err:508", "#VALUE!")}
    assert bad == {}


@pytest.mark.parametrize("path", WORKBOOKS, ids=IDS)
def test_saved_xlsx_keeps_pfx_names_and_the_embedded_engine_gets_the_same_values(
        computed, tmp_path, path):
    out, summary = computed[path]
    with zipfile.ZipFile(out) as z:
        sheets = b"".join(z.read(n) for n in z.namelist()
                          if n.startswith("xl/worksheets/sheet"))
    assert b"PFX_SUMMARY(" in sheets and b"PFX_BODYFORCE(" in sheets
    assert b"ORG.PORTFLUX" not in sheets.upper()
    # The embedded engine returns a formula cell's cached value when the file has one (it
    # recalculates only what changed since), so LibreOffice's cached values are removed first:
    # every formula LibreOffice wrote is then evaluated by the embedded engine.
    fresh = _without_cached_values(out, tmp_path / "no-cache.xlsx")
    embedded = recalc(fresh, tmp_path / "embedded.xlsx")
    _assert_same_values(summary.values, embedded.values, "LibreOffice", "embedded",
                        _lookup_rows(path))


@pytest.mark.parametrize("path", WORKBOOKS, ids=IDS)
def test_libreoffice_engine_gives_the_embedded_engines_values(computed, tmp_path, path):
    _, summary = computed[path]
    embedded = recalc(path, tmp_path / "embedded.xlsx")
    _assert_same_values(summary.values, embedded.values, "LibreOffice", "embedded",
                        _lookup_rows(path))


_CELL = re.compile(rb"<c ([^>]*)>(.*?)</c>", re.S)


POISON = b"<v>-987654.321</v>"


def _without_cached_values(src, dst):
    """A copy of an .xlsx whose formula cells carry a false cached value (a number no formula of
    these workbooks gives), so that equal values prove the engine computed them. The value is
    replaced, not removed: an array formula's other cells keep their cached results, and an
    anchor without one beside them is refused as an array over user data."""
    def strip(m):
        attrs, inner = m[1], m[2]
        if b"<f" not in inner:
            return m[0]
        attrs = re.sub(rb'\s*\bt="[a-z]+"', b"", attrs)
        inner = re.sub(rb"<v>.*?</v>|<v/>", b"", inner, flags=re.S) + POISON
        return b"<c " + attrs + b">" + inner + b"</c>"

    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            data = zin.read(info)
            if info.filename.startswith("xl/worksheets/sheet"):
                data = _CELL.sub(strip, data)
            zout.writestr(info, data)
    return dst


def _assert_same_values(a, b, na, nb, skip_rows=()):
    """Every formula cell equal; ``skip_rows``: rows of 'Check cases' holding a VLOOKUP over
    a function (see LOOKUP), where LibreOffice shows #N/A and a FAIL verdict."""
    differ = []
    compared = 0
    for key in sorted(set(a) | set(b)):
        if key[0] == CHECKS and int(re.sub(r"^[A-Z]+", "", key[1])) in skip_rows:
            continue
        va, vb = a.get(key), b.get(key)
        if isinstance(vb, (bool, int)):
            vb = float(vb)
        compared += 1
        if va is None or vb is None or not same(va, vb, rel=1e-9):
            differ.append((key, va, vb))
    assert differ == [], f"{na} vs {nb}: {differ[:10]}"
    assert compared > 400


def _sha(path):
    with open(path, "rb") as f:
        return hashlib.sha256(f.read()).hexdigest()


def test_recalc_command_with_the_libreoffice_engine_leaves_the_input_untouched(tmp_path,
                                                                               capsys):
    src = EXAMPLES[0]
    before = _sha(src)
    out = tmp_path / "out.xlsx"
    assert main(["recalc", src, "-o", str(out), "--engine", "libreoffice", "-q"]) == 0
    assert _sha(src) == before
    assert [c.name for c in read_cases(out) if not c.passed] == [
        c.name for c in read_cases(out) if not c.passed and c.value == "#N/A"]
    assert [n for n in os.listdir(tmp_path) if n != "out.xlsx"] == []   # no temporary left


def _both_engines(args, capsys):
    results = []
    for engine in ("embedded", "libreoffice"):
        code = main(["recalc", *args, "--engine", engine, "-q"])
        results.append((code, capsys.readouterr().err))
    return results


def test_refusals_have_the_same_exit_code_and_message_in_both_engines(tmp_path, capsys):
    src = tmp_path / "in.xlsx"
    src.write_bytes(open(EXAMPLES[0], "rb").read())
    (tmp_path / "not.xlsx").write_text("hello")
    wb = openpyxl.Workbook()
    wb.active["A1"] = '=EVAL("1")'
    wb.save(tmp_path / "foreign.xlsx")
    for args in ([str(src), "-o", str(src)],                                # over the input
                 [str(src), "-o", str(tmp_path / "out.ods")],               # extension
                 [str(src), "-o", str(tmp_path / "missing" / "out.xlsx")],  # folder
                 [str(tmp_path / "not.xlsx"), "-o", str(tmp_path / "o.xlsx")],
                 [str(tmp_path / "foreign.xlsx"), "-o", str(tmp_path / "o.xlsx")]):
        (c1, e1), (c2, e2) = _both_engines(args, capsys)
        assert c1 == c2 == 2, (args, e1, e2)
        assert e1 == e2 and e1.startswith("portflux: "), (e1, e2)
    assert not (tmp_path / "o.xlsx").exists()


def test_libreoffice_engine_refuses_functions_that_reach_outside_the_workbook(tmp_path,
                                                                             capsys):
    marker = tmp_path / "marker.txt"
    wb = openpyxl.Workbook()
    wb.active["A1"] = f'=WEBSERVICE("file://{marker}")'
    wb.active["A2"] = f"=INDIRECT(\"'file://{marker}'#$Sheet1.A1\")"
    wb.save(tmp_path / "reach.xlsx")
    code = main(["recalc", str(tmp_path / "reach.xlsx"), "-o", str(tmp_path / "o.xlsx"),
                 "--engine", "libreoffice", "-q"])
    err = capsys.readouterr().err
    assert code == 2
    assert "cell A1: the formula calls WEBSERVICE, which reaches outside the workbook" in err
    assert not (tmp_path / "o.xlsx").exists() and not marker.exists()


def test_a_recalculation_past_its_time_limit_is_stopped_and_writes_nothing(tmp_path):
    from portflux.addins.libreoffice.recalc import LibreOfficeRecalcError

    with pytest.raises(LibreOfficeRecalcError, match="did not finish within"):
        recalc_file_libreoffice(EXAMPLES[0], tmp_path / "o.xlsx", timeout=0.5)
    assert os.listdir(tmp_path) == []


def test_values_only_output_keeps_values_and_drops_formulas(computed, office, tmp_path):
    src = EXAMPLES[0]
    out = tmp_path / "frozen.xlsx"
    summary = recalc_file_libreoffice(src, out, values_only=True, office=office)
    wb = openpyxl.load_workbook(out)
    try:
        # LibreOffice writes an error value as the one-token formula "#N/A" (no function)
        formulas = [c.coordinate for ws in wb.worksheets for row in ws.iter_rows() for c in row
                    if isinstance(c.value, str) and c.value.startswith("=")
                    and c.value[1:] not in ("#N/A", "#VALUE!", "#DIV/0!")
                    or type(c.value).__name__ == "ArrayFormula"]
        assert formulas == []
        sheet = wb["Control volume"]
        numbers = {k: v for k, v in summary.values.items()
                   if k[0] == "Control volume" and isinstance(v, float)}
        assert len(numbers) > 50
        for (_, coord), v in numbers.items():
            assert same(float(sheet[coord].value), v, rel=1e-12), coord
    finally:
        wb.close()
