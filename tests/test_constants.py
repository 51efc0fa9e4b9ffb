"""Every public constant in surveytools/constants.py names its source (style.md rule 3)."""

from __future__ import annotations

import ast
import re
from collections import Counter
from pathlib import Path

import pytest

import surveytools.constants as constants

SOURCE = Path(constants.__file__)
LINES = SOURCE.read_text(encoding="utf-8").splitlines()

# What counts as naming a source: a standard / legal text / guideline / handbook (by
# name, quoted title, address or publication year), a derivation, a reference to the
# previous constant's source, or an explicit "common practice" / "from memory" /
# "own choice" label (style.md rule 3 and the project rules on unsourced values).
SOURCE_MARKERS = re.compile(
    r'"[^"]{6,}"|https?://|\b(19|20)\d\d\b|'
    r"ISO|IEC|\bBS\b|BS ?\d|ANSI|ASA|Directive|WHO|EPA|EPD|SCENIHR|Council|guidance|guide|"
    r"Regulation|National Academies|Engineering ToolBox|Liptak|Bies|[Dd]erived|"
    r"Same source|[Ss]ee [A-Z_]{3,}|[Cc]ommon practice|[Ff]rom memory|[Oo]wn choice|"
    r"Definition|design\.md"
)


def _public_assignments() -> list[tuple[str, int]]:
    tree = ast.parse("\n".join(LINES))
    found = []
    for node in tree.body:
        targets = []
        if isinstance(node, ast.Assign):
            targets = node.targets
        elif isinstance(node, ast.AnnAssign):
            targets = [node.target]
        for target in targets:
            if isinstance(target, ast.Name) and target.id.isupper() and not target.id.startswith(
                "_"
            ):
                found.append((target.id, node.lineno))
    return found


ASSIGNMENTS = _public_assignments()


def _comment_block(lineno: int) -> list[str]:
    """The contiguous ``#:`` lines directly above line ``lineno`` (1-based)."""
    block = []
    index = lineno - 2
    while index >= 0 and LINES[index].startswith("#:"):
        block.insert(0, LINES[index])
        index -= 1
    return block


def test_there_are_constants():
    assert len(ASSIGNMENTS) > 40


def test_no_duplicate_names():
    counts = Counter(name for name, _ in ASSIGNMENTS)
    assert [name for name, n in counts.items() if n > 1] == []


@pytest.mark.parametrize(("name", "lineno"), ASSIGNMENTS, ids=[a[0] for a in ASSIGNMENTS])
def test_constant_has_sourced_doc_comment(name, lineno):
    block = _comment_block(lineno)
    assert block, f"{name} (line {lineno}) needs a '#:' comment line directly above it"
    text = " ".join(block)
    assert SOURCE_MARKERS.search(text), f"{name}: the '#:' comment names no source: {text!r}"


def test_every_public_constant_is_found_by_the_parser():
    # The module's own public upper-case names must all be module-level assignments we
    # checked (guards against names created some other way, e.g. by unpacking).
    module_names = {n for n in vars(constants) if n.isupper() and not n.startswith("_")}
    assert module_names == {name for name, _ in ASSIGNMENTS}
