"""The monthly routine: one workbook per characteristic per month, named for its month; carried limits found by
identity with their origin; signals counted as points; the action log carried from month to month."""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import numpy as np
import openpyxl
import pytest
import xlsxwriter

from sheettool.workbook.action_log import ACTION_LOG_TAB, COLUMNS, read_action_log
from tests.cli.test_json_schema import _valid

A2_FIVE = 0.577  # X-bar chart factor for subgroups of 5 (ASTM E2587 table; tests/reference/published-values.md)


def month_book(path: Path, month: int, seed: int, shift_from: int | None = None, notes: dict[int, str] | None = None,
               part: str = "HF-220", characteristic: str = "bore diameter", rows: int = 25) -> np.ndarray:
    """A month's workbook as a technician keeps it: part and characteristic cells, one subgroup of 5 a day from the
    1st, a note column; the mean moves up 0.03 mm from point `shift_from`. Returns the readings."""
    rng = np.random.default_rng(seed)
    values = np.round(rng.normal(10.0, 0.01, (rows, 5)), 4)
    if shift_from is not None:
        values[shift_from - 1:] += 0.03
    book = xlsxwriter.Workbook(str(path))
    ws = book.add_worksheet("Bore")
    when = book.add_format({"num_format": "yyyy-mm-dd hh:mm"})
    ws.write_row(0, 0, ["Part", part])
    ws.write_row(1, 0, ["Characteristic", characteristic])
    ws.write_row(3, 0, ["Date", "R1", "R2", "R3", "R4", "R5", "Note"])
    for r in range(rows):
        ws.write_datetime(r + 4, 0, dt.datetime(2026, month, 1, 8) + dt.timedelta(days=r), when)
        ws.write_row(r + 4, 1, values[r].tolist())
        if notes and r + 1 in notes:
            ws.write_string(r + 4, 6, notes[r + 1])
    book.close()
    return values


@pytest.fixture
def march(run_cli, tmp_path: Path) -> Path:
    """bore-2026-03.xlsx (in control) evaluated to review-2026-03.xlsx."""
    month_book(tmp_path / "bore-2026-03.xlsx", 3, seed=1)
    out = tmp_path / "review-2026-03.xlsx"
    assert run_cli("evaluate", tmp_path / "bore-2026-03.xlsx", "-o", out).code == 0
    return out


def test_month_named_files_carry_by_identity_with_their_origin(run_cli, tmp_path, march):
    month_book(tmp_path / "bore-2026-04.xlsx", 4, seed=2, shift_from=15)
    april = run_cli("evaluate", tmp_path / "bore-2026-04.xlsx", "-o", tmp_path / "review-2026-04.xlsx",
                    "--limits-from", march, "--json")
    assert april.code == 0, april.err
    (char,) = april.json["characteristics"]
    assert char["identity"] == "HF-220 / bore diameter / Bore"
    assert char["carried"] == {"matched_by": "identity"}
    origin = char["limits_origin"]
    assert (origin["file"], origin["month"], origin["base"], origin["base_period_points"]) == (
        "bore-2026-03.xlsx", "2026-03", "1-25", 25)
    assert origin["carried_from"] == "review-2026-03.xlsx"
    # the limits are March's: an independent X-bar computation from March's readings (A2 from the published table)
    readings = month_book(tmp_path / "again.xlsx", 3, seed=1)
    center, rbar = readings.mean(), np.ptp(readings, axis=1).mean()
    assert char["limits"]["mean"]["ucl"] == pytest.approx(center + A2_FIVE * rbar, rel=1e-3)  # table to 3 digits
    # the shift from point 15 signals against the carried limits; every count counts points
    points = {s["point"] for s in char["signals"]}
    assert char["points_signalled"] == len(points) and points and min(points) >= 15
    # carried origin travels on: May carries from April's output and still names March's base subgroups
    month_book(tmp_path / "bore-2026-05.xlsx", 5, seed=3)
    may = run_cli("evaluate", tmp_path / "bore-2026-05.xlsx", "-o", tmp_path / "review-2026-05.xlsx",
                  "--limits-from", tmp_path / "review-2026-04.xlsx", "--json")
    (char,) = may.json["characteristics"]
    assert char["limits_origin"]["file"] == "bore-2026-03.xlsx"
    assert char["limits_origin"]["carried_from"] == "review-2026-04.xlsx"


