"""The Provenance sheet: input identity, versions, standards, cautions, settings in effect."""

from __future__ import annotations

import importlib.metadata
import json
from collections.abc import Mapping

from surveytools.outputs.book import Book
from surveytools.outputs.xlsx_style import cautions_lines, print_setup, text_lines

SHEET_PROVENANCE = "Provenance"

#: Libraries whose versions the Provenance sheet records when the document has none.
LIBRARIES = ("numpy", "pandas", "openpyxl", "fastexcel", "python-calamine", "xlsxwriter",
             "jsonschema")

#: Standards and conventions the results rest on.
STANDARDS: tuple[tuple[str, str], ...] = (
    ("Lden, Lday, Levening, Lnight", "Directive 2002/49/EC, Annex I"),
    ("LAeq,T, LN (percentage exceedance level), residual correction",
     "ISO 1996-1:2016; ISO 1996-2:2017"),
    ("Frequency weighting A, time weighting F", "IEC 61672-1:2013"),
    ("Background sound level LA90, rating level, excess over background",
     "BS 4142:2014+A1:2019 (where assessments are configured)"),
    ("LN convention", "LN is the level exceeded for N % of the time (LA90 exceeded 90 %)"),
    ("Ldn, CNEL", "Day-night and community noise equivalent levels with the configured "
     "evening/night penalties"),
    ("Reported levels", "Rounded once, half up, to 0.1 dB; criteria judge the reported value"),
    ("Occupational caution", "Directive 2003/10/EC, Art. 3 (80 dB(A) lower action value)"),
)

_KEY_WIDTH = 44.0
_VALUE_WIDTH = 90.0


def library_versions() -> dict[str, str]:
    """Return installed versions of the libraries the tool relies on (stable per environment)."""
    out = {}
    for name in LIBRARIES:
        try:
            out[name] = importlib.metadata.version(name)
        except importlib.metadata.PackageNotFoundError:
            out[name] = "not installed"
    return out


def flatten_settings(settings: object, prefix: str = "") -> list[tuple[str, object]]:
    """Flatten nested settings into ``("periods.lden.day_start", "07:00")`` pairs.

    Lists of scalars become one JSON text; lists of mappings are numbered
    (``criteria[0].limit_db``). Keys keep their document order.
    """
    out: list[tuple[str, object]] = []
    if isinstance(settings, Mapping):
        for key, value in settings.items():
            name = f"{prefix}.{key}" if prefix else str(key)
            out += flatten_settings(value, name)
    elif isinstance(settings, list | tuple):
        if settings and all(isinstance(x, Mapping) for x in settings):
            for i, item in enumerate(settings):
                out += flatten_settings(item, f"{prefix}[{i}]")
        else:
            out.append((prefix, json.dumps(list(settings), ensure_ascii=False, default=str)))
    else:
        out.append((prefix, settings))
    return out


def add(book: Book) -> None:
    """Add the Provenance sheet."""
    doc = book.doc
    sw = book.sheet(SHEET_PROVENANCE)
    ws = sw.ws
    inp = doc.get("input") or {}
    tool = doc.get("tool") or {}
    sw.set_width(0, _KEY_WIDTH)
    sw.set_width(1, _VALUE_WIDTH)
    sw.text(0, 0, "Provenance", "title", measure=False)
    row = 2
    pairs: list[tuple[str, object]] = [
        ("Input file", inp.get("file")),
        ("Input path", inp.get("path")),
        ("Input size [bytes]", inp.get("size_bytes")),
        ("Input SHA-256", inp.get("sha256")),
        ("Tool", tool.get("name")),
        ("Tool version", tool.get("version")),
        ("Results schema version", doc.get("schema_version")),
        ("Status", doc.get("status")),
    ]
    row = sw.key_values(row, 0, pairs)
    row += 1
    sw.text(row, 0, "Library versions", "subtitle", measure=False)
    row += 1
    libs = doc.get("provenance")
    if isinstance(libs, Mapping) and isinstance(libs.get("libraries"), Mapping):
        libs = libs["libraries"]
    if not isinstance(libs, Mapping) or not libs:
        libs = library_versions()
    row = sw.key_values(row, 0, [(str(k), str(v)) for k, v in libs.items()])
    row += 1
    sw.text(row, 0, "Standards and methods", "subtitle", measure=False)
    row += 1
    for what, source in STANDARDS:
        sw.text(row, 0, what, "wrap", measure=False)
        sw.text(row, 1, source, "wrap", measure=False)
        lines = max(text_lines(what, _KEY_WIDTH), text_lines(source, _VALUE_WIDTH))
        if lines > 1:
            ws.set_row(row, 15.0 * lines + 2)
        row += 1
    row += 1
    sw.text(row, 0, "Cautions", "subtitle", measure=False)
    row += 1
    for line in cautions_lines():
        ws.merge_range(row, 0, row, 1, "", sw.styles.get("caution"))
        sw.text(row, 0, line, "caution", measure=False)
        ws.set_row(row, 15.0 * text_lines(line, _KEY_WIDTH + _VALUE_WIDTH) + 2)
        row += 1
    row += 1
    sw.text(row, 0, "Settings in effect", "subtitle", measure=False)
    row += 1
    header_row = row
    sw.header(row, 0, ["Setting", "Value"])
    row += 1
    for key, value in flatten_settings(doc.get("settings") or {}):
        sw.text(row, 0, key, "wrap", measure=False)
        if isinstance(value, bool):
            sw.text(row, 1, "true" if value else "false")
        elif isinstance(value, int | float):
            if not sw.number(row, 1, value, "value_left"):
                sw.text(row, 1, "not a finite number", "note")
        elif value is None:
            sw.text(row, 1, "(none)", "note")
        else:
            text = str(value)
            sw.text(row, 1, text, "wrap", measure=False)
            lines = text_lines(text, _VALUE_WIDTH)
            if lines > 1:
                ws.set_row(row, 15.0 * min(lines, 20) + 2)
        row += 1
    print_setup(ws, _KEY_WIDTH + _VALUE_WIDTH, (header_row, header_row),
                last_row=row - 1, last_col=1)
