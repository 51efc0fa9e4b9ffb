"""Import weight: what must stay light so that processes start fast and work overlaps.

The batch parent (cli, batch) never needs pandas; the reader imports numpy/pandas only
where it converts values, so a worker can parse while it imports them (DEVELOPERS.md).
"""

from __future__ import annotations

import subprocess
import sys

import pytest


@pytest.mark.parametrize("module", ["surveytools.cli", "surveytools.batch",
                                    "surveytools.inputs.read", "surveytools.inputs.preflight",
                                    "surveytools.pipeline"])
def test_module_imports_without_pandas(module: str) -> None:
    code = (f"import sys, {module}; "
            "heavy = [m for m in ('pandas', 'xlsxwriter') if m in sys.modules]; "
            "print(','.join(heavy))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         check=True).stdout.strip()
    assert out == "", f"{module} pulls in {out}"
