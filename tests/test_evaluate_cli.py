"""End to end: the command on the demo workbook, and bad input handled without a traceback."""

import subprocess
import sys
import zipfile
from pathlib import Path

import openpyxl
import pytest

from tests.conftest import sha256


def test_demo_end_to_end(run_cli, demo_copy, tmp_path):
    out = tmp_path / "result.xlsx"
    before = sha256(demo_copy)
    result = run_cli("evaluate", demo_copy, "-o", out, "--json")
    assert result.code == 0, result.err
    report = result.json
    assert sha256(demo_copy) == before
    assert report["input_sha256"] == before
    (char,) = report["characteristics"]
    assert char["chart"] == "xbar-r" and char["subgroup_size"] == 5 and char["subgroups"] == 30
    assert any(s["statistic"] == "mean" and s["subgroup"] >= 22 for s in char["signals"])
    # The same limits must stand in the evaluation tab as in the JSON.
    book = openpyxl.load_workbook(out)
    tab = next(ws for ws in book.worksheets if ws.title.endswith("chart"))
    rows = {r[0]: r[1:4] for r in tab.iter_rows(values_only=True) if r and r[0] in
            ("Subgroup mean", "Subgroup range")}
    for label, stat in (("Subgroup mean", "mean"), ("Subgroup range", "range")):
        lim = char["limits"][stat]
        assert rows[label] == pytest.approx((lim["center"], lim["lcl"], lim["ucl"]), rel=1e-12)
    # Native chart objects: one per plotted statistic and the ARL-against-shift chart.
    with zipfile.ZipFile(out) as z:
        charts = [n for n in z.namelist() if n.startswith("xl/charts/chart")]
    assert len(charts) == 3


def test_default_output_beside_input(run_cli, demo_copy):
    assert run_cli("evaluate", demo_copy).code == 0
    assert (demo_copy.parent / "demo-evaluated.xlsx").exists()


def test_refuses_to_write_over_input(run_cli, demo_copy):
    before = sha256(demo_copy)
    result = run_cli("evaluate", demo_copy, "-o", demo_copy)
    assert result.code == 4 and "over the input" in result.err
    assert sha256(demo_copy) == before


def test_missing_file(run_cli, tmp_path):
    result = run_cli("evaluate", tmp_path / "nowhere.xlsx")
    assert result.code == 3
    assert "nowhere.xlsx" in result.err and "not found" in result.err
    assert "Traceback" not in result.err


def test_not_a_workbook(run_cli, tmp_path):
    bad = tmp_path / "notes.xlsx"
    bad.write_text("just some text, not a spreadsheet")
    before = sha256(bad)
    result = run_cli("evaluate", bad)
    assert result.code == 3 and "notes.xlsx" in result.err and "Traceback" not in result.err
    assert len(result.err.strip().splitlines()) == 1
    assert sha256(bad) == before


def test_workbook_without_numbers(run_cli, tmp_path):
    path = tmp_path / "words.xlsx"
    book = openpyxl.Workbook()
    book.active.append(["Part", "Comment"])
    book.active.append(["HF-220", "nothing measured yet"])
    book.save(path)
    before = sha256(path)
    result = run_cli("evaluate", path)
    assert result.code == 3 and "words.xlsx" in result.err and "no numeric data" in result.err
    assert sha256(path) == before


def test_bad_rules_is_a_usage_error(run_cli, demo_copy):
    result = run_cli("evaluate", demo_copy, "--rules", "7/3>2")
    assert result.code == 2 and "K must be" in result.err


def test_module_entry_point(demo_copy, tmp_path):
    out = tmp_path / "m.xlsx"
    done = subprocess.run([sys.executable, "-m", "sheettool", "evaluate", str(demo_copy), "-o", str(out)],
                          capture_output=True, text=True, cwd=Path(__file__).parents[1])
    assert done.returncode == 0, done.stderr
    assert out.exists()


def test_bundled_demo_matches_generator(tmp_path):
    from sheettool.demo.scenario import BUNDLED, write_demo

    fresh = tmp_path / "fresh.xlsx"
    write_demo(fresh)
    rows = [list(openpyxl.load_workbook(p).active.iter_rows(values_only=True)) for p in (BUNDLED, fresh)]
    assert rows[0] == rows[1]
