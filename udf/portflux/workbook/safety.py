"""Checks a workbook file must pass before any reader (openpyxl, the formula engine) opens it.

An ``.xlsx`` / ``.xlsm`` workbook is an Office Open XML package: a zip archive of XML parts
(ECMA-376 Part 2, Open Packaging Conventions). A hostile or broken file can hurt the reader in
three ways, each bounded here *before* the package is parsed:

* **not a workbook**: not a zip archive, a truncated or corrupted one, an encrypted entry, or a
  package without ``[Content_Types].xml`` and ``xl/workbook.xml``;
* **zip bomb**: a small file that inflates to gigabytes, through many entries, a huge declared
  size, or an extreme compression ratio. The central directory is sized from the end record
  before :mod:`zipfile` reads it; every entry is then inflated in chunks with a byte cap, never
  whole, and its CRC-32 checked;
* **XML entity bomb** ("billion laughs") and external entities: any XML part that declares a
  DTD is refused. Each part is fed to :mod:`defusedxml`'s parser (``forbid_dtd=True``) in chunks
  only until its root element opens: a DTD can only stand before the root element (XML 1.0,
  production ``prolog``), so nothing after that needs reading.

Work and memory are bounded by the limits below, whatever the file holds. The limits are far
above any portflux workbook (templates are tens of kilobytes); raise them through the keyword
arguments of :func:`check_workbook_file` if a legitimate workbook is refused.

>>> import io, os, tempfile, zipfile
>>> path = os.path.join(tempfile.mkdtemp(), "note.xlsx")
>>> with open(path, "w") as f:
...     _ = f.write("hello")
>>> try:
...     check_workbook_file(path)
... except WorkbookFileError as e:
...     print(str(e).split(": ", 1)[1])
not an .xlsx workbook (not a zip archive)
"""

from __future__ import annotations

import io
import os
import struct
import zipfile
import zlib

from defusedxml import DefusedXmlException
from defusedxml.ElementTree import DefusedXMLParser
from xml.etree.ElementTree import ParseError

from ..core.errors import PortfluxError

__all__ = ["LIMITS", "WorkbookFileError", "check_workbook_file", "read_workbook_bytes"]

#: Default limits (bytes unless stated). A workbook beyond one is refused with a message naming it.
LIMITS = {
    "max_file_bytes": 256 * 2**20,          # size of the file on disk
    "max_entries": 10_000,                  # parts in the package
    "max_directory_bytes": 16 * 2**20,      # size of the zip central directory
    "max_part_bytes": 512 * 2**20,          # inflated size of one part
    "max_total_bytes": 1024 * 2**20,        # inflated size of all parts together
    "max_ratio": 100.0,                     # inflated / compressed size of a part ...
    "ratio_applies_above": 2**20,           # ... counted only for parts larger than this
    "max_prolog_bytes": 2**20,              # bytes read from an XML part to reach its root element
}

REQUIRED_PARTS = ("[Content_Types].xml", "xl/workbook.xml")

_CHUNK = 64 * 1024
_EOCD = b"PK\x05\x06"
_EOCD64_LOCATOR = b"PK\x06\x07"
_EOCD64 = b"PK\x06\x06"


class WorkbookFileError(PortfluxError):
    """A workbook file that is unsafe or unreadable; the message names the file and the fault."""

    def __init__(self, path, problem: str):
        self.path = os.fspath(path)
        self.problem = problem
        super().__init__(f"{self.path}: {problem}")


class _RootReached(Exception):
    """Raised from the parser target when the root element opens: the prolog is over."""


class _StopAtRoot:
    def start(self, tag, attrib):
        raise _RootReached

    def end(self, tag):
        pass

    def data(self, text):
        pass

    def close(self):
        return None


def _mib(n: float) -> str:
    """A byte count as people read it: "512 MiB", "10 GiB", "70 KiB"."""
    for unit, scale in (("GiB", 2**30), ("MiB", 2**20), ("KiB", 2**10)):
        if n >= scale:
            return f"{n / scale:.3g} {unit}"
    return f"{n:.0f} bytes"


