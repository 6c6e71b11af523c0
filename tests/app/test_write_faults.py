"""Writing under faults: a full disk or an unwritable output is exit 4 with its cause, and nothing is left behind."""

from __future__ import annotations

import errno
import os
import subprocess
import sys
import tempfile
import time
import zipfile
from pathlib import Path

import pytest

from sheettool.workbook.writer import book
from tests.conftest import sha256
from tests.workbooks import readings, simple

ROOT = Path(__file__).resolve().parents[2]


@pytest.fixture
def source(tmp_path: Path) -> Path:
    folder = tmp_path / "in"
    folder.mkdir()
    path = folder / "a.xlsx"
    simple(path, readings(25, 4))
    return path


@pytest.fixture
def private_tmp(tmp_path: Path, monkeypatch) -> Path:
    """The system temporary folder, made an empty one of our own so that anything written there is seen."""
    folder = tmp_path / "system-tmp"
    folder.mkdir()
    monkeypatch.setattr(tempfile, "tempdir", str(folder))
    return folder


def _full_disk(*args, **kwargs):
    raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))


@pytest.mark.parametrize("where", ["package", "parts"])
def test_a_full_disk_is_exit_4_with_the_cause_and_leaves_nothing(source, private_tmp, run_cli, monkeypatch, where):
    if where == "package":  # the zip package is written
        monkeypatch.setattr(zipfile.ZipFile, "write", _full_disk)
    else:  # the writing library's temporary parts are written
        monkeypatch.setattr("xlsxwriter.worksheet.Worksheet._assemble_xml_file", _full_disk)
    output = source.parent / "a-out.xlsx"
    output.write_bytes(b"last month's output")  # a rerun over an earlier output: kept whole when the write fails
    for command in (["evaluate", source, "-o", output], ["pack", source, "-o", output]):
        result = run_cli(*command)
        assert result.code == 4, result.err
        assert result.err.splitlines()[-1] == f"sheettool: {output}: cannot write the output (No space left on device)"
        assert "Traceback" not in result.err and "Exception ignored" not in result.err
        assert output.read_bytes() == b"last month's output"  # nothing partial under the output's name
        assert sorted(p.name for p in source.parent.iterdir()) == ["a-out.xlsx", "a.xlsx"]
        assert list(private_tmp.iterdir()) == []  # the library's own temporary parts stayed beside the output


def test_a_good_write_leaves_only_the_output(source, private_tmp, run_cli):
    before = sha256(source)
    assert run_cli("evaluate", source).code == 0
    assert sorted(p.name for p in source.parent.iterdir()) == ["a-evaluated.xlsx", "a.xlsx"]
    assert list(private_tmp.iterdir()) == [] and sha256(source) == before
    assert (source.parent / "a-evaluated.xlsx").stat().st_mode & 0o777 == book._PLAIN_FILE_MODE


def test_an_output_that_is_a_folder_is_exit_4(source, run_cli):
    (source.parent / "taken.xlsx").mkdir()
    result = run_cli("evaluate", source, "-o", source.parent / "taken.xlsx")
    assert result.code == 4 and "cannot write the output (Is a directory)" in result.err, result.err
    assert sorted(p.name for p in source.parent.iterdir()) == ["a.xlsx", "taken.xlsx"]


def test_work_folders_of_killed_runs_are_removed(tmp_path):
    host = book._owner().rpartition("-")[0]
    now = time.time()
    made = {
        f".sheettool-{host}-{os.getpid()}-live": (0, True),  # this process: running, kept
        f".sheettool-{host}-999999999-dead": (0, False),  # this host, no such process (above any pid_max)
        ".sheettool-elsewhere-42-fresh": (0, True),  # another host's run, recent: it may still be writing
        ".sheettool-elsewhere-42-old": (2 * 3600, False),  # another host's, two hours old
    }
    for name, (age, _) in made.items():
        (tmp_path / name).mkdir()
        (tmp_path / name / ".partial.xlsx").write_bytes(b"")
        os.utime(tmp_path / name, (now - age, now - age))
    old_file = tmp_path / ".sheettool-abc123.xlsx"  # an earlier version's 0-byte temporary file
    old_file.write_bytes(b"")
    os.utime(old_file, (now - 7200, now - 7200))
    (tmp_path / ".sheettool-notes.txt").write_text("someone's")  # not ours to remove: no folder, no .xlsx
    book.clean_stale(tmp_path, now)
    kept = {name for name, (_, keep) in made.items() if keep} | {".sheettool-notes.txt"}
    assert {p.name for p in tmp_path.iterdir()} == kept


_KILLED = """
import os, signal, sys
from sheettool.cli.main import main
import sheettool.workbook.writer.book_writer as bw
close = bw.BookWriter.close
def killed(self):
    os.kill(os.getpid(), signal.SIGKILL)  # as the out-of-memory killer or a power cut, mid-write
bw.BookWriter.close = killed
main(sys.argv[1:])
"""


def test_a_run_killed_mid_write_is_cleaned_by_the_next(source):
    output = source.parent / "a-evaluated.xlsx"
    done = subprocess.run([sys.executable, "-c", _KILLED, "evaluate", str(source)], cwd=ROOT, timeout=60,
                          capture_output=True)
    assert done.returncode == -9
    (left,) = [p for p in source.parent.iterdir() if p.name.startswith(".sheettool-")]
    assert left.is_dir() and not output.exists()
    again = subprocess.run([sys.executable, "-m", "sheettool", "evaluate", str(source)], cwd=ROOT, timeout=60,
                           capture_output=True, text=True)
    assert again.returncode == 0, again.stderr
    assert sorted(p.name for p in source.parent.iterdir()) == ["a-evaluated.xlsx", "a.xlsx"]


def test_numerical_warnings_reach_stderr_in_our_words_only(source, run_cli, monkeypatch):
    import numpy as np

    import sheettool.cli.evaluate_cmd as evaluate_cmd

    real = evaluate_cmd.run

    def noisy(args):
        np.log(np.zeros(1))  # numpy warns: divide by zero encountered in log
        return real(args)

    monkeypatch.setattr(evaluate_cmd, "run", noisy)
    parser_run = run_cli("evaluate", source)
    assert parser_run.code == 0
    assert "RuntimeWarning" not in parser_run.err
    assert "sheettool: note: a computation met 'divide by zero encountered in log'" in parser_run.err
