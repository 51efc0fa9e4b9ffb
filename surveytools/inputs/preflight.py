"""Preflight: decide whether a workbook is safe to hand to a reader, before any reader runs.

Checks, in order (each failure raises :class:`~surveytools.errors.WorkbookError` with a
stable code): the file (empty, too large, not a regular file), its format by content
(OLE container = legacy .xls or encrypted workbook, .xlsb, .ods, a CSV/HTML file renamed
.xlsx, a zip that is not a workbook), the zip directory (corrupt or truncated, too many
members, declared sizes, compression ratio, encrypted members), every XML part's encoding
and DTD (no ``<!DOCTYPE``/``<!ENTITY`` anywhere: real Excel never writes one), and each
worksheet's used extent (rows x columns), computed from the cells themselves, never from
``<dimension>``.

The extent scan streams each worksheet: a fast bytes-level path when every cell carries an
``r=`` reference in upper-case A1 form and no namespace prefix is used on cells (as Excel,
xlsxwriter and openpyxl write them), and an exact Expat scan otherwise, following OOXML's
rules for omitted references (a ``<row>`` without ``r`` is the previous row + 1, a ``<c>``
without ``r`` the previous column + 1) and matching elements by local name whatever their
namespace prefix, as the readers do.

Fast-path bound on rows: cell rows are checked per 4 MiB piece against the number of digits
of the piece's last cell row (so a stray cell with a longer row number is always found);
rows are exact for sheets whose rows ascend, as the format requires.

Only the standard library is used, so this module imports fast.
"""

from __future__ import annotations

import functools
import os
import queue
import re
import stat
import struct
import sys
import threading
import zipfile
import zlib
from collections.abc import Iterator
from dataclasses import dataclass, field, replace
from pathlib import Path
from xml.parsers import expat

from surveytools import constants as const
from surveytools.debuglog import log_raw
from surveytools.errors import WorkbookError, os_reason

_MB = 1_000_000


@dataclass(frozen=True)
class PreflightLimits:
    """Limits applied before reading; defaults sized for survey logs.

    A week of 1-s readings (604,800 rows x 4 columns) is ~14 MB on disk and ~97 MB of sheet
    XML (compression ~7:1); a day of 100 ms readings is 864,000 rows. The defaults leave
    several times that headroom.
    """

    max_file_bytes: int = 200 * _MB
    max_members: int = 2_000
    max_total_uncompressed_bytes: int = 1_000 * _MB
    max_member_uncompressed_bytes: int = 600 * _MB
    #: Largest compression ratio accepted for members larger than ``ratio_min_bytes``.
    #: Genuine sheet XML compresses ~7:1; highly repetitive genuine sheets stay below ~40:1.
    max_ratio: float = 200.0
    ratio_min_bytes: int = 1 * _MB
    max_cells_area: int = 20_000_000
    max_rows: int = const.SHEET_MAX_ROWS
    max_columns: int = const.SHEET_MAX_COLUMNS


@dataclass(frozen=True)
class SheetInfo:
    """What the preflight found about one worksheet.

    Parameters
    ----------
    name : str
        Sheet name as in the workbook.
    part : str
        Zip member holding the sheet (``xl/worksheets/sheet1.xml``).
    visibility : str
        ``"visible"``, ``"hidden"`` or ``"veryHidden"``.
    max_row, max_col : int
        Used extent: largest 1-based row and column holding a cell element (0 when empty).
    formulas_without_value : tuple of str
        A1 references of formula cells with no cached value.
    merged_ranges : tuple of str
        Merged ranges (``"A3:A5"``).
    head : bytes
        The first bytes (up to 256 KiB) of the sheet XML, so that a reader can look at the
        first rows (header search) without parsing the whole sheet again.
    """

    name: str
    part: str
    visibility: str
    max_row: int = 0
    max_col: int = 0
    formulas_without_value: tuple[str, ...] = ()
    merged_ranges: tuple[str, ...] = ()
    head: bytes = field(default=b"", repr=False)


@dataclass
class PreflightReport:
    """Everything the preflight learned; the reader relies on it.

    Parameters
    ----------
    path : str
        File checked.
    date_system : int
        1900 or 1904 (``workbookPr date1904``).
    sheets : list of SheetInfo
        Worksheets in workbook order (chart sheets are left out).
    application : str or None
        ``Application`` from ``docProps/app.xml`` (the program that saved the file).
    extents_known : bool
        False for a :func:`preflight_heads` report: the sheets' extents, formulas and
        merged ranges are not known yet (only their heads).
    """

    path: str
    date_system: int = 1900
    sheets: list[SheetInfo] = field(default_factory=list)
    application: str | None = None
    extents_known: bool = True

    def sheet(self, name: str) -> SheetInfo:
        """Return the info of the sheet called ``name`` (exact name)."""
        for s in self.sheets:
            if s.name == name:
                return s
        raise KeyError(name)

    @property
    def formulas_without_value(self) -> list[tuple[str, str]]:
        """Return ``(sheet, cell reference)`` of every formula cell without a cached value."""
        return [(s.name, ref) for s in self.sheets for ref in s.formulas_without_value]


# --------------------------------------------------------------------------------------
# Public entry point
# --------------------------------------------------------------------------------------


