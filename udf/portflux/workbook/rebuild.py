"""The copy LibreOffice opens: a workbook rebuilt from what the package reader parsed.

LibreOffice never opens a user's file. ``portflux recalc --engine libreoffice`` and ``portflux
report`` hand it a copy written here from :func:`portflux.workbook.package.read_package`
(``layout=True``): the cells, formulas, array ranges and defined names the embedded engine
reads -- the same values and the same formula texts, so both engines and the renderer see one
workbook -- and the formats, column widths, print set-up, charts and pictures the layout reader
checked (:mod:`.layout`). Every part is written afresh by this module, in the transitional
namespaces; nothing of the original file is copied byte for byte except embedded PNG/JPEG
pictures, whose first bytes were checked. The theme is openpyxl's default theme, never the
file's. What the copy leaves out is listed in :attr:`Rebuilt.notes`.

Text is written with Excel's ``_xHHHH_`` escapes for characters XML cannot hold and for a
literal ``_xHHHH_``, so LibreOffice decodes exactly the text the reader decoded.

>>> import io, openpyxl, zipfile
>>> wb = openpyxl.Workbook(); wb.active["A1"] = 2.5; wb.active["B1"] = "=A1*2"
>>> buf = io.BytesIO(); wb.save(buf)
>>> from portflux.workbook.layout import read_with_layout
>>> copy = rebuild(read_with_layout(buf.getvalue(), "demo.xlsx"))
>>> sheet = zipfile.ZipFile(io.BytesIO(copy)).read("xl/worksheets/sheet1.xml")
>>> b'<c r="A1"><v>2.5</v></c><c r="B1"><f>A1*2</f></c>' in sheet
True
"""

from __future__ import annotations

import io
import re
import zipfile
from dataclasses import dataclass
from xml.etree.ElementTree import Element

from .layout import NS, SHEET_PARTS, read_with_layout
from .package import coord_name
from .xlvalues import XlError

__all__ = ["Rebuilt", "rebuild", "rebuild_file"]

_MAIN, _R = NS["main"], NS["r"]
_CT = "application/vnd.openxmlformats-officedocument."
_TYPES = {"workbook": _CT + "spreadsheetml.sheet.main+xml",
          "worksheet": _CT + "spreadsheetml.worksheet+xml",
          "styles": _CT + "spreadsheetml.styles+xml",
          "theme": _CT + "theme+xml",
          "drawing": _CT + "drawing+xml",
          "chart": _CT + "drawingml.chart+xml"}
_REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships/"
_ILLEGAL = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]")
_ESCAPE = re.compile(r"_(x[0-9A-Fa-f]{4}_)")
_HEAD = '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>\n'


@dataclass(frozen=True)
class Rebuilt:
    """What :func:`rebuild_file` wrote."""
    sheets: tuple           #: worksheet titles, in order
    first_visible: str      #: the first worksheet shown (what prints first)
    notes: tuple            #: what the copy leaves out ("3 hyperlinks", "comments", ...)


def _xml_text(text: str) -> str:
    text = text.replace("&", "&amp;").replace("<", "&lt;").replace(">", "&gt;")
    return text.replace('"', "&quot;")


def _cell_text(text: str) -> str:
    """Text for an element, with ``_xHHHH_`` escapes (a literal one kept literal)."""
    if "_x" in text:
        text = _ESCAPE.sub(r"_x005F_\1", text)
    text = _ILLEGAL.sub(lambda m: "_x%04X_" % ord(m.group()), text)
    return _xml_text(text)


def _number(x: float) -> str:
    s = repr(x)
    return s[:-2] if s.endswith(".0") else s


_PREFIX = {NS["main"]: "", NS["r"]: "r", NS["xdr"]: "xdr", NS["a"]: "a", NS["c"]: "c",
           "http://www.w3.org/XML/1998/namespace": "xml"}
_DECLARE = "".join(f' xmlns{":" + p if p else ""}="{uri}"' for uri, p in _PREFIX.items()
                   if p != "xml")


def _qname(tag: str) -> str:
    if tag[:1] != "{":
        return tag
    uri, local = tag[1:].split("}", 1)
    prefix = _PREFIX[uri]
    return f"{prefix}:{local}" if prefix else local


def _element(root, declare: bool = False) -> str:
    """XML text of a parsed (and cleaned) element, with this module's fixed prefixes; the
    namespaces declared on it with ``declare``. Iterative (no recursion on deep trees)."""
    out = []
    stack = [(root, False)]
    while stack:
        el, done = stack.pop()
        name = _qname(el.tag)
        if done:
            out.append(f"</{name}>{_xml_text(el.tail or '') if el is not root else ''}")
            continue
        attrs = "".join(f' {_qname(k)}="{_xml_text(v)}"' for k, v in el.attrib.items())
        if el is root and declare:
            attrs = _DECLARE + attrs
        if len(el) or el.text:
            out.append(f"<{name}{attrs}>{_xml_text(el.text or '')}")
            stack.append((el, True))
            stack.extend((ch, False) for ch in reversed(el))
        else:
            tail = _xml_text(el.tail or "") if el is not root else ""
            out.append(f"<{name}{attrs}/>{tail}")
    return "".join(out)


