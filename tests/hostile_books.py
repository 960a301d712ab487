"""Workbooks built as an attacker would, shared by the hostile-workbook tests (round two).

Each is made here with openpyxl and then edited part by part at the zip level, where openpyxl
cannot write the attack. Nothing is read from outside the test's folder.
"""

import io
import os
import struct
import zipfile
import zlib

import openpyxl

SHEET1 = "xl/worksheets/sheet1.xml"
BOOK = "xl/workbook.xml"
BOOK_RELS = "xl/_rels/workbook.xml.rels"
TYPES = "[Content_Types].xml"
MAIN = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
STRICT = "http://purl.oclc.org/ooxml/spreadsheetml/main"
MC = "http://schemas.openxmlformats.org/markup-compatibility/2006"
REL = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"


def book(folder, cells, name="book.xlsx", title="Data"):
    """A one-sheet workbook of ``{coord: value or "=formula"}``."""
    wb = openpyxl.Workbook()
    ws = wb.active
    ws.title = title
    for coord, value in cells.items():
        ws[coord] = value
    path = os.path.join(folder, name)
    wb.save(path)
    return path


def rewrite(src, dst, change=lambda name, data: data, extra=()):
    """Copy a package through ``change(name, bytes) -> bytes``; ``extra``: (name, bytes) added."""
    with zipfile.ZipFile(src) as zin, zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            zout.writestr(info.filename, change(info.filename, zin.read(info)))
        for name, data in extra:
            zout.writestr(name, data)
    return os.fspath(dst)


def edit(src, dst, part, old, new, count=1):
    """Replace ``old`` by ``new`` in one part (which must hold it)."""
    def change(name, data):
        if name == part:
            assert old in data, (part, old)
            return data.replace(old, new, count)
        return data
    return rewrite(src, dst, change)


def png(marker: bytes, size=24) -> bytes:
    """A small red PNG whose text chunk carries ``marker`` (bytes that must not leak)."""
    raw = b"".join(b"\x00" + b"\xc8\x1e\x1e" * size for _ in range(size))

    def chunk(kind, data):
        return (struct.pack(">I", len(data)) + kind + data
                + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF))
    return (b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", struct.pack(">IIBBBBB", size, size, 8, 2, 0, 0, 0))
            + chunk(b"IDAT", zlib.compress(raw)) + chunk(b"tEXt", b"Comment\x00" + marker)
            + chunk(b"IEND", b""))


PICTURE = ('<xdr:oneCellAnchor><xdr:from><xdr:col>1</xdr:col><xdr:colOff>0</xdr:colOff>'
           '<xdr:row>1</xdr:row><xdr:rowOff>0</xdr:rowOff></xdr:from><xdr:ext cx="1800000" '
           'cy="1800000"/><xdr:pic><xdr:nvPicPr><xdr:cNvPr id="7" name="Picture 7"/>'
           '<xdr:cNvPicPr/></xdr:nvPicPr><xdr:blipFill><a:blip r:{attr}="rIdPic"/><a:stretch>'
           '<a:fillRect/></a:stretch></xdr:blipFill><xdr:spPr><a:xfrm><a:off x="0" y="0"/>'
           '<a:ext cx="1800000" cy="1800000"/></a:xfrm><a:prstGeom prst="rect"><a:avLst/>'
           '</a:prstGeom></xdr:spPr></xdr:pic><xdr:clientData/></xdr:oneCellAnchor>')


def with_picture(src, dst, target, *, external=True, sheet_index=1):
    """``src`` with a picture on sheet ``sheet_index``: linked to ``target`` (a URL, external)
    or embedded (``target`` is then the image bytes). Adds the drawing if the sheet has none."""
    sheet = f"xl/worksheets/sheet{sheet_index}.xml"
    sheet_rels = f"xl/worksheets/_rels/sheet{sheet_index}.xml.rels"
    with zipfile.ZipFile(src) as z:
        names = set(z.namelist())
        drawing_name = None
        if sheet_rels in names:
            rels = z.read(sheet_rels).decode()
            import re
            m = re.search(r'Target="(?:/xl/drawings/|\.\./drawings/)(drawing\d+\.xml)"', rels)
            drawing_name = m and f"xl/drawings/{m.group(1)}"
    attr = "link" if external else "embed"
    pic = PICTURE.format(attr=attr).encode()
    rel = (f'<Relationship Id="rIdPic" Type="{REL}/image" Target="'
           + (f'{target}" TargetMode="External"/>' if external else '../media/leak.png"/>'))
    extra = [] if external else [("xl/media/leak.png", target)]
    if drawing_name is None:
        drawing_name = "xl/drawings/drawingX.xml"
        dr = (f'<xdr:wsDr xmlns:xdr="http://schemas.openxmlformats.org/drawingml/2006/'
              f'spreadsheetDrawing" xmlns:a="http://schemas.openxmlformats.org/drawingml/2006/'
              f'main" xmlns:r="{REL}">').encode() + pic + b"</xdr:wsDr>"
        extra += [(drawing_name, dr),
                  ("xl/drawings/_rels/drawingX.xml.rels",
                   f'<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/'
                   f'relationships">{rel}</Relationships>'.encode())]
        new_sheet_rel = (f'<Relationship Id="rIdDr" Type="{REL}/drawing" '
                         f'Target="../drawings/drawingX.xml"/>')

        def change(name, data):
            if name == sheet:
                return data.replace(b"</worksheet>", f'<drawing xmlns:r="{REL}" r:id="rIdDr"/>'
                                    .encode() + b"</worksheet>")
            if name == sheet_rels:
                return data.replace(b"</Relationships>", new_sheet_rel.encode()
                                    + b"</Relationships>")
            if name == TYPES:
                return data.replace(b"</Types>", b'<Override PartName="/xl/drawings/drawingX.'
                                    b'xml" ContentType="application/vnd.openxmlformats-office'
                                    b'document.drawing+xml"/><Default Extension="png" '
                                    b'ContentType="image/png"/></Types>')
            return data
        if sheet_rels not in names:
            extra.append((sheet_rels, f'<Relationships xmlns="http://schemas.openxmlformats.org/'
                                      f'package/2006/relationships">{new_sheet_rel}'
                                      f'</Relationships>'.encode()))
        return rewrite(src, dst, change, extra)
    drawing_rels = drawing_name.replace("drawings/", "drawings/_rels/") + ".rels"

    def change(name, data):
        if name == drawing_name:
            return data.replace(b"</xdr:wsDr>", pic + b"</xdr:wsDr>").replace(
                b"</wsDr>", pic.replace(b"xdr:", b"") + b"</wsDr>")
        if name == drawing_rels:
            return data.replace(b"</Relationships>", rel.encode() + b"</Relationships>")
        if name == TYPES and not external:
            return data.replace(b"</Types>", b'<Default Extension="png" ContentType="image/'
                                b'png"/></Types>')
        return data
    return rewrite(src, dst, change, extra)


def zip_bytes(path) -> bytes:
    """Every byte a package holds, inflated (to search for a leaked marker)."""
    with zipfile.ZipFile(path) as z:
        return b"".join(z.read(n) for n in z.namelist())


def template(folder, name="book.xlsx"):
    """The portflux template, written afresh into ``folder``."""
    from portflux.workbook.template import build_template

    return build_template(os.path.join(folder, name))


def packaged(path) -> io.BytesIO:
    with open(path, "rb") as f:
        return io.BytesIO(f.read())
