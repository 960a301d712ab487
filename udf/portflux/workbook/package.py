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
  text. Cached values of formula cells are ignored (they are recomputed). An element inside
  ``<f>`` or ``<v>``, or a cell child other than ``<f>``, ``<v>``, ``<is>``, is refused;
* values: a number in ``<v>`` follows the xlsx grammar (ASCII digits, sign, point, exponent:
  no ``1_000``, no Arabic-Indic or full-width digits, no ``inf``), a boolean is ``0`` or ``1``,
  a shared-string index is ASCII digits. ``_xHHHH_`` escapes in text are decoded as Excel does;
* namespaces: the workbook, its worksheets and the shared strings must be in the transitional
  SpreadsheetML namespace; a part in the strict namespace (``http://purl.oclc.org/ooxml/...``),
  a namespace written with character references, or a markup-compatibility alternative
  (``mc:AlternateContent``) holding SpreadsheetML is refused. Excel itself writes alternatives
  that hold no SpreadsheetML (the workbook's saved path): those are read past;
* relationships: two relationships of one part sharing an Id, two shared-string tables;
* nothing outside the workbook (:func:`check_nothing_external`): every relationship with
  ``TargetMode="External"`` (linked pictures, OLE links, other workbooks) except hyperlinks,
  every data connection, query table, external link, OLE or ActiveX object and web add-in --
  found by relationship type and content type, whatever the part is called -- is refused
  before any engine or renderer sees the file;
* array formulas covering more than :data:`MAX_ARRAY_CELLS` cells in all.

With ``layout=True`` the reader also parses what a renderer needs to draw the sheets (styles,
column widths, merged cells, print set-up, conditional formats whose formulas the engine
reads, charts whose series are plain references, embedded PNG/JPEG pictures), keeping only
elements of the namespaces it checked: :mod:`.rebuild` writes the copy LibreOffice opens from
that, so LibreOffice never reads the user's file.

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
from ..excel import excerpt

__all__ = ["MAX_ARRAY_CELLS", "Package", "Sheet", "SheetCells", "check_nothing_external",
           "formulas_of", "read_package", "read_sheet_cells", "coord_name", "split_coord"]

#: Most cells the array formulas of one workbook may cover together (the template's cover 753).
#: Each covered cell is a value the engine computes, sends and writes: a 4 KB file with one
#: array over 10^6 cells would otherwise cost the recalculation more than a gigabyte.
MAX_ARRAY_CELLS = 250_000

_NS_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"
_REL_OFFICE_DOC = _NS_REL + "/officeDocument"
_REL_WORKSHEET = _NS_REL + "/worksheet"
_REL_CHARTSHEET = _NS_REL + "/chartsheet"
_CT_WORKSHEET = ("application/vnd.openxmlformats-officedocument.spreadsheetml.worksheet+xml",
                 "application/vnd.ms-excel.macrosheet+xml",
                 "application/vnd.ms-excel.intlmacrosheet+xml",
                 "application/vnd.openxmlformats-officedocument.spreadsheetml.dialogsheet+xml")
_NS_MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
_NS_MC = "http://schemas.openxmlformats.org/markup-compatibility/2006"
_STRICT = "http://purl.oclc.org/ooxml/"
_REL_HYPERLINK = _NS_REL + "/hyperlink"
#: Relationship types (their last segment) through which a workbook reaches other files, data
#: sources or programs: refused whatever the target and wherever the part.
_OUTSIDE_TYPES = {
    "connections": "a data connection", "queryTable": "a query table",
    "externalLink": "a link to another workbook", "externalLinkPath": "another workbook",
    "xlExternalLinkPath": "another workbook", "xlPathMissing": "another workbook",
    "xlStartup": "another workbook", "xlAlternateStartup": "another workbook",
    "xlLibrary": "another workbook", "oleObject": "an OLE object",
    "package": "an embedded package (OLE)", "activeXControl": "an ActiveX control",
    "activeXControlBinary": "an ActiveX control", "webextension": "an Office web add-in",
    "webextensiontaskpanes": "an Office web add-in", "attachedTemplate": "a template file",
    "frame": "an HTML frame", "subDocument": "a sub-document", "dataModel": "a data model"}
#: Content types of the same things (a renamed part is found by its content type).
_OUTSIDE_CONTENT = {
    "application/vnd.openxmlformats-officedocument.spreadsheetml.connections+xml":
        "a data connection",
    "application/vnd.openxmlformats-officedocument.spreadsheetml.queryTable+xml":
        "a query table",
    "application/vnd.openxmlformats-officedocument.spreadsheetml.externalLink+xml":
        "a link to another workbook",
    "application/vnd.openxmlformats-officedocument.oleObject": "an OLE object",
    "application/vnd.ms-office.activeX+xml": "an ActiveX control",
    "application/vnd.ms-office.activeX": "an ActiveX control",
    "application/vnd.ms-office.webextension+xml": "an Office web add-in",
    "application/vnd.ms-office.webextensiontaskpanes+xml": "an Office web add-in"}
#: Where Excel stores those parts (also refused by name, for a part without relationship).
_OUTSIDE_PATHS = ("xl/externallinks/", "xl/connections.xml", "xl/querytables/")
_XMLNS = re.compile(rb"""xmlns(?::[^\s=/>]+)?\s*=\s*(?:"([^"]*)"|'([^']*)')""")
_XNUMBER = re.compile(r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
_XESCAPE = re.compile(r"_x([0-9A-Fa-f]{4})_")
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
    # read with layout=True only (None otherwise): what a renderer needs
    styles: dict | None = None      # (row, col) -> cell format index ("s"), where not 0
    rows: dict | None = None        # row -> {attribute: text} of its <row> (height, hidden...)
    parts: list | None = None       # the other children of <worksheet>, as parsed elements


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
    spelled: dict = field(default_factory=dict)     # (sheet or None, NAME) -> (name, hidden)
    states: dict = field(default_factory=dict)      # sheet title -> "visible", "hidden", ...
    layout: object = None                 # :class:`.layout.Layout` (layout.read_with_layout)


def _local(tag) -> str:
    return tag.rsplit("}", 1)[-1] if isinstance(tag, str) else ""


#: An XML declaration naming an encoding (in the first bytes of a part).
_DECLARED_ENCODING = re.compile(rb'\s*(?:\xef\xbb\xbf)?<\?xml[^>]*?\bencoding\s*=\s*["\']([^"\']*)["\']')


def _plainly_without_dtd(data: bytes) -> bool:
    """True where the bytes are UTF-8 (or ASCII) and hold no ``<!``: then no DOCTYPE, so no
    entity, can be declared. A part in UTF-16 or a declared 8-bit encoding (EBCDIC spells
    ``<!`` otherwise) goes to the guarded parser instead."""
    if b"<!" in data or b"\x00" in data[:4] or data.startswith((b"\xff\xfe", b"\xfe\xff")):
        return False
    m = _DECLARED_ENCODING.match(data[:256])
    return m is None or m.group(1).lower() in (b"utf-8", b"utf8")


def _xml(data: bytes, where: str):
    try:
        if _plainly_without_dtd(data):
            # the C parser (three times faster than defusedxml's pure-Python one on a large
            # sheet) then sees only the predefined entities and character references
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


def rels_name(part: str) -> str:
    """The relationship part of a part: ``xl/_rels/workbook.xml.rels`` of ``xl/workbook.xml``."""
    return posixpath.join(posixpath.dirname(part), "_rels", posixpath.basename(part) + ".rels")


def _rels_of(data: bytes, name: str, where: str) -> dict:
    root = _xml(data, f"{where}, part {name!r}")
    out = {}
    for el in root:
        if _local(el.tag) != "Relationship":
            continue
        rid = el.get("Id")
        if rid in out:
            raise RecalcError(f"{where}, part {name!r}: two relationships share the Id "
                              f"{rid!r}; readers differ in which one they follow, so the "
                              f"workbook is refused")
        out[rid] = (el.get("Type"), el.get("Target"), el.get("TargetMode"))
    return out


def _rels(zf, part: str, where: str) -> dict:
    name = rels_name(part)
    return _rels_of(_part(zf, name, where), name, where)


def _namespaces(data: bytes, place: str) -> set:
    """The namespaces an XML part declares; refuses the strict namespace and declarations
    written with character references (which could hide it). ``place`` names the part."""
    found = set()
    for m in _XMLNS.finditer(data):
        uri = (m.group(1) if m.group(1) is not None else m.group(2)).decode("utf-8", "replace")
        if "&" in uri:
            raise RecalcError(f"{place}: a namespace is written with character references "
                              f"({excerpt(uri)}); refusing the part")
        if uri.startswith(_STRICT):
            raise RecalcError(f"{place}: the part is in the strict Open XML namespace ({uri}); "
                              f"portflux reads transitional workbooks only: save it as "
                              f"'Excel Workbook (*.xlsx)'")
        found.add(uri)
    return found


def _no_alternatives(root, data: bytes, place: str) -> None:
    """Refuse a markup-compatibility alternative (mc:AlternateContent) holding SpreadsheetML:
    Excel and LibreOffice pick one of its branches, this reader none."""
    if _NS_MC.encode() not in data:
        return
    main = "{" + _NS_MAIN + "}"
    for alt in root.iter("{" + _NS_MC + "}AlternateContent"):
        for el in alt.iter():
            if isinstance(el.tag, str) and el.tag.startswith(main):
                raise RecalcError(f"{place}: the part holds a markup-compatibility "
                                  f"alternative (mc:AlternateContent) with SpreadsheetML "
                                  f"<{_local(el.tag)}>; readers choose different branches of "
                                  f"it, so the workbook is refused")


def _outside(kind: str, what: str, where: str) -> RecalcError:
    return RecalcError(f"{where}: the workbook links to other files or data sources ({what}, "
                       f"{kind}); refusing it: portflux never lets a workbook reach outside "
                       f"itself (remove the link or connection in the spreadsheet and save "
                       f"again)")


def check_nothing_external(zf: zipfile.ZipFile, where: str) -> int:
    """Refuse a package that reaches outside itself; return its count of external hyperlinks.

    Every ``.rels`` part is read: an Id given twice, a relationship of a type in
    :data:`_OUTSIDE_TYPES` or of the strict namespace, or any ``TargetMode="External"``
    other than a hyperlink is refused; so is a part whose content type (``Default`` or
    ``Override``) is one of :data:`_OUTSIDE_CONTENT` and a part where Excel keeps external
    links, connections or query tables. Every XML part is checked for the strict namespace.
    External hyperlinks (a click target, never fetched on opening or printing) are counted,
    not refused; the copy LibreOffice opens carries none.
    """
    hyperlinks = 0
    for info in zf.infolist():
        if info.is_dir():
            continue
        name = info.filename
        low = name.lower()
        if low.startswith(_OUTSIDE_PATHS):
            raise _outside(f"part {name!r}", "a part where Excel keeps external links, data "
                           "connections or query tables", where)
        data = zf.read(info)
        if data.lstrip(b"\xef\xbb\xbf \t\r\n")[:1] == b"<":
            _namespaces(data, f"{where}, part {name!r}")
        if not low.endswith(".rels"):
            continue
        for rid, (rtype, target, mode) in _rels_of(data, name, where).items():
            rtype = rtype or ""
            tail = rtype.rsplit("/", 1)[-1]
            shown = excerpt(target or "", 80)
            if rtype.startswith(_STRICT):
                raise RecalcError(f"{where}: part {name!r} uses strict Open XML relationships "
                                  f"({rtype}); portflux reads transitional workbooks only: "
                                  f"save it as 'Excel Workbook (*.xlsx)'")
            if tail in _OUTSIDE_TYPES:
                raise _outside(f"relationship {rid!r} of part {name!r} to {shown!r}",
                               _OUTSIDE_TYPES[tail], where)
            if (mode or "").strip().lower() == "external":
                if rtype == _REL_HYPERLINK:
                    hyperlinks += 1
                    continue
                what = "a picture" if tail == "image" else f"a {tail!r} relationship"
                raise RecalcError(
                    f"{where}: part {name!r} links {what} to {shown!r} outside the workbook "
                    f"(relationship {rid!r}, TargetMode=\"External\"); refusing it: portflux "
                    f"never lets a workbook make a program fetch a file or a web address "
                    f"(embed the picture or object instead of linking it)")
    types = _xml(_part(zf, "[Content_Types].xml", where), f"{where}, [Content_Types].xml")
    for el in types:
        what = _OUTSIDE_CONTENT.get((el.get("ContentType") or "").split(";")[0].strip())
        if what:
            part = el.get("PartName") or f"every '.{el.get('Extension')}' part"
            raise _outside(f"[Content_Types].xml, {part!r}", what, where)
    return hyperlinks


def _resolve(base: str, target: str) -> str:
    if target.startswith("/"):
        return target.lstrip("/")
    return posixpath.normpath(posixpath.join(posixpath.dirname(base), target))


def _unescape(text: str) -> str:
    """Excel's ``_xHHHH_`` escapes (ECMA-376 Part 1, 22.9.2.19 ST_Xstring) decoded.

    >>> _unescape("a_x0042_c"), _unescape("_x005F_x0041_")
    ('aBc', '_x0041_')
    """
    if "_x" not in text:
        return text
    return _XESCAPE.sub(lambda m: chr(int(m.group(1), 16)), text)


_RUN_KIDS = {"rPr", "t"}
_TEXT_KIDS = {"t", "r", "rPh", "phoneticPr"}


def _inline_text(el, where="") -> str:
    # <is><t>..</t></is> or rich runs <is><r><t>..</t></r>...</is>; phonetic runs (rPh) skipped
    main = "{" + _NS_MAIN + "}"
    parts = []
    for ch in el:
        tag = _local(ch.tag)
        if not ch.tag.startswith(main) or tag not in _TEXT_KIDS:
            raise RecalcError(f"{where}: unexpected <{tag}> in a text; refusing the part")
        if tag == "t":
            if len(ch):
                raise RecalcError(f"{where}: an element inside <t>; refusing the part")
            parts.append(ch.text or "")
        elif tag == "r":
            for t in ch:
                if not t.tag.startswith(main) or _local(t.tag) not in _RUN_KIDS or (
                        _local(t.tag) == "t" and len(t)):
                    raise RecalcError(f"{where}: unexpected <{_local(t.tag)}> in a text run; "
                                      f"refusing the part")
                if _local(t.tag) == "t":
                    parts.append(t.text or "")
    return _unescape("".join(parts))


def _shared_strings(zf, book_part, rels, where) -> list:
    found = [_resolve(book_part, target) for rtype, target, _ in rels.values()
             if rtype and rtype.endswith("/sharedStrings")]
    if len(found) > 1:
        raise RecalcError(f"{where}: the workbook names {len(found)} shared-string tables "
                          f"({', '.join(map(repr, found))}); readers differ in which one they "
                          f"read, so the workbook is refused")
    if not found:
        return []
    name = found[0]
    data = _part(zf, name, where)
    place = f"{where}, part {name!r}"
    root = _xml(data, place)
    _namespaces(data, place)
    _no_alternatives(root, data, place)
    if root.tag != "{" + _NS_MAIN + "}sst":
        raise RecalcError(f"{place}: the shared-string table is not in the SpreadsheetML "
                          f"namespace; refusing it")
    out = []
    for si in root:
        if si.tag == "{" + _NS_MAIN + "}si":
            out.append(_inline_text(si, f"{place}, string {len(out)}"))
        elif _local(si.tag) != "extLst":
            raise RecalcError(f"{place}: unexpected <{_local(si.tag)}> in the table; refusing "
                              f"it")
    return out


def read_sheet_cells(data: bytes, where: str, strings=(), layout: bool = False) -> SheetCells:
    """Cells, formulas and array ranges of one worksheet part (its raw bytes).

    Shared formulas are expanded with openpyxl's MIT-licensed formula translator, as Excel
    expands them. Raises :class:`RecalcError` naming ``where`` (and the cell) on anything listed
    in the module notes. With ``layout``, also the cell formats, row attributes and the other
    children of ``<worksheet>`` (:attr:`SheetCells.styles`, ``rows``, ``parts``).
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
    _namespaces(data, where)
    root = _xml(data, where)
    ns = "{" + _NS_MAIN + "}"
    if root.tag != ns + "worksheet":
        raise RecalcError(f"{where}: the part is not a SpreadsheetML worksheet (its root is "
                          f"<{excerpt(root.tag)}>); refusing it")
    _no_alternatives(root, data, where)
    out = SheetCells()
    sheet_data = [el for el in root if el.tag == ns + "sheetData"]
    if len(sheet_data) != 1:
        raise RecalcError(f"{where}: the part has {len(sheet_data)} <sheetData> elements "
                          f"(expected one); refusing it")
    if layout:
        out.styles, out.rows = {}, {}
        out.parts = [el for el in root if el.tag != ns + "sheetData"]
    styles, row_attrs = out.styles, out.rows
    seen_rows = set()
    masters: dict[str, tuple] = {}
    dependents = []
    row_tag, cell_tag = ns + "row", ns + "c"
    kid_names = {ns + "f": "f", ns + "v": "v", ns + "is": "is", ns + "extLst": "extLst"}
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
        if layout:
            kept = {k: v for k, v in row.attrib.items() if "{" not in k and k not in ("r", "spans")}
            if kept:
                row_attrs[r] = kept
        if row.get("hidden") in ("1", "true"):
            out.hidden_rows.add(r)
        for c in row:
            if c.tag != cell_tag:
                if c.tag == ns + "extLst":
                    continue
                raise RecalcError(f"{where}, row {r}: unexpected <{_local(c.tag)}> in a row")
            coord = c.get("r")
            try:
                rc = split_coord(coord or "")
            except ValueError:
                raise RecalcError(f"{where}, row {r}: a cell has no valid 'r' (address) "
                                  f"attribute ({excerpt(coord)!r}); refusing the part") from None
            if rc[0] != r:
                raise RecalcError(f"{where}: cell {coord} is stored in row {r}; refusing "
                                  f"the part")
            if rc in out.values or rc in out.formulas:
                raise RecalcError(f"{where}: cell {coord} is given twice; refusing the part")
            kids = {}
            for ch in c:
                tag = kid_names.get(ch.tag)
                if tag is None:
                    raise RecalcError(f"{where}, cell {coord}: unexpected <{_local(ch.tag)}> "
                                      f"in a cell; refusing the part")
                if tag in kids:
                    raise RecalcError(f"{where}, cell {coord}: two <{tag}> elements; "
                                      f"refusing the part")
                if len(ch) and tag in ("f", "v"):
                    raise RecalcError(f"{where}, cell {coord}: an element (<{_local(ch[0].tag)}>)"
                                      f" inside <{tag}>; readers join the text around it "
                                      f"differently, so the part is refused")
                kids[tag] = ch
            if layout:
                st = c.get("s")
                if st not in (None, "0"):
                    if not (st.isascii() and st.isdigit()) or len(st) > 6:
                        raise RecalcError(f"{where}, cell {coord}: format index {excerpt(st)!r} "
                                          f"is not a number")
                    styles[rc] = int(st)
            out.max_row = max(out.max_row, rc[0])
            out.max_col = max(out.max_col, rc[1])
            f = kids.get("f")
            v = kids.get("v")
            vt = v.text if v is not None else None
            if vt is not None and c.get("t", "n") == "n" and not _XNUMBER.fullmatch(vt):
                if f is None or vt.strip():
                    raise RecalcError(f"{where}, cell {coord}: {excerpt(vt)!r} is not a number "
                                      f"as a workbook writes one (ASCII digits, sign, point, "
                                      f"exponent); refusing the part")
            if f is not None:
                if (vt or "").strip() or kids.get("is") is not None:
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
                    if (r2 - r1 + 1) * (c2 - c1 + 1) > MAX_ARRAY_CELLS:
                        raise RecalcError(_array_cap(where, coord, ref))
                    out.arrays[rc] = (r1, c1, r2, c2)
                    out.max_row, out.max_col = max(out.max_row, r2), max(out.max_col, c2)
                continue
            t = c.get("t", "n")
            if t == "inlineStr":
                isel = kids.get("is")
                value = _inline_text(isel, f"{where}, cell {coord}") if isel is not None \
                    else None
            elif vt is None:
                value = None
            elif t == "s":
                if not (vt.isascii() and vt.isdigit()):
                    raise RecalcError(f"{where}, cell {coord}: shared string {excerpt(vt)!r} "
                                      f"is not an index (ASCII digits)")
                try:
                    value = strings[int(vt)]
                except IndexError:
                    raise RecalcError(f"{where}, cell {coord}: shared string {vt!r} does not "
                                      f"exist") from None
            elif t in ("str",):
                value = _unescape(vt)
            elif t == "b":
                if vt not in ("0", "1"):
                    raise RecalcError(f"{where}, cell {coord}: a boolean must be 0 or 1 (got "
                                      f"{excerpt(vt)!r}); refusing the part")
                value = vt == "1"
            elif t == "e":
                try:
                    value = error(vt.strip())
                except KeyError:
                    raise RecalcError(f"{where}, cell {coord}: unknown error value "
                                      f"{excerpt(vt)!r}") from None
            elif t == "n":
                value = float(vt)
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


def _array_cap(where, coord, ref, before=False) -> str:
    what = "with the array formulas before it, " if before else ""
    return (f"{where}, cell {coord}: {what}the array formula's range {ref} covers more than "
            f"{MAX_ARRAY_CELLS:,} cells, the most the array formulas of one workbook may "
            f"cover; refusing the workbook before computing them (make each array range the "
            f"size of its result)")


def read_package(data: bytes, where: str, *, layout: bool = False) -> Package:
    """Every worksheet of a workbook package (its bytes) with its cells, and the defined names.

    ``where`` names the file in messages. ``layout``: also keep each sheet's cell formats, row
    attributes and other parts (:func:`.layout.read_with_layout` reads the rest of what a
    renderer needs, for the copy LibreOffice opens: :mod:`.rebuild`).
    """
    try:
        zf = zipfile.ZipFile(io.BytesIO(data))
    except zipfile.BadZipFile as exc:
        raise RecalcError(f"{where}: not a readable .xlsx package ({exc})") from None
    with zf:
        check_nothing_external(zf, where)
        root_rels = _rels(zf, "", where) if "_rels/.rels" in zf.namelist() else {}
        book_part = next((_resolve("", t) for ty, t, _ in root_rels.values()
                          if ty == _REL_OFFICE_DOC), None)
        if book_part is None:
            raise RecalcError(f"{where}: the package names no workbook part")
        book_place = f"{where}, part {book_part!r}"
        book_data = _part(zf, book_part, where)
        book = _xml(book_data, book_place)
        _namespaces(book_data, book_place)
        _no_alternatives(book, book_data, book_place)
        ns = "{" + _NS_MAIN + "}"
        if book.tag != ns + "workbook":
            raise RecalcError(f"{book_place}: the workbook part is not in the SpreadsheetML "
                              f"namespace (its root is <{excerpt(book.tag)}>); refusing it")
        rels = _rels(zf, book_part, where)
        strings = _shared_strings(zf, book_part, rels, where)
        sheets, titles, parts = [], {}, set()
        local_ids, states = [], {}

        def listed(group, item):
            # only <group><item/></group> directly under the workbook root, in its namespace:
            # what Excel reads, not look-alikes nested in extensions
            return [el for g in book if g.tag == ns + group for el in g if el.tag == ns + item]
        array_cells = 0
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
            place = f"{where}, sheet {title!r} (part {part!r})"
            cells = read_sheet_cells(_part(zf, part, where), place, strings, layout)
            for rc, (r1, c1, r2, c2) in cells.arrays.items():
                array_cells += (r2 - r1 + 1) * (c2 - c1 + 1)
                if array_cells > MAX_ARRAY_CELLS:
                    raise RecalcError(_array_cap(place, coord_name(*rc),
                                                 f"{coord_name(r1, c1)}:{coord_name(r2, c2)}",
                                                 before=True))
            states[title] = el.get("state") or "visible"
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
        names, spelled = {}, {}
        for el in listed("definedNames", "definedName"):
            spelling = el.get("name") or ""
            name = spelling.upper()
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
            if len(el):
                raise RecalcError(f"{where}: defined name {name!r} holds an element "
                                  f"(<{_local(el[0].tag)}>); readers join the text around it "
                                  f"differently, so the workbook is refused")
            names[(title, name)] = el.text or ""
            spelled[(title, name)] = (spelling, el.get("hidden") in ("1", "true"))
    return Package(book_part, sheets, names, strings, spelled, states)


#: Shared with the reader's second half (:mod:`.layout`): one XML parser, one relationship
#: reader, one namespace check for every part read.
NS_MAIN, NS_REL = _NS_MAIN, _NS_REL
local_name, parse_xml, part_bytes, relationships, resolve, checked_namespaces = (
    _local, _xml, _part, _rels, _resolve, _namespaces)


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