def preflight(
    path: str | os.PathLike[str], limits: PreflightLimits | None = None,
    *, helper_thread: bool = True,
) -> PreflightReport:
    """Check that ``path`` is a workbook that is safe to read, and describe it.

    Parameters
    ----------
    path : str or path-like
        The input file (opened read-only; never modified).
    limits : PreflightLimits, optional
        Limits to apply (defaults: :class:`PreflightLimits`).
    helper_thread : bool
        Inflate each sheet in a helper thread while this one scans it (fastest when the
        preflight has both cores). False when a reader runs beside it: three busy threads
        on two cores cost more than they gain.

    Returns
    -------
    PreflightReport

    Raises
    ------
    WorkbookError
        With one of the codes ``file-not-regular``, ``file-empty``, ``file-too-large``,
        ``file-not-a-zip``, ``file-legacy-xls-or-encrypted``, ``file-xlsb``, ``file-ods``,
        ``file-not-ooxml``, ``zip-corrupt``, ``zip-too-many-members``, ``zip-too-large``,
        ``zip-ratio``, ``zip-encrypted-member``, ``xml-doctype``, ``xml-encoding``,
        ``sheet-too-large``.
    """
    return _run(path, limits, scan=True, threaded=helper_thread)


def preflight_heads(
    path: str | os.PathLike[str], limits: PreflightLimits | None = None
) -> PreflightReport:
    """Run every check of :func:`preflight` except the worksheet extent scans.

    The checks that need no full inflate of the sheets (file, format, zip directory with
    its declared sizes and ratios, encodings and DTDs) are done; each sheet's
    :attr:`SheetInfo.head` holds the same first bytes the full scan keeps, while its
    extent, formulas and merged ranges are left unknown (0 / empty) and
    :attr:`PreflightReport.extents_known` is False. A reader may start on such a report
    only in a process with memory and time limits, and must wait for the full
    :func:`preflight`, whose refusal wins, before it uses what it read.

    Raises
    ------
    WorkbookError
        As :func:`preflight`, except ``sheet-too-large`` and the refusals that only a full
        inflate finds (``zip-corrupt`` for a bad CRC or a member larger than declared).
    """
    return _run(path, limits, scan=False, threaded=False)


def _run(path: str | os.PathLike[str], limits: PreflightLimits | None, scan: bool,
         threaded: bool) -> PreflightReport:
    lim = limits or PreflightLimits()
    p = os.fspath(path)
    head = _check_file(p, lim)
    _check_magic(p, head)
    try:
        with zipfile.ZipFile(p) as zf:
            infos = _check_members(zf, lim)
            names = {i.filename for i in infos}
            _check_format(zf, names)
            for info in infos:
                if info.filename.lower().endswith((".xml", ".rels", ".vml")):
                    _check_xml_part(zf, info)
            _check_declared_strings(zf, names, lim)
            report = _describe(zf, p, names)
            sheets = []
            for s in report.sheets:
                if s.part not in names:
                    raise WorkbookError(
                        "file-not-ooxml",
                        f"The workbook lists sheet '{s.name}' but its part {s.part} is "
                        "missing. Open and re-save the file in a spreadsheet program.",
                        sheet=s.name,
                    )
                if scan:
                    sheets.append(_scan_sheet(zf, zf.getinfo(s.part), s, lim, threaded))
                else:
                    with zf.open(s.part) as fh:
                        head = fh.read(HEAD_KEEP_BYTES)
                    _check_head_extent(s.name, head, lim)
                    sheets.append(replace(s, head=head))
            report.sheets = sheets
            report.extents_known = scan
            return report
    except WorkbookError:
        raise
    except (zipfile.BadZipFile, zlib.error, EOFError, OSError, ValueError, KeyError,
            struct.error, UnicodeDecodeError, expat.ExpatError) as exc:
        log_raw(f"preflight of {path}", exc)  # the library's own words: debug log only
        raise WorkbookError(
            "zip-corrupt",
            f"The file is damaged or incomplete ({_damage(exc)}). Copy it again from the "
            "meter or the sender; if it was still being copied, wait until the copy has "
            "finished.",
        ) from exc


def _damage(exc: BaseException) -> str:
    """Say in our words which layer of the file a library found damaged."""
    if isinstance(exc, zlib.error | EOFError):
        return "a compressed part does not unpack: it is cut short or altered"
    if isinstance(exc, expat.ExpatError):
        return "the markup of a part of the workbook is damaged"
    if isinstance(exc, UnicodeDecodeError):
        return "a part of the workbook is not in the text encoding it declares"
    if isinstance(exc, OSError) and not isinstance(exc, zipfile.BadZipFile):
        return "the file could not be read to its end"
    if isinstance(exc, KeyError):
        return "a part the workbook refers to is missing"
    if "CRC" in str(exc):
        return "a part's checksum (CRC) does not match its contents"
    return "its zip structure is broken"


# --------------------------------------------------------------------------------------
# File and format
# --------------------------------------------------------------------------------------

_OLE_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"


def _check_file(path: str, lim: PreflightLimits) -> bytes:
    try:
        st = Path(path).stat()
    except OSError as exc:
        raise WorkbookError("file-not-regular", f"The file cannot be opened ({os_reason(exc)}). "
                            "Check the path and the permissions.") from exc
    if not stat.S_ISREG(st.st_mode):
        raise WorkbookError("file-not-regular", "This is not a regular file (a folder, pipe or "
                            "device). Put the workbook itself in the folder.")
    if st.st_size == 0:
        raise WorkbookError("file-empty", "The file is empty (0 bytes). Copy it again from the "
                            "meter or the sender.")
    if st.st_size > lim.max_file_bytes:
        raise WorkbookError(
            "file-too-large",
            f"The file is {st.st_size / _MB:.0f} MB; the limit is "
            f"{lim.max_file_bytes / _MB:.0f} MB. Split the log into several workbooks "
            "or export it as CSV.",
        )
    with Path(path).open("rb") as fh:
        return fh.read(4096)


def _check_magic(path: str, head: bytes) -> None:
    if head.startswith(_OLE_MAGIC):
        raise WorkbookError(
            "file-legacy-xls-or-encrypted",
            "This file is an encrypted workbook or a legacy .xls; save it as an unprotected "
            ".xlsx (File > Save As > Excel Workbook, without a password) and try again.",
        )
    if head.startswith((b"PK\x03\x04", b"PK\x05\x06")):
        return
    raise WorkbookError("file-not-a-zip", f"This is not an .xlsx workbook: {_sniff(head)}")