def _cells(cells, styled) -> str:
    """The <sheetData> of one sheet: values, formulas (shared ones expanded), array ranges."""
    styles = cells.styles or {} if styled else {}
    members = set()
    for (r1, c1, r2, c2) in cells.arrays.values():
        members.update((r, c) for r in range(r1, r2 + 1) for c in range(c1, c2 + 1))
    by_row: dict[int, list] = {}
    for rc in set(cells.values) | set(cells.formulas) | set(styles) | members:
        by_row.setdefault(rc[0], []).append(rc[1])
    row_attrs = cells.rows or {}
    out = ["<sheetData>"]
    for r in sorted(set(by_row) | set(row_attrs)):
        attrs = "".join(f' {k}="{_xml_text(v)}"' for k, v in row_attrs.get(r, {}).items()
                        if styled or k not in ("s", "customFormat"))
        out.append(f'<row r="{r}"{attrs}>')
        for c in sorted(by_row.get(r, ())):
            rc = (r, c)
            s = styles.get(rc)
            head = f'<c r="{coord_name(r, c)}"' + (f' s="{s}"' if s else "")
            text = cells.formulas.get(rc)
            if text is not None:
                area = cells.arrays.get(rc)
                kind = (f' t="array" ref="{coord_name(*area[:2])}:{coord_name(*area[2:])}"'
                        if area else "")
                out.append(f"{head}><f{kind}>{_xml_text(text)}</f></c>")
                continue
            v = None if rc in members else cells.values.get(rc)
            if v is None:
                out.append(head + "/>")
            elif v is True or v is False:
                out.append(f'{head} t="b"><v>{int(v)}</v></c>')
            elif type(v) is float:
                out.append(f"{head}><v>{_number(v)}</v></c>")
            elif type(v) is XlError:
                out.append(f'{head} t="e"><v>{v}</v></c>')
            else:
                out.append(f'{head} t="inlineStr"><is><t xml:space="preserve">'
                           f"{_cell_text(str(v))}</t></is></c>")
        out.append("</row>")
    out.append("</sheetData>")
    return "".join(out)


def _sheet_xml(sheet, lay, paper, styled, drawing_rid) -> str:
    parts = list(lay.parts) if lay is not None else []
    if paper is not None:
        setups = [p for p in parts if p.tag == f"{{{_MAIN}}}pageSetup"]
        if not setups:
            setups = [Element(f"{{{_MAIN}}}pageSetup")]
            parts.append(setups[0])
        for p in setups:
            p.set("paperSize", paper)
    order = {name: k for k, name in enumerate(SHEET_PARTS)}
    parts.sort(key=lambda p: order[p.tag.rsplit("}", 1)[-1]])
    split = order["mergeCells"]
    before = "".join(_element(p) for p in parts if order[p.tag.rsplit("}", 1)[-1]] < split)
    after = "".join(_element(p) for p in parts if order[p.tag.rsplit("}", 1)[-1]] >= split)
    drawing = f'<drawing r:id="{drawing_rid}"/>' if drawing_rid else ""
    return (f'{_HEAD}<worksheet xmlns="{_MAIN}" xmlns:r="{_R}">{before}'
            f"{_cells(sheet.cells, styled)}{after}{drawing}</worksheet>")


def _rels(items) -> str:
    body = "".join(f'<Relationship Id="{rid}" Type="{_REL}{kind}" Target="{target}"/>'
                   for rid, kind, target in items)
    return (f'{_HEAD}<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/'
            f'relationships">{body}</Relationships>')


def _workbook_xml(pkg, lay) -> str:
    pr = '<workbookPr date1904="1"/>' if lay is not None and lay.date1904 else "<workbookPr/>"
    active = lay.active if lay is not None else 0
    sheets = "".join(
        f'<sheet name="{_xml_text(s.title)}" sheetId="{k + 1}"'
        + (f' state="{pkg.states[s.title]}"' if pkg.states.get(s.title, "visible") in
           ("hidden", "veryHidden") else "")
        + f' r:id="rId{k + 1}"/>' for k, s in enumerate(pkg.sheets))
    names = "".join(
        f'<definedName name="{_xml_text(name)}"'
        + (f' localSheetId="{k}"' if k is not None else "")
        + (' hidden="1"' if hidden else "") + f">{_xml_text(text)}</definedName>"
        for name, k, text, hidden in (lay.names if lay is not None else ()))
    return (f'{_HEAD}<workbook xmlns="{_MAIN}" xmlns:r="{_R}">{pr}<bookViews><workbookView '
            f'activeTab="{active}"/></bookViews><sheets>{sheets}</sheets>'
            + (f"<definedNames>{names}</definedNames>" if names else "")
            + '<calcPr calcId="191029"/></workbook>')