@pytest.mark.slow
def test_month_named_packs_carry_count_as_the_evaluation_does_and_keep_the_log(run_cli, tmp_path):
    march, april = tmp_path / "2026-03", tmp_path / "2026-04"
    march.mkdir()
    april.mkdir()
    month_book(march / "bore-2026-03.xlsx", 3, seed=1)
    month_book(march / "seal-2026-03.xlsx", 3, seed=4, part="HF-300", characteristic="seal groove", shift_from=10)
    month_book(april / "bore-2026-04.xlsx", 4, seed=2, shift_from=12)  # no seal file this month
    assert run_cli("pack", march, "-o", tmp_path / "pack-2026-03.xlsx").code == 0
    first_seal = next(n for n, e in enumerate(read_action_log(tmp_path / "pack-2026-03.xlsx"), start=1)
                      if e["identity"].startswith("HF-300"))
    _fill_log(tmp_path / "pack-2026-03.xlsx", {first_seal: {"cause": "tool wear"}})
    logged = read_action_log(tmp_path / "pack-2026-03.xlsx")
    second = run_cli("pack", april, "-o", tmp_path / "pack-2026-04.xlsx", "--json",
                     "--limits-from", tmp_path / "pack-2026-03.xlsx")
    assert second.code == 0, second.err
    _valid("pack", second.json)
    (char,) = second.json["characteristics"]
    assert char["carried"] == {"matched_by": "identity"}
    assert "too little data" not in char["summary"]["status"]  # carried limits are never too little data
    alone = run_cli("evaluate", april / "bore-2026-04.xlsx", "-o", tmp_path / "alone.xlsx",
                    "--limits-from", tmp_path / "pack-2026-03.xlsx", "--json")
    (same,) = alone.json["characteristics"]
    assert char["summary"]["points_signalled"] == char["points_signalled"] == same["points_signalled"] > 0
    assert char["limits"] == same["limits"]
    # the log of a characteristic not in this month's pack is written on as it was, entries and all
    seal = [e for e in logged if e["identity"].startswith("HF-300")]
    assert seal and seal[0]["cause"] == "tool wear"
    assert [e for e in read_action_log(tmp_path / "pack-2026-04.xlsx") if e["identity"].startswith("HF-300")] == seal


@pytest.mark.slow
def test_a_limits_file_for_nothing_here_is_an_error_and_a_partial_match_says_so(run_cli, tmp_path, march):
    month_book(tmp_path / "seal-2026-04.xlsx", 4, seed=4, part="HF-300", characteristic="seal groove")
    result = run_cli("evaluate", tmp_path / "seal-2026-04.xlsx", "--limits-from", march)
    assert result.code == 3 and "Traceback" not in result.err
    assert len(result.err.strip().splitlines()) == 1 and "carries limits for none" in result.err
    month_book(tmp_path / "bore-2026-04.xlsx", 4, seed=2)
    both = run_cli("evaluate", tmp_path / "bore-2026-04.xlsx", tmp_path / "seal-2026-04.xlsx", "--limits-from", march,
                   "--quiet")
    assert both.code == 3  # the seal file failed; the bore file was written with March's limits
    assert "limits carried, set by base subgroups 1-25" in both.err
    folder = tmp_path / "april"
    folder.mkdir()
    month_book(folder / "seal.xlsx", 4, seed=4, part="HF-300", characteristic="seal groove")
    assert run_cli("pack", folder, "-o", tmp_path / "p.xlsx", "--limits-from", march).code == 3
    month_book(folder / "bore.xlsx", 4, seed=2)
    partial = run_cli("pack", folder, "-o", tmp_path / "p.xlsx", "--limits-from", march)
    assert partial.code == 6  # written, but one characteristic found no carried limits
    assert "no carried limits for identity 'HF-300 / seal groove / Bore'" in partial.err