def _sniff(head: bytes) -> str:
    text = head.lstrip(b"\xef\xbb\xbf").lstrip().lower()
    if text.startswith((b"<!doctype html", b"<html", b"<?xml", b"<table", b"<")):
        return ("it holds HTML/XML text (probably a web page or report saved with an .xlsx "
                "name). Export the readings again as an .xlsx workbook.")
    try:
        sample = head.decode("utf-8")
    except UnicodeDecodeError:
        sample = ""
    if sample and ("," in sample or ";" in sample or "\t" in sample) and "\n" in sample:
        return ("it holds delimited text (a CSV file renamed .xlsx). Rename it to .csv so it "
                "is read as a CSV log, or save it as an .xlsx workbook.")
    return "its content is not a zip container. Save or export it again as an .xlsx workbook."


def _check_members(zf: zipfile.ZipFile, lim: PreflightLimits) -> list[zipfile.ZipInfo]:
    infos = zf.infolist()
    if len(infos) > lim.max_members:
        raise WorkbookError(
            "zip-too-many-members",
            f"The workbook container holds {len(infos)} parts; the limit is {lim.max_members}. "
            "A survey workbook needs a few dozen; re-save it from a spreadsheet program.",
        )
    seen: set[str] = set()
    total = 0
    for i in infos:
        if i.filename in seen:
            raise WorkbookError("zip-corrupt", f"The container holds part {i.filename} twice; "
                                "the file is damaged. Re-save it from a spreadsheet program.")
        seen.add(i.filename)
        if i.flag_bits & 0x1:
            raise WorkbookError(
                "zip-encrypted-member",
                f"Part {i.filename} of the workbook is encrypted. Save the workbook without a "
                "password and try again.",
            )
        if i.compress_type not in (zipfile.ZIP_STORED, zipfile.ZIP_DEFLATED):
            raise WorkbookError("zip-corrupt", f"Part {i.filename} uses an unsupported "
                                "compression method; re-save the workbook from a spreadsheet "
                                "program.")
        total += i.file_size
        if i.file_size > lim.max_member_uncompressed_bytes:
            raise WorkbookError(
                "zip-too-large",
                f"Part {i.filename} unpacks to {i.file_size / _MB:.0f} MB; the limit is "
                f"{lim.max_member_uncompressed_bytes / _MB:.0f} MB. Split the log into "
                "several workbooks or export it as CSV.",
            )
        ratio = i.file_size / max(i.compress_size, 1)
        if i.file_size > lim.ratio_min_bytes and ratio > lim.max_ratio:
            raise WorkbookError(
                "zip-ratio",
                f"Part {i.filename} unpacks {ratio:.0f} times "
                f"larger than it is stored (limit {lim.max_ratio:.0f}:1): this is how "
                "decompression bombs look, not survey data. Ask the sender for the original "
                "export.",
            )
    if total > lim.max_total_uncompressed_bytes:
        raise WorkbookError(
            "zip-too-large",
            f"The workbook unpacks to {total / _MB:.0f} MB; the limit is "
            f"{lim.max_total_uncompressed_bytes / _MB:.0f} MB. Split the log into several "
            "workbooks or export it as CSV.",
        )
    return infos


def _check_format(zf: zipfile.ZipFile, names: set[str]) -> None:
    lower = {n.lower() for n in names}
    if "xl/workbook.bin" in lower:
        raise WorkbookError("file-xlsb", "This is a binary workbook (.xlsb). Save it as an "
                            ".xlsx workbook (Excel Workbook format) and try again.")
    if "mimetype" in lower or "content.xml" in lower:
        mimetype = b""
        if "mimetype" in names and zf.getinfo("mimetype").file_size < 200:
            mimetype = zf.read("mimetype")
        if b"opendocument" in mimetype or "content.xml" in lower:
            raise WorkbookError("file-ods", "This is an OpenDocument spreadsheet (.ods). Save "
                                "it as an .xlsx workbook and try again.")
    if "[Content_Types].xml" not in names or "xl/workbook.xml" not in names:
        raise WorkbookError("file-not-ooxml", "This zip file is not an .xlsx workbook (no "
                            "workbook part inside). Export the readings again as .xlsx.")


# --------------------------------------------------------------------------------------
# XML encoding and DTD
# --------------------------------------------------------------------------------------

_DECL_ENCODING_RE = re.compile(r"""^\s*<\?xml[^>]*?\bencoding\s*=\s*["']([^"']*)["']""", re.I)
_DTD_RE = re.compile(r"<!\s*(?:DOCTYPE|ENTITY)", re.I)
_ROOT_START_RE = re.compile(r"<[A-Za-z_]")
_HEAD_BYTES = 65_536
_WHOLE_PART_BYTES = 4 * _MB


def _bad_encoding(part: str, found: str) -> WorkbookError:
    return WorkbookError(
        "xml-encoding",
        f"Part {part} of the workbook is written in {found}; workbooks use UTF-8 or UTF-16. "
        "Re-save the file from a spreadsheet program.",
    )