def rebuild(pkg, *, paper: str | None = None) -> bytes:
    """The bytes of the copy of a package read with ``layout=True`` (see the module notes).

    ``paper``: an OOXML paper-size code ("9" A4, "1" Letter) set on every sheet's page set-up.
    """
    from openpyxl.writer.theme import theme_xml     # openpyxl's own default theme (MIT)

    lay = pkg.layout
    styled = lay is not None and lay.styles is not None
    files: dict[str, str | bytes] = {}
    overrides = {"/xl/workbook.xml": _TYPES["workbook"]}
    book_rels = []
    n_drawings = n_charts = n_images = 0
    for k, sheet in enumerate(pkg.sheets, 1):
        sl = lay.sheets.get(sheet.title) if lay is not None else None
        drawing = sl.drawing if sl is not None else None
        name = f"xl/worksheets/sheet{k}.xml"
        files[name] = _sheet_xml(sheet, sl, paper, styled, "rId1" if drawing else None)
        overrides["/" + name] = _TYPES["worksheet"]
        book_rels.append((f"rId{k}", "worksheet", f"worksheets/sheet{k}.xml"))
        if drawing is None:
            continue
        n_drawings += 1
        dname = f"xl/drawings/drawing{n_drawings}.xml"
        files[f"xl/worksheets/_rels/sheet{k}.xml.rels"] = _rels(
            [("rId1", "drawing", f"../drawings/drawing{n_drawings}.xml")])
        files[dname] = _HEAD + _element(drawing.root, declare=True)
        overrides["/" + dname] = _TYPES["drawing"]
        links = []
        for rid, chart in drawing.charts.items():
            n_charts += 1
            files[f"xl/charts/chart{n_charts}.xml"] = _HEAD + _element(chart, declare=True)
            overrides[f"/xl/charts/chart{n_charts}.xml"] = _TYPES["chart"]
            links.append((rid, "chart", f"../charts/chart{n_charts}.xml"))
        for rid, (ext, data) in drawing.images.items():
            n_images += 1
            files[f"xl/media/image{n_images}.{ext}"] = data
            links.append((rid, "image", f"../media/image{n_images}.{ext}"))
        files[f"xl/drawings/_rels/drawing{n_drawings}.xml.rels"] = _rels(links)
    n = len(pkg.sheets)
    if styled:
        files["xl/styles.xml"] = _HEAD + _element(lay.styles, declare=True)
        overrides["/xl/styles.xml"] = _TYPES["styles"]
        book_rels.append((f"rId{n + 1}", "styles", "styles.xml"))
    files["xl/theme/theme1.xml"] = theme_xml
    overrides["/xl/theme/theme1.xml"] = _TYPES["theme"]
    book_rels.append((f"rId{n + 2}", "theme", "theme/theme1.xml"))
    files["xl/workbook.xml"] = _workbook_xml(pkg, lay)
    files["xl/_rels/workbook.xml.rels"] = _rels(book_rels)
    files["_rels/.rels"] = _rels([("rId1", "officeDocument", "xl/workbook.xml")])
    types = "".join(f'<Override PartName="{p}" ContentType="{t}"/>' for p, t in overrides.items())
    files["[Content_Types].xml"] = (
        f'{_HEAD}<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
        '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.'
        'relationships+xml"/><Default Extension="xml" ContentType="application/xml"/>'
        '<Default Extension="png" ContentType="image/png"/><Default Extension="jpeg" '
        f'ContentType="image/jpeg"/>{types}</Types>')
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", zipfile.ZIP_DEFLATED) as z:
        for name in ["[Content_Types].xml", "_rels/.rels", *sorted(set(files) - {
                "[Content_Types].xml", "_rels/.rels"})]:
            data = files[name]
            z.writestr(name, data.encode("utf-8") if isinstance(data, str) else data)
    return buf.getvalue()


def rebuild_file(src, dst, *, paper: str | None = None, name: str | None = None) -> Rebuilt:
    """Read ``src`` through the file checks and the package reader and write its copy to
    ``dst`` (atomically). ``name`` names the workbook in messages (default: ``src``'s)."""
    import os

    from .output import write_atomic
    from .safety import read_workbook_bytes

    where = name or os.path.basename(os.fspath(src))
    pkg = read_with_layout(read_workbook_bytes(src), where)
    data = rebuild(pkg, paper=paper)
    write_atomic(dst, lambda f: f.write(data))
    shown = [s.title for s in pkg.sheets if pkg.states.get(s.title, "visible") == "visible"]
    return Rebuilt(tuple(s.title for s in pkg.sheets), shown[0] if shown else "",
                   tuple(pkg.layout.notes))
