"""Builders of hostile and unusual workbooks, made at test time (no binary fixtures).

Recipes follow shared/reference/reliability.md Appendix A: start from a small valid
workbook and rewrite one part, or write the parts from scratch.
"""

from __future__ import annotations

import io
import zipfile
from collections.abc import Callable
from pathlib import Path

MAIN_NS = "http://schemas.openxmlformats.org/spreadsheetml/2006/main"
REL_NS = "http://schemas.openxmlformats.org/officeDocument/2006/relationships"

CONTENT_TYPES = (
    '<?xml version="1.0" encoding="UTF-8" standalone="yes"?>'
    '<Types xmlns="http://schemas.openxmlformats.org/package/2006/content-types">'
    '<Default Extension="rels" ContentType="application/vnd.openxmlformats-package.'
    'relationships+xml"/>'
    '<Default Extension="xml" ContentType="application/xml"/>'
    '<Override PartName="/xl/workbook.xml" ContentType="application/vnd.openxmlformats-'
    'officedocument.spreadsheetml.sheet.main+xml"/>'
    "</Types>"
)
ROOT_RELS = (
    '<?xml version="1.0" encoding="UTF-8"?>'
    '<Relationships xmlns="http://schemas.openxmlformats.org/package/2006/relationships">'
    '<Relationship Id="rId1" Type="http://schemas.openxmlformats.org/officeDocument/2006/'
    'relationships/officeDocument" Target="xl/workbook.xml"/></Relationships>'
)


def sheet_xml(rows: str, dimension: str | None = None, prefix: str = "") -> str:
    """Wrap ``<row>`` elements (the sheetData content) in a worksheet part."""
    p = f"{prefix}:" if prefix else ""
    ns = f'xmlns:{prefix}="{MAIN_NS}"' if prefix else f'xmlns="{MAIN_NS}"'
    dim = f'<{p}dimension ref="{dimension}"/>' if dimension else ""
    return (f'<?xml version="1.0" encoding="UTF-8" standalone="yes"?>'
            f"<{p}worksheet {ns}>{dim}<{p}sheetData>{rows}</{p}sheetData></{p}worksheet>")


def build_xlsx(
    path: Path,
    sheets: dict[str, str],
    *,
    states: dict[str, str] | None = None,
    shared_strings: list[str] | None = None,
    workbook_pr: str = "",
    extra: dict[str, bytes | str] | None = None,
    compression: int = zipfile.ZIP_DEFLATED,
) -> Path:
    """Write a minimal workbook from worksheet XML texts (one part per sheet, in order)."""
    states = states or {}
    wb_sheets = "".join(
        f'<sheet name="{name}" sheetId="{i + 1}" r:id="rId{i + 1}"'
        + (f' state="{states[name]}"' if name in states else "") + "/>"
        for i, name in enumerate(sheets)
    )
    workbook = (f'<?xml version="1.0" encoding="UTF-8"?><workbook xmlns="{MAIN_NS}" '
                f'xmlns:r="{REL_NS}">{workbook_pr}<sheets>{wb_sheets}</sheets></workbook>')
    rels = "".join(
        f'<Relationship Id="rId{i + 1}" Type="{REL_NS}/worksheet" '
        f'Target="worksheets/sheet{i + 1}.xml"/>'
        for i in range(len(sheets))
    )
    wb_rels = ('<?xml version="1.0" encoding="UTF-8"?><Relationships xmlns="http://schemas.'
               f'openxmlformats.org/package/2006/relationships">{rels}</Relationships>')
    with zipfile.ZipFile(path, "w", compression) as z:
        z.writestr("[Content_Types].xml", CONTENT_TYPES)
        z.writestr("_rels/.rels", ROOT_RELS)
        z.writestr("xl/workbook.xml", workbook)
        z.writestr("xl/_rels/workbook.xml.rels", wb_rels)
        for i, xml in enumerate(sheets.values()):
            z.writestr(f"xl/worksheets/sheet{i + 1}.xml", xml)
        if shared_strings is not None:
            items = "".join(f"<si><t>{s}</t></si>" for s in shared_strings)
            z.writestr("xl/sharedStrings.xml",
                       f'<?xml version="1.0" encoding="UTF-8"?><sst xmlns="{MAIN_NS}">'
                       f"{items}</sst>")
        for name, data in (extra or {}).items():
            z.writestr(name, data)
    return path


