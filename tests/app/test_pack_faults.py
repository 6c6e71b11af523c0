"""The pack under faults: a worker killed or overdue, an unreadable sheet, a named pipe, linked folders, a full disk."""

from __future__ import annotations

import itertools
import json
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import openpyxl

import sheettool.app.pack as pack_module
from sheettool.app.batch import FileJob, FileOutcome, Progress, collect_inputs, evaluate_job, run_parallel
from tests.conftest import sha256
from tests.workbooks import readings, simple

ROOT = Path(__file__).resolve().parents[2]


def _folder(tmp_path: Path, *names: str) -> Path:
    """A folder of small good workbooks, one sheet named after each file."""
    folder = tmp_path / "in"
    folder.mkdir()
    for i, name in enumerate(names):
        simple(folder / name, readings(25, 4, seed=i + 1), title=Path(name).stem)
    return folder


def _killed_on_boom(job: FileJob) -> FileOutcome:
    """Evaluates as usual, except that the process dies on boom.xlsx as under the out-of-memory killer."""
    if job.path.name == "boom.xlsx":
        os.kill(os.getpid(), signal.SIGKILL)
    return evaluate_job(job)


def _stuck_on_slow(job: FileJob) -> FileOutcome:
    """Evaluates as usual, except that slow.xlsx never finishes."""
    if job.path.name == "slow.xlsx":
        time.sleep(60)
    return evaluate_job(job)


def _summary_rows(path: Path) -> list[tuple]:
    rows = list(openpyxl.load_workbook(path, read_only=True)["Review summary"].iter_rows(values_only=True))
    header = next(i for i, r in enumerate(rows) if r[0] == "Source file")
    return list(itertools.takewhile(lambda r: r[0], rows[header + 1:]))  # the table, not the contents below


def test_a_killed_worker_costs_its_file_only(run_cli, tmp_path, monkeypatch):
    folder = _folder(tmp_path, "a.xlsx", "boom.xlsx", "c.xlsx")
    monkeypatch.setattr(pack_module, "evaluate_job", _killed_on_boom)
    for jobs in ("1", "2"):
        out = tmp_path / f"pack{jobs}.xlsx"
        result = run_cli("pack", folder, "-o", out, "--json", "--jobs", jobs)
        assert result.code == 5, result.err  # written, one input failed
        assert [c["source"] for c in result.json["characteristics"]] == ["a.xlsx", "c.xlsx"]
        (failed,) = result.json["failed"]
        assert failed["source"] == "boom.xlsx" and "SIGKILL" in failed["message"]
        assert "Traceback" not in result.err
        assert [r[0] for r in _summary_rows(out)] == ["a.xlsx", "boom.xlsx", "c.xlsx"]


def _nap(seconds: float) -> str:
    time.sleep(seconds)
    return f"slept {seconds:g}"


def test_an_input_past_its_time_limit_is_stopped(run_cli, tmp_path, monkeypatch):
    began = time.monotonic()
    results = run_parallel(_nap, [0, 60, 0, 0], 2, Progress(4, quiet=True), lambda item, why: why, time_limit=1)
    assert time.monotonic() - began < 30  # stopped at its limit, not after its 60 s
    assert results == ["slept 0", "stopped after 1 s, the time limit per file", "slept 0", "slept 0"]
    folder = _folder(tmp_path, "slow.xlsx")
    monkeypatch.setattr(pack_module, "evaluate_job", _stuck_on_slow)
    result = run_cli("pack", folder, "-o", tmp_path / "p.xlsx", "--time-limit", "0.5")
    assert result.code == 3  # nothing could be evaluated: nothing is written
    assert f"{folder / 'slow.xlsx'}: not evaluated: stopped after 0.5 s, the time limit per file" in result.err
    assert not (tmp_path / "p.xlsx").exists()
    assert run_cli("pack", folder, "-o", tmp_path / "q.xlsx", "--time-limit", "0").code == 2


def test_an_unreadable_sheet_in_a_good_workbook_is_a_row(run_cli, tmp_path):
    folder = tmp_path / "in"
    folder.mkdir()
    simple(folder / "mixed.xlsx", readings(25, 4), extra={"Remarks": [["Shift", "Note"], ["early", "gauge swapped"]]})
    out = tmp_path / "p.xlsx"
    result = run_cli("pack", folder, "-o", out, "--json")
    assert result.code == 5  # documented: a sheet that could not be evaluated makes the exit code 5
    assert [c["sheet"] for c in result.json["characteristics"]] == ["Bore"]
    (failed,) = result.json["failed"]
    assert (failed["source"], failed["sheet"]) == ("mixed.xlsx", "Remarks") and "no numeric data" in failed["message"]
    assert [(r[0], r[1], r[13]) for r in _summary_rows(out)][-1] == ("mixed.xlsx", "Remarks", "not evaluated")
    # evaluate keeps its own rule: a bad sheet among good ones is a problem, not an exit
    assert run_cli("evaluate", folder / "mixed.xlsx", "-o", tmp_path / "e.xlsx").code == 0


