"""The package reader's second half: what a renderer needs to draw the sheets.

:func:`read_with_layout` reads a package with :func:`portflux.workbook.package.read_package`
(``layout=True``: every check of the reader, and each sheet's cell formats and parts) and then,
on the same checked package, its layout. It keeps, as parsed elements, only what
it understands and checked, every element in the namespace it checked:

* the cell formats (``xl/styles.xml``: SpreadsheetML elements only, extensions dropped);
* of each worksheet: sheet properties, views, column widths, merged cells, print options,
  margins, page set-up (without its printer-settings part), headers and footers, page breaks,
  and the conditional formats whose formulas the engine reads (plain Excel functions);
* its drawing: anchors holding a chart whose series are plain references to this workbook's
  sheets, or an embedded PNG or JPEG picture (checked by its first bytes), or a plain shape;
* defined names that are plain references or constants, sheet states, the active sheet.

Anything else is left out of the copy LibreOffice opens, and :attr:`Layout.notes` says what a
user might miss (hyperlinks, comments, data validations, macros, charts or pictures left out).
Nothing here follows a link: the package reader refused every external relationship before.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from xml.etree.ElementTree import Element, SubElement

from .package import NS_MAIN as _NS_MAIN, NS_REL as _NS_REL, read_package, rels_name
from .package import (checked_namespaces as _namespaces, local_name as _local,
                      parse_xml as _xml, part_bytes as _part, relationships as _rels,
                      resolve as _resolve)
from .xlvalues import RecalcError

__all__ = ["Drawing", "Layout", "SheetLayout", "read_layout", "read_with_layout", "NS"]

NS = {"main": _NS_MAIN, "r": _NS_REL,
      "xdr": "http://schemas.openxmlformats.org/drawingml/2006/spreadsheetDrawing",
      "a": "http://schemas.openxmlformats.org/drawingml/2006/main",
      "c": "http://schemas.openxmlformats.org/drawingml/2006/chart"}
_XML_SPACE = "{http://www.w3.org/XML/1998/namespace}space"
_REL_STYLES = _NS_REL + "/styles"
_REL_DRAWING = _NS_REL + "/drawing"
_REL_CHART = _NS_REL + "/chart"
_REL_IMAGE = _NS_REL + "/image"
#: Children of <worksheet> carried into the copy, in the schema's order (ECMA-376 Part 1,
#: 18.3.1.99 CT_Worksheet), sheetData and drawing being written by the copy itself.
SHEET_PARTS = ("sheetPr", "dimension", "sheetViews", "sheetFormatPr", "cols", "mergeCells",
               "conditionalFormatting", "printOptions", "pageMargins", "pageSetup",
               "headerFooter", "rowBreaks", "colBreaks")
_NOTED = {"hyperlinks": "hyperlinks", "legacyDrawing": "comments",
          "dataValidations": "data validations", "tableParts": "tables",
          "legacyDrawingHF": "pictures in headers", "picture": "a background picture"}
_IMAGES = ((b"\x89PNG\r\n\x1a\n", "png"), (b"\xff\xd8\xff", "jpeg"))
_ANCHORS = ("twoCellAnchor", "oneCellAnchor", "absoluteAnchor")


@dataclass
class Drawing:
    """A sheet's drawing: anchors whose r:id / r:embed name the charts and images below."""
    root: Element
    charts: dict = field(default_factory=dict)      # "rIdN" -> chartSpace element
    images: dict = field(default_factory=dict)      # "rIdN" -> (extension, bytes)


@dataclass
class SheetLayout:
    parts: list                                     # kept <worksheet> children, SHEET_PARTS order
    drawing: Drawing | None = None


@dataclass
class Layout:
    styles: Element | None
    sheets: dict                                    # title -> SheetLayout
    names: list                                     # (spelling, sheet index or None, text, hidden)
    active: int = 0
    date1904: bool = False
    notes: list = field(default_factory=list)


def _attrs(el, keep=()) -> dict:
    return {k: v for k, v in el.attrib.items() if "{" not in k or k == _XML_SPACE or k in keep}


def clean(el, namespaces, drop=(), keep_attrs=()) -> Element:
    """A copy of ``el`` holding only descendants in ``namespaces`` (URIs) whose local name is
    not in ``drop``, each with its attributes outside any namespace (and ``keep_attrs``).
    Iterative: a deeply nested part cannot exhaust the stack."""
    spaces = tuple("{" + n + "}" for n in namespaces)
    out = Element(el.tag, _attrs(el, keep_attrs))
    out.text = el.text
    stack = [(el, out)]
    while stack:
        src, dst = stack.pop()
        for ch in src:
            tag = ch.tag
            if not isinstance(tag, str) or not tag.startswith(spaces) or _local(tag) in drop:
                continue
            new = SubElement(dst, tag, _attrs(ch, keep_attrs))
            new.text, new.tail = ch.text, ch.tail
            stack.append((ch, new))
    return out


