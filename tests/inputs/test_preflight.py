"""Tests of the preflight (surveytools.inputs.preflight) on hostile files built at test time.

Fixture recipes and expected outcomes: shared/reference/reliability.md §1 (X1-X5), §2 (Z1-Z6),
§5 (P3, P4) and Appendix A. Excel's grid limits (1,048,576 rows x 16,384 columns) are from
Microsoft's "Excel specifications and limits".
"""

from __future__ import annotations

import secrets
import time
import zipfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from surveytools.errors import WorkbookError
from surveytools.inputs.preflight import (
    PreflightLimits,
    column_letters,
    column_number,
    detect_xml_encoding,
    preflight,
)
from tests.inputs.hostile import (
    BILLION_LAUGHS_DTD,
    build_xlsx,
    deflate_bomb_member,
    insert_dtd,
    patch_crc,
    patch_declared_size,
    patch_member,
    reencode,
    sheet_xml,
    small_workbook,
)


def _code(path: Path, code: str, **kw: object) -> WorkbookError:
    t0 = time.perf_counter()
    with pytest.raises(WorkbookError, match=r".") as info:
        preflight(path, **kw)  # type: ignore[arg-type]
    assert info.value.code == code, info.value.message
    assert time.perf_counter() - t0 < 5.0  # "quickly" (reliability.md X1: < 1 s typical)
    return info.value


@pytest.fixture
def good(tmp_path: Path) -> Path:
    return small_workbook(tmp_path / "good.xlsx")


def test_good_workbook_described(good: Path) -> None:
    r = preflight(good)
    assert r.date_system == 1900
    assert [s.name for s in r.sheets] == ["Readings"]
    s = r.sheets[0]
    # 1 header row + 5 data rows, columns A:B (written by small_workbook)
    assert (s.max_row, s.max_col) == (6, 2)
    assert s.visibility == "visible"
    assert r.application == "Microsoft Excel"  # xlsxwriter's docProps/app.xml value


# ---- file and format --------------------------------------------------------------------


def test_empty_file(tmp_path: Path) -> None:
    p = tmp_path / "e.xlsx"
    p.write_bytes(b"")
    assert "empty" in _code(p, "file-empty").message


def test_file_too_large(good: Path) -> None:
    _code(good, "file-too-large", limits=PreflightLimits(max_file_bytes=100))


@pytest.mark.parametrize(
    ("content", "phrase"),
    [
        (b"Start,LAeq\n2026-07-01 00:00,55.2\n", "CSV"),
        (b"<!DOCTYPE html><html><body><table></table></body></html>", "HTML"),
        (b"\x00\x01\x02garbage", "not a zip"),
    ],
)
def test_not_a_zip_sniffed(tmp_path: Path, content: bytes, phrase: str) -> None:
    p = tmp_path / "renamed.xlsx"
    p.write_bytes(content)
    assert phrase in _code(p, "file-not-a-zip").message


def test_fake_ole_header(tmp_path: Path) -> None:
    p = tmp_path / "legacy.xlsx"
    p.write_bytes(bytes.fromhex("D0CF11E0A1B11AE1") + b"\x00" * 504)
    err = _code(p, "file-legacy-xls-or-encrypted")
    assert "save it as an unprotected .xlsx" in err.message


def test_encrypted_workbook(tmp_path: Path, good: Path) -> None:
    from msoffcrypto.format.ooxml import OOXMLFile

    out = tmp_path / "enc.xlsx"
    with good.open("rb") as f, out.open("wb") as o:
        OOXMLFile(f).encrypt("pw", o)
    _code(out, "file-legacy-xls-or-encrypted")


