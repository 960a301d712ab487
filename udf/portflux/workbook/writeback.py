"""Write computed values back into worksheet XML: only cached values change, in one pass.

:func:`patch_sheet_xml` rewrites, in the raw bytes of a worksheet part, the cached value (``<v>``
or ``<is>``, and the ``t`` attribute) of the cells it is given, inserting missing cells and rows
in order; formulas, styles and everything else stay byte for byte. The regular expressions are
compiled once, at import. The package reader (:mod:`.package`) refuses comments, CDATA and
processing instructions in worksheet parts, so these expressions and an XML parser see the same
cells; :func:`verify_patch` then reads the result with that parser and proves that every formula
and every other cell is unchanged and that each written cell holds the value evaluated.
"""

from __future__ import annotations

import hashlib
import math
import re
from typing import Iterable, Mapping

from .package import coord_name, read_sheet_cells, split_coord
from .xlvalues import RecalcError, XlError, error
from ..excel import ERROR_VALUES

__all__ = ["cells_digest", "keep_cached_values_on_load", "patch_sheet_xml", "verify_patch"]

Scalar = float | str | bool | None
_ILLEGAL = re.compile(r"[\x00-\x08\x0b\x0c\x0e-\x1f\ufffe\uffff]")
_CHILD_RES: dict = {}


_LITERAL = re.compile(r"_(x[0-9A-Fa-f]{4}_)")


def _xml_text(text: str) -> bytes:
    """Escape text for element content; illegal XML characters become the
    OOXML ``_xHHHH_`` escape, and a literal ``_xHHHH_`` is kept literal
    (``_x005F_xHHHH_``), since the package reader decodes escapes as Excel does."""
    text = (text.replace("&", "&amp;").replace("<", "&lt;")
            .replace(">", "&gt;"))
    if "_x" in text:
        text = _LITERAL.sub(r"_x005F_\1", text)
    text = _ILLEGAL.sub(lambda m: "_x%04X_" % ord(m.group()), text)
    return text.encode("utf-8")


def _number_text(x: float) -> bytes:
    """Shortest text that reads back as the same double.

    >>> _number_text(2.0), _number_text(0.1), _number_text(1e-05)
    (b'2', b'0.1', b'1e-05')
    """
    s = repr(float(x))
    if s.endswith(".0"):
        s = s[:-2]
    return s.encode("ascii")


def _value_xml(p: bytes, value: Scalar, has_formula: bool
               ) -> tuple[bytes | None, bytes]:
    """``(t attribute or None, child XML)`` for a cached value."""
    if value is None:
        return None, b""
    if isinstance(value, bool):
        return b"b", b"<%sv>%s</%sv>" % (p, b"1" if value else b"0", p)
    if isinstance(value, float):
        if not math.isfinite(value):
            return b"e", b"<%sv>#NUM!</%sv>" % (p, p)
        return None, b"<%sv>%s</%sv>" % (p, _number_text(value), p)
    if value in ERROR_VALUES:
        return b"e", b"<%sv>%s</%sv>" % (p, value.encode("ascii"), p)
    if has_formula:
        return b"str", b"<%sv>%s</%sv>" % (p, _xml_text(value), p)
    return b"inlineStr", (b'<%sis><%st xml:space="preserve">%s</%st></%sis>'
                          % (p, p, _xml_text(value), p, p))


_P = rb"(?P<p>(?:[A-Za-z_][\w.\-]*:)?)"
_SHEETDATA_RE = re.compile(
    rb"<" + _P + rb"sheetData\b[^>]*?(?:/>|>(?P<body>.*?)</(?P=p)sheetData>)",
    re.S)
_ROW_RE = re.compile(
    rb"<" + _P + rb"row\b(?P<attrs>[^>]*?)(?:/>|>(?P<body>.*?)</(?P=p)row>)",
    re.S)
_CELL_RE = re.compile(
    rb"<" + _P + rb"c\b(?P<attrs>[^>]*?)(?:/>|>(?P<body>.*?)</(?P=p)c>)",
    re.S)
