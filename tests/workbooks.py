"""Small survey workbooks built at test time for end-to-end (CLI) tests.

Values are invented; expected figures in the tests that use them are hand-evaluated from
the formulas in design §5.
"""

from __future__ import annotations

import io
import zipfile
from datetime import datetime, timedelta
from pathlib import Path
from typing import Any

import openpyxl


def survey_workbook(path: Path, *, position: str = "P1", start: datetime | None = None,
                    levels: list[Any] | None = None, step_s: int = 3600,
                    site: str = "Test site (invented)", time_zone: str = "UTC",
                    extra_survey: dict[str, Any] | None = None) -> Path:
    """Write a minimal valid workbook: Survey + Readings (Start, Duration, LAeq, LAFmax)."""
    start = start or datetime(2026, 6, 1, 7, 0)
    levels = levels if levels is not None else [60.0] * 12 + [55.0] * 4 + [50.0] * 8
    wb = openpyxl.Workbook()
    ws = wb.active
    assert ws is not None
    ws.title = "Survey"
    ws.append(["Field", "Value"])
    rows = {"Position": position, "Site": site, "Time zone": time_zone, "Clock": "local",
            "Calibration before (dB)": 94.0, "Calibration after (dB)": 94.1,
            "Calibrator level (dB)": 94.0}
    rows.update(extra_survey or {})
    for k, v in rows.items():
        ws.append([k, v])
    rd = wb.create_sheet("Readings")
    rd.append(["Start", "Duration (s)", "LAeq (dB)", "LAFmax (dB)"])
    for i, level in enumerate(levels):
        t = start + timedelta(seconds=i * step_s)
        lmax = level + 10 if isinstance(level, float) else None
        rd.append([t, step_s, level, lmax])
    wb.save(path)
    return path


def billion_laughs(path: Path, template: Path) -> Path:
    """Copy ``template`` with an exponential entity definition injected into workbook.xml."""
    dtd = ('<!DOCTYPE workbook [<!ENTITY lol "lol">'
           + "".join(f'<!ENTITY lol{i} "{("&lol" + (str(i - 1) if i > 1 else "") + ";") * 10}">'
                     for i in range(1, 10))
           + "]>")
    src = zipfile.ZipFile(io.BytesIO(template.read_bytes()))
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as out:
        for info in src.infolist():
            data = src.read(info.filename)
            if info.filename == "xl/workbook.xml":
                text = data.decode("utf-8")
                head, sep, rest = text.partition("?>")
                data = (head + sep + dtd + rest).encode("utf-8")
            out.writestr(info, data)
    return path