def detect_xml_encoding(data: bytes, part: str = "?") -> str:
    """Return the Python codec of an XML part's bytes, or raise for a refused encoding.

    Only UTF-8 (with or without BOM) and UTF-16 with a BOM are accepted. The UTF-32 BOM is
    tested before the UTF-16 one (``FF FE 00 00`` starts with ``FF FE``); BOM-less UTF-16 or
    UTF-32 and any declared encoding other than UTF-8/UTF-16 raise ``xml-encoding``.
    """
    if data.startswith((b"\x00\x00\xfe\xff", b"\xff\xfe\x00\x00")):
        raise _bad_encoding(part, "UTF-32")
    if data.startswith(b"\xef\xbb\xbf"):
        codec = "utf-8-sig"
    elif data.startswith((b"\xfe\xff", b"\xff\xfe")):
        codec = "utf-16"
    elif data[:4] in (b"\x00\x00\x00<", b"<\x00\x00\x00"):
        raise _bad_encoding(part, "UTF-32 without a byte-order mark")
    elif data[:2] in (b"\x00<", b"<\x00"):
        raise _bad_encoding(part, "UTF-16 without a byte-order mark")
    else:
        codec = "utf-8"
    text = _decode_head(data[:4096], codec, part)
    m = _DECL_ENCODING_RE.match(text)
    if m:
        declared = m.group(1).strip().lower().replace("_", "-")
        allowed = {"utf-8", "utf8"} if codec != "utf-16" else {"utf-16", "utf-16le", "utf-16be"}
        if declared not in allowed:
            raise _bad_encoding(part, f"the declared encoding '{m.group(1)[:40]}'")
    return codec


def _decode_head(data: bytes, codec: str, part: str) -> str:
    import codecs

    try:
        return codecs.getincrementaldecoder(codec)().decode(data, final=False)
    except UnicodeDecodeError as exc:
        raise _bad_encoding(part, "bytes that are not valid in its encoding") from exc


def _doctype_error(part: str) -> WorkbookError:
    return WorkbookError(
        "xml-doctype",
        f"Part {part} of the workbook carries a DTD (<!DOCTYPE>/<!ENTITY>), which spreadsheet "
        "programs never write and which is used for XML entity attacks. The file was not "
        "read; ask the sender for the original export.",
    )


def _check_xml_part(zf: zipfile.ZipFile, info: zipfile.ZipInfo) -> None:
    with zf.open(info) as fh:
        head = fh.read(_HEAD_BYTES if info.file_size > _WHOLE_PART_BYTES else _WHOLE_PART_BYTES)
    if not head:
        return
    codec = detect_xml_encoding(head, info.filename)
    text = _decode_head(head, codec, info.filename)
    if info.file_size <= _WHOLE_PART_BYTES:
        if _DTD_RE.search(text):
            raise _doctype_error(info.filename)
        return
    # Large part: a DTD can only stand in the prolog, before the root element.
    body = text.lstrip("\ufeff")
    pos = 0
    while True:
        m = _ROOT_START_RE.search(body, pos)
        if m is None:
            raise _doctype_error(info.filename) if _DTD_RE.search(body) else WorkbookError(
                "xml-doctype",
                f"Part {info.filename} has an XML header longer than {_HEAD_BYTES} bytes; "
                "spreadsheet programs never write one. Re-save the file.",
            )
        if _DTD_RE.search(body, 0, m.start()):
            raise _doctype_error(info.filename)
        return


# --------------------------------------------------------------------------------------
# workbook.xml, rels, app.xml (read with Expat after the DTD check; DTDs refused again)
# --------------------------------------------------------------------------------------


def _parse_small_xml(zf: zipfile.ZipFile, name: str) -> list[tuple[str, dict[str, str], str]]:
    """Return ``(local name, attributes by local name, text)`` of every element."""
    events: list[tuple[str, dict[str, str], str]] = []
    texts: list[list[str]] = []
    parser = expat.ParserCreate(namespace_separator=" ")

    def start(tag: str, attrs: dict[str, str]) -> None:
        local = {k.rsplit(" ", 1)[-1]: v for k, v in attrs.items()}
        events.append((tag.rsplit(" ", 1)[-1], local, ""))
        texts.append([])

    def end(tag: str) -> None:
        text = "".join(texts.pop())
        for i in range(len(events) - 1, -1, -1):
            if events[i][0] == tag.rsplit(" ", 1)[-1] and events[i][2] == "":
                events[i] = (events[i][0], events[i][1], text)
                break

    def chars(data: str) -> None:
        if texts:
            texts[-1].append(data)

    def doctype(*_args: object) -> None:
        raise _doctype_error(name)

    parser.StartElementHandler = start
    parser.EndElementHandler = end
    parser.CharacterDataHandler = chars
    parser.StartDoctypeDeclHandler = doctype
    parser.EntityDeclHandler = doctype
    parser.Parse(zf.read(name), True)
    return events


def _describe(zf: zipfile.ZipFile, path: str, names: set[str]) -> PreflightReport:
    report = PreflightReport(path=path)
    rels: dict[str, tuple[str, str]] = {}
    if "xl/_rels/workbook.xml.rels" in names:
        for tag, attrs, _ in _parse_small_xml(zf, "xl/_rels/workbook.xml.rels"):
            if tag == "Relationship" and "Id" in attrs:
                rels[attrs["Id"]] = (attrs.get("Target", ""), attrs.get("Type", ""))
    for tag, attrs, _ in _parse_small_xml(zf, "xl/workbook.xml"):
        if tag == "workbookPr" and attrs.get("date1904", "").lower() in ("1", "true"):
            report.date_system = 1904
        elif tag == "sheet":
            target, typ = rels.get(attrs.get("id", ""), ("", ""))
            if typ and not typ.endswith("/worksheet"):
                continue  # chart sheet, dialog sheet ...
            part = target.lstrip("/") if target.startswith("/") else "xl/" + target
            part = os.path.normpath(part).replace(os.sep, "/")
            report.sheets.append(SheetInfo(attrs.get("name", ""), part,
                                           attrs.get("state", "visible")))
    if "docProps/app.xml" in names:
        for tag, _attrs, text in _parse_small_xml(zf, "docProps/app.xml"):
            if tag == "Application":
                report.application = text.strip() or None
    return report


# --------------------------------------------------------------------------------------
# Worksheet extent scan
# --------------------------------------------------------------------------------------

