"""Settings written in the workbook: labelled cells above a sheet's header, and a `settings` sheet.

Labelled cell: a text cell naming a setting (see sheettool.settings.SYNONYMS, matched without
regard to case or punctuation), its value in the next cell to the right, or else in the cell
below; "LSL: 11.95" or "LSL = 11.95" in one cell works too (taken only where the value is valid,
so a title like "Target: monthly review" is not a setting).

Settings sheet (a sheet named "settings", any case): one setting per row, name in column A, value
in column B. Rows above the first section apply to the whole workbook. A row whose first cell is
"[NAME]" or "sheet: NAME" starts a section for the sheet NAME; its rows apply to that sheet only
and win over the whole-workbook rows. Blank rows and rows whose first cell starts with "#" are
skipped; a first row "name | value" is taken as a heading.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

from openpyxl.utils import get_column_letter

from sheettool.base.problems import Problem
from sheettool.settings import Setting, earlier_label_note, label_key, setting_name
from sheettool.settings.convert import convert
from sheettool.workbook.reader.cells import address

SETTINGS_SHEET = "settings"
# Above a header a plain "Mean" or "Sigma" is usually the observed statistic, "k" or "h" a stray
# letter, "Shift" the work shift: there they must be written "standard mean", "standard sigma",
# "CUSUM k", "shift to detect" and so on.
_NOT_IN_CELLS = {"mean", "sigma", "k", "h", "l", "lambda", "shift"}
_INLINE = re.compile(r"^\s*([^:=]{1,40}?)\s*[:=]\s*(\S.*?)\s*$")
_SECTION = re.compile(r"^\s*(?:\[(.+)\]|sheet\s*:\s*(.+?))\s*$", re.IGNORECASE)


@dataclass
class SettingsSheet:
    """The settings sheet read: whole-workbook settings and per-sheet sections (keys in lower case)."""

    common: dict[str, Setting] = field(default_factory=dict)
    sections: dict[str, dict[str, Setting]] = field(default_factory=dict)

    def for_sheet(self, sheet: str) -> dict[str, Setting]:
        """The settings that apply to `sheet`: whole-workbook rows, then its own section."""
        return {**self.common, **self.sections.get(sheet.strip().lower(), {})}


def _blank(value: object) -> bool:
    return value is None or (isinstance(value, str) and not value.strip())


def labelled_settings(title: str, rows: list[list[object]], above: int) -> tuple[dict[str, Setting], list[Problem]]:
    """Settings named by labels in rows[0:above] (the rows above the header), and a note for each label written
    under a setting's earlier name."""
    found: dict[str, Setting] = {}
    notes: list[Problem] = []
    for r in range(min(above, len(rows))):
        row = rows[r]
        for c, value in enumerate(row):
            if not isinstance(value, str) or len(value) > 60:
                continue
            inline = _INLINE.match(value)
            if inline and (name := setting_name(inline.group(1))) is not None \
                    and label_key(inline.group(1)) not in _NOT_IN_CELLS:
                setting = Setting(name, inline.group(2), address(title, r + 1, c + 1))
                if _converts(setting):  # a title such as "Target: monthly review" is no setting
                    found.setdefault(name, setting)
                    _note_earlier(notes, inline.group(1), title, setting.origin)
                continue
            name = setting_name(value)
            if name is None or label_key(value) in _NOT_IN_CELLS:
                continue
            right = row[c + 1] if c + 1 < len(row) else None
            below_row = rows[r + 1] if r + 1 < above else []
            below = below_row[c] if c < len(below_row) else None
            if not _blank(right) and not (isinstance(right, str) and setting_name(right) is not None):
                found.setdefault(name, Setting(name, right, address(title, r + 1, c + 2)))
            elif not _blank(below) and setting_name(str(below)) is None:
                found.setdefault(name, Setting(name, below, address(title, r + 2, c + 1)))
            else:
                continue
            _note_earlier(notes, value, title, address(title, r + 1, c + 1))
    return found, notes


def _note_earlier(notes: list[Problem], label: str, sheet: str, cell: str) -> None:
    """A note when the label is a setting's earlier name."""
    note = earlier_label_note(label)
    if note:
        notes.append(Problem("note", note, sheet=sheet, cell=cell.rpartition("!")[2]))


def _converts(setting: Setting) -> bool:
    try:
        convert(setting)
    except ValueError:
        return False
    return True


def read_settings_sheet(rows: list[list[object]], title: str) -> tuple[SettingsSheet, list[Problem]]:
    """Read the settings sheet (its tab named `title`); unknown names are reported by row and otherwise left alone."""
    sheet = SettingsSheet()
    problems: list[Problem] = []
    target = sheet.common
    for r, row in enumerate(rows, start=1):
        first = row[0] if row else None
        if _blank(first) or (isinstance(first, str) and first.strip().startswith("#")):
            continue
        text = str(first).strip()
        if m := _SECTION.match(text):
            target = sheet.sections.setdefault((m.group(1) or m.group(2)).strip().lower(), {})
            continue
        value = row[1] if len(row) > 1 else None
        name = setting_name(text)
        if r == 1 and text.lower() == "name":
            continue
        if name is None:
            problems.append(Problem("warning", f"unknown setting '{text}' was not used", sheet=title,
                                    cell=f"row {r}"))
        elif _blank(value):
            problems.append(Problem("warning", f"setting '{text}' has no value in column B", sheet=title,
                                    cell=f"row {r}"))
        else:
            target[name] = Setting(name, value, f"settings sheet row {r}")
            if note := earlier_label_note(text):
                problems.append(Problem("note", note, sheet=title, cell=f"row {r}"))
    return sheet, problems


def unknown_labels(title: str, rows: list[list[object]], above: int) -> list[Problem]:
    """Labels above the header that name no setting (a short text cell with a value to its right, neither of them a
    known label nor the value of one): said, so that a value typed beside them is not silently ignored."""
    found: list[Problem] = []
    for r in range(min(above, len(rows))):
        row = rows[r]
        values = set()  # columns holding the value of a label on the left
        for c, value in enumerate(row):
            if c in values or not isinstance(value, str) or not value.strip() or len(value) > 40 \
                    or _INLINE.match(value):
                continue
            right = row[c + 1] if c + 1 < len(row) else None
            if setting_name(value) is not None:
                values.add(c + 1)
                continue
            if _blank(right) or (isinstance(right, str) and setting_name(right) is not None):
                continue
            values.add(c + 1)
            found.append(Problem("note", f"the label '{value.strip()}' names no setting sheettool knows, so its "
                                 f"value '{right}' was not used (the settings are listed in the reading guide)",
                                 sheet=title, cell=f"{get_column_letter(c + 1)}{r + 1}"))
    return found
