"""One comparison for results documents computed two ways (whole log and in parts)."""

from __future__ import annotations

import math
from typing import Any


def assert_close(a: Any, b: Any, tol: float) -> None:
    """Assert two JSON-like values equal, floats within ``tol`` (same keys, same lengths)."""
    if isinstance(a, dict):
        assert a.keys() == b.keys()
        for k in a:
            assert_close(a[k], b[k], tol)
    elif isinstance(a, list):
        assert len(a) == len(b)
        for x, y in zip(a, b, strict=True):
            assert_close(x, y, tol)
    elif isinstance(a, float) and isinstance(b, float):
        assert math.isclose(a, b, abs_tol=tol), (a, b)
    else:
        assert a == b