_CHUNK = 1 << 20
#: Bytes of sheet XML checked per regex pass in the fast path. A regex call holds the GIL
#: throughout, and the inflating thread needs it between output blocks: short calls keep
#: that thread from waiting (measured on a week of 1-s rows: 128 KiB beats 512 KiB).
_WINDOW = 1 << 17
#: Compressed bytes inflated per step by the helper thread (~0.9 MB of XML out, which stays
#: in cache for the CRC and the scan; 128-256 KiB measured faster than 1 MiB or 4 MiB).
_RAW_STEP = 1 << 17
#: Thread switch interval while a sheet is inflated in the helper thread [s].
_SWITCH_INTERVAL_S = 1e-4
#: Bytes of each sheet's XML kept in :attr:`SheetInfo.head`.
HEAD_KEEP_BYTES = 256 << 10
_MAX_PENDING = 64 << 20
_PREFIXED_CELL_RE = re.compile(rb':(?:c|row|sheetData)[\s/>]')
_LAST_REF_RE = re.compile(rb'<c r="[A-Z]+([0-9]+)"')
_MERGE_RE = re.compile(rb'<mergeCell\s+ref="([A-Za-z]+[0-9]+(?::[A-Za-z]+[0-9]+)?)"')
_FORMULA_NO_VALUE_RE = re.compile(
    rb'<c r="([A-Z]+[0-9]+)"[^>]*(?<!/)>(?:<f[^>]*/>|<f[^>]*>[^<]*</f>)(?:<v\s*/>|<v></v>)?</c>'
)
_SAMPLE_BYTES = 256 << 10
_LETTERS_RE = re.compile(rb'<c r="([A-Z]+)[0-9]')
_ROWS_RE = re.compile(rb'<c r="[A-Z]+([0-9]+)"')
_ROOT_TAG_RE = re.compile(rb"<([A-Za-z_][\w.\-]*:)?worksheet[\s>]")


class _NeedExactError(Exception):
    """The fast path met something non-standard: rescan exactly with Expat."""


class _NeedExactRowsError(Exception):
    """Loose row bounds could hide an over-large sheet: rescan with exact rows per piece."""


def _exact_max(piece: bytes, max_row: int, max_col: int) -> tuple[int, int]:
    """Return the largest row and column of the ``<c r="...">`` references in ``piece``."""
    letters = set(_LETTERS_RE.findall(piece))
    if any(len(x) > 3 for x in letters):
        raise _NeedExactError
    if letters:
        max_col = max(max_col, *(column_number(x.decode()) for x in letters))
    rows = _ROWS_RE.findall(piece)
    if rows:
        longest = max(map(len, rows))
        if longest > 7:
            raise _NeedExactError
        max_row = max(max_row, int(max(r for r in rows if len(r) == longest)))
    return max_row, max_col


def column_number(letters: str) -> int:
    """Return the 1-based column number of column letters (``"A"`` -> 1, ``"XFD"`` -> 16384)."""
    n = 0
    for ch in letters.upper():
        n = n * 26 + (ord(ch) - 64)
    return n


def column_letters(number: int) -> str:
    """Return the column letters of a 1-based column number (1 -> ``"A"``)."""
    out = ""
    while number > 0:
        number, rem = divmod(number - 1, 26)
        out = chr(65 + rem) + out
    return out


@functools.lru_cache(maxsize=1024)
def _unusual_cell_re(max_col: int, digits: int, probe: bool = False) -> re.Pattern[bytes]:
    """Compiled :func:`_unusual_cell_pattern` (cached: looked up once per piece)."""
    return re.compile(_unusual_cell_pattern(max_col, digits, probe))


def _unusual_cell_pattern(max_col: int, digits: int, probe: bool = False) -> bytes:
    """Regex for a cell start tag that is not ``<c r="REF"`` with REF inside the bounds.

    REF must be upper-case letters no later than column ``max_col`` followed by a row
    number of 1 to ``digits`` digits (no leading zero) and a closing quote.

    With ``probe``, the pattern leaves out the check that ``<c`` is a whole element name,
    so it also matches ``<col``, ``<cfRule`` and the like (outside the rows): it finds
    every piece the full pattern finds, ~15 % faster, and the full pattern then decides.
    """
    start = "<c" if probe else "<c(?=[\\s/>])"
    if max_col < 1:
        return start.encode()  # no cell seen yet: every cell is news
    letters = column_letters(max_col)
    n = len(letters)
    alts = [f"[A-Z]{{1,{n - 1}}}"] if n > 1 else []
    for i, ch in enumerate(letters[:-1]):
        if ch != "A":
            alts.append(letters[:i] + f"[A-{chr(ord(ch) - 1)}]" + f"[A-Z]{{{n - i - 1}}}")
    alts.append(letters[:-1] + f"[A-{letters[-1]}]")
    # Possessive digits (no backtracking): the same matches as the greedy form, since a
    # shorter run of digits is followed by a digit, never by the closing quote.
    ok = "(?:" + "|".join(alts) + ")" + f"[1-9][0-9]{{0,{digits - 1}}}+" + '"'
    return (start + '(?! r="' + ok + ")").encode()


def _inflate(zf: zipfile.ZipFile, info: zipfile.ZipInfo, threaded: bool = True
             ) -> Iterator[bytes]:
    """Yield the member's bytes in chunks, size and CRC checked.

    ``threaded``: a helper thread inflates and checks the size while this thread computes
    the CRC of each chunk as it takes it (zlib releases the GIL for it), which balances
    the two threads: inflating is the longer task. Otherwise this thread does both.
    """
    if info.compress_type != zipfile.ZIP_DEFLATED or zf.fp is None:
        with zf.open(info) as fh:
            while chunk := fh.read(_CHUNK):
                yield chunk
        return
    path = zf.filename
    assert path is not None
    with Path(path).open("rb") as fh:
        fh.seek(info.header_offset)
        local = fh.read(30)
        if local[:4] != b"PK\x03\x04":
            raise zipfile.BadZipFile(f"bad local header for {info.filename}")
        name_len, extra_len = struct.unpack("<HH", local[26:30])
        data_start = info.header_offset + 30 + name_len + extra_len
    pieces = (_inflated_in_helper(Path(path), info, data_start) if threaded
              else _inflated(Path(path), info, data_start, threading.Event()))
    crc = 0
    for item in pieces:
        crc = zlib.crc32(item, crc)
        yield item
    if crc != info.CRC:
        raise zipfile.BadZipFile(f"Bad CRC-32 or size for {info.filename}")


