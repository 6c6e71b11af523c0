"""End to end: the command on the demo workbook, and bad input handled without a traceback."""

import subprocess
import sys
import zipfile
from pathlib import Path

import openpyxl
import pytest
from scipy import stats

from tests.conftest import sha256


def test_demo_end_to_end(run_cli, demo_copy, tmp_path):
    out = tmp_path / "result.xlsx"
    before = sha256(demo_copy)
    result = run_cli("evaluate", demo_copy, "-o", out, "--json")
    assert result.code == 0, result.err
    report = result.json
    assert sha256(demo_copy) == before
    assert report["input_sha256"] == before
    chars = {c["sheet"]: c for c in report["characteristics"]}
    assert list(chars) == ["Bore diameter", "Leak test", "Crimp force"]
    char = chars["Bore diameter"]
    assert char["chart"] == "xbar-r" and char["subgroup_size"] == 5 and char["subgroups"] == 30
    assert any(s["statistic"] == "mean" and s["point"] >= 22 for s in char["signals"])
    # signals against chance: the distinct points signalled beside points / in-control ARL false alarms expected;
    # reference for the tail: scipy.stats.poisson
    chance = char["signals_against_chance"]
    assert chance["points_signalled"] == len({s["point"] for s in char["signals"]}) and chance["points"] == 30
    assert chance["false_alarms_expected"] == pytest.approx(30 / char["performance"]["arl_in_control"], rel=1e-12)
    assert chance["chance_from_false_alarms"] == pytest.approx(
        stats.poisson.sf(chance["points_signalled"] - 1, chance["false_alarms_expected"]), rel=1e-9)
    # The same limits must stand in the evaluation tab as in the JSON.
    book = openpyxl.load_workbook(out)
    tab = next(ws for ws in book.worksheets if ws.title.startswith("Bore") and ws.title.endswith("chart"))
    rows = {r[0]: r[1:4] for r in tab.iter_rows(values_only=True) if r and r[0] in
            ("Subgroup mean", "Subgroup range")}
    for label, stat in (("Subgroup mean", "mean"), ("Subgroup range", "range")):
        lim = char["limits"][stat]
        assert rows[label] == pytest.approx((lim["center"], lim["lcl"], lim["ucl"]), rel=1e-12)
    # Native chart objects: one per plotted statistic (2 + 1 + 2) on the chart tabs and again on the one-page
    # summaries, a histogram for each of the two measured characteristics, and the ARL-against-shift chart.
    with zipfile.ZipFile(out) as z:
        charts = [n for n in z.namelist() if n.startswith("xl/charts/chart")]
    assert len(charts) == 2 * 5 + 2 + 1


def test_demo_leak_test_and_crimp_force_sheets(run_cli, demo_copy, tmp_path):
    from sheettool.demo import scenario

    result = run_cli("evaluate", demo_copy, "-o", tmp_path / "result.xlsx", "--json")
    assert result.code == 0, result.err
    chars = {c["sheet"]: c for c in result.json["characteristics"]}
    # Leak test: the number tested varies by shift -> p chart (common practice), limits from the first 24 shifts;
    # the leak rate rises from 1.5% to 5% at shift 28 and the chart signals after it (with this seed only after it).
    leak = chars["Leak test"]
    assert leak["chart"] == "p" and leak["base_period_points"] == list(range(1, scenario.LEAK_BASE + 1))
    assert leak["signals"] and all(s["point"] >= scenario.LEAK_RISE_AT for s in leak["signals"])
    # p-bar of about 24 x 200 units at 1.5%: standard error about 0.0018, so within 0.006 (3 standard errors)
    assert leak["limits"]["proportion"]["center"] == pytest.approx(scenario.LEAK_RATE, abs=0.006)
    # Crimp force: one reading per lot -> individuals and moving range; the force drops at the die regrind
    crimp = chars["Crimp force"]
    assert crimp["chart"] == "individuals" and crimp["subgroup_size"] == 1 and crimp["subgroups"] == scenario.CRIMP_LOTS
    assert any(s["statistic"] == "individual" and s["point"] >= scenario.CRIMP_DROP_AT for s in crimp["signals"])
    assert crimp["capability"]["lsl"] == scenario.CRIMP_LSL and crimp["capability"]["usl"] == scenario.CRIMP_USL
    # the bore's requirements come from its labelled cells
    req = chars["Bore diameter"]["requirements"]
    assert {i["name"] for i in req["items"]} == {"false_alarms_per_month", "ats_hours"}


def test_default_output_beside_input(run_cli, demo_copy):
    assert run_cli("evaluate", demo_copy).code == 0
    assert (demo_copy.parent / "demo-evaluated.xlsx").exists()


def test_refuses_to_write_over_input(run_cli, demo_copy):
    before = sha256(demo_copy)
    result = run_cli("evaluate", demo_copy, "-o", demo_copy)
    assert result.code == 2 and "names the same file as an input" in result.err  # refused before anything is read
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


def test_bad_rules_is_a_usage_error(run_cli, demo_copy):
    result = run_cli("evaluate", demo_copy, "--rules", "7/3>2")
    assert result.code == 2 and "K must be" in result.err


def test_module_entry_point(demo_copy, tmp_path):
    out = tmp_path / "m.xlsx"
    done = subprocess.run([sys.executable, "-m", "sheettool", "evaluate", str(demo_copy), "-o", str(out)],
                          capture_output=True, text=True, cwd=Path(__file__).parents[2])
    assert done.returncode == 0, done.stderr
    assert out.exists()


def test_bundled_demo_matches_generator(tmp_path):
    from sheettool.demo.scenario import BUNDLED, write_demo

    fresh = tmp_path / "fresh.xlsx"
    write_demo(fresh)
    rows = [list(openpyxl.load_workbook(p).active.iter_rows(values_only=True)) for p in (BUNDLED, fresh)]
    assert rows[0] == rows[1]


def test_output_is_an_ordinary_file_not_a_private_one(run_cli, demo_copy, tmp_path):
    # The temporary file is private while it is written; the finished output follows the umask like any new
    # file, so colleagues on a shared drive can open it (common practice for tools writing user files).
    import os
    import stat

    out = tmp_path / "shared.xlsx"
    assert run_cli("evaluate", demo_copy, "-o", out).code == 0
    mask = os.umask(0)
    os.umask(mask)
    assert stat.S_IMODE(out.stat().st_mode) == 0o666 & ~mask
