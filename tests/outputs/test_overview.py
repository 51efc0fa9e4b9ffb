"""Batch overview workbook: one row per input, safe links, text stays text, reruns agree.

The reference is the hand-built overview document below (built from the fixture results
documents in ``tests/outputs/results_fixture.py``), not the writer's output.
"""

from __future__ import annotations

import shutil
import subprocess
import zipfile
from pathlib import Path
from typing import Any

import openpyxl
import pytest

from surveytools.indicators.reporting import reported_level
from surveytools.outputs.overview import safe_link_name, write_overview_workbook
from surveytools.verdict import verdict_section
from tests.outputs.results_fixture import INJECTIONS, build_results_doc


def entry(doc: dict[str, Any], results_xlsx: str) -> dict[str, Any]:
    avg = doc["survey_average"]
    return {
        "file": doc["input"]["file"], "path": doc["input"]["path"],
        "results_json": results_xlsx.replace(".xlsx", ".json"), "results_xlsx": results_xlsx,
        "status": doc["status"], "position": doc["survey"]["position"],
        "site": doc["survey"]["site"],
        "coverage": {"first": doc["coverage"]["first"], "last": doc["coverage"]["last"],
                     "valid_fraction": 169200.0 / 172800.0},
        "survey_average": {k: avg[k] for k in ("Lday", "Levening", "Lnight", "Lden", "Ldn",
                                               "CNEL", "LAeq_16h", "LAeq_8h")},
        "background": {"day": 46.0, "night": 38.0},
        "worst_excess_over_background": 13.2, "criteria_failed": 2,
        "episodes": {"limit": 2, "warning": 1},
        "findings": {"error": 3, "warning": 1, "info": 1}, "reason": None,
        "verdict": verdict_section(doc),
    }


def overview_doc(site_b: str = "Larkspur Yard", link_b: str = "south_gate__0a1b2c3d4e5f"
                 ".results.xlsx") -> dict[str, Any]:
    a = build_results_doc()
    b = build_results_doc(position="South gate", site=site_b, file="south_gate.xlsx")
    b["status"] = "ok"
    return {
        "schema_version": "1.0", "tool": {"name": "surveytools", "version": "0.1.0"},
        "inputs": [
            entry(a, "north_fence__3f3f3f3f3f3f.results.xlsx"),
            entry(b, link_b),
            {"file": "broken.xlsx", "results_json": "broken__0a0a0a0a0a0a.results.json",
             "results_xlsx": "broken__0a0a0a0a0a0a.results.xlsx", "status": "unreadable",
             "position": None, "site": None,
             "coverage": {"first": None, "last": None, "valid_fraction": None},
             "survey_average": {}, "background": {"day": None, "night": None},
             "worst_excess_over_background": None, "criteria_failed": 0,
             "findings": {"error": 1, "warning": 0, "info": 0},
             "reason": "the file is not a zip archive - re-export it from the meter"},
        ],
        "counts": {"ok": 1, "warnings": 0, "errors": 1, "unreadable": 1, "skipped": 1},
        "skipped": [{"path": "~$north_fence.xlsx", "reason": "office lock file"}],
    }


def header_map(ws: Any) -> tuple[int, dict[str, int]]:
    for row in ws.iter_rows():
        if row[0].value == "Input file":
            return row[0].row, {c.value: c.column for c in row if c.value}
    raise AssertionError("no header row")


def test_one_row_per_input_with_figures(tmp_path: Path) -> None:
    doc = overview_doc()
    path = tmp_path / "overview.xlsx"
    write_overview_workbook(path, doc)
    ws = openpyxl.load_workbook(path)["Overview"]
    hr, col = header_map(ws)
    assert ws.freeze_panes == f"B{hr + 1}"
    assert ws.auto_filter.ref.startswith(f"A{hr}:")
    for i, item in enumerate(doc["inputs"]):
        r = hr + 1 + i
        assert ws.cell(r, col["Input file"]).value == item["file"]
        verdict = item.get("verdict") or {}
        assert ws.cell(r, col["Criteria outcome"]).value == (
            verdict.get("outcome_text") or "n/a")
        lden = item["survey_average"].get("Lden")
        # one number everywhere: the reported value, half up to 0.1 dB
        assert ws.cell(r, col["Lden [dB]"]).value == (
            None if lden is None else reported_level(lden))
        assert ws.cell(r, col["Background LA90 night [dB]"]).value == \
            item["background"]["night"]
        # the count of failing figures says so in its header
        assert ws.cell(r, col["Figures above limits (count)"]).value == \
            item["criteria_failed"]
        assert ws.cell(r, col["Errors"]).value == item["findings"]["error"]
        if "episodes" in item:  # limit / warning episodes, as the results list them
            assert ws.cell(r, col["Episodes above limit / warning"]).value == "2 / 1"
    # hand-evaluated: 169200 / 172800 = 0.979166.. -> 97.9 % (half up at 0.1 %)
    assert ws.cell(hr + 1, col["Valid [%]"]).value == 97.9
    assert ws.cell(hr + 3, col["Conditions affecting the figures"]).value == (
        "could not be read: " + doc["inputs"][2]["reason"])
    # status colours of our own: unreadable row gets the lilac fill
    assert ws.cell(hr + 3, col["Data quality"]).fill.fgColor.rgb.endswith("D9D2E9")
    texts = " ".join(str(c.value) for row in ws.iter_rows() for c in row if c.value)
    assert "CAUTIONS" in texts and "competent person" in texts
    skipped = openpyxl.load_workbook(path)["Skipped"]
    assert skipped.cell(2, 1).value == "~$north_fence.xlsx"


