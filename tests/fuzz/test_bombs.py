"""The hostile files of issue 18, generated here (small on disk), evaluated in a child process whose address
space is capped at 1 GB (resource.setrlimit RLIMIT_AS): each is refused with exit 3 and one line naming the
limit and the part, or evaluated, within a time bound; none runs out of memory."""

from __future__ import annotations

import json
import resource
import subprocess
import sys
import time
from pathlib import Path

import pytest

from tests.fuzz.packages import SHEET, STRINGS, count_parts, count_rows, repeated, sheet_xml, strings_xml, write_package

CAP = 1 << 30
END = b"</sheetData></worksheet>"
CHILD = r"""
import contextlib, io, json, sys
from sheettool.cli.main import main
results = {}
for path in sys.argv[1:]:
    err = io.StringIO()
    with contextlib.redirect_stderr(err), contextlib.redirect_stdout(io.StringIO()):
        code = main(["evaluate", path, "-o", path + "-out.xlsx", "--quiet"])
    results[path] = [code, err.getvalue()]
print(json.dumps(results))
"""


def _cap_memory() -> None:
    resource.setrlimit(resource.RLIMIT_AS, (CAP, CAP))


def bombs(folder: Path) -> dict[str, tuple[int, str]]:
    """name -> (expected exit code, a phrase the message must hold); the files are written in `folder`."""
    head = sheet_xml(count_rows())[: -len(END)]
    cases: dict[str, tuple[dict, int, str]] = {
        "row-5m": ({SHEET: sheet_xml(count_rows() + '<row r="5000000"><c r="A5000000"><v>1</v></c></row>')},
                   3, "row 5,000,000, past the format's last row"),
        "row-50m": ({SHEET: sheet_xml(count_rows() + '<row r="50000000"><c r="A50000000"><v>1</v></c></row>')},
                    3, "row 50,000,000, past the format's last row"),
        "col-2e9": ({SHEET: sheet_xml(count_rows(), '<cols><col min="1" max="2000000000" hidden="1"/></cols>')},
                    0, ""),
        "blanks-256mb": ({SHEET: repeated(head, b" " * 64, (256 << 20) // 64, END)}, 3, "to 1, more than the limit"),
        "row-40m-cells": ({SHEET: repeated(head + b'<row r="30">', b"<c/>", 40_000_000, b"</row>" + END)},
                          3, "to 1, more than the limit"),
        "strings-60m": ({STRINGS: repeated(strings_xml(["Lot", "Defectives", "Inspected"])[:-6], b"<si/>",
                                           60_000_000, b"</sst>")}, 3, "to 1, more than the limit"),
        "strings-1.1m-distinct": ({STRINGS: strings_xml(["Lot", "Defectives", "Inspected",
                                                         *(f"lot {i}" for i in range(1_100_000))])},
                                  3, "more than the limit of 1,000,000 strings"),
        "row-20k-cells": ({SHEET: sheet_xml(count_rows() + '<row r="30">'
                                            + "".join(f"<c><v>{i}</v></c>" for i in range(20_000)) + "</row>")},
                          3, "past column XFD"),
    }
    expected = {}
    for name, (parts, code, phrase) in cases.items():
        path = write_package(folder / f"{name}.xlsx", {**count_parts(), **parts})
        assert path.stat().st_size < 4 << 20  # small on disk
        expected[str(path)] = (code, phrase)
    return expected


@pytest.mark.slow
def test_bombs_are_refused_in_bounded_memory_and_time(tmp_path):
    expected = bombs(tmp_path)
    started = time.monotonic()
    child = subprocess.run([sys.executable, "-c", CHILD, *expected], capture_output=True, text=True, timeout=300,
                           preexec_fn=_cap_memory, check=False)
    seconds = time.monotonic() - started
    assert child.returncode == 0, child.stderr[-2000:]
    results = json.loads(child.stdout)
    for path, (code, phrase) in expected.items():
        got, message = results[path]
        assert got == code, (path, message)
        assert phrase in message, (path, message)
        if code:
            assert message.count("\n") == 1 and "Error" not in message
            assert not Path(path + "-out.xlsx").exists()
    assert seconds < 60, seconds  # all eight, imports included: a few seconds; generous for a busy machine
