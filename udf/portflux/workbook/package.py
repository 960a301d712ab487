"""Read a workbook package once, in one way, into plain data: sheets, cells, formulas, names.

This is the engine's only reader of a workbook (the write-back reads the result through it again
to prove that it changed nothing but the cached values). It refuses, naming the part, whatever
two readers could understand differently:

* worksheets: every ``<sheet>`` of ``xl/workbook.xml`` must be a worksheet (read) or a chart
  sheet (no cells); a macro or dialog sheet, a relationship of any other type, or a part whose
  content type says worksheet but that no ``<sheet>`` lists is refused;
* sheet titles: empty, longer than 31 characters, holding ``[ ] : * ? / \\``, or equal to another
  title without regard to case (Excel's rules for a sheet name; from memory);
* sheet data: an XML comment, CDATA section or processing instruction in a worksheet part, a row
  or cell without its ``r`` address, a row or cell given twice, a cell with two ``<f>``, ``<v>``
  or ``<is>`` children, a shared formula whose master is missing or given twice, a what-if data
  table, a date cell (``t="d"``) and a worksheet part not encoded in UTF-8;
* formulas: only the text of ``<f>`` elements is a formula; a text cell starting with ``=`` is
  text. Cached values of formula cells are ignored (they are recomputed).

Duplicate zip entries, zip and XML entity bombs are refused before this module runs
(:func:`portflux.workbook.safety.read_workbook_bytes`). Every XML part is parsed with
:mod:`defusedxml` (DTDs forbidden).
"""

from __future__ import annotations

import io
import posixpath
import re
import zipfile
from dataclasses import dataclass, field
from xml.etree.ElementTree import ParseError

from defusedxml.ElementTree import fromstring as _safe_fromstring
from xml.etree.ElementTree import XMLParser as _CParser


def _c_fromstring(data: bytes):
    parser = _CParser()
    parser.feed(data)
    return parser.close()

from .formula import column_number
from .xlvalues import RecalcError, error

__all__ = ["Package", "Sheet", "SheetCells", "formulas_of", "read_package", "read_sheet_cells",
           "coord_name", "split_coord"]

_NS_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
_REL_OFFICE_DOC = _NS_REL + "/officeDocument"
_REL_WORKSHEET = _NS_REL + "/worksheet"
_REL_CHARTSHEET = _NS_REL + "/chartsheet"
_CT_WORKSHEET = ("application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml",
                 "application/vnd.ms-excel.macrosheet+xml",
                 "application/vnd.ms-excel.intlmacrosheet+xml",
                 "application/vnd.openxmlformats-officedocument.spreadsheetml.dialogsheet+xml")
_BAD_TITLE = re.compile(r"[\[\]:*?/\\]")
_COORD = re.compile(r"([A-Za-z]{1,3})([0-9]{1,7})")
_MARKUP = re.compile(rb"<!--|<!\[CDATA\[|<\?")
_COLUMNS: dict = {}


def split_coord(coord: str) -> tuple[int, int]:
    """(row, column) of ``"B7"``; ValueError if it is not a cell address.

    >>> split_coord("B7"), split_coord("aa10")
    ((7, 2), (10, 27))
    """
    m = _COORD.fullmatch(coord)
    if m is None:
        raise ValueError(coord)
    letters = m.group(1)
    col = _COLUMNS.get(letters)
    if col is None:
        col = _COLUMNS[letters] = column_number(letters)
    return int(m.group(2)), col


def coord_name(r: int, c: int) -> str:
    """Address of a (row, column) pair.

    >>> coord_name(7, 2), coord_name(10, 27)
    ('B7', 'AA10')
    """
    letters = ""
    while c:
        c, rem = divmod(c - 1, 26)
        letters = chr(65 + rem) + letters
    return f"{letters}{r}"