def test_links_are_relative_and_only_to_our_names(tmp_path: Path) -> None:
    path = tmp_path / "overview.xlsx"
    write_overview_workbook(path, overview_doc(link_b="../../etc/passwd.xlsx"))
    ws = openpyxl.load_workbook(path)["Overview"]
    hr, col = header_map(ws)
    first = ws.cell(hr + 1, col["Results workbook"])
    assert first.hyperlink is not None
    assert first.hyperlink.target == "north_fence__3f3f3f3f3f3f.results.xlsx"
    second = ws.cell(hr + 2, col["Results workbook"])
    # the bare name of a path is used; a traversal never reaches a link target
    assert second.hyperlink is None or ".." not in str(second.hyperlink.target)
    with zipfile.ZipFile(path) as zf:
        rels = "".join(zf.read(n).decode() for n in zf.namelist() if n.endswith(".rels"))
    assert "etc" not in rels and "TargetMode=\"External\"" in rels


@pytest.mark.parametrize(
    ("name", "expected"),
    [
        ("north__3f3f3f3f3f3f.results.xlsx", "north__3f3f3f3f3f3f.results.xlsx"),
        ("out/north.results.xlsx", "north.results.xlsx"),
        ("..\\evil.xlsx", None),
        ("..", None),
        ("=HYPERLINK(x).xlsx", None),
        ("a b.xlsx", None),
        ("north.results.json", None),
        (None, None),
    ],
)
def test_safe_link_name(name: object, expected: str | None) -> None:
    # reliability.md §6 item 5: output names come from our sanitised identifiers only
    assert safe_link_name(name) == expected


@pytest.mark.parametrize("bad", INJECTIONS)
def test_injection_in_site_arrives_as_text(tmp_path: Path, bad: str) -> None:
    path = tmp_path / "overview.xlsx"
    write_overview_workbook(path, overview_doc(site_b=bad))
    with zipfile.ZipFile(path) as zf:
        for n in zf.namelist():
            if n.startswith("xl/worksheets/sheet"):
                assert "<f>" not in zf.read(n).decode()
    ws = openpyxl.load_workbook(path)["Overview"]
    hr, col = header_map(ws)
    cell = ws.cell(hr + 2, col["Site"])
    # ECMA-376 ST_Xstring: CR is stored as _x000D_ (openpyxl leaves it undecoded; from memory)
    assert cell.value.replace("_x000D_", "\r") == bad
    assert cell.quotePrefix


def test_rerun_identical(tmp_path: Path) -> None:
    a, b = tmp_path / "a.xlsx", tmp_path / "b.xlsx"
    write_overview_workbook(a, overview_doc())
    write_overview_workbook(b, overview_doc())
    assert a.read_bytes() == b.read_bytes()


@pytest.mark.slow
def test_libreoffice_opens_overview(tmp_path: Path) -> None:
    exe = shutil.which("soffice") or shutil.which("libreoffice")
    if exe is None:
        pytest.skip("LibreOffice (soffice) is not installed; install libreoffice-calc-nogui")
    src = tmp_path / "overview.xlsx"
    write_overview_workbook(src, overview_doc())
    subprocess.run([exe, f"-env:UserInstallation=file://{tmp_path}/lo-profile", "--headless",
                    "--convert-to", "csv", "--outdir", str(tmp_path), str(src)],
                   check=True, capture_output=True, timeout=180)
    text = (tmp_path / "overview.csv").read_text(encoding="utf-8")
    assert "north_fence.xlsx" in text and "broken.xlsx" in text
    assert "56.87" in text or "56.9" in text  # Lden of the first input (fixture: 56.87)


def test_episode_counts_by_severity() -> None:
    # Two criteria: one with a limit episode and a warning-only episode, one with a limit
    # episode; an assessment criterion lists none. Counted by hand: 2 limit, 1 warning.
    from surveytools.pipeline import overview_row
    from surveytools.verdict import episode_counts

    doc = build_results_doc()
    doc["criteria"] = [
        {"name": "Night", "episodes": [{"severity": "limit"}, {"severity": "warning"}]},
        {"name": "Day", "episodes": [{"severity": "limit"}]},
        {"name": "Rating", "episodes": []},
    ]
    assert episode_counts(doc) == {"limit": 2, "warning": 1}
    assert overview_row(doc, "x.results.json", "x.results.xlsx")["episodes"] == {
        "limit": 2, "warning": 1}
