"""The drop folder: files written slowly, saved twice, locked, hidden, bad or ours; restarts; each version once."""

from __future__ import annotations

import csv
import datetime as dt
import json
import os
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import openpyxl
import pytest
import xlsxwriter

from sheettool.app.watch_state import LOG_NAME, WatchState, examine, scan, watched_name
from sheettool.demo.scenario import BUNDLED
from tests.conftest import sha256

DEMO_SHEETS = {"Bore diameter", "Leak test", "Crimp force"}
FAST = ("--settle", "0.4", "--poll", "0.1")  # the real-process runs: a short settle time and poll interval


def _workbook(path: Path, seed: int, *sheets: str, labels: dict[str, list[str]] | None = None) -> None:
    """Plain subgroups-across sheets of 25 subgroups of 4 (fixed seed), with labelled cells above a
    sheet's header where `labels` gives them."""
    rng = np.random.default_rng(seed)
    book = xlsxwriter.Workbook(str(path))
    for sheet in sheets:
        ws = book.add_worksheet(sheet)
        above = (labels or {}).get(sheet, [])
        if above:
            ws.write_row(0, 0, above)
        top = 2 if above else 0
        ws.write_row(top, 0, ["Sample", "R1", "R2", "R3", "R4"])
        for r in range(25):
            ws.write_row(top + r + 1, 0, [r + 1, *np.round(rng.normal(20.0, 0.005, 4), 4).tolist()])
    book.close()


def _log(output: Path) -> list[dict[str, str]]:
    path = output / LOG_NAME
    if not path.exists():
        return []
    with open(path, encoding="utf-8-sig", newline="") as handle:  # a byte-order mark for spreadsheet programs
        return list(csv.DictReader(handle))


def _until(condition, what: str, timeout: float = 30.0) -> None:
    deadline = time.monotonic() + timeout
    while not condition():
        if time.monotonic() > deadline:
            raise AssertionError(f"timed out waiting for {what}")
        time.sleep(0.05)


def _watch(folder: Path, *args: str) -> subprocess.Popen:
    return subprocess.Popen([sys.executable, "-m", "sheettool", "watch", str(folder), *FAST, *args],
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)


def _copy_slowly(source: Path, target: Path) -> None:
    """Write a file in four parts with pauses, one longer than the settle time: a half-written
    workbook sits unchanged for a while, as a copy over a slow network does."""
    data = source.read_bytes()
    step = len(data) // 4
    with open(target, "wb") as handle:
        for i, pause in enumerate((0.15, 0.6, 0.15, 0.0)):
            handle.write(data[i * step:] if i == 3 else data[i * step:(i + 1) * step])
            handle.flush()
            time.sleep(pause)


