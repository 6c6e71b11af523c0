"""Sheet names any spreadsheet application accepts are read, and the tab names made from them stay valid.

The format limits a tab name to 31 UTF-16 code units, so a character past U+FFFF counts 2 (common practice:
the workbook format's sheet-name limit as applications enforce it).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import openpyxl

from sheettool.cli.main import main
from sheettool.workbook.writer.cells import tab_name, utf16_cut, utf16_len

EMOJI_NAME = "Bore \U0001F600 diameter station twelve"  # 30 characters, 31 UTF-16 units


def _workbook(path: Path, titles: list[str], part: str | None = None) -> Path:
    rng = np.random.default_rng(11)
    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    for title in titles:
        ws = wb.create_sheet(title)
        if part is not None:
            ws.append(["Part", part])
        ws.append(["Subgroup", "Reading 1", "Reading 2", "Reading 3"])
        for i in range(25):
            ws.append([i + 1, *np.round(rng.normal(10.0, 0.1, 3), 3).tolist()])
    wb.save(path)
    return path


def test_utf16_counting_never_splits_a_pair():
    assert utf16_len(EMOJI_NAME) == 31 and len(EMOJI_NAME) == 30
    assert utf16_cut("ab\U0001F600c", 3) == "ab"  # the astral character would need units 3 and 4
    assert utf16_cut("ab\U0001F600c", 4) == "ab\U0001F600"


def test_tab_names_fit_the_format_and_stay_unique():
    used: set[str] = set()
    names = [tab_name("\U0001F600" * 20, "chart", used) for _ in range(12)]
    assert len({n.lower() for n in names}) == 12
    for n in names:
        assert utf16_len(n) <= 31
        assert not any(0xD800 <= ord(ch) <= 0xDFFF for ch in n)  # no lone surrogate half


def test_same_name_told_apart_by_what_is_known():
    used: set[str] = set()
    first = tab_name("Bore diameter", "chart", used, ("P-100", "line-a"))
    second = tab_name("Bore diameter", "chart", used, ("P-200", "line-b"))
    third = tab_name("Bore diameter", "chart", used, ("P-200", "line-b"))
    fourth = tab_name("Bore diameter", "chart", used, ())
    assert first == "Bore diameter chart"
    assert second == "Bore diameter (P-200) chart"
    assert third == "Bore diameter (line-b) chart"
    assert fourth == "Bore diameter~2 chart"  # the last resort, when nothing tells them apart


def test_emoji_sheet_evaluated_end_to_end(tmp_path, capsys):
    source = _workbook(tmp_path / "emoji.xlsx", [EMOJI_NAME])
    out = tmp_path / "emoji-evaluated.xlsx"
    assert main(["evaluate", str(source), "-o", str(out)]) == 0
    names = openpyxl.load_workbook(out, read_only=True).sheetnames
    made = [n for n in names if n.endswith((" chart", " data"))]
    assert len(made) == 2 and all(utf16_len(n) <= 31 and "\U0001F600" in n for n in made)


def test_pack_with_same_names_uses_the_part(tmp_path, capsys):
    folder = tmp_path / "inputs"
    folder.mkdir()
    _workbook(folder / "line-a.xlsx", ["Bore diameter"], part="P-100")
    _workbook(folder / "line-b.xlsx", ["Bore diameter"], part="P-200")
    out = tmp_path / "pack.xlsx"
    main(["pack", str(folder), "-o", str(out)])
    names = openpyxl.load_workbook(out, read_only=True).sheetnames
    # every one of a shared name is told apart, the first as much as the second
    assert {"Bore diameter (P-100) chart", "Bore diameter (P-200) chart", "Bore diameter (P-100) summary"} <= set(names)
    assert not any("~" in n for n in names) and "Bore diameter chart" not in names


def test_pack_with_same_names_and_parts_uses_the_words_of_the_file_names_that_differ(tmp_path, capsys):
    folder = tmp_path / "inputs"
    folder.mkdir()
    for line in ("line2", "line3"):
        _workbook(folder / f"{line}-november.xlsx", ["Bore diameter"], part="P-100")
    out = tmp_path / "pack.xlsx"
    main(["pack", str(folder), "-o", str(out)])
    names = openpyxl.load_workbook(out, read_only=True).sheetnames
    assert {"Bore diameter (line2) chart", "Bore diameter (line3) chart"} <= set(names)
