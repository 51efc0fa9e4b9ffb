"""A tiny file cannot make a reader allocate by declaring huge numbers (issue: runaway cost).

Fixtures are built at test time (``tests.inputs.hostile``). Each refusal comes from the
light preflight the batch worker runs *before* its reader starts, so it costs nothing.
"""

from __future__ import annotations

import re
from pathlib import Path

import pytest

from surveytools.errors import WorkbookError
from surveytools.inputs.preflight import preflight, preflight_heads
from tests.inputs.hostile import patch_member, small_workbook


@pytest.mark.parametrize("check", [preflight_heads, preflight])
def test_a_billion_shared_strings_declared_in_a_small_part_is_refused(tmp_path: Path,
                                                                       check: object) -> None:
    base = small_workbook(tmp_path / "base.xlsx")
    bad = patch_member(base, tmp_path / "sst.xlsx", "xl/sharedStrings.xml",
                       lambda d: re.sub(rb'(count|uniqueCount)="\d+"', rb'\1="4000000000"', d))
    with pytest.raises(WorkbookError) as info:
        check(bad)  # type: ignore[operator]
    assert info.value.code == "strings-count-implausible"
    assert "4000000000" in info.value.message


def test_honest_string_counts_pass(tmp_path: Path) -> None:
    base = small_workbook(tmp_path / "base.xlsx")
    assert preflight_heads(base).sheets  # xlsxwriter's own counts are accepted


@pytest.mark.parametrize("ref", ["ZZZZZ1", "A99999999999", "XFE2"])
def test_a_cell_reference_beyond_the_limits_in_a_sheet_head_is_refused_before_reading(
        tmp_path: Path, ref: str) -> None:
    base = small_workbook(tmp_path / "base.xlsx")
    bad = patch_member(base, tmp_path / "ref.xlsx", "xl/worksheets/sheet1.xml",
                       lambda d: d.replace(b'r="A2"', f'r="{ref}"'.encode(), 1))
    with pytest.raises(WorkbookError) as info:
        preflight_heads(bad)  # the worker's check before its reader starts
    assert info.value.code == "sheet-too-large"
    assert ref in info.value.message