@pytest.mark.slow
@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs FIFOs (POSIX)")
def test_drop_folder_with_real_processes(tmp_path, run_cli):
    drop = tmp_path / "drop"
    out = drop / "evaluated"
    (drop / "line 2").mkdir(parents=True)
    watcher = _watch(drop, "--jobs", "1")
    try:
        _until(lambda: (out / "watch-state.sqlite").exists(), "the watcher to start")
        _copy_slowly(BUNDLED, drop / "bore-nov.xlsx")
        _workbook(drop / "line 2" / "shaft.xlsx", 1, "Shaft")
        _until(lambda: len(_log(out)) == 2, "the first two evaluations")
        shutil.copyfile(BUNDLED, drop / "bore-nov.xlsx")  # saved again: the same bytes, a new time
        # Never evaluated: lock files, temporary saves, hidden files and folders, a FIFO, our own output.
        for name in ("~$bore-nov.xlsx", ".~lock.bore-nov.xlsx#", "~bore-nov.xlsx", "bore-nov.xlsx.tmp",
                     ".hidden.xlsx"):
            shutil.copyfile(BUNDLED, drop / name)
        (drop / ".cache").mkdir()
        shutil.copyfile(BUNDLED, drop / ".cache" / "copy.xlsx")
        os.mkfifo(drop / "pipe.xlsx")  # opening it would block the watcher
        shutil.copyfile(out / "bore-nov-evaluated.xlsx", drop / "results for the meeting.xlsx")
        (drop / "bad.xlsx").write_text("not a workbook")
        _until(lambda: (out / "bad.xlsx-not-evaluated.txt").exists(), "the note on the bad file")
        # Stopped while a file is being evaluated (its output being written): that file is finished first.
        _workbook(drop / "late.xlsx", 4, "Late")
        _until(lambda: any(out.glob(".sheettool-*")) or (out / "late-evaluated.xlsx").exists(), "the late file")
        watcher.send_signal(signal.SIGTERM)
        _, err = watcher.communicate(timeout=20)
    finally:
        if watcher.poll() is None:
            watcher.kill()
    assert watcher.returncode == 0, err
    log = _log(out)
    assert [(r["file"], r["result"]) for r in log] == [
        ("bore-nov.xlsx", "evaluated"), ("line 2/shaft.xlsx", "evaluated"), ("bad.xlsx", "not evaluated"),
        ("late.xlsx", "evaluated")]
    nov, _, bad, _ = log
    assert nov["sha256"] == sha256(BUNDLED)  # the whole file, never a part of it
    assert nov["limits"] == "own base period"
    assert int(nov["points signalled"]) > 0 and nov["written"] == "bore-nov-evaluated.xlsx"
    assert dt.datetime.fromisoformat(nov["time"]).tzinfo is not None
    assert sorted(p.relative_to(out).as_posix() for p in out.rglob("*")) == [
        "bad.xlsx-not-evaluated.txt", "bore-nov-evaluated.xlsx", "late-evaluated.xlsx", "line 2",
        "line 2/shaft-evaluated.xlsx", LOG_NAME, "watch-state.sqlite"]  # no temporary file left behind
    # The note says why in the command line's words, and so does stderr.
    said = run_cli("evaluate", drop / "bad.xlsx").err.strip()
    assert said.startswith("sheettool: ") and str(drop / "bad.xlsx") in said
    assert (out / "bad.xlsx-not-evaluated.txt").read_text(encoding="utf-8").splitlines()[0] == said
    assert bad["first problems"] == said.removeprefix("sheettool: ")
    assert err.strip().splitlines() == [said]
    assert (drop / "bad.xlsx").read_text() == "not a workbook" and sha256(drop / "bore-nov.xlsx") == sha256(BUNDLED)

    # Restarted while stopped: next month's file, the bad one corrected, the shaft changed, a new bad one.
    shutil.copyfile(BUNDLED, drop / "bore-dec.xlsx")
    (drop / "bad.xlsx").unlink()
    _workbook(drop / "bad.xlsx", 2, "Seal")
    first_shaft = sha256(out / "line 2" / "shaft-evaluated.xlsx")
    _workbook(drop / "line 2" / "shaft.xlsx", 3, "Shaft")
    (drop / "bad2.csv").write_text("Reading,Comment\nfirst,no numbers here\n")
    again = subprocess.run([sys.executable, "-m", "sheettool", "watch", str(drop), *FAST, "--once", "--jobs", "2"],
                           capture_output=True, text=True, timeout=60)
    assert again.returncode == 3, again.stderr  # the highest failure's code: an input that cannot be evaluated
    log = _log(out)
    assert len(log) == 8
    new = {r["file"]: r for r in log[4:]}
    assert {f: r["result"] for f, r in new.items()} == {
        "bore-dec.xlsx": "evaluated", "bad.xlsx": "evaluated", "line 2/shaft.xlsx": "evaluated",
        "bad2.csv": "not evaluated"}
    assert new["bore-dec.xlsx"]["limits"] == "carried from bore-nov-evaluated.xlsx"  # every sheet's
    assert not (out / "bad.xlsx-not-evaluated.txt").exists() and (out / "bad-evaluated.xlsx").exists()
    assert (out / "bad2.csv-not-evaluated.txt").exists()
    assert sha256(out / "line 2" / "shaft-evaluated.xlsx") != first_shaft  # replaced: one output per input name
    # The evaluated workbook says where the carried limits came from, and they are November's.
    dec, nov_book = (openpyxl.load_workbook(out / f"bore-{m}-evaluated.xlsx", read_only=True) for m in ("dec", "nov"))
    dec_rows, nov_rows = ({r[0]: json.loads(r[2]) for r in book["limits-block"].iter_rows(min_row=3, values_only=True)}
                          for book in (dec, nov_book))
    assert set(dec_rows) == DEMO_SHEETS
    for sheet in DEMO_SHEETS:
        assert dec_rows[sheet]["limits_source"].startswith("carried from bore-nov-evaluated.xlsx")
        assert nov_rows[sheet]["limits_source"].startswith("base period")
        assert (dec_rows[sheet]["parameters"], dec_rows[sheet]["limits"]) == (nov_rows[sheet]["parameters"],
                                                                              nov_rows[sheet]["limits"])

    # Once more with nothing new: exits at once, nothing evaluated twice.
    idle = subprocess.run([sys.executable, "-m", "sheettool", "watch", str(drop), *FAST, "--once"],
                          capture_output=True, text=True, timeout=60)
    assert idle.returncode == 0 and idle.stderr == ""
    assert len(_log(out)) == 8