def test_truncated(tmp_path: Path, good: Path) -> None:
    p = tmp_path / "half.xlsx"
    data = good.read_bytes()
    p.write_bytes(data[: len(data) // 2])
    _code(p, "zip-corrupt")


def test_corrupt_deflate_data(tmp_path: Path) -> None:
    rows = "".join(f'<row r="{i}"><c r="A{i}"><v>{i}.5</v></c></row>' for i in range(1, 3000))
    p = build_xlsx(tmp_path / "c.xlsx", {"Readings": sheet_xml(rows)})
    data = bytearray(p.read_bytes())
    info = zipfile.ZipFile(p).getinfo("xl/worksheets/sheet1.xml")
    start = info.header_offset + 30 + len(info.filename) + len(info.extra)
    for k in range(start + 200, start + 260):
        data[k] ^= 0x5A
    p.write_bytes(bytes(data))
    _code(p, "zip-corrupt")


def test_xlsb_like(tmp_path: Path) -> None:
    p = tmp_path / "b.xlsx"
    with zipfile.ZipFile(p, "w") as z:
        z.writestr("[Content_Types].xml", "<Types/>")
        z.writestr("xl/workbook.bin", b"\x83\x01\x00")
    _code(p, "file-xlsb")


def test_ods_like(tmp_path: Path) -> None:
    p = tmp_path / "o.xlsx"
    with zipfile.ZipFile(p, "w") as z:
        z.writestr("mimetype", "application/vnd.oasis.opendocument.spreadsheet")
        z.writestr("content.xml", "<office:document-content/>")
    _code(p, "file-ods")


def test_zip_without_workbook(tmp_path: Path) -> None:
    p = tmp_path / "z.xlsx"
    with zipfile.ZipFile(p, "w") as z:
        z.writestr("readme.txt", "hello")
    _code(p, "file-not-ooxml")


# ---- zip limits -------------------------------------------------------------------------


def test_too_many_members(tmp_path: Path) -> None:
    p = small_workbook(tmp_path / "m.xlsx")
    with zipfile.ZipFile(p, "a") as z:
        for i in range(2_001):
            z.writestr(f"xl/media/x{i}.bin", b"")
    _code(p, "zip-too-many-members")


def test_decompression_bomb_ratio(tmp_path: Path) -> None:
    # reliability.md Z2: one huge inline string. 20 MB of 'A' deflates to ~20 KB (~1000:1).
    p = build_xlsx(tmp_path / "bomb.xlsx", {"Readings": deflate_bomb_member(20_000_000)})
    assert "decompression bomb" in _code(p, "zip-ratio").message


def test_declared_size_too_large(tmp_path: Path, good: Path) -> None:
    p = tmp_path / "big.xlsx"
    p.write_bytes(good.read_bytes())
    patch_declared_size(p, "xl/worksheets/sheet1.xml", 700_000_000)
    _code(p, "zip-too-large")


def test_declared_size_smaller_than_real(tmp_path: Path) -> None:
    # reliability.md Z3 "liesize": data longer than declared -> corrupt, not read.
    rows = "".join(f'<row r="{i}"><c r="A{i}"><v>{i}</v></c></row>' for i in range(1, 2000))
    p = build_xlsx(tmp_path / "lie.xlsx", {"Readings": sheet_xml(rows)})
    patch_declared_size(p, "xl/worksheets/sheet1.xml", 5_000)
    _code(p, "zip-corrupt")
    _code(p, "zip-corrupt", helper_thread=False)  # inflated by the scanning thread itself


def test_genuine_week_ratio_accepted() -> None:
    # performance.md §1: a week of 1-s rows is 97.2 MB of XML in a 14.4 MB file (~6.8:1).
    limits = PreflightLimits()
    assert limits.max_ratio > 97_200_000 / 14_375_965
    assert limits.max_member_uncompressed_bytes > 97_200_000


def test_encrypted_member_flag(tmp_path: Path, good: Path) -> None:
    data = bytearray(good.read_bytes())
    pos = data.find(b"PK\x01\x02")
    data[pos + 8] |= 0x01  # general-purpose flag bit 0 = encrypted (APPNOTE 4.4.4)
    p = tmp_path / "encm.xlsx"
    p.write_bytes(bytes(data))
    _code(p, "zip-encrypted-member")


# ---- XML: DTD and encodings ---------------------------------------------------------------


@pytest.mark.parametrize("part", ["xl/sharedStrings.xml", "xl/workbook.xml",
                                  "xl/worksheets/sheet1.xml", "docProps/app.xml",
                                  "xl/styles.xml", "xl/_rels/workbook.xml.rels"])
def test_billion_laughs_rejected(tmp_path: Path, good: Path, part: str) -> None:
    # reliability.md X1: billion laughs (10x10 nesting, 9 levels) in each part.
    p = patch_member(good, tmp_path / "bl.xlsx", part,
                     lambda d: insert_dtd(d, BILLION_LAUGHS_DTD))
    assert part in _code(p, "xml-doctype").message


def test_xxe_secret_never_read(tmp_path: Path, good: Path) -> None:
    # reliability.md X2: XXE pointing at a canary file with a random secret.
    secret = secrets.token_hex(16)
    canary = tmp_path / "canary.txt"
    canary.write_text(secret)

    def inject(d: bytes) -> bytes:
        d = insert_dtd(d, f'<!DOCTYPE sst [<!ENTITY xxe SYSTEM "file://{canary}">]>')
        return d.replace(b"<t>Start</t>", b"<t>&xxe;</t>")

    p = patch_member(good, tmp_path / "xxe.xlsx", "xl/sharedStrings.xml", inject)
    err = _code(p, "xml-doctype")
    assert secret not in err.message


def test_xxe_not_expanded_by_calamine_either(tmp_path: Path, good: Path) -> None:
    # reliability.md X7: the reader itself (second layer) fails safely without the secret.
    from python_calamine import CalamineWorkbook

    secret = secrets.token_hex(16)
    canary = tmp_path / "canary.txt"
    canary.write_text(secret)
    p = patch_member(good, tmp_path / "xxe.xlsx", "xl/sharedStrings.xml",
                     lambda d: insert_dtd(d, f'<!DOCTYPE sst [<!ENTITY x SYSTEM "file://{canary}">]>'
                                          ).replace(b"<t>Start</t>", b"<t>&x;</t>"))
    with pytest.raises(Exception, match=r"(?i)entity|xml") as info:
        CalamineWorkbook.from_path(str(p)).get_sheet_by_name("Readings").to_python()
    assert secret not in str(info.value)


def test_harmless_dtd_rejected(tmp_path: Path, good: Path) -> None:
    # reliability.md X5: policy - real Excel never writes a DTD.
    p = patch_member(good, tmp_path / "h.xlsx", "xl/workbook.xml",
                     lambda d: insert_dtd(d, '<!DOCTYPE workbook [<!ENTITY n "North">]>'))
    _code(p, "xml-doctype")


def test_quadratic_blowup_rejected(tmp_path: Path, good: Path) -> None:
    # reliability.md X3: 50 KB entity x 50,000 references.
    big = "x" * 50_000

    def inject(d: bytes) -> bytes:
        d = insert_dtd(d, f'<!DOCTYPE sst [<!ENTITY a "{big}">]>')
        return d.replace(b"<t>Start</t>", b"<t>" + b"&a;" * 50_000 + b"</t>")

    p = patch_member(good, tmp_path / "q.xlsx", "xl/sharedStrings.xml", inject)
    _code(p, "xml-doctype")


_DTD = '<!DOCTYPE workbook [<!ENTITY n "North">]>'


@pytest.mark.parametrize(
    ("encoding", "declared", "bom", "code"),
    [
        # reliability.md X4 encoding matrix: every variant rejected, none accepted.
        ("utf-8", "UTF-8", b"", "xml-doctype"),
        ("utf-8", "UTF-8", b"\xef\xbb\xbf", "xml-doctype"),
        ("utf-16-le", "UTF-16", b"\xff\xfe", "xml-doctype"),
        ("utf-16-be", "UTF-16", b"\xfe\xff", "xml-doctype"),
        ("utf-16-le", "UTF-16", b"", "xml-encoding"),
        ("utf-16-be", "UTF-16", b"", "xml-encoding"),
        ("utf-32-le", "UTF-32", b"\xff\xfe\x00\x00", "xml-encoding"),
        ("utf-32-be", "UTF-32", b"\x00\x00\xfe\xff", "xml-encoding"),
        ("utf-32-le", "UTF-32", b"", "xml-encoding"),
        ("utf-7", "UTF-7", b"", "xml-encoding"),
        ("latin-1", "ISO-8859-1", b"", "xml-encoding"),
    ],
)
def test_encoding_matrix(tmp_path: Path, good: Path, encoding: str, declared: str, bom: bytes,
                         code: str) -> None:
    p = patch_member(good, tmp_path / "enc.xlsx", "xl/workbook.xml",
                     lambda d: reencode(insert_dtd(d, _DTD).replace(b'name="Readings"',
                                                                     b'name="&n;"'),
                                        encoding, declared, bom))
    _code(p, code)


def test_utf16_with_bom_and_no_dtd_accepted(tmp_path: Path, good: Path) -> None:
    p = patch_member(good, tmp_path / "u16.xlsx", "xl/workbook.xml",
                     lambda d: reencode(d, "utf-16-le", "UTF-16", b"\xff\xfe"))
    assert [s.name for s in preflight(p).sheets] == ["Readings"]


def test_detect_encoding_checks_utf32_bom_before_utf16() -> None:
    # FF FE 00 00 (UTF-32LE BOM) begins with FF FE (UTF-16LE BOM): Unicode 15 §23.8 Table 23-4.
    with pytest.raises(WorkbookError, match="UTF-32"):
        detect_xml_encoding(b"\xff\xfe\x00\x00<\x00\x00\x00")
    assert detect_xml_encoding(b"\xff\xfe<\x00?\x00") == "utf-16"


# ---- sheet extent -------------------------------------------------------------------------


def test_corner(tmp_path: Path) -> None:
    # reliability.md Z1 "corner": A1 + XFD1048576 with a truthful <dimension>.
    rows = ('<row r="1"><c r="A1"><v>1</v></c></row>'
            '<row r="1048576"><c r="XFD1048576"><v>1</v></c></row>')
    p = build_xlsx(tmp_path / "corner.xlsx",
                   {"Readings": sheet_xml(rows, dimension="A1:XFD1048576")})
    err = _code(p, "sheet-too-large")
    assert "1048576 rows x 16384 columns" in err.message
    assert err.sheet == "Readings"


def test_corner_norefs(tmp_path: Path) -> None:
    # reliability.md Z1 "corner_norefs": row 1048576 with 16,384 <c/> and no r= (legal OOXML).
    rows = '<row r="1048576">' + "<c/>" * 16_384 + "</row>"
    p = build_xlsx(tmp_path / "cn.xlsx", {"Readings": sheet_xml(rows, dimension="A1:A1")})
    assert "1048576 rows x 16384 columns" in _code(p, "sheet-too-large").message


def test_cells_without_refs_counted(tmp_path: Path) -> None:
    # ECMA-376 Part 1 §18.3.1.73/§18.3.1.4: omitted r = previous row/column + 1.
    rows = "<row><c><v>1</v></c><c><v>2</v></c></row><row/><row><c/><c/><c/></row>"
    p = build_xlsx(tmp_path / "nr.xlsx", {"Readings": sheet_xml(rows)})
    s = preflight(p).sheets[0]
    assert (s.max_row, s.max_col) == (3, 3)


def test_prefixed_cells_counted(tmp_path: Path) -> None:
    # A cell element in another prefix is still read by python-calamine (checked in
    # test_read), so the extent must include it: exact scan.
    rows = ('<row r="1"><c r="A1"><v>1</v></c>'
            '<x:c xmlns:x="urn:other" r="XFD1048576"><x:v>5</x:v></x:c></row>')
    p = build_xlsx(tmp_path / "px.xlsx", {"Readings": sheet_xml(rows)})
    _code(p, "sheet-too-large")


def test_lowercase_ref_counted(tmp_path: Path) -> None:
    rows = '<row r="1"><c r="A1"><v>1</v></c><c r="xfd1048576"><v>1</v></c></row>'
    p = build_xlsx(tmp_path / "lc.xlsx", {"Readings": sheet_xml(rows)})
    _code(p, "sheet-too-large")


def test_whole_prefixed_sheet_scanned(tmp_path: Path) -> None:
    rows = '<x:row r="1"><x:c r="A1"><x:v>1</x:v></x:c><x:c r="C7"><x:v>1</x:v></x:c></x:row>'
    p = build_xlsx(tmp_path / "pfx.xlsx", {"Readings": sheet_xml(rows, prefix="x")})
    s = preflight(p).sheets[0]
    assert (s.max_row, s.max_col) == (7, 3)


def test_row_out_of_grid(tmp_path: Path) -> None:
    # reliability.md Z5 "row_oob": row 2,000,000 is outside the grid.
    rows = '<row r="2000000"><c r="A2000000"><v>1</v></c></row>'
    p = build_xlsx(tmp_path / "oob.xlsx", {"Readings": sheet_xml(rows)})
    _code(p, "sheet-too-large")


def test_stray_cell_with_longer_row_number_found(tmp_path: Path) -> None:
    # Rows out of order: a far cell in the middle of ascending rows is still counted.
    rows = "".join(f'<row r="{i}"><c r="A{i}"><v>1</v></c></row>' for i in range(1, 500))
    rows += '<row r="500"><c r="A500"><v>1</v></c><c r="B999999"><v>1</v></c></row>'
    rows += "".join(f'<row r="{i}"><c r="A{i}"><v>1</v></c></row>' for i in range(501, 800))
    p = build_xlsx(tmp_path / "stray.xlsx", {"Readings": sheet_xml(rows)})
    s = preflight(p).sheets[0]
    assert (s.max_row, s.max_col) == (999_999, 2)


def test_dimension_is_not_trusted(tmp_path: Path) -> None:
    # reliability.md Z6: <dimension A1:A1> over 100 rows.
    rows = "".join(f'<row r="{i}"><c r="A{i}"><v>{i}</v></c></row>' for i in range(1, 101))
    p = build_xlsx(tmp_path / "dim.xlsx", {"Readings": sheet_xml(rows, dimension="A1:A1")})
    assert preflight(p).sheets[0].max_row == 100


def test_wide_sheet_accepted(tmp_path: Path) -> None:
    # reliability.md §5 "very wide sheets": 16,384 columns in one row is a legal sheet.
    cells = "".join(f'<c r="{column_letters(j)}1"><v>{j}</v></c>' for j in range(1, 16_385))
    p = build_xlsx(tmp_path / "wide.xlsx", {"Readings": sheet_xml(f'<row r="1">{cells}</row>')})
    assert preflight(p).sheets[0].max_col == 16_384


def test_formulas_without_value_and_merges_located(tmp_path: Path) -> None:
    rows = ('<row r="1"><c r="A1"><v>1</v></c><c r="B1"><f>A1*2</f></c></row>'
            '<row r="2"><c r="A2"><f>A1+1</f><v>2</v></c><c r="B2"><f>A2*2</f><v></v></c></row>')
    xml = sheet_xml(rows).replace("</sheetData>",
                                  '</sheetData><mergeCells count="1"><mergeCell ref="A3:A5"/>'
                                  "</mergeCells>")
    p = build_xlsx(tmp_path / "f.xlsx", {"Readings": xml})
    s = preflight(p).sheets[0]
    assert s.formulas_without_value == ("B1", "B2")
    assert s.merged_ranges == ("A3:A5",)


def test_hidden_sheet_and_1904(tmp_path: Path) -> None:
    p = build_xlsx(tmp_path / "h.xlsx",
                   {"Notes": sheet_xml(""), "Readings": sheet_xml("")},
                   states={"Readings": "hidden"}, workbook_pr='<workbookPr date1904="1"/>')
    r = preflight(p)
    assert r.date_system == 1904
    assert [(s.name, s.visibility) for s in r.sheets] == [("Notes", "visible"),
                                                          ("Readings", "hidden")]


def test_column_letters_round_trip() -> None:
    # Excel column naming: A=1, Z=26, AA=27, XFD=16384 (Microsoft specifications and limits).
    assert column_letters(1) == "A"
    assert column_letters(27) == "AA"
    assert column_letters(16_384) == "XFD"
    for n in (1, 26, 27, 52, 53, 702, 703, 16_384):
        assert column_number(column_letters(n)) == n


def test_calamine_reads_foreign_prefixed_cells(tmp_path: Path) -> None:
    # Why the extent scan matches cells by local name: python-calamine places a <x:c> cell
    # of any namespace in the grid (so a corner attack could hide behind a prefix).
    from python_calamine import CalamineWorkbook

    rows = ('<row r="1"><c r="A1"><v>1</v></c>'
            '<x:c xmlns:x="urn:other" r="D3"><x:v>5</x:v></x:c></row>')
    p = build_xlsx(tmp_path / "px.xlsx", {"Readings": sheet_xml(rows)})
    values = CalamineWorkbook.from_path(str(p)).get_sheet_by_name("Readings").to_python()
    assert values[2][3] == 5.0
    assert (preflight(p).sheets[0].max_row, preflight(p).sheets[0].max_col) == (3, 4)


def test_preflight_imports_no_pandas() -> None:
    import subprocess
    import sys

    code = "import sys, surveytools.inputs.preflight; print('pandas' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True, timeout=60)
    assert out.stdout.strip() == "False"


def test_stray_row_with_same_digit_count_found(tmp_path: Path) -> None:
    # A stray cell whose row has as many digits as the last row (C999999 among rows
    # 100000-109999, past the first sampled bytes) must still count when it could push the
    # sheet over the area limit: 999,999 rows x 5 columns = 4,999,995 cells > 1,000,000
    # (hand-evaluated), whereas 109,999 x 5 = 549,995 would pass.
    rows = "".join(
        f'<row r="{i}">' + "".join(f'<c r="{c}{i}"><v>1</v></c>' for c in "ABCDE") + "</row>"
        for i in range(100_000, 110_000)
    ).replace('<c r="B105000"><v>1</v></c>',
              '<c r="B105000"><v>1</v></c><c r="C999999"><v>1</v></c>')
    p = build_xlsx(tmp_path / "same.xlsx", {"Readings": sheet_xml(rows)})
    err = _code(p, "sheet-too-large", limits=PreflightLimits(max_cells_area=1_000_000))
    assert "999999 rows x 5 columns" in err.message


@settings(max_examples=60, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(
    cells=st.lists(st.tuples(st.integers(1, 3000), st.integers(1, 60)), min_size=1,
                   max_size=120),
    drop_refs=st.booleans(),
)
def test_extent_matches_generator(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                  cells: list[tuple[int, int]], drop_refs: bool) -> None:
    # Reference: the generator's own cell positions (OOXML: r= gives the position). Tiny
    # sample and window sizes make the fast path scan many pieces of this small sheet.
    import surveytools.inputs.preflight as pf

    monkeypatch.setattr(pf, "_SAMPLE_BYTES", 64)
    monkeypatch.setattr(pf, "_WINDOW", 256)
    by_row: dict[int, set[int]] = {}
    for r, c in cells:
        by_row.setdefault(r, set()).add(c)
    xml_rows = []
    for r in sorted(by_row):
        cols = sorted(by_row[r])
        if drop_refs:  # consecutive columns from A without r= (previous column + 1)
            cols = list(range(1, len(cols) + 1))
            xml_rows.append(f'<row r="{r}">' + "<c><v>1</v></c>" * len(cols) + "</row>")
        else:
            xml_rows.append(f'<row r="{r}">' + "".join(
                f'<c r="{column_letters(c)}{r}"><v>1</v></c>' for c in cols) + "</row>")
        by_row[r] = set(cols)
    p = build_xlsx(tmp_path / "h.xlsx", {"Readings": sheet_xml("".join(xml_rows))})
    s = preflight(p).sheets[0]
    assert s.max_row == max(by_row)
    assert s.max_col == max(max(c) for c in by_row.values())


# ---- fast-path rules against plain references ---------------------------------------------


def _column_of(letters: str) -> int:
    # A1 notation: column letters are bijective base 26, A = 1 ... Z = 26, AA = 27
    # (ECMA-376 Part 1 §18.17.2.2 "A1-style cell reference"; XFD = 16,384, Microsoft "Excel
    # specifications and limits").
    n = 0
    for ch in letters:
        n = n * 26 + ord(ch) - ord("A") + 1
    return n


_REF_TEXT = st.one_of(
    st.builds(lambda c, r: f"{column_letters(c)}{r}", st.integers(1, 16_384),
              st.integers(1, 9_999_999)),
    st.text(alphabet="ABCXYZaxz0123456789$:", min_size=0, max_size=10),
)


@settings(max_examples=400, deadline=None)
@given(max_col=st.integers(1, 16_384), digits=st.integers(1, 7), ref=_REF_TEXT,
       after=st.sampled_from(['"', '">', '" s="1">', '"/>', "", " ", "0"]))
def test_unusual_cell_pattern_matches_definition(max_col: int, digits: int, ref: str,
                                                 after: str) -> None:
    # Reference: the definition in the docstring, evaluated directly: a cell start tag is
    # usual iff it reads '<c r="' + upper-case letters of a column <= max_col + a row number
    # of 1..digits digits without a leading zero + '"'.
    import re

    from surveytools.inputs.preflight import _unusual_cell_re

    m = re.fullmatch(r"([A-Z]+)([1-9][0-9]*)", ref)
    usual = (m is not None and _column_of(m.group(1)) <= max_col
             and len(m.group(2)) <= digits and after.startswith('"'))
    tag = f'<c r="{ref}{after}'.encode()
    full = _unusual_cell_re(max_col, digits).search(tag) is not None
    probe = _unusual_cell_re(max_col, digits, probe=True).search(tag) is not None
    assert full == (not usual)
    assert probe == full  # on a real cell tag the probe says the same


@pytest.mark.parametrize("text", [b'<col min="1" max="9"/>', b"<cols>", b"<cfRule/>",
                                  b"<c>", b"<c/>", b'<c\tr="A1">'])
def test_probe_never_misses_what_the_full_pattern_finds(text: bytes) -> None:
    # The probe may flag other elements starting "<c" (col, cfRule: the full pattern then
    # decides), but every cell the full pattern flags, the probe flags too.
    from surveytools.inputs.preflight import _unusual_cell_re

    for max_col, digits in ((0, 1), (5, 6), (16_384, 7)):
        full = _unusual_cell_re(max_col, digits).search(text) is not None
        probe = _unusual_cell_re(max_col, digits, probe=True).search(text) is not None
        assert probe or not full
        # '<c>', '<c/>' and '<c\t' are cells (ECMA-376 element c); col/cols/cfRule are not.
        assert full == text.startswith((b"<c>", b"<c/", b"<c\t"))


@settings(max_examples=200, deadline=None)
@given(parts=st.lists(st.sampled_from(["<row ", "<row>", "<row/", "<rows", "<ro", "w ",
                                       "<c r=\"A1\">", "x", "<", ">"]), max_size=30),
       lo=st.integers(0, 40), span=st.integers(0, 200))
@example(parts=["x", "<row "], lo=0, span=5)  # '<row' ends at hi, its ' ' lies past hi
@example(parts=["<row ", "<row"], lo=0, span=9)
@example(parts=["<row>", "<rows", "<row "], lo=1, span=14)
def test_row_start_search_matches_regex(parts: list[str], lo: int, span: int) -> None:
    # Reference: re.finditer over the same slice, a '<row' followed by ' ' or '>'.
    import re

    from surveytools.inputs.preflight import _first_row_start, _last_row_start

    buf = "".join(parts).encode()
    hi = min(len(buf), lo + span)
    starts = [m.start() + lo for m in re.finditer(rb"<row[ >]", buf[lo:hi])] if lo < hi else []
    assert _first_row_start(buf, lo, hi) == (starts[0] if starts else -1)
    assert _last_row_start(buf, lo, hi) == (starts[-1] if starts else -1)


@settings(max_examples=60, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(
    rows=st.lists(st.lists(st.tuples(st.integers(1, 40),
                                     st.sampled_from(["v", "f", "fv", "s", "is", "empty"])),
                           max_size=8), min_size=1, max_size=60),
    first_row=st.integers(1, 200_000),
    raw_step=st.sampled_from([7, 61, 500, 4096]),
    window=st.sampled_from([64, 300, 1 << 17]),
    merges=st.booleans(),
)
def test_fast_scan_equals_exact_scan(tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
                                     rows: list[list[tuple[int, str]]], first_row: int,
                                     raw_step: int, window: int, merges: bool) -> None:
    # Reference: the exact Expat scan (OOXML rules, ECMA-376 Part 1 §18.3.1.4 c, §18.3.1.73
    # row, §18.3.1.40 f, §18.3.1.96 v) over the same part. Tiny inflate steps and windows cut
    # the sheet at every kind of place (inside tags, between chunks without a row start),
    # and inline text with ':', 'f' and 'm' exercises the single-byte pre-checks.
    import zipfile

    import surveytools.inputs.preflight as pf

    monkeypatch.setattr(pf, "_SAMPLE_BYTES", 64)
    monkeypatch.setattr(pf, "_WINDOW", window)
    monkeypatch.setattr(pf, "_RAW_STEP", raw_step)
    body = []
    for i, cells in enumerate(rows):
        r = first_row + 3 * i
        out = []
        for col in sorted({c for c, _ in cells}):
            kind = dict(cells)[col]
            ref = f"{column_letters(col)}{r}"
            content = {"v": "<v>1</v>", "f": "<f>SUM(A1:A2)</f>", "fv": "<f>1+1</f><v>2</v>",
                       "s": "<v>0</v>", "is": "<is><t>of mat: 5:c</t></is>", "empty": ""}[kind]
            typ = {"s": ' t="s"', "is": ' t="inlineStr"'}.get(kind, "")
            out.append(f'<c r="{ref}"{typ}/>' if kind == "empty"
                       else f'<c r="{ref}"{typ}>{content}</c>')
        body.append(f'<row r="{r}">' + "".join(out) + "</row>")
    xml = sheet_xml("".join(body))
    if merges:
        xml = xml.replace("</sheetData>", '</sheetData><mergeCells count="2"><mergeCell '
                          'ref="A1:B2"/><mergeCell ref="C3:C9"/></mergeCells>')
    p = build_xlsx(tmp_path / "fx.xlsx", {"Readings": xml})
    fast = preflight(p).sheets[0]
    with zipfile.ZipFile(p) as zf:
        info = zf.getinfo(fast.part)
        exact = pf._scan_exact(zf, info, fast, PreflightLimits())
    has_cells = any(rows)
    assert fast.max_col == exact.max_col
    # Without any cell the fast path reports row 1 (its extent starts at A1), the exact
    # scan the last <row> element: only sheets with cells are compared on rows.
    if has_cells and any(c for c in rows[-1]):
        assert fast.max_row == exact.max_row
    assert fast.formulas_without_value == exact.formulas_without_value
    assert fast.merged_ranges == exact.merged_ranges
    assert fast.head == exact.head


def test_fast_scan_equals_exact_scan_at_every_cut(tmp_path: Path,
                                                  monkeypatch: pytest.MonkeyPatch) -> None:
    # A stored (uncompressed) sheet is read in pieces of exactly _CHUNK bytes, so trying
    # every piece size puts a chunk boundary at every byte of the rows: the widest cell
    # (D), a formula without value and a merge must be found wherever the cuts fall.
    # Reference: the exact Expat scan of the same part.
    import zipfile

    import surveytools.inputs.preflight as pf

    rows = ('<row r="1"><c r="A1"><v>1</v></c></row>'
            '<row r="2"><c r="A2"><v>2</v></c><c r="D2"><f>A1*2</f></c></row>'
            '<row r="3"><c r="B3" t="inlineStr"><is><t>of: m</t></is></c></row>'
            '<row r="4"><c r="C4"><v>3</v></c></row>')
    xml = sheet_xml(rows).replace("</sheetData>", '</sheetData><mergeCells count="1">'
                                  '<mergeCell ref="A3:A5"/></mergeCells>')
    p = build_xlsx(tmp_path / "cuts.xlsx", {"Readings": xml}, compression=zipfile.ZIP_STORED)
    monkeypatch.setattr(pf, "_SAMPLE_BYTES", 16)
    with zipfile.ZipFile(p) as zf:
        info = zf.getinfo("xl/worksheets/sheet1.xml")
        exact = pf._scan_exact(zf, info, pf.SheetInfo("Readings", info.filename, "visible"),
                               PreflightLimits())
    assert (exact.max_row, exact.max_col) == (4, 4)  # hand-read from the rows above
    assert exact.formulas_without_value == ("D2",)
    for size in range(1, len(xml) + 2):
        monkeypatch.setattr(pf, "_CHUNK", size)
        for window in (32, 1 << 17):
            monkeypatch.setattr(pf, "_WINDOW", window)
            fast = preflight(p).sheets[0]
            got = (fast.max_row, fast.max_col, fast.formulas_without_value,
                   fast.merged_ranges, fast.head)
            assert got == (exact.max_row, exact.max_col, exact.formulas_without_value,
                           exact.merged_ranges, exact.head), (size, window)


@pytest.mark.parametrize("compression", ["deflated", "stored"])
def test_sheet_crc_mismatch_refused(tmp_path: Path, compression: str) -> None:
    # PKWARE APPNOTE.TXT 4.4.7: the CRC-32 of the uncompressed data is stored in the headers;
    # a mismatch means the part is damaged (reliability.md Z3: zip-corrupt, not a crash).
    # The sheet is read by the threaded inflater (deflated) or by zipfile (stored), both in
    # the fast and in the exact scan.
    import zipfile
    import zlib

    import surveytools.inputs.preflight as pf

    xml = sheet_xml("".join(f'<row r="{i}"><c r="A{i}"><v>{i}</v></c></row>'
                            for i in range(1, 3000)))
    kind = zipfile.ZIP_DEFLATED if compression == "deflated" else zipfile.ZIP_STORED
    p = build_xlsx(tmp_path / "crc.xlsx", {"Readings": xml}, compression=kind)
    member = "xl/worksheets/sheet1.xml"
    patch_crc(p, member, zlib.crc32(xml.encode()) ^ 1)
    assert "CRC" in _code(p, "zip-corrupt").message
    assert "CRC" in _code(p, "zip-corrupt", helper_thread=False).message
    with zipfile.ZipFile(p) as zf:
        info = zf.getinfo(member)
        s = pf.SheetInfo("Readings", member, "visible")
        for scan in (pf._scan_fast, pf._scan_exact):
            for threaded in (True, False):
                with pytest.raises(zipfile.BadZipFile, match="CRC"):
                    scan(zf, info, s, PreflightLimits(), threaded=threaded)


def test_with_or_without_the_helper_thread_the_report_is_the_same(tmp_path: Path) -> None:
    rows = "".join(f'<row r="{i}"><c r="A{i}"><v>{i}</v></c><c r="C{i}"><f>A{i}*2</f></c>'
                   '</row>' for i in range(1, 40_000))  # several inflate chunks
    p = build_xlsx(tmp_path / "two.xlsx", {"Readings": sheet_xml(rows)})
    threaded, alone = preflight(p), preflight(p, helper_thread=False)
    assert threaded == alone
    assert threaded.sheets[0].max_row == 39_999 and threaded.sheets[0].max_col == 3
    assert len(threaded.sheets[0].formulas_without_value) == 39_999