def _directory_size(f, file_size: int) -> tuple[int, int] | None:
    """(entries, central directory bytes) from the end record(s), or None if there is none."""
    tail_len = min(file_size, 22 + 65535)
    f.seek(file_size - tail_len)
    tail = f.read(tail_len)
    k = tail.rfind(_EOCD)
    if k < 0 or len(tail) - k < 22:
        return None
    (_, _, _, _, entries, cd_size, _, _) = struct.unpack("<4s4H2LH", tail[k:k + 22])
    if entries == 0xFFFF or cd_size == 0xFFFFFFFF:      # zip64: read the zip64 end record
        loc = k - 20
        if loc < 0 or tail[loc:loc + 4] != _EOCD64_LOCATOR:
            return entries, cd_size
        offset = struct.unpack("<Q", tail[loc + 8:loc + 16])[0]
        if offset + 56 > file_size:
            return None
        f.seek(offset)
        rec = f.read(56)
        if rec[:4] != _EOCD64:
            return None
        entries, cd_size = struct.unpack("<QQ", rec[32:48])
    return entries, cd_size


def _scan_part(zf: zipfile.ZipFile, info: zipfile.ZipInfo, path: str, limits: dict) -> int:
    """Inflate one part in chunks (capped), check its CRC and, if it is XML, its prolog.

    Returns the number of bytes inflated.
    """
    name = info.filename
    cap = min(info.file_size, limits["max_part_bytes"])
    parser = None
    prolog = 0
    total = 0
    first = True
    try:
        with zf.open(info) as member:
            while True:
                chunk = member.read(_CHUNK)
                if not chunk:
                    break
                total += len(chunk)
                if total > cap:   # zipfile stops at the declared size; this is a second guard
                    raise WorkbookFileError(path, f"part {name!r} inflates beyond "
                                                  f"{_mib(cap)}; refusing it (zip bomb?)")
                if first:
                    first = False
                    head = chunk.lstrip(b"\xef\xbb\xbf \t\r\n")
                    if head.startswith(b"<"):
                        parser = DefusedXMLParser(target=_StopAtRoot(), forbid_dtd=True,
                                                  forbid_entities=True, forbid_external=True)
                if parser is not None:
                    prolog += len(chunk)
                    try:
                        parser.feed(chunk)
                    except _RootReached:
                        parser = None
                    except DefusedXmlException as e:
                        raise WorkbookFileError(
                            path, f"part {name!r} is not safe XML: it declares a DTD or entities "
                                  f"({type(e).__name__}), which a workbook never needs; refusing "
                                  f"it (XML entity bomb?)") from None
                    except ParseError as e:
                        raise WorkbookFileError(
                            path, f"part {name!r} is not well-formed XML ({e})") from None
                    if parser is not None and prolog > limits["max_prolog_bytes"]:
                        raise WorkbookFileError(
                            path, f"part {name!r}: no root element within the first "
                                  f"{_mib(limits['max_prolog_bytes'])}; refusing it")
    except WorkbookFileError:
        raise
    except (zipfile.BadZipFile, zlib.error, EOFError) as e:
        raise WorkbookFileError(path, f"part {name!r} is corrupted ({e}); the file is damaged or "
                                      f"truncated") from None
    except NotImplementedError as e:
        raise WorkbookFileError(path, f"part {name!r} cannot be read ({e})") from None
    except RuntimeError as e:     # zipfile: "File ... is encrypted, password required"
        raise WorkbookFileError(path, f"part {name!r} is encrypted ({e}); save the workbook "
                                      f"without a password") from None
    return total