@dataclass
class SheetCells:
    """The cells of one worksheet part: ``(row, col)`` keys, 1-based."""
    values: dict = field(default_factory=dict)      # non-formula cells -> scalar
    formulas: dict = field(default_factory=dict)    # formula cells -> formula text
    arrays: dict = field(default_factory=dict)      # array anchor -> (r1, c1, r2, c2)
    cached: set = field(default_factory=set)        # formula cells carrying a cached value
    hidden_rows: set = field(default_factory=set)   # rows marked hidden (SUBTOTAL 101-111)
    max_row: int = 0
    max_col: int = 0


@dataclass
class Sheet:
    title: str
    part: str
    cells: SheetCells


@dataclass
class Package:
    book_part: str
    sheets: list
    names: dict          # (sheet title or None, NAME) -> defined-name text
    strings: list = field(default_factory=list)     # the shared-string table


def _local(tag) -> str:
    return tag.rsplit("}", 1)[-1] if isinstance(tag, str) else ""


def _xml(data: bytes, where: str):
    try:
        if b"<!" not in data:
            # no DOCTYPE, so no entity can be declared: the C parser (three times faster
            # than defusedxml's pure-Python one on a large sheet) sees only the predefined
            # entities and character references
            return _c_fromstring(data)
        return _safe_fromstring(data, forbid_dtd=True)
    except ParseError as exc:
        raise RecalcError(f"{where}: not well-formed XML ({exc})") from None
    except Exception as exc:  # defusedxml's refusals
        raise RecalcError(f"{where}: not safe, well-formed XML ({type(exc).__name__}: {exc})"
                          ) from None


def _part(zf: zipfile.ZipFile, name: str, where: str) -> bytes:
    try:
        return zf.read(name)
    except KeyError:
        raise RecalcError(f"{where}: the package has no part {name!r}") from None


def _rels(zf, part: str, where: str) -> dict:
    name = posixpath.join(posixpath.dirname(part), "_rels", posixpath.basename(part) + ".rels")
    root = _xml(_part(zf, name, where), f"{where}, part {name!r}")
    return {el.get("Id"): (el.get("Type"), el.get("Target"), el.get("TargetMode"))
            for el in root if _local(el.tag) == "Relationship"}


def _resolve(base: str, target: str) -> str:
    if target.startswith("/"):
        return target.lstrip("/")
    return posixpath.normpath(posixpath.join(posixpath.dirname(base), target))


def _inline_text(el) -> str:
    # <is><t>..</t></is> or rich runs <is><r><t>..</t></r>...</is>; phonetic runs (rPh) skipped
    parts = []
    for ch in el:
        tag = _local(ch.tag)
        if tag == "t":
            parts.append(ch.text or "")
        elif tag == "r":
            parts.extend(t.text or "" for t in ch if _local(t.tag) == "t")
    return "".join(parts)


def _shared_strings(zf, book_part, rels, where) -> list:
    for rtype, target, _ in rels.values():
        if rtype and rtype.endswith("/sharedStrings"):
            name = _resolve(book_part, target)
            root = _xml(_part(zf, name, where), f"{where}, part {name!r}")
            return [_inline_text(si) for si in root if _local(si.tag) == "si"]
    return []