def patch_member(src: Path, dst: Path, member: str, fn: Callable[[bytes], bytes]) -> Path:
    """Copy a workbook, rewriting one member (reliability.md Appendix A ``patch``)."""
    zin = zipfile.ZipFile(io.BytesIO(src.read_bytes()))
    with zipfile.ZipFile(dst, "w", zipfile.ZIP_DEFLATED) as z:
        for info in zin.infolist():
            data = zin.read(info.filename)
            z.writestr(info, fn(data) if info.filename == member else data)
    return dst


def small_workbook(path: Path, n: int = 5) -> Path:
    """A valid xlsxwriter workbook (shared strings) with a Readings sheet of ``n`` rows."""
    import datetime as dt

    import xlsxwriter

    wb = xlsxwriter.Workbook(str(path))
    ws = wb.add_worksheet("Readings")
    fmt = wb.add_format({"num_format": "yyyy-mm-dd hh:mm:ss"})
    ws.write_row(0, 0, ["Start", "LAeq"])
    for i in range(n):
        ws.write_datetime(i + 1, 0, dt.datetime(2026, 7, 1) + dt.timedelta(minutes=15 * i), fmt)
        ws.write_number(i + 1, 1, 50.0 + i)
    wb.close()
    return path


BILLION_LAUGHS_DTD = (
    '<!DOCTYPE lolz [<!ENTITY lol "lol">'
    + "".join(
        f'<!ENTITY lol{i} "{("&lol" + (str(i - 1) if i > 1 else "") + ";") * 10}">'
        for i in range(1, 10)
    )
    + "]>"
)


def insert_dtd(xml: bytes, dtd: str) -> bytes:
    """Insert a DTD after the XML declaration."""
    text = xml.decode("utf-8")
    end = text.index("?>") + 2 if text.startswith("<?xml") else 0
    return (text[:end] + dtd + text[end:]).encode("utf-8")


def reencode(xml: bytes, encoding: str, declared: str | None, bom: bytes = b"") -> bytes:
    """Re-encode an XML part, changing the declared encoding."""
    text = xml.decode("utf-8")
    if text.startswith("<?xml"):
        end = text.index("?>") + 2
        decl = (f'<?xml version="1.0" encoding="{declared}"?>' if declared
                else '<?xml version="1.0"?>')
        text = decl + text[end:]
    return bom + text.encode(encoding)


def deflate_bomb_member(size: int, char: bytes = b"A") -> bytes:
    """A sheet whose one inline string is ``size`` repeated bytes (compresses ~1000:1)."""
    head, tail = sheet_xml('<row r="1"><c r="A1" t="inlineStr"><is><t>@</t></is></c></row>'
                           ).encode().split(b"@")
    return head + char * size + tail


def _patch_headers(path: Path, member: str, central_at: int, local_at: int,
                   value: int) -> Path:
    """Write one 32-bit field of a member's central and local zip headers.

    Offsets count from each header's signature (PKWARE APPNOTE.TXT 4.3.7 and 4.3.12).
    """
    import struct

    data = bytearray(path.read_bytes())
    name = member.encode()
    pos = 0
    while (pos := data.find(b"PK\x01\x02", pos)) >= 0:  # central directory entries
        n = struct.unpack_from("<H", data, pos + 28)[0]
        if bytes(data[pos + 46:pos + 46 + n]) == name:
            struct.pack_into("<I", data, pos + central_at, value)
            local = struct.unpack_from("<I", data, pos + 42)[0]
            struct.pack_into("<I", data, local + local_at, value)
        pos += 4
    path.write_bytes(bytes(data))
    return path


def patch_declared_size(path: Path, member: str, size: int) -> Path:
    """Rewrite the declared uncompressed size of one member (local and central headers)."""
    return _patch_headers(path, member, 24, 22, size)


def patch_crc(path: Path, member: str, crc: int) -> Path:
    """Rewrite the CRC-32 of one member (local and central headers), sizes unchanged."""
    return _patch_headers(path, member, 16, 14, crc)