_R_ATTR_RE = re.compile(rb'\sr="([^"]*)"')
_T_ATTR_RE = re.compile(rb'\st="[^"]*"')
_SPANS_RE = re.compile(rb'\sspans="[^"]*"')
_CALCPR_RE = re.compile(rb"<(?:[A-Za-z_][\w.\-]*:)?calcPr\b[^>]*>")
_FULLCALC_RE = re.compile(rb'\sfullCalcOnLoad="[^"]*"')
_DIM_RE = re.compile(rb'(<(?:[A-Za-z_][\w.\-]*:)?dimension\b[^>]*?\sref=")'
                     rb'([^"]*)(")')


def _child(body: bytes, p: bytes, tag: bytes) -> bytes:
    rx = _CHILD_RES.get((p, tag))
    if rx is None:        # one expression per namespace prefix and tag, not per cell
        rx = _CHILD_RES[(p, tag)] = re.compile(
            rb"<" + re.escape(p) + tag + rb"\b[^>]*?(?:/>|>.*?</" + re.escape(p) + tag + rb">)",
            re.S)
    m = rx.search(body)
    return m.group(0) if m else b""


def _cell_xml(p: bytes, attrs: bytes, body: bytes, value: Scalar,
              freeze: bool = False) -> bytes:
    if freeze:
        formula = b""
    elif not p and body.startswith(b"<f>") and b"<f" not in body[3:]:
        end = body.find(b"</f>")          # the common case: one plain <f> first
        formula = body[:end + 4] if end > 0 else _child(body, p, b"f")
    else:
        formula = _child(body, p, b"f")
    ext = _child(body, p, b"extLst") if b"extLst" in body else b""
    t, payload = _value_xml(p, value, bool(formula))
    if b"t=" in attrs:
        attrs = _T_ATTR_RE.sub(b"", attrs)
    attrs = attrs.rstrip(b"/").rstrip()
    if t is not None:
        attrs += b' t="%s"' % t
    content = formula + payload + ext
    if not content:
        return b"<%sc%s/>" % (p, attrs)
    return b"<%sc%s>%s</%sc>" % (p, attrs, content, p)


def _split_coord(coord: str) -> tuple[int, int]:
    return split_coord(coord)


def _splice(text: bytes, pieces: list[tuple]) -> bytes:
    """Replace ``text[start:end]`` by ``new`` for each ``(key, start, end,
    new)``, keeping whatever lies between the pieces.

    >>> _splice(b"<a/> <b/>", [(0, 0, 4, b"<x/>"), (1, 5, 9, b"<b/>")])
    b'<x/> <b/>'
    """
    out, pos = [], 0
    for _, start, end, new in pieces:
        out.append(text[pos:start])
        out.append(new)
        pos = end
    out.append(text[pos:])
    return b"".join(out)


def patch_sheet_xml(xml: bytes, values: Mapping[str, Scalar],
                     where: str, freeze: bool = False) -> bytes:
    """Write cached values for ``{coordinate: value}`` into sheet XML.

    Only ``<c>`` elements of those cells change (their ``t`` attribute and
    ``<v>``/``<is>`` child); missing cells and rows are inserted in order.
    With ``freeze`` their formulas are dropped: the cells keep only values.

    Cells already in the part are rewritten in one pass over its cells; only the cells it
    lacks (members of an array range written for the first time) go through the row by row
    insertion.
    """
    sd = _SHEETDATA_RE.search(xml)
    if sd is None:
        raise RecalcError(f"{where}: the sheet has no <sheetData>")
    body = sd.group("body") or b""
    if b"<![CDATA[" in body:
        raise RecalcError(f"{where}: CDATA in cell data is not supported")
    wanted = {c.encode("ascii"): v for c, v in values.items()}
    pieces = _cells_in_order(body, wanted, freeze)
    if pieces is None:
        pieces = []
        find_r = _R_ATTR_RE.search
        for cm in _CELL_RE.finditer(body):
            attrs = cm.group("attrs")
            rm = find_r(attrs)
            if rm is None:
                continue                     # the row by row pass reports it
            coord = rm.group(1)
            if coord in wanted:
                v = wanted.pop(coord)
                pieces.append((0, cm.start(), cm.end(),
                               _cell_xml(cm.group("p"), attrs, cm.group("body") or b"", v,
                                         freeze)))
    start = sd.start("body") if sd.group("body") is not None else None
    if start is not None and pieces:
        xml = xml[:start] + _splice(body, pieces) + xml[sd.end("body"):]
    if not wanted:
        return _extend_dimension(xml, values)
    rest = {c.decode("ascii"): v for c, v in wanted.items()}
    return _extend_dimension(_patch_rows(xml, rest, where, freeze), values)