def check_workbook_file(path, **limits) -> None:
    """Refuse a workbook file that is not a safe, readable OOXML package; return None if it is.

    Parameters
    ----------
    path : str or os.PathLike
        The workbook (``.xlsx`` / ``.xlsm``); only read.
    **limits
        Overrides of :data:`LIMITS` (same names).

    Raises
    ------
    WorkbookFileError
        Naming the file and the fault: not a zip archive, truncated or corrupted, too many parts,
        too large when inflated, compressed beyond the ratio limit, a required part missing, an
        encrypted part, or an XML part declaring a DTD.

    Examples
    --------
    >>> import os, tempfile, openpyxl
    >>> p = os.path.join(tempfile.mkdtemp(), "ok.xlsx")
    >>> openpyxl.Workbook().save(p)
    >>> check_workbook_file(p) is None
    True

    References: ECMA-376 Part 2 (Open Packaging Conventions); PKWARE APPNOTE.TXT (zip end of
    central directory record, sec. 4.3.16; zip64 sec. 4.3.14-4.3.15); XML 1.0, sec. 2.8 (the DTD
    belongs to the prolog). The ratio limit 100 follows Apache POI's default minimum inflate ratio
    0.01 (from memory).
    """
    read_workbook_bytes(path, **limits)


def read_workbook_bytes(path, **limits) -> bytes:
    """The bytes of a workbook file, read once, after every check of :func:`check_workbook_file`.

    The checks run on these bytes, not on the file again, so a reader of the returned bytes
    sees exactly what was checked. Besides the checks above, a package that holds two entries
    of one name (or of names equal but for case: OPC part names ignore case) is refused, since
    zip readers differ in which copy they take.
    """
    unknown = set(limits) - set(LIMITS)
    if unknown:
        raise TypeError(f"unknown limit(s): {', '.join(sorted(unknown))}")
    lim = {**LIMITS, **limits}
    path = os.fspath(path)
    try:
        size = os.path.getsize(path)
        if not os.path.isfile(path):
            raise WorkbookFileError(path, "not a regular file")
    except OSError as e:
        raise WorkbookFileError(path, f"cannot be read ({e.strerror or e})") from None
    if size > lim["max_file_bytes"]:
        raise WorkbookFileError(path, f"the file is {_mib(size)}, above the limit "
                                      f"{_mib(lim['max_file_bytes'])}")
    try:
        with open(path, "rb") as fh:
            data = fh.read(size + 1)          # the size was checked above
    except OSError as e:
        raise WorkbookFileError(path, f"cannot be read ({e.strerror or e})") from None
    if len(data) > lim["max_file_bytes"]:
        raise WorkbookFileError(path, f"the file grew beyond the limit "
                                      f"{_mib(lim['max_file_bytes'])} while being read")
    size = len(data)
    f = io.BytesIO(data)
    head = data[:4]
    found = _directory_size(f, size) if size >= 22 else None
    if found is None:
        if head.startswith(b"PK\x03\x04"):
            raise WorkbookFileError(path, "not an .xlsx workbook (not a zip archive: the end of "
                                          "the archive is missing; the file is truncated)")
        if head.startswith(b"\xd0\xcf\x11\xe0"):
            raise WorkbookFileError(path, "not an .xlsx workbook (not a zip archive: this is an "
                                          "old binary .xls file or an encrypted workbook; save "
                                          "it as .xlsx)")
        raise WorkbookFileError(path, "not an .xlsx workbook (not a zip archive)")
    entries, cd_size = found
    if entries > lim["max_entries"]:
        raise WorkbookFileError(path, f"the package declares {entries} parts, above the limit "
                                      f"{lim['max_entries']}")
    if cd_size > lim["max_directory_bytes"]:
        raise WorkbookFileError(path, f"the zip directory is {_mib(cd_size)}, above the limit "
                                      f"{_mib(lim['max_directory_bytes'])}")
    try:
        zf = zipfile.ZipFile(io.BytesIO(data))
    except (zipfile.BadZipFile, OSError, EOFError, ValueError, struct.error) as e:
        raise WorkbookFileError(path, f"not an .xlsx workbook (not a zip archive: {e})") from None
    with zf:
        infos = zf.infolist()
        if len(infos) > lim["max_entries"]:
            raise WorkbookFileError(path, f"the package holds {len(infos)} parts, above the "
                                          f"limit {lim['max_entries']}")
        total = 0
        for info in infos:
            if info.file_size > lim["max_part_bytes"]:
                raise WorkbookFileError(path, f"part {info.filename!r} declares "
                                              f"{_mib(info.file_size)} inflated, above the limit "
                                              f"{_mib(lim['max_part_bytes'])} (zip bomb?)")
            total += info.file_size
            if total > lim["max_total_bytes"]:
                raise WorkbookFileError(path, f"the parts declare more than "
                                              f"{_mib(lim['max_total_bytes'])} inflated in all "
                                              f"(zip bomb?)")
            if info.file_size > lim["ratio_applies_above"]:
                ratio = info.file_size / max(info.compress_size, 1)
                if ratio > lim["max_ratio"]:
                    raise WorkbookFileError(path, f"part {info.filename!r} is compressed "
                                                  f"{ratio:.0f}:1, above the limit "
                                                  f"{lim['max_ratio']:g}:1 (zip bomb?)")
        seen = {}
        for info in infos:
            folded = info.filename.replace("\\", "/").lower()
            if folded in seen:
                raise WorkbookFileError(path, f"the package holds two entries named "
                                              f"{seen[folded]!r} and {info.filename!r}; zip "
                                              f"readers differ in which one they read, so the "
                                              f"workbook is refused")
            seen[folded] = info.filename
        names = {i.filename for i in infos}
        missing = [p for p in REQUIRED_PARTS if p not in names]
        if missing:
            raise WorkbookFileError(path, f"not an .xlsx workbook: the package has no "
                                          f"{' and no '.join(missing)}")
        for info in infos:
            if not info.is_dir():
                _scan_part(zf, info, path, lim)
    return data