def _plain_refs(text: str, titles: set) -> bool:
    """True for a reference, or a parenthesised union of references, to this workbook's sheets
    (a chart series or a print title), never a formula or another file."""
    from .formula import parse_ref_text

    text = (text or "").strip()
    if text.startswith("(") and text.endswith(")"):
        text = text[1:-1]
    pieces = re.findall(r"(?:'(?:[^']|'')*'|[^,'])+", text)
    if not pieces or "".join(pieces).count("'") % 2:
        return False
    for piece in pieces:
        ref = parse_ref_text(piece)
        if ref is None or ref[1] is None or ref[1].upper() not in titles:
            return False
    return True


def _engine_formula(text: str) -> bool:
    """True when the engine reads ``text`` and calls only Excel functions it evaluates."""
    from .formula import FormulaSyntaxError, calls, parse
    from .xlfunctions import FUNCTIONS

    try:
        return all(name in FUNCTIONS for name in calls(parse(text or "")))
    except (FormulaSyntaxError, RecalcError, RecursionError):
        return False


def _conditional_ok(el) -> bool:
    for x in el.iter():
        name = _local(x.tag)
        if name == "formula" and not _engine_formula(x.text):
            return False
        if name == "cfvo" and x.get("type") == "formula" and not _engine_formula(x.get("val")):
            return False
    return True


class _Reader:
    def __init__(self, zf, pkg, where):
        self.zf, self.pkg, self.where = zf, pkg, where
        self.titles = {s.title.upper() for s in pkg.sheets}
        self.notes: dict[str, int] = {}

    def note(self, what, n=1):
        self.notes[what] = self.notes.get(what, 0) + n

    def parsed(self, name):
        data = _part(self.zf, name, self.where)
        place = f"{self.where}, part {name!r}"
        _namespaces(data, place)
        return _xml(data, place)

    def rels(self, part):
        return _rels(self.zf, part, self.where) if rels_name(part) in self.zf.namelist() else {}

    # -- worksheets ----------------------------------------------------------------------
    def sheet(self, sheet) -> SheetLayout:
        main = "{" + _NS_MAIN + "}"
        kept: dict[str, list] = {}
        drawing = None
        for el in sheet.cells.parts or ():
            name = _local(el.tag)
            if not el.tag.startswith(main):
                continue
            if name == "drawing":
                drawing = self.drawing(sheet.part, el.get(f"{{{_NS_REL}}}id"))
            elif name == "conditionalFormatting":
                if _conditional_ok(el):
                    kept.setdefault(name, []).append(clean(el, [_NS_MAIN], ("extLst",)))
                else:
                    self.note("conditional formats calling functions the engine does not read")
            elif name in SHEET_PARTS:
                kept.setdefault(name, []).append(clean(el, [_NS_MAIN], ("extLst",)))
            elif name in _NOTED:
                self.note(_NOTED[name], len(el) if name in ("hyperlinks", "tableParts") else 1)
        return SheetLayout([x for name in SHEET_PARTS for x in kept.get(name, ())], drawing)

    def drawing(self, sheet_part, rid) -> Drawing | None:
        rtype, target, _ = self.rels(sheet_part).get(rid, (None, None, None))
        if rtype != _REL_DRAWING or not target:
            return None
        part = _resolve(sheet_part, target)
        root = self.parsed(part)
        if root.tag != "{%s}wsDr" % NS["xdr"]:
            self.note("drawings")
            return None
        rels = self.rels(part)
        kept = clean(root, [NS["xdr"], NS["a"], NS["c"]],
                     drop=("hlinkClick", "hlinkHover", "extLst", "contentPart"),
                     keep_attrs=(f"{{{_NS_REL}}}id", f"{{{_NS_REL}}}embed"))
        out = Drawing(kept)
        for anchor in list(kept):
            if _local(anchor.tag) not in _ANCHORS or not self.anchor(anchor, part, rels, out):
                kept.remove(anchor)
        return out if len(kept) else None

    def anchor(self, anchor, part, rels, out) -> bool:
        """Map the anchor's references to the copy's; False (anchor dropped) when one is not
        a chart or picture this reader checked."""
        rid_attr, embed_attr = f"{{{_NS_REL}}}id", f"{{{_NS_REL}}}embed"
        for frame in anchor.iter("{%s}graphicFrame" % NS["xdr"]):
            if not any(True for _ in frame.iter("{%s}chart" % NS["c"])):
                self.note("drawing objects other than charts and pictures")
                return False
        for el in anchor.iter():
            for attr in (rid_attr, embed_attr):
                rid = el.attrib.pop(attr, None)
                if rid is None:
                    continue
                rtype, target, _ = rels.get(rid, (None, None, None))
                new = f"rId{len(out.charts) + len(out.images) + 1}"
                target = _resolve(part, target or "")
                if attr == rid_attr and _local(el.tag) == "chart" and rtype == _REL_CHART:
                    chart = self.chart(target)
                    if chart is None:
                        return False
                    out.charts[new] = chart
                elif attr == embed_attr and rtype == _REL_IMAGE:
                    image = self.image(target)
                    if image is None:
                        return False
                    out.images[new] = image
                else:
                    self.note("drawing objects other than charts and pictures")
                    return False
                el.set(attr, new)
        return True

    def chart(self, part) -> Element | None:
        root = self.parsed(part)
        c = "{%s}" % NS["c"]
        if root.tag != c + "chartSpace":
            self.note("charts")
            return None
        kept = clean(root, [NS["c"], NS["a"]],
                     drop=("externalData", "userShapes", "printSettings", "extLst", "blipFill"))
        for f in kept.iter(c + "f"):
            if not _plain_refs(f.text, self.titles):
                self.note("charts whose series are not plain references to this workbook")
                return None
        return kept

    def image(self, part):
        try:
            data = self.zf.read(part)
        except KeyError:
            return None
        for magic, ext in _IMAGES:
            if data.startswith(magic):
                return ext, data
        self.note("pictures other than PNG and JPEG")
        return None