def _fill_log(path: Path, entries: dict[int, dict[str, str]]) -> None:
    """Write the technician's entries into the action log rows (by event row, 1-based under the header)."""
    book = openpyxl.load_workbook(path)
    ws = book[ACTION_LOG_TAB]
    top = next(r for r in range(1, ws.max_row + 1) if ws.cell(r, 1).value == "Identity")
    col = {name: c for c, (name, _) in enumerate(COLUMNS, start=1)}
    for row, values in entries.items():
        for name, value in values.items():
            ws.cell(top + row, col[name], value)
    book.save(path)


def test_the_action_log_is_carried_month_to_month(run_cli, tmp_path):
    notes = {18: "gauge dropped", 22: "O-ring batch quarantined"}
    month_book(tmp_path / "bore-2026-03.xlsx", 3, seed=2, shift_from=18, notes=notes)
    march = tmp_path / "review-2026-03.xlsx"
    first = run_cli("evaluate", tmp_path / "bore-2026-03.xlsx", "-o", march, "--json")
    (char,) = first.json["characteristics"]
    events = char["events"]
    assert len(events) >= 2 and all(e["open"] for e in events)
    assert sum(len(e["points"]) for e in events) == char["points_signalled"]
    # the input's notes sit beside their signals and events
    assert any(s["note"] == "gauge dropped" for s in char["signals"] if s["point"] == 18) or any(
        "gauge dropped" in e["note"] for e in events)
    # the technician closes the first event and writes a cause on the second, leaving it open
    _fill_log(march, {1: {"cause": "gauge G-114 dropped", "action": "recalibrated", "by": "T. Lind",
                          "date": dt.datetime(2026, 4, 2), "closed": "yes"},
                      2: {"cause": "under investigation"}})
    month_book(tmp_path / "bore-2026-04.xlsx", 4, seed=5)
    april = tmp_path / "review-2026-04.xlsx"
    second = run_cli("evaluate", tmp_path / "bore-2026-04.xlsx", "-o", april, "--json", "--limits-from", march)
    (char,) = second.json["characteristics"]
    earlier = [e for e in char["events"] if e["found_in"] == "bore-2026-03.xlsx"]
    assert len(earlier) == len(events)
    closed, still = earlier[0], earlier[1]
    assert (closed["cause"], closed["action"], closed["by"], closed["date"], closed["closed"], closed["open"]) == (
        "gauge G-114 dropped", "recalibrated", "T. Lind", "2026-04-02", "yes", False)
    assert (still["cause"], still["open"]) == ("under investigation", True)
    assert char["events_open"] == sum(e["open"] for e in char["events"])
    _valid("evaluate", second.json)  # the events, origin and carried keys keep the published contract
    # written again in April's log, so May reads them back once more: nothing written is lost
    again = [e for e in read_action_log(april) if e["found_in"] == "bore-2026-03.xlsx"]
    assert [e["cause"] for e in again[:2]] == ["gauge G-114 dropped", "under investigation"]
    assert again[0]["closed"] == "yes" and again[0]["first_label"] == closed["first_label"]


def test_the_terminal_summary_names_points_events_and_warnings(run_cli, tmp_path, march):
    path = tmp_path / "bore-2026-04.xlsx"
    month_book(path, 4, seed=2, shift_from=15, notes={16: "gauge dropped"})
    book = openpyxl.load_workbook(path)
    book["Bore"]["C10"] = "n/a"
    book.save(path)
    result = run_cli("evaluate", path, "--limits-from", march, "--set", "interval_hours=24",
                     "--set", "hours_per_month=720", "--set", "false_alarms_per_month=0.001")
    assert result.code == 0
    lines = result.err.splitlines()
    head = next(line for line in lines if line.startswith("HF-220 / bore diameter / Bore:"))
    assert "point(s) signalled in" in head and "event(s) open" in head and "false alarms per month" in head
    assert "requirements NOT met" in head
    assert any("not numbers" in line and "C10" in line for line in lines)
    assert any("reads like a reason to keep them out" in line for line in lines)
    assert any(line.strip().startswith("warning: requirement false_alarms_per_month") for line in lines)
    assert run_cli("evaluate", path, "--limits-from", march, "--json", "-o", tmp_path / "j.xlsx").err == ""
