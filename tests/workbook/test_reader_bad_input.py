"""Bad input through the command line: a clear one-line message, the documented exit code, no
traceback, and the input's bytes unchanged (hashed before and after)."""

import builtins
import io
import tracemalloc
import zipfile
from pathlib import Path

import openpyxl
import pytest

from tests.conftest import sha256
from tests.workbooks import readings, simple

BOMB = b"""<?xml version="1.0"?>
<!DOCTYPE lolz [
 <!ENTITY lol "lol">
 <!ENTITY lol1 "&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;">
 <!ENTITY lol2 "&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;&lol1;">
 <!ENTITY lol3 "&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;&lol2;">
 <!ENTITY lol4 "&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;&lol3;">
 <!ENTITY lol5 "&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;&lol4;">
 <!ENTITY lol6 "&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;&lol5;">
 <!ENTITY lol7 "&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;&lol6;">
 <!ENTITY lol8 "&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;&lol7;">
 <!ENTITY lol9 "&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;&lol8;">
]>
<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main"><sheetData>
<row r="1"><c r="A1" t="inlineStr"><is><t>&lol9;</t></is></c></row></sheetData></worksheet>"""


def _refused(run_cli, path: Path, code: int, *words: str):
    before = sha256(path)
    result = run_cli("evaluate", path)
    assert result.code == code, result.err
    assert "Traceback" not in result.err and len(result.err.strip().splitlines()) == 1
    for word in words:
        assert word in result.err, result.err
    assert sha256(path) == before
    return result


def _good(tmp_path: Path, name: str = "good.xlsx") -> Path:
    path = tmp_path / name
    simple(path, readings(20, 4))
    return path


def test_empty_workbook(run_cli, tmp_path):
    path = tmp_path / "empty.xlsx"
    openpyxl.Workbook().save(path)
    _refused(run_cli, path, 3, "empty.xlsx", "no sheet holds measurement data", "empty")


def test_sheet_with_no_numbers(run_cli, tmp_path):
    path = tmp_path / "words.xlsx"
    book = openpyxl.Workbook()
    book.active.append(["Part", "Comment"])
    book.active.append(["HF-220", "not measured"])
    book.save(path)
    _refused(run_cli, path, 3, "words.xlsx", "no numeric data")


def test_one_subgroup_only(run_cli, tmp_path):
    path = tmp_path / "one.xlsx"
    simple(path, readings(1, 5))
    _refused(run_cli, path, 3, "only one subgroup (row 2)")


def test_zero_spread_is_said_and_the_chart_written(run_cli, tmp_path):
    path = tmp_path / "flat.xlsx"
    book = openpyxl.Workbook()
    book.active.append(["Sample", "A", "B", "C"])
    for i in range(20):
        book.active.append([i + 1, 5.0, 5.0, 5.0])
    book.save(path)
    before = sha256(path)
    result = run_cli("evaluate", path, "--json")
    assert result.code == 0, result.err
    assert any("zero spread" in p["message"] for p in result.json["problems"])
    with zipfile.ZipFile(result.json["output"]) as z:
        assert any(n.startswith("xl/charts/chart") for n in z.namelist())
    assert sha256(path) == before


def test_text_junk_cells_are_each_named(run_cli, tmp_path):
    path = tmp_path / "junk.xlsx"
    simple(path, readings(20, 3))
    book = openpyxl.load_workbook(path)
    book.active["B4"], book.active["D9"], book.active["C12"] = "n/a", "12.0.1", "#DIV/0!"
    book.save(path)
    before = sha256(path)
    result = run_cli("evaluate", path, "--json")
    assert result.code == 0, result.err
    (char,) = result.json["characteristics"]
    assert char["read"]["not_numbers"] == ["'Bore'!B4", "'Bore'!D9", "'Bore'!C12"]
    assert char["read"]["readings"] == 57
    assert any("'Bore'!D9" in p["message"] and "treated as missing" in p["message"] for p in result.json["problems"])
    assert sha256(path) == before


@pytest.mark.parametrize("name", ["locked.xlsx", "old.xls"])
def test_encrypted_or_old_binary_file(run_cli, tmp_path, name):
    path = tmp_path / name
    # An OLE compound file starts with these eight bytes (the compound file format's signature).
    path.write_bytes(bytes.fromhex("d0cf11e0a1b11ae1") + b"\0" * 1024)
    _refused(run_cli, path, 3, "encrypted or old .xls; save as .xlsx without a password")