def read_sheet_cells(data: bytes, where: str, strings=()) -> SheetCells:
    """Cells, formulas and array ranges of one worksheet part (its raw bytes).

    Shared formulas are expanded with openpyxl's MIT-licensed formula translator, as Excel
    expands them. Raises :class:`RecalcError` naming ``where`` (and the cell) on anything listed
    in the module notes.
    """
    if data[:2] in (b"\xff\xfe", b"\xfe\xff") or re.match(
            rb"<\?xml[^>]*encoding=[\"'](?!utf-8)", data[:200], re.I):
        raise RecalcError(f"{where}: the part is not encoded in UTF-8; refusing it")
    body = data[data.index(b"?>") + 2:] if data.lstrip(b"\xef\xbb\xbf").startswith(b"<?xml") \
        else data
    m = _MARKUP.search(body)
    if m is not None:
        what = {b"<!--": "an XML comment", b"<![CDATA[": "a CDATA section",
                b"<?": "a processing instruction"}[m.group()]
        raise RecalcError(f"{where}: the part holds {what}, which no spreadsheet writes and "
                          f"readers understand differently; refusing it")
    root = _xml(data, where)
    out = SheetCells()
    ns = root.tag[:root.tag.index("}") + 1] if root.tag.startswith("{") else ""
    sheet_data = [el for el in root if el.tag == ns + "sheetData"]
    if len(sheet_data) != 1:
        raise RecalcError(f"{where}: the part has {len(sheet_data)} <sheetData> elements "
                          f"(expected one); refusing it")
    seen_rows = set()
    masters: dict[str, tuple] = {}
    dependents = []
    row_tag, cell_tag = ns + "row", ns + "c"
    kid_names = {ns + "f": "f", ns + "v": "v", ns + "is": "is"}
    for row in sheet_data[0]:
        if row.tag != row_tag:
            raise RecalcError(f"{where}: unexpected <{_local(row.tag)}> inside <sheetData>")
        r_attr = row.get("r")
        if r_attr is None or not (r_attr.isascii() and r_attr.isdigit()) or len(r_attr) > 7:
            raise RecalcError(f"{where}: a row has no valid 'r' (number) attribute; refusing "
                              f"the part")
        r = int(r_attr)
        if r in seen_rows:
            raise RecalcError(f"{where}: row {r} is given twice; refusing the part")
        seen_rows.add(r)
        if row.get("hidden") in ("1", "true"):
            out.hidden_rows.add(r)
        for c in row:
            if c.tag != cell_tag:
                if _local(c.tag) == "extLst":
                    continue
                raise RecalcError(f"{where}, row {r}: unexpected <{_local(c.tag)}> in a row")
            coord = c.get("r")
            try:
                rc = split_coord(coord or "")
            except ValueError:
                raise RecalcError(f"{where}, row {r}: a cell has no valid 'r' (address) "
                                  f"attribute ({coord!r}); refusing the part") from None
            if rc[0] != r:
                raise RecalcError(f"{where}: cell {coord} is stored in row {r}; refusing "
                                  f"the part")
            if rc in out.values or rc in out.formulas:
                raise RecalcError(f"{where}: cell {coord} is given twice; refusing the part")
            kids = {}
            for ch in c:
                tag = kid_names.get(ch.tag, ch.tag)
                if tag in kids:
                    raise RecalcError(f"{where}, cell {coord}: two <{tag}> elements; "
                                      f"refusing the part")
                kids[tag] = ch
            out.max_row = max(out.max_row, rc[0])
            out.max_col = max(out.max_col, rc[1])
            f = kids.get("f")
            if f is not None:
                v = kids.get("v")
                if (v is not None and (v.text or "").strip()) or kids.get("is") is not None:
                    out.cached.add(rc)
                kind = f.get("t", "normal")
                text = f.text or ""
                if kind == "dataTable":
                    raise RecalcError(f"{where}, cell {coord}: what-if data tables are not "
                                      f"supported")
                if kind == "shared":
                    si = f.get("si")
                    if si is None:
                        raise RecalcError(f"{where}, cell {coord}: a shared formula without "
                                          f"its 'si' index")
                    if text.strip():
                        if si in masters:
                            raise RecalcError(f"{where}, cell {coord}: shared formula {si} "
                                              f"has two masters; refusing the part")
                        masters[si] = (coord, text)
                        out.formulas[rc] = text
                    else:
                        dependents.append((rc, coord, si))
                        out.formulas[rc] = None
                    continue
                if kind not in ("normal", "array"):
                    raise RecalcError(f"{where}, cell {coord}: formula type {kind!r} is not "
                                      f"supported")
                if not text.strip():
                    raise RecalcError(f"{where}, cell {coord}: an empty formula")
                out.formulas[rc] = text
                if kind == "array":
                    ref = (f.get("ref") or coord).replace("$", "")
                    a, _, b = ref.partition(":")
                    try:
                        (r1, c1), (r2, c2) = split_coord(a), split_coord(b or a)
                    except ValueError:
                        raise RecalcError(f"{where}, cell {coord}: array range {ref!r} is not "
                                          f"a range") from None
                    if (r1, c1) != rc or r2 < r1 or c2 < c1:
                        raise RecalcError(f"{where}, cell {coord}: array range {ref!r} does "
                                          f"not start at its formula cell")
                    out.arrays[rc] = (r1, c1, r2, c2)
                    out.max_row, out.max_col = max(out.max_row, r2), max(out.max_col, c2)
                continue
            t = c.get("t", "n")
            v = kids.get("v")
            vt = v.text if v is not None else None
            if t == "inlineStr":
                isel = kids.get("is")
                value = _inline_text(isel) if isel is not None else None
            elif vt is None:
                value = None
            elif t == "s":
                try:
                    value = strings[int(vt)]
                except (ValueError, IndexError):
                    raise RecalcError(f"{where}, cell {coord}: shared string {vt!r} does not "
                                      f"exist") from None
            elif t in ("str",):
                value = vt
            elif t == "b":
                value = vt.strip() in ("1", "true")
            elif t == "e":
                try:
                    value = error(vt.strip())
                except KeyError:
                    raise RecalcError(f"{where}, cell {coord}: unknown error value "
                                      f"{vt!r}") from None
            elif t == "n":
                try:
                    value = float(vt)
                except ValueError:
                    raise RecalcError(f"{where}, cell {coord}: {vt!r} is not a number"
                                      ) from None
            else:
                raise RecalcError(f"{where}, cell {coord}: cell type t={t!r} (dates stored as "
                                  f"text) is not supported; store dates as numbers")
            if value is not None:
                out.values[rc] = value
    if dependents:
        from openpyxl.formula.translate import Translator

        for rc, coord, si in dependents:
            if si not in masters:
                raise RecalcError(f"{where}, cell {coord}: shared formula {si} has no master "
                                  f"cell; refusing the part")
            origin, text = masters[si]
            try:
                out.formulas[rc] = Translator("=" + text.lstrip("="), origin
                                              ).translate_formula(coord)[1:]
            except Exception as exc:  # noqa: BLE001 - openpyxl's tokenizer errors
                raise RecalcError(f"{where}, cell {coord}: shared formula {si} cannot be read "
                                  f"({type(exc).__name__})") from None
    return out


