"""Validation: schemas, vectorised row checks and the findings they produce.

``build_survey`` is re-exported lazily: :mod:`surveytools.inputs.raw` imports
:mod:`surveytools.validation.findings`, so importing the builder eagerly here would be
circular.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from surveytools.validation.build import build_survey

__all__ = ["build_survey"]


def __getattr__(name: str) -> Any:
    if name == "build_survey":
        from surveytools.validation.build import build_survey

        return build_survey
    raise AttributeError(f"module 'surveytools.validation' has no attribute {name!r}")
