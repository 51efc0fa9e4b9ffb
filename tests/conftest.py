"""Shared pytest configuration."""

from hypothesis import settings

# "ci" profile: enough examples to find edge cases, no per-example deadline (CI machines
# vary in speed). Select with HYPOTHESIS_PROFILE=ci or --hypothesis-profile=ci.
settings.register_profile("ci", max_examples=100, deadline=None)
settings.load_profile("ci")


# ---------------------------------------------------------------------------------------
# Every finding code reported anywhere in the test run must be in the catalogue
# (surveytools/codes.py), so that the README's code table never misses one.
# ---------------------------------------------------------------------------------------
import pytest  # noqa: E402

from surveytools.errors import WorkbookError  # noqa: E402
from surveytools.validation.findings import Finding  # noqa: E402

_SEEN_CODES: set[str] = set()
_original_finding_init = Finding.__init__
_original_error_init = WorkbookError.__init__


def _recording_finding_init(self: Finding, code: str, *args: object, **kwargs: object) -> None:
    _SEEN_CODES.add(code)
    _original_finding_init(self, code, *args, **kwargs)  # type: ignore[arg-type]


def _recording_error_init(self: WorkbookError, code: str, *args: object, **kwargs: object
                          ) -> None:
    _SEEN_CODES.add(code)
    _original_error_init(self, code, *args, **kwargs)  # type: ignore[arg-type]


Finding.__init__ = _recording_finding_init  # type: ignore[method-assign]
WorkbookError.__init__ = _recording_error_init  # type: ignore[method-assign]

#: Codes that tests invent on purpose to exercise the machinery (never reported by the tool).
TEST_ONLY_CODES = {"x", "some-code"}


def pytest_sessionfinish(session: pytest.Session, exitstatus: int) -> None:
    from surveytools.codes import is_known

    unknown = sorted(c for c in _SEEN_CODES if not is_known(c) and c not in TEST_ONLY_CODES)
    if unknown and exitstatus == 0:
        session.exitstatus = 1
        print(f"\nfinding codes reported but not in surveytools/codes.py: {unknown}")
