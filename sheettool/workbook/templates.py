"""Data-entry workbooks: settings cells already labelled, a header, number-only validation on the
measurement cells, plain instructions and a worked first row, for each kind of data sheettool reads.

The worked row carries the note "worked example - exclude", so a template evaluated with the
example still in place keeps it out of the limits.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from pathlib import Path

from sheettool import TOOL_NAME
from sheettool.core.presets import PRESETS
from sheettool.workbook import style
from sheettool.workbook.writer.book_writer import BookWriter

TEMPLATE_KINDS = ("subgroups", "individuals", "proportions", "counts")
ENTRY_ROWS = 500  # rows prepared with validation under the header
FIXED_DATE = dt.datetime(2026, 1, 1)  # document date, so a rebuilt template is byte for byte the same
EXAMPLE_NOTE = "worked example - exclude"


@dataclass(frozen=True)
class TemplateSpec:
    """What one kind of template asks for: its sheet, value columns, worked row and instructions."""

    kind: str
    sheet: str
    value_columns: list[str]
    example: list[float]
    whole_numbers: bool
    settings: list[str]
    instructions: list[str]


_IDENTITY = ["Part", "Characteristic", "Unit"]
_SAMPLING = ["Sampling interval (h)", "Hours per month", "Rules", "Base period"]
_SPECS = ["LSL", "USL", "Target"]


def template_spec(kind: str, n: int = 5) -> TemplateSpec:
    """The specification of a template; ValueError for an unknown kind or subgroup size."""
    if kind == "subgroups":
        if not 2 <= n <= 25:
            raise ValueError("a subgroups template needs --n from 2 to 25 readings per subgroup")
        example = [round(10.0 + 0.01 * ((i * 7) % 5 - 2), 3) for i in range(n)]
        return TemplateSpec(kind, "Measurements", [f"Reading {i + 1}" for i in range(n)], example, False,
                            [*_IDENTITY, *_SPECS, *_SAMPLING],
                            [f"One row per subgroup: the {n} readings taken together, side by side.",
                             "Type numbers only in the reading cells; leave a cell empty if a reading is missing."])
    if kind == "individuals":
        return TemplateSpec(kind, "Measurements", ["Value"], [10.0], False,
                            [*_IDENTITY, *_SPECS, *_SAMPLING],
                            ["One row per measurement, in the order taken."])
    if kind == "proportions":
        return TemplateSpec(kind, "Inspection", ["Inspected", "Defective units"], [200, 3], True,
                            [*_IDENTITY, *_SAMPLING],
                            ["One row per lot or shift: units inspected and how many of them were defective."])
    if kind == "counts":
        return TemplateSpec(kind, "Defects", ["Units inspected", "Defects found"], [50, 4], True,
                            [*_IDENTITY, *_SAMPLING],
                            ["One row per lot or shift: units inspected and the defects found on them "
                             "(a unit may have several)."])
    raise ValueError(f"unknown template kind '{kind}'; choose one of {', '.join(TEMPLATE_KINDS)}")


def write_template(spec: TemplateSpec, path: Path) -> None:
    """Write the data-entry workbook for `spec` to `path`."""
    out = BookWriter(str(path))
    book, fmt = out.book, out.fmt
    book.set_properties({"title": f"{TOOL_NAME} data-entry sheet: {spec.kind}",
                         "author": TOOL_NAME, "created": FIXED_DATE})  # no version: a template outlives releases
    entry = book.add_format({"bg_color": "#FFFFFF", "border": 1, "border_color": style.HAIRLINE})
    when = book.add_format({"num_format": "yyyy-mm-dd hh:mm"})
    ws = out.add_tab(spec.sheet).ws
    ws.write_string(0, 0, f"Data-entry sheet ({spec.kind}) for {TOOL_NAME}", fmt["title"])
    for r, label in enumerate(spec.settings, start=2):
        ws.write_string(r, 0, label, fmt["label"])
        ws.write_blank(r, 1, None, entry)
        if label == "Rules":
            ws.write_string(r, 1, "beyond-limits", entry)
        elif label == "Base period":
            ws.write_string(r, 1, "all", entry)
    lines = [
        "How to fill in:",
        "1. Fill the labelled cells on the left; leave empty what does not apply.",
        *[f"{i}. {text}" for i, text in enumerate(spec.instructions, start=2)],
        f"{len(spec.instructions) + 2}. To keep a row out of the limits, write 'exclude' in its note.",
        f"{len(spec.instructions) + 3}. The first row is a worked example: overwrite it or leave it (never evaluated).",
        f"Rules: {', '.join(PRESETS)} (sheettool evaluate --help says what each holds) or rules like 1/1>3,2/3>2.",
        "Base period, the rows that set the limits: all, first N (e.g. first 25) or dates 2026-11-01..2026-11-15.",
        f"Evaluate with:  {TOOL_NAME} evaluate THIS-FILE.xlsx",
    ]
    for r, text in enumerate(lines, start=2):
        ws.write_string(r, 3, text, fmt["label"] if r == 2 else fmt["text"])
    header_row = len(spec.settings) + 3
    header = ["Date and time", "Operator", *spec.value_columns, "Note"]
    ws.write_row(header_row, 0, header, fmt["head"])
    first, last_col = header_row + 1, 1 + len(spec.value_columns)
    ws.write_datetime(first, 0, FIXED_DATE.replace(hour=6), when)
    ws.write_string(first, 1, "initials")
    for c, value in enumerate(spec.example, start=2):
        ws.write_number(first, c, value)
    ws.write_string(first, last_col + 1, EXAMPLE_NOTE)
    kind = "integer" if spec.whole_numbers else "decimal"
    ws.data_validation(first, 2, first + ENTRY_ROWS - 1, last_col, {
        "validate": kind, "criteria": ">=" if spec.whole_numbers else "between",
        **({"value": 0} if spec.whole_numbers else {"minimum": -1e12, "maximum": 1e12}),
        "error_title": "Numbers only", "error_message": "Type a number here (or leave the cell empty).",
    })
    ws.data_validation(first, 0, first + ENTRY_ROWS - 1, 0, {
        "validate": "date", "criteria": ">", "value": dt.datetime(1990, 1, 1),
        "error_title": "Date and time", "error_message": "Type a date, e.g. 2026-11-02 06:00.",
    })
    ws.set_column(0, 0, 22)
    ws.set_column(1, last_col, 14)
    ws.set_column(last_col + 1, last_col + 1, 28)
    ws.freeze_panes(header_row + 1, 0)
    ws.set_landscape()
    ws.fit_to_pages(1, 0)
    ws.repeat_rows(header_row)
    out.close()


def bundled_templates() -> dict[str, TemplateSpec]:
    """The templates kept in the repository's templates/ folder, by file name."""
    return {"subgroups-5.xlsx": template_spec("subgroups", 5), "individuals.xlsx": template_spec("individuals"),
            "proportions.xlsx": template_spec("proportions"), "counts.xlsx": template_spec("counts")}


if __name__ == "__main__":  # python -m sheettool.workbook.templates templates/
    import sys

    folder = Path(sys.argv[1] if len(sys.argv) > 1 else "templates")
    for name, spec in bundled_templates().items():
        write_template(spec, folder / name)
