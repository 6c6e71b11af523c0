"""The review pack: good, empty, corrupt and mislabelled inputs; periods; carried limits; stable order."""

from __future__ import annotations

import datetime as dt
import itertools
import shutil
from pathlib import Path

import numpy as np
import openpyxl
import pytest
import xlsxwriter

from sheettool.app.pack import Period
from sheettool.demo.scenario import BUNDLED
from tests.conftest import sha256


def _subgroups(path: Path, seed: int, sheet: str = "Shaft", shift_from: int | None = None, rows: int = 30,
               start: dt.datetime = dt.datetime(2026, 10, 27)) -> None:
    """A plain subgroups-across workbook: one row every 12 hours (fixed seed)."""
    rng = np.random.default_rng(seed)
    book = xlsxwriter.Workbook(str(path))
    ws = book.add_worksheet(sheet)
    when = book.add_format({"num_format": "yyyy-mm-dd hh:mm"})
    ws.write_row(0, 0, ["Date and time", "R1", "R2", "R3", "R4"])
    for r in range(rows):
        mean = 20.0 + (0.02 if shift_from is not None and r >= shift_from else 0.0)
        ws.write_datetime(r + 1, 0, start + dt.timedelta(hours=12 * r), when)
        ws.write_row(r + 1, 1, np.round(rng.normal(mean, 0.005, 4), 4).tolist())
    book.close()


@pytest.fixture
def folder(tmp_path: Path) -> Path:
    """Two good workbooks (one in a sub-folder), an empty one, a corrupt one and a mislabelled one."""
    root = tmp_path / "november"
    (root / "line 2").mkdir(parents=True)
    shutil.copyfile(BUNDLED, root / "bore.xlsx")
    _subgroups(root / "line 2" / "shaft.xlsx", seed=3, shift_from=20)
    openpyxl.Workbook().save(root / "empty.xlsx")
    (root / "corrupt.xlsx").write_bytes(b"PK\x03\x04 this is not really a workbook")
    (root / "notes.xlsx.txt").write_text("ignored: not a workbook name")
    words = openpyxl.Workbook()
    words.active.append(["Reading", "Comment"])
    words.active.append(["first", "no numbers typed here"])
    words.save(root / "mislabelled.xlsx")
    return root


def test_pack_rows_errors_and_exit_code(run_cli, folder, tmp_path):
    before = {p: sha256(p) for p in folder.rglob("*.xlsx")}
    out = tmp_path / "pack.xlsx"
    result = run_cli("pack", folder, "-o", out, "--json", "--jobs", "2")
    assert result.code == 5, result.err  # written, but some inputs failed (documented in README)
    data = result.json
    # the demo's three sheets in their order, then the shaft workbook
    assert [(c["source"], c["sheet"]) for c in data["characteristics"]] == [
        ("bore.xlsx", "Bore diameter"), ("bore.xlsx", "Leak test"), ("bore.xlsx", "Crimp force"),
        ("line 2/shaft.xlsx", "Shaft")]
    failed = {f["source"]: f["message"] for f in data["failed"]}
    assert set(failed) == {"corrupt.xlsx", "empty.xlsx", "mislabelled.xlsx"}
    assert "corrupt.xlsx" in failed["corrupt.xlsx"]
    assert "no numeric data" in failed["mislabelled.xlsx"]
    assert {p: sha256(p) for p in folder.rglob("*.xlsx")} == before
    book = openpyxl.load_workbook(out)
    assert book.sheetnames[0] == "Review summary"
    summary = list(book["Review summary"].iter_rows(values_only=True))
    header = next(i for i, r in enumerate(summary) if r[0] == "Source file")
    rows = list(itertools.takewhile(lambda r: r[0], summary[header + 1:]))  # the table, not the contents below
    assert len(rows) == 7  # one per characteristic (4) plus one per bad input (3)
    # The summary's numbers equal the per-characteristic JSON.
    for char in data["characteristics"]:
        row = next(r for r in rows if (r[0], r[1]) == (char["source"], char["sheet"]))
        assert row[5] == char["points_signalled"] == len({s["point"] for s in char["signals"]})
        assert row[11] == pytest.approx(char["performance"]["arl_in_control"], rel=1e-12)
        cpk = (char["capability"] or {}).get("cpk")  # an attribute chart has a rate, no Cpk
        assert row[8] == (pytest.approx(cpk, rel=1e-12) if cpk is not None else None)
        assert row[13] == char["summary"]["status"]
    # The chart in words on the summary, its code in the JSON.
    words = {r[1]: r[3] for r in rows if r[1]}
    assert words["Crimp force"] == "individuals and moving range" and words["Bore diameter"] == "X-bar and R"
    assert {c["sheet"]: c["chart"] for c in data["characteristics"]}["Crimp force"] == "individuals"
    # Each characteristic row links to its evaluation tab.
    links = {c.value: c.hyperlink.location for c in book["Review summary"]["C"] if c.hyperlink}
    assert all(loc.split("!")[0].strip("'") in book.sheetnames for loc in links.values())


def test_all_good_exits_zero_and_order_is_stable(run_cli, tmp_path):
    root = tmp_path / "in"
    root.mkdir()
    for i in range(4):
        _subgroups(root / f"c{i}.xlsx", seed=i, sheet=f"Char {i}")
    one = run_cli("pack", root, "-o", tmp_path / "p1.xlsx", "--json", "--jobs", "1")
    two = run_cli("pack", root, "-o", tmp_path / "p2.xlsx", "--json", "--jobs", "2")
    assert one.code == two.code == 0
    strip = [(c["source"], c["limits"]) for c in one.json["characteristics"]]
    assert strip == [(c["source"], c["limits"]) for c in two.json["characteristics"]]
    assert two.err == ""  # no progress bar when stderr is not a terminal, and nothing else on success with --json