def read_package(data: bytes, where: str) -> Package:
    """Every worksheet of a workbook package (its bytes) with its cells, and the defined names.

    ``where`` names the file in messages.
    """
    try:
        zf = zipfile.ZipFile(io.BytesIO(data))
    except zipfile.BadZipFile as exc:
        raise RecalcError(f"{where}: not a readable .xlsx package ({exc})") from None
    with zf:
        root_rels = _rels(zf, "", where) if "_rels/.rels" in zf.namelist() else {}
        book_part = next((_resolve("", t) for ty, t, _ in root_rels.values()
                          if ty == _REL_OFFICE_DOC), None)
        if book_part is None:
            raise RecalcError(f"{where}: the package names no workbook part")
        book = _xml(_part(zf, book_part, where), f"{where}, part {book_part!r}")
        rels = _rels(zf, book_part, where)
        strings = _shared_strings(zf, book_part, rels, where)
        sheets, titles, parts = [], {}, set()
        local_ids = []
        ns = book.tag[:book.tag.index("}") + 1] if book.tag.startswith("{") else ""

        def listed(group, item):
            # only <group><item/></group> directly under the workbook root, in its namespace:
            # what Excel reads, not look-alikes nested in extensions
            return [el for g in book if g.tag == ns + group for el in g if el.tag == ns + item]
        for el in listed("sheets", "sheet"):
            title = el.get("name") or ""
            if not title or len(title) > 31 or _BAD_TITLE.search(title) or \
                    title.startswith("'") or title.endswith("'"):
                raise RecalcError(f"{where}: sheet title {title!r} is not a valid sheet name "
                                  f"(1 to 31 characters, none of [ ] : * ? / \\, not starting "
                                  f"or ending with an apostrophe); refusing the workbook")
            if title.upper() in titles:
                raise RecalcError(f"{where}: two sheets are titled {title!r} (Excel does not "
                                  f"tell case apart); refusing the workbook")
            titles[title.upper()] = title
            local_ids.append(title)
            rid = el.get(f"{{{_NS_REL}}}id")
            rtype, target, mode = rels.get(rid, (None, None, None))
            if rtype == _REL_CHARTSHEET:
                continue
            if rtype != _REL_WORKSHEET or not target or mode == "External":
                raise RecalcError(f"{where}: sheet {title!r} is linked as {rtype!r}, not as a "
                                  f"worksheet; refusing the workbook (macro and dialog sheets "
                                  f"are not evaluated)")
            part = _resolve(book_part, target)
            if part in parts:
                raise RecalcError(f"{where}: two sheets share the part {part!r}")
            parts.add(part)
            cells = read_sheet_cells(_part(zf, part, where),
                                     f"{where}, sheet {title!r} (part {part!r})", strings)
            sheets.append(Sheet(title, part, cells))
        for rid, (rtype, target, _) in rels.items():
            if rtype == _REL_WORKSHEET and _resolve(book_part, target or "") not in parts:
                raise RecalcError(f"{where}: part {_resolve(book_part, target or '')!r} is "
                                  f"linked as a worksheet but is not a sheet of the workbook; "
                                  f"refusing it")
        types = _xml(_part(zf, "[Content_Types].xml", where), f"{where}, [Content_Types].xml")
        for el in types:
            ct = el.get("ContentType")
            if ct not in _CT_WORKSHEET:
                continue
            if _local(el.tag) == "Default":
                raise RecalcError(f"{where}: [Content_Types].xml makes every "
                                  f"'.{el.get('Extension')}' part a worksheet; refusing it")
            name = (el.get("PartName") or "").lstrip("/")
            if name not in parts:
                raise RecalcError(f"{where}: part {name!r} has a worksheet content type but is "
                                  f"not a worksheet of the workbook; refusing it")
        names = {}
        for el in listed("definedNames", "definedName"):
            name = (el.get("name") or "").upper()
            scope = el.get("localSheetId")
            title = None
            if scope is not None:
                try:
                    title = local_ids[int(scope)]
                except (ValueError, IndexError):
                    raise RecalcError(f"{where}: defined name {name!r} is local to sheet "
                                      f"number {scope!r}, which does not exist") from None
            if (title, name) in names:
                raise RecalcError(f"{where}: defined name {name!r} is given twice; refusing "
                                  f"the workbook")
            names[(title, name)] = el.text or ""
    return Package(book_part, sheets, names, strings)


def formulas_of(pkg: Package) -> tuple[dict, dict, dict]:
    """What a package's formulas are, as every consumer of them sees them.

    Returns ``({(sheet, cell): formula text}, {(sheet, anchor): "A1:B3"}, {name: text})``:
    every formula cell (array anchors once, shared formulas expanded), every array range, and
    the defined names (``"Sheet!NAME"`` for a name local to a sheet).
    """
    formulas, arrays = {}, {}
    for sh in pkg.sheets:
        for (r, c), text in sh.cells.formulas.items():
            formulas[(sh.title, coord_name(r, c))] = text
        for (r, c), (r1, c1, r2, c2) in sh.cells.arrays.items():
            arrays[(sh.title, coord_name(r, c))] = f"{coord_name(r1, c1)}:{coord_name(r2, c2)}"
    names = {(f"{t}!{n}" if t else n): text for (t, n), text in pkg.names.items()}
    return formulas, arrays, names