def _cells_in_order(body: bytes, wanted: dict, freeze: bool):
    """The cells to rewrite found by their address, in document order (the engine hands
    them row by row): each ``r="C7"`` is looked up from where the previous cell ended and the
    element around it matched; the cells found are removed from ``wanted``. None when the
    order or the elements do not fit (the caller then visits every cell)."""
    pieces = []
    found = []
    pos = 0
    misses = 0
    for coord, v in wanted.items():
        i = body.find(b' r="' + coord + b'"', pos)
        if i < 0:
            misses += 1
            if misses > 64:
                return None
            continue
        start = body.rfind(b"<", pos, i)
        m = _CELL_RE.match(body, start) if start >= 0 else None
        if m is None or m.end() <= i:
            return None
        rm = _R_ATTR_RE.search(m.group("attrs"))
        if rm is None or rm.group(1) != coord or rm.start() + m.start("attrs") != i:
            return None
        pieces.append((0, m.start(), m.end(),
                       _cell_xml(m.group("p"), m.group("attrs"), m.group("body") or b"", v,
                                 freeze)))
        found.append(coord)
        pos = m.end()
    for coord in found:
        del wanted[coord]
    return pieces


def _patch_rows(xml: bytes, values: Mapping[str, Scalar], where: str,
                freeze: bool = False) -> bytes:
    """Row by row: write ``values`` into their cells, inserting missing cells and rows."""
    sd = _SHEETDATA_RE.search(xml)
    if sd is None:
        raise RecalcError(f"{where}: the sheet has no <sheetData>")
    p = sd.group("p")
    body = sd.group("body") or b""
    if b"<![CDATA[" in body:
        raise RecalcError(f"{where}: CDATA in cell data is not supported")
    by_row: dict[int, dict[int, tuple[str, Scalar]]] = {}
    for coord, v in values.items():
        r, c = _split_coord(coord)
        by_row.setdefault(r, {})[c] = (coord, v)

    def patch_row(m: re.Match, r: int) -> bytes:
        wanted = dict(by_row.pop(r, {}))
        row_p, attrs = m.group("p"), m.group("attrs").rstrip(b"/").rstrip()
        rbody = m.group("body") or b""
        cells = []
        for cm in _CELL_RE.finditer(rbody):
            rm = _R_ATTR_RE.search(cm.group("attrs"))
            if rm is None:
                raise RecalcError(f"{where}, row {r}: a cell has no 'r' "
                                  f"(address) attribute")
            _, col = _split_coord(rm.group(1).decode())
            if col in wanted:
                _, v = wanted.pop(col)
                xml_c = _cell_xml(cm.group("p"), cm.group("attrs"),
                                  cm.group("body") or b"", v, freeze)
            else:
                xml_c = cm.group(0)
            cells.append((col, cm.start(), cm.end(), xml_c))
        if not wanted:
            new_body = _splice(rbody, cells)
        else:
            for col, (coord, v) in wanted.items():
                cells.append((col, 0, 0, _cell_xml(
                    p, b' r="%s"' % coord.encode(), b"", v)))
            cells.sort(key=lambda x: x[0])
            new_body = b"".join(x[3] for x in cells)
            attrs = _SPANS_RE.sub(b"", attrs)
        return b"<%srow%s>%s</%srow>" % (row_p, attrs, new_body, row_p)

    rows = []
    for m in _ROW_RE.finditer(body):
        rm = _R_ATTR_RE.search(m.group("attrs"))
        if rm is None:
            raise RecalcError(f"{where}: a row has no 'r' (number) attribute")
        r = int(rm.group(1))
        rows.append((r, m.start(), m.end(),
                     patch_row(m, r) if r in by_row else m.group(0)))
    if not by_row:
        new_body = _splice(body, rows)
    else:
        for r, cols in by_row.items():
            cells = b"".join(
                _cell_xml(p, b' r="%s"' % coord.encode(), b"", v)
                for _, (coord, v) in sorted(cols.items()))
            rows.append((r, 0, 0, b'<%srow r="%d">%s</%srow>'
                         % (p, r, cells, p)))
        rows.sort(key=lambda x: x[0])
        new_body = b"".join(x[3] for x in rows)
    new_sd = b"<%ssheetData>%s</%ssheetData>" % (p, new_body, p)
    return xml[:sd.start()] + new_sd + xml[sd.end():]