def test_period_counts_only_that_months_points(run_cli, tmp_path):
    root = tmp_path / "in"
    root.mkdir()
    _subgroups(root / "s.xlsx", seed=1, rows=40)  # 12-hourly from 2026-10-27: 10 points in October, 30 in November
    result = run_cli("pack", root, "-o", tmp_path / "p.xlsx", "--json", "--period", "2026-11")
    (char,) = result.json["characteristics"]
    assert char["summary"]["points_in_period"] == 30
    assert char["subgroups"] == 40  # the limits still come from the base period (all points here)


def test_limits_carried_from_the_previous_pack(run_cli, tmp_path):
    october, november = tmp_path / "oct", tmp_path / "nov"
    october.mkdir()
    november.mkdir()
    _subgroups(october / "s.xlsx", seed=1)
    _subgroups(november / "s.xlsx", seed=2, shift_from=0, start=dt.datetime(2026, 11, 1))
    first = run_cli("pack", october, "-o", tmp_path / "oct-pack.xlsx", "--json")
    second = run_cli("pack", november, "-o", tmp_path / "nov-pack.xlsx", "--json",
                     "--limits-from", tmp_path / "oct-pack.xlsx")
    old, new = first.json["characteristics"][0], second.json["characteristics"][0]
    assert new["limits"] == old["limits"]  # the same limits, applied to this month's shifted points
    assert new["limits_source"].startswith("carried from")
    assert len(new["signals"]) > len(old["signals"])


def test_bad_period_and_nothing_found(run_cli, tmp_path):
    assert run_cli("pack", tmp_path, "-o", tmp_path / "p.xlsx", "--period", "November").code == 2
    empty = tmp_path / "nothing"
    empty.mkdir()
    result = run_cli("pack", empty, "-o", tmp_path / "p.xlsx")
    assert result.code == 3 and "no .xlsx" in result.err


def test_period_parsing():
    november = Period.month("2026-11")
    assert november.start == dt.datetime(2026, 11, 1) and november.end == dt.datetime(2026, 12, 1)
    assert Period.month("2026-12").end == dt.datetime(2027, 1, 1)
    days = Period.between("2026-11-03", "2026-11-04")
    assert days.mask([dt.datetime(2026, 11, 4, 23), dt.datetime(2026, 11, 5), None]).tolist() == [True, False, False]


def test_evaluate_takes_several_inputs(run_cli, tmp_path):
    a, b, bad = tmp_path / "a.xlsx", tmp_path / "b.xlsx", tmp_path / "bad.xlsx"
    _subgroups(a, seed=1)
    _subgroups(b, seed=2)
    bad.write_text("not a workbook")
    result = run_cli("evaluate", a, b, bad, "--json", "--jobs", "2")
    assert result.code == 3  # the highest failure's code; the good inputs were still written
    assert [Path(e["input"]).name for e in result.json["evaluations"]] == ["a.xlsx", "b.xlsx"]
    assert (tmp_path / "a-evaluated.xlsx").exists() and (tmp_path / "b-evaluated.xlsx").exists()
    assert run_cli("evaluate", a, b, "-o", tmp_path / "x.xlsx").code == 2


def test_trends_across_earlier_packs(run_cli, tmp_path):
    root = tmp_path / "in"
    root.mkdir()
    _subgroups(root / "s.xlsx", seed=1, rows=40, shift_from=30)
    october, november = tmp_path / "october.xlsx", tmp_path / "november.xlsx"
    assert run_cli("pack", root, "-o", october, "--period", "2026-10", "--timestamp", "2026-11-01T08:00").code == 0
    done = run_cli("pack", root, "-o", november, "--period", "2026-11", "--earlier", october, "--json",
                   "--timestamp", "2026-12-01T08:00")
    assert done.code == 0, done.err
    rows = list(openpyxl.load_workbook(november)["Review summary"].iter_rows(values_only=True))
    at = next(i for i, r in enumerate(rows) if r[0] == "Trends across packs")
    head = next(i for i in range(at, len(rows)) if rows[i][0] == "Pack of")
    earlier, now = rows[head + 1], rows[head + 2]
    assert (earlier[0], now[0]) == ("2026-10", "2026-11")  # each pack dated by its period
    # each pack's own figures: points in its period (10 in October, 30 in November), its signals and Cpk
    char = done.json["characteristics"][0]
    assert (earlier[3], now[3]) == (10, char["summary"]["points_in_period"])
    assert now[4] == char["summary"]["points_signalled"]
    assert now[1] == pytest.approx(char["limits"]["mean"]["center"], rel=1e-12) == earlier[1]
    assert now[5] == pytest.approx(30 / char["performance"]["arl_in_control"], rel=1e-9)  # points / ARL0
    # files named by their month still meet: the trend matches the characteristic's identity, not the file name
    renamed = tmp_path / "renamed"
    renamed.mkdir()
    (renamed / "s-2026-11.xlsx").write_bytes((root / "s.xlsx").read_bytes())
    later = tmp_path / "later.xlsx"
    assert run_cli("pack", renamed, "-o", later, "--period", "2026-11", "--earlier", october).code == 0
    rows = list(openpyxl.load_workbook(later)["Review summary"].iter_rows(values_only=True))
    head = next(i for i, r in enumerate(rows) if r[0] == "Pack of")
    assert (rows[head + 1][0], rows[head + 2][0]) == ("2026-10", "2026-11")
    # a file that is not a pack is refused in one line naming it
    bad = run_cli("pack", root, "-o", tmp_path / "x.xlsx", "--earlier", root / "s.xlsx")
    assert bad.code == 3 and "s.xlsx" in bad.err and "Traceback" not in bad.err