def test_names_and_files_that_are_never_inputs(tmp_path):
    assert [watched_name(n) for n in ("a.xlsx", "B.XLSM", "c.csv", "~$a.xlsx", ".~lock.a.xlsx#", "~a.xlsx",
                                      ".~a.xlsx", "a.xlsx.tmp", "a-evaluated.xlsx", "a.xls", ".a.csv")] == [
        True, True, True, False, False, False, False, False, False, False, False]
    (tmp_path / "out").mkdir()
    (tmp_path / "sub").mkdir()
    (tmp_path / ".hidden").mkdir()
    for rel in ("a.xlsx", "sub/b.csv", "out/c.xlsx", ".hidden/d.xlsx"):
        (tmp_path / rel).write_text("x")
    if hasattr(os, "mkfifo"):
        os.mkfifo(tmp_path / "fifo.xlsx")
    if hasattr(os, "symlink"):
        os.symlink(tmp_path / "sub", tmp_path / "link.xlsx")  # a link to a folder, named like a workbook
    assert sorted(scan(tmp_path, tmp_path / "out")) == ["a.xlsx", "sub/b.csv"]


def test_complete_packages_and_own_outputs(tmp_path, run_cli):
    data = BUNDLED.read_bytes()
    part = tmp_path / "part.xlsx"
    part.write_bytes(data[: len(data) * 3 // 4])
    assert examine(part, accept_incomplete=False) is None  # no central directory yet
    assert examine(part, accept_incomplete=True).sheets == frozenset()
    whole = examine(BUNDLED, accept_incomplete=False)
    assert whole.sheets == DEMO_SHEETS and not whole.own_output and whole.sha256 == sha256(BUNDLED)
    _workbook(tmp_path / "small.xlsx", 1, "Shaft")
    assert run_cli("evaluate", tmp_path / "small.xlsx", "-o", tmp_path / "renamed output.xlsx").code == 0
    assert examine(tmp_path / "renamed output.xlsx", accept_incomplete=False).own_output
    (tmp_path / "m.csv").write_text("Sample,R1\n1,2\n")
    assert examine(tmp_path / "m.csv", accept_incomplete=False).sheets == {"m"}


def test_once_in_process_collisions_json_and_deleted_output(tmp_path, run_cli):
    drop = tmp_path / "drop"
    drop.mkdir()
    _workbook(drop / "a.xlsx", 1, "Shaft")
    rows = "\n".join(f"{i},{20 + 0.001 * (i % 5)},{20 - 0.001 * (i % 3)}" for i in range(1, 26))
    (drop / "a.csv").write_text("Sample,R1,R2\n" + rows + "\n")
    os.utime(drop / "a.csv", ns=(1, 2_000_000_000))  # the older of the two: it gets the name a-evaluated.xlsx
    once = ("watch", drop, "--once", "--settle", "0", "--poll", "0.05", "--jobs", "1")
    first = run_cli(*once, "--json")
    assert first.code == 3
    lines = [json.loads(line) for line in first.out.splitlines()]
    assert [line["input"] for line in lines] == [str(drop / "a.xlsx"), str(drop / "a.csv")]
    assert lines[1]["output"] == str(drop / "evaluated" / "a-evaluated.xlsx")
    assert lines[0]["message"] == (f"{drop / 'a.xlsx'}: its evaluated workbook would be a-evaluated.xlsx, which "
                                   "a.csv already has; rename one of the two files")
    assert first.err == f"sheettool: {lines[0]['message']}\n"
    # A second watcher on the same output folder is refused.
    holder = WatchState(drop / "evaluated")
    try:
        busy = run_cli(*once)
    finally:
        holder.close()
    assert busy.code == 4 and "another watcher is using this output folder" in busy.err
    # Deleting an output has its input evaluated again; nothing else is.
    (drop / "evaluated" / "a-evaluated.xlsx").unlink()
    assert run_cli(*once).code == 0
    assert [(r["file"], r["result"]) for r in _log(drop / "evaluated")] == [
        ("a.xlsx", "not evaluated"), ("a.csv", "evaluated"), ("a.csv", "evaluated")]
    assert (drop / "evaluated" / "a-evaluated.xlsx").exists()


def test_new_limits_asked_in_the_workbook(tmp_path, run_cli):
    drop = tmp_path / "drop"
    drop.mkdir()
    once = ("watch", drop, "--once", "--settle", "0", "--poll", "0.05", "--jobs", "1")
    _workbook(drop / "nov.xlsx", 1, "Shaft", "Seal")
    assert run_cli(*once).code == 0
    _workbook(drop / "dec.xlsx", 2, "Shaft", "Seal", labels={"Seal": ["New limits", "yes"]})
    assert run_cli(*once, "--json").code == 0
    *_, dec = _log(drop / "evaluated")
    assert dec["limits"] == "Shaft: carried from nov-evaluated.xlsx; Seal: own base period, as its settings ask"
    assert "carried" not in dec["first problems"]  # no word of limits missing for the sheet that asked for new ones