def test_truncated_zip(run_cli, tmp_path):
    good = _good(tmp_path)
    path = tmp_path / "cut.xlsx"
    data = good.read_bytes()
    path.write_bytes(data[: len(data) // 2])
    _refused(run_cli, path, 3, "cut.xlsx", "not a readable .xlsx workbook")


def test_corrupt_member(run_cli, tmp_path):
    good = _good(tmp_path)
    path = tmp_path / "corrupt.xlsx"
    with zipfile.ZipFile(good) as src, zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as dst:
        for item in src.infolist():
            body = src.read(item)
            dst.writestr(item, body[:-40] + b"<<garbage" if item.filename.endswith("sheet1.xml") else body)
    _refused(run_cli, path, 3, "corrupt.xlsx", "not a readable .xlsx workbook")


@pytest.mark.parametrize("member", ["xl/worksheets/sheet1.xml", "xl/workbook.xml", "xl/styles.xml"])
def test_entity_expansion_bomb_is_refused_in_bounded_memory(run_cli, tmp_path, member):
    assert openpyxl.DEFUSEDXML  # openpyxl parses through defusedxml (a dependency)
    good = _good(tmp_path)
    path = tmp_path / "bomb.xlsx"
    with zipfile.ZipFile(good) as src, zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as dst:
        assert member in src.namelist()
        for item in src.infolist():
            dst.writestr(item, BOMB if item.filename == member else src.read(item))
    tracemalloc.start()
    result = _refused(run_cli, path, 3, "bomb.xlsx", "entity declarations, refused as unsafe")
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    # Expanded, the bomb would be 10**9 "lol"s (3 GB); refused at the declaration it is never built.
    # How fast the refusal is: benchmarks/bench_hostile.py.
    assert peak < 50 * 2**20, (peak, result.err)


def test_unreadable_file(run_cli, tmp_path, monkeypatch):
    # Tests run as root, whom chmod does not stop: the refusal is simulated at open().
    path = _good(tmp_path, "locked away.xlsx")
    before = sha256(path)
    real_open = builtins.open

    def guarded(file, *args, **kwargs):
        if isinstance(file, str | Path) and Path(file) == path:
            raise PermissionError(13, "Permission denied", str(file))
        return real_open(file, *args, **kwargs)

    monkeypatch.setattr(builtins, "open", guarded)
    result = run_cli("evaluate", path)
    monkeypatch.undo()
    assert result.code == 3 and "cannot be read (Permission denied)" in result.err and "Traceback" not in result.err
    assert sha256(path) == before


def test_path_with_non_ascii_characters_and_spaces(run_cli, tmp_path):
    folder = tmp_path / "Prüfprotokolle März – Ø 12"
    folder.mkdir()
    path = _good(folder, "Bohrung Ø12 mm (Linie 2).xlsx")
    before = sha256(path)
    result = run_cli("evaluate", path, "--json")
    assert result.code == 0, result.err
    assert Path(result.json["output"]) == folder / "Bohrung Ø12 mm (Linie 2)-evaluated.xlsx"
    assert Path(result.json["output"]).exists() and sha256(path) == before


def test_bad_sheet_among_good_ones(run_cli, tmp_path):
    path = tmp_path / "mixed.xlsx"
    simple(path, readings(20, 4), extra={"Notes": [["Checked by", "R. Diaz"]], "Empty": []})
    before = sha256(path)
    result = run_cli("evaluate", path, "--json")
    assert result.code == 0, result.err
    assert [c["sheet"] for c in result.json["characteristics"]] == ["Bore"]
    where = [p["where"] for p in result.json["problems"]]
    assert "mixed.xlsx, sheet 'Notes'" in where and "mixed.xlsx, sheet 'Empty'" in where
    assert sha256(path) == before


def test_opendocument_gets_a_conversion_message(run_cli, tmp_path):
    path = tmp_path / "calc.ods"
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w") as z:
        z.writestr("mimetype", "application/vnd.oasis.opendocument.spreadsheet")
        z.writestr("content.xml", "<office:document-content/>")
    path.write_bytes(buffer.getvalue())
    _refused(run_cli, path, 3, "OpenDocument", "save it from the spreadsheet application as .xlsx")


def test_bad_option_value(run_cli, tmp_path):
    path = _good(tmp_path)
    before = sha256(path)
    result = run_cli("evaluate", path, "--usl", "12,05mm?")
    assert result.code == 2 and "option --usl: upper specification limit must be a number" in result.err
    result = run_cli("evaluate", path, "--set", "colour=blue")
    assert result.code == 2 and "--set colour=blue" in result.err
    assert sha256(path) == before