def test_a_named_pipe_is_skipped_not_opened(tmp_path):
    folder = _folder(tmp_path, "a.xlsx")
    os.mkfifo(folder / "stuck.xlsx")
    codes, out, err = _commands(["pack", folder, "-o", tmp_path / "p.xlsx", "--json"],
                                ["evaluate", folder / "stuck.xlsx"])  # a hang fails in _commands
    assert codes == [0, 3], err
    data = json.loads(out)
    assert [c["source"] for c in data["characteristics"]] == ["a.xlsx"]
    (skipped,) = data["skipped"]
    assert skipped["source"] == "stuck.xlsx" and "named pipe" in skipped["message"]
    assert f"sheettool: {folder / 'stuck.xlsx'}: a named pipe, not a file" in err


def test_linked_folders_are_followed_once(run_cli, tmp_path):
    folder = _folder(tmp_path, "a.xlsx")
    elsewhere = tmp_path / "line 3"
    elsewhere.mkdir()
    simple(elsewhere / "b.xlsx", readings(25, 4, seed=9), title="b")
    (folder / "line 3").symlink_to(elsewhere)
    (folder / "again").symlink_to(folder)  # a loop back to the folder itself
    result = run_cli("pack", folder, "-o", tmp_path / "p.xlsx", "--json")
    assert result.code == 0, result.err
    assert [c["source"] for c in result.json["characteristics"]] == ["a.xlsx", "line 3/b.xlsx"]
    (skipped,) = result.json["skipped"]
    assert skipped["source"] == "again" and "already searched" in skipped["message"]
    assert collect_inputs([folder, folder / "a.xlsx"]) == [folder / "a.xlsx", folder / "line 3" / "b.xlsx"]


_COMMANDS = """
import json, resource, signal, sys
from sheettool.cli.main import main
if sys.argv[1] == "capped":
    signal.signal(signal.SIGXFSZ, signal.SIG_IGN)  # past the cap a write fails with EFBIG instead of killing us
    resource.setrlimit(resource.RLIMIT_FSIZE, (20000, 20000))
codes = [main(args) for args in json.loads(sys.argv[2])]
sys.stderr.write(f"exit codes {json.dumps(codes)}\\n")
"""


def _commands(*commands: list, capped: bool = False) -> tuple[list[int], str, str]:
    """Run sheettool commands in one fresh process (at most 60 s), optionally with files capped at 20 kB.

    Returns the exit codes, stdout and stderr without the codes line.
    """
    argv = json.dumps([[str(a) for a in c] for c in commands])
    done = subprocess.run([sys.executable, "-c", _COMMANDS, "capped" if capped else "plain", argv],
                          capture_output=True, text=True, timeout=60, cwd=ROOT)
    lines = done.stderr.splitlines()
    codes = [line for line in lines if line.startswith("exit codes ")]
    assert done.returncode == 0 and len(codes) == 1, done.stderr
    err = "\n".join(line for line in lines if line not in codes)
    return json.loads(codes[0].removeprefix("exit codes ")), done.stdout, err


def test_outputs_that_cannot_be_written_exit_4_with_the_cause(tmp_path):
    folder = _folder(tmp_path, "a.xlsx", "b.xlsx")
    before = {p: sha256(p) for p in folder.iterdir()}
    codes, _, err = _commands(["pack", folder / "a.xlsx", "-o", tmp_path / "p.xlsx"],
                              ["evaluate", folder / "a.xlsx", folder / "b.xlsx", "--jobs", "2"], capped=True)
    assert codes == [4, 4], err  # every output failed to write: 4, not 3 (the inputs are fine)
    # (the writing library may still print its own leftovers on stderr after our lines: the writer's to silence)
    ours = [line for line in err.splitlines() if line.startswith("sheettool: ")]
    assert ours == [f"sheettool: {tmp_path / 'p.xlsx'}: cannot write the output (File too large)"] + [
        f"sheettool: {folder / n}-evaluated.xlsx: cannot write the output (File too large)" for n in "ab"]
    assert not (tmp_path / "p.xlsx").exists()
    assert {p: sha256(p) for p in folder.iterdir()} == before  # nothing left beside the inputs