def read_layout(zf, pkg, book, rels, local_ids, where) -> Layout:
    """The layout of a package the reader has read (see the module notes)."""
    r = _Reader(zf, pkg, where)
    main = "{" + _NS_MAIN + "}"
    styles = None
    for rtype, target, _ in rels.values():
        if rtype == _REL_STYLES and target:
            root = r.parsed(_resolve(pkg.book_part, target))
            if root.tag == main + "styleSheet":
                styles = clean(root, [_NS_MAIN], ("extLst",))
    sheets = {s.title: r.sheet(s) for s in pkg.sheets}
    index = {s.title: k for k, s in enumerate(pkg.sheets)}
    names = []
    for (title, name), text in pkg.names.items():
        spelling, hidden = pkg.spelled.get((title, name), (name, False))
        if title is not None and title not in index:
            continue                                    # local to a chart sheet
        if _plain_refs(text, r.titles) or _constant(text):
            names.append((spelling, index.get(title), text, hidden))
        else:
            r.note("defined names holding formulas")
    active, date1904 = 0, False
    for el in book:
        if el.tag == main + "bookViews":
            view = next(iter(el), None)
            k = view.get("activeTab") if view is not None else None
            if k and k.isascii() and k.isdigit() and int(k) < len(local_ids):
                active = index.get(local_ids[int(k)], 0)
        elif el.tag == main + "workbookPr":
            date1904 = el.get("date1904") in ("1", "true")
    if len(local_ids) > len(pkg.sheets):
        r.note("chart sheets", len(local_ids) - len(pkg.sheets))
    if any((t or "").endswith("/vbaProject") for t, _, _ in rels.values()):
        r.note("the VBA project (macros)")
    notes = [f"{what} ({n})" if n else what for what, n in r.notes.items()]
    return Layout(styles, sheets, names, active, date1904, notes)


def _constant(text: str) -> bool:
    return bool(re.fullmatch(r'\s*(?:-?[0-9.]+(?:[eE][+-]?[0-9]+)?|"(?:[^"]|"")*"|TRUE|FALSE)'
                             r'\s*', text or "", re.I))



def read_with_layout(data: bytes, where: str):
    """The :class:`~portflux.workbook.package.Package` of a workbook's bytes with its
    :attr:`~portflux.workbook.package.Package.layout` (see the module notes)."""
    import io
    import zipfile

    pkg = read_package(data, where, layout=True)
    with zipfile.ZipFile(io.BytesIO(data)) as zf:
        book = _xml(_part(zf, pkg.book_part, where), f"{where}, part {pkg.book_part!r}")
        rels = _rels(zf, pkg.book_part, where)
        main = "{" + _NS_MAIN + "}"
        local_ids = [el.get("name") or "" for g in book if g.tag == main + "sheets"
                     for el in g if el.tag == main + "sheet"]
        pkg.layout = read_layout(zf, pkg, book, rels, local_ids, where)
    return pkg