def _inflated(path: Path, info: zipfile.ZipInfo, data_start: int, stop: threading.Event
              ) -> Iterator[bytes]:
    """Inflate one deflated member from ``data_start``, in chunks.

    Refuses a member larger than declared, truncated, or of another size than declared;
    ``stop`` ends it early, unchecked.
    """
    d = zlib.decompressobj(-15)
    size = 0
    with path.open("rb") as fh:
        fh.seek(data_start)
        left = info.compress_size
        while left and not stop.is_set():
            raw = fh.read(min(_RAW_STEP, left))
            if not raw:
                raise EOFError(f"{info.filename} is truncated")
            left -= len(raw)
            out = d.decompress(raw, info.file_size - size + 1)
            if d.unconsumed_tail:
                raise zipfile.BadZipFile(f"{info.filename} is larger than its declared size")
            size += len(out)
            if out:
                yield out
        out = d.flush()
        size += len(out)
        if out:
            yield out
    if not stop.is_set():
        if not d.eof:
            raise EOFError(f"{info.filename} is truncated")
        if size != info.file_size:
            raise zipfile.BadZipFile(f"Bad CRC-32 or size for {info.filename}")


def _inflated_in_helper(path: Path, info: zipfile.ZipInfo, data_start: int
                        ) -> Iterator[bytes]:
    """:func:`_inflated`, run in a helper thread; its chunks and errors handed over here."""
    q: queue.Queue[bytes | BaseException | None] = queue.Queue(maxsize=3)
    stop = threading.Event()

    def produce() -> None:
        try:
            for out in _inflated(path, info, data_start, stop):
                q.put(out)
            q.put(None)
        except BaseException as exc:  # handed to the consumer thread
            q.put(exc)

    worker = threading.Thread(target=produce, daemon=True)
    # zlib releases the GIL while inflating but takes it back for every output block; with
    # the default 5 ms switch interval the scanning thread would make it wait each time.
    interval = sys.getswitchinterval()
    sys.setswitchinterval(_SWITCH_INTERVAL_S)
    worker.start()
    try:
        while True:
            item = q.get()
            if item is None:
                return
            if isinstance(item, BaseException):
                raise item
            yield item
    finally:
        stop.set()
        while worker.is_alive():
            try:
                q.get_nowait()
            except queue.Empty:
                worker.join(0.01)
        sys.setswitchinterval(interval)


def _too_large(sheet: str, rows: int, cols: int, lim: PreflightLimits) -> WorkbookError:
    return WorkbookError(
        "sheet-too-large",
        f"Sheet '{sheet}' uses {rows} rows x {cols} columns (up to cell "
        f"{column_letters(cols)}{rows}); the limit is {lim.max_rows} rows, {lim.max_columns} "
        f"columns and {lim.max_cells_area:,} cells in all. Delete the stray cells far from the "
        "table (or split the log) and save again.",
        sheet=sheet,
    )


def _check_extent(sheet: str, rows: int, cols: int, lim: PreflightLimits) -> None:
    if rows > lim.max_rows or cols > lim.max_columns or rows * cols > lim.max_cells_area:
        raise _too_large(sheet, rows, cols, lim)


#: A cell reference of any length in a sheet's head (the fast scan's patterns stop at the
#: first letters; here a reference like ZZZZZ1 or A99999999999 must be seen whole).
_HEAD_REF_RE = re.compile(rb'<(?:[A-Za-z_][\w.\-]*:)?c\s[^>]*?\br="([A-Z]+)([0-9]+)"')


def _check_head_extent(sheet: str, head: bytes, lim: PreflightLimits) -> None:
    """Refuse a sheet whose first bytes already reference a cell beyond the limits.

    Run before any reader starts (the overlapped read of the batch worker): a reader sizes
    its grid by the farthest cell reference, so ``ZZZZZ1`` would cost gigabytes before the
    full scan beside it could refuse the file. Cells further down are the full scan's job.
    """
    refs = _HEAD_REF_RE.findall(head)
    if not refs:
        return
    for c, r in refs:
        # A reference longer than any limit is judged without converting it (no huge ints).
        col = column_number(c.decode()) if len(c) <= 4 else lim.max_columns + 1
        row = int(r) if len(r) <= 9 else lim.max_rows + 1
        if col > lim.max_columns or row > lim.max_rows or col * row > lim.max_cells_area:
            ref = (c + r).decode()[:20]
            raise WorkbookError(
                "sheet-too-large",
                f"Sheet '{sheet}' has a cell at {ref}, beyond the limit of {lim.max_rows} rows, "
                f"{lim.max_columns} columns and {lim.max_cells_area:,} cells in all. Delete that "
                "cell (or the stray cells far from the table) and save again.", sheet=sheet)


#: The root element of the shared-strings part, with its declared counts.
_SST_COUNTS_RE = re.compile(rb'<(?:[A-Za-z_][\w.\-]*:)?sst\b[^>]*>')
_COUNT_ATTR_RE = re.compile(rb'\b(count|uniqueCount)\s*=\s*["\']\s*(\d+)\s*["\']')
#: Fewest bytes one shared string takes in the part (``<si/>``) [B].
_MIN_SHARED_STRING_BYTES = 5


