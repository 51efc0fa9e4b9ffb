"""Atomic output writing and output-name sanitising (reliability.md B6, B7)."""

from __future__ import annotations

import os
from pathlib import Path

import pytest
from hypothesis import given
from hypothesis import strategies as st

from surveytools.outputs.atomic import (
    atomic_path,
    atomic_write_bytes,
    atomic_write_text,
    remove_stale_parts,
    safe_stem,
    unique_output_stem,
)

#: POSIX NAME_MAX on common file systems (ext4, NTFS, APFS): 255 bytes per name.
NAME_MAX_BYTES = 255
#: Microsoft "Naming Files, Paths, and Namespaces": reserved device names.
RESERVED = {"CON", "PRN", "AUX", "NUL", *(f"COM{i}" for i in range(1, 10)),
            *(f"LPT{i}" for i in range(1, 10))}


class BoomError(RuntimeError):
    pass


def leftovers(directory: Path) -> list[str]:
    return sorted(p.name for p in directory.iterdir() if p.name.endswith(".part"))


def test_write_bytes_and_text(tmp_path):
    target = tmp_path / "a.results.json"
    atomic_write_bytes(target, b"\x00\x01")
    assert target.read_bytes() == b"\x00\x01"
    atomic_write_text(target, "K\u00f6ln\r\n")
    assert target.read_bytes() == "K\u00f6ln\r\n".encode()  # no newline translation
    assert leftovers(tmp_path) == []


def test_failure_mid_write_keeps_old_file_and_leaves_no_part(tmp_path):
    target = tmp_path / "x.results.json"
    target.write_text("old complete content", encoding="utf-8")
    with pytest.raises(BoomError, match="mid-write"), atomic_path(target) as part:
        assert part.parent == tmp_path
        assert part.name.startswith(".x.results.json.") and part.name.endswith(".part")
        with part.open("w", encoding="utf-8") as fh:
            fh.write("new but trunc")
            raise BoomError("mid-write")
    assert target.read_text(encoding="utf-8") == "old complete content"
    assert leftovers(tmp_path) == []


def test_failure_with_no_previous_file_leaves_nothing(tmp_path):
    target = tmp_path / "new.json"
    with pytest.raises(BoomError, match="x"), atomic_path(target) as part:
        part.write_bytes(b"half")
        raise BoomError("x")
    assert list(tmp_path.iterdir()) == []


def test_final_file_appears_only_at_the_end(tmp_path):
    target = tmp_path / "late.json"
    with atomic_path(target) as part:
        part.write_bytes(b"{}")
        assert not target.exists()
    assert target.read_bytes() == b"{}"
    assert leftovers(tmp_path) == []


def test_temp_file_gets_normal_permissions(tmp_path):
    if os.name != "posix":
        pytest.skip("POSIX permissions")
    umask = os.umask(0)
    os.umask(umask)
    target = tmp_path / "perm.json"
    atomic_write_text(target, "{}")
    assert target.stat().st_mode & 0o777 == 0o666 & ~umask


def test_long_final_name_temp_name_within_limit(tmp_path):
    target = tmp_path / ("n" * 240 + ".json")
    with atomic_path(target) as part:
        assert len(part.name.encode()) <= NAME_MAX_BYTES
        part.write_bytes(b"1")
    assert target.read_bytes() == b"1"


def test_remove_stale_parts(tmp_path):
    (tmp_path / ".a.results.json.1234abcd.part").write_bytes(b"x")
    (tmp_path / "keep.part").write_bytes(b"x")  # not ours: no leading dot
    (tmp_path / ".hidden").write_bytes(b"x")
    (tmp_path / ".dir.part").mkdir()
    removed = remove_stale_parts(tmp_path)
    assert [p.name for p in removed] == [".a.results.json.1234abcd.part"]
    assert sorted(p.name for p in tmp_path.iterdir()) == [".dir.part", ".hidden", "keep.part"]
    assert remove_stale_parts(tmp_path / "missing") == []


# reliability.md B6: hostile names, expected stems worked out by hand from the rule
# (NFKC; runs of [^A-Za-z0-9._-] -> "_"; strip "._ "; <= 80 chars; reserved -> "_" prefix).
@pytest.mark.parametrize(("name", "expected"), [
    ("../../evil", "evil"),          # ".._.._evil" stripped of leading "._"
    ("..\\evil", "evil"),
    ("CON", "_CON"),
    ("con.xlsx", "_con.xlsx"),       # reserved with an extension too (Microsoft docs)
    ("LPT9", "_LPT9"),
    ("COM10", "COM10"),              # not reserved
    ("a:b", "a_b"),
    ("x\n", "x"),
    ("", "unnamed"),
    (".", "unnamed"),
    ("..", "unnamed"),
    ("   ", "unnamed"),
    ("East gate (week 2)", "East_gate_week_2"),
    ("\uff25ast", "East"),            # fullwidth E -> E under NFKC (Unicode UAX #15)
    ("M\u00fcller/Platz", "M_ller_Platz"),
])
def test_safe_stem_cases(name, expected):
    assert safe_stem(name) == expected


def test_safe_stem_truncates_300_chars():
    out = safe_stem("a" * 300)
    assert out == "a" * 80


@given(st.text(max_size=300))
def test_safe_stem_properties(name):
    out = safe_stem(name)
    assert out  # never empty
    assert out not in (".", "..")
    assert "/" not in out and "\\" not in out and "\x00" not in out
    assert out.isascii()
    assert len(out.encode()) <= NAME_MAX_BYTES
    assert len(out) <= 81
    assert out.split(".", 1)[0].upper() not in RESERVED
    assert safe_stem(out) == out  # idempotent


@given(st.text(max_size=300))
def test_safe_stem_stays_inside_directory(tmp_path_factory, name):
    base = tmp_path_factory.getbasetemp().resolve()
    out = (base / f"{safe_stem(name)}.results.json").resolve()
    assert out.parent == base
    assert len(out.name.encode()) <= NAME_MAX_BYTES


def test_unique_output_stem_b7():
    # reliability.md B7: two inputs with the same stem -> two outputs (hash suffix).
    taken: set[str] = set()
    h1, h2 = "ab" * 32, "cd" * 32
    assert unique_output_stem("east", h1, taken) == "east"
    assert unique_output_stem("east", h2, taken) == "east__" + "cd" * 6
    assert unique_output_stem("EAST", h2, taken) == "EAST__" + "cd" * 6 + "_2"
    assert len(taken) == 3
    assert len({t.casefold() for t in taken}) == 3