#: Workbook files the embedded engine reads (what openpyxl writes and Excel saves).
WORKBOOK_SUFFIXES = (".xlsx", ".xlsm")


def input_suffix_problem(in_path) -> str | None:
    """Why ``in_path`` is not a workbook the embedded engine reads (by its extension), or None.

    >>> input_suffix_problem("a.xlsx"), input_suffix_problem("a.ods")
    (None, 'expected an .xlsx or .xlsm workbook')
    """
    if os.path.splitext(os.fspath(in_path))[1].lower() not in WORKBOOK_SUFFIXES:
        return "expected an .xlsx or .xlsm workbook"
    return None


def check_output_path(in_path, out_path, *, check_input_suffix=False) -> None:
    """Refuse an output path that is the input (however spelled: relative, ``..``, a symbolic
    or hard link), has another extension, or lies in a folder that does not exist; with
    ``check_input_suffix``, also an input that is not .xlsx or .xlsm (after the first check).

    The rule of every recalculation engine (both engines call it).

    >>> check_output_path("a.xlsx", "b.xlsx")
    >>> try:
    ...     check_output_path("a.xlsx", "b.ods")
    ... except WorkbookFileError as e:
    ...     print(e)
    b.ods: the output must keep the input's extension '.xlsx'
    """
    in_path, out_path = os.fspath(in_path), os.fspath(out_path)
    from .output import same_file

    if same_file(in_path, out_path):
        raise WorkbookFileError(out_path, "refusing to write over the input workbook; choose "
                                          "another output path")
    problem = input_suffix_problem(in_path) if check_input_suffix else None
    if problem:
        raise WorkbookFileError(in_path, problem)
    in_ext = os.path.splitext(in_path)[1].lower()
    if os.path.splitext(out_path)[1].lower() != in_ext:
        raise WorkbookFileError(out_path, f"the output must keep the input's extension "
                                          f"{in_ext!r}")
    out_dir = os.path.dirname(os.path.abspath(out_path))
    if not os.path.isdir(out_dir):
        raise WorkbookFileError(out_path, f"folder {out_dir} does not exist")