def _check_declared_strings(zf: zipfile.ZipFile, names: set[str], lim: PreflightLimits) -> None:
    """Refuse a shared-strings part declaring more strings than its size or any sheet allows.

    Readers reserve room for the declared number of strings up front; a count of billions
    in a tiny file would cost gigabytes before a single string was read.
    """
    part = "xl/sharedStrings.xml"
    if part not in names:
        return
    info = zf.getinfo(part)
    with zf.open(info) as fh:
        head = fh.read(_HEAD_BYTES)
    root = _SST_COUNTS_RE.search(head)
    if root is None:
        return
    declared = {k.decode(): v for k, v in _COUNT_ATTR_RE.findall(root.group(0))}
    unique = declared.get("uniqueCount")
    total = declared.get("count")
    most_unique = info.file_size // _MIN_SHARED_STRING_BYTES + 1
    too_many = ((unique is not None and (len(unique) > 12 or int(unique) > most_unique))
                or (total is not None and (len(total) > 12
                                           or int(total) > lim.max_cells_area * 64)))
    if too_many:
        shown = (unique or total or b"?").decode()[:15]
        raise WorkbookError(
            "strings-count-implausible",
            f"The workbook declares {shown} shared text values, more than its "
            f"{info.file_size:,}-byte text part can hold; the file is damaged or was not "
            "written by a spreadsheet program. Open and re-save it in a spreadsheet program.",
        )


def _scan_sheet(zf: zipfile.ZipFile, info: zipfile.ZipInfo, sheet: SheetInfo,
                lim: PreflightLimits, threaded: bool = True) -> SheetInfo:
    try:
        try:
            return _scan_fast(zf, info, sheet, lim, threaded=threaded)
        except _NeedExactRowsError:
            return _scan_fast(zf, info, sheet, lim, exact_rows=True, threaded=threaded)
    except _NeedExactError:
        return _scan_exact(zf, info, sheet, lim, threaded)


def _last_row_start(buf: bytes | bytearray, lo: int, hi: int) -> int:
    """Return the last start of a ``<row `` or ``<row>`` tag in ``buf[lo:hi]``, or -1.

    One backward search for ``<row`` (it stops at the first hit instead of scanning the
    whole range for a form that is absent), then a look at the byte after it.
    """
    while True:
        i = buf.rfind(b"<row", lo, hi)
        if i < 0:
            return -1
        if i + 5 <= hi and buf[i + 4:i + 5] in (b" ", b">"):
            return i
        hi = i + 3


def _first_row_start(buf: bytes | bytearray, lo: int, hi: int) -> int:
    """Return the first start of a ``<row `` or ``<row>`` tag in ``buf[lo:hi]``, or -1."""
    while True:
        i = buf.find(b"<row", lo, hi)
        if i < 0 or i + 5 > hi:
            return -1
        if buf[i + 4:i + 5] in (b" ", b">"):
            return i
        lo = i + 1


def _scan_fast(zf: zipfile.ZipFile, info: zipfile.ZipInfo, sheet: SheetInfo,
               lim: PreflightLimits, exact_rows: bool = False, threaded: bool = True
               ) -> SheetInfo:
    max_row = 0
    max_col = 0
    row_bound = 0
    formulas: list[str] = []
    merged: list[str] = []
    carry = bytearray()
    head = b""
    first = True

    def scan(buf: bytes | bytearray, start: int, end: int) -> None:
        """Check ``buf[start:end]`` (whole rows) without copying it."""
        nonlocal max_row, max_col, row_bound
        last = buf.rfind(b'<c r="', start, end)
        m = _LAST_REF_RE.match(buf, last, end) if last >= 0 else None
        rows = m.group(1) if m else b"1"
        digits = len(rows)
        max_row = max(max_row, int(rows))
        # One pass: any cell that is not '<c r="LETTERS DIGITS"' with letters up to the
        # widest column so far and no more digits than the piece's last row. Rows are then
        # known to be below 10**digits; the piece is taken cell by cell when that bound
        # could hide a sheet over the area limit, and always for rows >= 1,000,000.
        bound = 10**digits - 1
        loose_area = max(row_bound, bound) * max(max_col, 1)
        if (exact_rows or digits >= 7 or loose_area > lim.max_cells_area
                or (_unusual_cell_re(max_col, digits, probe=True).search(buf, start, end)
                    and _unusual_cell_re(max_col, digits).search(buf, start, end))):
            piece = bytes(buf[start:end])
            max_row, max_col = _exact_max(piece, max_row, max_col)
            if _unusual_cell_re(max_col, 7).search(piece):
                raise _NeedExactError  # a cell without r=, or a malformed reference
            row_bound = max(row_bound, max_row)
        else:
            row_bound = max(row_bound, bound)
        if row_bound * max(max_col, 1) > lim.max_cells_area and not exact_rows:
            raise _NeedExactRowsError  # earlier pieces were bounded loosely: redo exactly
        _check_extent(sheet.name, max_row, max_col, lim)
        # Single-byte look-ups (memchr) first: ':' and 'f' and 'm' are absent from the
        # rows of most sheets, so the slower two-byte searches and regexes rarely run.
        if (buf.find(b":", start, end) >= 0 and buf.find(b":c", start, end) >= 0
                and _PREFIXED_CELL_RE.search(buf, start, end)):
            raise _NeedExactError
        f = buf.find(b"f", start, end)
        if f >= 0 and buf.find(b"<f", max(f - 1, start), end) >= 0:
            formulas.extend(ref.decode()
                            for ref in _FORMULA_NO_VALUE_RE.findall(buf, start, end))
        k = buf.find(b"m", start, end)
        if k >= 0 and buf.find(b"<mergeCell", max(k - 9, start), end) >= 0:
            found = _MERGE_RE.findall(buf, start, end)
            if not found:
                raise _NeedExactError
            merged.extend(r.decode() for r in found)

    def row_start(buf: bytes | bytearray, lo: int, hi: int) -> int:
        """Last start of a ``<row`` element in ``buf[lo:hi]`` (-1 if none)."""
        return _last_row_start(buf, lo, hi)

    for chunk in _inflate(zf, info, threaded):
        if len(head) < HEAD_KEEP_BYTES:
            head += chunk[: HEAD_KEEP_BYTES - len(head)]
        if first:
            first = False
            if not chunk.lstrip(b"\xef\xbb\xbf \t\r\n").startswith(b"<"):
                raise _NeedExactError  # UTF-16 or other: exact scan decodes it
            root = _ROOT_TAG_RE.search(chunk[:_HEAD_BYTES])
            if root is None or root.group(1):
                raise _NeedExactError
            # Widest column among the first cells: later pieces are probed against it.
            max_row, max_col = _exact_max(chunk[:_SAMPLE_BYTES], 0, 0)
        # The chunk is scanned in place: the rows pending from earlier chunks are completed
        # by the chunk's bytes up to its first row start; the chunk's tail from its last
        # row start waits for the next chunk.
        n = len(chunk)
        lo = _first_row_start(chunk, 0, n)
        hi = row_start(chunk, max(lo, 0) + 1, n) if lo >= 0 else -1
        if lo < 0 or hi <= lo:
            carry += chunk
            if len(carry) > _MAX_PENDING:
                raise _NeedExactError
            continue
        if carry:
            carry += chunk[:lo]
            scan(carry, 0, len(carry))
        elif lo:
            scan(chunk, 0, lo)
        # Windows of about _WINDOW bytes (cache-friendly), each ending at a row start.
        start = lo
        while hi - start > _WINDOW:
            cut = row_start(chunk, start + 1, start + _WINDOW)
            if cut <= start:
                cut = row_start(chunk, start + 1, hi)
                if cut <= start:
                    break
            scan(chunk, start, cut)
            start = cut
        scan(chunk, start, hi)
        carry = bytearray(memoryview(chunk)[hi:])
    scan(carry, 0, len(carry))
    _check_extent(sheet.name, max_row, max_col, lim)
    return SheetInfo(sheet.name, sheet.part, sheet.visibility, max_row, max_col,
                     tuple(formulas), tuple(merged), head)