def keep_cached_values_on_load(xml: bytes) -> bytes:
    """Switch off ``fullCalcOnLoad`` in the workbook's ``<calcPr>``.

    openpyxl sets it on every workbook it saves; it makes Excel recalculate
    on opening, which without the add-in turns the written values back into
    ``#NAME?``.  (LibreOffice 7.4 ignores the flag and follows its own
    "Recalculation on File Load" setting.)

    >>> keep_cached_values_on_load(b'<calcPr calcId="1" fullCalcOnLoad="1"/>')
    b'<calcPr calcId="1" fullCalcOnLoad="0"/>'
    """
    m = _CALCPR_RE.search(xml)
    if m is None:
        return xml
    tag = _FULLCALC_RE.sub(b"", m.group())
    end = -2 if tag.endswith(b"/>") else -1
    tag = tag[:end].rstrip() + b' fullCalcOnLoad="0"' + tag[end:]
    return xml[:m.start()] + tag + xml[m.end():]


def _extend_dimension(xml: bytes, coords: Iterable[str]) -> bytes:
    m = _DIM_RE.search(xml)
    if m is None:
        return xml
    ref = m.group(2).decode().replace("$", "")
    a, _, b = ref.partition(":")
    try:
        (min_row, min_col), (max_row, max_col) = split_coord(a), split_coord(b or a)
    except ValueError:
        return xml
    columns: dict = {}
    for coord in coords:
        letters = coord.rstrip("0123456789")
        c = columns.get(letters)
        if c is None:
            c = columns[letters] = _split_coord(letters + "1")[1]
        r = int(coord[len(letters):])
        if r < min_row:
            min_row = r
        elif r > max_row:
            max_row = r
        if c < min_col:
            min_col = c
        elif c > max_col:
            max_col = c
    new = f"{coord_name(min_row, min_col)}:{coord_name(max_row, max_col)}".encode()
    return xml[:m.start(2)] + new + xml[m.end(2):]



def _same(a, b) -> bool:
    if type(a) is float and type(b) is float:
        return a == b or (math.isnan(a) and math.isnan(b))
    return type(a) is type(b) and a == b


def cells_digest(cells, written, freeze: bool = False) -> str:
    """A digest of what writing values must leave unchanged in one sheet's cells.

    ``written`` holds the ``(row, col)`` keys whose cached values are written: their values are
    left out, and with ``freeze`` their formulas too. The evaluating process computes it from
    the cells it read; :func:`verify_patch` from the written part, read again.
    """
    formulas = sorted((rc, t) for rc, t in cells.formulas.items()
                      if not (freeze and rc in written))
    values = sorted((rc, type(v).__name__, v) for rc, v in cells.values.items()
                    if rc not in written)
    arrays = [] if freeze else sorted(cells.arrays.items())
    return hashlib.sha256(repr((formulas, values, arrays)).encode()).hexdigest()


def verify_patch(digest: str, after: bytes, values: Mapping[str, Scalar], where: str,
                 strings=(), freeze: bool = False) -> None:
    """Prove that ``after`` differs from the part that was read only in the values written.

    ``digest`` is :func:`cells_digest` of the part as read (before writing). ``after`` is read
    with the package reader: every formula and every other cell must be unchanged (the digests
    agree) and each written cell must hold what was evaluated. Raises :class:`RecalcError`
    otherwise (a writer fault).
    """
    new = read_sheet_cells(after, where, strings)
    written = {split_coord(c): v for c, v in values.items()}
    if cells_digest(new, written, freeze) != digest:
        raise RecalcError(f"{where}: internal error, writing values changed a formula or a "
                          f"cell it should not touch")
    for rc, v in written.items():
        if rc in new.formulas:
            continue          # a formula cell's cached value is not part of its reading
        got = new.values.get(rc)
        want = error(v) if isinstance(v, str) and v in ERROR_VALUES else v
        if isinstance(want, float) and not math.isfinite(want):
            want = error("#NUM!")
        if not (_same(got, want) or (type(got) is XlError and got == want)):
            raise RecalcError(f"{where}: internal error, cell {coord_name(*rc)} reads back "
                              f"{got!r} instead of {v!r}")