_A1_RE = re.compile(r"^\$?([A-Za-z]{1,3})\$?([0-9]{1,7})$")


def _scan_exact(zf: zipfile.ZipFile, info: zipfile.ZipInfo, sheet: SheetInfo,
                lim: PreflightLimits, threaded: bool = True) -> SheetInfo:
    """Expat scan following OOXML's rules for omitted references; elements by local name."""
    state = {"row": 0, "col": 0, "max_row": 0, "max_col": 0, "in_cell": False,
             "has_f": False, "has_v": False, "in_v": False}
    ref = [""]
    formulas: list[str] = []
    merged: list[str] = []
    parser = expat.ParserCreate(namespace_separator=" ")

    def bad_ref(value: str) -> WorkbookError:
        return WorkbookError(
            "sheet-too-large",
            f"Sheet '{sheet.name}' has a cell reference '{value[:20]}' outside the sheet grid "
            f"(at most {lim.max_rows} rows x {lim.max_columns} columns). Delete the stray "
            "cells and save again.",
            sheet=sheet.name,
        )

    def start(tag: str, attrs: dict[str, str]) -> None:
        local = tag.rsplit(" ", 1)[-1]
        if local == "row":
            r = attrs.get("r")
            if r is not None:
                if not r.isdigit() or len(r) > 8:
                    raise bad_ref(r)
                state["row"] = int(r)
            else:
                state["row"] += 1
            state["col"] = 0
            state["max_row"] = max(state["max_row"], state["row"])
        elif local == "c":
            r = attrs.get("r")
            if r is not None:
                m = _A1_RE.match(r)
                if m is None:
                    raise bad_ref(r)
                state["col"] = column_number(m.group(1))
                state["row"] = int(m.group(2))
            else:
                state["col"] += 1
            state["max_row"] = max(state["max_row"], state["row"])
            state["max_col"] = max(state["max_col"], state["col"])
            ref[0] = f"{column_letters(state['col'])}{state['row']}"
            state["in_cell"] = True
            state["has_f"] = False
            state["has_v"] = False
        elif local == "f" and state["in_cell"]:
            state["has_f"] = True
        elif local == "v" and state["in_cell"]:
            state["in_v"] = True
        elif local == "mergeCell" and "ref" in attrs:
            merged.append(attrs["ref"])

    def end(tag: str) -> None:
        local = tag.rsplit(" ", 1)[-1]
        if local == "c":
            if state["has_f"] and not state["has_v"]:
                formulas.append(ref[0])
            state["in_cell"] = False
        elif local == "v":
            state["in_v"] = False

    def chars(data: str) -> None:
        if state["in_v"] and data.strip():
            state["has_v"] = True

    def doctype(*_args: object) -> None:
        raise _doctype_error(info.filename)

    parser.StartElementHandler = start
    parser.EndElementHandler = end
    parser.CharacterDataHandler = chars
    parser.StartDoctypeDeclHandler = doctype
    parser.EntityDeclHandler = doctype
    head = b""
    for chunk in _inflate(zf, info, threaded):
        if len(head) < HEAD_KEEP_BYTES:
            head += chunk[: HEAD_KEEP_BYTES - len(head)]
        parser.Parse(chunk, False)
        # Checked per chunk (not per cell) so the message gives the extent of the whole
        # chunk, e.g. all 16,384 columns of a row of empty cells.
        _check_extent(sheet.name, state["max_row"], state["max_col"], lim)
    parser.Parse(b"", True)
    _check_extent(sheet.name, state["max_row"], state["max_col"], lim)
    return SheetInfo(sheet.name, sheet.part, sheet.visibility, state["max_row"],
                     state["max_col"], tuple(formulas), tuple(merged), head)
